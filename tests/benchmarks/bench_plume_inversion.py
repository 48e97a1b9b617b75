"""Benchmark: Monte Carlo inversion of a rise height in a non-uniform CTD profile.

ventflux (a forward emulator built once for the column over the similarity
variable F/α² and the stratification scale, with a measured interpolation
error, then every draw inverted on it; above its tolerance it only starts
each draw's direct inversion) against the fair
competitor: a straightforward precomputed lookup, i.e. the same integral
model solved once on a regular grid over (log F, entrainment, stratification
scale), ``scipy.interpolate.RegularGridInterpolator`` per draw along the F
nodes and the rise inverted per draw by linear interpolation. Both are timed
including their grid builds, interleaved over ``--rounds``; both are compared
draw by draw with ventflux's per-draw secant inversion on the integrator (the
direct answer) on a subsample. The naive way (``scipy.optimize.brentq`` around
``scipy.integrate.solve_ivp`` for each draw) is a secondary line, timed on a
small subsample and scaled.

Run:  python tests/benchmarks/bench_plume_inversion.py [--draws 10000] [--naive 20] [--rounds 2]
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
from pathlib import Path

import gsw
import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from ventflux.plume import closed_form, integral
from ventflux.plume.inversion import (
    _forward_integral,
    _invert_integral,
    heat_power_from_rise_height,
    integral_H,
)
from ventflux.profiles import read_ctd_cast
from ventflux.uncertainty import draw_inputs, normal, uniform
from ventflux.units import Q_

SEED = 20261202


def invented_cast(path: Path):
    """A non-uniform deep cast (invented): a thermocline-like decay of CT and a salinity step above the vent."""
    p = np.arange(1000.0, 2600.0, 1.0)
    CT = 1.7 + 1.2 * np.exp(-(p - 1000.0) / 500.0)
    SA = 34.86 + 0.03 * np.tanh((p - 2200.0) / 60.0)
    t = gsw.t_from_CT(SA, CT, p)
    SP = gsw.SP_from_SR(SA)
    path.write_text("pressure [dbar],temperature [degC],salinity\n"
                    + "".join(f"{a:.1f},{b:.5f},{c:.5f}\n" for a, b, c in zip(p, t, SP)))


def naive_heat_power(c, z_obs, alpha, scale):
    """One draw the plain way: brentq over log F, each evaluation a solve_ivp to the top.

    The right-hand side is the same top-hat model written for one plume with
    scalar arithmetic (no arrays), the bracket a factor 3 either side of the
    closed-form flux.
    """
    sqrt_pi = np.sqrt(np.pi)

    def f(z, y):
        Q, P, T, S = y
        dQ = 2.0 * alpha * sqrt_pi * max(P, 0.0) ** 0.25
        sa = c.SA0 + scale * (np.interp(z, c.height, c.SA) - c.SA0)
        ct = c.CT0 + scale * (np.interp(z, c.height, c.CT) - c.CT0)
        p = np.interp(z, c.height, c.p)
        ctp, sap = c.CT0 + T / Q, c.SA0 + S / Q
        if abs(ctp - ct) > integral.START_ANOMALY:
            gp = c.g * (c.alpha0 * (ctp - ct) - c.beta0 * (sap - sa))
        else:
            gp = c.g * (gsw.rho(sa, ct, p) - gsw.rho(sap, ctp, p)) / c.rho0
        return [dQ, 2.0 * gp * Q * Q, (ct - c.CT0) * dQ, (sa - c.SA0) * dQ]

    def top(z, y):
        return y[1]

    top.terminal, top.direction = True, -1

    def rise(logF):
        F = np.exp(logF)
        z0 = 0.05  # m: start on the point-source similarity solution close to the vent
        src = integral.pure_plume(c, integral_H(c, F), alpha, z0)
        y0 = [src.Q[0], src.M[0] ** 2, src.T[0], src.S[0]]
        sol = solve_ivp(f, (z0, c.top), y0, events=top, rtol=1e-6, atol=1e-12)
        return sol.t_events[0][0] if sol.t_events[0].size else c.top

    N = float(c.mean_n(z_obs)) * np.sqrt(scale)
    F_cf = closed_form._buoyancy_flux_point_source(z_obs, N)
    logF = brentq(lambda lf: rise(lf) - z_obs, np.log(F_cf / 3), np.log(F_cf * 3), xtol=1e-6)
    return float(integral_H(c, np.exp(logF)))


def lookup_heat_power(c, z, alpha, scale, nf=48, na=9, ns=9):
    """The straightforward precomputed lookup: a regular forward grid, interpolated and inverted per draw."""
    from scipy.interpolate import RegularGridInterpolator

    N = float(c.mean_n(np.median(z)))
    F_mid = closed_form._buoyancy_flux_point_source(np.median(z), N)
    lf = np.linspace(np.log(F_mid) - 3.0, np.log(F_mid) + 3.0, nf)
    ag = np.linspace(alpha.min(), alpha.max(), na)
    sg = np.linspace(scale.min(), scale.max(), ns)
    LF, A, S = np.meshgrid(lf, ag, sg, indexing="ij")
    ens, _ = _forward_integral(c, integral_H(c, np.exp(LF.ravel())), A.ravel(), S.ravel(), None, None)
    logz = np.log(np.where(ens.escaped, np.nan, ens.maximum_height)).reshape(LF.shape)
    interp = RegularGridInterpolator((lf, ag, sg), logz, bounds_error=False)
    n = z.size
    pts = np.stack([np.broadcast_to(lf, (n, nf)), np.broadcast_to(alpha[:, None], (n, nf)),
                    np.broadcast_to(scale[:, None], (n, nf))], axis=-1)
    curve = interp(pts.reshape(-1, 3)).reshape(n, nf)
    t = np.log(z)
    i = np.clip((curve < t[:, None]).sum(axis=1) - 1, 0, nf - 2)
    r = np.arange(n)
    w = (t - curve[r, i]) / (curve[r, i + 1] - curve[r, i])
    return integral_H(c, np.exp(lf[i] + w * (lf[1] - lf[0])))


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--draws", type=int, default=10_000)
    ap.add_argument("--naive", type=int, default=20, help="draws solved the naive way (timed and scaled)")
    ap.add_argument("--check", type=int, default=300, help="draws compared with the per-draw secant inversion")
    ap.add_argument("--rounds", type=int, default=2)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        cast = Path(tmp) / "cast.csv"
        invented_cast(cast)
        prof = read_ctd_cast(cast, latitude=-8.0)
    inputs = {"rise_height": normal(Q_(250, "m"), Q_(25, "m")), "entrainment": uniform(Q_(0.11), Q_(0.15)),
              "stratification_scale": normal(Q_(1.0), Q_(0.1))}
    d = draw_inputs(inputs, args.draws, SEED)
    z = d["rise_height"].to("m").magnitude
    a = d["entrainment"].magnitude
    sc = d["stratification_scale"].magnitude

    t_fast, t_look = [], []
    for _ in range(args.rounds):  # interleaved
        t0 = time.perf_counter()
        res = heat_power_from_rise_height(inputs["rise_height"], prof, entrainment=inputs["entrainment"],
                                          stratification_scale=inputs["stratification_scale"], draws=args.draws,
                                          seed=SEED)
        t_fast.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        H_look = lookup_heat_power(res.column, z, a, sc)
        t_look.append(time.perf_counter() - t0)
    t_fast, t_look = float(np.median(t_fast)), float(np.median(t_look))
    H_fast = res.heat_power.to("W").magnitude
    col = res.column

    pick = np.random.default_rng(1).choice(args.draws, args.check, replace=False)
    F_direct, _ = _invert_integral(col, z[pick], "maximum", a[pick], sc[pick], None, None)
    H_direct = integral_H(col, F_direct)
    err_fast = np.nanmax(np.abs(H_fast[pick] / H_direct - 1))
    err_look = np.nanmax(np.abs(H_look[pick] / H_direct - 1))

    few = pick[: args.naive]
    t0 = time.perf_counter()
    H_naive = np.array([naive_heat_power(col, z[k], float(a[k]), float(sc[k])) for k in few])
    t_naive = (time.perf_counter() - t0) / few.size * args.draws

    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"draws: {args.draws}, failed: {res.failed}; emulator error (log rise height, measured): "
          f"{res.emulator_error if res.emulator_error is not None else float('nan'):.1e}")
    print(f"shared machine: 2 cores, about 9 engineers working at once (load average {load:.1f}); "
          f"medians of {args.rounds} interleaved rounds; ratios from the same run")
    print(f"ventflux emulator inversion (build included):  {t_fast:6.2f} s")
    print(f"precomputed lookup (48x9x9 grid, build incl.):  {t_look:6.2f} s")
    print(f"ratio lookup / ventflux:                        {t_look / t_fast:6.1f} x   (goal >= 1 x)")
    print(f"secondary: naive brentq+solve_ivp loop:         {t_naive:6.0f} s for {args.draws} draws "
          f"(scaled from {few.size}) -> {t_naive / t_fast:.0f} x")
    print(f"largest per-draw difference from direct integration ({args.check} draws): ventflux "
          f"{100 * err_fast:.4f} %, lookup {100 * err_look:.4f} %  (goal <= 0.05 %)")
    naive_err = np.max(np.abs(H_naive / H_direct[:few.size] - 1))
    print(f"naive loop vs direct on its {few.size} draws: {100 * naive_err:.4f} %")
    print(f"median heat power over all draws (ventflux): {np.nanmedian(H_fast) / 1e6:.4f} MW "
          f"(5-95 %: {np.nanpercentile(H_fast, 5) / 1e6:.4g} - {np.nanpercentile(H_fast, 95) / 1e6:.4g} MW)")


if __name__ == "__main__":
    main()
