"""Output helpers shared by commands: values as JSON-ready Python objects."""

from __future__ import annotations

import math


def jsonable(x):
    """Nested dicts/lists with timestamps as ISO text, durations as ISO text, NaN/inf as None."""
    import numpy as np  # here, not at module level: `degas --help` stays free of numpy/pandas (issue 12)
    import pandas as pd

    if isinstance(x, dict):
        return {str(k): jsonable(v) for k, v in x.items()}
    if isinstance(x, list | tuple):
        return [jsonable(v) for v in x]
    if isinstance(x, pd.Timestamp | pd.Timedelta):
        return None if pd.isna(x) else x.isoformat()
    if isinstance(x, np.integer):
        return int(x)
    if isinstance(x, np.bool_):
        return bool(x)
    if isinstance(x, np.floating | float):
        return float(x) if math.isfinite(x) else None
    return x
