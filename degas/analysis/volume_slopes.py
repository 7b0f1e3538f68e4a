"""Changes of extrusion rate from survey cumulative volumes: changes of **slope**, not of level.

A cumulative volume V(t) grows while magma is extruded; a change in output rate is a change in its slope. The
surveys are fitted piecewise-linearly in time (each segment V = a + r·t, r the mean output rate in m³/s) with
ruptures' ``CostLinear`` (Truong, Oudre & Vayatis 2020: least squares of the first column regressed on the
others; here [V, 1, t]) and PELT (Killick, Fearnhead & Eckley 2012). Survey times may be irregular. The
penalty per change is 3·ln(n)·σ² (a BIC-like choice for two parameters per segment plus the change location;
common practice), with σ the median stated survey uncertainty, or without one the robust scale of second
differences (σ = 1.4826·MAD(Δ²V)/√6, exact for equally spaced independent errors).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.analysis.robust import MAD_TO_SD
from degas.errors import DegasError, NotEnoughDataError


@dataclass(frozen=True)
class SlopeChangeResult:
    """Rate changes of a cumulative volume.

    ``segments`` columns: start, end (UTC, survey times), rate_m3_s (fitted slope), n_surveys. ``change_times``:
    first survey of each new segment. ``sigma_m3``: noise scale used; ``penalty``: per change (m⁶).
    """

    change_times: tuple[pd.Timestamp, ...]
    segments: pd.DataFrame
    sigma_m3: float
    penalty: float
    volume_basis: str | None
    notes: tuple[str, ...] = field(default=())

    def to_frame(self) -> pd.DataFrame:
        return self.segments.copy()


def detect_slope_changes(volume, *, penalty: float | None = None, min_surveys: int = 3) -> SlopeChangeResult:
    """Piecewise-linear segmentation of a cumulative volume (m³) at its survey times.

    Parameters
    ----------
    volume : an ``erupted_volume`` TimeSeries (m³, DRE or bulk) or a pandas Series indexed by UTC time.
    penalty : per change, m⁶ (default 3·ln(n)·σ²). min_surveys : fewest surveys per segment (≥ 3).
    """
    import ruptures as rpt

    basis = None
    if isinstance(volume, pd.Series):
        t, v, u = volume.index, volume.to_numpy(dtype=float), np.full(len(volume), np.nan)
    else:
        if volume.meta.kind != "erupted_volume":
            raise DegasError(f"slope changes need an erupted_volume series, got {volume.meta.kind}")
        df = volume.data.sort_values("time")
        t, v, u = pd.DatetimeIndex(df["time"]), df["value"].to_numpy(float), df["uncertainty"].to_numpy(float)
        basis = volume.meta.volume_basis
    ok = np.isfinite(v)
    t, v, u = t[ok], v[ok], u[ok]
    n = len(v)
    min_surveys = max(3, int(min_surveys))
    if n < 2 * min_surveys:
        raise NotEnoughDataError(f"only {n} surveys: need at least {2 * min_surveys} to find a change of slope")
    days = (t - t[0]) / pd.Timedelta("1D")
    notes = []
    if np.isfinite(u).any() and np.nanmedian(u) > 0:
        sigma = float(np.nanmedian(u))
        notes.append(f"σ = median stated survey uncertainty, {sigma:.3g} m³")
    else:
        d2 = np.diff(v, 2)
        sigma = float(MAD_TO_SD * np.median(np.abs(d2 - np.median(d2))) / np.sqrt(6.0)) or float(np.std(v))
        notes.append(f"σ = robust scale of second differences, {sigma:.3g} m³ (no survey uncertainty given)")
    pen = 3.0 * np.log(n) * sigma**2 if penalty is None else float(penalty)
    signal = np.column_stack([v, np.ones(n), np.asarray(days, dtype=float)])
    bkps = rpt.Pelt(custom_cost=rpt.costs.CostLinear(), min_size=min_surveys, jump=1).fit(signal).predict(pen=pen)
    starts = [0] + bkps[:-1]
    rows = []
    for a, b in zip(starts, bkps, strict=True):
        slope = np.polyfit(np.asarray(days[a:b], dtype=float), v[a:b], 1)[0] / 86400.0
        rows.append({"start": t[a], "end": t[b - 1], "rate_m3_s": float(slope), "n_surveys": b - a})
    seg = pd.DataFrame(rows)
    if basis is None:
        notes.append("volume basis (DRE or bulk) unknown: rates are in m³/s of that unknown basis")
    return SlopeChangeResult(tuple(t[a] for a in starts[1:]), seg, sigma, float(pen), basis, tuple(notes))
