"""Event-type labels -> degas event classes (degas.io.event_classes)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from degas.errors import ConfigError
from degas.io.event_classes import (
    DEFAULT_CLASS_ALIASES,
    QUAKEML_EVENT_TYPES,
    ClassMapping,
    map_event_classes,
    normalise_label,
)
from degas.model import EVENT_CLASSES


def _one(label: str, user_map: dict[str, str] | None = None) -> str:
    return map_event_classes(pd.Series([label], dtype="string"), user_map).classes.iloc[0]


@pytest.mark.parametrize(
    ("label", "expected"),
    [
        ("VT", "VT"),
        ("vta", "VT"),
        ("VT-B", "VT"),
        ("volcano-tectonic", "VT"),
        ("Volcano Tectonic", "VT"),
        ("VOLCANOTECTONIC", "VT"),
        ("A-type", "VT"),  # A-type = VT: common practice after Minakami's classification
        ("a type", "VT"),
        ("LP", "LP"),
        ("lf", "LP"),
        ("Long-Period", "LP"),
        ("long period", "LP"),
        ("low-frequency", "LP"),
        ("B-type", "LP"),  # B-type = LP: common practice after Minakami's classification
        ("HB", "hybrid"),
        ("HY", "hybrid"),
        ("HYB", "hybrid"),
        ("Hybrid", "hybrid"),
        ("MP", "hybrid"),  # multiphase -> hybrid: common practice
        ("RF", "rockfall"),
        ("ROCKFALL", "rockfall"),
        ("rock fall", "rockfall"),
        ("Rock-Fall", "rockfall"),
        ("PF", "rockfall"),
        ("pyroclastic flow", "rockfall"),
        ("EX", "explosion"),
        ("EXP", "explosion"),
        ("expl", "explosion"),
        ("Explosion", "explosion"),
        ("volcanic eruption", "explosion"),
        ("TR", "tremor"),
        ("TRE", "tremor"),
        ("tremor", "tremor"),
        ("Tremor episode", "tremor"),
        # QuakeML BED 1.2 EventType values (REFERENCES.md section 4.1)
        ("earthquake", "VT"),
        ("explosion", "explosion"),
        ("landslide", "rockfall"),
        ("rockslide", "rockfall"),
        ("avalanche", "rockfall"),
        ("debris avalanche", "rockfall"),
        ("collapse", "rockfall"),
        ("quarry blast", "other"),
        ("other event", "other"),
        ("sonic boom", "other"),
        ("not reported", "other"),
    ],
)
def test_default_aliases(label: str, expected: str) -> None:
    assert _one(label) == expected


def test_every_quakeml_event_type_is_mapped_to_a_valid_class() -> None:
    # 44 values of the BED 1.2 EventType enumeration (REFERENCES.md section 4.1)
    assert len(QUAKEML_EVENT_TYPES) == 44
    assert len(set(QUAKEML_EVENT_TYPES)) == 44
    for t in QUAKEML_EVENT_TYPES:
        assert DEFAULT_CLASS_ALIASES[t] in EVENT_CLASSES
    m = map_event_classes(pd.Series(list(QUAKEML_EVENT_TYPES), dtype="string"))
    assert m.unknown == ()
    assert set(m.classes) <= set(EVENT_CLASSES)


def test_all_default_values_are_valid_classes() -> None:
    assert set(DEFAULT_CLASS_ALIASES.values()) <= set(EVENT_CLASSES)
    # no two spellings that normalise alike disagree
    seen: dict[str, str] = {}
    for k, v in DEFAULT_CLASS_ALIASES.items():
        assert seen.setdefault(normalise_label(k), v) == v, k


def test_normalise_label_ignores_case_space_and_punctuation() -> None:
    assert normalise_label(" Volcano-Tectonic ") == normalise_label("VOLCANO_TECTONIC") == "volcanotectonic"
    assert normalise_label("rock.fall") == "rockfall"


def test_unknown_labels_fall_back_to_other_and_are_listed() -> None:
    labels = pd.Series(["VT", "zork", "LP", "zork", "Gloop"], dtype="string")
    m = map_event_classes(labels)
    assert isinstance(m, ClassMapping)
    assert m.classes.tolist() == ["VT", "other", "LP", "other", "other"]
    assert m.unknown == ("Gloop", "zork")
    assert any("Gloop, zork" in a for a in m.assumptions)


def test_missing_labels_are_other_but_not_unknown() -> None:
    labels = pd.Series(["VT", None, "", pd.NA], dtype="string")
    m = map_event_classes(labels)
    assert m.classes.tolist() == ["VT", "other", "other", "other"]
    assert m.unknown == ()
    assert any("without a type label" in a for a in m.assumptions)


def test_assumptions_name_the_interpretive_choices_present() -> None:
    m = map_event_classes(pd.Series(["earthquake", "A-type", "MP"], dtype="string"))
    text = " | ".join(m.assumptions)
    assert "'earthquake' read as VT" in text
    assert "Minakami" in text
    assert "multiphase" in text
    # nothing claimed for labels that are not there
    assert not any("rockfall" in a for a in map_event_classes(pd.Series(["VT"])).assumptions)


def test_user_map_wins_over_defaults_and_is_normalised() -> None:
    labels = pd.Series(["VT", "vt", "q-x", "LP"], dtype="string")
    m = map_event_classes(labels, {"V.T.": "lp", "QX": "Tremor"})
    assert m.classes.tolist() == ["LP", "LP", "tremor", "LP"]
    assert m.unknown == ()
    assert any("user class map" in a for a in m.assumptions)


def test_user_map_with_invalid_class_raises_config_error_listing_valid_classes() -> None:
    with pytest.raises(ConfigError) as exc:
        map_event_classes(pd.Series(["VT"]), {"VT": "volcanic"})
    msg = str(exc.value)
    assert "volcanic" in msg
    for cls in EVENT_CLASSES:
        assert cls in msg
    assert "\n" not in msg


def test_user_map_with_empty_key_raises_config_error() -> None:
    with pytest.raises(ConfigError):
        map_event_classes(pd.Series(["VT"]), {"--": "VT"})


def test_index_and_dtype_are_preserved() -> None:
    labels = pd.Series(["RF", "TR"], index=[10, 20], dtype=object)
    m = map_event_classes(labels)
    assert m.classes.index.tolist() == [10, 20]
    assert isinstance(m.classes.dtype, pd.StringDtype)


def test_a_million_labels_are_broadcast_correctly() -> None:
    # vectorised path: unique labels are mapped once and broadcast (no timing asserted here)
    rng = np.random.default_rng(7)
    pool = np.array(["VT", "lp", "HYB", "rock fall", "EXP", "tremor", "earthquake", "zork"], dtype=object)
    want = np.array(["VT", "LP", "hybrid", "rockfall", "explosion", "tremor", "VT", "other"], dtype=object)
    idx = rng.integers(0, len(pool), 1_000_000)
    m = map_event_classes(pd.Series(pool[idx], dtype="string"))
    assert (m.classes.to_numpy(dtype=object) == want[idx]).all()
    assert m.unknown == ("zork",)


@settings(max_examples=100, deadline=None)
@given(st.lists(st.one_of(st.none(), st.text(max_size=12)), max_size=30))
def test_any_labels_give_valid_classes(labels: list[str | None]) -> None:
    m = map_event_classes(pd.Series(labels, dtype="string"))
    assert len(m.classes) == len(labels)
    assert set(m.classes.dropna()) <= set(EVENT_CLASSES)
    assert m.classes.notna().all()
    assert set(m.unknown) <= {x for x in labels if x is not None}


@settings(max_examples=100, deadline=None)
@given(
    st.sampled_from(sorted(DEFAULT_CLASS_ALIASES)),
    st.lists(st.sampled_from([" ", "-", "_", ".", "/"]), max_size=3),
    st.booleans(),
)
def test_spelling_variants_of_an_alias_map_alike(alias: str, junk: list[str], upper: bool) -> None:
    variant = "".join(junk) + (alias.upper() if upper else alias.lower()) + "".join(junk)
    assert _one(variant) == DEFAULT_CLASS_ALIASES[alias]
