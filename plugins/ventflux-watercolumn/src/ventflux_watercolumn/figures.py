"""Figures of a section (matplotlib, Agg), as PNG bytes: Δθ section, anomaly profiles, heat flux interval."""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from ventflux.plugin_api import subplots


def _png(fig) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110)
    return buf.getvalue()




def section_plot(res):
    """Δθ on the section (distance × depth, binned per profile) with the detected layer outlined."""
    fig, ax = subplots(figsize=(8, 4.5))
    order = np.argsort(res.s)
    s = res.s[order]
    grid = 1e3 * res.dtheta_grid[order].T
    lim = max(float(np.nanpercentile(np.abs(grid), 99)), 1e-3) if np.isfinite(grid).any() else 1.0
    # rasterized: in a vector file (the report's SVG) the mesh is one embedded image instead of a path per cell
    # (a third of a megabyte on the demo's section); axes, labels and the layer outline stay vectors
    m = ax.pcolormesh(s, res.depth, np.ma.masked_invalid(grid), cmap="RdBu_r", vmin=-lim, vmax=lim, shading="nearest",
                      rasterized=True)
    fig.colorbar(m, ax=ax, label="Δθ [mK]")
    f = res.found[order]
    half = 0.5 * res.bin_size
    ax.plot(s[f], res.top_depth[order][f] - half, "k-", lw=1.2, label="layer top / bottom")
    ax.plot(s[f], res.bottom_depth[order][f] + half, "k-", lw=1.2)
    ax.plot(s[f], res.core_depth[order][f], "k.", ms=5, label="core (largest anomaly)")
    lo, hi = res.band
    if hi >= lo:
        ax.axhspan(res.edges[lo], res.edges[hi + 1], color="0.5", alpha=0.08, label="flux integration band")
    ax.invert_yaxis()
    ax.set_xlabel("distance along the section [m]")
    ax.set_ylabel("depth [m]")
    ax.legend(loc="lower right", fontsize=8)
    ax.set_title(f"{Path(res.source).name}: potential-temperature anomaly")
    fig.set_layout_engine("tight")
    return fig


def section_png(res) -> bytes:
    """``section_plot`` as PNG bytes (for a figures folder of the command line)."""
    return _png(section_plot(res))


