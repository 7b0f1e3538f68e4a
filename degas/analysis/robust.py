"""Robust scale: the one place the normal-consistency constant of the median absolute deviation is written.

``MAD_TO_SD`` = 1/Φ⁻¹(3/4) turns the median absolute deviation of normal data into a consistent estimate of
its standard deviation (Hampel 1974; Rousseeuw & Croux 1993): σ ≈ MAD_TO_SD · median(|x − median(x)|).
The exact value is 1.482602…; it is written to four decimals as commonly quoted (common practice), which is
what :func:`scipy.stats.median_abs_deviation` with ``scale="normal"`` gives to 1.5e-6 relative.
"""

from __future__ import annotations

#: Scale factor from MAD to the standard deviation of a normal variable, 1/Φ⁻¹(3/4) (four decimals).
MAD_TO_SD = 1.4826
