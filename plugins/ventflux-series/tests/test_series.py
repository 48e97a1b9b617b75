"""ventflux series: estimates against an independent computation, the same numbers on every scheduler, resumable
runs, failures listed, and tidal periods and steps recovered from records made here from an analytic signal.

Sources: heat power of an orifice as ρ(T, p)·u·A·[h(T, p) − h(T_a, p)] with IAPWS-95 from CoolProp (HEOS,
direct, test-only use); tidal periods M2 12.4206 h and K1 23.9345 h (standard values, from memory).
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pytest

from ventflux.cli import main
from ventflux_series.manifest import read_manifest
from ventflux_series.run import run_series

M2_H, K1_H = 12.4206, 23.9345
START = np.datetime64("2026-05-01T00:00:00")
DEPTH_M, LAT = 2000.0, 10.0


def _write_logger(path, t_h, T_c):
    stamps = START + (np.asarray(t_h) * 3600).astype("timedelta64[s]")
    path.write_text("time,temperature [degC]\n" + "".join(f"{s}Z,{v:.6f}\n" for s, v in zip(stamps, T_c)))


def _manifest(folder: Path, files, *, velocity="1.0 m/s", diameter="10 cm", offset=None, draws=200,
              interval="1 h", extra_vent="") -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "items.csv").write_text("vent,file\n" + "".join(f"Tower,{f}\n" for f in files))
    off = f'temperature_offset = "{offset}"\n' if offset else ""
    (folder / "m.toml").write_text(textwrap.dedent(f"""
        [series]
        name = "test series"
        items = "items.csv"
        draws = {draws}
        interval = "{interval}"
        [site]
        depth = "{DEPTH_M} m"
        latitude = {LAT}
        ambient_temperature = "2.0 degC"
        ambient_salinity = 34.7
        [[vent]]
        name = "Tower"
        method = "vent-temperature"
        diameter = "{diameter}"
        velocity = "{velocity}"
        """) + off + extra_vent)
    return folder / "m.toml"


def _reference_power(T_c, u, d, Ta_c=2.0):
    """ρ u A Δh from CoolProp's direct IAPWS-95, at the pressure TEOS-10 gives for the depth (gsw)."""
    import CoolProp.CoolProp as CP
    import gsw

    p = (gsw.p_from_z(-DEPTH_M, LAT) * 1e4) + 101325.0
    T = np.asarray(T_c) + 273.15
    h = CP.PropsSI("H", "T", T, "P", np.full(T.shape, p), "Water")
    rho = CP.PropsSI("D", "T", T, "P", np.full(T.shape, p), "Water")
    ha = CP.PropsSI("H", "T", Ta_c + 273.15, "P", p, "Water")
    return rho * u * np.pi * d**2 / 4 * (h - ha)


def test_logger_power_matches_direct_iapws95(tmp_path):
    t_h = np.arange(0, 6, 0.25)  # 6 h at 15 min: six 1-h windows of four samples
    T = 300 + 20 * np.sin(t_h)
    _write_logger(tmp_path / "r.csv", t_h, T)
    run = run_series(_manifest(tmp_path, ["r.csv"]), scheduler="serial", cache=False)
    (s,) = run.series
    ref = _reference_power(T, 1.0, 0.10).reshape(6, 4).mean(axis=1)
    assert len(s.times) == 6
    # Exact inputs: every draw is the same number; the layer's table error is below 1e-4 (README).
    np.testing.assert_allclose(s.median_W, ref, rtol=2e-4)
    np.testing.assert_allclose(s.p05_W, s.p95_W)
    assert str(s.times[0]) == "2026-05-01T00:30:00.000000000"  # window centre


def test_systematic_error_does_not_average_away(tmp_path):
    """A velocity known to ±20 % gives the whole series' mean the same ±20 %, however many time steps."""
    t_h = np.arange(0, 48, 0.5)
    _write_logger(tmp_path / "r.csv", t_h, np.full(t_h.size, 320.0))
    run = run_series(_manifest(tmp_path, ["r.csv"], velocity="1.0 ± 0.2 m/s", draws=4000), scheduler="serial",
                     cache=False)
    (s,) = run.series
    m = s.mean_draws_W
    assert np.std(m) / np.mean(m) == pytest.approx(0.2, rel=0.08)


