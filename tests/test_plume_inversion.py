"""Both directions of the plume-rise estimator, closed form and integral, with Monte Carlo."""

import gsw
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.errors import InputError
from ventflux.plume import closed_form
from ventflux.plume.inversion import CurrentProfile, heat_power_from_rise_height, rise_height_from_heat_power
from ventflux.profiles import constant_stratification
from ventflux.properties.seawater import CP0
from ventflux.uncertainty import normal, uniform
from ventflux.units import Q_

SITE = dict(ambient_temperature=Q_(2.0, "degC"), ambient_salinity=34.6, pressure=Q_(25, "MPa"))
N = Q_(1.0e-3, "1/s")


def test_cp0_is_teos10s_value():
    # IOC, SCOR & IAPSO (2010), eq. (3.3.3): c_p0 = 3991.867 957 119 63 J/(kg K).
    assert CP0 == pytest.approx(3991.86795711963, rel=1e-14)


def test_closed_form_heat_power_follows_rho_cp0_f_over_g_alpha():
    # H = ρ c_p0 F / (g α_Θ) with TEOS-10 properties at the vent (IOC et al. 2010), and
    # F from z_max = 5.0 (F/π)^(1/4) N^(-3/4) (Morton, Taylor & Turner 1956; Briggs 1969).
    res = heat_power_from_rise_height(Q_(250, "m"), N, method="closed-form", **SITE)
    p = 25e6 / 1e4 - 10.1325
    SA = gsw.SR_from_SP(34.6)
    CT = gsw.CT_from_t(SA, 2.0, p)
    rho, alpha = gsw.rho(SA, CT, p), gsw.alpha(SA, CT, p)
    F = np.pi * (250 / 5.0) ** 4 * (1e-3) ** 3
    H = rho * 3991.86795711963 * F / (gsw.grav(0.0, p) * alpha)
    assert res.buoyancy_flux.to("m^4/s^3").magnitude == pytest.approx(F, rel=2e-3)  # mean N of the built column
    assert res.heat_power.to("W").magnitude == pytest.approx(H, rel=3e-3)


@settings(max_examples=30, deadline=None)
@given(z=st.floats(20, 2000), n=st.floats(2e-4, 5e-3))
def test_closed_form_round_trip_and_unit_invariance(z, n):
    # The public functions take quantities: the same plume in metres or kilometres, per second or per minute.
    zq, nq = Q_(z, "m"), Q_(n, "1/s")
    F = closed_form.buoyancy_flux_point_source(zq, nq)
    assert closed_form.buoyancy_flux_point_source(zq.to("km"), nq.to("1/min")).to("m^4/s^3").magnitude == \
        pytest.approx(F.to("m^4/s^3").magnitude, rel=1e-12)
    assert closed_form.rise_height_point_source(F, nq).to("m").magnitude == pytest.approx(z, rel=1e-12)
    assert closed_form.rise_height_point_source(F, nq, "spreading").to("m").magnitude == pytest.approx(0.76 * z,
                                                                                                       rel=1e-12)
    U = Q_(0.1, "m/s")
    Fb = closed_form.buoyancy_flux_bent_over(zq, U, nq)
    assert closed_form.rise_height_bent_over(Fb, U, nq).to("m").magnitude == pytest.approx(z, rel=1e-12)
    # monotonic: a higher rise needs more flux
    assert closed_form.buoyancy_flux_point_source(1.01 * zq, nq) > F


def test_integral_round_trip_both_levels():
    fwd = rise_height_from_heat_power(Q_(80, "MW"), N, **SITE)
    for level, z in (("maximum", fwd.rise_height), ("spreading", fwd.spreading_height)):
        inv = heat_power_from_rise_height(z, N, level=level, **SITE)
        assert inv.heat_power.to("MW").magnitude == pytest.approx(80.0, rel=2e-4)


def test_rise_height_unit_invariance_and_monotonicity():
    a = heat_power_from_rise_height(Q_(250, "m"), N, **SITE).heat_power.to("W").magnitude
    b = heat_power_from_rise_height(Q_(250 / 0.3048, "ft"), Q_(60e-3, "1/min"), **SITE).heat_power.to("W").magnitude
    assert a == pytest.approx(b, rel=1e-5)
    c = heat_power_from_rise_height(Q_(260, "m"), N, **SITE).heat_power.to("W").magnitude
    assert c > a


