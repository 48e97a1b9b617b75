"""Benchmark: field totals of a synthetic vent field with correlated Monte Carlo draws.

A synthetic field (invented numbers) of 1,000 focused vents and 500 diffuse
patches, 10,000 draws. Each vent's heat power is the core orifice estimate
(ρ(T, p) · ū · A · [h(T, p) − h(T_a, p)], IAPWS-95 through the tabulated
property layer); each patch's is the core diffuse estimate (TEOS-10 enthalpy
differences). Inputs shared between items are drawn once per draw through
``SharedDraws``: the camera pixel scale (orifice diameters and patch areas),
the hot-probe and thermistor calibrations, the CTD cast's ambient
temperature. Vents are processed in chunks to bound memory.

The fair competitor is the numpy script a user would write instead, doing the
same job: the same (vent x draw) and (patch x draw) arrays drawn with numpy
in one call per input, the shared inputs drawn once per draw, the vent fluid's
enthalpy and density from CoolProp's tabular ``BICUBIC&HEOS`` backend (its
fastest mode, about 1e-4 here, matching the property layer's accuracy) in its
low-level loop, the ambient enthalpy once per draw, the patches through gsw's
exact TEOS-10 enthalpy and density, field totals summed draw by draw and
their percentiles. It checks nothing. Its vents are timed on a subsample
(``--competitor-vents``) and scaled; its patches are timed in full. The two
are timed interleaved over ``--rounds`` and the medians compared. The plain
Python loop, per draw and per vent, calling the same estimators with scalar
inputs, is a secondary line (timed on a subsample and scaled). The two
ventflux paths are also checked to give the same numbers for the same inputs,
and the competitor's property values are compared with the layer's.

Run::

    python tests/benchmarks/bench_field_aggregation.py [--rounds 3] [--workers 2] [--tracemalloc]

Not collected by pytest (the name starts with ``bench_``).
"""

from __future__ import annotations

import argparse
import os
import resource
import time
import tracemalloc
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from ventflux.aggregate import FieldSums, SharedDraws, focused_diffuse_split
from ventflux.diffuse import diffuse_discharge
from ventflux.orifice import orifice_discharge
from ventflux.uncertainty import lognormal, normal, uniform
from ventflux.units import Q_

PRESSURE = Q_(25.0, "MPa")  # one site pressure, supercritical for pure water: no boiling
SALINITY = 34.7
SHARED = {
    "camera pixel scale": normal(Q_(1.0, "dimensionless"), Q_(0.03, "dimensionless")),
    "hot probe calibration": normal(Q_(0.0, "K"), Q_(1.0, "K")),
    "thermistor calibration": normal(Q_(0.0, "K"), Q_(0.05, "K")),
    "CTD cast ambient temperature": normal(Q_(2.05, "degC"), Q_(0.02, "K")),
}


def synthetic_field(n_vents, n_patches, seed=7):
    """Nominal values and per-item distributions of an invented field."""
    rng = np.random.default_rng(seed)
    T = rng.uniform(250.0, 345.0, n_vents)
    v = rng.uniform(0.3, 2.5, n_vents)
    d = rng.uniform(0.02, 0.15, n_vents)
    vents = {
        "temperature": [normal(Q_(t, "degC"), Q_(3.0, "K")) for t in T],
        "velocity": [lognormal(Q_(x, "m/s"), 1.25) for x in v],
        "diameter": [normal(Q_(x, "m"), Q_(0.1 * x, "m")) for x in d],
    }
    A = rng.uniform(5.0, 200.0, n_patches)
    f = rng.uniform(0.15, 0.65, n_patches)
    dT = rng.uniform(1.5, 8.0, n_patches)
    w = rng.uniform(0.05, 0.8, n_patches)
    patches = {
        "area": [normal(Q_(a, "m^2"), Q_(0.1 * a, "m^2")) for a in A],
        "active_fraction": [uniform(Q_(x - 0.1, "dimensionless"), Q_(x + 0.1, "dimensionless")) for x in f],
        "temperature_anomaly": [normal(Q_(x, "K"), Q_(0.2, "K")) for x in dT],
        "velocity": [lognormal(Q_(x, "cm/s"), 1.5) for x in w],
    }
    return vents, patches


