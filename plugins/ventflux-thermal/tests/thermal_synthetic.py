"""Synthetic probe records from analytic solutions, independent of the code under test.

The cylinder solution is evaluated by numerical Laplace inversion (Stehfest 1970) of its Laplace transform,
Carslaw & Jaeger (1959) §13.7: for a perfectly conducting cylinder of heat capacity S per length, radius a,
initial excess V0, in a medium of conductivity k and diffusivity κ, the transform in dimensionless time
τ = κt/a² is  F̄(s) = K0(√s) / (s K0(√s) + α √s K1(√s)),  α = 2πa²ρc/S.
The line source is Carslaw & Jaeger (1959) §10.3: ΔT(r, t) = Q/(4πkt) · exp(−r²/(4κt)).
A heat pulse of finite length t_p at constant power is the superposition of instantaneous pulses of
energy Q·ds/t_p released at s in [0, t_p] (Duhamel's principle), summed here by the midpoint rule over
50 sub-pulses (ample once the pulse has ended), each response zero before its release.
"""

from math import factorial
from pathlib import Path

import numpy as np
from scipy import special


def _laplace_inversion_weights(n=14):
    # Stehfest, H. (1970). Algorithm 368: Numerical inversion of Laplace transforms. Commun. ACM 13, 47-49.
    half = n // 2
    v = []
    for k in range(1, n + 1):
        s = 0.0
        for j in range((k + 1) // 2, min(k, half) + 1):
            s += j**half * factorial(2 * j) / (factorial(half - j) * factorial(j) * factorial(j - 1)
                                                * factorial(k - j) * factorial(2 * j - k))
        v.append((-1) ** (k + half) * s)
    return np.array(v)


_V = _laplace_inversion_weights()


def cylinder_excess(alpha, tau):
    """Normalised cylinder temperature F(α, τ) by Stehfest inversion; 1 for τ ≤ 0."""
    tau = np.asarray(tau, float)
    out = np.ones(tau.shape)
    pos = tau > 0
    k = np.arange(1, _V.size + 1)
    s = np.multiply.outer(np.log(2) / tau[pos], k)
    r = np.sqrt(s)
    fbar = 1.0 / (s + alpha * r * special.k1e(r) / special.k0e(r))
    out[pos] = np.log(2) / tau[pos] * (fbar * _V).sum(axis=-1)
    return out


def line_source_excess(strength, k, kappa, r, t):
    t = np.asarray(t, float)
    out = np.zeros(t.shape)
    pos = t > 0
    out[pos] = strength / (4 * np.pi * k * t[pos]) * np.exp(-(r**2) / (4 * kappa * t[pos]))
    return out


def finite_pulse_excess(alpha, kappa_over_a2, t, duration, n_sub=50):
    """Cylinder excess per unit V0 for a constant-power pulse of ``duration`` s starting at t = 0 (superposition)."""
    t = np.asarray(t, float)
    if duration <= 0:
        return np.where(t > 0, cylinder_excess(alpha, kappa_over_a2 * t), 0.0)
    out = np.zeros(t.shape)
    for s in (np.arange(n_sub) + 0.5) * duration / n_sub:
        after = t > s
        out[after] += cylinder_excess(alpha, kappa_over_a2 * (t[after] - s)) / n_sub
    return out


def make_record(path, model, *, k, depths, q=0.25, t0_c=2.0, t_pen=60.0, t_hp=600.0, t_end=1200.0,
                energy=700.0, radius=0.004, rho_c=3.4e6, rho_c_probe=3.4e6, friction=None, noise=1e-3, seed=7,
                tilt_deg=0.0, dt=1.0, header=True, r_offset=0.001, pulse_duration=0.0, header_extra=()):
    """Write a probe record CSV and return the true equilibrium temperatures (degC).

    Equilibrium temperatures follow T = T0 + q·R with R_i = Σ (z_j − z_{j−1})/k_j (z along the vertical).
    """
    rng = np.random.default_rng(seed)
    k = np.asarray(k, float)
    depths = np.asarray(depths, float)
    z = depths * np.cos(np.deg2rad(tilt_deg))
    R = np.cumsum(np.diff(np.concatenate([[0.0], z])) / k)
    teq = t0_c + q * R
    t = np.arange(0.0, t_end + dt / 2, dt)
    alpha = 2 * rho_c / rho_c_probe
    kappa = k / rho_c
    friction = np.linspace(1.5, 3.0, k.size) if friction is None else np.asarray(friction)
    rows = []
    for i in range(k.size):
        if model == "cylinder":
            fr = friction[i] * cylinder_excess(alpha, kappa[i] * (t - t_pen) / radius**2)
            v0 = energy / (np.pi * radius**2 * rho_c_probe)
            hp = v0 * finite_pulse_excess(alpha, kappa[i] / radius**2, t - t_hp, pulse_duration)
        else:  # instantaneous line sources: frictional heat friction[i]*1000 J/m, pulse `energy` J/m
            fr = line_source_excess(friction[i] * 1000.0, k[i], kappa[i], r_offset, t - t_pen)
            hp = line_source_excess(energy, k[i], kappa[i], r_offset, t - t_hp)
        temp = np.where(t >= t_pen, teq[i] + fr + hp, t0_c) + rng.normal(0, noise, t.size)
        rows.append(temp)
    lines = []
    if header:
        lines += [f"# penetration_time [s]: {t_pen}", f"# heat_pulse_time [s]: {t_hp}",
                  f"# heat_pulse_energy [J/m]: {energy}", f"# tilt [deg]: {tilt_deg}",
                  "# sensor_depths [m]: " + ", ".join(f"{d:g}" for d in depths)]
        if pulse_duration:
            lines.append(f"# heat_pulse_duration [s]: {pulse_duration}")
        lines += list(header_extra)
    lines.append(",".join(["time [s]"] + [f"T{i + 1} [degC]" for i in range(k.size)]))
    for j in range(t.size):
        lines.append(",".join([f"{t[j]:.1f}"] + [f"{rows[i][j]:.5f}" for i in range(k.size)]))
    path.write_text("\n".join(lines) + "\n")
    return teq


def make_station_record(path, penetrations, *, depths, t_end, water_c=2.0, energy=700.0, pulse_duration=0.0,
                        radius=0.004, rho_c=3.4e6, rho_c_probe=3.4e6, noise=1e-3, seed=5, dt=1.0,
                        start="2026-03-14T08:00:00", relax=3.0, timestamps=True):
    """A continuous logger record of several penetrations; returns the true equilibrium temperatures (degC).

    ``penetrations``: dicts with ``t_pen``, ``t_out`` (pull-out), ``t_hp`` (pulse start or None), ``k``
    (per sensor), ``q`` and optionally ``dead`` (a sensor index reading NaN during that penetration).
    In the water the sensors read ``water_c``; after a pull-out they relax to it with time constant ``relax``
    (a thermistor in flowing water). In the sediment: the cylinder solution (Carslaw & Jaeger 1959 §13.7),
    frictional heating as an instantaneous heating at ``t_pen``, pulses by superposition.
    """
    from datetime import datetime, timedelta

    rng = np.random.default_rng(seed)
    depths = np.asarray(depths, float)
    t = np.arange(0.0, t_end + dt / 2, dt)
    T = np.full((depths.size, t.size), water_c)
    alpha = 2 * rho_c / rho_c_probe
    v0 = energy / (np.pi * radius**2 * rho_c_probe)
    truths = []
    for p in penetrations:
        k = np.asarray(p["k"], float)
        teq = water_c + p["q"] * np.cumsum(np.diff(np.concatenate([[0.0], depths])) / k)
        truths.append(teq)
        inside = (t >= p["t_pen"]) & (t < p["t_out"])
        friction = np.linspace(1.5, 3.0, depths.size)
        for i in range(depths.size):
            ti = t[inside]
            val = teq[i] + friction[i] * cylinder_excess(alpha, k[i] / rho_c * (ti - p["t_pen"]) / radius**2)
            if p.get("t_hp") is not None:
                val = val + v0 * finite_pulse_excess(alpha, k[i] / rho_c / radius**2, ti - p["t_hp"], pulse_duration)
            T[i, inside] = val
            last = val[-1]
            after = (t >= p["t_out"])
            nxt = min([q["t_pen"] for q in penetrations if q["t_pen"] > p["t_pen"]] + [np.inf])
            after &= t < nxt
            T[i, after] = water_c + (last - water_c) * np.exp(-(t[after] - p["t_out"]) / relax)
        if p.get("dead") is not None:
            T[p["dead"], inside] = np.nan
    T = T + rng.normal(0, noise, T.shape)
    lines = ["# station record (synthetic)", "# sensor_depths [m]: " + ", ".join(f"{d:g}" for d in depths),
             f"# heat_pulse_energy [J/m]: {energy}"]
    if pulse_duration:
        lines.append(f"# heat_pulse_duration [s]: {pulse_duration}")
    t0 = datetime.fromisoformat(start)
    lines.append(",".join(["time" if timestamps else "time [s]"] + [f"T{i + 1} [degC]" for i in range(depths.size)]))
    for j in range(t.size):
        stamp = (t0 + timedelta(seconds=float(t[j]))).strftime("%Y-%m-%dT%H:%M:%SZ") if timestamps else f"{t[j]:.1f}"
        lines.append(",".join([stamp] + [("" if np.isnan(T[i, j]) else f"{T[i, j]:.5f}") for i in range(depths.size)]))
    Path(path).write_text("\n".join(lines) + "\n")
    return truths
