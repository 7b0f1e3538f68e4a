"""Seismicity: event rates by class, energy and moment, completeness and b-value.

Every function takes an :class:`~degas.model.EventCatalog` (or, for the magnitude statistics,
also a plain array of magnitudes) and returns a frozen ``*Result`` with ``notes`` and a tidy
``to_frame()``. Binning goes through :mod:`degas.grid` (bins ``[start, start + step)``, UTC).

Formulas (sources as in the project's reference sheet, section 3):

* energy: ``log10 E = 1.5 M + 4.8`` with E in joules - the Gutenberg & Richter (1956)
  Ms-energy relation, approximate; applied to whatever magnitude the catalogue holds, and the
  notes say which. Benioff strain is the cumulative sum of ``sqrt(E)`` (unit J^0.5).
* moment: ``Mw = (2/3) (log10 M0 - 9.1)``, M0 in N·m (IASPEI 2013 standard form); the literal
  Hanks & Kanamori (1979) form ``Mw = (2/3) log10 M0 - 10.7`` with M0 in dyne·cm differs by
  ~0.03 magnitude units and is available as :func:`mw_from_moment_hk79`. Only moment-magnitude
  types (:data:`MOMENT_MAGNITUDE_TYPES`) are converted; ML, Md, mb, ... get NaN and a note.
* completeness: maximum curvature (Wiemer & Wyss 2000) plus the +0.2 correction of
  Woessner & Wiemer (2005); goodness-of-fit (Wiemer & Wyss 2000) as an option.
* b-value: maximum likelihood, Aki (1965), with the half-bin correction of Utsu (1966);
  the exact binned estimator of Tinti & Mulargia (1987) as an option; uncertainty by
  Shi & Bolt (1982).

Events without a magnitude are counted in the rates and excluded from energy and magnitude
statistics (the notes say how many). Classes outside :data:`degas.model.EVENT_CLASSES` are
treated as ``other`` and listed. A catalogue mixing magnitude types is refused by the energy
and magnitude statistics unless ``allow_mixed_types=True``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from degas.classcounts import ClassCounts
from degas.errors import DegasError, NotEnoughDataError
from degas.grid import Grid, bin_index, event_counts, grid_for
from degas.model import EVENT_CLASSES, EventCatalog, SeriesMeta, TimeSeries, make_series

#: Magnitude types (compared ignoring case) that are moment magnitudes and convert to M0 directly.
MOMENT_MAGNITUDE_TYPES: frozenset[str] = frozenset({"mw", "mww", "mwc", "mwr", "mwb", "mwp", "mwd"})

#: Gutenberg & Richter (1956) energy relation, approximate: log10 E[J] = 1.5 M + 4.8.
ENERGY_SLOPE = 1.5
ENERGY_OFFSET_J = 4.8
#: IASPEI (2013) moment-magnitude constant for M0 in N·m.
MOMENT_OFFSET_NM = 9.1
#: Hanks & Kanamori (1979) constant for M0 in dyne·cm: Mw = (2/3) log10 M0 - 10.7.
HK79_OFFSET_DYNE_CM = 10.7
#: Shi & Bolt (1982) factor; 2.30 ≈ ln 10 as printed in the source.
SHI_BOLT_FACTOR = 2.30
#: Default minimum number of events above Mc for a b-value (Shi & Bolt 1982 suggest ~100 for a stable b).
DEFAULT_MIN_EVENTS = 50
#: Maximum-curvature correction, Woessner & Wiemer (2005): MAXC under-estimates Mc by ~0.2 on average.
MAXC_CORRECTION = 0.2

_LOG10_E = math.log10(math.e)
_OTHER = EVENT_CLASSES.index("other")
_NS_PER_DAY = 86_400 * 10**9


class MixedMagnitudeTypesError(DegasError):
    """A catalogue mixes magnitude types where one type is needed; the message lists them."""


# --------------------------------------------------------------------------------------------
# formulas


def energy_from_magnitude(magnitude) -> np.ndarray:
    """Radiated seismic energy in joules, ``log10 E = 1.5 M + 4.8``.

    Gutenberg & Richter (1956) Ms-energy relation, approximate (the erg form is
    ``log10 E = 1.5 M + 11.8``). M 4.0 gives 10^10.8 J ≈ 6.31e10 J; one magnitude unit is a
    factor 10^1.5 ≈ 31.6.

    Parameters
    ----------
    magnitude : array-like of magnitudes (dimensionless); NaN stays NaN.
    """
    m = np.asarray(magnitude, dtype="float64")
    return 10.0 ** (ENERGY_SLOPE * m + ENERGY_OFFSET_J)


def moment_from_mw(mw) -> np.ndarray:
    """Seismic moment M0 in N·m from moment magnitude: ``M0 = 10^(1.5 Mw + 9.1)`` (IASPEI 2013)."""
    return 10.0 ** (1.5 * np.asarray(mw, dtype="float64") + MOMENT_OFFSET_NM)


def mw_from_moment(moment_nm) -> np.ndarray:
    """Moment magnitude from M0 in N·m: ``Mw = (2/3)(log10 M0 - 9.1)`` (IASPEI 2013 SI form)."""
    return (2.0 / 3.0) * (np.log10(np.asarray(moment_nm, dtype="float64")) - MOMENT_OFFSET_NM)


def mw_from_moment_hk79(moment_dyne_cm) -> np.ndarray:
    """Moment magnitude by the literal Hanks & Kanamori (1979) form, M0 in dyne·cm.

    ``Mw = (2/3) log10 M0 - 10.7``. Differs from :func:`mw_from_moment` by 1/30 magnitude unit
    (10.7 = (2/3)·16.05, whereas 9.1 in N·m is 16.1 in dyne·cm); 1 N·m = 1e7 dyne·cm.
    """
    return (2.0 / 3.0) * np.log10(np.asarray(moment_dyne_cm, dtype="float64")) - HK79_OFFSET_DYNE_CM


def b_value_aki_utsu(magnitudes, mc: float, bin_width: float = 0.1) -> float:
    """Maximum-likelihood b-value, Aki (1965) with the Utsu (1966) half-bin correction.

    ``b = log10(e) / (M̄ - (Mc - ΔM/2))`` over magnitudes ≥ Mc. ``bin_width=0`` gives Aki's
    continuous form ``log10(e) / (M̄ - Mc)``.

    Parameters
    ----------
    magnitudes : array-like (magnitude units); values below ``mc`` are ignored.
    mc : magnitude of completeness (centre of the lowest complete bin).
    bin_width : magnitude bin ΔM (0 for continuous magnitudes).
    """
    m = _above(np.asarray(magnitudes, dtype="float64"), mc, bin_width)
    if m.size == 0:
        return float("nan")
    return float(_LOG10_E / (m.mean() - (mc - bin_width / 2.0)))


def b_value_tinti_mulargia(magnitudes, mc: float, bin_width: float = 0.1) -> float:
    """Exact maximum-likelihood b for binned magnitudes, Tinti & Mulargia (1987).

    ``b = ln(1 + ΔM / (M̄ - Mc)) / (ln 10 · ΔM)``, Mc the centre of the lowest complete bin.
    """
    if bin_width <= 0:
        raise DegasError("the Tinti & Mulargia estimator needs a positive bin width")
    m = _above(np.asarray(magnitudes, dtype="float64"), mc, bin_width)
    if m.size == 0:
        return float("nan")
    return float(np.log1p(bin_width / (m.mean() - mc)) / (math.log(10.0) * bin_width))


def shi_bolt_sigma(magnitudes, b: float) -> float:
    """b-value standard error of Shi & Bolt (1982).

    ``σ = 2.30 b² sqrt(Σ(Mi - M̄)² / (n (n - 1)))``; 2.30 ≈ ln 10 as printed in the source.
    ``magnitudes`` are the events used for ``b`` (already above Mc).
    """
    m = np.asarray(magnitudes, dtype="float64")
    n = m.size
    if n < 2:
        return float("nan")
    return float(SHI_BOLT_FACTOR * b * b * math.sqrt(np.sum((m - m.mean()) ** 2) / (n * (n - 1))))


def _bin_codes(m: np.ndarray, bin_width: float) -> np.ndarray:
    """Integer bin of each magnitude; bin k is centred on k·ΔM (a value half-way goes up)."""
    with np.errstate(invalid="ignore"):
        return np.floor(np.asarray(m, dtype="float64") / bin_width + 0.5 + 1e-9).astype("int64")


def _keep(m: np.ndarray, mc: float, bin_width: float) -> np.ndarray:
    """Mask of magnitudes in the bin of Mc or above (bins centred on multiples of ΔM); m ≥ Mc if ΔM = 0."""
    if bin_width > 0:
        return np.isfinite(m) & (_bin_codes(m, bin_width) >= _bin_codes(np.asarray(mc), bin_width))
    return np.isfinite(m) & (m >= mc - 1e-9)


def _above(m: np.ndarray, mc: float, bin_width: float) -> np.ndarray:
    return m[_keep(m, mc, bin_width)]


# --------------------------------------------------------------------------------------------
# preparing a catalogue


@dataclass(frozen=True, eq=False)
class _Classes:
    codes: np.ndarray  # int8 index into EVENT_CLASSES per event
    catalog: EventCatalog  # event_class canonicalised (unknown -> other)
    notes: tuple[str, ...]


def _canonical_classes(catalog: EventCatalog) -> _Classes:
    """Map event classes onto EVENT_CLASSES: exact, then ignoring case; anything else -> other."""
    raw = catalog.data["event_class"]
    codes, uniques = pd.factorize(raw, use_na_sentinel=True)
    lut = np.full(len(uniques) + 1, _OTHER, dtype="int8")  # last slot: missing class (code -1)
    lower = {c.lower(): i for i, c in enumerate(EVENT_CLASSES)}
    counts = np.bincount(codes[codes >= 0], minlength=len(uniques))
    unknown, case = [], []
    changed = False
    for j, u in enumerate(uniques):
        label = str(u)
        if label in EVENT_CLASSES:
            lut[j] = EVENT_CLASSES.index(label)
        elif label.strip().lower() in lower:
            lut[j] = lower[label.strip().lower()]
            case.append(f"{label!r}->{EVENT_CLASSES[lut[j]]} ({counts[j]})")
            changed = True
        else:
            unknown.append(f"{label!r} ({counts[j]})")
            changed = True
    cls = lut[codes]
    notes = []
    n_missing = int(np.count_nonzero(codes < 0))
    if n_missing:
        changed = True
        notes.append(f"{n_missing} events without a class counted as 'other'")
    if unknown:
        notes.append(f"unknown event classes counted as 'other': {', '.join(unknown)}")
    if case:
        notes.append(f"event classes matched ignoring case: {', '.join(case)}")
    if changed:
        data = catalog.data.copy()
        data["event_class"] = pd.Series(np.asarray(EVENT_CLASSES, dtype=object)[cls], dtype="string",
                                        index=data.index)
        catalog = catalog.with_data(data)
    return _Classes(cls, catalog, tuple(notes))


@dataclass(frozen=True, eq=False)
class _Magnitudes:
    has_mag: np.ndarray  # bool per event
    types: tuple[tuple[str, int], ...]  # (type as spelt first, events) for events with magnitude
    is_moment: np.ndarray  # bool per event: its magnitude type is a moment magnitude
    notes: tuple[str, ...]


def _magnitudes(catalog: EventCatalog, allow_mixed_types: bool, *, purpose: str) -> _Magnitudes:
    data = catalog.data
    mag = data["magnitude"].to_numpy(dtype="float64", na_value=np.nan)
    has = np.isfinite(mag)
    codes, uniques = pd.factorize(data["magnitude_type"], use_na_sentinel=True)
    keys = [str(u).strip().lower() for u in uniques]
    moment_lut = np.array([k in MOMENT_MAGNITUDE_TYPES for k in keys] + [False])  # last slot: no type
    first_spelling: dict[str, str] = {}
    for u in uniques:
        first_spelling.setdefault(str(u).strip().lower(), str(u).strip())
    counts: dict[str, int] = {}
    if has.any():
        c = np.bincount(codes[has] + 1, minlength=len(uniques) + 1)  # slot 0: no type
        for j, u in enumerate(uniques):
            k = str(u).strip().lower()
            if c[j + 1] and k:
                counts[k] = counts.get(k, 0) + int(c[j + 1])
        n_untyped = int(c[0]) + sum(int(c[j + 1]) for j, u in enumerate(uniques) if not str(u).strip())
    else:
        n_untyped = 0
    types = tuple((first_spelling[k], n) for k, n in sorted(counts.items(), key=lambda kv: -kv[1]))
    notes = []
    n_without = int(np.count_nonzero(~has))
    if n_without:
        notes.append(f"{n_without} of {len(mag)} events have no magnitude: counted in rates, "
                     f"excluded from {purpose}")
    if n_untyped:
        notes.append(f"{n_untyped} events with a magnitude but no magnitude type")
    if len(types) > 1:
        listing = ", ".join(f"{t} ({n})" for t, n in types)
        if not allow_mixed_types:
            raise MixedMagnitudeTypesError(
                f"the catalogue mixes magnitude types {listing}; {purpose} needs a single type - select one, "
                "convert with a stated relation, or allow mixing explicitly (allow_mixed_types=True, "
                "--allow-mixed-types)")
        notes.append(f"magnitude types mixed on request: {listing}; treated as one scale")
    return _Magnitudes(has, types, moment_lut[codes], tuple(notes))


def _select_classes(catalog: EventCatalog, classes: Sequence[str] | None) -> tuple[EventCatalog, tuple[str, ...]]:
    """The events of the given classes (unknown labels count as 'other'), plus a note."""
    if classes is None:
        return catalog, ()
    classes = _class_tuple(classes)
    cls = _canonical_classes(catalog)
    keep = np.isin(cls.codes, [EVENT_CLASSES.index(c) for c in classes])
    sub = catalog.with_data(catalog.data.loc[keep].reset_index(drop=True))
    return sub, (f"events of class {'+'.join(classes)} only ({int(keep.sum())} of {len(catalog)})",)


def _magnitude_array(data, allow_mixed_types: bool, purpose: str, classes: Sequence[str] | None = None
                     ) -> tuple[np.ndarray, tuple[str, ...]]:
    """Finite magnitudes from a catalogue (type-checked, optionally some classes) or an array, plus notes."""
    if isinstance(data, EventCatalog):
        data, sel_note = _select_classes(data, classes)
        info = _magnitudes(data, allow_mixed_types, purpose=purpose)
        m = data.data["magnitude"].to_numpy(dtype="float64", na_value=np.nan)[info.has_mag]
        notes = sel_note + info.notes
        if info.types:
            notes = notes + (f"magnitude type: {'/'.join(t for t, _ in info.types)}",)
        return m, notes
    if classes is not None:
        raise DegasError("classes= needs an EventCatalog, not an array of magnitudes")
    m = np.asarray(data, dtype="float64").ravel()
    n_bad = int(np.count_nonzero(~np.isfinite(m)))
    notes = (f"{n_bad} missing magnitudes excluded from {purpose}",) if n_bad else ()
    return m[np.isfinite(m)], notes


def _grid(catalog: EventCatalog, step, start=None, end=None) -> Grid:
    if len(catalog) == 0 and (start is None or end is None):
        raise NotEnoughDataError("the catalogue has no events")
    return grid_for([catalog], step, start=start, end=end)


def _class_tuple(classes: Sequence[str] | None) -> tuple[str, ...]:
    if classes is None:
        return EVENT_CLASSES
    bad = [c for c in classes if c not in EVENT_CLASSES]
    if bad:
        valid = ", ".join(EVENT_CLASSES)
        raise DegasError(f"unknown event class {', '.join(map(repr, bad))}; valid: {valid}")
    return tuple(classes)


def _step_days(grid: Grid) -> float:
    return grid.step.value / _NS_PER_DAY


# --------------------------------------------------------------------------------------------
# rates


@dataclass(frozen=True, eq=False)
class RateResult:
    """Event counts per bin and class, cumulative counts and inter-event time statistics.

    Attributes
    ----------
    step : bin width.
    classes : the event classes reported (columns of ``counts``, plus ``total``).
    counts : DataFrame indexed by bin start (UTC): events per bin per class and ``total``
        (total counts every event, whatever its class).
    cumulative : running sum of ``counts``.
    interevent : DataFrame indexed by class (and ``total``): ``n_events``, ``median_s``,
        ``mean_s`` (inter-event time, seconds), ``cv`` (coefficient of variation,
        std/mean; ≈1 for a Poisson process, >1 clustered, <1 regular).
    notes : caveats computed from the data.
    """

    step: pd.Timedelta
    classes: tuple[str, ...]
    counts: pd.DataFrame
    cumulative: pd.DataFrame
    interevent: pd.DataFrame
    n_events: int
    notes: tuple[str, ...]

    @property
    def rate_per_day(self) -> pd.DataFrame:
        """Counts divided by the bin width in days (events per day)."""
        return self.counts / (self.step / pd.Timedelta("1D"))

    def to_frame(self) -> pd.DataFrame:
        """Tidy long table: time, event_class, count, cumulative, rate_per_day (1/d)."""
        days = self.step / pd.Timedelta("1D")
        long = {"id_vars": "time", "var_name": "event_class"}
        cnt = self.counts.reset_index().melt(**long, value_name="count")
        cum = self.cumulative.reset_index().melt(**long, value_name="cumulative")
        out = cnt.merge(cum, on=["time", "event_class"])
        out["rate_per_day"] = out["count"] / days
        return out


def _interevent(t_sorted: np.ndarray, cls_sorted: np.ndarray, classes: tuple[str, ...]) -> pd.DataFrame:
    rows = {}
    for name in (*classes, "total"):
        t = t_sorted if name == "total" else t_sorted[cls_sorted == EVENT_CLASSES.index(name)]
        d = np.diff(t) / 1e9
        n = int(t.size)
        if d.size == 0:
            rows[name] = (n, np.nan, np.nan, np.nan)
            continue
        mean = float(d.mean())
        cv = float(d.std(ddof=1) / mean) if d.size > 1 and mean > 0 else np.nan
        rows[name] = (n, float(np.median(d)), mean, cv)
    out = pd.DataFrame.from_dict(rows, orient="index", columns=["n_events", "median_s", "mean_s", "cv"])
    out.index.name = "event_class"
    return out


def event_rates(
    catalog: EventCatalog,
    step: str | pd.Timedelta = "1D",
    *,
    classes: Sequence[str] | None = None,
    grid: Grid | None = None,
) -> RateResult:
    """Event counts per time bin and per class, cumulative counts, inter-event times.

    Parameters
    ----------
    catalog : the event catalogue (times UTC).
    step : bin width, e.g. "1D", "7D", "6h".
    classes : classes to report (default all of EVENT_CLASSES); ``total`` always counts every event.
    grid : an existing grid instead of one spanning the catalogue.

    Returns
    -------
    RateResult
    """
    if isinstance(catalog, ClassCounts):  # published counts by class (kind event_counts)
        from degas.analysis.count_rates import rates_from_counts

        return rates_from_counts(catalog, step, _class_tuple(classes), grid)
    cls = _canonical_classes(catalog)
    classes = _class_tuple(classes)
    if grid is None:
        grid = _grid(cls.catalog, step)
    counts = event_counts(cls.catalog, grid.step, grid=grid, classes=classes)
    t = catalog.data["time"].to_numpy(dtype="datetime64[ns]").astype("int64")
    order = np.argsort(t, kind="stable")
    inter = _interevent(t[order], cls.codes[order], classes)
    notes = list(cls.notes)
    n_out = int(len(catalog) - counts["total"].sum())
    if n_out:
        notes.append(f"{n_out} events fall outside the grid and are not counted")
    for c in classes:
        n = int(inter.loc[c, "n_events"])
        if 0 < n < 10:
            notes.append(f"only {n} {c} events: inter-event statistics are rough")
    return RateResult(grid.step, classes, counts, counts.cumsum(), inter, len(catalog), tuple(notes))


def event_rate_series(
    catalog: EventCatalog,
    step: str | pd.Timedelta = "1D",
    classes: Sequence[str] = ("LP", "hybrid"),
    *,
    grid: Grid | None = None,
) -> TimeSeries:
    """Rate of events of the given classes as a TimeSeries, for change-point and coupling analysis.

    Parameters
    ----------
    catalog : the event catalogue.
    step : bin width.
    classes : classes summed into the rate (default LP + hybrid).
    grid : an existing grid.

    Returns
    -------
    TimeSeries of kind ``other``, quantity e.g. ``lp_hybrid_rate``, unit ``1/d`` (events per day
    = count in bin / bin width in days); each row is the interval ``[time, end)`` of one bin.
    """
    classes = _class_tuple(classes)
    if isinstance(catalog, ClassCounts):  # published counts by class (kind event_counts)
        from degas.analysis.count_rates import rate_series_from_counts

        return rate_series_from_counts(catalog, step, classes, grid)
    cls = _canonical_classes(catalog)
    if grid is None:
        grid = _grid(cls.catalog, step)
    counts = event_counts(cls.catalog, grid.step, grid=grid, classes=classes)
    value = counts[list(classes)].sum(axis=1).to_numpy(dtype="float64") / _step_days(grid)
    starts = grid.starts
    meta = SeriesMeta(
        kind="other",
        quantity="_".join(c.lower() for c in classes) + "_rate",
        unit="1/d",
        display_unit="1/d",
        description=f"events per day of class {'+'.join(classes)} in bins of {grid.step}",
    )
    return make_series(meta, starts, value, end=starts + grid.step, provenance=catalog.provenance)


# --------------------------------------------------------------------------------------------
# energy and moment


@dataclass(frozen=True, eq=False)
class EnergyResult:
    """Seismic energy, Benioff strain and (where the magnitude type allows) moment.

    Attributes
    ----------
    events : per event with a magnitude: time, event_class, magnitude, magnitude_type,
        energy_j (J), moment_nm (N·m, NaN unless a moment magnitude), mw.
    energy_j : DataFrame indexed by bin start: energy released per bin per class and total (J).
    cumulative_energy_j : running sum of ``energy_j`` (J).
    cumulative_benioff : running sum of sqrt(E) per class and total (J^0.5).
    total_energy_j, total_moment_nm : sums (moment NaN when no event has a moment magnitude).
    n_with_magnitude, n_without_magnitude : event counts.
    magnitude_types : (type, events) pairs among events with a magnitude.
    """

    step: pd.Timedelta
    classes: tuple[str, ...]
    events: pd.DataFrame
    energy_j: pd.DataFrame
    cumulative_energy_j: pd.DataFrame
    cumulative_benioff: pd.DataFrame
    total_energy_j: float
    total_moment_nm: float
    n_with_magnitude: int
    n_without_magnitude: int
    magnitude_types: tuple[tuple[str, int], ...]
    notes: tuple[str, ...]

    def to_frame(self) -> pd.DataFrame:
        """Tidy long table: time, event_class, energy_j, cumulative_energy_j, cumulative_benioff_j05."""
        parts = []
        for name, frame in (("energy_j", self.energy_j), ("cumulative_energy_j", self.cumulative_energy_j),
                            ("cumulative_benioff_j05", self.cumulative_benioff)):
            parts.append(frame.reset_index().melt(id_vars="time", var_name="event_class", value_name=name))
        out = parts[0]
        for p in parts[1:]:
            out = out.merge(p, on=["time", "event_class"])
        return out


def _per_class_sums(idx: np.ndarray, codes: np.ndarray, w: np.ndarray, n: int,
                    classes: tuple[str, ...]) -> dict[str, np.ndarray]:
    k = len(EVENT_CLASSES)
    flat = np.bincount(idx * k + codes, weights=w, minlength=n * k).reshape(n, k)
    out = {c: flat[:, EVENT_CLASSES.index(c)] for c in classes}
    out["total"] = flat.sum(axis=1)
    return out


def seismic_energy(
    catalog: EventCatalog,
    step: str | pd.Timedelta = "1D",
    *,
    classes: Sequence[str] | None = None,
    allow_mixed_types: bool = False,
    grid: Grid | None = None,
) -> EnergyResult:
    """Energy per event and per bin, cumulative energy and Benioff strain per class; moment.

    Parameters
    ----------
    catalog : the event catalogue.
    step : bin width.
    classes : classes to report (default all); ``total`` sums every event.
    allow_mixed_types : accept a catalogue mixing magnitude types (otherwise
        MixedMagnitudeTypesError lists them).
    grid : an existing grid.

    Returns
    -------
    EnergyResult; energy in J from ``log10 E = 1.5 M + 4.8`` (Gutenberg & Richter 1956, approximate),
    moment in N·m from ``M0 = 10^(1.5 Mw + 9.1)`` (IASPEI 2013) for moment magnitudes only.
    """
    classes = _class_tuple(classes)
    cls = _canonical_classes(catalog)
    info = _magnitudes(catalog, allow_mixed_types, purpose="energy")
    if grid is None:
        grid = _grid(cls.catalog, step)
    data = catalog.data
    has = info.has_mag
    mag = data["magnitude"].to_numpy(dtype="float64", na_value=np.nan)[has]
    energy = energy_from_magnitude(mag)
    is_mw = info.is_moment[has]
    moment = np.where(is_mw, moment_from_mw(mag), np.nan)
    idx = bin_index(data["time"], grid)[has]
    codes = cls.codes[has]
    inside = (idx >= 0) & (idx < grid.n)
    e_sum = _per_class_sums(idx[inside], codes[inside], energy[inside], grid.n, classes)
    s_sum = _per_class_sums(idx[inside], codes[inside], np.sqrt(energy[inside]), grid.n, classes)
    index = pd.Index(grid.starts, name="time")
    e_frame = pd.DataFrame(e_sum, index=index)
    benioff = pd.DataFrame(s_sum, index=index).cumsum()
    events = pd.DataFrame({
        "time": data["time"].array[has],
        "event_class": pd.Categorical.from_codes(codes, categories=list(EVENT_CLASSES)),
        "magnitude": mag,
        "magnitude_type": data["magnitude_type"].array[has],
        "energy_j": energy,
        "moment_nm": moment,
        "mw": np.where(is_mw, mag, np.nan),
    })
    notes = list(cls.notes) + list(info.notes)
    type_text = "/".join(t for t, _ in info.types) or "of unstated type"
    notes.append(f"energy from log10 E = 1.5 M + 4.8 (Gutenberg & Richter 1956 Ms-energy relation, "
                 f"approximate) applied to magnitudes {type_text}")
    n_mw = int(np.count_nonzero(is_mw))
    if n_mw == 0 and has.any():
        notes.append(f"no seismic moment: magnitude type {type_text} has no moment conversion without a "
                     "stated relation (only moment magnitudes Mw, Mww, Mwc, Mwr, ... convert)")
    elif n_mw < int(has.sum()):
        notes.append(f"seismic moment only for the {n_mw} events with a moment magnitude")
    return EnergyResult(
        step=grid.step, classes=classes, events=events, energy_j=e_frame,
        cumulative_energy_j=e_frame.cumsum(), cumulative_benioff=benioff,
        total_energy_j=float(energy.sum()),
        total_moment_nm=float(np.nansum(moment)) if n_mw else float("nan"),
        n_with_magnitude=int(has.sum()), n_without_magnitude=int((~has).sum()),
        magnitude_types=info.types, notes=tuple(notes),
    )


# --------------------------------------------------------------------------------------------
# frequency-magnitude distribution and completeness


@dataclass(frozen=True, eq=False)
class FMDResult:
    """Frequency-magnitude distribution, as data for a plot.

    ``magnitude`` holds bin centres; ``count`` the events in each bin (non-cumulative) and
    ``cumulative`` the events at or above each bin, N(≥M).
    """

    magnitude: np.ndarray
    count: np.ndarray
    cumulative: np.ndarray
    bin_width: float
    n_events: int
    notes: tuple[str, ...]

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame({"magnitude": self.magnitude, "count": self.count, "cumulative": self.cumulative})


def _off_grid_note(m: np.ndarray, bin_width: float) -> tuple[str, ...]:
    if m.size == 0:
        return ()
    off = np.abs(m / bin_width - np.round(m / bin_width)) > 1e-3
    if off.mean() > 0.01:
        return (f"{off.mean():.0%} of magnitudes are not multiples of the bin width {bin_width:g}; "
                "they were assigned to the nearest bin",)
    return ()


def frequency_magnitude(data, *, bin_width: float = 0.1, classes: Sequence[str] | None = None,
                        allow_mixed_types: bool = False) -> FMDResult:
    """Frequency-magnitude distribution of a catalogue or an array of magnitudes.

    Parameters
    ----------
    data : EventCatalog or array-like of magnitudes.
    bin_width : magnitude bin ΔM; bins are centred on multiples of ΔM.
    classes : only events of these classes (catalogue input).
    allow_mixed_types : accept mixed magnitude types (catalogue input).
    """
    if bin_width <= 0:
        raise DegasError(f"magnitude bin width must be positive, got {bin_width}")
    m, notes = _magnitude_array(data, allow_mixed_types, "the frequency-magnitude distribution", classes)
    if m.size == 0:
        raise NotEnoughDataError("no events with a magnitude for a frequency-magnitude distribution")
    k = _bin_codes(m, bin_width)
    k0 = int(k.min())
    count = np.bincount(k - k0)
    cum = np.cumsum(count[::-1])[::-1]
    mags = np.round((np.arange(count.size) + k0) * bin_width, 10)
    return FMDResult(mags, count.astype("int64"), cum.astype("int64"), bin_width, int(m.size),
                     notes + _off_grid_note(m, bin_width))


@dataclass(frozen=True, eq=False)
class CompletenessResult:
    """Magnitude of completeness.

    Attributes
    ----------
    mc : magnitude of completeness (after ``correction``).
    mc_raw : the method's own estimate before the correction.
    method : "maxc" or "gft" (or "gft->maxc" when GFT fell back to MAXC).
    correction : magnitude units added (+0.2 for MAXC, Woessner & Wiemer 2005).
    gft : for GFT, a DataFrame of trial Mc, b, and goodness of fit R (%); else None.
    """

    mc: float
    mc_raw: float
    method: str
    correction: float
    bin_width: float
    n_events: int
    gft: pd.DataFrame | None
    notes: tuple[str, ...]

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame([{"mc": self.mc, "mc_raw": self.mc_raw, "method": self.method,
                              "correction": self.correction, "bin_width": self.bin_width,
                              "n_events": self.n_events}])


def _mc_maxc(m: np.ndarray, bin_width: float, correction: float | None) -> CompletenessResult:
    fmd_k = _bin_codes(m, bin_width)
    k0 = int(fmd_k.min())
    count = np.bincount(fmd_k - k0)
    mode = (int(np.argmax(count)) + k0) * bin_width  # ties: the lowest magnitude
    corr = MAXC_CORRECTION if correction is None else correction
    notes = []
    if np.count_nonzero(count == count.max()) > 1:
        notes.append("several magnitude bins share the largest count; the lowest was taken")
    return CompletenessResult(round(mode + corr, 10), round(mode, 10), "maxc", corr, bin_width, int(m.size),
                              None, tuple(notes))


#: GFT trials need this many non-empty magnitude bins at or above the trial Mc (one bin always fits).
_GFT_MIN_BINS = 3


def _mc_gft(m: np.ndarray, bin_width: float, correction: float | None, *, min_events: int = 25
            ) -> CompletenessResult:
    k = _bin_codes(m, bin_width)
    k0 = int(k.min())
    count = np.bincount(k - k0)
    centres = (np.arange(count.size) + k0) * bin_width
    cum = np.cumsum(count[::-1])[::-1].astype(float)
    # sums of magnitudes at or above each bin, for the b-value of every trial Mc at once
    msum = np.cumsum((count * centres)[::-1])[::-1]
    occupied = np.cumsum((count > 0)[::-1])[::-1]  # non-empty bins at or above each bin
    rows = []
    for i, mi in enumerate(centres):
        n = cum[i]
        if n < min_events or occupied[i] < _GFT_MIN_BINS:
            break
        b = _LOG10_E / (msum[i] / n - (mi - bin_width / 2.0))
        a = math.log10(n) + b * mi
        synth = 10.0 ** (a - b * centres[i:])
        obs = cum[i:]
        r = 100.0 - 100.0 * np.abs(obs - synth).sum() / obs.sum()
        rows.append((round(mi, 10), b, r, int(n)))
    table = pd.DataFrame(rows, columns=["mc", "b", "r_percent", "n_events"])
    notes = ["GFT residual R = 100 - 100·Σ|B - S|/ΣB on cumulative counts and the 95/90 % rule "
             "(Wiemer & Wyss 2000) are value from memory"]
    for level in (95.0, 90.0):
        ok = table[table["r_percent"] >= level]
        if not ok.empty:
            mc = float(ok["mc"].iloc[0])
            if level < 95.0:
                notes.append("no trial Mc reached R ≥ 95 %; the 90 % level was used")
            return CompletenessResult(mc, mc, "gft", 0.0, bin_width, int(m.size), table, tuple(notes))
    fb = _mc_maxc(m, bin_width, correction)
    notes.append("no trial Mc reached R ≥ 90 %; fell back to maximum curvature (+correction)")
    return CompletenessResult(fb.mc, fb.mc_raw, "gft->maxc", fb.correction, bin_width, int(m.size), table,
                              tuple(notes) + fb.notes)


_MC_METHODS: dict[str, Callable[..., CompletenessResult]] = {"maxc": _mc_maxc, "gft": _mc_gft}


def estimate_completeness(
    data,
    *,
    method: str = "maxc",
    bin_width: float = 0.1,
    correction: float | None = None,
    classes: Sequence[str] | None = None,
    allow_mixed_types: bool = False,
) -> CompletenessResult:
    """Magnitude of completeness Mc.

    Parameters
    ----------
    data : EventCatalog or array-like of magnitudes.
    method : "maxc" - maximum curvature, the magnitude bin with the largest non-cumulative count
        (Wiemer & Wyss 2000), plus ``correction`` (default +0.2, Woessner & Wiemer 2005);
        "gft" - goodness of fit (Wiemer & Wyss 2000): the smallest trial Mc whose
        Gutenberg-Richter fit explains ≥ 95 % of the cumulative counts, else ≥ 90 %, else MAXC;
        a trial needs ≥ 25 events and ≥ 3 non-empty bins above it. The residual formula and the
        95/90 % rule are value from memory (REFERENCES §3.4).
    bin_width : magnitude bin ΔM.
    correction : magnitude units added to the MAXC estimate (default 0.2).
    classes : only events of these classes (catalogue input), e.g. ("LP", "hybrid").
    allow_mixed_types : accept mixed magnitude types (catalogue input).

    Returns
    -------
    CompletenessResult
    """
    if method not in _MC_METHODS:
        raise DegasError(f"unknown completeness method {method!r}; valid: {', '.join(_MC_METHODS)}")
    if bin_width <= 0:
        raise DegasError(f"magnitude bin width must be positive, got {bin_width}")
    m, notes = _magnitude_array(data, allow_mixed_types, "magnitude statistics", classes)
    if m.size == 0:
        raise NotEnoughDataError("no events with a magnitude: cannot estimate the magnitude of completeness")
    res = _MC_METHODS[method](m, bin_width, correction)
    extra = notes + _off_grid_note(m, bin_width)
    if m.size < 100:
        extra = extra + (f"only {m.size} magnitudes: the completeness estimate is rough",)
    return CompletenessResult(res.mc, res.mc_raw, res.method, res.correction, res.bin_width, res.n_events,
                              res.gft, extra + res.notes)


# --------------------------------------------------------------------------------------------
# b-value


@dataclass(frozen=True, eq=False)
class BValueResult:
    """Gutenberg-Richter b-value by maximum likelihood.

    Attributes
    ----------
    b : the b-value.
    sigma : Shi & Bolt (1982) standard error.
    a : a-value, ``log10 N(≥Mc) + b·Mc`` (value from memory, REFERENCES §3.1).
    n : events at or above Mc used.
    mc : magnitude of completeness used (given or estimated).
    bin_width : magnitude bin ΔM.
    method : "utsu" (Aki 1965 + Utsu 1966), "tinti_mulargia" (1987) or "aki" (continuous).
    mean_magnitude : mean of the magnitudes used.
    completeness : the CompletenessResult when Mc was estimated, else None.
    """

    b: float
    sigma: float
    a: float
    n: int
    mc: float
    bin_width: float
    method: str
    mean_magnitude: float
    completeness: CompletenessResult | None
    notes: tuple[str, ...]

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame([{"b": self.b, "sigma": self.sigma, "a": self.a, "n": self.n, "mc": self.mc,
                              "bin_width": self.bin_width, "method": self.method,
                              "mean_magnitude": self.mean_magnitude}])


def _b_from_mean(mean: np.ndarray | float, mc: float, bin_width: float, method: str):
    if method == "utsu":
        return _LOG10_E / (mean - (mc - bin_width / 2.0))
    if method == "aki":
        return _LOG10_E / (mean - mc)
    return np.log1p(bin_width / (mean - mc)) / (math.log(10.0) * bin_width)


_B_METHODS = ("utsu", "tinti_mulargia", "aki")


def _check_b_method(method: str, bin_width: float) -> None:
    if method not in _B_METHODS:
        raise DegasError(f"unknown b-value method {method!r}; valid: {', '.join(_B_METHODS)}")
    if bin_width < 0 or (bin_width == 0 and method != "aki"):
        raise DegasError(f"method {method!r} needs a positive magnitude bin width, got {bin_width}")


def _not_enough(n: int, need: int, mc: float) -> NotEnoughDataError:
    return NotEnoughDataError(
        f"b-value: need at least {need} events above Mc={mc:g}, have {n} "
        "(Shi & Bolt 1982 suggest about 100 for a stable b)")


def estimate_b_value(
    data,
    *,
    mc: float | None = None,
    bin_width: float = 0.1,
    method: str = "utsu",
    mc_method: str = "maxc",
    min_events: int = DEFAULT_MIN_EVENTS,
    classes: Sequence[str] | None = None,
    allow_mixed_types: bool = False,
) -> BValueResult:
    """b-value by maximum likelihood with its Shi & Bolt (1982) uncertainty.

    Parameters
    ----------
    data : EventCatalog or array-like of magnitudes.
    mc : magnitude of completeness (centre of the lowest complete bin); None = estimate with
        :func:`estimate_completeness` using ``mc_method``.
    bin_width : magnitude bin ΔM (the catalogue's magnitude resolution, e.g. 0.1).
    method : "utsu" - ``b = log10(e) / (M̄ - (Mc - ΔM/2))`` (Aki 1965 with Utsu 1966);
        "tinti_mulargia" - exact binned MLE (Tinti & Mulargia 1987);
        "aki" - ``log10(e) / (M̄ - Mc)`` for continuous magnitudes.
    mc_method : completeness method when ``mc`` is None ("maxc", "gft").
    min_events : fewest events at or above Mc accepted (default 50; Shi & Bolt 1982 suggest
        about 100 for a stable b).
    classes : only events of these classes (catalogue input), e.g. ("LP", "hybrid").
    allow_mixed_types : accept mixed magnitude types (catalogue input).

    Raises
    ------
    NotEnoughDataError : fewer than ``min_events`` events at or above Mc.
    """
    _check_b_method(method, bin_width)
    m, notes = _magnitude_array(data, allow_mixed_types, "the b-value", classes)
    comp = None
    if mc is None:
        if m.size == 0:
            raise _not_enough(0, min_events, float("nan"))
        comp = estimate_completeness(m, method=mc_method, bin_width=bin_width) if bin_width > 0 else None
        if comp is None:
            raise DegasError("give mc for continuous magnitudes (bin_width=0)")
        mc = comp.mc
        notes = notes + comp.notes
    used = _above(m, mc, bin_width)
    n = int(used.size)
    if n < max(min_events, 2):
        raise _not_enough(n, max(min_events, 2), mc)
    mean = float(used.mean())
    b = float(_b_from_mean(mean, mc, bin_width, method))
    if not np.isfinite(b) or b <= 0:
        raise NotEnoughDataError(f"b-value undefined: the mean magnitude {mean:g} is not above Mc={mc:g} "
                                 "(all events in the lowest bin?)")
    sigma = shi_bolt_sigma(used, b)
    a = math.log10(n) + b * mc
    if n < 100:
        notes = notes + (f"only {n} events above Mc: b is unstable (Shi & Bolt 1982 suggest ~100) and "
                         "biased upward for small samples (Nava et al. 2017)",)
    notes = notes + _off_grid_note(used, bin_width) if bin_width > 0 else notes
    return BValueResult(b, sigma, a, n, float(mc), bin_width, method, mean, comp, notes)


@dataclass(frozen=True, eq=False)
class BValueSeriesResult:
    """b-value through time in moving windows of a fixed number of events.

    ``frame`` has one row per window: ``time`` (time of the last event in the window, so no
    value uses later events), ``start`` (first event), ``b``, ``sigma`` (Shi & Bolt 1982),
    ``b_lower``/``b_upper`` (b ∓ sigma), ``n``, ``mean_magnitude``. Mc is fixed for the whole
    catalogue.
    """

    frame: pd.DataFrame
    window: int
    step: int
    mc: float
    bin_width: float
    method: str
    notes: tuple[str, ...]

    def to_frame(self) -> pd.DataFrame:
        return self.frame.copy()


def b_value_series(
    catalog: EventCatalog,
    *,
    window: int = 500,
    step: int | None = None,
    mc: float | None = None,
    bin_width: float = 0.1,
    method: str = "utsu",
    mc_method: str = "maxc",
    classes: Sequence[str] | None = None,
    allow_mixed_types: bool = False,
) -> BValueSeriesResult:
    """b-value in moving windows of ``window`` events above Mc, advancing ``step`` events.

    Parameters
    ----------
    catalog : the event catalogue.
    window : events per window (default 500).
    step : events between window starts (default window // 5).
    mc : magnitude of completeness for the whole catalogue; None = estimate (``mc_method``).
    bin_width, method, classes, allow_mixed_types : as in :func:`estimate_b_value`.

    Notes
    -----
    Uses cumulative sums of magnitudes and squared deviations, so 1e6 events take milliseconds.

    Raises
    ------
    NotEnoughDataError : fewer than ``window`` events above Mc.
    """
    _check_b_method(method, bin_width)
    if window < 2:
        raise DegasError(f"window must hold at least 2 events, got {window}")
    step = max(window // 5, 1) if step is None else int(step)
    if step < 1:
        raise DegasError(f"window step must be at least 1 event, got {step}")
    catalog, sel_note = _select_classes(catalog, classes)
    info = _magnitudes(catalog, allow_mixed_types, purpose="the b-value")
    data = catalog.data
    has = info.has_mag
    t = data["time"].to_numpy(dtype="datetime64[ns]").astype("int64")[has]
    m = data["magnitude"].to_numpy(dtype="float64", na_value=np.nan)[has]
    notes = list(sel_note + info.notes)
    if mc is None:
        if m.size == 0:
            raise _not_enough(0, window, float("nan"))
        comp = estimate_completeness(m, method=mc_method, bin_width=bin_width)
        mc = comp.mc
        notes.append(f"Mc={mc:g} ({comp.method}) estimated once for the whole catalogue")
    keep = _keep(m, mc, bin_width)
    t, m = t[keep], m[keep]
    order = np.argsort(t, kind="stable")
    t, m = t[order], m[order]
    n = m.size
    if n < window:
        raise NotEnoughDataError(f"b-value series: need at least {window} events above Mc={mc:g} for one "
                                 f"window, have {n}")
    x = m - mc  # centred for numerical accuracy of the running sums
    c1 = np.concatenate([[0.0], np.cumsum(x)])
    c2 = np.concatenate([[0.0], np.cumsum(x * x)])
    i0 = np.arange(0, n - window + 1, step)
    i1 = i0 + window
    s1 = c1[i1] - c1[i0]
    s2 = c2[i1] - c2[i0]
    mean_x = s1 / window
    ss = np.maximum(s2 - s1 * mean_x, 0.0)
    b = _b_from_mean(mean_x + mc, mc, bin_width, method)
    sigma = SHI_BOLT_FACTOR * b * b * np.sqrt(ss / (window * (window - 1)))
    frame = pd.DataFrame({
        "time": pd.to_datetime(t[i1 - 1], utc=True),
        "start": pd.to_datetime(t[i0], utc=True),
        "b": b,
        "sigma": sigma,
        "b_lower": b - sigma,
        "b_upper": b + sigma,
        "n": np.full(i0.size, window, dtype="int64"),
        "mean_magnitude": mean_x + mc,
    })
    notes.append("Mc is fixed through time; a changing network or short-term incompleteness after large "
                 "events biases windowed b-values")
    if window < 100:
        notes.append(f"windows of {window} events: each b is unstable (Shi & Bolt 1982 suggest ~100)")
    return BValueSeriesResult(frame, window, step, float(mc), bin_width, method, tuple(notes))


# --------------------------------------------------------------------------------------------
# depth and location


@dataclass(frozen=True, eq=False)
class DepthSummaryResult:
    """Depth and location per period.

    ``frame`` is indexed by period start (UTC) with ``n_events``, ``n_with_depth``,
    ``median_depth_m``, ``min_depth_m``, ``max_depth_m`` (m, positive down), ``median_latitude_deg``,
    ``median_longitude_deg``; NaN where a period has no located event.
    """

    frame: pd.DataFrame
    step: pd.Timedelta
    notes: tuple[str, ...]

    def to_frame(self) -> pd.DataFrame:
        return self.frame.reset_index()


def summarise_depths(catalog: EventCatalog, step: str | pd.Timedelta = "7D", *,
                     grid: Grid | None = None) -> DepthSummaryResult:
    """Median depth, depth range and median epicentre per period.

    Parameters
    ----------
    catalog : the event catalogue (depth_m positive down).
    step : period length.
    grid : an existing grid.
    """
    if grid is None:
        grid = _grid(catalog, step)
    data = catalog.data
    idx = bin_index(data["time"], grid)
    inside = (idx >= 0) & (idx < grid.n)
    frame = pd.DataFrame({
        "bin": idx[inside],
        "depth": data["depth_m"].to_numpy(dtype="float64", na_value=np.nan)[inside],
        "lat": data["latitude_deg"].to_numpy(dtype="float64", na_value=np.nan)[inside],
        "lon": data["longitude_deg"].to_numpy(dtype="float64", na_value=np.nan)[inside],
    })
    g = frame.groupby("bin")
    agg = pd.DataFrame({
        "n_events": g.size(),
        "n_with_depth": g["depth"].count(),
        "median_depth_m": g["depth"].median(),
        "min_depth_m": g["depth"].min(),
        "max_depth_m": g["depth"].max(),
        "median_latitude_deg": g["lat"].median(),
        "median_longitude_deg": g["lon"].median(),
    }).reindex(np.arange(grid.n))
    agg["n_events"] = agg["n_events"].fillna(0).astype("int64")
    agg["n_with_depth"] = agg["n_with_depth"].fillna(0).astype("int64")
    agg.index = pd.Index(grid.starts, name="time")
    notes = []
    n_no_depth = int(np.isnan(frame["depth"].to_numpy()).sum())
    if n_no_depth == len(frame) and len(frame):
        notes.append("the catalogue has no depths")
    elif n_no_depth:
        notes.append(f"{n_no_depth} events without depth left out of the depth statistics")
    return DepthSummaryResult(agg, grid.step, tuple(notes))


# --------------------------------------------------------------------------------------------
# aligned metrics for the coupling module


def seismic_metrics(
    catalog: EventCatalog,
    step: str | pd.Timedelta = "1D",
    *,
    classes: Sequence[str] | None = None,
    allow_mixed_types: bool = False,
    grid: Grid | None = None,
) -> pd.DataFrame:
    """Seismic metrics per bin, aligned on a degas grid, for the coupling module.

    Parameters
    ----------
    catalog : the event catalogue.
    step : bin width.
    classes : classes with their own count column (default all of EVENT_CLASSES).
    allow_mixed_types : accept mixed magnitude types for the energy columns.
    grid : an existing grid (pass the gas series' grid to align exactly).

    Returns
    -------
    DataFrame indexed by bin start (UTC), one row per bin, columns ``count_<class>`` for each class,
    ``count_total``, ``count_with_magnitude``, ``energy_j`` (J, summed), ``benioff_j05`` (sum of
    sqrt(E) in the bin, J^0.5), ``median_depth_m`` (m; NaN without located events) and
    ``rate_per_day`` (all events, 1/d). ``attrs["notes"]`` carries the caveats.
    """
    classes = _class_tuple(classes)
    if isinstance(catalog, ClassCounts):  # published counts: the count columns only
        from degas.analysis.count_rates import metrics_from_counts

        return metrics_from_counts(catalog, step, classes, grid)
    cls = _canonical_classes(catalog)
    info = _magnitudes(catalog, allow_mixed_types, purpose="energy")
    if grid is None:
        grid = _grid(cls.catalog, step)
    counts = event_counts(cls.catalog, grid.step, grid=grid, classes=classes)
    out = pd.DataFrame({f"count_{c}": counts[c].to_numpy() for c in classes}, index=counts.index)
    out["count_total"] = counts["total"].to_numpy()
    data = catalog.data
    idx = bin_index(data["time"], grid)
    inside = (idx >= 0) & (idx < grid.n)
    sel = inside & info.has_mag
    mag = data["magnitude"].to_numpy(dtype="float64", na_value=np.nan)[sel]
    e = energy_from_magnitude(mag)
    out["count_with_magnitude"] = np.bincount(idx[sel], minlength=grid.n).astype("int64")
    out["energy_j"] = np.bincount(idx[sel], weights=e, minlength=grid.n)
    out["benioff_j05"] = np.bincount(idx[sel], weights=np.sqrt(e), minlength=grid.n)
    depth = data["depth_m"].to_numpy(dtype="float64", na_value=np.nan)
    dsel = inside & np.isfinite(depth)
    med = pd.Series(depth[dsel]).groupby(idx[dsel]).median().reindex(np.arange(grid.n))
    out["median_depth_m"] = med.to_numpy()
    out["rate_per_day"] = out["count_total"] / _step_days(grid)
    out.attrs["notes"] = tuple(cls.notes) + tuple(info.notes)
    out.attrs["step"] = str(grid.step)
    return out


# --------------------------------------------------------------------------------------------
# which events enter the b-value

#: Classes whose magnitudes follow tectonic Gutenberg-Richter scaling: the b-value default.
B_VALUE_CLASSES: tuple[str, ...] = ("VT",)
#: Surface events (mass movements): never in a b-value or Mc, whatever ``classes`` says.
SURFACE_CLASSES: tuple[str, ...] = ("rockfall",)


def select_classes(catalog: EventCatalog, classes: Sequence[str] | None) -> tuple[EventCatalog, tuple[str, ...]]:
    """The events of the given classes (None: all), plus a note; for filtering totals and energy."""
    return _select_classes(catalog, classes)


def b_value_classes(catalog: EventCatalog, classes: Sequence[str] | None = None
                    ) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """The event classes that enter a b-value and Mc, plus notes.

    Default VT (volcano-tectonic events are the ones expected to follow Gutenberg & Richter 1944 scaling;
    common practice in volcano seismology). Surface events (rockfall) never enter: their "magnitudes" are
    not earthquake source sizes. A catalogue without any classified event (every event 'other') uses 'other'
    and says so.
    """
    want = _class_tuple(classes) if classes is not None else B_VALUE_CLASSES
    dropped = [c for c in want if c in SURFACE_CLASSES]
    want = tuple(c for c in want if c not in SURFACE_CLASSES)
    notes = []
    if dropped:
        notes.append(f"{', '.join(dropped)} events never enter the b-value or Mc (surface events)")
    if not want:
        raise DegasError("no class left for the b-value: surface events (rockfall) never enter it")
    if classes is None and len(catalog):
        codes = _canonical_classes(catalog).codes
        if not np.isin(codes, [EVENT_CLASSES.index(c) for c in want]).any() and (codes == _OTHER).all():
            want = ("other",)
            notes.append("the catalogue has no event classes: b-value from all (unclassified) events")
    return want, tuple(notes)
