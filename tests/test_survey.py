"""The field survey: validation of the whole file, correlated totals, atomic and provenance-carrying output."""

import hashlib
import json
from pathlib import Path

import numpy as np
import pytest
from conftest import survey_site

from ventflux.cli import main
from ventflux.errors import InputError, InputErrors
from ventflux.survey import report
from ventflux.survey.run import run_survey
from ventflux.survey.spec import load_survey

SITE = survey_site(draws=4000, seed=5)

VENT = """
[[vent]]
name = "{name}"
  [[vent.orifice]]
  exit_temperature = "350 degC"
  velocity = "1.0 m/s"
  diameter = "10 cm"
  size_factor = "{factor}"
"""


def _write(tmp_path, text, name="survey.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_every_problem_is_reported_at_once(tmp_path):
    text = SITE.replace('latitude = 10.0\n', '') + """
[[vent]]
name = "A"
colour = "red"
  [[vent.orifice]]
  exit_temperature = "350 degC"
  velocity = "1.0 s"
  diameter = "-3 cm"

  [[vent.orifice]]
  exit_temperature = "1.5 degC"
  velocity = "1.0 m/s"
  diameter = "3 cm"

[diffuse]
patches = "missing.csv"
"""
    with pytest.raises(InputErrors) as err:
        load_survey(_write(tmp_path, text))
    lines = err.value.lines()
    joined = "\n".join(lines)
    for needle in ("site.latitude", "vent[0].colour", "vent[0].orifice[0].velocity", "vent[0].orifice[0].diameter",
                   "vent[0].orifice[1].exit_temperature", "diffuse.patches"):
        assert needle in joined, needle
    assert all(str(tmp_path / "survey.toml") in line for line in lines)


def test_cli_reports_all_problems_with_exit_2(tmp_path, capsys):
    text = SITE + VENT.format(name="A", factor="1.0").replace('"1.0 m/s"', '"-1 m/s"').replace('"10 cm"', '"10 K"')
    assert main(["survey", str(_write(tmp_path, text)), "--check"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 2 and "Traceback" not in "".join(err)


def test_boiling_exit_temperature_is_refused_before_computing(tmp_path):
    # At 12 MPa (about 1190 m) water boils at 324.68 degC (IAPWS-IF97 steam tables; from memory).
    text = SITE.replace('depth = "2500 m"', 'absolute_pressure = "12 MPa"') + VENT.format(
        name="A", factor="1.0").replace('"350 degC"', '"330 degC"')
    with pytest.raises((InputError, InputErrors)) as err:
        load_survey(_write(tmp_path, text))
    assert "vent[0].orifice[0].exit_temperature" in str(err.value) and "324.6" in str(err.value)


def test_csv_problems_name_file_and_line(tmp_path):
    (tmp_path / "p.csv").write_text("patch,class,area [m^2],active_fraction,temperature_anomaly [K],velocity [cm/s]\n"
                                    "P1,mat,10,0.5,3,0.2\nP2,mat,ten,1.5,3,0.2\n", encoding="utf-8")
    text = SITE + '\n[diffuse]\npatches = "p.csv"\n'
    with pytest.raises((InputError, InputErrors)) as err:
        load_survey(_write(tmp_path, text))
    assert "p.csv:3" in str(err.value)


def _run(tmp_path, text, out="out"):
    spec = load_survey(_write(tmp_path, text))
    result = run_survey(spec)
    return result, report.write_results(result, tmp_path / out)


def test_shared_scale_widens_total_as_computed_by_hand(tmp_path):
    # Two identical vents whose only uncertainty is the orifice scale s (relative
    # sd 3 %). Heat power goes as s^2 (area), so each vent's relative sd is about
    # 6 %. Shared scale: sd(total) = 2 sd(one); independent scales: sqrt(2) sd(one).
    # The ratio of the two is sqrt(2) (propagation of variance by hand).
    shared = SITE + '[shared]\n"laser" = "1.00 ± 0.03"\n' + VENT.format(name="A", factor="@laser") + \
        VENT.format(name="B", factor="@laser")
    indep = SITE + VENT.format(name="A", factor="1.00 ± 0.03") + VENT.format(name="B", factor="1.00 ± 0.03")
    r1, _ = _run(tmp_path, shared, "o1")
    r2, _ = _run(tmp_path, indep, "o2")
    ratio = r1.focused.summary.std.magnitude / r2.focused.summary.std.magnitude
    assert ratio == pytest.approx(np.sqrt(2), rel=0.05)
    one = r2.vents[0].heat_power.to("MW").magnitude
    assert np.std(one) / np.mean(one) == pytest.approx(0.06, rel=0.05)


def test_results_folder_is_complete_self_contained_and_inputs_untouched(tmp_path):
    text = SITE + VENT.format(name="A", factor="1.0")
    path = _write(tmp_path, text)
    before = hashlib.sha256(path.read_bytes()).hexdigest()
    _, html_path = _run(tmp_path, text)
    out = html_path.parent
    assert hashlib.sha256(path.read_bytes()).hexdigest() == before
    summary = json.loads((out / "summary.json").read_text())
    assert summary["complete"] is True
    assert summary["provenance"]["inputs"][str(path)]["sha256"] == before
    assert summary["provenance"]["seed"] == 5
    assert "ventflux" in summary["provenance"]["versions"]
    page = html_path.read_text()
    assert "data:image/svg+xml;base64," in page and "http://" not in page and "https://" not in page
    assert "operational safety" in page
    assert (out / "tables" / "vents.csv").exists()
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".part")]


def test_failed_run_leaves_no_results_folder(tmp_path, monkeypatch):
    text = SITE + VENT.format(name="A", factor="1.0")
    spec = load_survey(_write(tmp_path, text))
    result = run_survey(spec)

    def boom(*a, **k):
        raise RuntimeError("disk full")

    monkeypatch.setattr(report, "_html", boom)
    with pytest.raises(RuntimeError):
        report.write_results(result, tmp_path / "out")
    assert not (tmp_path / "out").exists()
    assert not [p for p in tmp_path.iterdir() if ".part" in p.name]


def _lines(tmp_path, text):
    with pytest.raises((InputError, InputErrors)) as err:
        load_survey(_write(tmp_path, text))
    e = err.value
    return e.lines() if isinstance(e, InputErrors) else [e.line()]


def test_a_refused_shared_value_is_one_line_not_one_per_key_that_uses_it(tmp_path):
    # A [shared] value refused by its own check is named once, where it is written; the keys that refer to it
    # used to add one line each, claiming the name was not defined in [shared].
    text = SITE + '[shared]\n"laser" = "1.0 ±"\n' + VENT.format(name="A", factor="@laser") + \
        VENT.format(name="B", factor="@laser")
    lines = _lines(tmp_path, text)
    assert len(lines) == 1 and "shared.laser" in lines[0], lines


def test_a_shared_value_meets_the_conditions_of_the_key_that_uses_it(tmp_path):
    # A size factor must be > 0: a shared -1 used as one is refused at the key, with the value it refers to
    # (it used to pass the check and make every draw of the orifice impossible in the run).
    lines = _lines(tmp_path, SITE + '[shared]\n"laser" = "-1"\n' + VENT.format(name="A", factor="@laser"))
    assert len(lines) == 1 and "vent[0].orifice[0].size_factor" in lines[0] and "'@laser = -1" in lines[0], lines
    assert "> 0" in lines[0]


def test_output_folder_holding_inputs_is_refused(tmp_path, capsys):
    path = _write(tmp_path, SITE + VENT.format(name="A", factor="1.0"))
    assert main(["survey", str(path), "--out", str(tmp_path), "--quiet"]) == 2
    assert "--out" in capsys.readouterr().err
    assert path.exists()


def test_demo_survey_validates():
    demo = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge" / "survey.toml"
    spec = load_survey(demo)
    assert spec.vents and spec.sections


def test_demo_survey_runs_end_to_end(tmp_path):
    # A smoke test of the whole pipeline on the fictional demo (no value is checked:
    # invented data are no check). Every method and section must contribute.
    pytest.importorskip("ventflux_video")
    pytest.importorskip("ventflux_thermal")
    demo = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge" / "survey.toml"
    spec = load_survey(demo)
    spec.draws = 1000
    result = run_survey(spec)
    html = report.write_results(result, tmp_path / "demo")
    gild = next(v for v in result.vents if v.name == "Gildhorn")
    assert set(gild.methods) == {"orifice", "plume_rise", "video"}
    assert gild.comparison is not None and len(gild.comparison.pairs) == 3
    assert {"diffuse", "sediment_probes", "field_plume", "ridge_flank"} <= set(result.sections)
    assert result.checks and result.checks[0][0] == "field_plume"
    assert result.conductive is not None and result.split is not None and result.reservoirs
    assert html.exists() and (tmp_path / "demo" / "tables" / "method_pairs.csv").exists()
    assert (tmp_path / "demo" / "tables" / "field_checks.csv").exists()
    assert (tmp_path / "demo" / "tables" / "ridge_flank.csv").exists()


def test_a_draw_count_that_cannot_fit_is_refused_before_anything_draws(monkeypatch, capsys):
    # the probe records are reduced with a Monte Carlo while the file is read: a --draws that cannot fit in memory
    # must be refused, naming --draws, before that reduction starts (not after it has filled the memory)
    pytest.importorskip("ventflux_thermal")
    import ventflux.resources as resources
    import ventflux_thermal.survey as probe_survey

    reduced = []
    monkeypatch.setattr(resources, "available_memory", lambda: 2**30)  # 1 GiB
    original = probe_survey._reduce
    monkeypatch.setattr(probe_survey, "_reduce", lambda *a, **k: reduced.append(1) or original(*a, **k))
    demo = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge" / "survey.toml"
    assert main(["survey", str(demo), "--draws", "2000000", "--check"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--draws" in err[0] and "2000000" in err[0] and "run.draws" not in err[0]
    assert reduced == []


def test_survey_json_prints_each_headline_interval_with_its_median(tmp_path, capsys):
    # --json prints the report's location and every 5 / 50 / 95 % point of summary.json (SI units in the keys)
    path = _write(tmp_path, SITE + VENT.format(name="A", factor="1.0"))
    assert main(["survey", str(path), "--out", str(tmp_path / "out"), "--quiet", "--json", "--budget", "off"]) == 0
    printed = json.loads(capsys.readouterr().out)
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    for q in ("p05", "p50", "p95"):
        assert printed[f"total_heat_power_W_{q}"] == summary[f"total_heat_power_W_{q}"]
    assert printed["report"].endswith("report.html")


def test_a_key_that_needs_one_exact_value_refuses_an_uncertain_shared_one(tmp_path):
    # A clip's frame rate is one number (not drawn): a shared "25 ± 1 Hz" referred to by it is refused at the key,
    # instead of reaching the estimate as a distribution.
    import shutil

    demo = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge"
    shutil.copytree(demo, tmp_path / "demo")
    path = tmp_path / "demo" / "survey.toml"
    text = path.read_text()
    assert '[shared]\n' in text and 'pixel_size = "4 mm"\n' in text
    text = text.replace('[shared]\n', '[shared]\n"fps" = "25 ± 1 Hz"\n', 1)
    path.write_text(text.replace('pixel_size = "4 mm"\n', 'pixel_size = "4 mm"\n  frame_rate = "@fps"\n', 1))
    with pytest.raises((InputError, InputErrors)) as err:
        load_survey(path)
    e = err.value
    lines = e.lines() if isinstance(e, InputErrors) else [e.line()]
    assert len(lines) == 1 and "vent[0].video.frame_rate" in lines[0] and "one exact frequency" in lines[0], lines
