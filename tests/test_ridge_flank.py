"""Ridge-flank references and heat deficit, checked against published values and analytic solutions."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad

from ventflux import ridge_flank as rf
from ventflux.errors import InputError
from ventflux.units import Q_

MYR = 3.15576e13  # s in one Julian megayear


def test_half_space_temperature_uses_erf_table_values():
    # Abramowitz & Stegun (1964), Table 7.1: erf(1) = 0.842701, erf(2) = 0.995322.
    # At y = 2√(κt) the argument is 1, at y = 4√(κt) it is 2.
    t = Q_(10.0, "Myr")
    scale = 2.0 * math.sqrt(1e-6 * 10.0 * MYR)
    T = rf.half_space_temperature(Q_([scale, 2 * scale], "m"), t, temperature_difference=Q_(1000.0, "K"),
                                  surface_temperature=Q_(0.0, "degC"))
    frac = (T.to("degC").magnitude - 0.0) / 1000.0
    assert frac == pytest.approx([0.8427, 0.9953], abs=5e-5)


def test_half_space_heat_flow_against_the_textbook_formula():
    # Turcotte & Schubert (2002), Geodynamics 2nd ed., ch. 4 (half-space cooling): q = k (T1 − T0) / √(π κ t).
    # Stated parameters (the book's, from memory) k = 3.3 W/(m K), T1 − T0 = 1300 K, κ = 1e-6 m²/s. At 1 Myr:
    # 3.3 × 1300 / √(π × 1e-6 × 3.15576e13) = 4290 / 9956.9 = 0.43085 W/m².
    q = rf.half_space_heat_flow(Q_([1.0, 4.0, 100.0], "Myr"))
    assert q.to("W/m^2").magnitude == pytest.approx([0.43085, 0.43085 / 2, 0.043085], rel=1e-4)


def test_half_space_heat_flow_equals_gradient_of_erf_profile():
    # Independent path: Fourier's law k ∂T/∂y at y = 0 by a finite difference of the erf
    # profile computed with math.erf (Turcotte & Schubert ch. 4), not the code's formula.
    k, dT, kappa, t = 3.3, 1300.0, 1e-6, 7.0 * MYR
    h = 1.0
    grad = dT * (math.erf(h / (2 * math.sqrt(kappa * t))) - math.erf(-h / (2 * math.sqrt(kappa * t)))) / (2 * h)
    q = rf.half_space_heat_flow(Q_(7.0, "Myr")).to("W/m^2").magnitude
    assert q == pytest.approx(k * grad, rel=1e-6)


def test_half_space_depth_against_the_textbook_formula_and_isostasy_integral():
    # Turcotte & Schubert (2002) ch. 4 (ocean-floor subsidence): w = 2 ρm αv (T1 − T0)/(ρm − ρw) √(κ t / π),
    # with ρm = 3300, ρw = 1000 kg/m³, αv = 3e-5 1/K, T1 − T0 = 1300 K, κ = 1e-6 m²/s. By hand: coefficient
    # 2·3300·3e-5·1300/2300 · √(1e-6/π) · √(3.15576e13 s/Myr) = 354.7 m per √Myr.
    w = rf.half_space_depth(Q_([0.0, 1.0, 64.0], "Myr"), ridge_depth=Q_(0.0, "m")).magnitude
    assert w == pytest.approx([0.0, 354.7, 8 * 354.7], rel=2e-4)
    # Independent: isostasy, w = ρm αv/(ρm − ρw) ∫ (T1 − T) dy over the erf profile, by quadrature.
    t = 30.0 * MYR
    integral, _ = quad(lambda y: 1300.0 * math.erfc(y / (2 * math.sqrt(1e-6 * t))), 0, 2e6, limit=200)
    w_quad = 3300 * 3e-5 / 2300 * integral
    assert rf.half_space_depth(Q_(30.0, "Myr"), ridge_depth=Q_(0.0, "m")).magnitude == pytest.approx(w_quad, rel=1e-6)


def test_gdh1_heat_flow_and_depth_against_the_published_fit():
    # Stein & Stein (1992), Nature 359, GDH1 (from memory): q = 510 t^-1/2 mW/m² (t ≤ 55 Myr),
    # 48 + 96 exp(−0.0278 t) beyond; depth 2600 + 365 t^1/2 m (t < 20 Myr), 5651 − 2473 exp(−0.0278 t).
    # Values by hand: q(1) = 510, q(25) = 102, q(100) = 48 + 96·0.062039 = 53.956;
    # d(16) = 4060, d(100) = 5651 − 2473·0.062039 = 5497.58.
    q = rf.plate_heat_flow_gdh1(Q_([1.0, 25.0, 100.0], "Myr")).magnitude
    assert q == pytest.approx([510.0, 102.0, 53.956], abs=2e-3)
    d = rf.plate_depth_gdh1(Q_([16.0, 100.0], "Myr")).magnitude
    assert d == pytest.approx([4060.0, 5497.58], abs=0.02)


def test_gdh1_branches_meet_where_the_fit_switches():
    # Stein & Stein (1992): the published fit is continuous to the stated digits at 55 Myr and 20 Myr.
    q = rf.plate_heat_flow_gdh1(Q_([55.0, 55.0 + 1e-9], "Myr")).magnitude
    assert q[0] == pytest.approx(q[1], rel=1e-3)
    d = rf.plate_depth_gdh1(Q_([20.0 - 1e-9, 20.0], "Myr")).magnitude
    assert d[0] == pytest.approx(d[1], abs=1.0)


def test_heat_flow_close_to_trade_rule_of_thumb():
    # Common practice, no source: ocean-floor heat flow ≈ 500/√age mW/m² (age in Myr).
    ages = Q_([1.0, 4.0, 25.0, 49.0], "Myr")
    rule = 500.0 / np.sqrt(ages.magnitude)
    assert rf.plate_heat_flow_gdh1(ages).magnitude == pytest.approx(rule, rel=0.05)
    assert rf.half_space_heat_flow(ages).magnitude == pytest.approx(rule, rel=0.2)


def test_cumulative_reference_matches_quadrature():
    # Independent: numerical quadrature of the reference heat flow, against the exact integral.
    for ref in ("gdh1", "half-space"):
        def f(t, ref=ref):
            return rf.reference_heat_flow(Q_(t, "Myr"), ref).magnitude

        num, _ = quad(f, 2.0, 80.0, points=[55.0], limit=200)
        exact = rf.cumulative_reference_heat(Q_(2.0, "Myr"), Q_(80.0, "Myr"), ref).magnitude
        assert exact == pytest.approx(num * 1e-3 * MYR, rel=1e-6)


def test_deficit_of_zero_observed_heat_flow_is_the_reference_heat():
    d = rf.heat_deficit(Q_([1.0, 50.0], "Myr"), Q_([0.0, 0.0], "mW/m^2"), reference="gdh1")
    # ∫₁⁵⁰ 510 t^-1/2 dt = 1020 (√50 − 1) mW/m²·Myr
    assert d.deficit.magnitude == pytest.approx(1020 * (math.sqrt(50) - 1) * 1e-3 * MYR, rel=1e-9)
    assert d.fraction.magnitude == pytest.approx(1.0)


def test_deficit_per_ridge_length_is_spreading_rate_times_deficit():
    # Steady state: floor of age t lies at x = u t, so ∫ Δq dx = u ∫ Δq dt per flank.
    d = rf.heat_deficit(Q_([1.0, 4.0], "Myr"), Q_([100.0, 100.0], "mW/m^2"),
                        half_spreading_rate=Q_(31.5576, "mm/yr"), flanks=2)
    deficit = (1020 * (2 - 1) - 100 * 3) * 1e-3 * MYR
    assert d.deficit.magnitude == pytest.approx(deficit, rel=1e-9)
    assert d.per_length.to("W/m").magnitude == pytest.approx(2 * deficit * 1e-9, rel=1e-6)  # u = 1e-9 m/s


def test_deficit_broadcasts_over_draws():
    q = Q_(np.array([[100.0, 90.0], [80.0, 85.0], [60.0, 70.0]]), "mW/m^2")
    d = rf.heat_deficit(Q_([1.0, 5.0, 10.0], "Myr"), q)
    one = rf.heat_deficit(Q_([1.0, 5.0, 10.0], "Myr"), q[:, 1])
    assert d.deficit.shape == (2,)
    assert d.deficit.magnitude[1] == pytest.approx(one.deficit.magnitude)


def test_water_column_for_trade_deficit():
    # Common practice, no source: a deficit of order 1e13 J/m² heats a seawater column of order
    # 100 km or more by ~10 K. By hand: 1e13 / (1028 kg/m³ × 3990 J/(kg K) × 10 K) ≈ 244 km.
    h = rf.equivalent_water_column(Q_(1e13, "J/m^2"), Q_(10.0, "K"), Q_(2.0, "degC"), Q_(30.0, "MPa"))
    assert 100.0 <= h.to("km").magnitude <= 400.0
    assert h.to("km").magnitude == pytest.approx(1e13 / (1028 * 3990 * 10) / 1e3, rel=0.03)


def test_bad_reference_and_ages_are_one_line_errors():
    with pytest.raises(InputError, match="reference"):
        rf.reference_heat_flow(Q_(1.0, "Myr"), "plate-xyz")
    with pytest.raises(InputError, match="age"):
        rf.heat_deficit(Q_([1.0], "Myr"), Q_([1.0], "mW/m^2"))
    with pytest.raises(InputError, match="age"):
        rf.plate_heat_flow_gdh1(Q_(0.0, "Myr"))
    # a rise to 302 degC at 3 MPa boils (pure-water saturation 233.9 degC, IAPWS-95; warm seawater up to
    # boiling is accepted since the joined seawater model reaches it)
    with pytest.raises(InputError, match="fluid temperature"):
        rf.seawater_heat_uptake(Q_(300.0, "K"), Q_(2.0, "degC"), Q_(3.0, "MPa"))


@settings(max_examples=40, deadline=None)
@given(st.floats(0.1, 150.0), st.floats(0.1, 150.0))
def test_reference_heat_flow_decreases_and_depth_increases_with_age(a, b):
    lo, hi = sorted((a, b))
    if hi - lo < 1e-6:
        return
    for ref in ("gdh1", "half-space"):
        q = rf.reference_heat_flow(Q_([lo, hi], "Myr"), ref).magnitude
        assert q[1] <= q[0]
    assert np.diff(rf.plate_depth_gdh1(Q_([lo, hi], "Myr")).magnitude)[0] >= 0


@settings(max_examples=30, deadline=None)
@given(st.floats(0.05, 200.0))
def test_heat_flow_does_not_depend_on_the_age_unit(age_myr):
    a = rf.half_space_heat_flow(Q_(age_myr, "Myr")).to("W/m^2").magnitude
    b = rf.half_space_heat_flow(Q_(age_myr * 1e6, "year")).to("W/m^2").magnitude
    c = rf.plate_heat_flow_gdh1(Q_(age_myr * 1e3, "kyr")).magnitude
    assert a == pytest.approx(b, rel=1e-12)
    assert c == pytest.approx(rf.plate_heat_flow_gdh1(Q_(age_myr, "Myr")).magnitude, rel=1e-12)
