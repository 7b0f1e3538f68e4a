"""Project files: validation with clear messages, defaults stated."""

from __future__ import annotations

import pytest

from degas.errors import ConfigError
from degas.project import Project, load_project, project_from_dict
from tests.conftest import REPO


def test_demo_project_file_loads():
    p = load_project(REPO / "demo_series" / "velmarra.toml")
    assert p.volcano == "Velmarra" and len(p.gas) == 2 and p.petrology.s_melt_inclusion == 1500e-6
    assert p.parameters()["window_days"] == 7


@pytest.mark.parametrize(
    "raw,fragment",
    [({"colours": {}}, "unknown section(s) ['colours']"),
     ({"analysis": {"stepp": "1D"}}, "unknown key(s) ['stepp'] in [analysis]"),
     ({"petrology": {"s_melt_inclusion_ppm": "lots", "s_matrix_glass_ppm": 1}}, "[petrology]"),
     ({"analysis": {"min_coverage": 2}}, "min_coverage must be between 0 and 1")],
)
def test_bad_project_files(raw, fragment):
    with pytest.raises(ConfigError) as e:
        project_from_dict(raw, "p.toml")
    assert fragment in str(e.value) and str(e.value).startswith("p.toml")


def test_defaults_when_nothing_is_given():
    p = project_from_dict({})
    assert p == Project()
    assert p.petrology is None and p.window_days == 7 and p.baseline_days == 90


def test_regime_relation_settings_load_from_the_project_file():
    # review: [regimes] relation_band and gas_background were refused as unknown keys, so the run's defaults
    # could not be changed from a project file
    from degas.project import project_from_dict

    p = project_from_dict({"regimes": {"relation_band": 0.3, "gas_background": 150}})
    assert p.relation_band == 0.3 and p.gas_background == 150


def test_retired_regime_keys_load_with_a_one_line_note():
    """gas_factor, ratio_low and ratio_high labelled the segment-table regimes that issue 9's relation-based regimes
    replaced; a project file that still has them loads, with one note instead of silent acceptance."""
    import warnings

    from degas.errors import SettingNotUsedWarning

    raw = {"regimes": {"gas_factor": 2.0, "magma_threshold": 0.2, "ratio_low": 0.3, "ratio_high": 3.0}}
    with pytest.warns(SettingNotUsedWarning) as rec:
        p = project_from_dict(raw, "p.toml")
    assert [str(w.message) for w in rec] == [
        "p.toml: [regimes] gas_factor, ratio_low, ratio_high are no longer used "
        "(regimes come from the fitted gas–output relation)"]
    assert p.magma_threshold == 0.2 and "gas_factor" not in p.parameters() and "ratio_low" not in p.parameters()
    with pytest.warns(SettingNotUsedWarning, match=r"\[regimes\] ratio_high is no longer used"):
        project_from_dict({"regimes": {"ratio_high": "anything"}}, "p.toml")  # unused: its value is not checked
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # the demo project file carries no retired key
        load_project(REPO / "demo_series" / "velmarra.toml")
