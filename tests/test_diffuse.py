"""Diffuse-flow heat balance: checks against TEOS-10 as implemented independently, geometry and statistics."""

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws import SeaWater

from ventflux.cli import main
from ventflux.diffuse import (
    diffuse_discharge,
    diffuse_discharge_uncertain,
    polygon_area,
    read_area_classes,
    read_patch_table,
    scale_up_by_area_class,
    temperature_difference,
)
from ventflux.errors import InputError, InputErrors
from ventflux.uncertainty import parse_uncertain
from ventflux.units import Q_

SP = 35.0  # practical salinity
SA = 35.16504e-3  # kg/kg: TEOS-10 reference salinity of SP = 35 (IOC et al. 2010, eq. 2.4.1: SA = 35.16504/35 SP)
P_ABS_MPA = 22.0


def _iapws_heat(area, frac, dT, w, t_amb_c, p_mpa=P_ABS_MPA):
    """ρ·w·A·Δh from IAPWS-08 seawater (the `iapws` package), the IAPWS release TEOS-10 adopts.

    Source: IAPWS R13-08, Release on the IAPWS Formulation 2008 for the
    Thermodynamic Properties of Seawater, implemented independently of gsw by
    the `iapws` package; P is absolute pressure in MPa, h in kJ/kg.
    """
    amb = SeaWater(T=273.15 + t_amb_c, P=p_mpa, S=SA)
    warm = SeaWater(T=273.15 + t_amb_c + dT, P=p_mpa, S=SA)
    return warm.rho * w * area * frac * (warm.h - amb.h) * 1e3


def test_heat_power_matches_iapws08_seawater():
    # Source: IAPWS R13-08 via the `iapws` package (independent implementation of the TEOS-10 Gibbs function).
    r = diffuse_discharge(Q_([12.0, 250.0], "m^2"), np.array([0.4, 0.05]), Q_([3.2, 18.0], "K"),
                          Q_([0.8, 0.3], "cm/s"), Q_(2.1, "degC"), SP, Q_(P_ABS_MPA, "MPa"))
    want = [_iapws_heat(12.0, 0.4, 3.2, 0.008, 2.1), _iapws_heat(250.0, 0.05, 18.0, 0.003, 2.1)]
    np.testing.assert_allclose(r.heat_power.to("W").magnitude, want, rtol=1e-5)
    np.testing.assert_allclose(r.volume_flux.to("m^3/s").magnitude, [12 * 0.4 * 0.008, 250 * 0.05 * 0.003])


def test_cp_shortcut_is_reported_with_teos10_cp0():
    # One shortcut for the package: ρ·w·A·c_p0·ΔT with TEOS-10's constant c_p0 = 3991.86795711963 J/(kg K)
    # (IOC et al. 2010, eq. 3.3.3), the same as the orifice estimate's (this replaces a shortcut with c_p at
    # ambient, which made `diffuse` and `orifice` disagree). Density from IAPWS R13-08 (`iapws` package).
    r = diffuse_discharge(Q_([10.0], "m^2"), np.array([1.0]), Q_([25.0], "K"), Q_([1.0], "cm/s"),
                          Q_(2.0, "degC"), SP, Q_(5.0, "MPa"))
    assert not r.beyond_teos10.any()
    assert list(r.heat_model) == ["TEOS-10"]
    warm = SeaWater(T=300.15, P=5.0, S=SA)
    want = warm.rho * 0.01 * 10 * 3991.86795711963 * 25.0
    np.testing.assert_allclose(r.heat_power_cp_shortcut.to("W").magnitude, [want], rtol=1e-5)
    np.testing.assert_allclose(r.heat_power.to("W").magnitude, [_iapws_heat(10, 1, 25.0, 0.01, 2.0, 5.0)], rtol=1e-5)
    # mean seawater heat capacity between 2 and 27 degC at 5 MPa, (h1 − h0)/ΔT from IAPWS R13-08, is within
    # 1 % of c_p0 (it is about 3990 J/(kg K))
    ratio = r.heat_power_cp_shortcut.magnitude[0] / r.heat_power.magnitude[0]
    amb = SeaWater(T=275.15, P=5.0, S=SA)
    assert ratio == pytest.approx(3991.86795711963 * 25.0 / ((warm.h - amb.h) * 1e3), rel=1e-5)


