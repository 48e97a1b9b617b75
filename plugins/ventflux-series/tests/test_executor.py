"""The executor contract (``ventflux.executor``) and its Dask implementation: a survey's vents, video included,
give identical numbers in this process and on a local ``dask.distributed`` cluster of two worker processes
(started and closed here, loopback only); unknown executors are refused with one line."""

from __future__ import annotations

import shutil
import textwrap
from pathlib import Path

import numpy as np
import pytest

from ventflux.cli import main
from ventflux.executor import SerialExecutor, open_executor
from ventflux.survey.run import run_survey
from ventflux.survey.spec import load_survey

CLIP = Path(__file__).resolve().parents[3] / "examples" / "oskeran-ridge" / "data" / "gildhorn_jet.mp4"


def _survey(tmp_path, video: bool) -> Path:
    text = textwrap.dedent("""
        [site]
        name = "Executor test site"
        depth = "2500 m"
        latitude = 10.0
        longitude = -100.0
        ambient_temperature = "2.0 ± 0.02 degC"
        ambient_salinity = 34.6
        [run]
        draws = 400
        seed = 7
        [shared]
        "laser" = "1.00 ± 0.03"
        "camera" = "1.00 ± 0.02"
        "plume constant" = "uniform(3.85, 4.7)"
        """)
    for name in ("A", "B", "C"):
        text += textwrap.dedent(f"""
            [[vent]]
            name = "{name}"
              [[vent.orifice]]
              exit_temperature = "340 ± 3 degC"
              velocity = "1.0 ± 0.2 m/s"
              diameter = "8 ± 0.5 cm"
              size_factor = "@laser"
            """)
    if video:
        shutil.copy(CLIP, tmp_path / "jet.mp4")
        text += textwrap.dedent("""
              [vent.video]
              clip = "jet.mp4"
              pixel_size = "4 mm"
              scale_factor = "@camera"
              orifice = [79.5, 248]
              plume_constant = "@plume constant"
            """)
    (tmp_path / "survey.toml").write_text(text, encoding="utf-8")
    return tmp_path / "survey.toml"


def _same(a, b):
    assert [v.name for v in a.vents] == [v.name for v in b.vents]
    for va, vb in zip(a.vents, b.vents, strict=True):
        assert va.methods.keys() == vb.methods.keys()
        for k in va.methods:
            np.testing.assert_array_equal(va.methods[k].heat_power.to("W").magnitude,
                                          vb.methods[k].heat_power.to("W").magnitude)
        np.testing.assert_array_equal(va.heat_power.to("W").magnitude, vb.heat_power.to("W").magnitude)
    np.testing.assert_array_equal(a.focused.draws.to("W").magnitude, b.focused.draws.to("W").magnitude)
    assert a.shared_inputs == b.shared_inputs  # every shared name drawn on a worker is known to the run


def test_survey_vents_identical_serial_and_on_a_two_process_cluster(tmp_path):
    pytest.importorskip("ventflux_video")
    path = _survey(tmp_path, video=True)
    serial = run_survey(load_survey(path))
    assert "shared/camera" in serial.shared_inputs or any("camera" in k for k in serial.shared_inputs)
    with open_executor("local", workers=2) as ex:
        assert "2 workers" in ex.name
        dist = run_survey(load_survey(path), executor=ex)
    _same(serial, dist)


def test_survey_vents_identical_on_threads(tmp_path):
    path = _survey(tmp_path, video=False)
    serial = run_survey(load_survey(path))
    with open_executor("threads") as ex:
        _same(serial, run_survey(load_survey(path), executor=ex))


def test_no_scheduler_means_serial_and_unknown_executors_are_refused(tmp_path, capsys):
    with open_executor(None) as ex:
        assert isinstance(ex, SerialExecutor)
        assert ex.map(pow, [(2, 3), (3, 2)]) == [8, 9]
    rc = main(["survey", str(_survey(tmp_path, video=False)), "--scheduler", "nowhere", "--quiet",
               "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1
    assert "--scheduler" in err[0] and "nowhere" in err[0] and "local" in err[0]
    assert not (tmp_path / "out").exists()


def test_survey_cli_runs_on_threads(tmp_path, capsys):
    rc = main(["survey", str(_survey(tmp_path, video=False)), "--scheduler", "threads", "--quiet",
               "--out", str(tmp_path / "out")])
    assert rc == 0 and (tmp_path / "out" / "summary.json").exists()


def test_dask_executor_accepts_its_names_and_scheduler_addresses_only():
    from ventflux_series.dask_executor import accepts

    for where in ("local", "processes", "threads", "tcp://10.1.2.3:8786", "head-node:8786", "tls://a.b:8786",
                  "tcp://[::1]:8786"):
        assert accepts(where), where
    for where in ("serial", "nowhere", "", "tcp://host", "local cluster", "8786"):
        assert not accepts(where), where
