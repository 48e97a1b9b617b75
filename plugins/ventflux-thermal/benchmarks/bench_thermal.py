"""Side-by-side timings for ventflux-thermal (run: python benchmarks/bench_thermal.py). Not a test.

1. The cylinder decay function F(α, τ): the dense log-log table (what the fits call) against direct quadrature.
2. The heat-flow uncertainty: one vectorized regression over all conductivity draws against a loop of draws.
3. One whole penetration (7 sensors, 1201 samples, cylinder model), for scale.
"""

import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from thermal_synthetic import make_record  # noqa: E402

from ventflux_thermal.decay import cylinder_decay, cylinder_decay_exact  # noqa: E402
from ventflux_thermal.probe import heat_flow_regression, reduce_penetration, thermal_resistance  # noqa: E402


def best(fn, repeat=5):
    out = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t0)
    return min(out)


def main():
    tau = np.geomspace(0.05, 1e4, 5000)
    cylinder_decay(2.0, tau)  # build the table once
    t_spline = best(lambda: cylinder_decay(2.0, tau))
    t_exact = best(lambda: cylinder_decay_exact(2.0, tau), 3)
    err = np.max(np.abs(cylinder_decay(2.0, tau) / cylinder_decay_exact(2.0, tau) - 1))
    print(f"F(alpha, tau), 5000 points: table {1e3 * t_spline:.2f} ms, quadrature {1e3 * t_exact:.1f} ms, "
          f"ratio {t_exact / t_spline:.0f}x, max relative difference {err:.1e}")

    rng = np.random.default_rng(0)
    z = np.linspace(0.5, 3.5, 7)
    k = rng.uniform(0.8, 1.2, 7)
    T = 2 + 0.2 * thermal_resistance(z, k)
    kd = k[:, None] * (1 + 0.02 * rng.standard_normal((7, 2000)))
    t_vec = best(lambda: heat_flow_regression(thermal_resistance(z, kd), T))
    t_loop = best(lambda: [heat_flow_regression(thermal_resistance(z, kd[:, j]), T) for j in range(2000)], 3)
    print(f"heat-flow regression over 2000 conductivity draws: vectorized {1e3 * t_vec:.2f} ms, "
          f"loop {1e3 * t_loop:.1f} ms, ratio {t_loop / t_vec:.0f}x")

    with tempfile.TemporaryDirectory() as d:
        path = Path(d) / "pen.csv"
        make_record(path, "cylinder", k=k, depths=z)
        t_pen = best(lambda: reduce_penetration(path), 3)
    print(f"one penetration (7 sensors, 1201 samples, cylinder model, 2 joint iterations): {t_pen:.2f} s")


if __name__ == "__main__":
    main()
