"""Advective flux from temperature-depth profiles: synthetic profiles from the Bredehoeft & Papadopulos solution."""

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws import SeaWater

from ventflux.cli import main
from ventflux.diffuse import velocity_from_source
from ventflux.errors import InputError
from ventflux.units import Q_
from ventflux_thermal.advection import fit_advection, pore_fluid_heat_capacity


def bp_profile(pe_up, z, L, T0, TL):
    """Bredehoeft & Papadopulos (1965), eq. (6): (T − T0)/(TL − T0) = (exp(β z/L) − 1)/(exp(β) − 1), with z
    positive down and β = c ρ v_z L / k for v_z positive down; an upflow of Péclet number Pe is β = −Pe."""
    beta = -pe_up
    if abs(beta) < 1e-12:
        return T0 + (TL - T0) * z / L
    return T0 + (TL - T0) * np.expm1(beta * z / L) / np.expm1(beta)  # expm1(x) = exp(x) − 1, accurate near 0


RHO_C = 4.0e6  # J/(m^3 K), given explicitly so the velocity check does not depend on an equation of state


@pytest.mark.parametrize("pe", [-6.0, -2.0, 1.0, 3.0, 8.0])
def test_peclet_recovered_within_5_percent(pe):
    # Source: synthetic profiles from Bredehoeft & Papadopulos (1965), 20 mK noise on a 15 K range.
    rng = np.random.default_rng(int(10 * pe) + 100)
    z = np.linspace(0.2, 6.0, 25)
    T = bp_profile(pe, z, 6.0, 2.0, 17.0) + rng.normal(0, 0.02, z.size)
    fit = fit_advection(Q_(z, "m"), Q_(T, "degC"), Q_(1.0, "W/(m*K)"), fluid_heat_capacity=Q_(RHO_C, "J/(m^3*K)"))
    assert fit.peclet == pytest.approx(pe, rel=0.05)
    assert fit.direction == ("upflow" if pe > 0 else "downflow")
    # the velocity that made the profile, w = Pe·k/(ρc·L) (definition of the Péclet number, Bredehoeft &
    # Papadopulos 1965), in m/yr with a Julian year of 3.15576e7 s
    w_true = pe * 1.0 / (RHO_C * 6.0)
    assert fit.darcy_velocity == pytest.approx(w_true, rel=0.05)
    assert fit.discharge_m_per_yr == pytest.approx(w_true * 3.15576e7, rel=0.05)
    assert abs(fit.peclet - pe) < 4 * fit.peclet_se + 0.02 * abs(pe)


def test_zero_peclet_is_the_linear_conductive_profile():
    # Source: Bredehoeft & Papadopulos (1965): β → 0 gives T linear in z (pure conduction), heat flux k·ΔT/L.
    z = np.linspace(0.0, 5.0, 20)
    T = 2.0 + 3.0 * z  # exact line, no noise
    fit = fit_advection(Q_(z, "m"), Q_(T, "degC"), Q_(0.9, "W/(m*K)"), fluid_heat_capacity=Q_(RHO_C, "J/(m^3*K)"))
    assert abs(fit.peclet) < 1e-4
    assert fit.conductive_heat_flux == pytest.approx(0.9 * 3.0, rel=1e-4)
    assert fit.misfit_rms < 1e-6
    assert "not resolved" in fit.direction or abs(fit.darcy_velocity) < 1e-12


@settings(max_examples=15, deadline=None)
@given(st.floats(-10.0, 10.0))
def test_curvature_sign_gives_flow_direction(pe):
    # Invariant: an upflow bows the profile above the straight line joining its ends (Bredehoeft & Papadopulos
    # 1965, fig. 2); the fitted Pe has the profile's sign.
    z = np.linspace(0.0, 4.0, 15)
    T = bp_profile(pe, z, 4.0, 2.0, 12.0)
    fit = fit_advection(Q_(z, "m"), Q_(T, "degC"), Q_(1.0, "W/(m*K)"), fluid_heat_capacity=Q_(RHO_C, "J/(m^3*K)"))
    assert fit.peclet == pytest.approx(pe, abs=1e-3)


