"""Scores of detected change points against known or annotated ones.

* :func:`tcpd_f1` and :func:`tcpd_cover` re-implement the two metrics of the Turing change-point
  benchmark (van den Burg & Williams 2020, arXiv:2003.06222) from the protocol description in
  ``shared/benchmarks/tcpd/README.md`` §6: positions are 0-based sample indices, a position c
  means "a new regime starts at c", and several annotators are scored separately.
* :func:`precision_recall` is the plain one-to-one match within a margin used for known-truth
  tests (times or indices).

F1 reproduces the reference's greedy matching order: true positions are visited in CPython's
iteration order of ``set`` objects built exactly as the reference builds them (each annotator's
list turned into a set, then 0 added; the pooled set filled annotator by annotator in the given
order, each in its own set's iteration order). Ascending order gives slightly different numbers
in rare cases (README §6.2).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence

import numpy as np
import pandas as pd

#: Margin of the TCPD F1 (samples).
TCPD_MARGIN = 5


def clean_predictions(predictions: Iterable[int], n_obs: int) -> list[int]:
    """Unique predicted positions with ``1 ≤ x ≤ n_obs - 2`` (README §6.1), ascending."""
    return sorted({int(x) for x in predictions if 1 <= int(x) <= n_obs - 2})


def _true_positives(truth: set[int], preds: set[int], margin: int) -> int:
    """One-to-one greedy match: visit ``truth`` in its set iteration order, take the closest free
    prediction within ``margin`` (ties → the smaller position)."""
    free = set(preds)
    tp = 0
    for tau in truth:  # iteration order of the set, as the reference does
        close = [(abs(tau - x), x) for x in free if abs(tau - x) <= margin]
        if close:
            tp += 1
            free.remove(min(close)[1])
    return tp


def _annotator_sets(annotations: Mapping[str, Sequence[int]] | Sequence[Sequence[int]]) -> list[set[int]]:
    lists = list(annotations.values()) if isinstance(annotations, Mapping) else list(annotations)
    out = []
    for a in lists:
        s = set(int(v) for v in a)
        s.add(0)
        out.append(s)
    return out


def tcpd_precision_recall(
    annotations: Mapping[str, Sequence[int]] | Sequence[Sequence[int]],
    predictions: Iterable[int],
    n_obs: int | None = None,
    margin: int = TCPD_MARGIN,
) -> tuple[float, float]:
    """TCPD precision (against the pooled annotations) and recall (mean over annotators).

    Parameters
    ----------
    annotations : annotator id → list of 0-based change positions (JSON order kept), or a
        sequence of such lists.
    predictions : predicted 0-based positions (start of the new segment).
    n_obs : series length; when given, predictions are cleaned first (README §6.1).
    margin : matching margin in samples (both ends included).
    """
    preds = clean_predictions(predictions, n_obs) if n_obs is not None else [int(x) for x in predictions]
    tks = _annotator_sets(annotations)
    x = set(preds)
    x.add(0)
    tstar: set[int] = set()
    for tk in tks:
        for tau in tk:
            tstar.add(tau)
    precision = _true_positives(tstar, x, margin) / len(x)
    recall = float(np.mean([_true_positives(tk, x, margin) / len(tk) for tk in tks]))
    return precision, recall


def tcpd_f1(
    annotations: Mapping[str, Sequence[int]] | Sequence[Sequence[int]],
    predictions: Iterable[int],
    n_obs: int | None = None,
    margin: int = TCPD_MARGIN,
) -> float:
    """TCPD F1 (README §6.2): 2PR/(P+R) with the pooled precision and mean recall."""
    p, r = tcpd_precision_recall(annotations, predictions, n_obs, margin)
    return 2.0 * p * r / (p + r)


def _partition(positions: Iterable[int], n_obs: int) -> list[tuple[int, int]]:
    starts = sorted({int(c) for c in positions if 0 < int(c) < n_obs})
    bounds = [0, *starts, n_obs]
    return [(bounds[i], bounds[i + 1]) for i in range(len(bounds) - 1)]


def _covering(truth: list[tuple[int, int]], pred: list[tuple[int, int]], n_obs: int) -> float:
    total = 0.0
    for a0, a1 in truth:
        best = 0.0
        for b0, b1 in pred:
            inter = max(0, min(a1, b1) - max(a0, b0))
            if inter == 0:
                continue
            union = max(a1, b1) - min(a0, b0)
            best = max(best, inter / union)
        total += (a1 - a0) * best
    return total / n_obs


def tcpd_cover(
    annotations: Mapping[str, Sequence[int]] | Sequence[Sequence[int]],
    predictions: Iterable[int],
    n_obs: int,
) -> float:
    """TCPD covering metric (README §6.3; Arbeláez et al. 2010 eq. 8), mean over annotators.

    Parameters
    ----------
    annotations : as :func:`tcpd_f1`.
    predictions : predicted positions (cleaned as README §6.1 before use).
    n_obs : series length T.
    """
    pred = _partition(clean_predictions(predictions, n_obs), n_obs)
    lists = list(annotations.values()) if isinstance(annotations, Mapping) else list(annotations)
    return float(np.mean([_covering(_partition(a, n_obs), pred, n_obs) for a in lists]))


def precision_recall(truth, predicted, margin) -> tuple[float, float, int]:
    """Precision and recall of predicted change positions within ``margin`` of the true ones.

    One-to-one greedy matching: true positions in ascending order, each takes the closest free
    prediction within the margin (ties → the earlier one).

    Parameters
    ----------
    truth, predicted : positions (numbers) or UTC times.
    margin : same unit as the positions (a number, or a Timedelta / duration string for times).

    Returns
    -------
    (precision, recall, true_positives); precision is 1 with no predictions, recall is 1 with
    no true changes.
    """
    def as_num(v):
        v = list(v)
        if v and isinstance(v[0], (pd.Timestamp, np.datetime64)):
            return [pd.Timestamp(x).value for x in v], True
        return [float(x) for x in v], False

    t, t_is_time = as_num(truth)
    p, p_is_time = as_num(predicted)
    is_time = t_is_time or p_is_time
    mg = pd.Timedelta(margin).value if is_time else float(margin)
    free = sorted(p)
    tp = 0
    for tau in sorted(t):
        close = [(abs(tau - x), x) for x in free if abs(tau - x) <= mg]
        if close:
            tp += 1
            free.remove(min(close)[1])
    precision = tp / len(p) if p else 1.0
    recall = tp / len(t) if t else 1.0
    return precision, recall, tp