def _tidal_records(folder: Path, days=20, step_day=11.3, step_K=-10.0, noise=0.3, seed=5):
    rng = np.random.default_rng(seed)
    files = []
    for day in range(days):
        t_h = day * 24 + np.arange(0, 24, 10 / 60)
        T = (320 + 3.0 * np.cos(2 * np.pi * t_h / M2_H) + 1.5 * np.cos(2 * np.pi * t_h / K1_H + 1.0)
             + step_K * (t_h / 24 >= step_day) + rng.normal(0, noise, t_h.size))
        f = f"d{day:02d}.csv"
        _write_logger(folder / f, t_h, T)
        files.append(f)
    return files


def test_tidal_periods_and_step_recovered(tmp_path):
    step_day = 11.3
    files = _tidal_records(tmp_path, step_day=step_day)
    run = run_series(_manifest(tmp_path, files, draws=200), scheduler="serial", cache=False)
    (s,) = run.series
    found = {c.name for c in s.constituents if c.found}
    assert {"M2", "K1"} <= found
    # The two strongest periodogram peaks are M2 and K1 within the record's resolution (1/20 cycles per day).
    top = sorted(s.periodogram.peaks_h[:2])
    assert top[0] == pytest.approx(M2_H, abs=M2_H**2 / 24 / 20)
    assert top[1] == pytest.approx(K1_H, abs=K1_H**2 / 24 / 20)
    assert len(s.steps) == 1
    st = s.steps[0]
    truth = START + np.timedelta64(int(step_day * 86400), "s")
    assert st.time_low <= truth <= st.time_high
    assert st.size_W < 0


def test_no_step_in_a_steady_tidal_record(tmp_path):
    files = _tidal_records(tmp_path, step_K=0.0, days=16)
    run = run_series(_manifest(tmp_path, files, draws=200), scheduler="serial", cache=False)
    assert run.series[0].steps == []


def test_same_numbers_serial_threads_and_distributed(tmp_path):
    files = _tidal_records(tmp_path, days=4)
    m = read_manifest(_manifest(tmp_path, files, velocity="1.0 ± 0.1 m/s", offset="0 ± 0.5 K", draws=300))
    serial = run_series(m, scheduler="serial", cache=False)
    threads = run_series(m, scheduler="threads", cache=False)
    procs = run_series(m, scheduler="processes", workers=2, cache=False)  # a local dask.distributed cluster
    for other in (threads, procs):
        for a, b in zip(serial.results, other.results, strict=True):
            np.testing.assert_array_equal(a.power_draws, b.power_draws)
            np.testing.assert_array_equal(a.times, b.times)


def test_failures_are_listed_never_dropped(tmp_path):
    files = _tidal_records(tmp_path, days=2)
    (tmp_path / "bad.csv").write_bytes(b"time,temperature [degC]\n\xff\xfe garbled\n")
    (tmp_path / "short.csv").write_text("time,temperature [degC]\n2026-05-03T00:00:00Z,300\n")
    run = run_series(_manifest(tmp_path, files + ["bad.csv", "short.csv"]), scheduler="serial", cache=False)
    failed = {r.file: r.error for r in run.results if not r.ok}
    assert failed == {"bad.csv": "not a UTF-8 CSV file", "short.csv": "fewer than two valid samples"}
    out = run.write(tmp_path / "out")
    summary = json.loads((out.parent / "summary.json").read_text())
    assert {r["item_file"] for r in summary["failed_items"]} == {"bad.csv", "short.csv"}
    assert "bad.csv" in (out.parent / "tables" / "failed_items.csv").read_text()


def test_netcdf_has_a_cf_time_axis(tmp_path):
    import xarray as xr

    files = _tidal_records(tmp_path, days=2)
    run = run_series(_manifest(tmp_path, files), scheduler="serial", cache=False)
    out = run.write(tmp_path / "out").parent
    with xr.open_dataset(out / "series.nc") as ds:
        assert ds["time"].attrs["standard_name"] == "time"
        assert ds["heat_power_median"].attrs["units"] == "W"
        np.testing.assert_allclose(ds["heat_power_median"].sel(vent="Tower").values, run.series[0].median_W)


