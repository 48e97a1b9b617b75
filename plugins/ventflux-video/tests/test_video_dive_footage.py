"""Video as dive cameras film it (issue 12): volume views, backgrounds, frame names, laser colours, uncertainty,
window deformation against OpenPIV, lazy command registration and the survey's header check.

Every clip and image pair here is rendered in this folder (``plume3d``, ``_pair`` below) from analytic motion,
not with the plugin's generator or its formulas.
"""

import contextlib
import io
import json
import subprocess
import sys
import time

import imageio.v3 as iio
import numpy as np
import pytest
from plume3d import _spots, render_volume_plume
from ventflux_video import correlation as cc
from ventflux_video import scale
from ventflux_video.frames import FrameStream, container_times
from ventflux_video.jet import analyze_jet_clip

from ventflux.cli import main
from ventflux.errors import InputError
from ventflux.units import Q_

INNER = (slice(1, -1), slice(1, -1))


# ------------------------------------------------------------------ rendered pairs (independent of the plugin)
def _pair(shape, move, density=0.05, sd=0.625, seed=0):
    """Two frames of Gaussian particles (sd 0.625 px: 2.5 px across at e^-2); B's particles at ``move(x, y)``."""
    rng = np.random.default_rng(seed)
    h, w = shape
    n = rng.poisson(density * (h + 32) * (w + 32))
    x, y = rng.uniform(-16, w + 16, n), rng.uniform(-16, h + 16, n)
    amp = rng.uniform(0.6, 1.0, n)
    x2, y2 = move(x, y)
    return (_spots(shape, x, y, amp, sd).astype(np.float32), _spots(shape, x2, y2, amp, sd).astype(np.float32))


def _rms(field, tx, ty):
    return float(np.sqrt(np.mean((field[0] - tx)[INNER] ** 2 + (field[1] - ty)[INNER] ** 2)))


@pytest.mark.parametrize("d", [(0.25, -0.4), (1.5, 0.75), (-2.35, 1.6), (3.5, -3.1)])
def test_deformation_reaches_0015_px_on_subpixel_uniform_shifts(d):
    # Issue 12 limit: 0.015 px RMS (a general-purpose library's deformation multi-pass reaches 0.012-0.017).
    a, b = _pair((256, 256), lambda x, y: (x + d[0], y + d[1]), seed=3)
    f = cc.displacement_field(a, b, passes=(64, 32, 32), overlap=0.5)
    assert _rms((f.dx, f.dy), *d) <= 0.015


def _openpiv_windef(a, b):
    windef = pytest.importorskip("openpiv.windef")  # test-only reference
    st = windef.PIVSettings()
    st.windowsizes, st.overlap, st.num_iterations = (64, 32, 32), (32, 16, 16), 3
    st.show_plot = st.save_plot = False
    with contextlib.redirect_stdout(io.StringIO()):
        out = windef.simple_multipass(a, b, st)
    return out[2], -out[3]  # OpenPIV's v is up-positive


def _rotation(theta, c):
    # Solid-body rotation by theta about c: exact particle motion. The displacement measured between the frames
    # belongs to the pair's mid-point m: d = 2 tan(theta/2) J (m - c) (the chord of the rotation).
    cos, sin = np.cos(theta), np.sin(theta)

    def move(x, y):
        return c + cos * (x - c) - sin * (y - c), c + sin * (x - c) + cos * (y - c)

    def truth(x, y):
        t = 2 * np.tan(theta / 2)
        return -t * (y - c), t * (x - c)

    return move, truth


