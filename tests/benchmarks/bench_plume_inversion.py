"""Benchmark: Monte Carlo inversion of a rise height in a non-uniform CTD profile.

ventflux's ensemble inversion (every draw one member of one vectorized
integration, secant iteration on the whole ensemble) against the naive way:
for each draw, ``scipy.optimize.brentq`` on the source flux around a
``scipy.integrate.solve_ivp`` integration of the same plume equations. The
naive loop is timed on a subsample and scaled to the full number of draws;
the medians of heat power are compared on that same subsample (and per draw).

Run:  python tests/benchmarks/bench_plume_inversion.py [--draws 10000] [--naive 40]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import gsw
import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from ventflux.plume import closed_form, integral
from ventflux.plume.inversion import heat_power_from_rise_height, integral_H
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
    F_cf = closed_form.buoyancy_flux_point_source(z_obs, N)
    logF = brentq(lambda lf: rise(lf) - z_obs, np.log(F_cf / 3), np.log(F_cf * 3), xtol=1e-6)
    return float(integral_H(c, np.exp(logF)))


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--draws", type=int, default=10_000)
    ap.add_argument("--naive", type=int, default=40, help="draws solved the naive way (timed and scaled)")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        cast = Path(tmp) / "cast.csv"
        invented_cast(cast)
        prof = read_ctd_cast(cast, latitude=-8.0)
    inputs = {"rise_height": normal(Q_(250, "m"), Q_(25, "m")), "entrainment": uniform(Q_(0.11), Q_(0.15)),
              "stratification_scale": normal(Q_(1.0), Q_(0.1))}

    t0 = time.perf_counter()
    res = heat_power_from_rise_height(inputs["rise_height"], prof, entrainment=inputs["entrainment"],
                                      stratification_scale=inputs["stratification_scale"], draws=args.draws,
                                      seed=SEED)
    t_fast = time.perf_counter() - t0
    H_fast = res.heat_power.to("W").magnitude

    # The same draws (same seed and keys), a subsample of them solved one by one.
    d = draw_inputs(inputs, args.draws, SEED)
    col = res.column
    pick = np.random.default_rng(1).choice(args.draws, args.naive, replace=False)
    t0 = time.perf_counter()
    H_naive = np.array([naive_heat_power(col, d["rise_height"][k].to("m").magnitude,
                                         float(d["entrainment"][k].magnitude),
                                         float(d["stratification_scale"][k].magnitude)) for k in pick])
    t_naive = (time.perf_counter() - t0) / args.naive * args.draws

    med_fast, med_naive = np.median(H_fast[pick]), np.median(H_naive)
    per_draw = np.max(np.abs(H_fast[pick] / H_naive - 1.0))
    print(f"draws: {args.draws}, failed: {res.failed}, naive subsample: {args.naive}")
    print(f"ventflux ensemble inversion: {t_fast:.2f} s")
    print(f"naive brentq+solve_ivp loop: {t_naive / args.draws:.3f} s per draw -> {t_naive:.0f} s for "
          f"{args.draws} draws (scaled)")
    print(f"speed ratio: {t_naive / t_fast:.0f}x")
    print(f"median heat power on the subsample: ventflux {med_fast / 1e6:.4f} MW, naive {med_naive / 1e6:.4f} MW, "
          f"difference {100 * (med_fast / med_naive - 1):+.4f} %")
    print(f"largest per-draw difference on the subsample: {100 * per_draw:.4f} %")
    print(f"median heat power over all draws (ventflux): {np.nanmedian(H_fast) / 1e6:.4f} MW "
          f"(5-95 %: {np.nanpercentile(H_fast, 5) / 1e6:.4g} - {np.nanpercentile(H_fast, 95) / 1e6:.4g} MW)")


if __name__ == "__main__":
    main()
