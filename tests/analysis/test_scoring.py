"""TCPD F1 and cover, and precision/recall within a margin.

Protocol and worked examples: shared/benchmarks/tcpd/README.md §6 (our description of the
TCPDBench scoring of van den Burg & Williams 2020); the cover is Arbeláez et al. (2010) eq. 8.
"""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest

from degas.analysis.scoring import (
    clean_predictions,
    precision_recall,
    tcpd_cover,
    tcpd_f1,
    tcpd_precision_recall,
)

ANN = {"1": [], "2": [10], "3": [50]}


def test_f1_worked_examples_from_the_benchmark_readme():
    # van den Burg & Williams (2020) reference tests, as quoted in the README §6.2
    p, r = tcpd_precision_recall(ANN, [10])
    assert p == 1.0 and r == pytest.approx((1 + 1 + 0.5) / 3)
    assert tcpd_f1(ANN, [10]) == pytest.approx(0.90909, abs=5e-6)
    assert tcpd_f1(ANN, []) == pytest.approx(0.8)


def test_empty_prediction_precision_one_recall_mean_inverse_sizes():
    p, r = tcpd_precision_recall(ANN, [])
    assert p == 1.0 and r == pytest.approx((1 + 0.5 + 0.5) / 3)


def test_cleaning_drops_first_and_last_positions_and_duplicates():
    assert clean_predictions([0, 1, 1, 5, 98, 99, 150], 100) == [1, 5, 98]
    # with n_obs given, a prediction at the last position is ignored
    assert tcpd_f1(ANN, [10, 99], n_obs=100) == tcpd_f1(ANN, [10])


def test_margin_is_inclusive_and_matching_is_one_to_one():
    assert tcpd_precision_recall([[10]], [15])[1] == 1.0  # |10 - 15| = 5 ≤ M
    assert tcpd_precision_recall([[10]], [16])[1] == 0.5  # only the added 0 matches
    # two predictions near one true position: only one can match it
    p, _ = tcpd_precision_recall([[10]], [9, 11])
    assert p == pytest.approx(2 / 3)  # {0, 9, 11}: 0 and one of 9/11


def test_f1_visits_true_positions_in_set_iteration_order():
    # CPython iterates {13, 17} ∪ {0} as 0, 17, 13 (hash = value modulo the table size 8).
    assert list({*[13, 17], 0}) == [0, 17, 13]
    # Visiting 17 first, it takes prediction 16 (distance 1) and 13 is left with 21 (distance 8):
    # 2 of 3 matched. Ascending order would match all three (13→16, 17→21).
    _, r = tcpd_precision_recall([[13, 17]], [16, 21])
    assert r == pytest.approx(2 / 3)


def test_cover_by_hand():
    # T = 100; annotator partitions: [0,100) | [0,10),[10,100) | [0,50),[50,100)
    # prediction []: C = 1, 0.1·10/100 + 0.9·90/100 = 0.82, 0.5·50/100·2 = 0.5
    assert tcpd_cover(ANN, [], 100) == pytest.approx((1 + 0.82 + 0.5) / 3)
    # prediction [50]: annotator 1: 2·(50·0.5)/100 = 0.5;
    # annotator 2: [0,10) best J = 10/50 → 10·0.2 = 2; [10,100) best J with [50,100) = 50/90 → 90·50/90 = 50
    #   → 0.52; annotator 3: exact → 1
    assert tcpd_cover(ANN, [50], 100) == pytest.approx((0.5 + 0.52 + 1.0) / 3)
    # a perfect prediction for a single annotator scores 1; position 0 and ≥ T add nothing
    assert tcpd_cover([[30, 60]], [0, 30, 60, 100], 100) == 1.0


def test_zero_baseline_on_a_shipped_series_matches_the_published_value():
    # Published 'zero' default scores (van den Burg & Williams 2020, v3 result files) for nile.
    root = Path("/work/shared/benchmarks/tcpd")
    if not root.exists():
        pytest.skip("TCPD copy not available")
    ann = json.loads((root / "annotations.json").read_text())["nile"]
    pub = pd.read_csv(root / "published_default_oracle_by_dataset.csv").set_index("dataset").loc["nile"]
    assert tcpd_f1(ann, [], 100) == pytest.approx(pub["zero_default_f1"], abs=1e-6)
    assert tcpd_cover(ann, [], 100) == pytest.approx(pub["zero_default_cover"], abs=1e-6)


def test_precision_recall_with_times_and_margin():
    t = pd.to_datetime(["2023-05-01", "2023-12-01"], utc=True)
    p = pd.to_datetime(["2023-05-03", "2023-09-01", "2023-11-30"], utc=True)
    prec, rec, tp = precision_recall(list(t), list(p), "3D")
    assert (prec, rec, tp) == (pytest.approx(2 / 3), 1.0, 2)
    assert precision_recall([10, 20], [], 2) == (1.0, 0.0, 0)
    assert precision_recall([], [5], 2) == (0.0, 1.0, 0)
