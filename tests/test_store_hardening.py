"""Archive hardening (issue 10): injective series ids, links and tampered manifests, waiting writers,
simultaneous creation, readers across a generation switch."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
import threading
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from degas.errors import ArchiveError
from degas.model import SeriesMeta, make_series
from degas.store import Archive

HEADER = "time,SO2 flux (t/d)\n"


def week(start: str, n: int = 7, value: float = 864.0) -> str:
    t = pd.date_range(start, periods=n, freq="D", tz="UTC")
    return HEADER + "".join(f"{x.isoformat()},{value + i}\n" for i, x in enumerate(t))


def series(station: str | None, start: str = "2024-01-01", n: int = 5, value: float = 10.0):
    meta = SeriesMeta("gas_flux", "so2_flux", station, "SO2", "kg/s", "t/d")
    return make_series(meta, pd.date_range(start, periods=n, freq="D", tz="UTC"), np.full(n, value))


# ------------------------------------------------------------------ 1. injective ids


def test_stations_that_slug_alike_stay_distinct_series(tmp_path):
    names = ["VLM.N", "VLM N", "VLM-N", "ÑÑ", "ŘŘ", "x", None, "all "]
    arc = Archive.create(tmp_path / "a")
    for i, st in enumerate(names):
        arc.add(series(st, value=float(i)))
    ids = [series(st).meta.series_id for st in names]
    assert len(set(ids)) == len(names)
    arc = Archive.open(tmp_path / "a")
    assert len(arc.entries()) == len(names)
    for i, (st, sid) in enumerate(zip(names, ids, strict=True)):
        rec = arc.load(sid)
        assert rec.meta.station == st  # the original id is kept in the metadata
        assert rec.data["value"].tolist() == [float(i)] * 5


def test_safe_names_keep_their_old_ids_and_lossy_ones_get_a_hash():
    assert series("VLM-N").meta.series_id == "gas_flux.so2_flux.VLM-N"
    assert series(None).meta.series_id == "gas_flux.so2_flux.all"
    sid = series("VLM.N").meta.series_id
    assert sid.startswith("gas_flux.so2_flux.VLM-N~") and len(sid.rsplit("~", 1)[1]) == 8
    long_id = series("a" * 300).meta.series_id
    assert len(long_id) < 100  # a station id of any length makes a file name the file system accepts


def test_a_colliding_id_with_another_original_is_refused(tmp_path):
    arc = Archive.create(tmp_path / "a")
    arc.add(series("VLM-N"))
    # tamper: pretend a stored entry under the id of VLM-N came from another original station
    m = json.loads((tmp_path / "a" / "manifest.json").read_text())
    m["series"]["gas_flux.so2_flux.VLM-N"]["meta"]["station"] = "VLM/N"
    (tmp_path / "a" / "manifest.json").write_text(json.dumps(m))
    arc = Archive.open(tmp_path / "a")
    with pytest.raises(ArchiveError, match="already used by station 'VLM/N'"):
        arc.add(series("VLM-N", start="2024-02-01"))
    assert arc.load("gas_flux.so2_flux.VLM-N").data["value"].tolist() == [10.0] * 5


def test_an_archive_keyed_on_the_former_lossy_ids_still_reads_and_grows(tmp_path):
    root = tmp_path / "a"
    arc = Archive.create(root)
    arc.add(series("VLM.N"))
    # rewrite the manifest as older degas wrote it: keyed on the lossy slug
    m = json.loads((root / "manifest.json").read_text())
    (new_id,) = m["series"]
    entry = m["series"].pop(new_id)
    entry["series_id"] = "gas_flux.so2_flux.VLM-N"
    m["series"]["gas_flux.so2_flux.VLM-N"] = entry
    (root / "manifest.json").write_text(json.dumps(m))
    arc = Archive.open(root)
    assert len(arc.load("gas_flux.so2_flux.VLM-N")) == 5  # the old id
    assert len(arc.load(new_id)) == 5  # and the new one find it
    arc.add(series("VLM.N", start="2024-01-06"))  # same original station: grows the legacy entry
    arc = Archive.open(root)
    assert [e.series_id for e in arc.entries()] == ["gas_flux.so2_flux.VLM-N"]
    assert arc.entries()[0].n_rows == 10
    with pytest.raises(ArchiveError, match="already used"):  # the real VLM-N is not mixed in
        arc.add(series("VLM-N", start="2024-03-01"))


def test_demo_archive_ids_are_unchanged(tmp_path):
    from degas.io.mapping import load_toml

    plan = load_toml(Path(__file__).resolve().parents[1] / "demo_series" / "demo_ingest.toml")["file"]
    for f in plan:
        st = f.get("station")
        if st is not None:
            assert series(st).meta.series_id.endswith("." + st)


# ------------------------------------------------------------------ 2. links are never followed


def _outside_folder(tmp_path: Path) -> Path:
    out = tmp_path / "precious"
    out.mkdir()
    (out / "keep.parquet").write_bytes(b"not ours")
    (out / "keep.csv").write_text("not ours")
    return out


@pytest.mark.parametrize("sub", ["series", "rejects", "contrib"])
def test_a_linked_folder_outside_the_archive_is_refused_and_never_emptied(tmp_path, write, sub):
    root = tmp_path / "a"
    arc = Archive.create(root)
    arc.ingest_file(write("w1.csv", week("2024-01-01")))
    out = _outside_folder(tmp_path)
    moved = root / f"{sub}.real"
    (root / sub).rename(moved)
    os.symlink(out, root / sub)
    with pytest.raises(ArchiveError, match="outside the archive"):
        Archive.open(root).ingest_file(write("w2.csv", week("2024-01-08")))
    assert sorted(p.name for p in out.iterdir()) == ["keep.csv", "keep.parquet"]


def test_forget_refuses_a_contrib_folder_linked_outside_the_archive(tmp_path, write):
    """Review: contrib/ (which rows each file added) was not checked for links leading outside."""
    from degas.store import forget

    root = tmp_path / "a"
    arc = Archive.create(root)
    arc.ingest_file(write("w1.csv", week("2024-01-01")))
    arc.ingest_file(write("w2.csv", week("2024-01-08")))
    before = (root / "manifest.json").read_text()
    out = _outside_folder(tmp_path)
    for p in (root / "contrib").iterdir():
        p.rename(out / p.name)  # the same contrib files, reached through a link
    (root / "contrib").rmdir()
    os.symlink(out, root / "contrib")
    with pytest.raises(ArchiveError, match="contrib: is a link or file leading outside the archive"):
        forget(Archive.open(root), "w2.csv")
    assert (root / "manifest.json").read_text() == before
    assert len(list(out.iterdir())) == 4  # the two kept files and both contrib files, untouched


def test_a_stray_link_in_series_is_removed_without_touching_its_target(tmp_path, write):
    root = tmp_path / "a"
    arc = Archive.create(root)
    out = _outside_folder(tmp_path)
    os.symlink(out / "keep.parquet", root / "series" / "stray.parquet")
    os.symlink(out, root / "series" / "strays")
    arc.ingest_file(write("w1.csv", week("2024-01-01")))
    assert not (root / "series" / "stray.parquet").is_symlink()
    assert sorted(p.name for p in out.iterdir()) == ["keep.csv", "keep.parquet"]


# ------------------------------------------------------------------ 3. manifest paths stay inside


@pytest.mark.parametrize("bad", ["../outside.parquet", "/tmp/outside.parquet", "series/../../outside.parquet",
                                 "manifest.json", 7])
def test_tampered_manifest_paths_are_refused_and_the_target_survives(tmp_path, write, bad):
    root = tmp_path / "a"
    arc = Archive.create(root)
    arc.ingest_file(write("w1.csv", week("2024-01-01")))
    victim = tmp_path / "outside.parquet"
    victim.write_bytes(Path(root / arc.entries()[0].file).read_bytes())
    m = json.loads((root / "manifest.json").read_text())
    (sid,) = m["series"]
    m["series"][sid]["file"] = bad if not isinstance(bad, str) or not bad.startswith("/tmp") else str(victim)
    (root / "manifest.json").write_text(json.dumps(m))
    arc = Archive.open(root)
    with pytest.raises(ArchiveError, match="refusing"):
        arc.load(sid)
    with pytest.raises(ArchiveError, match="refusing"):
        arc.ingest_file(write("w2.csv", week("2024-01-08")))
    assert victim.exists()


def test_a_tampered_rejects_path_is_refused(tmp_path, write):
    root = tmp_path / "a"
    arc = Archive.create(root)
    arc.ingest_file(write("w1.csv", HEADER + "2024-01-01,1\nnot a time,2\n"))
    m = json.loads((root / "manifest.json").read_text())
    (src,) = m["sources"].values()
    src["rejects_file"] = "../../etc/passwd"
    (root / "manifest.json").write_text(json.dumps(m))
    with pytest.raises(ArchiveError, match="refusing"):
        Archive.open(root).rejects()


# ------------------------------------------------------------------ 4. waiting writers, creation, readers


def test_a_second_writer_waits_for_the_lock(tmp_path, write):
    import fcntl

    root = tmp_path / "a"
    Archive.create(root)
    fh = open(root / ".lock", "a+")
    fcntl.flock(fh, fcntl.LOCK_EX)
    timer = threading.Timer(0.3, lambda: fcntl.flock(fh, fcntl.LOCK_UN))
    timer.start()
    try:
        t0 = time.monotonic()
        rep = Archive.open(root, lock_timeout=30).ingest_file(write("w1.csv", week("2024-01-01")))
        assert time.monotonic() - t0 >= 0.25
        assert sum(o.added for o in rep.outcomes) == 7
    finally:
        timer.join()
        fh.close()


RACER = textwrap.dedent(
    """
    import sys
    from degas.store import Archive
    root, f = sys.argv[1], sys.argv[2]
    arc = Archive.create(root)
    arc.ingest_file(f)
    for _ in range(10):
        a = Archive.open(root)
        for e in a.entries():
            a.load(e.series_id)
    """
)


def test_simultaneous_creation_and_ingest_of_a_new_archive(tmp_path, write):
    """Three processes create the same new archive and ingest one week each while reading it."""
    script = write("racer.py", RACER)
    root = tmp_path / "new" / "archive"
    files = [write(f"w{i}.csv", week(f"2024-0{i + 1}-01")) for i in range(3)]
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    procs = [subprocess.Popen([sys.executable, str(script), str(root), str(f)], stderr=subprocess.PIPE, env=env)
             for f in files]
    errs = [p.communicate(timeout=120)[1].decode() for p in procs]
    assert [p.returncode for p in procs] == [0] * 3, errs
    arc = Archive.open(root)
    assert arc.entries()[0].n_rows == 21 and len(arc.sources()) == 3


def test_a_reader_retries_when_a_writer_switched_generations(tmp_path, write):
    root = tmp_path / "a"
    Archive.create(root).ingest_file(write("w1.csv", week("2024-01-01")))
    reader = Archive.open(root)  # holds generation 1
    Archive.open(root).ingest_file(write("w2.csv", week("2024-01-08")))  # generation 2 removes gen 1's file
    sid = reader.entries()[0].series_id
    assert len(reader.load(sid)) == 14


# ------------------------------------------------------------------ kill and concurrency, with links and tampering

from tests.test_store import start_killer  # noqa: E402  (the same kill-during-write script)


def _kill_mid_ingest(write, root: Path, f: Path) -> None:
    proc = start_killer(write, root, f)
    proc.kill()
    proc.wait(10)


def test_kill_mid_ingest_then_links_and_a_tampered_manifest_are_met_safely(write, tmp_path):
    root = tmp_path / "a"
    arc = Archive.create(root)
    arc.ingest_file(write("w1.csv", week("2024-01-01")))
    _kill_mid_ingest(write, root, write("w2.csv", week("2024-01-08")))
    assert len(list((root / "series").iterdir())) == 2  # the stored file and the killed write's temp file
    out = _outside_folder(tmp_path)
    os.symlink(out, root / "series" / "linked-folder")  # stray links into the series folder
    os.symlink(out / "keep.parquet", root / "series" / "linked.parquet")
    # a tampered manifest first: the next writer refuses and deletes nothing
    good = (root / "manifest.json").read_text()
    m = json.loads(good)
    (sid,) = m["series"]
    m["series"][sid]["file"] = "../../precious/keep.parquet"
    (root / "manifest.json").write_text(json.dumps(m))
    with pytest.raises(ArchiveError, match="refusing"):
        Archive.open(root).ingest_file(write("w3.csv", week("2024-01-15")))
    assert sorted(p.name for p in out.iterdir()) == ["keep.csv", "keep.parquet"]
    # restored, the next writer cleans the strays (links removed, never followed) and succeeds
    (root / "manifest.json").write_text(good)
    rep = Archive.open(root).ingest_file(write("w3.csv", week("2024-01-15")))
    assert sum(o.added for o in rep.outcomes) == 7
    assert sorted(p.name for p in out.iterdir()) == ["keep.csv", "keep.parquet"]
    assert [p.name for p in (root / "series").iterdir()] == [Path(Archive.open(root).entries()[0].file).name]


WRITER = textwrap.dedent(
    """
    import sys
    from degas.store import Archive
    Archive.open(sys.argv[1]).ingest_file(sys.argv[2])
    """
)


def test_concurrent_writers_on_an_archive_with_a_linked_folder_are_all_refused(write, tmp_path):
    root = tmp_path / "a"
    Archive.create(root).ingest_file(write("w0.csv", week("2023-12-01")))
    out = _outside_folder(tmp_path)
    (root / "rejects").rmdir()
    os.symlink(out, root / "rejects")
    script = write("writer.py", WRITER)
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    files = [write(f"w{i}.csv", week(f"2024-0{i}-01")) for i in range(1, 3)]
    procs = [subprocess.Popen([sys.executable, str(script), str(root), str(f)], stderr=subprocess.PIPE, env=env)
             for f in files]
    errs = [p.communicate(timeout=120)[1].decode() for p in procs]
    assert all(p.returncode != 0 for p in procs) and all("outside the archive" in e for e in errs), errs
    assert sorted(p.name for p in out.iterdir()) == ["keep.csv", "keep.parquet"]
    assert Archive.open(root).entries()[0].n_rows == 7


READER_LOOP = textwrap.dedent(
    """
    import sys
    from pathlib import Path
    from degas.store import Archive
    root, stop = sys.argv[1], Path(sys.argv[2])
    print("START", flush=True)
    n = 0
    while not stop.exists() or n < 5:
        a = Archive.open(root)
        for e in a.entries():
            assert len(a.load(e.series_id)) >= 7
        n += 1
    print("READS", n, flush=True)
    """
)


def test_readers_during_writes_never_see_a_missing_file(write, tmp_path):
    root = tmp_path / "a"
    arc = Archive.create(root)
    arc.ingest_file(write("w0.csv", week("2023-01-01")))
    script = write("reader.py", READER_LOOP)
    stop = tmp_path / "stop"
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    reader = subprocess.Popen([sys.executable, str(script), str(root), str(stop)], stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, env=env)
    assert reader.stdout.readline().strip() == b"START"
    for i in range(1, 25):  # 24 generation switches while the reader reads
        arc.ingest_file(write(f"w{i}.csv", week(str((pd.Timestamp("2023-01-01") + pd.Timedelta(weeks=i)).date()))))
    stop.touch()
    out, err = reader.communicate(timeout=120)
    assert reader.returncode == 0, err.decode()[-2000:]
    assert int(out.split()[-1]) >= 5
    assert Archive.open(root).entries()[0].n_rows == 7 * 25


def test_a_damaged_stored_file_is_a_one_line_error_and_is_left_alone(tmp_path, write):
    root = tmp_path / "a"
    arc = Archive.create(root)
    arc.ingest_file(write("w1.csv", week("2024-01-01")))
    f = root / arc.entries()[0].file
    f.write_bytes(b"PAR1 garbage")
    with pytest.raises(ArchiveError, match="unreadable"):
        Archive.open(root).load(arc.entries()[0].series_id)
    with pytest.raises(ArchiveError, match="unreadable.*nothing added"):
        Archive.open(root).ingest_file(write("w2.csv", week("2024-01-08")))
    assert f.read_bytes() == b"PAR1 garbage"
