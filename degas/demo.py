"""The invented demo volcano *Velmarra*: a seeded generator of a three-year monitoring story.

Everything here is synthetic. Velmarra, its stations (VLM-N, VLM-S, VLM-MG, VLM1-VLM4) and the
"Velmarra Volcano Observatory" are invented; the coordinates are arbitrary and refer to no real
volcano. The generator exists so that the tool, its tests and its documentation have a realistic,
fully known scenario to work on.

The story (UTC; intervals are ``[start, end)``):

1. 2023-01-01 - 2023-05-01 quiet: passive SO2 ~150 t/d, no extrusion, background seismicity.
2. 2023-05-01 - 2023-12-01 eruptive phase 1: effusive dome growth ~3 m³/s DRE with pulses of
   weeks; SO2 ~1200 t/d tracking the extrusion rate, gas leading by 4 days.
3. 2023-12-01 - 2024-06-01 pause: no extrusion but sustained, slowly decaying SO2 (~900 t/d,
   open-system degassing of un-erupted magma); CO2/SO2 rises from 1.5 to 4 (deeper degassing).
4. 2024-06-01 - 2024-12-16 eruptive phase 2: coupled again, ~2 m³/s, ~1000 t/d, gas leads by 3 days.
5. 2024-12-16 - 2025-03-10 sealing: extrusion goes on (1.5 -> 1.0 m³/s) but SO2 falls to
   ~200 t/d while LP + hybrid rates step up to ~6/day and accelerate to ~30/day; RSAM rises.
6. 2025-03-10 explosive event (one day): SO2 spike of several thousand t/d for a few days.
7. 2025-03-11 - open: renewed coupled dome growth ~4 m³/s, ~1500 t/d, gas leads by 5 days.

Lag convention (project-wide): a positive lag means gas leads magma output. In a coupled phase
with lag ``L`` days the true daily SO2 flux follows the extrusion rate ``L`` days later,
``SO2(t) ∝ Q(t + L)``: gas exsolves from magma rising in the conduit before that magma reaches
the surface as dome lava. Level steps of both series happen on the phase boundaries; the lag
lives in the week-scale pulses.

Gas budget design (petrological method, Devine et al. 1984; REFERENCES.md §1.1): with the suggested
defaults (S 1500 ppm in melt inclusions, 200 ppm in matrix glass, crystal fraction 0.40, DRE
density 2600 kg/m³) the observed/petrological SO2 ratio ("excess degassing factor") is slightly
above 1 in coupled phases, undefined but effectively infinite (gas without magma) in the pause,
and below 1 during sealing. The true factors per phase are in ``truth.json``.

Entry points: :func:`generate_scenario` (in memory, pure), :func:`write_demo` (the committed
``demo_series/`` files), :func:`write_large` (benchmark-size files, not committed) and
``python -m degas.demo OUT_DIR [--large]``.
"""

from __future__ import annotations

import argparse
import io
import json
import math
import re
import zipfile
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from degas.chem import SO2_PER_S
from degas.errors import DegasError
from degas.units import KG_S_TO_T_D

__all__ = [
    "DEFAULT_SEED", "FILES", "GENERATOR_VERSION", "PETROLOGY", "PHASES", "REGIMES", "VESICULARITY", "Phase",
    "Scenario", "generate_scenario", "main", "petrological_so2_kg_s", "survey_dates", "write_demo", "write_large",
]

GENERATOR_VERSION = "1.0.0"
DEFAULT_SEED = 20231
DEFAULT_START = "2023-01-01"
DEFAULT_END = "2025-12-31"

VOLCANO = "Velmarra"
OBSERVATORY = "Velmarra Volcano Observatory"
#: Invented summit position (WGS84 degrees) and elevation (m above sea level): open South Pacific ocean, more
#: than 1500 km from any real volcano, island or town (an invented ocean-island volcano).
SUMMIT_LAT_DEG = -44.8765
SUMMIT_LON_DEG = -128.4321
SUMMIT_ELEVATION_M = 2350.0
#: Local standard time of the north-rim instrument clock (fixed offset, no daylight saving).
NORTH_UTC_OFFSET = "-05:00"

#: Dome-rock vesicularity used for the survey volumes (bulk -> DRE: V_DRE = V_bulk (1 - phi); REFERENCES §6.3).
VESICULARITY = 0.15
#: Andesite DRE density, kg/m³ (REFERENCES §6.3, value from memory there).
DRE_DENSITY_KG_M3 = 2600.0
#: Suggested petrological inputs for gas-budget work (invented but typical magnitudes; REFERENCES §1.2).
PETROLOGY = {
    "sulfur_melt_inclusion_ppm": 1500.0,
    "sulfur_matrix_glass_ppm": 200.0,
    "crystal_fraction": 0.40,
    "dense_density_kg_m3": DRE_DENSITY_KG_M3,
}
#: Magnitude of completeness of the local catalogue and the detection roll-off below it.
MC_LOCAL = 0.8
_DETECT_MU, _DETECT_SIGMA = 0.40, 0.13  # local network: 50 % detection at M 0.40
_REGIONAL_MU, _REGIONAL_SIGMA = 0.60, 0.15  # regional network detects fewer small events
B_VT = 1.0
B_LP_HYBRID_SEALING = 1.6  # volcanic high-b (McNutt 2005; common practice)
B_LP_HYBRID_OTHER = 1.3
ML_MINUS_MD = 0.1  # the regional ML reads 0.1 units above the local Md on average

EXPLOSION_TIME = pd.Timestamp("2025-03-10T08:42:17", tz="UTC")
EXPLOSION_SO2_SPIKE_T_D = 5000.0
EXPLOSION_SO2_DECAY_DAYS = 1.2

STATIONS: dict[str, dict[str, str]] = {
    "VLM-N": {"site": "north rim", "instrument": "scanning UV spectrometer (SO2 flux)"},
    "VLM-S": {"site": "south flank", "instrument": "scanning UV spectrometer (SO2 flux)"},
    "VLM-MG": {"site": "summit crater rim", "instrument": "multi-gas station (CO2/SO2 ratio)"},
    "VLM1": {"site": "upper north flank", "instrument": "short-period seismometer (RSAM)"},
    "VLM2": {"site": "east flank", "instrument": "short-period seismometer"},
    "VLM3": {"site": "south flank", "instrument": "short-period seismometer"},
    "VLM4": {"site": "west saddle", "instrument": "broadband seismometer"},
    "VLM-CAM": {"site": "north rim", "instrument": "time-lapse camera (dome extrusion rate)"},
}

REGIMES = ("coupled", "quiet", "gas_only", "magma_only")

FILES = (
    "so2_flux_north_rim_scans.csv",
    "so2_flux_south_flank_scans.txt",
    "co2_so2_ratio_weekly.xlsx",
    "dome_surveys.csv",
    "extrusion_rate_camera_daily.csv",
    "eruption_chronology.csv",
    "seismic_regional_network.xml",
    "seismic_observatory_local.csv",
    "rsam_VLM1_hourly.csv",
    "melt_inclusions.csv",
    "truth.json",
    "demo_ingest.toml",
    "README.md",
)


@dataclass(frozen=True)
class Phase:
    """One interval of the story.

    Attributes
    ----------
    name : short identifier (``quiet``, ``eruptive_1``, ...).
    start, end : ISO dates, interval ``[start, end)`` in UTC; ``end`` None means open.
    state, style : chronology vocabulary (eruptive/pause; effusive/explosive or "").
    regime : one of :data:`REGIMES`.
    extrusion_m3_s : nominal DRE extrusion rate at the start of the phase, m³/s.
    extrusion_end_m3_s : nominal rate at the end (linear trend), m³/s.
    so2_t_d : nominal SO2 flux level at the start of the phase, t/d.
    so2_end_t_d : level approached at the end, t/d.
    ratio_start, ratio_end : CO2/SO2 molar ratio at the start and end (linear).
    lag_days : gas-leads-magma lag in coupled phases, days; None otherwise.
    remarks : the chronology remark.
    """

    name: str
    start: str
    end: str | None
    state: str
    style: str
    regime: str
    extrusion_m3_s: float
    extrusion_end_m3_s: float
    so2_t_d: float
    so2_end_t_d: float
    ratio_start: float
    ratio_end: float
    lag_days: int | None
    remarks: str


PHASES: tuple[Phase, ...] = (
    Phase("quiet", "2023-01-01", "2023-05-01", "pause", "", "quiet", 0.0, 0.0, 150.0, 150.0, 2.5, 2.5, None,
          "repose; passive degassing only"),
    Phase("eruptive_1", "2023-05-01", "2023-12-01", "eruptive", "effusive", "coupled", 3.0, 3.0, 1200.0, 1200.0,
          1.5, 1.5, 4, "dome growth; extrusion in pulses of a few weeks"),
    Phase("pause", "2023-12-01", "2024-06-01", "pause", "", "gas_only", 0.0, 0.0, 900.0, 650.0, 1.5, 4.0, None,
          "no extrusion; sustained degassing from the conduit"),
    Phase("eruptive_2", "2024-06-01", "2024-12-16", "eruptive", "effusive", "coupled", 2.0, 2.0, 1000.0, 1000.0,
          2.0, 2.0, 3, "dome growth resumes"),
    Phase("sealing", "2024-12-16", "2025-03-10", "eruptive", "effusive", "magma_only", 1.5, 1.0, 1000.0, 200.0,
          2.0, 6.0, None, "dome growth continues; gas emission falls; LP and hybrid swarms"),
    Phase("explosive", "2025-03-10", "2025-03-11", "eruptive", "explosive", "gas_only", 0.0, 0.0, 200.0, 200.0,
          1.2, 1.2, None, "explosive event at 08:42 UTC; ash column; dome partly destroyed"),
    Phase("eruptive_3", "2025-03-11", None, "eruptive", "effusive", "coupled", 4.0, 4.0, 1500.0, 1500.0,
          2.2, 2.2, 5, "renewed dome growth"),
)

#: Observatory chronology rows: (start, end, activity, style, remarks). The sealing is not a
#: separate observatory phase (it is recognised in hindsight), so phases 2 and 5 form one row.
CHRONOLOGY_ROWS: tuple[tuple[str, str | None, str, str, str], ...] = (
    ("2023-01-01", "2023-05-01", "pause", "", "repose; passive degassing only (start of this record)"),
    ("2023-05-01", "2023-12-01", "eruptive", "effusive", "dome growth; extrusion in pulses of a few weeks"),
    ("2023-12-01", "2024-06-01", "pause", "", "no extrusion; sustained degassing from the conduit"),
    ("2024-06-01", "2025-03-10", "eruptive", "effusive", "dome growth; gas emission low from mid-December 2024"),
    ("2025-03-10", "2025-03-11", "eruptive", "explosive", "explosive event at 08:42 UTC; ash column to ~6 km"),
    ("2025-03-11", None, "eruptive", "effusive", "renewed dome growth, ongoing"),
)


