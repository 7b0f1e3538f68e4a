"""A volcano's project file (TOML): its series, reader options, petrology, baselines and thresholds.

With it the weekly run is one command (``degas report ARCHIVE --project velmarra.toml``). Example::

    [volcano]
    name = "Velmarra"
    observatory = "Velmarra Volcano Observatory"

    [series]                      # which archive series play which role (default: detected)
    gas = ["gas_flux.so2_flux.VLM-N", "gas_flux.so2_flux.VLM-S"]
    magma = "extrusion_rate.extrusion_rate.VLM-CAM"
    ratio = "gas_ratio.co2_so2_ratio.VLM-MG"
    catalog = "seismic_catalog.events.local"

    [analysis]
    step = "1D"
    min_coverage = 0.3
    max_lag = "20D"
    surrogates = 1000
    rolling_window = "60D"
    rolling_step = "7D"

    [changepoints]
    min_segment = "14D"
    max_gap = "10D"
    penalty = "bic3"

    [regimes]                     # project defaults, not published values: tune per volcano
    magma_threshold = 0.1         # m³/s DRE: output counted as active
    # gas_background = 150        # t/d; default: the fitted relation's intercept at zero output
    relation_band = 0.25          # gas within ±25 % of the relation's prediction (at least) counts as coupled

    [petrology]                   # Devine, Sigurdsson & Davis (1984) inputs, 1-sigma uncertainties
    s_melt_inclusion_ppm = 1500
    s_melt_inclusion_sd_ppm = 150
    s_matrix_glass_ppm = 200
    s_matrix_glass_sd_ppm = 50
    dense_density_kg_m3 = 2600
    dense_density_sd_kg_m3 = 100
    crystal_fraction = 0.40
    crystal_fraction_sd = 0.05

    [review]
    window_days = 7
    baseline_days = 90

    [inclusions]                  # melt-inclusion storage depths (degas.analysis.petrology)
    model = "Liu"                 # Liu et al. (2005); VESIcal models need degas[petrology]
    temperature_c = [825, 875]    # one value or [low, high], drawn uniformly in the Monte Carlo
    crust_density_kg_m3 = 2600    # or crust_layers = [[0, 2300], [2000, 2700]] (top below vent m, kg/m³)
    vent_elevation_m = 2350
    hypocentre_datum = "sea_level"   # or "vent": where the catalogue's depths are measured from
    crystal_fraction = 0.40       # with dense_density_kg_m3: the budget from the inclusions' S (Devine 1984)

    [[file]]                      # optional: files ingested before each weekly or report run (files already in
                                  # the archive are skipped by SHA-256), with reader options as in a mapping file
    path = "exports/so2_north.csv"
    station = "VLM-N"
"""

from __future__ import annotations

import dataclasses
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from degas.analysis.budget import PetrologyInputs
from degas.errors import ConfigError, SettingNotUsedWarning
from degas.io.mapping import load_toml

#: [petrology] keys (ppm by mass, kg/m³, volume fraction, 1-sigma) -> PetrologyInputs.from_ppm arguments
_PETROLOGY_KEYS = {
    "s_melt_inclusion_ppm": "s_mi_ppm", "s_matrix_glass_ppm": "s_mg_ppm",
    "s_melt_inclusion_sd_ppm": "s_mi_sd_ppm", "s_matrix_glass_sd_ppm": "s_mg_sd_ppm",
    "dense_density_kg_m3": "density_kg_m3", "dense_density_sd_kg_m3": "density_sd",
    "crystal_fraction": "crystal_fraction", "crystal_fraction_sd": "crystal_fraction_sd",
}