@pytest.mark.parametrize("flow", ["uniform", "shear", "vortex"])
def test_deformation_against_openpiv_multipass(flow):
    # OpenPIV's window-deformation multi-pass (openpiv.windef.simple_multipass) on the same images, same
    # windows (64, 32, 32 px, 50 % overlap): ours at most as far from the truth, and no slower.
    shape = (256, 256)
    if flow == "uniform":
        def move(x, y):
            return x + 1.37, y - 2.62

        def truth(x, y):
            return np.full_like(x, 1.37), np.full_like(y, -2.62)
    elif flow == "shear":
        move, truth = (lambda x, y: (x + 0.04 * (y - 128), y)), (lambda x, y: (0.04 * (y - 128), 0 * y))
    else:
        move, truth = _rotation(0.025, 127.5)
    a, b = _pair(shape, move, seed=11)
    t0 = time.perf_counter()
    f = cc.displacement_field(a, b, passes=(64, 32, 32), overlap=0.5)
    t_ours = time.perf_counter() - t0
    t0 = time.perf_counter()
    u, v = _openpiv_windef(a, b)
    t_ref = time.perf_counter() - t0
    yy, xx = np.meshgrid(f.y, f.x, indexing="ij")
    tx, ty = truth(xx, yy)
    ours, ref = _rms((f.dx, f.dy), tx, ty), _rms((u, v), tx, ty)
    assert u.shape == f.dx.shape
    assert ours <= ref
    assert ours <= 0.03
    assert t_ours < t_ref  # the timed comparison (3x) is benchmarks/bench_deformation.py


def test_thread_count_is_measured_and_kept():
    n = cc._thread_count()
    from ventflux.plugin_api import task_cores

    assert 1 <= n <= task_cores()
    assert cc._thread_count() == n  # measured once per process


def _spline_at_nodes(coef, taps):
    """Sum of ``coef[i + k] * taps[|k|]`` along both axes, whole-sample mirror beyond the edges."""
    m = len(taps) - 1
    out = np.asarray(coef, float)
    for axis in (0, 1):
        pad = np.pad(out, [(m, m) if a == axis else (0, 0) for a in (0, 1)], mode="reflect")
        n = out.shape[axis]
        out = sum(taps[abs(k)] * np.take(pad, np.arange(m + k, m + k + n), axis=axis) for k in range(-m, m + 1))
    return out


def test_bspline_coefficients_interpolate_the_frame():
    from scipy import ndimage

    # Interpolating B-spline coefficients reproduce the pixels when the spline is sampled at the
    # nodes [Unser 1999, eqs. 2-3]: B3 = (1, 4, 1)/6 and B5 = (1, 26, 66, 26, 1)/120 at the integers.
    img = np.random.default_rng(0).random((40, 57)).astype(np.float32)
    for order, taps in ((3, (4 / 6, 1 / 6)), (5, (66 / 120, 26 / 120, 1 / 120))):
        coef = cc.spline_coefficients(img, order)
        assert coef.dtype == np.float32 and coef.shape == img.shape
        assert np.allclose(_spline_at_nodes(coef, taps), img, atol=2e-5)
        sampled = cc.deform_frame(img, np.full(img.shape, 0.3, np.float32), np.full(img.shape, -0.45, np.float32),
                                  order=order)
        yy, xx = np.mgrid[0:40, 0:57]
        expect = ndimage.map_coordinates(img.astype(float), [yy + 0.3, xx - 0.45], order=order, mode="mirror")
        assert np.allclose(sampled[3:-3, 3:-3], expect[3:-3, 3:-3], atol=1e-4)


# ------------------------------------------------------------------ volume views (issue 12 checks)
@pytest.fixture(scope="module")
def volume_clip(tmp_path_factory):
    # Tracer through the whole plume (λ = 1.1), a motionless textured backdrop behind its lower part.
    return render_volume_plume(tmp_path_factory.mktemp("volume"), frames=30, width_ratio=1.1, backdrop=True,
                               seed=4)


@pytest.fixture(scope="module")
def volume_result(volume_clip):
    p = volume_clip
    return analyze_jet_clip(str(p.folder), Q_(p.metres_per_pixel, "m"), p.orifice_xy,
                            frame_rate=Q_(p.frame_rate, "1/s"), plume_constant=p.plume_constant,
                            width_ratio=p.width_ratio, ambient_temperature=Q_(2.0, "degC"), ambient_salinity=34.6,
                            pressure=Q_(25, "MPa"))


