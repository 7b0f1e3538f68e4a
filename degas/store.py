"""The archive: one Parquet file per series plus a human-readable JSON manifest.

Layout of an archive directory::

    manifest.json                  what is stored: series, their metadata and provenance, sources
    series/<series_id>.g<N>.parquet   the rows of each series (generation N)
    rejects/g<N>-<sha8>.csv        rows rejected from each ingested file (file, line, column, reason)
    contrib/g<N>-<sha8>.parquet    keys of the rows each ingested file added (what 'degas forget' removes)
    .lock                          held while a process writes

Rules:

* Re-ingesting a file with the same SHA-256 adds nothing (unless ``--value-col`` names a column not read before).
* :func:`forget` removes what one file added, as a new generation; the manifest lists it under ``forgotten``.
* New rows append; a row with the same key as a stored one (time for series, start for a
  chronology, event id for a catalogue) and the same value is skipped; with another value it is
  a conflict, reported and kept out unless ``accept_conflicts`` lets the new value win.
* Series are keyed on :attr:`SeriesMeta.series_id`, an injective encoding of (kind, quantity,
  station); the original names stay in each entry's ``meta``. An ingest whose id meets a stored
  series with other original names is refused; entries of older archives, keyed on the former
  lossy id, are still found by their original names.
* Every path in the manifest must resolve inside the archive root, and ``series/`` and
  ``rejects/`` must not be links leading out of it; clean-up never follows a link.
* Writers wait for the lock (``lock_timeout`` seconds); a reader that finds a file of its
  generation gone re-reads the manifest and retries on the newer generation.
* A write never touches existing files: new data go to new generation files, and the manifest is
  replaced atomically (temp file + fsync + rename) as the very last step. A crash or kill at any
  moment leaves the archive exactly as it was before the write; stray files of an unfinished
  write are removed by the next writer.
"""

from __future__ import annotations

import contextlib
import json
import os
import re
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from degas.errors import ArchiveError, DegasError
from degas.io.base import REJECT_COLUMNS, ReadOptions, file_sha256
from degas.model import (
    CATALOG_COLUMNS,
    CHRONOLOGY_COLUMNS,
    SERIES_COLUMNS,
    Chronology,
    EventCatalog,
    Provenance,
    Record,
    SeriesMeta,
    TimeSeries,
)
from degas.safecsv import protect_frame

MANIFEST = "manifest.json"
LOCK_TIMEOUT_S = 60.0  # default wait for another writer to finish
_READ_RETRIES = 3  # re-reads of the manifest when a generation switch removed a file being read
FORMAT_NAME = "degas-archive"
FORMAT_VERSION = 1

_DTYPES: dict[str, dict[str, str]] = {
    "TimeSeries": {"time": "datetime64[ns, UTC]", "end": "datetime64[ns, UTC]", "value": "float64",
                   "uncertainty": "float64", "quality": "string"},
    "Chronology": {"start": "datetime64[ns, UTC]", "end": "datetime64[ns, UTC]", "state": "string",
                   "style": "string", "note": "string"},
    "EventCatalog": {"time": "datetime64[ns, UTC]", "latitude_deg": "float64", "longitude_deg": "float64",
                     "depth_m": "float64", "magnitude": "float64", "magnitude_type": "string",
                     "event_class": "string", "event_id": "string", "source_type": "string"},
}
_TYPES = {"TimeSeries": TimeSeries, "Chronology": Chronology, "EventCatalog": EventCatalog}
_COLUMNS = {"TimeSeries": SERIES_COLUMNS, "Chronology": CHRONOLOGY_COLUMNS, "EventCatalog": CATALOG_COLUMNS}
_KEYS = {"TimeSeries": ["time", "end"], "Chronology": ["start"], "EventCatalog": ["event_id"]}
# every non-key column is compared: a revised value, uncertainty, flag, depth or magnitude is a conflict
_COMPARE = {"TimeSeries": ["value", "uncertainty", "quality"], "Chronology": ["end", "state", "style", "note"],
            "EventCatalog": ["time", "latitude_deg", "longitude_deg", "depth_m", "magnitude", "magnitude_type",
                             "event_class"]}
# melt-inclusion tables (issue 14): one row per analysis, keyed by analysis id
from degas.model import INCLUSION_COLUMNS, MeltInclusions  # noqa: E402

_DTYPES["MeltInclusions"] = {c: ("datetime64[ns, UTC]" if c == "time" else "float64" if c.endswith("_frac")
                                 else "string") for c in INCLUSION_COLUMNS}
_TYPES["MeltInclusions"] = MeltInclusions
_COLUMNS["MeltInclusions"] = INCLUSION_COLUMNS
_KEYS["MeltInclusions"] = ["analysis_id"]
_COMPARE["MeltInclusions"] = [c for c in INCLUSION_COLUMNS if c != "analysis_id"]


def conform(df: pd.DataFrame, record_type: str) -> pd.DataFrame:
    """Columns in canonical order and dtypes for a record type."""
    dtypes = _DTYPES[record_type]
    out = pd.DataFrame({c: df[c] for c in _COLUMNS[record_type]})
    for c, dt in dtypes.items():
        if dt.startswith("datetime64"):
            col = out[c]
            if not isinstance(col.dtype, pd.DatetimeTZDtype):
                col = pd.to_datetime(col, utc=True)
            out[c] = col.dt.tz_convert("UTC").astype(dt)
        else:
            out[c] = out[c].astype(dt)
    return out.reset_index(drop=True)


