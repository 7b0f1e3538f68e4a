"""Shared fixtures: paths to tiny test files and a helper that writes text files."""

from __future__ import annotations

from pathlib import Path

import pytest

DATA = Path(__file__).parent / "data"
REPO = Path(__file__).resolve().parents[1]


@pytest.fixture
def datapath() -> Path:
    return DATA


@pytest.fixture
def write(tmp_path: Path):
    """write("name.csv", text) -> Path of a new file in a temporary directory."""

    def _write(name: str, text: str | bytes) -> Path:
        p = tmp_path / name
        if isinstance(text, bytes):
            p.write_bytes(text)
        else:
            p.write_text(text, encoding="utf-8")
        return p

    return _write


# Property-based tests explore new random cases on a developer's machine; in CI they replay a fixed set
# (derandomised), so that a run is repeatable and a newly found corner case is fixed before it lands.
try:
    import os

    from hypothesis import settings

    settings.register_profile("ci", derandomize=True, print_blob=True)
    if os.environ.get("CI") == "true":
        settings.load_profile("ci")
except ImportError:  # hypothesis is a test extra
    pass
