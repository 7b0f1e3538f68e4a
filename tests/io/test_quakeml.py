"""QuakeML 1.2 reader (degas.io.quakeml).

Test files in tests/data/seismic_catalog/ are hand-written after the QuakeML BED 1.2 (2013)
structure summarised in REFERENCES.md section 4.1; the specification document itself was not
opened. Names (network XV, agency QXVO, "Demo Peak") are invented.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from defusedxml import EntitiesForbidden
from defusedxml.ElementTree import DefusedXMLParser
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from degas.errors import ConfigError, InputError
from degas.io import quakeml
from degas.io.base import REJECT_COLUMNS, ReadOptions, ReadResult, file_sha256
from degas.io.fdsn_text import read_fdsn_text
from degas.io.quakeml import is_quakeml, read_quakeml
from degas.model import EventCatalog
from tests.io.catalog_checks import check_catalog, head

DATA = Path(__file__).resolve().parent.parent / "data" / "seismic_catalog"
BASIC = DATA / "quakeml_basic.xml"
AWKWARD = DATA / "quakeml_awkward_bedrt.xml"



def _line_of(path: Path, needle: str) -> int:
    for n, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        if needle in line:
            return n
    raise AssertionError(needle)


# --- detection ------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["quakeml_basic.xml", "quakeml_awkward_bedrt.xml", "quakeml_truncated.xml"])
def test_is_quakeml_accepts_quakeml(name: str) -> None:
    p = DATA / name
    assert is_quakeml(head(p), p)


@pytest.mark.parametrize(
    "name", ["catalog_as_csv.csv", "not_quakeml_stationxml.xml", "fdsn_text_basic.txt", "fdsn_text_empty.txt"]
)
def test_is_quakeml_rejects_other_files(name: str) -> None:
    p = DATA / name
    assert not is_quakeml(head(p), p)


@pytest.mark.parametrize(
    "name",
    [
        "quakeml_hostile_billion_laughs.xml",
        "quakeml_hostile_external_dtd.xml",
        "quakeml_malformed_mismatched_tag.xml",
        "quakeml_no_events.xml",
    ],
)
def test_is_quakeml_accepts_documents_the_reader_must_refuse_itself(name: str) -> None:
    # detection says "QuakeML" so that read_quakeml gives the precise one-line refusal
    p = DATA / name
    assert is_quakeml(head(p), p)


def test_is_quakeml_looks_at_the_root_element_not_just_the_namespace() -> None:
    fake = b'<?xml version="1.0"?>\n<!-- converted from http://quakeml.org/xmlns/bed/1.2 -->\n<catalog/>'
    assert not is_quakeml(fake, Path("x.xml"))
    rt_root = b'<eventParameters xmlns="http://quakeml.org/xmlns/bed-rt/1.2" publicID="x">'
    assert is_quakeml(rt_root, Path("x.xml"))
    assert not is_quakeml(b"<quakeml>no namespace</quakeml>", Path("x.xml"))


@settings(max_examples=100, deadline=None)
@given(st.binary(max_size=300))
def test_is_quakeml_never_raises(head: bytes) -> None:
    assert is_quakeml(head, Path("x.xml")) in (True, False)


# --- the basic file -------------------------------------------------------------------------------


def test_basic_file() -> None:
    res = read_quakeml(BASIC, ReadOptions())
    assert isinstance(res, ReadResult)
    assert len(res.records) == 1
    cat = res.records[0]
    assert isinstance(cat, EventCatalog)
    check_catalog(cat)
    df = cat.data
    assert df["event_id"].tolist() == [
        "smi:xv.qxvo/event/qx2024aa02",
        "smi:xv.qxvo/event/qx2024aa01",
        "smi:xv.qxvo/event/qx2024aa03",
    ]  # sorted by time, not file order
    assert df["time"].iloc[0] == pd.Timestamp("2024-03-01T04:00:05.25Z")
    assert df["event_class"].tolist() == ["explosion", "VT", "rockfall"]
    assert df["source_type"].tolist() == ["explosion", "earthquake", "landslide"]
    # QuakeML depth is in metres (REFERENCES.md section 4.1: a published example gives 20000.0 for 20 km)
    assert df["depth_m"].tolist() == [500.0, 20000.0, 0.0]
    assert np.isnan(df["magnitude"].iloc[0])
    assert pd.isna(df["magnitude_type"].iloc[0])
    assert df["magnitude"].iloc[1] == 2.4 and df["magnitude_type"].iloc[1] == "ML"
    assert df["latitude_deg"].iloc[1] == 12.345 and df["longitude_deg"].iloc[1] == -45.678
    assert res.rejects.empty and list(res.rejects.columns) == list(REJECT_COLUMNS)
    assert f"{BASIC.name}: 1 event had no magnitude: counted, excluded from energy and b-value later" in res.notes

    assert cat.meta.kind == "seismic_catalog" and cat.meta.quantity == "events"
    assert cat.meta.station == "QXVO"  # eventParameters/creationInfo/agencyID
    (prov,) = cat.provenance
    assert prov.source_name == BASIC.name
    assert prov.sha256 == file_sha256(BASIC)
    assert prov.reader == "seismic_catalog/quakeml"
    assert (prov.rows_accepted, prov.rows_rejected) == (3, 0)
    assert any("'earthquake' read as VT" in a for a in prov.assumptions)
    assert prov.options == ()


def test_depth_20_km_agrees_with_fdsn_text() -> None:
    # 20 km: <depth><value>20000.0</value> in QuakeML, 20 in FDSN Depth/km (REFERENCES.md 4.1, a published example)
    q = read_quakeml(BASIC, ReadOptions()).records[0].data
    f = read_fdsn_text(DATA / "fdsn_text_basic.txt", ReadOptions()).records[0].data
    dq = q.loc[q["event_id"].str.endswith("qx2024aa01"), "depth_m"].item()
    df_ = f.loc[f["event_id"] == "qx2024aa01", "depth_m"].item()
    assert dq == df_ == 20000.0
    # same events, same times and depths in both files
    assert q["time"].tolist() == f["time"].tolist()
    np.testing.assert_allclose(q["depth_m"], f["depth_m"])


def test_options_station_class_map_and_magnitude_type() -> None:
    opts = ReadOptions(station="XV-TEST", class_map={"earthquake": "LP"}, magnitude_type="Md")
    res = read_quakeml(BASIC, opts)
    cat = res.records[0]
    assert cat.meta.station == "XV-TEST"
    assert cat.data["event_class"].tolist() == ["explosion", "LP", "rockfall"]
    assert cat.data["magnitude_type"].tolist() == ["Md", "ML", "Md"]
    assert dict(cat.provenance[0].options)["station"] == "XV-TEST"


def test_invalid_class_map_raises_config_error() -> None:
    with pytest.raises(ConfigError, match="valid classes"):
        read_quakeml(BASIC, ReadOptions(class_map={"earthquake": "quake"}))


# --- the awkward file -----------------------------------------------------------------------------


@pytest.fixture(scope="module")
def awkward() -> ReadResult:
    return read_quakeml(AWKWARD, ReadOptions())


def _row(res: ReadResult, suffix: str) -> pd.Series:
    df = res.records[0].data
    rows = df[df["event_id"].str.endswith(suffix)]
    assert len(rows) == 1, suffix
    return rows.iloc[0]


def test_awkward_bedrt_namespace_is_read(awkward: ReadResult) -> None:
    cat = awkward.records[0]
    check_catalog(cat)
    assert len(cat) == 5
    assert cat.provenance[0].rows_accepted == 5
    assert cat.provenance[0].rows_rejected == 3


def test_preferred_origin_and_magnitude_by_public_id(awkward: ReadResult) -> None:
    r = _row(awkward, "/two-origins")
    assert r["time"] == pd.Timestamp("2024-03-05T01:00:01.123456Z")  # second (preferred) origin, 6 digits
    assert r["depth_m"] == 3200.0  # foreign <obs:depth> ignored
    assert (r["latitude_deg"], r["longitude_deg"]) == (12.3456, -45.6789)
    assert r["magnitude"] == 1.7 and r["magnitude_type"] == "ML"  # not the stationMagnitude 9.9
    assert r["event_class"] == "VT" and r["source_type"] == "volcano-tectonic"


def test_missing_preferred_ids_use_first_origin(awkward: ReadResult) -> None:
    r = _row(awkward, "/no-preferred")
    assert r["time"] == pd.Timestamp("2024-03-04T23:59:59Z")  # no "Z" in the file: UTC
    assert r["event_class"] == "LP"  # a non-standard type string is accepted
    assert np.isnan(r["magnitude"])
    r = _row(awkward, "/unmatched")
    assert r["time"] == pd.Timestamp("2024-03-05T12:00:00.5Z")
    assert r["magnitude"] == 2.0 and r["magnitude_type"] == "Mw"
    assumptions = awkward.records[0].provenance[0].assumptions
    assert any("preferredOriginID: first origin used" in a for a in assumptions)
    assert any("without a zone designator taken as UTC" in a for a in assumptions)


def test_local_code_rule(awkward: ReadResult) -> None:
    # description of type "region name" ("VT") is ignored, the other description ("HYB") wins over
    # type "earthquake"; the origin-level comment "EXP" is not an event comment and is ignored.
    r = _row(awkward, "/unmatched")
    assert r["event_class"] == "hybrid" and r["source_type"] == "HYB"
    # an event-level comment that is exactly a code overrides type "other event"; free text does not
    r = _row(awkward, "/comment-code")
    assert r["event_class"] == "rockfall" and r["source_type"] == "RF"
    assert np.isnan(r["depth_m"])
    assert any("classed from a local code" in a for a in awkward.records[0].provenance[0].assumptions)


def test_unknown_type_is_other_and_noted(awkward: ReadResult) -> None:
    r = _row(awkward, "/unknown-type")
    assert r["event_class"] == "other" and r["source_type"] == "blorp"
    assert f"{AWKWARD.name}: unknown event types mapped to other: blorp" in awkward.notes


def test_rejected_events_carry_the_line_of_their_event_tag(awkward: ReadResult) -> None:
    rej = awkward.rejects
    assert list(rej.columns) == list(REJECT_COLUMNS)
    got = {row.raw: (row.line, row.column) for row in rej.itertuples()}
    for suffix, column in (("no-origin", "origin"), ("no-time", "time"), ("bad-time", "time")):
        pid = f"smi:xv.qxvo/event/{suffix}"
        line = _line_of(AWKWARD, f'<rt:event publicID="{pid}"')
        assert got[f"<event publicID={pid!r}>"] == (line, column)
    assert (rej["file"] == AWKWARD.name).all()
    assert rej["line"].is_monotonic_increasing
    assert "yesterday at noon" in rej.loc[rej["raw"].str.contains("bad-time"), "reason"].item()


def test_user_map_takes_part_in_the_local_code_rule(tmp_path: Path) -> None:
    text = BASIC.read_text(encoding="utf-8")
    p = tmp_path / "local_code.xml"
    # a region-name description is never a local code, even when the user map knows its text
    p.write_text(text, encoding="utf-8")
    opts = ReadOptions(class_map={"Demo Peak, north flank": "tremor"})
    assert "tremor" not in set(read_quakeml(p, opts).records[0].data["event_class"])
    # the same text in a description of another type is a local code once the user map knows it
    p.write_text(text.replace("<type>region name</type>", "<type>earthquake name</type>"), encoding="utf-8")
    assert "tremor" not in set(read_quakeml(p, ReadOptions()).records[0].data["event_class"])
    df = read_quakeml(p, opts).records[0].data
    r = df[df["event_id"].str.endswith("qx2024aa01")].iloc[0]
    assert r["event_class"] == "tremor" and r["source_type"] == "Demo Peak, north flank"


def test_foreign_agency_is_not_taken_as_station(awkward: ReadResult) -> None:
    assert awkward.records[0].meta.station is None


def test_line_numbers_survive_tiny_feed_chunks(monkeypatch: pytest.MonkeyPatch) -> None:
    # the file is fed to expat in chunks; positions must not depend on where chunks end
    ref = read_quakeml(AWKWARD, ReadOptions())
    monkeypatch.setattr(quakeml, "_CHUNK", 7)
    res = read_quakeml(AWKWARD, ReadOptions())
    pd.testing.assert_frame_equal(res.rejects, ref.rejects)
    pd.testing.assert_frame_equal(res.records[0].data, ref.records[0].data)


def test_utf16_document_is_read(tmp_path: Path) -> None:
    p = tmp_path / "utf16.xml"
    text = BASIC.read_text(encoding="utf-8").replace('encoding="UTF-8"', 'encoding="UTF-16"')
    p.write_bytes(text.encode("utf-16"))
    assert is_quakeml(head(p), p)
    df = read_quakeml(p, ReadOptions()).records[0].data
    assert df["depth_m"].tolist() == [500.0, 20000.0, 0.0]


def test_many_events_streamed_with_line_numbers(tmp_path: Path) -> None:
    ev = (
        '<event publicID="e{i}"><type>{t}</type><origin publicID="o{i}">'
        "<time><value>2024-01-01T00:{m:02d}:{s:02d}Z</value></time>"
        "<latitude><value>12.1</value></latitude><longitude><value>-45.1</value></longitude>"
        "<depth><value>{d}</value></depth></origin>"
        '<magnitude publicID="m{i}"><mag><value>1.5</value></mag><type>ML</type></magnitude></event>\n'
    )
    lines = [
        '<?xml version="1.0"?>',
        '<quakeml xmlns="http://quakeml.org/xmlns/quakeml/1.2">',
        '<eventParameters xmlns="http://quakeml.org/xmlns/bed/1.2" publicID="cat">',
    ]
    bad_lines = []
    for i in range(3000):
        if i % 500 == 7:
            bad_lines.append(len(lines) + 1)
            lines.append(f'<event publicID="bad{i}"><type>VT</type></event>')
        else:
            lines.append(ev.format(i=i, t="VT" if i % 2 else "LP", m=i // 60 % 60, s=i % 60, d=i).rstrip("\n"))
    lines += ["</eventParameters>", "</quakeml>"]
    p = tmp_path / "many.xml"
    p.write_text("\n".join(lines) + "\n", encoding="utf-8")
    res = read_quakeml(p, ReadOptions())
    assert res.rejects["line"].tolist() == bad_lines
    cat = res.records[0]
    assert len(cat) == 3000 - len(bad_lines)
    assert set(cat.data["event_class"]) == {"VT", "LP"}


# --- hostile, broken and wrong files -------------------------------------------------------------


@pytest.mark.parametrize(
    "name",
    [
        "quakeml_hostile_billion_laughs.xml",
        "quakeml_hostile_external_entity.xml",
        "quakeml_hostile_external_dtd.xml",
    ],
)
def test_hostile_documents_are_refused_in_one_line(name: str) -> None:
    with pytest.raises(InputError) as exc:
        read_quakeml(DATA / name, ReadOptions())
    msg = str(exc.value)
    assert msg.startswith(f"{name}:2: ")
    assert "refused" in msg and "DTD" in msg
    assert "\n" not in msg
    assert "root:" not in msg  # nothing from /etc/passwd


def test_entity_declaration_refused_even_without_dtd_ban() -> None:
    # defence in depth: entity declarations are refused too (defusedxml forbid_entities=True default)
    parser = DefusedXMLParser(forbid_dtd=False)
    with pytest.raises(EntitiesForbidden):
        parser.feed(b'<!DOCTYPE x [<!ENTITY a "b">]><x>&a;</x>')


def test_undefined_entity_is_malformed(tmp_path: Path) -> None:
    p = tmp_path / "entity.xml"
    p.write_text(
        '<q:quakeml xmlns:q="http://quakeml.org/xmlns/quakeml/1.2">\n<x>&nope;</x></q:quakeml>', encoding="utf-8"
    )
    with pytest.raises(InputError, match=r"entity\.xml:2: malformed XML"):
        read_quakeml(p, ReadOptions())


def test_truncated_document_gives_line_number() -> None:
    p = DATA / "quakeml_truncated.xml"
    n_lines = p.read_text(encoding="utf-8").count("\n") + 1
    with pytest.raises(InputError) as exc:
        read_quakeml(p, ReadOptions())
    assert exc.value.line == n_lines
    assert "malformed XML" in str(exc.value)


def test_mismatched_tag_gives_line_number() -> None:
    with pytest.raises(InputError) as exc:
        read_quakeml(DATA / "quakeml_malformed_mismatched_tag.xml", ReadOptions())
    assert exc.value.line == 7
    assert str(exc.value) == "quakeml_malformed_mismatched_tag.xml:7: malformed XML (mismatched tag)"


def test_binary_garbage(tmp_path: Path) -> None:
    p = tmp_path / "garbage.xml"
    p.write_bytes(np.random.default_rng(3).integers(0, 256, 4096, dtype=np.uint8).tobytes())
    assert not is_quakeml(head(p), p)
    with pytest.raises(InputError, match="garbage.xml"):
        read_quakeml(p, ReadOptions())


@pytest.mark.parametrize("name", ["catalog_as_csv.csv", "fdsn_text_basic.txt", "fdsn_text_empty.txt"])
def test_non_xml_files_raise_input_error(name: str) -> None:
    with pytest.raises(InputError, match="malformed XML"):
        read_quakeml(DATA / name, ReadOptions())


def test_other_xml_is_not_quakeml() -> None:
    with pytest.raises(InputError, match="not a QuakeML document"):
        read_quakeml(DATA / "not_quakeml_stationxml.xml", ReadOptions())


def test_no_events() -> None:
    with pytest.raises(InputError, match="no events"):
        read_quakeml(DATA / "quakeml_no_events.xml", ReadOptions())


def test_missing_file() -> None:
    with pytest.raises(InputError, match="cannot read"):
        read_quakeml(DATA / "does_not_exist.xml", ReadOptions())


def test_duplicate_public_id_is_rejected(tmp_path: Path) -> None:
    text = BASIC.read_text(encoding="utf-8").replace("event/qx2024aa03", "event/qx2024aa01")
    p = tmp_path / "dup.xml"
    p.write_text(text, encoding="utf-8")
    res = read_quakeml(p, ReadOptions())
    (r,) = res.rejects.itertuples()
    first = _line_of(p, '<event publicID="smi:xv.qxvo/event/qx2024aa01"')
    assert r.column == "event_id" and f"first on line {first}" in r.reason
    assert r.line > first
    assert len(res.records[0]) == 2


def test_non_numeric_latitude_is_rejected(tmp_path: Path) -> None:
    text = BASIC.read_text(encoding="utf-8").replace("<value>12.3450</value>", "<value>north</value>")
    p = tmp_path / "badlat.xml"
    p.write_text(text, encoding="utf-8")
    res = read_quakeml(p, ReadOptions())
    assert len(res.records[0]) == 2
    (row,) = res.rejects.itertuples()
    assert row.column == "latitude" and "north" in row.reason
    assert row.line == _line_of(p, '<event publicID="smi:xv.qxvo/event/qx2024aa01"')


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_random_corruption_gives_result_or_input_error(tmp_path: Path, data: st.DataObject) -> None:
    raw = bytearray(AWKWARD.read_bytes())
    for _ in range(data.draw(st.integers(1, 5))):
        op = data.draw(st.sampled_from(["cut", "flip", "insert", "truncate"]))
        at = data.draw(st.integers(0, len(raw) - 1))
        if op == "cut":
            del raw[at : at + data.draw(st.integers(1, 40))]
        elif op == "flip":
            raw[at] = data.draw(st.integers(0, 255))
        elif op == "insert":
            raw[at:at] = data.draw(st.sampled_from([b"<", b">", b"&", b"</rt:event>", b"<rt:event>", b"\x00"]))
        else:
            del raw[at:]
        if not raw:
            raw = bytearray(b"<")
    p = tmp_path / "corrupt.xml"
    p.write_bytes(bytes(raw))
    try:
        res = read_quakeml(p, ReadOptions())
    except InputError as exc:
        assert "\n" not in str(exc)
        return
    assert isinstance(res, ReadResult)
    check_catalog(res.records[0])
