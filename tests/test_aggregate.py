"""Field aggregation with shared draws, the focused/diffuse split and method combination.

Expected values are computed by hand from the laws of variance of sums and of
linear combinations (any statistics text); the code under test is not used to
make them.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.aggregate import SharedDraws, compare_methods, field_total, focused_diffuse_split, summarize_items
from ventflux.errors import InputError
from ventflux.uncertainty import lognormal, normal
from ventflux.units import Q_

ONE = Q_(1.0, "dimensionless")


def _vents(n, shared, draws):
    """n identical 10 MW vents, each scaled by a factor f ~ N(1, 0.1): one shared f, or one each."""
    f = normal(ONE, Q_(0.1, "dimensionless"))
    if shared:
        return Q_(10.0, "MW") * draws.draw("pixel scale", f)[None, :] * np.ones((n, 1))
    return Q_(10.0, "MW") * draws.draw_each([f"vent {i}/pixel scale" for i in range(n)], [f] * n)


def test_shared_input_widens_total_by_n_over_root_n():
    # By hand: total = 10 MW · Σ fᵢ. Shared f: sd = n · 10 · 0.1 = 25 MW for n = 25.
    # Independent fᵢ: sd = √n · 10 · 0.1 = 5 MW. Ratio n/√n = √n = 5.
    n = 25
    shared = field_total(_vents(n, True, SharedDraws(20_000, seed=3)))
    indep = field_total(_vents(n, False, SharedDraws(20_000, seed=3)))
    assert shared.summary.mean.magnitude == pytest.approx(250.0, rel=0.01)
    assert shared.summary.std.magnitude == pytest.approx(25.0, rel=0.03)
    assert indep.summary.std.magnitude == pytest.approx(5.0, rel=0.03)
    assert shared.summary.std / indep.summary.std == pytest.approx(5.0, rel=0.05)
    # The 90 % interval of a normal total is ±1.645 sd, so it widens by the same factor.
    width = lambda s: (s.p95 - s.p05).magnitude  # noqa: E731
    assert width(shared.summary) == pytest.approx(2 * 1.645 * 25.0, rel=0.04)
    assert width(shared.summary) / width(indep.summary) == pytest.approx(5.0, rel=0.06)
    assert shared.n_items == n


def test_same_name_same_draws_in_any_order():
    a = normal(Q_(2.0, "degC"), Q_(0.05, "K"))
    b = lognormal(Q_(1.0, "m/s"), 1.2)
    d1, d2 = SharedDraws(500, seed=9), SharedDraws(500, seed=9)
    x1, y1 = d1.draw("CTD cast", a), d1.draw("velocity", b)
    y2, x2 = d2.draw("velocity", b), d2.draw("CTD cast", a)
    assert np.array_equal(x1.magnitude, x2.magnitude) and np.array_equal(y1.magnitude, y2.magnitude)
    assert d1.draw("CTD cast", a) is x1
    assert not np.array_equal(x1.magnitude, SharedDraws(500, seed=10).draw("CTD cast", a).magnitude)
    assert d1.shared_names() == ["CTD cast", "velocity"]


def test_one_name_for_two_different_inputs_is_refused():
    d = SharedDraws(100)
    d.draw("probe calibration", normal(ONE, Q_(0.05, "dimensionless")))
    with pytest.raises(InputError, match="probe calibration"):
        d.draw("probe calibration", normal(ONE, Q_(0.10, "dimensionless")))
    with pytest.raises(InputError, match="draws"):
        SharedDraws(1)


def test_chunked_total_equals_whole_total():
    d = SharedDraws(1000, seed=5)
    f = normal(Q_(3.0, "MW"), Q_(0.5, "MW"))
    per = d.draw_each([f"v{i}" for i in range(40)], [f] * 40)
    whole = field_total(per)
    chunked = field_total(per[i:i + 7] for i in range(0, 40, 7))
    assert np.allclose(whole.draws.magnitude, chunked.draws.magnitude)
    assert chunked.n_items == 40
    rows = summarize_items(per)
    assert rows["median"].shape == (40,)


def test_split_fraction_by_hand_and_shared_factor_cancels():
    # Focused 300 MW and diffuse 100 MW, both scaled by one shared factor: the diffuse fraction
    # is 100/400 = 0.25 in every draw (the factor cancels), so its spread is zero.
    d = SharedDraws(2000, seed=1)
    s = d.draw("ambient temperature offset", normal(ONE, Q_(0.2, "dimensionless")))
    split = focused_diffuse_split(Q_(300.0, "MW") * s, Q_(100.0, "MW") * s)
    assert split.diffuse_fraction.median.magnitude == pytest.approx(0.25)
    assert split.diffuse_fraction.std.magnitude == pytest.approx(0.0, abs=1e-12)
    assert split.total.std.magnitude == pytest.approx(400 * 0.2, rel=0.05)
    assert "diffuse_fraction_median" in split.as_dict()


def _lognormal_draws(d, name, median, sigma):
    return d.draw(name, lognormal(Q_(median, "MW"), math.exp(sigma)))


def test_independent_methods_combine_by_inverse_variance_on_log_power():
    # By hand: σ1 = 0.2, σ2 = 0.4 → w1 = 25/31.25 = 0.8, w2 = 0.2; ln P = 0.8 ln 100 + 0.2 ln 120;
    # σ = 31.25^-1/2 = 0.1789. z = ln(100/120)/√(0.04 + 0.16) = −0.408 → consistent.
    d = SharedDraws(40_000, seed=2)
    cmp_ = compare_methods({"orifice": _lognormal_draws(d, "a", 100.0, 0.2),
                            "plume rise": _lognormal_draws(d, "b", 120.0, 0.4)})
    assert cmp_.weights["orifice"] == pytest.approx(0.8, abs=0.01)
    assert cmp_.combined.median.magnitude == pytest.approx(math.exp(0.8 * math.log(100) + 0.2 * math.log(120)),
                                                           rel=0.01)
    sd_log = np.log(cmp_.combined_draws.magnitude).std()
    assert sd_log == pytest.approx(31.25 ** -0.5, rel=0.02)
    assert cmp_.pairs[0].normalized_difference == pytest.approx(-0.408, abs=0.02)
    assert cmp_.consistent and cmp_.scale_factor == 1.0
    assert [r["method"] for r in cmp_.rows()] == ["orifice", "plume rise", "combined"]


def test_inconsistent_methods_are_flagged_and_widened_by_the_scale_factor():
    # By hand: medians 100 and 300 MW, σ = 0.1 each: z = ln 3/√0.02 = 7.77 → inconsistent;
    # χ² = z² for two methods, S = 7.77, combined log sd = 0.1/√2 · 7.77 = 0.549.
    d = SharedDraws(40_000, seed=4)
    cmp_ = compare_methods({"a": _lognormal_draws(d, "a", 100.0, 0.1), "b": _lognormal_draws(d, "b", 300.0, 0.1)})
    assert not cmp_.consistent and not cmp_.pairs[0].intervals_overlap
    assert abs(cmp_.pairs[0].normalized_difference) == pytest.approx(7.77, rel=0.02)
    assert cmp_.scale_factor == pytest.approx(7.77, rel=0.02)
    assert np.log(cmp_.combined_draws.magnitude).std() == pytest.approx(0.549, rel=0.03)
    assert cmp_.combined.median.magnitude == pytest.approx(math.sqrt(100 * 300), rel=0.01)


def test_shared_input_between_methods_is_not_averaged_away():
    # Both methods ∝ one shared exit-temperature factor s (σ_s = 0.2 on log) times their own (σ = 0.2):
    # var ln Pᵢ = 0.08, cov = 0.04; equal weights; by hand var = 0.04 + 0.04/2 = 0.06, sd = 0.245
    # (ignoring the shared part would claim 0.2).
    d = SharedDraws(40_000, seed=6)
    s = _lognormal_draws(d, "exit temperature", 1.0, 0.2).magnitude
    a = _lognormal_draws(d, "a", 100.0, 0.2) * s
    b = _lognormal_draws(d, "b", 100.0, 0.2) * s
    cmp_ = compare_methods({"a": a, "b": b})
    assert np.log(cmp_.combined_draws.magnitude).std() == pytest.approx(math.sqrt(0.06), rel=0.02)
    assert cmp_.weights["a"] == pytest.approx(0.5, abs=0.02)
    # the pair's difference does not contain the shared factor: sd of ln(a/b) = √0.08
    assert cmp_.pairs[0].consistent


def test_methods_with_different_draw_counts_are_refused():
    with pytest.raises(InputError, match="same number of draws"):
        compare_methods({"a": Q_(np.ones(10), "MW"), "b": Q_(np.ones(11), "MW")})
    with pytest.raises(InputError, match="positive"):
        compare_methods({"a": Q_(-np.ones(10), "MW")})
    with pytest.raises(InputError, match="without spread"):
        compare_methods({"a": Q_(np.ones(10), "MW"), "b": Q_(np.linspace(1, 2, 10), "MW")})


@settings(max_examples=30, deadline=None)
@given(st.integers(1, 20), st.floats(0.1, 1e3))
def test_adding_a_vent_raises_every_draw_of_the_total(n, extra_mw):
    d = SharedDraws(200, seed=n)
    per = d.draw_each([f"v{i}" for i in range(n)], [lognormal(Q_(5.0, "MW"), 1.5)] * n)
    before = field_total(per).draws.magnitude
    after = field_total([per, Q_(np.full((1, 200), extra_mw), "MW")]).draws.magnitude
    assert np.all(after > before)


@settings(max_examples=30, deadline=None)
@given(st.integers(1, 10), st.integers(0, 1000))
def test_total_does_not_depend_on_units(n, seed):
    d = SharedDraws(100, seed=seed)
    per = d.draw_each([f"v{i}" for i in range(n)], [normal(Q_(5.0, "MW"), Q_(1.0, "MW"))] * n)
    a = field_total(per, unit="MW").summary
    b = field_total(per.to("kW"), unit="MW").summary
    assert a.median.magnitude == pytest.approx(b.median.magnitude, rel=1e-12)


def test_field_sums_keep_several_outputs_over_chunks():
    # By hand: 5 items of 1 MW and 2 kg/s in every draw → 5 MW and 10 kg/s.
    from ventflux.aggregate import FieldSums

    s = FieldSums({"heat": "MW"})
    for k in (3, 2):
        s.add(heat=Q_(np.full((k, 50), 1000.0), "kW"), mass=Q_(np.full((k, 50), 2.0), "kg/s"))
    t = s.totals()
    assert t["heat"].summary.median.to("MW").magnitude == pytest.approx(5.0)
    assert t["mass"].summary.median.magnitude == pytest.approx(10.0) and t["mass"].n_items == 5
    with pytest.raises(InputError, match="output"):
        s.total("volume")
