"""One vocabulary: old option spellings, JSON keys in SI units, the contributor guide's table, errors as JSON."""

import argparse
import contextlib
import io
import json
import re
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux import vocabulary as vocab
from ventflux.cli import main

ROOT = Path(__file__).resolve().parents[1]

SITE = ["--ambient-temperature", "2.1 degC"]
ORIFICE = ["orifice", "--exit-temperature", "352 degC", "--velocity", "1.4 ± 0.2 m/s", "--diameter", "12 cm",
           "--absolute-pressure", "26 MPa", *SITE, "--draws", "300"]
PLUME = ["plume-rise", "--heat-power", "100 ± 20 MW", "--buoyancy-frequency", "1e-3/s", *SITE,
         "--ambient-salinity", "34.6", "--absolute-pressure", "25 MPa", "--method", "closed-form", "--draws", "200"]
DIFFUSE = ["diffuse", "--area", "12 ± 2 m^2", "--active-fraction", "0.4", "--anomaly", "3.2 ± 0.5 K", "--velocity",
           "0.8 ± 0.2 cm/s", *SITE, "--ambient-salinity", "34.6", "--absolute-pressure", "22 MPa", "--draws", "300"]
WATER = ["summarize", "water", "--heat-power", "100 ± 20 MW", "--exit-temperature", "350 degC",
         "--absolute-pressure", "25 MPa", "--ambient-temperature", "2 degC", "--ambient-salinity", "34.6",
         "--draws", "200"]
FLANK = ["summarize", "flank", "--observed", "1 Myr=120 mW/m^2", "--observed", "5 Myr=110 mW/m^2",
         "--half-spreading-rate", "25 ± 2 mm/yr", "--temperature-rise", "10 K", "--absolute-pressure", "35 MPa",
         "--draws", "200"]
RESERVOIR = ["summarize", "reservoir", "--heat-power", "100 ± 20 MW", "--volume", "0.01 km^3", "--temperature-drop",
             "800 K", "--porosity", "0", "--draws", "200"]
SIZE = ["summarize", "size", "--heat-power", "100 MW", "--duration", "10 ± 1 yr", "--temperature-drop", "300 K",
        "--area", "1 km^2", "--porosity", "0", "--draws", "200"]


def _json(capsys, argv):
    assert main([*argv, "--json"]) == 0, capsys.readouterr().err
    out, err = capsys.readouterr()
    return json.loads(out), err


# ------------------------------------------------------------------------------------------- old spellings
def _cases():
    """(base argv with the new spelling, old, new) for every renamed option of the core commands."""
    bases = {"orifice": [ORIFICE], "plume-rise": [PLUME], "diffuse": [DIFFUSE], "summarize": [WATER, FLANK],
             "summarize water": [WATER]}
    for command, renames in vocab.RENAMED_OPTIONS.items():
        for old, new in renames.items():
            for base in bases.get(command, []):
                if new in base:
                    yield pytest.param(base, old, new, id=f"{command}:{old}")


CASES = list(_cases())


def test_every_renamed_option_of_the_core_commands_is_exercised():
    covered = {(p.values[1], p.values[2]) for p in CASES}
    for command, renames in vocab.RENAMED_OPTIONS.items():
        if command != "*":
            assert set(renames.items()) <= covered, command


@pytest.mark.parametrize("base, old, new", CASES)
def test_old_spelling_gives_the_same_answer_and_one_deprecation_line(capsys, base, old, new):
    expected, err = _json(capsys, base)
    assert "deprecated" not in err
    argv = [old if a == new else a for a in base]
    got, err = _json(capsys, argv)
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert lines == [f"ventflux: {vocab.deprecation_line(old, new)}"]
    assert got == expected


