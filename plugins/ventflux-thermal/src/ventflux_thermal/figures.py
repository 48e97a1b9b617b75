"""Figures of a probe reduction: temperature against thermal resistance, and the decay fits (matplotlib, Agg)."""

from __future__ import annotations

import io
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from ventflux.plugin_api import atomic_write_bytes  # noqa: E402

from .probe import PenetrationResult, ProbeConstants, frictional_model, pulse_model  # noqa: E402


def _png(fig) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110)
    plt.close(fig)
    return buf.getvalue()


def _save(fig, path):
    atomic_write_bytes(path, _png(fig))


def resistance_figure(res: PenetrationResult, path):
    """Write ``resistance_png(res)`` atomically to ``path``."""
    atomic_write_bytes(path, resistance_png(res))


def resistance_png(res: PenetrationResult) -> bytes:
    """Equilibrium temperature against cumulative thermal resistance, with the fitted line and residuals (PNG)."""
    fig, (ax, axr) = plt.subplots(1, 2, figsize=(8, 4.5), gridspec_kw={"width_ratios": [3, 1]}, sharey=True)
    T = res.equilibrium_temperature - 273.15
    R = res.resistance
    ax.plot(T, R, "o", color="tab:red", label="sensors")
    rr = np.linspace(0.0, R.max() * 1.05, 50)
    ax.plot(res.intercept_temperature - 273.15 + res.heat_flow * rr, rr, "-", color="0.3",
            label=f"q = {1e3 * res.heat_flow:.4g} ± {1e3 * res.heat_flow_se:.2g} mW/m² (SE)")
    ax.invert_yaxis()
    ax.set_xlabel("equilibrium temperature [°C]")
    ax.set_ylabel("cumulative thermal resistance [m² K/W]")
    ax.legend(loc="lower left")
    axr.plot(1e3 * res.residual, R, "s", color="tab:blue")
    axr.axvline(0.0, color="0.5", lw=0.8)
    axr.set_xlabel("residual [mK]")
    fig.suptitle(f"{Path(res.record).name} ({res.method})")
    fig.tight_layout()
    return _png(fig)


def decay_figure(res: PenetrationResult, path, probe: ProbeConstants | None = None):
    """Each sensor's record with its frictional-decay fit (red) and heat-pulse fit (blue, window shaded)."""
    rec = res.record_data
    if rec is None:
        raise ValueError("decay_figure needs reduce_penetration(..., keep_record=True)")
    probe = probe or ProbeConstants()
    n = res.depth.size
    fig, axes = plt.subplots(n, 1, figsize=(7, 1.6 * n + 0.8), sharex=True, squeeze=False)
    for i, ax in enumerate(axes[:, 0]):
        f = res.friction[i]
        ax.plot(rec.time, rec.temperature[i] - 273.15, ".", ms=1.5, color="0.4")
        tt = np.linspace(f.window[0], f.window[1], 200)
        model = frictional_model(f, tt, res.penetration_time, res.conductivity[i], probe, res.method)
        ax.plot(tt, model - 273.15, "-", color="tab:red", lw=1.2)
        p = res.pulse[i]
        if p is not None:
            ax.axvspan(*p.window, color="tab:blue", alpha=0.08)
            tp = np.linspace(p.window[0], p.window[1], 200)
            bg = frictional_model(f, tp, res.penetration_time, res.conductivity[i], probe, res.method)
            ax.plot(tp, bg + pulse_model(p, tp, res.heat_pulse_time, res.heat_pulse_energy, probe, res.method)
                    - 273.15, "-", color="tab:blue", lw=1.2)
        ax.set_ylabel(f"T{i + 1} [°C]", fontsize=8)
        ax.text(0.99, 0.85, f"misfit {1e3 * f.misfit_rms:.2f} mK", transform=ax.transAxes, ha="right", fontsize=7)
    axes[-1, 0].set_xlabel("time [s]")
    fig.tight_layout()
    _save(fig, path)