def test_monte_carlo_is_one_ensemble_and_matches_single_solutions():
    rise = normal(Q_(250, "m"), Q_(25, "m"))
    ent = uniform(Q_(0.11), Q_(0.15))
    res = heat_power_from_rise_height(rise, normal(N, Q_(1e-4, "1/s")), entrainment=ent, draws=400, seed=7, **SITE)
    H = res.heat_power.to("W").magnitude
    assert H.shape == (400,) and res.failed == 0
    s = res.summary["heat_power"]
    assert s.p05 < s.median < s.p95 and s.draws == 400 and s.seed == 7
    # a member of the ensemble equals the same inputs solved alone
    from ventflux.uncertainty import draw_inputs

    d = draw_inputs({"rise_height": rise, "buoyancy_frequency": normal(N, Q_(1e-4, "1/s")), "entrainment": ent},
                    400, 7)
    for k in (0, 123):
        # an uncertain N acts as a factor (N/N_nominal)² on the nominal column's N² ...
        factor = float((d["buoyancy_frequency"][k] / N).to("").magnitude) ** 2
        one = heat_power_from_rise_height(d["rise_height"][k], N, stratification_scale=factor,
                                          entrainment=float(d["entrainment"][k].magnitude), **SITE)
        assert one.heat_power.to("W").magnitude == pytest.approx(H[k], rel=2e-4)
        # ... which matches a column built for that N to within α_Θ's change across the anomaly
        exact = heat_power_from_rise_height(d["rise_height"][k], d["buoyancy_frequency"][k],
                                            entrainment=float(d["entrainment"][k].magnitude), **SITE)
        assert exact.heat_power.to("W").magnitude == pytest.approx(H[k], rel=1e-2)


def test_bigger_entrainment_needs_more_heat_for_the_same_rise():
    # z_max ∝ α^(-1/2) F^(1/4) (Morton, Taylor & Turner 1956), so F ∝ α² at fixed rise.
    lo = heat_power_from_rise_height(Q_(250, "m"), N, entrainment=0.11, **SITE).heat_power.magnitude
    hi = heat_power_from_rise_height(Q_(250, "m"), N, entrainment=0.15, **SITE).heat_power.magnitude
    assert hi / lo == pytest.approx((0.15 / 0.11) ** 2, rel=0.03)


def test_current_lowers_the_rise_and_inverts_back():
    still = rise_height_from_heat_power(Q_(100, "MW"), N, **SITE)
    bent = rise_height_from_heat_power(Q_(100, "MW"), N, current=Q_(0.05, "m/s"), **SITE)
    assert bent.rise_height < still.rise_height and bent.downstream_distance.magnitude > 50
    inv = heat_power_from_rise_height(bent.rise_height, N, current=Q_(0.05, "m/s"), **SITE)
    assert inv.heat_power.to("MW").magnitude == pytest.approx(100, rel=1e-3)
    prof = CurrentProfile(depth=Q_([1000.0, 2600.0], "m"), speed=Q_([0.05, 0.05], "m/s"))
    same = rise_height_from_heat_power(Q_(100, "MW"), N, current=prof, **SITE)
    assert same.rise_height.magnitude == pytest.approx(bent.rise_height.magnitude, rel=1e-6)


def test_profile_and_scale_of_n_squared():
    prof = constant_stratification(N, Q_(2.0, "degC"), 34.6, pressure=Q_(25, "MPa"))
    a = heat_power_from_rise_height(Q_(250, "m"), prof).heat_power.magnitude
    b = heat_power_from_rise_height(Q_(250, "m"), N, **SITE).heat_power.magnitude
    assert a == pytest.approx(b, rel=1e-6)
    # doubling N² needs 2^(3/2) more flux for the same rise (closed-form scaling, MTT 1956)
    c = heat_power_from_rise_height(Q_(250, "m"), prof, stratification_scale=2.0).heat_power.magnitude
    assert c / a == pytest.approx(2 ** 1.5, rel=0.03)


@pytest.mark.parametrize("rise, allowed", [(Q_(0, "m"), "> 0 m"), (Q_(-3, "m"), "> 0 m"),
                                           (Q_(3000, "m"), "below the sea surface")])
def test_bad_rise_heights_are_refused(rise, allowed):
    with pytest.raises(InputError, match=allowed):
        heat_power_from_rise_height(rise, N, **SITE)


