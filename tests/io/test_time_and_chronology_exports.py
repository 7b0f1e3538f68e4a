"""Odd time bases, chronologies with points and open ends, and survey checks (hand-written files)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from degas.errors import InputError
from degas.io import read
from degas.io.base import ReadOptions
from degas.io.mapping import options_from_dict

DATA = Path(__file__).resolve().parents[1] / "data" / "exports"


# --------------------------------------------------------------------------- time bases


@pytest.mark.parametrize("unit,expected", [("D", "2024-01-02 12:00"), ("h", "2024-01-01 01:30"),
                                           ("s", "2024-01-01 00:00:01.5")])
def test_numbers_from_a_stated_origin(write, unit, expected):
    path = write("d.csv", "day,SO2 flux (t/d)\n0,100\n1.5,120\nx,3\n")
    res = read(path, ReadOptions(time_origin="2024-01-01", time_unit=unit, species="SO2"))
    (ts,) = res.records
    assert ts.data["time"].tolist() == [pd.Timestamp("2024-01-01", tz="UTC"), pd.Timestamp(expected, tz="UTC")]
    assert res.rejects[["line", "reason"]].values.tolist() == [[4, f"not a number of {unit} from the time origin"]]


def test_small_numbers_are_never_guessed(write):
    with pytest.raises(InputError, match=r"--time-origin DATE --time-unit"):
        read(write("d.csv", "day,SO2 flux (t/d)\n0,100\n1.5,120\n"))


@pytest.mark.parametrize("header", ["seconds", "hours", "days", "day number"])
def test_elapsed_counts_in_the_excel_range_are_not_read_as_dates(write, header):
    # review: "seconds" 20000-27200 were read as Excel serial days (1954) with only a note
    with pytest.raises(InputError, match=r"elapsed time .* --time-origin DATE --time-unit"):
        read(write("s.csv", f"{header},SO2 flux (t/d)\n20000,100\n23600,110\n"))
    (ts,) = read(write("s2.csv", "seconds,SO2 flux (t/d)\n20000,100\n"),
                 ReadOptions(time_origin="2024-01-01", time_unit="s")).records
    assert ts.data["time"].iloc[0] == pd.Timestamp("2024-01-01 05:33:20", tz="UTC")
    (ex,) = read(write("e.csv", "date,SO2 flux (t/d)\n45292,100\n")).records  # a plain date header: Excel
    assert ex.data["time"].iloc[0] == pd.Timestamp("2024-01-01", tz="UTC")


def test_decimal_years_only_when_the_header_says_year(write):
    with pytest.raises(InputError, match="look like years but the header does not say so"):
        read(write("y.csv", "t,SO2 flux (t/d)\n2001.5,100\n2002.5,120\n"))
    (ts,) = read(write("y2.csv", "decimal year,SO2 flux (t/d)\n2001.5,100\n")).records
    # 2001 has 365 days: 0.5 year = 182.5 days after 1 January (the fraction is of that calendar year)
    assert ts.data["time"].iloc[0] == pd.Timestamp("2001-07-02 12:00", tz="UTC")


def test_matlab_datenum(write):
    # MATLAB: datenum(1970,1,1) = 719529 (MathWorks documentation; = Python ordinal 719163 + 366)
    (ts,) = read(write("m.csv", "datenum,SO2 flux (t/d)\n719529,1\n738887.25,2\n")).records
    assert ts.data["time"].tolist() == [pd.Timestamp("1970-01-01", tz="UTC"),
                                        pd.Timestamp("2023-01-01 06:00", tz="UTC")]
    (ts,) = read(write("m2.csv", "t,SO2 flux (t/d)\n719529.5,1\n"), ReadOptions(time_format="datenum")).records
    assert ts.data["time"].iloc[0] == pd.Timestamp("1970-01-01 12:00", tz="UTC")


def test_time_options_from_a_mapping_file():
    o = options_from_dict({"time_origin": "1995-01-01", "time_unit": "D", "accept_approximate_dates": True})
    assert (o.time_origin, o.time_unit, o.accept_approximate_dates) == ("1995-01-01", "D", True)
    with pytest.raises(Exception, match="time_unit must be"):
        options_from_dict({"time_unit": "weeks"})


# --------------------------------------------------------------------------- chronologies


def _chron(options: ReadOptions | None = None):
    res = read(DATA / "chronology_awkward.csv", options)
    return res, {c.meta.station: c.data for c in res.records}


def test_approximate_dates_rejected_row_by_row_with_the_reason():
    res, by_loc = _chron()
    reasons = dict(zip(res.rejects["raw"], res.rejects["reason"], strict=True))
    assert set(reasons) == {"1830s", "c. 1910"}
    assert all("approximate date" in r and "--accept-approximate-dates" in r for r in reasons.values())
    assert res.rejects["line"].tolist() == [2, 8]


def test_approximate_dates_kept_with_a_precision_flag():
    res, by_loc = _chron(ReadOptions(accept_approximate_dates=True))
    assert res.n_rejected == 0
    north = by_loc["North crater"]
    assert north["start"].iloc[0] == pd.Timestamp("1830-01-01", tz="UTC")
    assert north["note"].iloc[0].startswith("date precision: decade")
    south = by_loc["South vent"]
    assert "date precision: circa year" in south.loc[south["start"] == pd.Timestamp("1910-01-01", tz="UTC"),
                                                     "note"].iloc[0]


def test_start_without_end_is_a_point_event_unless_ongoing():
    res, by_loc = _chron()
    north = by_loc["North crater"].set_index("start")
    blast = north.loc[pd.Timestamp("1869-03-01", tz="UTC")]
    assert blast["end"] == pd.Timestamp("1869-03-01", tz="UTC") and blast["state"] == "eruptive"
    assert pd.isna(north.loc[pd.Timestamp("2001-05-05", tz="UTC"), "end"])  # "still going" in the note
    south = by_loc["South vent"].set_index("start")
    assert pd.isna(south.loc[pd.Timestamp("1950-02-01", tz="UTC"), "end"])  # 9999-12-31: open
    assert any("9999-12-31 read as open" in n for n in res.notes)
    assert any("point events" in n for n in res.notes)


def test_unknown_states_stay_unknown_and_a_state_map_decides():
    res, by_loc = _chron()
    north = by_loc["North crater"].set_index("start")
    assert north.loc[pd.Timestamp("1901-06-01", tz="UTC"), "state"] == "unknown"  # "unrest" is not eruptive
    assert any("'unrest' not understood" in n and "[state_map]" in n for n in res.notes)
    res, by_loc = _chron(ReadOptions(state_map={"unrest": "pause"}))
    assert by_loc["North crater"].set_index("start").loc[pd.Timestamp("1901-06-01", tz="UTC"), "state"] == "pause"


def test_state_words_match_whole_words(write):
    text = ("start,end,activity\n2020-01-01,2020-02-01,gas emission only\n2020-02-01,2020-03-01,no extrusion\n"
            "2020-03-01,2020-04-01,dome growth\n")
    (c,) = read(write("c.csv", text)).records
    assert c.data["state"].tolist() == ["unknown", "pause", "eruptive"]


def test_rows_that_differ_only_by_location_are_kept():
    res, by_loc = _chron()
    assert set(by_loc) == {"North crater", "South vent"}
    t = pd.Timestamp("1901-06-01", tz="UTC")
    assert (by_loc["North crater"]["start"] == t).sum() == 1 and (by_loc["South vent"]["start"] == t).sum() == 1
    assert not any("duplicate" in r for r in res.rejects["reason"])


def test_the_demo_chronology_keeps_its_open_last_phase():
    demo = Path(__file__).resolve().parents[2] / "demo_series" / "eruption_chronology.csv"
    (c,) = read(demo, ReadOptions(kind="chronology")).records
    assert c.data["end"].isna().sum() == 1 and pd.isna(c.data["end"].iloc[-1])
    ex = c.data[c.data["style"] == "explosive"]
    assert len(ex) == 1 and (ex["end"] > ex["start"]).all()


# --------------------------------------------------------------------------- surveys


def test_survey_decrease_rejected_and_out_of_order_named():
    res = read(DATA / "surveys_awkward.csv")
    (ts,) = res.records
    assert np.allclose(ts.data["value"], [1.0e6, 1.5e6, 1.7e6, 2.0e6])  # Mm³ -> m³
    assert res.rejects[["line", "reason"]].values.tolist() == [
        [5, "cumulative volume decreases from line 6 (a cumulative total cannot fall; check the survey)"]]
    assert any("line(s) 6 dated before an earlier row" in n for n in res.notes)


# --------------------------------------------------------------------------- catalogues


def test_quakeml_10_namespace_and_man_made_sources():
    res = read(DATA / "quakeml_10_man_made.xml")
    (cat,) = res.records
    assert cat.provenance[0].reader == "seismic_catalog/quakeml"
    assert cat.data["event_class"].tolist() == ["VT", "other", "other", "explosion"]
    assert cat.data["source_type"].tolist()[1:3] == ["anthropogenic event", "anthropogenic event"]
    note = next(n for n in res.notes if "man-made" in n)
    assert "1 explosion" in note and "1 quarry blast" in note


@pytest.mark.parametrize("positive,expected", [(None, [2500.0, -400.0]), ("up", [-2500.0, 400.0])])
def test_csv_depth_sign(positive, expected):
    res = read(DATA / "catalogue_etype.csv", ReadOptions(depth_positive=positive))
    (cat,) = res.records
    assert cat.data["depth_m"].tolist() == pytest.approx(expected)
    assert any("negative depth read as above the datum" in n for n in res.notes)
    if positive == "up":
        assert any("--depth-positive up" in n and "sign flipped" in n for n in res.notes)
        # review: after the flip the note still advised "use --depth-positive up", the option just given
        neg = next(n for n in res.notes if "negative depth" in n)
        assert "use --depth-positive up" not in neg
    else:
        assert any("negative depth" in n and "use --depth-positive up" in n for n in res.notes)


def test_approximate_dates_in_a_series(write):
    path = write("s.csv", "date,SO2 flux (t/d)\n2020-01-01,5\nEarly 2021,6\n")
    res = read(path)
    assert res.rejects["reason"].iloc[0].startswith("approximate date (early in the year)")
    (ts,) = read(path, ReadOptions(accept_approximate_dates=True)).records
    assert ts.data["time"].iloc[1] == pd.Timestamp("2021-01-01", tz="UTC")
    assert ts.data["quality"].tolist()[1] == "date precision: early in the year" and pd.isna(ts.data["quality"].iloc[0])
