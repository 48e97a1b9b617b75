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


# --- a shared input drawn once for the whole run: the check counts the run's own draws of it ------------------
SCALE = ('"camera scale" = "1.00 ± 0.02"', '"camera scale" = "1.00 ± 0.607"')  # its 5 % point just above 0


def _video_demo(tmp_path: Path) -> Path:
    """The demo with 2,000 draws, its probe records left out, the camera's scale error widened: about 5 % of
    the scale's draws are ≤ 0, which the video estimate drops, so whether the run refuses depends on the seed."""
    shutil.copytree(DEMO, tmp_path / "demo")
    path = tmp_path / "demo" / "survey.toml"
    text = path.read_text()
    assert SCALE[0] in text
    text = text.replace(*SCALE)
    text = re.sub(r"\n\[sediment_probes\].*?(?=\n\[field_plume\])", "\n", text, flags=re.DOTALL)
    text = re.sub(r"(?m)^draws\s*=\s*\d+", "draws = 2000", text)
    path.write_text(text)
    return path


def _seeds():
    """A seed whose run has more than 5 % of the 2,000 scale draws ≤ 0 and one with fewer (the run's stream)."""
    from ventflux.uncertainty import SharedDraws, parse_uncertain

    value = parse_uncertain("1.00 ± 0.607", "dimensionless", "scale")
    over = under = None
    for seed in range(1, 200):
        bad = int(np.count_nonzero(SharedDraws(2000, seed).draw("shared/camera scale", value).m <= 0))
        if bad > 100 and over is None:
            over = (seed, bad)
        if bad <= 100 and under is None:
            under = seed
        if over and under:
            return over, under
    raise AssertionError("no seeds on both sides")


def test_a_shared_input_the_run_would_refuse_is_refused_by_check_and_accepted_when_it_would_not(tmp_path):
    # A shared scale of 1.00 ± 0.607 passed --check whatever its spread (a shared value's share of draws ≤ 0 was
    # not checked at all) and the run refused it after analysing the clip. Now the check counts the run's own
    # draws of it: it refuses on the seeds where the run refuses, with the run's count, and accepts the others;
    # the run is then made on both seeds and compared with the check's verdict.
    path = _video_demo(tmp_path)
    (over, bad), under = _seeds()
    with pytest.raises((InputError, InputErrors)) as refused:
        load_survey(path, seed=over)
    e = refused.value
    lines = e.lines() if isinstance(e, InputErrors) else [e.line()]
    assert len(lines) == 1 and "vent[0].video.scale_factor (vent 'Gildhorn')" in lines[0], lines
    assert "'@camera scale = 1 ± 0.607'" in lines[0] and f"({bad} are ≤ 0" in lines[0]
    spec = load_survey(path, seed=under)
    run_survey(spec)  # accepted by the check: the run accepts it
    spec.seed = over  # the run on the seed the check refused
    with pytest.raises(InputError) as run_refused:
        run_survey(spec)
    assert run_refused.value.field == "shared/camera scale" and f"{bad} of 2000" in run_refused.value.allowed


def test_the_check_uses_the_runs_limit_for_an_input_of_its_own(tmp_path):
    # An orifice velocity of 1.2 ± 0.75 m/s is ≤ 0 in 5.5 % of its draws (normal distribution: Φ(-1.6) = 0.0548,
    # standard normal table): refused under the default 5 % limit, accepted when the run may drop 10 %.
    path = _demo(tmp_path, spike=False)
    text = path.read_text()
    assert 'velocity = "1.2 ± 0.2 m/s"' in text
    path.write_text(text.replace('velocity = "1.2 ± 0.2 m/s"', 'velocity = "1.2 ± 0.75 m/s"', 1))
    with pytest.raises((InputError, InputErrors),
                       match=r"orifice\[0\]\.velocity.*limit on impossible draws \(run\.max_unphysical\)"):
        load_survey(path)
    load_survey(path, max_unphysical=0.10)


def test_a_plume_check_that_takes_long_says_what_it_is_doing(tmp_path, monkeypatch):
    # A cast full of spikes made the plume check take 12 s with nothing on the screen: after a second the check
    # says which plume it is inverting, once; a quick check says nothing. Slowness is simulated by a pause in
    # the propagation the check calls (its result is unchanged).
    import threading
    import time

    from ventflux import waiting

    path = _demo(tmp_path, spike=False)
    said = []
    load_survey(path, progress=said.append)
    assert said == []  # the demo's plumes are checked in well under a second each
    real = plume_method.propagation

    def slow(*a, **k):
        time.sleep(0.5)
        return real(*a, **k)

    monkeypatch.setattr(plume_method, "propagation", slow)
    monkeypatch.setattr(waiting, "NOTICE_AFTER", 0.2)
    plume_method._HANDED_OVER.clear()
    load_survey(path, progress=said.append)
    assert len(said) == 2 and "'Gildhorn'" in said[0] and "field plume" in said[1], said
    assert all("inverting its plume rise on the run's 2000 draws" in m for m in said)
    assert threading.active_count() == 1  # no timer left behind: the run forks its workers after this
