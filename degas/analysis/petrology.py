"""Where the gas comes from: melt-inclusion saturation pressures, storage depths and the petrological budget.

Methods
-------
* **Saturation pressure, Liu et al. (2005)** (Liu, Zhang & Behrens 2005, *J. Volcanol. Geotherm. Res.* 143,
  219-235), the explicit empirical H2O-CO2 solubility equations for rhyolitic melts, implemented here::

      H2O [wt%] = (354.94 Pw^0.5 + 9.623 Pw - 1.5223 Pw^1.5) / T + 0.0012439 Pw^1.5
                  + Pc (-1.084e-4 Pw^0.5 - 1.362e-5 Pw)
      CO2 [ppm] = Pc (5668 - 55.99 Pw) / T + Pc (0.4133 Pw^0.5 + 2.041e-3 Pw^1.5)

  with Pw, Pc the partial pressures of H2O and CO2 in the fluid (MPa) and T in K. **Fluid composition:**
  the fluid is a binary H2O-CO2 mixture with ideal mixing, as Liu et al. assume: Pw = x_H2O P and
  Pc = (1 - x_H2O) P, where x_H2O is the mole fraction of H2O in the fluid. The saturation pressure of an
  inclusion is the total pressure P = Pw + Pc at which *both* dissolved contents are in equilibrium with
  one such fluid. Because the CO2 equation is linear in Pc, Pc = CO2 / g(Pw) with
  g(Pw) = (5668 - 55.99 Pw)/T + 0.4133 Pw^0.5 + 2.041e-3 Pw^1.5 (positive over the calibrated range);
  substituting it in the H2O equation leaves one equation in Pw, solved by bisection (vectorised). With
  no CO2 the fluid is pure H2O; with no H2O it is pure CO2 (as VESIcal does). Checked against VESIcal
  (Iacovino et al. 2021) ``calculate_saturation_pressure(model="Liu")`` (tests/analysis/data).
* **Other solubility models** (Dixon 1997, Iacono-Marziano et al. 2012, Shishkina et al. 2014, ...) come
  from VESIcal when the optional extra ``degas[petrology]`` is installed; they are chosen by name.
* **Pressure to depth**: lithostatic, P(z) = g ∫ ρ(z) dz from the vent downwards, with g = 9.80665 m/s²
  (standard gravity) and a stated density (one value or layers). Depths are then put on the datum of the
  hypocentres: **metres below sea level, positive down** (depth_bsl = depth_below_vent - vent elevation);
  a catalogue whose depths are below the vent is converted once, at the door (:func:`to_sea_level_depths`).
* **Uncertainty**: Monte Carlo over the analytical 1-sigma of H2O and CO2 (normal, clipped at zero) and a
  uniform temperature range, seeded.
* **Petrological SO2**: Devine, Sigurdsson & Davis (1984): SO2 per m³ DRE = (M_SO2/M_S) (S_MI - S_MG)
  ρ_DRE (1 - φ_xtl), with S_MI and S_MG the means of the inclusion and matrix-glass populations, resampled
  by bootstrap over analyses (Efron 1979), and ρ, φ drawn from their stated 1-sigma.

Saturation pressures are **minimum** entrapment pressures: an inclusion may have trapped a melt that was
not fluid-saturated, and CO2 is lost to shrinkage bubbles (Moore et al. 2015, *Am. Mineral.* 100, 806-823,
from memory) and by diffusion, both of which lower the apparent pressure.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.analysis.budget import SampledPetrology
from degas.chem import SO2_PER_S
from degas.errors import DegasError, NotEnoughDataError
from degas.model import EventCatalog, MeltInclusions

#: Standard gravity, m/s² (CGPM 1901; BIPM SI Brochure).
G_STANDARD = 9.80665
#: The solubility model implemented in degas itself.
OWN_MODELS: tuple[str, ...] = ("Liu",)
#: VESIcal (Iacovino et al. 2021) mixed-fluid models offered through the [petrology] extra, by VESIcal name.
VESICAL_MODELS: tuple[str, ...] = ("Dixon", "IaconoMarziano", "ShishkinaIdealMixing", "VESIcal-Liu")
#: Analytical 1-sigma assumed when a file gives none (relative; common practice for FTIR/SIMS volatiles).
DEFAULT_REL_SD = {"h2o": 0.05, "co2": 0.10}
#: Analysis types that record pre-eruptive melt (Devine et al. 1984 use inclusions; embayments are excluded
#: because they exchanged volatiles with the degassing melt).
INCLUSION_TYPES = ("inclusion",)


def model_names() -> tuple[str, ...]:
    """Every solubility model name degas accepts."""
    return OWN_MODELS + VESICAL_MODELS


def check_model(name: str) -> str:
    """Return ``name`` if it is a known model, else raise listing the valid ones."""
    if name not in model_names():
        raise DegasError(f"unknown solubility model {name!r}; valid: {', '.join(model_names())} "
                         "(all but Liu need the optional extra: pip install 'degas[petrology]')")
    return name


# --------------------------------------------------------------------------- Liu et al. (2005)


def liu_dissolved(pw_mpa, pc_mpa, temperature_k):
    """Dissolved H2O (wt%) and CO2 (ppm) in rhyolite at H2O and CO2 partial pressures (MPa), T (K).

    Liu, Zhang & Behrens (2005), equations for H2O (their eq. 1) and CO2 (eq. 2).
    """
    pw = np.asarray(pw_mpa, dtype="float64")
    pc = np.asarray(pc_mpa, dtype="float64")
    t = np.asarray(temperature_k, dtype="float64")
    sq = np.sqrt(pw)
    h2o = (354.94 * sq + 9.623 * pw - 1.5223 * pw**1.5) / t + 0.0012439 * pw**1.5 + pc * (-1.084e-4 * sq
                                                                                          - 1.362e-5 * pw)
    co2 = pc * (5668.0 - 55.99 * pw) / t + pc * (0.4133 * sq + 2.041e-3 * pw**1.5)
    return h2o, co2


def _co2_slope(pw, t):
    return (5668.0 - 55.99 * pw) / t + 0.4133 * np.sqrt(pw) + 2.041e-3 * pw**1.5


def liu_saturation_pressure(h2o_wt_pct, co2_ppm, temperature_c, *, p_max_mpa: float = 800.0):
    """Saturation pressure (MPa) and fluid mole fraction of H2O for rhyolite, Liu et al. (2005).

    Parameters
    ----------
    h2o_wt_pct : dissolved H2O, wt% (array-like).
    co2_ppm : dissolved CO2, ppm by mass (array-like).
    temperature_c : temperature, °C (array-like, broadcast).
    p_max_mpa : upper end of the search for the H2O partial pressure, MPa; NaN beyond it.

    Returns
    -------
    (pressure_mpa, x_h2o_fluid) arrays; the fluid is an ideal H2O-CO2 mixture (see module docstring).
    """
    h, c, tc = np.broadcast_arrays(np.asarray(h2o_wt_pct, dtype="float64"), np.asarray(co2_ppm, dtype="float64"),
                                   np.asarray(temperature_c, dtype="float64"))
    h = np.clip(h, 0.0, None)
    c = np.clip(np.nan_to_num(c, nan=0.0), 0.0, None)
    t = tc + 273.15

    def f(pw):
        pc = c / _co2_slope(pw, t)
        return liu_dissolved(pw, pc, t)[0] - h

    lo = np.zeros_like(h)
    hi = np.full_like(h, p_max_mpa)
    ok = f(hi) >= 0
    for _ in range(60):  # bisection: 800 MPa / 2^60 is far below float resolution of the answer
        mid = 0.5 * (lo + hi)
        up = f(mid) < 0
        lo = np.where(up, mid, lo)
        hi = np.where(up, hi, mid)
    pw = 0.5 * (lo + hi)
    pc = c / _co2_slope(pw, t)
    p = pw + pc
    p = np.where(ok & np.isfinite(h) & np.isfinite(t), p, np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        x = np.where(p > 0, pw / p, np.nan)
    return p, x


def liu_isobar(pressure_mpa: float, temperature_c: float, n: int = 41) -> pd.DataFrame:
    """Dissolved H2O (wt%) and CO2 (ppm) along one isobar, fluid x_H2O from 0 to 1 (Liu et al. 2005)."""
    x = np.linspace(0.0, 1.0, n)
    h, c = liu_dissolved(x * pressure_mpa, (1 - x) * pressure_mpa, temperature_c + 273.15)
    return pd.DataFrame({"x_h2o_fluid": x, "h2o_wt_pct": h, "co2_ppm": c})


# --------------------------------------------------------------------------- VESIcal (optional)


def vesical_saturation_pressure(model: str, h2o_wt_pct, co2_ppm, temperature_c, composition: dict | None = None
                                ) -> np.ndarray:
    """Saturation pressures (MPa) from a VESIcal model (Iacovino et al. 2021); needs ``degas[petrology]``.

    ``composition`` : anhydrous major oxides in wt% (a rhyolite is used when None, and a note should say so).
    """
    check_model(model)
    try:
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            import VESIcal as v
    except ImportError:
        raise DegasError(f"solubility model {model!r} needs VESIcal: pip install 'degas[petrology]'") from None
    name = "Liu" if model == "VESIcal-Liu" else model
    comp = dict(composition or RHYOLITE_WT_PCT)
    h, c, t = np.broadcast_arrays(np.asarray(h2o_wt_pct, float), np.asarray(co2_ppm, float),
                                  np.asarray(temperature_c, float))
    out = np.full(h.shape, np.nan)
    import warnings

    for i in np.ndindex(h.shape):
        s = v.Sample({**comp, "H2O": float(h[i]), "CO2": float(c[i]) * 1e-4})
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            try:
                out[i] = v.calculate_saturation_pressure(sample=s, temperature=float(t[i]), model=name).result / 10
            except Exception:  # VESIcal raises many types for out-of-range inputs
                out[i] = np.nan
    return out


#: A metaluminous high-silica rhyolite (wt%, anhydrous), inside the Liu et al. (2005) calibration ranges.
RHYOLITE_WT_PCT = {"SiO2": 77.5, "TiO2": 0.08, "Al2O3": 12.5, "FeO": 0.7, "MgO": 0.07, "CaO": 0.5,
                   "Na2O": 4.0, "K2O": 4.5}


def saturation_pressure(model: str, h2o_wt_pct, co2_ppm, temperature_c, composition: dict | None = None
                        ) -> np.ndarray:
    """Saturation pressure (MPa) with a model chosen by name (see :func:`model_names`)."""
    check_model(model)
    if model == "Liu":
        return liu_saturation_pressure(h2o_wt_pct, co2_ppm, temperature_c)[0]
    return vesical_saturation_pressure(model, h2o_wt_pct, co2_ppm, temperature_c, composition)


def isobars(model: str, pressures_mpa: Sequence[float], temperature_c: float, composition: dict | None = None
            ) -> pd.DataFrame:
    """Isobars of a model: columns pressure_mpa, h2o_wt_pct, co2_ppm (fluid from pure CO2 to pure H2O).

    Liu et al. (2005) from :func:`liu_isobar`; VESIcal models from its ``calculate_isobars_and_isopleths``.
    """
    check_model(model)
    if model == "Liu":
        return pd.concat([liu_isobar(p, temperature_c).assign(pressure_mpa=float(p))[
            ["pressure_mpa", "h2o_wt_pct", "co2_ppm"]] for p in pressures_mpa], ignore_index=True)
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            import VESIcal as v
        except ImportError:
            raise DegasError(f"solubility model {model!r} needs VESIcal: pip install 'degas[petrology]'") from None
        s = v.Sample({**(composition or RHYOLITE_WT_PCT), "H2O": 4.0, "CO2": 0.01})
        iso = v.calculate_isobars_and_isopleths(sample=s, temperature=float(temperature_c),
                                                pressure_list=[float(p) * 10 for p in pressures_mpa],
                                                isopleth_list=[0, 1], model="Liu" if model == "VESIcal-Liu" else model,
                                                print_status=False).result[0]
    return pd.DataFrame({"pressure_mpa": iso["Pressure"].to_numpy(float) / 10,
                         "h2o_wt_pct": iso["H2O_liq"].to_numpy(float), "co2_ppm": iso["CO2_liq"].to_numpy(float) * 1e4})


# --------------------------------------------------------------------------- pressure -> depth


@dataclass(frozen=True)
class CrustModel:
    """Density below the vent and where the vent is.

    Attributes
    ----------
    layers : ((top_depth_below_vent_m, density_kg_m3), ...), first top 0; one layer = a single density.
    vent_elevation_m : vent height above sea level, m.
    """

    layers: tuple[tuple[float, float], ...] = ((0.0, 2600.0),)
    vent_elevation_m: float = 0.0

    def __post_init__(self) -> None:
        if not self.layers or self.layers[0][0] != 0:
            raise DegasError("the density profile must start at depth 0 below the vent")
        tops = [t for t, _ in self.layers]
        if any(b <= a for a, b in zip(tops, tops[1:], strict=False)):
            raise DegasError("density layers must be listed by increasing depth")
        if any(not 1000 <= r <= 4000 for _, r in self.layers):
            raise DegasError("crustal densities must be between 1000 and 4000 kg/m³")

    def describe(self) -> str:
        if len(self.layers) == 1:
            rho = f"{self.layers[0][1]:g} kg/m³"
        else:
            rho = ", ".join(f"{r:g} kg/m³ from {t / 1000:g} km" for t, r in self.layers)
        return (f"lithostatic pressure with density {rho} below a vent at {self.vent_elevation_m:g} m above sea "
                "level; depths in metres below sea level (positive down), the datum of the hypocentres")

    def depth_below_vent(self, pressure_pa):
        """Depth below the vent (m) where lithostatic pressure equals ``pressure_pa`` (Pa)."""
        p = np.asarray(pressure_pa, dtype="float64")
        tops = np.array([t for t, _ in self.layers] + [np.inf])
        rhos = np.array([r for _, r in self.layers])
        p_tops = np.concatenate([[0.0], np.cumsum(rhos[:-1] * G_STANDARD * np.diff(tops[:-1]))])
        k = np.clip(np.searchsorted(p_tops, p, side="right") - 1, 0, len(rhos) - 1)
        return tops[k] + (p - p_tops[k]) / (rhos[k] * G_STANDARD)

    def depth_bsl(self, pressure_pa):
        """Depth below sea level (m, positive down) for a pressure (Pa)."""
        return self.depth_below_vent(pressure_pa) - self.vent_elevation_m


def to_sea_level_depths(catalog: EventCatalog, datum: str, vent_elevation_m: float) -> EventCatalog:
    """Hypocentre depths on the sea-level datum: ``datum`` "sea_level" keeps them, "vent" shifts them."""
    if datum == "sea_level":
        return catalog
    if datum != "vent":
        raise DegasError(f"unknown depth datum {datum!r}; valid: sea_level, vent")
    return catalog.with_data(catalog.data.assign(depth_m=catalog.data["depth_m"] - vent_elevation_m))


# --------------------------------------------------------------------------- Monte Carlo storage depths


@dataclass(frozen=True)
class StorageResult:
    """Saturation pressures and storage depths of melt inclusions, with Monte Carlo intervals.

    Attributes
    ----------
    inclusions : one row per inclusion/embayment: analysis_id, sample_id, phase, analysis_type, time,
        h2o_wt_pct, co2_ppm, pressure_mpa (central values), x_h2o_fluid, pressure_p2_5_mpa,
        pressure_p97_5_mpa, depth_bsl_m, depth_p2_5_m, depth_p97_5_m (m below sea level, positive down),
        and pressure_alt_mpa (the second model, when one was computed).
    phases : one row per phase: n, pressure quantiles p5/p25/p50/p75/p95 (MPa) and depth quantiles
        (m below sea level) of the pooled Monte Carlo draws of that phase.
    draws_depth_m : phase -> array of pooled depth draws (m below sea level).
    """

    inclusions: pd.DataFrame
    phases: pd.DataFrame
    draws_depth_m: dict
    model: str
    temperature_c: tuple[float, float]
    crust: CrustModel
    n_draws: int
    seed: int
    alt_model: str | None = None
    notes: tuple[str, ...] = field(default=())

    def to_frame(self) -> pd.DataFrame:
        return self.inclusions


_Q = (5, 25, 50, 75, 95)


def storage_depths(mi: MeltInclusions, *, model: str = "Liu", temperature_c: float | tuple[float, float] = 850.0,
                   phase_temperatures: dict | None = None, crust: CrustModel | None = None, n_draws: int = 500,
                   seed: int = 0, alt_model: str | None = None) -> StorageResult:
    """Saturation pressure and depth of each inclusion and embayment, with Monte Carlo intervals.

    Parameters
    ----------
    mi : melt-inclusion record (mass fractions).
    model : solubility model name (:func:`model_names`).
    temperature_c : one temperature or a (low, high) range, °C, drawn uniformly.
    phase_temperatures : phase -> temperature or range, °C, overriding ``temperature_c``.
    crust : density profile and vent elevation; default 2600 kg/m³, vent at sea level.
    n_draws : Monte Carlo draws per inclusion.
    seed : random seed (reproducible).
    alt_model : a second model for the central values, to show the model spread (None: none).
    """
    check_model(model)
    crust = crust or CrustModel()
    d = mi.data
    d = d[d["analysis_type"].isin(["inclusion", "embayment"])]
    notes: list[str] = []
    # H2O is needed: with CO2 alone the pure-CO2 pressure is far too low, not a usable minimum.
    n_no_h2o = int((d["h2o_frac"].isna() & d["co2_frac"].notna()).sum())
    if n_no_h2o:
        notes.append(f"{n_no_h2o} inclusion(s)/embayment(s) with CO2 but no H2O: no saturation pressure computed "
                     "(a missing H2O is not zero)")
    d = d[d["h2o_frac"].notna()].reset_index(drop=True)
    if d.empty:
        raise NotEnoughDataError("no inclusion or embayment with H2O to compute a saturation pressure")
    n_no_co2 = int(d["co2_frac"].isna().sum())
    if n_no_co2:
        notes.append(f"{n_no_co2} inclusion(s)/embayment(s) without CO2: CO2 taken as 0, so their pressure is the "
                     "pure-H2O saturation pressure (a minimum)")
    rng = np.random.default_rng(seed)
    n = len(d)
    h = d["h2o_frac"].fillna(0.0).to_numpy() * 100
    c = d["co2_frac"].fillna(0.0).to_numpy() * 1e6
    hs = d["h2o_sd_frac"].to_numpy() * 100
    cs = d["co2_sd_frac"].to_numpy() * 1e6
    n_assumed = int(np.isnan(hs).sum() + np.isnan(cs).sum())
    hs = np.where(np.isnan(hs), DEFAULT_REL_SD["h2o"] * h, hs)
    cs = np.where(np.isnan(cs), DEFAULT_REL_SD["co2"] * c, cs)
    if n_assumed:
        notes.append(f"{n_assumed} H2O/CO2 value(s) without an analytical 1-sigma: {DEFAULT_REL_SD['h2o']:.0%} "
                     f"(H2O) and {DEFAULT_REL_SD['co2']:.0%} (CO2) relative assumed (common practice)")
    phases = d["phase"].fillna("all").astype(str).to_numpy()
    t_lo = np.empty(n)
    t_hi = np.empty(n)
    for i, ph in enumerate(phases):
        tr = (phase_temperatures or {}).get(ph, temperature_c)
        lo, hi = (tr, tr) if np.isscalar(tr) else tr
        t_lo[i], t_hi[i] = float(lo), float(hi)
    t_mid = 0.5 * (t_lo + t_hi)
    unused = sorted(set(phase_temperatures or {}) - set(phases))
    if unused:
        notes.append(f"phase temperature(s) for {', '.join(map(repr, unused))} match no phase of the inclusions "
                     f"(phases: {', '.join(map(repr, pd.unique(phases)))}); the general temperature was used")
    hd = np.clip(rng.normal(h[:, None], hs[:, None], (n, n_draws)), 0, None)
    cd = np.clip(rng.normal(c[:, None], cs[:, None], (n, n_draws)), 0, None)
    td = rng.uniform(t_lo[:, None], t_hi[:, None], (n, n_draws))
    if model == "Liu":
        p_c, x_c = liu_saturation_pressure(h, c, t_mid)
        pd_ = liu_saturation_pressure(hd, cd, td)[0]
    else:
        p_c = _per_row(model, h, c, t_mid, d)
        k = min(n_draws, 50)
        pd_ = np.vstack([_per_row(model, hd[i, :k], cd[i, :k], td[i, :k], d.iloc[[i] * k]) for i in range(n)])
        x_c = np.full(n, np.nan)
        notes.append(f"{model} (VESIcal) is slow: {k} Monte Carlo draws per inclusion")
    if model == "Liu":
        notes.extend(_liu_calibration_notes(p_c, t_lo, t_hi, d))
    n_nan = int(np.isnan(p_c).sum())
    if n_nan:
        notes.append(f"{n_nan} inclusion(s) outside the model's range (no saturation pressure)")
    pa = pd_ * 1e6
    depth_draws = crust.depth_bsl(pa)
    rows = pd.DataFrame({
        "analysis_id": d["analysis_id"], "sample_id": d["sample_id"], "phase": phases,
        "analysis_type": d["analysis_type"], "time": d["time"], "h2o_wt_pct": h, "co2_ppm": c,
        "temperature_c": t_mid, "pressure_mpa": p_c, "x_h2o_fluid": x_c,
        "pressure_p2_5_mpa": np.nanpercentile(pd_, 2.5, axis=1), "pressure_p97_5_mpa": np.nanpercentile(pd_, 97.5,
                                                                                                     axis=1),
        "depth_bsl_m": crust.depth_bsl(p_c * 1e6),
        "depth_p2_5_m": np.nanpercentile(depth_draws, 2.5, axis=1),
        "depth_p97_5_m": np.nanpercentile(depth_draws, 97.5, axis=1),
    })
    if alt_model is not None and alt_model != model:
        try:
            rows["pressure_alt_mpa"] = _per_row(alt_model, h, c, t_mid, d)
        except DegasError as exc:
            notes.append(f"second model {alt_model} not run: {exc}")
            alt_model = None
    else:
        alt_model = None
    incl = rows["analysis_type"].to_numpy() == "inclusion"
    phase_rows = []
    draws: dict = {}
    for ph in pd.unique(phases):
        sel = (phases == ph) & incl
        if not sel.any():
            sel = phases == ph
        pp = pd_[sel].ravel()
        dd = depth_draws[sel].ravel()
        pp, dd = pp[np.isfinite(pp)], dd[np.isfinite(dd)]
        if not len(pp):
            continue
        draws[ph] = dd
        row = {"phase": ph, "n": int(sel.sum())}
        row.update({f"pressure_p{q}_mpa": float(np.percentile(pp, q)) for q in _Q})
        row.update({f"depth_p{q}_m": float(np.percentile(dd, q)) for q in _Q})
        if alt_model is not None:
            row["pressure_alt_p50_mpa"] = float(np.nanmedian(rows.loc[sel, "pressure_alt_mpa"]))
        phase_rows.append(row)
    if (rows["analysis_type"] == "embayment").any():
        notes.append("embayments record melt that was already degassing on ascent; they are listed but phase "
                     "storage depths use inclusions only")
    notes.append("saturation pressures are minimum entrapment pressures (CO2 lost to shrinkage bubbles or by "
                 "diffusion lowers them)")
    return StorageResult(rows, pd.DataFrame(phase_rows), draws, model,
                         (float(np.min(t_lo)), float(np.max(t_hi))), crust, n_draws, seed, alt_model, tuple(notes))


#: Calibrated range of Liu et al. (2005): 0-500 MPa, 700-1200 °C, rhyolitic melts (the ranges VESIcal's
#: calibration checks state for its Liu model, Iacovino et al. 2021).
LIU_RANGE = {"pressure_mpa": (0.0, 500.0), "temperature_c": (700.0, 1200.0)}
#: SiO2 below which a melt is not rhyolitic (wt%, anhydrous; TAS rhyolite field starts near 69-72 wt%; a
#: permissive bound, common practice).
LIU_MIN_SIO2_WT_PCT = 68.0


def _liu_calibration_notes(p_mpa, t_lo, t_hi, d: pd.DataFrame) -> list[str]:
    """Notes when inclusions fall outside the Liu et al. (2005) calibration (pressure, temperature, melt)."""
    out = []
    (_p0, p1), (t0, t1) = LIU_RANGE["pressure_mpa"], LIU_RANGE["temperature_c"]
    if np.min(t_lo) < t0 or np.max(t_hi) > t1:
        out.append(f"temperatures {np.min(t_lo):g}-{np.max(t_hi):g} °C reach outside the Liu et al. (2005) "
                   f"calibration ({t0:g}-{t1:g} °C): pressures are extrapolated")
    n_hi = int(np.sum(np.asarray(p_mpa) > p1))
    if n_hi:
        out.append(f"{n_hi} inclusion(s) above {p1:g} MPa, beyond the Liu et al. (2005) calibration: extrapolated")
    if "sio2_frac" in d:
        sio2 = d["sio2_frac"].to_numpy(dtype=float) * 100
        tot = d["oxide_total_frac"].to_numpy(dtype=float) * 100 if "oxide_total_frac" in d else np.full(len(d), 100.)
        anhydrous = np.where(np.isfinite(tot) & (tot > 0), sio2 / tot * 100, sio2)
        n_mafic = int(np.sum(anhydrous < LIU_MIN_SIO2_WT_PCT))
        if n_mafic:
            out.append(f"{n_mafic} inclusion(s) with SiO2 below {LIU_MIN_SIO2_WT_PCT:g} wt% (anhydrous): not "
                       "rhyolitic, outside the Liu et al. (2005) calibration; choose a model for that melt")
    return out


def _per_row(model: str, h, c, t, d: pd.DataFrame) -> np.ndarray:
    """Saturation pressure with a VESIcal model, using each row's oxides when they are complete enough."""
    out = np.full(len(h), np.nan)
    for i in range(len(h)):
        row = d.iloc[i]
        comp = {ox: float(row[f"{ox.lower()}_frac"]) * 100 for ox in RHYOLITE_WT_PCT
                if pd.notna(row.get(f"{ox.lower()}_frac"))}
        comp = comp if len(comp) >= 6 else None
        out[i] = saturation_pressure(model, h[i], c[i], t[i], comp)[()]
    return out


