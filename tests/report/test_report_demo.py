"""The demo report: the summary names the demo's episodes with the right dates and numbers, the page is
self-contained, and the appendix matches the analysis results.

The demo data are invented (degas.demo); the truth they are checked against is the generator's own
truth.json. These tests check that the whole chain recovers a known story; the formulas themselves are
checked against published values in the analysis tests.
"""

from __future__ import annotations

import re

import pandas as pd
import pytest

from degas.report.html import esc
from degas.report.summary import summarise

DAY = pd.Timedelta("1D")


def _sentences(bundle) -> dict[str, str]:
    return {s.key: s.text for s in summarise(bundle)}


def test_summary_names_the_decoupled_pause_with_dates_and_numbers(demo_bundle, demo_truth):
    truth = next(r for r in demo_truth["regimes"] if r["regime"] == "gas_only" and r["start"] == "2023-12-01")
    s = _sentences(demo_bundle)
    key = next(k for k in s if k.startswith("decoupled:"))
    iv = demo_bundle.regimes.intervals
    row = iv[iv["label"] == "gas_only"].iloc[0]
    # dates within 3 days of the truth (margin stated in the README)
    assert abs(row["start"] - pd.Timestamp(truth["start"], tz="UTC")) <= 3 * DAY
    assert abs(row["end"] - pd.Timestamp(truth["end"], tz="UTC")) <= 3 * DAY
    text = s[key]
    # one convention for end dates: the inclusive last day (issue 13 replaces "until <exclusive end>")
    assert f"from {row['start']:%Y-%m-%d} to {row['end'] - pd.Timedelta(1, 'ns'):%Y-%m-%d}" in text
    assert f"SO2 {row['gas_t_d']:.0f} t/d" in text
    assert "decoupled degassing" in text


def test_summary_names_the_sealing_episode_with_dates_and_numbers(demo_bundle, demo_truth):
    truth = demo_truth["sealing"]
    s = _sentences(demo_bundle)
    key = next(k for k in s if k.startswith("sealing:"))
    iv = demo_bundle.regimes.intervals
    row = iv[iv["label"] == "magma_only"].iloc[0]
    # the SO2 decline of the demo is gradual (e-folding 12 days), so its change point lags the onset: margin 21 d
    assert abs(row["start"] - pd.Timestamp(truth["start"], tz="UTC")) <= 21 * DAY
    assert abs(row["end"] - pd.Timestamp(truth["end"], tz="UTC")) <= 3 * DAY
    text = s[key]
    # one convention for end dates: the inclusive last day (issue 13 replaces "until <exclusive end>")
    assert f"from {row['start']:%Y-%m-%d} to {row['end'] - pd.Timedelta(1, 'ns'):%Y-%m-%d}" in text
    assert f"SO2 {row['gas_t_d']:.0f} t/d" in text and "possible sealing" in text
    lp = demo_bundle.changepoints["lp_hybrid_rate"].changes
    first = lp[lp["time"] >= row["start"] - 21 * DAY].iloc[0]
    assert f"from {first['time']:%Y-%m-%d}" in text and "LP + hybrid events rose" in text
    # the LP + hybrid rise is found in the onset week
    assert abs(first["time"] - pd.Timestamp(truth["start"], tz="UTC")) < 7 * DAY


def test_true_lags_recovered_in_each_coupled_interval(demo_bundle, demo_truth):
    found = {f"{s:%Y-%m}": res for s, _e, _l, res in demo_bundle.xcorr_intervals}
    assert len(found) == 3
    for true in demo_truth["lags_days"]:
        res = next(r for k, r in found.items() if abs(pd.Timestamp(k + "-01", tz="UTC")
                                                      - pd.Timestamp(true["start"], tz="UTC")) <= 40 * DAY)
        assert abs(res.best_lag / DAY - true["lag_days"]) <= 1, true
        assert res.p_value < 0.01
        s = _sentences(demo_bundle)
        assert any(f"best lag {res.best_lag / DAY:+.0f} d" in t for t in s.values())


def test_every_regime_of_a_week_or_more_gets_the_true_label(demo_bundle, demo_truth):
    iv = demo_bundle.regimes.intervals
    for true in demo_truth["regimes"]:
        start = pd.Timestamp(true["start"], tz="UTC")
        end = pd.Timestamp(true["end"], tz="UTC") if true["end"] else iv["end"].max()
        if end - start < 7 * DAY:
            continue
        mid = start + (end - start) / 2
        hit = iv[(iv["start"] <= mid) & (iv["end"] > mid)]
        assert hit["label"].iloc[0] == true["regime"], true


