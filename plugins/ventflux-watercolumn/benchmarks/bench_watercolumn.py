"""Side-by-side timings for ventflux-watercolumn (run: python benchmarks/bench_watercolumn.py). Not a test.

A 20-hour tow-yo at 1 Hz (72,000 samples, 60 casts) across an analytic plume layer
(tests/watercolumn_synthetic.py). Timed, interleaved in one run:

1. The plugin: TEOS-10 state, profiles, two-pass background fit, anomalies, layer detection, band integrals
   (``analyse_section``) and 10⁴ bootstrap/Monte Carlo draws of the heat flux and rise heights through the
   one propagation driver (``propagate_sections``: ``ventflux.uncertainty.propagate`` with the unphysical-draw
   policy), as ``plume-layer`` and the survey run it.
2. A plain per-profile loop doing the same bootstrap the obvious way: for each draw, gather the drawn
   profiles' background samples, refit θ–σ0 by least squares (numpy.linalg.lstsq), and for each drawn
   profile bin its anomaly flux with numpy.bincount and integrate; then the trapezoid rule along the
   section. Timed on a few hundred draws and scaled to 10⁴; its flux draws are checked against the plugin's
   for the same profile picks and current (with the background-window shift set to zero, which the loop
   does not do).

These machines have 2 cores shared by several engineers: timings are noisy; the best of 3 is reported.
"""

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from ventflux_watercolumn import anomaly as an
from ventflux_watercolumn.reading import SectionData
from ventflux_watercolumn.section import (
    CP0,
    analyse_section,
    draw_section,
    propagate_sections,
    section_draws,
)
from watercolumn_synthetic import towyo

from ventflux.aggregate import SharedDraws
from ventflux.uncertainty import UnphysicalPolicy, normal
from ventflux.units import Q_

N_DRAWS = 10_000
N_LOOP = 300


def make():
    d = towyo(n_profiles=60, winch=500.0 / 1200.0, ship=0.1, sz=25.0)
    n = d["time"].size
    return d, SectionData(source="bench", time=d["time"], east=d["east"], north=d["north"],
                          sea_pressure=d["pressure"], temperature=d["temperature"], salinity=d["salinity"],
                          latitude=d["latitude"], longitude=d["longitude"], lines=np.arange(n))


CURRENT = normal(Q_(0.05, "m/s"), Q_(0.005, "m/s"))
DIRECTION = normal(Q_(0.0, "deg"), Q_(5.0, "deg"))


def plugin(data):
    res = analyse_section(data, vent_depth=2480.0, current_direction=0.0)
    _, out = propagate_sections([res], ["bench"], SharedDraws(N_DRAWS, 1), UnphysicalPolicy(), current=CURRENT,
                                current_direction=DIRECTION, vent_depth=Q_(2480.0, "m"))
    return res, out


def loop(data, res, picks, speed):
    """Per draw, per profile: refit the background from the drawn profiles' samples, bin, integrate."""
    st = an.teos10_state(data)
    prof, bg = res.sample_profile, res.sample_is_background
    X = res.sums.basis(st.sigma0)
    lo, hi = res.band
    e0, dz = res.edges[lo], res.bin_size
    by_prof = [np.flatnonzero(prof == p) for p in range(res.n_profiles)]
    out = np.empty(len(picks))
    for j, pk in enumerate(picks):
        rows = np.concatenate([by_prof[p][bg[by_prof[p]]] for p in pk])
        beta, *_ = np.linalg.lstsq(X[rows], st.CT[rows], rcond=None)
        g = np.empty(len(pk))
        for i, p in enumerate(pk):
            r = by_prof[p]
            k = np.floor((st.depth[r] - e0) / dz).astype(int)
            ok = (k >= 0) & (k <= hi - lo)
            f = st.rho[r] * CP0 * (st.CT[r] - X[r] @ beta)
            cnt = np.bincount(k[ok], minlength=hi - lo + 1)
            s = np.bincount(k[ok], f[ok], minlength=hi - lo + 1)
            g[i] = np.sum(s[cnt > 0] / cnt[cnt > 0]) * dz
        o = np.argsort(res.s[pk], kind="stable")
        out[j] = np.trapezoid(g[o], res.s[pk][o]) * speed[j]
    return out


def best(fn, repeat=3):
    times, val = [], None
    for _ in range(repeat):
        t0 = time.perf_counter()
        val = fn()
        times.append(time.perf_counter() - t0)
    return min(times), val


def main():
    d, data = make()
    print(f"tow-yo: {data.size} samples (1 Hz, {data.size / 3600:.1f} h)")
    t_plugin, (res, out) = best(lambda: plugin(data))
    # the same named draws as the driver's (one stream per name): the loop gets the same picks and currents
    drawn = section_draws(SharedDraws(N_DRAWS, 1), "bench", res.n_profiles, current=CURRENT,
                          current_direction=DIRECTION, vent_depth=Q_(2480.0, "m"))
    assert out.unphysical == 0 and np.allclose(draw_section(res, drawn).heat_flux, out.heat_flux, rtol=1e-12)
    print(f"{res.n_profiles} profiles, layer on {int(res.found.sum())}; flux {out.nominal_heat_flux / 1e6:.1f} MW "
          f"(analytic {d['heat_flux'] / 1e6:.1f} MW), 90 %: {np.percentile(out.heat_flux, 5) / 1e6:.1f}-"
          f"{np.percentile(out.heat_flux, 95) / 1e6:.1f} MW")
    ang = np.cos(np.radians(np.asarray(drawn["current_direction"]) - res.normal_bearing))
    speed = np.asarray(drawn["current"]) * ang
    t_loop, ref = best(lambda: loop(data, res, drawn["picks"][:N_LOOP], speed[:N_LOOP]), 1)
    t_plugin2, _ = best(lambda: plugin(data), 1)  # interleaved: once more after the loop
    t_plugin = min(t_plugin, t_plugin2)
    fixed = dict(drawn, window=np.zeros_like(drawn["window"]))  # the loop fits one window: compare like with like
    same = draw_section(res, fixed).heat_flux
    diff = np.max(np.abs(ref / same[:N_LOOP] - 1))
    t_loop_full = t_loop * N_DRAWS / N_LOOP
    print(f"anomaly + detection + flux with {N_DRAWS} draws: plugin {t_plugin:.2f} s (target < 10 s); "
          f"per-profile loop {t_loop:.2f} s for {N_LOOP} draws → {t_loop_full:.0f} s for {N_DRAWS} "
          f"(scaled); ratio {t_loop_full / t_plugin:.0f}x; max relative difference on the same draws {diff:.1e}")


if __name__ == "__main__":
    main()
