"""Odd time bases in exports: counts from a stated origin, MATLAB datenum, open ends, approximate dates.

* ``--time-origin 1995-01-01 --time-unit D`` (also ``h``, ``s``): numbers are elapsed time since the origin (UTC).
* MATLAB datenum: days since the proleptic year 0, so datenum 719529 is 1970-01-01 (the MathWorks ``datenum``
  definition; 719529 = Python's ``date(1970, 1, 1).toordinal()`` + 366).
* Decimal years are read only when the values look like years (1800-2200) *and* the header says "year";
  any other column of plain numbers is an error naming these options, never a guess.
* End dates ``9999-01-01``, ``9999-12-31`` (and empty cells) mean "open / ongoing".
* Approximate dates (``1830s``, ``Early 1869``, ``c. 1910``, ``1910?``) are rejected row by row unless
  ``--accept-approximate-dates``, which keeps them at the start of the stated span with a precision flag.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from degas.errors import DegasError

DATENUM_UNIX_EPOCH = 719529.0  # MATLAB datenum of 1970-01-01 00:00
TIME_UNITS = {"D": "1D", "d": "1D", "h": "1h", "s": "1s"}
SENTINEL_ENDS = ("9999-01-01", "9999-12-31", "9999-12-31 23:59:59", "9999")
NUMERIC_TIME_HELP = ("pass --time-format (excel, unix, datenum, decimal_year) or --time-origin DATE "
                     "--time-unit D|h|s")


def from_origin(values: pd.Series, origin: str, unit: str) -> pd.Series:
    """UTC times of numbers counted in ``unit`` (D, h, s) from ``origin`` (a date/time, UTC unless it has an
    offset); cells that are not numbers become NaT."""
    if unit not in TIME_UNITS:
        raise DegasError(f"unknown --time-unit {unit!r}; valid: D (days), h (hours), s (seconds)")
    t0 = origin_time(origin)
    if t0 is None:
        raise DegasError(f"--time-origin {origin!r} is not a date (e.g. 1995-01-01)")
    v = pd.to_numeric(values, errors="coerce").astype("float64").to_numpy()
    ns = t0.value + v * pd.Timedelta(TIME_UNITS[unit]).value
    return _ns_series(ns, values.index)


def origin_time(origin: str) -> pd.Timestamp | None:
    """The UTC instant of a time origin (UTC unless it has an offset); None when it is not a date."""
    if not isinstance(origin, str) or origin.strip().lower() in ("now", "today", "tomorrow", "yesterday"):
        return None  # a moving origin would give other times on every read
    try:
        t0 = pd.Timestamp(origin)
    except (ValueError, TypeError, OverflowError):
        return None
    if t0 is pd.NaT:
        return None
    return t0.tz_localize("UTC") if t0.tzinfo is None else t0.tz_convert("UTC")


def _ns_series(ns: np.ndarray, index) -> pd.Series:
    ok = np.isfinite(ns) & (np.abs(ns) < 9.2e18)
    out = np.full(ns.shape, np.iinfo("int64").min, dtype="int64")
    out[ok] = np.round(ns[ok]).astype("int64")
    return pd.Series(out.view("datetime64[ns]"), index=index).dt.tz_localize("UTC")


def header_says_year(header: str) -> bool:
    return bool(re.search(r"year|\byr\b|decimal", header, re.I))


def header_says_elapsed(header: str) -> bool:
    """True when a header names elapsed time ("seconds", "hours", "days", "day number", "elapsed", "t (s)"):
    such numbers count from an origin the file does not give, so their range must not pick a date format."""
    return bool(re.search(r"\b(seconds?|secs?|hours?|hrs?|days?|minutes?|mins?|elapsed|since|"
                          r"day\s*(number|no|count))\b|\((s|h|d|min)\)", header, re.I))


def header_says_datenum(header: str) -> bool:
    return bool(re.search(r"datenum|matlab", header, re.I))


def is_sentinel_end(col: pd.Series) -> np.ndarray:
    """Cells that write "no end yet" as a far-future date (9999-01-01, 9999-12-31)."""
    s = col.astype("string").str.strip()
    return s.str.match(r"^9999(?:[-/.]\d{1,2}[-/.]\d{1,2})?(?:[ T].*)?$").fillna(False).to_numpy(dtype=bool)


_PART = {"early": "early in the year", "mid": "mid-year", "middle": "mid-year", "late": "late in the year"}
_APPROX = (
    (re.compile(r"^(\d{3})0\s*'?s$", re.I), "decade", lambda m: (f"{m.group(1)}0-01-01", "decade")),
    (re.compile(r"^(early|mid|middle|late)[\s-]*(\d{4})$", re.I), "part of year",
     lambda m: (f"{m.group(2)}-{ {'early': '01', 'mid': '05', 'middle': '05', 'late': '09'}[m.group(1).lower()]}-01",
                _PART[m.group(1).lower()])),
    (re.compile(r"^(?:c\.?|ca\.?|circa|approx\.?|about|~)\s*(\d{4})$", re.I), "circa year",
     lambda m: (f"{m.group(1)}-01-01", "circa year")),
    (re.compile(r"^(\d{4})\s*\?$"), "uncertain year", lambda m: (f"{m.group(1)}-01-01", "uncertain year")),
    (re.compile(r"^(?:before|after|pre|post|<|>)\s*-?\s*(\d{4})$", re.I), "bound",
     lambda m: (f"{m.group(1)}-01-01", "bound only")),
)


def approximate_dates(col: pd.Series) -> tuple[pd.Series, pd.Series]:
    """Approximate-date cells read at the start of their span, and their precision flag ("" elsewhere).

    Returns UTC times (NaT for cells that are not approximate dates) and the precision text per cell.
    """
    s = col.astype("string").str.strip().fillna("")
    times = pd.Series(pd.NaT, index=col.index, dtype="datetime64[ns, UTC]")
    prec = pd.Series("", index=col.index, dtype="object")
    for i, text in zip(col.index, s.to_numpy(), strict=True):
        if not text or text[0].isdigit() and re.fullmatch(r"[\d\-/:. T]+", text):
            continue
        for pattern, _name, build in _APPROX:
            m = pattern.match(text)
            if m:
                iso, flag = build(m)
                try:
                    times[i] = pd.Timestamp(iso, tz="UTC")
                except (ValueError, OverflowError):
                    break
                prec[i] = flag
                break
    return times, prec


def checked_times(raw, col: str, options, rej, source: str, parse) -> tuple[pd.Series, tuple]:
    """Times of column ``col``: from ``--time-origin/--time-unit`` or a datenum header when given, else
    ``parse`` (the table reader's parser); rows that cannot be read are rejected with their reason."""
    from degas.errors import InputError

    if options.time_origin is None and options.time_unit is None:
        if options.time_format is None and header_says_datenum(col):
            import dataclasses

            options = dataclasses.replace(options, time_format="datenum")
            t, a = parse(raw, col, options, rej, source)
            return t, (*a, f"column {col!r} read as MATLAB datenum (from its header)")
        return parse(raw, col, options, rej, source)
    if options.time_origin is None or options.time_unit is None:
        raise InputError(source, "--time-origin and --time-unit go together")
    try:
        t = from_origin(raw.frame[col], options.time_origin, options.time_unit)
    except DegasError as exc:
        raise InputError(source, str(exc), column=col) from None
    s = raw.frame[col]
    blank = s.isna().to_numpy() if not pd.api.types.is_object_dtype(s) and not pd.api.types.is_string_dtype(s) \
        else s.astype("string").str.strip().fillna("").eq("").to_numpy()
    rej.reject(blank, col, "missing time")
    rej.reject(t.isna().to_numpy() & ~blank, col, f"not a number of {options.time_unit} from the time origin", s)
    unit = {"D": "days", "d": "days", "h": "hours", "s": "seconds"}[options.time_unit]
    return t, (f"times are {unit} counted from {options.time_origin} UTC (--time-origin/--time-unit)",)


def approximate_rows(raw, col: str, options, rej, t: pd.Series, blank: np.ndarray) -> None:
    """Reject approximate dates with that reason, or (``--accept-approximate-dates``) fill them in ``t`` and
    record their precision in ``raw.precision[col]``."""
    bad = t.isna().to_numpy() & ~blank
    if not bad.any():
        return
    approx, prec = approximate_dates(raw.frame[col].where(bad))
    found = approx.notna().to_numpy()
    if not found.any():
        return
    if options.accept_approximate_dates:
        t.loc[found] = approx[found]
        raw.precision[col] = prec
        return
    rej.reject(found, col, lambda i: f"approximate date ({prec.iloc[i]}); keep it with --accept-approximate-dates",
               raw.frame[col])
