"""Checks every reader's records get at the door: impossible magnitudes and outliers of the time axis.

Both move rows into the rejects table (with their file line when the reader knows it), never silently.

**Time-axis outliers** (series and catalogues; never chronologies, whose phases may be centuries old):
a time further than ``max(50 × MAD, 5 years)`` from the median time of its record is rejected, where MAD is
the median absolute deviation of the times (Hampel's robust outlier rule, with a wide factor: common
practice is 3-5 MADs; 50 keeps gappy but genuine records whole). Records of fewer than 3 rows are not
judged. A mistyped year (1723 in a 2023 record) is far outside; a genuine restart after a long gap is not,
because the MAD grows with the spread of the record.

**Physical bounds** per kind, in the canonical SI unit (|value| above the bound is rejected):
see :data:`PHYSICAL_BOUNDS` for each bound and its basis.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd

from degas.io.base import ReadResult, rejects_frame
from degas.model import EventCatalog, TimeSeries

_DAY_NS = 86_400 * 10**9
TIME_OUTLIER_MADS = 50.0
TIME_OUTLIER_FLOOR_NS = int(5 * 365.25 * _DAY_NS)  # 5 years
TIME_OUTLIER_MIN_ROWS = 3

_T_PER_D = 1000.0 / 86400.0  # kg/s per t/d

#: kind -> (largest plausible |value| in the canonical unit, display text, basis)
PHYSICAL_BOUNDS: dict[str, tuple[float, str, str]] = {
    # The climactic phase of the largest eruption of the satellite era put about 15-20 Mt of SO2 into the
    # stratosphere within hours (Bluth et al. 1992, from memory), of order 1e7-1e8 t/d while it lasted;
    # 1e8 t/d leaves room for any explosive peak of any species and still rejects typing and unit slips.
    "gas_flux": (1e8 * _T_PER_D, "1e8 t/d", "above the peak of the largest explosive eruptions observed"),
    # Molar ratios of volcanic gases span about 1e-3 to 1e4 (CO2/SO2 in hydrothermal gases, e.g.
    # Aiuppa et al. 2014, from memory); 1e6 is beyond any gas the minor species is detectable in.
    "gas_ratio": (1e6, "1e6 mol/mol", "beyond any measured volcanic gas ratio"),
    # Mass eruption rates of the largest Plinian eruptions reach about 1e9-1e10 kg/s (Mastin et al. 2009),
    # i.e. about 4e5-4e6 m3/s DRE at 2500 kg/m3; 1e7 m3/s is above them.
    "extrusion_rate": (1e7, "1e7 m³/s", "above the discharge of the largest Plinian eruptions"),
    # The largest known eruptions produced a few thousand km3 of magma (e.g. Mason et al. 2004,
    # from memory); 1e13 m3 = 10,000 km3.
    "erupted_volume": (1e13, "1e13 m³ (10,000 km³)", "above the largest known eruptions"),
    # Continuous seismic amplitude (RSAM-type counts or m/s) stays far below this; a numeric guard.
    "amplitude": (1e15, "1e15", "a numeric guard far above any instrument's range"),
    # Anything else: a numeric guard only, so that squares and sums of the values stay finite in float64.
    "other": (1e100, "1e100", "a numeric guard: squares of larger values overflow float64"),
}
#: magnitude bounds of catalogues: the largest instrumental earthquake was Mw 9.5 (Kanamori 1977); the
#: smallest catalogued micro-earthquakes are about M -3 (common practice); -5..10.5 leaves room.
MAGNITUDE_BOUNDS = (-5.0, 10.5)


def screen(result: ReadResult, source: str) -> ReadResult:
    """``result`` with rows of impossible magnitude and time-axis outliers moved into its rejects."""
    extra: list[tuple] = []
    records = []
    lines_out = []
    for i, rec in enumerate(result.records):
        lines = result.lines[i] if i < len(result.lines) else None
        keep = np.ones(len(rec), dtype=bool)
        if isinstance(rec, TimeSeries):
            keep &= _bounds(rec, lines, source, extra)
        if isinstance(rec, EventCatalog):
            keep &= _magnitudes(rec, lines, source, extra)
        if isinstance(rec, TimeSeries | EventCatalog):
            keep &= _time_outliers(rec, keep, lines, source, extra)
        if not keep.all():
            n_out = int((~keep).sum())
            prov = list(rec.provenance)
            if prov:
                prov[0] = dataclasses.replace(prov[0], rows_accepted=max(prov[0].rows_accepted - n_out, 0),
                                              rows_rejected=prov[0].rows_rejected + n_out)
            rec = dataclasses.replace(rec, data=rec.data.loc[keep].reset_index(drop=True), provenance=tuple(prov))
            if lines is not None:
                lines = np.asarray(lines)[keep]
        records.append(rec)
        lines_out.append(lines)
    if not extra:
        return result
    rejects = pd.concat([result.rejects, rejects_frame(extra)], ignore_index=True)
    lines_kept = lines_out if result.lines else result.lines
    return ReadResult(records, rejects, list(result.notes), lines_kept)


def _line(lines, i: int):
    return None if lines is None else int(np.asarray(lines)[i])


def _bounds(rec: TimeSeries, lines, source: str, out: list) -> np.ndarray:
    bound, text, basis = PHYSICAL_BOUNDS.get(rec.meta.kind, PHYSICAL_BOUNDS["other"])
    v = rec.data["value"].to_numpy(dtype="float64")
    u = rec.data["uncertainty"].to_numpy(dtype="float64")
    bad = (np.abs(v) > bound) | np.isinf(v) | (np.abs(u) > bound) | np.isinf(u)
    unit, factor = _file_unit(rec)
    for i in np.flatnonzero(bad):
        out.append((source, _line(lines, i), "value",
                    f"{v[i] * factor:.4g} {unit} (or its uncertainty) exceeds the physical bound for {rec.meta.kind}, "
                    f"{text} ({basis}); a typing or unit error?", f"{v[i] * factor!r}"))
    return ~bad


def _file_unit(rec: TimeSeries) -> tuple[str, float]:
    """The unit of the file (from the provenance) and the factor from the stored SI unit to it."""
    from degas.errors import DegasError
    from degas.units import conversion_factor

    unit = rec.provenance[0].original_unit if rec.provenance else None
    if unit and rec.meta.unit and unit != rec.meta.unit:
        try:
            return unit, conversion_factor(rec.meta.unit, unit)
        except (DegasError, ValueError, TypeError):
            pass
    return rec.meta.unit or "", 1.0


def _magnitudes(rec: EventCatalog, lines, source: str, out: list) -> np.ndarray:
    m = rec.data["magnitude"].to_numpy(dtype="float64")
    lo, hi = MAGNITUDE_BOUNDS
    bad = np.isfinite(m) & ((m < lo) | (m > hi)) | np.isinf(m)
    for i in np.flatnonzero(bad):
        out.append((source, _line(lines, i), "magnitude",
                    f"magnitude {m[i]:g} outside [{lo:g}, {hi:g}] (largest instrumental earthquake Mw 9.5)",
                    f"{m[i]!r}"))
    return ~bad


def _time_outliers(rec, alive: np.ndarray, lines, source: str, out: list) -> np.ndarray:
    t = rec.data[rec.TIME_COLUMN]
    ok = t.notna().to_numpy() & alive
    keep = np.ones(len(rec), dtype=bool)
    if ok.sum() < TIME_OUTLIER_MIN_ROWS:
        return keep
    ns = t.to_numpy(dtype="datetime64[ns]").astype("int64")
    x = ns[ok].astype("float64")
    med = float(np.median(x))
    mad = float(np.median(np.abs(x - med)))
    limit = max(TIME_OUTLIER_MADS * mad, float(TIME_OUTLIER_FLOOR_NS))
    far = ok & (np.abs(ns.astype("float64") - med) > limit)
    centre = pd.Timestamp(int(med), tz="UTC")
    for i in np.flatnonzero(far):
        out.append((source, _line(lines, i), rec.TIME_COLUMN,
                    f"time {t.iloc[i].isoformat()} lies {abs(ns[i] - med) / _DAY_NS / 365.25:.0f} years from the "
                    f"median time of the file ({centre:%Y-%m-%d}); rejected as an outlier of the time axis "
                    "(further than max(50 MAD, 5 years)); a mistyped year?", str(t.iloc[i])))
    keep &= ~far
    return keep


__all__ = ["MAGNITUDE_BOUNDS", "PHYSICAL_BOUNDS", "screen"]
