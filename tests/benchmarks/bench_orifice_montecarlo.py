"""Monte Carlo propagation through the orifice estimator: 100,000 draws of one orifice.

Run: python tests/benchmarks/bench_orifice_montecarlo.py

Prints the time for 100,000 vectorized draws and, side by side, a plain
per-draw loop over the same estimator on a subsample, scaled up.
"""

import time

from ventflux.orifice import orifice_discharge, orifice_discharge_uncertain
from ventflux.uncertainty import draw_inputs, normal
from ventflux.units import Q_


def main(n=100_000, loop_n=300):
    kw = dict(temperature=normal(Q_(352, "degC"), Q_(3, "K")), velocity=normal(Q_(1.4, "m/s"), Q_(0.2, "m/s")),
              diameter=normal(Q_(0.12, "m"), Q_(0.01, "m")), pressure=Q_(26, "MPa"),
              ambient_temperature=Q_(2.1, "degC"), ambient_salinity=34.6)
    orifice_discharge_uncertain(draws=1000, **kw)  # warm the property table
    t0 = time.perf_counter()
    res = orifice_discharge_uncertain(draws=n, **kw)
    t_vec = time.perf_counter() - t0
    d = draw_inputs({k: v for k, v in kw.items() if hasattr(v, "sample")}, loop_n)
    t0 = time.perf_counter()
    for i in range(loop_n):
        orifice_discharge(**{**kw, **{k: v[i] for k, v in d.items()}})
    t_loop = (time.perf_counter() - t0) / loop_n * n
    s = res.summaries["heat_power"].to("MW")
    print(f"{n:,} draws vectorized: {t_vec:.3f} s  (median {s.median:.3g~P}, 5-95 % {s.p05.m:.3g}-{s.p95.m:.3g} MW)")
    print(f"plain per-draw loop (scaled from {loop_n}): {t_loop:.1f} s;  ratio {t_loop / t_vec:.0f} x")


if __name__ == "__main__":
    main()
