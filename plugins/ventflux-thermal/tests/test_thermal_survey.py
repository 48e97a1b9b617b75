"""The [sediment_probes] survey section: keys, exclusions, stations, and its Monte Carlo through the core's draws."""

import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

sys.path.insert(0, str(Path(__file__).parent))  # the synthetic-record helper beside this file
from thermal_synthetic import make_record, make_station_record

from ventflux.aggregate import SharedDraws
from ventflux.errors import InputError, InputErrors
from ventflux.survey.fields import SharedRef
from ventflux.survey.run import run_survey
from ventflux.survey.spec import load_survey
from ventflux.uncertainty import normal
from ventflux.units import Q_
from ventflux_thermal.records import read_record
from ventflux_thermal.survey import heat_flow_draws

K = np.array([0.85, 1.05, 1.15, 0.9, 1.1])
DEPTHS = np.linspace(0.6, 3.0, 5)

SITE = """
[site]
name = "Test Site"
depth = "2500 m"
latitude = 10.0
longitude = -100.0
ambient_temperature = "2.0 degC"
ambient_salinity = 34.6

[run]
draws = 2000
seed = 5

[shared]
"probe calibration" = "1.00 ± 0.05"

[[vent]]
name = "A"
  [[vent.orifice]]
  exit_temperature = "350 degC"
  velocity = "1.0 m/s"
  diameter = "10 cm"
"""


class _Result:  # the two numbers heat_flow_draws reads from a reduction, plus its name
    def __init__(self, name, q, u):
        self.record, self.label, self.heat_flow, self.heat_flow_uncertainty = name, "", q, u


def test_shared_calibration_is_drawn_once_per_draw_for_every_station():
    d = SharedDraws(4000, seed=3)
    cal = normal(Q_(1.0, "dimensionless"), Q_(0.05, "dimensionless"))
    res = [_Result(f"st{i}.csv", 0.1 * (i + 1), 0.0) for i in range(3)]  # exact heat flows
    single = heat_flow_draws(res[:1], d, SharedRef("probe calibration", cal))
    c = d.draw("shared/probe calibration", cal).magnitude  # the one array every consumer of the name gets
    np.testing.assert_allclose(single, 0.1 * c)  # one station: its heat flow times that very draw
    # several stations: each draw's resampled mean is scaled by the same factor, so the ratio to the
    # calibration draw takes only values of a mean of resampled exact heat flows
    many = heat_flow_draws(res, d, SharedRef("probe calibration", cal)) / c
    assert np.all((many > 0.1 - 1e-12) & (many < 0.3 + 1e-12))
    assert np.all(np.isclose((many * 3 / 0.1) % 1, 0) | np.isclose((many * 3 / 0.1) % 1, 1))
    # deterministic: the same names give the same draws
    np.testing.assert_array_equal(many, heat_flow_draws(res, d, SharedRef("probe calibration", cal)) / c)


def test_section_with_a_station_exclusions_and_a_probe_table(tmp_path):
    make_record(tmp_path / "hf1.csv", "cylinder", k=K, depths=DEPTHS, q=0.3, t_end=1100.0)
    pens = [dict(t_pen=300, t_hp=720, t_out=1260, k=K, q=0.2), dict(t_pen=1700, t_hp=2120, t_out=2660, k=K, q=0.4)]
    make_station_record(tmp_path / "st.csv", pens, depths=DEPTHS, t_end=3000, pulse_duration=10.0)
    text = SITE + """
[sediment_probes]
records = ["hf1.csv"]
area = "1000 m^2"
calibration = "@probe calibration"
exclude_sensors = { "hf1.csv" = ["T3"] }

  [sediment_probes.probe]
  radius = "4 mm"

  [[sediment_probes.station]]
  record = "st.csv"
  exclude_sensors = ["T5"]
"""
    path = tmp_path / "survey.toml"
    path.write_text(text, encoding="utf-8")
    spec = load_survey(path)
    result = run_survey(spec)
    rows = result.sections["sediment_probes"].rows
    assert [(r["record"], r["penetration"]) for r in rows] == [("hf1.csv", ""), ("st.csv", "P01"), ("st.csv", "P02")]
    assert all(r["excluded_sensors"].startswith("T3") for r in rows[:1])
    assert all(r["excluded_sensors"].startswith("T5") for r in rows[1:])
    assert [r["heat_flow [mW/m^2]"] for r in rows] == pytest.approx([300, 200, 400], rel=0.05)


def test_bad_section_keys_name_their_path(tmp_path):
    make_record(tmp_path / "hf1.csv", "cylinder", k=K, depths=DEPTHS, q=0.3, t_end=1100.0)
    text = SITE + """
[sediment_probes]
records = ["hf1.csv"]
area = "1000 m^2"
exclude_sensors = { "other.csv" = ["T3"] }

  [sediment_probes.probe]
  radius = "-4 mm"
  colour = "red"

  [[sediment_probes.station]]
  record = "missing.csv"
"""
    path = tmp_path / "survey.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises((InputError, InputErrors)) as err:
        load_survey(path)
    lines = err.value.lines() if isinstance(err.value, InputErrors) else [err.value.line()]
    joined = "\n".join(lines)
    for needle in ("sediment_probes.exclude_sensors.other.csv", "sediment_probes.probe.radius",
                   "sediment_probes.probe.colour", "sediment_probes.station[0].record"):
        assert needle in joined, needle
    assert len(lines) == 4