# --------------------------------------------------------------------------- comparison with seismicity


@dataclass(frozen=True)
class DepthComparisonResult:
    """VT hypocentre depths beside inclusion storage depths, per phase (all depths m below sea level).

    ``table`` columns: phase, start, end, n_inclusions, storage_p5/p50/p95_m, n_vt, vt_p5/p25/p50/p75/p95_m,
    overlap_share (inclusions whose 95 % depth interval intersects the VT 5-95 % range), inside_share
    (inclusions whose central depth lies inside it). ``vt_events``: time, depth_m, phase (empty outside the
    phase windows) of every located VT event. ``vt_through_time``: per 30-day bin (UTC start) the number of
    located VT events and their depth quantiles p25/p50/p75 (m below sea level), bins with 5 or more events.
    """

    table: pd.DataFrame
    vt_events: pd.DataFrame
    notes: tuple[str, ...] = field(default=())
    vt_through_time: pd.DataFrame = field(default_factory=pd.DataFrame)

    def to_frame(self) -> pd.DataFrame:
        return self.table


def compare_with_seismicity(storage: StorageResult, catalog: EventCatalog | None,
                            windows: dict[str, tuple[pd.Timestamp, pd.Timestamp]], *,
                            classes: Sequence[str] = ("VT",), min_events: int = 10) -> DepthComparisonResult:
    """Quantiles of located VT depths per phase window beside the inclusion storage depths.

    ``windows`` : phase -> (start, end) UTC; ``catalog`` depths must already be on the sea-level datum.
    """
    notes: list[str] = []
    if catalog is not None:
        ev = catalog.data
        ev = ev[ev["event_class"].isin(list(classes)) & ev["depth_m"].notna()]
    else:
        ev = pd.DataFrame({"time": pd.Series([], dtype="datetime64[ns, UTC]"), "depth_m": []})
        notes.append("no seismic catalogue: storage depths are shown alone")
    inc = storage.inclusions
    rows = []
    used = []
    for _, ph in storage.phases.iterrows():
        name = ph["phase"]
        start, end = windows.get(name, (pd.NaT, pd.NaT))
        row = {"phase": name, "start": start, "end": end, "n_inclusions": int(ph["n"]),
               "storage_p5_m": ph["depth_p5_m"], "storage_p50_m": ph["depth_p50_m"],
               "storage_p95_m": ph["depth_p95_m"], "storage_p50_mpa": ph["pressure_p50_mpa"],
               "storage_p5_mpa": ph["pressure_p5_mpa"], "storage_p95_mpa": ph["pressure_p95_mpa"]}
        sel = ev[(ev["time"] >= start) & (ev["time"] < end)] if pd.notna(start) else ev.iloc[0:0]
        z = sel["depth_m"].to_numpy(dtype=float)
        row["n_vt"] = len(z)
        if len(z) >= min_events:
            q = np.percentile(z, _Q)
            row.update({f"vt_p{k}_m": float(v) for k, v in zip(_Q, q, strict=True)})
            mine = inc[(inc["phase"] == name) & (inc["analysis_type"] == "inclusion")]
            lo, hi = mine["depth_p2_5_m"].to_numpy(), mine["depth_p97_5_m"].to_numpy()
            row["overlap_share"] = float(np.mean((hi >= q[0]) & (lo <= q[-1]))) if len(mine) else np.nan
            mid = mine["depth_bsl_m"].to_numpy()
            row["inside_share"] = float(np.mean((mid >= q[0]) & (mid <= q[-1]))) if len(mine) else np.nan
            used.append(sel[["time", "depth_m"]].assign(phase=name))
        else:
            row.update({f"vt_p{k}_m": np.nan for k in _Q})
            row["overlap_share"] = row["inside_share"] = np.nan
            if pd.notna(start) and catalog is not None:
                notes.append(f"{name}: {len(z)} located VT event(s) in its time window, fewer than {min_events}: "
                             "no VT quantiles")
        rows.append(row)
    vt = ev[["time", "depth_m"]].assign(phase="").reset_index(drop=True)
    for part in used:
        vt.loc[vt["time"].isin(part["time"]), "phase"] = part["phase"].iloc[0]
    return DepthComparisonResult(pd.DataFrame(rows), vt, tuple(notes), _through_time(vt))