def _names(kind, n, var):
    return [f"{kind} {i}/{var}" for i in range(n)]


def vent_chunk(draws, vents, sl, shared):
    n = len(vents["temperature"])
    idx = range(n)[sl]

    def pick(var):
        return [vents[var][i] for i in idx]

    def names(var):
        return [f"vent {i}/{var}" for i in idx]

    T = draws.draw_each(names("temperature"), pick("temperature"), "degC").magnitude
    T = Q_(T + shared["hot probe calibration"].to("K").magnitude, "degC")
    v = draws.draw_each(names("velocity"), pick("velocity"), "m/s")
    d = draws.draw_each(names("diameter"), pick("diameter"), "m") * shared["camera pixel scale"]
    r = orifice_discharge(T, v, d, pressure=PRESSURE, ambient_temperature=shared["CTD cast ambient temperature"],
                          ambient_salinity=SALINITY)
    return {"focused_heat_power": r.heat_power, "focused_mass_flux": r.mass_flux,
            "focused_volume_flux": r.volume_flux_ambient}


def patch_chunk(draws, patches, sl, shared):
    n = len(patches["area"])
    idx = range(n)[sl]

    def pick(var):
        return [patches[var][i] for i in idx]

    def names(var):
        return [f"patch {i}/{var}" for i in idx]

    A = draws.draw_each(names("area"), pick("area"), "m^2") * shared["camera pixel scale"] ** 2
    f = draws.draw_each(names("active_fraction"), pick("active_fraction"), "dimensionless").magnitude
    dT = draws.draw_each(names("temperature_anomaly"), pick("temperature_anomaly"), "K").magnitude
    dT = Q_(dT + shared["thermistor calibration"].to("K").magnitude, "K")
    w = draws.draw_each(names("velocity"), pick("velocity"), "m/s")
    r = diffuse_discharge(A, f, dT, w, shared["CTD cast ambient temperature"], SALINITY, PRESSURE, check=False)
    return {"diffuse_heat_power": r.heat_power, "diffuse_mass_flux": r.mass_flux,
            "diffuse_volume_flux": r.volume_flux}


def vectorized(vents, patches, n_draws, chunk, workers, seed=11):
    draws = SharedDraws(n_draws, seed=seed)
    shared = {k: draws.draw(k, v) for k, v in SHARED.items()}
    shared["CTD cast ambient temperature"] = shared["CTD cast ambient temperature"][None, :]
    sums = FieldSums({"focused_heat_power": "MW", "diffuse_heat_power": "MW"})
    jobs = [(vent_chunk, vents, slice(s, s + chunk)) for s in range(0, len(vents["temperature"]), chunk)]
    jobs += [(patch_chunk, patches, slice(s, s + chunk)) for s in range(0, len(patches["area"]), chunk)]
    if workers > 1:
        with ThreadPoolExecutor(workers) as pool:
            for out in pool.map(lambda j: j[0](draws, j[1], j[2], shared), jobs):
                sums.add(**out)
    else:
        for fn, items, sl in jobs:
            sums.add(**fn(draws, items, sl, shared))
    totals = sums.totals(seed=seed)
    split = focused_diffuse_split(totals["focused_heat_power"], totals["diffuse_heat_power"], seed=seed)
    return totals, split