def test_pore_fluid_heat_capacity_is_teos10():
    # Source: IAPWS R13-08 seawater via the `iapws` package: ρ·cp at 10 degC, SP 34.7, 22 MPa absolute.
    sw = SeaWater(T=283.15, P=22.0, S=34.7 * 35.16504 / 35 * 1e-3)
    assert pore_fluid_heat_capacity(Q_(10.0, "degC"), Q_(22.0, "MPa")) == pytest.approx(sw.rho * sw.cp * 1e3,
                                                                                        rel=1e-5)


def _write_profile(path, pe, noise=0.005, seed=1):
    z = np.linspace(0.3, 5.0, 20)
    T = bp_profile(pe, z, 5.0, 2.5, 14.0) + np.random.default_rng(seed).normal(0, noise, z.size)
    path.write_text("depth [m],temperature [degC]\n" + "\n".join(f"{a:.3f},{b:.5f}" for a, b in zip(z, T)) + "\n")
    return str(path)


def test_cli_json_and_velocity_source(tmp_path, capsys):
    p = _write_profile(tmp_path / "core.csv", 2.5)
    rc = main(["profile-advection", p, "--conductivity", "1.0 ± 0.1 W/(m K)", "--depth", "2200 m", "--json"])
    assert rc == 0
    d = json.loads(capsys.readouterr().out)
    assert d["peclet"] == pytest.approx(2.5, rel=0.05)
    assert d["direction"] == "upflow" and d["discharge_m_yr"] > 0
    # the 10 % conductivity uncertainty dominates the velocity's (w ∝ k)
    assert d["discharge_se_m_yr"] / d["discharge_m_yr"] == pytest.approx(0.1, rel=0.15)
    # registered as a velocity source feeding the diffuse estimator
    w = velocity_from_source("profile-advection", p, conductivity="1.0 ± 0.1 W/(m K)", depth="2200 m")
    assert w.nominal.to("m/yr").magnitude == pytest.approx(d["discharge_m_yr"], rel=1e-6)
    rc = main(["diffuse", "--area", "20 m^2", "--active-fraction", "1", "--anomaly", "1.5 K",
               "--velocity-source", "profile-advection", "--source-input", p,
               "--source-option", "conductivity=1.0 ± 0.1 W/(m K)", "--source-option", "depth=2200 m",
               "--ambient-temperature", "2.5 degC", "--depth", "2200 m", "--draws", "300", "--json"])
    assert rc == 0
    assert json.loads(capsys.readouterr().out)["volume_flux_m3_s"] == pytest.approx(
        20 * d["darcy_velocity_m_s"], rel=1e-6)


def _one_line_error(capsys, argv):
    """Run the command line; it must fail with exit 2 and one line on stderr, which is returned."""
    rc = main(argv)
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and "Traceback" not in err[0], err
    return err[0]


def test_downflow_refused_by_diffuse_estimator(tmp_path, capsys):
    p = _write_profile(tmp_path / "down.csv", -3.0)
    err = _one_line_error(capsys, ["diffuse", "--area", "20 m^2", "--active-fraction", "1", "--anomaly", "1.5 K",
                                   "--velocity-source", "profile-advection", "--source-input", p, "--source-option",
                                   "depth=2200 m", "--ambient-temperature", "2.5 degC", "--depth", "2200 m",
                                   "--draws", "100"])
    assert "velocity" in err


def test_bad_profiles(tmp_path, capsys):
    p = tmp_path / "bad.csv"
    p.write_text("depth [m],temperature [degC]\n0.5,2.0\n1.0,2.5\n0.8,3.0\n1.5,3.4\n2.0,3.9\n")
    err = _one_line_error(capsys, ["profile-advection", str(p), "--depth", "2000 m"])
    assert "bad.csv:4" in err
    with pytest.raises(InputError, match="at least 4 distinct depths"):
        fit_advection(Q_([0.1, 0.2, 0.3], "m"), Q_([2, 3, 4], "degC"), Q_(1, "W/(m*K)"),
                      fluid_heat_capacity=Q_(RHO_C, "J/(m^3*K)"))


