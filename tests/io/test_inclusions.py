"""Melt-inclusion tables (kind melt_inclusions): units, aliases, rejects with reasons, Excel, archive round trip."""

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
from degas.model import MeltInclusions
from degas.store import Archive

DATA = Path(__file__).parents[1] / "data" / "melt_inclusions"


def test_good_file_units_and_roles():
    res = read(DATA / "inclusions_good.csv")
    (rec,) = res.records
    assert isinstance(rec, MeltInclusions) and rec.meta.kind == "melt_inclusions"
    d = rec.data
    assert len(d) == 4 and res.rejects.empty
    # wt% -> kg/kg x 0.01; ppm, µg/g and mg/kg -> x 1e-6 (SI mass fractions)
    assert d["h2o_frac"].tolist() == pytest.approx([0.048, 0.051, 0.003, 0.021])
    assert d["co2_frac"].iloc[0] == pytest.approx(620e-6) and np.isnan(d["co2_frac"].iloc[2])
    assert d["s_frac"].iloc[0] == pytest.approx(310e-6) and d["cl_frac"].iloc[0] == pytest.approx(1800e-6)
    assert d["h2o_sd_frac"].iloc[0] == pytest.approx(0.002) and d["co2_sd_frac"].iloc[0] == pytest.approx(40e-6)
    assert d["analysis_type"].tolist() == ["inclusion", "inclusion", "matrix_glass", "embayment"]
    assert d["phase"].tolist() == ["phase 1", "phase 1", "phase 1", "phase 2"]
    assert d["sio2_frac"].iloc[0] == pytest.approx(0.761) and d["feo_frac"].iloc[0] == pytest.approx(0.009)
    assert d["time"].iloc[3] == pd.Timestamp("2024-06-02", tz="UTC")
    assert d["analysis_id"].iloc[0] == "VM-01/1"


def test_awkward_file_rejects_with_reasons():
    res = read(DATA / "inclusions_awkward.csv")
    (rec,) = res.records
    assert rec.data["sample_id"].tolist() == ["A1", "A6"]
    # decimal commas in a semicolon file; the 1-sigma column takes the unit of its value column
    assert rec.data["h2o_frac"].iloc[0] == pytest.approx(0.045)
    assert rec.data["h2o_sd_frac"].iloc[0] == pytest.approx(0.002)
    reasons = dict(zip(res.rejects["line"], res.rejects["reason"], strict=True))
    assert reasons[3] == "negative H2O"
    assert "above 15 wt%" in reasons[4]
    assert "oxide total 70 wt%" in reasons[5]
    assert "unknown analysis type" in reasons[6]
    assert reasons[8] == "S is not a number"
    assert any("no eruption dates" in n for n in res.notes)


def test_phase_or_date_needed_and_explicit_kind(write):
    with pytest.raises(InputError, match="neither an eruption date nor a phase"):
        read(write("x.csv", "sample,type,H2O (wt%),CO2 (ppm)\nA,MI,4,100\n"))
    res = read(write("y.csv", "sample,phase,H2O (wt%),CO2 (ppm)\nA,p1,4,100\nB,,4,100\n"),
               ReadOptions(kind="melt_inclusions"))
    assert len(res.records[0].data) == 1 and "no phase" in res.rejects["reason"].iloc[0]


def test_unknown_unit_names_accepted_spellings(write):
    with pytest.raises(InputError, match="accepted: wt%, ppm"):
        read(write("z.csv", "sample,phase,H2O (furlongs),CO2 (ppm)\nA,p1,4,100\n"))


def test_so3_converted_to_s(write):
    res = read(write("so3.csv", "sample,phase,type,H2O (wt%),SO3 (wt%)\nA,p1,MI,4,0.1\n"))
    # S = SO3 x 32.06/80.057 (IUPAC atomic weights; REFERENCES §1.1)
    assert res.records[0].data["s_frac"].iloc[0] == pytest.approx(0.001 * 32.06 / 80.057, rel=1e-4)


def test_excel_and_archive_round_trip(tmp_path):
    src = pd.read_csv(DATA / "inclusions_good.csv", comment="#")
    xlsx = tmp_path / "mi.xlsx"
    src.to_excel(xlsx, index=False)
    res = read(xlsx)
    assert len(res.records[0].data) == 4 and res.records[0].data["co2_frac"].iloc[1] == pytest.approx(700e-6)
    arc = Archive.create(tmp_path / "arc")
    arc.ingest_file(DATA / "inclusions_good.csv")
    (entry,) = arc.find(kind="melt_inclusions")
    back = arc.load(entry.series_id)
    assert isinstance(back, MeltInclusions)
    pd.testing.assert_frame_equal(back.data, read(DATA / "inclusions_good.csv").records[0].data, check_dtype=False)
    again = arc.ingest_file(DATA / "inclusions_good.csv")  # same file again: nothing new
    assert len(arc.load(entry.series_id).data) == 4 and again is not None


_cells = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.text(alphabet=st.characters(blacklist_categories=("Cs",), blacklist_characters="\r\n,\"\x00"), max_size=10),
    st.sampled_from(["", "NaN", "-1", "16", "MI", "matrix", "2024-01-01", "p1"]),
)


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(st.tuples(_cells, _cells, _cells, _cells, _cells), max_size=20))
def test_random_rows_give_inclusions_or_a_clean_error(write, rows):
    text = "sample,phase,type,H2O (wt%),CO2 (ppm)\n" + "\n".join(",".join(r) for r in rows) + "\n"
    try:
        res = read(write("rand.csv", text), ReadOptions(kind="melt_inclusions"))
    except DegasError:
        return
    for r in res.records:
        d = r.data
        h = d["h2o_frac"].dropna()
        assert ((h >= 0) & (h <= 0.15)).all() and (d["co2_frac"].dropna() >= 0).all()
        assert d["analysis_type"].isin(["inclusion", "matrix_glass", "embayment"]).all()
        assert d["analysis_id"].is_unique


