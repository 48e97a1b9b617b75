"""The one propagation driver: named streams, one rule for impossible draws, and one answer per question.

The command line and a survey must give *identical* draws for the same
orifice, patch and plume (same seed, same input names), so their summaries
agree to rounding, not merely within Monte Carlo noise.
"""

import json

import numpy as np
import pytest
from conftest import survey_site
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.cli import main
from ventflux.errors import InputError
from ventflux.survey.run import run_survey
from ventflux.survey.spec import load_survey
from ventflux.uncertainty import (
    DEFAULT_MAX_UNPHYSICAL,
    SharedDraws,
    Uncertain,
    UnphysicalPolicy,
    draw_inputs,
    normal,
    propagate,
    stream_key,
)
from ventflux.units import Q_

SEED = 4321
DRAWS = 3000

SITE = survey_site(ambient_temperature="2.0 ± 0.05 degC", ambient_salinity=None, draws=DRAWS, seed=SEED)


def _survey(tmp_path, text):
    path = tmp_path / "survey.toml"
    path.write_text(text, encoding="utf-8")
    return run_survey(load_survey(path))


def _cli_json(capsys, argv):
    assert main(argv + ["--json"]) == 0
    return json.loads(capsys.readouterr().out)


# -- the driver itself -----------------------------------------------------------
def test_streams_are_keyed_by_name_not_by_order_or_company():
    u = Uncertain("normal", 1.0, 0.1, "m/s")
    a = SharedDraws(100, seed=3)
    b = SharedDraws(100, seed=3)
    b.draw("other input", Uncertain("normal", 5.0, 1.0, "m"))  # another input drawn first
    np.testing.assert_array_equal(a.draw("vent/velocity", u).magnitude, b.draw("vent/velocity", u).magnitude)
    assert not np.array_equal(a.draw("vent/velocity", u).magnitude, a.draw("vent 2/velocity", u).magnitude)
    # draw_inputs is the same mechanism: one stream per name
    np.testing.assert_array_equal(draw_inputs({"vent/velocity": u}, 100, 3)["vent/velocity"].magnitude,
                                  a.draw("vent/velocity", u).magnitude)


def test_stream_key_is_stable_across_processes():
    # BLAKE2b of the UTF-8 name (hashlib), not Python's salted hash(): a fixed value.
    import hashlib

    d = hashlib.blake2b(b"site/ambient temperature", digest_size=8).digest()
    assert stream_key("site/ambient temperature") == (int.from_bytes(d[:4], "little"), int.from_bytes(d[4:], "little"))


def _positive_sum(x, y):
    return x + y


def _positive(args):
    return (np.asarray(args["x"].magnitude) > 0) & (np.asarray(args["y"].magnitude) > 0)


def test_unphysical_draws_are_dropped_counted_and_refused_above_the_limit():
    # x ~ N(1, 0.5): P(x <= 0) = Phi(-2) = 2.275 % (normal table), under the 5 % limit.
    inputs = {"x": normal(Q_(1.0, "m"), Q_(0.5, "m")), "y": Q_(1.0, "m")}
    p = propagate(_positive_sum, inputs, draws=20_000, seed=1, physical=_positive)
    assert p.unphysical == pytest.approx(0.02275 * 20_000, rel=0.15)
    assert p.result.magnitude.size == p.kept == 20_000 - p.unphysical
    assert p.policy.max_share == DEFAULT_MAX_UNPHYSICAL
    assert p.provenance()["max_unphysical_share"] == 0.05
    # The same inputs with a limit of 1 % are refused, naming the input.
    with pytest.raises(InputError) as err:
        propagate(_positive_sum, inputs, draws=20_000, seed=1, physical=_positive, max_unphysical=0.01)
    assert err.value.field == "x" and "1.0%" in err.value.allowed
    # x ~ N(1, 1): P(x <= 0) = Phi(-1) = 15.9 %: refused at the default limit.
    with pytest.raises(InputError) as err:
        propagate(_positive_sum, {"x": normal(Q_(1.0, "m"), Q_(1.0, "m")), "y": Q_(1.0, "m")}, draws=2000,
                  physical=_positive)
    assert err.value.field == "x"


def test_expand_puts_dropped_draws_back_as_nan():
    p = propagate(_positive_sum, {"x": normal(Q_(1.0, "m"), Q_(0.5, "m")), "y": Q_(1.0, "m")}, draws=1000,
                  seed=2, physical=_positive)
    full = p.expand(p.result).magnitude
    assert full.shape == (1000,) and np.count_nonzero(np.isnan(full)) == p.unphysical


