"""Orifice estimator: physics checks, invariants and Monte Carlo propagation."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.errors import InputError
from ventflux.orifice import (CENTERLINE_PROFILE_FACTOR, orifice_discharge, orifice_discharge_uncertain,
                              structure_discharge)
from ventflux.properties.seawater import CP0
from ventflux.uncertainty import normal, uniform
from ventflux.units import Q_

BASE = dict(temperature=Q_(350, "degC"), velocity=Q_(1.0, "m/s"), diameter=Q_(0.1, "m"),
            pressure=Q_(25, "MPa"), ambient_temperature=Q_(2, "degC"), ambient_salinity=34.6)


def test_black_smoker_order_of_magnitude():
    # Fact of the trade (common practice, no source): a black smoker venting near
    # 350 degC at about 3 m/s through a ~0.2 m orifice carries of order 100 MW.
    r = orifice_discharge(Q_(350, "degC"), Q_(3, "m/s"), Q_(0.2, "m"), pressure=Q_(25, "MPa"),
                          ambient_temperature=Q_(2, "degC"))
    assert 50 < r.heat_power.to("MW").magnitude < 200


def test_heat_power_is_mass_flux_times_independent_enthalpy_difference():
    # Independent IAPWS-95 implementation (the `iapws` package, PyPI) for h and rho.
    iapws = pytest.importorskip("iapws")
    hot, cold = iapws.IAPWS95(T=623.15, P=25.0), iapws.IAPWS95(T=275.15, P=25.0)
    mass = hot.rho * 1.0 * np.pi / 4 * 0.1**2
    expected = mass * (hot.h - cold.h) * 1e3
    r = orifice_discharge(**BASE)
    assert r.mass_flux.to("kg/s").magnitude == pytest.approx(mass, rel=2e-5)
    assert r.heat_power.to("W").magnitude == pytest.approx(expected, rel=3e-5)


def test_constant_cp_shortcut_sign_and_size():
    # At 350 degC and 25 MPa the mean heat capacity of water between 2 and
    # 350 degC, (h1 - h0)/(T1 - T0) from the `iapws` package, exceeds TEOS-10's
    # cp0 = 3991.87 J/(kg K) (IOC et al. 2010, eq. 3.3.3), so the shortcut is low.
    iapws = pytest.importorskip("iapws")
    mean_cp = (iapws.IAPWS95(T=623.15, P=25.0).h - iapws.IAPWS95(T=275.15, P=25.0).h) * 1e3 / 348.0
    expected_percent = (CP0 / mean_cp - 1) * 100
    r = orifice_discharge(**BASE)
    diff = r.shortcut_difference.to("percent").magnitude
    assert diff == pytest.approx(expected_percent, abs=0.01)
    assert -20 < diff < -8  # several to tens of percent, shortcut below


def test_elliptical_area_and_area_input_agree():
    a = orifice_discharge(**{**BASE, "diameter": Q_(0.12, "m")}, minor_diameter=Q_(0.08, "m"))
    b = orifice_discharge(**{**{k: v for k, v in BASE.items() if k != "diameter"}},
                          area=Q_(np.pi / 4 * 0.12 * 0.08, "m^2"))
    assert a.heat_power.magnitude == pytest.approx(b.heat_power.magnitude, rel=1e-12)


def test_centerline_velocity_uses_profile_factor():
    a = orifice_discharge(**BASE)
    c = orifice_discharge(**BASE, velocity_kind="centerline")
    assert c.heat_power.magnitude / a.heat_power.magnitude == pytest.approx(CENTERLINE_PROFILE_FACTOR)


def test_depth_input_matches_pressure_from_gsw():
    import gsw

    p_sea = gsw.p_from_z(-2500.0, 20.0)  # TEOS-10 p_from_z, dbar
    a = orifice_discharge(**{k: v for k, v in BASE.items() if k != "pressure"}, depth=Q_(2500, "m"), latitude=20.0)
    b = orifice_discharge(**{**BASE, "pressure": Q_(p_sea * 1e4 + 101325, "Pa")})
    assert a.heat_power.magnitude == pytest.approx(b.heat_power.magnitude, rel=1e-12)


def test_structure_sums_its_orifices():
    r1 = orifice_discharge(**BASE)
    r2 = orifice_discharge(**{**BASE, "temperature": Q_(320, "degC"), "diameter": Q_(0.05, "m")})
    tot = structure_discharge([r1, r2])
    assert tot.heat_power.magnitude == pytest.approx(r1.heat_power.magnitude + r2.heat_power.magnitude)
    assert tot.mass_flux.magnitude == pytest.approx(r1.mass_flux.magnitude + r2.mass_flux.magnitude)
    arr = orifice_discharge(**{**BASE, "temperature": Q_([350, 320], "degC"), "diameter": Q_([0.1, 0.05], "m")})
    assert structure_discharge(arr).heat_power.magnitude == pytest.approx(tot.heat_power.magnitude)


@pytest.mark.parametrize("change, field", [
    ({"diameter": Q_(-0.1, "m")}, "diameter"),
    ({"diameter": Q_(0, "m")}, "diameter"),
    ({"velocity": Q_(0, "m/s")}, "velocity"),
    ({"velocity": Q_(-1, "m/s")}, "velocity"),
    ({"temperature": Q_(2, "degC")}, "temperature"),
    ({"temperature": Q_(1.5, "degC")}, "temperature"),
    ({"diameter": Q_(3, "s")}, "diameter"),
    ({"pressure": Q_(2000, "MPa")}, "pressure"),
])
def test_bad_inputs_name_the_field(change, field):
    with pytest.raises(InputError) as err:
        orifice_discharge(**{**BASE, **change})
    assert err.value.field == field


def test_inputs_are_not_modified():
    T = Q_(np.array([350.0, 330.0]), "degC")
    before = T.magnitude.copy()
    orifice_discharge(**{**BASE, "temperature": T})
    np.testing.assert_array_equal(T.magnitude, before)


# -- invariants (hypothesis) -------------------------------------------------
temps = st.floats(min_value=20, max_value=370)
vels = st.floats(min_value=0.01, max_value=10)
diams = st.floats(min_value=0.005, max_value=1.0)


@settings(max_examples=40, deadline=None)
@given(t=temps, dt=st.floats(min_value=0.5, max_value=30), v=vels, d=diams)
def test_heat_power_grows_with_temperature_at_fixed_mass_flux(t, dt, v, d):
    from ventflux.properties import specific_heat_content

    hi_t = min(t + dt, 380.0)
    lo = specific_heat_content(Q_(t, "degC"), Q_(2, "degC"), Q_(25, "MPa"))
    hi = specific_heat_content(Q_(hi_t, "degC"), Q_(2, "degC"), Q_(25, "MPa"))
    assert hi.magnitude > lo.magnitude


@settings(max_examples=40, deadline=None)
@given(t=st.floats(min_value=10, max_value=300), dt=st.floats(min_value=0.5, max_value=20), v=vels, d=diams)
def test_heat_power_grows_with_temperature_at_fixed_velocity(t, dt, v, d):
    # At a fixed exit velocity the power per unit volume rho*(h - h0) rises with
    # temperature up to a maximum: at 25 MPa near 340-350 degC thermal expansion
    # wins over the added enthalpy. Below 320 degC it rises (IAPWS-95 properties).
    kw = dict(BASE, velocity=Q_(v, "m/s"), diameter=Q_(d, "m"))
    lo = orifice_discharge(**{**kw, "temperature": Q_(t, "degC")})
    hi = orifice_discharge(**{**kw, "temperature": Q_(t + dt, "degC")})
    assert hi.heat_power.magnitude > lo.heat_power.magnitude


@settings(max_examples=40, deadline=None)
@given(t=temps, v=vels, f=st.floats(min_value=1.01, max_value=5), d=diams)
def test_heat_power_grows_with_velocity_and_area(t, v, f, d):
    kw = dict(BASE, temperature=Q_(t, "degC"))
    base = orifice_discharge(**{**kw, "velocity": Q_(v, "m/s"), "diameter": Q_(d, "m")}).heat_power.magnitude
    faster = orifice_discharge(**{**kw, "velocity": Q_(v * f, "m/s"), "diameter": Q_(d, "m")}).heat_power.magnitude
    wider = orifice_discharge(**{**kw, "velocity": Q_(v, "m/s"), "diameter": Q_(d * f, "m")}).heat_power.magnitude
    assert faster == pytest.approx(base * f, rel=1e-9)
    assert wider == pytest.approx(base * f * f, rel=1e-9)


@settings(max_examples=30, deadline=None)
@given(t=temps, v=vels, d=diams)
def test_unit_invariance(t, v, d):
    a = orifice_discharge(**dict(BASE, temperature=Q_(t, "degC"), velocity=Q_(v, "m/s"), diameter=Q_(d, "m")))
    b = orifice_discharge(**dict(BASE, temperature=Q_(t + 273.15, "K"), velocity=Q_(v * 100, "cm/s"),
                                 diameter=Q_(d * 100, "cm"), pressure=Q_(2500, "dbar"),
                                 ambient_temperature=Q_(275.15, "K")))
    assert b.heat_power.to("W").magnitude == pytest.approx(a.heat_power.to("W").magnitude, rel=1e-9)


# -- Monte Carlo -------------------------------------------------------------
def test_monte_carlo_linear_case_matches_normal_quantiles():
    # Heat power is linear in velocity, so with only the velocity uncertain the
    # 5-95 % interval is nominal * (1 +- 1.6449 sd/mean) (normal quantiles).
    res = orifice_discharge_uncertain(draws=200_000, seed=7, **{**BASE, "velocity": normal(Q_(1.0, "m/s"),
                                                                                            Q_(0.1, "m/s"))})
    H = res.nominal.heat_power.to("MW").magnitude
    s = res.summaries["heat_power"].to("MW")
    assert s.p05.magnitude == pytest.approx(H * (1 - 0.16449), rel=3e-3)
    assert s.p95.magnitude == pytest.approx(H * (1 + 0.16449), rel=3e-3)
    assert s.median.magnitude == pytest.approx(H, rel=2e-3)


def test_monte_carlo_is_reproducible_with_its_seed():
    kw = {**BASE, "temperature": normal(Q_(350, "degC"), Q_(3, "K")), "diameter": uniform(Q_(9, "cm"), Q_(11, "cm"))}
    a = orifice_discharge_uncertain(draws=1000, seed=11, **kw)
    b = orifice_discharge_uncertain(draws=1000, seed=11, **kw)
    c = orifice_discharge_uncertain(draws=1000, seed=12, **kw)
    assert a.summaries["heat_power"].mean == b.summaries["heat_power"].mean
    assert a.summaries["heat_power"].mean != c.summaries["heat_power"].mean
    assert a.seed == 11


def test_monte_carlo_refuses_mostly_unphysical_draws():
    with pytest.raises(InputError) as err:
        orifice_discharge_uncertain(draws=1000, **{**BASE, "velocity": normal(Q_(0.1, "m/s"), Q_(1, "m/s"))})
    assert err.value.field == "velocity"


def test_boiling_draws_are_dropped_and_counted():
    # At 12 MPa water boils at 324.68 degC (IAPWS-IF97 steam tables; from memory):
    # a 300 +- 10 degC exit temperature puts ~0.7 % of draws above it.
    res = orifice_discharge_uncertain(draws=20_000, seed=3, **{**BASE, "pressure": Q_(12, "MPa"),
                                                                "temperature": normal(Q_(300, "degC"), Q_(10, "K"))})
    assert 0 < res.rejected < 0.02 * 20_000
