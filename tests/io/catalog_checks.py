"""Checks shared by the catalogue-reader tests."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from degas.model import CATALOG_COLUMNS, EVENT_CLASSES, EventCatalog

DATA = Path(__file__).resolve().parent.parent / "data" / "seismic_catalog"


def head(path: Path) -> bytes:
    """The first 64 KiB, as the format detectors see them."""
    return path.read_bytes()[:65536]


def check_catalog(cat: EventCatalog) -> None:
    """Columns, dtypes, classes and time order of the canonical catalogue."""
    df = cat.data
    assert tuple(df.columns) == CATALOG_COLUMNS
    assert str(df["time"].dtype) == "datetime64[ns, UTC]"
    for c in ("latitude_deg", "longitude_deg", "depth_m", "magnitude"):
        assert df[c].dtype == np.float64, c
    for c in ("magnitude_type", "event_class", "event_id", "source_type"):
        assert isinstance(df[c].dtype, pd.StringDtype), c
    assert set(df["event_class"]) <= set(EVENT_CLASSES)
    assert df["time"].is_monotonic_increasing
