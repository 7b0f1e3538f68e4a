"""A seeded bank of invented gas / magma-output records, each stating its truth (not a test module).

The generator is written apart from the demo story and from the method it checks: it only knows the physics
it invents (a gas flux that is background plus an excess proportional to magma output some days later, or
that is not), never the thresholds or the segmentation of degas. Every record is daily, 300-360 days long,
with multiplicative log-normal AR(1) noise on the gas (12 %, φ = 0.4) and 8 % of gas days missing (cloud).

Families (each ``truth["labels"]`` gives the true regime per gas day; ``truth["lag_days"]`` the lead):

* ``coupled_high_background`` - output active throughout (two levels, weekly pulses); gas leads by 2-7 d;
  background ≥ 3 × the output-driven part. Truth: coupled every day.
* ``coupled_decline`` - output steady, then declining linearly to zero; gas follows (constant gas per m³).
  Truth: coupled while output is active, quiet after; never sealing. Where the output (τ days later) is
  below 20 % of its starting level, gas and output are both close to background and either label is true
  (``truth["either"]`` marks those days).
* ``pause_sustained_degassing`` - 120-day pause in output while gas stays at its eruptive level.
  Truth: coupled, gas_only (the pause), coupled.
* ``sealing`` - output continues while gas falls to a quarter of the related level within 10 days; LP event
  counts rise exponentially from the onset. Truth: coupled, then magma_only.
* ``independent`` - gas is its own process, unrelated to the output (which pauses).
  Truth: gas_only every day (gas release not tied to output); never coupled.
* ``chronology_only`` - output known only as an eruption chronology (fraction 0/1 per phase); gas steps up
  by a phase-independent excess in eruptive phases. Truth: coupled in eruptive phases, quiet in pauses.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

T_D = 86.4  # kg/s per t/d (exact)
FAMILIES = ("coupled_high_background", "coupled_decline", "pause_sustained_degassing", "sealing", "independent",
            "chronology_only")


def _pulses(rng, n, width=4.0):
    """Smooth unit-variance pulses (white noise through a Gaussian kernel of ``width`` days)."""
    k = np.exp(-0.5 * (np.arange(-4 * width, 4 * width + 1) / width) ** 2)
    x = np.convolve(rng.standard_normal(n + len(k)), k, mode="same")[: n]
    return (x - x.mean()) / x.std()


def _noise(rng, n, sd=0.12, phi=0.4):
    e = rng.standard_normal(n) * sd * np.sqrt(1 - phi**2)
    x = np.empty(n)
    x[0] = e[0] / np.sqrt(1 - phi**2)
    for i in range(1, n):
        x[i] = phi * x[i - 1] + e[i]
    return np.exp(x - sd**2 / 2)


def make_record(family: str, seed: int) -> dict:
    """One record: ``gas`` (kg/s) and ``magma`` (m³/s DRE or eruptive fraction) daily Series, ``measure``,
    ``truth`` (labels per day, lag_days or None, description) and ``lp`` (daily LP counts, sealing only)."""
    rng = np.random.default_rng([FAMILIES.index(family), seed, 9])
    n = 360 if family == "pause_sustained_degassing" else 300
    pad = 10
    days = pd.date_range("2040-01-01", periods=n, freq="D", tz="UTC")
    tau = int(rng.integers(2, 8))
    g0 = rng.uniform(200, 500)  # t/d
    k = rng.uniform(150, 400)  # t/d per m³/s
    p = _pulses(rng, n + pad)
    level = np.full(n + pad, rng.uniform(1.5, 3.0))
    labels = np.array(["coupled"] * n, dtype=object)
    measure, lp, lag = "extrusion_rate", None, tau
    either = np.zeros(n, dtype=bool)
    if family == "coupled_high_background":
        step_at = int(rng.integers(110, 190))
        level[step_at:] *= rng.uniform(1.6, 2.2)
        g0 = 3.5 * k * level.mean() * rng.uniform(1.0, 1.5)
    elif family == "coupled_decline":
        a, b = int(rng.integers(60, 100)), int(rng.integers(200, 240))
        level[a:b] = level[0] * np.linspace(1, 0, b - a)
        level[b:] = 0.0
        on = level[np.arange(n) + tau] > 0
        labels[~on] = "quiet"
        either = on & (level[np.arange(n) + tau] < 0.2 * level[0])
    elif family == "pause_sustained_degassing":
        level[120 + tau: 240 + tau] = 0.0
    elif family == "sealing":
        pass
    elif family == "independent":
        level[100:180] = 0.0
        lag = None
    q = np.clip(level * (1 + 0.3 * p), 0, None)
    related = g0 + k * q[tau: tau + n]
    gas = related.copy()
    if family == "pause_sustained_degassing":
        gas[120:240] = g0 + k * level[0] * (1 + 0.05 * _pulses(rng, 120, 10))
        labels[120:240] = "gas_only"
    elif family == "sealing":
        onset = int(rng.integers(150, 200))
        fall = np.ones(n)
        fall[onset:] = np.maximum(0.25, 1 - 0.075 * np.arange(n - onset))
        gas = related * fall
        labels[onset:] = "magma_only"
        rate = 2.0 * np.exp(np.clip(np.arange(n) - onset, 0, None) / 40.0)
        lp = pd.Series(rng.poisson(np.minimum(rate, 80)), days, name="lp_count")
    elif family == "independent":
        gas = rng.uniform(600, 1200) * np.exp(0.25 * _pulses(rng, n, 8))
        labels[:] = "gas_only"
    elif family == "chronology_only":
        measure, lag = "eruptive_fraction", None
        bounds = np.cumsum(rng.integers(40, 80, size=8))
        bounds = bounds[bounds < n - 30]
        frac = np.zeros(n)
        on = bool(rng.integers(0, 2))
        edges = np.r_[0, bounds, n]
        for a, b in zip(edges[:-1], edges[1:], strict=True):
            frac[a:b] = 1.0 if on else 0.0
            on = not on
        q = np.r_[frac, np.full(pad, frac[-1])]
        gas = g0 + rng.uniform(600, 1200) * frac
        labels = np.where(frac > 0, "coupled", "quiet").astype(object)
    gas = gas * _noise(rng, n)
    gas[rng.random(n) < 0.08] = np.nan
    truth = {"family": family, "seed": seed, "labels": labels, "either": either, "lag_days": lag,
             "g0_t_d": g0, "k_t_d_per_m3_s": k, "description": __doc__.split(f"``{family}``")[1].split("*")[0]}
    return {"gas": pd.Series(gas / T_D, days, name="gas"), "magma": pd.Series(q[:n], days, name="magma"),
            "measure": measure, "truth": truth, "lp": lp}