@dataclass(frozen=True)
class SeriesEntry:
    """One stored series as listed in the manifest."""

    series_id: str
    meta: SeriesMeta
    record_type: str
    file: str
    n_rows: int
    first: str | None
    last: str | None
    largest_gap_s: float | None
    provenance: tuple[Provenance, ...] = ()

    def to_dict(self) -> dict:
        return {
            "series_id": self.series_id, "meta": self.meta.to_dict(), "record_type": self.record_type,
            "file": self.file, "n_rows": self.n_rows, "first": self.first, "last": self.last,
            "largest_gap_s": self.largest_gap_s, "provenance": [p.to_dict() for p in self.provenance],
        }

    @classmethod
    def from_dict(cls, d: dict) -> SeriesEntry:
        return cls(d["series_id"], SeriesMeta.from_dict(d["meta"]), d["record_type"], d["file"], d["n_rows"],
                   d.get("first"), d.get("last"), d.get("largest_gap_s"),
                   tuple(Provenance.from_dict(p) for p in d.get("provenance", ())))


@dataclass
class AddOutcome:
    """What adding one record did: rows added, duplicates skipped, conflicts (kept out or replaced)."""

    series_id: str
    added: int = 0
    duplicates: int = 0
    conflicts: int = 0
    replaced: int = 0
    conflict_rows: list[tuple] = field(default_factory=list)


@dataclass
class FileReport:
    """Outcome of ingesting one file."""

    source: str
    sha256: str
    skipped: bool = False
    reader: str | None = None
    accepted: int = 0
    rejected: int = 0
    outcomes: list[AddOutcome] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    rejects: pd.DataFrame | None = None

    def summary(self) -> str:
        """One line: what happened to this file."""
        if self.skipped:
            return f"{self.source}: already in the archive (same SHA-256); nothing added"
        added = sum(o.added for o in self.outcomes)
        dup = sum(o.duplicates for o in self.outcomes)
        conf = sum(o.conflicts for o in self.outcomes)
        rep = sum(o.replaced for o in self.outcomes)
        series = ", ".join(o.series_id for o in self.outcomes)
        parts = [f"{self.source}: {self.accepted} rows read, {added} added to {series}"]
        if dup:
            parts.append(f"{dup} already stored")
        if conf:
            parts.append(f"{conf} conflicting with stored values kept out")
        if rep:
            parts.append(f"{rep} stored values replaced")
        parts.append(f"{self.rejected} rejected")
        return "; ".join(parts)


