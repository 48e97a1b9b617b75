"""Seawater heat content from the freezing point to boiling: checks against IAPWS-08, IAPWS-95 and TEOS-10.

References used here (test-only libraries, independent of ventflux's code):
* IAPWS R13-08 seawater, as implemented by the `iapws` package (``SeaWater(T [K], P [MPa], S [kg/kg])``,
  h in kJ/kg); valid 261-353 K, up to 100 MPa (the package's stated limits).
* IAPWS R6-95 pure water, by CoolProp's HEOS backend called directly.
* TEOS-10's freezing temperature, ``gsw.t_freezing``.
"""

import gsw
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.diffuse import diffuse_discharge
from ventflux.errors import InputError
from ventflux.properties import seawater_heat as sh
from ventflux.properties import seawater_state
from ventflux.units import Q_

SA = 35.16504  # g/kg, TEOS-10 reference salinity of SP = 35 (IOC et al. 2010, eq. 2.4.1)
ATM = 101325.0


def _p_sea(p_mpa):
    return (p_mpa * 1e6 - ATM) / 1e4


@pytest.mark.parametrize("p_mpa", [0.2, 3.0, 22.0, 40.0])
@pytest.mark.parametrize("join", [sh.TEOS10_T_MAX, sh.SALINE_T_MAX])
def test_heat_per_kelvin_and_density_do_not_jump_at_model_joins(p_mpa, join):
    # Sweep the warm end across each join in 2 mK steps from 2 degC ambient; the largest step-to-step change
    # of heat per kelvin Δh/ΔT and of density must stay far below 0.1 % (issue requirement). The smooth
    # variation over 2 mK is ~1e-7, so any switch shows up directly.
    t1 = join + np.arange(-0.05, 0.05, 0.002)
    r = sh.seawater_heat_content(t1, 2.0, SA, _p_sea(p_mpa))
    assert {int(r.model[0]), int(r.model[-1])} == ({0, 1} if join == sh.TEOS10_T_MAX else {1, 2})
    per_kelvin = r.specific_heat_content / (t1 - 2.0)
    assert np.max(np.abs(np.diff(per_kelvin) / per_kelvin[:-1])) < 1e-5
    assert np.max(np.abs(np.diff(r.density) / r.density[:-1])) < 1e-5


@pytest.mark.parametrize("depth_p_mpa", [2.2, 22.0])
def test_diffuse_heat_per_kelvin_continuous_across_every_join(depth_p_mpa):
    # The estimator itself: heat power per kelvin of anomaly, at the old switch point (22.6-22.7 K at
    # 2200 m) and across the 40 and 80 degC joins; no jump above 0.1 % between neighbouring anomalies.
    models = set()
    for dT in (np.arange(22.5, 22.8, 0.01), np.arange(37.9, 38.1, 0.01), np.arange(77.9, 78.1, 0.01)):
        r = diffuse_discharge(Q_(np.full(dT.size, 10.0), "m^2"), 1.0, Q_(dT, "K"), Q_(1.0, "cm/s"),
                              Q_(2.0, "degC"), 35.0, Q_(depth_p_mpa, "MPa"))
        for field in (r.heat_power.magnitude / dT, r.heat_power_cp_shortcut.magnitude / dT, r.density.magnitude):
            assert np.max(np.abs(np.diff(field) / field[:-1])) < 1e-3
        models |= set(r.heat_model)
    assert models == set(sh.MODEL_NAMES)


@pytest.mark.parametrize("p_mpa", [0.101325, 5.0, 22.0, 60.0])
@pytest.mark.parametrize("t_warm", [45.0, 62.0, 79.5])
def test_warm_seawater_matches_iapws08(p_mpa, t_warm):
    # Source: IAPWS R13-08 (IAPWS-95 water + saline part), the `iapws` package, inside its 261-353 K range.
    from iapws import SeaWater

    r = sh.seawater_heat_content(t_warm, 2.0, SA, _p_sea(p_mpa))
    hot = SeaWater(T=t_warm + 273.15, P=p_mpa, S=SA / 1e3)
    cold = SeaWater(T=275.15, P=p_mpa, S=SA / 1e3)
    assert r.specific_heat_content == pytest.approx((hot.h - cold.h) * 1e3, rel=2e-6)
    assert r.density == pytest.approx(hot.rho, rel=1e-6)
    assert sh.MODEL_NAMES[int(r.model)] == "IAPWS-95 water + IAPWS-08 saline part"


