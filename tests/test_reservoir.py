"""Reservoir heat, lifetimes and sizing, checked by hand, against IAPWS-95 (iapws) and an ODE solver."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

from ventflux import reservoir as rv
from ventflux.errors import InputError
from ventflux.units import Q_

YEAR = 3.15576e7  # s, Julian year


def test_rock_heat_by_hand():
    # E = ρ c ΔT V = 2900 × 1000 × 500 × 1e6 = 1.45e15 J
    h = rv.reservoir_heat(Q_(500.0, "K"), volume=Q_(1e6, "m^3"), porosity=0.0)
    assert h.total.to("J").magnitude == pytest.approx(1.45e15, rel=1e-12)
    same = rv.reservoir_heat(Q_(500.0, "K"), area=Q_(1.0, "km^2"), thickness=Q_(1.0, "m"), porosity=0.0)
    assert same.total.magnitude == pytest.approx(h.total.magnitude)


def test_pore_fluid_heat_against_iapws_reference_library():
    # IAPWS-95 through the independent `iapws` package (IAPWS R6-95(2018)): ρ(T0) [h(T0) − h(T0 − ΔT)].
    iapws = pytest.importorskip("iapws")
    T0, dT, p = 673.15, 300.0, 30.0  # K, K, MPa
    hot, cold = iapws.IAPWS95(T=T0, P=p), iapws.IAPWS95(T=T0 - dT, P=p)
    expected = hot.rho * (hot.h - cold.h) * 1e3  # J/m³ (iapws gives kJ/kg)
    got = rv.pore_fluid_heat_density(Q_(T0, "K"), Q_(dT, "K"), Q_(p, "MPa")).magnitude
    assert got == pytest.approx(expected, rel=1e-4)
    h = rv.reservoir_heat(Q_(dT, "K"), volume=Q_(1.0, "m^3"), porosity=0.1, temperature=Q_(T0, "K"),
                          pressure=Q_(p, "MPa"))
    assert h.total.magnitude == pytest.approx(0.9 * 2900 * 1000 * dT + 0.1 * expected, rel=1e-4)


def test_latent_heat_of_melt_lens_by_hand():
    # Vm ρm L = 1e6 m³ × 2700 kg/m³ × 4e5 J/kg = 1.08e15 J (defaults, from memory)
    h = rv.reservoir_heat(Q_(100.0, "K"), volume=Q_(1e6, "m^3"), porosity=0.0, melt_volume=Q_(1e6, "m^3"))
    assert h.latent.magnitude == pytest.approx(1.08e15)
    assert h.total.magnitude == pytest.approx(1.08e15 + 2.9e14)


def test_smoker_on_small_reservoir_is_spent_in_about_a_decade():
    # Common practice, no source: a ~100 MW smoker drawing on ~1e-2 km³ of hot rock is exhausted
    # in about a decade. Rock cooled by 800 K (from ~1150 to ~350 °C), no pore fluid.
    h = rv.reservoir_heat(Q_(800.0, "K"), volume=Q_(1e-2, "km^3"), porosity=0.0)
    t = rv.heat_mining_time(Q_(100.0, "MW"), h).to("year").magnitude
    assert 3.0 <= t <= 30.0
    assert t == pytest.approx(2900 * 1000 * 800 * 1e7 / 1e8 / YEAR, rel=1e-9)


def test_exponential_decline_against_ode_solution():
    # Independent: integrate C dθ/dt = −P0 θ/θ0 numerically (scipy solve_ivp) until P = 0.1 P0.
    P0, E = 1e8, 3e16
    theta0 = 700.0
    C = E / theta0
    hit = lambda t, y: y[0] - 0.1 * theta0  # noqa: E731
    hit.terminal = True
    sol = solve_ivp(lambda t, y: [-P0 * y[0] / theta0 / C], (0, 1e10), [theta0], events=hit, rtol=1e-10,
                    atol=1e-8)
    t_ode = sol.t_events[0][0]
    t = rv.decline_time(Q_(P0, "W"), Q_(E, "J"), fraction=0.1).to("s").magnitude
    assert t == pytest.approx(t_ode, rel=1e-6)
    assert t == pytest.approx(E / P0 * math.log(10), rel=1e-12)


def test_conductive_time_by_hand_and_controlling_process():
    # L²/κ = (1000 m)² / 1e-6 m²/s = 1e12 s = 31 688 yr (Turcotte & Schubert ch. 4 scaling).
    assert rv.conductive_time(Q_(1.0, "km")).to("year").magnitude == pytest.approx(1e12 / YEAR)
    h = rv.reservoir_heat(Q_(800.0, "K"), volume=Q_(1e-2, "km^3"), porosity=0.0)
    fast = rv.reservoir_lifetime(Q_(100.0, "MW"), h)
    assert fast.controlling.item() == "advective decline"
    slow = rv.reservoir_lifetime(Q_(1.0, "kW"), h, size=Q_(10.0, "m"))
    assert slow.controlling.item() == "conductive cooling"


def test_reverse_sizing_round_trip():
    kw = dict(porosity=0.05, temperature=Q_(400.0, "degC"), pressure=Q_(30.0, "MPa"))
    size = rv.reservoir_size_for(Q_(100.0, "MW"), Q_(10.0, "year"), Q_(300.0, "K"), area=Q_(1.0, "km^2"), **kw)
    h = rv.reservoir_heat(Q_(300.0, "K"), volume=size["volume"], **kw)
    assert rv.heat_mining_time(Q_(100.0, "MW"), h).to("year").magnitude == pytest.approx(10.0, rel=1e-9)
    assert size["thickness"].to("m").magnitude == pytest.approx(size["volume"].magnitude / 1e6)


def test_bad_inputs_are_one_line_errors():
    with pytest.raises(InputError, match="either a volume"):
        rv.reservoir_heat(Q_(1.0, "K"), volume=Q_(1.0, "m^3"), area=Q_(1.0, "m^2"))
    with pytest.raises(InputError, match="porosity"):
        rv.reservoir_heat(Q_(1.0, "K"), volume=Q_(1.0, "m^3"), porosity=1.5)
    with pytest.raises(InputError, match="reservoir temperature"):
        rv.reservoir_heat(Q_(1.0, "K"), volume=Q_(1.0, "m^3"), porosity=0.1)
    with pytest.raises(InputError, match="power"):
        rv.heat_mining_time(Q_(-1.0, "MW"), Q_(1.0, "J"))
    with pytest.raises(InputError, match="rock heat capacity"):
        rv.reservoir_heat(Q_(1.0, "K"), volume=Q_(1.0, "m^3"), porosity=0.0, rock_heat_capacity=Q_(1.0, "J/kg"))


def test_vectorized_over_draws():
    dT = Q_(np.array([600.0, 700.0, 800.0]), "K")
    P = Q_(np.array([80.0, 100.0, 120.0]), "MW")
    h = rv.reservoir_heat(dT, volume=Q_(1e-2, "km^3"), porosity=0.0)
    life = rv.reservoir_lifetime(P, h)
    assert life.mining_time.shape == (3,) and life.controlling.shape == (3,)
    one = rv.heat_mining_time(P[1], rv.reservoir_heat(dT[1], volume=Q_(1e-2, "km^3"), porosity=0.0))
    assert life.mining_time.magnitude[1] == pytest.approx(one.magnitude)


@settings(max_examples=40, deadline=None)
@given(st.floats(1.0, 1e3), st.floats(1.0, 1e3), st.floats(1e5, 1e9), st.floats(10.0, 900.0))
def test_mining_time_monotone_in_power_and_volume(p1, p2, volume, drop):
    h = rv.reservoir_heat(Q_(drop, "K"), volume=Q_(volume, "m^3"), porosity=0.0)
    lo, hi = sorted((p1, p2))
    t = rv.heat_mining_time(Q_([lo, hi], "MW"), h).magnitude
    assert t[0] >= t[1]
    bigger = rv.reservoir_heat(Q_(drop, "K"), volume=Q_(2 * volume, "m^3"), porosity=0.0)
    assert rv.heat_mining_time(Q_(lo, "MW"), bigger).magnitude > t[0]


@settings(max_examples=30, deadline=None)
@given(st.floats(1.0, 1e3), st.floats(1e-4, 1.0))
def test_lifetime_does_not_depend_on_units(power_mw, volume_km3):
    a = rv.heat_mining_time(Q_(power_mw, "MW"), rv.reservoir_heat(Q_(500.0, "K"), volume=Q_(volume_km3, "km^3"),
                                                                   porosity=0.0))
    b = rv.heat_mining_time(Q_(power_mw * 1e6, "W"), rv.reservoir_heat(Q_(500.0, "delta_degC"),
                                                                        volume=Q_(volume_km3 * 1e9, "m^3"),
                                                                        porosity=0.0))
    assert a.to("s").magnitude == pytest.approx(b.to("s").magnitude, rel=1e-12)


def test_temperature_drop_in_degc_is_a_difference():
    # "300 degC" given as a drop means 300 K of cooling, not 573.15 K.
    a = rv.reservoir_heat(Q_(300.0, "degC"), volume=Q_(1.0, "m^3"), porosity=0.0)
    assert a.total.magnitude == pytest.approx(2900 * 1000 * 300.0)
