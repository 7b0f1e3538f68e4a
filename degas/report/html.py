"""Page assembly: one self-contained HTML file (plotly.js inlined, no network requests).

Everything that comes from input data (station names, file names, notes, free text) goes through
:func:`esc` before it reaches the page.
"""

from __future__ import annotations

import html
import re
from dataclasses import dataclass, field

import pandas as pd

from degas.report.cautions import SHORT_CAUTION, caution_list

# regime shading: blue-purple tones with no alert-level meaning (no green / amber / red), keyed by label; a
# label this table does not know (regimes may gain or rename labels) gets the neutral fallback, never an error
REGIME_COLOURS = {
    "coupled": "rgba(70, 110, 170, 0.20)",
    "quiet": "rgba(150, 160, 180, 0.16)",
    "gas_only": "rgba(120, 90, 170, 0.24)",
    "magma_only": "rgba(60, 60, 120, 0.24)",
}
REGIME_FALLBACK_COLOUR = "rgba(128, 128, 150, 0.12)"


def regime_colour(label: str) -> str:
    """Shading colour of a regime label (neutral fallback for labels without their own colour)."""
    return REGIME_COLOURS.get(label, REGIME_FALLBACK_COLOUR)

REGIME_LABELS = {
    "coupled": "coupled: gas follows magma output",
    "quiet": "quiet: little gas, no output",
    "gas_only": "gas without magma output (decoupled degassing)",
    "magma_only": "output without matching gas (gas-poor, possible sealing)",
}

CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:0;color:#1d2428;background:#fbfbf8}
header{background:#23343b;color:#f4f1e8;padding:18px 28px}
header h1{margin:0 0 4px 0;font-size:1.45em}
header p{margin:2px 0;opacity:.85}
main{max-width:1180px;margin:0 auto;padding:8px 28px 40px}
section{margin:26px 0}
h2{font-size:1.15em;border-bottom:2px solid #c9b98a;padding-bottom:4px}
.cautions{background:#fff4dc;border-left:6px solid #b8860b;padding:10px 16px}
.cautions li{margin:4px 0}
.summary li{margin:6px 0}
table.data{border-collapse:collapse;font-size:.86em;margin:8px 0;max-width:100%}
table.data th,table.data td{border:1px solid #d6d2c4;padding:3px 7px;text-align:right;overflow-wrap:break-word}
table.data th{background:#ece7d8}
table.data td.t{text-align:left;max-width:420px}
.scroll{overflow-x:auto;max-width:100%}
abbr.sha{text-decoration:underline dotted;cursor:help}
#brief{background:#fff;border:1px solid #d6d2c4;padding:4px 16px 8px;margin:14px 0}
#brief h2{margin-top:8px}
.brief-list{margin:4px 0;padding-left:20px}.brief-list li{margin:2px 0}
li.crossed{font-weight:600}
table.brief td{vertical-align:middle;padding:2px 7px}
table.brief tr.crossed td{background:#efeaf7}
.unit{color:#5b6469;font-size:.85em}
.muted{color:#8a8f93}
svg.spark polyline{fill:none;stroke:#3b4f7a;stroke-width:1.5}
svg.spark circle{fill:#3b4f7a}
.short-caution{font-size:.88em;color:#3b454a;margin:4px 0}
@media print{
 body{background:#fff;font-size:10.5pt}
 header{background:none;color:#000;padding:0 0 6pt;border-bottom:1.5pt solid #000}
 main{max-width:none;padding:0}
 section{margin:10pt 0;break-inside:auto}
 h2{break-after:avoid}
 .figure,table.data,#brief{break-inside:avoid}
 .scroll{overflow:visible}
 table.data{font-size:8.5pt}
 .modebar-container,.modebar{display:none!important}
 .cautions{background:none;border:1pt solid #000}
 abbr.sha::after{content:" (" attr(title) ")";font-size:7pt;word-break:break-all}
 a{color:#000;text-decoration:none}
}
.figure{margin:12px 0;background:#fff;border:1px solid #e3dfd2}
.caption{font-size:.85em;color:#4a555b;margin:4px 8px 10px}
footer{font-size:.82em;color:#4a555b;border-top:1px solid #d6d2c4;padding:12px 28px}
code{font-size:.92em}
"""


SHA_RE = re.compile(r"[0-9a-f]{64}")


def esc(text) -> str:
    """HTML-escape any value (quotes too)."""
    return html.escape("" if text is None else str(text), quote=True)


def table_html(df: pd.DataFrame, max_rows: int = 200, float_format: str = "{:.4g}") -> str:
    """A plain escaped HTML table; long tables are cut with a note."""
    head = "".join(f"<th>{esc(c)}</th>" for c in df.columns)
    rows = []
    for row in df.head(max_rows).itertuples(index=False):
        cells = []
        for v in row:
            if isinstance(v, float):
                txt, cls = ("" if pd.isna(v) else float_format.format(v)), ""
            elif isinstance(v, pd.Timestamp):
                fmt = "%Y-%m-%d" if not pd.isna(v) and v == v.normalize() else "%Y-%m-%d %H:%M"
                txt, cls = (v.strftime(fmt) if not pd.isna(v) else ""), "t"
            else:
                txt, cls = ("" if v is None or v is pd.NA else str(v)), "t"
            if cls == "t" and SHA_RE.fullmatch(txt):  # a SHA-256: shortened, the full value on hover
                cells.append(f'<td class="t"><abbr class="sha" title="{esc(txt)}">{esc(txt[:12])}…</abbr></td>')
                continue
            cells.append(f'<td class="{cls}">{esc(txt)}</td>' if cls else f"<td>{esc(txt)}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    more = f'<p class="caption">{len(df) - max_rows} more rows in the appendix files.</p>' if len(df) > max_rows else ""
    return (f'<div class="scroll"><table class="data"><thead><tr>{head}</tr></thead><tbody>{"".join(rows)}</tbody>'
            f'</table></div>{more}')


@dataclass
class Page:
    """An HTML report page built section by section."""

    title: str
    subtitle: str = ""
    sections: list[tuple[str, str, str]] = field(default_factory=list)  # (id, heading, html)
    figure_ids: list[str] = field(default_factory=list)
    lead: str = ""  # HTML shown before the cautions (the weekly brief, which carries its own short caution)

    def add(self, section_id: str, heading: str, body_html: str) -> None:
        self.sections.append((section_id, heading, body_html))

    def figure(self, fig, div_id: str, caption: str = "") -> str:
        """HTML for a plotly figure (no plotly.js: it is inlined once in the page head)."""
        self.figure_ids.append(div_id)
        div = fig.to_html(full_html=False, include_plotlyjs=False, div_id=div_id,
                          config={"displaylogo": False, "responsive": True})
        cap = f'<p class="caption">{esc(caption)}</p>' if caption else ""
        return f'<div class="figure">{div}{cap}</div>'

    def render(self, cautions_extra: list[str] | tuple[str, ...] = ()) -> str:
        from plotly.offline import get_plotlyjs

        caut = "".join(f"<li>{esc(c)}</li>" for c in caution_list(cautions_extra))
        body = [self.lead] if self.lead else []
        body.append(f'<section id="cautions" class="cautions"><h2>Read this first</h2><ul>{caut}</ul></section>')
        for sid, heading, content in self.sections:
            body.append(f'<section id="{esc(sid)}"><h2>{esc(heading)}</h2>{content}</section>')
        return (
            "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"><title>{esc(self.title)}</title>"
            f"<style>{CSS}</style><script type=\"text/javascript\">{get_plotlyjs()}</script></head><body>"
            f"<header><h1>{esc(self.title)}</h1><p>{esc(self.subtitle)}</p></header><main>"
            + "".join(body)
            + f"</main><footer>{esc(SHORT_CAUTION)}</footer></body></html>\n"
        )
