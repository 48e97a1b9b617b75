"""Uncertainty budget of one estimate: which uncertain input owns the variance of its result.

For a single estimate (one orifice, one plume) the estimator is cheap and
vectorized, so both modes of ``ventflux.sensitivity`` apply:

``draws``
    the Monte Carlo draws of the estimate itself (the same draws, seed and
    unphysical-draw mask as the estimate's own propagation); no new evaluation
    beyond one re-run of the estimator on them.
``full``
    a dedicated pick-freeze design with ``n`` base draws and one what-if
    block per uncertain input: ``2k + 2`` evaluations per base draw, in one
    vectorized call; totals and what-if widths are then exact up to their
    bootstrap errors.

The survey's budget, over every vent and the field totals, is in
``ventflux.survey.budget``.
"""

from __future__ import annotations

import numpy as np

from . import sensitivity
from .errors import InputError
from .uncertainty import DEFAULT_DRAWS, DEFAULT_SEED, Uncertain, draw_inputs, nominal
from .units import Q_


def estimate_budget(estimator, inputs: dict, *, output: str = "heat_power", unit: str = "MW", mode: str = "draws",
                    draws: int = DEFAULT_DRAWS, seed: int = DEFAULT_SEED, valid=None,
                    bootstrap: int = sensitivity.DEFAULT_BOOTSTRAP) -> sensitivity.Indices:
    """Sensitivity indices of one estimate's ``output`` to each of its uncertain inputs.

    Parameters
    ----------
    estimator : callable
        ``estimator(**inputs)`` returning an object with the attribute ``output``
        (a pint quantity); vectorized over array inputs.
    inputs : dict
        The estimator's keyword arguments; ``Uncertain`` values are the budget's inputs.
    output : str, default "heat_power"
    unit : str, default "MW"
        Unit of the output's widths.
    mode : {"draws", "full"}
    draws : int
        Monte Carlo draws (``draws``) or base draws of the design (``full``).
    seed : int
    valid : callable, optional
        ``valid(sampled, exact, n) -> mask`` of physically possible draws
        (e.g. ``ventflux.orifice.physical_draws``); other draws are dropped
        (from every block of a design) and counted in ``Indices.n``.

    Returns
    -------
    ventflux.sensitivity.Indices
    """
    uncertain = {k: v for k, v in inputs.items() if isinstance(v, Uncertain)}
    if not uncertain:
        raise InputError("uncertainty budget", "no uncertain input",
                         "at least one input with an uncertainty ('1.4 ± 0.2 m/s')")
    if mode not in ("draws", "full"):
        raise InputError("--budget", mode, "draws or full")
    exact = {k: nominal(v) for k, v in inputs.items()}
    names = sorted(uncertain)
    units = {k: uncertain[k].unit for k in names}
    nom = {k: float(exact[k].to(units[k]).magnitude) for k in names}
    n = int(draws)
    if mode == "draws":
        sampled = draw_inputs(uncertain, n, seed)
        X = {k: np.asarray(sampled[k].to(units[k]).magnitude, float) for k in names}
    else:
        A = draw_inputs(uncertain, n, seed)
        B = draw_inputs(uncertain, n, None if seed is None else int(seed) + 1)
        X = sensitivity.pick_freeze_design({k: A[k].to(units[k]).magnitude for k in names},
                                           {k: B[k].to(units[k]).magnitude for k in names}, fixed=nom)
    m = np.size(X[names[0]])
    q = {k: Q_(X[k], units[k]) for k in names}
    keep = valid(q, exact, m) if valid is not None else np.ones(m, bool)
    y = np.full(m, np.nan)
    if keep.any():
        res = estimator(**{**exact, **{k: v[keep] for k, v in q.items()}})
        y[keep] = np.broadcast_to(getattr(res, output).to(unit).magnitude, (int(keep.sum()),))
    if mode == "draws":
        ok = np.isfinite(y)
        return sensitivity.given_data_indices({k: X[k][ok] for k in names}, {output: y[ok]}, bootstrap=bootstrap,
                                              seed=seed, units={output: unit}, nominal=nom,
                                              whatif=len(names))[output]
    return sensitivity.pick_freeze_indices(names, {output: y}, n, fixed=names, bootstrap=bootstrap, seed=seed,
                                           units={output: unit})[output]


def budget_lines(ind: sensitivity.Indices, labels: dict | None = None) -> list[str]:
    """A readable table of an estimate's budget, most important input first."""
    labels = labels or {}
    u = ind.unit
    head = ("input", "first order", "total effect", f"5-95 % width if known [{u}]")
    rows = []
    for i in ind.order():
        nm = ind.names[i]
        w = ind.width_if_known.get(nm, np.nan)
        flag = " (negligible)" if ind.negligible[i] else ""
        rows.append((labels.get(nm, nm) + flag, f"{ind.first[i]:.3f} ± {ind.first_error[i]:.3f}",
                     f"{ind.total[i]:.3f} ± {ind.total_error[i]:.3f}", f"{w:.4g}" if np.isfinite(w) else "–"))
    widths = [max(len(r[j]) for r in rows + [head]) for j in range(4)]
    fmt = "  ".join(f"{{:<{w}}}" if j == 0 else f"{{:>{w}}}" for j, w in enumerate(widths))
    est = "from the estimate's draws" if ind.estimator == sensitivity.GIVEN_DATA else "dedicated design"
    out = [(f"Uncertainty budget of {ind.output.replace('_', ' ')} ({est}, {ind.n} draws; 5-95 % width "
           f"{ind.width:.4g} {u}; share not explained by single inputs {ind.interaction:.3f})"), fmt.format(*head)]
    return out + [fmt.format(*r) for r in rows]


__all__ = ["budget_lines", "estimate_budget"]