@dataclass(frozen=True)
class InclusionSettings:
    """[inclusions]: melt-inclusion storage depths and the petrological budget from the inclusions (issue 14).

    model / alt_model : solubility model names (degas.analysis.petrology.model_names); alt_model shows the spread.
    temperature_c : one temperature or [low, high], °C; phase_temperatures_c : phase -> the same, per phase.
    crust_density_kg_m3 or crust_layers ([[top depth below vent m, kg/m³], ...]); vent_elevation_m (m a.s.l.).
    hypocentre_datum : "sea_level" (catalogue depths below sea level) or "vent" (below the vent).
    dense_density_kg_m3, crystal_fraction (+ _sd): Devine et al. (1984) inputs for the budget.
    """

    series: str | None = None
    model: str = "Liu"
    alt_model: str | None = None
    temperature_c: float | tuple[float, float] = 850.0
    phase_temperatures_c: dict = field(default_factory=dict)
    crust_layers: tuple[tuple[float, float], ...] = ((0.0, 2600.0),)
    vent_elevation_m: float = 0.0
    hypocentre_datum: str = "sea_level"
    draws: int = 500
    bootstrap: int = 2000
    dense_density_kg_m3: float = 2600.0
    dense_density_sd_kg_m3: float = 0.0
    crystal_fraction: float = 0.0
    crystal_fraction_sd: float = 0.0
    budget_from_inclusions: bool = True
    stated: bool = False  # False: defaults, not read from a project file

    def crust(self):
        from degas.analysis.petrology import CrustModel

        return CrustModel(tuple(self.crust_layers), self.vent_elevation_m)


_INCLUSION_KEYS = ("series", "model", "alt_model", "temperature_c", "phase_temperatures_c", "crust_density_kg_m3",
                   "crust_layers", "vent_elevation_m", "hypocentre_datum", "draws", "bootstrap",
                   "dense_density_kg_m3", "dense_density_sd_kg_m3", "crystal_fraction", "crystal_fraction_sd",
                   "budget_from_inclusions")


def _inclusion_settings(t: dict, where: str) -> InclusionSettings:
    """Validate an [inclusions] table."""
    from degas.analysis.petrology import CrustModel, check_model
    from degas.errors import DegasError

    if not isinstance(t, dict):
        raise ConfigError(f"{where}: [inclusions] must be a table")
    bad = sorted(set(t) - set(_INCLUSION_KEYS))
    if bad:
        raise ConfigError(f"{where}: unknown key(s) {bad} in [inclusions]; valid: {', '.join(sorted(_INCLUSION_KEYS))}")
    kw = dict(t)
    kw["stated"] = True

    def temp(v, key):
        if isinstance(v, int | float) and not isinstance(v, bool):
            return float(v)
        if isinstance(v, list) and len(v) == 2 and all(isinstance(x, int | float) for x in v) and v[0] <= v[1]:
            return (float(v[0]), float(v[1]))
        raise ConfigError(f"{where}: [inclusions] {key} must be a temperature in °C or [low, high], got {v!r}")

    try:
        for k in ("model", "alt_model"):
            if k in kw:
                check_model(kw[k])
        if "temperature_c" in kw:
            kw["temperature_c"] = temp(kw["temperature_c"], "temperature_c")
        if "phase_temperatures_c" in kw:
            kw["phase_temperatures_c"] = {str(p): temp(v, f"phase_temperatures_c.{p}")
                                          for p, v in dict(kw["phase_temperatures_c"]).items()}
        if "crust_density_kg_m3" in kw:
            if "crust_layers" in kw:
                raise ConfigError(f"{where}: [inclusions] give crust_density_kg_m3 or crust_layers, not both")
            kw["crust_layers"] = ((0.0, float(kw.pop("crust_density_kg_m3"))),)
        if "crust_layers" in kw:
            kw["crust_layers"] = tuple((float(a), float(b)) for a, b in kw["crust_layers"])
        if kw.get("hypocentre_datum", "sea_level") not in ("sea_level", "vent"):
            raise ConfigError(f"{where}: [inclusions] hypocentre_datum must be sea_level or vent")
        for k in ("vent_elevation_m", "dense_density_kg_m3", "dense_density_sd_kg_m3", "crystal_fraction",
                  "crystal_fraction_sd"):
            if k in kw:
                kw[k] = float(kw[k])
        for k in ("draws", "bootstrap"):
            if k in kw and (not isinstance(kw[k], int) or kw[k] < 10):
                raise ConfigError(f"{where}: [inclusions] {k} must be a whole number of at least 10")
        if not 0 <= kw.get("crystal_fraction", 0.0) < 1:
            raise ConfigError(f"{where}: [inclusions] crystal_fraction must be in [0, 1)")
        out = InclusionSettings(**kw)
        CrustModel(out.crust_layers, out.vent_elevation_m)
    except (TypeError, ValueError, DegasError) as exc:
        if isinstance(exc, ConfigError):
            raise
        raise ConfigError(f"{where}: [inclusions]: {exc}") from None
    return out


