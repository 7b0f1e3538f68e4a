"""Project sections of issue 13: [budget], [thresholds], [coverage], vent position, brief weeks."""

import pytest

from degas.errors import ConfigError
from degas.project import project_from_dict


def test_weekly_sections_are_read_and_validated():
    p = project_from_dict({"volcano": {"name": "V", "vent_latitude": -44.9, "vent_longitude": -128.4},
                           "review": {"brief_weeks": 8},
                           "budget": {"systematic": 0.25, "systematic_by_station": {"VLM-N": 0.3},
                                      "good_flags": ["Good", "buena"]},
                           "coverage": {"gas_flux.so2_flux.VLM-N": 0.5},
                           "thresholds": {"gas": {"above": 2000, "label": "high SO2"}}})
    assert p.systematic == 0.25 and dict(p.systematic_by_station) == {"VLM-N": 0.3}
    assert p.good_flags == ("good", "buena")
    assert dict(p.capability) == {"gas_flux.so2_flux.VLM-N": 0.5}
    assert p.thresholds[0].above == 2000 and p.brief_weeks == 8 and p.vent_latitude == -44.9
    assert project_from_dict({}).systematic == 0.20  # the stated default (common practice)


@pytest.mark.parametrize("raw, match", [
    ({"budget": {"systematic": -0.1}}, "systematic"),
    ({"budget": {"plume": 1}}, "unknown key"),
    ({"coverage": {"x": 1.5}}, r"\[coverage\] x"),
    ({"coverage": {"x": 0}}, "above 0"),
    ({"thresholds": {"gas": {"above": "high"}}}, "must be a number"),
])
def test_bad_weekly_sections_name_the_problem(raw, match):
    with pytest.raises(ConfigError, match=match):
        project_from_dict(raw)
