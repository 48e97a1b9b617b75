"""The whole flank: the deficit from age 0 against the closed-form half-space integral.

Reference: half-space cooling, q = k ΔT / √(π κ t) (Turcotte & Schubert 2002, Geodynamics, 2nd ed., ch. 4,
from memory); its integral from 0 to t is 2 k ΔT √(t / (π κ)), written out here.
"""

import numpy as np
import pytest

from ventflux import ridge_flank as rf
from ventflux import summarizer as sm
from ventflux.units import Q_

K, KAPPA, DT = 3.3, 1e-6, 1300.0
MYR = 1e6 * 365.25 * 86400  # s (Julian year, pint's 'year')


def _closed_form(t_myr):
    return 2 * K * DT * np.sqrt(t_myr * MYR / (np.pi * KAPPA))


def test_reference_heat_before_the_first_observation_is_the_half_space_integral():
    age = Q_([2.0, 4.0, 8.0], "Myr")
    q = Q_([150.0, 130.0, 110.0], "mW/m^2")
    d = rf.heat_deficit(age, q, "half-space")
    assert d.before_first.to("J/m^2").magnitude == pytest.approx(_closed_form(2.0), rel=1e-12)
    assert d.reference_heat.to("J/m^2").magnitude == pytest.approx(_closed_form(8.0) - _closed_form(2.0), rel=1e-12)
    # observed-ages deficit by the trapezoid rule, written out: Σ (q_i + q_i+1)/2 Δt
    observed = (140.0 * 2 + 120.0 * 4) * 1e-3 * MYR
    assert d.deficit.to("J/m^2").magnitude == pytest.approx(_closed_form(8.0) - _closed_form(2.0) - observed,
                                                            rel=1e-12)
    assert d.deficit_from_axis.to("J/m^2").magnitude == pytest.approx(_closed_form(8.0) - observed, rel=1e-12)


def test_gdh1_before_first_is_its_exact_integral():
    # GDH1 (Stein & Stein 1992, coefficients from memory): 510 t^-1/2 mW/m² below 55 Myr; ∫₀^t = 1020 √t.
    d = rf.heat_deficit(Q_([1.0, 5.0], "Myr"), Q_([120.0, 110.0], "mW/m^2"))
    assert d.before_first.to("mW/m^2 * Myr").magnitude == pytest.approx(1020.0, rel=1e-12)


def test_water_column_uses_the_chosen_span_and_says_which():
    args = dict(age=Q_([1.0, 5.0, 10.0], "Myr"), heat_flow=Q_([120.0, 110.0, 100.0], "mW/m^2"),
                temperature_rise=Q_(10.0, "K"), pressure=Q_(35.0, "MPa"))
    a = sm.flank_answer(**args)
    b = sm.flank_answer(**args, deficit_span="from-axis")
    assert a.labels["water_column_deficit"] == "observed ages only"
    assert b.labels["water_column_deficit"].startswith("from age 0")
    ratio = b.value("water_column").magnitude / a.value("water_column").magnitude
    want = b.value("heat_deficit_from_axis").magnitude / a.value("heat_deficit").magnitude
    assert ratio == pytest.approx(want, rel=1e-12)
    assert a.value("heat_deficit_from_axis").magnitude == pytest.approx(b.value("heat_deficit_from_axis").magnitude)