def profiles_plot(res):
    """θ against σ₀ with the background fit, and Δθ against depth for every profile (layer profiles dark)."""
    optical = res.optical_grid is not None
    fig, axes = subplots(1, 3 if optical else 2, figsize=(13 if optical else 9, 4.5))
    a1, a2 = axes[0], axes[1]
    use = res.sample_profile >= 0
    step = max(1, int(use.sum() // 20000))  # a readable scatter, not every sample
    idx = np.flatnonzero(use)[::step]
    # rasterized, as the section's mesh: thousands of dots are one image in the SVG, not one element each
    a1.plot(res.sample_sigma0[idx], res.sample_theta[idx], ".", ms=1, color="tab:red", label="samples",
            rasterized=True)
    o = np.argsort(res.sample_sigma0[idx])
    a1.plot(res.sample_sigma0[idx][o], res.sample_background[idx][o], "k-", lw=1, label="background fit")
    from matplotlib.ticker import MaxNLocator

    a1.xaxis.set_major_locator(MaxNLocator(4))
    a1.set_xlabel("σ₀ [kg/m³]")
    a1.set_ylabel("θ [°C]")
    a1.legend(fontsize=8)
    for p in range(res.n_profiles):
        a2.plot(1e3 * res.dtheta_grid[p], res.depth, "-", lw=0.8, color="tab:red" if res.found[p] else "0.7")
    thr = 1e3 * res.factor * res.noise
    a2.axvline(thr, color="k", ls="--", lw=0.8, label=f"threshold {thr:.2g} mK")
    a2.invert_yaxis()
    a2.set_xlabel("Δθ [mK]")
    a2.set_ylabel("depth [m]")
    a2.legend(fontsize=8)
    if optical:  # the optical anomaly against its own background median
        a3 = axes[2]
        for p in range(res.n_profiles):
            a3.plot(res.optical_grid[p], res.depth, "-", lw=0.8, color="tab:blue" if res.found[p] else "0.7")
        a3.axvline(res.factor * res.optical_noise, color="k", ls="--", lw=0.8,
                   label=f"{res.factor:g} × noise ({res.optical_noise:.2g})")
        a3.invert_yaxis()
        # the optical sensor's own linear units (backscatter or turbidity), as recorded in the file
        a3.set_xlabel(f"optical anomaly [sensor units] (background {res.optical_background:.3g})")
        a3.legend(fontsize=8)
    fig.suptitle(f"{Path(res.source).name}: background fit and anomaly profiles")
    fig.set_layout_engine("tight")
    return fig


def profiles_png(res) -> bytes:
    """``profiles_plot`` as PNG bytes (for a figures folder of the command line)."""
    return _png(profiles_plot(res))


def flux_plot(out):
    """The heat flux's draws with its 90 % interval and the parts of its spread."""
    fig, ax = subplots(figsize=(7, 3.5))
    h = out.heat_flux[np.isfinite(out.heat_flux)] / 1e6
    ax.hist(h, bins=60, color="tab:orange", alpha=0.7, density=True)
    p05, p50, p95 = np.percentile(h, [5, 50, 95])
    for v, ls in ((p05, "--"), (p50, "-"), (p95, "--")):
        ax.axvline(v, color="k", ls=ls, lw=1)
    parts = ", ".join(f"{k} ±{np.nanstd(v) / 1e6:.2g}" for k, v in out.parts.items())
    ax.set_title(f"heat flux {p50:.3g} MW (90 %: {p05:.3g}–{p95:.3g})\nsd of each part alone: {parts} MW", fontsize=8)
    ax.set_xlabel("heat flux across the section [MW]")
    ax.set_yticks([])
    fig.set_layout_engine("tight")
    return fig


def flux_png(out) -> bytes:
    """``flux_plot`` as PNG bytes (for a figures folder of the command line)."""
    return _png(flux_plot(out))


def section_figures(res, out) -> list:
    """``(stem, matplotlib figure, caption)`` for the survey report (it writes SVG and PNG)."""
    name = Path(res.source).stem
    figs = [(f"{name}_dtheta", section_plot(res), (f"{name}: Δθ along the section, the detected layer outlined "
                                                  "(top and bottom) and its core marked; shaded: the band "
                                                  "integrated for the heat flux.")),
            (f"{name}_profiles", profiles_plot(res), (f"{name}: θ against σ₀ with the background fit, and Δθ "
                                                     "profiles (profiles with a layer in red) against the "
                                                     "detection threshold; the optical anomaly beside, if "
                                                     "recorded."))]
    if np.isfinite(out.heat_flux).any():
        figs.append((f"{name}_heat_flux", flux_plot(out), (f"{name}: draws of the heat flux across the section "
                                                          "with its median and 90 % interval.")))
    return figs


def box_plot(a, per, out):
    """Plan view of a closed box: each side's profiles, its outward normal and the heat flux out through it."""
    fig, ax = subplots(figsize=(6.5, 6))
    for name, r, p in zip(a.names, a.results, per):
        ax.plot(r.profile_east, r.profile_north, ".-", ms=3, lw=0.8)
        mid = np.array([np.mean(r.profile_east), np.mean(r.profile_north)])
        span = max(float(np.ptp(r.s)), 1.0)
        ax.annotate("", xy=mid + 0.1 * span * r.normal, xytext=mid, arrowprops={"arrowstyle": "->", "lw": 1.2})
        ax.text(*(mid - 0.12 * span * r.normal), f"{name}\n{p.nominal_heat_flux / 1e6:.3g} MW out", ha="center",
                va="center", fontsize=7)
    ax.plot(*a.box.centre, "k+", ms=10)
    h = out.heat_flux[np.isfinite(out.heat_flux)] / 1e6
    p05, p95 = np.percentile(h, [5, 95]) if h.size else (np.nan, np.nan)
    ax.set_title(f"net heat flux out of the box {out.nominal_heat_flux / 1e6:.3g} MW (90 %: {p05:.3g}–{p95:.3g});\n"
                 f"largest gap between sides {max(g for *_, g in a.box.gaps):.0f} m "
                 f"(tolerance {a.box.tolerance:.0f} m)", fontsize=8)
    ax.margins(0.2)
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel("east [m]")
    ax.set_ylabel("north [m]")
    fig.set_layout_engine("tight")
    return fig


def box_png(a, per, out) -> bytes:
    """``box_plot`` as PNG bytes (for a figures folder of the command line)."""
    return _png(box_plot(a, per, out))