def test_report_file_is_self_contained_small_and_named(demo_report, demo_bundle):
    path, _ = demo_report
    html = path.read_text(encoding="utf-8")
    assert path.name.startswith("degas-velmarra-episode-20230101-20251231-run")
    assert path.stat().st_size < 15e6
    assert not re.search(r"<script[^>]+src=", html, re.I)
    assert not re.search(r"<link[^>]+href=[\"']?https?:", html, re.I)
    assert "Read this first" in html and "civil-protection authorities" in html and "not a forecast" in html
    methods = html[html.index('<section id="methods">'):]
    assert "<h3>Cautions</h3>" in methods and "not a forecast" in methods  # cautions at the top and in the methods
    for sha in demo_bundle.sources:
        assert sha in html  # every input file's SHA-256 in the provenance
    assert demo_bundle.assumptions  # e.g. the vesicularity used for bulk -> DRE
    for a in demo_bundle.assumptions:
        assert esc(a) in html  # every assumption recorded at ingest is listed
    for sid in ("summary", "series", "lag", "rolling", "budget", "seismicity", "review", "methods"):
        assert f'<section id="{sid}">' in html, sid


def test_appendix_matches_the_results(demo_report, demo_bundle):
    _, app = demo_report
    for name in ("change_points", "segments", "lag_results", "regimes", "budget", "weekly_review", "seismic_metrics"):
        for ext in ("csv", "md", "tex"):
            assert (app / f"{name}.{ext}").exists(), (name, ext)
    reg = pd.read_csv(app / "regimes.csv")
    assert reg["label"].tolist() == demo_bundle.regimes.intervals["label"].tolist()
    assert reg["gas_t_d"].to_numpy() == pytest.approx(demo_bundle.regimes.intervals["gas_t_d"].to_numpy())
    lags = pd.read_csv(app / "lag_results.csv")
    assert lags["best_lag_days"].iloc[0] == demo_bundle.xcorr.best_lag / DAY
    assert (app / "fig-overview.html").exists() and (app / "plotly.min.js").exists()


def test_input_text_is_escaped_in_the_report(tmp_path):
    from degas.io.base import ReadOptions
    from degas.pipeline import run_all
    from degas.project import Project
    from degas.report import render_report
    from degas.store import Archive

    rows = "\n".join(f"2024-01-{d:02d}T12:00Z,{100 + d}" for d in range(1, 29))
    f = tmp_path / "evil.csv"
    f.write_text("time,SO2 flux (t/d)\n" + rows + "\n")
    arc = Archive.create(tmp_path / "a")
    arc.ingest_file(f, ReadOptions(station='<img src=x onerror="alert(1)">'))
    bundle = run_all(arc, Project(volcano="<script>alert(2)</script>"), mode="retrospective")
    html, _ = render_report(bundle)
    assert "<img src=x" not in html and "<script>alert(2)" not in html
    assert "&lt;script&gt;alert(2)&lt;/script&gt;" in html


def test_every_number_in_the_other_sentences_comes_from_its_result(demo_bundle):
    from degas.report.summary import _num

    s = _sentences(demo_bundle)
    o = demo_bundle.budget.overall
    cum = demo_bundle.budget.cumulative
    text = s["budget:overall"]
    kt, sd = (float(x.replace(",", "")) for x in re.search(r"([\d,.]+) ± ([\d,.]+) kt SO2", text).groups())
    assert kt == pytest.approx(cum["so2_cum_kg"].iloc[-1] / 1e6, rel=1e-3)  # kg -> kt: ÷ 1e6
    # issue 13: the ± now carries the per-station systematic term (GUM: correlated within a station)
    assert sd == pytest.approx(o["so2_mass_sd_total_kg"] / 1e6, rel=0.01) and "1σ" in text
    assert o["so2_mass_sd_total_kg"] / o["so2_mass_kg"] > 0.1  # not the ±4 % of the scan errors alone
    mm3, mm3_sd = (float(x) for x in re.search(r"and ([\d.]+) ± ([\d.]+) Mm³ DRE", text).groups())
    assert mm3 == pytest.approx(cum["dre_cum_m3"].iloc[-1] / 1e6, rel=1e-2)  # m³ -> Mm³: ÷ 1e6
    # review: the DRE volume's computed 1σ is shown beside it (the camera's daily 1σ in quadrature)
    assert o["dre_volume_sd_m3"] > 0 and mm3_sd == pytest.approx(o["dre_volume_sd_m3"] / 1e6, rel=0.05)
    assert "lower bound" in text and f"gas coverage {o['gas_coverage']:.0%}" in text
    assert f"= {o['excess_factor']:.2f} (95% {o['excess_p2_5']:.2f} to {o['excess_p97_5']:.2f})" in text
    rev = next(r for r in demo_bundle.review if r.series_id == "gas_flux.so2_flux.VLM-N")
    text = s["level:gas_flux.so2_flux.VLM-N"]
    assert f"median {_num(rev.level_window)} t/d" in text and f"baseline of {_num(rev.level_baseline)}" in text
    assert f"robust z = {_num(rev.robust_z, 2)}" in text
    lp = next(r for r in demo_bundle.review_events if r.event_class == "LP")
    assert f"{lp.rate_window_per_day:.1f} per day in the week vs {lp.rate_baseline_per_day:.1f}" in s["rate:LP"]
    bw = demo_bundle.review_regime["b_window"]
    if isinstance(bw, str):  # too few events in the week: the summary says so instead of giving a number
        assert bw in s["gap:b_window"] and "b:window" not in s
    else:
        assert f"b-value {bw.b:.2f} ± {bw.sigma:.2f}" in s["b:window"]


