"""degas: is volcanic gas release tracking magma output, or has it decoupled?

Public facade; see DEVELOPERS.md for the architecture.
"""

from degas.errors import DegasError
from degas.model import Chronology, EventCatalog, Provenance, SeriesMeta, TimeSeries

__version__ = "0.1.0"

__all__ = ["Chronology", "DegasError", "EventCatalog", "Provenance", "SeriesMeta", "TimeSeries", "__version__"]
