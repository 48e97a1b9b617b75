"""Sediment heat-flow probe reduction against synthetic records from analytic solutions (1 mK noise)."""

import json
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

sys.path.insert(0, str(Path(__file__).parent))  # the synthetic-record helper beside this file
from thermal_synthetic import make_record

from ventflux.cli import main
from ventflux.errors import InputError, InputErrors
from ventflux.units import Q_
from ventflux_thermal.probe import ProbeConstants, heat_flow_regression, reduce_penetration, thermal_resistance

K_TRUE = np.array([0.85, 0.95, 1.05, 1.15, 1.0, 0.9, 1.1])  # W/(m K), within marine sediment's usual range
DEPTHS = np.linspace(0.5, 3.5, 7)  # m along the probe
Q_TRUE = 0.25  # W/m^2


@pytest.fixture(scope="module")
def cylinder_record(tmp_path_factory):
    path = tmp_path_factory.mktemp("rec") / "pen01.csv"
    teq = make_record(path, "cylinder", k=K_TRUE, depths=DEPTHS, q=Q_TRUE, tilt_deg=8.0)
    return path, teq


def test_cylinder_records_recover_conductivity_and_heat_flow(cylinder_record):
    # Source: records from the cylinder solution of Carslaw & Jaeger (1959) §13.7 by Laplace inversion
    # (tests/thermal_synthetic.py), 1 mK noise. Issue's tolerance: conductivity and heat flow within 3 %.
    path, teq = cylinder_record
    r = reduce_penetration(path, method="cylinder")
    np.testing.assert_allclose(r.conductivity, K_TRUE, rtol=0.03)
    assert r.heat_flow == pytest.approx(Q_TRUE, rel=0.03)
    np.testing.assert_allclose(r.equilibrium_temperature - 273.15, teq, atol=5e-3)
    # the misfit of a correct model is the noise: 1 mK rms
    assert all(0.7e-3 < f.misfit_rms < 1.4e-3 for f in r.friction)
    assert all(0.7e-3 < p.misfit_rms < 1.4e-3 for p in r.pulse)
    assert 0 < r.heat_flow_se < 0.01 * Q_TRUE
    assert r.heat_flow_uncertainty >= r.heat_flow_se
    assert r.depth == pytest.approx(DEPTHS * np.cos(np.deg2rad(8.0)))  # tilt correction z = s·cos θ
    # windows: frictional fit from ≥ 30 s after penetration (t = 60 s) to before the pulse (600 s); pulse fit after it
    assert all(f.window[0] >= 90.0 and f.window[1] < 600.0 for f in r.friction)
    assert all(p.window[0] > 600.0 for p in r.pulse)


def test_line_source_records_recover_conductivity_and_heat_flow(tmp_path):
    # Source: records from the instantaneous line source, Carslaw & Jaeger (1959) §10.3,
    # ΔT = Q/(4πkt)·exp(−r²/4κt) at r = 1 mm, 1 mK noise; reduced with the late-time line-source option.
    path = tmp_path / "pen02.csv"
    make_record(path, "line-source", k=K_TRUE, depths=DEPTHS, q=Q_TRUE, seed=11)
    r = reduce_penetration(path, method="line-source")
    np.testing.assert_allclose(r.conductivity, K_TRUE, rtol=0.03)
    assert r.heat_flow == pytest.approx(Q_TRUE, rel=0.03)


def test_known_conductivity_without_pulse(tmp_path):
    # Same cylinder-solution records; with the conductivities given, only the frictional decay is used.
    path = tmp_path / "pen03.csv"
    make_record(path, "cylinder", k=K_TRUE, depths=DEPTHS, q=0.08, seed=3)
    r = reduce_penetration(path, DEPTHS * Q_(1, "m"), penetration_time=Q_(60, "s"), tilt=Q_(0, "deg"),
                           conductivity=Q_(K_TRUE, "W/(m*K)"))
    # header metadata says tilt 0 as well; the pulse after t = 600 s is outside the window (ends at the pulse)
    assert r.heat_flow == pytest.approx(0.08, rel=0.03)
    assert all(p is None for p in r.pulse)


def test_regression_matches_reference_least_squares():
    # Source: scipy.stats.linregress (a general-purpose OLS with slope standard error).
    R = np.array([0.4, 0.9, 1.5, 2.2, 2.6, 3.3])
    T = 2.0 + 0.1 * R + np.array([1e-3, -2e-3, 0.5e-3, 1.5e-3, -1e-3, 0.0])
    q, T0, se, resid = heat_flow_regression(R, T)
    ref = stats.linregress(R, T)
    assert q == pytest.approx(ref.slope, rel=1e-12)
    assert T0 == pytest.approx(ref.intercept, rel=1e-12)
    assert se == pytest.approx(ref.stderr, rel=1e-10)
    np.testing.assert_allclose(resid, T - (ref.intercept + ref.slope * R), atol=1e-14)


def test_thermal_resistance_sums_intervals():
    # R_i = Σ Δz_j / k_j from the seafloor: 0.5/0.5 = 1, + 1.0/1.0 = 2, + 0.5/2 = 2.25 m² K/W (arithmetic).
    np.testing.assert_allclose(thermal_resistance([0.5, 1.5, 2.0], [0.5, 1.0, 2.0]), [1.0, 2.0, 2.25])


def test_default_conductivity_is_marine_sediment():
    # Fact of the trade (common practice, no source): marine sediment conductivity is near 0.8–1.2 W/(m K).
    assert 0.8 <= ProbeConstants().start_conductivity <= 1.2


