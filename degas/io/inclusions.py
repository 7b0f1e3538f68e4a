"""Melt-inclusion and matrix-glass tables (kind ``melt_inclusions``) -> :class:`~degas.model.MeltInclusions`.

The file is loaded by the shared tabular machinery of :mod:`degas.io.table` (CSV/TSV/semicolon, .xlsx,
Parquet; preamble metadata; file lines kept); this module only decides what each column holds and
converts at the door: volatiles and oxides to mass fractions (kg/kg; wt% x 0.01, ppm = mg/kg = µg/g x 1e-6),
dates to UTC. Headers are matched with :data:`degas.io.columns.INCLUSION_ALIASES`.

Rows are rejected, with their line and reason, when a value is not a number or negative, when H2O exceeds
15 wt% (no silicate melt dissolves that much at crustal pressures; common practice as a sanity bound), when
the analytical oxide total (or the sum of the given oxides, when eight or more are given) lies outside
85-105 wt% (common practice for hydrous glasses, whose electron-microprobe totals fall short of 100 by about
their volatile content), when neither H2O nor CO2 nor S is given, or when the analysis type is not an
inclusion, an embayment or matrix glass.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np
import pandas as pd

from degas.chem import S_PER_SO3
from degas.errors import InputError, UnitError
from degas.io.base import ReadOptions, ReadResult, make_provenance, rejects_frame
from degas.io.columns import inclusion_column, sigma_multiple
from degas.io.columns import split_inclusion_header as split_header
from degas.model import ANALYSIS_TYPES, INCLUSION_VOLATILES, OXIDES, MeltInclusions, SeriesMeta
from degas.units import conversion_factor

#: Largest H2O content accepted (wt%); common practice sanity bound.
MAX_H2O_WT_PCT = 15.0
#: Accepted analytical oxide totals (wt%); common practice for hydrous glasses.
TOTAL_RANGE_WT_PCT = (85.0, 105.0)
#: Units assumed when a header gives none (common practice for these analyses).
DEFAULT_UNITS = {"h2o": "wt%", "co2": "ppm", "s": "ppm", "cl": "ppm", "oxide": "wt%", "total": "wt%"}

_TYPE_WORDS = {
    "inclusion": ("inclusion", "melt inclusion", "mi", "glass inclusion", "gi", "inc", "olivine-hosted mi"),
    "matrix_glass": ("matrix glass", "matrix", "groundmass", "groundmass glass", "mg", "mx", "glass", "matrix_glass"),
    "embayment": ("embayment", "emb", "reentrant", "re-entrant", "embayment glass", "hourglass"),
}


def looks_like_inclusions(columns) -> bool:
    """True when headers name H2O or CO2 together with a sample or analysis-type column."""
    found = {c: inclusion_column(split_header(c)) for c in columns}
    vols = {v[1] for v in found.values() if v and v[0] == "volatile"}
    roles = {v[0] for v in found.values() if v}
    return bool(vols & {"h2o", "co2"}) and bool(roles & {"sample_id", "analysis_type", "host"})


def build_melt_inclusions(path: Path, raw, options: ReadOptions, reader: str) -> ReadResult:
    """Turn a loaded table (:class:`degas.io.table.RawTable`) into a MeltInclusions record."""
    from degas.io.table import _blank, _numeric, _Rejects, _times, reject_duplicates

    source = path.name
    rej = _Rejects(source, raw)
    notes: list[str] = []
    assumptions: list[str] = []
    frame = raw.frame
    n = len(frame)
    roles: dict[str, str] = {}
    vol_cols: dict[str, str] = {}
    sd_cols: dict[str, str] = {}
    ox_cols: dict[str, str] = {}
    total_col = None
    for role, col in options.columns.items():
        if col not in frame.columns:
            raise InputError(source, f"mapped column {col!r} (for {role}) not found; columns are {list(frame.columns)}")
    for col in frame.columns:
        what = inclusion_column(split_header(col))
        if what is None:
            continue
        kind, name = what
        if kind == "volatile":
            vol_cols.setdefault(name, col)
        elif kind == "sigma":
            sd_cols.setdefault(name, col)
        elif kind == "oxide":
            ox_cols.setdefault(name, col)
        elif kind == "total":
            total_col = total_col or col
        else:
            roles.setdefault(kind, col)
    roles.update({k: v for k, v in options.columns.items() if k in ("sample_id", "analysis_id", "phase", "time",
                                                                    "host", "analysis_type")})
    if "analysis_type" not in roles:  # a column whose cells are analysis types ("MI", "matrix glass") by content
        col = _type_column_by_content(frame, set(roles.values()) | set(vol_cols.values()) | set(sd_cols.values())
                                      | set(ox_cols.values()) | {total_col})
        if col is not None:
            roles["analysis_type"] = col
            assumptions.append(f"column {col!r} read as the analysis type (its cells name inclusions and glasses)")
    if not {"h2o", "co2", "s"} & set(vol_cols):
        raise InputError(source, f"no H2O, CO2 or S column found; columns are {list(frame.columns)}")
    if "time" not in roles and "phase" not in roles:
        raise InputError(source, "neither an eruption date nor a phase column; give one (e.g. 'phase' or "
                                 f"'eruption date'); columns are {list(frame.columns)}")
    dec = raw.delimiter in (";", "\t")

    def unit_factor(col: str, default: str, what: str) -> float:
        h = split_header(col)
        unit = options.units.get(what) or h.unit or (h.tags[0] if h.tags else None)
        if unit is None:
            unit = default
            label = "oxide columns" if what == "oxide" else f"column {col!r}"
            assumptions.append(f"{label} without a unit taken as {default} (common practice)")
        try:
            return conversion_factor(unit, "kg/kg")
        except UnitError as exc:
            raise InputError(source, f"{exc} (accepted: wt%, ppm, mg/kg, µg/g)", column=col) from None

    def numbers(col: str, what: str) -> np.ndarray:
        v = _numeric(frame[col], dec).to_numpy()
        rej.reject(np.isnan(v) & ~_blank(frame[col]), col, f"{what} is not a number", frame[col])
        rej.reject(np.isinf(v), col, f"{what} is infinite", frame[col])
        rej.reject(v < 0, col, f"negative {what}", frame[col])
        return v

    out: dict[str, np.ndarray] = {}
    for vol in INCLUSION_VOLATILES:
        col = vol_cols.get(vol)
        if col is None:
            out[f"{vol}_frac"] = np.full(n, np.nan)
        else:
            f = unit_factor(col, DEFAULT_UNITS[vol], vol)
            if vol == "s" and split_header(col).name == "so3":
                f *= S_PER_SO3
                assumptions.append(f"column {col!r} holds SO3; converted to S with x{S_PER_SO3:.5f} "
                                   "(IUPAC atomic weights)")
            out[f"{vol}_frac"] = numbers(col, vol.upper() if vol != "s" else "S") * f
        scol = sd_cols.get(vol)
        if scol is None:
            out[f"{vol}_sd_frac"] = np.full(n, np.nan)
        else:
            vh = split_header(col) if col else None
            vunit = (options.units.get(vol) or vh.unit or (vh.tags[0] if vh.tags else None)) if vh else None
            fs = unit_factor(scol, vunit or DEFAULT_UNITS[vol], vol + "_sd")
            if sigma_multiple(split_header(scol)) == 2:
                fs /= 2
                assumptions.append(f"column {scol!r} holds 2-sigma uncertainties; halved to 1-sigma")
            out[f"{vol}_sd_frac"] = numbers(scol, f"{vol.upper()} 1-sigma") * fs
    h2o = out["h2o_frac"]
    rej.reject(h2o > MAX_H2O_WT_PCT / 100, vol_cols.get("h2o"),
               lambda i: f"H2O {h2o[i] * 100:.4g} wt% is above {MAX_H2O_WT_PCT:g} wt% (impossible for a melt)")
    no_vol = np.isnan(out["h2o_frac"]) & np.isnan(out["co2_frac"]) & np.isnan(out["s_frac"])
    rej.reject(no_vol, None, "no H2O, CO2 or S value")
    for ox in OXIDES:
        col = ox_cols.get(ox)
        out[f"{ox.lower()}_frac"] = (numbers(col, ox) * unit_factor(col, DEFAULT_UNITS["oxide"], "oxide")
                                     if col else np.full(n, np.nan))
    if total_col is not None:
        total = numbers(total_col, "oxide total") * unit_factor(total_col, "wt%", "total")
        where = total_col
    elif len(ox_cols) >= 8:
        total = np.nansum(np.column_stack([out[f"{o.lower()}_frac"] for o in ox_cols]), axis=1)
        where = "oxides"
    else:
        total = np.full(n, np.nan)
        where = None
    lo, hi = TOTAL_RANGE_WT_PCT
    bad_total = np.isfinite(total) & ((total < lo / 100) | (total > hi / 100))
    rej.reject(bad_total, where, lambda i: f"oxide total {total[i] * 100:.4g} wt% is outside {lo:g}-{hi:g} wt%")
    out["oxide_total_frac"] = total

    def text(role: str, default=pd.NA) -> pd.Series:
        if role not in roles:
            return pd.Series(default, index=frame.index, dtype="string")
        s = frame[roles[role]].astype("string").str.strip()
        return s.where(s != "", pd.NA)

    phase = text("phase")
    if "time" in roles:
        tmp = _Rejects(source, raw)
        times, a = _times(raw, roles["time"], options, tmp, source)
        assumptions.extend(a)
        has_phase = phase.notna().to_numpy()
        for row in tmp.rows[len(raw.rejects):]:  # the loader's malformed lines are reported already
            i = int(np.flatnonzero(raw.lines == row[1])[0])
            if row[3] == "missing time" and has_phase[i]:
                continue
            rej.reject(np.arange(n) == i, row[2], row[3], frame[roles["time"]])
    else:
        times = pd.Series(pd.NaT, index=frame.index, dtype="datetime64[ns, UTC]")
        assumptions.append("no eruption dates; inclusions are grouped by phase only")
        rej.reject(phase.isna().to_numpy(), roles.get("phase"), "no phase (and no eruption date)")
    atype_raw = text("analysis_type")
    if "analysis_type" in roles:
        lookup = {w: k for k, ws in _TYPE_WORDS.items() for w in ws}
        low = atype_raw.str.lower().fillna("").astype(object)
        atype = low.map(lambda x: lookup.get(x) or next((k for w, k in lookup.items() if len(w) > 3 and w in x),
                                                        None))
        bad = atype.isna().to_numpy()
        rej.reject(bad, roles["analysis_type"],
                   f"unknown analysis type; valid: {', '.join(ANALYSIS_TYPES)} (or MI, matrix, groundmass, "
                   "embayment)", atype_raw.fillna(""))
        atype = atype.fillna("inclusion")
    else:
        atype = pd.Series("inclusion", index=frame.index, dtype="object")
        assumptions.append("no analysis-type column; every row taken as a melt inclusion")
    sample = text("sample_id")
    host = text("host")
    if "analysis_id" in roles:
        aid = text("analysis_id")
        aid = (sample.fillna("") + "/" + aid.fillna("")).where(sample.notna(), aid)
    else:
        aid = pd.Series(pd.NA, index=frame.index, dtype="string")
    missing_id = aid.isna().to_numpy()
    if missing_id.any():
        gen = [_row_id(frame.iloc[i]) for i in np.flatnonzero(missing_id)]
        aid = aid.astype("object")
        aid.iloc[np.flatnonzero(missing_id)] = gen
    df = pd.DataFrame({"time": times.astype("datetime64[ns, UTC]"), "phase": phase, "sample_id": sample,
                       "analysis_id": aid.astype("string"), "host": host, "analysis_type": atype.astype("string"),
                       **{k: v for k, v in out.items()}})
    alive = rej.alive
    df = df.loc[alive].reset_index(drop=True)
    lines = raw.lines[alive]
    rows = rej.rows
    df, lines = reject_duplicates(df, lines, ["analysis_id"], [c for c in MeltInclusions.COLUMNS if c != "analysis_id"],
                                  source, rows, "analysis id", roles.get("analysis_id"))
    df = df[list(MeltInclusions.COLUMNS)].reset_index(drop=True)
    meta = SeriesMeta(kind="melt_inclusions", quantity="volatiles", station=options.station or raw.meta.get("station"),
                      unit="kg/kg", display_unit="ppm", description="melt inclusion and matrix glass analyses")
    prov = make_provenance(path, reader, len(df), len(rows), None, assumptions, options)
    notes.extend(f"{source}: {a}" for a in dict.fromkeys(assumptions))
    return ReadResult([MeltInclusions(df, meta, (prov,))], rejects_frame(rows), notes, [lines])


def _type_column_by_content(frame: pd.DataFrame, used: set) -> str | None:
    """The one unused text column whose filled cells are all analysis-type words (at least two distinct)."""
    lookup = {w for ws in _TYPE_WORDS.values() for w in ws}
    hits = []
    for col in frame.columns:
        if col in used:
            continue
        vals = frame[col].dropna().astype(str).str.strip().str.lower()
        vals = vals[vals != ""]
        if len(vals) and vals.isin(lookup).all() and vals.nunique() >= 2:
            hits.append(col)
    return hits[0] if len(hits) == 1 else None


def _row_id(row: pd.Series) -> str:
    """A stable id for an analysis without one: a hash of its cells."""
    key = "|".join(str(v) for v in row.tolist())
    return "a" + hashlib.sha1(key.encode()).hexdigest()[:12]