class Archive:
    """An archive directory (see module docstring). Open with :meth:`open` or :meth:`create`."""

    def __init__(self, root: Path, manifest: dict, lock_timeout: float = LOCK_TIMEOUT_S):
        self.root = Path(root)
        self._manifest = manifest
        self.lock_timeout = lock_timeout

    # ------------------------------------------------------------------ opening

    @classmethod
    def create(cls, root: str | Path, lock_timeout: float = LOCK_TIMEOUT_S) -> Archive:
        """Create an empty archive (or open it when it already is one).

        Safe when several processes create the same new archive at once: the directory is made with
        ``exist_ok`` and the manifest is written under the archive lock, so one creates and the
        others open what it created.
        """
        root = Path(root)
        if root.exists() and not root.is_dir():
            raise ArchiveError(f"{root}: is a file, not an archive directory")
        if (root / MANIFEST).exists():
            return cls.open(root, lock_timeout)
        _refuse_foreign(root)
        root.mkdir(parents=True, exist_ok=True)
        with _locked(root, lock_timeout):
            if (root / MANIFEST).exists():  # another process created it meanwhile
                return cls.open(root, lock_timeout)
            _refuse_foreign(root)
            _check_folders(root)
            (root / "series").mkdir(exist_ok=True)
            (root / "rejects").mkdir(exist_ok=True)
            manifest = {"format": FORMAT_NAME, "version": FORMAT_VERSION, "generation": 0, "series": {},
                        "sources": {}}
            _atomic_write_text(root / MANIFEST, json.dumps(manifest, indent=2))
        return cls(root, manifest, lock_timeout)

    @classmethod
    def open(cls, root: str | Path, lock_timeout: float = LOCK_TIMEOUT_S) -> Archive:
        """Open an existing archive; ArchiveError when the directory is not one."""
        root = Path(root)
        return cls(root, _read_manifest(root), lock_timeout)

    # ------------------------------------------------------------------ reading

    def entries(self) -> list[SeriesEntry]:
        """Every stored series, sorted by kind, quantity and station."""
        out = [SeriesEntry.from_dict(d) for d in self._manifest["series"].values()]
        return sorted(out, key=lambda e: (e.meta.kind, e.meta.quantity, e.meta.station or ""))

    def find(self, kind: str | None = None, quantity: str | None = None, station: str | None = None
             ) -> list[SeriesEntry]:
        """Entries matching every given field."""
        return [e for e in self.entries()
                if (kind is None or e.meta.kind == kind)
                and (quantity is None or e.meta.quantity == quantity)
                and (station is None or e.meta.station == station)]

    def entry(self, series_id: str) -> SeriesEntry:
        """The entry of ``series_id`` (an archive written before ids were injective also answers to the
        new id of its lossy entries)."""
        try:
            return SeriesEntry.from_dict(self._manifest["series"][series_id])
        except KeyError:
            for d in self._manifest["series"].values():
                if SeriesMeta.from_dict(d["meta"]).series_id == series_id:
                    return SeriesEntry.from_dict(d)
            known = ", ".join(sorted(self._manifest["series"])) or "(none)"
            raise ArchiveError(f"no series {series_id!r} in {self.root}; stored series: {known}") from None

    def load(self, series_id: str) -> Record:
        """The stored record of a series, in the canonical model."""
        import pyarrow.parquet as pq

        for attempt in range(_READ_RETRIES + 1):
            e = self.entry(series_id)
            path = self._path(e.file, e.series_id)
            try:
                table = pq.read_table(path)
                break
            except FileNotFoundError:
                # a writer switched generations after we read the manifest: read the newer one
                if attempt == _READ_RETRIES or not self._reload():
                    raise ArchiveError(f"{path}: stored file of {e.series_id} is missing; the archive is "
                                       "damaged") from None
            except Exception as exc:  # noqa: BLE001 - a damaged Parquet file is one line
                raise ArchiveError(f"{path}: stored file of {e.series_id} is unreadable ({_one_line(exc)})") from None
        try:
            df = conform(table.to_pandas(), e.record_type)
        except Exception as exc:  # noqa: BLE001 - any failure of a damaged file is one line
            raise ArchiveError(f"{path}: stored file of {e.series_id} is unreadable ({_one_line(exc)})") from None
        return _TYPES[e.record_type](df, e.meta, e.provenance)

    def _reload(self) -> bool:
        """Re-read the manifest from disk; True when it moved to another generation."""
        old = self._manifest.get("generation")
        self._manifest = _read_manifest(self.root)
        return self._manifest.get("generation") != old

    def _path(self, rel: object, what: str) -> Path:
        """``root / rel`` for a path stored in the manifest; ArchiveError unless it stays inside the root."""
        if not isinstance(rel, str) or not rel or Path(rel).is_absolute():
            raise ArchiveError(f"{self.root / MANIFEST}: {what}: stored path {rel!r} is not a path inside the "
                               "archive; refusing to use it")
        p = self.root / rel
        base = self.root.resolve()
        resolved = p.resolve()
        if not resolved.is_relative_to(base) or resolved.parent == base:
            raise ArchiveError(f"{self.root / MANIFEST}: {what}: stored path {rel!r} leads outside the archive's "
                               "series/ and rejects/ folders; refusing to use it")
        return p

    def sources(self) -> dict[str, dict]:
        """Ingested files by SHA-256: name, time of ingest, rows accepted and rejected, series touched."""
        return dict(self._manifest["sources"])

    def rejects(self) -> pd.DataFrame:
        """Every row rejected at ingest so far, with file, line, column, reason and raw text."""
        frames = []
        for src in self._manifest["sources"].values():
            f = src.get("rejects_file")
            if not f:
                continue
            path = self._path(f, f"rejects of {src.get('name')}")
            if path.exists():
                try:
                    frames.append(pd.read_csv(path, dtype=str, keep_default_na=False))
                except Exception as exc:  # noqa: BLE001 - a damaged rejects file is one line
                    raise ArchiveError(f"{path}: stored rejects file is unreadable ({_one_line(exc)})") from None
        if not frames:
            return pd.DataFrame({c: pd.Series([], dtype=str) for c in REJECT_COLUMNS})
        return pd.concat(frames, ignore_index=True)

    # ------------------------------------------------------------------ writing

    @contextlib.contextmanager
    def _writing(self):
        """Exclusive write lock; stale files of an interrupted write are removed first."""
        with _locked(self.root, self.lock_timeout):
            # re-read the manifest under the lock: another writer may have committed meanwhile
            self._manifest = _read_manifest(self.root)
            _check_folders(self.root)
            for e in self._manifest["series"].values():
                self._path(e.get("file"), f"series {e.get('series_id')}")
            self._remove_strays()
            yield

    def _remove_strays(self) -> None:
        """Delete unreferenced files of an interrupted write; never follows a link, never enters a linked folder."""
        referenced = {e["file"] for e in self._manifest["series"].values()}
        referenced |= {s.get("rejects_file") for s in self._manifest["sources"].values()}
        referenced |= {s.get("contrib_file") for s in self._manifest["sources"].values()}
        for sub in ("series", "rejects", "contrib"):
            d = self.root / sub
            if d.is_symlink():
                continue  # checked by _check_folders; its contents are not ours to clean
            d.mkdir(exist_ok=True)
            for p in d.iterdir():
                rel = f"{sub}/{p.name}"
                if rel not in referenced and (p.is_symlink() or p.is_file()):
                    with contextlib.suppress(OSError):
                        p.unlink()  # a link itself is removed, never its target
        for p in self.root.glob("*.tmp"):
            with contextlib.suppress(OSError):
                p.unlink()

    def add(self, record: Record, *, accept_conflicts: bool = False) -> AddOutcome:
        """Add one record in its own transaction (for tests and scripts)."""
        with self._writing():
            gen = self._manifest["generation"] + 1
            staged: dict[str, dict] = {}
            outcome = self._stage(record, gen, staged, accept_conflicts)
            self._commit(gen, staged, {})
        return outcome

    def ingest_file(self, path: str | Path, options: ReadOptions | None = None, *, format: str | None = None,
                    accept_conflicts: bool = False) -> FileReport:
        """Read one file and add its records; the whole file is one atomic transaction."""
        from degas.io import read

        path = Path(path)
        if not path.is_file():
            raise DegasError(f"{path}: file not found")
        sha = file_sha256(path)
        key = _source_key(sha, options, self._manifest["sources"])  # a column not read before is new
        if key in self._manifest["sources"]:
            return FileReport(path.name, sha, skipped=True)
        result = read(path, options, format)
        report = FileReport(path.name, sha, reader=result.records[0].provenance[0].reader if result.records else None,
                            accepted=sum(len(r) for r in result.records), notes=list(result.notes))
        with self._writing():
            if key in self._manifest["sources"]:  # ingested by another process meanwhile
                return FileReport(path.name, sha, skipped=True)
            gen = self._manifest["generation"] + 1
            staged: dict[str, dict] = {}
            conflict_rows: list[tuple] = []
            self._contrib = {}
            try:
                for i, rec in enumerate(result.records):
                    lines = result.lines[i] if i < len(result.lines) else None
                    o = self._stage(rec, gen, staged, accept_conflicts, lines)
                    report.outcomes.append(o)
                    conflict_rows.extend(o.conflict_rows)
                contrib_file = _write_contrib(self.root, gen, sha, self._contrib)
            finally:
                self._contrib = None
            rejects = result.rejects
            if conflict_rows:
                rejects = pd.concat([rejects, pd.DataFrame(conflict_rows, columns=list(REJECT_COLUMNS))],
                                    ignore_index=True)
            report.rejected = len(rejects) - sum(o.replaced for o in report.outcomes)
            report.rejects = rejects
            rej_file = None
            if len(rejects):
                rej_file = f"rejects/g{gen}-{sha[:8]}.csv"
                _atomic_write_text(self.root / rej_file, protect_frame(rejects).to_csv(index=False))
            source = {
                "name": path.name, "ingested_at": pd.Timestamp.now(tz="UTC").isoformat(timespec="seconds"),
                "reader": report.reader, "accepted": report.accepted, "rejected": report.rejected,
                "series": [o.series_id for o in report.outcomes], "rejects_file": rej_file,
                "contrib_file": contrib_file, "sha256": sha,
                "replaced": sum(o.replaced for o in report.outcomes),
                "columns_read": [r.meta.description for r in result.records if r.meta.description],
            }
            self._commit(gen, staged, {key: source})
        return report

    def _stage(self, record: Record, gen: int, staged: dict, accept_conflicts: bool,
               lines: np.ndarray | None = None) -> AddOutcome:
        """Merge a record with the stored (or already staged) rows and write a new generation file."""
        import pyarrow.parquet as pq

        rtype = type(record).__name__
        sid = self._key_for(record.meta, staged)
        outcome = AddOutcome(sid)
        new = conform(record.data, rtype)
        prev_entry = staged.get(sid) or self._manifest["series"].get(sid)
        if prev_entry is not None:
            if prev_entry["record_type"] != rtype:
                raise ArchiveError(f"series {sid} holds {prev_entry['record_type']}, cannot add {rtype}")
            prev_path = self._path(prev_entry["file"], f"series {sid}")
            try:
                old = conform(pq.read_table(prev_path).to_pandas(), rtype)
            except Exception as exc:  # noqa: BLE001 - a damaged stored file is one line, and is left alone
                raise ArchiveError(f"{prev_path}: stored file of {sid} is unreadable ({_one_line(exc)}); "
                                   "nothing added") from None
            merged, outcome = _merge(old, new, rtype, sid, accept_conflicts, record, lines)
            provenance = [Provenance.from_dict(p) for p in prev_entry["provenance"]] + list(record.provenance)
            meta = SeriesMeta.from_dict(prev_entry["meta"])
            if meta.volume_basis != record.meta.volume_basis and len(new):
                raise ArchiveError(f"series {sid}: stored volumes are {meta.volume_basis or 'of unknown basis'}, "
                                   f"new ones are {record.meta.volume_basis or 'of unknown basis'}; not mixing them")
            if meta.unit != record.meta.unit and len(new):
                raise ArchiveError(f"series {sid}: stored values are in {meta.unit!r}, new ones in "
                                   f"{record.meta.unit!r}, which degas cannot convert for this kind; not mixing them "
                                   "(ingest them under another --station or convert first)")
        else:
            merged = new
            outcome.added = len(new)
            provenance = list(record.provenance)
            meta = record.meta
        if getattr(self, "_contrib", None) is not None:  # keys this source supplied/added, for 'degas forget'
            self._contrib.setdefault(sid, []).append(
                _supplied_keys(new, old if prev_entry is not None else None, merged, rtype))
        staged[sid] = _write_generation(self.root, sid, gen, rtype, merged, meta, provenance)
        return outcome

    def _commit(self, gen: int, staged: dict, sources: dict) -> None:
        manifest = dict(self._manifest)
        manifest["series"] = {**self._manifest["series"], **staged}
        manifest["sources"] = {**self._manifest["sources"], **sources}
        manifest["generation"] = gen
        _atomic_write_text(self.root / MANIFEST, json.dumps(manifest, indent=2, default=str))
        old_files = {self._manifest["series"][s]["file"] for s in staged if s in self._manifest["series"]}
        self._manifest = manifest
        for f in old_files:
            with contextlib.suppress(OSError, ArchiveError):
                self._path(f, "replaced file").unlink()

    def _key_for(self, meta: SeriesMeta, staged: dict) -> str:
        """The archive key for a record's metadata; ArchiveError when it meets another stored series.

        The key is ``meta.series_id`` (injective); an archive written before ids were injective keeps
        its former key for a series whose original names match exactly.
        """
        sid = meta.series_id
        names = (meta.kind, meta.quantity, meta.station)
        stored = staged.get(sid) or self._manifest["series"].get(sid)
        if stored is None:
            legacy = meta.legacy_series_id
            old = self._manifest["series"].get(legacy)
            if legacy != sid and old is not None and _names(old) == names:
                return legacy
            return sid
        if _names(stored) != names:
            other = SeriesMeta.from_dict(stored["meta"])
            raise ArchiveError(f"series id {sid} is already used by station {other.station!r} "
                               f"({other.kind}, {other.quantity}); refusing to mix in station {meta.station!r} "
                               "(ingest it under another --station)")
        return sid


