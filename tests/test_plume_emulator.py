"""Monte Carlo inversion on the forward emulator (ventflux.plume.emulator) against direct integration.

Checks: every draw's heat power within 0.05 % of the integral model integrated
directly (forward at the emulator's answer, and the per-draw secant inversion
on a subsample); the measured interpolation error is reported and bounded;
a grid that cannot reach its tolerance is refused and every draw integrated.
"""

import gsw
import numpy as np

from ventflux.plume import emulator
from ventflux.plume.inversion import (
    EMULATOR_MIN_DRAWS,
    _forward_integral,
    _invert_integral,
    heat_power_from_rise_height,
    integral_H,
)
from ventflux.uncertainty import draw_inputs, normal, uniform
from ventflux.units import Q_

SEED = 7
DRAWS = max(EMULATOR_MIN_DRAWS, 1200)


def _profile(tmp_path):
    from ventflux.profiles import read_ctd_cast

    p = np.arange(1000.0, 2600.0, 2.0)
    CT = 1.7 + 1.2 * np.exp(-(p - 1000.0) / 500.0)
    SA = 34.86 + 0.03 * np.tanh((p - 2200.0) / 60.0)
    t = gsw.t_from_CT(SA, CT, p)
    path = tmp_path / "cast.csv"
    path.write_text("pressure [dbar],temperature [degC],salinity\n"
                    + "".join(f"{a:.1f},{b:.5f},{c:.5f}\n" for a, b, c in zip(p, t, gsw.SP_from_SR(SA))))
    return read_ctd_cast(path, latitude=-8.0)


INPUTS = {"rise_height": normal(Q_(250, "m"), Q_(25, "m")), "entrainment": uniform(Q_(0.11), Q_(0.15)),
          "stratification_scale": normal(Q_(1.0), Q_(0.1))}


def _check_every_draw(res, d, level="maximum", forward=True):
    col = res.column
    H = res.heat_power.to("W").magnitude
    z = d["rise_height"].to("m").magnitude
    a = d["entrainment"].magnitude
    s = d["stratification_scale"].magnitude if "stratification_scale" in d else np.ones(z.size)
    ok = np.isfinite(H)
    assert ok.mean() > 0.99
    # forward integration at the emulator's heat power recovers the observed height: heat power ∝ z^4 near
    # the answer, so 1.25e-4 in log z is 0.05 % in heat power
    if forward:
        ens, _ = _forward_integral(col, H[ok], a[ok], s[ok], None, None)
        assert np.max(np.abs(np.log(ens.maximum_height / z[ok]))) <= 1.25e-4
    # and the per-draw secant inversion (the integrator) agrees within 0.05 % on a subsample
    k = np.flatnonzero(ok)[:150]
    F, _ = _invert_integral(col, z[k], level, a[k], s[k], None, None)
    np.testing.assert_allclose(H[k], integral_H(col, F), rtol=5e-4)


def test_emulator_inversion_in_a_measured_cast(tmp_path):
    prof = _profile(tmp_path)
    res = heat_power_from_rise_height(INPUTS["rise_height"], prof, entrainment=INPUTS["entrainment"],
                                      stratification_scale=INPUTS["stratification_scale"], draws=DRAWS, seed=SEED)
    assert res.emulator_error is not None and res.emulator_error <= emulator.TOLERANCE
    _check_every_draw(res, draw_inputs(INPUTS, DRAWS, SEED))


def test_emulator_inversion_in_uniform_stratification():
    # Constant N: the similarity scaling makes the grid nearly linear in its log coordinates (what is left of
    # the measured error is the integrator's own step-to-step roughness, ~1e-5 in log z).
    inputs = {"rise_height": normal(Q_(180, "m"), Q_(20, "m")), "entrainment": uniform(Q_(0.11), Q_(0.15))}
    res = heat_power_from_rise_height(inputs["rise_height"], Q_(1.0e-3, "1/s"), entrainment=inputs["entrainment"],
                                      ambient_temperature=Q_(2.0, "degC"), ambient_salinity=34.6,
                                      pressure=Q_(25, "MPa"), draws=DRAWS, seed=SEED)
    assert res.emulator_error is not None and res.emulator_error <= emulator.TOLERANCE
    _check_every_draw(res, draw_inputs(inputs, DRAWS, SEED))


def test_spreading_level_inversion(tmp_path):
    prof = _profile(tmp_path)
    inputs = dict(INPUTS, rise_height=normal(Q_(180, "m"), Q_(15, "m")))
    res = heat_power_from_rise_height(inputs["rise_height"], prof, level="spreading",
                                      entrainment=inputs["entrainment"],
                                      stratification_scale=inputs["stratification_scale"], draws=DRAWS, seed=SEED)
    # The spreading level is found between two integration steps, so its roughness (~1e-4 in log z) may keep
    # the emulator from its tolerance: then it is refused and every draw integrated. Either way, every draw:
    assert res.emulator_error is None or res.emulator_error <= emulator.TOLERANCE
    # (a forward integration's spreading level moves by ~2e-4 with its step grid, so only the inversion
    # itself is the reference here)
    _check_every_draw(res, draw_inputs(inputs, DRAWS, SEED), level="spreading", forward=False)