@pytest.mark.parametrize("argv", [
    ["orifice", "--temperature", "352 degC", "--exit-temperature", "352 degC", "--velocity", "1 m/s",
     "--diameter", "10 cm", "--depth", "2500 m", *SITE],
    ["orifice", "--exit-temperature", "352 degC", "--velocity", "1 m/s", "--diameter", "10 cm", "--depth",
     "2500 m", "--pressure", "25 MPa", *SITE],
    ["orifice", "--pressure", "25 MPa", "--exit-temperature", "352 degC", "--velocity", "1 m/s", "--diameter",
     "10 cm", "--depth", "2500 m", *SITE],
])
def test_old_spelling_with_the_new_or_an_exclusive_option_is_a_usage_error(capsys, argv):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert re.search(r"argument --(temperature|pressure): not allowed with argument --", err)
    assert "Traceback" not in err


def test_old_spelling_satisfies_a_required_option_and_help_hides_it(capsys):
    out, _ = _json(capsys, ["orifice", "--temperature", "352 degC", "--velocity", "1 m/s", "--diameter", "10 cm",
                            "--depth", "2500 m", *SITE])
    assert out["heat_power_W"] > 0
    assert main(["orifice", "--help"]) == 0
    text = capsys.readouterr().out
    assert "--exit-temperature" in text and "--temperature " not in text and "--pressure " not in text


def test_the_every_command_renames_reach_a_command_that_has_the_new_option():
    p = argparse.ArgumentParser()
    p.add_argument("--quiet", action="store_true")
    vocab.apply_renamed_options(p, "some-plugin-command")
    err = io.StringIO()
    with contextlib.redirect_stderr(err):
        ns = p.parse_args(["--no-progress"])
    assert ns.quiet is True and err.getvalue().count("deprecated") == 1 and "'--quiet'" in err.getvalue()


# ----------------------------------------------------------------------------------------------- JSON keys
@pytest.mark.parametrize("argv", [
    ORIFICE, ORIFICE + ["--budget"], ORIFICE[:-2] + ["--velocity", "1.4 m/s"],
    PLUME, PLUME + ["--budget"],
    ["plume-rise", "--rise-height", "250 ± 20 m", "--buoyancy-frequency", "1e-3/s", *SITE, "--ambient-salinity",
     "34.6", "--depth", "2500 m", "--draws", "100"],
    DIFFUSE, DIFFUSE + ["--budget", "full"],
    WATER, FLANK, RESERVOIR, SIZE, ["methods"],
], ids=lambda a: " ".join(a[:2]) + (" budget" if "--budget" in a else ""))
def test_json_keys_of_every_core_command_carry_si_units(capsys, argv):
    out, _ = _json(capsys, argv)
    assert vocab.json_key_problems(out) == []


def test_json_keys_name_the_unit_of_their_value(capsys):
    # Values checked against the inputs as typed (unit conversions by hand): the key says which unit.
    o, _ = _json(capsys, ORIFICE)
    assert o["absolute_pressure_Pa"] == pytest.approx(26e6)
    assert o["area_m2"] == pytest.approx(3.14159265 * 0.06 ** 2, rel=1e-6)
    assert {"heat_power_W_p05", "heat_power_W_p95", "heat_power_W_sd", "unphysical_draws"} <= set(o)
    assert -0.2 < o["constant_cp_difference"] < 0  # a ratio, bare
    d, _ = _json(capsys, DIFFUSE)
    assert d["absolute_pressure_Pa"] == pytest.approx(22e6)
    assert d["heat_power_W_p05"] < d["heat_power_W"] < d["heat_power_W_p95"]
    assert d["heat_power_constant_cp_W"] > 0 and d["patches"][0]["heat_power_constant_cp_W"] > 0
    r, _ = _json(capsys, ["summarize", "reservoir", "--heat-power", "100 MW", "--volume", "0.01 km^3",
                          "--temperature-drop", "800 K", "--porosity", "0"])
    assert r["volume_m3"] == pytest.approx(1e7)
    assert "heat_power" in r["inputs"] and "power" not in r["inputs"]  # named by the option
    # E = ρ c V ΔT = 2900 · 1000 · 1e7 · 800 J (the command's default rock), over 100 MW, in seconds
    assert r["heat_mining_time_s"] == pytest.approx(2900 * 1000 * 1e7 * 800 / 1e8, rel=1e-9)
    p, _ = _json(capsys, PLUME)
    assert p["vent_sea_pressure_Pa"] == pytest.approx(25e6 - 101325, rel=1e-9)
    assert "failed_draws" not in p and p["unphysical_draws"] == 0