def test_retrospective_inside_the_record_keeps_phases_that_began_earlier(demo_archive, demo_bundle):
    from degas.pipeline import run_all
    from degas.project import load_project
    from tests.conftest import REPO

    project = load_project(REPO / "demo_series" / "velmarra.toml")
    # the second eruptive phase began 2024-06-01 and the chronology's pause 2023-12-01: both run into the span
    b = run_all(demo_archive, project, mode="retrospective", start=pd.Timestamp("2024-09-01", tz="UTC"),
                end=pd.Timestamp("2024-11-30", tz="UTC"))
    frac = b.aligned.frame["chronology"]
    assert frac.notna().all() and (frac == 1.0).all()
    # labelled from the whole history, then clipped: the episode is the coupled phase of the truth, and no
    # "possible sealing" is claimed for it
    assert set(b.regimes.intervals["label"]) == {"coupled"}
    assert b.regimes.intervals["start"].min() == pd.Timestamp("2024-09-01", tz="UTC")
    assert not any(k.startswith("sealing") for k in _sentences(b))
    full = demo_bundle.aligned.frame.loc[b.aligned.frame.index, "magma"]
    pd.testing.assert_series_equal(b.aligned.frame["magma"], full)  # clipping lost no camera day


def test_a_review_before_any_data_says_what_it_could_not_do(demo_archive):
    from degas.pipeline import run_all
    from degas.project import Project

    b = run_all(demo_archive, Project(), mode="weekly", before=pd.Timestamp("2020-01-01", tz="UTC"))
    assert any("not run" in x for x in b.skipped)
    assert b.regimes is None and b.xcorr is None


def test_a_chronology_alone_is_enough_for_regimes(demo_archive, demo_truth):
    from degas.pipeline import run_all
    from degas.project import Project

    p = Project(volcano="Velmarra", gas=("gas_flux.so2_flux.VLM-N", "gas_flux.so2_flux.VLM-S"),
                magma="chronology.eruptive_state.all", catalog="seismic_catalog.events.local")
    b = run_all(demo_archive, p, mode="retrospective")
    iv = b.regimes.intervals
    assert b.regimes.magma_measure == "eruptive_fraction"
    # the pause of the truth (gas without magma output) is found from the phases and the gas change points
    mid_pause = pd.Timestamp("2024-03-01", tz="UTC")
    pause = iv[(iv["start"] <= mid_pause) & (iv["end"] > mid_pause)]
    assert pause["label"].iloc[0] == "gas_only"
    assert pause["start"].iloc[0] == pd.Timestamp("2023-12-01", tz="UTC")  # the chronology's own boundary


def test_report_tables_show_dre_volumes_and_the_volume_difference_with_1_sigma(demo_report, demo_bundle):
    html = demo_report[0].read_text(encoding="utf-8")
    o = demo_bundle.budget.overall
    # the budget table's last row is the whole span: DRE volume ± its 1σ, in Mm³
    assert f"<td class=\"t\">{o['dre_volume_m3'] / 1e6:.3g} ± {o['dre_volume_sd_m3'] / 1e6:.2g}</td>" in html
    v = demo_bundle.volumes
    # GUM (JCGM 100:2008): independent surveys and rate series add in quadrature
    assert v.difference_sd_m3 == pytest.approx((v.survey_sd_m3**2 + v.rate_sd_m3**2) ** 0.5)
    assert v.rate_sd_m3 > 0
    assert f"<td class=\"t\">{v.difference_m3 / 1e6:.3g} ± {v.difference_sd_m3 / 1e6:.2g}</td>" in html
    assert f"{v.rate_m3 / 1e6:.3g} ± {v.rate_sd_m3 / 1e6:.2g}" in html
    assert "assuming the surveys' and the rate series' errors independent" in html.replace("&#x27;", "'")