@pytest.mark.parametrize("share", [-0.1, 1.0, "a lot"])
def test_policy_refuses_a_limit_that_is_not_a_share(share):
    with pytest.raises(InputError):
        UnphysicalPolicy(share)


def test_unnamed_uncertain_input_is_refused_when_names_are_given():
    with pytest.raises(InputError):
        propagate(_positive_sum, {"x": normal(Q_(1.0, "m"), Q_(0.1, "m")), "y": Q_(1.0, "m")}, names={"y": "y"})


# -- one answer per question: command line and survey ----------------------------------------
ORIFICE = {"temperature": "352 ± 4 degC", "velocity": "1.2 ± 0.15 m/s", "diameter": "9 ± 0.5 cm"}


def test_orifice_cli_and_survey_draw_identically(tmp_path, capsys):
    text = SITE + '\n[[vent]]\nname = "Vent V"\n  [[vent.orifice]]\n' + "".join(
        f'  {k} = "{v}"\n' for k, v in ORIFICE.items())
    result = _survey(tmp_path, text)
    H = result.vents[0].methods["orifice"].heat_power.to("MW").magnitude
    argv = ["orifice", "--name", "Vent V", "--depth", "2500 m", "--latitude", "10", "--ambient-temperature",
            "2.0 ± 0.05 degC", "--draws", str(DRAWS), "--seed", str(SEED)]
    for k, v in ORIFICE.items():
        argv += [f"--{k}", v]
    out = _cli_json(capsys, argv)
    assert out["unphysical_draws"] == int(np.count_nonzero(np.isnan(H)))
    assert out["heat_power_W_p05"] / 1e6 == pytest.approx(np.nanpercentile(H, 5), rel=1e-12)
    assert out["heat_power_W_p95"] / 1e6 == pytest.approx(np.nanpercentile(H, 95), rel=1e-12)
    assert out["heat_power_W_mean"] / 1e6 == pytest.approx(np.nanmean(H), rel=1e-12)
    assert out["max_unphysical_share"] == 0.05


def test_orifice_cli_max_unphysical_is_settable(capsys):
    # 0.6 ± 0.3 m/s: P(v <= 0) = Phi(-2) = 2.3 % of draws (normal table)
    argv = ["orifice", "--depth", "2500 m", "--ambient-temperature", "2 degC", "--exit-temperature", "300 degC",
            "--velocity", "0.6 ± 0.3 m/s", "--diameter", "5 cm", "--draws", "4000"]
    out = _cli_json(capsys, argv)
    assert 0 < out["unphysical_draws"] < 0.05 * 4000
    assert main(argv + ["--max-unphysical", "0.001"]) == 2
    err = capsys.readouterr().err
    assert "--velocity" in err and "0.1%" in err


PATCHES = ("patch,class,area [m^2],area_sd [m^2],active_fraction,active_fraction_sd,"
           "temperature_anomaly [K],temperature_anomaly_sd [K],velocity [cm/s],velocity_sd [cm/s]\n"
           "P1,mat,18.5,1.5,0.37,0.05,6.1,0.6,0.16,0.07\n"
           "P2,mat,28.2,2.3,0.39,0.05,2.5,0.6,0.19,0.07\n"
           "P3,crack,9.5,0.8,0.20,0.05,0.5,0.4,0.05,0.02\n"
           "P4,crack,12.0,1.0,0.25,0.05,1.5,0.4,0.09,0.02\n")
CLASSES = "class,area [m^2],area_sd [m^2]\nmat,1850,250\ncrack,4200,600\n"


def test_diffuse_cli_and_survey_draw_identically_with_scale_up(tmp_path, capsys):
    (tmp_path / "patches.csv").write_text(PATCHES, encoding="utf-8")
    (tmp_path / "classes.csv").write_text(CLASSES, encoding="utf-8")
    result = _survey(tmp_path, SITE + '\n[diffuse]\npatches = "patches.csv"\nclasses = "classes.csv"\n')
    H = result.sections["diffuse"].heat_power.to("W").magnitude.sum(axis=0)
    out = _cli_json(capsys, ["diffuse", "--patches", str(tmp_path / "patches.csv"), "--classes",
                             str(tmp_path / "classes.csv"), "--ambient-temperature", "2.0 ± 0.05 degC", "--depth",
                             "2500 m", "--latitude", "10", "--draws", str(DRAWS), "--seed", str(SEED)])
    su = out["scale_up"]
    assert su["heat_power_W_p05"] == pytest.approx(np.nanpercentile(H, 5), rel=1e-12)
    assert su["heat_power_W_p95"] == pytest.approx(np.nanpercentile(H, 95), rel=1e-12)
    assert su["heat_power_W_median"] == pytest.approx(np.nanmedian(H), rel=1e-12)
    # A sediment-like patch (0.5 ± 0.4 K, 0.05 ± 0.02 cm/s) is drawn within its physical range, not clipped.
    assert out["unphysical_draws"] == 0