def test_manifest_problems_reported_at_once(tmp_path, capsys):
    (tmp_path / "items.csv").write_text("vent,file\nTower,missing.csv\nNobody,x.csv\n")
    (tmp_path / "m.toml").write_text(textwrap.dedent("""
        [series]
        items = "items.csv"
        draws = 5
        [site]
        depth = "2000 m"
        ambient_temperature = "2 degC"
        [[vent]]
        name = "Tower"
        method = "vent-temperature"
        diameter = "ten cm"
        velocity = "@nothing"
        """))
    rc = main(["series", str(tmp_path / "m.toml"), "--check"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2
    assert any("series.draws" in e for e in err)
    assert any("vent[0](Tower).diameter" in e for e in err)
    assert any("vent[0](Tower).velocity" in e and "@nothing" in e for e in err)
    assert any("items.csv:2" in e and "missing.csv" in e for e in err)
    assert any("items.csv:3" in e and "Nobody" in e for e in err)
    assert not any("Traceback" in e for e in err)


def test_killed_run_resumes_with_only_unfinished_items(tmp_path):
    files = _tidal_records(tmp_path, days=30)
    manifest = _manifest(tmp_path, files, draws=100)
    cache = tmp_path / "item-cache"
    env = dict(os.environ)
    cmd = [sys.executable, "-m", "ventflux.cli", "series", str(manifest), "--scheduler", "serial", "--quiet",
           "--out", str(tmp_path / "out"), "--cache", str(cache)]
    proc = subprocess.Popen(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.time() + 120
    def finished():  # cache entries written whole (a killed writer's temporary ".<key>.*.part.npz" is not one)
        return [p for p in cache.rglob("*.npz") if not p.name.startswith(".")]

    while time.time() < deadline and len(finished()) < 2:
        time.sleep(0.01)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    done = len(finished())
    assert 2 <= done < len(files), "the run finished before it could be killed"
    # What a killed writer leaves: a temporary entry named by its host and (now dead) process id. Beside it, a
    # live process's temporary entry and files ventflux did not make, which the next run must leave alone.
    from ventflux_series.execute import _host

    key = "ab" + "0" * 62
    (cache / "ab").mkdir(exist_ok=True)
    leftover = cache / "ab" / f".{key}.{_host()}.{proc.pid}.x1y2z3.part.npz"
    alive = cache / "ab" / f".{key}.{_host()}.{os.getpid()}.q9w8e7.part.npz"
    foreign = [cache / "ab" / ".notes.part.npz", cache / "ab" / "mine.txt", cache / f".{key}.h.1.a.part.npz"]
    for f in [leftover, alive, *foreign]:
        f.write_bytes(b"")
    parts_before = {p for p in cache.rglob(".*.part.npz") if p not in {alive, *foreign}}
    assert leftover in parts_before
    out = subprocess.run(cmd + ["--json"], env=env, capture_output=True, text=True, check=True)
    stats = json.loads(out.stdout)
    assert stats["cached"] == done and stats["computed"] == len(files) - done
    assert stats["temporary_files_removed"] == len(parts_before)
    assert {p for p in cache.rglob(".*.part.npz")} == {alive, foreign[0], foreign[2]}
    assert all(f.exists() for f in foreign)
    again = subprocess.run(cmd + ["--json"], env=env, capture_output=True, text=True, check=True)
    assert json.loads(again.stdout)["computed"] == 0
    # Resumed results equal a fresh run's.
    fresh = run_series(manifest, scheduler="serial", cache=False)
    tab = (tmp_path / "out" / "tables" / "tower.csv").read_text().splitlines()[1:]
    assert len(tab) == len(fresh.series[0].times)
    med = np.array([float(r.split(",")[1]) for r in tab]) * 1e6
    np.testing.assert_allclose(med, fresh.series[0].median_W, rtol=1e-5)


def test_demo_recovers_its_tides_and_step(tmp_path):
    """The fictional demo (examples/oskeran-ridge/series): M2 and K1 found, the step (day 15.3) inside its interval."""
    import shutil

    demo = Path(__file__).resolve().parents[3] / "examples" / "oskeran-ridge" / "series"
    for f in ("make_series_demo.py", "series.toml"):
        shutil.copy(demo / f, tmp_path / f)
    subprocess.run([sys.executable, str(tmp_path / "make_series_demo.py")], check=True)
    m = read_manifest(tmp_path / "series.toml")
    m.draws = 200  # the demo's 1000 draws cost time, not accuracy of the medians this checks
    run = run_series(m, scheduler="threads", cache=False)
    gildhorn = next(s for s in run.series if s.vent == "Gildhorn")
    assert {"M2", "K1"} <= {c.name for c in gildhorn.constituents if c.found}
    assert len(gildhorn.steps) == 1
    truth = np.datetime64("2026-03-01T00:00:00") + np.timedelta64(int(15.3 * 86400), "s")
    assert gildhorn.steps[0].time_low <= truth <= gildhorn.steps[0].time_high
    lantern = next(s for s in run.series if s.vent == "Lantern patch")
    assert "M2" in {c.name for c in lantern.constituents if c.found} and lantern.steps == []
    assert [r.file for r in run.results if not r.ok] == ["gildhorn_logger_corrupt.csv"]


def test_clips_give_the_video_methods_numbers(tmp_path):
    """Two clip items of the demo's (fictional) jet: the exit-velocity item equals ρ u A Δh (CoolProp direct) at
    the video method's exit velocity; the velocity-decay item equals the video method's own heat-power draws
    (same named inputs, same seed), so its uncertain constants are carried into the series."""
    pytest.importorskip("ventflux_video")
    import shutil

    from ventflux.units import Q_
    from ventflux_video.jet import analyze_jet_clip

    clip = Path(__file__).resolve().parents[3] / "examples" / "oskeran-ridge" / "data" / "gildhorn_jet.mp4"
    shutil.copy(clip, tmp_path / "jet.mp4")
    (tmp_path / "items.csv").write_text("vent,file,start\nJet,jet.mp4,2026-05-01T10:00:00Z\n"
                                        "Plume,jet.mp4,2026-05-01T10:00:00Z\n")
    (tmp_path / "m.toml").write_text(textwrap.dedent(f"""
        [series]
        items = "items.csv"
        draws = 100
        [site]
        depth = "{DEPTH_M} m"
        latitude = {LAT}
        ambient_temperature = "2.0 degC"
        ambient_salinity = 34.7
        [[vent]]
        name = "Jet"
        method = "video-exit-velocity"
        diameter = "10 cm"
        exit_temperature = "320 degC"
        pixel_size = "4 mm"
        orifice_x = 79.5
        orifice_y = 248
        [[vent]]
        name = "Plume"
        method = "video-velocity-decay"
        pixel_size = "4 mm"
        orifice_x = 79.5
        orifice_y = 248
        """))
    run = run_series(tmp_path / "m.toml", scheduler="serial", cache=False)
    assert all(r.ok for r in run.results), [r.error for r in run.results]
    import gsw
    from ventflux.aggregate import SharedDraws
    from ventflux_video.propagation import jet_draws

    p = gsw.p_from_z(-DEPTH_M, LAT) * 1e4 + 101325.0
    ref = analyze_jet_clip(str(tmp_path / "jet.mp4"), Q_(4, "mm"), (79.5, 248), ambient_temperature=Q_(2.0, "degC"),
                           ambient_salinity=34.7, pressure=Q_(p, "Pa"), latitude=LAT)
    seed = read_manifest(tmp_path / "m.toml").seed

    def video_draws(vent):
        own = f"{vent}/jet.mp4/video"
        return jet_draws(ref, SharedDraws(100, seed), {"fit": f"{own}/fit", "correlation": f"{own}/correlation",
                                                       "scale": f"{own}/scale"})

    jet, plume = run.series
    u = np.median(video_draws("Jet").exit_velocity.to("m/s").magnitude)
    # ρ u A Δh is linear in u, so the median power is the power at the median exit velocity.
    np.testing.assert_allclose(jet.median_W, _reference_power(np.array([320.0]), u, 0.10), rtol=2e-4)
    np.testing.assert_allclose(plume.median_W, [np.median(video_draws("Plume").heat_power.to("W").magnitude)],
                               rtol=1e-5)
    # The plume constant's published range alone (uniform 3.85-4.7, F ∝ k^-3) spreads the power by > 1.3x.
    assert plume.p95_W[0] / plume.p05_W[0] > 1.3
    assert jet.times[0] > np.datetime64("2026-05-01T10:00:00")  # the clip's middle, not its start


def test_old_manifest_spellings_are_read_with_a_deprecation_line(capsys):
    # ventflux.vocabulary: site 'pressure' is now 'absolute_pressure'; 'metres_per_pixel' is now 'pixel_size'.
    from ventflux_series.manifest import _read_site, _read_vent

    from ventflux.plugin_api import Collector

    errs = Collector()
    site = _read_site({"pressure": "25 MPa", "ambient_temperature": "2 degC"}, errs)
    vent = _read_vent({"name": "A", "method": "video-velocity-decay", "metres_per_pixel": "4 mm",
                       "orifice_x": 10, "orifice_y": 20}, "vent[0]", {}, errs)
    assert not errs.errors
    assert site["pressure"].to("MPa").magnitude == 25
    assert "pixel_size" in vent.inputs
    err = capsys.readouterr().err
    assert "'site.pressure' is deprecated; use 'site.absolute_pressure'" in err
    assert "metres_per_pixel' is deprecated" in err and "pixel_size" in err
