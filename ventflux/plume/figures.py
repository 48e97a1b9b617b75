"""Figure of a plume's profiles beside the stratification it rises through (matplotlib, Agg)."""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from ..errors import InputError
from ..io import atomic_write_bytes


def plume_figure(result) -> Figure:
    """Stratification, plume radius, velocity and (with a current) path against height above the vent.

    ``result`` is a ``PlumeRiseResult`` computed with ``track=True`` (for
    Monte Carlo results the nominal plume is drawn).
    """
    r = result.nominal if result.nominal is not None else result
    col = r.column
    bent = r.track is not None and np.nanmax(np.abs(r.track["distance"].magnitude)) > 0
    ncol = 4 if bent else 3
    fig = Figure(figsize=(3.0 * ncol, 4.6), layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(1, ncol, sharey=True)
    zt = float(np.nanmax(np.atleast_1d(r.rise_height.to("m").magnitude)))
    zs = float(np.nanmax(np.atleast_1d(r.spreading_height.to("m").magnitude)))
    ymax = min(col.top, 1.3 * zt) if np.isfinite(zt) else col.top
    prof = col.profile
    hz = col.vent_depth - prof.n2_depth.to("m").magnitude
    keep = (hz >= 0) & (hz <= ymax)
    ax = axes[0]
    ax.plot(prof.buoyancy_frequency_squared.to("1/s^2").magnitude[keep] * 1e6, hz[keep], color="0.2")
    ax.set_xlabel("N² [10⁻⁶ s⁻²]")
    ax.set_ylabel("height above vent [m]")
    ax2 = ax.twiny()
    h = col.height <= ymax
    ax2.plot(col.CT[h], col.height[h], color="tab:red", lw=0.8)
    ax2.set_xlabel("ambient Θ [°C]", color="tab:red")
    if r.track is not None:
        t = r.track
        z = t["height"].to("m").magnitude
        axes[1].plot(t["radius"].to("m").magnitude, z, color="tab:blue")
        axes[1].set_xlabel("plume radius b [m]")
        axes[2].plot(t["velocity"].to("m/s").magnitude, z, color="tab:blue")
        axes[2].set_xlabel("plume speed [m/s]")
        axes[2].set_xscale("log")
        if bent:
            axes[3].plot(t["distance"].to("m").magnitude, z, color="tab:blue")
            axes[3].set_xlabel("downstream distance [m]")
    for a in axes:
        for level, style, name in ((zt, "-", "maximum rise"), (zs, "--", "spreading level")):
            if np.isfinite(level):
                a.axhline(level, color="0.4", ls=style, lw=0.8, label=name)
        a.set_ylim(0, ymax)
        a.grid(alpha=0.3)
    axes[-1].legend(loc="lower right", fontsize=8)
    fig.suptitle(f"Plume rise ({r.method}, {r.heat_power.to('MW').magnitude:.3g} MW)", fontsize=10)
    return fig


def figure_format(path) -> str:
    """The image format named by ``path``'s suffix (PNG without one); ``InputError`` if matplotlib cannot write it."""
    suffix = Path(path).suffix.lower().lstrip(".")
    fmt = suffix or "png"
    allowed = FigureCanvasAgg.get_supported_filetypes()
    if fmt not in allowed:
        raise InputError("figure", str(path), "a file name ending in one of " + ", ".join(f".{k}" for k in
                                                                                        sorted(allowed)))
    return fmt


def save_plume_figure(result, path):
    """Draw ``plume_figure(result)`` and write it atomically to ``path`` (format from the suffix)."""
    fmt = figure_format(path)
    fig = plume_figure(result)
    buf = io.BytesIO()
    fig.savefig(buf, format=fmt, dpi=120)
    atomic_write_bytes(path, buf.getvalue())
    return path