def test_volume_view_buoyancy_flux_within_10_and_exit_velocity_within_5_percent(volume_clip, volume_result):
    # Issue 12 limits, on a clip rendered from particles placed in 3-D (plume3d: Morton, Taylor & Turner 1956).
    p, res = volume_clip, volume_result
    assert res.view == "volume"
    assert res.buoyancy_flux.to("m^4/s^3").magnitude == pytest.approx(p.buoyancy_flux, rel=0.10)
    assert res.exit_velocity.to("m/s").magnitude == pytest.approx(p.centreline_speed(0.0), rel=0.05)


def test_volume_view_without_the_line_of_sight_is_far_low(volume_clip, volume_result):
    # What the camera sees on the axis is a tracer-weighted average along the line of sight: well below w_c.
    p, prof = volume_clip, volume_result.profile
    z = prof.height.to("m").magnitude
    seen = np.median(prof.apparent_velocity.to("m/s").magnitude / p.centreline_speed(z))
    assert seen < 0.9
    assert 0.6 < np.median(prof.sightline_factor) < 0.95


@pytest.mark.slow
def test_static_background_left_in_pulls_the_exit_velocity_down(volume_clip, volume_result):
    p = volume_clip
    raw = analyze_jet_clip(str(p.folder), Q_(p.metres_per_pixel, "m"), p.orifice_xy,
                           frame_rate=Q_(p.frame_rate, "1/s"), plume_constant=p.plume_constant,
                           width_ratio=p.width_ratio, background="none")
    truth = p.centreline_speed(0.0)
    assert abs(raw.exit_velocity.magnitude - truth) > abs(volume_result.exit_velocity.magnitude - truth)


def test_narrow_jet_is_flagged_with_a_window_that_resolves_it(volume_clip, volume_result):
    from ventflux_video.jet import narrow_jet

    assert not any("narrower" in f for f in volume_result.flags)
    reason = narrow_jet(volume_result.profile, window=64)
    assert reason is not None and "--windows" in reason and "narrower than 2 windows" in reason


# ------------------------------------------------------------------ uncertainty
def test_uncertainty_by_default_names_its_parts_and_shares_the_constants(volume_result):
    from ventflux_video.propagation import PARTS, jet_draws

    from ventflux.aggregate import SharedDraws

    draws = SharedDraws(4000, seed=3)
    one = jet_draws(volume_result, draws, {p: f"A/video/{p}" for p in PARTS})
    two = jet_draws(volume_result, draws, {p: f"B/video/{p}" for p in PARTS})
    assert set(one.parts) == set(PARTS)
    # k uniform over 3.85-4.7 alone moves F by tens of per cent (F ∝ k^-3): the total cannot be ±1 %.
    rel = np.std(one.heat_power.magnitude) / np.mean(one.heat_power.magnitude)
    assert rel > 0.1 and one.parts["plume_constant"]["buoyancy_flux"] > 0.1
    assert one.parts["tracer_to_velocity_width_ratio"]["buoyancy_flux"] > 0.002  # drawn, and it moves F
    # The default constants are one input for every vent: drawn once per draw, so the two vents move together.
    assert one.inputs["plume_constant"] == two.inputs["plume_constant"] == "video/plume_constant"
    assert "video/plume_constant" in draws.shared_names()
    assert np.corrcoef(one.heat_power.magnitude, two.heat_power.magnitude)[0, 1] > 0.5


# ------------------------------------------------------------------ frames
def _numbered(tmp_path, numbers, shift=(1.5, -1.0), names=None):
    rng = np.random.default_rng(2)
    x, y = rng.uniform(-10, 106, 400), rng.uniform(-10, 106, 400)
    for i, k in enumerate(numbers):
        img = _spots((96, 96), x + shift[0] * k, y + shift[1] * k, np.ones(x.size), 0.7)
        name = names[i] if names else f"frame_{k}.png"
        iio.imwrite(tmp_path / name, np.clip(img * 200, 0, 255).astype(np.uint8))
    return tmp_path