@pytest.mark.parametrize("obj, bad", [
    ({"heat_power_MW": 1.0}, "heat_power_MW"),
    ({"heat_power_W_std": 1.0}, "heat_power_W_std"),
    ({"failed_draws": 0}, "failed_draws"),
    ({"pressure_Pa": 2e7}, "pressure_Pa"),
    ({"volume_km3": 1.0}, "volume_km3"),
    ({"x": [{"annual_volume_km3_year_p95": 1.0}]}, "x[0].annual_volume_km3_year_p95"),
    ({"heat_power": 3.0}, "heat_power"),
    ({"deficit_fraction_dimensionless": 0.3}, "deficit_fraction_dimensionless"),
])
def test_the_key_check_catches_a_replaced_spelling_or_a_missing_unit(obj, bad):
    problems = vocab.json_key_problems(obj)
    assert len(problems) == 1 and problems[0].startswith(bad + ":")


def test_the_key_check_accepts_the_vocabulary():
    ok = {"heat_power_W": 1.0, "heat_power_W_p05": 1.0, "heat_power_W_sd": 1.0, "unphysical_draws": 0,
          "thermal_expansion_1_K": 1e-4, "circulated_water_per_length_m3_s_m": 1e-3, "vent": "V1", "ok": True,
          "budget": [{"first_order": 0.5, "width_if_known_W": 1.0}]}
    assert vocab.json_key_problems(ok) == []


@pytest.mark.parametrize("unit, si, factor", [
    ("MW", "W", 1e6), ("km^3/year", "m^3/s", 1e9 / (365.25 * 86400)), ("MW/km", "W/m", 1e3),
    ("mW/m^2", "W/m^2", 1e-3), ("kJ/kg", "J/kg", 1e3), ("MJ/m^3", "J/m^3", 1e6), ("MPa", "Pa", 1e6),
    ("dbar", "Pa", 1e4), ("mm/yr", "m/s", 1e-3 / (365.25 * 86400)), ("cm^2", "m^2", 1e-4), ("L/s", "m^3/s", 1e-3),
    ("percent", "", 1e-2), ("degC", "degC", 1.0),
])
def test_si_unit_and_value(unit, si, factor):
    # Factors by hand (a Julian year of 365.25 days, pint's 'year').
    assert vocab.si_unit(unit) == si
    key_unit, value = vocab.json_value(1.0, unit)
    assert key_unit == si and value == pytest.approx(factor, rel=1e-12)


def test_json_record_turns_a_table_row_into_si_keys():
    row = {"result": "heat_power", "width_if_known [MW]": 2.5, "first_order": 0.4}
    assert vocab.json_record(row) == {"result": "heat_power", "width_if_known_W": 2.5e6, "first_order": 0.4}


# ------------------------------------------------------------------------------- the contributor guide's table
def test_developers_vocabulary_table_is_generated_from_the_module():
    text = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    section = text.split("### One vocabulary", 1)[1].split("\n### ", 1)[0]
    assert vocab.markdown_table() in section
    assert "Known differences still to remove" not in section


# ------------------------------------------------------------------------------------------ errors as JSON
def _json_errors(err):
    last = err.strip().splitlines()[-1]
    return json.loads(last)["errors"]


def test_one_error_with_json_is_also_one_json_object(capsys):
    argv = [a if a != "12 cm" else "-12 cm" for a in ORIFICE] + ["--json"]
    assert main(argv) == 2
    out, err = capsys.readouterr()
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 2 and lines[0].startswith("ventflux orifice: error: --diameter")
    (error,) = _json_errors(err)
    assert error["field"] == "--diameter" and error["value"] == "-12 cm" and error["where"] is None
    assert error["allowed"] and error["allowed"] in lines[0]  # the same words as the readable line