@dataclass(frozen=True)
class Project:
    """Everything a run needs besides the archive. Defaults are stated, never hidden."""

    volcano: str = "unnamed volcano"
    observatory: str = ""
    gas: tuple[str, ...] = ()
    magma: str | None = None
    ratio: str | None = None
    catalog: str | None = None
    step: str = "1D"
    min_coverage: float = 0.3
    max_lag: str = "20D"
    surrogates: int = 1000
    bootstrap: int = 300
    rolling_window: str = "60D"
    rolling_step: str = "7D"
    rolling_max_lag: str = "15D"
    rolling_surrogates: int = 200
    variant: str = "raw"
    min_segment: str = "14D"
    max_gap: str = "10D"
    penalty: str | float = "bic3"
    magma_threshold: float | None = None
    gas_background: float | None = None  # t/d; None = the fitted relation's intercept g0
    relation_band: float = 0.25  # relative floor of the relation's prediction band (project default)
    petrology: PetrologyInputs | None = None
    window_days: int = 7
    baseline_days: int = 90
    lp_classes: tuple[str, ...] = ("LP", "hybrid")
    b_window_events: int = 200
    files: tuple[dict, ...] = field(default=())
    seed: int = 0
    inclusions: InclusionSettings = field(default_factory=InclusionSettings)
    vent_latitude: float | None = None
    vent_longitude: float | None = None
    brief_weeks: int = 6
    #: fractional 1σ systematic flux error per station (plume speed, geometry); default common practice
    systematic: float = 0.20
    systematic_by_station: tuple[tuple[str, float], ...] = ()
    #: quality flags (lower case) of scans that enter the gas budget; any other flag is excluded
    good_flags: tuple[str, ...] = ("good", "ok", "valid", "buena")
    thresholds: tuple = ()  # degas.report.brief.Threshold entries from [thresholds]
    #: share of 24 h each series' instrument can deliver (e.g. a daylight-only scanner ~0.5), per series id
    capability: tuple[tuple[str, float], ...] = ()

    def parameters(self) -> dict:
        """Every parameter as plain values, for the methods section of the report."""
        d = dataclasses.asdict(self)
        d.pop("files")
        return d


_SECTIONS = {
    "volcano": {"name": "volcano", "observatory": "observatory", "vent_latitude": "vent_latitude",
                "vent_longitude": "vent_longitude"},
    "series": {"gas": "gas", "magma": "magma", "ratio": "ratio", "catalog": "catalog"},
    "analysis": {"step": "step", "min_coverage": "min_coverage", "max_lag": "max_lag", "surrogates": "surrogates",
                 "bootstrap": "bootstrap", "rolling_window": "rolling_window", "rolling_step": "rolling_step",
                 "rolling_max_lag": "rolling_max_lag", "rolling_surrogates": "rolling_surrogates",
                 "variant": "variant", "seed": "seed"},
    "changepoints": {"min_segment": "min_segment", "max_gap": "max_gap", "penalty": "penalty"},
    "regimes": {"magma_threshold": "magma_threshold", "gas_background": "gas_background",
                "relation_band": "relation_band"},
    "review": {"window_days": "window_days", "baseline_days": "baseline_days", "brief_weeks": "brief_weeks"},
    "seismicity": {"lp_classes": "lp_classes", "b_window_events": "b_window_events"},
}

#: keys of older project files that are accepted but no longer read: section -> {key: why}; loading a file
#: that has them warns once per section (SettingNotUsedWarning, one line) instead of accepting them silently
_RETIRED = {"regimes": dict.fromkeys(("gas_factor", "ratio_low", "ratio_high"),
                                     "regimes come from the fitted gas–output relation")}


