"""Report building blocks: escaping, formula-injection protection, table formats, decimation."""

from __future__ import annotations

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from degas.report.decimate import gaps_as_breaks, minmax_decimate
from degas.report.html import Page, esc, table_html
from degas.report.tables import latex_escape, to_latex, to_markdown, write_table
from degas.safecsv import protect_cell, protect_frame


def test_formula_injection_is_neutralised_but_numbers_are_not():
    assert protect_cell("=HYPERLINK(\"x\")") == "'=HYPERLINK(\"x\")"
    assert protect_cell("@SUM(A1)") == "'@SUM(A1)"
    assert protect_cell("+cmd|' /C calc'!A0") == "'+cmd|' /C calc'!A0"
    assert protect_cell("-5") == "-5" and protect_cell("+1.5e3") == "+1.5e3" and protect_cell(3.0) == 3.0
    df = protect_frame(pd.DataFrame({"station": ["=1+1", "VLM-N"], "v": [1.0, -2.0]}))
    assert df["station"].tolist() == ["'=1+1", "VLM-N"] and df["v"].tolist() == [1.0, -2.0]


def test_appendix_table_files(tmp_path):
    df = pd.DataFrame({"series": ["so2_flux|VLM-N", "=bad"], "value_t_d": [1234.5678, np.nan],
                       "start": pd.to_datetime(["2024-01-01", "2024-02-01"], utc=True)})
    csv, md, tex = write_table(df, tmp_path, "segments", caption="Segments & levels")
    assert "'=bad" in csv.read_text()
    text = md.read_text()
    assert "so2_flux\\|VLM-N" in text and "1234.57" in text
    tx = tex.read_text()
    assert r"so2\_flux|VLM-N" in tx and r"Segments \& levels" in tx and r"\toprule" in tx
    assert latex_escape("50% of $x_1$ {a}") == r"50\% of \$x\_1\$ \{a\}"
    assert to_markdown(df).count("\n") == 4 and to_latex(df).startswith(r"\begin{table}")


def test_everything_from_input_is_escaped():
    evil = '<script>alert("x")</script>'
    assert "<script>" not in esc(evil)
    html = table_html(pd.DataFrame({"station": [evil], "v": [1.0]}))
    assert "<script>" not in html and "&lt;script&gt;" in html
    page = Page(title=evil, subtitle=evil)
    page.add("s", evil, "<p>ok</p>")
    out = page.render(cautions_extra=[evil])
    assert out.count("<script") == 1  # only the inlined plotly.js
    assert "alert(&quot;x&quot;)" in out


def test_page_is_self_contained():
    page = Page("t")
    page.add("f", "Figure", page.figure(go.Figure(go.Scatter(x=[1, 2], y=[3, 4])), "fig-1", "caption"))
    out = page.render()
    assert "<script src" not in out.lower() and "<link" not in out.lower()
    assert "Plotly.newPlot" in out and 'id="fig-1"' in out
    assert "not a forecast" in out and "civil-protection authorities" in out


def test_minmax_decimation_keeps_extremes_and_shrinks():
    rng = np.random.default_rng(0)
    n = 525_600
    t = np.arange(n, dtype="int64") * 600_000_000_000
    y = rng.normal(size=n)
    y[123_456] = 50.0
    y[400_000] = -50.0
    keep = minmax_decimate(t, y, n_bins=1500)
    assert keep.size <= 4 * 1500
    assert 123_456 in keep and 400_000 in keep and 0 in keep and n - 1 in keep
    assert np.all(np.diff(keep) > 0)
    small = minmax_decimate(t[:100], y[:100], n_bins=1500)
    assert small.size == 100


def test_gaps_break_lines():
    t = np.array([0, 1, 2, 10, 11], dtype="int64")
    tt, yy = gaps_as_breaks(t, np.arange(5.0), max_gap_ns=3)
    assert np.isnan(yy[3]) and tt.size == 6