def vt_depths_by_interval(catalog: EventCatalog, intervals: pd.DataFrame, *, classes: Sequence[str] = ("VT",),
                          min_events: int = 10) -> pd.DataFrame:
    """Located VT depth quantiles per interval label (e.g. per regime), depths as stored (m below sea level).

    ``intervals`` : columns start, end (exclusive, UTC) and label. Returns one row per label: n_vt and
    vt_p5/p25/p50/p75/p95_m (NaN below ``min_events`` events).
    """
    ev = catalog.data
    ev = ev[ev["event_class"].isin(list(classes)) & ev["depth_m"].notna()]
    t = ev["time"]
    rows = []
    for label, grp in intervals.groupby("label", sort=False):
        sel = np.zeros(len(ev), dtype=bool)
        for r in grp.itertuples():
            sel |= ((t >= r.start) & (t < r.end)).to_numpy()
        z = ev["depth_m"].to_numpy(dtype=float)[sel]
        row = {"label": label, "n_vt": int(len(z))}
        q = np.percentile(z, _Q) if len(z) >= min_events else np.full(len(_Q), np.nan)
        row.update({f"vt_p{k}_m": float(v) for k, v in zip(_Q, q, strict=True)})
        rows.append(row)
    return pd.DataFrame(rows)


def _through_time(vt: pd.DataFrame, step: str = "30D", min_events: int = 5) -> pd.DataFrame:
    """VT depth quantiles per ``step`` bin (the change of VT depths through time)."""
    cols = ["time", "n", "p25_m", "p50_m", "p75_m"]
    if vt.empty:
        return pd.DataFrame(columns=cols)
    g = vt.set_index("time")["depth_m"].resample(step)
    out = pd.DataFrame({"n": g.count(), "p25_m": g.quantile(0.25), "p50_m": g.median(), "p75_m": g.quantile(0.75)})
    out = out[out["n"] >= min_events].reset_index()
    return out[cols]