def plain_loop(vents, patches, loop_vents, loop_patches, loop_draws, seed=13):
    """Per draw, per item: scalar draws and one estimator call each (what a first script would do)."""
    rng = np.random.default_rng(seed)
    inputs, outputs = [], []
    t0 = time.perf_counter()
    for _ in range(loop_draws):
        s = {k: u.sample(1, rng)[0] for k, u in SHARED.items()}
        for i in range(loop_vents):
            T = Q_(vents["temperature"][i].sample(1, rng)[0].magnitude + s["hot probe calibration"].magnitude,
                   "degC")
            v = vents["velocity"][i].sample(1, rng)[0]
            d = vents["diameter"][i].sample(1, rng)[0] * s["camera pixel scale"]
            r = orifice_discharge(T, v, d, pressure=PRESSURE, ambient_temperature=s["CTD cast ambient temperature"],
                                  ambient_salinity=SALINITY)
            inputs.append((T.magnitude, v.magnitude, d.magnitude, s["CTD cast ambient temperature"].magnitude))
            outputs.append(r.heat_power.to("W").magnitude)
    t_vent = (time.perf_counter() - t0) / (loop_draws * loop_vents)
    t0 = time.perf_counter()
    for _ in range(loop_draws):
        s = {k: u.sample(1, rng)[0] for k, u in SHARED.items()}
        for i in range(loop_patches):
            A = patches["area"][i].sample(1, rng)[0] * s["camera pixel scale"] ** 2
            f = patches["active_fraction"][i].sample(1, rng)[0].magnitude
            dT = Q_(patches["temperature_anomaly"][i].sample(1, rng)[0].magnitude
                    + s["thermistor calibration"].magnitude, "K")
            w = patches["velocity"][i].sample(1, rng)[0]
            diffuse_discharge(A, f, dT, w, s["CTD cast ambient temperature"], SALINITY, PRESSURE, check=False)
    t_patch = (time.perf_counter() - t0) / (loop_draws * loop_patches)
    return t_vent, t_patch, np.array(inputs), np.array(outputs)


def _arrays(items, var):
    """(kind, a, b) of each item's distribution of ``var`` as numpy arrays (what a script would hold)."""
    u = items[var]
    return np.array([x.a for x in u]), np.array([x.b for x in u])


