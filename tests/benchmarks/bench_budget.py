"""Cost of the uncertainty budget.

Run: python tests/benchmarks/bench_budget.py [--draws N] [--repeats R]

1. The demo survey's budget from its existing draws, as a fraction of the run
   itself (goal: under 20 %). Run and budget are timed alternately, ``R`` times.
2. The dedicated design against SALib's Saltelli sampling and Sobol' analysis
   (``SALib.sample.sobol`` + ``SALib.analyze.sobol``, first and total order, no
   second order: its fastest mode for these indices), on the same estimator
   (one orifice's heat power, three uniform inputs), the same base sample size
   and the same number of bootstrap resamples; interleaved, medians of ``R``.

These machines are shared (2 cores, several engineers at once): expect
noise of tens of per cent in absolute times; the ratios are measured side by side.
"""

import argparse
import statistics
import time
from pathlib import Path

import numpy as np

from ventflux.survey.budget import survey_budget

ROOT = Path(__file__).resolve().parents[2]


def survey_fraction(draws, repeats):
    from ventflux.survey.run import run_survey
    from ventflux.survey.spec import load_survey

    spec = load_survey(ROOT / "examples" / "oskeran-ridge" / "survey.toml")
    if draws:
        spec.draws = draws
    t_run, t_budget = [], []
    for _ in range(repeats):
        t0 = time.perf_counter()
        result = run_survey(spec)
        t_run.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        b = survey_budget(result)
        t_budget.append(time.perf_counter() - t0)
    r, bb = statistics.median(t_run), statistics.median(t_budget)
    print(f"demo survey, {spec.draws} draws, {len(b.inputs)} uncertain inputs, {len(b.indices)} results:")
    print(f"  run {r:.2f} s, budget from its draws {bb:.2f} s: {bb / r:.1%} of the run (goal < 20 %)")


def power(T, v, d):
    from ventflux.orifice import orifice_discharge
    from ventflux.units import Q_

    r = orifice_discharge(Q_(T, "degC"), Q_(v, "m/s"), diameter=Q_(d, "cm"), pressure=Q_(25, "MPa"),
                          ambient_temperature=Q_(2.0, "degC"))
    return r.heat_power.to("MW").magnitude


BOUNDS = {"T": (300.0, 360.0), "v": (0.8, 2.0), "d": (6.0, 12.0)}


def ours(n, resamples, seed):
    from ventflux.sensitivity import pick_freeze

    rng = np.random.default_rng(seed)

    def draw():
        return {k: rng.uniform(a, b, n) for k, (a, b) in BOUNDS.items()}

    res = pick_freeze(lambda d: power(d["T"], d["v"], d["d"]), draw(), draw(), bootstrap=resamples, seed=seed)
    return res["output"]


def salib(n, resamples, seed):
    from SALib.analyze import sobol as analyze
    from SALib.sample import sobol as sample

    problem = {"num_vars": 3, "names": list(BOUNDS), "bounds": [list(b) for b in BOUNDS.values()]}
    X = sample.sample(problem, n, calc_second_order=False, seed=seed)
    Y = power(X[:, 0], X[:, 1], X[:, 2])
    return analyze.analyze(problem, Y, calc_second_order=False, num_resamples=resamples, seed=seed)


def design_versus_salib(n, resamples, repeats):
    ours(256, 10, 0), salib(256, 10, 0)  # warm the property tables and imports
    t_ours, t_salib = [], []
    for k in range(repeats):
        t0 = time.perf_counter()
        a = ours(n, resamples, k)
        t_ours.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        b = salib(n, resamples, k)
        t_salib.append(time.perf_counter() - t0)
    to, ts = statistics.median(t_ours), statistics.median(t_salib)
    print(f"dedicated design, one orifice, 3 inputs, {n} base draws ({n * 5} evaluations each), "
          f"{resamples} bootstrap resamples:")
    print(f"  ventflux pick-freeze {to:.2f} s, SALib Saltelli sampling + Sobol' analysis {ts:.2f} s: "
          f"ratio {ts / to:.2f} (SALib / ventflux)")
    for i, nm in enumerate(BOUNDS):
        print(f"  {nm}: S1 {a.first[i]:.4f} ± {a.first_error[i]:.4f} "
              f"vs {b['S1'][i]:.4f} ± {b['S1_conf'][i] / 1.96:.4f};"
              f"  ST {a.total[i]:.4f} ± {a.total_error[i]:.4f} vs {b['ST'][i]:.4f} ± {b['ST_conf'][i] / 1.96:.4f}")


if __name__ == "__main__":
    ap = argparse.ArgumentParser()
    ap.add_argument("--draws", type=int, default=None, help="survey draws (default: the demo file's)")
    ap.add_argument("--base", type=int, default=4096, help="base draws of the dedicated design")
    ap.add_argument("--repeats", type=int, default=3)
    a = ap.parse_args()
    survey_fraction(a.draws, a.repeats)
    design_versus_salib(a.base, 100, a.repeats)
