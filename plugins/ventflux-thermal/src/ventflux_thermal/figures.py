"""Figures of a probe reduction: temperature against thermal resistance, and the decay fits (matplotlib, Agg)."""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from ventflux.plugin_api import atomic_write_bytes, subplots

from .probe import PenetrationResult, ProbeConstants, frictional_model, pulse_model


def _png(fig) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110)
    return buf.getvalue()


def _save(fig, path):
    atomic_write_bytes(path, _png(fig))


def resistance_figure(res: PenetrationResult, path):
    """Write ``resistance_png(res)`` atomically to ``path``."""
    atomic_write_bytes(path, resistance_png(res))


def resistance_plot(res: PenetrationResult):
    """Equilibrium temperature against cumulative thermal resistance, with the fitted line and residuals ."""
    fig, (ax, axr) = subplots(1, 2, figsize=(8, 4.5), gridspec_kw={"width_ratios": [3, 1]}, sharey=True)
    T = res.equilibrium_temperature - 273.15
    R = res.resistance
    ax.plot(T, R, "o", color="tab:red", label="sensors")
    rr = np.linspace(0.0, R.max() * 1.05, 50)
    ax.plot(res.intercept_temperature - 273.15 + res.heat_flow * rr, rr, "-", color="0.3",
            label=f"q = {1e3 * res.heat_flow:.4g} ± {1e3 * res.heat_flow_uncertainty:.2g} mW/m² "
                  f"(total; SE {1e3 * res.heat_flow_se:.2g})")
    ax.invert_yaxis()
    ax.set_xlabel("equilibrium temperature [°C]")
    ax.set_ylabel("cumulative thermal resistance [m² K/W]")
    ax.legend(loc="lower left")
    axr.plot(1e3 * res.residual, R, "s", color="tab:blue")
    axr.axvline(0.0, color="0.5", lw=0.8)
    axr.set_xlabel("residual [mK]")
    fig.suptitle(f"{Path(res.record).name}{' ' + res.label if res.label else ''} ({res.method})")
    fig.set_layout_engine("tight")
    return fig


def resistance_png(res: PenetrationResult) -> bytes:
    """``resistance_plot`` as PNG bytes (for a figures folder of the command line)."""
    return _png(resistance_plot(res))


def decay_figure(res: PenetrationResult, path, probe: ProbeConstants | None = None):
    """Each sensor's record with its frictional-decay fit (red) and heat-pulse fit (blue, window shaded)."""
    rec = res.record_data
    if rec is None:
        raise ValueError("decay_figure needs reduce_penetration(..., keep_record=True)")
    probe = res.probe or probe or ProbeConstants()
    n = res.depth.size
    rows = [rec.sensors.index(name) for name in res.sensors] if res.sensors else list(range(n))
    fig, axes = subplots(n, 1, figsize=(7, 1.6 * n + 0.8), sharex=True, squeeze=False)
    for i, ax in enumerate(axes[:, 0]):
        f = res.friction[i]
        ax.plot(rec.time, rec.temperature[rows[i]] - 273.15, ".", ms=1.5, color="0.4")
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
        ax.set_ylabel(f"{rec.sensors[rows[i]]} [°C]", fontsize=8)
        ax.text(0.99, 0.85, f"misfit {1e3 * f.misfit_rms:.2f} mK", transform=ax.transAxes, ha="right", fontsize=7)
    axes[-1, 0].set_xlabel("time [s]")
    fig.set_layout_engine("tight")
    _save(fig, path)


def record_figure(station, path):
    """A station's whole record, every sensor, with each penetration shaded and labelled (reduced or skipped)."""
    rec = station.record_data
    if rec is None:
        raise ValueError("record_figure needs reduce_station(..., keep_record=True)")
    fig, ax = subplots(figsize=(11, 4.5))
    hours = rec.time / 3600.0
    for i, name in enumerate(rec.sensors):
        ax.plot(hours, rec.temperature[i] - 273.15, lw=0.6, label=name)
    done = {r.label: r for r in station.results}
    for p in station.penetrations:
        ok = p.label in done
        ax.axvspan(p.start / 3600, p.end / 3600, color="tab:green" if ok else "tab:red", alpha=0.12)
        if p.pulse is not None:
            ax.axvline(p.pulse / 3600, color="0.3", lw=0.6, ls=":")
        text = (f"{p.label}\n{1e3 * done[p.label].heat_flow:.0f} mW/m²" if ok else f"{p.label}\nskipped")
        ax.text(p.start / 3600, 0.98, text, transform=ax.get_xaxis_transform(), va="top", fontsize=7)
    start = f" from {rec.start.isoformat().replace('+00:00', 'Z')}" if rec.start is not None else ""
    ax.set_xlabel(f"time [h]{start}")
    ax.set_ylabel("temperature [°C]")
    ax.legend(fontsize=7, ncol=min(len(rec.sensors), 6), loc="lower right")
    ax.set_title(f"{Path(station.record).name}: penetrations found (green reduced, red skipped; dotted: heat pulse)")
    fig.set_layout_engine("tight")
    _save(fig, path)


def transect_figure(station, path):
    """Write ``transect_png(station)`` atomically to ``path``."""
    atomic_write_bytes(path, transect_png(station))


def transect_plot(station):
    """Heat flow ± total uncertainty along the transect (distance from navigation, else time), PNG."""
    res = station.results
    fig, ax = subplots(figsize=(8, 4))
    if station.distance and all(r.label in station.distance for r in res):
        x = np.array([station.distance[r.label] for r in res])
        ax.set_xlabel("distance along the transect [m]")
    else:
        x = np.array([r.penetration_time / 3600.0 for r in res])
        ax.set_xlabel("time of penetration [h] (no navigation)")
    q = 1e3 * np.array([r.heat_flow for r in res])
    u = 1e3 * np.array([r.heat_flow_uncertainty for r in res])
    se = 1e3 * np.array([r.heat_flow_se for r in res])
    ax.errorbar(x, q, yerr=u, fmt="o", color="tab:red", capsize=3, label="± total uncertainty")
    ax.errorbar(x, q, yerr=se, fmt="none", color="0.2", lw=2.5, label="± standard error of the regression")
    for xi, qi, r in zip(x, q, res):
        ax.annotate(r.label, (xi, qi), textcoords="offset points", xytext=(4, 4), fontsize=7)
    ax.set_ylabel("heat flow [mW/m²]")
    ax.legend(fontsize=8)
    ax.set_title(f"{Path(station.record).name}: heat flow along the transect")
    fig.set_layout_engine("tight")
    return fig


def transect_png(station) -> bytes:
    """``transect_plot`` as PNG bytes (for a figures folder of the command line)."""
    return _png(transect_plot(station))