def test_warm_fluid_above_40_degc_stays_seawater():
    # 2 -> 62 degC at 22 MPa is above TEOS-10's 40 degC but inside IAPWS-08's saline part (to 80 degC):
    # seawater at both ends, checked against IAPWS R13-08 as implemented by the `iapws` package (this replaces
    # a check that dropped the salinity and used pure water beyond TEOS-10: that was the ~2 % jump).
    r = diffuse_discharge(Q_([10.0], "m^2"), 1.0, Q_([60.0], "K"), Q_([1.0], "cm/s"), Q_(2.0, "degC"), SP,
                          Q_(P_ABS_MPA, "MPa"))
    assert r.beyond_teos10.all()
    assert list(r.heat_model) == ["IAPWS-95 water + IAPWS-08 saline part"]
    np.testing.assert_allclose(r.heat_power.to("W").magnitude, [_iapws_heat(10, 1, 60.0, 0.01, 2.0)], rtol=1e-5)


def test_anomaly_in_degc_is_a_difference():
    # pint convention: degC is an offset unit; an anomaly of 2.5 degC means 2.5 K (definition of the Celsius scale).
    assert temperature_difference(Q_(2.5, "degC")).magnitude == pytest.approx(2.5)
    a = diffuse_discharge(Q_([5.0], "m^2"), 0.5, Q_([2.5], "degC"), Q_([1.0], "cm/s"), Q_(2, "degC"), SP, Q_(20, "MPa"))
    b = diffuse_discharge(Q_([5.0], "m^2"), 0.5, Q_([2.5], "K"), Q_([1.0], "cm/s"), Q_(2, "degC"), SP, Q_(20, "MPa"))
    np.testing.assert_allclose(a.heat_power.magnitude, b.heat_power.magnitude)


def test_polygon_area_shoelace():
    # Geometry: a 4 m × 3 m rectangle has 12 m²; the right triangle (0,0),(6,0),(0,5) has 15 m².
    assert polygon_area(Q_([0, 4, 4, 0], "m"), Q_([0, 0, 3, 3], "m")).magnitude == pytest.approx(12.0)
    assert polygon_area(Q_([0, 0, 600], "cm"), Q_([0, 5, 0], "m")).magnitude == pytest.approx(15.0)
    with pytest.raises(InputError):
        polygon_area(Q_([0, 1], "m"), Q_([0, 1], "m"))


def test_bad_inputs_each_reported():
    with pytest.raises(InputErrors) as e:
        diffuse_discharge(Q_([-1.0], "m^2"), np.array([1.5]), Q_([0.0], "K"), Q_([-0.1], "cm/s"),
                          Q_(2, "degC"), SP, Q_(20, "MPa"))
    fields = [err.field for err in e.value.errors]
    assert fields == ["area", "active fraction", "temperature anomaly", "velocity"]


def test_boiling_diffuse_fluid_is_refused():
    # Saturation temperature of water at 1 MPa is 179.9 degC (IAPWS R6-95; steam tables): 250 K above 2 degC boils.
    with pytest.raises(InputError, match="saturation temperature"):
        diffuse_discharge(Q_([1.0], "m^2"), 1.0, Q_([250.0], "K"), Q_([1.0], "cm/s"), Q_(2, "degC"), SP, Q_(1, "MPa"))


@settings(max_examples=30, deadline=None)
@given(st.floats(0.1, 30.0), st.floats(0.1, 30.0))
def test_heat_power_increases_with_anomaly(d1, d2):
    # Invariant: enthalpy increases with temperature at fixed pressure (positive heat capacity).
    lo, hi = sorted((d1, d2))
    r = diffuse_discharge(Q_([1.0, 1.0], "m^2"), 1.0, Q_([lo, hi], "K"), Q_(1.0, "cm/s"), Q_(2, "degC"), SP,
                          Q_(20, "MPa"))
    assert r.heat_power.magnitude[0] <= r.heat_power.magnitude[1]