def test_numbered_frames_in_natural_order(tmp_path):
    # Sorted as text, frame_10 would come before frame_2 and the displacement would be wrong.
    folder = _numbered(tmp_path, range(1, 13))
    s = FrameStream(folder, frame_rate=Q_(10, "1/s"))
    assert [i for i, _ in s] == list(range(12)) and s.gaps == [] and s.duplicates == []
    assert main(["video-field", str(folder), "--frame-rate", "10/s", "--pixel-size", "1 mm", "--windows", "32",
                 "--json", "--background", "none"]) == 0


def test_gap_and_duplicate_numbers_are_reported_and_not_paired(tmp_path, capsys):
    folder = _numbered(tmp_path, [1, 2, 3, 5, 6, 7, 7], names=["frame_1.png", "frame_2.png", "frame_3.png",
                                                                   "frame_5.png", "frame_6.png", "frame_7.png",
                                                                   "frame_007.png"])
    s = FrameStream(folder, frame_rate=Q_(10, "1/s"))
    assert s.gaps == [4] and s.duplicates == ["frame_7.png"]
    from ventflux_video.frames import frame_pairs

    assert [i for i, _, _ in frame_pairs(s)] == [0, 1, 4, 5]  # 3 -> 5 is two intervals: not a pair


def test_video_container_timestamps_variable_rate(tmp_path):
    import imageio_ffmpeg

    frames = tmp_path / "f_%02d.png"
    for k in range(10):
        iio.imwrite(str(frames) % k, np.full((32, 32), 20 * k, np.uint8))
    out = tmp_path / "vfr.mkv"
    # Frame k shown at k/25 s, but 0.08 s more from frame 5 on (two frame times: the encoder's time base is
    # 1/25 s): a variable frame rate, written by ffmpeg itself.
    subprocess.run([imageio_ffmpeg.get_ffmpeg_exe(), "-v", "error", "-framerate", "25", "-i", str(frames),
                    "-vf", "setpts='(N/25+gte(N,5)*0.08)/TB'", "-fps_mode", "passthrough", "-c:v", "ffv1", str(out)],
                   check=True)
    t = container_times(out)
    assert t is not None and len(t) == 10
    assert np.diff(t)[4] == pytest.approx(0.12, abs=0.002) and np.diff(t)[0] == pytest.approx(0.04, abs=0.002)
    s = FrameStream(out)
    assert s.variable_rate and s.interval(4, 5) == pytest.approx(0.12, abs=0.002)
    assert sum(1 for _ in s) == 10


# ------------------------------------------------------------------ laser spots
def _laser_frames(tmp_path, n=6, snow=60):
    """Two red spots 200.0 px apart (sub-pixel positions) among bright white marine snow."""
    rng = np.random.default_rng(8)
    spots = np.array([[60.3, 100.6], [260.1, 101.0]])  # separation from the centres written here
    for k in range(n):
        img = np.full((200, 320, 3), 15.0)
        sx, sy = rng.uniform(0, 320, snow), rng.uniform(0, 200, snow)
        white = _spots((200, 320), sx, sy, rng.uniform(1.0, 1.3, snow), 1.6) * 230
        red = _spots((200, 320), spots[:, 0] + 0.2 * k, spots[:, 1], np.ones(2), 1.4) * 220
        img += white[..., None]
        img[..., 0] += red
        img[..., 1:] += 0.15 * red[..., None]
        iio.imwrite(tmp_path / f"l_{k}.png", np.clip(img, 0, 255).astype(np.uint8))
    return tmp_path, float(np.hypot(*(spots[1] - spots[0])))


def test_red_laser_among_marine_snow_scale_within_1_percent(tmp_path, capsys):
    folder, sep_px = _laser_frames(tmp_path)
    assert main(["video-scale", str(folder), "--frame-rate", "1/s", "--laser-separation", "10 cm",
                 "--laser-colour", "red", "--json"]) == 0
    res = json.loads(capsys.readouterr().out)
    assert res["pixel_size_m"] == pytest.approx(0.1 / sep_px, rel=0.01)  # issue 12 limit
    assert res["laser_colour"] == "red" and res["scale_spread"] < 0.01