def test_an_emulator_that_misses_its_tolerance_only_starts_the_integration(tmp_path, monkeypatch):
    # Above its tolerance the emulator answers nothing: its answers start each draw's secant inversion, and
    # each draw is accepted on its own integration (so every draw agrees with the unstarted secant).
    prof = _profile(tmp_path)
    monkeypatch.setattr(emulator, "TOLERANCE", 1e-12)
    monkeypatch.setattr(emulator, "MAX_F_NODES", emulator.F_NODES)
    res = heat_power_from_rise_height(INPUTS["rise_height"], prof, entrainment=INPUTS["entrainment"],
                                      stratification_scale=INPUTS["stratification_scale"], draws=DRAWS, seed=SEED)
    assert res.emulator_error is None  # every draw integrated
    _check_every_draw(res, draw_inputs(INPUTS, DRAWS, SEED))


def test_an_emulator_far_off_is_refused(tmp_path, monkeypatch):
    prof = _profile(tmp_path)
    monkeypatch.setattr(emulator, "TOLERANCE", 1e-12)
    monkeypatch.setattr(emulator, "GUIDE_TOLERANCE", 1e-12)
    monkeypatch.setattr(emulator, "MAX_F_NODES", emulator.F_NODES)
    res = heat_power_from_rise_height(INPUTS["rise_height"], prof, entrainment=INPUTS["entrainment"],
                                      draws=DRAWS, seed=SEED)
    assert res.emulator_error is None
    assert np.isfinite(res.heat_power.magnitude).mean() > 0.99


def test_rise_depends_on_flux_over_entrainment_squared(tmp_path):
    # The top-hat plume equations dQ/dz = 2α(πM)^(1/2), dM/dz = FQ/M, dF/dz = −N²Q are invariant under
    # Q, M, F → λ²Q, λ²M, λ²F with α → λα (substitution; Morton, Taylor and Turner 1956 for the equations):
    # the emulator's similarity variable. The integral model steps a pure plume on the grid of its G = F/α², so
    # the discrete solutions map onto each other too: equal to rounding.
    from ventflux.plume.inversion import _ensemble, ambient_column

    column, _, _ = ambient_column(_profile(tmp_path), None, None, None, None, None, None)  # any N(z)
    G = np.exp(np.linspace(-3.0, 1.0, 9))
    a1, a2 = np.full(G.size, 0.10), np.full(G.size, 0.16)
    e1 = _ensemble(column, G * a1**2, a1, np.ones(G.size))
    e2 = _ensemble(column, G * a2**2, a2, np.ones(G.size))
    np.testing.assert_allclose(e1.maximum_height, e2.maximum_height, rtol=1e-10)
    np.testing.assert_allclose(e1.spreading_height, e2.spreading_height, rtol=1e-10)
    np.testing.assert_allclose(e1.spreading_volume_flux / a1**2, e2.spreading_volume_flux / a2**2, rtol=1e-10)


def test_few_draws_are_integrated_directly(tmp_path):
    prof = _profile(tmp_path)
    res = heat_power_from_rise_height(INPUTS["rise_height"], prof, entrainment=INPUTS["entrainment"],
                                      draws=50, seed=SEED)
    assert res.emulator_error is None


def test_lagrange_weights_reproduce_cubics():
    nodes = np.linspace(-1.0, 2.0, 9)
    x = np.linspace(-1.0, 2.0, 41)
    w, i0 = emulator._weights(x, nodes)
    f = nodes ** 3 - 2 * nodes
    approx = sum(w[:, k] * f[i0 + k] for k in range(4))
    np.testing.assert_allclose(approx, x ** 3 - 2 * x, atol=1e-12)
    assert np.isnan(emulator._weights(np.array([2.5]), nodes)[0]).all()


def test_a_runs_nominal_is_answered_by_its_draws_emulator_within_the_tolerance(tmp_path):
    # The nominal of a Monte Carlo run is solved apart from its draws; the draws' emulator answers it. Checked
    # against the per-draw secant inversion (the integrator) at the nominal inputs: within 0.05 % in heat power.
    from ventflux.plume.propagation import plume_rise_propagation

    prof = _profile(tmp_path)
    inputs = {"height": INPUTS["rise_height"], "entrainment": INPUTS["entrainment"],
              "stratification_scale": INPUTS["stratification_scale"]}
    prop = plume_rise_propagation(inputs, prof, draws=DRAWS, seed=SEED)
    assert prop.result.emulator_error is not None  # the draws were answered by an emulator
    nom = prop.result.nominal
    col = nom.column
    F, _ = _invert_integral(col, np.array([250.0]), "maximum", np.array([0.13]), np.array([1.0]), None, None)
    np.testing.assert_allclose(nom.heat_power.to("W").magnitude, integral_H(col, F)[0], rtol=5e-4)