def load_project(path: str | Path) -> Project:
    """Read and validate a project TOML; unknown sections or keys are an error naming them.

    ``[[file]]`` paths are resolved relative to the project file.
    """
    path = Path(path)
    raw = load_toml(path)
    for f in raw.get("file", []) if isinstance(raw.get("file"), list) else []:
        if isinstance(f, dict) and "path" in f and not Path(f["path"]).is_absolute():
            f["path"] = str((path.parent / f["path"]).resolve())
    return project_from_dict(raw, str(path))


_TYPES: dict[str, tuple[type, ...]] = {
    "volcano": (str,), "observatory": (str,), "magma": (str,), "ratio": (str,), "catalog": (str,),
    "step": (str,), "max_lag": (str,), "rolling_window": (str,), "rolling_step": (str,), "rolling_max_lag": (str,),
    "variant": (str,), "min_segment": (str,), "max_gap": (str,), "penalty": (str, int, float),
    "min_coverage": (int, float), "magma_threshold": (int, float), "surrogates": (int,), "bootstrap": (int,),
    "rolling_surrogates": (int,), "window_days": (int,), "baseline_days": (int,), "b_window_events": (int,),
    "seed": (int,), "gas_background": (int, float), "relation_band": (int, float),
    "vent_latitude": (int, float), "vent_longitude": (int, float), "brief_weeks": (int,),
}


# Bounds of project values (issue 10): each keeps the work of a run bounded and the value meaningful.
# key -> (low, high); counts are resamplings (more than 100,000 adds nothing a report can show and runs for
# hours), numbers must be finite. Durations are checked in check_bounds.
_COUNT_MAX = 100_000
_NUMBER_BOUNDS: dict[str, tuple[float, float]] = {
    "surrogates": (0, _COUNT_MAX), "bootstrap": (0, _COUNT_MAX), "rolling_surrogates": (0, _COUNT_MAX),
    "seed": (0, 2**32 - 1),
    "window_days": (1, 3660), "baseline_days": (1, 36_600), "b_window_events": (1, 1_000_000),
    "magma_threshold": (0, 1e7),
}
_STEP_MIN = pd.Timedelta("1min")  # finest grid step: the finest sampling of the instruments degas reads
_DURATION_MAX = pd.Timedelta(days=36_600)  # 100 years
_LAGS_MAX = 100_000  # a lag window or rolling window at most this many grid steps long
_PENALTY_BOUNDS = (1e-9, 1e9)


def check_bounds(values: dict, where: str) -> None:
    """ConfigError (one line naming the key and its valid range) for a value outside its bounds."""
    import math

    for k, (lo, hi) in _NUMBER_BOUNDS.items():
        v = values.get(k)
        if v is None:
            continue
        if not math.isfinite(v) or not lo <= v <= hi:
            raise ConfigError(f"{where}: {k} = {v!r} is outside its valid range [{lo:g}, {hi:g}]")
    pen = values.get("penalty")
    if isinstance(pen, int | float) and not isinstance(pen, bool):
        if not math.isfinite(pen) or not _PENALTY_BOUNDS[0] <= pen <= _PENALTY_BOUNDS[1]:
            raise ConfigError(f"{where}: penalty = {pen!r} is outside its valid range "
                              f"[{_PENALTY_BOUNDS[0]:g}, {_PENALTY_BOUNDS[1]:g}] (or give bic3, bic or mbic)")
    step = pd.Timedelta(values.get("step", "1D"))
    if not _STEP_MIN <= step <= pd.Timedelta(days=366):
        raise ConfigError(f"{where}: step = {values['step']!r} is outside its valid range [1min, 366D]")
    for k in ("max_lag", "rolling_window", "rolling_step", "rolling_max_lag", "min_segment", "max_gap"):
        if k not in values:
            continue
        td = pd.Timedelta(values[k])
        hi = min(_DURATION_MAX, step * _LAGS_MAX)
        if not step <= td <= hi and not (k == "max_gap" and td <= hi):
            raise ConfigError(f"{where}: {k} = {values[k]!r} is outside its valid range [the step ({step}), "
                              f"{hi.days} days ({_LAGS_MAX:,} steps at most, 100 years at most)]")


