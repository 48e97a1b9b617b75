"""The survey's uncertainty budget: a dominant shared input ranks first; tables, figures, report and CLI."""

import json

import numpy as np

from ventflux.survey.budget import survey_budget
import pytest
from conftest import survey_site

from ventflux.cli import main
from ventflux.survey import report
from ventflux.survey.budget import input_draws, label
from ventflux.survey.run import run_survey
from ventflux.survey.spec import load_survey

SITE = survey_site("Budget Test", draws="{draws}", seed=5) + """
[shared]
"laser scale" = "1.00 ± 0.12"
"""

VENT = """
[[vent]]
name = "{name}"
  [[vent.orifice]]
  exit_temperature = "{T} ± 1 degC"
  velocity = "{v} ± 0.02 m/s"
  diameter = "10 ± 0.1 cm"
  size_factor = "@laser scale"
"""


def _survey(tmp_path, n_vents=4, draws=3000):
    text = SITE.format(draws=draws) + "".join(VENT.format(name=f"V{i}", T=300 + 10 * i, v=1.0 + 0.1 * i)
                                              for i in range(n_vents))
    p = tmp_path / "survey.toml"
    p.write_text(text, encoding="utf-8")
    return load_survey(p)


def test_a_total_dominated_by_one_shared_input_ranks_it_first(tmp_path):
    # By construction: every vent's size carries the shared 12 % scale error (power ∝ scale², about 24 %),
    # while each vent's own velocity and temperature errors are 1–2 %: the shared input owns the total's variance.
    result = run_survey(_survey(tmp_path))
    b = survey_budget(result)
    field = b.indices["field total"]
    assert field.top(1) == ["shared/laser scale"]
    i = field.names.index("shared/laser scale")
    assert field.first[i] > 0.9 and field.first_error[i] < 0.02
    for v in ("V0", "V1", "V2", "V3"):
        assert b.indices[f"{v}: orifice"].top(1) == ["shared/laser scale"]
    # Another vent's inputs cannot affect V0 and are left out of its budget; the field total has them all.
    v0 = b.indices["V0: orifice"]
    assert "V3/orifice[0]/velocity" not in v0.names and "V0/orifice[0]/velocity" in v0.names
    assert "V3/orifice[0]/velocity" in field.names
    # Knowing the scale exactly narrows the total's 5–95 % width by most of it.
    assert field.width_if_known["shared/laser scale"] < 0.35 * field.width
    assert len(b.sentences()) == 5 and "'laser scale' (shared)" in b.sentences()[0]  # 4 vents and the field
    assert b.sentences()[-1].startswith("Field total: measure 'laser scale' (shared) better")


def test_input_draws_are_the_run_s_own_draws(tmp_path):
    from ventflux.survey.budget import _named

    result = run_survey(_survey(tmp_path, n_vents=1, draws=500))
    X, nominal = input_draws(result.draws, result.keep)
    named = _named(result.draws)
    assert set(X) == set(named) and len(X) == 4  # laser scale, T, v, d
    for name, x in X.items():
        q = result.draws.draw(name, named[name])  # the run's array for this name
        assert np.array_equal(x, q.to(named[name].unit).magnitude[result.keep])
    assert nominal["shared/laser scale"] == pytest.approx(1.0)
    assert label("shared/laser scale") == "'laser scale' (shared)"


def test_results_folder_carries_the_budget(tmp_path):
    result = run_survey(_survey(tmp_path, n_vents=2, draws=1000))
    html = report.write_results(result, tmp_path / "out").read_text(encoding="utf-8")
    out = tmp_path / "out"
    assert (out / "tables" / "budget.csv").is_file()
    data = json.loads((out / "budget.json").read_text(encoding="utf-8"))
    assert data["mode"] == "draws" and len(data["sentences"]) == 3
    assert {r["result"] for r in data["rows"]} >= {"V0: orifice", "field total"}
    assert "width_if_known_W" in data["rows"][0] and "(interactions and unnamed randomness)" in \
        {r["input"] for r in data["rows"]}
    header = (out / "tables" / "budget.csv").read_text(encoding="utf-8").splitlines()[0].split(",")
    assert {"width_p05_p95", "width_if_known", "unit"} <= set(header)  # one pair of widths, their unit by row
    assert not [c for c in header if c.startswith("width") and c not in ("width_p05_p95", "width_if_known")]
    assert (out / "figures" / "budget_field-total.png").is_file()
    assert "Uncertainty budget" in html and "V1: measure" in html


