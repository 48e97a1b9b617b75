"""Vent-fluid properties (IAPWS-95 through the property layer) against published values."""

import numpy as np
import pytest

from ventflux.errors import InputError
from ventflux.properties import IAPWS95Water, specific_heat_content, vent_fluid_state
from ventflux.units import Q_

TABULATED = IAPWS95Water(allow_vapour=True)
DIRECT = IAPWS95Water(tabulated=False, allow_vapour=True)

# IAPWS R6-95(2018), Table 7: single-phase check values. Given (T, rho) the
# release lists p; the property layer is asked the inverse question (T, p) -> rho.
TABLE7 = [
    (300.0, 0.9965560e3, 0.992418352e-1),
    (300.0, 0.1005308e4, 0.200022515e2),
    (300.0, 0.1188202e4, 0.700004704e3),
    (500.0, 0.8380250e3, 0.100003858e2),
    (500.0, 0.1084564e4, 0.700000405e3),
    (647.0, 0.3580000e3, 0.220384756e2),
    (900.0, 0.5261500e2, 0.200000690e2),
    (900.0, 0.8707690e3, 0.700000006e3),
]


@pytest.mark.parametrize("T, rho, p_mpa", TABLE7)
@pytest.mark.parametrize("model", [DIRECT, TABULATED], ids=["direct", "tabulated"])
def test_iapws95_table7_density(model, T, rho, p_mpa):
    _, d = model.enthalpy_density(T, p_mpa * 1e6)
    # p is given to 9 significant digits; the inverse is as exact as the
    # table's rho (7 digits) for the direct solver; the table adds < 1e-5.
    tol = 2e-6 if model is DIRECT else 2e-5
    assert d == pytest.approx(rho, rel=tol)


# IAPWS-IF97 (IAPWS R7-97(2012)), Table 5, region 1 verification values
# (from memory): (T [K], p [MPa]) -> v [m3/kg], h [kJ/kg]. IF97 reproduces
# IAPWS-95 in region 1 to within its stated permissible differences, taken here
# as 0.05 % in v and 0.2 kJ/kg in h (from memory).
IF97_REGION1 = [
    (300.0, 3.0, 0.100215168e-2, 0.115331273e3),
    (300.0, 80.0, 0.971180894e-3, 0.184142828e3),
    (500.0, 3.0, 0.120241800e-2, 0.975542239e3),
]


@pytest.mark.parametrize("T, p, v, h", IF97_REGION1)
def test_if97_region1_consistency(T, p, v, h):
    state = vent_fluid_state(Q_(T, "K"), Q_(p, "MPa"))
    assert 1 / state.density.to("kg/m^3").magnitude == pytest.approx(v, rel=5e-4)
    assert state.enthalpy.to("kJ/kg").magnitude == pytest.approx(h, abs=0.2)


def _iapws_grid():
    iapws = pytest.importorskip("iapws")
    pts = []
    for t_c in (2, 50, 150, 250, 300, 350, 400, 450):
        for p in (5, 15, 25, 40, 60):
            T = t_c + 273.15
            if p < 22.064:
                tsat = iapws.IAPWS97(P=p, x=0).T
                if T >= tsat - 5:
                    continue
            if 370 <= t_c <= 420 and p <= 30:  # near the critical and pseudo-critical region
                continue
            pts.append((T, p))
    return iapws, pts


def test_enthalpy_and_density_against_iapws_package():
    # The independent `iapws` package (PyPI) implements IAPWS-95 from the release.
    iapws, pts = _iapws_grid()
    T = np.array([a for a, _ in pts])
    p = np.array([b for _, b in pts])
    h, d = TABULATED.enthalpy_density(T, p * 1e6)
    ref = [iapws.IAPWS95(T=a, P=b) for a, b in pts]
    h_ref = np.array([r.h for r in ref]) * 1e3
    d_ref = np.array([r.rho for r in ref])
    assert len(pts) > 25
    np.testing.assert_allclose(d, d_ref, rtol=2e-5)
    # Enthalpy: both use IAPWS-95's reference state (u = s = 0 for the liquid at
    # the triple point), so enthalpies compare directly.
    np.testing.assert_allclose(h, h_ref, rtol=2e-5, atol=50.0)


def test_heat_content_against_iapws_package():
    iapws = pytest.importorskip("iapws")
    dh = specific_heat_content(Q_(350, "degC"), Q_(2, "degC"), Q_(25, "MPa"))
    ref = iapws.IAPWS95(T=623.15, P=25).h - iapws.IAPWS95(T=275.15, P=25).h
    assert dh.to("kJ/kg").magnitude == pytest.approx(ref, rel=2e-5)


def test_boiling_is_an_error_naming_the_saturation_temperature():
    # Saturation temperature of water at 12 MPa: 324.68 degC (IAPWS-IF97 steam
    # tables; from memory).
    with pytest.raises(InputError, match=r"saturation temperature 324\.6\d degC at 12 MPa"):
        vent_fluid_state(Q_(330, "degC"), Q_(12, "MPa"))


def test_above_critical_pressure_no_saturation():
    model = IAPWS95Water()
    assert np.isnan(model.saturation_temperature(np.array([25e6])))[0]
    vent_fluid_state(Q_(420, "degC"), Q_(25, "MPa"))  # supercritical: a number, no error


@pytest.mark.parametrize("T, p, field", [(-5.0, 25.0, "temperature"), (1200.0, 25.0, "temperature"),
                                         (300.0, 2000.0, "pressure")])
def test_outside_iapws95_validity_is_refused(T, p, field):
    with pytest.raises(InputError) as err:
        vent_fluid_state(Q_(T, "degC"), Q_(p, "MPa"))
    assert err.value.field == field