def _merge(old: pd.DataFrame, new: pd.DataFrame, rtype: str, sid: str, accept: bool, record: Record,
           lines: np.ndarray | None = None) -> tuple[pd.DataFrame, AddOutcome]:
    keys = _KEYS[rtype]
    comp = _COMPARE[rtype]
    outcome = AddOutcome(sid)
    kold = _key_frame(old, keys)
    knew = _key_frame(new, keys)
    idx = pd.MultiIndex.from_frame(kold) if len(keys) > 1 else pd.Index(kold.iloc[:, 0])
    nidx = pd.MultiIndex.from_frame(knew) if len(keys) > 1 else pd.Index(knew.iloc[:, 0])
    pos = idx.get_indexer(nidx) if idx.is_unique else _first_positions(idx, nidx)
    present = pos >= 0
    same = np.ones(len(new), dtype=bool)
    for c in comp:
        a = old[c].to_numpy()[np.where(present, pos, 0)] if len(old) else np.array([])
        b = new[c].to_numpy()
        if len(old) == 0:
            break
        eq = _equal(a, b)
        same &= eq
    dup = present & same
    conflict = present & ~same
    outcome.duplicates = int(dup.sum())
    src = record.provenance[0].source_name if record.provenance else "?"
    if conflict.any():
        if accept:
            outcome.replaced = int(conflict.sum())
            keep_old = np.ones(len(old), dtype=bool)
            keep_old[pos[conflict]] = False
            old = old.loc[keep_old]
        else:
            outcome.conflicts = int(conflict.sum())
            show = _in_file_unit(record, rtype)
            for i in np.flatnonzero(conflict):
                stored = old[comp[0]].iloc[pos[i]]
                outcome.conflict_rows.append(
                    (src, None if lines is None else int(lines[i]), keys[0],
                     f"conflicts with the stored value {show(stored)} for {sid} (this file: "
                     f"{show(new[comp[0]].iloc[i])}; kept out; --accept-conflicts to replace)",
                     str(new[keys[0]].iloc[i])))
    take = ~present | (conflict & accept)
    outcome.added = int((~present).sum())
    merged = pd.concat([old, new.loc[take]], ignore_index=True)
    return merged, outcome