@pytest.mark.slow
def test_full_design_agrees_with_the_draws_on_the_dominant_input(tmp_path):
    result = run_survey(_survey(tmp_path, n_vents=2, draws=1000))
    given = survey_budget(result)
    full = survey_budget(result, "full", base_draws=400)
    assert full.evaluations_multiple > 1
    g, f = given.indices["field total"], full.indices["field total"]
    assert f.top(1) == g.top(1) == ["shared/laser scale"]
    i = f.names.index("shared/laser scale")
    assert abs(f.first[i] - g.first[i]) < 3 * np.hypot(f.first_error[i], g.first_error[i]) + 0.02
    assert "shared/laser scale" in f.width_if_known


def test_cli_budget_off_writes_no_budget(tmp_path, capsys):
    spec = _survey(tmp_path, n_vents=1, draws=500)
    assert main(["survey", str(spec.path), "--out", str(tmp_path / "o"), "--budget", "off", "--quiet"]) == 0
    assert not (tmp_path / "o" / "budget.json").exists()
    assert main(["survey", str(spec.path), "--out", str(tmp_path / "p"), "--quiet"]) == 0
    assert (tmp_path / "p" / "budget.json").exists()


# ---- single estimates ------------------------------------------------------------------
def _product_indices(mv, sv, md, sd):
    """Analytic first-order and total indices of Y = v·d² for independent normal v and d (moments of the normal)."""
    Ed2, Ed4 = md ** 2 + sd ** 2, md ** 4 + 6 * md ** 2 * sd ** 2 + 3 * sd ** 4
    Ev2 = mv ** 2 + sv ** 2
    V = Ev2 * Ed4 - mv ** 2 * Ed2 ** 2
    Vv, Vd = sv ** 2 * Ed2 ** 2, mv ** 2 * (Ed4 - Ed2 ** 2)
    return np.array([Vd, Vv]) / V, np.array([V - Vv, V - Vd]) / V  # order: diameter, velocity


@pytest.mark.parametrize("mode", ["draws", "full"])
def test_orifice_budget_matches_the_analytic_product(mode):
    # With exact temperatures the heat power is ρΔh·(π/4)·v·d², a product of the two uncertain inputs.
    from ventflux.budget import estimate_budget
    from ventflux.orifice import orifice_discharge, physical_draws
    from ventflux.uncertainty import parse_uncertain
    from ventflux.units import Q_

    inputs = {"temperature": Q_(340.0, "degC"), "velocity": parse_uncertain("1.2 ± 0.2 m/s", "velocity", "v"),
              "diameter": parse_uncertain("8 ± 0.8 cm", "length", "d"), "pressure": Q_(25.0, "MPa"),
              "ambient_temperature": Q_(2.0, "degC")}
    ind = estimate_budget(orifice_discharge, inputs, mode=mode, draws=8000 if mode == "draws" else 4000, seed=3,
                          valid=physical_draws)
    S, ST = _product_indices(1.2, 0.2, 8.0, 0.8)
    assert ind.names == ("diameter", "velocity")
    assert np.all(np.abs(ind.first - S) < 3 * ind.first_error + 0.01), (ind.first, S, ind.first_error)
    if mode == "full":
        assert np.all(np.abs(ind.total - ST) < 3 * ind.total_error + 0.01), (ind.total, ST)
    else:
        assert np.all(ind.total + 3 * ind.total_error >= ST)  # the given-data total is an upper bound
    assert set(ind.width_if_known) == {"diameter", "velocity"}


def test_orifice_command_prints_and_returns_the_budget(capsys):
    args = ["orifice", "--exit-temperature", "340 ± 3 degC", "--velocity", "1.2 ± 0.2 m/s", "--diameter", "8 ± 0.5 cm",
            "--absolute-pressure", "25 MPa", "--ambient-temperature", "2 degC", "--draws", "3000", "--budget"]
    assert main(args) == 0
    out = capsys.readouterr().out
    assert "Uncertainty budget of heat power" in out and "--velocity" in out
    assert main(args + ["--json"]) == 0
    rows = json.loads(capsys.readouterr().out)["budget"]
    assert rows[0]["input"] == "velocity" and rows[0]["rank"] == 1


def test_orifice_budget_takes_the_draws_and_seed_as_typed(capsys):
    """--draws and --seed reach the budget parsed like the estimate's own (they arrive from argparse as text)."""
    import json

    from ventflux.cli import main

    argv = ["orifice", "--exit-temperature", "352 ± 3 degC", "--velocity", "1.4 ± 0.2 m/s", "--diameter", "12 ± 1 cm",
            "--depth", "2550 m", "--ambient-temperature", "2.1 degC", "--budget", "--draws", "2000", "--seed", "5",
            "--json"]
    assert main(argv) == 0
    rows = json.loads(capsys.readouterr().out)["budget"]
    assert {r["input"] for r in rows} >= {"velocity", "diameter"}