def test_diffuse_shared_velocity_spread_too_wide_is_refused_not_clipped(capsys):
    # 0.6 ± 3 cm/s: P(w <= 0) = Phi(-0.2) = 42 % of draws (normal table) -> refused, naming the option.
    rc = main(["diffuse", "--area", "10 m^2", "--active-fraction", "0.5", "--anomaly", "3 K", "--velocity",
               "0.6 ± 3 cm/s", "--ambient-temperature", "2 degC", "--depth", "2000 m", "--draws", "2000"])
    assert rc == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--velocity" in err[0] and "5.0%" in err[0]


def test_diffuse_dropped_draws_are_counted(capsys):
    # 1 ± 0.5 cm/s: Phi(-2) = 2.3 % of draws have w <= 0 (normal table): dropped and counted.
    out = _cli_json(capsys, ["diffuse", "--area", "10 m^2", "--active-fraction", "0.5", "--anomaly", "3 K",
                             "--velocity", "1 ± 0.5 cm/s", "--ambient-temperature", "2 degC", "--depth", "2000 m",
                             "--draws", "20000"])
    assert out["unphysical_draws"] == pytest.approx(0.02275 * 20000, rel=0.15)


def test_from_mean_sd_keeps_mean_and_sd_inside_the_bound():
    from ventflux.uncertainty import from_mean_sd

    rng = np.random.default_rng(0)
    for bound, mean, sd in (("positive", 0.52, 0.38), ("fraction", 0.08, 0.05), (None, 1.0, 0.2)):
        x = from_mean_sd(mean, sd, "dimensionless", bound).sample(400_000, rng).magnitude
        assert x.mean() == pytest.approx(mean, rel=0.01) and x.std() == pytest.approx(sd, rel=0.01)
        if bound:
            assert x.min() > 0 and (bound != "fraction" or x.max() < 1)


@given(st.floats(1e-300, 1e300), st.floats(-6.0, 330.0))
@settings(max_examples=200, deadline=None, derandomize=True)
def test_from_mean_sd_positive_is_a_lognormal_of_that_mean_and_sd_or_one_clear_refusal(mean, log10_ratio):
    # Lognormal moments (Johnson, Kotz & Balakrishnan 1994, ch. 14): mean = median·exp(σ²/2),
    # variance = mean²·(exp(σ²) − 1). Either the parameters reproduce them, or InputError; never an overflow.
    # Relative spreads from 1e-6 (below that the factor exp(σ), stored as a float, holds fewer digits of σ).
    from ventflux.uncertainty import from_mean_sd

    with np.errstate(over="ignore"):  # the largest ratios are capped at the largest sd a float holds
        sd = float(min(np.float64(mean) * np.power(10.0, log10_ratio), 1e308))
    try:
        u = from_mean_sd(mean, sd, "m", "positive")
    except InputError:
        # only when the median, about mean²/sd, falls below the smallest full-precision float
        assert np.log(mean) - np.log(sd / mean) < np.log(np.finfo(float).tiny) + 1.0
        return
    s2 = np.log(u.b) ** 2  # u.b is the factor exp(σ)
    assert np.log(u.a) + s2 / 2 == pytest.approx(np.log(mean), rel=1e-9, abs=1e-9)
    # sd/mean = √(exp(σ²) − 1), compared in logarithms (the ratio reaches 1e300)
    assert 0.5 * (s2 + np.log(-np.expm1(-s2))) == pytest.approx(np.log(sd / mean), rel=1e-6, abs=1e-6)


