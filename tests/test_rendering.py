"""Figures rendered in worker processes are the figures rendered here (``ventflux.survey.rendering``)."""

import os
import re
import subprocess
import sys
import threading
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402

from ventflux.survey.rendering import FigureRenderer, render_figure  # noqa: E402


def _figure(k):
    fig, ax = plt.subplots(figsize=(4, 3))
    x = np.linspace(0.0, 1.0, 50)
    ax.plot(x, x ** (k + 1), label=f"power {k + 1}")
    ax.set_title(f"figure {k}")
    ax.legend()
    return fig


def _content(svg: bytes):
    # the texts and the sequence of element kinds; matplotlib names clip paths by a hash of object addresses
    # and places a tick label by metrics it caches per process, so identifiers and coordinates may differ
    return re.findall(rb">([^<>]+)<", svg), re.findall(rb"<([a-z]+)", svg)


def _compare_in_this_process():
    here = [render_figure(_figure(k)) for k in range(3)]
    with FigureRenderer(workers=2) as r:
        assert r.workers == 2, "a fresh single-threaded process renders in workers"
        jobs = [r.submit(_figure(k)) for k in range(3)]
    away = [j.result() for j in jobs]
    assert [a[0] for a in away] == [h[0] for h in here]  # PNG
    assert [_content(a[1]) for a in away] == [_content(h[1]) for h in here]  # SVG: same elements and texts
    assert away[0][0][:8] == b"\x89PNG\r\n\x1a\n" and away[0][1].lstrip().startswith(b"<?xml")


@pytest.mark.skipif((os.cpu_count() or 1) < 2 or not sys.platform.startswith("linux"),
                    reason="one core, or not Linux: figures are rendered in the caller")
def test_worker_processes_render_the_same_figures_as_the_caller():
    # in a fresh process: the test session may hold threads of its own (then nothing is forked, rightly)
    code = "import sys; sys.path.insert(0, sys.argv[1]); import test_rendering as t; t._compare_in_this_process()"
    done = subprocess.run([sys.executable, "-c", code, str(Path(__file__).parent)], capture_output=True, text=True,
                          timeout=300)
    assert done.returncode == 0, done.stderr[-3000:]


def test_a_process_with_other_threads_renders_its_figures_itself():
    # a fork would copy the other thread's locks without the thread: no workers then
    stop = threading.Event()
    t = threading.Thread(target=stop.wait)
    t.start()
    try:
        r = FigureRenderer(workers=2)
        assert r.workers == 0
        with r:
            png, svg = r.submit(_figure(0)).result()
        assert png == render_figure(_figure(0))[0]
    finally:
        stop.set()
        t.join()


def test_a_submitted_figure_is_closed_in_the_caller():
    fig = _figure(1)
    with FigureRenderer(workers=0) as r:
        r.submit(fig).result()
    assert not plt.fignum_exists(fig.number)



def test_a_survey_run_leaves_no_figure_in_pyplot(tmp_path):
    # ventflux's figures are files: a notebook must not show two dozen of them at the end of a cell, and repeated
    # runs must not pile them up in pyplot's list of open figures
    from test_executor_fork import _light_demo

    from ventflux.executor import SerialExecutor
    from ventflux.survey.report import write_results
    from ventflux.survey.run import run_survey
    from ventflux.survey.spec import load_survey

    plt.close("all")
    result = run_survey(load_survey(_light_demo(tmp_path)), executor=SerialExecutor())
    assert plt.get_fignums() == []
    write_results(result, tmp_path / "out")
    assert plt.get_fignums() == []
    assert len(list((tmp_path / "out" / "figures").glob("*.png"))) >= 5


def test_a_laid_out_figure_keeps_its_layout_in_the_svg():
    # The SVG reuses the axes' places from the PNG's drawing instead of solving the layout again: the axes
    # stand where a fresh constrained layout puts them, with the same texts. Within half a point, less than a
    # pixel on screen: text is measured at the PNG's 200 dpi there and at 72 dpi in a fresh SVG (0.3 pt seen).
    import io

    from matplotlib.figure import Figure

    def laid_out():
        fig = Figure(figsize=(6, 3), layout="constrained")
        for k, ax in enumerate(fig.subplots(1, 2)):
            ax.plot([1, 2, 3], [k, 2 * k, 10 * k])
            ax.set_ylabel("a long label that needs a wide margin [m³/s]")
            ax.set_title(f"panel {k}")
        return fig

    _, svg = render_figure(laid_out())
    fresh = io.BytesIO()
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "ventflux"}):
        laid_out().savefig(fresh, format="svg", metadata={"Date": None})

    def axes_boxes(data: bytes):
        # the axes' background and spine patches: <g id="patch_N"> <path d="M x y L ...
        return [[float(v) for v in re.findall(rb"-?\d+\.?\d*", d)[:8]]
                for d in re.findall(rb'<g id="patch_[2-9]">\s*<path d="([^"]+)"', data)]

    here, there = axes_boxes(svg), axes_boxes(fresh.getvalue())
    assert len(here) == len(there) >= 2  # backgrounds and spines of both axes
    for a, b in zip(here, there, strict=True):
        np.testing.assert_allclose(a, b, atol=0.5)
    assert _content(svg)[0] == _content(fresh.getvalue())[0]


