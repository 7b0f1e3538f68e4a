"""The demo report in a real browser: headless Chromium, opened from a file URL with networking off.

Checks: no console errors, every plotly figure drew its SVG, the cautions are visible, no resource was
fetched from anywhere but the file itself, and the summary shown equals the analysis results. Saves a
screenshot. Skipped (with the reason) when no Chromium is installed; CI installs Debian's chromium.
"""

from __future__ import annotations

import json
import shutil
import subprocess
from html.parser import HTMLParser

import pytest

from degas.report.summary import summarise

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser") or shutil.which("google-chrome")
pytestmark = [pytest.mark.browser, pytest.mark.slow,
              pytest.mark.skipif(CHROMIUM is None, reason="no Chromium installed (apt-get install chromium)")]

PROBE = """<script>
window.__errs = [];
window.addEventListener('error', e => window.__errs.push('error: ' + e.message));
(function () { const ce = console.error; console.error = function (...a) { window.__errs.push(a.join(' '));
  ce.apply(console, a); }; })();
window.addEventListener('load', () => setTimeout(() => {
  const out = {};
  out.errors = window.__errs;
  out.figures = [...document.querySelectorAll('.plotly-graph-div')].map(
      g => [g.id, g.querySelectorAll('svg.main-svg').length]);
  const c = document.getElementById('cautions'); const r = c.getBoundingClientRect(); const st = getComputedStyle(c);
  out.cautions = {height: r.height, top: r.top, visibility: st.visibility, display: st.display,
                  text: c.innerText};
  out.resources = performance.getEntriesByType('resource').map(e => e.name);
  out.summary = [...document.querySelectorAll('#summary li')].map(li => [li.dataset.key, li.innerText]);
  const p = document.createElement('pre'); p.id = '__probe'; p.textContent = JSON.stringify(out);
  document.body.appendChild(p);
}, 2500));
</script>"""

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--host-resolver-rules=MAP * ~NOTFOUND", "--proxy-server=http://127.0.0.1:9",
         "--proxy-bypass-list=<-loopback>", "--virtual-time-budget=15000", "--window-size=1280,4000"]


class _Probe(HTMLParser):
    def __init__(self):
        super().__init__()
        self.inside = False
        self.text = ""

    def handle_starttag(self, tag, attrs):
        self.inside = self.inside or (tag == "pre" and ("id", "__probe") in attrs)

    def handle_endtag(self, tag):
        if tag == "pre":
            self.inside = False

    def handle_data(self, data):
        if self.inside:
            self.text += data


def _run_probe(html: str, probe: str, flags: list[str], tmp_path) -> dict:
    """Load ``html`` with ``probe`` injected in headless Chromium and return what the probe wrote (JSON)."""
    probed = tmp_path / "probed.html"
    probed.write_text(html.replace("<head>", "<head>" + probe, 1), encoding="utf-8")
    dom = subprocess.run([CHROMIUM, *flags, f"--user-data-dir={tmp_path / 'profile'}", "--dump-dom",
                          probed.as_uri()], capture_output=True, text=True, timeout=180)
    parser = _Probe()
    parser.feed(dom.stdout)
    assert parser.text, f"the probe did not run; chromium said: {dom.stderr[-2000:]}"
    return json.loads(parser.text)


def test_demo_report_renders_offline_in_chromium(demo_report, demo_bundle, tmp_path):
    path, _ = demo_report
    html = path.read_text(encoding="utf-8")
    out = _run_probe(html, PROBE, FLAGS, tmp_path)
    user = tmp_path / "profile"
    assert out["errors"] == []
    assert out["figures"], "no plotly figure on the page"
    for fid, n_svg in out["figures"]:
        assert n_svg >= 1, f"figure {fid} drew no SVG"
    drawn = {fid for fid, n_svg in out["figures"] if n_svg >= 1}
    assert {"fig-isobars", "fig-storage-depth-time", "fig-depth-time"} <= drawn  # issue 14 section + issue 13 plot
    c = out["cautions"]
    assert c["display"] != "none" and c["visibility"] == "visible" and c["height"] > 50 and c["top"] < 400
    assert "not a forecast" in c["text"] and "civil-protection" in c["text"]
    assert all(r.startswith("file:") for r in out["resources"]), out["resources"]
    expected = [(s.key, s.text) for s in summarise(demo_bundle)]
    assert [tuple(x) for x in out["summary"]] == expected
    shot = tmp_path / "demo_report.png"
    subprocess.run([CHROMIUM, *FLAGS, f"--user-data-dir={user}", f"--screenshot={shot}", path.as_uri()],
                   capture_output=True, timeout=180)
    assert shot.exists() and shot.stat().st_size > 10_000


BRIEF_PROBE = """<script>
window.addEventListener('load', () => setTimeout(() => {
  const b = document.getElementById('brief'); const r = b.getBoundingClientRect();
  const out = {top: r.top, bottom: r.bottom, right: r.right, width: window.innerWidth, height: window.innerHeight,
               scroll_width: document.documentElement.scrollWidth, text: b.innerText,
               rows: [...b.querySelectorAll('table.brief tbody tr')].map(tr => tr.cells[0].innerText),
               sparks: b.querySelectorAll('svg.spark').length};
  const p = document.createElement('pre'); p.id = '__probe'; p.textContent = JSON.stringify(out);
  document.body.appendChild(p);
}, 1500));
</script>"""


def test_weekly_brief_fits_one_1400x1000_screen(demo_weekly_report, tmp_path):
    html = demo_weekly_report.read_text(encoding="utf-8")
    flags = [f for f in FLAGS if not f.startswith("--window-size")] + ["--window-size=1400,1000",
                                                                       "--hide-scrollbars"]
    out = _run_probe(html, BRIEF_PROBE, flags, tmp_path)
    # a 1400x1000 window (its viewport is a little less high than the window: the browser's own frame)
    assert out["width"] == 1400 and out["height"] <= 1000
    assert 0 <= out["top"] and out["bottom"] <= out["height"], out  # the whole brief on the first screen
    assert out["right"] <= 1400 and out["scroll_width"] <= 1400, out  # nothing sticks out sideways
    assert "not official alert levels" in out["text"] and "not a forecast" in out["text"]
    assert "Regime this week" in out["text"]
    # ordered by what matters: gas first, then magma output, LP + hybrid, VT, amplitude, ratios
    assert out["rows"][0].startswith("SO2 flux") and out["rows"][-1].startswith("CO2/SO2")
    assert [r for r in out["rows"] if "events" in r][0].startswith("LP + hybrid")
    assert out["sparks"] == len(out["rows"])
    shot = tmp_path / "weekly_brief.png"
    subprocess.run([CHROMIUM, *flags, f"--user-data-dir={tmp_path / 'profile'}", f"--screenshot={shot}",
                    demo_weekly_report.as_uri()], capture_output=True, timeout=180)
    assert shot.exists() and shot.stat().st_size > 10_000