def test_plume_rise_cli_and_survey_draw_identically(tmp_path, capsys):
    site = SITE.replace('depth = "2500 m"', 'absolute_pressure = "25 MPa"').replace(f"draws = {DRAWS}", "draws = 400")
    text = site + ('\n[[vent]]\nname = "Vent P"\n  [vent.plume_rise]\n  rise_height = "250 ± 25 m"\n'
                   '  buoyancy_frequency = "1.0e-3 ± 1e-4 1/s"\n  entrainment = "0.12 ± 0.01"\n')
    result = _survey(tmp_path, text)
    H = result.vents[0].methods["plume_rise"].heat_power.to("W").magnitude
    out = _cli_json(capsys, ["plume-rise", "--name", "Vent P", "--rise-height", "250 ± 25 m", "--buoyancy-frequency",
                             "1.0e-3 ± 1e-4 1/s", "--entrainment", "0.12 ± 0.01", "--absolute-pressure", "25 MPa",
                             "--ambient-temperature", "2.0 degC", "--ambient-salinity", "35", "--latitude", "10",
                             "--longitude", "-100", "--draws", "400", "--seed", str(SEED)])
    assert out["unphysical_draws"] == int(np.count_nonzero(np.isnan(H)))
    assert out["heat_power_W_p05"] == pytest.approx(np.nanpercentile(H, 5), rel=1e-10)
    assert out["heat_power_W_p95"] == pytest.approx(np.nanpercentile(H, 95), rel=1e-10)
    assert out["heat_power_W_median"] == pytest.approx(np.nanmedian(H), rel=1e-10)


def test_survey_reservoir_is_the_summarize_reservoir_answer_on_the_field_draws(tmp_path, capsys):
    from ventflux import summarizer

    text = SITE + '\n[[vent]]\nname = "Vent R"\n  [[vent.orifice]]\n' + "".join(
        f'  {k} = "{v}"\n' for k, v in ORIFICE.items()) + (
        '\n[[reservoir]]\nname = "lens"\nsupplies = "focused"\nvolume = "2 km^3"\n'
        'temperature_drop = "500 K"\nporosity = 0\n')
    result = _survey(tmp_path, text)
    r = result.reservoirs[0]
    direct = summarizer.reservoir_answer(result.focused.draws.to("W"), Q_(500, "K"), volume=Q_(2, "km^3"),
                                         porosity=0.0, seed=SEED)
    assert r["mining"].median.to("year").magnitude == pytest.approx(
        direct.value("heat_mining_time").to("year").magnitude, rel=1e-12)
    # With an exact power the command takes the same route (one evaluation, no draws).
    out = _cli_json(capsys, ["summarize", "reservoir", "--heat-power", "100 MW", "--volume", "2 km^3",
                             "--temperature-drop", "500 K", "--porosity", "0"])
    exact = summarizer.reservoir_answer(Q_(100, "MW"), Q_(500, "K"), volume=Q_(2, "km^3"), porosity=0.0)
    assert out["heat_mining_time_s"] == pytest.approx(exact.value("heat_mining_time").to("s").magnitude)


@settings(max_examples=60, deadline=None)
@given(mean=st.floats(-2, 5), sd=st.floats(0.01, 3), share=st.floats(0, 0.5), seed=st.integers(0, 2**32 - 1))
def test_driver_drops_exactly_the_impossible_draws_and_refuses_only_above_the_limit(mean, sd, share, seed):
    inputs = {"x": normal(Q_(mean, "m"), Q_(sd, "m")), "y": Q_(1.0, "m")}
    n = 500
    x = SharedDraws(n, seed).draw("x", inputs["x"]).magnitude  # the same stream the driver draws from
    bad = int(np.count_nonzero(x <= 0))
    if bad > share * n:
        with pytest.raises(InputError):
            propagate(_positive_sum, inputs, draws=n, seed=seed, physical=_positive, max_unphysical=share)
        return
    p = propagate(_positive_sum, inputs, draws=n, seed=seed, physical=_positive, max_unphysical=share)
    assert p.unphysical == bad and p.kept == n - bad
    np.testing.assert_array_equal(p.result.magnitude, x[x > 0] + 1.0)


@pytest.mark.parametrize("row, key", [
    ("P1,mat,18.5,1.5,0.9,0.35,6.1,0.6,0.16,0.07", "active_fraction_sd"),  # 0.35 > sqrt(0.9 * 0.1) = 0.3
    ("P1,mat,18.5,1.5,1.0,0.05,6.1,0.6,0.16,0.07", "active_fraction_sd"),  # a fraction of 1 cannot spread
    ("P1,mat,0,1.5,0.4,0.05,6.1,0.6,0.16,0.07", "area_sd"),  # a zero area cannot spread
])
def test_patch_sd_without_a_distribution_in_range_is_refused_when_read(tmp_path, row, key):
    from ventflux.diffuse import read_patch_table
    from ventflux.errors import InputErrors

    path = tmp_path / "p.csv"
    path.write_text(PATCHES.splitlines()[0] + "\n" + row + "\n", encoding="utf-8")
    with pytest.raises((InputError, InputErrors)) as err:
        read_patch_table(path)
    assert key in str(err.value) and "p.csv:2" in str(err.value)


