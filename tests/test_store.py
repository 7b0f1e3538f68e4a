"""The archive: exact round trips, idempotent re-ingest, appends, conflicts, atomicity under kill."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from degas.errors import ArchiveError, DegasError
from degas.io.base import ReadOptions
from degas.model import SeriesMeta, make_series
from degas.store import Archive
from degas.volumes import rates_from_cumulative

HEADER = "time,SO2 flux (t/d),flux error (t/d),QC flag\n"


def week(start: str, n: int = 7, value: float = 864.0) -> str:
    t = pd.date_range(start, periods=n, freq="D", tz="UTC")
    return HEADER + "".join(f"{x.isoformat()},{value + i},{10},good\n" for i, x in enumerate(t))


def test_round_trip_is_exact(tmp_path):
    meta = SeriesMeta("gas_flux", "so2_flux", "VLM-N", "SO2", "kg/s", "t/d")
    rng = np.random.default_rng(1)
    ts = make_series(meta, pd.date_range("2024-01-01", periods=500, freq="10min", tz="UTC"), rng.lognormal(2, 1, 500),
                     uncertainty=rng.random(500), quality=["good"] * 500)
    arc = Archive.create(tmp_path / "a")
    arc.add(ts)
    back = Archive.open(tmp_path / "a").load(meta.series_id)
    pd.testing.assert_frame_equal(back.data, ts.data)
    assert back.meta == ts.meta


def test_reingest_same_file_adds_nothing_and_new_weeks_append(write, tmp_path):
    arc = Archive.create(tmp_path / "a")
    f1 = write("w1.csv", week("2024-01-01"))
    r1 = arc.ingest_file(f1, ReadOptions(station="VLM-N"))
    assert sum(o.added for o in r1.outcomes) == 7
    r1b = arc.ingest_file(f1, ReadOptions(station="VLM-N"))
    assert r1b.skipped and "nothing added" in r1b.summary()
    # next week's export overlaps the last two days with identical values
    f2 = write("w2.csv", week("2024-01-06", 9, value=869.0))
    r2 = arc.ingest_file(f2, ReadOptions(station="VLM-N"))
    (o,) = r2.outcomes
    assert (o.added, o.duplicates, o.conflicts) == (7, 2, 0)
    (e,) = arc.entries()
    assert e.n_rows == 14
    ts = arc.load(e.series_id)
    assert ts.data["time"].is_monotonic_increasing and len(ts) == 14
    assert [p.source_name for p in e.provenance] == ["w1.csv", "w2.csv"]


def test_conflicting_rows_are_reported_and_kept_out_unless_accepted(write, tmp_path):
    arc = Archive.create(tmp_path / "a")
    arc.ingest_file(write("w1.csv", week("2024-01-01")), ReadOptions(station="S"))
    rep = arc.ingest_file(write("w1b.csv", week("2024-01-01", 3, value=100.0)), ReadOptions(station="S"))
    assert rep.outcomes[0].conflicts == 3 and rep.outcomes[0].added == 0
    assert "conflicting" in rep.summary()
    rej = arc.rejects()
    assert rej["reason"].str.contains("conflicts with the stored value").sum() == 3
    # in the file's own unit (issue 10): stored 864 t/d, this file 100 t/d
    assert rej["reason"].iloc[0].startswith("conflicts with the stored value 864 t/d for gas_flux.so2_flux.S "
                                            "(this file: 100 t/d;")
    before = arc.load(arc.entries()[0].series_id).data["value"].iloc[0]
    assert before == pytest.approx(864 / 86.4)
    rep = arc.ingest_file(write("w1c.csv", week("2024-01-01", 1, value=200.0)), ReadOptions(station="S"),
                          accept_conflicts=True)
    assert rep.outcomes[0].replaced == 1
    assert arc.load(arc.entries()[0].series_id).data["value"].iloc[0] == pytest.approx(200 / 86.4)


def test_rejects_are_stored_with_file_and_line(write, tmp_path):
    arc = Archive.create(tmp_path / "a")
    arc.ingest_file(write("bad.csv", HEADER + "2024-01-01T00:00Z,abc,1,good\n2024-01-02T00:00Z,5,1,good\n"))
    rej = arc.rejects()
    assert rej.iloc[0]["file"] == "bad.csv" and rej.iloc[0]["line"] == "2"
    assert "not a number" in rej.iloc[0]["reason"]


def test_failed_read_leaves_archive_unchanged(write, tmp_path):
    arc = Archive.create(tmp_path / "a")
    arc.ingest_file(write("w1.csv", week("2024-01-01")))
    before = (tmp_path / "a" / "manifest.json").read_text()
    with pytest.raises(DegasError):
        arc.ingest_file(write("broken.csv", "time,SO2 flux (blorps)\n2024-01-01,1\n"))
    assert (tmp_path / "a" / "manifest.json").read_text() == before


def test_open_non_archive_and_non_empty_directory(tmp_path):
    with pytest.raises(ArchiveError, match="not a degas archive"):
        Archive.open(tmp_path)
    (tmp_path / "x").mkdir()
    (tmp_path / "x" / "f.txt").write_text("hi")
    with pytest.raises(ArchiveError, match="not empty"):
        Archive.create(tmp_path / "x")


def test_bulk_and_dre_are_never_mixed_in_one_series(write, tmp_path):
    arc = Archive.create(tmp_path / "a")
    arc.ingest_file(write("v1.csv", "date,\"cumulative volume (Mm3, bulk)\"\n2024-01-01,1\n"))
    with pytest.raises(ArchiveError, match="not mixing"):
        arc.ingest_file(write("v2.csv", "date,\"cumulative volume (Mm3, bulk)\"\n2024-02-01,2\n"),
                        ReadOptions(vesicularity=0.2))


def test_rates_from_cumulative_survey_volumes_are_interval_valued():
    meta = SeriesMeta("erupted_volume", "cumulative_volume", None, None, "m^3", "m³", "dre")
    t = pd.to_datetime(["2024-01-01", "2024-01-11", "2024-01-31"], utc=True)
    vol = make_series(meta, t, [0.0, 8.64e5, 8.64e5 + 2 * 8.64e5], uncertainty=[0.0, 3e4, 4e4])
    rate = rates_from_cumulative(vol)
    # 8.64e5 m³ over 10 days = 1.0 m³/s; then 1.728e6 m³ over 20 days = 1.0 m³/s
    assert rate.data["value"].tolist() == pytest.approx([1.0, 1.0])
    assert rate.data["time"].tolist() == list(t[:2]) and rate.data["end"].tolist() == list(t[1:])
    assert rate.data["uncertainty"].iloc[1] == pytest.approx(5e4 / (20 * 86400))
    assert rate.meta.kind == "extrusion_rate" and rate.is_interval


def start_killer(write, root: Path, f: Path) -> subprocess.Popen:
    """Start an ingest of ``f`` into ``root`` that stops right after writing its new generation file (before the
    manifest is replaced); return the process once it has reached that point, to be killed by the caller."""
    script = write("killer.py", KILLER)
    proc = subprocess.Popen([sys.executable, str(script), str(root), str(f)], stdout=subprocess.PIPE,
                            env={**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)})
    deadline = time.time() + 60
    line = b""
    while time.time() < deadline and b"WROTE" not in line:
        line = proc.stdout.readline()
        if not line and proc.poll() is not None:
            break
    assert b"WROTE" in line, "the writer never reached the write"
    return proc


KILLER = textwrap.dedent(
    """
    import sys, time
    import pyarrow.parquet as pq
    from degas.store import Archive
    real = pq.write_table
    def slow(table, where, *a, **k):
        real(table, where, *a, **k)
        print("WROTE", flush=True)
        time.sleep(60)   # killed here: the new generation file exists, the manifest is not replaced yet
    pq.write_table = slow
    Archive.open(sys.argv[1]).ingest_file(sys.argv[2])
    """
)


def test_kill_mid_ingest_leaves_archive_as_it_was(write, tmp_path):
    root = tmp_path / "a"
    arc = Archive.create(root)
    arc.ingest_file(write("w1.csv", week("2024-01-01")))
    manifest_before = (root / "manifest.json").read_text()
    data_before = arc.load(arc.entries()[0].series_id).data
    f2 = write("w2.csv", week("2024-01-08"))
    proc = start_killer(write, root, f2)
    proc.send_signal(signal.SIGKILL)
    proc.wait(10)
    assert (root / "manifest.json").read_text() == manifest_before
    again = Archive.open(root)
    pd.testing.assert_frame_equal(again.load(again.entries()[0].series_id).data, data_before)
    # the next writer cleans up the stray file and the ingest then succeeds
    rep = again.ingest_file(f2)
    assert sum(o.added for o in rep.outcomes) == 7
    files = sorted(p.name for p in (root / "series").iterdir())
    assert len(files) == 1, files
    assert json.loads((root / "manifest.json").read_text())["generation"] == 2


def test_second_writer_is_refused_while_one_holds_the_lock(write, tmp_path):
    import fcntl

    root = tmp_path / "a"
    Archive.create(root)
    fh = open(root / ".lock", "a+")
    fcntl.flock(fh, fcntl.LOCK_EX)
    try:
        # writers now wait for the lock (issue 10); past their timeout they are refused
        with pytest.raises(ArchiveError, match="another process.*--lock-timeout"):
            Archive.open(root, lock_timeout=0.2).ingest_file(write("w1.csv", week("2024-01-01")))
    finally:
        fcntl.flock(fh, fcntl.LOCK_UN)
        fh.close()


def test_revised_catalogue_values_are_conflicts_not_silent(write, tmp_path):
    arc = Archive.create(tmp_path / "a")
    head = "origin time (UTC),type,Md,depth (km),lat,lon\n"
    arc.ingest_file(write("c1.csv", head + "2024-01-01 00:10,VT,1.2,3.0,1.2,102.3\n2024-01-01 00:20,LP,0.5,,,\n"))
    # the next export revises a magnitude and a depth: same events (ids from time and place), other values
    rep = arc.ingest_file(write("c2.csv", head + "2024-01-01 00:10,VT,1.2,8.0,1.2,102.3\n"
                                                 "2024-01-01 00:20,LP,0.7,,,\n"))
    (o,) = rep.outcomes
    assert (o.added, o.conflicts) == (0, 2)
    assert arc.entries()[0].n_rows == 2  # not stored twice
    rej = arc.rejects()
    assert sorted(rej.loc[rej["reason"].str.contains("conflicts"), "line"].tolist()) == ["2", "3"]


def test_a_revised_uncertainty_is_a_conflict(write, tmp_path):
    arc = Archive.create(tmp_path / "a")
    arc.ingest_file(write("w1.csv", "time,SO2 flux (t/d),flux error (t/d)\n2024-01-01T00:00Z,864,10\n"))
    rep = arc.ingest_file(write("w2.csv", "time,SO2 flux (t/d),flux error (t/d)\n2024-01-01T00:00Z,864,20\n"))
    assert rep.outcomes[0].conflicts == 1


def test_amplitudes_in_other_units_are_not_merged(write, tmp_path):
    arc = Archive.create(tmp_path / "a")
    arc.ingest_file(write("r1.csv", "time,RSAM (counts)\n2024-01-01T00:00Z,120\n"), ReadOptions(station="VLM1"))
    with pytest.raises(ArchiveError, match="not mixing"):
        arc.ingest_file(write("r2.csv", "time,RSAM (nm/s)\n2024-01-02T00:00Z,3.5\n"), ReadOptions(station="VLM1"))


def test_archive_path_that_is_a_file(write, tmp_path):
    f = write("a.csv", "x")
    with pytest.raises(ArchiveError, match="is a file"):
        Archive.create(f)