@pytest.mark.parametrize("label, text", [(r"$\mathdefault{10^{-2}}$", "10⁻²"), (r"$\mathdefault{10^{0}}$", "10⁰"),
                                         (r"$\mathdefault{2\times10^{1}}$", "2×10¹"),
                                         (r"$\mathdefault{10^{15}}$", "10¹⁵"), ("", ""), ("0.5", "0.5")])
def test_log_tick_labels_in_plain_text(label, text):
    from ventflux.survey.rendering import unicode_power

    assert unicode_power(label) == text


def test_a_log_axis_is_labelled_without_mathtext(monkeypatch):
    # The same ticks carry labels as with matplotlib's own formatter (a span under one decade labels minor
    # ticks), set as plain text: the SVG holds them as text, and mathtext is never parsed.
    import matplotlib.mathtext

    from matplotlib.figure import Figure

    def refuse(*a, **k):
        raise AssertionError("mathtext parsed")

    fig = Figure(figsize=(4, 3))
    ax1, ax2 = fig.subplots(1, 2)
    ax1.plot([1e-3, 1e2], [1, 2])
    ax1.set_xscale("log")
    ax2.plot([20, 80], [1, 2])
    ax2.set_xscale("log")
    monkeypatch.setattr(matplotlib.mathtext.MathTextParser, "parse", refuse)
    _, svg = render_figure(fig)
    texts = set(_content(svg)[0])
    decades = {t.decode() for t in texts if t.startswith(b"10") and not t.strip().isdigit()}
    assert "10⁰" in decades and any("⁻" in t for t in decades), decades
    assert {"2×10¹".encode(), "6×10¹".encode()} <= texts


def test_figures_rendered_ahead_are_handed_to_the_renderer_as_they_would_render():
    from types import SimpleNamespace

    from ventflux.survey.rendering import render_one_ahead, subplots

    def made(k):
        fig, ax = subplots(figsize=(3, 2))
        ax.plot([0, 1, 2], [0, k, 2 * k])
        ax.set_title(f"figure {k}")
        fig.set_layout_engine("tight")
        return fig

    figs = [made(k) for k in range(3)]
    estimates = [SimpleNamespace(figures=[("a", figs[0], ""), ("png", b"\x89PNG handed over", "")]),
                 SimpleNamespace(figures=[("b", figs[1], ""), ("c", figs[2], "")]), SimpleNamespace()]
    rendered = 0
    while render_one_ahead(estimates):
        rendered += 1
    assert rendered == 3  # one figure a call; a finished PNG and an estimate without figures are passed over
    from ventflux.survey import rendering

    assert all(f in rendering._RENDERED for f in figs)
    with FigureRenderer(workers=0) as r:
        got = [r.submit(f).result() for f in figs]
    assert not any(f in rendering._RENDERED for f in figs)  # handed over, not rendered again, not kept
    assert got == [render_figure(made(k)) for k in range(3)]  # same PNG and SVG bytes as rendering them now
    assert not render_one_ahead(estimates[:0])


def test_a_pyplot_figure_keeps_its_canvas():
    fig = _figure(0)
    canvas = fig.canvas
    render_figure(fig)
    assert fig.canvas is canvas
    plt.close(fig)


@pytest.mark.parametrize("transparent", [False, True])
def test_the_png_holds_the_pixels_matplotlib_draws(transparent):
    import io

    from PIL import Image

    from ventflux.survey.rendering import FIGURE_DPI, subplots

    def made():
        fig, ax = subplots(figsize=(3, 2))
        ax.plot([0, 1, 2], [0, 1, 4], "o-")
        ax.set_title("pixels")
        if transparent:
            fig.patch.set_alpha(0.0)
            ax.patch.set_alpha(0.0)
        return fig

    png, _ = render_figure(made())
    fig = made()
    render_figure(fig)  # the same state (layout solved), then matplotlib's own PNG of it
    ref = io.BytesIO()
    fig.savefig(ref, format="png", dpi=FIGURE_DPI)
    got, want = Image.open(io.BytesIO(png)), Image.open(io.BytesIO(ref.getvalue()))
    assert want.mode == "RGBA" and got.size == want.size
    # an opaque figure is written without its alpha channel (every alpha 255), a transparent one keeps it
    assert got.mode == ("RGBA" if transparent else "RGB")
    np.testing.assert_array_equal(np.asarray(got), np.asarray(want)[:, :, :np.asarray(got).shape[2]])
    if not transparent:
        assert (np.asarray(want)[:, :, 3] == 255).all()
    assert got.info["Software"] == want.info["Software"] and round(got.info["dpi"][0]) == FIGURE_DPI


def test_a_figure_that_fails_ahead_is_left_to_the_writer():
    from types import SimpleNamespace

    from ventflux.survey.rendering import render_one_ahead, subplots

    fig, ax = subplots(figsize=(3, 2))
    ax.plot([0, 1], [0, 1])

    def broken(*_a, **_k):
        raise ValueError("cannot draw this")

    ax.draw = broken  # an artist that raises when drawn
    estimates = [SimpleNamespace(figures=[("x", fig, "")])]
    assert render_one_ahead(estimates) is True  # the run goes on
    assert render_one_ahead(estimates) is False  # and does not try it again
    with FigureRenderer(workers=0) as r, pytest.raises(ValueError, match="cannot draw this"):
        r.submit(fig)  # the writer renders it and raises, as without rendering ahead