def competitor(vents, patches, n_draws, n_vents, chunk, seed=19):
    """The numpy + CoolProp BICUBIC&HEOS + gsw script on ``n_vents`` vents and every patch.

    Returns (seconds for the vents, seconds for the patches and the totals, vent-fluid T draws [K] for
    the accuracy check).
    """
    import CoolProp
    import gsw

    rng = np.random.default_rng(seed)
    p = PRESSURE.to("Pa").magnitude
    p_sea = (p - 101_325.0) / 1e4
    st = CoolProp.AbstractState("BICUBIC&HEOS", "Water")
    st.update(CoolProp.PT_INPUTS, p, 600.0)  # CoolProp loads its tables here (not timed)
    t0 = time.perf_counter()
    scale = rng.normal(1.0, 0.03, n_draws)
    hot_cal = rng.normal(0.0, 1.0, n_draws)
    th_cal = rng.normal(0.0, 0.05, n_draws)
    Ta = rng.normal(2.05, 0.02, n_draws)
    ha = np.empty(n_draws)
    for k, t in enumerate((Ta + 273.15).tolist()):  # the ambient once per draw
        st.update(CoolProp.PT_INPUTS, p, t)
        ha[k] = st.hmass()
    Tm, Ts = _arrays(vents, "temperature")
    vm, vf = _arrays(vents, "velocity")
    dm, ds = _arrays(vents, "diameter")
    focused = np.zeros(n_draws)
    T_seen = None
    for s0 in range(0, n_vents, chunk):
        sl = slice(s0, min(s0 + chunk, n_vents))
        k = sl.stop - sl.start
        T = rng.normal(Tm[sl, None], Ts[sl, None], (k, n_draws)) + hot_cal + 273.15
        v = np.exp(rng.normal(np.log(vm[sl, None]), np.log(vf[sl, None]), (k, n_draws)))
        d = rng.normal(dm[sl, None], ds[sl, None], (k, n_draws)) * scale
        h = np.empty(T.size)
        rho = np.empty(T.size)
        for i, t in enumerate(T.ravel().tolist()):
            st.update(CoolProp.PT_INPUTS, p, t)
            h[i] = st.hmass()
            rho[i] = st.rhomass()
        focused += (rho.reshape(T.shape) * v * np.pi / 4 * d * d * (h.reshape(T.shape) - ha)).sum(axis=0)
        T_seen = T if T_seen is None else T_seen
    t_vents = time.perf_counter() - t0
    t0 = time.perf_counter()
    SA = gsw.SR_from_SP(SALINITY)
    h0 = gsw.enthalpy_t_exact(SA, Ta, p_sea)
    Am, As = _arrays(patches, "area")
    fl, fh = _arrays(patches, "active_fraction")
    dTm, dTs = _arrays(patches, "temperature_anomaly")
    wm, wf = _arrays(patches, "velocity")
    wm = wm / 100.0  # cm/s
    diffuse = np.zeros(n_draws)
    for s0 in range(0, Am.size, chunk):
        sl = slice(s0, min(s0 + chunk, Am.size))
        k = sl.stop - sl.start
        A = rng.normal(Am[sl, None], As[sl, None], (k, n_draws)) * scale**2
        f = rng.uniform(fl[sl, None], fh[sl, None], (k, n_draws))
        t1 = Ta + rng.normal(dTm[sl, None], dTs[sl, None], (k, n_draws)) + th_cal
        w = np.exp(rng.normal(np.log(wm[sl, None]), np.log(wf[sl, None]), (k, n_draws)))
        h1 = gsw.enthalpy_t_exact(SA, t1, p_sea)
        rho = gsw.rho_t_exact(SA, t1, p_sea)
        diffuse += (rho * w * A * f * (h1 - h0)).sum(axis=0)
    np.percentile(focused, [5, 50, 95])
    np.percentile(diffuse, [5, 50, 95])
    np.percentile(diffuse / (focused + diffuse), [5, 50, 95])  # the split
    t_rest = time.perf_counter() - t0
    return t_vents, t_rest, T_seen


def competitor_accuracy(T, n=20_000):
    """Worst relative difference of the competitor's BICUBIC h and ρ from the property layer's (same points)."""
    import CoolProp

    from ventflux.properties.ventfluid import IAPWS95Water

    T = T.ravel()[:n]
    p = PRESSURE.to("Pa").magnitude
    st = CoolProp.AbstractState("BICUBIC&HEOS", "Water")
    hb, db = np.empty(T.size), np.empty(T.size)
    for i, t in enumerate(T.tolist()):
        st.update(CoolProp.PT_INPUTS, p, t)
        hb[i], db[i] = st.hmass(), st.rhomass()
    h, d = IAPWS95Water().enthalpy_density(T, p)
    return float(max(np.max(np.abs(hb / h - 1)), np.max(np.abs(db / d - 1))))


