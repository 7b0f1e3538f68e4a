"""degas: is volcanic gas release tracking magma output, or has it decoupled?

Public facade; see DEVELOPERS.md for the architecture. The model classes are loaded on first use
(PEP 562 module ``__getattr__``), so ``degas --help`` does not import pandas (issue 12, start-up).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from degas.errors import DegasError

if TYPE_CHECKING:
    from degas.model import Chronology, EventCatalog, Provenance, SeriesMeta, TimeSeries

__version__ = "0.1.0"

__all__ = ["Chronology", "DegasError", "EventCatalog", "Provenance", "SeriesMeta", "TimeSeries", "__version__"]

_MODEL_NAMES = frozenset({"Chronology", "EventCatalog", "Provenance", "SeriesMeta", "TimeSeries"})


def __getattr__(name: str):
    """The model classes of the facade, imported from :mod:`degas.model` when first asked for."""
    if name in _MODEL_NAMES:
        from degas import model

        return getattr(model, name)
    raise AttributeError(f"module 'degas' has no attribute {name!r}")
