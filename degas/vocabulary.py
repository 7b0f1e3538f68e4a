"""Names of the canonical model that the command-line help needs, in a module without pandas.

:mod:`degas.model` re-exports them; importing this module alone keeps ``degas --help`` light
(issue 12, start-up).
"""

from __future__ import annotations

#: Event classes of volcano seismology (volcano-tectonic, long-period, ...).
EVENT_CLASSES: tuple[str, ...] = ("VT", "LP", "hybrid", "rockfall", "explosion", "tremor", "other")
