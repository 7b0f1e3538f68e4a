"""Appendix tables: CSV (protected against spreadsheet formula injection), Markdown and LaTeX."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd

from degas.safecsv import protect_frame


def _fmt(v) -> str:
    if v is None or (isinstance(v, float) and math.isnan(v)) or v is pd.NaT or (v is pd.NA):
        return ""
    if isinstance(v, pd.Timestamp):
        return v.isoformat()
    if isinstance(v, (float, np.floating)):
        return f"{v:.6g}"
    return str(v)


def markdown_escape(text: str) -> str:
    """Cell text safe in Markdown: HTML (&, <, >) as entities, so no tag or script survives; the characters
    that build links, images and code (\\ [ ] ` |) backslash-escaped; line breaks as spaces."""
    import html

    text = html.escape(" ".join(str(text).splitlines()), quote=False)
    return "".join("\\" + ch if ch in "\\[]`|" else ch for ch in text)


def to_markdown(df: pd.DataFrame) -> str:
    """A GitHub-style Markdown table, every cell escaped (see :func:`markdown_escape`)."""
    cols = [str(c) for c in df.columns]
    esc = markdown_escape
    lines = ["| " + " | ".join(esc(c) for c in cols) + " |", "| " + " | ".join("---" for _ in cols) + " |"]
    for row in df.itertuples(index=False):
        lines.append("| " + " | ".join(esc(_fmt(v)) for v in row) + " |")
    return "\n".join(lines) + "\n"


_LATEX_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_",
                  "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}"}


def latex_escape(text: str) -> str:
    return "".join(_LATEX_SPECIAL.get(ch, ch) for ch in text)


def to_latex(df: pd.DataFrame, caption: str | None = None) -> str:
    """A plain LaTeX tabular (booktabs rules), every cell escaped."""
    cols = [latex_escape(str(c)) for c in df.columns]
    lines = [r"\begin{table}[ht]", r"\centering", r"\begin{tabular}{" + "l" * len(cols) + "}", r"\toprule",
             " & ".join(cols) + r" \\", r"\midrule"]
    for row in df.itertuples(index=False):
        lines.append(" & ".join(latex_escape(_fmt(v)) for v in row) + r" \\")
    lines += [r"\bottomrule", r"\end{tabular}"]
    if caption:
        lines.append(r"\caption{" + latex_escape(caption) + "}")
    lines.append(r"\end{table}")
    return "\n".join(lines) + "\n"


def write_table(df: pd.DataFrame, directory: Path, name: str, caption: str | None = None) -> list[Path]:
    """Write ``name``.csv (protected), .md and .tex into ``directory``; returns the paths."""
    directory.mkdir(parents=True, exist_ok=True)
    paths = [directory / f"{name}.csv", directory / f"{name}.md", directory / f"{name}.tex"]
    protect_frame(df).to_csv(paths[0], index=False)
    paths[1].write_text(to_markdown(df), encoding="utf-8")
    paths[2].write_text(to_latex(df, caption), encoding="utf-8")
    return paths