def same_numbers(inputs, outputs):
    """The vectorized estimator on the loop's own inputs gives the loop's numbers."""
    T, v, d, Ta = inputs.T
    r = orifice_discharge(Q_(T, "degC"), Q_(v, "m/s"), Q_(d, "m"), pressure=PRESSURE,
                          ambient_temperature=Q_(Ta, "degC"), ambient_salinity=SALINITY)
    return float(np.max(np.abs(r.heat_power.to("W").magnitude / outputs - 1)))


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--vents", type=int, default=1000)
    p.add_argument("--patches", type=int, default=500)
    p.add_argument("--draws", type=int, default=10_000)
    p.add_argument("--chunk", type=int, default=50, help="items per chunk (memory bound)")
    p.add_argument("--workers", type=int, default=2, help="threads over chunks")
    p.add_argument("--loop-vents", type=int, default=10)
    p.add_argument("--loop-patches", type=int, default=10)
    p.add_argument("--loop-draws", type=int, default=50)
    p.add_argument("--competitor-vents", type=int, default=50, help="vents the competitor is timed on (scaled)")
    p.add_argument("--rounds", type=int, default=3, help="interleaved rounds (medians reported)")
    p.add_argument("--tracemalloc", action="store_true", help="also trace peak Python/numpy allocations (slower)")
    a = p.parse_args(argv)

    vents, patches = synthetic_field(a.vents, a.patches)
    vectorized(synthetic_field(4, 4)[0], synthetic_field(4, 4)[1], 100, 4, 1)  # warm the property tables

    rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    t_vec, t_comp = [], []
    traced = None
    for r in range(a.rounds):  # interleaved: ventflux, then the competitor, each round
        if a.tracemalloc and r == 0:
            tracemalloc.start()
        t0 = time.perf_counter()
        totals, split = vectorized(vents, patches, a.draws, a.chunk, a.workers)
        t_vec.append(time.perf_counter() - t0)
        if a.tracemalloc and r == 0:
            traced = tracemalloc.get_traced_memory()[1] / 2**20
            tracemalloc.stop()
        tv, tr, T_seen = competitor(vents, patches, a.draws, a.competitor_vents, a.chunk)
        t_comp.append(tv * a.vents / a.competitor_vents + tr)
    rss1 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    t_vec_med, t_comp_med = float(np.median(t_vec)), float(np.median(t_comp))
    acc = competitor_accuracy(T_seen)

    t_vent, t_patch, inputs, outputs = plain_loop(vents, patches, a.loop_vents, a.loop_patches, a.loop_draws)
    t_loop = (t_vent * a.vents + t_patch * a.patches) * a.draws
    agree = same_numbers(inputs, outputs)

    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"field: {a.vents} vents + {a.patches} diffuse patches, {a.draws} draws, chunk {a.chunk}, "
          f"{a.workers} worker thread(s)")
    for name, tot in totals.items():
        s = tot.summary
        print(f"  {name:22s} median {s.median:~.4g}  90 % [{s.p05.magnitude:.4g}, {s.p95.magnitude:.4g}]")
    f = split.diffuse_fraction
    print(f"  diffuse fraction of heat  median {f.median.magnitude:.3f}  90 % [{f.p05.magnitude:.3f}, "
          f"{f.p95.magnitude:.3f}]")
    print(f"shared machine: 2 cores, about 9 engineers working at once (load average {load:.1f}); "
          f"medians of {a.rounds} interleaved rounds; ratios from the same run")
    print(f"ventflux whole field: {t_vec_med:.2f} s wall (rounds: {', '.join(f'{x:.2f}' for x in t_vec)}); "
          f"peak RSS {rss1:.0f} MiB (+{rss1 - rss0:.0f} MiB during the run)"
          + (f"; traced peak {traced:.0f} MiB" if traced is not None else ""))
    print(f"competitor (numpy + CoolProp BICUBIC&HEOS + gsw, same job; vents scaled from "
          f"{a.competitor_vents}): {t_comp_med:.2f} s (rounds: {', '.join(f'{x:.2f}' for x in t_comp)}); "
          f"its h and rho differ from the layer's by at most {acc:.1e}")
    print(f"ratio competitor / ventflux: {t_comp_med / t_vec_med:.2f} x")
    print(f"secondary: plain loop {t_vent * 1e3:.3f} ms per vent-draw, {t_patch * 1e3:.3f} ms per patch-draw, "
          f"scaled to the field {t_loop:.0f} s; ratio plain loop / ventflux: {t_loop / t_vec_med:.0f} x")
    print(f"same inputs, same numbers (vectorized vs loop): max relative difference {agree:.1e}")
    print(f"goals: whole field < 5 s: {'yes' if t_vec_med < 5 else 'NO'}; peak RSS < 1 GiB: "
          f"{'yes' if rss1 < 1024 else 'NO'}")


if __name__ == "__main__":
    main()