def test_table_and_direct_agree_at_random_points():
    # The table's own accuracy away from the pseudo-critical line
    # (the benchmark maps it in full).
    rng = np.random.default_rng(3)
    T = rng.uniform(276.0, 600.0, 2000)
    p = rng.uniform(5e6, 60e6, 2000)
    ok = IAPWS95Water().valid(T, p)
    h, d = TABULATED.enthalpy_density(T[ok], p[ok])
    h0, d0 = DIRECT.enthalpy_density(T[ok], p[ok])
    np.testing.assert_allclose(h, h0, rtol=1e-4)
    np.testing.assert_allclose(d, d0, rtol=1e-4)


def test_inputs_are_not_modified():
    T = np.array([600.0, 620.0])
    p = np.array([25e6, 25e6])
    T0, p0 = T.copy(), p.copy()
    TABULATED.enthalpy_density(T, p)
    np.testing.assert_array_equal(T, T0)
    np.testing.assert_array_equal(p, p0)


def test_layer_accuracy_over_the_vent_range_against_coolprop_heos():
    # 2-450 degC x 5-60 MPa, single phase: worst relative error <= 1e-4 everywhere and <= 5e-6 more than
    # 10 K from the saturation curve and from the pseudo-critical line (taken here, from memory, as within
    # 630-720 K for 22-60 MPa). Reference: CoolProp HEOS (direct IAPWS-95).
    CP = pytest.importorskip("CoolProp.CoolProp")
    rng = np.random.default_rng(11)
    T = rng.uniform(275.15, 723.15, 20000)
    p = rng.uniform(5e6, 60e6, 20000)
    model = IAPWS95Water()
    ok = model.valid(T, p)
    T, p = T[ok], p[ok]
    h, d = model.enthalpy_density(T, p)
    h0 = CP.PropsSI("Hmass", "T", T, "P", p, "HEOS::Water")
    d0 = CP.PropsSI("Dmass", "T", T, "P", p, "HEOS::Water")
    err = np.maximum(np.abs(h / h0 - 1), np.abs(d / d0 - 1))
    assert err.max() <= 1e-4
    ts = model.saturation_temperature(np.minimum(p, 22.0e6))
    far = np.where(p < 22.064e6, T < ts - 10.0, (T < 620.0) | (T > 730.0))
    assert far.sum() > 10000
    assert err[far].max() <= 5e-6


@pytest.mark.parametrize("p", [5e6, 15.5e6, 21.9e6, 22.064e6, 25e6, 26.13e6, 60e6])
def test_one_pressure_path_gives_the_general_paths_numbers(p):
    # A site's single pressure takes a faster route (one cubic in T per cell, from a row computed once);
    # it must give the per-point bicubic evaluation's numbers to rounding, the directly solved bands included.
    # Two pressures force the general route on the same temperatures.
    rng = np.random.default_rng(5)
    T = rng.uniform(275.0, 800.0, 3000)
    T = T[IAPWS95Water().valid(T, p)]
    h1, d1 = TABULATED.enthalpy_density(T, p)
    both = np.concatenate([T, [300.0]])
    h2, d2 = TABULATED.enthalpy_density(both, np.concatenate([np.full(T.size, p), [p * 1.01]]))
    np.testing.assert_allclose(h1, h2[:-1], rtol=1e-13, atol=0)
    np.testing.assert_allclose(d1, d2[:-1], rtol=1e-13, atol=0)
    h3, d3 = TABULATED.enthalpy_density(T.reshape(-1, 1), np.full((1, 1), p))  # a shaped pressure too
    np.testing.assert_array_equal(h3.ravel(), h1)
    np.testing.assert_array_equal(d3.ravel(), d1)


def test_cell_index_is_the_binary_searchs():
    # The bucket table's cell index equals numpy's searchsorted at nodes, next to nodes and between them.
    from ventflux.properties.ventfluid import _splines

    patches = _splines()[1]
    x = patches.x
    X = np.concatenate([x, np.nextafter(x, -np.inf), np.nextafter(x, np.inf), (x[1:] + x[:-1]) / 2,
                        np.random.default_rng(2).uniform(x[0], x[-1], 20000)])
    want = np.clip(np.searchsorted(x, X, side="right") - 1, 0, x.size - 2)
    np.testing.assert_array_equal(patches._cell(X), want)


def test_orifice_draws_unchanged_by_the_one_pressure_route():
    # Monte Carlo draws of an orifice at one site pressure go through the one-pressure route; the same
    # draws with the pressure given per draw (forcing the per-point patches) agree to 1e-12 relative.
    from ventflux.orifice import orifice_discharge

    rng = np.random.default_rng(8)
    n = 20000
    T = Q_(rng.normal(352.0, 3.0, n), "degC")
    v = Q_(rng.normal(1.4, 0.2, n), "m/s")
    d = Q_(rng.normal(0.12, 0.01, n), "m")
    Ta = Q_(rng.normal(2.1, 0.05, n), "degC")
    one = orifice_discharge(T, v, d, pressure=Q_(26.0, "MPa"), ambient_temperature=Ta, ambient_salinity=34.6)
    p = np.full(n + 1, 26e6)
    p[-1] = 27e6
    per_draw = orifice_discharge(Q_(np.append(T.m, 350.0), "degC"), Q_(np.append(v.m, 1.0), "m/s"),
                                 Q_(np.append(d.m, 0.1), "m"), pressure=Q_(p, "Pa"),
                                 ambient_temperature=Q_(np.append(Ta.m, 2.1), "degC"), ambient_salinity=34.6)
    for attr in ("heat_power", "mass_flux", "specific_heat_content", "exit_density"):
        a = getattr(one, attr).m
        b = getattr(per_draw, attr).m[:-1]
        assert np.max(np.abs(a / b - 1)) <= 1e-12, attr
