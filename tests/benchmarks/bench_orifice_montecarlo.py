"""Monte Carlo propagation through the orifice estimator: 100,000 draws of one orifice.

Run: python tests/benchmarks/bench_orifice_montecarlo.py [--draws 100000] [--rounds 3]

The fair competitor is the script a user would write instead with the best
general-purpose tools: the same draws as numpy arrays, heat power
ρ(T, p) · u · A · [h(T, p) − h(T_a, p)] with IAPWS-95 from CoolProp's
vectorized ``PropsSI`` (HEOS, exact), and, as a second competitor at matched
accuracy, CoolProp's tabular ``BICUBIC&HEOS`` backend in its low-level loop
(about 1e-4 here). Both scripts draw and summarize like ventflux but check
nothing and compute no seawater ambient.
ventflux's time includes drawing, validation, the TEOS-10 ambient and the
heat power's summary (the other outputs' summaries are computed when read, as
the command's table does; the competitor summarizes heat power only too).
Timings are interleaved over ``--rounds`` and the medians used; the plain
per-draw loop over ventflux's own scalar estimator is a secondary line, timed
on a subsample and scaled.
"""

from __future__ import annotations

import argparse
import os
import time

import numpy as np

from ventflux.orifice import orifice_discharge, orifice_discharge_uncertain
from ventflux.uncertainty import DEFAULT_SEED, draw_inputs, normal
from ventflux.units import Q_

P = 26e6  # Pa


def competitor_heos(T, u, d, Ta):
    import CoolProp.CoolProp as CP

    p = np.full(T.size, P)
    h = CP.PropsSI("Hmass", "T", T, "P", p, "HEOS::Water")
    rho = CP.PropsSI("Dmass", "T", T, "P", p, "HEOS::Water")
    ha = CP.PropsSI("Hmass", "T", Ta, "P", P, "HEOS::Water")
    return rho * u * np.pi * d * d / 4.0 * (h - ha)


def competitor_bicubic(T, u, d, Ta):
    import CoolProp

    st = CoolProp.AbstractState("BICUBIC&HEOS", "Water")
    h = np.empty(T.size)
    rho = np.empty(T.size)
    for k, Ti in enumerate(T.tolist()):
        st.update(CoolProp.PT_INPUTS, P, Ti)
        h[k] = st.hmass()
        rho[k] = st.rhomass()
    st.update(CoolProp.PT_INPUTS, P, Ta)
    return rho * u * np.pi * d * d / 4.0 * (h - st.hmass())


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--draws", type=int, default=100_000)
    ap.add_argument("--heos-draws", type=int, default=5_000, help="draws the HEOS competitor is timed on")
    ap.add_argument("--loop", type=int, default=300, help="draws of the plain per-draw loop")
    ap.add_argument("--rounds", type=int, default=3)
    a = ap.parse_args()
    n = a.draws
    kw = {"temperature": normal(Q_(352, "degC"), Q_(3, "K")), "velocity": normal(Q_(1.4, "m/s"), Q_(0.2, "m/s")),
          "diameter": normal(Q_(0.12, "m"), Q_(0.01, "m")), "pressure": Q_(P, "Pa"),
          "ambient_temperature": Q_(2.1, "degC"), "ambient_salinity": 34.6}
    orifice_discharge_uncertain(draws=1000, **kw)  # load the property table
    competitor_bicubic(np.array([600.0]), np.ones(1), np.ones(1), 275.25)  # CoolProp loads its tables
    Ta = 275.25
    m = min(a.heos_draws, n)

    def script(competitor, k):
        # what the user's script does too: draw, compute, summarize
        dk = draw_inputs({key: v for key, v in kw.items() if hasattr(v, "sample")}, n, DEFAULT_SEED)
        Tk, uk, dk_ = (dk["temperature"].to("K").magnitude[:k], dk["velocity"].to("m/s").magnitude[:k],
                       dk["diameter"].to("m").magnitude[:k])
        H = competitor(Tk, uk, dk_, Ta)
        np.percentile(H, [5, 50, 95])
        return H

    t_vf, t_heos, t_bic = [], [], []
    for _ in range(a.rounds):  # interleaved
        t0 = time.perf_counter()
        res = orifice_discharge_uncertain(draws=n, **kw)
        res.summaries["heat_power"]
        t_vf.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        H_heos = script(competitor_heos, m)
        t_heos.append((time.perf_counter() - t0) / m * n)
        t0 = time.perf_counter()
        H_bic = script(competitor_bicubic, n)
        t_bic.append(time.perf_counter() - t0)
    t_vf, t_heos, t_bic = (float(np.median(x)) for x in (t_vf, t_heos, t_bic))

    H_vf = res.draws.heat_power.to("W").magnitude
    same = H_vf.size == n  # no draw rejected: the draws are the competitor's draws
    diff_heos = np.max(np.abs(H_vf[:m] / H_heos - 1)) if same else float("nan")
    diff_bic = np.max(np.abs(H_bic[:m] / H_heos - 1))

    dl = draw_inputs({k: v for k, v in kw.items() if hasattr(v, "sample")}, a.loop)
    t0 = time.perf_counter()
    for i in range(a.loop):
        orifice_discharge(**{**kw, **{k: v[i] for k, v in dl.items()}})
    t_loop = (time.perf_counter() - t0) / a.loop * n

    s = res.summaries["heat_power"].to("MW")
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"{n:,} draws of one orifice (median {s.median:.4g~P}, 5-95 % {s.p05.m:.4g}-{s.p95.m:.4g} MW)")
    print(f"shared machine: 2 cores, about 9 engineers working at once (load average {load:.1f}); "
          f"medians of {a.rounds} interleaved rounds; ratios from the same run")
    print(f"ventflux (draws, checks, TEOS-10 ambient, summary):     {t_vf:7.3f} s")
    print(f"numpy + CoolProp BICUBIC&HEOS loop (draws, percentiles): {t_bic:7.3f} s  "
          f"(max difference from HEOS {diff_bic:.1e})")
    print(f"numpy + CoolProp vectorized PropsSI HEOS (scaled from {m:,}): {t_heos:7.2f} s")
    print(f"ratio BICUBIC script / ventflux:                        {t_bic / t_vf:7.1f} x")
    print(f"ratio HEOS script / ventflux:                           {t_heos / t_vf:7.1f} x")
    print(f"secondary: plain per-draw loop over ventflux (scaled from {a.loop}): {t_loop:.1f} s -> "
          f"{t_loop / t_vf:.0f} x")
    print(f"ventflux vs the HEOS script on the same draws: max relative difference {diff_heos:.1e}")


if __name__ == "__main__":
    main()