@settings(max_examples=20, deadline=None)
@given(st.floats(0.01, 1000.0), st.floats(0.0, 1.0), st.floats(0.05, 20.0), st.floats(1e-4, 0.1))
def test_unit_invariance(area, frac, dT, w):
    # Invariant: the same physical inputs in other units give the same answer.
    a = diffuse_discharge(Q_([area], "m^2"), frac, Q_([dT], "K"), Q_([w], "m/s"), Q_(2.0, "degC"), SP, Q_(20, "MPa"))
    b = diffuse_discharge(Q_([area * 1e4], "cm^2"), frac, Q_([dT * 1.8], "delta_degF"), Q_([w * 100], "cm/s"),
                          Q_(275.15, "K"), SP, Q_(2000, "dbar"))
    np.testing.assert_allclose(a.heat_power.to("W").magnitude, b.heat_power.to("W").magnitude, rtol=1e-9)


def test_draw_axis_broadcasts_and_matches_one_by_one():
    area = Q_(np.array([10.0, 20.0]), "m^2")
    w = Q_(np.array([[0.5, 1.0, 1.5], [0.2, 0.4, 0.6]]), "cm/s")
    r = diffuse_discharge(area, np.array([0.3, 0.6]), Q_(np.array([3.0, 4.0]), "K"), w, Q_(2, "degC"), SP,
                          Q_(20, "MPa"))
    assert r.heat_power.shape == (2, 3)
    one = diffuse_discharge(Q_([20.0], "m^2"), 0.6, Q_([4.0], "K"), Q_([0.4], "cm/s"), Q_(2, "degC"), SP,
                            Q_(20, "MPa"))
    assert r.heat_power.magnitude[1, 1] == pytest.approx(one.heat_power.magnitude[0])


def test_monte_carlo_spread_follows_velocity_spread():
    # Linear propagation (first-order): H ∝ w, so sd(H)/H = sd(w)/w for a normal w with small spread.
    nom, dr = diffuse_discharge_uncertain(Q_([10.0, 30.0], "m^2"), np.array([0.5, 0.2]), Q_([3.0, 5.0], "K"),
                                          parse_uncertain("1.0 ± 0.05 cm/s", "velocity", "v"), Q_(2, "degC"), SP,
                                          Q_(20, "MPa"), draws=4000, seed=1)
    tot = dr.total_heat_power.magnitude
    assert tot.std() / nom.total_heat_power.magnitude == pytest.approx(0.05, rel=0.08)
    assert tot.mean() == pytest.approx(nom.total_heat_power.magnitude, rel=0.01)


def test_scale_up_ratio_and_bootstrap_standard_error():
    # Ratio estimator ΣH/ΣA × mapped area; with equal patch areas the bootstrap standard error of the ratio is
    # the bootstrap SE of a mean, sqrt((n-1)/n)·s/sqrt(n) (Efron & Tibshirani 1993, eq. 5.11 and ch. 6).
    rng = np.random.default_rng(3)
    q = rng.uniform(50, 150, 12)  # W/m² of each patch
    area = Q_(np.full(12, 2.0), "m^2")
    H = Q_(np.repeat((q * 2.0)[:, None], 4000, axis=1), "W")
    V = Q_(np.repeat((q * 1e-5)[:, None], 4000, axis=1), "m^3/s")
    su = scale_up_by_area_class(["mat"] * 12, area, H, V, ["mat"], Q_(np.full((1, 4000), 500.0), "m^2"), seed=5)
    flux = su.heat_flux_density.magnitude[0]
    assert flux.mean() == pytest.approx(q.mean(), rel=0.01)
    se = np.sqrt(11 / 12) * q.std(ddof=1) / np.sqrt(12)
    assert flux.std() == pytest.approx(se, rel=0.08)
    assert su.heat_power.magnitude[0].mean() == pytest.approx(500.0 * q.mean(), rel=0.01)
    # without draws: plain ratio
    nd = scale_up_by_area_class(["mat", "crack"], Q_([2.0, 4.0], "m^2"), Q_([100.0, 40.0], "W"),
                                Q_([1e-4, 2e-4], "m^3/s"), ["mat", "crack"], Q_([10.0, 100.0], "m^2"))
    np.testing.assert_allclose(nd.heat_power.magnitude, [500.0, 1000.0])
    np.testing.assert_allclose(nd.volume_flux.magnitude, [5e-4, 5e-3])


