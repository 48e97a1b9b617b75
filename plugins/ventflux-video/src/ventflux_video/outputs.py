"""Tables (CSV, units in the column names) and figures (matplotlib, Agg) of the video products."""

from __future__ import annotations

import io

import numpy as np

from ventflux.plugin_api import column_name, magnitude, subplots


def _csv(columns):
    """CSV text from ``{label: array}`` (all the same length)."""
    labels = list(columns)
    data = np.column_stack([np.asarray(columns[k], float).ravel() for k in labels])
    buf = io.StringIO()
    buf.write(",".join(labels) + "\n")
    np.savetxt(buf, data, delimiter=",", fmt="%.6g")
    return buf.getvalue().replace("nan", "")


def field_table(mean_field, metres_per_pixel):
    """Time-averaged velocity field, one row per window centre; ``w`` is up."""
    u, w, u_sd, w_sd = (q.to("m/s").magnitude for q in mean_field.velocity(metres_per_pixel))
    yy, xx = np.meshgrid(mean_field.y, mean_field.x, indexing="ij")
    return _csv({
        column_name("x", "px"): xx, column_name("y", "px"): yy,
        column_name("u", "m/s"): u, column_name("w", "m/s"): w,
        column_name("u_sd", "m/s"): u_sd, column_name("w_sd", "m/s"): w_sd,
        "valid_pairs": mean_field.count, "peak_ratio": mean_field.snr,
    })


def profile_table(profile, fit=None):
    """Centreline profile with the plume-theory fit beside it."""
    from .plume import plume_centreline_speed

    cols = {
        column_name("height", "m"): profile.height.to("m").magnitude,
        column_name("w_centreline", "m/s"): profile.velocity.to("m/s").magnitude,
        column_name("w_sd", "m/s"): profile.velocity_sd.to("m/s").magnitude,
        column_name("w_se", "m/s"): profile.velocity_se.to("m/s").magnitude,
        column_name("half_width", "m"): profile.half_width.to("m").magnitude,
        column_name("centre_x", "px"): profile.centre_x,
        "valid_pairs": profile.samples,
    }
    if profile.apparent_velocity is not None:  # what the windows measured, and the two factors between
        cols[column_name("w_measured", "m/s")] = profile.apparent_velocity.to("m/s").magnitude
        cols["window_factor"] = profile.window_factor
        cols["sightline_factor"] = profile.sightline_factor
    if fit is not None:
        cols[column_name("w_plume_fit", "m/s")] = plume_centreline_speed(
            profile.height, fit.buoyancy_flux, fit.virtual_origin, fit.plume_constant).to("m/s").magnitude
    return _csv(cols)


def tracks_table(tracks):
    return _csv({"frame": tracks.frame, "track": tracks.track, column_name("x", "px"): tracks.x,
                 column_name("y", "px"): tracks.y})


def field_figure(mean_field, metres_per_pixel, orifice_xy=None):
    """PNG bytes: mean velocity vectors over a frame of the clip (arrows point up for ``w > 0``)."""
    u, w, _, _ = (q.to("m/s").magnitude for q in mean_field.velocity(metres_per_pixel))
    fig, ax = subplots(figsize=(5, 6), dpi=110)
    if mean_field.background is not None:
        h, wd = mean_field.background.shape
        x0, y0 = mean_field.origin
        ax.imshow(mean_field.background, cmap="gray", extent=(x0 - 0.5, x0 + wd - 0.5, y0 + h - 0.5, y0 - 0.5))
    xx, yy = np.meshgrid(mean_field.x, mean_field.y)
    speed = np.hypot(u, w)
    # angles="uv": a positive w is drawn up the screen although the image's rows run down.
    top = np.nanmax(speed) if np.isfinite(speed).any() and np.nanmax(speed) > 0 else 1.0
    step = float(np.median(np.diff(mean_field.x))) if mean_field.x.size > 1 else 16.0
    # Longest arrow 1.5 grid steps long.
    q = ax.quiver(xx, yy, u, w, speed, cmap="viridis", angles="uv", pivot="mid", scale_units="xy",
                  scale=top / (1.5 * step), width=0.004)
    fig.colorbar(q, ax=ax, label="speed [m/s]")
    if orifice_xy is not None:
        ax.plot([orifice_xy[0]], [orifice_xy[1]], marker="^", color="tab:red", ls="none", label="orifice")
        ax.legend(loc="lower right", fontsize=8)
    ax.set_xlabel("column [px]")
    ax.set_ylabel("row [px]")
    ax.set_title(f"mean velocity, {mean_field.pairs} pairs ({mean_field.mode})", fontsize=9)
    return _png(fig)


def profile_figure(profile, fit=None, exit_velocity=None, exit_velocity_sd=None):
    """PNG bytes of ``profile_plot`` (for the command line's output folder)."""
    return _png(profile_plot(profile, fit, exit_velocity, exit_velocity_sd))


def profile_plot(profile, fit=None, exit_velocity=None, exit_velocity_sd=None):
    """A matplotlib figure: centreline ``w(z)`` with its spread, the plume fit and the exit velocity."""
    from .plume import plume_centreline_speed

    z = profile.height.to("m").magnitude
    w = profile.velocity.to("m/s").magnitude
    sd = profile.velocity_sd.to("m/s").magnitude
    fig, ax = subplots(figsize=(5, 5), dpi=110)
    ax.fill_betweenx(z, w - sd, w + sd, color="tab:blue", alpha=0.2, label="± 1 sd over pairs")
    ax.plot(w, z, "o", color="tab:blue", ms=4, label="centreline")
    if fit is not None:
        zz = np.linspace(max(z.min(), 1e-6), z.max(), 200)
        wf = plume_centreline_speed(zz * profile.height.units, fit.buoyancy_flux, fit.virtual_origin,
                                    fit.plume_constant).to("m/s").magnitude
        ax.plot(wf, zz, "-", color="tab:orange",
                label=f"plume fit F = {fit.buoyancy_flux.to('m^4/s^3').magnitude:.3g} m⁴/s³")
    if exit_velocity is not None:
        e = magnitude(exit_velocity, "m/s")
        es = 0.0 if exit_velocity_sd is None else magnitude(exit_velocity_sd, "m/s")
        ax.errorbar([e], [0.0], xerr=[es], fmt="s", color="tab:red", label=f"exit {e:.3g} ± {es:.2g} m/s")
    ax.set_xlabel("upward velocity w [m/s]")
    ax.set_ylabel("height above orifice z [m]")
    ax.set_title("Centreline velocity against height above the orifice", fontsize=9)
    ax.legend(fontsize=8)
    ax.grid(alpha=0.3)
    fig.set_layout_engine("tight")
    return fig


def _png(fig):
    buf = io.BytesIO()
    fig.set_layout_engine("tight")
    fig.savefig(buf, format="png")
    return buf.getvalue()