def _in_file_unit(record: Record, rtype: str):
    """A formatter showing a stored (SI) value in the unit of the file being ingested, when known."""
    unit = record.provenance[0].original_unit if record.provenance else None
    factor = None
    if rtype == "TimeSeries" and unit and record.meta.unit and unit != record.meta.unit:
        from degas.units import conversion_factor

        with contextlib.suppress(DegasError, ValueError, TypeError):
            factor = conversion_factor(record.meta.unit, unit)
    if factor is None:
        unit = record.meta.unit if rtype == "TimeSeries" else None

    def show(x) -> str:
        if isinstance(x, float | np.floating) and np.isfinite(x):
            return f"{x * (factor or 1.0):.6g}" + (f" {unit}" if unit else "")
        return str(x)

    return show


def _key_frame(df: pd.DataFrame, keys: list[str]) -> pd.DataFrame:
    out = {}
    for k in keys:
        col = df[k]
        if isinstance(col.dtype, pd.DatetimeTZDtype):
            out[k] = col.to_numpy(dtype="datetime64[ns]").astype("int64")  # NaT -> min int, consistent
        else:
            out[k] = col.astype("string").fillna("")
    return pd.DataFrame(out)


def _first_positions(idx: pd.Index, nidx: pd.Index) -> np.ndarray:
    first = pd.Series(np.arange(len(idx)), index=idx)
    first = first[~first.index.duplicated()]
    return first.reindex(nidx).fillna(-1).astype(int).to_numpy()


