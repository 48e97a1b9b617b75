"""The integral plume model against plume theory's published solutions.

Every check names its source; "from memory" marks values recalled rather
than read off the paper.
"""

from types import SimpleNamespace

import gsw
import numpy as np
import pytest
from scipy.integrate import solve_ivp

from ventflux.plume import closed_form, integral
from ventflux.plume.inversion import rise_height_from_heat_power
from ventflux.plume.source import plume_source_from_exit, plume_source_from_orifice
from ventflux.profiles import constant_stratification, uniform_ambient
from ventflux.units import Q_

ALPHA = 0.093 * np.sqrt(2.0)  # top-hat value of Morton, Taylor & Turner (1956), Gaussian 0.093


@pytest.fixture(scope="module")
def stratified():
    prof = constant_stratification(Q_(1.0e-3, "1/s"), Q_(2.0, "degC"), 34.6, depth=Q_(2500, "m"),
                                   height=Q_(1200, "m"))
    return integral.column_above_vent(prof)


@pytest.fixture(scope="module")
def uniform():
    return integral.column_above_vent(uniform_ambient(Q_(2.0, "degC"), 34.6, depth=Q_(2500, "m"),
                                                      height=Q_(400, "m")))


def _forced(column, linear):
    # A jet-like source (w0 = 1 m/s through a 3.6 cm orifice, 1 MW): far from similarity at the source.
    src = integral.forced_plume(column, 1e-3, 1e-3, 1e6)
    model = integral.VerticalModel(column, ALPHA, 1.0, linear=linear)
    return integral.integrate(model, src, span=np.array([400.0]), track=True), src


def test_forced_plume_converges_to_the_pure_plume_similarity_solution(uniform):
    # Morton, Taylor & Turner (1956), top-hat form: b = (6/5) α z and
    # w = (5 / 6α) (9 α F / 10π)^(1/3) z^(-1/3), far above any source (virtual origin
    # removed by using slopes). Linear equation of state, so F is exactly conserved.
    ens, src = _forced(uniform, linear=True)
    t = ens.track
    z = t["height"][:, 0]
    b, w = t["radius"][:, 0], t["velocity"][:, 0]
    far = (z > 150) & (z < 380)
    db_dz = np.polyfit(z[far], b[far], 1)[0]
    assert db_dz == pytest.approx(1.2 * ALPHA, rel=0.01)
    coeff = 5 / (6 * ALPHA) * (9 * ALPHA * src.F[0] / (10 * np.pi)) ** (1 / 3)
    slope = np.polyfit(z[far], w[far] ** -3, 1)[0]  # w^-3 = (z - z_v) / coeff^3
    assert slope == pytest.approx(coeff ** -3, rel=0.02)
    assert ens.escaped[0]  # unstratified: it never stops


def test_teos10_plume_loses_buoyancy_flux_with_height_as_alpha_falls_with_pressure(uniform):
    # Non-linear equation of state: in an unstratified column the buoyancy flux Q g'
    # scales with TEOS-10's α_Θ at the local pressure (thermobaric effect; IOC et al. 2010).
    ens, src = _forced(uniform, linear=False)
    t = ens.track
    z = t["height"][:, 0]
    i = np.argmin(np.abs(z - 300.0))
    flux = t["volume_flux"][i, 0] * t["reduced_gravity"][i, 0]
    p = np.interp(z[i], uniform.height, uniform.p)
    expected = src.F[0] * gsw.alpha(uniform.SA0, uniform.CT0, p) / uniform.alpha0
    assert flux == pytest.approx(expected, rel=0.01)
    assert flux < 0.98 * src.F[0]


@pytest.mark.parametrize("heat_mw", [10.0, 100.0])
def test_maximum_rise_in_uniform_stratification_matches_the_point_source_coefficient(stratified, heat_mw):
    # Briggs (1969), Morton, Taylor & Turner (1956): z_max = 5.0 (F/π)^(1/4) N^(-3/4)
    # with α_gauss = 0.093; within 3 % (from memory). Spreading level ≈ 0.76 z_max
    # within 0.03 (from memory).
    H = heat_mw * 1e6
    F = stratified.heat_to_buoyancy() * H
    span, zest = integral.expected_span(stratified, F)
    src = integral.pure_plume(stratified, H, ALPHA, 1e-3 * zest)
    ens = integral.integrate(integral.VerticalModel(stratified, ALPHA, 1.0), src, span)
    ratio = ens.maximum_height[0] / ((F / np.pi) ** 0.25 * 1e-3 ** -0.75)
    assert ratio == pytest.approx(5.0, rel=0.03)
    assert ens.spreading_height[0] / ens.maximum_height[0] == pytest.approx(0.76, abs=0.03)


