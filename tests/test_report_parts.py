"""The survey report's parts: paper table rounding, SI keys in the JSON, site map, inputs as written, figures.

Outside checks: the three-digit rounding rule of the *Review of Particle Physics* (introduction, "Rounding";
from memory), and the international nautical mile (1852 m by definition, historically one minute of
arc of latitude) for the site map's projection.
"""

from __future__ import annotations

import json
import math
import re
from types import SimpleNamespace

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.survey import paper_table, report, sitemap
from ventflux.survey.inputs_table import input_rows
from ventflux.survey.rendering import FIGURE_DPI
from ventflux.survey.run import run_survey
from ventflux.survey.si_keys import json_key, json_row, summary_json
from ventflux.survey.spec import load_survey
from ventflux.uncertainty import Summary
from ventflux.units import Q_

SURVEY = """
[site]
name = "Test Site"
depth = "2500 m"
latitude = 10.0
longitude = -100.0
ambient_temperature = "2.0 ± 0.02 degC"
ambient_salinity = 34.6

[run]
draws = 4000
seed = 5

[shared]
"laser scale" = "1.00 ± 0.03"

[[vent]]
name = "North spire"
  [[vent.orifice]]
  exit_temperature = "350 ± 2 degC"
  velocity = "1.0 ± 0.1 m/s"
  diameter = "10 cm"
  size_factor = "@laser scale"

[[vent]]
name = "South mound"
  [[vent.orifice]]
  exit_temperature = "320 degC"
  velocity = "0.8 ± 0.1 m/s"
  diameter = "6 cm"
  size_factor = "@laser scale"

[[reservoir]]
name = "sheet below"
supplies = "field total"
volume = "0.01 km^3"
temperature_drop = "300 K"
porosity = 0.0
size = "100 m"
"""


# ---- the paper table's rounding ----------------------------------------------------------------------------
def test_the_brief_s_example_rounds_to_the_uncertainty_s_digits():
    assert paper_table.paper_cell(12.3456, 11.2, 14.1) == "12.3 (11.2–14.1)"


@pytest.mark.parametrize(("half_width", "decimals"), [
    # The three-digit rule of the Review of Particle Physics (from memory): leading digits 100-354 keep two
    # significant digits, 355-949 one,
    # 950-999 round up to 1000 and keep two.
    (0.827, 1),   # 827 → one digit: 0.8
    (0.354, 2),   # 354 → two digits: 0.35
    (0.355, 1),   # 355 → one digit: 0.4
    (0.962, 1),   # 962 → 1.0, two digits
    (1.5, 1),     # 150 → two digits: 1.5
    (23.0, 0),    # 230 → two digits: 23
    (470.0, -2),  # 470 → one digit: 500
])
def test_rounding_follows_the_three_digit_rule(half_width, decimals):
    assert paper_table.rounding_decimals(100.0, 100.0 - half_width, 100.0 + 2 * half_width) == decimals


def test_the_smaller_half_interval_sets_the_digits_and_an_exact_value_keeps_three():
    assert paper_table.paper_cell(70.6, 52.7, 94.2) == "71 (53–94)"  # 17.9 below: two digits, to 1
    assert paper_table.paper_cell(5.0, 5.0, 5.0) == "5.00 (5.00–5.00)"
    assert paper_table.paper_cell(1234.5, 1000.0, 1500.0) == "1230 (1000–1500)"


@settings(max_examples=200, deadline=None)
@given(st.floats(1e-3, 1e6), st.floats(1e-3, 0.9), st.floats(1e-3, 5.0))
def test_rounded_numbers_stay_within_half_a_last_place_of_the_truth(value, lo_frac, hi_frac):
    lo, hi = value * (1 - lo_frac), value * (1 + hi_frac)
    n = paper_table.rounding_decimals(value, lo, hi)
    v, a, b = paper_table.rounded(value, lo, hi)
    step = 10.0 ** (-n)
    for text, true in ((v, value), (a, lo), (b, hi)):
        assert abs(float(text) - true) <= 0.5 * step * (1 + 1e-9) + 1e-12 * abs(true)
        assert len(text.partition(".")[2]) == max(n, 0)  # all three to the same place
    u = min(value - lo, hi - value)
    assert step <= u * (1 + 1e-9)  # never more digits than the uncertainty carries ...
    assert step * 100 > u  # ... and never fewer than its leading one


