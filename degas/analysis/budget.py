"""Gas budgets: cumulative SO2 and DRE, gas-to-magma ratios, petrological expectation, CO2 flux.

* Cumulative SO2 mass (kg) is the sum over grid bins of mean flux (kg/s) × bin length (s); bins
  without a flux value contribute nothing (the coverage is reported, the total is then a lower
  bound). Flux uncertainties (1 sigma, kg/s per bin) are propagated two ways and both are given:
  independent errors per bin (root-sum-square) and fully correlated errors (plain sum, e.g. a
  common calibration or plume-speed bias).
* Systematic terms (plume speed and plume geometry dominate in practice) are a fractional 1σ per station,
  fully correlated within a station over the whole record and independent between stations, combined with
  the scans' random error by the GUM rules (JCGM 100:2008: fully correlated components add linearly, independent
  ones in quadrature): σ_sys² = Σ_s (f_s · M_s)², with M_s the part of the mass that station s contributes
  (each bin's combined flux is the mean of the stations available in it), and σ_total² = σ_random² + σ_sys².
  The project default f = 0.20 is common practice (scanning-spectrometer fluxes are usually quoted with
  ~20-30 % total error, mostly plume speed; from memory, no source checked).
* Cumulative DRE volume (m³) is the sum of extrusion rate (m³/s DRE) × bin length.
* Gas-to-magma ratio per segment: kg SO2 per m³ DRE over the bins where both are known; the SO2 mass and
  the DRE volume of those same bins are given beside it (``so2_mass_both_kg``, ``dre_volume_both_m3``), so that
  the printed columns divide to the printed ratio. Its 95 % interval is computed on the log scale (log-normal
  with the same relative 1σ), so its lower bound is never below zero.
* Petrological method (Devine, Sigurdsson & Davis 1984): expected SO2 mass
  m_SO2 = (M_SO2/M_S) · (S_MI − S_MG) · V_DRE · ρ_DRE · (1 − φ_xtl), with M_SO2/M_S = 1.998 from
  IUPAC atomic weights (:mod:`degas.chem`). The crystal *volume* fraction is used as if crystals and
  melt had the same density (state this when reporting). Inputs carry 1-sigma uncertainties and
  are propagated by Monte Carlo (normal draws, clipped to physical ranges). It is a *minimum*
  estimate; an observed/expected "excess" factor well above 1 is a finding (un-erupted magma or
  pre-existing vapour, REFERENCES §1.3), never an error.
* CO2 flux from SO2 flux and a molar CO2/SO2 ratio: Φ_CO2 = Φ_SO2 · R · M_CO2/M_SO2, each ratio
  measurement carried to flux bins no farther than ``max_gap`` away.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.chem import CO2_PER_SO2_MASS, SO2_PER_S
from degas.errors import DegasError, NotEnoughDataError

ERROR_CORRELATIONS = ("independent", "correlated")
#: Fractional 1σ systematic error of a station's flux (plume speed, geometry): common practice, see above.
DEFAULT_SYSTEMATIC = 0.20


def log_normal_interval(value: float, sd: float, level: float = 0.95) -> tuple[float, float]:
    """Interval for a positive quantity with 1σ ``sd``, on the log scale (never below zero).

    Log-normal with median ``value`` and σ_ln = sqrt(ln(1 + (sd/value)²)), the moment match of the
    log-normal distribution (e.g. Limpert, Stahel & Abbt 2001): bounds value·exp(∓z·σ_ln).
    """
    from scipy.stats import norm

    if not (np.isfinite(value) and np.isfinite(sd)) or value <= 0 or sd < 0:
        return np.nan, np.nan
    s_ln = np.sqrt(np.log1p((sd / value) ** 2))
    z = float(norm.ppf(0.5 + level / 2))
    return float(value * np.exp(-z * s_ln)), float(value * np.exp(z * s_ln))


@dataclass(frozen=True)
class PetrologyInputs:
    """Melt-inclusion inputs, all with 1-sigma uncertainties (0 = exact).

    s_melt_inclusion, s_matrix_glass : S mass fraction (kg/kg; 1500 ppm = 1.5e-3).
    density_kg_m3 : DRE (dense rock) density, kg/m³.
    crystal_fraction : phenocryst volume fraction, 0-1.
    """

    s_melt_inclusion: float
    s_matrix_glass: float
    density_kg_m3: float = 2600.0
    crystal_fraction: float = 0.0
    s_melt_inclusion_sd: float = 0.0
    s_matrix_glass_sd: float = 0.0
    density_sd: float = 0.0
    crystal_fraction_sd: float = 0.0

    def __post_init__(self) -> None:
        if not 0 <= self.crystal_fraction < 1:
            raise DegasError(f"crystal fraction must be in [0, 1), got {self.crystal_fraction}")
        if self.density_kg_m3 <= 0:
            raise DegasError("DRE density must be positive (kg/m³)")
        if self.s_melt_inclusion < 0 or self.s_matrix_glass < 0:
            raise DegasError("S contents must be non-negative mass fractions")
        if self.s_melt_inclusion <= self.s_matrix_glass:
            raise DegasError(
                f"S in melt inclusions ({self.s_melt_inclusion * 1e6:g} ppm) is not above S in matrix glass "
                f"({self.s_matrix_glass * 1e6:g} ppm): the method sees no S lost on degassing; check the inputs")

    @classmethod
    def from_ppm(cls, s_mi_ppm: float, s_mg_ppm: float, *, s_mi_sd_ppm: float = 0.0, s_mg_sd_ppm: float = 0.0,
                 **kw) -> PetrologyInputs:
        """Build from S contents in ppm by mass (µg/g)."""
        return cls(s_mi_ppm * 1e-6, s_mg_ppm * 1e-6, s_melt_inclusion_sd=s_mi_sd_ppm * 1e-6,
                   s_matrix_glass_sd=s_mg_sd_ppm * 1e-6, **kw)

    @property
    def so2_per_m3(self) -> float:
        """Expected SO2 per m³ DRE erupted, kg/m³ (central values)."""
        ds = self.s_melt_inclusion - self.s_matrix_glass
        return SO2_PER_S * ds * self.density_kg_m3 * (1.0 - self.crystal_fraction)

    def sample_so2_per_m3(self, n: int = 10_000, seed: int | np.random.Generator | None = 0) -> np.ndarray:
        """Monte Carlo draws of the expected SO2 per m³ DRE (kg/m³).

        Normal draws, clipped: S >= 0, S_MI - S_MG >= 0, density > 0, crystal fraction in [0, 0.99].
        """
        rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
        smi = np.clip(rng.normal(self.s_melt_inclusion, self.s_melt_inclusion_sd, n), 0, None)
        smg = np.clip(rng.normal(self.s_matrix_glass, self.s_matrix_glass_sd, n), 0, None)
        rho = np.clip(rng.normal(self.density_kg_m3, self.density_sd, n), 1.0, None)
        phi = np.clip(rng.normal(self.crystal_fraction, self.crystal_fraction_sd, n), 0.0, 0.99)
        return SO2_PER_S * np.clip(smi - smg, 0, None) * rho * (1.0 - phi)


@dataclass(frozen=True, eq=False)
class SampledPetrology:
    """Petrological SO2 per m³ DRE given as draws rather than as three typed numbers.

    Made by :func:`degas.analysis.petrology.sulfur_budget` from a bootstrap over inclusion and matrix-glass S
    analyses (Devine et al. 1984), or directly from any draws; :func:`gas_budget` (and the relation's
    petrological expectation) take it wherever they take :class:`PetrologyInputs` and resample the draws, so
    the excess-degassing ratio carries their spread.

    draws_kg_m3 : SO2 per m³ DRE erupted, kg/m³, one value per draw.
    source : one line saying where the draws come from (shown in the notes and the report).
    s_mi_ppm, s_mg_ppm : mean S of the inclusion and matrix-glass analyses, ppm by mass (NaN if not from analyses);
        s_mi_se_ppm, s_mg_se_ppm : their standard errors (sample 1σ / √n), ppm.
    n_mi, n_mg : analyses used. density_kg_m3, density_sd, crystal_fraction, crystal_fraction_sd : the DRE density
        (kg/m³) and crystal volume fraction (0-1) drawn, with their 1σ. seed : the bootstrap's seed.
    """

    draws_kg_m3: np.ndarray
    source: str = ""
    s_mi_ppm: float = np.nan
    s_mg_ppm: float = np.nan
    s_mi_se_ppm: float = np.nan
    s_mg_se_ppm: float = np.nan
    n_mi: int = 0
    n_mg: int = 0
    density_kg_m3: float = np.nan
    density_sd: float = np.nan
    crystal_fraction: float = np.nan
    crystal_fraction_sd: float = np.nan
    seed: int | None = None
    notes: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        d = np.asarray(self.draws_kg_m3, dtype="float64")
        if d.size == 0 or not np.isfinite(d).all() or (d < 0).any():
            raise DegasError("petrological SO2 draws must be finite, non-negative and not empty")

    @property
    def so2_per_m3(self) -> float:
        """Median of the draws, kg SO2 per m³ DRE."""
        return float(np.median(self.draws_kg_m3))

    def sample_so2_per_m3(self, n: int = 10_000, seed: int | np.random.Generator | None = 0) -> np.ndarray:
        """``n`` draws resampled with replacement (kg/m³)."""
        rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
        return rng.choice(np.asarray(self.draws_kg_m3, dtype="float64"), n, replace=True)

    def interval(self, level: float = 0.95) -> tuple[float, float]:
        """Central ``level`` interval of the draws, kg SO2 per m³ DRE."""
        a = (1 - level) / 2 * 100
        return float(np.percentile(self.draws_kg_m3, a)), float(np.percentile(self.draws_kg_m3, 100 - a))

    def to_frame(self) -> pd.DataFrame:
        lo, hi = self.interval()
        return pd.DataFrame([{"s_mi_ppm": self.s_mi_ppm, "s_mg_ppm": self.s_mg_ppm, "n_mi": self.n_mi,
                              "n_mg": self.n_mg, "so2_kg_per_m3": self.so2_per_m3, "so2_p2_5": lo, "so2_p97_5": hi}])


def petrological_so2_mass(volume_dre_m3: float, inputs: PetrologyInputs) -> float:
    """Expected SO2 mass (kg) from degassing ``volume_dre_m3`` of erupted magma (Devine et al. 1984)."""
    return volume_dre_m3 * inputs.so2_per_m3


def petrological_so2_flux(rate_dre_m3_s, inputs: PetrologyInputs):
    """Expected SO2 flux (kg/s) for an extrusion rate (m³/s DRE); rate form of Devine et al. (1984)."""
    out = np.asarray(rate_dre_m3_s, dtype="float64") * inputs.so2_per_m3
    return float(out) if out.ndim == 0 else out


@dataclass(frozen=True)
class BudgetResult:
    """Gas budget over segments.

    ``segments`` columns: start, end, duration_days, so2_mass_kg, so2_mass_sd_independent_kg,
    so2_mass_sd_correlated_kg, gas_coverage, dre_volume_m3, dre_volume_sd_m3, ratio_kg_per_m3,
    ratio_sd_kg_per_m3 (per ``error_correlation``), expected_so2_kg, expected_so2_p2_5_kg,
    expected_so2_p97_5_kg, excess_factor, excess_p2_5, excess_p97_5, finding.
    ``cumulative`` columns: so2_cum_kg, so2_cum_sd_independent_kg, so2_cum_sd_correlated_kg,
    dre_cum_m3, indexed by bin start (UTC). ``overall`` is the same as one segment row for the
    whole span.
    """

    segments: pd.DataFrame
    overall: pd.Series
    cumulative: pd.DataFrame
    error_correlation: str
    petrology: PetrologyInputs | None
    n_monte_carlo: int
    seed: int | None
    notes: tuple[str, ...] = field(default=())

    def to_frame(self) -> pd.DataFrame:
        over = self.overall.to_frame().T
        return pd.concat([self.segments.assign(segment=range(len(self.segments))), over.assign(segment="all")],
                         ignore_index=True)


def _finding(excess: float, p_lo: float, p_hi: float, hi: float, lo: float, volume_m3: float = np.nan) -> str:
    """A plain label for an excess factor, judged on its 95 % interval (p_lo, p_hi), not the central value."""
    if np.isfinite(volume_m3) and volume_m3 <= 0:
        return "gas without erupted volume (no magma output to compare with)"
    if not np.isfinite(excess):
        return ""
    if np.isfinite(p_lo) and p_lo > hi:
        return "excess degassing (un-erupted magma / pre-existing vapour)"
    if np.isfinite(p_lo) and p_lo > 1.0:
        return "more SO2 than the erupted melt can supply"
    if np.isfinite(p_hi) and p_hi < lo:
        return "gas deficit (sealing, scrubbing or measurement gaps)"
    if np.isfinite(p_hi) and p_hi < 1.0:
        return "less SO2 than the erupted melt can supply (gas retained or scrubbed?)"
    return "consistent with erupted magma"


def gas_budget(
    so2_flux: pd.Series,
    extrusion_rate: pd.Series,
    *,
    so2_uncertainty: pd.Series | None = None,
    extrusion_uncertainty: pd.Series | None = None,
    segments: pd.DataFrame | None = None,
    petrology: PetrologyInputs | None = None,
    error_correlation: str = "independent",
    n_monte_carlo: int = 10_000,
    seed: int | None = 0,
    excess_high: float = 3.0,
    excess_low: float = 0.5,
    station_flux: pd.DataFrame | None = None,
    systematic: float | Mapping[str, float] = 0.0,
) -> BudgetResult:
    """SO2 and DRE budget per segment, with the petrological expectation when inputs are given.

    Parameters
    ----------
    so2_flux : SO2 flux, kg/s, on a regular UTC grid (bin means; NaN = missing).
    extrusion_rate : extrusion rate, m³/s DRE, on the same grid (NaN = missing).
    so2_uncertainty, extrusion_uncertainty : 1-sigma per bin in the same units (optional).
    segments : DataFrame with ``start`` and ``end`` (UTC; [start, end)); default: one segment.
    petrology : melt-inclusion inputs; enables expected SO2 and the excess factor.
    error_correlation : which flux-error model feeds ratio_sd and the Monte Carlo ("independent"
        per bin, or fully "correlated"); both mass uncertainties are always reported.
    n_monte_carlo, seed : Monte Carlo draws and seed.
    excess_high, excess_low : excess-factor thresholds for the ``finding`` text (project defaults 3 and 0.5,
        not published values; excess factors of ~10-100 are reported for explosive arc eruptions, Wallace 2001).
    station_flux : per-station SO2 flux, kg/s, one column per station on the same grid, whose per-bin mean of
        the available stations is ``so2_flux``; default: ``so2_flux`` is one station.
    systematic : fractional 1σ systematic error (plume speed, geometry), one number for every station or a
        mapping station -> fraction (missing stations: ``DEFAULT_SYSTEMATIC``); fully correlated within a
        station, independent between stations. 0 leaves only the scans' random error.
    """
    if error_correlation not in ERROR_CORRELATIONS:
        raise DegasError(f"unknown error correlation {error_correlation!r}; valid: independent, correlated")
    if not so2_flux.index.equals(extrusion_rate.index):
        raise DegasError("SO2 flux and extrusion rate are not on the same time grid; align them first")
    idx = so2_flux.index
    if len(idx) < 2:
        raise NotEnoughDataError("a budget needs at least two grid bins")
    dt = (idx[1] - idx[0]).total_seconds()
    g = so2_flux.to_numpy(dtype="float64", na_value=np.nan)
    q = extrusion_rate.to_numpy(dtype="float64", na_value=np.nan)
    if not np.isfinite(g).any():
        raise NotEnoughDataError("the SO2 flux series has no valid bins")
    if not np.isfinite(q).any():
        raise NotEnoughDataError("the extrusion-rate series has no valid bins")
    gu = np.full(g.size, np.nan) if so2_uncertainty is None else so2_uncertainty.to_numpy(dtype="float64",
                                                                                          na_value=np.nan)
    qu = np.zeros(q.size) if extrusion_uncertainty is None else extrusion_uncertainty.to_numpy(
        dtype="float64", na_value=np.nan)
    notes: list[str] = []
    if so2_uncertainty is None or not np.isfinite(gu[np.isfinite(g)]).any():
        notes.append("no SO2 flux uncertainties given: mass uncertainties are NaN")
    mass = np.where(np.isfinite(g), g * dt, 0.0)
    mass_var = np.where(np.isfinite(g) & np.isfinite(gu), (gu * dt) ** 2, 0.0)
    mass_abs = np.where(np.isfinite(g) & np.isfinite(gu), gu * dt, 0.0)
    vol = np.where(np.isfinite(q), q * dt, 0.0)
    vol_var = np.where(np.isfinite(q) & np.isfinite(qu), (qu * dt) ** 2, 0.0)
    has_unc = np.isfinite(gu[np.isfinite(g)]).any()
    # systematic terms: each station's share of every bin's combined mass, times its fractional 1σ
    if station_flux is None:
        station_flux = pd.DataFrame({"SO2": so2_flux.to_numpy(dtype="float64", na_value=np.nan)}, index=idx)
    if not station_flux.index.equals(idx):
        raise DegasError("per-station SO2 flux is not on the budget's time grid")
    sf = station_flux.to_numpy(dtype="float64", na_value=np.nan)
    n_st = np.isfinite(sf).sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(np.isfinite(sf) & (n_st > 0)[:, None], sf / np.where(n_st > 0, n_st, 1)[:, None], 0.0)
    fr = np.array([float(systematic.get(str(c), DEFAULT_SYSTEMATIC)) if isinstance(systematic, Mapping)
                   else float(systematic) for c in station_flux.columns])
    if (fr < 0).any() or not np.isfinite(fr).all():
        raise DegasError("systematic flux errors must be non-negative fractions (0.2 = 20 %)")
    sys_mass = share * dt * fr[None, :]  # kg per bin and station, fully correlated within a station
    has_sys = bool((fr > 0).any())
    if has_sys:
        listing = ", ".join(f"{c} {f:.0%}" for c, f in zip(station_flux.columns, fr, strict=True))
        notes.append(f"systematic flux error (plume speed, geometry), 1σ per station, fully correlated within a "
                     f"station: {listing}")
    cumulative = pd.DataFrame(
        {
            "so2_cum_kg": np.cumsum(mass),
            "so2_cum_sd_independent_kg": np.sqrt(np.cumsum(mass_var)) if has_unc else np.nan,
            "so2_cum_sd_correlated_kg": np.cumsum(mass_abs) if has_unc else np.nan,
            "dre_cum_m3": np.cumsum(vol),
        },
        index=idx,
    )
    if segments is None:
        segments = pd.DataFrame({"start": [idx[0]], "end": [idx[-1] + (idx[1] - idx[0])]})
    for c in ("start", "end"):
        if c not in segments.columns:
            raise DegasError(f"segments table lacks column {c!r} (needs start, end)")
    rng = np.random.default_rng(seed)
    per_m3 = None
    if petrology is not None:
        per_m3 = petrology.sample_so2_per_m3(n_monte_carlo, rng)
        notes.append(
            f"petrological SO2 (Devine et al. 1984): {petrology.so2_per_m3:.4g} kg per m³ DRE; a minimum estimate; "
            "crystal volume fraction used as mass fraction"
        )
    times = idx
    step = idx[1] - idx[0]

    def row(start, end):
        sel = (times >= start) & (times < end)
        both = sel & np.isfinite(g) & np.isfinite(q)
        m_kg = float(mass[sel].sum())
        sd_i = float(np.sqrt(mass_var[sel].sum())) if has_unc else np.nan
        sd_c = float(mass_abs[sel].sum()) if has_unc else np.nan
        v = float(vol[sel].sum())
        v_sd = float(np.sqrt(vol_var[sel].sum()))
        mb, vb = float(mass[both].sum()), float(vol[both].sum())
        sd_b = (np.sqrt(mass_var[both].sum()) if error_correlation == "independent" else mass_abs[both].sum())
        sys_sel = float(np.sqrt((sys_mass[sel].sum(axis=0) ** 2).sum()))
        sys_b = float(np.sqrt((sys_mass[both].sum(axis=0) ** 2).sum()))
        rnd = sd_i if np.isfinite(sd_i) else 0.0
        sd_b = float(np.hypot(sd_b, sys_b)) if has_sys else sd_b
        ratio = mb / vb if vb > 0 else np.nan
        ratio_sd = (abs(ratio) * np.sqrt((sd_b / mb) ** 2 + (np.sqrt(vol_var[both].sum()) / vb) ** 2)
                    if vb > 0 and mb > 0 and (has_unc or has_sys) else np.nan)
        r_lo, r_hi = log_normal_interval(ratio, ratio_sd)
        out = {
            "start": start,
            "end": end,
            "duration_days": (end - start) / pd.Timedelta("1D"),
            "so2_mass_kg": m_kg,
            "so2_mass_sd_independent_kg": sd_i,
            "so2_mass_sd_correlated_kg": sd_c,
            "so2_mass_sd_systematic_kg": sys_sel,
            "so2_mass_sd_total_kg": float(np.hypot(rnd, sys_sel)) if (has_unc or has_sys) else np.nan,
            "gas_coverage": float(np.isfinite(g[sel]).mean()) if sel.any() else 0.0,
            "dre_volume_m3": v,
            "dre_volume_sd_m3": v_sd,
            "ratio_kg_per_m3": ratio,
            "ratio_sd_kg_per_m3": ratio_sd,
            "ratio_p2_5_kg_per_m3": r_lo,
            "ratio_p97_5_kg_per_m3": r_hi,
            "so2_mass_both_kg": mb,
            "dre_volume_both_m3": vb,
            "days_both": int(both.sum()),
        }
        if per_m3 is not None:
            exp_s = vb * per_m3
            sd_use = sd_b if (has_unc or has_sys) else 0.0
            obs_s = np.clip(rng.normal(mb, sd_use, per_m3.size), 0, None)
            with np.errstate(divide="ignore", invalid="ignore"):
                ex = obs_s / exp_s
            ex = ex[np.isfinite(ex)]
            central = mb / (vb * petrology.so2_per_m3) if vb > 0 and petrology.so2_per_m3 > 0 else np.nan
            out.update(
                expected_so2_kg=vb * petrology.so2_per_m3,
                expected_so2_p2_5_kg=float(np.quantile(exp_s, 0.025)),
                expected_so2_p97_5_kg=float(np.quantile(exp_s, 0.975)),
                excess_factor=central,
                excess_p2_5=float(np.quantile(ex, 0.025)) if ex.size else np.nan,
                excess_p97_5=float(np.quantile(ex, 0.975)) if ex.size else np.nan,
                finding=_finding(central, float(np.quantile(ex, 0.025)) if ex.size else np.nan,
                                 float(np.quantile(ex, 0.975)) if ex.size else np.nan, excess_high, excess_low, v),
            )
        return out

    seg_rows = [row(pd.Timestamp(s), pd.Timestamp(e)) for s, e in zip(segments["start"], segments["end"],
                                                                      strict=True)]
    seg = pd.DataFrame(seg_rows)
    overall = pd.Series(row(idx[0], idx[-1] + step))
    if float(np.isfinite(g).mean()) < 0.9:
        notes.append(f"SO2 flux covers {np.isfinite(g).mean():.0%} of bins: masses are lower bounds")
    if per_m3 is not None and np.isfinite(overall["excess_factor"]) and overall["excess_factor"] > excess_high:
        notes.append(
            f"overall observed/expected SO2 = {overall['excess_factor']:.2g}: excess degassing "
            "(un-erupted magma / pre-existing vapour), a common finding, not an error"
        )
    return BudgetResult(seg, overall, cumulative, error_correlation, petrology, int(n_monte_carlo), seed,
                        tuple(notes))


@dataclass(frozen=True)
class Co2FluxResult:
    """CO2 flux (kg/s) from SO2 flux and molar CO2/SO2; ``ratio`` is the ratio used per bin (NaN = none)."""

    flux: pd.Series
    ratio: pd.Series
    max_gap: pd.Timedelta
    notes: tuple[str, ...] = field(default=())

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame({"co2_flux_kg_s": self.flux, "co2_so2_molar": self.ratio})


def co2_flux(so2_flux: pd.Series, co2_so2_molar: pd.Series, *, max_gap: str | pd.Timedelta = "7D") -> Co2FluxResult:
    """CO2 flux from SO2 flux × molar CO2/SO2 × M_CO2/M_SO2 (Aiuppa et al. 2019 scaling).

    Parameters
    ----------
    so2_flux : SO2 flux in kg/s indexed by UTC time (any spacing).
    co2_so2_molar : molar CO2/SO2 ratio measurements indexed by UTC time.
    max_gap : a ratio is used for a flux time no farther than this from the measurement (the
        nearest measurement wins); beyond it the CO2 flux is NaN.
    """
    gap = pd.Timedelta(max_gap)
    r = co2_so2_molar.dropna().sort_index()
    if r.empty:
        raise NotEnoughDataError("no CO2/SO2 ratio measurements")
    left = pd.DataFrame({"time": so2_flux.index, "so2": so2_flux.to_numpy(dtype="float64", na_value=np.nan)})
    right = pd.DataFrame({"time": r.index, "ratio": r.to_numpy(dtype="float64")})
    left["time"] = left["time"].astype("datetime64[ns, UTC]")
    right["time"] = right["time"].astype("datetime64[ns, UTC]")
    merged = pd.merge_asof(left.sort_values("time"), right, on="time", direction="nearest", tolerance=gap)
    ratio = pd.Series(merged["ratio"].to_numpy(), index=so2_flux.index, name="co2_so2_molar")
    flux = pd.Series(merged["so2"].to_numpy() * merged["ratio"].to_numpy() * CO2_PER_SO2_MASS, index=so2_flux.index,
                     name="co2_flux")
    notes = []
    lost = int((np.isfinite(left["so2"]) & ratio.isna().to_numpy()).sum())
    if lost:
        notes.append(f"{lost} SO2 flux values lie more than {gap} from any CO2/SO2 measurement: CO2 flux left missing")
    return Co2FluxResult(flux, ratio, gap, tuple(notes))


def usable_scans(quality: pd.Series, good_flags: tuple[str, ...] = ("good", "ok", "valid", "buena")
                 ) -> tuple[np.ndarray, dict[str, int]]:
    """Which scans enter the budget: no quality flag, or one of ``good_flags`` (case and spaces ignored).

    Returns the boolean mask and the count of excluded scans per flag. Flags such as cloud (flux biased low)
    or low wind (poor plume speed) mark scans whose flux is not trusted; they are excluded, not down-weighted.
    """
    q = quality.astype("string").str.strip().str.lower()
    ok = (q.isna() | (q == "") | q.isin(list(good_flags))).to_numpy(dtype=bool)
    bad = q[~ok].value_counts()
    return ok, {str(k): int(v) for k, v in bad.items()}


@dataclass(frozen=True)
class VolumeComparison:
    """Erupted DRE volume two ways over the same span: survey difference and summed rate series.

    ``survey_m3`` = last minus first survey (m³ DRE) inside the span; ``rate_m3`` = Σ rate × bin length over
    the bins with a rate value in [first survey, last survey) (m³ DRE); ``rate_coverage`` is the share of those
    bins with a value; below 1 the rate total is a lower bound (missing days count as zero) and
    ``rate_is_lower_bound`` says so. ``difference_m3`` = rate − survey; ``ratio`` = rate / survey.
    1σ values (m³): ``survey_sd_m3`` adds the two end surveys' 1σ in quadrature; ``rate_sd_m3`` adds the bins'
    σ × bin length in quadrature (errors independent between bins, as the budget's ``dre_volume_sd_m3``; 0 when
    the rate series gives none); ``difference_sd_m3`` = sqrt(survey_sd_m3² + rate_sd_m3²), which assumes the
    surveys' and the rate series' errors independent (different instruments and methods; GUM, JCGM 100:2008).
    """

    start: pd.Timestamp
    end: pd.Timestamp
    survey_m3: float
    survey_sd_m3: float
    rate_m3: float
    rate_sd_m3: float
    rate_coverage: float
    rate_is_lower_bound: bool
    difference_m3: float
    difference_sd_m3: float
    ratio: float
    notes: tuple[str, ...] = field(default=())

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame([{k: getattr(self, k) for k in (
            "start", "end", "survey_m3", "survey_sd_m3", "rate_m3", "rate_sd_m3", "rate_coverage",
            "rate_is_lower_bound", "difference_m3", "difference_sd_m3", "ratio")}])


def compare_volumes(survey_times: pd.Series, survey_m3: np.ndarray, rate_m3_s: pd.Series,
                    survey_sd_m3: np.ndarray | None = None,
                    rate_sd_m3_s: pd.Series | None = None) -> VolumeComparison:
    """Survey volumes against the summed rate series over the span between the first and last survey.

    Parameters
    ----------
    survey_times : UTC times of the cumulative survey volumes (at least two).
    survey_m3 : cumulative DRE volume at each survey, m³.
    rate_m3_s : extrusion rate, m³/s DRE, on a regular UTC grid (NaN = missing).
    survey_sd_m3 : 1σ of each survey volume, m³ (the difference's σ adds the two ends in quadrature).
    rate_sd_m3_s : 1σ of the rate per bin, m³/s, on the rate's grid (independent between bins); default: none
        given, the rate total's σ is 0 and the difference's σ is the surveys' alone (a note says so).
    """
    t = pd.DatetimeIndex(pd.to_datetime(survey_times, utc=True))
    v = np.asarray(survey_m3, dtype=float)
    ok = np.isfinite(v)
    t, v = t[ok], v[ok]
    idx = rate_m3_s.index
    if len(idx) < 2:
        raise NotEnoughDataError("the rate series needs at least two grid bins")
    inside = (t >= idx[0]) & (t <= idx[-1] + (idx[1] - idx[0]))
    t, v = t[inside], v[inside]
    if len(t) < 2:
        raise NotEnoughDataError("fewer than two surveys inside the rate series' span")
    order = np.argsort(t)
    t, v = t[order], v[order]
    sd = np.zeros(len(v)) if survey_sd_m3 is None else np.asarray(survey_sd_m3, dtype=float)[ok][inside][order]
    start, end = t[0], t[-1]
    sel = (idx >= start.floor("D")) & (idx < end.floor("D"))
    dt = (idx[1] - idx[0]).total_seconds()
    q = rate_m3_s.to_numpy(dtype=float)[sel]
    have = np.isfinite(q)
    cov = float(have.mean()) if q.size else 0.0
    rate_total = float(q[have].sum() * dt)
    survey = float(v[-1] - v[0])
    survey_sd = float(np.hypot(np.nan_to_num(sd[0]), np.nan_to_num(sd[-1])))
    notes = []
    if cov < 1:
        notes.append(f"the rate series covers {cov:.0%} of the days between the first and last survey: its "
                     "total is a lower bound")
    if rate_sd_m3_s is None:
        rate_sd = 0.0
        notes.append("the rate series gives no uncertainties: the difference's 1σ is the surveys' alone")
    else:
        qs = rate_sd_m3_s.reindex(idx).to_numpy(dtype=float)[sel]
        rate_sd = float(np.sqrt(np.nansum(np.where(have, qs * dt, np.nan) ** 2)))
    return VolumeComparison(start, end, survey, survey_sd, rate_total, rate_sd, cov, cov < 1, rate_total - survey,
                            float(np.hypot(survey_sd, rate_sd)), rate_total / survey if survey > 0 else np.nan,
                            tuple(notes))