def project_from_dict(raw: dict, where: str = "project") -> Project:
    known = set(_SECTIONS) | {"petrology", "file", "inclusions", "budget", "thresholds", "coverage"}
    unknown = sorted(set(raw) - known)
    if unknown:
        raise ConfigError(f"{where}: unknown section(s) {unknown}; valid: {', '.join(sorted(known))}")
    values: dict = {}
    for section, keys in _SECTIONS.items():
        table = raw.get(section, {})
        if not isinstance(table, dict):
            raise ConfigError(f"{where}: [{section}] must be a table")
        retired = _RETIRED.get(section, {})
        old = [k for k in table if k in retired]
        if old:
            why = "; ".join(dict.fromkeys(retired[k] for k in old))
            warnings.warn(f"{where}: [{section}] {', '.join(old)} {'is' if len(old) == 1 else 'are'} no longer used "
                          f"({why})", SettingNotUsedWarning, stacklevel=2)
            table = {k: v for k, v in table.items() if k not in retired}
        bad = sorted(set(table) - set(keys))
        if bad:
            raise ConfigError(f"{where}: unknown key(s) {bad} in [{section}]; valid: {', '.join(sorted(keys))}")
        for k, v in table.items():
            want = _TYPES.get(keys[k])
            if want and (not isinstance(v, want) or isinstance(v, bool)):
                names = " or ".join("number" if t in (int, float) else "text" for t in dict.fromkeys(want))
                raise ConfigError(f"{where}: [{section}] {k} must be {names}, got {v!r}")
            values[keys[k]] = v
    if "gas" in values:
        g = values["gas"]
        g = (g,) if isinstance(g, str) else g
        if not isinstance(g, list | tuple) or not all(isinstance(x, str) for x in g):
            raise ConfigError(f"{where}: [series] gas must be a series id or a list of them, got {values['gas']!r}")
        values["gas"] = tuple(g)
    if "lp_classes" in values:
        c = values["lp_classes"]
        c = (c,) if isinstance(c, str) else c
        from degas.model import EVENT_CLASSES

        if not isinstance(c, list | tuple) or not set(c) <= set(EVENT_CLASSES):
            raise ConfigError(f"{where}: [seismicity] lp_classes must list classes of {', '.join(EVENT_CLASSES)}")
        values["lp_classes"] = tuple(c)
    for k in ("step", "max_lag", "rolling_window", "rolling_step", "rolling_max_lag", "min_segment", "max_gap"):
        if k in values:
            try:
                ok = pd.Timedelta(values[k]) > pd.Timedelta(0)
            except (ValueError, TypeError, OverflowError):
                ok = False
            if not ok:
                raise ConfigError(f"{where}: {k} = {values[k]!r} is not a positive duration such as '1D' or '6h'")
    if values.get("variant", "raw") not in ("raw", "prewhitened", "differenced"):
        raise ConfigError(f"{where}: variant must be raw, prewhitened or differenced, got {values['variant']!r}")
    pen = values.get("penalty", "bic3")
    if isinstance(pen, str) and pen not in ("bic3", "bic", "mbic"):
        raise ConfigError(f"{where}: penalty must be bic3, bic, mbic or a number, got {pen!r}")
    for k in ("surrogates", "bootstrap", "rolling_surrogates"):
        if values.get(k, 0) < 0:
            raise ConfigError(f"{where}: {k} must be 0 or more")
    for k in ("window_days", "baseline_days", "b_window_events"):
        if k in values and values[k] <= 0:
            raise ConfigError(f"{where}: {k} must be positive")
    if "petrology" in raw:
        from degas.errors import DegasError

        p = raw["petrology"]
        bad = sorted(set(p) - set(_PETROLOGY_KEYS))
        if bad:
            valid = ", ".join(sorted(_PETROLOGY_KEYS))
            raise ConfigError(f"{where}: unknown key(s) {bad} in [petrology]; valid: {valid}")
        missing = [k for k in ("s_melt_inclusion_ppm", "s_matrix_glass_ppm") if k not in p]
        if missing:
            raise ConfigError(f"{where}: [petrology] needs {', '.join(missing)}")
        try:
            kw = {_PETROLOGY_KEYS[k]: float(v) for k, v in p.items()}
            values["petrology"] = PetrologyInputs.from_ppm(kw.pop("s_mi_ppm"), kw.pop("s_mg_ppm"), **kw)
        except (TypeError, ValueError, DegasError) as exc:
            raise ConfigError(f"{where}: [petrology]: {exc}") from None
    if "inclusions" in raw:
        values["inclusions"] = _inclusion_settings(raw["inclusions"], where)
    values.update(_weekly_sections(raw, where))
    if "file" in raw:
        from degas.io.mapping import options_from_dict

        if not isinstance(raw["file"], list):
            raise ConfigError(f"{where}: [[file]] entries must be an array of tables")
        for i, f in enumerate(raw["file"]):
            if not isinstance(f, dict) or "path" not in f:
                raise ConfigError(f"{where}: [[file]] #{i + 1} needs a path")
            options_from_dict(f, f"{where} [[file]] #{i + 1}")  # validates every reader option now
        values["files"] = tuple(dict(f) for f in raw["file"])
    check_bounds(values, where)
    try:
        proj = Project(**values)
    except TypeError as exc:
        raise ConfigError(f"{where}: {exc}") from None
    if not 0 <= proj.min_coverage <= 1:
        raise ConfigError(f"{where}: min_coverage must be between 0 and 1")
    if proj.gas_background is not None and proj.gas_background < 0:
        raise ConfigError(f"{where}: [regimes] gas_background must be 0 or more (t/d)")
    if not 0 <= proj.relation_band < 1:
        raise ConfigError(f"{where}: [regimes] relation_band must be between 0 and 1")
    return proj


