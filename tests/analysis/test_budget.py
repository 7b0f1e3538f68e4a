"""Gas budget: petrological method (Devine, Sigurdsson & Davis 1984), cumulative masses, CO2 flux."""

import numpy as np
import pandas as pd
import pytest

from degas.analysis.budget import (
    PetrologyInputs,
    co2_flux,
    gas_budget,
    petrological_so2_flux,
    petrological_so2_mass,
)
from degas.errors import DegasError, NotEnoughDataError

T_D = 86.4  # 1 kg/s = 86.4 t/d exactly (BIPM SI Brochure: t = 1000 kg, d = 86 400 s)


def _grid(n):
    return pd.date_range("2032-01-01", periods=n, freq="D", tz="UTC")


def test_petrological_worked_example_by_hand():
    # Devine, Sigurdsson & Davis (1984): m_SO2 = (M_SO2/M_S)(S_MI - S_MG) V rho (1 - phi).
    # M_SO2/M_S from IUPAC 2021 atomic weights (Prohaska et al. 2022): (32.06 + 2*15.999)/32.06.
    # Invented inputs of REFERENCES §1.2: V = 1e7 m3, rho = 2600, phi = 0.4, 1500 / 200 ppm.
    ratio = (32.06 + 2 * 15.999) / 32.06
    by_hand = ratio * (1500e-6 - 200e-6) * 1.0e7 * 2600 * (1 - 0.4)
    assert by_hand == pytest.approx(4.0521e7, rel=1e-4)  # REFERENCES §1.2 [D]
    inp = PetrologyInputs.from_ppm(1500, 200, density_kg_m3=2600, crystal_fraction=0.4)
    assert petrological_so2_mass(1.0e7, inp) == pytest.approx(by_hand, rel=1e-12)
    # rate form, Q = 3 m3/s: 12.156 kg/s = 1050.3 t/d; observed 3000 t/d -> excess 2.86 (§1.2 [D])
    flux = petrological_so2_flux(3.0, inp)
    assert flux == pytest.approx(ratio * 1300e-6 * 3.0 * 2600 * 0.6, rel=1e-12)
    assert flux == pytest.approx(12.156, abs=1e-3)
    assert flux * T_D == pytest.approx(1050.3, abs=0.05)
    assert 3000 / (flux * T_D) == pytest.approx(2.86, abs=0.005)


def test_budget_segments_and_excess_factor():
    n = 20
    idx = _grid(n)
    inp = PetrologyInputs.from_ppm(1500, 200, density_kg_m3=2600, crystal_fraction=0.4)
    q = pd.Series(np.full(n, 3.0), idx)
    gas = pd.Series(np.full(n, 3000 / T_D), idx)  # 3000 t/d
    unc = pd.Series(np.full(n, 300 / T_D), idx)
    seg = pd.DataFrame({"start": [idx[0], idx[10]], "end": [idx[10], idx[-1] + pd.Timedelta("1D")]})
    res = gas_budget(gas, q, so2_uncertainty=unc, segments=seg, petrology=inp, n_monte_carlo=2000)
    s = res.segments
    assert len(s) == 2
    day = 86400.0
    assert s.so2_mass_kg.iloc[0] == pytest.approx(10 * day * 3000 / T_D)
    assert s.dre_volume_m3.iloc[0] == pytest.approx(10 * day * 3.0)
    # independent errors: sqrt(10) * sigma * dt; correlated: 10 * sigma * dt
    assert s.so2_mass_sd_independent_kg.iloc[0] == pytest.approx(np.sqrt(10) * 300 / T_D * day)
    assert s.so2_mass_sd_correlated_kg.iloc[0] == pytest.approx(10 * 300 / T_D * day)
    assert s.ratio_kg_per_m3.iloc[0] == pytest.approx((3000 / T_D) / 3.0)
    assert s.excess_factor.iloc[0] == pytest.approx(2.8563, abs=1e-3)  # REFERENCES §1.2 [D]
    assert s.excess_p2_5.iloc[0] < 2.8563 < s.excess_p97_5.iloc[0]
    # 2.86 with its whole 95 % interval above 1 (exact petrology, 10 % flux errors): more gas than the melt holds
    assert s.finding.iloc[0] == "more SO2 than the erupted melt can supply"
    assert res.overall["so2_mass_kg"] == pytest.approx(20 * day * 3000 / T_D)
    assert res.cumulative["so2_cum_kg"].iloc[-1] == pytest.approx(res.overall["so2_mass_kg"])
    assert len(res.to_frame()) == 3