# the `iapws` package warns from 353 K on; IAPWS-08's extended range reaches 80 degC (353.15 K)
@pytest.mark.filterwarnings("ignore:Incoming out of bound")
@pytest.mark.parametrize("p_mpa, t_warm", [(0.5, 120.0), (3.0, 160.0), (22.0, 300.0)])
def test_hot_seawater_is_iapws95_water_plus_the_stated_saline_correction(p_mpa, t_warm):
    # Beyond 80 degC: IAPWS-95 pure water (CoolProp, direct) plus the saline part's 80 degC enthalpy slope and
    # volume, both taken from IAPWS R13-08 (`iapws` package) at 353.15 K: saline cp = cp_sw − cp_w there.
    import CoolProp.CoolProp as CP
    from iapws import IAPWS95, SeaWater

    T80, T1 = 353.15, t_warm + 273.15
    sw80 = SeaWater(T=T80, P=p_mpa, S=SA / 1e3)
    w80 = IAPWS95(T=T80, P=p_mpa)
    cp_saline = (sw80.cp - w80.cp) * 1e3
    v_saline = 1 / sw80.rho - 1 / w80.rho
    P = p_mpa * 1e6
    h_w = CP.PropsSI("Hmass", "T", [T80, T1], "P", [P, P], "HEOS::Water")
    rho_w = CP.PropsSI("Dmass", "T", T1, "P", P, "HEOS::Water")
    cold = SeaWater(T=275.15, P=p_mpa, S=SA / 1e3)
    want = (sw80.h - cold.h) * 1e3 + (h_w[1] - h_w[0]) + cp_saline * (T1 - T80)
    r = sh.seawater_heat_content(t_warm, 2.0, SA, _p_sea(p_mpa))
    assert r.specific_heat_content == pytest.approx(want, rel=2e-5)
    assert r.density == pytest.approx(1 / (1 / rho_w + v_saline), rel=2e-5)
    assert sh.MODEL_NAMES[int(r.model)] == "IAPWS-95 water + saline part held from 80 degC"
    # the saline correction lowers the heat content against pure water by a few per cent (sea salt's
    # lower heat capacity), as IAPWS-08 says at 80 degC
    pure = h_w[1] - CP.PropsSI("Hmass", "T", 275.15, "P", P, "HEOS::Water")
    assert 0.93 < r.specific_heat_content / pure < 0.99


def test_boiling_and_above_boiling_refused_with_saturation_temperature():
    # pure-water saturation at 3 MPa is 233.9 degC (IAPWS-95; from memory, to 0.1 K)
    with pytest.raises(InputError, match="233.8|233.9"):
        sh.seawater_heat_content(240.0, 2.0, SA, _p_sea(3.0))


@pytest.mark.parametrize("p_mpa", [0.101325, 5.0, 25.0, 50.0])
def test_cold_ambient_down_to_the_freezing_point(p_mpa):
    # Source: TEOS-10 freezing temperature of air-saturated seawater, gsw.t_freezing(SA, p, 1).
    p = _p_sea(p_mpa)
    tf = gsw.t_freezing(SA, p, 1.0)
    r = diffuse_discharge(Q_([1.0], "m^2"), 1.0, Q_([1.0], "K"), Q_(1.0, "cm/s"), Q_(tf + 0.01, "degC"), 35.0,
                          Q_(p_mpa, "MPa"))
    assert r.heat_power.magnitude[0] > 0
    with pytest.raises(InputError, match="freezing point"):
        diffuse_discharge(Q_([1.0], "m^2"), 1.0, Q_([1.0], "K"), Q_(1.0, "cm/s"), Q_(tf - 0.01, "degC"), 35.0,
                          Q_(p_mpa, "MPa"))
    seawater_state(Q_(tf + 0.01, "degC"), 35.0, Q_(p_mpa, "MPa"))
    assert sh.freezing_temperature(SA, p) == pytest.approx(tf, abs=1e-12)


