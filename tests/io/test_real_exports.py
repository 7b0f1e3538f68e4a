"""Exports as observatories send them: workbooks, several value columns, two-row headers, counts by class.

Every file under tests/data/exports/ is hand-written with invented names (make_workbooks.py wrote the two
workbooks once).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from degas.errors import DegasError, InputError
from degas.io import read
from degas.io.base import ReadOptions
from degas.io.mapping import options_from_dict

DATA = Path(__file__).resolve().parents[1] / "data" / "exports"
T_D = 1 / 86.4  # t/d -> kg/s exactly (BIPM SI Brochure 2019: 1 t = 1000 kg, 1 d = 86 400 s)


def _by_quantity(res):
    return {r.meta.quantity: r for r in res.records}


# --------------------------------------------------------------------------- workbooks


def test_workbook_without_a_choice_reads_the_first_sheet_and_names_the_others():
    res = read(DATA / "flux_per_year.xlsx")
    (ts,) = res.records
    assert ts.meta.station == "KORVA-1" and len(ts) == 2
    note = next(n for n in res.notes if "read sheet" in n)
    assert "'2021'" in note and "'2022'" in note and "'notes'" in note and "--sheet" in note


@pytest.mark.parametrize("sheet", ["2022", "2"])
def test_sheet_by_name_or_number(sheet):
    res = read(DATA / "flux_per_year.xlsx", ReadOptions(sheet=sheet))
    (ts,) = res.records
    assert ts.data["time"].tolist() == [pd.Timestamp("2022-01-01", tz="UTC")]
    assert res.rejects["reason"].tolist() == ["missing value"]


def test_sheet_all_stacks_sheets_of_one_layout_and_refuses_others():
    with pytest.raises(InputError, match="sheet 'notes' has columns"):
        read(DATA / "flux_per_year.xlsx", ReadOptions(sheet="all"))


def test_unknown_sheet_lists_the_sheets():
    with pytest.raises(InputError, match=r"no sheet 'x' \(--sheet\); sheets are '2021', '2022', 'notes'"):
        read(DATA / "flux_per_year.xlsx", ReadOptions(sheet="x"))


def _workbook(path: Path, rows: list[list], *, title: str = "flux") -> Path:
    """A small .xlsx written with openpyxl, row by row (None = an empty cell)."""
    from openpyxl import Workbook

    wb = Workbook()
    ws = wb.active
    ws.title = title
    for row in rows:
        ws.append(row)
    wb.save(path)
    return path


def test_values_under_an_empty_header_are_named_not_dropped_silently(tmp_path):
    """Review: a column with data under an empty header cell was left out without a word."""
    rows = [[None, "time", "SO2 flux (t/d)", None, "comment", None]]
    rows += [[None, f"2024-01-0{d}", 100 + d, 5 * d, "ok", "  " if d == 1 else None] for d in range(1, 4)]
    path = _workbook(tmp_path / "flux.xlsx", rows)
    res = read(path)
    (ts,) = res.records
    assert len(ts) == 3
    (note,) = [n for n in res.notes if "empty header" in n]
    assert note.startswith("flux.xlsx: sheet 'flux' column D has 3 value(s) under an empty header; left out")
    assert "column F" not in " ".join(res.notes) and "column A" not in " ".join(res.notes)  # blank cells only


def test_an_empty_header_over_an_empty_column_gives_no_note(tmp_path):
    path = _workbook(tmp_path / "flux.xlsx", [["time", None, "SO2 flux (t/d)"], ["2024-01-01", None, 100],
                                              ["2024-01-02", None, 101]])
    res = read(path)
    assert len(res.records[0]) == 2 and not [n for n in res.notes if "empty header" in n]


def test_the_empty_header_note_reaches_the_ingest_output(tmp_path, capsys):
    from degas.cli import main  # noqa: F401  (registers every command)
    from degas.cli._app import run

    path = _workbook(tmp_path / "flux.xlsx", [["time", "SO2 flux (t/d)", None],
                                              *[[f"2024-01-0{d}", 100 + d, 7] for d in range(1, 6)]])
    assert run(["ingest", str(path), "--into", str(tmp_path / "arc")]) == 0
    assert "note: flux.xlsx: sheet 'flux' column C has 5 value(s) under an empty header" in capsys.readouterr().out


def test_sheet_from_a_mapping_file_number_or_name():
    assert options_from_dict({"sheet": 2}).sheet == "2"
    assert options_from_dict({"sheet": "all"}).sheet == "all"


def test_sheet_all_on_a_workbook_of_one_layout(tmp_path):
    import openpyxl

    wb = openpyxl.Workbook()
    wb.active.title = "2019"
    wb.active.append(["Date", "SO2 flux (t/d)"])
    wb.active.append([pd.Timestamp("2019-12-31").to_pydatetime(), 100.0])
    ws = wb.create_sheet("2020")
    ws.append(["Date", "SO2 flux (t/d)"])
    ws.append([pd.Timestamp("2020-01-01").to_pydatetime(), 200.0])
    wb.save(tmp_path / "years.xlsx")
    res = read(tmp_path / "years.xlsx", ReadOptions(sheet="all", species="SO2"))
    (ts,) = res.records
    assert ts.data["value"].tolist() == pytest.approx([100 * T_D, 200 * T_D])
    assert any("read all 2 sheets" in n for n in res.notes)


def test_legacy_xls_is_read_with_xlrd():
    res = read(DATA / "counts_legacy.xls")
    q = _by_quantity(res)
    assert set(q) == {"vt_events", "lp_events", "hybrid_events", "rockfall_events"}
    assert res.records[0].provenance[0].reader == "table/xls"
    lp = q["lp_events"].data["value"].tolist()
    assert lp[0] == 10 and np.isnan(lp[1]) and lp[2] == 12  # an empty cell is "not counted", not 0
    assert q["vt_events"].data["value"].tolist() == [4, 3, 0]


@pytest.mark.parametrize("name", ["renamed.xls", "renamed.xlsx"])
def test_a_workbook_name_on_other_bytes_is_a_clear_error(tmp_path, name):
    p = tmp_path / name
    p.write_text("Date,SO2 flux (t/d)\n2023-01-01,5\n")
    with pytest.raises(InputError, match="neither an .xlsx nor a legacy .xls"):
        read(p)


# --------------------------------------------------------------------------- columns


def test_several_value_columns_become_one_series_each_with_their_uncertainty():
    res = read(DATA / "flux_three_species.csv")
    q = _by_quantity(res)
    assert set(q) == {"so2_flux", "co2_flux", "h2s_flux"}
    assert q["so2_flux"].data["uncertainty"].tolist() == pytest.approx([30 * T_D, 31 * T_D, 29 * T_D])
    assert q["co2_flux"].data["uncertainty"].tolist() == pytest.approx([200 * T_D, 210 * T_D, 205 * T_D])
    assert q["h2s_flux"].data["uncertainty"].isna().all()
    assert len(q["h2s_flux"]) == 2 and res.rejects["column"].tolist() == ["H2S (t/d)"]
    assert all(r.meta.station == "TARN-2" for r in res.records)


def test_several_value_columns_all_stored_in_one_ingest(tmp_path):
    from degas.store import Archive

    a = Archive.create(tmp_path / "arc")
    rep = a.ingest_file(DATA / "flux_three_species.csv")
    assert {e.meta.quantity for e in a.entries()} == {"so2_flux", "co2_flux", "h2s_flux"}
    assert rep.accepted == 8


def test_two_row_header_units_and_trade_spellings():
    res = read(DATA / "flux_two_row_header.csv")
    (ts,) = res.records
    assert ts.meta.station == "ORLO" and ts.meta.species == "SO2"
    assert ts.data["value"].tolist() == pytest.approx([250 * T_D, 270 * T_D])
    assert ts.data["uncertainty"].tolist() == pytest.approx([25 * T_D, 26 * T_D])
    assert any("second header row read as units" in n for n in res.notes)
    assert any("station taken from column 'Station'" in n for n in res.notes)
    # the unit row is not data: the bad value is reported on its real file line
    assert res.rejects[["line", "reason"]].values.tolist() == [[5, "not a number"]]


def test_station_option_overrides_a_station_column_and_says_so():
    res = read(DATA / "flux_two_row_header.csv", ReadOptions(station="ORLO-B"))
    assert res.records[0].meta.station == "ORLO-B"
    assert any("--station" in n and "'Station' not used" in n for n in res.notes)


def test_local_time_column_needs_a_zone():
    with pytest.raises(InputError, match=r"holds local times .* --tz"):
        read(DATA / "flux_local_time.csv")
    (ts,) = read(DATA / "flux_local_time.csv", ReadOptions(timezone="-03:00")).records
    assert ts.data["time"].iloc[0] == pd.Timestamp("2023-06-01 11:00", tz="UTC")


def test_class_column_spelled_etype():
    (cat,) = read(DATA / "catalogue_etype.csv").records
    assert cat.data["event_class"].tolist() == ["VT", "LP"]


def test_unknown_headers_list_the_columns_and_the_option(write):
    with pytest.raises(InputError, match=r"columns are \['when', 'how much'\].*--time-col"):
        read(write("odd.csv", "when,how much\n1,2\n"))


# --------------------------------------------------------------------------- counts by class


def test_counts_by_class_keep_not_counted_apart_from_zero():
    res = read(DATA / "counts_by_class.csv")
    q = _by_quantity(res)
    assert set(q) == {"vt_events", "lp_events", "hybrid_events", "rockfall_events", "explosion_events"}
    assert all(r.meta.kind == "event_counts" for r in res.records)
    lp = q["lp_events"].data["value"].to_numpy()
    assert np.isnan(lp[1]) and lp[2] == 0  # empty = not counted; 0 = none
    # a negative count is rejected, row by row, for its class only
    assert res.rejects[["line", "column", "reason"]].values.tolist() == [[7, "Hybrid", "negative count"]]
    assert len(q["hybrid_events"]) == 4 and len(q["vt_events"]) == 5
    assert (q["vt_events"].data["end"] - q["vt_events"].data["time"] == pd.Timedelta("1D")).all()


def test_counts_by_class_as_rates_without_fake_events():
    from degas.analysis.seismicity import event_rate_series, event_rates, seismic_metrics
    from degas.classcounts import ClassCounts

    counts = ClassCounts.from_series(read(DATA / "counts_by_class.csv").records)
    rr = event_rates(counts, "1D", classes=("LP", "hybrid", "tremor"))
    assert rr.counts["LP"].tolist()[:1] == [5] and np.isnan(rr.counts["LP"].iloc[1])
    assert rr.counts["tremor"].isna().all()  # a class the source does not count is missing, never 0
    assert rr.n_events == int(np.nansum(rr.counts["total"]))
    lp_h = event_rate_series(counts, "1D", ("LP", "hybrid"))
    v = lp_h.data["value"].to_numpy()
    assert v[0] == 5 and np.isnan(v[1]) and v[2] == 0 and v[3] == 9 and np.isnan(v[4])
    weekly = event_rates(counts, "7D", classes=("VT",))
    assert weekly.counts["VT"].isna().all()  # five counted days never fill a 7-day bin
    m = seismic_metrics(counts, "1D", classes=("VT",))
    assert "energy_j" not in m and m["count_VT"].tolist() == [2, 3, 0, 1, 1]


def test_event_counts_kind_can_be_told(write):
    res = read(write("c.csv", "day,LP count,N hybrid\n2023-01-01,4,1\n2023-01-02,5,0\n"),
               ReadOptions(kind="event_counts"))
    assert {r.meta.quantity for r in res.records} == {"lp_events", "hybrid_events"}


def test_counts_columns_of_one_class_twice_are_refused(write):
    with pytest.raises(InputError, match="both hold LP counts"):
        read(write("c.csv", "Date,LP,B-type\n2023-01-01,4,1\n"))


def test_no_class_columns_for_event_counts_names_the_class_map(write):
    with pytest.raises(DegasError, match="class_map"):
        read(write("c.csv", "Date,foo\n2023-01-01,4\n"), ReadOptions(kind="event_counts"))


# --------------------------------------------------------------------------- corrupted files


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(name=st.sampled_from(["counts_legacy.xls", "flux_per_year.xlsx"]), cut=st.integers(0, 6000),
       junk=st.binary(max_size=64), pos=st.integers(0, 6000))
def test_corrupted_workbooks_give_one_clear_error(tmp_path, name, cut, junk, pos):
    raw = (DATA / name).read_bytes()
    p = tmp_path / name
    p.write_bytes(raw[:pos] + junk + raw[pos + len(junk):cut + pos] if cut else raw[:pos] + junk)
    try:
        read(p)
    except DegasError as exc:
        assert "\n" not in str(exc) and name in str(exc)


_cell = st.one_of(st.integers(-3, 50).map(str), st.just(""), st.just("x"), st.just("1.5"), st.just("nan"))


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(st.tuples(st.sampled_from(["2023-01-01", "2023-01-02", "2023-01-03", "c. 1910", ""]),
                               _cell, _cell), min_size=1, max_size=15))
def test_random_counts_rows_keep_not_counted_apart(write, rows):
    text = "Date,LP,Hybrid\n" + "\n".join(",".join(r) for r in rows) + "\n"
    try:
        res = read(write("c.csv", text))
    except DegasError:
        return
    for r in res.records:
        v = r.data["value"].to_numpy()
        ok = np.isfinite(v)
        assert (v[ok] >= 0).all() and (v[ok] == np.round(v[ok])).all()


def test_band_names_alone_are_not_taken_for_counts(write):
    text = "time,HF (counts),LF (counts)\n2023-01-01 00:00,120,340\n"
    with pytest.raises(DegasError):  # amplitude bands: not guessed as VT/LP counts
        read(write("bands.csv", text))
    res = read(write("bands2.csv", text), ReadOptions(kind="event_counts"))
    assert {r.meta.quantity for r in res.records} == {"vt_events", "lp_events"}


def test_uncertainty_columns_reach_the_aligned_table_the_budget_reads():
    from degas.align import align

    q = _by_quantity(read(DATA / "flux_three_species.csv"))
    al = align({"so2": q["so2_flux"]}, "1D")
    assert al.frame["so2_uncertainty"].tolist() == pytest.approx([30 * T_D, 31 * T_D, 29 * T_D])


def test_sheet_all_reject_rows_name_one_sheet(tmp_path):
    # review: with --sheet all both sheets' rows were numbered from 2, so "rejected years.xlsx:3" could be
    # either sheet; rows of later sheets are now numbered on, and a note gives the shift
    import openpyxl

    wb = openpyxl.Workbook()
    wb.active.title = "2019"
    wb.active.append(["Date", "SO2 flux (t/d)"])
    wb.active.append([pd.Timestamp("2019-12-30").to_pydatetime(), 100.0])
    wb.active.append([pd.Timestamp("2019-12-31").to_pydatetime(), "bad"])
    ws = wb.create_sheet("2020")
    ws.append(["Date", "SO2 flux (t/d)"])
    ws.append([pd.Timestamp("2020-01-01").to_pydatetime(), "worse"])
    wb.save(tmp_path / "years.xlsx")
    res = read(tmp_path / "years.xlsx", ReadOptions(sheet="all", species="SO2"))
    assert sorted(res.rejects["line"].tolist()) == [3, 5]  # 2019 row 3; 2020 row 2 -> 2 + 3
    assert any("sheet '2020' row N is row N+3" in n for n in res.notes)


def test_counts_total_is_unknown_not_zero_when_no_bin_was_fully_counted(tmp_path, capsys):
    """A class left uncounted every day makes the total unknown ("-"), never "0 events" (review of issue 11)."""
    import json

    from degas.cli import main  # noqa: F401  (registers every command)
    from degas.cli._app import run

    f = tmp_path / "counts_gappy.csv"
    f.write_text("Date,VT,LP\n2023-02-01,2,\n2023-02-02,3,\n2023-02-03,1,\n", encoding="utf-8")
    out = tmp_path / "q.json"
    assert run(["quakes", str(f), "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "every class shown was counted" in text
    total = json.loads(out.read_text())["classes"]["total"]
    assert total["events"] is None and total["bins_counted"] == 0