# ---- JSON keys in SI ----------------------------------------------------------------------------------------
def test_json_keys_are_si_with_the_unit_before_the_statistic():
    assert json_key("heat_power_median [MW]") == ("heat_power_W_p50", "MW", "W")
    assert json_key("heat_power_std [MW]")[0] == "heat_power_W_sd"
    assert json_key("decline_time_p05 [yr]")[0] == "decline_time_s_p05"
    assert json_key("exit_temperature [degC]")[0] == "exit_temperature_degC"
    assert json_key("annual_volume_p50 [km^3/yr]")[0] == "volume_flux_ambient_m3_s_p50"
    row = json_row({"heat_power_p05 [MW]": 2.0, "conductive_time [yr]": 1.0, "vent": "A"})
    assert row["heat_power_W_p05"] == 2.0e6 and row["vent"] == "A"
    assert row["conductive_time_s"] == pytest.approx(365.25 * 86400)  # one Julian year (IAU), pint's 'year'
    s = Summary(Q_(1.0, "MW"), Q_(1.0, "MW"), Q_(0.5, "MW"), Q_(2.0, "MW"), Q_(0.3, "MW"), 100, 1)
    assert summary_json("total_heat_power", s, "MW") == {
        "total_heat_power_W_mean": 1e6, "total_heat_power_W_p05": 5e5, "total_heat_power_W_p50": 1e6,
        "total_heat_power_W_p95": 2e6, "total_heat_power_W_sd": 3e5}


# ---- the site map --------------------------------------------------------------------------------------------
def test_one_minute_of_latitude_is_about_a_nautical_mile():
    # The international nautical mile is 1852 m (a defined unit), historically one minute of latitude: the
    # spherical projection (mean radius) gives 1853.2 m, well within 0.2 %.
    e, n = sitemap.local_metres({"latitude": 10.0 + 1 / 60, "longitude": -100.0}, 10.0, -100.0)
    assert e == pytest.approx(0.0, abs=1e-9) and n == pytest.approx(1852.0, rel=2e-3)
    e, n = sitemap.local_metres({"latitude": 60.0, "longitude": 1 / 60}, 60.0, 0.0)
    assert e == pytest.approx(1852.0 * math.cos(math.radians(60.0)), rel=2e-3) and n == pytest.approx(0.0)
    # across the antimeridian the short way round
    e, _ = sitemap.local_metres({"latitude": 0.0, "longitude": -179.99}, 0.0, 179.99)
    assert e == pytest.approx(1852.0 * 0.6 * 2, rel=2e-3)
    assert sitemap.local_metres({"east": Q_(0.2, "km"), "north": -30.0}, 0.0, 0.0) == (200.0, -30.0)
    assert sitemap.local_metres(None, 0.0, 0.0) is None
    assert sitemap.local_metres({"latitude": 1.0}, 0.0, 0.0) is None


def test_patch_positions_come_from_the_patch_table_columns():
    rows = [{"patch": "P1", "east [m]": 10.0, "north [m]": 20.0, "heat_power_median [kW]": 50.0},
            {"patch": "P2", "latitude": 10.0, "longitude": -100.0 + 1 / 60},
            {"patch": "P3"}]
    fake = SimpleNamespace(spec=SimpleNamespace(site=SimpleNamespace(latitude=10.0, longitude=-100.0),
                                                vents=[SimpleNamespace(name="V")]),
                           vents=[SimpleNamespace(name="V", heat_power=None)],
                           sections={"diffuse": SimpleNamespace(tables={"diffuse_patches": rows})})
    got = {p.name: p for p in sitemap.places(fake)}
    assert set(got) == {"P1", "P2"}  # a patch without a position is left off the map, not placed at 0, 0
    # or the parsed patch table keeps them (columns of quantities, one entry a patch)
    table = SimpleNamespace(names=("P3", "P4"), east=Q_([5.0, float("nan")], "m"), north=Q_([1.0, 2.0], "m"))
    fake.spec.sections = {"diffuse": {"table": table}}
    more = {p.name: p for p in sitemap.places(fake)}
    assert set(more) == {"P1", "P2", "P3"} and (more["P3"].east_m, more["P3"].north_m) == (5.0, 1.0)
    assert (got["P1"].east_m, got["P1"].north_m, got["P1"].heat_power_MW) == (10.0, 20.0, 0.05)
    assert got["P2"].east_m == pytest.approx(1852.0 * math.cos(math.radians(10.0)), rel=2e-3)


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("parts")
    path = tmp / "survey.toml"
    path.write_text(SURVEY, encoding="utf-8")
    spec = load_survey(path)
    spec.draws = 1000  # as --draws does
    return spec, run_survey(spec), tmp


def test_without_positions_the_report_says_so(demo):
    spec, result, tmp = demo
    page = report.write_results(result, tmp / "plain").read_text(encoding="utf-8")
    assert "No site map: the survey gives no position" in page
    assert not (tmp / "plain" / "figures" / "site_map.png").exists()