def phase_windows(mi: MeltInclusions, chronology=None, pad: pd.Timedelta = pd.Timedelta("30D")) -> dict:
    """Time window of each inclusion phase: the eruptive interval of the chronology that holds its dates, or
    the span of its dates padded by ``pad`` on both sides. Phases without dates get no window.

    Only chronology rows with state "eruptive" and a duration count: a point event (end = start, e.g. an
    explosion) or a pause/unknown interval is not the phase the inclusions erupted in."""
    out = {}
    d = mi.data
    c = None
    if chronology is not None:
        c = chronology.data
        c = c[(c["state"] == "eruptive") & (c["end"].isna() | (c["end"] > c["start"]))]
    for ph, grp in d.groupby(d["phase"].fillna("all").astype(str)):
        t = grp["time"].dropna()
        if t.empty:
            continue
        if c is not None:
            hit = c[(c["start"] <= t.min()) & (c["end"].fillna(pd.Timestamp.max.tz_localize("UTC")) >= t.max())]
            if not hit.empty:
                out[ph] = (hit["start"].iloc[0], hit["end"].iloc[0] if pd.notna(hit["end"].iloc[0]) else t.max() + pad)
                continue
        out[ph] = (t.min() - pad, t.max() + pad)
    return out


# --------------------------------------------------------------------------- petrological SO2 (Devine et al.)