ONE_PATCH = ["diffuse", "--anomaly", "3.2 K", "--velocity", "0.8 cm/s", "--ambient-temperature", "2.1 degC",
             "--depth", "2200 m", "--draws", "500"]


@pytest.mark.parametrize("area, fraction", [("12 ± 2 m^2", "0.4 ± 0.1"), ("12 m^2", "0.4 ± 0")])
def test_single_patch_with_shared_distributions_runs(capsys, area, fraction):
    out = _cli_json(capsys, ONE_PATCH + ["--area", area, "--active-fraction", fraction])
    assert len(out["patches"]) == 1 and out["heat_power_W"] > 0


def test_non_finite_exact_input_is_one_line(capsys):
    assert main(ONE_PATCH + ["--area", "12 m^2", "--active-fraction", "nan"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--active-fraction" in err[0] and "finite" in err[0]


def test_survey_max_unphysical_option_overrides_the_file_and_is_recorded(tmp_path, capsys):
    # 0.6 ± 0.3 m/s: P(v <= 0) = Phi(-2) = 2.3 % of draws (normal table): under the file's 5 %, above 1 %
    path = tmp_path / "survey.toml"
    path.write_text(SITE + '\n[[vent]]\nname = "Vent V"\n  [[vent.orifice]]\n  temperature = "300 degC"\n'
                    '  velocity = "0.6 ± 0.3 m/s"\n  diameter = "5 cm"\n', encoding="utf-8")
    out = tmp_path / "results"
    argv = ["survey", str(path), "--quiet", "--budget", "off", "--out", str(out)]
    assert main(argv + ["--max-unphysical", "0.01"]) == 2
    err = capsys.readouterr().err
    assert "velocity" in err and "1.0%" in err and not out.exists()
    assert "--max-unphysical" in err and "run.max_unphysical" not in err  # the limit is named where it was set
    assert main(argv + ["--max-unphysical", "0.2"]) == 0
    capsys.readouterr()
    provenance = json.loads((out / "summary.json").read_text())["provenance"]
    assert provenance["max_unphysical_share"] == 0.2
    assert 0.01 * DRAWS < provenance["unphysical_draws"] < 0.04 * DRAWS


def test_screen_drops_and_refuses_exactly_as_propagate_does():
    # The check's screening is the driver's own first half: same count of impossible draws, same refusal line.
    from ventflux.uncertainty import normal, propagate, screen

    inputs = {"x": normal(Q_(1.0, "m"), Q_(0.6, "m")), "y": normal(Q_(2.0, "m"), Q_(1.1, "m"))}
    names = {"x": "test/x", "y": "test/y"}

    def physical(a):
        return (a["x"].magnitude > 0) & (a["y"].magnitude > 0)

    kept = propagate(lambda x, y: x * y, inputs, names=names, draws=2000, seed=7, physical=physical,
                     max_unphysical=0.2)
    assert kept.unphysical > 0
    assert screen(inputs, names=names, draws=2000, seed=7, physical=physical, max_unphysical=0.2) == kept.unphysical
    lines = []
    for run in (lambda: propagate(lambda x, y: x * y, inputs, names=names, draws=2000, seed=7, physical=physical),
                lambda: screen(inputs, names=names, draws=2000, seed=7, physical=physical)):
        with pytest.raises(InputError) as refused:
            run()
        lines.append(refused.value.line())
    assert lines[0] == lines[1]


def test_an_exact_input_that_makes_every_draw_impossible_is_named_not_a_drawn_one():
    # Every draw impossible because of an exact input (a factor of -1 where the estimate needs > 0): the driver
    # used to blame the drawn input that happened to rank first. With the drawn inputs at their central values
    # the estimate is still impossible, so the exact inputs are named, with their values.
    from ventflux.uncertainty import parse_uncertain

    a = parse_uncertain("1 ± 0.1 m", "length", "a")
    with pytest.raises(InputError) as e:
        propagate(lambda a, b: a * b, {"a": a, "b": Q_(-1.0, "m")}, names={"a": "x/a", "b": "x/b"}, draws=1000,
                  physical=lambda d: np.asarray(d["b"].m) > 0)
    assert e.value.field == "exact inputs" and "x/b = -1.0 m" in str(e.value.value)
    # impossible in some draws only (the drawn input crosses the limit): a drawn input is named, as before
    with pytest.raises(InputError) as e:
        propagate(lambda a, b: a * b, {"a": a, "b": Q_(1.0, "m")}, names={"a": "x/a", "b": "x/b"}, draws=1000,
                  physical=lambda d: np.asarray(d["a"].m) > 1.0)
    assert e.value.field == "x/a"