@settings(max_examples=40, deadline=None)
@given(cells=st.lists(st.sampled_from(["", "nan", "2.5", "x", "1e400", "-", "3,"]), min_size=1, max_size=30))
def test_record_reader_fuzz_one_line_per_column(tmp_path_factory, cells):
    # Invariant: whatever a sensor column holds, the reader returns NaN gaps or raises InputError(s), at most one
    # per column, never anything else.
    path = tmp_path_factory.mktemp("fuzz") / "r.csv"
    rows = ["time [s],T1 [degC],T2 [degC]"] + [f"{i},{c},2.0" for i, c in enumerate(cells)]
    path.write_text("\n".join(rows) + "\n")
    try:
        rec = read_record(path)
    except InputErrors as e:
        assert len(e.errors) <= 2
    except InputError:
        pass
    else:
        assert rec.temperature.shape == (2, len(cells))


def test_probe_heat_flow_and_the_survey_draw_the_conductivity_fits_identically(tmp_path, capsys):
    """Same record and seed: ``probe-heat-flow`` and ``[sediment_probes]`` give the same conductivity-fit draws.

    Both run the fits' Monte Carlo through ``ventflux.uncertainty.propagate`` (``probe.fit_spread``) with the
    streams named by record, label and sensor, so the parts agree to rounding, not within Monte Carlo noise.
    """
    import json

    from ventflux.cli import main

    make_record(tmp_path / "hf1.csv", "cylinder", k=K, depths=DEPTHS, q=0.3, t_end=1100.0)
    (tmp_path / "survey.toml").write_text(SITE.replace("seed = 5", "seed = 91") + """
[sediment_probes]
records = ["hf1.csv"]
area = "1000 m^2"
exclude_sensors = { "hf1.csv" = ["T3"] }
""", encoding="utf-8")
    result = run_survey(load_survey(tmp_path / "survey.toml"))
    row = result.sections["sediment_probes"].rows[0]
    assert main(["probe-heat-flow", str(tmp_path / "hf1.csv"), "--exclude-sensor", "T3", "--draws", "2000",
                 "--seed", "91", "--quiet", "--json"]) == 0
    cap = capsys.readouterr()
    out = json.loads(cap.out)
    assert len([ln for ln in cap.err.splitlines() if "deprecated" in ln]) == 1
    pen = out["penetrations"][0]
    assert out["seed"] == 91 and out["draws"] == 2000 and out["max_unphysical_share"] == 0.05
    assert pen["unphysical_draws"] == 0
    for part in ("conductivity fits", "interpolated conductivity"):
        key = f"heat_flow_u_{part.replace(' ', '_')} [mW/m^2]"
        assert row[key] > 0
        assert 1e3 * pen["uncertainty_parts_W_m2"][part] == pytest.approx(row[key], rel=1e-12)
    assert 1e3 * pen["heat_flow_uncertainty_W_m2"] == pytest.approx(row["heat_flow_uncertainty [mW/m^2]"], rel=1e-12)
    # the earlier keys in mW/m^2 stay for one release, with one deprecation line
    assert pen["heat_flow_uncertainty_mW_m2"] == pytest.approx(1e3 * pen["heat_flow_uncertainty_W_m2"])


def test_conductivity_draws_below_the_floor_are_dropped_counted_and_refused_above_the_share():
    # One sensor's conductivity 0.3 ± 0.12 W/(m K): P(k < 0.05) = Phi(-2.08) = 1.9 % (normal table).
    from ventflux.plugin_api import SharedDraws as Draws

    from ventflux_thermal.probe import fit_spread

    k, se = np.array([0.3, 1.0, 1.1]), np.array([0.12, 0.01, 0.01])
    model = {"distance": np.array([1.0, 2.0, 3.0]), "tilt": 0.0, "kept": [0, 1, 2], "interpolation": np.eye(3),
             "sensors": ("T1", "T2", "T3"), "gap_sd": 0.0}
    teq = 275.0 + 0.3 * np.cumsum(1.0 / k)
    ok = fit_spread("r.csv", "", k, se, teq, model, Draws(20_000, seed=4))
    assert 0.012 * 20_000 < ok.provenance["unphysical_draws"] < 0.026 * 20_000
    with pytest.raises(InputError) as err:
        fit_spread("r.csv", "", k, se, teq, model, Draws(20_000, seed=4), max_unphysical=0.01)
    assert "r.csv" in err.value.field and "1.0%" in err.value.allowed


def test_probe_reduction_while_reading_uses_the_runs_monte_carlo_settings():
    # --check reduces the probe records while reading; with the run's draws, seed and limit on impossible draws
    # (the command line's overrides included) its conductivity-fit Monte Carlo is the one the run redoes, so the
    # two cannot disagree on what is refused.
    from pathlib import Path

    from ventflux.survey.spec import load_survey

    demo = Path(__file__).resolve().parents[3] / "examples" / "oskeran-ridge" / "survey.toml"
    spec = load_survey(demo, draws=500, seed=7, max_unphysical=0.2)
    mc = spec.sections["sediment_probes"]["results"][0].monte_carlo
    assert (mc["draws"], mc["seed"], mc["max_unphysical_share"]) == (500, 7, 0.2)


def test_cached_decay_table_is_the_built_table(tmp_path, monkeypatch):
    # the cylinder-decay table is kept per machine (ventflux.cachedir.cached_arrays): a reader gets the same
    # numbers as a fresh build, bit for bit
    import numpy as np
    from ventflux_thermal import decay

    monkeypatch.setenv("VENTFLUX_CACHE", str(tmp_path / "cache"))
    decay._table.cache_clear()
    built = decay._table(1.75)
    decay._table.cache_clear()
    read = decay._table(1.75)
    decay._table.cache_clear()
    assert len(list((tmp_path / "cache").glob("cylinder-decay-*.npz"))) == 1
    np.testing.assert_array_equal(built, read)
