"""A survey figure written twice: PNG at print resolution for the results folder, SVG for the HTML report.

Rendering is most of the time a results folder takes to write (about 0.2 s a
figure at 200 dpi, two dozen figures in a survey), and it is independent per
figure. ``FigureRenderer`` therefore renders figures in worker processes
while the caller goes on (the budget, the netCDF file). The workers are
forked (they start in milliseconds with matplotlib already imported, and
never import the caller's script again, as spawned workers would), and
only from a single-threaded process: a fork copies the locks another
thread holds but not the thread that would release them. Where the
process has other threads (a Dask executor, an application's own), has
one core, or a figure cannot be pickled or a worker died, the caller
renders the figure itself. The PNG bytes are the same either way and the
SVG has the same elements and texts (a test compares them).
"""

from __future__ import annotations

import io
import pickle
import re
from typing import Any

#: Resolution of the PNG figures in the results folder [dots per inch] (print quality; the report embeds SVG).
FIGURE_DPI = 200


def subplots(*args, figsize=None, dpi=None, **kwargs):
    """``(figure, axes)`` like ``matplotlib.pyplot.subplots``, but a figure pyplot does not hold.

    ventflux's figures are files, never windows: made this way they are not
    shown by a notebook at the end of a cell, do not pile up in pyplot's list
    of open figures over repeated runs, and need no change of the user's
    backend.
    """
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize, dpi=dpi)
    return fig, fig.subplots(*args, **kwargs)


