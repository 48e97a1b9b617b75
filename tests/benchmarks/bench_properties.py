"""Vent-fluid property evaluation: ventflux's tabulated IAPWS-95 layer against plain CoolProp calls.

Run: python tests/benchmarks/bench_properties.py [--points 1000000] [--loop-points 20000]

Prints the speed ratio (plain per-point PropsSI loop, timed on a subsample
and scaled, over the property layer on all points, both measured in this run)
and the worst relative error of enthalpy and density against direct IAPWS-95,
separately outside and inside +-10 K of the pseudo-critical / saturation line.
Points: uniform in 2-450 degC and 5-60 MPa, single-phase liquid or
supercritical fluid (boiling points, which the layer refuses, are dropped).
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def pseudo_critical_temperature(p):
    """Temperature of maximum isobaric heat capacity along each supercritical isobar."""
    import CoolProp.CoolProp as CP

    Tg = np.linspace(640.0, 800.0, 3201)
    out = np.empty(p.size)
    for i, pi in enumerate(p):
        cp = CP.PropsSI("C", "T", Tg, "P", np.full(Tg.size, pi), "Water")
        out[i] = Tg[np.argmax(cp)]
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--points", type=int, default=1_000_000)
    ap.add_argument("--loop-points", type=int, default=20_000)
    ap.add_argument("--seed", type=int, default=1)
    a = ap.parse_args()

    import CoolProp.CoolProp as CP

    from ventflux.properties.ventfluid import IAPWS95Water, _direct

    model = IAPWS95Water()
    model.enthalpy_density(300.0, 1e6)  # build or load the cached table outside the timing
    rng = np.random.default_rng(a.seed)
    n = int(a.points * 1.15)
    T = rng.uniform(275.15, 723.15, n)
    p = rng.uniform(5e6, 60e6, n)
    ok = model.valid(T, p)
    T, p = T[ok][: a.points], p[ok][: a.points]

    t0 = time.perf_counter()
    h, d = model.enthalpy_density(T, p)
    t_layer = time.perf_counter() - t0

    m = min(a.loop_points, T.size)
    t0 = time.perf_counter()
    for Ti, pi in zip(T[:m], p[:m]):
        CP.PropsSI("Hmass", "T", Ti, "P", pi, "Water")
        CP.PropsSI("Dmass", "T", Ti, "P", pi, "Water")
    t_loop = (time.perf_counter() - t0) / m * T.size

    t0 = time.perf_counter()
    h0, d0 = _direct(T, p)
    t_vec = time.perf_counter() - t0

    pg = np.linspace(22.064e6, 60e6, 120)
    tpc = pseudo_critical_temperature(pg)
    line = np.where(p >= 22.064e6, np.interp(p, pg, tpc), model.saturation_temperature(np.minimum(p, 22.0639e6)))
    near = np.abs(T - line) < 10.0
    eh = np.abs(h / h0 - 1)
    ed = np.abs(d / d0 - 1)

    print(f"points: {T.size:,} (T 2-450 degC, p 5-60 MPa, single phase); loop timed on {m:,} and scaled")
    print(f"plain PropsSI loop (h and rho):  {t_loop:8.2f} s  ({t_loop / T.size * 1e6:.1f} us/point)")
    print(f"CoolProp vectorized PropsSI:     {t_vec:8.2f} s  ({t_vec / T.size * 1e6:.1f} us/point)")
    print(f"ventflux property layer:         {t_layer:8.3f} s  ({t_layer / T.size * 1e6:.2f} us/point)")
    print(f"ratio plain loop / ventflux:     {t_loop / t_layer:8.1f} x   (goal >= 30 x)")
    print(f"ratio vectorized / ventflux:     {t_vec / t_layer:8.1f} x")
    print(f"worst relative error outside +-10 K of the line: h {eh[~near].max():.2e}  rho {ed[~near].max():.2e}"
          "  (goal <= 1e-4)")
    print(f"worst relative error inside  +-10 K of the line: h {eh[near].max():.2e}  rho {ed[near].max():.2e}"
          f"  (goal <= 1e-3; {near.sum():,} points)")


if __name__ == "__main__":
    main()
