"""The plausibility table, the parse-level refusal of non-finite values, seeds, memory, and warnings."""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux import limits
from ventflux.cli import main
from ventflux.errors import InputError, Warnings
from ventflux.resources import check_memory, memory_needed
from ventflux.uncertainty import MAX_SEED, check_seed
from ventflux.uncertainty import parse_uncertain
from ventflux.units import Q_, parse_quantity

DEMO = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge"


@pytest.mark.parametrize("field, dimension, quantity", [
    ("--velocity", "velocity", "a vent-fluid or seafloor velocity"),
    ("vent[2].orifice[1].velocity", "velocity", "a vent-fluid or seafloor velocity"),
    ("vent[0].orifice[0].area", "area", "an orifice area"),
    ("--area", "area", "an area"),
    ("reservoir[1].area", "area", "a reservoir area"),
    ("vent[0].video.pixel_size", "length", "a pixel size"),
    ("--pixel-size", "length", "a pixel size"),
    ("vent[0].plume_rise.height", "length", "a rise height"),
    ("site.ambient_temperature", "temperature", "an ambient seawater temperature"),
    ("reservoir[0].temperature", "temperature", "a reservoir temperature"),
    ("vent[1].orifice[0].temperature", "temperature", "a vent-fluid temperature"),
    ("vent[1].orifice[0].temperature_offset", "temperature", None),  # a difference: no absolute limit
    ("shared.laser scale", "dimensionless", None),
])
def test_the_longest_matching_key_selects_the_row(field, dimension, quantity):
    lim = limits.limit_for(field, dimension)
    assert (lim.quantity if lim else None) == quantity


def test_every_row_states_its_reason_and_a_consistent_range():
    for lim in limits.LIMITS:
        assert lim.reason and lim.keys
        if lim.low is not None and lim.high is not None:
            assert lim.low < lim.high
        Q_(1.0, lim.unit or "dimensionless")  # the unit parses
    table = limits.markdown_table()
    assert table.count("\n") == len(limits.LIMITS) + 1


@pytest.mark.parametrize("text, dimension, field", [
    ("1e30 m/s", "velocity", "--velocity"),
    ("1e-30 mm", "length", "--pixel-size"),
    ("727 km^2", "area", "--area"),
    ("20 km", "length", "--rise-height"),
    ("60", "dimensionless", "--ambient-salinity"),
    ("-5 degC", "temperature", "--ambient-temperature"),
    ("2 ± 15 m/s", "velocity", "--velocity"),  # its 95 % point is 26.7 m/s
    ("uniform(1, 40) m/s", "velocity", "--velocity"),
    ("lognormal(5, 10) m/s", "velocity", "--velocity"),
])
def test_implausible_values_are_refused_and_can_be_allowed(text, dimension, field):
    with pytest.raises(InputError, match=re.escape(field) + ".*plausibility limit"):
        parse_uncertain(text, dimension, field)
    with limits.allowing_implausible():
        parse_uncertain(text, dimension, field)
    assert not limits.implausible_allowed()


@pytest.mark.parametrize("text", ["inf m/s", "nan m/s", "-inf m/s", "1e999 m/s", "nan ± 1 m/s", "1 ± inf m/s",
                                  "uniform(1, inf) m/s"])
def test_non_finite_values_are_refused_even_when_implausible_ones_are_allowed(text):
    with limits.allowing_implausible(), pytest.raises(InputError, match="finite|velocity"):
        parse_uncertain(text, "velocity", "--velocity")


@given(st.floats(allow_nan=False, allow_infinity=False, min_value=-1e300, max_value=1e300))
@settings(max_examples=200, deadline=None)
def test_an_accepted_velocity_lies_inside_the_limit(x):
    """Property: whatever parses as a velocity without --allow-implausible is inside the table's range."""
    lim = limits.limit_for("--velocity", "velocity")
    try:
        q = parse_quantity(f"{x!r} m/s", "velocity", "--velocity")
    except InputError:
        assert not lim.contains(x)
        return
    assert lim.contains(q.to("m/s").magnitude)


def test_physical_zero_tails_are_left_to_the_draw_policy():
    """A velocity whose 5 % point is negative passes the table (the nominal is checked); the survey checks
    the tail against the run's 5 % policy instead."""
    parse_uncertain("0.6 ± 0.5 m/s", "velocity", "--velocity")


def test_seeds_and_draws():
    check_seed(0)
    check_seed(MAX_SEED)
    for bad in (-1, MAX_SEED + 1, 1.5, True):
        with pytest.raises(InputError, match="seed"):
            check_seed(bad)
    check_memory(10_000, series=50)
    with pytest.raises(InputError, match="at most about"):
        check_memory(10**13)
    with pytest.raises(InputError, match="≥ 1"):
        check_memory(0)
    assert memory_needed(1000, 2) == 2 * memory_needed(1000, 1)