def test_brightest_spots_among_marine_snow_are_refused_not_reported(tmp_path, capsys):
    folder, _ = _laser_frames(tmp_path)
    assert main(["video-scale", str(folder), "--frame-rate", "1/s", "--laser-separation", "10 cm", "--json"]) == 2
    err = capsys.readouterr().err.strip()
    # one line, then (with --json) the same error as one JSON object
    assert len(err.splitlines()) == 2 and "between frames" in err and "--laser-colour" in err.splitlines()[0]


def test_spot_colour_of_a_gray_clip_must_be_white():
    with pytest.raises(InputError, match="white"):
        scale.spot_score(np.zeros((8, 8)), "red")


# ------------------------------------------------------------------ start-up and the survey's header check
def test_command_registration_imports_no_heavy_module():
    code = ("import sys, argparse\n"
            "from ventflux_video.plugin import ventflux_commands\n"
            "ap = argparse.ArgumentParser(); sub = ap.add_subparsers()\n"
            "for c in ventflux_commands(): c.configure(sub.add_parser(c.name))\n"
            "heavy = ('scipy.fft', 'scipy.ndimage', 'scipy.optimize', 'scipy.special', 'matplotlib', 'imageio',\n"
            "         'imageio_ffmpeg', 'skimage', 'ventflux_video.correlation', 'ventflux_video.jet')\n"
            "print([m for m in heavy if m in sys.modules])\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


def test_survey_check_reads_the_clip_header_and_the_orifice_position(volume_clip, tmp_path, capsys):
    clip = volume_clip.folder
    survey = tmp_path / "s.toml"
    survey.write_text(f"""
[site]
name = "Test Site"
depth = "2500 m"
latitude = 10.0
longitude = -100.0
ambient_temperature = "2.0 degC"
ambient_salinity = 34.6

[[vent]]
name = "A"
  [[vent.orifice]]
  exit_temperature = "350 degC"
  velocity = "1.0 m/s"
  diameter = "10 cm"
  [vent.video]
  clip = "{clip}"
  pixel_size = "1 mm"
  frame_rate = "100/s"
  orifice = [150, 460]
""", encoding="utf-8")
    assert main(["survey", str(survey), "--check"]) == 2
    err = capsys.readouterr().err
    assert "vent[0].video.orifice" in err and "300 x 400 frame" in err


def test_a_clips_header_is_read_once_per_process_until_the_file_changes(tmp_path, monkeypatch):
    import os
    import shutil
    from pathlib import Path

    from ventflux_video import frames

    clip = tmp_path / "clip.mp4"
    shutil.copy(Path(__file__).resolve().parents[3] / "examples" / "oskeran-ridge" / "data" / "gildhorn_jet.mp4",
                clip)
    calls = []
    real = frames._probe_video
    monkeypatch.setattr(frames, "_probe_video", lambda src: calls.append(src) or real(src))
    a, b = FrameStream(clip), FrameStream(clip)
    assert len(calls) == 1 and a.frame_shape == b.frame_shape and a.expected_frames == b.expected_frames
    a.times[0] = -1.0  # each stream has its own copy of the times
    assert b.times[0] == 0.0
    st = clip.stat()
    os.utime(clip, ns=(st.st_atime_ns, st.st_mtime_ns + 1_000_000))
    FrameStream(clip)
    assert len(calls) == 2
    # only the last few files are kept (a series of many clips would otherwise keep every clip's frame times)
    monkeypatch.setattr(frames, "_HEADERS_KEPT", 1)
    other = tmp_path / "other.mp4"
    shutil.copy(clip, other)
    FrameStream(other)
    FrameStream(clip)
    assert len(calls) == 4 and len(frames._HEADERS) == 1