def test_unknown_method_and_level_are_refused():
    with pytest.raises(InputError, match="integral, closed-form"):
        heat_power_from_rise_height(Q_(250, "m"), N, method="guess", **SITE)
    with pytest.raises(InputError, match="maximum, spreading"):
        heat_power_from_rise_height(Q_(250, "m"), N, level="top", **SITE)


def test_arrays_of_rise_heights_are_solved_at_once():
    z = Q_(np.array([120.0, 250.0, 400.0]), "m")
    many = heat_power_from_rise_height(z, N, **SITE).heat_power.to("W").magnitude
    one = heat_power_from_rise_height(z[1], N, **SITE).heat_power.to("W").magnitude
    assert many.shape == (3,) and np.all(np.diff(many) > 0)
    assert many[1] == pytest.approx(one, rel=2e-4)
    with pytest.raises(InputError, match="> 0 m"):
        heat_power_from_rise_height(Q_(np.array([100.0, -1.0]), "m"), N, **SITE)
    back = rise_height_from_heat_power(Q_(many, "W"), N, **SITE).rise_height.to("m").magnitude
    assert np.allclose(back, z.magnitude, rtol=2e-4)


@settings(max_examples=8, deadline=None)
@given(h=st.floats(1e6, 1e9))
def test_integral_rise_grows_with_heat_power(h):
    res = rise_height_from_heat_power(Q_(np.array([h, 1.05 * h]), "W"), N, **SITE)
    z = res.rise_height.to("m").magnitude
    # z ∝ H^(1/4) in uniform stratification (Morton, Taylor & Turner 1956): 1.05^(1/4) ≈ 1.0123
    assert z[1] / z[0] == pytest.approx(1.05 ** 0.25, rel=2e-3)


@pytest.mark.parametrize("handover", [0.5, 8.0])
def test_rise_does_not_depend_on_where_teos10_takes_over(monkeypatch, handover):
    # The near-source stage with the vent's linear equation of state hands over to full TEOS-10
    # at a CT excess of START_ANOMALY; moving it must not matter (common practice, no source).
    from ventflux.plume import integral

    base = rise_height_from_heat_power(Q_(100, "MW"), N, **SITE).rise_height.magnitude
    monkeypatch.setattr(integral, "START_ANOMALY", handover)
    moved = rise_height_from_heat_power(Q_(100, "MW"), N, **SITE).rise_height.magnitude
    assert moved == pytest.approx(base, rel=3e-3)


def test_predrawn_arrays_give_the_same_answers_as_drawing_inside():
    # A caller sharing draws across methods passes the arrays themselves.
    from ventflux.uncertainty import draw_inputs

    inputs = {"rise_height": normal(Q_(250, "m"), Q_(25, "m")), "buoyancy_frequency": normal(N, Q_(5e-5, "1/s")),
              "entrainment": uniform(Q_(0.12), Q_(0.14)), "current": uniform(Q_(0.01, "m/s"), Q_(0.03, "m/s"))}
    inside = heat_power_from_rise_height(inputs["rise_height"], inputs["buoyancy_frequency"],
                                         entrainment=inputs["entrainment"], current=inputs["current"], draws=200,
                                         seed=11, **SITE)
    d = draw_inputs(inputs, 200, 11)
    d["rise_height"][3] = Q_(-1.0, "m")  # an impossible draw fails alone
    outside = heat_power_from_rise_height(d["rise_height"], d["buoyancy_frequency"], entrainment=d["entrainment"],
                                          current=d["current"], predrawn=True, **SITE)
    a, b = inside.heat_power.magnitude, outside.heat_power.magnitude
    keep = np.arange(200) != 3
    # the drawn N's median (not its mean) builds the column, so agreement is to first order in N's spread
    assert np.allclose(a[keep], b[keep], rtol=2e-3)
    assert np.isnan(b[3]) and outside.failed == 1 and outside.summary["heat_power"].draws == 199


def test_weak_and_strong_currents_all_converge():
    rng = np.random.default_rng(5)
    z = Q_(rng.normal(150, 15, 300), "m")
    U = Q_(rng.uniform(0.0, 0.1, 300), "m/s")
    res = heat_power_from_rise_height(z, N, current=U, predrawn=True, **SITE)
    assert res.failed == 0
    # for the same rise, a stronger current needs more heat (bent-over plumes rise less; Briggs 1975)
    H = res.heat_power.magnitude
    order = np.argsort(U.magnitude)
    ratio = H / z.magnitude ** 3
    assert np.corrcoef(U.magnitude[order], ratio[order])[0, 1] > 0.5