def test_unknown_source_option_is_one_line(tmp_path, capsys):
    p = _write_profile(tmp_path / "core.csv", 1.0)
    err = _one_line_error(capsys, ["diffuse", "--area", "20 m^2", "--active-fraction", "1", "--anomaly", "1.5 K",
                                   "--velocity-source", "profile-advection", "--source-input", p, "--source-option",
                                   "colour=red", "--ambient-temperature", "2.5 degC", "--depth", "2200 m"])
    assert "conductivity" in err and "colour" in err


def test_flat_profile_and_non_positive_heat_capacity_refused(tmp_path, capsys):
    p = tmp_path / "flat.csv"
    p.write_text("depth [m],temperature [degC]\n0,2\n1,2\n2,2\n3,2\n")
    err = _one_line_error(capsys, ["profile-advection", str(p), "--depth", "2000 m"])
    assert "changes with depth" in err
    core = _write_profile(tmp_path / "core.csv", 1.0)
    err = _one_line_error(capsys, ["profile-advection", core, "--fluid-heat-capacity", "-4e6 J/(m^3 K)"])
    assert "fluid heat capacity" in err


def _false_detection_rate(n_profiles, n_points, seed):
    # No-flow profiles: the conductive straight line T = T0 + Γz (Bredehoeft & Papadopulos 1965 at Pe = 0)
    # plus 10 mK white noise; the fraction labelled up- or downflow.
    rng = np.random.default_rng(seed)
    z = Q_(np.linspace(0.3, 3.0, n_points), "m")
    called = 0
    for _ in range(n_profiles):
        T = Q_(2.0 + 0.25 * z.magnitude + rng.normal(0.0, 0.01, n_points), "degC")
        fit = fit_advection(z, T, Q_(1.0, "W/(m*K)"), fluid_heat_capacity=Q_(4.0e6, "J/(m^3*K)"))
        called += fit.direction in ("upflow", "downflow")
    return called / n_profiles


def test_no_flow_false_detection_rate_is_the_stated_level():
    # Nominal level 5 % (DETECTION_LEVEL). With 800 simulated 8-point profiles the binomial standard error is
    # 0.77 %; the band 2.5–7.5 % (3.2 standard errors) excludes the ~10 % of a 2-standard-error rule.
    rate = _false_detection_rate(800, 8, seed=2026)
    assert 0.025 <= rate <= 0.075, rate


@pytest.mark.slow
@pytest.mark.parametrize("n_points", [5, 8, 20])
def test_no_flow_false_detection_rate_many_profiles(n_points):
    rate = _false_detection_rate(4000, n_points, seed=n_points)
    assert 0.05 - 0.011 <= rate <= 0.05 + 0.011, rate  # ±3.2 binomial standard errors (0.34 %)


def test_warm_pore_fluid_at_a_shallow_site_is_seawater_not_refused():
    """60 °C pore water at 3 MPa lies beyond TEOS-10 (40 °C); its ρ·c_p comes from the core's warm-seawater model
    and agrees with the `iapws` package's IAPWS-08 seawater (test-only reference) within 0.1 %."""
    import gsw
    from iapws import SeaWater

    from ventflux.units import Q_
    from ventflux_thermal.advection import pore_fluid_heat_capacity

    SA = float(gsw.SR_from_SP(34.7))  # reference-composition absolute salinity, as the plugin takes it
    ref = SeaWater(T=333.15, P=3.0, S=SA / 1000)
    got = pore_fluid_heat_capacity(Q_(60, "degC"), Q_(3, "MPa"), 34.7)
    assert got == pytest.approx(ref.rho * ref.cp * 1e3, rel=1e-3)
