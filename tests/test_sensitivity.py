"""Variance-based sensitivity indices against analytic values and a general-purpose reference library.

Analytic references, each recomputed here from its closed form:

* Ishigami function, a = 7, b = 0.1, inputs uniform on [−π, π] (Ishigami & Homma 1990,
  Proc. ISUMA '90, 398–403; partial variances as given in Saltelli et al. 2008, Global
  Sensitivity Analysis: The Primer, Wiley, and Sobol' & Levitan 1999).
* A linear model Y = Σ a_i X_i of independent inputs: S_i = S_Ti = a_i² σ_i² / Σ a_j² σ_j²
  (exact; follows from Var Y = Σ a_j² σ_j²).

Reference library: SALib (Herman & Usher 2017, J. Open Source Softw. 2(9), 97), test extra only.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.errors import InputError
from ventflux.sensitivity import (
    GIVEN_DATA,
    PICK_FREEZE,
    conditional_width,
    design_cost,
    given_data_indices,
    pick_freeze,
    pick_freeze_design,
)

A_ISH, B_ISH = 7.0, 0.1


def ishigami(x1, x2, x3, a=A_ISH, b=B_ISH):
    return np.sin(x1) + a * np.sin(x2) ** 2 + b * x3 ** 4 * np.sin(x1)


def ishigami_analytic(a=A_ISH, b=B_ISH):
    """First-order and total indices from the closed-form partial variances (Saltelli et al. 2008)."""
    pi = np.pi
    V1 = 0.5 * (1 + b * pi ** 4 / 5) ** 2
    V2 = a ** 2 / 8
    V13 = b ** 2 * pi ** 8 * (1 / 18 - 1 / 50)  # (b²/2)·Var(X3⁴), Var(X3⁴) = π⁸(1/9 − 1/25)
    V = V1 + V2 + V13
    # V = a²/8 + bπ⁴/5 + b²π⁸/18 + 1/2 (the closed form of the total variance)
    assert np.isclose(V, a ** 2 / 8 + b * pi ** 4 / 5 + b ** 2 * pi ** 8 / 18 + 0.5)
    S = np.array([V1, V2, 0.0]) / V
    ST = np.array([V1 + V13, V2, V13]) / V
    return S, ST


def test_ishigami_analytic_values_match_the_published_ones():
    # Values from memory (Saltelli et al. 2008): S1 ≈ 0.314, S2 ≈ 0.442, S3 = 0, ST3 ≈ 0.244.
    S, ST = ishigami_analytic()
    assert np.allclose(S, [0.314, 0.442, 0.0], atol=1e-3)
    assert np.isclose(ST[2], 0.244, atol=1e-3)


def _uniform_draws(rng, n, k=3):
    return {f"x{i + 1}": rng.uniform(-np.pi, np.pi, n) for i in range(k)}


def _ish(d):
    return ishigami(d["x1"], d["x2"], d["x3"])


def test_given_data_ishigami_first_order_within_error_and_total_bounds():
    rng = np.random.default_rng(11)
    X = _uniform_draws(rng, 20_000)
    res = given_data_indices(X, {"y": _ish(X)}, seed=3)["y"]
    S, ST = ishigami_analytic()
    assert res.estimator == GIVEN_DATA
    assert np.all(np.abs(res.first - S) < 3 * res.first_error + 0.01), (res.first, res.first_error)
    assert np.all(res.first_error > 0) and np.all(res.first_error < 0.03)
    # The given-data total is the upper bound S_i + R: never below the true total (within errors).
    assert np.all(res.total + 3 * res.total_error >= ST)
    # Only X1 and X3 interact, so the bound is exact for them.
    assert abs(res.total[0] - ST[0]) < 3 * res.total_error[0] + 0.02
    assert abs(res.total[2] - ST[2]) < 3 * res.total_error[2] + 0.02
    assert abs(res.interaction - (ST[2] - S[2])) < 3 * res.interaction_error + 0.02
    assert res.top(3)[:2] == ["x2", "x1"]


def test_pick_freeze_ishigami_first_and_total_within_error():
    rng = np.random.default_rng(12)
    A, B = _uniform_draws(rng, 20_000), _uniform_draws(rng, 20_000)
    res = pick_freeze(_ish, A, B, seed=4)["output"]
    S, ST = ishigami_analytic()
    assert res.estimator == PICK_FREEZE
    assert np.all(np.abs(res.first - S) < 3 * res.first_error + 0.005), (res.first, res.first_error)
    assert np.all(np.abs(res.total - ST) < 3 * res.total_error + 0.005), (res.total, res.total_error)
    assert res.negligible.tolist() == [False, False, False]  # X3 matters through its total effect


def test_linear_model_indices_are_exact_shares():
    rng = np.random.default_rng(13)
    a = np.array([3.0, -1.0, 0.5, 0.0])
    sd = np.array([1.0, 2.0, 4.0, 1.0])
    expected = a ** 2 * sd ** 2 / np.sum(a ** 2 * sd ** 2)
    X = {f"x{i}": rng.normal(10.0, sd[i], 20_000) for i in range(4)}
    y = sum(a[i] * X[f"x{i}"] for i in range(4))
    g = given_data_indices(X, y, seed=1)["output"]
    assert np.all(np.abs(g.first - expected) < 3 * g.first_error + 0.005)
    assert abs(g.interaction) < 3 * g.interaction_error + 0.01  # additive: no interaction share
    assert g.negligible.tolist() == [False, False, False, True]
    B = {f"x{i}": rng.normal(10.0, sd[i], 20_000) for i in range(4)}
    p = pick_freeze(lambda d: sum(a[i] * d[f"x{i}"] for i in range(4)), X, B, seed=2)["output"]
    assert np.all(np.abs(p.first - expected) < 3 * p.first_error + 0.005)
    assert np.all(np.abs(p.total - expected) < 3 * p.total_error + 0.005)
    assert p.negligible[3]


def test_what_if_widths_match_the_analytic_conditional_spread():
    # Linear model: with x0 fixed the output is normal with sd √(Σ_{j≠0} a_j² σ_j²); its 5–95 % width is 2·1.645 sd.
    rng = np.random.default_rng(14)
    X = {"x0": rng.normal(0, 3.0, 40_000), "x1": rng.normal(0, 1.0, 40_000)}
    y = X["x0"] + X["x1"]
    want = 2 * 1.6448536 * 1.0
    g = given_data_indices(X, {"y": y}, nominal={"x0": 0.0, "x1": 0.0}, bootstrap=0)["y"]
    assert abs(g.width_if_known["x0"] - want) / want < 0.1
    assert abs(g.width - 2 * 1.6448536 * np.sqrt(10)) / g.width < 0.03
    B = {"x0": rng.normal(0, 3.0, 40_000), "x1": rng.normal(0, 1.0, 40_000)}
    p = pick_freeze(lambda d: d["x0"] + d["x1"], X, B, fixed={"x0": 0.0}, bootstrap=0)["output"]
    assert abs(p.width_if_known["x0"] - want) / want < 0.03
    assert abs(conditional_width(X["x0"], y, 0.0) - want) / want < 0.1


def test_design_layout_and_cost():
    A = {"p": np.arange(3.0), "q": np.arange(3.0) + 10}
    B = {"p": np.arange(3.0) + 100, "q": np.arange(3.0) + 110}
    d = pick_freeze_design(A, B, fixed={"q": -1.0})
    assert design_cost(2, 1) == 5 and d["p"].size == 15
    assert d["p"].reshape(5, 3)[:, 0].tolist() == [0, 100, 100, 0, 0]
    assert d["q"].reshape(5, 3)[:, 0].tolist() == [10, 110, 10, 110, -1]


def test_bad_inputs_are_refused_naming_the_input():
    with pytest.raises(InputError, match="x"):
        given_data_indices({"x": np.r_[np.ones(50), np.nan]}, np.ones(51))
    with pytest.raises(InputError, match="same number"):
        given_data_indices({"x": np.ones(50), "z": np.ones(40)}, np.ones(50))


def test_constant_output_gives_zero_indices():
    rng = np.random.default_rng(1)
    g = given_data_indices({"x": rng.normal(size=500)}, np.ones(500), bootstrap=10)["output"]
    assert g.first[0] == 0 and g.total[0] == 0 and g.negligible[0]


@settings(max_examples=15, deadline=None)
@given(scale=st.floats(0.01, 1e4) | st.floats(-1e4, -0.01), shift=st.floats(-1e6, 1e6), seed=st.integers(0, 2 ** 16))
def test_indices_do_not_depend_on_the_output_s_unit_or_offset_nor_on_input_order(scale, shift, seed):
    rng = np.random.default_rng(seed)
    X = {"a": rng.normal(size=400), "b": rng.uniform(size=400), "c": rng.lognormal(size=400)}
    y = X["a"] + 2 * X["b"] * X["c"]
    g = given_data_indices(X, y, bootstrap=5, seed=1)["output"]
    h = given_data_indices(dict(reversed(list(X.items()))), scale * y + shift, bootstrap=5, seed=1)["output"]
    for nm in X:
        i, j = g.names.index(nm), h.names.index(nm)
        assert h.first[j] == pytest.approx(g.first[i], abs=1e-4)
        assert h.total[j] == pytest.approx(g.total[i], abs=1e-4)
    B = {k: rng.permutation(v) for k, v in X.items()}

    def f(d):
        return d["a"] + 2 * d["b"] * d["c"]

    p = pick_freeze(f, X, B, bootstrap=0)["output"]
    q = pick_freeze(lambda d: scale * f(d) + shift, X, B, bootstrap=0)["output"]
    assert np.allclose(p.first, q.first, atol=1e-6) and np.allclose(p.total, q.total, atol=1e-6)


def test_design_rows_with_a_failed_evaluation_are_dropped_from_every_block():
    rng = np.random.default_rng(5)
    A, B = _uniform_draws(rng, 2000), _uniform_draws(rng, 2000)

    def model(d):
        y = _ish(d)
        y[::97] = np.nan  # a few failed evaluations, in every block
        return y

    res = pick_freeze(model, A, B, bootstrap=10)["output"]
    assert 2000 - 5 * 21 <= res.n < 2000


# ---- SALib as an outside reference ------------------------------------------------------
salib = pytest.importorskip("SALib")


def _salib_sobol(func, problem, n, seed):
    from SALib.analyze import sobol as sobol_analyze
    from SALib.sample import sobol as sobol_sample

    X = sobol_sample.sample(problem, n, calc_second_order=False, seed=seed)
    Y = func(X)
    return sobol_analyze.analyze(problem, Y, calc_second_order=False, seed=seed, num_resamples=200)


def test_salib_agrees_on_ishigami_with_both_estimators():
    problem = {"num_vars": 3, "names": ["x1", "x2", "x3"], "bounds": [[-np.pi, np.pi]] * 3}
    ref = _salib_sobol(lambda X: ishigami(X[:, 0], X[:, 1], X[:, 2]), problem, 4096, 7)
    rng = np.random.default_rng(21)
    X = _uniform_draws(rng, 20_000)
    g = given_data_indices(X, _ish(X), seed=5)["output"]
    # SALib's S1_conf and ST_conf are 95 % half-widths (≈ 2 standard errors).
    tol = 2 * np.hypot(g.first_error, ref["S1_conf"] / 1.96) + 0.01
    assert np.all(np.abs(g.first - ref["S1"]) < tol), (g.first, ref["S1"])
    A, B = _uniform_draws(rng, 20_000), _uniform_draws(rng, 20_000)
    p = pick_freeze(_ish, A, B, seed=6)["output"]
    assert np.all(np.abs(p.first - ref["S1"]) < 2 * np.hypot(p.first_error, ref["S1_conf"] / 1.96) + 0.01)
    assert np.all(np.abs(p.total - ref["ST"]) < 2 * np.hypot(p.total_error, ref["ST_conf"] / 1.96) + 0.01)


def test_salib_agrees_on_the_linear_model():
    a = np.array([3.0, -1.0, 0.5])
    problem = {"num_vars": 3, "names": ["x0", "x1", "x2"], "bounds": [[10.0, 1.0], [10.0, 2.0], [10.0, 4.0]],
               "dists": ["norm", "norm", "norm"]}
    ref = _salib_sobol(lambda X: X @ a, problem, 4096, 8)
    rng = np.random.default_rng(22)
    X = {f"x{i}": rng.normal(10.0, s, 20_000) for i, s in enumerate((1.0, 2.0, 4.0))}
    g = given_data_indices(X, sum(a[i] * X[f"x{i}"] for i in range(3)), seed=5)["output"]
    assert np.all(np.abs(g.first - ref["S1"]) < 2 * np.hypot(g.first_error, ref["S1_conf"] / 1.96) + 0.01)


def test_salib_agrees_on_an_orifice_case():
    """One orifice: temperature, velocity, diameter uncertain; heat power from ventflux's enthalpy route."""
    from ventflux.orifice import orifice_discharge
    from ventflux.units import Q_

    def power(T, v, d):
        r = orifice_discharge(Q_(T, "degC"), Q_(v, "m/s"), diameter=Q_(d, "cm"), pressure=Q_(25, "MPa"),
                              ambient_temperature=Q_(2.0, "degC"))
        return r.heat_power.to("MW").magnitude

    problem = {"num_vars": 3, "names": ["T", "v", "d"], "bounds": [[300.0, 360.0], [0.8, 2.0], [6.0, 12.0]]}
    ref = _salib_sobol(lambda X: power(X[:, 0], X[:, 1], X[:, 2]), problem, 1024, 9)
    rng = np.random.default_rng(23)
    n = 5000
    def draw(n):
        return {"T": rng.uniform(300, 360, n), "v": rng.uniform(0.8, 2.0, n), "d": rng.uniform(6, 12, n)}

    X = draw(n)
    g = given_data_indices(X, power(X["T"], X["v"], X["d"]), seed=5)["output"]
    assert np.all(np.abs(g.first - ref["S1"]) < 2 * np.hypot(g.first_error, ref["S1_conf"] / 1.96) + 0.01)
    p = pick_freeze(lambda d: power(d["T"], d["v"], d["d"]), draw(2000), draw(2000), seed=6)["output"]
    assert np.all(np.abs(p.first - ref["S1"]) < 2 * np.hypot(p.first_error, ref["S1_conf"] / 1.96) + 0.01)
    assert np.all(np.abs(p.total - ref["ST"]) < 2 * np.hypot(p.total_error, ref["ST_conf"] / 1.96) + 0.01)
    assert p.top(1) == g.top(1) == ["d"]


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(-3, 3), min_size=2, max_size=60), st.booleans())
def test_the_sort_order_is_a_stable_sorts_with_or_without_ties(values, spread):
    # The bins must not depend on the sorting algorithm: without ties every sort gives one order; with ties
    # the stable sort's order is used (numpy's stable argsort is the reference).
    from ventflux.sensitivity import _sort_order

    x = np.asarray(values, float) + (np.arange(len(values)) * 1e-3 if spread else 0.0)
    np.testing.assert_array_equal(_sort_order(x), np.argsort(x, kind="stable"))


def test_weights_as_bytes_give_the_indices_of_weights_in_single_precision(monkeypatch):
    # The bootstrap weights are gathered as bytes and widened per bin; the same weights in single precision
    # throughout give the same indices bit for bit (whole numbers below 256 are exact in both).
    import ventflux.sensitivity as sens

    rng = np.random.default_rng(5)
    X = {f"x{i}": rng.normal(size=3000) for i in range(4)}
    X["tied"] = rng.integers(0, 4, 3000).astype(float)
    Y = {"y": X["x0"] + X["x1"] ** 2 + X["tied"], "z": np.exp(X["x2"])}
    as_bytes = sens.given_data_indices(X, Y, seed=9)
    sens._kept.clear()
    monkeypatch.setattr(sens, "_weights_bytes", lambda n, b, s: np.ascontiguousarray(sens._weights(n, b, s).T,
                                                                                       np.float32))
    single = sens.given_data_indices(X, Y, seed=9)
    for o in Y:
        for f in ("first", "first_error", "total", "total_error"):
            np.testing.assert_array_equal(getattr(as_bytes[o], f), getattr(single[o], f))
