"""``ventflux plume-rise``: both directions, JSON output, files, and one-line errors with exit 2."""

import json

import gsw
import numpy as np
import pytest

from ventflux.cli import main

SITE = ["--ambient-temperature", "2.0degC", "--ambient-salinity", "34.6", "--absolute-pressure", "25MPa"]


@pytest.fixture()
def cast(tmp_path):
    # Analytic water column: uniform SA, CT linear in pressure (N ≈ 1e-3 /s), recorded as a CTD would
    # (in-situ temperature from TEOS-10's t_from_CT, practical salinity from SP_from_SR).
    p = np.arange(1200.0, 2500.0, 1.0)
    CT = 1.8 + 3.0e-4 * (2500.0 - p)
    t = gsw.t_from_CT(34.8, CT, p)
    SP = gsw.SP_from_SR(34.8)
    f = tmp_path / "cast.csv"
    f.write_text("# analytic test column\npressure [dbar],temperature [degC],salinity\n"
                 + "".join(f"{a:.1f},{b:.6f},{SP:.6f}\n" for a, b in zip(p, t)))
    return f


def _run(capsys, *argv):
    code = main(["plume-rise", *argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_json_has_heat_power_and_buoyancy_flux(capsys):
    code, out, err = _run(capsys, "--rise-height", "250 m", "--buoyancy-frequency", "1.0e-3/s", *SITE,
                          "--method", "closed-form", "--json")
    assert code == 0, err
    d = json.loads(out)
    # closed form (Morton, Taylor & Turner 1956; Briggs 1969): F = π (z/5.0)^4 N^3
    F = np.pi * 50.0 ** 4 * 1e-9
    assert d["buoyancy_flux_m4_s3"] == pytest.approx(F, rel=2e-3)
    # H = ρ c_p0 F / (g α_Θ) at the vent, through gsw directly; c_p0 = 3991.86795711963 J/(kg K)
    # (IOC, SCOR and IAPSO 2010, TEOS-10 manual, eq. 3.3.3); no position given: reference salinity.
    p = (25e6 - 101325.0) / 1e4
    SA = gsw.SR_from_SP(34.6)
    CT = gsw.CT_from_t(SA, 2.0, p)
    H = gsw.rho(SA, CT, p) * 3991.86795711963 * F / (gsw.grav(0.0, p) * gsw.alpha(SA, CT, p))
    assert d["heat_power_W"] == pytest.approx(H, rel=2e-3)


def test_forward_direction_and_files_with_a_ctd_cast(capsys, cast, tmp_path):
    fig, table = tmp_path / "plume.png", tmp_path / "plume.csv"
    code, out, err = _run(capsys, "--heat-power", "100 MW", "--ctd", str(cast), "--latitude", "10",
                          "--figure", str(fig), "--profile-table", str(table), "--json")
    assert code == 0, err
    d = json.loads(out)
    assert 150 < d["rise_height_m"] < 500  # a few hundred metres (common practice, no source)
    assert d["spreading_height_m"] / d["rise_height_m"] == pytest.approx(0.76, abs=0.03)  # from memory
    assert fig.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert table.read_text().splitlines()[0].startswith("height [m],distance [m],radius [m]")


def test_monte_carlo_from_the_command_line(capsys, cast):
    code, out, err = _run(capsys, "--rise-height", "250 ± 20 m", "--ctd", str(cast), "--entrainment",
                          "uniform(0.12, 0.14)", "--draws", "300", "--json")
    assert code == 0, err
    d = json.loads(out)
    assert d["draws"] == 300 and d["unphysical_draws"] == 0
    assert d["heat_power_W_p05"] < d["heat_power_W_median"] < d["heat_power_W_p95"]


def test_readable_table(capsys):
    code, out, _ = _run(capsys, "--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *SITE)
    assert code == 0 and "heat power, closed form" in out and "MW" in out


@pytest.mark.parametrize("argv, field", [
    (["--rise-height=-5m", "--buoyancy-frequency", "1e-3/s", *SITE], "--rise-height"),
    (["--rise-height", "0 m", "--buoyancy-frequency", "1e-3/s", *SITE], "--rise-height"),
    (["--rise-height", "4000 m", "--buoyancy-frequency", "1e-3/s", *SITE], "--rise-height"),
    (["--rise-height", "200 m", "--buoyancy-frequency=-1e-3/s", *SITE], "--buoyancy-frequency"),
    (["--rise-height", "200 m", "--buoyancy-frequency", "0/s", *SITE], "--buoyancy-frequency"),
    (["--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *SITE, "--method", "guess"], "--method"),
    (["--rise-height", "200 m", "--buoyancy-frequency", "1e-3 m", *SITE], "--buoyancy-frequency"),
    (["--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *SITE, "--current=-0.1 m/s"], "--current"),
    (["--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *SITE, "--stratification-scale=-1"],
     "--stratification-scale"),
    (["--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *SITE, "--entrainment", "2"], "--entrainment"),
    (["--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *SITE, "--level", "top"], "--level"),
])
def test_bad_input_is_one_line_and_exit_2(capsys, argv, field):
    code, out, err = _run(capsys, *argv)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and field in lines[0] and "Traceback" not in err


def test_ctd_with_missing_column_or_bad_cell_names_the_line(capsys, tmp_path):
    f = tmp_path / "nosal.csv"
    f.write_text("pressure [dbar],temperature [degC]\n2000,2.1\n2001,2.1\n")
    code, _, err = _run(capsys, "--rise-height", "200 m", "--ctd", str(f))
    assert code == 2 and "salinity" in err and len(err.strip().splitlines()) == 1
    g = tmp_path / "cell.csv"
    g.write_text("pressure [dbar],temperature [degC],salinity\n2000,2.1,34.6\n2001,n/a,34.6\n2002,2.0,34.6\n")
    code, _, err = _run(capsys, "--rise-height", "200 m", "--ctd", str(g))
    assert code == 2 and f"{g}:3" in err and len(err.strip().splitlines()) == 1


def test_rise_height_above_the_cast_is_refused(capsys, cast):
    code, _, err = _run(capsys, "--rise-height", "2000 m", "--ctd", str(cast))
    assert code == 2 and "--rise-height" in err and "ambient profile" in err


def test_forced_plume_from_orifice_exit_conditions(capsys, tmp_path):
    code, out, err = _run(capsys, "--exit-temperature", "350 degC", "--exit-velocity", "1.2 m/s", "--diameter",
                          "8 cm", "--buoyancy-frequency", "1e-3/s", "--ambient-temperature", "2 degC",
                          "--ambient-salinity", "34.6", "--depth", "2500 m", "--json")
    assert code == 0, err
    d = json.loads(out)
    assert d["direction"] == "orifice to rise height" and d["spreading_dilution"] > 1e3
    # weak-momentum source: close to the closed form, 5.0 (F/π)^(1/4) N^(-3/4) (Briggs 1969; from memory)
    z_cf = 5.0 * (d["buoyancy_flux_m4_s3"] / np.pi) ** 0.25 * 1e-3 ** -0.75
    assert d["rise_height_m"] == pytest.approx(z_cf, rel=0.05)


def test_current_profile_file_bends_the_plume(capsys, cast, tmp_path):
    cur = tmp_path / "current.csv"
    cur.write_text("depth [m],speed [m/s]\n1000,0.05\n2600,0.05\n")
    code, out, err = _run(capsys, "--heat-power", "50 MW", "--ctd", str(cast), "--current-profile", str(cur),
                          "--json")
    assert code == 0, err
    bent = json.loads(out)
    code, out, err = _run(capsys, "--heat-power", "50 MW", "--ctd", str(cast), "--current", "0.05 m/s", "--json")
    const = json.loads(out)
    assert bent["rise_height_m"] == pytest.approx(const["rise_height_m"], rel=1e-9)
    assert bent["downstream_distance_m"] > 50


@pytest.mark.parametrize("option, name", [("--figure", "plume.xyz"), ("--figure", "blocker/plume.png"),
                                          ("--profile-table", "blocker/plume.csv")])
def test_output_that_cannot_be_written_is_one_line(capsys, tmp_path, option, name):
    (tmp_path / "blocker").write_text("a file where a folder is needed\n")
    code, _, err = _run(capsys, "--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *SITE,
                        option, str(tmp_path / name))
    lines = err.strip().splitlines()
    assert code == 2 and len(lines) == 1 and option in lines[0] and "Traceback" not in err
