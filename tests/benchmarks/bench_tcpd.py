"""External benchmark: our default detector on the Turing change-point dataset (TCPD).

Data, annotations and published scores: /work/shared/benchmarks/tcpd/ (van den Burg & Williams
2020, arXiv:2003.06222). Every univariate series in the aggregate set whose JSON is shipped
(25 series) is run through :func:`detect_changepoints` with ONE fixed setting for all series
(the package defaults; no tuning per series), and scored with our re-implementation of the
TCPD F1 (margin 5) and cover. The published default and oracle means are recomputed on exactly
the same series from ``published_default_oracle_by_dataset.csv``.

Run: ``pytest tests/benchmarks/bench_tcpd.py -s``
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from degas.analysis.changepoints import detect_changepoints
from degas.analysis.scoring import tcpd_cover, tcpd_f1
from degas.model import SeriesMeta, make_series

TCPD = Path("/work/shared/benchmarks/tcpd")
#: The one setting used for every series (the package defaults of detect_changepoints).
SETTING: dict = {}


def load_dataset(path: Path) -> tuple[str, np.ndarray]:
    """(name, values) of a univariate TCPD file; JSON null → NaN (missing)."""
    d = json.loads(path.read_text())
    raw = d["series"][0]["raw"]
    return d["name"], np.array([np.nan if v is None else float(v) for v in raw])


def detect_positions(values: np.ndarray, **setting) -> list[int]:
    """Change positions (0-based index of the first sample of each new segment) of our detector.

    TCPD treats observations as equally spaced; they are placed on a daily UTC grid.
    """
    n = len(values)
    times = pd.date_range("2000-01-01", periods=n, freq="1D", tz="UTC")
    series = make_series(SeriesMeta(kind="other", quantity="tcpd"), times, values)
    res = detect_changepoints(series, **setting)
    t0 = times[0]
    return [int((t - t0) / pd.Timedelta("1D")) for t in res.change_times]


def published() -> dict[str, dict[str, float]]:
    with open(TCPD / "published_default_oracle_by_dataset.csv", newline="") as fh:
        return {r["dataset"]: r for r in csv.DictReader(fh)}


def evaluate(setting: dict | None = None) -> pd.DataFrame:
    setting = SETTING if setting is None else setting
    annotations = json.loads((TCPD / "annotations.json").read_text())
    pub = published()
    rows = []
    for path in sorted((TCPD / "datasets").glob("*.json")):
        d = json.loads(path.read_text())
        name = d["name"]
        if d["n_dim"] != 1 or pub.get(name, {}).get("in_aggregate_32") != "1":
            continue  # run_log (multivariate), quality_control_* and uk_coal_employ are outside the 32
        _, values = load_dataset(path)
        pos = detect_positions(values, **setting)
        ann = annotations[name]
        p = pub[name]
        rows.append({
            "dataset": name, "n_obs": len(values), "n_cp": len(pos),
            "f1": tcpd_f1(ann, pos, len(values)), "cover": tcpd_cover(ann, pos, len(values)),
            **{f"{m}_{k}": float(p[f"{m}_{k}"] or 0.0)  # a published null counts as 0 (README §6.4)
               for m in ("binseg", "pelt", "zero") for k in ("default_f1", "default_cover")},
            "binseg_oracle_f1": float(p["binseg_oracle_f1"] or 0.0),
            "binseg_oracle_cover": float(p["binseg_oracle_cover"] or 0.0),
            "pelt_oracle_f1": float(p["pelt_oracle_f1"] or 0.0),
            "pelt_oracle_cover": float(p["pelt_oracle_cover"] or 0.0),
        })
    return pd.DataFrame(rows)


@pytest.mark.benchmark
def test_tcpd_default_beats_published_binseg_default():
    df = evaluate()
    assert len(df) == 25
    with pd.option_context("display.width", 200, "display.max_columns", 20):
        print()
        print(df[["dataset", "n_obs", "n_cp", "f1", "cover", "binseg_default_f1", "binseg_default_cover",
                  "pelt_default_f1", "pelt_default_cover", "zero_default_f1", "zero_default_cover"]]
              .round(3).to_string(index=False))
    m = df.mean(numeric_only=True)
    print(f"\nmeans over {len(df)} series           F1     cover")
    print(f"  degas default (one setting)  {m['f1']:.3f}  {m['cover']:.3f}")
    for meth in ("binseg", "pelt", "zero"):
        print(f"  published {meth:<7} default     {m[f'{meth}_default_f1']:.3f}  {m[f'{meth}_default_cover']:.3f}")
    for meth in ("binseg", "pelt"):
        print(f"  published {meth:<7} oracle      {m[f'{meth}_oracle_f1']:.3f}  {m[f'{meth}_oracle_cover']:.3f}"
              f"   (distance from ours: {m[f'{meth}_oracle_f1'] - m['f1']:+.3f}, "
              f"{m[f'{meth}_oracle_cover'] - m['cover']:+.3f})")
    alt = evaluate({"noise": "mad_diff", "penalty": "bic"}).mean(numeric_only=True)
    print(f"  white-noise setting (noise='mad_diff', penalty='bic'): {alt['f1']:.3f}  {alt['cover']:.3f}")
    # published means on these 25 series, README §7: binseg 0.690 / 0.655, pelt 0.684 / 0.656
    assert abs(m["binseg_default_f1"] - 0.690) < 5e-4 and abs(m["binseg_default_cover"] - 0.655) < 5e-4
    assert m["f1"] > m["binseg_default_f1"] and m["cover"] > m["binseg_default_cover"]
