"""Benchmark: the issue-10 fuzzer at 10,000 cases (readers + CLI), printing what happened.

Run on demand:  .venv/bin/python -m pytest tests/benchmarks/bench_fuzz.py -s
Environment: DEGAS_FUZZ_CASES (default 10,000; 3/4 through the Python reader, 1/4 through
``degas ingest`` in-process), DEGAS_FUZZ_RANDOM=1 to explore new cases instead of the fixed
(derandomised) set. The same promise as tests/test_fuzz.py is asserted on every case; the counts
printed are the bar of issue 10 (exit codes 0/2 only, at most one stderr line, no traceback, untouched
series unchanged). Reference: cases per second of the reader alone on the same inputs, measured in the
same run, so the ratio shows what the CLI and archive checks add.
"""

from __future__ import annotations

import os
import shutil
import time

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests import fuzzing

TOTAL = int(os.environ.get("DEGAS_FUZZ_CASES", 10_000))
RANDOM = os.environ.get("DEGAS_FUZZ_RANDOM") == "1"


def test_fuzz_10000_cases():
    work = fuzzing.new_workdir()
    n_reader, n_cli = TOTAL * 3 // 4, TOTAL - TOTAL * 3 // 4
    common = dict(derandomize=not RANDOM, deadline=None, database=None, print_blob=True,
                  suppress_health_check=list(HealthCheck))
    archive = fuzzing.seeded_archive(work / "archive")

    @settings(max_examples=n_reader, **common)
    @given(case=fuzzing.random_file(), opts=fuzzing.reader_options())
    def readers(case, opts):
        fuzzing.check_reader(work, case, opts)

    @settings(max_examples=n_cli, **common)
    @given(case=fuzzing.random_file(), args=fuzzing.cli_options(),
           mapping=st.one_of(st.none(), st.none(), st.none(), st.none(), fuzzing.mapping_toml()))
    def cli(case, args, mapping):
        fuzzing.check_cli(work, archive, case, args, mapping)

    try:
        t0 = time.perf_counter()
        readers()
        t_read = time.perf_counter() - t0
        t0 = time.perf_counter()
        cli()
        t_cli = time.perf_counter() - t0
    finally:
        shutil.rmtree(work, ignore_errors=True)
    c = fuzzing.COUNTS
    n_r = c["reader: read"] + c["reader: one-line error"]
    n_c = c["cli: exit 0"] + c["cli: exit 2"]
    print(f"\nfuzz cases: {n_r + n_c:,} ({'random' if RANDOM else 'derandomised'})")
    print(f"  reader: {n_r:,} cases, {c['reader: read']:,} read, {c['reader: one-line error']:,} one-line errors, "
          f"{c['reader: rows rejected']:,} rows rejected; {n_r / t_read:.0f} cases/s (reference)")
    print(f"  CLI:    {n_c:,} cases, exit 0: {c['cli: exit 0']:,}, exit 2: {c['cli: exit 2']:,}, other exits: 0, "
          f"stderr > 1 line: 0, tracebacks: 0, untouched series changed: 0; {n_c / t_cli:.0f} cases/s "
          f"(ratio to the reader: {(n_c / t_cli) / (n_r / t_read):.2f})")
    print("  most frequent one-line errors:")
    for msg, k in fuzzing.MESSAGES.most_common(12):
        print(f"    {k:6,d}  {msg}")
    assert n_r + n_c >= TOTAL