@dataclass(frozen=True)
class Scenario:
    """The true state of the invented volcano, day by day, plus its event catalogue.

    Attributes
    ----------
    days : daily UTC timestamps (00:00) of the record.
    extrusion_m3_s : true daily mean dome extrusion rate, m³/s DRE.
    so2_kg_s : true daily mean SO2 flux, kg/s.
    co2_so2 : true daily CO2/SO2 molar ratio, mol/mol.
    lp_hybrid_per_day : true expected LP + hybrid event rate, events/day.
    events : every seismic event (true class, time, magnitude, depth and what each catalogue
        reports about it); see :func:`_make_events` for the columns.
    phases : the story phases clipped to the record.
    truth : the ground truth (what ``truth.json`` holds).
    seed : the seed of the random streams.
    """

    days: pd.DatetimeIndex
    extrusion_m3_s: np.ndarray
    so2_kg_s: np.ndarray
    co2_so2: np.ndarray
    lp_hybrid_per_day: np.ndarray
    events: pd.DataFrame
    phases: tuple[Phase, ...]
    truth: dict
    seed: int

    def daily_frame(self) -> pd.DataFrame:
        """The true daily series as one tidy table (SI units; SO2 also in t/d)."""
        return pd.DataFrame(
            {
                "time": self.days,
                "extrusion_m3_s": self.extrusion_m3_s,
                "so2_kg_s": self.so2_kg_s,
                "so2_t_d": self.so2_kg_s * KG_S_TO_T_D,
                "co2_so2_molar": self.co2_so2,
                "lp_hybrid_per_day": self.lp_hybrid_per_day,
            }
        )


# --------------------------------------------------------------------------- helpers


def _rng(seed: int, stream: int) -> np.random.Generator:
    """Independent, reproducible random stream number ``stream`` for ``seed``."""
    return np.random.default_rng(np.random.SeedSequence([int(seed), int(stream)]))


def _smooth_noise(rng: np.random.Generator, n: int, sigma_days: float) -> np.ndarray:
    """Gaussian-smoothed white noise with unit standard deviation (length n)."""
    from scipy.ndimage import gaussian_filter1d

    pad = int(4 * sigma_days) + 1
    x = gaussian_filter1d(rng.standard_normal(n + 2 * pad), sigma_days, mode="reflect")[pad:pad + n]
    return (x - x.mean()) / x.std()


def _ts(date: str | None) -> pd.Timestamp | None:
    return None if date is None else pd.Timestamp(date, tz="UTC")


def _iso(ts: pd.Timestamp | None) -> str | None:
    if ts is None:
        return None
    if ts == ts.normalize():
        return ts.strftime("%Y-%m-%d")
    return ts.strftime("%Y-%m-%dT%H:%M:%SZ")


def petrological_so2_kg_s(extrusion_m3_s, *, petrology: dict | None = None) -> np.ndarray:
    """Petrological SO2 flux expected from degassing of the erupted melt, kg/s.

    ``Φ_SO2 = (M_SO2/M_S) · (w_MI − w_MG) · Q_DRE · ρ_DRE · (1 − φ_xtl)`` (Devine et al. 1984;
    REFERENCES.md §1.1). The crystal volume fraction is used as a mass fraction (crystals and
    melt assumed to have similar density).

    Parameters
    ----------
    extrusion_m3_s : DRE extrusion rate(s), m³/s.
    petrology : dict with ``sulfur_melt_inclusion_ppm``, ``sulfur_matrix_glass_ppm`` (ppm by mass),
        ``crystal_fraction`` (0-1) and ``dense_density_kg_m3`` (kg/m³); default :data:`PETROLOGY`.
    """
    p = PETROLOGY if petrology is None else petrology
    dw = (p["sulfur_melt_inclusion_ppm"] - p["sulfur_matrix_glass_ppm"]) * 1e-6
    melt_kg_s = np.asarray(extrusion_m3_s, dtype="float64") * p["dense_density_kg_m3"] * (1 - p["crystal_fraction"])
    return SO2_PER_S * dw * melt_kg_s


# --------------------------------------------------------------------------- scenario


def _clip_phases(start: pd.Timestamp, end_excl: pd.Timestamp) -> tuple[Phase, ...]:
    out = []
    for ph in PHASES:
        s, e = _ts(ph.start), _ts(ph.end)
        if (e is not None and e <= start) or s >= end_excl:
            continue
        out.append(ph)
    return tuple(out)


def generate_scenario(seed: int = DEFAULT_SEED, *, start: str = DEFAULT_START, end: str = DEFAULT_END) -> Scenario:
    """Generate the true daily state of Velmarra and its seismic events.

    Pure and fast (well under a second): nothing is written. The phase dates are fixed (see
    :data:`PHASES`); ``start`` and ``end`` (inclusive, dates) only choose the part of the story
    that is generated (a shorter span draws its own noise, so it is not a slice of the full one).

    Parameters
    ----------
    seed : seed of every random stream (the same seed gives the same scenario).
    start, end : first and last day of the record, ISO dates (UTC).

    Returns
    -------
    Scenario
        True daily extrusion rate (m³/s DRE), SO2 flux (kg/s), CO2/SO2 (mol/mol), LP + hybrid rate
        (events/day), the event table, the phases and the truth dictionary.
    """
    t0, t1 = pd.Timestamp(start, tz="UTC"), pd.Timestamp(end, tz="UTC")
    if t1 < t0:
        raise DegasError(f"demo scenario: end {end} is before start {start}")
    days = pd.date_range(t0, t1, freq="D").as_unit("ns")
    n = len(days)
    phases = _clip_phases(t0, t1 + pd.Timedelta(days=1))
    if not phases:
        raise DegasError(f"demo scenario: {start}..{end} is outside the story ({PHASES[0].start} onwards)")

    # the common pulse process of magma supply, padded so that f(t + lag) exists at the edges
    pad = 30
    f_pad = np.clip(1.0 + 0.22 * _smooth_noise(_rng(seed, 1), n + 2 * pad, 3.0)
                    + 0.10 * _smooth_noise(_rng(seed, 2), n + 2 * pad, 15.0), 0.35, None)
    gas_noise = _smooth_noise(_rng(seed, 3), n, 6.0)
    coupled_noise = _smooth_noise(_rng(seed, 4), n, 1.5)
    ratio_noise = _smooth_noise(_rng(seed, 5), n, 5.0)

    q = np.zeros(n)
    so2_t_d = np.zeros(n)
    ratio = np.zeros(n)
    lp_hb = np.full(n, 2.0)
    phase_index = np.full(n, -1)
    for k, ph in enumerate(phases):
        s = _ts(ph.start)
        e = _ts(ph.end) or (days[-1] + pd.Timedelta(days=1))
        sel = (days >= s) & (days < e)
        idx = np.flatnonzero(sel)
        if len(idx) == 0:
            continue
        phase_index[idx] = k
        length = max((e - s).days, 1)
        tau = (days[idx] - s).days.to_numpy().astype("float64")
        frac = tau / length
        ratio[idx] = (ph.ratio_start + (ph.ratio_end - ph.ratio_start) * frac) * (1 + 0.05 * ratio_noise[idx])
        if ph.regime == "coupled":
            q[idx] = ph.extrusion_m3_s * f_pad[pad + idx]
            so2_t_d[idx] = ph.so2_t_d * f_pad[pad + idx + ph.lag_days] * (1 + 0.03 * coupled_noise[idx])
        elif ph.name == "sealing":
            trend = ph.extrusion_m3_s + (ph.extrusion_end_m3_s - ph.extrusion_m3_s) * frac
            q[idx] = trend * np.sqrt(f_pad[pad + idx])  # damped pulses
            so2_t_d[idx] = (ph.so2_end_t_d + (ph.so2_t_d - ph.so2_end_t_d) * np.exp(-tau / 12.0)) * (
                1 + 0.08 * gas_noise[idx])
            # LP + hybrid swarm: a step to 6/day at the onset, then exponential acceleration to 30/day
            lp_hb[idx] = 6.0 * 5.0 ** frac
        elif ph.name == "pause":
            decay = math.log(ph.so2_t_d / ph.so2_end_t_d) / length
            so2_t_d[idx] = ph.so2_t_d * np.exp(-decay * tau) * (1 + 0.08 * gas_noise[idx])
        else:  # quiet, explosive
            q[idx] = ph.extrusion_m3_s
            so2_t_d[idx] = ph.so2_t_d * (1 + 0.08 * gas_noise[idx])
    # explosion: SO2 spike decaying over a few days on top of whatever phase follows
    i_ex = int((EXPLOSION_TIME.normalize() - t0).days)
    k = np.arange(n) - i_ex
    so2_t_d += np.where(k >= 0, EXPLOSION_SO2_SPIKE_T_D * np.exp(-np.clip(k, 0, None) / EXPLOSION_SO2_DECAY_DAYS), 0.0)
    if 0 <= i_ex < n:  # the swarm (~30/day) runs until the explosion, then stops
        lp_hb[i_ex] = 30.0 * ((EXPLOSION_TIME - EXPLOSION_TIME.normalize()) / pd.Timedelta(days=1))
    so2_kg_s = so2_t_d / KG_S_TO_T_D
    events = _make_events(seed, days, phases, phase_index, q, lp_hb)
    truth = _truth(seed, days, phases, phase_index, q, so2_kg_s, ratio, events)
    for arr in (q, so2_kg_s, ratio, lp_hb):
        arr.flags.writeable = False  # the scenario is a value: its arrays are read-only
    return Scenario(days, q, so2_kg_s, ratio, lp_hb, events, phases, truth, int(seed))


#: Largest magnitude of the demo's volcanic seismicity: a Gutenberg-Richter law truncated at M_MAX (common
#: practice for local volcanic catalogues; a dome volcano's swarm events rarely exceed M 4).
M_MAX = 4.0