def test_excess_is_a_finding_not_an_error():
    n = 10
    idx = _grid(n)
    inp = PetrologyInputs.from_ppm(1500, 200, density_kg_m3=2600, crystal_fraction=0.4,
                                   s_mi_sd_ppm=100, s_mg_sd_ppm=50)
    res = gas_budget(pd.Series(np.full(n, 50.0), idx), pd.Series(np.full(n, 0.5), idx), petrology=inp)
    assert res.overall["excess_factor"] > 3
    assert res.overall["finding"].startswith("excess degassing")
    assert any("excess degassing" in note for note in res.notes)


def test_monte_carlo_is_seeded_and_physical():
    inp = PetrologyInputs.from_ppm(300, 250, s_mi_sd_ppm=100, s_mg_sd_ppm=100, crystal_fraction=0.5,
                                   crystal_fraction_sd=0.5, density_sd=500)
    a = inp.sample_so2_per_m3(5000, seed=1)
    np.testing.assert_array_equal(a, inp.sample_so2_per_m3(5000, seed=1))
    assert (a >= 0).all()


def test_gaps_and_bad_input():
    idx = _grid(10)
    g = pd.Series([1.0, np.nan] * 5, idx)
    res = gas_budget(g, pd.Series(np.ones(10), idx))
    assert any("lower bounds" in n for n in res.notes)
    assert any("no SO2 flux uncertainties" in n for n in res.notes)
    with pytest.raises(NotEnoughDataError, match="extrusion-rate series has no valid"):
        gas_budget(g, pd.Series(np.full(10, np.nan), idx))
    with pytest.raises(DegasError, match="same time grid"):
        gas_budget(g, pd.Series(np.ones(9), idx[:9]))
    with pytest.raises(DegasError, match="crystal fraction"):
        PetrologyInputs(1e-3, 1e-4, crystal_fraction=1.2)


def test_co2_flux_from_ratio_with_max_gap():
    # Phi_CO2 = Phi_SO2 * R * M_CO2/M_SO2: 1000 t/d, R = 2 -> 1374.04 t/d (REFERENCES §2.4 [D]).
    idx = _grid(20)
    so2 = pd.Series(np.full(20, 1000 / T_D), idx)
    ratio = pd.Series([2.0, 2.0], index=pd.DatetimeIndex([idx[0], idx[3]]))
    res = co2_flux(so2, ratio, max_gap="7D")
    assert res.flux.iloc[0] * T_D == pytest.approx(1374.04, abs=0.01)
    assert res.flux.iloc[10] * T_D == pytest.approx(1374.04, abs=0.01)  # 7 days after the last ratio
    assert np.isnan(res.flux.iloc[11])
    assert any("more than 7 days" in n for n in res.notes)
    with pytest.raises(NotEnoughDataError):
        co2_flux(so2, pd.Series([np.nan], index=idx[:1]))


def test_findings_follow_the_interval_not_the_central_value():
    from degas.analysis.budget import _finding

    assert _finding(0.52, 0.39, 0.73, 3.0, 0.5).startswith("less SO2 than the erupted melt can supply")
    assert _finding(0.3, 0.2, 0.45, 3.0, 0.5).startswith("gas deficit")
    assert _finding(1.1, 0.84, 1.55, 3.0, 0.5) == "consistent with erupted magma"
    assert _finding(9.0, 4.0, 20.0, 3.0, 0.5).startswith("excess degassing")
    assert _finding(float("nan"), float("nan"), float("nan"), 3.0, 0.5, 0.0).startswith("gas without erupted volume")