def test_ambient_above_40_degc_refused_even_at_low_pressure():
    # gsw.infunnel sets no upper temperature above 500 dbar; TEOS-10's range still ends at 40 degC.
    assert bool(gsw.infunnel(SA, 60.0, 10.0))
    with pytest.raises(InputError, match="40 degC"):
        seawater_state(Q_(60, "degC"), 35.0, Q_(0.2, "MPa"))


def test_no_gsw_call_outside_its_validity(monkeypatch):
    # Every TEOS-10 routine is called inside TEOS-10's range (t <= 40 degC, SA <= 42 g/kg, p <= 10000 dbar);
    # the saline part (gsw.gibbs) within IAPWS-08's extended range, t <= 80 degC.
    seen = []

    def guard(fn, t_max):
        def wrapped(*args):
            SA_, t, p = args[-3:]
            seen.append(fn.__name__)
            assert np.all(np.asarray(t) <= t_max + 1e-9), (fn.__name__, np.max(t))
            assert np.all(np.asarray(SA_) <= 42) and np.all(np.asarray(p) <= 10000)
            return fn(*args)
        return wrapped

    for name in ("enthalpy_t_exact", "rho_t_exact", "cp_t_exact", "CT_from_t"):
        monkeypatch.setattr(gsw, name, guard(getattr(gsw, name), 40.0))
    monkeypatch.setattr(gsw, "gibbs", guard(gsw.gibbs, 80.0))
    dT = np.array([1.0, 30.0, 50.0, 90.0, 150.0, 200.0])
    r = diffuse_discharge(Q_(np.ones(dT.size), "m^2"), 1.0, Q_(dT, "K"), Q_(1.0, "cm/s"), Q_(2.0, "degC"), 35.0,
                          Q_(5.0, "MPa"))
    assert r.beyond_teos10.tolist() == [False, False, True, True, True, True]
    assert "enthalpy_t_exact" in seen and "gibbs" in seen
    # patches x draws, all within TEOS-10, with an ambient drawn once per draw (the aggregation's shapes)
    rng = np.random.default_rng(4)
    dT = rng.uniform(0.5, 30.0, (7, 50))
    Ta = Q_(rng.normal(2.0, 0.05, (1, 50)), "degC")
    r = diffuse_discharge(Q_(np.ones((7, 1)), "m^2"), 0.5, Q_(dT, "K"), Q_(1.0, "cm/s"), Ta, 35.0, Q_(5.0, "MPa"),
                          check=False)
    assert r.heat_power.shape == (7, 50)
    # against TEOS-10's enthalpy difference per element (gsw directly, broadcast by hand)
    SA = gsw.SR_from_SP(35.0)
    p = (5e6 - 101325.0) / 1e4
    t0 = np.broadcast_to(Ta.m, dT.shape)
    want = gsw.enthalpy_t_exact(SA, t0 + dT, p) - gsw.enthalpy_t_exact(SA, t0, p)
    np.testing.assert_allclose(r.specific_heat_content.to("J/kg").m, want, rtol=1e-12)


def _iapws95_liquid(T, p):
    """IAPWS-95 liquid enthalpy by CoolProp HEOS with the liquid phase imposed (PropsSI refuses states below
    pure water's melting line, -1.94 degC at 25 MPa)."""
    import CoolProp

    state = CoolProp.AbstractState("HEOS", "Water")
    state.specify_phase(CoolProp.iphase_liquid)
    state.update(CoolProp.PT_INPUTS, p, T)
    return state.hmass()


@pytest.mark.parametrize("t_amb", [-0.5, -1.8, -3.5])
def test_orifice_and_throughput_accept_cold_bottom_water(t_amb):
    # Ambient water below 0.01 degC but above the in-situ freezing point of seawater (gsw.t_freezing: -3.88 degC
    # at 25 MPa) is liquid. The ambient end is IAPWS-95 liquid water, checked against IAPWS-95 solved directly
    # (CoolProp HEOS, liquid phase imposed) to 3 J/kg; the hot end is the same model's.
    from ventflux.orifice import orifice_discharge
    from ventflux.throughput import water_throughput

    r = orifice_discharge(Q_(350, "degC"), Q_(1, "m/s"), Q_(0.1, "m"), pressure=Q_(25, "MPa"),
                          ambient_temperature=Q_(t_amb, "degC"))
    want = _iapws95_liquid(623.15, 25e6) - _iapws95_liquid(273.15 + t_amb, 25e6)
    assert r.specific_heat_content.to("J/kg").magnitude == pytest.approx(want, abs=3.0)
    w = water_throughput(Q_(100, "MW"), Q_(350, "degC"), Q_(25, "MPa"), Q_(t_amb, "degC"))
    assert w.specific_heat_content.to("J/kg").magnitude == pytest.approx(r.specific_heat_content.magnitude, rel=1e-9)


