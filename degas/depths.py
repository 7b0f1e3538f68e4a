"""The depth context of a run: melt-inclusion storage depths beside VT depths, and the inclusion S budget.

Strings library calls together for :mod:`degas.pipeline` and ``degas depths`` (no analysis of its own):
pick the melt-inclusion series, compute saturation pressures and storage depths, put the catalogue on the
sea-level datum (converted once, here), compare per phase, and build the petrological SO2 draws.
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
                  chronology_id: str | None = None, regimes=None) -> DepthContext | None:
    """Storage depths, VT comparison and inclusion S budget; None when the archive holds no inclusions."""
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
    sulfur = None
    try:
        sulfur = P.sulfur_budget(mi, density_kg_m3=s.dense_density_kg_m3, density_sd=s.dense_density_sd_kg_m3,
                                 crystal_fraction=s.crystal_fraction, crystal_fraction_sd=s.crystal_fraction_sd,
                                 n_boot=s.bootstrap, seed=project.seed)
    except NotEnoughDataError as exc:
        notes.append(f"petrological budget from inclusions not computed: {exc}")
    return DepthContext(sid, storage, comparison, sulfur, s, tuple(notes), by_regime)


def inclusion_petrology(ctx: DepthContext | None):
    """The budget's petrological input from the inclusions (budget.SampledPetrology), or None."""
    if ctx is None or ctx.sulfur is None or not ctx.settings.budget_from_inclusions:
        return None
    if ctx.sulfur.so2_per_m3 <= 0:
        return None
    return dataclasses.replace(ctx.sulfur, source=f"{ctx.sulfur.source} ({ctx.series_id})")
