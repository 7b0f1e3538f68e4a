"""The weekly brief's numbers: week-over-week levels, project thresholds, coverage against capability.

Thresholds are the project's own working values (``[thresholds]`` in the project TOML), never official alert
levels. Each names a series (a series id, or a role: gas, magma, lp_hybrid, vt, ratio, amplitude), a level in
the series' display unit (``above`` / ``below``) or a multiple of its baseline (``ratio_above`` /
``ratio_below``), and a ``label``. Coverage is judged against what the instrument can deliver: a daylight-only
scanner that can cover half of each day has full coverage at 0.5 (``[coverage]`` in the project).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from degas.errors import ConfigError

#: the order of the weekly review: what matters first (not alphabetical)
ROLE_ORDER: tuple[str, ...] = ("gas", "magma", "lp_hybrid", "vt", "amplitude", "ratio", "other")
#: role of a sampled series in the weekly review, by kind (anything else: "other")
ROLE_OF_KIND: dict[str, str] = {"gas_flux": "gas", "extrusion_rate": "magma", "amplitude": "amplitude",
                                "gas_ratio": "ratio"}
_KEYS = {"above", "below", "ratio_above", "ratio_below", "label"}


@dataclass(frozen=True)
class Threshold:
    """One working threshold of the project: series (id or role), level or ratio to baseline, label."""

    series: str
    label: str
    above: float | None = None
    below: float | None = None
    ratio_above: float | None = None
    ratio_below: float | None = None

    def describe(self) -> str:
        parts = []
        if self.above is not None:
            parts.append(f"above {self.above:g}")
        if self.below is not None:
            parts.append(f"below {self.below:g}")
        if self.ratio_above is not None:
            parts.append(f"above {self.ratio_above:g}× baseline")
        if self.ratio_below is not None:
            parts.append(f"below {self.ratio_below:g}× baseline")
        return " or ".join(parts)

    def crossed(self, level: float, ratio: float) -> bool:
        """True when the week's level (display unit) or its ratio to the baseline crosses the threshold."""
        def ok(x):
            return x is not None and np.isfinite(x)

        return bool((self.above is not None and ok(level) and level > self.above)
                    or (self.below is not None and ok(level) and level < self.below)
                    or (self.ratio_above is not None and ok(ratio) and ratio > self.ratio_above)
                    or (self.ratio_below is not None and ok(ratio) and ratio < self.ratio_below))


def parse_thresholds(raw, where: str = "project") -> tuple[Threshold, ...]:
    """``[thresholds.<series>]`` tables -> Threshold entries; unknown keys are an error naming them."""
    if not isinstance(raw, dict):
        raise ConfigError(f"{where}: [thresholds] must hold one table per series, e.g. [thresholds.gas]")
    out = []
    for series, t in raw.items():
        if not isinstance(t, dict):
            raise ConfigError(f"{where}: [thresholds.{series}] must be a table with a label and a level or ratio")
        bad = sorted(set(t) - _KEYS)
        if bad:
            raise ConfigError(f"{where}: unknown key(s) {bad} in [thresholds.{series}]; valid: "
                              + ", ".join(sorted(_KEYS)))
        nums = {k: t[k] for k in _KEYS - {"label"} if k in t}
        if not nums:
            raise ConfigError(f"{where}: [thresholds.{series}] needs above, below, ratio_above or ratio_below")
        for k, v in nums.items():
            if isinstance(v, bool) or not isinstance(v, int | float) or not np.isfinite(v):
                raise ConfigError(f"{where}: [thresholds.{series}] {k} must be a number, got {v!r}")
        label = t.get("label", f"{series} threshold")
        if not isinstance(label, str):
            raise ConfigError(f"{where}: [thresholds.{series}] label must be text")
        out.append(Threshold(str(series), label, **{k: float(v) for k, v in nums.items()}))
    return tuple(out)


def week_over_week(daily: pd.Series, window_end: pd.Timestamp, n_weeks: int, how: str = "median"
                   ) -> pd.DataFrame:
    """Per-week values for the ``n_weeks`` weeks ending at ``window_end`` (exclusive, UTC midnight).

    Parameters
    ----------
    daily : daily values indexed by UTC day start (display units; NaN = no data).
    window_end : end of the newest week (exclusive).
    n_weeks : number of 7-day weeks.
    how : "median" of the days with data (levels), or "mean" (rates, events per day).

    Returns
    -------
    DataFrame with ``week_start``, ``last_day`` (inclusive), ``value``, ``days`` (days with data), oldest first.
    """
    rows = []
    for k in range(n_weeks, 0, -1):
        s = window_end - pd.Timedelta(days=7 * k)
        e = s + pd.Timedelta(days=7)
        v = daily[(daily.index >= s) & (daily.index < e)].to_numpy(dtype=float)
        v = v[np.isfinite(v)]
        val = (float(np.median(v)) if how == "median" else float(np.mean(v))) if v.size else np.nan
        rows.append({"week_start": s, "last_day": e - pd.Timedelta(days=1), "value": val, "days": int(v.size)})
    return pd.DataFrame(rows)


def coverage_vs_capability(coverage: float, capability: float | None) -> float:
    """Coverage as a share of what the instrument can deliver (capped at 1); ``capability`` None = 24 h."""
    if capability is None or not np.isfinite(coverage):
        return coverage
    return float(min(1.0, coverage / capability))
