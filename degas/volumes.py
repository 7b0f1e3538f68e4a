"""Erupted volumes: bulk -> dense-rock equivalent (DRE), and rates from survey volumes.

V_DRE = V_bulk · (1 − φ) with φ the vesicularity (void fraction), or V_DRE = V_bulk · ρ_bulk / ρ_DRE
(standard definitions; see the shared reference sheet §6.3). Nothing is converted without a stated
vesicularity or pair of densities.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from degas.errors import DegasError, NotEnoughDataError
from degas.model import DISPLAY_UNIT, Provenance, SeriesMeta, TimeSeries


def dre_factor(vesicularity: float | None = None, bulk_density: float | None = None,
               dense_density: float | None = None) -> float:
    """Factor that turns a bulk volume into DRE: (1 − φ), or ρ_bulk/ρ_DRE (densities in kg/m³)."""
    if vesicularity is not None:
        if not 0.0 <= vesicularity < 1.0:
            raise DegasError(f"vesicularity must be in [0, 1), got {vesicularity}")
        return 1.0 - vesicularity
    if bulk_density is not None and dense_density is not None:
        if bulk_density <= 0 or dense_density <= 0 or bulk_density > dense_density:
            raise DegasError(f"need 0 < bulk density ≤ dense density, got {bulk_density} and {dense_density} kg/m³")
        return bulk_density / dense_density
    raise DegasError("bulk -> DRE needs a vesicularity or both bulk and dense densities; none was given")


def rates_from_cumulative(volume: TimeSeries) -> TimeSeries:
    """Mean extrusion rate between consecutive surveys, attached to each inter-survey interval.

    Parameters
    ----------
    volume : cumulative erupted volume (m³, DRE or bulk; the basis is carried over) at survey times.

    Returns
    -------
    TimeSeries of kind ``extrusion_rate`` (m³/s) with interval rows [survey_i, survey_i+1): value
    (V_i+1 − V_i)/(t_i+1 − t_i); uncertainty sqrt(σ_i² + σ_i+1²)/Δt assuming independent survey errors.
    A decrease of cumulative volume gives a negative rate, kept and visible (e.g. a dome collapse).
    """
    if volume.meta.kind != "erupted_volume":
        raise DegasError(f"rates_from_cumulative needs an erupted_volume series, got {volume.meta.kind}")
    df = volume.data.sort_values("time")
    if len(df) < 2:
        raise NotEnoughDataError(f"{volume.meta.series_id}: need at least two surveys to form a rate, have {len(df)}")
    t = df["time"].to_numpy(dtype="datetime64[ns]").astype("int64")
    v = df["value"].to_numpy()
    u = df["uncertainty"].to_numpy()
    dt = np.diff(t) / 1e9
    if (dt <= 0).any():
        raise DegasError(f"{volume.meta.series_id}: two surveys at the same time; cannot difference")
    rate = np.diff(v) / dt
    unc = np.sqrt(u[1:] ** 2 + u[:-1] ** 2) / dt
    meta = SeriesMeta(kind="extrusion_rate", quantity="extrusion_rate", station=volume.meta.station,
                      unit="m^3/s", display_unit=DISPLAY_UNIT["extrusion_rate"], volume_basis=volume.meta.volume_basis,
                      description=f"differenced from {volume.meta.series_id}")
    data = pd.DataFrame({
        "time": df["time"].iloc[:-1].to_numpy(), "end": df["time"].iloc[1:].to_numpy(),
        "value": rate, "uncertainty": unc, "quality": pd.Series([pd.NA] * len(rate), dtype="string"),
    })
    data["time"] = pd.to_datetime(data["time"], utc=True).astype("datetime64[ns, UTC]")
    data["end"] = pd.to_datetime(data["end"], utc=True).astype("datetime64[ns, UTC]")
    prov: tuple[Provenance, ...] = volume.provenance
    return TimeSeries(data, meta, prov)


def mean_output_rate(volume_m3: float, start: pd.Timestamp, end: pd.Timestamp) -> float:
    """Time-averaged output rate V/Δt in m³/s (Harris, Dehn & Calvari 2007 terminology: mean output rate)."""
    seconds = (pd.Timestamp(end) - pd.Timestamp(start)).total_seconds()
    if seconds <= 0:
        raise DegasError("end must be after start")
    return volume_m3 / seconds
