"""Variance-based sensitivity: which named input owns the variance of a result.

For an output ``Y = f(X_1, …, X_k)`` of independent inputs, the first-order
index ``S_i = Var(E[Y | X_i]) / Var(Y)`` is the share of the variance that
knowing ``X_i`` exactly would remove on average; the total-effect index
``S_Ti = E[Var(Y | X_~i)] / Var(Y)`` is the share that remains tied to
``X_i`` once every other input is known (its main effect and all its
interactions) [1, 2]. An input with ``S_Ti ≈ 0`` can be fixed anywhere in its
range without changing the result's spread.

This module needs nothing but arrays: a dict of named input draws and the
output draws (draw ``j`` of every array is one realization). It is used by
the survey's uncertainty budget and works on any Monte Carlo run.

Two estimators
--------------
*From existing draws* (``given_data_indices``; no new model evaluations).
First-order: sort the draws by ``X_i``, cut them into ``M`` bins of equal
count (quantile bins) and take the variance of the bin means [3, 4]. The
variance of a bin mean also contains the sampling noise of the mean,
``s_b²/n_b``; that expected excess, ``Σ_b s_b²/n`` summed over bins, is
subtracted, so an input that does not matter scores 0 ± noise rather than a
positive bias of about ``M/n``. ``M`` defaults to ``n^(1/3)`` (4–50): the
bias from the spread of ``E[Y|X_i]`` inside a bin shrinks like ``1/M²`` and
the noise grows like ``√M/n``; ``n^(1/3)`` balances them (common practice,
no source beyond [4]).

Total effect from the same draws: the variance decomposition
``Var Y = Σ V_i + Σ V_ij + …`` [1] gives, for every input, the bounds
``S_i ≤ S_Ti ≤ S_i + R`` with ``R = 1 − Σ_j S_j`` the share of variance
not explained by any main effect (every interaction term containing ``i`` is
part of ``R``). The given-data total reported is the upper bound
``S_i + R``: it never understates an input, it is exact for an additive
model (``R = 0``), and ``R`` itself is reported so a large interaction share
is visible; ``pick_freeze`` estimates totals exactly when they matter. A
nearest-neighbour estimate of ``E[Var(Y|X_~i)]`` in ``k − 1`` dimensions
would be the alternative; with tens of inputs it is dominated by its bias.

*Dedicated design* (``pick_freeze_design``, ``pick_freeze_indices``). Two
independent sets of draws ``A`` and ``B`` (``n`` each) and, for every input
``i``, ``A`` with column ``i`` taken from ``B`` (``AB_i``): ``n (k + 2)``
evaluations [5]. First-order by the estimator of Saltelli et al. 2010 [5]
(``V_i = mean(f_B (f_ABi − f_A))``), total effect by Jansen's [6]
(``V_Ti = mean((f_A − f_ABi)²) / 2``). Optional extra blocks of ``A`` with one
input held at its nominal value give the what-if widths directly.

Errors
------
Every index carries a bootstrap standard error: Poisson(1) weights per draw
(the Poisson bootstrap [7], which needs no resampling of arrays and is
vectorized as weighted sums), ``bootstrap`` replicates. An input whose
first-order and total indices are both below twice their standard errors
(``NEGLIGIBLE``; an index of an input that does not matter is zero plus noise
of about one standard error) is *negligible*.

What-if width
-------------
The 5–95 % width of ``Y`` if ``X_i`` were known exactly at its nominal value.
From a dedicated design it is computed from the re-evaluated block. From
existing draws it is the 5–95 % width of the draws whose ``X_i`` lies in a
narrow rank window (a fraction ``window`` of the draws, default 5 %) around the
nominal value: those draws are a sample of ``Y`` given ``X_i ≈ nominal`` with
everything else drawn as before.

References
----------
.. [1] Sobol', I. M. (1993). Sensitivity estimates for nonlinear mathematical
   models. Math. Model. Comput. Exp. 1, 407–414.
.. [2] Homma, T. and Saltelli, A. (1996). Importance measures in global
   sensitivity analysis of nonlinear models. Reliab. Eng. Syst. Saf. 52, 1–17.
.. [3] Plischke, E. (2010). An effective algorithm for computing global
   sensitivity indices (EASI). Reliab. Eng. Syst. Saf. 95, 354–360.
.. [4] Strong, M., Oakley, J. E. and Chilcott, J. (2012). Managing structural
   uncertainty in health economic decision models: a discrepancy approach.
   J. R. Stat. Soc. C 61, 25–45 (binned partial expected value estimates).
.. [5] Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M. and
   Tarantola, S. (2010). Variance based sensitivity analysis of model output.
   Design and estimator for the total sensitivity index. Comput. Phys.
   Commun. 181, 259–270.
.. [6] Jansen, M. J. W. (1999). Analysis of variance designs for model output.
   Comput. Phys. Commun. 117, 35–43.
.. [7] Hanley, J. A. and MacGibbon, B. (2006). Creating non-parametric
   bootstrap samples using Poisson frequencies. Comput. Methods Programs
   Biomed. 83, 57–62.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import InputError

#: Bootstrap replicates for the indices' errors (common practice, no source: 100 gives errors to about ±7 %).
DEFAULT_BOOTSTRAP = 100
#: Fraction of the draws nearest the nominal value used for a given-data what-if width (a choice).
DEFAULT_WINDOW = 0.05
#: An index at or below this many standard errors is negligible (about the 95 % one-sided level; a choice).
NEGLIGIBLE = 2.0
GIVEN_DATA = "existing draws: quantile-bin first order, total bounded by first order + interaction share"
PICK_FREEZE = "dedicated design: Saltelli 2010 first order, Jansen 1999 total effect"


@dataclass(frozen=True)
class Indices:
    """First-order and total-effect indices of every named input for one output.

    Arrays are aligned with ``names``. ``total_lower`` is the lower bound of
    the total effect (the first-order index) for the given-data estimator and
    equal to ``total`` for a dedicated design. ``width`` is the output's
    5–95 % width; ``width_if_known`` maps input names to the width with that
    input known exactly (only for the inputs it was computed for).
    """

    output: str
    names: tuple
    first: np.ndarray
    first_error: np.ndarray
    total: np.ndarray
    total_error: np.ndarray
    total_lower: np.ndarray
    interaction: float
    interaction_error: float
    variance: float
    width: float
    n: int
    estimator: str
    unit: str = ""
    width_if_known: dict = field(default_factory=dict)

    @property
    def negligible(self) -> np.ndarray:
        """Inputs whose first-order and total indices are both within ``NEGLIGIBLE`` standard errors of zero."""
        return (self.first <= NEGLIGIBLE * self.first_error) & (self.total <= NEGLIGIBLE * self.total_error)

    def order(self) -> np.ndarray:
        """Input positions from most to least important (first order, then total)."""
        return np.lexsort((-self.total, -self.first))

    @property
    def significant(self) -> np.ndarray:
        """Inputs with a first-order index above ``NEGLIGIBLE`` standard errors, or (from a dedicated design)
        a total effect above them; a total from existing draws is only a bound and does not count."""
        out = self.first > NEGLIGIBLE * self.first_error
        if self.estimator == PICK_FREEZE:
            out |= self.total > NEGLIGIBLE * self.total_error
        return out

    def top(self, k: int = 3) -> list[str]:
        """The ``k`` most important inputs that are significant (see ``significant``)."""
        sig = self.significant
        return [self.names[i] for i in self.order() if sig[i]][:k]

    def rows(self) -> list[dict]:
        """One row per input, most important first (CSV/JSON table rows, units in the keys)."""
        neg = self.negligible
        tag = f" [{self.unit}]" if self.unit else ""
        out = []
        for rank, i in enumerate(self.order(), 1):
            name = self.names[i]
            out.append({"result": self.output, "input": name, "rank": rank,
                        "first_order": float(self.first[i]), "first_order_error": float(self.first_error[i]),
                        "total_effect": float(self.total[i]), "total_effect_error": float(self.total_error[i]),
                        "total_effect_lower": float(self.total_lower[i]), "negligible": bool(neg[i]),
                        f"width_p05_p95{tag}": self.width,
                        f"width_if_known{tag}": float(self.width_if_known.get(name, np.nan)),
                        "interaction_share": self.interaction, "draws": self.n, "estimator": self.estimator})
        return out


def _check(inputs: dict, outputs) -> tuple[list, np.ndarray, list, np.ndarray]:
    if not inputs:
        raise InputError("inputs", "none", "at least one named input with draws")
    names = list(inputs)
    same_size = len({np.size(inputs[k]) for k in names}) == 1
    X = np.vstack([np.asarray(inputs[k], float).ravel() for k in names]) if same_size else None
    if X is None:
        sizes = ", ".join(f"{k}: {np.size(inputs[k])}" for k in names)
        raise InputError("inputs", sizes, "the same number of draws for every input")
    if isinstance(outputs, dict):
        onames = list(outputs)
        Y = np.vstack([np.asarray(outputs[k], float).ravel() for k in onames]) if outputs else np.empty((0, 0))
    else:
        onames = ["output"]
        Y = np.asarray(outputs, float).reshape(1, -1)
    if Y.shape[1] != X.shape[1]:
        raise InputError("outputs", f"{Y.shape[1]} draws", f"as many draws as the inputs ({X.shape[1]})")
    for what, A, labels in (("input", X, names), ("output", Y, onames)):
        bad = ~np.isfinite(A).all(axis=1)
        if bad.any():
            raise InputError(f"{what} {labels[int(np.argmax(bad))]}", "non-finite draws",
                             "finite draws (drop failed draws from every array first)")
    if X.shape[1] < 20:
        raise InputError("draws", X.shape[1], "at least 20 draws for a variance decomposition")
    return names, X, onames, Y


def _weights(n: int, bootstrap: int, seed) -> np.ndarray:
    """Row 0: all ones (the estimate itself); rows 1…: Poisson(1) bootstrap weights."""
    rng = np.random.default_rng(seed)
    W = np.ones((1 + int(bootstrap), n))
    if bootstrap:
        W[1:] = rng.poisson(1.0, (int(bootstrap), n))
    return W


#: Bootstrap weights kept for the next call with the same draws, replicates and seed (a survey's budget asks
#: for them once per group of results: 0.03 s each at 10⁴ draws, measured), up to this many weights.
_KEEP_WEIGHTS = 20_000_000
_kept: dict = {}


def _weights_bytes(n: int, bootstrap: int, seed) -> np.ndarray:
    """``_weights(...).T`` as bytes (whole numbers below 256), or as single precision should one not fit."""
    key = (n, int(bootstrap), seed) if isinstance(seed, (int, np.integer)) else None
    if key is not None and key in _kept:
        return _kept[key]
    W = _weights(n, bootstrap, seed)
    WT = np.ascontiguousarray(W.T, np.uint8 if W.max() <= 255 else np.float32)
    if key is not None and WT.size <= _KEEP_WEIGHTS:
        WT.setflags(write=False)
        _kept.clear()
        _kept[key] = WT
    return WT


def default_bins(n: int) -> int:
    """Quantile bins for ``n`` draws: ``n^(1/3)`` within 4–50 (see the module notes)."""
    return int(np.clip(round(n ** (1 / 3)), 4, 50))


def given_data_indices(inputs: dict, outputs, *, bins: int | None = None, bootstrap: int = DEFAULT_BOOTSTRAP,
                       seed=0, units: dict | None = None, nominal: dict | None = None, whatif: int = 3,
                       window: float = DEFAULT_WINDOW) -> dict:
    """Sensitivity indices of every output to every named input, from existing Monte Carlo draws.

    Parameters
    ----------
    inputs : dict
        Input name → draws (array of length ``n``); independent inputs.
    outputs : dict or array
        Output name → draws (length ``n``, aligned with the inputs), or one array.
    bins : int, optional
        Quantile bins per input (default ``default_bins(n)``).
    bootstrap : int, default 100
        Poisson bootstrap replicates for the errors (0: no errors).
    seed : int
        Seed of the bootstrap weights.
    units : dict, optional
        Output name → unit label of its widths.
    nominal : dict, optional
        Input name → nominal value; with it, the what-if width of each
        output's ``whatif`` most important inputs is estimated.
    whatif : int, default 3
    window : float, default 0.05
        Fraction of the draws nearest the nominal value for a what-if width.

    Returns
    -------
    dict
        Output name → ``Indices`` (``estimator`` = ``GIVEN_DATA``).
    """
    names, X, onames, Y = _check(inputs, outputs)
    k, n = X.shape
    r = Y.shape[0]
    M = int(bins) if bins else default_bins(n)
    if not 2 <= M <= n // 2:
        raise InputError("bins", M, f"between 2 and {n // 2} quantile bins")
    c = -(-n // M)  # draws per bin; the last bin is short, padded with zero weight
    pad = M * c - n
    weights = _weights_bytes(n, bootstrap, seed)
    nb = weights.shape[1]
    # Standardized inputs and outputs in single precision: the indices are ratios of variances, and centring
    # first keeps the sums of squares free of cancellation (float32 halves the memory traffic).
    Z = _standardized(Y)
    Xs = _standardized(X)
    cols = np.zeros((n + pad, 3 + 3 * r), np.float32)  # per draw: x, x², y…, y²…, x·y…, 1
    cols[:, -1] = 1.0  # the weights' sums come out of the same products (a padded row has zero weight)
    cols[:n, 2 + r:2 + 2 * r] = (Z * Z).T
    cols[:n, 2:2 + r] = Z.T
    # The bootstrap's weights are small whole numbers (Poisson(1)): gathered as bytes for each input (a quarter of
    # the memory traffic of single precision), widened bin by bin where they stay in cache (measured faster)
    WT = np.zeros((n + pad, nb), weights.dtype)
    WT[:n] = weights
    tail = np.arange(n, n + pad)
    first = np.empty((k, r, nb))
    sums = np.empty((M, nb, 3 + 3 * r), np.float32)
    with _one_blas_thread():
        _bin_sums(Xs, Z, cols, WT, tail, M, c, nb, r, sums, first)
    S = first[:, :, 0]
    err = first[:, :, 1:].std(axis=2, ddof=1) if nb > 2 else np.zeros_like(S)
    V_all = np.var(Y, axis=1)
    R_all = np.where(V_all[:, None] > 0, 1.0 - first.sum(axis=0), 0.0)  # (r, nb) interaction share per replicate
    R = R_all[:, 0]
    R_err = R_all[:, 1:].std(axis=1, ddof=1) if nb > 2 else np.zeros(r)
    Rpos = np.maximum(R_all, 0.0)
    total_all = first + Rpos[None]
    T = total_all[:, :, 0]
    T_err = total_all[:, :, 1:].std(axis=2, ddof=1) if nb > 2 else np.zeros_like(S)
    var = Y.var(axis=1, ddof=1)
    p05, p95 = np.percentile(Y, [5, 95], axis=1)
    out = {}
    for j, o in enumerate(onames):
        ind = Indices(output=o, names=tuple(names), first=S[:, j], first_error=err[:, j], total=T[:, j],
                      total_error=T_err[:, j], total_lower=S[:, j], interaction=float(R[j]),
                      interaction_error=float(R_err[j]), variance=float(var[j]), width=float(p95[j] - p05[j]),
                      n=n, estimator=GIVEN_DATA, unit=(units or {}).get(o, ""))
        if nominal and var[j] > 0:
            pick = [nm for nm in ind.top(whatif) if nm in nominal]
            ind.width_if_known.update({nm: conditional_width(X[names.index(nm)], Y[j], nominal[nm], window)
                                       for nm in pick})
        out[o] = ind
    return out


def _one_blas_thread():
    """Small matrix products in one BLAS thread: on a shared machine threads contend and are 10–100× slower."""
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # pragma: no cover - an optional speed-up
        from contextlib import nullcontext

        return nullcontext()
    return threadpool_limits(limits=1, user_api="blas")


def _bin_sums(Xs, Z, cols, WT, tail, M, c, nb, r, sums, first):
    """Weighted bin sums of every input (sorted once each) for every output and replicate, into ``first``."""
    n = Xs.shape[1]
    wbuf, cbuf = np.empty_like(WT), np.empty_like(cols)  # the gathered rows, reused for every input
    wide = np.empty((c, nb), np.float32)  # one bin's weights in single precision
    cnt2 = np.empty((nb, M))
    for i in range(Xs.shape[0]):  # one sort per input; every output and replicate at once
        x = Xs[i]
        cols[:n, 0], cols[:n, 1] = x, x * x
        cols[:n, 2 + 2 * r:-1] = (Z * x).T
        order = np.concatenate([_sort_order(x), tail])
        Wb = np.take(WT, order, axis=0, out=wbuf).reshape(M, c, nb)  # (M, c, nb), no copy to transpose
        Cb = np.take(cols, order, axis=0, out=cbuf).reshape(M, c, 3 + 3 * r)
        for m in range(M):  # per-bin 2-D products: BLAS reads the transposed view as it is
            w = Wb[m]
            if w.dtype != np.float32:
                w = wide
                np.copyto(w, Wb[m])
            np.matmul(w.T, Cb[m], out=sums[m])
            # Σw² per bin (duplicated draws add no information). The weights are small whole numbers, so single
            # precision sums them exactly (every partial sum is far below 2²⁴): the same counts as in double
            cnt2[:, m] = np.einsum("cb,cb->b", w, w)
        s64 = sums.astype(np.float64).transpose(1, 2, 0)  # (nb, 3 + 3r, M)
        first[i] = _bin_index(s64[:, -1], cnt2, s64[:, 0], s64[:, 1], s64[:, 2:2 + r], s64[:, 2 + r:2 + 2 * r],
                              s64[:, 2 + 2 * r:-1])


def _sort_order(x):
    """The draws' order by ``x``, ties in the order of the draws (a stable sort's order).

    Without ties every sort gives the same order, so the faster unstable one is used (about half the time,
    measured); with ties, the stable one, so that the bins do not depend on the sorting algorithm.
    """
    order = np.argsort(x)
    xs = x[order]
    if np.any(xs[1:] == xs[:-1]):
        return np.argsort(x, kind="stable")
    return order


def _standardized(A):
    mu, sd = A.mean(axis=1, keepdims=True), A.std(axis=1, keepdims=True)
    return np.where(sd > 0, (A - mu) / np.where(sd > 0, sd, 1.0), 0.0)


def _bin_index(cnt, cnt2, sx, sxx, sy, syy, sxy):
    """First-order index per replicate from weighted bin sums: local-linear bin means, noise-corrected.

    ``cnt``, ``cnt2`` (sums of weights and of squared weights), ``sx``, ``sxx``: (nb, M); ``sy``,
    ``syy``, ``sxy``: (nb, r, M). Within each bin the conditional mean is a straight line in ``x`` (two
    parameters), which removes the first-order discretization bias of flat bin means (wide tail bins
    of a normal input). The explained sum of squares of the lines about the overall mean, less the
    share of it that the bin's residual noise explains (two parameters), over the total sum of squares,
    is the index. A bootstrap replicate repeats draws (weights 2, 3, …): noise then explains
    ``Σw²/Σw`` times more, and the correction scales accordingly, so replicates stay unbiased.
    """
    N = cnt.sum(axis=1)[:, None]  # (nb, 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        nb_ = cnt[:, None, :]
        rep = np.where(cnt > 0, cnt2 / np.where(cnt > 0, cnt, 1.0), 1.0)[:, None, :]  # 1 for unit weights
        safe = np.where(nb_ > 0, nb_, 1.0)
        my = sy / safe
        ybar = sy.sum(axis=2) / N  # (nb, r)
        sst = syy.sum(axis=2) - N * ybar ** 2
        cxx = (sxx - sx ** 2 / np.where(cnt > 0, cnt, 1.0))[:, None, :]  # within-bin spread of x
        cxy = sxy - sx[:, None, :] * my
        beta = np.where(cxx > 1e-12 * np.maximum(sxx[:, None, :], 1e-30), cxy / np.where(cxx > 0, cxx, 1.0), 0.0)
        explained = nb_ * (my - ybar[:, :, None]) ** 2 + beta * cxy
        resid = syy - nb_ * my ** 2 - beta * cxy
        dof = nb_ - 2 * rep
        noise = np.where(dof > 0, 2 * rep * resid / np.where(dof > 0, dof, 1.0), 0.0)
        S = np.where(sst > 0, (explained.sum(axis=2) - noise.sum(axis=2)) / sst, 0.0)
    return S.T  # (r, nb)


def conditional_width(x, y, value: float, window: float = DEFAULT_WINDOW) -> float:
    """5–95 % width of ``y`` over the draws whose ``x`` is nearest ``value`` in rank (a ``window`` fraction)."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    n = x.size
    w = int(min(n, max(50, round(window * n))))
    order = np.argsort(x, kind="stable")
    pos = int(np.searchsorted(x[order], value))
    lo = int(np.clip(pos - w // 2, 0, n - w))
    sel = y[order[lo:lo + w]]
    p05, p95 = np.percentile(sel, [5, 95])
    return float(p95 - p05)


# ---- dedicated design ---------------------------------------------------------------
def pick_freeze_design(A: dict, B: dict, fixed: dict | None = None) -> dict:
    """Inputs for a dedicated design: ``A``, ``B``, ``AB_1 … AB_k``, then ``A`` with each ``fixed`` input at its value.

    Parameters
    ----------
    A, B : dict
        Input name → ``n`` independent draws; the same names in both.
    fixed : dict, optional
        Input name → nominal value, for what-if blocks.

    Returns
    -------
    dict
        Input name → array of ``n (k + 2 + len(fixed))`` draws: evaluate the
        model once on these and pass the outputs to ``pick_freeze_indices``.
    """
    names = list(A)
    if set(names) != set(B):
        raise InputError("design", ", ".join(sorted(set(names) ^ set(B))), "the same inputs in both sets of draws")
    fixed = dict(fixed or {})
    for nm in fixed:
        if nm not in A:
            raise InputError("fixed input", nm, "one of the design's inputs")
    n = np.size(A[names[0]])
    out = {}
    for nm in names:
        a, b = np.asarray(A[nm], float).ravel(), np.asarray(B[nm], float).ravel()
        if a.size != n or b.size != n:
            raise InputError(f"design input {nm}", f"{a.size} and {b.size} draws", f"{n} draws in A and B")
        blocks = [a, b] + [b if other == nm else a for other in names] + \
                 [np.full(n, float(fixed[f])) if f == nm else a for f in fixed]
        out[nm] = np.concatenate(blocks)
    return out


def design_cost(k: int, n_fixed: int = 0) -> int:
    """Model evaluations of a dedicated design per base draw: ``k + 2`` plus one block per what-if input."""
    return int(k) + 2 + int(n_fixed)


def pick_freeze_indices(names, outputs, n: int, *, fixed=(), bootstrap: int = DEFAULT_BOOTSTRAP, seed=0,
                        units: dict | None = None) -> dict:
    """Indices from a dedicated design's outputs (see ``pick_freeze_design``).

    Parameters
    ----------
    names : sequence of str
        The design's inputs in the order of ``pick_freeze_design``'s ``A``.
    outputs : dict or array
        Output name → ``n (k + 2 + len(fixed))`` evaluations, or one array.
        Rows of the design in which any block failed (non-finite) are dropped
        from every block; their number is ``n - Indices.n``.
    n : int
        Base draws per block.
    fixed : sequence of str
        The what-if inputs in the order given to the design.

    Returns
    -------
    dict
        Output name → ``Indices`` (``estimator`` = ``PICK_FREEZE``).
    """
    names, fixed = list(names), list(fixed)
    k = len(names)
    nblk = design_cost(k, len(fixed))
    if isinstance(outputs, dict):
        onames, Y = list(outputs), [np.asarray(outputs[o], float).ravel() for o in outputs]
    else:
        onames, Y = ["output"], [np.asarray(outputs, float).ravel()]
    out = {}
    for o, y in zip(onames, Y):
        if y.size != nblk * n:
            raise InputError(f"output {o}", f"{y.size} evaluations", f"{nblk} blocks of {n}")
        blk = y.reshape(nblk, n)
        ok = np.isfinite(blk).all(axis=0)
        blk = blk[:, ok]
        m = blk.shape[1]
        if m < 20:
            raise InputError(f"output {o}", f"{m} complete design rows", "at least 20")
        # Centred on the mean of the A and B blocks: the first-order estimator's product f_B·(f_ABi − f_A)
        # otherwise carries the output's mean and its error grows with mean/spread (SALib centres likewise).
        blk = blk - blk[:2].mean()
        fA, fB, fAB, fX = blk[0], blk[1], blk[2:2 + k], blk[2 + k:]
        W = _weights(m, bootstrap, seed)
        Wn = W / W.sum(axis=1, keepdims=True)
        both = np.concatenate([fA, fB])
        W2 = np.concatenate([W, W], axis=1)
        mu = (W2 @ both) / W2.sum(axis=1)
        V = (W2 @ both ** 2) / W2.sum(axis=1) - mu ** 2  # (nb,)
        with np.errstate(invalid="ignore", divide="ignore"):
            Vi = Wn @ (fB[None] * (fAB - fA[None])).T  # (nb, k)
            VTi = 0.5 * Wn @ ((fA[None] - fAB) ** 2).T
            S = np.where(V[:, None] > 0, Vi / V[:, None], 0.0)
            T = np.where(V[:, None] > 0, VTi / V[:, None], 0.0)
        nb = W.shape[0]
        se = (lambda a: a[1:].std(axis=0, ddof=1)) if nb > 2 else (lambda a: np.zeros(a.shape[1]))
        R = 1.0 - S.sum(axis=1)
        p05, p95 = np.percentile(fA, [5, 95])
        ind = Indices(output=o, names=tuple(names), first=S[0], first_error=se(S), total=T[0], total_error=se(T),
                      total_lower=T[0], interaction=float(R[0]),
                      interaction_error=float(R[1:].std(ddof=1)) if nb > 2 else 0.0, variance=float(V[0]),
                      width=float(p95 - p05), n=m, estimator=PICK_FREEZE, unit=(units or {}).get(o, ""))
        for f, yb in zip(fixed, fX):
            q05, q95 = np.percentile(yb, [5, 95])
            ind.width_if_known[f] = float(q95 - q05)
        out[o] = ind
    return out


def pick_freeze(model, A: dict, B: dict, *, fixed: dict | None = None, bootstrap: int = DEFAULT_BOOTSTRAP, seed=0,
                units: dict | None = None) -> dict:
    """Evaluate a vectorized ``model(dict of arrays) -> array or dict of arrays`` on a dedicated design.

    The cost is ``design_cost(k, len(fixed))`` evaluations per base draw, in
    one vectorized call.
    """
    design = pick_freeze_design(A, B, fixed)
    n = np.size(next(iter(A.values())))
    return pick_freeze_indices(list(A), model(design), n, fixed=list(fixed or {}), bootstrap=bootstrap, seed=seed,
                               units=units)


__all__ = [
    "DEFAULT_BOOTSTRAP",
    "GIVEN_DATA",
    "NEGLIGIBLE",
    "PICK_FREEZE",
    "Indices",
    "conditional_width",
    "default_bins",
    "design_cost",
    "given_data_indices",
    "pick_freeze",
    "pick_freeze_design",
    "pick_freeze_indices",
]
