"""Field totals with correlated Monte Carlo draws, the focused/diffuse split, and method comparison.

Shared inputs
-------------
Vents measured with the same instrument share its error: one pixel scale for
every vent filmed through one camera, one probe calibration for every patch,
one CTD cast for every ambient temperature. If each vent drew its own value,
the errors would average away in the field total (its spread would grow as
√n instead of n). ``SharedDraws`` hands out draws by input *name*: every
consumer asking for ``"camera-2 pixel scale"`` gets the same array, so draw
``j`` of every vent uses the same scale. Names that are unique to one vent
(``"vent A/velocity"``) give independent draws. Each name seeds its own
random stream from the run's seed and the name, so the draws depend neither
on the order in which inputs are asked for nor on which other inputs exist.
``SharedDraws`` is defined in ``ventflux.uncertainty`` beside the one
propagation driver (``propagate``) and re-exported here.

Per-item draws are arrays of shape ``(n_items, n_draws)`` whose column ``j``
is one consistent realization of the whole field; ``field_total`` sums over
items within each draw and summarizes the totals.

Method comparison and combination
---------------------------------
Where one vent has several estimates (orifice measurements, video, plume
rise), each is a set of draws of heat power. Errors of such estimates are
multiplicative, so they are compared and combined on log power.

*Consistency.* For each pair the normalized difference is
``z = mean(ln a − ln b) / sd(ln a − ln b)``, taken over the paired draws, so a
shared input (one exit temperature for both methods) enters the spread of the
difference exactly as it should. A pair is consistent when ``|z| ≤ 2``
(about the 95 % two-sided level of a normal difference); the vent is
consistent when every pair is. Whether the 90 % intervals overlap is
reported beside it as a looser, visual check.

*Combination.* The best linear unbiased estimate on log power [1, 2]:
weights ``w = C⁻¹1 / (1ᵀC⁻¹1)`` with ``C`` the covariance of the methods' log
draws (independent methods make ``C`` diagonal and this is inverse-variance
weighting; correlated ones can give a weight below zero, which is correct
for the linear model [2]). The weights are applied to each draw,
``ln P_j = Σ wᵢ ln Pᵢⱼ``, so the combined draws stay aligned with the shared
inputs of other vents and the field total keeps its correlations. If the
methods disagree beyond their errors (``χ² = rᵀC⁻¹r`` above its degrees of
freedom ``n − 1``), the spread about the combined value is widened by the
scale factor ``S = √(χ²/(n − 1))`` [3].

Use in a survey run
-------------------
::

    draws = SharedDraws(n_draws, seed)
    ambient = draws.draw("CTD cast/ambient temperature", ctd_uncertain)      # one per run
    scale = draws.draw("camera 1/pixel scale", scale_uncertain)              # one per camera
    sums = FieldSums({"focused_heat_power": "MW", "diffuse_heat_power": "MW"})
    for chunk of vents:                                                       # bounds memory
        T = draws.draw_each([f"{v}/temperature" for v in chunk], temps)      # one per vent
        r = orifice_discharge(T, v, d * scale, pressure=p, ambient_temperature=ambient)
        sums.add(focused_heat_power=r.heat_power, focused_mass_flux=r.mass_flux)
    per_vent = compare_methods({"orifice": a, "plume rise": b})              # one vent, several methods
    split = focused_diffuse_split(sums.total("focused_heat_power"), sums.total("diffuse_heat_power"))

``tests/benchmarks/bench_field_aggregation.py`` runs exactly this on 1,000
vents and 500 patches.

References
----------
.. [1] Aitken, A. C. (1935). On least squares and linear combination of
   observations. Proc. R. Soc. Edinburgh 55, 42–48.
.. [2] Lyons, L., Gibaut, D. and Clifford, P. (1988). How to combine
   correlated estimates of a single physical quantity. Nucl. Instrum.
   Methods A 270, 110–117.
.. [3] Birge, R. T. (1932). The calculation of errors by the method of least
   squares. Phys. Rev. 40, 207–227 (the scale factor used in the Particle
   Data Group's averages).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pint

from .errors import InputError

# SharedDraws lives in the uncertainty layer (one mechanism for every command and the survey);
# it is re-exported here for existing callers.
from .uncertainty import SharedDraws, Summary, summarize
from .units import Q_

#: |z| at or below which two methods agree (about 95 % two-sided for a normal difference).
CONSISTENCY_LIMIT = 2.0


@dataclass(frozen=True)
class FieldTotal:
    """Field total: its Monte Carlo summary, the per-draw totals and the number of items."""

    summary: Summary
    draws: pint.Quantity
    n_items: int


class FieldSums:
    """Running per-draw sums of several outputs over items, added a chunk of items at a time.

    A field of 1000 vents × 10 000 draws is 80 MB per output; adding chunks of
    vents (``add(heat_power=..., mass_flux=...)``, each ``(n_chunk, n_draws)``)
    keeps only one chunk and the running totals in memory.

    Examples
    --------
    >>> s = FieldSums()
    >>> s.add(heat_power=Q_(np.ones((3, 4)), "MW"))
    >>> s.add(heat_power=Q_(np.ones((2, 4)), "MW"))
    >>> float(s.total("heat_power").draws.magnitude[0]), s.total("heat_power").n_items
    (5.0, 5)
    """

    def __init__(self, units: dict | None = None):
        self._units = dict(units or {})
        self._sums: dict[str, np.ndarray] = {}
        self._items: dict[str, int] = {}

    def add(self, **per_item):
        for name, chunk in per_item.items():
            if not isinstance(chunk, pint.Quantity):
                raise InputError(f"{name} draws", type(chunk).__name__, "pint quantity arrays")
            unit = self._units.setdefault(name, str(chunk.units))
            m = np.asarray(chunk.to(unit).magnitude, float)
            m = m.reshape(1, -1) if m.ndim <= 1 else m
            part = m.sum(axis=0)
            total = self._sums.get(name)
            if total is not None and part.size != total.size and 1 not in (part.size, total.size):
                raise InputError(f"{name} draws", f"{part.size} draws", f"the same number of draws ({total.size})")
            self._sums[name] = part if total is None else total + part
            self._items[name] = self._items.get(name, 0) + m.shape[0]

    def names(self) -> list[str]:
        return list(self._sums)

    def total(self, name: str, unit: str | None = None, seed: int | None = None) -> "FieldTotal":
        if name not in self._sums:
            raise InputError("output", name, "one of " + (", ".join(self._sums) or "(nothing added)"))
        q = Q_(self._sums[name], self._units[name])
        q = q.to(unit) if unit else q
        return FieldTotal(summary=summarize(q, seed), draws=q, n_items=self._items[name])

    def totals(self, seed: int | None = None) -> dict:
        return {k: self.total(k, seed=seed) for k in self._sums}


def field_total(per_item, unit: str | None = None, seed: int | None = None) -> FieldTotal:
    """Sum per-item draws within each draw and summarize the field total.

    Parameters
    ----------
    per_item : pint.Quantity or iterable of pint.Quantity
        Draws of shape ``(n_items, n_draws)`` (or ``(n_items, 1)`` for exact
        items, or ``(n_draws,)`` for one item), or an iterable of such chunks
        (e.g. a generator over groups of vents, to bound memory). Every draw
        column must be one realization of the shared inputs (see
        ``SharedDraws``).
    unit : str, optional
        Unit of the result; default that of the first chunk.
    seed : int, optional
        Recorded in the summary.

    Returns
    -------
    FieldTotal
    """
    sums = FieldSums()
    for chunk in [per_item] if isinstance(per_item, pint.Quantity) else per_item:
        sums.add(total=chunk)
    if not sums.names():
        raise InputError("per-item draws", "none", "at least one item")
    return sums.total("total", unit=unit, seed=seed)


def summarize_items(per_item: pint.Quantity, unit: str | None = None) -> dict:
    """Mean, median, 5th and 95th percentile and standard deviation of each row (item).

    Returns a dict of quantity arrays of length ``n_items`` (vectorized over items).
    """
    unit = unit or str(per_item.units)
    m = np.atleast_2d(np.asarray(per_item.to(unit).magnitude, float))
    p05, med, p95 = np.nanpercentile(m, [5, 50, 95], axis=1)
    sd = np.nanstd(m, axis=1, ddof=1) if m.shape[1] > 1 else np.zeros(m.shape[0])
    return {"mean": Q_(np.nanmean(m, axis=1), unit), "median": Q_(med, unit), "p05": Q_(p05, unit),
            "p95": Q_(p95, unit), "std": Q_(sd, unit)}


@dataclass(frozen=True)
class FocusedDiffuseSplit:
    """Focused, diffuse and total output, and the diffuse fraction, per draw and summarized."""

    focused: Summary
    diffuse: Summary
    total: Summary
    diffuse_fraction: Summary
    draws: dict[str, pint.Quantity]

    def as_dict(self, name: str = "heat_power", unit: str = "MW") -> dict:
        out = {}
        for part in ("focused", "diffuse", "total"):
            out.update(getattr(self, part).as_dict(f"{part}_{name}", unit))
        out.update(self.diffuse_fraction.as_dict("diffuse_fraction", "dimensionless"))
        return out


def focused_diffuse_split(focused, diffuse, seed: int | None = None) -> FocusedDiffuseSplit:
    """Split of a field's output into focused and diffuse parts, with uncertainty.

    Parameters
    ----------
    focused, diffuse : pint.Quantity or FieldTotal
        Per-draw totals of shape ``(n_draws,)`` from the same ``SharedDraws``
        (draw ``j`` of each is one realization of the field), or scalars.

    Returns
    -------
    FocusedDiffuseSplit
        The diffuse fraction ``D / (F + D)`` is computed draw by draw, so an
        input shared by both parts (an ambient temperature) is not counted twice.
    """
    f = focused.draws if isinstance(focused, FieldTotal) else focused
    d = diffuse.draws if isinstance(diffuse, FieldTotal) else diffuse
    unit = str(f.units)
    fm, dm = np.broadcast_arrays(np.atleast_1d(f.to(unit).magnitude), np.atleast_1d(d.to(unit).magnitude))
    total = fm + dm
    if np.any(total <= 0):
        raise InputError("field total", f"{np.min(total):g} {unit}", "a positive total of focused and diffuse output")
    draws = {"focused": Q_(fm, unit), "diffuse": Q_(dm, unit), "total": Q_(total, unit),
             "diffuse_fraction": Q_(dm / total, "dimensionless")}
    return FocusedDiffuseSplit(**{k: summarize(v, seed) for k, v in draws.items()}, draws=draws)


@dataclass(frozen=True)
class MethodPair:
    """Agreement of two methods for one vent."""

    first: str
    second: str
    ratio: float  # exp(mean ln(first/second))
    normalized_difference: float  # z
    intervals_overlap: bool  # 90 % intervals
    consistent: bool  # |z| ≤ limit


@dataclass(frozen=True)
class MethodComparison:
    """Several methods' estimates for one vent, their agreement and their combination."""

    methods: dict[str, Summary]  # method name → its summary
    pairs: list[MethodPair]
    consistent: bool
    combined: Summary
    combined_draws: pint.Quantity
    weights: dict[str, float]  # method name → weight on log power
    scale_factor: float  # Birge factor applied (≥ 1)
    chi_squared: float
    limit: float = CONSISTENCY_LIMIT
    rule: str = field(default="best linear unbiased estimate on log power, draws' covariance, Birge scale factor")

    def rows(self, name: str = "heat_power", unit: str = "MW") -> list[dict]:
        """One row per method plus the combination, units in the keys (for a CSV table)."""
        rows = []
        for meth, s in self.methods.items():
            rows.append({"method": meth, **s.as_dict(name, unit), "weight": self.weights[meth]})
        rows.append({"method": "combined", **self.combined.as_dict(name, unit), "weight": float("nan")})
        return rows

    def pair_rows(self) -> list[dict]:
        return [{"first": p.first, "second": p.second, "ratio": p.ratio,
                 "normalized_difference": p.normalized_difference, "intervals_overlap": p.intervals_overlap,
                 "consistent": p.consistent} for p in self.pairs]


