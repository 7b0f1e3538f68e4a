"""Fuzzing the readers and the CLI with hostile files and options (issue 10; see tests/fuzzing.py).

Derandomised, so every run replays the same cases: 1,500 through the Python reader and 500 through
``degas ingest`` in-process (2,000 in all). tests/benchmarks/bench_fuzz.py runs 10,000 on demand.
"""

from __future__ import annotations

import os
import shutil

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests import fuzzing

READER_CASES = int(os.environ.get("DEGAS_FUZZ_READER_CASES", 1500))
CLI_CASES = int(os.environ.get("DEGAS_FUZZ_CLI_CASES", 500))
_SETTINGS = dict(derandomize=True, deadline=None, database=None, print_blob=True,
                 suppress_health_check=list(HealthCheck))


@pytest.fixture(scope="module")
def workdir():
    d = fuzzing.new_workdir()
    yield d
    shutil.rmtree(d, ignore_errors=True)


def test_readers_return_a_result_or_one_line_error(workdir):
    @settings(max_examples=READER_CASES, **_SETTINGS)
    @given(case=fuzzing.random_file(), opts=fuzzing.reader_options())
    def inner(case, opts):
        fuzzing.check_reader(workdir, case, opts)

    inner()


def test_cli_ingest_exits_0_or_2_with_one_line_and_keeps_the_archive(workdir):
    archive = fuzzing.seeded_archive(workdir / "archive")

    @settings(max_examples=CLI_CASES, **_SETTINGS)
    @given(case=fuzzing.random_file(), args=fuzzing.cli_options(),
           mapping=st.one_of(st.none(), st.none(), st.none(), st.none(), fuzzing.mapping_toml()))
    def inner(case, args, mapping):
        fuzzing.check_cli(workdir, archive, case, args, mapping)

    inner()
    assert fuzzing.COUNTS["cli: exit 0"] > 0 and fuzzing.COUNTS["cli: exit 2"] > 0
