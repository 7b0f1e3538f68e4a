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
    gas_factor = 2.0              # gas active above this multiple of the baseline
    magma_threshold = 0.1         # m³/s DRE
    ratio_low = 0.3               # gas-poor below this fraction of the expected gas per magma
    ratio_high = 3.0

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

    [[file]]                      # optional: files ingested before each weekly or report run (files already in
                                  # the archive are skipped by SHA-256), with reader options as in a mapping file
    path = "exports/so2_north.csv"
    station = "VLM-N"
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from degas.analysis.budget import PetrologyInputs
from degas.errors import ConfigError
from degas.io.mapping import load_toml

#: [petrology] keys (ppm by mass, kg/m³, volume fraction, 1-sigma) -> PetrologyInputs.from_ppm arguments
_PETROLOGY_KEYS = {
    "s_melt_inclusion_ppm": "s_mi_ppm", "s_matrix_glass_ppm": "s_mg_ppm",
    "s_melt_inclusion_sd_ppm": "s_mi_sd_ppm", "s_matrix_glass_sd_ppm": "s_mg_sd_ppm",
    "dense_density_kg_m3": "density_kg_m3", "dense_density_sd_kg_m3": "density_sd",
    "crystal_fraction": "crystal_fraction", "crystal_fraction_sd": "crystal_fraction_sd",
}


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
    gas_factor: float = 2.0
    magma_threshold: float | None = None
    ratio_low: float = 0.3
    ratio_high: float = 3.0
    petrology: PetrologyInputs | None = None
    window_days: int = 7
    baseline_days: int = 90
    lp_classes: tuple[str, ...] = ("LP", "hybrid")
    b_window_events: int = 200
    files: tuple[dict, ...] = field(default=())
    seed: int = 0

    def parameters(self) -> dict:
        """Every parameter as plain values, for the methods section of the report."""
        d = dataclasses.asdict(self)
        d.pop("files")
        return d


_SECTIONS = {
    "volcano": {"name": "volcano", "observatory": "observatory"},
    "series": {"gas": "gas", "magma": "magma", "ratio": "ratio", "catalog": "catalog"},
    "analysis": {"step": "step", "min_coverage": "min_coverage", "max_lag": "max_lag", "surrogates": "surrogates",
                 "bootstrap": "bootstrap", "rolling_window": "rolling_window", "rolling_step": "rolling_step",
                 "rolling_max_lag": "rolling_max_lag", "rolling_surrogates": "rolling_surrogates",
                 "variant": "variant", "seed": "seed"},
    "changepoints": {"min_segment": "min_segment", "max_gap": "max_gap", "penalty": "penalty"},
    "regimes": {"gas_factor": "gas_factor", "magma_threshold": "magma_threshold", "ratio_low": "ratio_low",
                "ratio_high": "ratio_high"},
    "review": {"window_days": "window_days", "baseline_days": "baseline_days"},
    "seismicity": {"lp_classes": "lp_classes", "b_window_events": "b_window_events"},
}


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
    "min_coverage": (int, float), "gas_factor": (int, float), "magma_threshold": (int, float),
    "ratio_low": (int, float), "ratio_high": (int, float), "surrogates": (int,), "bootstrap": (int,),
    "rolling_surrogates": (int,), "window_days": (int,), "baseline_days": (int,), "b_window_events": (int,),
    "seed": (int,),
}


# Bounds of project values (issue 10): each keeps the work of a run bounded and the value meaningful.
# key -> (low, high); counts are resamplings (more than 100,000 adds nothing a report can show and runs for
# hours), numbers must be finite. Durations are checked in check_bounds.
_COUNT_MAX = 100_000
_NUMBER_BOUNDS: dict[str, tuple[float, float]] = {
    "surrogates": (0, _COUNT_MAX), "bootstrap": (0, _COUNT_MAX), "rolling_surrogates": (0, _COUNT_MAX),
    "seed": (0, 2**32 - 1),
    "window_days": (1, 3660), "baseline_days": (1, 36_600), "b_window_events": (1, 1_000_000),
    "gas_factor": (1e-6, 1e6), "magma_threshold": (0, 1e7),
    "ratio_low": (1e-9, 1e9), "ratio_high": (1e-9, 1e9),
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
    known = set(_SECTIONS) | {"petrology", "file"}
    unknown = sorted(set(raw) - known)
    if unknown:
        raise ConfigError(f"{where}: unknown section(s) {unknown}; valid: {', '.join(sorted(known))}")
    values: dict = {}
    for section, keys in _SECTIONS.items():
        table = raw.get(section, {})
        if not isinstance(table, dict):
            raise ConfigError(f"{where}: [{section}] must be a table")
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
    return proj