def test_many_errors_with_json_are_listed_in_one_object(capsys):
    argv = [{"1.4 ± 0.2 m/s": "fast", "12 cm": "3 s"}.get(a, a) for a in ORIFICE] + ["--json"]
    assert main(argv) == 2
    err = capsys.readouterr().err
    errors = _json_errors(err)
    assert [e["field"] for e in errors] == ["--velocity", "--diameter"]
    assert errors[0]["value"] == "fast" and errors[1]["value"].startswith("3")
    assert all(set(e) == {"field", "value", "allowed", "where"} and e["allowed"] for e in errors)
    assert len(err.strip().splitlines()) == 3  # one line each, then the JSON object


def test_a_usage_error_with_json_is_also_json(capsys):
    assert main(["plume-rise", "--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", "--method", "guess",
                 "--level", "nowhere", "--json", "--frobnicate"]) == 2
    errors = _json_errors(capsys.readouterr().err)
    assert errors[0]["field"] == "arguments" and errors[0]["value"] == "--frobnicate"
    assert main(["orifice", "--velocity", "1 m/s", "--json"]) == 2
    errors = _json_errors(capsys.readouterr().err)
    assert errors[0]["field"].startswith("--") and "required" in errors[0]["allowed"]


def test_a_survey_file_error_with_json_names_where(capsys, tmp_path):
    bad = tmp_path / "s.toml"
    bad.write_text('[site]\nname = "x"\ndepth = "-5 m"\n', encoding="utf-8")
    assert main(["survey", str(bad), "--check", "--json"]) == 2
    errors = _json_errors(capsys.readouterr().err)
    assert errors[0] == {"field": "site.depth", "value": "-5 m", "allowed": errors[0]["allowed"], "where": str(bad)}
    assert len(errors) > 1 and all(set(e) == {"field", "value", "allowed", "where"} for e in errors)


def test_without_json_errors_are_lines_only(capsys):
    argv = [a if a != "12 cm" else "-12 cm" for a in ORIFICE]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "{" not in err


class _StandInCommandPlugin:
    """A plugin command that refuses its input, as any plugin's would."""

    @staticmethod
    def ventflux_commands():
        from ventflux.errors import InputError
        from ventflux.registry import Command

        def configure(p):
            p.add_argument("--strength")
            p.add_argument("--json", action="store_true")

        def run(args):
            raise InputError("--strength", args.strength, "a number between 0 and 1", where="stand-in.csv:3")

        return [Command(name="stand-in", help="test", configure=configure, run=run)]


def test_a_plugin_command_s_error_with_json_is_json_too(capsys):
    from ventflux.hookspecs import hookimpl
    from ventflux.registry import plugin_manager

    plugin = _StandInCommandPlugin()
    hookimpl(_StandInCommandPlugin.ventflux_commands)
    pm = plugin_manager()
    pm.register(plugin, name="stand-in-command-plugin")
    try:
        assert main(["stand-in", "--strength", "7", "--json"]) == 2
        assert _json_errors(capsys.readouterr().err) == [
            {"field": "--strength", "value": "7", "allowed": "a number between 0 and 1", "where": "stand-in.csv:3"}]
    finally:
        pm.unregister(plugin)


@settings(max_examples=200, deadline=None)
@given(st.sampled_from(["MW", "kW", "GW", "yr", "km^3/yr", "L/s", "degF", "mK", "GJ", "cm", "mm/yr", "bar", "MPa",
                        "kJ/kg", "t/yr", "W/cm^2"]),
       st.floats(-1e9, 1e9, allow_nan=False))
def test_json_values_are_pints_conversion_to_si(unit, value):
    # JSON carries SI: the remembered conversion per unit must give what pint gives for every value (affine units
    # included: degF to K has an offset)
    from ventflux.survey.si_keys import si_unit, to_si
    from ventflux.units import ureg

    si = si_unit(unit)
    expect = float(ureg.Quantity(value, unit).to(si).magnitude)
    assert to_si(value, unit, si) == pytest.approx(expect, rel=1e-12, abs=1e-9)
