"""Figures and HTML for print and for a Monday review: neutral regime colours, distinct class colours, axes,
SHA-256 shortened with the full value on hover, the brief's structure, the print stylesheet."""

from __future__ import annotations

import re

import pandas as pd
import pytest

from degas.report import figures as F
from degas.report.html import CSS, REGIME_COLOURS, REGIME_FALLBACK_COLOUR, regime_colour, table_html


def _rgb(c: str) -> tuple[int, int, int]:
    return tuple(int(x) for x in re.findall(r"\d+", c)[:3])


def test_regime_colours_carry_no_alert_level_meaning_and_unknown_labels_fall_back():
    for label, c in REGIME_COLOURS.items():
        r, g, b = _rgb(c)
        # blue-purple or grey tones only: blue at least as strong as red and green (no green/amber/red codes)
        assert b >= r and b >= g, (label, c)
    assert regime_colour("a_label_added_later") == REGIME_FALLBACK_COLOUR
    assert regime_colour("coupled") == REGIME_COLOURS["coupled"]


def test_event_classes_have_distinct_colours():
    assert len(set(F.CLASS_COLOURS.values())) == len(F.CLASS_COLOURS)


def test_sha256_is_shortened_with_the_full_value_on_hover():
    sha = "ab" * 32
    html = table_html(pd.DataFrame({"file": ["x.csv"], "sha256": [sha]}))
    assert f'title="{sha}"' in html and f">{sha[:12]}…<" in html


def test_print_stylesheet_and_tables_that_fit_the_page():
    assert "@media print" in CSS and "break-inside:avoid" in CSS
    assert ".scroll{overflow-x:auto;max-width:100%}" in CSS


def test_overview_axes_and_panels(demo_bundle):
    fig = F.overview_figure(demo_bundle)
    titles = [a.text for a in fig.layout.annotations]
    assert "LP + hybrid per day" in titles and "rockfalls per day" in titles
    assert any(t.startswith("seismic amplitude") for t in titles)
    assert any(t.startswith("b-value") for t in titles)

    def axis_of(title):
        i = titles.index(title) + 1
        return fig.layout["yaxis" if i == 1 else f"yaxis{i}"]

    assert axis_of("SO2 flux (t/d)").type == "log"
    assert axis_of("cumulative seismic energy (J)").type in (None, "linear", "-")
    amp = next(t for t in titles if t.startswith("seismic amplitude"))
    assert axis_of(amp).type == "log"
    assert all(fig.layout[k].exponentformat == "power" for k in fig.layout if k.startswith("yaxis"))
    lp_traces = [t.name for t in fig.data if t.legendgroup == "events_lp"]
    assert set(lp_traces) <= {"LP per day", "hybrid per day"} and lp_traces


def test_weekly_report_leads_with_the_brief(demo_weekly_bundle):
    from degas.report import render_report

    html, figs = render_report(demo_weekly_bundle)
    assert html.index('id="brief"') < html.index('id="cautions"') < html.index('id="summary"')
    assert "not official alert levels" in html
    assert "fig-fmd" not in figs and not any(k.startswith("fig-xcorr-") for k in figs)  # retrospective only


def test_project_thresholds_reach_the_brief(demo_weekly_bundle):
    from degas.report.brief import brief_rows

    rows = brief_rows(demo_weekly_bundle)
    roles = [r.role for r in rows]
    assert roles == sorted(roles, key=["gas", "magma", "lp_hybrid", "vt", "amplitude", "ratio", "other"].index)
    for r in rows:
        if r.role == "gas":
            assert bool(r.crossed) == (r.now > 1500)  # [thresholds.gas] above = 1500 in velmarra.toml
    ratio = next(r for r in rows if r.role == "ratio")
    assert ratio.coverage == pytest.approx(1.0)  # weekly samples: 1 of 1 expected


def test_report_gives_b_by_class(demo_bundle):
    from degas.report import render_report

    html, _ = render_report(demo_bundle)
    assert "b-value and Mc by event class" in html
    assert demo_bundle.seismic["b_classes"] == ("VT",)
    bv = demo_bundle.seismic["b_value"]
    assert f"{bv.b:.2f} ± {bv.sigma:.2f}" in html


def test_brief_and_location_figures_without_an_event_catalogue(demo_weekly_bundle):
    # counts published by class (no catalogue object) must not break the brief or the location figures
    import dataclasses

    from degas.report.brief import brief_rows
    from degas.report.seismic_figures import location_figures

    class NotACatalogue:
        data = pd.DataFrame()

    b = dataclasses.replace(demo_weekly_bundle, records={**demo_weekly_bundle.records, "catalog": NotACatalogue()})
    rows = brief_rows(b)
    lp = next(r for r in rows if r.role == "lp_hybrid")
    assert lp.weeks["value"].isna().all() and lp.now >= 0  # rate from the review, no weekly line
    figs = location_figures(b)  # falls back to the archive's own catalogues, named in the caption
    assert all(cap.startswith("Catalogue seismic_catalog.") for _fid, _f, cap in figs)
