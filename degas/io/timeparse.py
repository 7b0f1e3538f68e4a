"""Time columns as found in monitoring exports -> tz-aware UTC, vectorised.

Accepted: ISO 8601 with or without offset ("2024-03-01T06:10:00-05:00", "2024-03-01 11:10"),
day-first dates when told ("01/03/2024 11:10"), Excel serial days (1900 date system),
decimal years (2024.1667), Unix seconds, MATLAB datenums, any strftime pattern, and native datetimes from
Excel/Parquet. Naive times are taken in the stated zone; with no zone they are taken as UTC
and that assumption is returned so it can be recorded in the provenance.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from degas.errors import DegasError
from degas.io.timebase import DATENUM_UNIX_EPOCH

TIME_FORMATS = ("iso", "excel", "decimal_year", "unix", "dayfirst", "datenum")
EXCEL_EPOCH = pd.Timestamp("1899-12-30", tz="UTC")  # serial day 0 of the 1900 system (with its leap-year bug)


@dataclass(frozen=True)
class ParsedTimes:
    """UTC times (NaT where unparseable), the format used and assumptions made."""

    times: pd.Series
    format: str
    assumptions: tuple[str, ...]
    local_invalid: np.ndarray | None = None  # cells that parsed but do not exist / are ambiguous in the zone


def parse_times(
    raw: pd.Series,
    *,
    time_format: str | None = None,
    timezone: str | None = None,
    dayfirst: bool = False,
) -> ParsedTimes:
    """Parse a column of times; bad cells become NaT (the caller reports them as rejects).

    Parameters
    ----------
    raw : column as read (strings, numbers or datetimes).
    time_format : one of TIME_FORMATS, a strftime pattern, or None to detect.
    timezone : zone for naive times (IANA name or "+05:00"); None means UTC, recorded.
    dayfirst : read 03/04/2024 as 3 April.
    """
    assumptions: list[str] = []
    fmt = time_format
    if fmt is not None and fmt not in TIME_FORMATS and "%" not in fmt:
        raise DegasError(f"unknown time format {fmt!r}; valid: {', '.join(TIME_FORMATS)} or a strftime pattern")
    if fmt == "dayfirst":
        fmt, dayfirst = None, True

    if isinstance(raw.dtype, pd.DatetimeTZDtype):
        return ParsedTimes(_to_ns(raw), "native", ())
    if pd.api.types.is_datetime64_dtype(raw.dtype):
        t, a = _localise(raw, timezone)
        return ParsedTimes(t, "native", a, t.attrs.get("local_invalid"))

    numeric = None
    if fmt in ("excel", "decimal_year", "unix", "datenum") or (fmt is None and _looks_numeric(raw)):
        numeric = pd.to_numeric(raw, errors="coerce") if not pd.api.types.is_numeric_dtype(raw) else raw
        numeric = numeric.astype("float64")
        if fmt is None:
            fmt = _guess_numeric_format(numeric)
            assumptions.append(f"numeric times read as {fmt.replace('_', ' ')} (detected from their range)")
        return ParsedTimes(_from_numeric(numeric, fmt), fmt, tuple(assumptions))

    if fmt in (None, "iso") and not dayfirst:
        fast = _arrow_iso(raw, timezone)
        if fast is not None:
            return ParsedTimes(fast[0], "iso", tuple(assumptions) + fast[1], fast[0].attrs.get("local_invalid"))
    s = raw.astype("string").str.strip()
    if fmt is not None and "%" in fmt:
        parsed = pd.to_datetime(s, format=fmt, errors="coerce", utc=False)
        used = fmt
    elif dayfirst:
        parsed = _parse_dayfirst(s)
        used = "dayfirst"
    else:
        parsed = _parse_iso(s)
        used = "iso"
        if isinstance(parsed, tuple):
            aware, naive = parsed
            local, a = _localise(naive, timezone)
            bad_local = local.attrs.get("local_invalid")
            aware.loc[naive.index] = local
            invalid = None
            if bad_local is not None:
                invalid = np.zeros(len(aware), dtype=bool)
                invalid[aware.index.get_indexer(naive.index)] = bad_local
            return ParsedTimes(aware, "iso (mixed offsets and naive)", tuple(assumptions) + a, invalid)
    if isinstance(parsed.dtype, pd.DatetimeTZDtype):
        return ParsedTimes(_to_ns(parsed), used, tuple(assumptions))
    t, a = _localise(parsed, timezone)
    return ParsedTimes(t, used, tuple(assumptions) + a, t.attrs.get("local_invalid"))


def _arrow_iso(raw: pd.Series, timezone: str | None) -> tuple[pd.Series, tuple[str, ...]] | None:
    """Fast path for clean ISO 8601 columns (all with offsets, or all naive); None when any cell is unusual."""
    import pyarrow as pa
    import pyarrow.compute as pc

    try:
        arr = pa.array(raw, type=pa.string(), from_pandas=True)
    except (pa.ArrowInvalid, pa.ArrowTypeError, TypeError):
        return None
    if arr.null_count:
        return None
    try:
        ts = pc.cast(arr, pa.timestamp("ns", tz="UTC"))
        return pd.Series(ts.to_pandas(), index=raw.index).astype("datetime64[ns, UTC]"), ()
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        pass
    try:
        naive = pc.cast(arr, pa.timestamp("ns"))
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return None
    return _localise(pd.Series(naive.to_pandas(), index=raw.index), timezone)


def _parse_iso(s: pd.Series) -> pd.Series:
    """ISO 8601 strings; mixed offsets and a trailing Z are all normalised to UTC."""
    has_offset = s.str.contains(r"(?:Z|[+-]\d\d:?\d\d)$", regex=True, na=False)
    if has_offset.all():
        return pd.to_datetime(s, format="ISO8601", errors="coerce", utc=True)
    if not has_offset.any():
        out = pd.to_datetime(s, format="ISO8601", errors="coerce")
        if out.isna().sum() > s.isna().sum():  # not strictly ISO: let pandas try each cell
            bad = out.isna() & s.notna()
            out = out.copy()
            out[bad] = pd.to_datetime(s[bad], errors="coerce", format="mixed")
        return out
    # a mix of aware and naive cells: aware ones carry their offset; naive ones get the stated zone later
    out = pd.Series(pd.NaT, index=s.index, dtype="datetime64[ns, UTC]")
    out[has_offset] = _to_ns(pd.to_datetime(s[has_offset], format="ISO8601", errors="coerce", utc=True))
    naive = pd.to_datetime(s[~has_offset], format="ISO8601", errors="coerce")
    return out, naive


def _parse_dayfirst(s: pd.Series) -> pd.Series:
    for pattern in ("%d/%m/%Y %H:%M:%S", "%d/%m/%Y %H:%M", "%d/%m/%Y", "%d.%m.%Y %H:%M:%S", "%d.%m.%Y %H:%M",
                    "%d.%m.%Y", "%d-%m-%Y %H:%M:%S", "%d-%m-%Y %H:%M", "%d-%m-%Y"):
        out = pd.to_datetime(s, format=pattern, errors="coerce")
        if out.notna().sum() >= 0.5 * max(s.notna().sum(), 1):
            bad = out.isna() & s.notna()
            if bad.any():
                out = out.copy()
                out[bad] = pd.to_datetime(s[bad], errors="coerce", dayfirst=True, format="mixed")
            return out
    return pd.to_datetime(s, errors="coerce", dayfirst=True, format="mixed")


_NS_MIN = pd.Timestamp.min.tz_localize(None)
_NS_MAX = pd.Timestamp.max.tz_localize(None)


def _to_ns(t: pd.Series) -> pd.Series:
    """Cast to nanosecond resolution; times outside its range (years before 1677 or after 2262) become NaT."""
    if isinstance(t.dtype, pd.DatetimeTZDtype):
        naive = t.dt.tz_convert("UTC").dt.tz_localize(None)
        return _to_ns(naive).dt.tz_localize("UTC")
    if t.dtype == "datetime64[ns]":
        return t
    out = t.where((t >= _NS_MIN) & (t <= _NS_MAX))
    return out.astype("datetime64[ns]")


def _localise(t: pd.Series, timezone: str | None) -> tuple[pd.Series, tuple[str, ...]]:
    t = _to_ns(t)
    if timezone is None or timezone.upper() in ("UTC", "Z", "GMT", "+00:00"):
        note = () if timezone else ("naive timestamps taken as UTC (no time zone stated)",)
        return t.dt.tz_localize("UTC"), note
    try:
        local = t.dt.tz_localize(_tz(timezone), ambiguous="NaT", nonexistent="NaT")
    except (ValueError, TypeError, KeyError) as exc:
        raise DegasError(f"unknown time zone {timezone!r}: {exc}") from None
    out = local.dt.tz_convert("UTC")
    out.attrs["local_invalid"] = (out.isna() & t.notna()).to_numpy()
    return out, (f"naive timestamps taken in time zone {timezone}",)


def _tz(name: str):
    import datetime as _dt
    import re

    m = re.fullmatch(r"([+-])(\d\d):?(\d\d)", name.strip())
    if m:
        sign = 1 if m.group(1) == "+" else -1
        return _dt.timezone(sign * _dt.timedelta(hours=int(m.group(2)), minutes=int(m.group(3))))
    return name


def _looks_numeric(raw: pd.Series) -> bool:
    if pd.api.types.is_numeric_dtype(raw):
        return True
    sample = raw.dropna().astype("string").head(200)
    if sample.empty:
        return False
    return bool(sample.str.fullmatch(r"\s*-?\d+(\.\d*)?\s*").mean() > 0.9)


def _guess_numeric_format(x: pd.Series) -> str:
    med = float(np.nanmedian(x.to_numpy())) if x.notna().any() else 0.0
    if 1800 <= med <= 2200:
        return "decimal_year"
    if 10_000 <= med <= 80_000:
        return "excel"
    if med >= 1e8:
        return "unix"
    raise DegasError(
        f"cannot tell what numeric times like {med:g} are; pass --time-format (excel, unix, datenum, "
        "decimal_year) or --time-origin DATE --time-unit D|h|s"
    )


def _from_numeric(x: pd.Series, fmt: str) -> pd.Series:
    v = x.to_numpy(dtype="float64")
    if fmt == "unix":
        ns = v * 1e9
    elif fmt == "excel":
        ns = EXCEL_EPOCH.value + v * 86400e9
    elif fmt == "decimal_year":
        ns = _decimal_year_ns(v)
    elif fmt == "datenum":  # MATLAB datenum: days since year 0; 719529 is 1970-01-01
        ns = (v - DATENUM_UNIX_EPOCH) * 86400e9
    else:
        raise DegasError(f"unknown numeric time format {fmt!r}")
    ok = np.isfinite(ns) & (np.abs(ns) < 9.2e18)
    out = np.full(v.shape, np.iinfo("int64").min, dtype="int64")  # NaT
    out[ok] = np.round(ns[ok]).astype("int64")
    return pd.Series(out.view("datetime64[ns]"), index=x.index).dt.tz_localize("UTC")


def _decimal_year_ns(v: np.ndarray) -> np.ndarray:
    """Decimal year -> ns since epoch; the fraction is of that calendar year's length."""
    out = np.full(v.shape, np.nan)
    ok = np.isfinite(v) & (v > 1678) & (v < 2261)
    year = np.floor(v[ok]).astype(int)
    start = pd.to_datetime({"year": year, "month": 1, "day": 1}).to_numpy().astype("datetime64[ns]").astype("int64")
    nxt = pd.to_datetime({"year": year + 1, "month": 1, "day": 1}).to_numpy().astype("datetime64[ns]").astype("int64")
    out[ok] = start + (v[ok] - year) * (nxt - start)
    return out
