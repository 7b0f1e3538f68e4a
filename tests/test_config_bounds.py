"""Project and mapping TOML values are bounded (issue 10): one-line errors naming the key and its range."""

from __future__ import annotations

import pytest

from degas.errors import ConfigError
from degas.io.mapping import load_toml, options_from_dict
from degas.project import project_from_dict


@pytest.mark.parametrize(
    "section,key,value,fragment",
    [("analysis", "surrogates", 10**12, "surrogates = 1000000000000 is outside its valid range [0, 100000]"),
     ("analysis", "bootstrap", 10**9, "bootstrap = 1000000000 is outside its valid range [0, 100000]"),
     ("analysis", "rolling_surrogates", -1, "rolling_surrogates"),
     ("analysis", "seed", -3, "seed = -3 is outside its valid range [0, 4.29497e+09]"),
     ("analysis", "step", "1ns", "step = '1ns' is outside its valid range [1min, 366D]"),
     ("analysis", "step", "1e12D", "step = '1e12D' is not a positive duration"),
     ("analysis", "max_lag", "100000D", "max_lag = '100000D' is outside its valid range"),
     ("analysis", "rolling_window", "1min", "rolling_window = '1min' is outside its valid range"),
     ("analysis", "min_coverage", float("nan"), "min_coverage must be between 0 and 1"),
     ("regimes", "magma_threshold", float("nan"), "magma_threshold = nan is outside"),
     ("changepoints", "penalty", float("nan"), "penalty = nan is outside its valid range"),
     ("review", "window_days", 10**9, "window_days = 1000000000 is outside its valid range [1, 3660]")],
)
def test_out_of_range_project_values_are_one_line_errors(section, key, value, fragment):
    with pytest.raises(ConfigError) as e:
        project_from_dict({section: {key: value}}, "p.toml")
    msg = str(e.value)
    assert msg.startswith("p.toml: ") and fragment in msg and "\n" not in msg


def test_demo_values_stay_valid():
    p = project_from_dict({"analysis": {"surrogates": 100_000, "step": "1min", "max_lag": "20D"}})
    assert p.surrogates == 100_000


@pytest.mark.parametrize(
    "d,fragment",
    [({"station": 5}, "station must be non-empty text"), ({"dayfirst": "yes"}, "dayfirst must be true or false"),
     ({"timezone": "America"}, "not a time zone"), ({"vesicularity": float("nan")}, "vesicularity"),
     ({"bulk_density": 1e300}, "bulk_density"), ({"columns": {"time": 1}}, None)],
)
def test_mapping_values_are_checked(d, fragment):
    if fragment is None:
        assert options_from_dict(d, "m.toml").columns == {"time": "1"}
        return
    with pytest.raises(ConfigError) as e:
        options_from_dict(d, "m.toml")
    assert str(e.value).startswith("m.toml: ") and fragment in str(e.value)


@pytest.mark.parametrize(
    "content,fragment",
    [(b"a = " + b"[" * 5000 + b"]" * 5000 + b"\n", "nested"), (b"a = [[[[[[[[[[[1]]]]]]]]]]]\n", "nested more than"),
     (b"station = \"\xff\"\n", "not UTF-8"), (b"station = \n", "not valid TOML")],
)
def test_hostile_toml_files_are_one_line_errors(tmp_path, content, fragment):
    p = tmp_path / "m.toml"
    p.write_bytes(content)
    with pytest.raises(ConfigError) as e:
        load_toml(p)
    assert fragment in str(e.value) and "\n" not in str(e.value)


def test_random_project_values_give_a_project_or_a_one_line_error():
    from hypothesis import HealthCheck, given, settings
    from hypothesis import strategies as st

    from degas.project import _SECTIONS, Project
    from tests.fuzzing import toml_value

    sections = st.sampled_from(sorted(_SECTIONS))

    @settings(max_examples=400, derandomize=True, deadline=None, database=None,
              suppress_health_check=list(HealthCheck))
    @given(st.lists(st.tuples(sections, st.data()), max_size=4), st.data())
    def inner(items, data):
        raw: dict = {}
        for section, d in items:
            key = d.draw(st.sampled_from(sorted(_SECTIONS[section]) + ["bogus"]))
            raw.setdefault(section, {})[key] = d.draw(toml_value())
        try:
            p = project_from_dict(raw, "p.toml")
        except ConfigError as exc:
            assert "\n" not in str(exc) and str(exc).startswith("p.toml")
        else:
            assert isinstance(p, Project) and 0 <= p.surrogates <= 100_000 and p.seed >= 0

    inner()
