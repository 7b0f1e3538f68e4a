"""The CLI error boundary (issue 10): every OS error is one line naming the path, exit code 2."""

from __future__ import annotations

import errno
import os

import pandas as pd
import pytest

from degas.cli import main  # noqa: F401  (registers every command)
from degas.cli._app import run

FLUX = "time,SO2 flux (t/d)\n" + "".join(f"{t.isoformat()},{100 + i % 7}\n" for i, t in
                                         enumerate(pd.date_range("2024-01-01", periods=60, freq="D", tz="UTC")))


def _one_line_error(capsys, rc: int, *fragments: str) -> str:
    err = capsys.readouterr().err
    assert rc == 2, err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert "Traceback" not in err
    assert lines and lines[0].startswith("degas: error: ")
    for f in fragments:
        assert f in lines[0], lines
    return err


def test_a_time_zone_that_is_a_folder_is_one_line(write, tmp_path, capsys):
    rc = run(["ingest", str(write("f.csv", FLUX)), "--into", str(tmp_path / "a"), "--tz", "America"])
    _one_line_error(capsys, rc, "--tz", "'America'", "not a time zone")


def test_an_unwritable_parent_is_one_line_naming_the_path(write, tmp_path, capsys):
    blocker = write("file", "x")  # a file where a folder should be
    rc = run(["ingest", str(write("f.csv", FLUX)), "--into", str(blocker / "sub" / "arc")])
    _one_line_error(capsys, rc, str(blocker))


@pytest.mark.parametrize("code", [errno.ENOSPC, errno.EROFS, errno.EACCES])
def test_disk_full_or_read_only_archive_is_one_line_and_keeps_the_archive(write, tmp_path, capsys, monkeypatch,
                                                                           code):
    import degas.store as store

    arc_dir = tmp_path / "a"
    assert run(["ingest", str(write("f.csv", FLUX)), "--into", str(arc_dir)]) == 0
    capsys.readouterr()
    before = (arc_dir / "manifest.json").read_text()

    def fail(src, dst):
        raise OSError(code, os.strerror(code), str(dst))

    monkeypatch.setattr(store.os, "replace", fail)
    f2 = write("g.csv", FLUX.replace("2024-01", "2025-01"))
    rc = run(["ingest", str(f2), "--into", str(arc_dir)])
    err = _one_line_error(capsys, rc, str(arc_dir), os.strerror(code))
    assert "Traceback" not in err
    monkeypatch.undo()
    assert (arc_dir / "manifest.json").read_text() == before


def test_a_very_long_station_id_is_stored(write, tmp_path, capsys):
    rc = run(["ingest", str(write("f.csv", FLUX)), "--into", str(tmp_path / "a"), "--station", "S" * 300])
    assert rc == 0, capsys.readouterr().err


def test_csv_output_into_a_missing_folder_is_one_line(write, tmp_path, capsys):
    assert run(["ingest", str(write("f.csv", FLUX)), "--into", str(tmp_path / "a")]) == 0
    capsys.readouterr()
    rc = run(["shifts", str(tmp_path / "a"), "gas_flux.so2_flux.all", "--csv", "/nonexistent/x.csv"])
    _one_line_error(capsys, rc, "/nonexistent")


def test_mapping_values_out_of_range_name_the_file_and_key(write, tmp_path, capsys):
    m = write("m.toml", "vesicularity = 1.5\n")
    rc = run(["ingest", str(write("f.csv", FLUX)), "--into", str(tmp_path / "a"), "--map", str(m)])
    _one_line_error(capsys, rc, "m.toml", "vesicularity", "[0, 1)")


@pytest.mark.parametrize("argv,fragment", [(["inventory"], "Missing argument"), (["ingest"], "Missing option"),
                                           (["nosuch"], "No such command"),
                                           (["ingest", "x", "--into", "y", "--show-rejects", "abc"], "--show-rejects")])
def test_command_line_mistakes_are_one_line(capsys, argv, fragment):
    rc = run(argv)
    err = _one_line_error(capsys, rc, fragment, "--help')")
    assert len(err.splitlines()) == 1


def test_help_still_prints(capsys):
    assert run(["ingest", "--help"]) == 0
    assert "--lock-timeout" in capsys.readouterr().out


@pytest.mark.parametrize("opt", ["--surrogates", "--boot", "--window-surrogates"])
def test_resampling_counts_on_the_command_line_are_bounded(capsys, opt):
    rc = run(["couple", "nowhere", opt, "1000000000"])
    _one_line_error(capsys, rc, opt, "100000")


def test_a_degas_error_quoting_multi_line_library_text_is_one_line():
    from degas.errors import InputError

    e = InputError("f.xlsx", "cannot read times: Invalid value '<DatetimeArray>\n['NaT']\nLength: 1'", column="end")
    assert str(e) == "f.xlsx [end]: cannot read times: Invalid value '<DatetimeArray> ['NaT'] Length: 1'"


@pytest.mark.parametrize("opts,fragments", [
    (["--time-origin", "", "--time-unit", "D"], ("--time-origin must be non-empty text", "''")),
    (["--time-origin", "   ", "--time-unit", "D"], ("--time-origin must be non-empty text",)),
    (["--time-origin", "last spring", "--time-unit", "D"], ("--time-origin must be a date", "'last spring'")),
    (["--time-origin", "now", "--time-unit", "D"], ("--time-origin must be a date", "'now'")),
    (["--time-origin", "2024-01-01", "--time-unit", ""], ("--time-unit must be non-empty text", "''")),
    (["--time-origin", "2024-01-01", "--time-unit", "weeks"], ("--time-unit must be D (days)", "'weeks'")),
    (["--time-origin", "2024-01-01"], ("--time-origin and --time-unit go together",)),
    (["--time-unit", "h"], ("--time-origin and --time-unit go together",)),
    (["--depth-positive", "sideways"], ("--depth-positive must be", "'sideways'")),
])
def test_time_base_option_errors_name_the_option(write, tmp_path, capsys, opts, fragments):
    """Review: an empty --time-origin was reported as 'time_origin' (the Python argument name)."""
    arc = tmp_path / "a"
    rc = run(["ingest", str(write("f.csv", "day,SO2 flux (t/d)\n1,100\n2,110\n")), "--into", str(arc), *opts])
    err = _one_line_error(capsys, rc, *fragments)
    assert len(err.splitlines()) == 1
    for python_name in ("time_origin", "time_unit", "depth_positive"):
        assert python_name not in err
    assert not arc.exists()  # refused before anything is read or written


def test_good_time_base_options_still_ingest(write, tmp_path, capsys):
    rc = run(["ingest", str(write("f.csv", "day,SO2 flux (t/d)\n1,100\n2,110\n")), "--into", str(tmp_path / "a"),
              "--time-origin", "2024-01-01T00:00+02:00", "--time-unit", "D"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    assert "days counted from 2024-01-01T00:00+02:00" in out.out


def test_a_mapping_file_with_a_bad_time_origin_names_the_key(write, tmp_path, capsys):
    m = write("m.toml", 'time_origin = "sometime"\ntime_unit = "D"\n')
    rc = run(["ingest", str(write("f.csv", FLUX)), "--into", str(tmp_path / "a"), "--map", str(m)])
    _one_line_error(capsys, rc, "m.toml", "time_origin must be a date", "'sometime'")
