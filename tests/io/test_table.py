"""The tabular reader: column detection, units, times, and every kind of bad row."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from degas.errors import DegasError, InputError
from degas.io import detect_format, read
from degas.io.base import ReadOptions
from degas.io.columns import split_header

FLUX = """# station: VLM-N
# instrument: scanning spectrometer
Date/Time,SO2 flux (t/d),flux error (t/d),QC flag
2023-05-01T07:15:00-05:00,1200,300,good
2023-05-01T07:30:00-05:00,864,86.4,cloud
"""


def test_flux_csv_with_preamble_offsets_and_header_units(write):
    res = read(write("f.csv", FLUX))
    (ts,) = res.records
    assert ts.meta.kind == "gas_flux" and ts.meta.species == "SO2" and ts.meta.station == "VLM-N"
    assert ts.meta.unit == "kg/s" and ts.meta.display_unit == "t/d"
    # t/d -> kg/s: divide by 86.4 exactly (BIPM SI Brochure 2019)
    assert ts.data["value"].tolist() == pytest.approx([1200 / 86.4, 10.0])
    assert ts.data["uncertainty"].tolist() == pytest.approx([300 / 86.4, 1.0])
    assert ts.data["time"].iloc[0] == pd.Timestamp("2023-05-01 12:15", tz="UTC")
    assert ts.data["quality"].tolist() == ["good", "cloud"]
    prov = ts.provenance[0]
    assert prov.reader == "table/delimited" and len(prov.sha256) == 64 and prov.original_unit == "t/d"
    assert prov.rows_accepted == 2 and prov.rows_rejected == 0


@pytest.mark.parametrize("delim", [",", ";", "\t", "|"])
def test_delimiters(write, delim):
    text = delim.join(["time", "so2_kg_s"]) + "\n" + delim.join(["2024-01-01T00:00Z", "2.5"]) + "\n"
    (ts,) = read(write("x.txt", text)).records
    assert ts.data["value"].tolist() == [2.5]


@pytest.mark.parametrize(
    "header,unit,factor",
    [("SO2 flux [kg s-1]", "kg s-1", 1.0), ("so2_kg_s", "kg/s", 1.0), ("flux_tpd", "t/d", 1 / 86.4),
     ("SO2 emission (Mg/d)", "Mg/d", 1 / 86.4), ("SO2 (g/s)", "g/s", 1e-3)],
)
def test_header_unit_spellings(write, header, unit, factor):
    (ts,) = read(write("x.csv", f"datetime (UTC),{header}\n2024-01-01 00:00,100\n"),
                 ReadOptions(species="SO2")).records
    assert ts.data["value"].iloc[0] == pytest.approx(100 * factor)
    assert ts.provenance[0].original_unit == unit


def test_explicit_mapping_overrides_detection(write):
    text = "when,amount,junk\n2024-01-01 00:00,5,1\n2024-01-02 00:00,6,1\n"
    opts = ReadOptions(kind="gas_flux", species="CO2", columns={"time": "when", "value": "amount"},
                       units={"value": "t/d"})
    (ts,) = read(write("x.csv", text), opts).records
    assert ts.meta.quantity == "co2_flux"
    assert ts.data["value"].tolist() == pytest.approx([5 / 86.4, 6 / 86.4])


def test_flux_without_unit_is_an_error_naming_the_column(write):
    with pytest.raises(InputError, match="no unit for column 'SO2 flux'"):
        read(write("x.csv", "time,SO2 flux\n2024-01-01,1\n"))


def test_unknown_unit_lists_spellings(write):
    with pytest.raises(InputError, match="accepted spellings"):
        read(write("x.csv", "time,SO2 flux (blorps)\n2024-01-01,1\n"))


def test_naive_times_assumed_utc_and_recorded(write):
    res = read(write("x.csv", "time,SO2 flux (t/d)\n2024-01-01 10:00,1\n"))
    assert any("UTC" in a for a in res.records[0].provenance[0].assumptions)
    assert any("UTC" in n for n in res.notes)


def test_dayfirst_semicolon_kg_s_with_decimal_comma(write):
    text = "fecha_hora;SO2_kg_s;err_kg_s;calidad\n03/04/2024 10:00;1,5;0,2;ok\n"
    (ts,) = read(write("x.txt", text), ReadOptions(dayfirst=True, timezone="UTC", species="SO2")).records
    assert ts.data["time"].iloc[0] == pd.Timestamp("2024-04-03 10:00", tz="UTC")
    assert ts.data["value"].iloc[0] == pytest.approx(1.5)
    assert ts.data["uncertainty"].iloc[0] == pytest.approx(0.2)


BAD = """time,SO2 flux (t/d)
2024-01-01T00:00Z,100
not-a-time,100
,100
2024-01-01T03:00Z,abc
2024-01-01T04:00Z,NaN
2024-01-01T05:00Z,inf
2024-01-01T06:00Z,-5
2024-01-01T07:00Z,-999
2024-01-01T08:00Z,100,extra
2024-01-01T00:00Z,100
2024-01-01T00:00Z,200
2024-01-01T09:00Z,
2024-01-01T10:00Z,120
2024-01-01T02:00Z,150
"""


def test_every_rejected_row_has_file_line_column_and_reason(write):
    res = read(write("bad.csv", BAD))
    rej = res.rejects.set_index("line")
    expect = {3: "unparseable time", 4: "missing time", 5: "not a number", 6: "missing value (NaN)",
              7: "infinite value", 8: "negative value", 9: "missing-value code -999",
              10: "wrong number of fields", 11: "duplicate of line 2", 12: "different value than line 2",
              13: "missing value"}
    for line, reason in expect.items():
        assert reason in rej.loc[line, "reason"], (line, rej.loc[line, "reason"])
    assert set(rej.index) == set(expect)
    assert (res.rejects["file"] == "bad.csv").all()
    (ts,) = res.records
    # the unsorted row (line 15) was kept and sorted into place, and the sort was reported
    assert ts.data["value"].tolist() == pytest.approx([100 / 86.4, 150 / 86.4, 120 / 86.4])
    assert ts.data["time"].is_monotonic_increasing
    assert any("out of time order" in n for n in res.notes)


def test_negative_flux_kept_when_allowed(write):
    (ts,) = read(write("x.csv", "time,SO2 flux (t/d)\n2024-01-01,-5\n"), ReadOptions(allow_negative=True)).records
    assert ts.data["value"].iloc[0] < 0


@pytest.mark.parametrize(
    "content,message",
    [("", "empty file"), ("# only a comment\n", "only comments"), ("time,SO2 flux (t/d)\n", "no data rows"),
     (b"\x00\x01\x02binary\xff\xfe", "not a format degas reads")],
)
def test_empty_header_only_and_binary_files(write, content, message):
    with pytest.raises(DegasError, match=message):
        read(write("x.csv", content))


def test_wrong_kind_of_file(write):
    with pytest.raises(InputError, match="not an eruption chronology"):
        read(write("x.csv", FLUX), ReadOptions(kind="chronology"))
    with pytest.raises(InputError):
        read(write("x.csv", "a,b\n1,2\n"))


def test_station_column_splits_series(write):
    text = "time,station,SO2 flux (t/d)\n2024-01-01,A,1\n2024-01-01,B,2\n2024-01-02,A,3\n"
    recs = read(write("x.csv", text)).records
    assert sorted((r.meta.station, len(r)) for r in recs) == [("A", 2), ("B", 1)]


def test_gas_ratio_molar_and_mass(write):
    (ts,) = read(write("r.csv", "Date,CO2/SO2 (molar),1 sigma\n2024-01-01,2.0,0.1\n")).records
    assert ts.meta.kind == "gas_ratio" and ts.meta.unit == "mol/mol" and ts.data["value"].iloc[0] == 2.0
    (ts,) = read(write("m.csv", "Date,CO2/SO2 mass ratio\n2024-01-01,1.0\n")).records
    # mass -> molar: × M(SO2)/M(CO2) = 64.058/44.009 = 1.455566 (IUPAC 2021 standard atomic weights,
    # Prohaska et al. 2022; derived value in the shared reference sheet)
    assert ts.data["value"].iloc[0] == pytest.approx(1.455566, rel=1e-5)


def test_bulk_volume_converted_with_stated_vesicularity(write):
    text = ("# vesicularity: 0.3\n# volume basis: bulk\n"
            "survey date,cumulative volume (Mm3),uncertainty (Mm3)\n2024-01-01,1.0,0.1\n2024-02-01,2.0,0.1\n")
    res = read(write("v.csv", text))
    (ts,) = res.records
    # V_DRE = V_bulk (1 - φ): 1e6 m³ bulk at 30 % vesicularity -> 7.0e5 m³ DRE (shared reference sheet §6.3)
    assert ts.data["value"].tolist() == pytest.approx([7.0e5, 1.4e6])
    assert ts.meta.volume_basis == "dre"
    assert any("vesicularity 0.3" in a for a in ts.provenance[0].assumptions)


def test_bulk_volume_without_conversion_stays_bulk_and_says_so(write):
    res = read(write("v.csv", "date,\"cumulative volume (Mm3, bulk)\"\n2024-01-01,1.0\n"))
    (ts,) = res.records
    assert ts.meta.volume_basis == "bulk"
    assert ts.data["value"].iloc[0] == pytest.approx(1e6)
    assert any("BULK" in n for n in res.notes)


def test_bulk_volume_with_densities(write):
    text = "date,\"cumulative volume (Mm3, bulk)\"\n2024-01-01,1.0\n"
    (ts,) = read(write("v.csv", text), ReadOptions(bulk_density=1600, dense_density=2600)).records
    # 1.0e6 m³ bulk at 1600 kg/m³ -> 6.154e5 m³ DRE at 2600 kg/m³ (shared reference sheet §6.3)
    assert ts.data["value"].iloc[0] == pytest.approx(6.1538e5, rel=1e-4)


def test_extrusion_rate_intervals(write):
    text = "start,end,extrusion rate (m3/s DRE)\n2024-01-01,2024-01-11,3.0\n2024-01-11,2024-01-21,2.0\n"
    (ts,) = read(write("e.csv", text), ReadOptions(kind="extrusion_rate")).records
    assert ts.is_interval and ts.meta.volume_basis == "dre"
    assert ts.data["end"].iloc[0] == pd.Timestamp("2024-01-11", tz="UTC")


def test_chronology(write):
    text = ("start,end,activity,style,remarks\n2023-01-01,2023-05-01,pause,,quiet\n"
            "2023-05-01,2023-12-01,eruptive,effusive,\"dome growth, slow\"\n2023-12-01,,repose,,open\n")
    (ch,) = read(write("c.csv", text)).records
    assert ch.meta.kind == "chronology"
    assert ch.data["state"].tolist() == ["pause", "eruptive", "pause"]
    assert ch.data["style"].tolist() == ["unknown", "effusive", "unknown"]
    assert pd.isna(ch.data["end"].iloc[-1])  # open end allowed
    assert ch.data["note"].iloc[1] == "dome growth, slow"


def test_amplitude_series_keeps_its_unit(write):
    (ts,) = read(write("r.csv", "time,RSAM (counts)\n2024-01-01T00:00Z,120\n")).records
    assert ts.meta.kind == "amplitude" and ts.meta.unit == "counts"


def test_excel_with_title_row(tmp_path):
    p = tmp_path / "r.xlsx"
    df = pd.DataFrame({"Date": pd.to_datetime(["2024-01-01", "2024-01-08"]), "CO2/SO2 (molar)": [1.5, 2.0],
                       "1 sigma": [0.1, 0.2]})
    with pd.ExcelWriter(p) as xw:
        pd.DataFrame([["Multi-gas station weekly ratios"]]).to_excel(xw, header=False, index=False)
        df.to_excel(xw, startrow=2, index=False)
    assert detect_format(p).name == "table/excel"
    (ts,) = read(p).records
    assert ts.data["value"].tolist() == [1.5, 2.0]
    assert ts.data["time"].iloc[1] == pd.Timestamp("2024-01-08", tz="UTC")


def test_parquet(tmp_path):
    p = tmp_path / "f.parquet"
    pd.DataFrame({"time": pd.date_range("2024-01-01", periods=3, freq="D", tz="UTC"),
                  "SO2 flux (t/d)": [86.4, 172.8, 0.0]}).to_parquet(p)
    assert detect_format(p).name == "table/parquet"
    (ts,) = read(p).records
    assert ts.data["value"].tolist() == pytest.approx([1.0, 2.0, 0.0])


@pytest.mark.parametrize(
    "header,name,unit",
    [("SO2 flux (t/d)", "so2 flux", "t/d"), ("SO2 flux [kg s-1]", "so2 flux", "kg s-1"),
     ("so2_kg_s", "so2", "kg/s"), ("datetime (UTC)", "datetime", None), ("Extrusion rate (m3/s DRE)",
                                                                        "extrusion rate", "m3/s")],
)
def test_split_header(header, name, unit):
    h = split_header(header)
    assert (h.name, h.unit) == (name, unit)


# ----------------------------------------------------------------- property-based: random rows, corruptions

_cells = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.text(alphabet=st.characters(blacklist_categories=("Cs",), blacklist_characters="\r\n,\"\x00"), max_size=12),
    st.sampled_from(["", "NaN", "-999", "2024-01-01T00:00Z", "1e309", "—", "0x10"]),
)


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(st.tuples(_cells, _cells, _cells), max_size=25))
def test_random_rows_give_records_or_a_clean_error(write, rows):
    text = "time,SO2 flux (t/d),flag\n" + "\n".join(",".join(r) for r in rows) + "\n"
    path = write("rand.csv", text)
    try:
        res = read(path)
    except DegasError:
        return
    n_data = sum(1 for r in rows if any(c.strip() for c in r))
    accepted = sum(len(r) for r in res.records)
    assert accepted + len(res.rejects) >= n_data - sum(1 for r in rows if ",".join(r).lstrip().startswith("#"))
    for r in res.records:
        assert np.isfinite(r.data["value"]).all() and (r.data["value"] >= 0).all()
        assert r.data["time"].is_monotonic_increasing


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(cut=st.integers(0, 400), junk=st.binary(max_size=40), pos=st.integers(0, 400))
def test_corrupted_files_never_raise_anything_but_degas_errors(write, cut, junk, pos):
    raw = (FLUX * 3).encode()
    data = raw[:pos] + junk + raw[pos:cut + pos]
    path = write("c.csv", data)
    try:
        read(path)
    except DegasError:
        pass


def test_catalogue_csv_with_local_codes(write):
    text = ("origin time (UTC),type,Md,depth (km),lat,lon\n"
            "2024-01-01 00:30:00,Hyb,0.8,2.0,1.2,102.3\n"
            "2024-01-01 00:10:00,VT,1.2,3.5,1.2,102.3\n"
            "2024-01-01 00:20:00,lp,,,,\n"
            "2024-01-01 00:50:00,RF,,,,\n"
            "2024-01-01 00:55:00,VT,abc,1,1,1\n")
    res = read(write("cat.csv", text), ReadOptions(class_map={"Hyb": "hybrid"}))
    (cat,) = res.records
    d = cat.data
    assert cat.meta.kind == "seismic_catalog"
    assert d["event_class"].tolist() == ["VT", "LP", "hybrid", "rockfall"]
    assert d["source_type"].tolist() == ["VT", "lp", "Hyb", "RF"]
    assert d["depth_m"].iloc[0] == pytest.approx(3500.0)  # km -> m
    assert d["magnitude_type"].iloc[0] == "Md"  # magnitude type taken from the header "Md"
    assert pd.isna(d["magnitude"].iloc[1]) and pd.isna(d["magnitude_type"].iloc[1])
    assert d["time"].is_monotonic_increasing and d["event_id"].is_unique
    assert any("without magnitude" in n for n in res.notes)
    assert res.rejects.iloc[0]["line"] == 6 and "not a number" in res.rejects.iloc[0]["reason"]


def test_thousands_separator_in_a_comma_file_is_not_a_decimal_comma(write):
    res = read(write("x.csv", 'time,SO2 flux (t/d)\n2024-01-01T00:00Z,"1,250"\n2024-01-02T00:00Z,900\n'))
    (ts,) = res.records
    assert ts.data["value"].tolist() == pytest.approx([900 / 86.4])
    assert "not a number" in res.rejects.iloc[0]["reason"]


def test_utc_offset_stated_in_the_preamble(write):
    res = read(write("x.csv", "# times: local time (UTC-05:00)\ntime,SO2 flux (t/d)\n2024-01-01 07:00,1\n"))
    (ts,) = res.records
    assert ts.data["time"].iloc[0] == pd.Timestamp("2024-01-01 12:00", tz="UTC")
    assert any("-05:00" in a for a in ts.provenance[0].assumptions)
    (ts,) = read(write("y.csv", "# times: UTC\ntime,SO2 flux (t/d)\n2024-01-01 07:00,1\n")).records
    assert ts.data["time"].iloc[0] == pd.Timestamp("2024-01-01 07:00", tz="UTC")


def test_daylight_saving_gaps_are_rejected_with_the_reason(write):
    # 2024-03-31 02:30 does not exist in Central European time (clocks jump from 02:00 to 03:00)
    text = "time,SO2 flux (t/d)\n2024-03-31 01:30,1\n2024-03-31 02:30,2\n2024-03-31 03:30,3\n"
    res = read(write("x.csv", text), ReadOptions(timezone="Europe/Berlin"))
    assert len(res.records[0]) == 2
    assert "daylight-saving" in res.rejects.iloc[0]["reason"] and res.rejects.iloc[0]["line"] == 3


def test_bad_strftime_pattern_is_a_clean_error(write):
    with pytest.raises(InputError, match="cannot read times with format"):
        read(write("x.csv", "time,SO2 flux (t/d)\n2024-01-01,1\n"), ReadOptions(time_format="%Q"))


def test_real_9999_values_are_kept(write):
    (ts,) = read(write("r.csv", "time,RSAM (counts)\n2024-01-01T00:00Z,9999\n")).records
    assert ts.data["value"].tolist() == [9999.0]


@pytest.mark.filterwarnings("ignore::pytest.PytestUnraisableExceptionWarning")  # pyarrow's first, UTF-8 pass
def test_invalid_utf8_after_the_sniffed_head_rejects_one_row_not_the_file(write):
    good = "".join(f"2024-01-01T{h:02d}:{m:02d}Z,{h + m}\n" for h in range(24) for m in range(60))
    data = ("time,SO2 flux (t/d)\n" + good * 3).encode() + b"2024-01-05T00:00Z,\xc5\xff,7\n" + b"2024-01-06T00:00Z,5\n"
    assert len(data) > 64 * 1024
    res = read(write("x.csv", data))
    assert len(res.rejects) >= 1 and sum(len(r) for r in res.records) == 1441
