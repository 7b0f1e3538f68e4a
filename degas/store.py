"""The archive: one Parquet file per series plus a human-readable JSON manifest.

Layout of an archive directory::

    manifest.json                  what is stored: series, their metadata and provenance, sources
    series/<series_id>.g<N>.parquet   the rows of each series (generation N)
    rejects/g<N>-<sha8>.csv        rows rejected from each ingested file (file, line, column, reason)
    .lock                          held while a process writes

Rules:

* Re-ingesting a file with the same SHA-256 adds nothing.
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
        for sub in ("series", "rejects"):
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
        if sha in self._manifest["sources"]:
            return FileReport(path.name, sha, skipped=True)
        result = read(path, options, format)
        report = FileReport(path.name, sha, reader=result.records[0].provenance[0].reader if result.records else None,
                            accepted=sum(len(r) for r in result.records), notes=list(result.notes))
        with self._writing():
            if sha in self._manifest["sources"]:  # ingested by another process meanwhile
                return FileReport(path.name, sha, skipped=True)
            gen = self._manifest["generation"] + 1
            staged: dict[str, dict] = {}
            conflict_rows: list[tuple] = []
            for i, rec in enumerate(result.records):
                lines = result.lines[i] if i < len(result.lines) else None
                o = self._stage(rec, gen, staged, accept_conflicts, lines)
                report.outcomes.append(o)
                conflict_rows.extend(o.conflict_rows)
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
            }
            self._commit(gen, staged, {sha: source})
        return report

    def _stage(self, record: Record, gen: int, staged: dict, accept_conflicts: bool,
               lines: np.ndarray | None = None) -> AddOutcome:
        """Merge a record with the stored (or already staged) rows and write a new generation file."""
        import pyarrow as pa
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
        sort_col = "start" if rtype == "Chronology" else "time"
        merged = merged.sort_values(sort_col, kind="stable").reset_index(drop=True)
        rel = f"series/{_safe(sid)}.g{gen}.parquet"
        table = pa.Table.from_pandas(merged, preserve_index=False)
        tmp = self.root / (rel + ".tmp")
        pq.write_table(table, tmp)
        _fsync_file(tmp)
        os.replace(tmp, self.root / rel)
        t = merged[sort_col]
        first = t.min().isoformat() if len(t) else None
        last_t = t.max()
        if "end" in merged and merged["end"].notna().any():
            last_t = max(last_t, merged["end"].max())
        staged[sid] = SeriesEntry(sid, meta, rtype, rel, len(merged), first,
                                  last_t.isoformat() if len(t) else None, _largest_gap(t),
                                  tuple(provenance)).to_dict()
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
    """ArchiveError when ``series/`` or ``rejects/`` is a link (or anything) leading outside the archive."""
    base = root.resolve()
    for sub in ("series", "rejects"):
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
