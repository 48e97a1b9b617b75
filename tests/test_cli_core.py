"""The ventflux command line: JSON and table output, and one-line errors with exit 2."""

import json
import subprocess
import sys

import pytest

from ventflux.cli import main

GOOD = ["orifice", "--exit-temperature", "352 degC", "--velocity", "1.4 m/s", "--diameter", "0.12 m",
        "--absolute-pressure", "26 MPa", "--ambient-temperature", "2.1 degC", "--ambient-salinity", "34.6"]


def _with(**changes):
    args = list(GOOD)
    for flag, value in changes.items():
        flag = "--" + flag.replace("_", "-")
        if flag in args:
            i = args.index(flag)
            if value is None:
                del args[i:i + 2]
            else:
                args[i + 1] = value
        elif value is not None:
            args += [flag, value]
    return args


def test_orifice_json(capsys):
    assert main(GOOD + ["--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["heat_power_W"] > 1e6 and out["mass_flux_kg_s"] > 1
    assert "heat_power_constant_cp_W" in out and -0.2 < out["constant_cp_difference"] < 0


def test_orifice_table(capsys):
    assert main(GOOD) == 0
    out = capsys.readouterr().out
    assert "heat power (enthalpy difference)" in out and "MW" in out


def test_orifice_with_uncertainty_reports_interval_and_seed(capsys):
    assert main(_with(velocity="1.4 ± 0.2 m/s") + ["--draws", "2000", "--seed", "5", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["heat_power_W_p05"] < out["heat_power_W"] < out["heat_power_W_p95"]
    assert out["seed"] == 5 and out["draws"] == 2000


def test_depth_instead_of_pressure(capsys):
    assert main(_with(absolute_pressure=None, depth="2550 m") + ["--json"]) == 0
    assert json.loads(capsys.readouterr().out)["absolute_pressure_Pa"] == pytest.approx(2.58e7, rel=0.02)


@pytest.mark.parametrize("changes, needle", [
    ({"diameter": "-0.12 m"}, "--diameter"),
    ({"diameter": "0 m"}, "--diameter"),
    ({"velocity": "0 m/s"}, "--velocity"),
    ({"velocity": "-1 m/s"}, "--velocity"),
    ({"exit_temperature": "1.0 degC"}, "--exit-temperature"),
    ({"exit_temperature": "2000 degC"}, "--exit-temperature"),
    ({"absolute_pressure": "2000 MPa"}, "--absolute-pressure"),
    ({"diameter": "3 s"}, "--diameter"),
    ({"velocity": "fast"}, "--velocity"),
    ({"exit_temperature": None}, "--exit-temperature"),
    ({"absolute_pressure": "12 MPa", "exit_temperature": "340 degC"}, "saturation temperature"),
])
def test_bad_input_is_one_line_with_exit_2(capsys, changes, needle):
    with pytest.raises(SystemExit) as ex:
        raise SystemExit(main(_with(**changes)))
    assert ex.value.code == 2
    err = capsys.readouterr().err
    assert needle in err
    assert len(err.strip().splitlines()) == 1
    assert "Traceback" not in err


def test_methods_lists_core_method_and_provider(capsys):
    assert main(["methods", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    names = {m["name"]: m["provided_by"] for m in out["methods"]}
    assert names["orifice"] == "ventflux"
    assert any(f["name"] == "iapws95-water" for f in out["fluid_models"])


def test_console_script_help_everywhere():
    for args in ([], ["orifice"], ["methods"]):
        r = subprocess.run([sys.executable, "-m", "ventflux.cli", *args, "--help"], capture_output=True, text=True)
        assert r.returncode == 0 and "usage:" in r.stdout


class _FixedVelocityPlugin:
    """A stand-in plugin whose velocity source returns 1.4 ± 0.1 m/s."""

    @staticmethod
    def ventflux_velocity_sources():
        from ventflux.registry import VelocitySource
        from ventflux.units import Q_

        return [VelocitySource(name="fixed-test", summary="test", feeds=("orifice",),
                               estimate=lambda scale="1": (Q_(1.4 * float(scale), "m/s"), Q_(0.1, "m/s")))]


def test_velocity_source_plugin_feeds_the_orifice_estimator(capsys):
    from ventflux.hookspecs import hookimpl
    from ventflux.registry import plugin_manager

    plugin = _FixedVelocityPlugin()
    hookimpl(_FixedVelocityPlugin.ventflux_velocity_sources)
    pm = plugin_manager()
    pm.register(plugin, name="fixed-test-plugin")
    try:
        args = [a for a in GOOD if a not in ("--velocity", "1.4 m/s")]
        assert main(args + ["--velocity-source", "fixed-test", "--source-option", "scale=1", "--json",
                            "--draws", "500"]) == 0
        via_source = json.loads(capsys.readouterr().out)
        assert main(GOOD + ["--json"]) == 0
        direct = json.loads(capsys.readouterr().out)
        assert via_source["heat_power_W"] == pytest.approx(direct["heat_power_W"], rel=1e-9)
        assert via_source["heat_power_W_p95"] > via_source["heat_power_W"]
    finally:
        pm.unregister(plugin)