def test_bare_unit_headers_and_two_sigma_columns(tmp_path):
    # review: "H2O wt%" (unit without brackets) was not recognised, so H2O was silently dropped; "S wt%" must
    # not be read as ppm; a 2-sigma column is halved to the 1-sigma the analysis uses.
    f = tmp_path / "mi.csv"
    f.write_text("Sample,Phase,Type,H2O wt%,H2O 2σ,CO2 mg/kg,CO2 2sd,S wt%,SiO2 wt%\n"
                 "Q1,one,MI,4.0,0.4,500,60,0.03,75.0\n"
                 "Q2,one,matrix glass,0.2,0.04,,,0.005,76.0\n", encoding="utf-8")
    res = read(f, ReadOptions(kind="melt_inclusions"))
    d = res.records[0].data
    assert d["h2o_frac"].tolist() == pytest.approx([0.04, 0.002])
    assert d["h2o_sd_frac"].tolist() == pytest.approx([0.002, 0.0002])
    assert d["co2_frac"].iloc[0] == pytest.approx(500e-6) and d["co2_sd_frac"].iloc[0] == pytest.approx(30e-6)
    assert d["s_frac"].tolist() == pytest.approx([300e-6, 50e-6])
    assert d["sio2_frac"].iloc[0] == pytest.approx(0.75)
    assert any("2-sigma" in n for n in res.notes)


def test_analysis_type_column_found_by_its_cells(tmp_path):
    # review: a header like "Analysis" was not recognised, so matrix glass was taken as melt inclusions
    f = tmp_path / "mi.csv"
    f.write_text("Sample,Phase,Analysis,H2O (wt%),CO2 (ppm),S (ppm)\n"
                 "Q1,one,MI,4.0,500,300\nQ2,one,matrix glass,0.2,,50\nQ3,one,MI,4.2,520,310\n", encoding="utf-8")
    res = read(f, ReadOptions(kind="melt_inclusions"))
    assert res.records[0].data["analysis_type"].tolist() == ["inclusion", "matrix_glass", "inclusion"]
    assert any("'Analysis' read as the analysis type" in n for n in res.notes)


def test_a_malformed_line_in_a_dated_table_is_one_reject_not_a_crash(tmp_path):
    # review: the loader's "wrong number of fields" rows were looked up again among the parsed lines (IndexError)
    f = tmp_path / "mi_dated.csv"
    f.write_text("Sample,Spot,Phase,Eruption date,Type,H2O (wt%),CO2 (ppm),S (ppm)\n"
                 "VM-01,1,phase 1,2024-03-10,MI,4.8,620,310\n"
                 "VM-01,2,phase 1,2024-03-10,MI,5.1,700,290,EXTRA\n"
                 "VM-02,1,phase 1,2024-03-11,matrix glass,0.2,15,60\n", encoding="utf-8")
    res = read(f, ReadOptions(kind="melt_inclusions"))
    assert len(res.records[0].data) == 2
    assert res.n_rejected == 1 and (res.rejects["line"] == 3).sum() == 1


def test_workbook_notes_reach_an_inclusion_table(tmp_path):
    """The loader's notes (sheet read, values under an empty header) were lost on the inclusion path."""
    from openpyxl import Workbook

    wb = Workbook()
    wb.active.title = "glass"
    for row in (["sample", "phase", "H2O (wt%)", "CO2 (ppm)", None], ["A1", "p1", 4.1, 600, "x"],
                ["A2", "p1", 3.9, 580, None]):
        wb.active.append(row)
    wb.create_sheet("notes").append(["text", "more"])
    wb.save(tmp_path / "mi.xlsx")
    res = read(tmp_path / "mi.xlsx")
    assert len(res.records[0].data) == 2
    assert any("read sheet 'glass'" in n for n in res.notes)
    assert any("sheet 'glass' column E has 1 value(s) under an empty header" in n for n in res.notes)


def test_duplicate_analyses_are_rejected_with_file_line_and_whether_they_differ(write):
    """Duplicates go through the tables' shared duplicate check: the first row of an id is kept, each later one
    is a reject naming its line and the line it repeats."""
    res = read(write("mi.csv", "sample,spot,phase,host,H2O (wt%),CO2 (ppm)\n"
                               "A1,1,p1,,4.1,600\nA1,2,p1,,3.9,580\nA1,1,p1,,4.1,600\nA1,2,p1,,3.8,580\n"
                               "A1,2,p1,ol,3.9,580\n"))
    d = res.records[0].data
    assert d["analysis_id"].tolist() == ["A1/1", "A1/2"] and d["h2o_frac"].tolist() == pytest.approx([0.041, 0.039])
    rej = res.rejects
    assert rej["file"].unique().tolist() == ["mi.csv"] and rej["column"].unique().tolist() == ["spot"]
    assert dict(zip(rej["line"], rej["reason"], strict=True)) == {
        4: "duplicate of line 2",
        5: "duplicate analysis id with a different value than line 3",
        6: "duplicate analysis id with a different value than line 3"}
    assert rej["raw"].tolist() == ["A1/1", "A1/2", "A1/2"]
