"""Input uncertainty and vectorized Monte Carlo propagation.

Any input may be a plain quantity (exact) or an ``Uncertain`` value: a normal
distribution (``"1.4 ± 0.2 m/s"`` means mean ± one standard deviation), a
uniform one, or a lognormal one for strictly positive inputs whose error is a
factor rather than an offset. ``propagate`` draws every uncertain input once
(``n`` values each, as arrays), calls the estimator once on the arrays, and
summarizes the result; there is no loop over draws, so estimators must accept
arrays (all ventflux estimators do).

One propagation driver
----------------------
Every command and the survey run propagate uncertainty the same way, through
``propagate``:

1. every named input is drawn through ``SharedDraws``: one random stream per
   input *name*, seeded by ``numpy.random.SeedSequence`` from the run's seed
   and a stable hash of the name (so draws depend neither on the order inputs
   are asked for nor on which other inputs exist, and the same input asked for
   by a command and by a survey gets the same draws);
2. a vectorized test marks the draws that are physically impossible
   (a negative velocity, a boiling exit temperature, an active fraction above
   one); they are **dropped and counted**, never clipped;
3. if more than ``max_unphysical`` of the draws (5 % by default,
   ``DEFAULT_MAX_UNPHYSICAL``; ``--max-unphysical`` on every command,
   ``[run] max_unphysical`` in a survey file) are dropped, the input
   distributions are refused, naming the input that lost the most draws;
4. the estimator is called once on the remaining draws and the outputs are
   summarized. The share limit, the number dropped and every input's
   distribution are kept in the result for the provenance.

The random generator is NumPy's PCG64 (``numpy.random.default_rng``) seeded
with ``DEFAULT_SEED`` unless told otherwise; the seed is reported with every
result so a run can be repeated exactly.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field, replace
from typing import Any, Generic, TypeVar

import numpy as np
import pint

from .errors import InputError
from .units import Q_, parse_quantity, require_dimension, ureg

DEFAULT_SEED = 20_261_202
DEFAULT_DRAWS = 10_000
KINDS = ("normal", "uniform", "lognormal", "beta")
#: Largest share of Monte Carlo draws that may be dropped as physically
#: impossible before the input distributions are refused (a choice: a few
#: per cent of the tail of a normal spread past a bound changes the 5-95 %
#: interval by less than its own Monte Carlo noise; more means the
#: distribution does not describe the quantity). Settable per run.
DEFAULT_MAX_UNPHYSICAL = 0.05
#: Largest number of draws a run may ask for (a guard against a typo that
#: would exhaust memory; 10 million draws of one input are 80 MB).
MAX_DRAWS = 10_000_000
#: Seeds are NumPy ``SeedSequence`` entropy: 0 … 2³²−1 on the command line and in a survey file.
MAX_SEED = 2**32 - 1
#: Names of the site-wide inputs every estimator shares (one stream each per
#: run): the same in every command and in a survey, so both draw them alike.
SITE_INPUT_NAMES = {
    "ambient_temperature": "site/ambient temperature",
    "ambient_salinity": "site/ambient salinity",
    "pressure": "site/pressure",
    "depth": "site/depth",
}


@dataclass(frozen=True)
class Uncertain:
    """A distribution for one input, with parameters in ``unit``.

    ``normal``: ``a`` mean, ``b`` standard deviation (a temperature's standard
    deviation is a difference, so ``"352 ± 3 degC"`` is 3 K wide).
    ``uniform``: ``a`` lower and ``b`` upper bound.
    ``lognormal``: ``a`` median, ``b`` geometric standard deviation (a factor > 1).
    ``beta``: ``a`` mean, ``b`` standard deviation of a fraction in (0, 1)
    (``b² < a(1 − a)``); made by ``from_mean_sd`` for bounded table columns.
    """

    kind: str
    a: float
    b: float
    unit: str

    def __post_init__(self):
        if self.kind not in KINDS:
            raise InputError("distribution", self.kind, "one of " + ", ".join(KINDS))

    @property
    def nominal(self) -> pint.Quantity:
        """The central value: mean, mid-point or median."""
        centre = {"normal": self.a, "uniform": 0.5 * (self.a + self.b), "lognormal": self.a,
                  "beta": self.a}[self.kind]
        return Q_(centre, self.unit)

    def sample(self, n: int, rng: np.random.Generator) -> pint.Quantity:
        if self.kind == "normal":
            x = rng.normal(self.a, self.b, n)
        elif self.kind == "uniform":
            x = rng.uniform(self.a, self.b, n)
        elif self.kind == "beta":
            k = self.a * (1 - self.a) / self.b**2 - 1  # method of moments
            x = rng.beta(self.a * k, (1 - self.a) * k, n)
        else:
            x = np.exp(rng.normal(np.log(self.a), np.log(self.b), n))
        return Q_(x, self.unit)

    def __str__(self):
        u = f"{ureg.Unit(self.unit):~P}"
        u = f" {u}" if u else ""  # a pure number has no unit to write
        if self.kind == "normal":
            return f"{self.a:g} ± {self.b:g}{u}"
        if self.kind == "beta":
            return f"beta(mean {self.a:g}, sd {self.b:g})"
        return f"{self.kind}({self.a:g}, {self.b:g}){u}"


def normal(mean: pint.Quantity, sd: pint.Quantity) -> Uncertain:
    """Normal distribution from a mean and a standard deviation (both quantities)."""
    unit = str(mean.units)
    return Uncertain("normal", float(mean.magnitude), float(_delta(sd, mean.units)), unit)


def uniform(low: pint.Quantity, high: pint.Quantity) -> Uncertain:
    """Uniform distribution between two quantities."""
    unit = str(low.units)
    return Uncertain("uniform", float(low.magnitude), float(high.to(low.units).magnitude), unit)


def lognormal(median: pint.Quantity, factor: float) -> Uncertain:
    """Lognormal distribution from a median and a geometric standard deviation (> 1)."""
    return Uncertain("lognormal", float(median.magnitude), float(factor), str(median.units))


#: What ``from_mean_sd`` draws for each kind of bound.
BOUNDED_KINDS = {"positive": "lognormal", "fraction": "beta", None: "normal"}


def from_mean_sd(mean: float, sd: float, unit: str, bound: str | None = None, field: str = "value"):
    """A distribution with a given mean and standard deviation that respects a physical bound.

    A normal distribution with a large relative spread crosses a physical
    bound (8 % of the draws of an anomaly of 0.52 ± 0.38 K are ≤ 0). For a
    table column of standard deviations the package therefore draws, with
    the same mean and standard deviation:

    * ``bound=None``: normal;
    * ``bound="positive"``: lognormal, ``σ² = ln(1 + (sd/mean)²)``,
      median ``mean / √(1 + (sd/mean)²)`` (method of moments);
    * ``bound="fraction"``: beta on (0, 1), ``α = m k``, ``β = (1 − m) k``,
      ``k = m(1 − m)/sd² − 1`` (method of moments; needs ``sd² < m(1 − m)``).

    A zero standard deviation gives the exact value (a quantity).

    References
    ----------
    .. [1] Johnson, N. L., Kotz, S. and Balakrishnan, N. (1994, 1995).
       Continuous Univariate Distributions, vol. 1 ch. 14 (lognormal moments)
       and vol. 2 ch. 25 (beta moments), Wiley.
    """
    mean, sd = float(mean), float(sd)
    if not (np.isfinite(mean) and np.isfinite(sd)) or sd < 0:
        raise InputError(field, f"{mean:g} ± {sd:g}", "a finite mean and a standard deviation ≥ 0")
    if sd == 0:
        return Q_(mean, unit)
    if bound == "positive":
        if not mean > 0:
            raise InputError(field, f"{mean:g} ± {sd:g}", "a mean > 0 for a positive quantity")
        # σ² = ln(1 + r²), r = sd/mean: log1p keeps a tiny spread's digits, and a huge r (a mistyped tiny mean)
        # is taken as 2 ln r + ln(1 + r⁻²) instead of overflowing
        r = sd / mean
        s2 = float(np.log1p(r * r) if r < 1e150 else 2.0 * np.log(r) + np.log1p(1.0 / r / r))
        median = mean * float(np.exp(-0.5 * s2))  # mean / √(1 + r²)
        if not median >= np.finfo(float).tiny:  # below the smallest full-precision float: no usable median
            raise InputError(field, f"{mean:g} ± {sd:g}", "a spread a positive quantity of that mean can have "
                             "(a lognormal of that mean and standard deviation has no median > 0)")
        return Uncertain("lognormal", median, float(np.exp(np.sqrt(s2))), unit)
    if bound == "fraction":
        if not (0 < mean < 1 and sd**2 < mean * (1 - mean)):
            raise InputError(field, f"{mean:g} ± {sd:g}",
                             "a fraction's mean in (0, 1) with a standard deviation below √(mean·(1 − mean))")
        return Uncertain("beta", mean, sd, unit)
    if bound is not None:
        raise InputError("bound", bound, "one of positive, fraction or none")
    return Uncertain("normal", mean, sd, unit)


def _delta(sd, units):
    """Standard deviation in ``units``; a degC spread is a difference, not an offset."""
    if not isinstance(sd, pint.Quantity):
        return float(sd)
    u = ureg.Unit(units)
    if u in (ureg.degC, ureg.degF):
        delta = {ureg.degC: "delta_degC", ureg.degF: "delta_degF"}[u]
        if sd.units in (ureg.degC, ureg.degF):
            return sd.magnitude * (1.0 if sd.units == u else (5 / 9 if u == ureg.degC else 9 / 5))
        return sd.to(delta).magnitude
    return sd.to(u).magnitude


_NUM = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"
_PM = re.compile(rf"^\s*({_NUM})\s*(?:±|\+-|\+/-)\s*({_NUM})\s*(.*?)\s*$")
_FUNC = re.compile(rf"^\s*(normal|uniform|lognormal)\s*\(\s*({_NUM})\s*,\s*({_NUM})\s*\)\s*(.*?)\s*$", re.IGNORECASE)


def parse_uncertain(text, dimension: str, field: str, default_unit: str | None = None):
    """Parse ``"1.4 m/s"``, ``"1.4 ± 0.2 m/s"`` (also ``+-``), ``"uniform(1.2, 1.6) m/s"``.

    Returns a ``pint.Quantity`` for an exact value and an ``Uncertain`` otherwise.
    ``lognormal(median, factor) unit`` takes a geometric standard deviation > 1.
    """
    if isinstance(text, (Uncertain, pint.Quantity)) or not isinstance(text, str):
        return check_uncertain(text, dimension, field) if isinstance(text, Uncertain) else parse_quantity(
            text, dimension, field, default_unit
        )
    m = _PM.match(text)
    if m:
        unit = _unit_of(m.group(3), dimension, field, text, default_unit)
        sd = float(m.group(2))
        if sd < 0:
            raise InputError(field, text, "a standard deviation ≥ 0 after ±")
        return check_uncertain(Uncertain("normal", float(m.group(1)), sd, unit), dimension, field)
    m = _FUNC.match(text)
    if m:
        kind = m.group(1).lower()
        unit = _unit_of(m.group(4), dimension, field, text, default_unit)
        a, b = float(m.group(2)), float(m.group(3))
        if kind == "uniform" and not b > a:
            raise InputError(field, text, "uniform(low, high) with high > low")
        if kind == "lognormal" and not (a > 0 and b > 1):
            raise InputError(field, text, "lognormal(median, factor) with median > 0 and factor > 1")
        if kind == "lognormal" and ureg.Unit(unit) in (ureg.degC, ureg.degF):
            raise InputError(field, text, "a lognormal only for a quantity with a true zero (use K, not degC)")
        if kind == "normal" and b < 0:
            raise InputError(field, text, "normal(mean, sd) with sd ≥ 0")
        return check_uncertain(Uncertain(kind, a, b, unit), dimension, field)
    return parse_quantity(text, dimension, field, default_unit)


def _unit_of(unit_text, dimension, field, whole, default_unit):
    if not unit_text:
        if default_unit is not None:
            return default_unit
        if dimension == "dimensionless":
            return "dimensionless"
        raise InputError(field, whole, f"a {dimension} with a unit, e.g. '1.4 ± 0.2 m/s'")
    try:
        unit = ureg.parse_units(unit_text)
    except Exception:
        raise InputError(field, whole, f"a {dimension} with a known unit") from None
    return str(unit)


def check_uncertain(u: Uncertain, dimension: str, field: str) -> Uncertain:
    require_dimension(Q_(1.0, u.unit) if ureg.Unit(u.unit) not in (ureg.degC, ureg.degF) else Q_(0.0, u.unit),
                      dimension, field)
    from . import limits  # non-finite parameters never pass; magnitudes against the plausibility table

    limits.check_finite(field, [u.a, u.b], u)
    u = Uncertain(u.kind, u.a + 0.0, u.b + 0.0, u.unit)  # "-0" is 0: NumPy refuses a scale with a sign bit
    return limits.check(field, u, u, dimension)


def nominal(x):
    """Central value of an input, whether exact or uncertain."""
    return x.nominal if isinstance(x, Uncertain) else x


def draw(x, n: int, rng: np.random.Generator):
    """``n`` draws of ``x`` (a quantity is returned unchanged and broadcasts)."""
    return x.sample(n, rng) if isinstance(x, Uncertain) else x


def draw_inputs(inputs: dict, n: int, seed: int | None = DEFAULT_SEED) -> dict:
    """Draw every uncertain value of ``inputs`` once; exact values pass through.

    Each input is drawn from its own stream, keyed by its name (see
    ``SharedDraws``), so the draws for a given seed depend neither on the
    order the caller wrote them in nor on which other inputs are given.
    """
    shared = SharedDraws(n, seed)
    return {k: shared.draw(k, inputs[k]) for k in sorted(inputs)}


def check_draws(n_draws, field: str = "draws") -> int:
    """The number of draws as an int, or an ``InputError`` naming ``field``."""
    try:
        n = int(n_draws)
    except (TypeError, ValueError):
        raise InputError(field, n_draws, "a whole number of Monte Carlo draws ≥ 2") from None
    if n != n_draws or n < 2:
        raise InputError(field, n_draws, "a whole number of Monte Carlo draws ≥ 2")
    if n > MAX_DRAWS:
        raise InputError(field, n_draws, f"at most {MAX_DRAWS:,} Monte Carlo draws")
    return n


def check_seed(seed, field: str = "seed") -> int:
    """A seed as an int in 0 … 2³²−1, or an ``InputError`` naming ``field``."""
    if isinstance(seed, bool):
        raise InputError(field, seed, "a whole number from 0 to 4294967295")
    try:
        s = int(seed)
    except (TypeError, ValueError):
        raise InputError(field, seed, "a whole number from 0 to 4294967295") from None
    if s != seed or not 0 <= s <= MAX_SEED:
        raise InputError(field, seed, "a whole number from 0 to 4294967295")
    return s


def check_max_unphysical(share, field: str = "max unphysical") -> float:
    """A share of draws in [0, 1), or an ``InputError`` naming ``field``."""
    try:
        x = float(share)
    except (TypeError, ValueError):
        raise InputError(field, share, "a share of draws from 0 to below 1, e.g. 0.05") from None
    if not 0 <= x < 1:
        raise InputError(field, share, "a share of draws from 0 to below 1, e.g. 0.05")
    return x


def named_stream(seed: int, name: str) -> np.random.Generator:
    """The generator of the random stream called ``name`` under the run's ``seed`` (the only way ventflux, and a
    plugin, gets random numbers: streams are told apart by name, never by offsets of the seed)."""
    return np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=stream_key(name)))


def stream_key(name: str) -> tuple[int, int]:
    """A stable 64-bit key of an input's name (BLAKE2b), as two 32-bit words.

    Python's ``hash`` changes between processes; this does not, so the same
    name gives the same stream in every run on every machine.
    """
    digest = hashlib.blake2b(name.encode("utf-8"), digest_size=8).digest()
    return int.from_bytes(digest[:4], "little"), int.from_bytes(digest[4:], "little")


class SharedDraws:
    """Monte Carlo draws of named inputs; one name, one draw array, for every consumer.

    Vents measured with the same instrument share its error: one pixel scale
    for every vent filmed through one camera, one probe calibration for every
    patch, one CTD cast for every ambient temperature. ``SharedDraws`` hands
    out draws by input *name*: every consumer asking for ``"camera-2 pixel
    scale"`` gets the same array, so draw ``j`` of every vent uses the same
    scale. Names that are unique to one vent (``"vent A/velocity"``) give
    independent draws. Each name has its own random stream,
    ``SeedSequence(seed, spawn_key=stream_key(name))``.

    Parameters
    ----------
    n_draws : int
        Draws per input (2 … ``MAX_DRAWS``).
    seed : int, optional
        Run seed, 0 … 2³²−1.

    Examples
    --------
    >>> d = SharedDraws(1000, seed=1)
    >>> s = normal(Q_(1.0, "dimensionless"), Q_(0.02, "dimensionless"))
    >>> a = d.draw("camera pixel scale", s)
    >>> b = d.draw("camera pixel scale", s)
    >>> bool((a == b).all())
    True
    """

    def __init__(self, n_draws: int = DEFAULT_DRAWS, seed: int | None = DEFAULT_SEED):
        self.n_draws = check_draws(n_draws)
        self.seed = DEFAULT_SEED if seed is None else check_seed(seed)
        self._shared: dict[str, pint.Quantity] = {}
        self._known: dict[str, Any] = {}

    def rng(self, name: str) -> np.random.Generator:
        """The random generator of the stream called ``name`` (a new generator, always the same draws)."""
        return named_stream(self.seed, name)

    _rng = rng  # older name

    def _register(self, name: str, value):
        if not isinstance(name, str) or not name:
            raise InputError("input name", name, "a non-empty name for the input")
        previous = self._known.get(name)
        if previous is not None and not _same(previous, value):
            raise InputError(name, str(value), f"the value already given under this name ({previous}); "
                             "inputs that share a name share their draws, so give different inputs different names")
        self._known[name] = value

    def drawn_since(self, known: Iterable[str], shared: Iterable[str]) -> tuple[dict, dict]:
        """The names (and their draws) registered here that are not among ``known`` and ``shared``: what a
        computation drew, to be taken in by another ``SharedDraws`` with ``adopt``."""
        known, shared = set(known), set(shared)
        return ({k: v for k, v in self._known.items() if k not in known},
                {k: v for k, v in self._shared.items() if k not in shared})

    def adopt(self, known: dict, shared: dict) -> None:
        """Take in names and draws made elsewhere (``drawn_since`` of a copy, in another process or earlier), as
        drawing them here would: a name given two different values is refused, as in one run."""
        for name, value in known.items():
            self._register(name, value)
        for name, value in shared.items():
            self._shared.setdefault(name, value)

    def draw(self, name: str, value):
        """Draws of the input ``name`` (shape ``(n_draws,)``); the same array on every call.

        An exact quantity is returned unchanged and broadcasts.
        """
        self._register(name, value)
        if not isinstance(value, Uncertain):
            return value
        if name not in self._shared:
            self._shared[name] = value.sample(self.n_draws, self.rng(name))
        return self._shared[name]

    def draw_each(self, names, values, unit: str | None = None) -> pint.Quantity:
        """Independent draws for per-item inputs, stacked to shape ``(n_items, n_draws)``.

        ``names`` are the inputs' names (unique per item, e.g. ``"vent A/velocity"``);
        exact values are repeated along the draws. The arrays are not kept:
        the same names give the same draws on every call, because each name
        seeds its own stream.
        """
        names, values = list(names), list(values)
        if len(names) != len(values):
            raise InputError("names", f"{len(names)} names", f"one name per value ({len(values)})")
        if not values:
            raise InputError("values", "none", "at least one item")
        unit = unit or (values[0].unit if isinstance(values[0], Uncertain) else str(values[0].units))
        out = np.empty((len(values), self.n_draws))
        for i, (name, value) in enumerate(zip(names, values)):
            self._register(name, value)
            q = value.sample(self.n_draws, self.rng(name)) if isinstance(value, Uncertain) else value
            out[i] = q.to(unit).magnitude
        return Q_(out, unit)

    def names(self) -> list[str]:
        return sorted(self._known)

    def shared_names(self) -> list[str]:
        """Names drawn through ``draw`` (the inputs shared between items)."""
        return sorted(self._shared)

    def describe(self) -> dict[str, str]:
        """Every input by name with its distribution or value, for provenance."""
        return {k: str(self._known[k]) for k in sorted(self._known)}

    def __contains__(self, name):
        return name in self._known

    def __len__(self):
        return len(self._known)


def _same(a, b) -> bool:
    if isinstance(a, Uncertain) or isinstance(b, Uncertain):
        return a == b
    try:
        return bool(np.all(np.asarray(a.to(b.units).magnitude) == np.asarray(b.magnitude)))
    except Exception:
        return a is b


@dataclass(frozen=True)
class UnphysicalPolicy:
    """The one rule for physically impossible draws: drop and count; refuse above ``max_share``.

    Parameters
    ----------
    max_share : float
        Largest share of draws that may be dropped (default 5 %,
        ``DEFAULT_MAX_UNPHYSICAL``).
    option : str
        How the user sets the limit, named in the refusal
        (``--max-unphysical`` on the command line, ``run.max_unphysical`` in
        a survey file).
    """

    max_share: float = DEFAULT_MAX_UNPHYSICAL
    option: str = "--max-unphysical"

    def __post_init__(self):
        object.__setattr__(self, "max_share", check_max_unphysical(self.max_share, self.option))

    def enforce(self, keep: np.ndarray, field: str, value: str, what: str = "draws") -> int:
        """Number of dropped draws in ``keep`` (False = dropped); ``InputError`` naming ``field`` above the limit."""
        keep = np.asarray(keep, bool)
        n = keep.size
        dropped = int(n - np.count_nonzero(keep))
        if dropped > self.max_share * n:
            raise InputError(field, value, f"a distribution whose {what} are physical: {dropped} of {n} "
                             f"({dropped / n:.1%}) were not, above the limit of {self.max_share:.1%} "
                             f"({self.option}); narrow the spread or use a lognormal for a positive quantity")
        return dropped

    def as_dict(self) -> dict[str, Any]:
        return {"max_unphysical_share": self.max_share, "unphysical_rule": "dropped and counted; refused above "
                                                                           "the share"}


def input_names(keys: Iterable[str], prefix: str | None = None) -> dict[str, str]:
    """Names under which inputs are drawn: ``prefix/key`` (or ``key`` without a prefix)."""
    return {k: (f"{prefix}/{k}" if prefix else k) for k in keys}


R = TypeVar("R")


@dataclass(frozen=True)
class Propagation(Generic[R]):
    """What ``propagate`` gives back: the estimator's result on the kept draws, and the bookkeeping.

    Attributes
    ----------
    result
        The estimator's output, computed once on the ``kept`` draws.
    keep : numpy.ndarray of bool, shape ``(n_draws,)``
        Which draws were physical (the result's draw axis has ``keep.sum()``
        entries).
    n_draws, unphysical, seed
        Draws asked for, draws dropped, run seed.
    policy : UnphysicalPolicy
    inputs : dict
        Input name (as drawn) → its distribution or value, for provenance.
    """

    result: R
    keep: np.ndarray
    n_draws: int
    unphysical: int
    seed: int
    policy: UnphysicalPolicy
    inputs: dict[str, str] = field(default_factory=dict)

    @property
    def kept(self) -> int:
        return int(np.count_nonzero(self.keep))

    def expand(self, q: pint.Quantity, unit: str | None = None) -> pint.Quantity:
        """Draws of ``q`` (last axis = kept draws, or a scalar) back on all ``n_draws`` columns, NaN where dropped."""
        unit = unit or str(q.units)
        m = np.asarray(q.to(unit).magnitude, float)
        lead = m.shape[:-1] if m.ndim and m.shape[-1] == self.kept else m.shape
        out = np.full(lead + (self.n_draws,), np.nan)
        out[..., self.keep] = m if m.ndim and m.shape[-1] == self.kept else m[..., None]
        return Q_(out, unit)

    def summary(self, q: pint.Quantity, unit: str | None = None) -> Summary:
        q = q.to(unit) if unit else q
        return summarize(q, self.seed)

    def provenance(self) -> dict[str, Any]:
        return {"draws": self.n_draws, "unphysical_draws": self.unphysical, "seed": self.seed,
                **self.policy.as_dict(), "inputs": dict(self.inputs)}


def driver_settings(draws: SharedDraws | int, seed: int | None,
                    max_unphysical: float | UnphysicalPolicy) -> tuple[SharedDraws, UnphysicalPolicy]:
    """The run's draws and its rule for impossible draws, from what a caller passes to the driver: a
    ``SharedDraws`` or a draw count (with ``seed``), an ``UnphysicalPolicy`` or a share."""
    shared = draws if isinstance(draws, SharedDraws) else SharedDraws(draws, seed)
    policy = max_unphysical if isinstance(max_unphysical, UnphysicalPolicy) else UnphysicalPolicy(max_unphysical)
    return shared, policy


def propagate(estimator: Callable[..., R], inputs: Mapping[str, Any], *, names: Mapping[str, str] | str | None = None,
              draws: SharedDraws | int = DEFAULT_DRAWS, seed: int | None = DEFAULT_SEED,
              physical: Callable[[dict], np.ndarray] | None = None,
              max_unphysical: float | UnphysicalPolicy = DEFAULT_MAX_UNPHYSICAL,
              drawn: Mapping[str, pint.Quantity] | None = None,
              labels: Mapping[str, str] | None = None) -> Propagation[R]:
    """The propagation driver: draw every named input, drop unphysical draws, call the estimator once.

    Parameters
    ----------
    estimator : callable
        A deterministic, vectorized function of the inputs (keyword arguments);
        it receives arrays of the kept draws for every uncertain input.
    inputs : mapping
        Keyword arguments of ``estimator``: ``Uncertain`` values are drawn,
        anything else is passed unchanged.
    names : mapping or str, optional
        The name each input is drawn under (its stream, shared with every
        other consumer of the same name); a string is a prefix
        (``"vent A/orifice[0]"`` → ``"vent A/orifice[0]/velocity"``). Default:
        the keyword itself.
    draws : SharedDraws or int
        The run's shared draws, or a number of draws for a fresh set seeded
        with ``seed``.
    physical : callable, optional
        ``physical(args) -> bool array (n_draws,)``: which draws the
        estimator can evaluate, given the drawn and exact arguments.
    max_unphysical : float or UnphysicalPolicy
        Largest share of draws that may be dropped (default 5 %).
    drawn : mapping, optional
        Arguments given as draws already (shape ``(..., n_draws)``, from the
        same ``SharedDraws``): subset like the drawn inputs.
    labels : mapping, optional
        How to show an input in a refusal (its value or distribution as the
        user wrote it), where ``str`` of the argument would not; ``names``
        gives its name.

    Returns
    -------
    Propagation
        ``result`` is ``estimator(**args)`` on the kept draws.

    Raises
    ------
    InputError
        When more than ``max_unphysical`` of the draws are impossible, naming
        the input whose draws were impossible most often.
    """
    shared, policy = driver_settings(draws, seed, max_unphysical)
    names, args, sampled, given, keep, dropped = _draw_and_screen(inputs, names, shared, physical, policy, drawn,
                                                                  labels)
    n = shared.n_draws
    if dropped:
        for k in list(sampled) + list(given):
            args[k] = _subset(args[k], keep, n)
    result = estimator(**args)
    described = {names.get(k, k): str(v) for k, v in inputs.items() if isinstance(v, Uncertain)}
    return Propagation(result=result, keep=keep, n_draws=n, unphysical=dropped, seed=shared.seed, policy=policy,
                       inputs=described)


def screen(inputs: Mapping[str, Any], *, names: Mapping[str, str] | str | None = None,
           draws: SharedDraws | int = DEFAULT_DRAWS, seed: int | None = DEFAULT_SEED,
           physical: Callable[[dict], np.ndarray] | None = None,
           max_unphysical: float | UnphysicalPolicy = DEFAULT_MAX_UNPHYSICAL,
           drawn: Mapping[str, pint.Quantity] | None = None, labels: Mapping[str, str] | None = None) -> int:
    """Draw and screen the inputs exactly as ``propagate`` does, without calling an estimator.

    For a validation that must refuse what the run refuses, on the run's draws, at no cost of estimation
    (``ventflux survey --check``). The parameters are ``propagate``'s.

    Returns
    -------
    int
        The number of impossible draws (dropped by the run).

    Raises
    ------
    InputError
        As ``propagate`` raises it: more than ``max_unphysical`` of the draws impossible.
    """
    shared, policy = driver_settings(draws, seed, max_unphysical)
    return _draw_and_screen(inputs, names, shared, physical, policy, drawn, labels)[-1]


_Screened = tuple[Mapping[str, str], dict[str, Any], dict[str, Any], dict[str, Any], np.ndarray, int]


def _draw_and_screen(inputs, names, shared, physical, policy, drawn, labels) -> _Screened:
    """``propagate``'s first half: names, arguments (drawn and exact), which draws are possible, and the refusal
    above the limit. Returns ``(names, args, sampled, given, keep, dropped)``."""
    if isinstance(names, str) or names is None:
        names = input_names(inputs, names)
    else:
        missing = [k for k, v in inputs.items() if isinstance(v, Uncertain) and k not in names]
        if missing:  # two consumers must never share a stream by accident of a bare keyword
            raise InputError("input names", ", ".join(missing), "a name for every uncertain input")
    n = shared.n_draws
    args: dict[str, Any] = {}
    sampled: dict[str, Any] = {}
    for k, v in inputs.items():
        if isinstance(v, Uncertain):
            sampled[k] = args[k] = shared.draw(names.get(k, k), v)
        else:
            _require_finite(v, names.get(k, k), (labels or {}).get(k))
            args[k] = v
    given = dict(drawn or {})
    args.update(given)
    keep = np.ones(n, bool)
    if physical is not None:  # exact inputs too: an exact NaN makes every draw impossible
        keep = np.broadcast_to(np.asarray(physical(args), bool), (n,)).copy()
    if not keep.all():
        culprit, value = _culprit(physical, inputs, sampled, given, args, names, n, labels or {}, keep)
        dropped = policy.enforce(keep, culprit, value)
    else:
        dropped = 0
    return names, args, sampled, given, keep, dropped


def _require_finite(v, name, label=None):
    """Refuse a non-finite number among the exact inputs (a NaN would make every draw impossible)."""
    m = v.magnitude if isinstance(v, pint.Quantity) else v
    if isinstance(m, (int, float, np.ndarray, np.number)) and not np.all(np.isfinite(m)):
        raise InputError(name, label or str(v), "a finite value")


def _subset(v, keep, n):
    m = v.magnitude if isinstance(v, pint.Quantity) else v
    if np.ndim(m) == 0 or np.shape(m)[-1] != n:
        return v
    return v[..., keep]


def _culprit(physical, inputs, sampled, given, args, names, n, labels, keep):
    """The input whose own draws are impossible most often (the others held at their nominal values).

    ``InputError`` naming the exact inputs when every draw is impossible, and so are the drawn inputs' central
    values: then no drawn input is to blame.
    """
    pool = {**sampled, **given}
    if physical is None or not pool:
        return "draws", f"{n} draws"
    base = {k: (nominal(v) if isinstance(v, Uncertain) else v) for k, v in inputs.items()}
    for k, v in given.items():
        m = np.asarray(v.magnitude if isinstance(v, pint.Quantity) else v, float)
        mid = np.nanmedian(m, axis=-1, keepdims=True)
        base[k] = Q_(mid, v.units) if isinstance(v, pint.Quantity) else mid
    try:
        nominal_ok = np.asarray(physical(base), bool)
    except Exception:  # noqa: BLE001 - a test that cannot evaluate the central values: search the inputs below
        nominal_ok = np.ones(1, bool)
    exact = [k for k in inputs if k not in pool]
    if exact and not keep.any() and not nominal_ok.any():
        # Impossible with every drawn input at its central value: no drawn input is to blame, the exact ones are
        value = ", ".join(f"{names.get(k, k)} = {labels.get(k, inputs[k])}" for k in exact)
        raise InputError("exact inputs", value, "values with which the estimate is physically possible (every "
                                                "draw is impossible with the drawn inputs at their central values)")
    worst, lost = None, -1
    for k in pool:
        trial = {**base, k: args[k]}
        try:
            bad = int(np.count_nonzero(~np.broadcast_to(np.asarray(physical(trial), bool), (n,))))
        except Exception:  # noqa: BLE001 - a mixed trial the test cannot evaluate; rank it last
            bad = 0
        if bad > lost:
            worst, lost = k, bad
    value = inputs.get(worst)
    text = str(value) if value is not None else labels.get(worst, f"{n} given draws")
    return names.get(worst, worst), text


@dataclass(frozen=True)
class Summary:
    """Monte Carlo summary of one output."""

    mean: pint.Quantity
    median: pint.Quantity
    p05: pint.Quantity
    p95: pint.Quantity
    std: pint.Quantity
    draws: int
    seed: int | None

    def to(self, unit: str) -> Summary:
        return replace(self, **{k: getattr(self, k).to(unit) for k in ("mean", "median", "p05", "p95", "std")})

    def as_dict(self, name: str, unit: str) -> dict:
        """Flat dictionary with units in the keys (``heat_power_W_p05``, ``heat_power_W_sd``; a bare name for
        a dimensionless quantity), as ``ventflux.vocabulary.json_key`` writes them."""
        from .vocabulary import json_key

        s = self.to(unit)
        shown = "" if unit in ("dimensionless", "1", "") else unit
        return {json_key(name, shown, "sd" if k == "std" else k): float(getattr(s, k).magnitude)
                for k in ("mean", "median", "p05", "p95", "std")}


def summarize(values: pint.Quantity, seed: int | None = None) -> Summary:
    """Mean, median, 5th and 95th percentiles and standard deviation of draws."""
    units = values.units
    v = np.asarray(values.magnitude, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        raise InputError("inputs", "no draw with a finite result",
                         "finite inputs within the estimator's range (check for nan or inf)")
    p05, med, p95 = np.percentile(v, [5, 50, 95])
    sd = v.std(ddof=1) if v.size > 1 else np.nan  # one finite draw has no spread to estimate (and numpy warns)
    return Summary(Q_(v.mean(), units), Q_(med, units), Q_(p05, units), Q_(p95, units), Q_(sd, units),
                   int(v.size), seed)


def unit_tag(unit: str) -> str:
    """``'m^3/s'`` → ``'m3_s'``: a unit written for a JSON key (``ventflux.vocabulary.unit_tag``)."""
    from .vocabulary import unit_tag as tag

    return tag(unit)