def test_warnings_collector():
    w = Warnings()
    assert not w and w.as_list() == []
    w.add("vent[1]", "left out of the water total")
    w.add("vent[1]", "left out of the water total")  # the same warning once
    w.add("diffuse", "class 'sediment' sampled by one patch")
    assert len(w) == 2
    assert w.lines() == ["vent[1]: left out of the water total", "diffuse: class 'sediment' sampled by one patch"]
    assert json.loads(json.dumps(w.as_list()))[0] == {"key": "vent[1]", "message": "left out of the water total"}


@pytest.fixture
def light_demo(tmp_path):
    """The demo survey without video and probes, with the closed-form plume relation: quick to run."""
    shutil.copytree(DEMO, tmp_path / "demo", ignore=shutil.ignore_patterns("*.mp4", "probes", "make_demo_data.py"))
    p = tmp_path / "demo" / "survey.toml"
    text = p.read_text()
    text = re.sub(r"\n  \[vent\.video\].*?(?=\n  \[\[vent\.orifice\]\])", "\n", text, flags=re.DOTALL)
    text = re.sub(r"\n\[sediment_probes\].*?(?=\n\[field_plume\])", "\n", text, flags=re.DOTALL)
    p.write_text(text.replace('level = "maximum"', 'level = "maximum"\nmethod = "closed-form"'))
    return p


def test_a_vent_without_exit_temperature_is_a_warning_everywhere(light_demo, capsys):
    """A vent measured only by its plume cannot join the water total: printed at --check, in the run,
    in summary.json and in the report's warnings section."""
    text = light_demo.read_text()
    light_demo.write_text(text + '\n[[vent]]\nname = "Far plume"\n  [vent.plume_rise]\n  rise_height = "120 ± 20 m"\n'
                                 '  method = "closed-form"\n')
    rc = main(["survey", str(light_demo), "--check"])
    cap = capsys.readouterr()
    assert rc == 0 and "1 warning" in cap.out
    assert "warning: vent[3]: vent 'Far plume' has no exit temperature" in cap.err
    out = light_demo.parent / "res"
    rc = main(["survey", str(light_demo), "--draws", "400", "--quiet", "--out", str(out)])
    cap = capsys.readouterr()
    assert rc == 0 and "warning: vent[3]" in cap.err
    summary = json.loads((out / "summary.json").read_text())
    assert [w["key"] for w in summary["warnings"]] == ["vent[3]"]
    assert "<h2>Warnings</h2>" in (out / "report.html").read_text()


def test_allow_implausible_in_the_survey_is_recorded(light_demo, capsys):
    text = light_demo.read_text().replace('velocity = "1.55 ± 0.25 m/s"', 'velocity = "25 m/s"')
    light_demo.write_text(text)
    assert main(["survey", str(light_demo), "--check"]) == 2
    assert "vent[0].orifice[0].velocity (vent 'Gildhorn'): '25 m/s'" in capsys.readouterr().err
    light_demo.write_text(text.replace("seed = 20261202", "seed = 20261202\nallow_implausible = true"))
    assert main(["survey", str(light_demo), "--check"]) == 0
    assert "warning: run.allow_implausible" in capsys.readouterr().err
    light_demo.write_text(text)
    assert main(["survey", str(light_demo), "--check", "--allow-implausible"]) == 0
    capsys.readouterr()
    assert main(["survey", str(light_demo), "--check"]) == 2  # the option lasts for one command only


@pytest.mark.parametrize("argv", [
    ["orifice", "--exit-temperature", "352 degC", "--velocity", "1.4 m/s", "--diameter", "12 cm", "--depth", "2550 m",
     "--ambient-temperature", "2.1 degC"],
    ["diffuse", "--area", "12 m^2", "--active-fraction", "0.4", "--anomaly", "3 K", "--velocity", "1 cm/s",
     "--ambient-temperature", "2.1 degC", "--depth", "2200 m"],
    ["plume-rise", "--rise-height", "250 m", "--buoyancy-frequency", "1e-3/s", "--ambient-temperature", "2 degC",
     "--ambient-salinity", "34.6", "--absolute-pressure", "25 MPa"],
])
def test_latitude_bounds_are_the_same_for_every_command(argv, capsys):
    """Latitude is bounded by geometry (±90°), the same bound as the survey file's, whatever the command."""
    from ventflux.cli import main
    from ventflux.limits import POSITION_BOUNDS

    assert POSITION_BOUNDS["latitude"] == (-90.0, 90.0)
    assert main(argv + ["--latitude", "95"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--latitude" in err[0] and "-90 to 90" in err[0]
    assert main(argv + ["--latitude", "95", "--allow-implausible"]) == 2  # validity, not plausibility


def test_absolute_pressure_has_the_pressure_limit():
    # The renamed option and survey key keep the plausibility limit of an absolute pressure (ventflux.vocabulary).
    from ventflux.limits import limit_for

    for field in ("--absolute-pressure", "site.absolute_pressure", "--pressure"):
        lim = limit_for(field, "pressure")
        assert lim is not None and lim.quantity == "an absolute pressure", field
