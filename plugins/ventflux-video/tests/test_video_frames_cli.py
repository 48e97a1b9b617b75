"""Frame reading, scale, the three commands and every bad-input case of issue 5 (exit 2, one line)."""

import json
import os

import imageio.v3 as iio
import numpy as np
import pytest

from ventflux.cli import main
from ventflux.errors import InputError
from ventflux.units import Q_
from ventflux_video import scale, synthetic
from ventflux_video.frames import FrameStream, Region, frame_pairs
from ventflux_video.synthetic import render_plume_clip


@pytest.fixture(scope="module")
def clip(tmp_path_factory):
    return render_plume_clip(tmp_path_factory.mktemp("clip") / "jet.mp4", seconds=0.6)


@pytest.fixture()
def sequence(tmp_path):
    """Eight PNG frames of a uniform 2 px shift, the fifth one damaged."""
    rng = np.random.default_rng(1)
    x, y = rng.uniform(-10, 106, 300), rng.uniform(-10, 106, 300)
    for k in range(8):
        img = synthetic.render_particles((96, 96), x + 2 * k, y - 1 * k, 2.5)
        iio.imwrite(tmp_path / f"f{k:03d}.png", np.clip(img * 200, 0, 255).astype(np.uint8))
    data = (tmp_path / "f004.png").read_bytes()
    (tmp_path / "f004.png").write_bytes(data[: len(data) // 3])  # truncated: cannot be decoded
    return tmp_path


def _one_line_error(capsys, argv, *words):
    assert main(argv) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1, err
    for w in words:
        assert w in err
    return err


def test_video_rate_and_frames_are_read(clip):
    s = FrameStream(clip.path)
    assert s.frame_rate.to("1/s").magnitude == pytest.approx(clip.frame_rate)
    frames = list(s)
    assert len(frames) == clip.frames and s.skipped == 0
    assert frames[0][1].shape == (256, 160) and frames[0][1].dtype == np.float32


def test_rate_override_and_region(clip):
    s = FrameStream(clip.path, frame_rate=Q_(25, "1/s"), region="10,20,64,96", stop=3)
    frames = [f for _, f in s]
    assert s.frame_rate.magnitude == 25 and len(frames) == 3 and frames[0].shape == (96, 64)
    full = next(iter(FrameStream(clip.path)))[1]
    assert np.array_equal(frames[0], full[20:116, 10:74])
    assert s.origin == (10, 20)


def test_corrupt_frame_is_skipped_and_counted(sequence):
    s = FrameStream(sequence, frame_rate=Q_(10, "1/s"))
    got = [i for i, _ in s]
    assert got == [0, 1, 2, 3, 5, 6, 7] and s.skipped == 1
    # Pairs across the gap are left out, so every pair's interval is one frame.
    pairs = [i for i, _, _ in frame_pairs(FrameStream(sequence, frame_rate=Q_(10, "1/s")))]
    assert pairs == [0, 1, 2, 5, 6]


def test_video_field_on_image_sequence_counts_the_skipped_frame(sequence, capsys, tmp_path):
    out = tmp_path / "out"
    assert main(["video-field", str(sequence), "--frame-rate", "10/s", "--pixel-size", "1 mm", "--windows", "32,32",
                 "--out", str(out), "--json"]) == 0
    res = json.loads(capsys.readouterr().out)
    assert res["frames_skipped"] == 1 and res["frame_pairs"] == 5
    # 2 px right and 1 px up per 0.1 s at 1 mm/px (up is up: rows decrease).
    assert res["mean_u_m_s"] == pytest.approx(0.02, abs=0.001)
    assert res["mean_w_m_s"] == pytest.approx(0.01, abs=0.001)
    header = (out / "velocity_field.csv").read_text().splitlines()[0]
    assert "w [m/s]" in header and (out / "velocity_field.png").stat().st_size > 1000


def test_video_jet_json(clip, capsys, tmp_path):
    argv = ["video-jet", clip.path, "--pixel-size", f"{clip.metres_per_pixel} m", "--orifice",
            f"{clip.orifice_xy[0]},{clip.orifice_xy[1]}", "--windows", "32,16", "--ambient-temperature", "2 degC",
            "--absolute-pressure", "25 MPa", "--json", "--out", str(tmp_path / "jet"),
            # the demo generator's clip is a textured sheet, rendered with k = 4.7
            "--view", "sheet", "--plume-constant", str(clip.plume_constant), "--draws", "2000"]
    assert main(argv) == 0
    res = json.loads(capsys.readouterr().out)
    for key in ("exit_velocity_m_s", "buoyancy_flux_m4_s3", "heat_power_W", "virtual_origin_m", "plume_constant"):
        assert key in res
    assert res["buoyancy_flux_m4_s3"] == pytest.approx(clip.buoyancy_flux, rel=0.15)
    assert (tmp_path / "jet" / "centreline.csv").read_text().startswith("height [m],w_centreline [m/s]")


def test_tracking_mode_runs_on_the_clip(clip, capsys):
    assert main(["video-field", clip.path, "--pixel-size", "2.5 mm", "--mode", "tracking", "--windows", "32",
                 "--pairs", "10", "--json"]) == 0
    res = json.loads(capsys.readouterr().out)
    assert res["mode"] == "tracking" and res["frame_pairs"] == 10 and res["max_w_m_s"] > 0.3


def test_scale_from_points_and_laser_spots(tmp_path, capsys):
    mpp = scale.metres_per_pixel_from_points((10, 10), (40, 50), Q_(10, "cm"))
    assert mpp.to("mm").magnitude == pytest.approx(100 / 50)  # 3-4-5 triangle
    spots = np.array([[30.3, 40.7], [90.6, 44.2]])
    img = synthetic.render_particles((80, 128), spots[:, 0], spots[:, 1], diameter=5.0) * 250
    img += np.random.default_rng(0).uniform(0, 20, img.shape)
    for k in range(3):
        iio.imwrite(tmp_path / f"s{k}.png", np.clip(img, 0, 255).astype(np.uint8))
    assert main(["video-scale", str(tmp_path), "--frame-rate", "1/s", "--laser-separation", "10 cm", "--json"]) == 0
    res = json.loads(capsys.readouterr().out)
    sep = np.hypot(*(spots[1] - spots[0]))
    assert res["pixel_size_m"] == pytest.approx(0.1 / sep, rel=0.005)


def test_registered_velocity_source_feeds_orifice(clip):
    from ventflux.registry import velocity_source

    src = velocity_source("video-exit-velocity")
    assert "orifice" in src.feeds
    v, sd = src.estimate(clip.path, pixel_size=f"{clip.metres_per_pixel} m",
                         orifice_xy=f"{clip.orifice_xy[0]},{clip.orifice_xy[1]}", passes="32,16")
    assert v.to("m/s").magnitude == pytest.approx(clip.exit_velocity, rel=0.2) and sd.magnitude >= 0


# ----------------------------------------------------------------- bad input (issue 5, item 7)
def test_unreadable_file(tmp_path, capsys):
    bad = tmp_path / "junk.mp4"
    bad.write_bytes(b"this is not a video")
    _one_line_error(capsys, ["video-field", str(bad), "--pixel-size", "1 mm"], "clip", "readable video")


def test_truncated_file(clip, tmp_path, capsys):
    data = open(clip.path, "rb").read()
    cut = tmp_path / "cut.mp4"
    cut.write_bytes(data[: len(data) // 2])
    _one_line_error(capsys, ["video-jet", str(cut), "--pixel-size", "1 mm", "--orifice", "80,248"], "truncated")


def test_missing_file(capsys):
    _one_line_error(capsys, ["video-field", "/nonexistent/clip.mov", "--pixel-size", "1 mm"], "clip")


def test_region_outside_frame(clip, capsys):
    _one_line_error(capsys, ["video-field", clip.path, "--pixel-size", "1 mm", "--region", "100,0,100,100"],
                    "--region", "inside the 160 x 256 frame")


def test_zero_size_region(clip, capsys):
    _one_line_error(capsys, ["video-field", clip.path, "--pixel-size", "1 mm", "--region", "0,0,0,50"],
                    "--region", "holds no pixels")


def test_zero_frames_in_range(clip, capsys):
    _one_line_error(capsys, ["video-field", clip.path, "--pixel-size", "1 mm", "--first-frame", "5000"],
                    "first frame")


def test_zero_scale(clip, capsys):
    _one_line_error(capsys, ["video-field", clip.path, "--pixel-size", "0 m"], "--pixel-size", "> 0")
    _one_line_error(capsys, ["video-field", clip.path, "--points", "5,5,5,5", "--distance", "1 m"], "--points")
    _one_line_error(capsys, ["video-field", clip.path, "--points", "5,5,9,9", "--distance", "0 m"], "--distance")


def test_too_few_frames_for_averaging(clip, capsys):
    _one_line_error(capsys, ["video-field", clip.path, "--pixel-size", "1 mm", "--pairs", "500"],
                    "--pairs", "at most 29 frame pairs")


def test_image_sequence_needs_a_rate(sequence, capsys):
    _one_line_error(capsys, ["video-field", str(sequence), "--pixel-size", "1 mm"], "--frame-rate")


def test_region_parse_errors():
    with pytest.raises(InputError):
        Region.parse("1,2,3")
    with pytest.raises(InputError):
        Region.parse("-1,0,4,4")


def test_orifice_command_takes_the_video_exit_velocity(clip, capsys):
    argv = ["orifice", "--exit-temperature", "340 degC", "--velocity-source", "video-exit-velocity",
            "--source-option", f"clip={clip.path}", "--source-option", f"metres_per_pixel={clip.metres_per_pixel} m",
            "--source-option", f"orifice_xy={clip.orifice_xy[0]},{clip.orifice_xy[1]}",
            "--source-option", "passes=32,16", "--velocity-kind", "centerline", "--diameter", "4 cm",
            "--absolute-pressure", "25 MPa", "--ambient-temperature", "2 degC", "--json"]
    assert main(argv) == 0
    captured = capsys.readouterr()
    assert "heat_power" in captured.out
    # the old name of the pixel size is accepted for one release, with one deprecation line naming the new one
    assert "'metres_per_pixel' is deprecated; use 'pixel_size'" in captured.err


@pytest.mark.parametrize("suffix, codec", [(".avi", "mpeg4"), (".mov", "libx264")])
def test_other_containers(tmp_path, suffix, codec):
    import imageio_ffmpeg

    path = tmp_path / f"c{suffix}"
    w = imageio_ffmpeg.write_frames(str(path), (64, 48), pix_fmt_in="gray", fps=12, codec=codec, quality=8,
                                    ffmpeg_log_level="error")
    w.send(None)
    for k in range(7):
        w.send(np.full((48, 64), 20 * k, np.uint8))
    w.close()
    s = FrameStream(path)
    means = [float(f.mean()) for _, f in s]
    assert s.frame_rate.to("1/s").magnitude == pytest.approx(12) and len(means) == 7
    assert np.allclose(means, 20 * np.arange(7), atol=3)  # lossy codecs: gray levels within a few counts


def test_progress_bar_goes_to_stderr(clip, capsys):
    list(FrameStream(clip.path, stop=5, progress=True))
    assert "frame" in capsys.readouterr().err


_SHEET_SURVEY = """
[site]
name = "Test Site"
depth = "2500 m"
latitude = 10.0
longitude = -100.0
ambient_temperature = "2.0 degC"
ambient_salinity = 35

[run]
{run}

[[vent]]
name = "Vent J"
  [vent.video]
  clip = "{path}"
  pixel_size = "2 mm"
{more}  orifice = [{x}, {y}]
  view = "sheet"
"""


# ----------------------------------------------------------------- one driver: command and survey draw alike
def test_video_jet_and_survey_give_identical_draws(clip, capsys, tmp_path):
    """Same clip, vent name, seed and inputs: ``video-jet`` and ``[vent.video]`` draw the same heat power.

    Both go through ``ventflux.uncertainty.propagate`` with the inputs named ``<vent>/video/<part>``, so the
    summaries agree to rounding, not merely within Monte Carlo noise. The pixel size's relative error is
    0.04 mm / 2 mm = 0.02 exactly in binary, the survey's ``scale_factor`` "1 ± 0.02".
    """
    from ventflux.survey.run import run_survey
    from ventflux.survey.spec import load_survey

    x, y = clip.orifice_xy
    survey = tmp_path / "s.toml"
    survey.write_text(_SHEET_SURVEY.format(run="draws = 3000\nseed = 77", path=clip.path, x=x, y=y,
                                           more='  scale_factor = "1 ± 0.02"\n'), encoding="utf-8")
    result = run_survey(load_survey(survey))
    H = result.vents[0].methods["video"].heat_power.to("W").magnitude
    argv = ["video-jet", clip.path, "--name", "Vent J", "--pixel-size", "2 ± 0.04 mm", "--orifice", f"{x},{y}",
            "--view", "sheet", "--depth", "2500 m", "--latitude", "10", "--ambient-temperature", "2.0 degC",
            "--ambient-salinity", "35", "--draws", "3000", "--seed", "77", "--quiet", "--json"]
    assert main(argv) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["unphysical_draws"] == int(np.count_nonzero(np.isnan(H)))
    assert out["max_unphysical_share"] == 0.05 and out["draws"] == 3000 and out["seed"] == 77
    assert out["heat_power_W_p05"] == pytest.approx(np.nanpercentile(H, 5), rel=1e-9)
    assert out["heat_power_W_median"] == pytest.approx(np.nanmedian(H), rel=1e-9)
    assert out["heat_power_W_p95"] == pytest.approx(np.nanpercentile(H, 95), rel=1e-9)




def _survey_with_the_field_begun_ahead(folder):
    """In a fresh process (a fork needs one thread): the run with the clip's field begun while the file was read,
    against the plain run."""
    from pathlib import Path

    from ventflux import ahead
    from ventflux.survey.run import run_survey
    from ventflux.survey.spec import load_survey

    folder = Path(folder)
    c = render_plume_clip(folder / "jet.mp4", seconds=0.6)
    survey = folder / "s.toml"
    survey.write_text(_SHEET_SURVEY.format(run="draws = 2000", path=c.path, x=c.orifice_xy[0], y=c.orifice_xy[1],
                                           more=""), encoding="utf-8")
    plain = run_survey(load_survey(survey)).vents[0].methods["video"]
    assert not ahead._STARTED  # the library begins nothing
    try:
        with ahead.allowed():
            spec = load_survey(survey)
        (key,) = ahead._STARTED  # begun while the file was read
        early = run_survey(spec).vents[0].methods["video"]
        assert ahead.take(key) is not None  # and taken from there, not computed again
    finally:
        ahead.discard()
    np.testing.assert_array_equal(early.heat_power.m_as("W"), plain.heat_power.m_as("W"))
    assert early.rows == plain.rows


def test_a_clip_field_begun_ahead_gives_the_same_draws(tmp_path):
    import subprocess
    import sys
    from pathlib import Path

    if (os.cpu_count() or 1) < 2 or not sys.platform.startswith("linux"):
        pytest.skip("one core, or not Linux: nothing is begun ahead")
    code = ("import sys; sys.path.insert(0, sys.argv[1]); import test_video_frames_cli as t; "
            "t._survey_with_the_field_begun_ahead(sys.argv[2])")
    done = subprocess.run([sys.executable, "-c", code, str(Path(__file__).parent), str(tmp_path)],
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr[-3000:]


def test_video_jet_refuses_above_its_unphysical_share(clip, capsys):
    # a plume constant of 4.3 ± 2.2: P(k <= 0) = Phi(-1.95) = 2.6 % of draws (normal table), above a 1 % limit
    x, y = clip.orifice_xy
    argv = ["video-jet", clip.path, "--pixel-size", "2 mm", "--orifice", f"{x},{y}", "--view", "sheet",
            "--plume-constant", "4.3 ± 2.2", "--draws", "4000", "--quiet", "--json"]
    assert main(argv + ["--max-unphysical", "0.01"]) == 2
    lines = capsys.readouterr().err.strip().splitlines()
    # One readable line, then (with --json) the same error as one JSON object.
    assert len(lines) == 2 and "plume_constant" in lines[0] and "--max-unphysical" in lines[0]
    assert json.loads(lines[1])["errors"][0]["field"].endswith("plume_constant")
    assert main(argv) == 0
    out = json.loads(capsys.readouterr().out)
    assert 0.015 * 4000 < out["unphysical_draws"] < 0.04 * 4000 and out["max_unphysical_share"] == 0.05