def sulfur_budget(mi: MeltInclusions, *, density_kg_m3: float = 2600.0, density_sd: float = 0.0,
                  crystal_fraction: float = 0.0, crystal_fraction_sd: float = 0.0, n_boot: int = 2000,
                  seed: int = 0, min_analyses: int = 3) -> SampledPetrology:
    """Devine et al. (1984) SO2 per m³ DRE with S_MI and S_MG resampled by bootstrap over analyses.

    Returns the draws (kg SO2 per m³ DRE) with the population means, counts and the inputs drawn, as the
    :class:`~degas.analysis.budget.SampledPetrology` that the gas budget and the relation take.
    The crystal *volume* fraction is used as if crystals and melt had the same density (REFERENCES §1.1).
    """
    d = mi.data
    s_mi = d.loc[d["analysis_type"].isin(INCLUSION_TYPES), "s_frac"].dropna().to_numpy()
    s_mg = d.loc[d["analysis_type"] == "matrix_glass", "s_frac"].dropna().to_numpy()
    if len(s_mi) < min_analyses or len(s_mg) < min_analyses:
        raise NotEnoughDataError(f"the petrological budget needs at least {min_analyses} S analyses of inclusions "
                                 f"and of matrix glass (have {len(s_mi)} and {len(s_mg)})")
    rng = np.random.default_rng(seed)
    mi_means = rng.choice(s_mi, (n_boot, len(s_mi)), replace=True).mean(axis=1)
    mg_means = rng.choice(s_mg, (n_boot, len(s_mg)), replace=True).mean(axis=1)
    rho = np.clip(rng.normal(density_kg_m3, density_sd, n_boot), 1.0, None)
    phi = np.clip(rng.normal(crystal_fraction, crystal_fraction_sd, n_boot), 0.0, 0.99)
    draws = SO2_PER_S * np.clip(mi_means - mg_means, 0, None) * rho * (1 - phi)
    notes = [f"petrological SO2 (Devine et al. 1984) from {len(s_mi)} inclusion and {len(s_mg)} matrix-glass S "
             f"analyses, bootstrap over analyses ({n_boot} resamples); a minimum estimate"]
    if s_mi.mean() <= s_mg.mean():
        notes.append("S in inclusions is not above S in matrix glass: the method sees no S lost on degassing")
    return SampledPetrology(draws, f"bootstrap over {len(s_mi)} inclusion and {len(s_mg)} matrix-glass S analyses",
                            s_mi_ppm=float(s_mi.mean() * 1e6), s_mg_ppm=float(s_mg.mean() * 1e6),
                            s_mi_se_ppm=_se_ppm(s_mi), s_mg_se_ppm=_se_ppm(s_mg), n_mi=len(s_mi), n_mg=len(s_mg),
                            density_kg_m3=density_kg_m3, density_sd=density_sd, crystal_fraction=crystal_fraction,
                            crystal_fraction_sd=crystal_fraction_sd, seed=seed, notes=tuple(notes))


def _se_ppm(s: np.ndarray) -> float:
    """Standard error of the mean of S mass fractions (sample 1σ / √n), in ppm."""
    return float(np.std(s, ddof=1) / np.sqrt(len(s)) * 1e6) if len(s) > 1 else np.nan