_SUPERSCRIPT = str.maketrans("0123456789-−", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁻")
_MATHTEXT_POWER = re.compile(r"^\$\\mathdefault\{(?:([0-9.]+)\\times)?(10)\^\{([-−]?[0-9]+)\}\}\$$")


def unicode_power(label: str) -> str:
    """A log axis's tick label ``$\\mathdefault{2\\times10^{-3}}$`` as plain text ``2×10⁻³``.

    Any other label is returned as it is.
    """
    m = _MATHTEXT_POWER.match(label)
    if m is None:
        return label
    mantissa, base, power = m.groups()
    return f"{mantissa + '×' if mantissa else ''}{base}{power.translate(_SUPERSCRIPT)}"


def _plain_log_labels(fig) -> None:
    """Log axes label their ticks in plain text (``10⁻²``) instead of matplotlib's mathtext.

    The same ticks get labels (matplotlib's own formatter chooses them); only the text is set in Unicode
    superscripts. Parsing mathtext was about a tenth of the rendering time (measured on the demo survey).
    """
    from matplotlib.ticker import FuncFormatter, LogFormatterSciNotation

    for ax in fig.axes:
        for axis in (ax.xaxis, ax.yaxis):
            for get, set_ in ((axis.get_major_formatter, axis.set_major_formatter),
                              (axis.get_minor_formatter, axis.set_minor_formatter)):
                f = get()
                if type(f) is LogFormatterSciNotation:
                    set_(FuncFormatter(lambda x, pos, f=f: unicode_power(f(x, pos))))


#: zlib level of the PNG files: 1 (fastest). Without the alpha channel of an opaque figure, the files are as large
#: as matplotlib's RGBA files at its default level 6, in half the encoding time (the demo's twenty figures:
#: 2.19 against 2.17 MB, 0.5 against 1.0 s, measured). Encoding was the largest single part of rendering.
PNG_COMPRESS_LEVEL = 1


def _png(fig) -> bytes:
    """The figure as PNG at ``FIGURE_DPI``: drawn by ``savefig`` (every savefig setting applies), then written
    as RGB when every pixel is opaque (the same pixels; a figure with transparency keeps its alpha channel)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    if not isinstance(fig.canvas, FigureCanvasAgg):  # a canvas of pyplot's: matplotlib's own PNG
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=FIGURE_DPI)
        return buf.getvalue()
    import matplotlib
    import numpy as np
    from PIL import Image, PngImagePlugin

    raw = io.BytesIO()
    fig.savefig(raw, format="rgba", dpi=FIGURE_DPI)
    renderer = fig.canvas.renderer  # the one that drew it: its size is the image's
    pixels = np.frombuffer(raw.getbuffer(), np.uint8).reshape(int(renderer.height), int(renderer.width), 4)
    image = Image.frombuffer("RGBA", (pixels.shape[1], pixels.shape[0]), pixels, "raw", "RGBA", 0, 1)  # as matplotlib
    if pixels[:, :, 3].min() == 255:
        image = image.convert("RGB")
    info = PngImagePlugin.PngInfo()  # what matplotlib writes: its name and version
    info.add_text("Software", f"Matplotlib version{matplotlib.__version__}, https://matplotlib.org/")
    out = io.BytesIO()
    image.save(out, format="png", pnginfo=info, dpi=(FIGURE_DPI, FIGURE_DPI), compress_level=PNG_COMPRESS_LEVEL)
    return out.getvalue()


def render_figure(fig) -> tuple[bytes, bytes]:
    """A matplotlib figure as (PNG at ``FIGURE_DPI``, SVG): the PNG for the folder, the SVG for the report.

    The SVG keeps its text as text (searchable, small) and carries no date.
    """
    import matplotlib
    from matplotlib.backend_bases import FigureCanvasBase
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.layout_engine import PlaceHolderLayoutEngine

    _plain_log_labels(fig)
    if type(fig.canvas) is FigureCanvasBase:
        # The layout is then measured with the renderer the PNG is drawn with (an Agg canvas keeps its renderer
        # for one size and resolution), so the PNG reuses the layout's text extents instead of measuring every
        # text again: the same bytes, about 5 % less rendering time on the demo's figures (measured). A canvas
        # of pyplot's (a figure shown in a window or a notebook) is left as it is.
        FigureCanvasAgg(fig)
    # A figure with a layout engine is drawn twice by every savefig, once without output to place its axes
    # and once for real, and the SVG's placeholder engine still triggers the first. The layout is therefore
    # solved once here, at the PNG's resolution (where savefig would solve it), and the engine removed: each
    # file is then drawn once. The bytes are those of the two-draw route (compared on the demo's figures);
    # about 0.5 s less CPU for the demo's twenty figures (measured).
    with matplotlib.rc_context({"figure.autolayout": False, "figure.constrained_layout.use": False}):
        engine = fig.get_layout_engine()
        if engine is not None and not isinstance(engine, PlaceHolderLayoutEngine):
            fig.set_dpi(FIGURE_DPI)
            engine.execute(fig)
        fig.set_layout_engine(None)  # with those rc values: no engine at all, not a placeholder
        png = _png(fig)
        svg = io.BytesIO()
        with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "ventflux"}):
            fig.savefig(svg, format="svg", metadata={"Date": None})
    return png, svg.getvalue()


_RENDERED: Any = None  # figure -> (PNG, SVG) rendered ahead, or None if that failed (``render_one_ahead``); a
# WeakKeyDictionary once used


def render_one_ahead(estimates) -> bool:
    """Render one figure of these estimates (their ``figures``) not rendered yet, keep it for ``FigureRenderer``.

    Returns False when every figure is rendered. A survey calls it while a core is free during its estimates
    (``ventflux.executor.ForkExecutor.map``'s ``spare``): the figures of finished tasks are then ready before
    the results are written. The bytes are those ``render_figure`` gives at writing time (the same function).
    """
    global _RENDERED
    import weakref

    if _RENDERED is None:
        _RENDERED = weakref.WeakKeyDictionary()
    for est in estimates:
        for _, fig, _ in getattr(est, "figures", ()):
            if not isinstance(fig, bytes) and fig not in _RENDERED:
                try:
                    _RENDERED[fig] = render_figure(fig)
                except Exception:  # noqa: BLE001 - left to the writer, which renders it again and raises there
                    _RENDERED[fig] = None  # as a figure that fails to render always did: not ahead of the run
                return True
    return False


def _ahead(fig):
    """The (PNG, SVG) of ``fig`` rendered ahead, taken out of the store; None if it was not."""
    return None if _RENDERED is None else _RENDERED.pop(fig, None)


def _release(fig) -> None:
    """Close a figure that pyplot holds (one made with ``matplotlib.pyplot``); ``subplots`` figures it does not."""
    if getattr(fig.canvas, "manager", None) is not None:
        import matplotlib.pyplot as plt

        plt.close(fig)


def _render_pickled(data: bytes) -> tuple[bytes, bytes]:
    """Worker side: unpickle a figure, render it, close it."""
    fig = pickle.loads(data)
    try:
        return render_figure(fig)
    finally:
        _release(fig)


class _Done:
    """A finished rendering with the interface of a future."""

    def __init__(self, value):
        self._value = value

    def result(self):
        return self._value


class _Pending:
    """A rendering in a worker; should the worker die, the figure is rendered here from its pickle."""

    def __init__(self, future, data):
        self._future, self._data = future, data

    def result(self):
        from concurrent.futures.process import BrokenProcessPool

        try:
            return self._future.result()
        except BrokenProcessPool:
            return _render_pickled(self._data)


class FigureRenderer:
    """Render figures in the background; ``submit(fig)`` returns an object whose ``result()`` is (PNG, SVG).

    Use as a context manager; the figure is closed in this process once
    submitted. ``workers=0`` renders in the calling process.
    """

    def __init__(self, workers: int | None = None):
        from ..executor import FORK_WORKERS, ForkExecutor, usable_cores

        if workers is None:
            workers = min(FORK_WORKERS, usable_cores())
        if not ForkExecutor.usable(2):  # the one rule for forking, and one worker count (ventflux.executor)
            workers = 0
        self.workers = workers
        self._pool: Any = None  # a ProcessPoolExecutor while open (imported only then)

    def __enter__(self):
        if self.workers > 0:
            import multiprocessing
            from concurrent.futures import ProcessPoolExecutor

            # with the fork method every worker is started at the first submit, before the pool's own thread
            self._pool = ProcessPoolExecutor(self.workers, mp_context=multiprocessing.get_context("fork"))
        return self

    def __exit__(self, *exc):
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=exc[0] is not None)
            self._pool = None
        return False

    def submit(self, fig):
        try:
            ready = _ahead(fig)
            if ready is not None:
                return _Done(ready)
            if self._pool is None:
                return _Done(render_figure(fig))
            try:
                data = pickle.dumps(fig)
            except Exception:  # an artist that cannot be pickled: render it here
                return _Done(render_figure(fig))
            return _Pending(self._pool.submit(_render_pickled, data), data)
        finally:
            _release(fig)


__all__ = ["FIGURE_DPI", "FigureRenderer", "render_figure", "render_one_ahead", "subplots"]