def _equal(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    try:
        fa = a.astype("float64")
        fb = b.astype("float64")
        return (fa == fb) | (np.isnan(fa) & np.isnan(fb)) | np.isclose(fa, fb, rtol=1e-12, atol=0)
    except (TypeError, ValueError):
        sa = pd.Series(a, dtype="object")
        sb = pd.Series(b, dtype="object")
        return ((sa == sb) | (sa.isna() & sb.isna())).to_numpy(dtype=bool)


def _names(entry: dict) -> tuple:
    m = entry.get("meta", {})
    return (m.get("kind"), m.get("quantity"), m.get("station"))


def _one_line(exc: BaseException) -> str:
    text = " ".join(str(exc).split())
    return f"{type(exc).__name__}: {text[:300]}" if text else type(exc).__name__


def _largest_gap(t: pd.Series) -> float | None:
    if len(t) < 2:
        return None
    ns = np.sort(t.to_numpy(dtype="datetime64[ns]").astype("int64"))
    return float(np.diff(ns).max() / 1e9)


def _safe(sid: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.~-]+", "-", sid)


def _fsync_file(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _atomic_write_text(path: Path, text: str) -> None:
    tmp = path.with_name(path.name + ".tmp")
    with open(tmp, "w", encoding="utf-8") as fh:
        fh.write(text)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, path)
    with contextlib.suppress(OSError):
        dfd = os.open(path.parent, os.O_RDONLY)
        os.fsync(dfd)
        os.close(dfd)



def _atomic_write_parquet(path: Path, table) -> None:
    """Write a pyarrow table to ``path`` through a synced temporary file, so ``path`` is whole or absent."""
    import pyarrow.parquet as pq

    tmp = path.with_name(path.name + ".tmp")
    pq.write_table(table, tmp)
    _fsync_file(tmp)
    os.replace(tmp, path)


def _write_generation(root: Path, sid: str, gen: int, rtype: str, data: pd.DataFrame, meta: SeriesMeta,
                      provenance) -> dict:
    """Write the rows of series ``sid`` (sorted by time) as its generation-``gen`` file and return its manifest
    entry. The one series writer of ingest and ``forget``: the file becomes current only when the caller
    replaces the manifest, so an interrupted write leaves the archive as it was."""
    import pyarrow as pa

    sort_col = "start" if rtype == "Chronology" else "time"
    data = data.sort_values(sort_col, kind="stable").reset_index(drop=True)
    rel = f"series/{_safe(sid)}.g{gen}.parquet"
    _atomic_write_parquet(root / rel, pa.Table.from_pandas(data, preserve_index=False))
    t = data[sort_col]
    first = t.min().isoformat() if len(t) else None
    last_t = t.max()
    if "end" in data and data["end"].notna().any():
        last_t = max(last_t, data["end"].max())
    return SeriesEntry(sid, meta, rtype, rel, len(data), first, last_t.isoformat() if len(t) else None,
                       _largest_gap(t), tuple(provenance)).to_dict()


def _read_manifest(root: Path) -> dict:
    """The manifest of the archive at ``root``, checked; ArchiveError when it is not one."""
    path = root / MANIFEST
    if not path.exists():
        raise ArchiveError(f"{root}: not a degas archive (no {MANIFEST}); "
                           "create one with 'degas ingest ... --into'")
    try:
        manifest = json.loads(path.read_text())
    except (OSError, json.JSONDecodeError) as exc:
        raise ArchiveError(f"{path}: unreadable manifest ({exc})") from None
    if not isinstance(manifest, dict) or manifest.get("format") != FORMAT_NAME:
        raise ArchiveError(f"{path}: not a degas archive manifest")
    if not isinstance(manifest.get("series"), dict) \
            or not isinstance(manifest.get("sources"), dict) or not isinstance(manifest.get("generation"), int):
        raise ArchiveError(f"{path}: damaged manifest (series, sources or generation missing)")
    if not isinstance(manifest.get("version", 0), int) or manifest.get("version", 0) > FORMAT_VERSION:
        raise ArchiveError(f"{path}: archive format {manifest.get('version')!r} is newer than this degas "
                           "understands")
    return manifest


def _refuse_foreign(root: Path) -> None:
    """ArchiveError when ``root`` holds files that no archive would (never adopt a foreign folder)."""
    if not root.is_dir():
        return
    ours = {".lock", "series", "rejects", MANIFEST + ".tmp"}
    if any(p.name not in ours for p in root.iterdir()):
        raise ArchiveError(f"{root}: directory exists, is not empty and holds no {MANIFEST}")


def _check_folders(root: Path) -> None:
    """ArchiveError when ``series/``, ``rejects/`` or ``contrib/`` is a link (or anything) leading outside the
    archive."""
    base = root.resolve()
    for sub in ("series", "rejects", "contrib"):
        d = root / sub
        if d.is_symlink() or (d.exists() and not d.is_dir()):
            target = d.resolve()
            if not d.is_dir() or not target.is_relative_to(base) or target == base:
                raise ArchiveError(f"{d}: is a link or file leading outside the archive ({target}); refusing to "
                                   "write (make it a plain folder inside the archive)")


@contextlib.contextmanager
def _locked(root: Path, timeout: float):
    """Hold the archive's exclusive write lock, waiting up to ``timeout`` seconds for another writer."""
    import fcntl

    fh = open(root / ".lock", "a+")
    try:
        deadline = time.monotonic() + max(0.0, timeout)
        delay = 0.01
        while True:
            try:
                fcntl.flock(fh, fcntl.LOCK_EX | fcntl.LOCK_NB)
                break
            except BlockingIOError:
                if time.monotonic() >= deadline:
                    raise ArchiveError(f"{root}: another process has been writing to this archive for more than "
                                       f"{timeout:g} s; try again later or wait longer with --lock-timeout") from None
                time.sleep(delay)
                delay = min(delay * 2, 0.2)
        yield
    finally:
        with contextlib.suppress(OSError):
            fcntl.flock(fh, fcntl.LOCK_UN)
        fh.close()


def entry_display(e: SeriesEntry) -> dict:
    """An entry as the inventory shows it (times ISO, gap in days, units for people)."""
    gap = None if e.largest_gap_s is None else e.largest_gap_s / 86400.0
    return {
        "series": e.series_id, "kind": e.meta.kind, "quantity": e.meta.quantity, "station": e.meta.station or "",
        "first": e.first, "last": e.last, "count": e.n_rows, "largest_gap_days": gap,
        "unit": e.meta.display_unit or e.meta.unit or "", "basis": e.meta.volume_basis or "",
        "sources": sorted({p.source_name for p in e.provenance}),
    }


__all__ = ["Archive", "AddOutcome", "FileReport", "SeriesEntry", "conform", "entry_display"]


# ---------------------------------------------------------------------------------- forgetting a source


def _source_key(sha: str, options: ReadOptions | None, sources: dict) -> str:
    """Manifest key of an ingest: the file's SHA-256, or SHA-256#column when ``--value-col`` asks for a
    column that an earlier ingest of the same file did not read (so a second column is not refused), or
    SHA-256#sheet=NAME when ``--sheet`` names a sheet of a workbook already read (rows read twice are
    stored once)."""
    col = (options.columns or {}).get("value") if options is not None else None
    keys = [k for k in sources if k == sha or k.startswith(sha + "#")]
    sheet = options.sheet if options is not None else None
    if sheet is not None and keys:  # another sheet of a workbook read before is a new reading, not a repeat
        return f"{sha}#sheet={str(sheet).strip()}" + (f"#{col}" if col else "")
    if not col or not keys:
        return sha
    for k in keys:
        read = sources[k].get("columns_read")
        if read is None or col in read:  # that column was read already (or the archive predates the record)
            return k
    return f"{sha}#{col}"


def _joined(df: pd.DataFrame) -> pd.Series:
    """Each row's cells as text joined by "|" (missing cells as "<NA>"), by Arrow's compute kernels: a million
    rows in well under a second (a row-wise join took ~10 s per 200k rows)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    if not len(df.columns):
        return pd.Series([""] * len(df), dtype=object)
    arrs = []
    for c in df.columns:
        col = df[c]
        try:
            a = pc.cast(pa.Array.from_pandas(col), pa.string())
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError, pa.ArrowTypeError):
            a = pa.array(col.astype(str).fillna("<NA>").to_numpy(dtype=object), pa.string())
        arrs.append(pc.fill_null(a, "<NA>"))
    joined = arrs[0] if len(arrs) == 1 else pc.binary_join_element_wise(*arrs, "|")
    return pd.Series(joined, dtype=pd.ArrowDtype(pa.string()))


def _key_series(df: pd.DataFrame, rtype: str) -> pd.Series:
    """Row keys as text (the archive's merge keys), for recording and matching contributed rows."""
    kf = _key_frame(df, _KEYS[rtype])
    return _joined(kf).reset_index(drop=True) if len(kf) else pd.Series([], dtype=object)


def _key_strings(df: pd.DataFrame, rtype: str) -> list[str]:
    return _key_series(df, rtype).tolist()


def _supplied_keys(new: pd.DataFrame, old: pd.DataFrame | None, merged: pd.DataFrame,
                   rtype: str) -> pd.DataFrame:
    """Columns key, added for every row of ``new`` that the merged series holds with ``new``'s values: rows it
    added (added=True) and rows already stored identically or replaced (added=False); refused conflicts are
    left out. Vectorised: a million-row ingest records its keys in well under a second."""
    keys = _key_series(new, rtype)
    if old is None or not len(keys):
        return pd.DataFrame({"key": keys, "added": np.ones(len(keys), bool)})
    merged_keys = _key_series(merged, rtype)
    held = _row_strings(merged.loc[merged_keys.isin(keys).to_numpy()])
    supplied = _row_strings(new).isin(held).to_numpy()
    added = ~keys.isin(_key_series(old, rtype)).to_numpy()
    return pd.DataFrame({"key": keys[supplied].to_numpy(), "added": added[supplied]})


def _row_strings(df: pd.DataFrame) -> pd.Series:
    return _joined(df).reset_index(drop=True)


def _write_contrib(root: Path, gen: int, sha: str, contrib: dict[str, list[pd.DataFrame]]) -> str | None:
    """Write the keys each series received from one source (``contrib/g<N>-<sha8>.parquet``): series_id, key,
    added (False: the row was already stored identically, or this source replaced its value)."""
    import pyarrow as pa

    schema = pa.schema([("series_id", pa.string()), ("key", pa.string()), ("added", pa.bool_())])
    tables = [pa.table({"series_id": pa.repeat(pa.scalar(sid, pa.string()), len(f)),
                        "key": pa.Array.from_pandas(f["key"]).cast(pa.string()),
                        "added": pa.array(f["added"].to_numpy(dtype=bool), pa.bool_())}, schema=schema)
              for sid, frames in contrib.items() for f in frames]
    table = pa.concat_tables(tables) if tables else schema.empty_table()
    rel = f"contrib/g{gen}-{sha[:8]}.parquet"
    (root / "contrib").mkdir(exist_ok=True)
    _atomic_write_parquet(root / rel, table)
    return rel


@dataclass
class ForgetReport:
    """What forgetting one source did, per series: rows removed, series dropped, values it could not undo."""

    source: str
    sha256: str
    generation: int
    removed: dict[str, int] = field(default_factory=dict)
    dropped: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    def summary(self) -> str:
        n = sum(self.removed.values())
        parts = [f"{self.source}: forgotten (generation {self.generation}); {n} row(s) removed from "
                 f"{len(self.removed)} series"]
        if self.dropped:
            parts.append(f"series left empty and removed: {', '.join(self.dropped)}")
        return "; ".join(parts)


def _find_source(archive: Archive, source: str | Path) -> tuple[str, dict]:
    sources = archive._manifest["sources"]
    p = Path(source)
    if p.is_file():
        sha = file_sha256(p)
        for k in sources:  # the first reading of this file (a later --value-col reading is keyed sha#column)
            if k == sha or k.startswith(sha + "#"):
                return k, sources[k]
        raise ArchiveError(f"{p.name}: this file (SHA-256 {sha[:12]}...) was never ingested into {archive.root}")
    hits = [(k, v) for k, v in sources.items() if v.get("name") == p.name]
    if not hits:
        known = ", ".join(sorted({v.get("name", "?") for v in sources.values()})) or "(none)"
        raise ArchiveError(f"no source named {p.name!r} in {archive.root}; ingested files: {known}")
    if len(hits) > 1:
        which = "; ".join(f"{v.get('ingested_at')} (SHA-256 {k[:12]}...)" for k, v in hits)
        raise ArchiveError(f"{len(hits)} ingested files are named {p.name!r} ({which}); give the file's path so "
                           "its SHA-256 says which")
    return hits[0]


def _read_contrib(archive: Archive, src: dict) -> dict[str, set] | None:
    """series_id -> keys a source supplied (older contrib files without ``added`` list the added keys)."""
    import pyarrow.parquet as pq

    if not src.get("contrib_file") or not archive._path(src["contrib_file"], "contrib_file").exists():
        return None
    t = pq.read_table(archive._path(src["contrib_file"], "contrib_file")).to_pandas()
    return {sid: set(g["key"]) for sid, g in t.groupby("series_id")}


def forget(archive: Archive, source: str | Path) -> ForgetReport:
    """Remove what one ingested file contributed, as one new atomic generation.

    ``source`` is the file's path (matched by SHA-256) or its name as listed in the manifest. Rows the file
    added are removed from every series it touched; a series left empty is removed; the source leaves the
    manifest's ``sources`` and is listed under ``forgotten`` with the generation that removed it. Values the
    file replaced with ``--accept-conflicts`` cannot be restored (the note says so). A write that fails
    leaves the archive as it was (new generation files, then the manifest replaced last).
    """
    import pyarrow.parquet as pq

    with archive._writing():
        key, src = _find_source(archive, source)
        sha = key.split("#", 1)[0]
        gen = archive._manifest["generation"] + 1
        contrib = _read_contrib(archive, src)
        # rows another remaining source also supplied stay (forgetting one of two files with the same rows
        # must not lose the other's data)
        kept_by_others: dict[str, set] = {}
        for k, other in archive._manifest["sources"].items():
            if k != key and (oc := _read_contrib(archive, other)):
                for sid, keys in oc.items():
                    kept_by_others.setdefault(sid, set()).update(keys)
        rep = ForgetReport(src.get("name", str(source)), sha, gen)
        series = dict(archive._manifest["series"])
        for sid in src.get("series", []):
            entry = series.get(sid)
            if entry is None:
                continue
            prov = [Provenance.from_dict(p) for p in entry["provenance"]]
            others = [p for p in prov if p.sha256 != sha]
            rtype = entry["record_type"]
            old = conform(pq.read_table(archive._path(entry["file"], "series file")).to_pandas(), rtype)
            if not others:
                keep = np.zeros(len(old), dtype=bool)
            elif contrib is None:
                raise ArchiveError(f"{rep.source}: series {sid} also holds rows of other files, and this file was "
                                   "ingested before degas recorded which rows each file added; nothing changed")
            else:
                mine = contrib.get(sid, set()) - kept_by_others.get(sid, set())
                keep = ~np.isin(np.asarray(_key_strings(old, rtype), dtype=object), list(mine))
            rep.removed[sid] = int((~keep).sum())
            merged = old.loc[keep].reset_index(drop=True)
            if merged.empty:
                del series[sid]
                rep.dropped.append(sid)
                continue
            series[sid] = _write_generation(archive.root, sid, gen, rtype, merged,
                                            SeriesMeta.from_dict(entry["meta"]), others)
        if src.get("replaced"):
            rep.notes.append(f"{src['replaced']} stored value(s) this file replaced (--accept-conflicts) keep the "
                             "file's values: the replaced ones were not kept")
        manifest = dict(archive._manifest)
        manifest["series"] = series
        manifest["sources"] = {k: v for k, v in archive._manifest["sources"].items() if k != key}
        if any(k.startswith(sha + "#") or k == sha for k in manifest["sources"]):
            rep.notes.append("another reading of the same file (another --value-col) remains; forget it again "
                             "to remove that too")
        manifest["forgotten"] = [*archive._manifest.get("forgotten", []), {
            "name": rep.source, "sha256": sha, "generation": gen,
            "at": pd.Timestamp.now(tz="UTC").isoformat(timespec="seconds"),
            "rows_removed": rep.removed, "series_removed": rep.dropped}]
        manifest["generation"] = gen
        _atomic_write_text(archive.root / MANIFEST, json.dumps(manifest, indent=2, default=str))
        old_files = {archive._manifest["series"][s]["file"] for s in src.get("series", [])
                     if s in archive._manifest["series"]}
        old_files |= {src.get("rejects_file"), src.get("contrib_file")} - {None}
        archive._manifest = manifest
        for f in old_files:
            with contextlib.suppress(OSError, ArchiveError):  # a path outside the archive is never deleted
                archive._path(f, "superseded file").unlink()
    return rep
