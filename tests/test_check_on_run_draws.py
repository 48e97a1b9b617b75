"""``--check`` draws and screens as the run does, on the run's draws, so that what it accepts the run accepts.

A spike of fresher water deep in the CTD cast can cap the plumes of the high rise heights and strong
entrainments together: each input at its 5 % and 95 % points alone still has a solution, while 15 % of the
run's draws have none (found by the whole-demo fuzz in ``test_check_fuzz.py``). The demo's data are the inputs;
the check's verdict is compared with the run's own refusal, not with a number of ours.
"""

import re
import shutil
from pathlib import Path

import numpy as np
import pytest

from ventflux.errors import InputError, InputErrors
from ventflux.survey import plume_method
from ventflux.survey.run import run_survey
from ventflux.survey.spec import load_survey

DEMO = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge"
SPIKE = ("2250.0,2.2733,34.6729", "2250.0,2.2733,34.4229")  # 0.25 g/kg fresher at 2250 dbar, one sample


def _demo(tmp_path: Path, spike: bool) -> Path:
    """The demo with 2,000 draws, without its video and probe records (not needed here), spiked or not."""
    shutil.copytree(DEMO, tmp_path / "demo")
    path = tmp_path / "demo" / "survey.toml"
    text = path.read_text()
    text = re.sub(r"\n  \[vent\.video\].*?(?=\n  \[\[vent\.orifice\]\])", "\n", text, flags=re.DOTALL)
    text = re.sub(r"\n\[sediment_probes\].*?(?=\n\[field_plume\])", "\n", text, flags=re.DOTALL)
    text = re.sub(r"(?m)^draws\s*=\s*\d+", "draws = 2000", text)
    path.write_text(text)
    if spike:
        cast = tmp_path / "demo" / "data" / "ctd_cast.csv"
        body = cast.read_text()
        assert SPIKE[0] in body
        cast.write_text(body.replace(*SPIKE))
    return path


def test_a_spike_that_caps_the_plume_in_many_draws_is_refused_by_check(tmp_path):
    path = _demo(tmp_path, spike=True)
    with pytest.raises((InputError, InputErrors)) as refused:
        load_survey(path)
    e = refused.value
    every = e.lines() if isinstance(e, InputErrors) else [e.line()]
    lines = [line for line in every if "field_plume.rise_height" in line]
    assert len(lines) == 1, every
    assert "'290 ± 35 m'" in lines[0] and "without a plume solution" in lines[0]


def test_the_check_refuses_what_the_run_refuses(tmp_path):
    # The same spiked file, its plume propagated as the run propagates it: the run's own refusal, which the
    # check turned into its line above.
    path = _demo(tmp_path, spike=True)
    spec = load_survey(_demo(tmp_path / "clean", spike=False))  # a valid spec; its cast is then spiked
    spec.site.ctd = path.parent / "data" / "ctd_cast.csv"
    plume_method._HANDED_OVER.clear()
    with pytest.raises(InputError) as refused:
        run_survey(spec)
    assert refused.value.field == "field plume/plume_rise"
    assert "without a plume solution" in str(refused.value.value)


def test_the_check_hands_its_propagation_to_the_run_draw_for_draw(tmp_path):
    plume_method._HANDED_OVER.clear()
    spec = load_survey(_demo(tmp_path, spike=False))
    assert len(plume_method._HANDED_OVER) == 2  # the vent's plume and the field plume
    handed = run_survey(spec)
    assert not plume_method._HANDED_OVER  # taken once
    solved = run_survey(spec)  # solved again
    gild = [v for v in handed.vents if v.name == "Gildhorn"][0].methods["plume_rise"]
    again = [v for v in solved.vents if v.name == "Gildhorn"][0].methods["plume_rise"]
    np.testing.assert_array_equal(gild.heat_power.m_as("W"), again.heat_power.m_as("W"))
    np.testing.assert_array_equal(handed.sections["field_plume"].heat_power.m_as("W"),
                                  solved.sections["field_plume"].heat_power.m_as("W"))
    assert handed.draws.describe() == solved.draws.describe()  # the plume's inputs are known to the run


def test_other_draws_are_solved_not_handed_over(tmp_path):
    plume_method._HANDED_OVER.clear()
    spec = load_survey(_demo(tmp_path, spike=False))
    spec.seed += 1  # e.g. the Python API's run(seed=...)
    spec.draws = 1000
    result = run_survey(spec)
    assert len(plume_method._HANDED_OVER) == 2  # not taken: made for other draws
    assert result.sections["field_plume"].heat_power.shape[-1] == 1000


def test_an_input_whose_draws_cross_zero_just_above_the_limit_is_refused_by_check(tmp_path):
    # 1 ± 0.6: its 5 % point (0.013) is > 0, so a check of each input's 5 % point passed it, while 102 of the
    # run's 2,000 draws (5.1 %) are ≤ 0 and the run refused it. The check now meets the same draws.
    path = _demo(tmp_path, spike=False)
    path.write_text(path.read_text().replace("[field_plume]\n", '[field_plume]\nstratification_scale = "1 ± 0.600"\n'))
    with pytest.raises(InputError) as refused:
        load_survey(path)
    assert refused.value.field == "field_plume.stratification_scale" and refused.value.value == "1 ± 0.600"
    assert "102 of 2000" in refused.value.allowed and "run.max_unphysical" in refused.value.allowed


def test_two_inputs_each_within_the_limit_that_drop_too_many_draws_together_are_refused_by_check(tmp_path):
    # Velocity 0.6 ± 0.35 m/s and diameter 5.0 ± 2.9 cm: each is ≤ 0 in about 4 % of its draws (within the 5 %
    # limit, so each passes its own range check) and together they drop 7.8 % of the orifice's 2,000 draws;
    # the run refused the file after --check had passed it.
    path = _demo(tmp_path, spike=False)
    path.write_text(path.read_text().replace('velocity = "0.6 ± 0.15 m/s"', 'velocity = "0.6 ± 0.35 m/s"')
                    .replace('diameter = "5.0 ± 0.5 cm"', 'diameter = "5.0 ± 2.9 cm"'))
    with pytest.raises(InputError) as refused:
        load_survey(path)
    e = refused.value
    assert e.field == "vent[2].orifice[0].velocity (vent 'Wickstack')" and e.value == "0.6 ± 0.35 m/s"
    assert "156 of 2000" in e.allowed


def test_the_orifice_screening_is_the_runs_own_refusal(tmp_path):
    # The same file run without its check: the run's refusal counts the same draws.
    spec = load_survey(_demo(tmp_path / "clean", spike=False))
    wick = [v for v in spec.vents if v.name == "Wickstack"][0].methods["orifice"][0]
    from ventflux.uncertainty import parse_uncertain

    wick["velocity"] = parse_uncertain("0.6 ± 0.35 m/s", "velocity", "velocity")
    wick["diameter"] = parse_uncertain("5.0 ± 2.9 cm", "length", "diameter")
    with pytest.raises(InputError) as refused:
        run_survey(spec)
    assert refused.value.field == "Wickstack/orifice[0]/velocity" and "156 of 2000" in refused.value.allowed