def _gr_magnitudes(rng: np.random.Generator, n: int, b: float, mu: float, sigma: float) -> np.ndarray:
    """n magnitudes from a Gutenberg-Richter law (slope b) truncated at M_MAX, thinned by a normal-CDF
    detection roll-off."""
    from scipy.special import ndtr

    beta = b * math.log(10.0)
    out = np.empty(0)
    while len(out) < n:
        m = 0.0 + rng.exponential(1.0 / beta, size=4 * n + 64)
        keep = (rng.random(m.size) < ndtr((m - mu) / sigma)) & (m <= M_MAX)
        out = np.concatenate([out, m[keep]])
    return out[:n]


def _make_events(seed: int, days: pd.DatetimeIndex, phases: tuple[Phase, ...], phase_index: np.ndarray,
                 q: np.ndarray, lp_hb: np.ndarray) -> pd.DataFrame:
    """Seismic events per class from daily Poisson rates.

    Columns: ``time`` (UTC), ``event_class`` (true class), ``magnitude`` (true, NaN for rockfall and
    tremor), ``depth_m`` (true, below sea level), ``latitude_deg``, ``longitude_deg``, ``local_code``
    (label in the observatory catalogue), ``md`` (reported local magnitude or NaN), ``depth_km``
    (reported depth or NaN), ``located`` (in the regional QuakeML), ``ml`` (regional magnitude),
    ``regional_time`` (regional origin time).
    """
    rng = _rng(seed, 10)
    names = np.array([phases[k].name if k >= 0 else "" for k in phase_index])
    eruptive = np.isin(names, ["eruptive_1", "eruptive_2", "eruptive_3", "sealing"])
    rates = {
        "VT": np.select([names == "quiet", names == "pause", names == "sealing", names == "explosive"],
                        [2.0, 2.5, 4.0, 8.0], 3.0),
        "LP": 0.55 * lp_hb,
        "hybrid": 0.45 * lp_hb,
        "rockfall": 0.2 + 2.5 * q,
        "tremor": np.where(eruptive, 0.1, 0.02) + np.where(names == "explosive", 3.0, 0.0),
    }
    day_ns = days.asi8
    one_day = 86_400 * 10**9
    parts = []
    ex_day = EXPLOSION_TIME.normalize()
    for cls, rate in rates.items():
        counts = rng.poisson(np.clip(rate, 0, None))
        t = np.repeat(day_ns, counts) + (rng.random(counts.sum()) * one_day).astype("int64")
        if cls in ("LP", "hybrid") and ex_day in days:
            # the LP/hybrid swarm stops with the explosion: move that day's events before it
            on = (t >= ex_day.value) & (t < ex_day.value + one_day)
            frac = (EXPLOSION_TIME - ex_day).value
            t[on] = ex_day.value + ((t[on] - ex_day.value) * (frac / one_day)).astype("int64")
        parts.append(pd.DataFrame({"time_ns": t, "event_class": cls}))
    # explosions: the main event plus smaller ones that day and the next two days
    if ex_day in days:
        rng_ex = _rng(seed, 11)
        t_ex = [EXPLOSION_TIME.value]
        for d, k in ((0, 6), (1, 2), (2, 1)):
            lo = EXPLOSION_TIME.value if d == 0 else ex_day.value + d * one_day
            hi = ex_day.value + (d + 1) * one_day
            t_ex += list(np.sort(rng_ex.integers(lo + 60 * 10**9, hi, size=k)))
        parts.append(pd.DataFrame({"time_ns": np.array(t_ex, dtype="int64"), "event_class": "explosion"}))
    ev = pd.concat(parts, ignore_index=True).sort_values("time_ns", kind="stable").reset_index(drop=True)
    m = len(ev)
    cls = ev["event_class"].to_numpy(dtype=object)
    t_ns = ev["time_ns"].to_numpy()
    # no two events in the same whole second (the local catalogue has 1-s resolution)
    sec, sub = np.divmod(t_ns, 10**9)
    ramp = np.arange(m)
    sec = np.maximum.accumulate(sec - ramp) + ramp
    t_ns = sec * 10**9 + sub
    in_sealing = np.zeros(m, dtype=bool)
    for ph in phases:
        if ph.name == "sealing":
            in_sealing = (t_ns >= _ts(ph.start).value) & (t_ns < _ts(ph.end).value)
    rng_m = _rng(seed, 12)
    mag = np.full(m, np.nan)
    vt = cls == "VT"
    mag[vt] = _gr_magnitudes(rng_m, int(vt.sum()), B_VT, _DETECT_MU, _DETECT_SIGMA)
    lph = np.isin(cls, ["LP", "hybrid"])
    for sel, b in ((lph & in_sealing, B_LP_HYBRID_SEALING), (lph & ~in_sealing, B_LP_HYBRID_OTHER)):
        mag[sel] = _gr_magnitudes(rng_m, int(sel.sum()), b, _DETECT_MU, _DETECT_SIGMA)
    ex = cls == "explosion"
    mag[ex] = np.round(rng_m.uniform(1.4, 2.3, int(ex.sum())), 2)
    if ex.any():
        mag[np.flatnonzero(ex)[0]] = 2.9
    rng_d = _rng(seed, 13)
    depth = np.full(m, np.nan)
    depth[vt] = np.clip(np.exp(rng_d.normal(math.log(3000.0), 0.45, int(vt.sum()))), 300.0, 9000.0)
    depth[lph] = rng_d.uniform(200.0, 1500.0, int(lph.sum()))
    depth[ex] = 0.0
    lat = SUMMIT_LAT_DEG + rng_d.normal(0, 0.012, m)
    lon = SUMMIT_LON_DEG + rng_d.normal(0, 0.012, m)
    lat[~vt] = SUMMIT_LAT_DEG + rng_d.normal(0, 0.003, int((~vt).sum()))
    lon[~vt] = SUMMIT_LON_DEG + rng_d.normal(0, 0.003, int((~vt).sum()))

    # what the observatory's local catalogue reports
    rng_c = _rng(seed, 14)
    code = np.empty(m, dtype=object)
    base = {"VT": "VT", "LP": "LP", "hybrid": "HB", "rockfall": "RF", "explosion": "EX", "tremor": "TR"}
    for c, lab in base.items():
        code[cls == c] = lab
    u = rng_c.random(m)
    code[(cls == "LP") & (u < 0.10)] = "lp"
    code[(cls == "hybrid") & (u < 0.15)] = "Hyb"
    u2 = rng_c.random(m)
    unsure = (u2 < 0.02) & ~ex
    code[unsure] = "?"
    code[(u2 >= 0.02) & (u2 < 0.025) & ~ex] = "unk"
    md = np.round(mag, 1)
    small = mag < 0.6
    md[small & (rng_c.random(m) < 0.4)] = np.nan
    md[rng_c.random(m) < 0.02] = np.nan
    md[ex] = np.round(mag[ex], 1)
    rf = cls == "rockfall"
    rf_md = rng_c.random(m) < 0.15
    md[rf & rf_md] = np.round(_gr_magnitudes(rng_c, int((rf & rf_md).sum()), 1.3, _DETECT_MU, _DETECT_SIGMA), 1)
    depth_km = depth / 1000.0
    no_depth = np.zeros(m, dtype=bool)
    no_depth[vt] = np.where(mag[vt] < 0.7, rng_c.random(int(vt.sum())) < 0.6, rng_c.random(int(vt.sum())) < 0.05)
    no_depth[lph] = rng_c.random(int(lph.sum())) < 0.7
    no_depth[ex] = True
    depth_km[no_depth] = np.nan
    depth_km = np.round(depth_km, 2)
    # the regional network: located VT (depth known) that it detected, plus all explosions
    from scipy.special import ndtr

    detected = rng_c.random(m) < ndtr((np.nan_to_num(mag, nan=-9) - _REGIONAL_MU) / _REGIONAL_SIGMA)
    located = (vt & ~no_depth & detected) | ex
    ml = np.where(located, np.round(mag + ML_MINUS_MD + rng_c.normal(0, 0.08, m), 1), np.nan)
    reg_t = t_ns + np.where(located, (rng_c.normal(0, 0.3, m) * 1e9).astype("int64"), 0)
    reg_t = (reg_t // 10_000_000) * 10_000_000  # centiseconds
    return pd.DataFrame(
        {
            "time": pd.to_datetime(t_ns, utc=True).astype("datetime64[ns, UTC]"),
            "event_class": pd.array(cls, dtype="string"),
            "magnitude": mag,
            "depth_m": depth,
            "latitude_deg": np.round(lat, 5),
            "longitude_deg": np.round(lon, 5),
            "local_code": pd.array(code, dtype="string"),
            "md": md,
            "depth_km": depth_km,
            "located": located,
            "ml": ml,
            "regional_time": pd.to_datetime(reg_t, utc=True).astype("datetime64[ns, UTC]"),
        }
    )


def _truth(seed: int, days: pd.DatetimeIndex, phases: tuple[Phase, ...], phase_index: np.ndarray,
           q: np.ndarray, so2_kg_s: np.ndarray, ratio: np.ndarray, events: pd.DataFrame) -> dict:
    day_s = 86_400.0
    petro = petrological_so2_kg_s(q)
    phase_rows = []
    for k, ph in enumerate(phases):
        sel = phase_index == k
        obs_t = float(so2_kg_s[sel].sum() * day_s / 1000.0)
        pet_t = float(petro[sel].sum() * day_s / 1000.0)
        factor = obs_t / pet_t if pet_t > 0 else None
        phase_rows.append({
            "name": ph.name,
            "start": ph.start,
            "end": ph.end,
            "days_in_record": int(sel.sum()),
            "state": ph.state,
            "style": ph.style or None,
            "regime": ph.regime,
            "lag_days": ph.lag_days,
            "nominal_extrusion_m3_s": [ph.extrusion_m3_s, ph.extrusion_end_m3_s],
            "nominal_so2_t_d": [ph.so2_t_d, ph.so2_end_t_d],
            "nominal_co2_so2_molar": [ph.ratio_start, ph.ratio_end],
            "mean_extrusion_m3_s": round(float(q[sel].mean()), 4) if sel.any() else None,
            "mean_so2_t_d": round(float(so2_kg_s[sel].mean() * KG_S_TO_T_D), 2) if sel.any() else None,
            "mean_co2_so2_molar": round(float(ratio[sel].mean()), 4) if sel.any() else None,
            "dre_volume_m3": round(float(q[sel].sum() * day_s), 1),
            "observed_so2_mass_t": round(obs_t, 1),
            "petrological_so2_mass_t": round(pet_t, 1),
            "excess_degassing_factor": None if factor is None else round(factor, 4),
            "excess_degassing_note": (
                "observed / petrological SO2 (Devine et al. 1984 method, suggested petrology defaults)"
                if factor is not None else
                ("undefined: SO2 emitted without any magma output (factor effectively infinite, > 1)"
                 if obs_t > 0 else "undefined")),
        })
    boundaries = [ph.start for ph in phases[1:]]
    ratio_steps = [b.start for a, b in zip(phases, phases[1:], strict=False) if a.ratio_end != b.ratio_start]
    ratio_trends = [ph.start for ph in phases if ph.ratio_end != ph.ratio_start]
    lp_changes = ["2024-12-16", _iso(EXPLOSION_TIME)]
    ex = events["event_class"] == "explosion"
    vt = events["event_class"] == "VT"
    return {
        "about": (f"Ground truth of the invented {VOLCANO} demo scenario (synthetic data; no real volcano, "
                  "place or person). Intervals are [start, end) in UTC; end null = open."),
        "generator": {"module": "degas.demo", "version": GENERATOR_VERSION, "seed": int(seed),
                      "start": _iso(days[0]), "end": _iso(days[-1])},
        "volcano": {"name": VOLCANO, "observatory": OBSERVATORY, "type": "andesitic dome-building volcano",
                    "summit_latitude_deg": SUMMIT_LAT_DEG, "summit_longitude_deg": SUMMIT_LON_DEG,
                    "summit_elevation_m": SUMMIT_ELEVATION_M,
                    "coordinates_note": "arbitrary numbers; they refer to no real volcano",
                    "stations": STATIONS},
        "conventions": {
            "lag": ("positive lag_days = gas leads magma output: in a coupled phase the true daily SO2 flux "
                    "follows the extrusion rate lag_days later, SO2(t) ~ Q(t + lag_days); the cross-correlation "
                    "corr(SO2(t), Q(t + k)) peaks at k = +lag_days"),
            "level_steps": "SO2 and extrusion levels step on the phase boundaries; the lag is in the pulses",
            "units": "extrusion m3/s DRE, SO2 flux t/d (x 1/86.4 for kg/s), ratios mol/mol, volumes m3",
            "regimes": {"coupled": "both active and coupled", "quiet": "both quiet",
                        "gas_only": "gas without magma output: decoupled degassing",
                        "magma_only": "magma output without matching gas: gas-poor output, possible sealing"},
        },
        "phases": phase_rows,
        "chronology": [{"start": s, "end": e, "activity": a, "style": st or None} for s, e, a, st, _ in
                       CHRONOLOGY_ROWS],
        "regimes": [{"start": p["start"], "end": p["end"], "regime": p["regime"]} for p in phase_rows],
        "change_dates": {
            "so2_flux": boundaries,
            "extrusion_rate": boundaries,
            "lp_hybrid_rate": lp_changes,
            "co2_so2_ratio": ratio_steps,
            "co2_so2_ratio_trend_changes": ratio_trends,
            "notes": {
                "so2_flux": ("2024-12-16 is the onset of an exponential decline (e-folding 12 days) from ~1000 to "
                             "~200 t/d rather than a step; 2025-03-10 is the explosive spike (5000 t/d, e-folding "
                             "1.2 days) and 2025-03-11 the step to the renewed coupled level"),
                "extrusion_rate": "2024-12-16 is a small step (~2 -> 1.5 m3/s) followed by a linear decline to 1.0",
                "lp_hybrid_rate": ("step from 2/day to 6/day on 2024-12-16, then exponential acceleration; the swarm "
                                   "stops with the explosion"),
                "co2_so2_ratio": ("level steps listed under co2_so2_ratio; linear trends start on the dates under "
                                  "co2_so2_ratio_trend_changes"),
            },
        },
        "lags_days": [{"phase": p.name, "start": p.start, "end": p.end, "lag_days": p.lag_days}
                      for p in phases if p.lag_days is not None],
        "seismicity": {
            "b_values": {"VT": B_VT, "LP_hybrid_sealing": B_LP_HYBRID_SEALING, "LP_hybrid_other": B_LP_HYBRID_OTHER},
            "b_value_note": ("Gutenberg-Richter slopes of the generated magnitudes; volcanic high b for LP/hybrid "
                             "(McNutt 2005; common practice). Local Md rounded to 0.1."),
            "completeness_magnitude_local": MC_LOCAL,
            "maximum_magnitude": M_MAX,
            "detection_rolloff_local": {"m50": _DETECT_MU, "sigma": _DETECT_SIGMA,
                                        "form": "P(detect) = Phi((M - m50) / sigma)"},
            "detection_rolloff_regional": {"m50": _REGIONAL_MU, "sigma": _REGIONAL_SIGMA},
            "regional_ml_minus_local_md": ML_MINUS_MD,
            "lp_hybrid_rate_per_day": {"background": 2.0, "sealing_start": 6.0, "sealing_end": 30.0,
                                       "form": "6 * 5 ** (t / T): a step at the onset, then exponential "
                                               "acceleration over the sealing"},
            "event_counts_true_class": {str(k): int(v) for k, v in
                                        events["event_class"].value_counts().sort_index().items()},
            "located_vt_events": int((events["located"] & vt).sum()),
            "explosion_events": int(ex.sum()),
            "local_codes": {"VT": "VT", "LP": "LP (also 'lp')", "HB": "hybrid (also 'Hyb')", "RF": "rockfall",
                            "EX": "explosion", "TR": "tremor onset", "?": "unclassified", "unk": "unclassified"},
        },
        "volumes": {
            "vesicularity": VESICULARITY,
            "dre_density_kg_m3": DRE_DENSITY_KG_M3,
            "dre_volume_m3": round(float(q.sum() * day_s), 1),
            "bulk_volume_m3": round(float(q.sum() * day_s / (1 - VESICULARITY)), 1),
            "conversion": "V_DRE = V_bulk * (1 - vesicularity) (REFERENCES section 6.3)",
            "survey_reference": "a survey dated D reports the volume extruded before 00:00 UTC on D",
        },
        "petrology_defaults": dict(PETROLOGY),
        "sealing": {"start": "2024-12-16", "end": "2025-03-10",
                    "signature": "SO2 falls to ~200 t/d while extrusion continues and LP + hybrid rates accelerate"},
        "explosive_event": {"time": _iso(EXPLOSION_TIME), "date": "2025-03-10",
                            "so2_spike_t_d": EXPLOSION_SO2_SPIKE_T_D,
                            "so2_spike_decay_days": EXPLOSION_SO2_DECAY_DAYS,
                            "note": "no dome extrusion on the explosive day (the tephra is not in the survey volumes)"},
    }


# --------------------------------------------------------------------------- writers


def _fmt(values: np.ndarray, spec: str, missing: str = "") -> np.ndarray:
    """Format floats with a %-spec; NaN -> ``missing``."""
    v = np.asarray(values, dtype="float64")
    out = np.char.mod(spec, np.nan_to_num(v)).astype(object)
    out[np.isnan(v)] = missing
    return out


def _lines(*cols: np.ndarray, sep: str = ",") -> str:
    rows = [sep.join(r) for r in zip(*[np.asarray(c, dtype=object).astype(str) for c in cols], strict=True)]
    return "\n".join(rows) + "\n"


def _write_text(path: Path, text: str) -> Path:
    with open(path, "w", encoding="utf-8", newline="\n") as fh:
        fh.write(text)
    return path


def _scan_times(seed_rng: np.random.Generator, days: pd.DatetimeIndex, first_h: float, n_per_day: int,
                step_min: int, skip_frac: float, gaps: Sequence[tuple[str, str]]) -> np.ndarray:
    """Scan times (int64 ns UTC) in daylight, minute resolution, with days lost to weather and gaps."""
    keep = seed_rng.random(len(days)) >= skip_frac
    for a, b in gaps:
        keep &= ~((days >= pd.Timestamp(a, tz="UTC")) & (days < pd.Timestamp(b, tz="UTC")))
    d = days.asi8[keep]
    minute = 60 * 10**9
    offs = (first_h * 60 + step_min * np.arange(n_per_day)) * minute
    jitter = seed_rng.integers(-2, 3, size=(len(d), n_per_day)) * minute
    return (d[:, None] + offs[None, :].astype("int64") + jitter).ravel()


def _true_on_day(sc: Scenario, t_ns: np.ndarray, series: np.ndarray) -> np.ndarray:
    """The true daily value of the UTC day containing each time ``t_ns`` (a scan samples its day's mean)."""
    i = np.clip((t_ns - sc.days.asi8[0]) // (86_400 * 10**9), 0, len(sc.days) - 1)
    return series[i]


def _true_at(sc: Scenario, t_ns: np.ndarray, series: np.ndarray) -> np.ndarray:
    """Daily true values (centred at noon) interpolated linearly at times ``t_ns``."""
    centre = sc.days.asi8 + 43_200 * 10**9
    return np.interp(t_ns.astype("float64"), centre.astype("float64"), series)


def _observe(rng: np.random.Generator, true: np.ndarray, flags: np.ndarray, good: str, cloud: str,
             wind: str) -> np.ndarray:
    sigma = np.where(flags == good, 0.30, np.where(flags == cloud, 0.40, 0.50))
    bias = np.where(flags == cloud, 0.7, 1.0)
    return true * bias * np.exp(sigma * rng.standard_normal(true.size))


def _write_north(sc: Scenario, out: Path) -> Path:
    rng = _rng(sc.seed, 100)
    t = _scan_times(rng, sc.days, 12.0, 41, 15, 0.07, [("2024-08-05", "2024-08-26")])
    true = _true_on_day(sc, t, sc.so2_kg_s) * KG_S_TO_T_D
    flags = rng.choice(np.array(["good", "cloud", "low-wind"], dtype=object), size=t.size, p=[0.88, 0.07, 0.05])
    obs = _observe(rng, true, flags, "good", "cloud", "low-wind")
    err = obs * rng.uniform(0.20, 0.35, t.size)
    val_s = _fmt(obs, "%.1f")
    err_s = _fmt(err, "%.1f")
    # messiness: NaN text, empty cells, negative values (background-subtraction artefacts in quiet times)
    quiet = np.flatnonzero(t < pd.Timestamp("2023-05-01", tz="UTC").value)
    pick = rng.choice(np.arange(t.size), size=7, replace=False)
    val_s[pick[:4]] = "NaN"
    val_s[pick[4:]] = ""
    neg = rng.choice(quiet, size=2, replace=False)
    val_s[neg] = np.array(["-23.4", "-8.1"], dtype=object)
    flags[neg] = "low-wind"
    local = pd.to_datetime(t - 5 * 3600 * 10**9)  # UTC-05:00 wall clock
    times = np.char.add(np.datetime_as_string(local.to_numpy(), unit="s"), NORTH_UTC_OFFSET).astype(object)
    head = (
        "# instrument: scanning UV spectrometer, SO2 flux from plume cross-sections\n"
        f"# station: VLM-N (north rim), {OBSERVATORY}\n"
        "# species: SO2\n"
        f"# times: ISO 8601 with offset (instrument clock on local standard time, UTC{NORTH_UTC_OFFSET})\n"
        "# QC flag: good | cloud (plume partly behind cloud, flux biased low) | low-wind (poor plume speed)\n"
        "Date/Time,SO2 flux (t/d),flux error (t/d),QC flag\n"
    )
    return _write_text(out / "so2_flux_north_rim_scans.csv", head + _lines(times, val_s, err_s, flags))


def _write_south(sc: Scenario, out: Path) -> Path:
    rng = _rng(sc.seed, 101)
    t = _scan_times(rng, sc.days, 12.0 + 10 / 60, 30, 20, 0.10, [("2025-06-01", "2025-08-01")])
    true = _true_on_day(sc, t, sc.so2_kg_s) * 0.9  # the south-flank cross-section sees ~90 % of the plume
    flags = rng.choice(np.array(["buena", "nubes", "viento bajo"], dtype=object), size=t.size, p=[0.86, 0.08, 0.06])
    obs = _observe(rng, true, flags, "buena", "nubes", "viento bajo")
    err = obs * rng.uniform(0.20, 0.35, t.size)
    times = pd.DatetimeIndex(pd.to_datetime(t, utc=True)).strftime("%d/%m/%Y %H:%M").to_numpy(dtype=object)
    val_s = _fmt(obs, "%.3f")
    err_s = _fmt(err, "%.3f")
    miss = rng.choice(np.arange(t.size), size=5, replace=False)
    val_s[miss] = "-999"
    err_s[miss] = "-999"
    rows = list(zip(times, val_s, err_s, flags, strict=True))
    # one block out of order: the scans of 2024-10-15 appended after those of 2024-10-16
    day = np.array([r[0][:10] for r in rows])
    a = np.flatnonzero(day == "15/10/2024")
    b = np.flatnonzero(day == "16/10/2024")
    if len(a) and len(b):
        order = list(range(a[0])) + list(b) + list(a) + list(range(b[-1] + 1, len(rows)))
        rows = [rows[i] for i in order]
    # exact duplicates and one same-time conflict
    dup_at = sorted(rng.choice(np.arange(100, len(rows) - 100), size=7, replace=False), reverse=True)
    for j, i in enumerate(dup_at):
        r = rows[i]
        if j == 0:
            conflict = f"{float(r[1]) * 1.37:.3f}" if r[1] != "-999" else "12.345"
            rows.insert(i + 1, (r[0], conflict, r[2], r[3]))
        else:
            rows.insert(i + 1, r)
    body = "\n".join(";".join(r) for r in rows) + "\n"
    return _write_text(out / "so2_flux_south_flank_scans.txt", "fecha_hora;SO2_kg_s;err_kg_s;calidad\n" + body)


def _deterministic_zip(data: bytes) -> bytes:
    """Rewrite a zip (xlsx) with fixed member timestamps so that equal content gives equal bytes."""
    src = zipfile.ZipFile(io.BytesIO(data))
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            zi = zipfile.ZipInfo(info.filename, date_time=(2023, 1, 1, 0, 0, 0))
            zi.compress_type = zipfile.ZIP_DEFLATED
            zi.external_attr = 0o600 << 16
            data = src.read(info.filename)
            if info.filename == "docProps/core.xml":  # openpyxl stamps the save time here
                data = re.sub(rb"(<dcterms:modified[^>]*>)[^<]*(</dcterms:modified>)",
                              rb"\g<1>2026-01-05T00:00:00Z\g<2>", data)
            dst.writestr(zi, data)
    return buf.getvalue()


def save_workbook(wb, path: Path, *, creator: str | None = None) -> Path:
    """Save an openpyxl workbook byte-identically run after run (fixed dates, deterministic zip)."""
    import datetime as dt

    fixed = dt.datetime(2026, 1, 5, 0, 0, 0)
    wb.properties.created = fixed
    wb.properties.modified = fixed
    if creator is not None:
        wb.properties.creator = creator
    buf = io.BytesIO()
    wb.save(buf)
    path.write_bytes(_deterministic_zip(buf.getvalue()))
    return path


def _write_ratio(sc: Scenario, out: Path) -> Path:
    import datetime as dt

    from openpyxl import Workbook

    rng = _rng(sc.seed, 102)
    weeks = pd.date_range(sc.days[0] + pd.Timedelta(days=(7 - sc.days[0].day_of_week) % 7), sc.days[-1], freq="7D")
    keep = rng.random(len(weeks)) >= 0.08  # weeks lost to power or sensor faults
    weeks = weeks[keep]
    # weekly mean of the true ratio over the 7 days starting on the date
    idx = ((weeks - sc.days[0]).days).to_numpy()
    true = np.array([sc.co2_so2[i:i + 7].mean() for i in idx])
    obs = true * np.exp(0.10 * rng.standard_normal(true.size))
    sig = obs * rng.uniform(0.10, 0.18, true.size)
    wb = Workbook()
    ws = wb.active
    ws.title = "VLM-MG weekly"
    ws.append([f"{OBSERVATORY}, VLM-MG multi-gas station, weekly mean CO2/SO2 (molar)"])
    ws.append(["station: VLM-MG"])
    ws.append(["Date", "CO2/SO2 (molar)", "1 sigma"])
    for w, o, s in zip(weeks, obs, sig, strict=True):
        ws.append([dt.datetime(w.year, w.month, w.day), round(float(o), 2), round(float(s), 2)])
        ws.cell(row=ws.max_row, column=1).number_format = "yyyy-mm-dd"
    return save_workbook(wb, out / "co2_so2_ratio_weekly.xlsx", creator=OBSERVATORY)


def survey_dates(sc: Scenario) -> pd.DatetimeIndex:
    """Dome-survey dates: every 2-5 weeks in eruptive phases, every 5-8 weeks in pauses (seeded)."""
    rng = _rng(sc.seed, 103)
    eruptive = pd.Series(sc.extrusion_m3_s > 0, index=sc.days)
    d = sc.days[0] + pd.Timedelta(days=20)
    out = []
    while d <= sc.days[-1]:
        out.append(d)
        active = bool(eruptive.get(d, False))
        d = d + pd.Timedelta(days=int(rng.integers(14, 31) if active else rng.integers(35, 50)))
    return pd.DatetimeIndex(out)


def _write_surveys(sc: Scenario, out: Path) -> Path:
    rng = _rng(sc.seed, 104)
    dates = survey_dates(sc)
    cum_dre = np.concatenate([[0.0], np.cumsum(sc.extrusion_m3_s * 86_400.0)])  # before 00:00 of each day
    idx = ((dates - sc.days[0]).days).to_numpy()
    bulk_true = cum_dre[idx] / (1 - VESICULARITY) / 1e6  # Mm3
    unc = 0.02 * bulk_true + 0.05
    obs = np.clip(bulk_true + unc * rng.standard_normal(idx.size), 0.0, None)
    head = (
        f"# {OBSERVATORY}: dome surveys (photogrammetry and laser ranging)\n"
        "# vesicularity: 0.15\n"
        "# volume basis: bulk\n"
        "# cumulative erupted volume since 2023-01-01, uncertainty 1 sigma\n"
        "survey date,cumulative volume (Mm3),uncertainty (Mm3)\n"
    )
    return _write_text(out / "dome_surveys.csv",
                       head + _lines(dates.strftime("%Y-%m-%d").to_numpy(dtype=object), _fmt(obs, "%.2f"),
                                     _fmt(unc, "%.2f")))


def _write_camera_rates(sc: Scenario, out: Path) -> Path:
    """Daily DRE extrusion-rate estimates from time-lapse camera photogrammetry (cloudy days missing)."""
    rng = _rng(sc.seed, 106)
    keep = rng.random(len(sc.days)) >= 0.25
    q = sc.extrusion_m3_s
    obs = q * np.exp(0.15 * rng.standard_normal(q.size))
    unc = np.where(q > 0, 0.3 * obs + 0.1, 0.1)
    head = (
        f"# {OBSERVATORY}: dome extrusion rate from time-lapse camera photogrammetry, daily means\n"
        "# station: VLM-CAM (north rim camera)\n"
        "# volume basis: DRE (converted by the observatory with vesicularity 0.15)\n"
        "# days with the dome in cloud are missing; 0.0 = no growth seen\n"
        "date,extrusion rate (m3/s DRE),uncertainty (m3/s)\n"
    )
    return _write_text(out / "extrusion_rate_camera_daily.csv",
                       head + _lines(sc.days[keep].strftime("%Y-%m-%d").to_numpy(dtype=object),
                                     _fmt(obs[keep], "%.2f"), _fmt(unc[keep], "%.2f")))


def _write_chronology(out: Path) -> Path:
    rows = ["start,end,activity,style,remarks"]
    for s, e, a, st, rem in CHRONOLOGY_ROWS:
        rows.append(f'{s},{e or ""},{a},{st},"{rem}"')
    return _write_text(out / "eruption_chronology.csv", "\n".join(rows) + "\n")


def _write_quakeml(sc: Scenario, out: Path) -> Path:
    ev = sc.events[sc.events["located"]]
    pid = "smi:local/velmarra/vvo"
    parts = [
        '<?xml version="1.0" encoding="UTF-8"?>\n'
        '<q:quakeml xmlns:q="http://quakeml.org/xmlns/quakeml/1.2" xmlns="http://quakeml.org/xmlns/bed/1.2">\n'
        f'<eventParameters publicID="{pid}/catalog/regional">\n'
        f"<description>{OBSERVATORY} regional network: located events (synthetic demo data)</description>\n"
    ]
    times = pd.DatetimeIndex(ev["regional_time"]).strftime("%Y-%m-%dT%H:%M:%S.%f").str[:-4].to_numpy()
    cls = ev["event_class"].to_numpy(dtype=object)
    first_ex = True
    for i, (t, c, la, lo, dep, ml) in enumerate(zip(times, cls, ev["latitude_deg"], ev["longitude_deg"],
                                                    ev["depth_m"], ev["ml"], strict=True)):
        k = f"{i + 1:05d}"
        if c == "VT":
            etype = "earthquake"
        else:
            etype = "volcanic eruption" if first_ex else "explosion"
            first_ex = False
        parts.append(
            f'<event publicID="{pid}/event/{k}"><preferredOriginID>{pid}/origin/{k}</preferredOriginID>'
            f"<preferredMagnitudeID>{pid}/magnitude/{k}</preferredMagnitudeID><type>{etype}</type>"
            f'<origin publicID="{pid}/origin/{k}"><time><value>{t}Z</value></time>'
            f"<latitude><value>{la:.5f}</value></latitude><longitude><value>{lo:.5f}</value></longitude>"
            f"<depth><value>{dep:.0f}</value></depth></origin>"
            f'<magnitude publicID="{pid}/magnitude/{k}"><mag><value>{ml:.1f}</value></mag><type>ML</type>'
            f"<originID>{pid}/origin/{k}</originID></magnitude></event>\n"
        )
    parts.append("</eventParameters>\n</q:quakeml>\n")
    return _write_text(out / "seismic_regional_network.xml", "".join(parts))


def _write_local_catalog(sc: Scenario, out: Path) -> Path:
    ev = sc.events
    times = pd.DatetimeIndex(ev["time"]).strftime("%Y-%m-%d %H:%M:%S").to_numpy(dtype=object)
    body = _lines(times, ev["local_code"].to_numpy(dtype=object), _fmt(ev["md"].to_numpy(), "%.1f"),
                  _fmt(ev["depth_km"].to_numpy(), "%.2f"))
    return _write_text(out / "seismic_observatory_local.csv", "origin time (UTC),type,Md,depth (km)\n" + body)


def _write_rsam(sc: Scenario, out: Path) -> Path:
    rng = _rng(sc.seed, 105)
    hours = pd.date_range(sc.days[0], sc.days[-1] + pd.Timedelta(hours=23), freq="h").as_unit("ns")
    t = hours.asi8
    q = _true_at(sc, t, sc.extrusion_m3_s)
    lp = _true_at(sc, t, sc.lp_hybrid_per_day)
    level = 60.0 + 12.0 * q + 12.0 * (lp - 2.0)
    dt_h = (t - EXPLOSION_TIME.floor("h").value) / 3.6e12
    level += np.where(dt_h >= 0, 8000.0 * np.exp(-np.clip(dt_h, 0, None) / 3.0), 0.0)
    tr = sc.events[sc.events["event_class"] == "tremor"]["time"].dt.floor("h").astype("int64").to_numpy()
    bump = np.zeros(t.size)
    pos = np.searchsorted(t, tr)
    for k in range(3):
        np.add.at(bump, np.clip(pos + k, 0, t.size - 1), 150.0 * (0.6**k))
    level += bump
    diurnal = 1.0 + 0.12 * np.clip(np.sin((hours.hour.to_numpy() - 12) / 24 * 2 * np.pi), 0, None)
    obs = level * diurnal * np.exp(0.2 * rng.standard_normal(t.size))
    keep = ~((hours >= pd.Timestamp("2024-03-03", tz="UTC")) & (hours < pd.Timestamp("2024-03-08T06:00", tz="UTC")))
    head = ("# station: VLM1 (upper north flank), vertical short-period seismometer\n"
            "# RSAM: mean absolute amplitude in 1-hour windows, 1-10 Hz, in digitiser counts\n"
            "time (UTC),RSAM (counts)\n")
    return _write_text(out / "rsam_VLM1_hourly.csv",
                       head + _lines(hours[keep].strftime("%Y-%m-%d %H:%M").to_numpy(dtype=object),
                                     _fmt(obs[keep], "%.1f")))


INGEST_TOML = """\
# Ingest options for the invented Velmarra demo files (used by `degas demo`).
# One [[file]] table per file; fields as in degas.io.base.ReadOptions.

[[file]]
path = "so2_flux_north_rim_scans.csv"
kind = "gas_flux"
species = "SO2"
station = "VLM-N"
# times carry their own UTC offset (-05:00); negative fluxes are rejected (no allow_negative)
[file.columns]
time = "Date/Time"
value = "SO2 flux (t/d)"
uncertainty = "flux error (t/d)"
quality = "QC flag"
[file.units]
value = "t/d"
uncertainty = "t/d"

[[file]]
path = "so2_flux_south_flank_scans.txt"
kind = "gas_flux"
species = "SO2"
station = "VLM-S"
dayfirst = true
timezone = "UTC"
[file.columns]
time = "fecha_hora"
value = "SO2_kg_s"
uncertainty = "err_kg_s"
quality = "calidad"
[file.units]
value = "kg/s"
uncertainty = "kg/s"

[[file]]
path = "co2_so2_ratio_weekly.xlsx"
kind = "gas_ratio"
species = "CO2/SO2"
station = "VLM-MG"
timezone = "UTC"
[file.columns]
time = "Date"
value = "CO2/SO2 (molar)"
uncertainty = "1 sigma"
[file.units]
value = "mol/mol"
uncertainty = "mol/mol"

[[file]]
path = "dome_surveys.csv"
kind = "erupted_volume"
volume_basis = "bulk"
vesicularity = 0.15
timezone = "UTC"
[file.columns]
time = "survey date"
value = "cumulative volume (Mm3)"
uncertainty = "uncertainty (Mm3)"
[file.units]
value = "Mm3"
uncertainty = "Mm3"

[[file]]
path = "extrusion_rate_camera_daily.csv"
kind = "extrusion_rate"
station = "VLM-CAM"
volume_basis = "dre"
timezone = "UTC"
[file.columns]
time = "date"
value = "extrusion rate (m3/s DRE)"
uncertainty = "uncertainty (m3/s)"
[file.units]
value = "m3/s"
uncertainty = "m3/s"

[[file]]
path = "eruption_chronology.csv"
kind = "chronology"
timezone = "UTC"
[file.columns]
time = "start"
end = "end"
state = "activity"
style = "style"

[[file]]
path = "seismic_regional_network.xml"
kind = "seismic_catalog"
station = "regional"

[[file]]
path = "seismic_observatory_local.csv"
kind = "seismic_catalog"
station = "local"
timezone = "UTC"
magnitude_type = "Md"
[file.columns]
time = "origin time (UTC)"
event_class = "type"
magnitude = "Md"
depth = "depth (km)"
[file.units]
depth = "km"
[file.class_map]
# "?" (unclassified) is classed as other by default; a punctuation-only code cannot be a key here
"Hyb" = "hybrid"
"unk" = "other"

[[file]]
path = "rsam_VLM1_hourly.csv"
kind = "amplitude"
station = "VLM1"
timezone = "UTC"
[file.columns]
time = "time (UTC)"
value = "RSAM (counts)"

[[file]]
path = "melt_inclusions.csv"
kind = "melt_inclusions"
station = "VLM"
"""


#: Melt-inclusion storage levels of the story (invented): pressure (MPa) and fluid x_H2O, 850 °C, 2600 kg/m³
#: crust below the summit vent; depths below sea level = P / (ρ g) - summit elevation.
INCLUSION_LEVELS = {
    "shallow": {"pressure_mpa": 135.0, "x_h2o_fluid": 0.88},
    "deep": {"pressure_mpa": 250.0, "x_h2o_fluid": 0.62},
}
INCLUSION_TEMPERATURE_C = 850.0
INCLUSION_STREAM = 107  # a new random stream: every older stream is unchanged
_INCLUSION_SAMPLES = (  # phase label, eruption date, sample, level per inclusion
    ("phase 1", "2023-06-20", "S23-06", ("shallow",) * 8),
    ("phase 1", "2023-10-05", "S23-10", ("shallow",) * 8),
    ("phase 2", "2024-07-15", "S24-07", ("shallow",) * 4 + ("deep",) * 5),
    ("phase 2", "2024-10-28", "S24-10", ("shallow",) * 3 + ("deep",) * 6),
)
_RHYOLITE_GLASS = {"SiO2": 76.2, "TiO2": 0.12, "Al2O3": 12.9, "FeO": 1.0, "MgO": 0.12, "CaO": 0.9, "Na2O": 3.9,
                   "K2O": 3.4}


def _level_depth_bsl_m(pressure_mpa: float) -> float:
    return pressure_mpa * 1e6 / (DRE_DENSITY_KG_M3 * 9.80665) - SUMMIT_ELEVATION_M


def inclusion_truth() -> dict:
    """The true storage levels and S populations behind ``melt_inclusions.csv``."""
    return {
        "model": "Liu et al. (2005), ideal H2O-CO2 fluid", "temperature_c": INCLUSION_TEMPERATURE_C,
        "crust_density_kg_m3": DRE_DENSITY_KG_M3, "vent_elevation_m": SUMMIT_ELEVATION_M,
        "depth_datum": "m below sea level, positive down",
        "levels": {k: {**v, "depth_bsl_m": round(_level_depth_bsl_m(v["pressure_mpa"]), 1)}
                   for k, v in INCLUSION_LEVELS.items()},
        "phases": {"phase 1": ["shallow"], "phase 2": ["shallow", "deep"]},
        "pressure_scatter_rel_1sigma": 0.06,
        "s_melt_inclusion_mean_ppm": PETROLOGY["sulfur_melt_inclusion_ppm"],
        "s_matrix_glass_mean_ppm": PETROLOGY["sulfur_matrix_glass_ppm"],
        "note": "sample means of S are set to the suggested petrology defaults; analytical noise H2O 0.15 wt%, "
                "CO2 6 % (1 sigma)",
    }


def _write_inclusions(sc: Scenario, out: Path) -> Path:
    from degas.analysis.petrology import liu_dissolved

    rng = _rng(sc.seed, INCLUSION_STREAM)
    rows = []
    s_mi, s_mg = [], []
    for phase, date, sample, levels in _INCLUSION_SAMPLES:
        for k, level in enumerate(levels):
            lv = INCLUSION_LEVELS[level]
            p = lv["pressure_mpa"] * math.exp(rng.normal(0.0, 0.06))
            x = float(np.clip(lv["x_h2o_fluid"] + rng.normal(0.0, 0.03), 0.3, 0.99))
            h, c = liu_dissolved(x * p, (1 - x) * p, INCLUSION_TEMPERATURE_C + 273.15)
            h_obs = float(h) + rng.normal(0.0, 0.15)
            c_obs = float(c) * (1 + rng.normal(0.0, 0.06))
            host = "plagioclase" if k % 3 else "hornblende"
            rows.append([sample, f"MI{k + 1}", date, phase, host, "melt inclusion", h_obs, 0.15, c_obs,
                         0.06 * c_obs, None, rng.normal(1900, 120)])
            s_mi.append(len(rows) - 1)
        for k in range(2):
            rows.append([sample, f"G{k + 1}", date, phase, "", "matrix glass", rng.uniform(0.1, 0.3), 0.05, None,
                         None, None, rng.normal(1100, 100)])
            s_mg.append(len(rows) - 1)
        if phase == "phase 2":
            rows.append([sample, "E1", date, phase, "plagioclase", "embayment", 2.4 + rng.normal(0, 0.2), 0.15,
                         120.0 * (1 + rng.normal(0, 0.1)), 10.0, None, rng.normal(1500, 100)])
    for idx, mean, sd in ((s_mi, PETROLOGY["sulfur_melt_inclusion_ppm"], 150.0),
                          (s_mg, PETROLOGY["sulfur_matrix_glass_ppm"], 50.0)):
        noise = rng.normal(0.0, sd, len(idx))
        for i, v in zip(idx, mean + noise - noise.mean(), strict=True):
            rows[i][10] = v
    for r in rows:  # embayments: S between inclusion and matrix-glass values
        if r[10] is None:
            r[10] = 700.0 + rng.normal(0, 80)
    head = ("Sample,Spot,Eruption date,Phase,Host mineral,Type,H2O (wt%),H2O 1σ (wt%),CO2 (ppm),CO2 1σ (ppm),"
            "S (µg/g),Cl (mg/kg)," + ",".join(_RHYOLITE_GLASS) + ",Total")
    lines = [head]
    for r in rows:
        ox = {k: v * (1 + rng.normal(0, 0.01)) for k, v in _RHYOLITE_GLASS.items()}
        total = sum(ox.values()) * (1 - r[6] / 100) - 0.3 + rng.normal(0, 0.4)
        scale = total / sum(ox.values())
        cells = [r[0], r[1], r[2], r[3], r[4], r[5], f"{r[6]:.2f}", f"{r[7]:.2f}",
                 "" if r[8] is None else f"{r[8]:.0f}", "" if r[9] is None else f"{r[9]:.0f}",
                 f"{r[10]:.0f}", f"{r[11]:.0f}", *(f"{v * scale:.2f}" for v in ox.values()), f"{total:.2f}"]
        lines.append(",".join(cells))
    return _write_text(out / "melt_inclusions.csv", "\n".join(lines) + "\n")


def _write_truth(sc: Scenario, out: Path, written: dict) -> Path:
    truth = dict(sc.truth)
    truth["melt_inclusions"] = inclusion_truth()
    truth["files"] = written
    return _write_text(out / "truth.json", json.dumps(truth, indent=2, ensure_ascii=False) + "\n")


def _file_facts(sc: Scenario, out: Path) -> dict:
    """Facts about the deliberate messiness of each file, for tests of the readers."""
    south = (out / "so2_flux_south_flank_scans.txt").read_text(encoding="utf-8").splitlines()[1:]
    keys = [ln.split(";")[0] for ln in south]
    dup_lines = len(keys) - len(set(keys))
    exact = len(south) - len(set(south))
    return {
        "so2_flux_north_rim_scans.csv": {
            "station": "VLM-N", "unit": "t/d", "times": f"ISO 8601 with offset {NORTH_UTC_OFFSET}",
            "scan_window_utc": "12:00-22:00, every ~15 min", "noise": "lognormal, sigma 0.30 (log units)",
            "qc_flags": ["good", "cloud", "low-wind"], "cloud_bias": 0.7,
            "missing_values": {"NaN": 4, "empty": 3}, "negative_values": 2,
            "instrument_gap": ["2024-08-05", "2024-08-26"], "days_without_scans_fraction": 0.07,
        },
        "so2_flux_south_flank_scans.txt": {
            "station": "VLM-S", "unit": "kg/s", "times": "dd/mm/yyyy HH:MM, naive, UTC",
            "plume_fraction_seen": 0.9, "qc_flags": ["buena", "nubes", "viento bajo"],
            "missing_code_rows": 5, "missing_code": "-999",
            "duplicate_time_rows": dup_lines, "exact_duplicate_rows": exact, "conflicting_duplicate_rows": 1,
            "unsorted_block": "rows of 15/10/2024 come after those of 16/10/2024",
            "gap": ["2025-06-01", "2025-08-01"],
        },
        "co2_so2_ratio_weekly.xlsx": {"station": "VLM-MG", "sampling": "weekly (Mondays), mean of the 7 days",
                                      "noise": "lognormal, sigma 0.10", "missing_weeks_fraction": 0.08},
        "dome_surveys.csv": {"n_surveys": int(len(survey_dates(sc))), "volume_basis": "bulk",
                             "vesicularity": VESICULARITY, "noise_1sigma_mm3": "0.02 * V + 0.05"},
        "seismic_observatory_local.csv": {"n_events": int(len(sc.events)), "magnitude_type": "Md",
                                          "depth": "km below sea level"},
        "seismic_regional_network.xml": {"n_events": int(sc.events["located"].sum()), "magnitude_type": "ML",
                                         "origin_time_scatter_s": 0.3, "depth": "m below sea level"},
        "extrusion_rate_camera_daily.csv": {"station": "VLM-CAM", "unit": "m3/s DRE",
                                            "noise": "lognormal, sigma 0.15", "missing_days_fraction": 0.25,
                                            "note": "daily estimates; the lag per coupled phase is recoverable "
                                                    "against daily SO2"},
        "rsam_VLM1_hourly.csv": {"unit": "counts", "gap": ["2024-03-03T00:00Z", "2024-03-08T06:00Z"]},
        "melt_inclusions.csv": {"n_inclusions": sum(len(x[3]) for x in _INCLUSION_SAMPLES),
                                "n_matrix_glass": 2 * len(_INCLUSION_SAMPLES), "n_embayments": 2,
                                "units": {"H2O": "wt%", "CO2": "ppm", "S": "µg/g", "Cl": "mg/kg"}},
    }


def write_demo(out_dir: Path, seed: int = DEFAULT_SEED) -> list[Path]:
    """Write every demo file into ``out_dir`` (created if needed); the same seed gives identical bytes.

    Parameters
    ----------
    out_dir : destination directory (``demo_series/`` in the repository).
    seed : scenario seed.

    Returns
    -------
    list of Path
        The files written, in :data:`FILES` order.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    sc = generate_scenario(seed)
    paths = [
        _write_north(sc, out),
        _write_south(sc, out),
        _write_ratio(sc, out),
        _write_surveys(sc, out),
        _write_camera_rates(sc, out),
        _write_chronology(out),
        _write_quakeml(sc, out),
        _write_local_catalog(sc, out),
        _write_rsam(sc, out),
        _write_inclusions(sc, out),
    ]
    paths.append(_write_truth(sc, out, _file_facts(sc, out)))
    paths.append(_write_text(out / "demo_ingest.toml", INGEST_TOML))
    paths.append(_write_text(out / "README.md", _readme(seed)))
    from degas.demo_exports import write_extra_exports

    paths.extend(write_extra_exports(sc, out))  # everyday-use examples; not part of the demo archive
    return paths


# --------------------------------------------------------------------------- large benchmark files


def write_large(out_dir: Path, *, years: int = 10, step: str = "10min", n_events: int = 1_000_000,
                seed: int = 7, gaps: bool = False) -> list[Path]:
    """Benchmark-size files (not committed): two SO2-flux stations, a daily extrusion rate and a large catalogue.

    Vectorised; 10 years at 10 minutes and a million events take well under a minute.

    Parameters
    ----------
    out_dir : destination directory.
    years : length of the flux series, years of 365 days.
    step : sampling step of the flux series (pandas frequency, e.g. "10min").
    n_events : number of catalogue events.
    seed : random seed.
    gaps : leave realistic gaps in the SO2 series (own random streams; the values of the scans kept
        are those of the gap-free files): 15 % of the scans missing at random and eight outages of
        one to six weeks per station.

    Returns
    -------
    list of Path
        ``large_so2_flux_VLM-N.csv``, ``large_so2_flux_VLM-S.csv``, ``large_extrusion_rate_daily.csv``,
        ``large_seismic_catalog.csv``.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    rng = _rng(seed, 200)
    t0 = pd.Timestamp("2016-01-01", tz="UTC")
    times = pd.date_range(t0, t0 + pd.Timedelta(days=365 * years), freq=step, inclusive="left").as_unit("ns")
    n = len(times)
    day = (times.asi8 - t0.value) / 8.64e13
    # a slow regime cycle (weeks to months) with level steps every ~200 days
    steps = rng.uniform(100, 1500, size=int(day[-1] // 200) + 2)
    level = steps[(day // 200).astype(int)] * (1 + 0.2 * np.sin(2 * np.pi * day / 37.0))
    iso = np.char.add(np.datetime_as_string(times.tz_convert(None).to_numpy(), unit="s"), "Z")
    paths = []
    for k, station in enumerate(("VLM-N", "VLM-S")):
        r = _rng(seed, 201 + k)
        flux = level * (1.0 - 0.1 * k) * np.exp(0.3 * r.standard_normal(n))
        flag = np.where(r.random(n) < 0.9, "good", "cloud")
        df = pd.DataFrame({"time": iso, "so2_flux_t_d": np.round(flux, 1), "uncertainty_t_d": np.round(0.25 * flux, 1),
                           "flag": flag})
        if gaps:
            rg = _rng(seed, 220 + k)
            keep = rg.random(n) >= 0.15
            per_day = int(pd.Timedelta("1D") // pd.Timedelta(step))
            for a, weeks in zip(rg.integers(0, n, size=8), rg.integers(1, 7, size=8), strict=True):
                keep[a : a + weeks * 7 * per_day] = False
            df = df[keep]
        p = out / f"large_so2_flux_{station}.csv"
        df.to_csv(p, index=False, lineterminator="\n")
        paths.append(p)
    # daily extrusion rate (m³/s DRE) that the gas follows 4 days later (positive lag: gas leads)
    r = _rng(seed, 205)
    days = pd.date_range(t0, t0 + pd.Timedelta(days=365 * years), freq="1D", inclusive="left")
    dd = np.arange(len(days), dtype=float)
    q_level = steps[((dd + 4) // 200).astype(int)] / 400.0 * (1 + 0.2 * np.sin(2 * np.pi * (dd + 4) / 37.0))
    q = np.round(np.clip(q_level * np.exp(0.1 * r.standard_normal(len(days))), 0, None), 3)
    p = out / "large_extrusion_rate_daily.csv"
    pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "extrusion rate (m3/s DRE)": q}).to_csv(
        p, index=False, lineterminator="\n")
    paths.append(p)
    r = _rng(seed, 210)
    span_ns = times.asi8[-1] - times.asi8[0]
    t_ev = np.sort(times.asi8[0] + (r.random(n_events) * span_ns).astype("int64"))
    codes = r.choice(np.array(["VT", "LP", "HB", "RF", "EX", "TR"]), size=n_events,
                     p=[0.35, 0.25, 0.15, 0.2, 0.01, 0.04])
    mag = np.round(_gr_magnitudes(r, n_events, 1.0, _DETECT_MU, _DETECT_SIGMA), 1)
    depth = np.round(np.exp(r.normal(math.log(3.0), 0.5, n_events)), 2)
    ev = pd.DataFrame({
        "origin time (UTC)": np.datetime_as_string(t_ev.astype("datetime64[ns]"), unit="s"),
        "type": codes, "Md": mag, "depth (km)": depth,
        "latitude": np.round(SUMMIT_LAT_DEG + 0.01 * r.standard_normal(n_events), 5),
        "longitude": np.round(SUMMIT_LON_DEG + 0.01 * r.standard_normal(n_events), 5),
    })
    p = out / "large_seismic_catalog.csv"
    ev.to_csv(p, index=False, lineterminator="\n")
    paths.append(p)
    return paths


# --------------------------------------------------------------------------- README


def _readme(seed: int) -> str:
    return f"""# Demo series: the invented volcano {VOLCANO}

**Everything in this folder is synthetic.** {VOLCANO}, the "{OBSERVATORY}", every station code
(VLM-N, VLM-S, VLM-MG, VLM-CAM, VLM1-VLM4) and site name are invented; the coordinates are arbitrary numbers
that refer to no real volcano. No file comes from, or imitates the export of, any real instrument.
The data exist so that `degas` can be tried, tested and documented on a story whose truth is
known exactly (`truth.json`).

Regenerate (byte-identical for the same seed; this folder was written with seed {seed}):

```
python -m degas.demo demo_series            # or: from degas.demo import write_demo; write_demo(Path("demo_series"))
python -m degas.demo /tmp/large --large     # benchmark-size files (10 years at 10 min, 10^6 events; not committed)
```

## The story (UTC; intervals [start, end))

- 2023-01-01 - 2023-05-01, **quiet** (regime `quiet`): passive SO2 ~150 t/d, no extrusion,
  background VT ~2/day and LP ~1/day.
- 2023-05-01 - 2023-12-01, **eruptive phase 1** (`coupled`): effusive dome growth ~3 m³/s DRE in
  pulses of weeks; SO2 ~1200 t/d; gas leads extrusion by 4 days.
- 2023-12-01 - 2024-06-01, **pause** (`gas_only`): no extrusion, SO2 stays high (~900 t/d, slow
  decay); CO2/SO2 rises from ~1.5 to ~4.
- 2024-06-01 - 2024-12-16, **eruptive phase 2** (`coupled`): ~2 m³/s, SO2 ~1000 t/d; gas leads by
  3 days.
- 2024-12-16 - 2025-03-10, **sealing** (`magma_only`): extrusion goes on (1.5 -> 1.0 m³/s) but SO2
  falls to ~200 t/d; the LP + hybrid rate steps up to ~6/day and accelerates to ~30/day; RSAM rises.
- 2025-03-10, **explosive event** at 08:42 UTC (`gas_only`): SO2 spike of ~5000 t/d decaying over a
  few days.
- 2025-03-11 - (open), **renewed dome growth** (`coupled`): ~4 m³/s, SO2 ~1500 t/d; gas leads by
  5 days.

Lag convention: a **positive lag means gas leads magma output** (gas exsolves from magma rising in
the conduit days before that magma reaches the dome). With the suggested petrology (S 1500 ppm in
melt inclusions, 200 ppm in matrix glass, 40 % crystals, 2600 kg/m³ DRE) the observed/petrological
SO2 ratio is a little above 1 in the coupled phases, undefined (gas without magma) in the pause and
below 1 during sealing; `truth.json` lists the exact factors, change dates, lags, b-values and more.

## Files (deliberately messy, like real exports)

- `so2_flux_north_rim_scans.csv` - VLM-N scanning spectrometer, one SO2 flux per scan (~every 15
  min, 12:00-22:00 UTC), t/d. Times are ISO 8601 **with the instrument's fixed offset -05:00**.
  Columns `Date/Time`, `SO2 flux (t/d)`, `flux error (t/d)`, `QC flag` (good / cloud / low-wind).
  Scan noise is lognormal (~30 %); cloud-affected scans read low. Contains 4 `NaN` and 3 empty
  flux cells, 2 negative fluxes (background-subtraction artefacts; the reader rejects them as
  negative unless `allow_negative` is set), days without scans and a 3-week instrument gap
  (2024-08-05 to 2024-08-25).
- `so2_flux_south_flank_scans.txt` - VLM-S, semicolon-separated, columns
  `fecha_hora;SO2_kg_s;err_kg_s;calidad` (generic words in another language: date-time, flux,
  error, quality; quality codes buena / nubes / viento bajo). Times are day-first
  `dd/mm/yyyy HH:MM` and **in UTC** although they carry no zone. Values in kg/s; this
  cross-section sees ~90 % of the plume. Contains 5 rows with the missing-value code `-999`
  (value and error; the reader rejects them as a missing-value code, not as negative fluxes),
  6 exact duplicate rows, one same-time row with a different value (conflict), the scans of
  15/10/2024 placed after those of 16/10/2024, and a two-month gap (June-July 2025).
- `co2_so2_ratio_weekly.xlsx` - VLM-MG multi-gas station, weekly molar CO2/SO2 (sheet
  "VLM-MG weekly": a title row and a `station:` row above the header `Date`, `CO2/SO2 (molar)`,
  `1 sigma`; dates are real Excel dates, UTC). Some weeks are missing.
- `dome_surveys.csv` - cumulative erupted **bulk** volume (Mm3) from ~40 dome surveys (every 2-5
  weeks while the dome grows, sparser in pauses); preamble `# vesicularity: 0.15` and
  `# volume basis: bulk`. DRE = bulk x (1 - 0.15). A survey dated D gives the volume before 00:00 UTC
  on D; survey noise may make consecutive values dip slightly.
- `extrusion_rate_camera_daily.csv` - daily DRE extrusion-rate estimates (m³/s) from time-lapse
  camera photogrammetry at the north rim (VLM-CAM); cloudy days missing, 0.0 when no growth is
  seen; noise ~15 %. Daily resolution is what makes the few-day gas lead measurable: the surveys
  are weeks apart.
- `eruption_chronology.csv` - the observatory chronology, columns `start`, `end`, `activity`
  (eruptive / pause), `style` (effusive / explosive, empty in pauses), `remarks`; end is exclusive and
  the last phase is open (empty end). The sealing is not a separate row: the observatory records
  continuous dome growth from 2024-06-01 to the explosion.
- `seismic_regional_network.xml` - QuakeML 1.2 (BED namespace) from the regional network: located
  VT events (type `earthquake`) and the explosions (`volcanic eruption` for the main one,
  `explosion` for the others); origin time, latitude, longitude, depth in metres, magnitude `ML`
  (reads ~0.1 above the local Md; origin times differ from the local ones by a few tenths of a second).
- `seismic_observatory_local.csv` - the observatory's own catalogue of every event: `origin time
  (UTC)`, `type`, `Md`, `depth (km)`. Local codes VT, LP, HB (hybrid), RF (rockfall), EX
  (explosion), TR (tremor onset), with odd spellings `lp`, `Hyb` and the unclassified codes `?` and
  `unk`. Small events often lack magnitude or depth. Magnitudes follow Gutenberg-Richter laws (b = 1.0
  for VT; b = 1.6 for LP/hybrid during sealing, 1.3 otherwise) with completeness ~0.8 and a detection
  roll-off below it.
- `rsam_VLM1_hourly.csv` - hourly RSAM-style amplitude (counts) at VLM1; rises during sealing, peaks
  at the explosion; a 5-day station outage in March 2024.
- `melt_inclusions.csv` - microprobe/FTIR-style analyses of melt inclusions (in plagioclase and
  hornblende), embayments and matrix glass from dome samples of eruptive phases 1 and 2: H2O (wt%) with
  1σ, CO2 (ppm) with 1σ, S (µg/g), Cl (mg/kg), major oxides and the analytical total. Phase 1 magma was
  stored at one level (~135 MPa, ~3 km below sea level); phase 2 also tapped a deeper, CO2-richer level
  (~250 MPa, ~7.5 km), as the CO2/SO2 rise of the pause suggests; matrix glass is degassed (S ~200 µg/g,
  H2O ~0.2 wt%). Volatile contents follow Liu et al. (2005) solubility at 850 °C; the levels are in
  `truth.json` (`melt_inclusions`).
- `truth.json` - the ground truth (phases, regimes, change dates, lags, b-values, volumes,
  excess-degassing factors, messiness facts per file, seed and generator version).
- `demo_ingest.toml` - the per-file ingest options (`[[file]]` tables) used by `degas demo`.

The rockfall rate (RF events per day, ~0.2 + 2.5 x extrusion rate) and RSAM also follow the extrusion
rate day by day, as proxies of dome growth commonly do at dome-building volcanoes.
"""


# --------------------------------------------------------------------------- entry point


def main(argv: Sequence[str] | None = None) -> int:
    """``python -m degas.demo OUT_DIR [--large] [--seed N]``."""
    parser = argparse.ArgumentParser(prog="python -m degas.demo",
                                     description=f"Write the invented {VOLCANO} demo files (synthetic data).")
    parser.add_argument("out_dir", type=Path)
    parser.add_argument("--large", action="store_true", help="write the benchmark-size files instead")
    parser.add_argument("--seed", type=int, default=None)
    parser.add_argument("--gaps", action="store_true", help="with --large: leave realistic gaps in the SO2 series")
    args = parser.parse_args(argv)
    if args.large:
        paths = write_large(args.out_dir, seed=7 if args.seed is None else args.seed, gaps=args.gaps)
    else:
        paths = write_demo(args.out_dir, seed=DEFAULT_SEED if args.seed is None else args.seed)
    for p in paths:
        print(f"{p}  {p.stat().st_size / 1e6:.2f} MB")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
