"""Continuous station records: penetrations found and reduced, a cut-short one skipped, a dead sensor left out.

The record is written by ``thermal_synthetic.make_station_record`` from the cylinder solution (Carslaw &
Jaeger 1959 §13.7, Stehfest inversion; 10 s pulses by superposition), independently of the code under test,
with ISO 8601 timestamps, 1 mK noise, and the sensors relaxing to the water temperature after each pull-out.
"""

import json
import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).parent))  # the synthetic-record helper beside this file
from thermal_synthetic import make_station_record

from ventflux.cli import main
from ventflux_thermal.station import find_penetrations, reduce_station

DEPTHS = np.linspace(0.6, 3.0, 5)
K = np.array([0.85, 1.05, 1.15, 0.9, 1.1])
PENETRATIONS = [dict(t_pen=300, t_hp=720, t_out=1260, k=K, q=0.2),
                dict(t_pen=1700, t_hp=None, t_out=1900, k=K, q=0.3),  # cut short before its pulse
                dict(t_pen=2300, t_hp=2720, t_out=3260, k=K * 1.1, q=0.5, dead=1),  # T2 dead
                dict(t_pen=3700, t_hp=4120, t_out=4660, k=K * 0.9, q=0.1)]


@pytest.fixture(scope="module")
def station(tmp_path_factory):
    folder = tmp_path_factory.mktemp("station")
    path = folder / "st07.csv"
    make_station_record(path, PENETRATIONS, depths=DEPTHS, t_end=5000, pulse_duration=10.0)
    nav = folder / "nav.csv"
    # the ship moves due north at 0.5 m/s from 08:00 (1 s of latitude = 30.9 m; from memory, 1 deg = 111.2 km)
    rows = ["time,latitude [deg],longitude [deg]"]
    for minute in range(0, 90, 5):
        rows.append(f"2026-03-14T08:{minute:02d}:00Z,{-17.3 + 0.5 * 60 * minute / 111195.0:.8f},-113.6"
                    if minute < 60 else
                    f"2026-03-14T09:{minute - 60:02d}:00Z,{-17.3 + 0.5 * 60 * minute / 111195.0:.8f},-113.6")
    nav.write_text("\n".join(rows) + "\n")
    return path, nav


def test_every_penetration_found_with_its_times(station):
    path, _ = station
    r = reduce_station(path)
    assert [p.label for p in r.penetrations] == ["P01", "P02", "P03", "P04"]
    for p, truth in zip(r.penetrations, PENETRATIONS):
        assert abs(p.start - truth["t_pen"]) <= 1.0  # the last sample before the frictional jump
        assert (p.pulse is None) == (truth["t_hp"] is None)
        if p.pulse is not None:
            assert abs(p.pulse - truth["t_hp"]) <= 1.0
        assert abs(p.end - truth["t_out"]) <= 2.0
    assert r.times["P01"] == "2026-03-14T08:04:59Z"


def test_good_penetrations_reduced_within_tolerance(station):
    path, _ = station
    r = reduce_station(path)
    got = {res.label: res for res in r.results}
    assert sorted(got) == ["P01", "P03", "P04"]
    assert "before a heat pulse" in r.skipped["P02"]
    for label, truth in (("P01", PENETRATIONS[0]), ("P04", PENETRATIONS[3])):
        np.testing.assert_allclose(got[label].conductivity, truth["k"], rtol=0.01)
        assert got[label].heat_flow == pytest.approx(truth["q"], rel=0.01)
        assert not got[label].flags
    p3 = got["P03"]
    assert list(p3.excluded) == ["T2"] and "no reading" in p3.excluded["T2"]
    np.testing.assert_allclose(p3.conductivity, np.delete(K * 1.1, 1), rtol=0.01)
    assert abs(p3.heat_flow - 0.5) < 2 * p3.heat_flow_uncertainty


def test_navigation_join_and_transect_distance(station):
    path, nav = station
    r = reduce_station(path, navigation=nav)
    # due north at 0.5 m/s: P01 at 299 s, P04 at 3699 s → 1700 m apart along the track (±1 m for the projection)
    assert r.distance["P01"] == 0.0
    assert r.distance["P04"] == pytest.approx(0.5 * (3699 - 299), abs=1.0)
    assert r.positions["P04"][0] == pytest.approx(0.0, abs=1e-6)


def test_station_command_table_figures_and_warnings(station, tmp_path, capsys):
    path, nav = station
    out, figs = tmp_path / "t.csv", tmp_path / "figs"
    rc = main(["probe-heat-flow", str(path), "--station", "--navigation", str(nav), "--out", str(out),
               "--figures", str(figs), "--json"])
    cap = capsys.readouterr()
    assert rc == 0, cap.err
    d = json.loads(cap.out)
    assert [p["penetration"] for p in d["penetrations"]] == ["P01", "P03", "P04"]
    assert "P02" in d["skipped"]["st07.csv"]
    err = cap.err.strip().splitlines()
    assert sum("T2 left out" in ln for ln in err) == 1 and sum("P02" in ln for ln in err) == 1
    rows = out.read_text().splitlines()
    assert len(rows) == 4 and "distance [m]" in rows[0]
    names = sorted(p.name for p in figs.iterdir())
    assert "st07_record.png" in names and "st07_transect.png" in names


def test_detection_on_a_quiet_record_finds_nothing():
    rng = np.random.default_rng(3)
    t = np.arange(0.0, 3000.0)
    T = 275.0 + rng.normal(0, 1e-3, (5, t.size))
    assert find_penetrations(t, T)[0] == []