def _log_draws(estimates: dict, unit: str):
    names = list(estimates)
    if len(names) < 1:
        raise InputError("methods", "none", "at least one method's estimate")
    arrays = []
    for n in names:
        v = np.atleast_1d(np.asarray(estimates[n].to(unit).magnitude, float))
        if np.any(~np.isfinite(v)) or np.any(v <= 0):
            raise InputError(f"{n} estimate", f"{np.nanmin(v):g} {unit}", "positive, finite draws")
        arrays.append(v)
    sizes = {a.size for a in arrays}
    if len(sizes) != 1:
        raise InputError("methods", "draws of " + ", ".join(str(a.size) for a in arrays),
                         "the same number of draws for every method (one SharedDraws for the whole run)")
    return names, np.log(np.vstack(arrays))


def compare_methods(estimates: dict, unit: str = "MW", limit: float = CONSISTENCY_LIMIT,
                    seed: int | None = None) -> MethodComparison:
    """Compare and combine several methods' draws of one vent's output.

    Parameters
    ----------
    estimates : dict
        Method name → draws (pint quantity, shape ``(n_draws,)``), all from
        the same ``SharedDraws`` so that draw ``j`` is one realization.
    unit : str, default "MW"
    limit : float, default 2
        Largest ``|z|`` at which a pair counts as consistent.
    seed : int, optional
        Recorded in the summaries.

    Returns
    -------
    MethodComparison
        See the module notes for the rule; with one method the combination is
        that method.

    References
    ----------
    .. [1] Aitken (1935); [2] Lyons, Gibaut & Clifford (1988); [3] Birge (1932).
    """
    names, L = _log_draws(estimates, unit)
    n, m = L.shape
    summaries = {k: summarize(Q_(np.exp(L[i]), unit), seed) for i, k in enumerate(names)}
    lo, hi = np.percentile(L, [5, 95], axis=1)
    pairs = []
    for i in range(n):
        for j in range(i + 1, n):
            diff = L[i] - L[j]
            sd = diff.std(ddof=1) if m > 1 else 0.0
            mean = diff.mean()
            z = mean / sd if sd > 0 else (0.0 if mean == 0 else np.inf * np.sign(mean))
            pairs.append(MethodPair(names[i], names[j], float(np.exp(mean)), float(z),
                                    bool(lo[i] <= hi[j] and lo[j] <= hi[i]), bool(abs(z) <= limit)))
    mu = L.mean(axis=1)
    if n == 1:
        w = np.ones(1)
        chi2, scale = 0.0, 1.0
    else:
        C = np.atleast_2d(np.cov(L))
        flat = [k for i, k in enumerate(names) if not C[i, i] > 0]
        if flat:
            raise InputError(f"{flat[0]} estimate", "draws without spread",
                             "draws with an uncertainty (an exact estimate cannot be weighed against others)")
        try:
            Ci = np.linalg.inv(C)
        except np.linalg.LinAlgError:
            raise InputError("methods", ", ".join(names),
                             "estimates that are not exact copies of each other (their covariance is singular)") \
                from None
        one = np.ones(n)
        w = Ci @ one / (one @ Ci @ one)
        r = mu - w @ mu
        chi2 = float(r @ Ci @ r)
        scale = max(1.0, float(np.sqrt(chi2 / (n - 1))))
    centre = float(w @ mu)
    combined_log = centre + scale * (w @ L - centre)
    combined = Q_(np.exp(combined_log), unit)
    return MethodComparison(methods=summaries, pairs=pairs, consistent=all(p.consistent for p in pairs),
                            combined=summarize(combined, seed), combined_draws=combined,
                            weights={k: float(w[i]) for i, k in enumerate(names)}, scale_factor=scale,
                            chi_squared=chi2, limit=float(limit))


__all__ = ["SharedDraws", "FieldTotal", "FieldSums", "field_total", "summarize_items", "FocusedDiffuseSplit",
           "focused_diffuse_split", "MethodPair", "MethodComparison", "compare_methods", "CONSISTENCY_LIMIT"]