def test_strong_cross_flow_rise_matches_the_bent_over_limit(stratified):
    # Briggs (1975): bent-over rise ≈ 2.6 (F_b / (U N²))^(1/3) with F_b = F/π, within 20 %
    # (from memory). U = 0.3 m/s is far beyond the bending length F/(π U³) ≈ 0.4 m.
    H = np.array([1e7, 1e8])
    F = stratified.heat_to_buoyancy() * H
    U = 0.3
    span, zest = integral.expected_span(stratified, F, U)
    src = integral.pure_plume(stratified, H, ALPHA, np.minimum(1e-3 * zest, 0.05 * F / (np.pi * U ** 3)))
    ens = integral.integrate(integral.CrossflowModel(stratified, ALPHA, 1.0, U), src, span)
    expected = 2.6 * (F / np.pi / (U * 1e-6)) ** (1 / 3)
    assert np.allclose(ens.maximum_height, expected, rtol=0.2)
    # the top lies half a buoyancy period downstream: x = U π / N (same linear theory, Briggs 1975)
    assert np.allclose(ens.maximum_distance, U * np.pi / 1e-3, rtol=0.1)


def test_hundred_megawatt_plume_rises_a_few_hundred_metres(stratified):
    # Fact of the trade (common practice, no source): ~100 MW in N ≈ 1e-3 /s rises a few hundred metres.
    res = rise_height_from_heat_power(Q_(100, "MW"), stratified.profile)
    assert 150 < res.rise_height.to("m").magnitude < 500


def test_fixed_step_ensemble_agrees_with_an_adaptive_reference_integrator(stratified):
    # Verification of the numerics: scipy's adaptive RK45 at rtol 1e-10 on the same equations.
    H = np.array([3e6, 3e7, 3e8])
    F = stratified.heat_to_buoyancy() * H
    span, zest = integral.expected_span(stratified, F)
    z0 = 1e-3 * zest
    src = integral.pure_plume(stratified, H, ALPHA, z0)
    model = integral.VerticalModel(stratified, ALPHA, 1.0)
    ens = integral.integrate(model, src, span)
    for k in range(H.size):
        def f(z, y):
            d, _ = model.rhs(np.array([z]), y.reshape(4, 1), np.array([0]))
            return d[:, 0]

        top = lambda z, y: y[1]  # noqa: E731
        top.terminal, top.direction = True, -1
        y0 = [src.Q[k], src.M[k] ** 2, src.T[k], src.S[k]]
        sol = solve_ivp(f, (z0[k], 3 * span[k]), y0, events=top, rtol=1e-10, atol=1e-14)
        assert ens.maximum_height[k] == pytest.approx(sol.t_events[0][0], rel=2e-4)


def test_weak_momentum_orifice_source_agrees_with_the_closed_form(stratified):
    # Closed form (Morton, Taylor & Turner 1956; Briggs 1969) and the integral model within a
    # few percent for a source whose momentum length M0^(3/4)/F^(1/2) is far below the rise.
    p = Q_(stratified.p0 * 1e4 + 101325.0, "Pa")
    src = plume_source_from_exit(Q_(350, "degC"), Q_(0.5, "m/s"), Q_(0.08, "m"), p, Q_(1.85, "degC"), 34.6)
    res = rise_height_from_heat_power(None, stratified.profile, source=src)
    F = res.buoyancy_flux.to("m^4/s^3").magnitude
    M0 = src.momentum_flux.to("m^4/s^2").magnitude
    assert M0 ** 0.75 / F ** 0.5 < 0.02 * res.rise_height.magnitude
    z_cf = closed_form.rise_height_point_source(Q_(F, "m^4/s^3"), Q_(1e-3, "1/s")).to("m").magnitude
    assert res.rise_height.to("m").magnitude == pytest.approx(z_cf, rel=0.04)
    assert res.spreading_dilution.magnitude > 1e3  # diluted thousands of times by the spreading level


def test_orifice_adapter_reads_only_the_documented_attributes():
    d = SimpleNamespace(mass_flux=Q_(2.0, "kg/s"), mean_velocity=Q_(1.5, "m/s"),
                        ambient_density=Q_(1040.0, "kg/m^3"), heat_power=Q_(3.2, "MW"))
    s = plume_source_from_orifice(d)
    assert s.volume_flux.to("m^3/s").magnitude == pytest.approx(2.0 / 1040.0)
    assert s.momentum_flux.to("m^4/s^2").magnitude == pytest.approx(2.0 * 1.5 / 1040.0)
    assert s.heat_power.to("W").magnitude == pytest.approx(3.2e6)


def test_orifice_adapter_on_the_orifice_estimator_matches_exit_conditions():
    # Two routes through the same IAPWS-95 and TEOS-10 property layer must agree.
    from ventflux.orifice import orifice_discharge

    p = Q_(25, "MPa")
    d = orifice_discharge(Q_(350, "degC"), Q_(1.2, "m/s"), Q_(0.08, "m"), pressure=p,
                          ambient_temperature=Q_(2.0, "degC"), ambient_salinity=34.6)
    a = plume_source_from_orifice(d)
    b = plume_source_from_exit(Q_(350, "degC"), Q_(1.2, "m/s"), Q_(0.08, "m"), p, Q_(2.0, "degC"), 34.6)
    for k in ("volume_flux", "momentum_flux", "heat_power"):
        assert getattr(a, k).to_base_units().magnitude == pytest.approx(getattr(b, k).to_base_units().magnitude,
                                                                        rel=1e-3)
