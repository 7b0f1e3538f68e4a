"""The depth context of a run: melt-inclusion storage depths beside VT depths, and the inclusion S budget.

Strings library calls together for :mod:`degas.pipeline` and ``degas depths`` (no analysis of its own):
pick the melt-inclusion series, compute saturation pressures and storage depths, put the catalogue on the
sea-level datum (converted once, here), compare per phase, and build the petrological SO2 draws.
:func:`run_petrology` chooses the run's one petrological input (inclusions when usable, else the typed
[petrology] values) before the regimes step, so that the verdict and the budget use the same values.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

from degas.errors import DegasError, NotEnoughDataError
from degas.project import Project
from degas.store import Archive


@dataclass(frozen=True)
class DepthContext:
    """Results of the depth step: storage (StorageResult), comparison (DepthComparisonResult),
    sulfur (budget.SampledPetrology from the inclusion S analyses, or None), settings used and notes."""

    series_id: str
    storage: object
    comparison: object
    sulfur: object | None
    settings: object
    notes: tuple[str, ...] = field(default=())
    by_regime: object | None = None  # VT depth quantiles per regime label (DataFrame), when regimes were run


def inclusion_series(archive: Archive, project: Project) -> str | None:
    """The melt-inclusion series of the run: the project's choice, or the largest stored one."""
    sid = project.inclusions.series
    if sid:
        if sid not in {e.series_id for e in archive.entries()}:
            raise DegasError(f"project [inclusions] series {sid!r} is not in the archive")
        return sid
    cands = archive.find(kind="melt_inclusions")
    return max(cands, key=lambda e: e.n_rows).series_id if cands else None


def depth_context(archive: Archive, project: Project, catalog_id: str | None = None,
                  chronology_id: str | None = None, regimes=None,
                  petrology: RunPetrology | None = None) -> DepthContext | None:
    """Storage depths, VT comparison and inclusion S budget; None when the archive holds no inclusions.
    ``petrology``: the run's petrological input (:func:`run_petrology`), whose inclusion draws are reused."""
    from degas.analysis import petrology as P

    sid = inclusion_series(archive, project)
    if sid is None:
        return None
    s = project.inclusions
    mi = archive.load(sid)
    notes: list[str] = []
    if not s.stated:
        notes.append("no [inclusions] section in the project: defaults used (Liu et al. 2005 at 850 °C, crust "
                     "2600 kg/m³, vent at sea level, hypocentre depths below sea level); state them")
    storage = P.storage_depths(mi, model=s.model, temperature_c=s.temperature_c,
                               phase_temperatures=s.phase_temperatures_c, crust=s.crust(), n_draws=s.draws,
                               seed=project.seed, alt_model=s.alt_model)
    if catalog_id is None:
        cats = archive.find(kind="seismic_catalog")
        catalog_id = max(cats, key=lambda e: e.n_rows).series_id if cats else None
    catalog = archive.load(catalog_id) if catalog_id else None
    if catalog is not None:
        catalog = P.to_sea_level_depths(catalog, s.hypocentre_datum, s.vent_elevation_m)
    if chronology_id is None:  # every stored chronology (one per vent/location): a phase may be at any of them
        import pandas as pd

        loaded = [archive.load(e.series_id) for e in archive.find(kind="chronology")]
        chron = loaded[0].with_data(pd.concat([c.data for c in loaded], ignore_index=True)) if loaded else None
    else:
        chron = archive.load(chronology_id)
    windows = P.phase_windows(mi, chron)
    comparison = P.compare_with_seismicity(storage, catalog, windows)
    by_regime = None
    if regimes is not None and catalog is not None:
        by_regime = P.vt_depths_by_interval(catalog, regimes.intervals[["start", "end", "label"]])
    if petrology is not None and petrology.series_id == sid:  # the run's own input: the same draws
        sulfur = petrology.sulfur
        notes.extend(petrology.notes)
    else:
        sulfur, more = _sulfur(mi, project)
        notes.extend(more)
    return DepthContext(sid, storage, comparison, sulfur, s, tuple(notes), by_regime)


def _sulfur(mi, project: Project) -> tuple[object | None, list[str]]:
    """The inclusion S budget (Devine et al. 1984, bootstrap over analyses) with the [inclusions] settings."""
    from degas.analysis import petrology as P

    s = project.inclusions
    try:
        return P.sulfur_budget(mi, density_kg_m3=s.dense_density_kg_m3, density_sd=s.dense_density_sd_kg_m3,
                               crystal_fraction=s.crystal_fraction, crystal_fraction_sd=s.crystal_fraction_sd,
                               n_boot=s.bootstrap, seed=project.seed), []
    except NotEnoughDataError as exc:
        return None, [f"petrological budget from inclusions not computed: {exc}"]


def _usable(sulfur, settings, series_id: str | None):
    """The inclusion draws as the budget's input (source names the series), or None when not usable."""
    if sulfur is None or not settings.budget_from_inclusions or sulfur.so2_per_m3 <= 0:
        return None
    return dataclasses.replace(sulfur, source=f"{sulfur.source} ({series_id})")


def inclusion_petrology(ctx: DepthContext | None):
    """The budget's petrological input from the inclusions (budget.SampledPetrology), or None."""
    if ctx is None:
        return None
    return _usable(ctx.sulfur, ctx.settings, ctx.series_id)


@dataclass(frozen=True)
class RunPetrology:
    """The one petrological SO2 input of a run (Devine et al. 1984): the verdict's expectation, the gas budget
    and the report's "Petrological inputs" table all read this.

    inputs : budget.SampledPetrology from the inclusion S analyses when present and usable, else the project's
        typed [petrology] values (budget.PetrologyInputs), else None.
    origin : "inclusions", "typed" or "none".
    sulfur : the inclusion S budget when it was computed (even if not used); series_id : its series.
    notes : why the inclusions were not used, when they were not.
    """

    inputs: object | None
    origin: str
    sulfur: object | None = None
    series_id: str | None = None
    notes: tuple[str, ...] = field(default=())

    @property
    def label(self) -> str:
        """Where the values come from, in a few words (for the summary and the CLI)."""
        if self.origin == "inclusions":
            return f"from {self.inputs.n_mi} inclusion and {self.inputs.n_mg} matrix-glass S analyses"
        if self.origin == "typed":
            return "from the project's typed [petrology] values"
        return "no petrological input"


def run_petrology(archive: Archive, project: Project) -> RunPetrology:
    """The run's petrological SO2 input: the inclusion S populations when the archive holds usable ones
    (and [inclusions] budget_from_inclusions is true), else the typed [petrology] values."""
    typed = project.petrology
    sid = inclusion_series(archive, project)
    sulfur, notes = (None, []) if sid is None else _sulfur(archive.load(sid), project)
    chosen = _usable(sulfur, project.inclusions, sid)
    if chosen is not None:
        return RunPetrology(chosen, "inclusions", sulfur, sid, tuple(notes))
    return RunPetrology(typed, "typed" if typed is not None else "none", sulfur, sid, tuple(notes))