def _lognormal_product_indices(exponents, factors):
    """Analytic first-order and total indices of Y = Π X_i^a_i for independent lognormal X_i (geometric
    standard deviation f_i, log-sd σ_i = ln f_i): Var E[Y|X_i] = (EY)² (exp(a_i² σ_i²) − 1) and
    Var Y = (EY)² (exp(Σ a_j² σ_j²) − 1), from the lognormal moments E[X^k] = exp(kμ + k²σ²/2)."""
    s2 = (np.asarray(exponents, float) * np.log(np.asarray(factors, float))) ** 2
    V = np.expm1(s2.sum())
    first = np.expm1(s2) / V
    total = 1 - np.expm1(s2.sum() - s2) / V  # 1 − Var E[Y|X_~i] / Var Y
    return first, total


@pytest.mark.parametrize("mode", ["draws", "full"])
def test_plume_rise_budget_of_the_closed_form_names_the_rise_height(capsys, mode):
    # Closed form (Morton, Taylor & Turner 1956; Briggs 1969): F = π (z/5.0)^4 N^3 and H ∝ F at fixed ambient,
    # so H is a product of powers of the two lognormal inputs: exponents 4 (height) and 3 (N).
    argv = ["plume-rise", "--rise-height", "lognormal(200, 1.1) m", "--buoyancy-frequency",
            "lognormal(1e-3, 1.05) 1/s", "--ambient-temperature", "2 degC", "--ambient-salinity", "34.6",
            "--depth", "2500 m", "--method", "closed-form", "--draws", "4000", "--budget", mode, "--json"]
    assert main(argv) == 0
    rows = {r["input"]: r for r in json.loads(capsys.readouterr().out)["budget"]}
    S, ST = _lognormal_product_indices([4, 3], [1.1, 1.05])  # ≈ (0.862, 0.119), totals ≈ (0.881, 0.138)
    assert rows["rise_height"]["rank"] == 1 and rows["buoyancy_frequency"]["rank"] == 2
    for i, name in enumerate(("rise_height", "buoyancy_frequency")):
        r = rows[name]
        assert abs(r["first_order"] - S[i]) < 3 * r["first_order_error"] + 0.02, (name, r, S)
        assert abs(r["total_effect"] - ST[i]) < 3 * r["total_effect_error"] + 0.02, (name, r, ST)
        assert r["width_if_known_W"] > 0
    assert main(argv[:-1]) == 0
    out = capsys.readouterr().out
    assert "Uncertainty budget of heat power" in out and "--rise-height" in out and "--buoyancy-frequency" in out


@pytest.mark.parametrize("mode", ["draws", "full"])
def test_diffuse_budget_of_one_patch_names_the_velocity(capsys, mode):
    # H = ρ·w·A·f·Δh: with f and the anomaly exact, a product of the lognormal velocity and area (exponents 1).
    argv = ["diffuse", "--area", "lognormal(12, 1.1) m^2", "--active-fraction", "0.4", "--anomaly", "3.2 K",
            "--velocity", "lognormal(0.8, 1.5) cm/s", "--ambient-temperature", "2.1 degC", "--depth", "2200 m",
            "--draws", "4000", "--budget", mode, "--json"]
    assert main(argv) == 0
    rows = {r["input"]: r for r in json.loads(capsys.readouterr().out)["budget"]}
    S, ST = _lognormal_product_indices([1, 1], [1.5, 1.1])  # ≈ (0.943, 0.048)
    assert rows["velocity"]["rank"] == 1 and set(rows) == {"velocity", "area"}
    for i, name in enumerate(("velocity", "area")):
        r = rows[name]
        assert abs(r["first_order"] - S[i]) < 3 * r["first_order_error"] + 0.02, (name, r, S)
        assert abs(r["total_effect"] - ST[i]) < 3 * r["total_effect_error"] + 0.02, (name, r, ST)
    # Knowing the velocity exactly leaves the area's spread: most of the 5–95 % width goes.
    assert rows["velocity"]["width_if_known_W"] < 0.4 * rows["velocity"]["width_p05_p95_W"]


def test_diffuse_budget_of_a_patch_table_is_refused_in_one_line(capsys, tmp_path):
    table = tmp_path / "p.csv"
    table.write_text("patch,area [m^2],active_fraction,temperature_anomaly [K],velocity [cm/s]\nA,4,0.5,2,0.4\n",
                     encoding="utf-8")
    rc = main(["diffuse", "--patches", str(table), "--ambient-temperature", "2 degC", "--depth", "2000 m",
               "--draws", "200", "--budget"])
    err = capsys.readouterr().err
    assert rc == 2 and len(err.strip().splitlines()) == 1 and "--budget" in err and "survey" in err
