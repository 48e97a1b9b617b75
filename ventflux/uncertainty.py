"""Input uncertainty and vectorized Monte Carlo propagation.

Any input may be a plain quantity (exact) or an ``Uncertain`` value: a normal
distribution (``"1.4 ± 0.2 m/s"`` means mean ± one standard deviation), a
uniform one, or a lognormal one for strictly positive inputs whose error is a
factor rather than an offset. ``propagate`` draws every uncertain input once
(``n`` values each, as arrays), calls the estimator once on the arrays, and
summarizes the result; there is no loop over draws, so estimators must accept
arrays (all ventflux estimators do).

The random generator is NumPy's PCG64 (``numpy.random.default_rng``) seeded
with ``DEFAULT_SEED`` unless told otherwise; the seed is reported with every
result so a run can be repeated exactly.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import pint

from .errors import InputError
from .units import Q_, parse_quantity, require_dimension, ureg

DEFAULT_SEED = 20_261_202
DEFAULT_DRAWS = 10_000
KINDS = ("normal", "uniform", "lognormal")


@dataclass(frozen=True)
class Uncertain:
    """A distribution for one input, with parameters in ``unit``.

    ``normal``: ``a`` mean, ``b`` standard deviation (a temperature's standard
    deviation is a difference, so ``"352 ± 3 degC"`` is 3 K wide).
    ``uniform``: ``a`` lower and ``b`` upper bound.
    ``lognormal``: ``a`` median, ``b`` geometric standard deviation (a factor > 1).
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
        centre = {"normal": self.a, "uniform": 0.5 * (self.a + self.b), "lognormal": self.a}[self.kind]
        return Q_(centre, self.unit)

    def sample(self, n: int, rng: np.random.Generator) -> pint.Quantity:
        if self.kind == "normal":
            x = rng.normal(self.a, self.b, n)
        elif self.kind == "uniform":
            x = rng.uniform(self.a, self.b, n)
        else:
            x = np.exp(rng.normal(np.log(self.a), np.log(self.b), n))
        return Q_(x, self.unit)

    def __str__(self):
        u = f"{ureg.Unit(self.unit):~P}"
        if self.kind == "normal":
            return f"{self.a:g} ± {self.b:g} {u}"
        return f"{self.kind}({self.a:g}, {self.b:g}) {u}"


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
_FUNC = re.compile(rf"^\s*(normal|uniform|lognormal)\s*\(\s*({_NUM})\s*,\s*({_NUM})\s*\)\s*(.*?)\s*$", re.I)


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

    Inputs are drawn in sorted key order from one generator, so the draws for
    a given seed do not depend on the order the caller wrote them in.
    """
    rng = np.random.default_rng(DEFAULT_SEED if seed is None else seed)
    return {k: draw(inputs[k], n, rng) for k in sorted(inputs)}


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

    def to(self, unit: str) -> "Summary":
        return Summary(*(getattr(self, k).to(unit) for k in ("mean", "median", "p05", "p95", "std")),
                       self.draws, self.seed)

    def as_dict(self, name: str, unit: str) -> dict:
        """Flat dictionary with units in the keys (``heat_power_MW_p05``)."""
        s = self.to(unit)
        tag = unit_tag(unit)
        return {f"{name}_{tag}_{k}": float(getattr(s, k).magnitude) for k in ("mean", "median", "p05", "p95", "std")}


def summarize(values: pint.Quantity, seed: int | None = None) -> Summary:
    """Mean, median, 5th and 95th percentiles and standard deviation of draws."""
    units = values.units
    v = np.asarray(values.magnitude, dtype=float)
    v = v[np.isfinite(v)]
    p05, med, p95 = np.percentile(v, [5, 50, 95])
    return Summary(Q_(v.mean(), units), Q_(med, units), Q_(p05, units), Q_(p95, units),
                   Q_(v.std(ddof=1), units), int(v.size), seed)


def unit_tag(unit: str) -> str:
    """``'m^3/s'`` → ``'m3_s'``: a unit written for a JSON key."""
    return (unit.replace("**", "").replace("^", "").replace("/", "_").replace("*", "_").replace(" ", "")
            .replace("°", "deg"))