def test_vents_with_positions_get_a_site_map(demo):
    spec, result, tmp = demo
    try:  # positions as the parser will store them: latitude/longitude or east/north in metres
        spec.vents[0].position = {"latitude": 10.001, "longitude": -100.0}
        spec.vents[1].position = {"east": Q_(-40.0, "m"), "north": Q_(15.0, "m")}
        on_map = sitemap.places(result)
        page = report.write_results(result, tmp / "mapped").read_text(encoding="utf-8")
    finally:
        for v in spec.vents:
            v.position = None  # as a vent without a position (the fixture is shared)
    assert [p.name for p in on_map] == ["North spire", "South mound"]
    assert on_map[0].north_m == pytest.approx(0.001 * 60 * 1852.0, rel=2e-3)
    assert (tmp / "mapped" / "figures" / "site_map.png").is_file()
    assert "data-stem='site_map'" in page and "No site map" not in page


# ---- inputs as written ---------------------------------------------------------------------------------------
def test_every_input_appears_as_written_with_defaults_and_the_command_line(demo):
    spec, _, _ = demo
    rows = {r["key"]: r for r in input_rows(spec)}
    assert rows["vent[0].orifice[0].exit_temperature"]["as_written"] == "350 ± 2 degC"
    assert rows["vent[0].orifice[0].exit_temperature"]["vent"] == "North spire"
    assert rows["vent[1].orifice[0].size_factor"]["as_written"] == "@laser scale"
    assert rows["shared.laser scale"]["source"].startswith("survey file, shared")
    assert rows["site.latitude"]["as_written"] == "10.0"
    for key, value in spec.defaults_used.items():  # every default the parser recorded
        assert rows[key]["as_written"] == str(value) and rows[key]["source"] == "default"
    assert rows["vent[0].orifice[0].velocity_kind"]["source"] == "default"
    draws = [r for r in input_rows(spec) if r["key"] == "run.draws"]
    assert [r["as_written"] for r in draws] == ["4000", "1000"]  # the file's and the command line's
    assert draws[1]["source"].startswith("command line")


# ---- the written folder ---------------------------------------------------------------------------------------
def test_the_folder_carries_the_paper_table_si_json_and_print_figures(demo):
    spec, result, tmp = demo
    page = report.write_results(result, tmp / "out").read_text(encoding="utf-8")
    out = tmp / "out"
    csv = (out / "summary_table.csv").read_text(encoding="utf-8").splitlines()
    assert csv[0] == "quantity,unit,median,p05,p95,median_and_interval"
    t = result.total.to("MW")
    want = paper_table.paper_cell(t.median.m, t.p05.m, t.p95.m)
    assert csv[1].startswith("Total heat power,MW,") and csv[1].endswith(want)
    md = (out / "summary_table.md").read_text(encoding="utf-8")
    assert f"| Total heat power | MW | {want} |" in md
    assert "Summary for a paper" in page and want in page
    assert "sheet below: decline time" in md

    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    flat = [k for k, v in summary.items() if not isinstance(v, (dict, list))]
    rows = [k for part in ("vents", "method_pairs", "reservoirs") for r in summary[part] for k in r]
    for key in flat + rows:
        assert " [" not in key and not re.search(r"_(MW|kW|yr|km3_yr|median|std|dimensionless)(_|$)", key), key
    assert summary["total_heat_power_W_p50"] == pytest.approx(t.median.m * 1e6)
    assert summary["provenance"]["unphysical_draws"] == result.dropped_draws
    assert {"decline_time_s_p50", "conductive_length", "pore_fluid_phase"} <= set(summary["reservoirs"][0])

    header = (out / "tables" / "reservoirs.csv").read_text(encoding="utf-8").splitlines()[0]
    assert "conductive_length" in header and "pore_fluid_phase" in header and "decline_time_p95 [yr]" in header
    assert (out / "tables" / "inputs.csv").is_file() and "Inputs as written" in page

    from PIL import Image

    with Image.open(out / "figures" / "vents_by_method.png") as im:
        assert round(im.info["dpi"][0]) == FIGURE_DPI
    assert "data:image/svg+xml;base64," in page


def test_every_core_figure_has_a_title_units_and_no_snake_case(demo):
    _, result, _ = demo
    figs = report.figures_of(result)
    import matplotlib.pyplot as plt

    try:
        assert {"vents_by_method", "reservoirs"} <= {stem for stem, _, _ in figs}
        for stem, fig, _ in figs:
            if isinstance(fig, bytes):
                continue
            titles = [fig._suptitle.get_text()] if fig._suptitle is not None else []
            texts = []
            for ax in fig.axes:
                titles.append(ax.get_title())
                texts += [ax.get_xlabel(), ax.get_ylabel()] + [t.get_text() for t in ax.get_yticklabels()]
                if ax.get_legend() is not None:
                    texts += [t.get_text() for t in ax.get_legend().get_texts()]
            assert any(titles), f"{stem} has no title"
            assert any("[" in t for t in texts if t), f"{stem}: no axis label with a unit"
            assert not [t for t in texts + titles if re.search(r"[a-z]_[a-z]", t)], stem
            if stem == "reservoirs":
                assert "decline time" in texts
    finally:
        for _, fig, _ in figs:
            if not isinstance(fig, bytes):
                plt.close(fig)