def test_cold_ambient_end_is_continuous_at_the_triple_point():
    # heat per kelvin of the ambient end across 0.01 degC (IAPWS-95's stated lower bound): no jump
    from ventflux.properties import fluid_model
    from ventflux.properties.heat import ambient_enthalpy

    T = 273.16 + np.arange(-0.02, 0.02, 0.002)
    h = ambient_enthalpy(fluid_model(), T, 25e6)
    per_k = np.diff(h) / np.diff(T)
    assert np.max(np.abs(np.diff(per_k) / per_k[:-1])) < 1e-3


def test_orifice_refuses_ambient_below_the_freezing_point():
    tf = gsw.t_freezing(SA, _p_sea(25.0), 1.0)  # TEOS-10, -3.88 degC
    from ventflux.orifice import orifice_discharge

    with pytest.raises(InputError, match="freezing point"):
        orifice_discharge(Q_(350, "degC"), Q_(1, "m/s"), Q_(0.1, "m"), pressure=Q_(25, "MPa"),
                          ambient_temperature=Q_(tf - 0.05, "degC"))


def test_orifice_refuses_warm_ambient_at_any_pressure():
    from ventflux.orifice import orifice_discharge

    with pytest.raises(InputError, match="40 degC"):
        orifice_discharge(Q_(200, "degC"), Q_(1, "m/s"), Q_(0.1, "m"), pressure=Q_(3, "MPa"),
                          ambient_temperature=Q_(45, "degC"))


@settings(max_examples=40, deadline=None)
@given(p=st.floats(0.0, 10000.0), SA_=st.floats(0.0, 42.0), t0=st.floats(-1.0, 30.0),
       rise=st.floats(0.01, 250.0), more=st.floats(0.01, 20.0))
def test_heat_content_rises_with_temperature_everywhere(p, SA_, t0, rise, more):
    # Invariants of any seawater model: heat content positive and increasing with the warm temperature, mean
    # heat capacity between that of sea salt solution and of hot compressed water (3.5-5.0 kJ/(kg K) below
    # 250 K of warming; IAPWS-95 and IAPWS-08 orders of magnitude, from memory).
    from ventflux.properties.ventfluid import IAPWS95Water

    t0 = max(t0, float(gsw.t_freezing(SA_, p, 1.0)) + 0.01)
    tsat = IAPWS95Water().saturation_temperature(np.array(p * 1e4 + ATM)) - 273.15
    t1 = t0 + rise
    if np.isfinite(tsat) and t1 + more >= tsat - 0.5:
        return
    r = sh.seawater_heat_content(np.array([t1, t1 + more]), t0, SA_, p)
    assert np.all(r.specific_heat_content > 0)
    assert r.specific_heat_content[1] > r.specific_heat_content[0]
    assert 3500 < r.specific_heat_content[0] / rise < 5000
    assert np.all((r.density > 700) & (r.density < 1100))


@pytest.mark.parametrize("SA", [5e-324, 1e-310, 0.0])
def test_salinity_too_small_to_matter_is_pure_water(SA):
    # gsw's Gibbs function returns NaN for a subnormal absolute salinity (found by hypothesis): it must read as
    # pure water, not as NaN heat. Reference: the same call at SA = 0 exactly.
    r = sh.seawater_heat_content(np.array([40.0, 45.0]), 2.0, SA, 1000.0)
    ref = sh.seawater_heat_content(np.array([40.0, 45.0]), 2.0, 0.0, 1000.0)
    np.testing.assert_array_equal(r.specific_heat_content, ref.specific_heat_content)
    np.testing.assert_array_equal(r.density, ref.density)