def _fraction(v, what: str, where: str, upper: float = 1.0) -> float:
    if isinstance(v, bool) or not isinstance(v, int | float) or not 0 <= v <= upper:
        raise ConfigError(f"{where}: {what} must be a number from 0 to {upper:g}, got {v!r}")
    return float(v)


def _weekly_sections(raw: dict, where: str) -> dict:
    """[budget], [thresholds] and [coverage]: the weekly brief's and the budget's project settings."""
    out: dict = {}
    bud = raw.get("budget", {})
    if not isinstance(bud, dict):
        raise ConfigError(f"{where}: [budget] must be a table")
    bad = sorted(set(bud) - {"systematic", "systematic_by_station", "good_flags"})
    if bad:
        raise ConfigError(f"{where}: unknown key(s) {bad} in [budget]; valid: good_flags, systematic, "
                          "systematic_by_station")
    if "systematic" in bud:
        out["systematic"] = _fraction(bud["systematic"], "[budget] systematic", where, 5.0)
    by = bud.get("systematic_by_station", {})
    if not isinstance(by, dict):
        raise ConfigError(f"{where}: [budget.systematic_by_station] must be a table of station = fraction")
    out["systematic_by_station"] = tuple((str(k), _fraction(v, f"[budget.systematic_by_station] {k}", where, 5.0))
                                         for k, v in by.items())
    if "good_flags" in bud:
        g = bud["good_flags"]
        if not isinstance(g, list) or not all(isinstance(x, str) for x in g):
            raise ConfigError(f"{where}: [budget] good_flags must be a list of texts")
        out["good_flags"] = tuple(x.strip().lower() for x in g)
    cov = raw.get("coverage", {})
    if not isinstance(cov, dict):
        raise ConfigError(f"{where}: [coverage] must be a table of series id = share of the day (0-1)")
    out["capability"] = tuple((str(k), _fraction(v, f"[coverage] {k}", where)) for k, v in cov.items())
    if any(v == 0 for _, v in out["capability"]):
        raise ConfigError(f"{where}: [coverage] shares must be above 0")
    if "thresholds" in raw:
        from degas.analysis.weekly import parse_thresholds

        out["thresholds"] = parse_thresholds(raw["thresholds"], where)
    return out