def test_scale_up_refuses_unsampled_class():
    with pytest.raises(InputError, match="at least one sampled patch"):
        scale_up_by_area_class(["mat"], Q_([2.0], "m^2"), Q_([1.0], "W"), Q_([1.0], "m^3/s"), ["mat", "sediment"],
                               Q_([10.0, 10.0], "m^2"))


def test_scale_up_refuses_patches_of_unmapped_or_repeated_classes():
    """A patch whose class is not mapped would drop out of the total; a class listed twice would count twice."""
    with pytest.raises(InputError, match="patch class: 'crust'"):
        scale_up_by_area_class(["mat", "crust"], Q_([2.0, 1.0], "m^2"), Q_([1.0, 1.0], "W"), Q_([1.0, 1.0], "m^3/s"),
                               ["mat"], Q_([10.0], "m^2"))
    with pytest.raises(InputError, match="each mapped class listed once"):
        scale_up_by_area_class(["mat"], Q_([2.0], "m^2"), Q_([1.0], "W"), Q_([1.0], "m^3/s"), ["mat", "mat"],
                               Q_([10.0, 10.0], "m^2"))


def _write(path, text):
    path.write_text(text)
    return str(path)


def test_patch_table_reports_bad_rows_by_line(tmp_path):
    p = _write(tmp_path / "p.csv", "patch,class,area [m^2],active_fraction,temperature_anomaly [K]\n"
                                   "A,mat,4,0.5,2\nB,mat,-1,0.5,2\nC,mat,3,1.2,0\n")
    with pytest.raises(InputErrors) as e:
        read_patch_table(p)
    lines = e.value.lines()
    assert any(":3: area" in s for s in lines) and any(":4: active_fraction" in s for s in lines)
    assert any(":4: temperature_anomaly" in s for s in lines)


def test_a_row_whose_spread_leaves_no_distribution_is_refused_by_the_table_check(tmp_path):
    # An area of 2.2e-308 m² ± 1.5 m² (a typo): the lognormal with that mean and sd has a median below the
    # smallest float. The table check refuses it with its line, as the propagation would (found by the survey
    # fuzz: the run raised OverflowError after --check had passed).
    p = _write(tmp_path / "p.csv", "patch,class,area [m^2],area_sd [m^2],active_fraction,temperature_anomaly [K]\n"
                                   "A,mat,4,0.5,0.5,2\nB,mat,2.22507e-308,1.5,0.5,2\n")
    with pytest.raises(InputError) as e:
        read_patch_table(p)
    assert e.value.where.endswith(":3") and e.value.field == "area_sd" and e.value.value == "1.5"
    assert "no median > 0" in e.value.allowed
    classes = _write(tmp_path / "c.csv", "class,area [m^2],area_sd [m^2]\nmat,400,40\nbasalt,1e-300,5\n")
    with pytest.raises(InputError) as e:
        read_area_classes(classes)  # the mapped areas are drawn the same way
    assert e.value.where.endswith(":3") and e.value.field == "area_sd"


def test_cli_table_polygons_and_scale_up(tmp_path, capsys):
    patches = _write(tmp_path / "patches.csv",
                     "patch,class,active_fraction,temperature_anomaly [degC],temperature_anomaly_sd [K]\n"
                     "P1,mat,0.5,3.0,0.3\nP2,mat,0.3,5.0,0.5\nP3,basalt,0.1,1.5,0.2\n")
    polys = _write(tmp_path / "poly.csv", "patch,x [m],y [m]\nP1,0,0\nP1,2,0\nP1,2,2\nP2,0,0\nP2,3,0\nP2,0,2\n"
                                          "P3,0,0\nP3,10,0\nP3,10,1\nP3,0,1\n")
    classes = _write(tmp_path / "classes.csv", "class,area [m^2],area_sd [m^2]\nmat,400,40\nbasalt,2000,300\n")
    rc = main(["diffuse", "--patches", patches, "--polygons", polys, "--classes", classes, "--velocity",
               "0.5 ± 0.1 cm/s", "--ambient-temperature", "2.0 degC", "--depth", "2000 m", "--draws", "500",
               "--json"])
    assert rc == 0
    out = json.loads(capsys.readouterr().out)
    # triangle 2 m² × 0.5, triangle 3 m² × 0.3, 10 m² × 0.1
    assert [p["effective_area_m2"] for p in out["patches"]] == pytest.approx([1.0, 0.9, 1.0])
    su = out["scale_up"]
    assert [c["class"] for c in su["classes"]] == ["mat", "basalt"]
    assert su["heat_power_W_p05"] < su["heat_power_W_median"] < su["heat_power_W_p95"]
    # anomalies of a few kelvin above 2 degC at 2000 m: in-situ seawater cp is 3927-3932 J/(kg K) there
    # (IAPWS R13-08, `iapws` package), so the c_p0 = 3991.87 shortcut reads 1.5-1.7 % high
    ratio = out["heat_power_constant_cp_W"] / out["heat_power_W"]
    assert 1.012 < ratio < 1.02


