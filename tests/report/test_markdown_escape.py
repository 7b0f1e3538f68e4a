"""The Markdown appendix escapes HTML and link syntax (issue 10)."""

from __future__ import annotations

import pandas as pd

from degas.report.tables import to_markdown, write_table


def test_a_hostile_station_name_is_inert_in_markdown(tmp_path):
    df = pd.DataFrame({"station": ["<iframe src=javascript:alert(1)>", "[x](javascript:y)", "a|b\nc", "VLM-N"],
                       "<b>col</b>": [1.0, 2.0, 3.0, 4.0]})
    md = to_markdown(df)
    assert "<" not in md and ">" not in md
    assert "&lt;iframe src=javascript:alert(1)&gt;" in md and "\\[x\\](javascript:y)" in md
    assert md.count("\n") == 6  # header, rule, four rows: a line break in a cell never breaks the table
    assert "| VLM-N | 4 |" in md
    (p_md,) = [p for p in write_table(df, tmp_path, "weekly_review") if p.suffix == ".md"]
    assert "<iframe" not in p_md.read_text()