# --------------------------------------------------------------------------- bad input, through the CLI
def _edit(src, dst, fn):
    lines = src.read_text().splitlines()
    dst.write_text("\n".join(fn(lines)) + "\n")
    return str(dst)


def _one_line_error(capsys, argv):
    rc = main(argv)
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2, err
    assert len(err) == 1 and "Traceback" not in err[0]
    return err[0]


def test_missing_sensor_column(cylinder_record, tmp_path, capsys):
    src, _ = cylinder_record

    def drop_last(lines):
        return [",".join(ln.split(",")[:-1]) if not ln.startswith("#") else ln for ln in lines]

    p = _edit(src, tmp_path / "short.csv", drop_last)
    err = _one_line_error(capsys, ["probe-heat-flow", p])
    assert "short.csv:6" in err and "T7" in err  # the header is line 6, after five metadata lines


def test_non_monotonic_time_names_the_line(cylinder_record, tmp_path, capsys):
    src, _ = cylinder_record

    def swap(lines):
        lines = list(lines)
        lines[106], lines[107] = lines[107], lines[106]
        return lines

    p = _edit(src, tmp_path / "swap.csv", swap)
    err = _one_line_error(capsys, ["probe-heat-flow", p])
    assert "swap.csv:108" in err and "time" in err


def test_non_numeric_cell_names_the_line(cylinder_record, tmp_path, capsys):
    src, _ = cylinder_record

    def spoil(lines):
        lines = list(lines)
        cells = lines[299].split(",")
        cells[3] = "n/a"
        lines[299] = ",".join(cells)
        return lines

    p = _edit(src, tmp_path / "spoil.csv", spoil)
    err = _one_line_error(capsys, ["probe-heat-flow", p])
    assert "spoil.csv:300" in err and "'n/a'" in err


@pytest.mark.parametrize("option, value, field", [
    ("--penetration-time", "5000 s", "penetration time"),
    ("--pulse-time", "1500 s", "heat pulse time"),
    ("--pulse-time", "450 s", "heat pulse time"),  # inside the record, but no pulse there
])
def test_times_the_record_does_not_contain(cylinder_record, capsys, option, value, field):
    src, _ = cylinder_record
    err = _one_line_error(capsys, ["probe-heat-flow", str(src), option, value])
    assert f"{field}:" in err


@pytest.mark.parametrize("option, value, words", [
    ("--sensor-depths", "0.5,1.0 m", ("sensor depths", "7:")),  # fewer depths than the record's sensors
    ("--conductivity", "-1 W/(m K)", ("conductivity", "> 0")),
    ("--conductivity", "1,1 W/(m K)", ("conductivity", "one per sensor")),
])
def test_depths_and_conductivities_that_do_not_fit_the_record(cylinder_record, capsys, option, value, words):
    src, _ = cylinder_record
    err = _one_line_error(capsys, ["probe-heat-flow", str(src), option, value])
    assert all(w in err for w in words)


def test_output_that_cannot_be_written_is_one_line(cylinder_record, tmp_path, capsys):
    src, _ = cylinder_record
    (tmp_path / "blocker").write_text("a file where a folder is needed\n")
    err = _one_line_error(capsys, ["probe-heat-flow", str(src), "--out", str(tmp_path / "blocker" / "t.csv")])
    assert "--out" in err


# --------------------------------------------------------------------------- a cruise in one command
def test_cruise_folder_one_table_and_figures(tmp_path, capsys):
    folder = tmp_path / "cruise"
    folder.mkdir()
    qs = [0.06, 0.12, 0.3]
    for i, q in enumerate(qs):  # cylinder-solution records (Carslaw & Jaeger 1959 §13.7), 1 mK noise
        make_record(folder / f"st{i + 1:02d}.csv", "cylinder", k=K_TRUE[:5], depths=DEPTHS[:5], q=q, seed=20 + i,
                    t_end=1000.0)
    out = tmp_path / "table.csv"
    figs = tmp_path / "figs"
    rc = main(["probe-heat-flow", str(folder), "--out", str(out), "--figures", str(figs), "--json"])
    assert rc == 0
    d = json.loads(capsys.readouterr().out)
    got = [p["heat_flow_mW_m2"] for p in d["penetrations"]]
    np.testing.assert_allclose(got, [1e3 * q for q in qs], rtol=0.03)
    rows = out.read_text().splitlines()
    assert rows[0].startswith("record,method,sensors,heat_flow [mW/m^2]") and len(rows) == 4
    assert sorted(p.name for p in figs.iterdir()) == sorted(
        [f"st0{i}_{kind}.png" for i in (1, 2, 3) for kind in ("decay_fits", "temperature_resistance")])
    assert all(p.read_bytes()[:4] == b"\x89PNG" for p in figs.iterdir())


def test_library_errors_are_input_errors(cylinder_record):
    src, _ = cylinder_record
    with pytest.raises((InputError, InputErrors)):
        reduce_penetration(src, method="polynomial")


def test_unit_invariance_of_the_metadata(cylinder_record):
    # Invariant: the same depths, times and energy in other units give the same heat flow.
    src, _ = cylinder_record
    a = reduce_penetration(src)
    b = reduce_penetration(src, Q_(DEPTHS * 100, "cm"), penetration_time=Q_(1.0, "min"),
                           heat_pulse_time=Q_(10.0, "min"), heat_pulse_energy=Q_(0.7, "kJ/m"),
                           tilt=Q_(np.deg2rad(8.0), "rad"))
    assert b.heat_flow == pytest.approx(a.heat_flow, rel=1e-9)
    np.testing.assert_allclose(b.conductivity, a.conductivity, rtol=1e-9)