@pytest.mark.parametrize("args, field", [
    (["--area", "-3 m^2", "--active-fraction", "0.5", "--anomaly", "2 K", "--velocity", "1 cm/s"], "area"),
    (["--area", "3 m^2", "--active-fraction", "1.5", "--anomaly", "2 K", "--velocity", "1 cm/s"], "active fraction"),
    (["--area", "3 m^2", "--active-fraction", "0.5", "--anomaly", "-2 K", "--velocity", "1 cm/s"],
     ("temperature anomaly", "--anomaly")),
    (["--area", "3 m^2", "--active-fraction", "0.5", "--anomaly", "2 K", "--velocity", "0 cm/s"], "velocity"),
])
def test_cli_bad_input_one_line_exit_2(capsys, args, field):
    rc = main(["diffuse", *args, "--ambient-temperature", "2 degC", "--depth", "2000 m", "--draws", "100"])
    assert rc == 2
    err = capsys.readouterr().err.strip().splitlines()
    # named by the option as typed (parse-level plausibility limits) or by the library's field name
    names = field if isinstance(field, tuple) else (field, "--" + field.replace(" ", "-"))
    named = any(f"error: {n}:" in err[0] for n in names)
    assert len(err) == 1 and named and "Traceback" not in err[0]


@pytest.mark.parametrize("extra, field", [
    (["--depth", "2000 m", "--latitude", "200"], "--latitude"),
    (["--depth", "2000 m", "--source-option", "depth=2000 m"], "--source-input/--source-option"),
])
def test_cli_bad_site_or_orphan_source_options(capsys, extra, field):
    rc = main(["diffuse", "--area", "3 m^2", "--active-fraction", "0.5", "--anomaly", "2 K", "--velocity", "1 cm/s",
               "--ambient-temperature", "2 degC", "--draws", "100", *extra])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and f"error: {field}:" in err[0]


def test_cli_patch_velocities_with_sd_and_bad_rows(tmp_path, capsys):
    p = _write(tmp_path / "pv.csv", "patch,class,area [m^2],active_fraction,temperature_anomaly [K],"
                                    "velocity [cm/s],velocity_sd [cm/s]\n"
                                    "A,mat,4,0.5,2,0.4,0.1\nB,mat,6,0.2,3,0.9,0.2\n")
    rc = main(["diffuse", "--patches", p, "--ambient-temperature", "2 degC", "--absolute-pressure", "20 MPa",
               "--draws", "400",
               "--json"])
    assert rc == 0
    out = json.loads(capsys.readouterr().out)
    # volume flux = Σ w·f·A (definition): 0.004·0.5·4 + 0.009·0.2·6 m³/s
    assert out["volume_flux_m3_s"] == pytest.approx(0.004 * 2 + 0.009 * 1.2)
    assert out["velocity"] == "per patch" and out["volume_flux_m3_s_sd"] > 0
    bad = _write(tmp_path / "pb.csv", "patch,area [m^2],active_fraction,temperature_anomaly [K],velocity [cm/s]\n"
                                      "A,4,0.5,2,0.4\nB,6,0.2,3,-0.1\n")
    rc = main(["diffuse", "--patches", bad, "--ambient-temperature", "2 degC", "--absolute-pressure", "20 MPa"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and "pb.csv:3: velocity" in err[0]
