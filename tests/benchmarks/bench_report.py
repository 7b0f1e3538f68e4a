"""Benchmark: `degas report` end to end on the large demo variant.

10 years of 10-minute SO2 flux from two stations (525,600 scans each), a daily extrusion rate and a
one-million-event catalogue, ingested once (not timed here; see bench_ingest.py), then the report is
run in a fresh process: total time, peak resident memory, the share of each step, and the HTML size.
Targets (issue "Weekly review and the report"): under 60 s and under 2 GB on the 2-core machine;
HTML under 15 MB. Reference in the same run: reading the same archive series and writing them to CSV
with pandas (the least a report on these data has to do), for a ratio.

Run on demand:  .venv/bin/python -m pytest tests/benchmarks/bench_report.py -s
"""

from __future__ import annotations

import json
import subprocess
import sys
import textwrap
import time

import pytest

CHILD = textwrap.dedent(
    """
    import json, resource, sys, time
    from pathlib import Path
    mode, arc, out = sys.argv[1], sys.argv[2], Path(sys.argv[3])
    t0 = time.perf_counter()
    from degas.store import Archive
    a = Archive.open(arc)
    if mode == "reference":
        for e in a.entries():
            a.load(e.series_id).data.to_csv(out / (e.series_id + ".csv"))
        steps, size = [], 0
    else:
        from degas.pipeline import run_all
        from degas.project import Project
        from degas.report import write_report
        b = run_all(a, Project(volcano="Velmarra large"), mode="retrospective")
        t1 = time.perf_counter()
        path = write_report(b, out)
        steps = b.timings + [("render and write HTML", time.perf_counter() - t1)]
        size = path.stat().st_size
    dt = time.perf_counter() - t0
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print(json.dumps({"seconds": dt, "peak_rss_mib": rss / 1024, "steps": steps, "html_bytes": size}))
    """
)


@pytest.mark.benchmark
def test_report_on_ten_years_of_ten_minute_data(tmp_path):
    _report_case(tmp_path, gaps=False)


@pytest.mark.benchmark
def test_report_on_ten_years_of_gapped_ten_minute_data(tmp_path):
    # issue 12: the same with 15 % of the scans missing and multi-week outages; targets < 30 s, < 1.5 GB
    _report_case(tmp_path, gaps=True)


def _report_case(tmp_path, gaps: bool):
    from degas.demo import write_large
    from degas.io.base import ReadOptions
    from degas.store import Archive

    t0 = time.perf_counter()
    files = write_large(tmp_path / "large", gaps=gaps)
    arc = Archive.create(tmp_path / "archive")
    for f in files:
        opts = ReadOptions(station=f.stem.split("_")[-1]) if "so2" in f.name else ReadOptions()
        arc.ingest_file(f, opts)
    print(f"\nlarge variant written and ingested in {time.perf_counter() - t0:.1f} s "
          f"({sum(e.n_rows for e in arc.entries()):,} rows)")
    script = tmp_path / "child.py"
    script.write_text(CHILD)

    def run(mode: str) -> dict:
        out = tmp_path / f"out-{mode}"
        out.mkdir()
        res = subprocess.run([sys.executable, str(script), mode, str(tmp_path / "archive"), str(out)],
                             capture_output=True, text=True, check=True)
        return json.loads(res.stdout.strip().splitlines()[-1])

    ref = run("reference")
    ours = run("degas")
    print(f"reference (load every series, write CSV): {ref['seconds']:.1f} s, peak RSS {ref['peak_rss_mib']:.0f} MiB")
    label = "with gaps " if gaps else ""
    print(f"degas report {label}end to end: {ours['seconds']:.1f} s (target < {30 if gaps else 60} s), peak RSS "
          f"{ours['peak_rss_mib']:.0f} MiB (target < {1536 if gaps else 2048}), HTML {ours['html_bytes'] / 1e6:.1f} MB "
          "(target < 15)")
    print(f"ratio degas/reference: {ours['seconds'] / ref['seconds']:.2f}")
    total = sum(s for _, s in ours["steps"])
    for name, s in ours["steps"]:
        print(f"  {name:28s} {s:7.2f} s  {100 * s / total:5.1f} %")
    if gaps:
        assert ours["seconds"] < 30 and ours["peak_rss_mib"] < 1536 and ours["html_bytes"] < 15e6
    else:
        assert ours["seconds"] < 60 and ours["peak_rss_mib"] < 2048 and ours["html_bytes"] < 15e6
