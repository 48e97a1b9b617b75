"""The package's single pint unit registry and quantity parsing.

Every module imports ``ureg`` and ``Q_`` from here so that quantities from
different parts of ventflux (and from plugins) can be combined. Offset units
(``degC``) are converted to kelvin automatically in multiplicative
expressions, so ``Q_(352, "degC").to("K")`` and arithmetic on temperature
differences behave as a scientist expects.
"""

from __future__ import annotations

import re

import numpy as np
import pint

from .errors import InputError


def _build_registry() -> pint.UnitRegistry:
    """The registry, from pint's on-disk cache of parsed definitions when it can be used.

    Parsing pint's definition file costs about a quarter of a second at every
    start; pint caches the parsed result keyed on the file's content, so a
    changed pint rebuilds it. An unwritable cache only costs that time.
    """
    from .cachedir import cache_dir

    try:
        folder = cache_dir() / "pint"
        folder.mkdir(parents=True, exist_ok=True)
        return pint.UnitRegistry(autoconvert_offset_to_baseunit=True, cache_folder=folder)
    except Exception:  # noqa: BLE001 - any cache problem: build from the definitions instead
        return pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


ureg = _build_registry()
ureg.formatter.default_format = "~P"
# Practical salinity is dimensionless (PSS-78); "psu" is the trade's label for it.
ureg.define("practical_salinity_unit = [] = psu = PSU")
Q_ = ureg.Quantity
pint.set_application_registry(ureg)

# Dimensions by name, for messages and validation.
DIMENSIONS = {
    "temperature": "[temperature]",
    "length": "[length]",
    "area": "[length] ** 2",
    "velocity": "[length] / [time]",
    "pressure": "[mass] / [length] / [time] ** 2",
    "frequency": "1 / [time]",
    "time": "[time]",
    "power": "[mass] * [length] ** 2 / [time] ** 3",
    "energy": "[mass] * [length] ** 2 / [time] ** 2",
    "mass flux": "[mass] / [time]",
    "density": "[mass] / [length] ** 3",
    "volume": "[length] ** 3",
    "dimensionless": "[]",
    "thermal conductivity": "[mass] * [length] / [time] ** 3 / [temperature]",
    "heat flux": "[mass] / [time] ** 3",
    "angle": "[]",
    "specific heat capacity": "[length] ** 2 / [time] ** 2 / [temperature]",
    "specific energy": "[length] ** 2 / [time] ** 2",
    "diffusivity": "[length] ** 2 / [time]",
    "energy per area": "[mass] / [time] ** 2",
    "energy per length": "[mass] * [length] / [time] ** 2",
    "volumetric heat capacity": "[mass] / [length] / [time] ** 2 / [temperature]",
    "volume flux": "[length] ** 3 / [time]",
    "momentum flux": "[length] ** 4 / [time] ** 2",
    "buoyancy flux": "[length] ** 4 / [time] ** 3",
    "acceleration": "[length] / [time] ** 2",
    "thermal expansion": "1 / [temperature]",
}

_EXAMPLES = {
    "temperature": "'352 degC' or '625 K'",
    "length": "'0.12 m' or '12 cm'",
    "area": "'0.011 m^2'",
    "velocity": "'1.4 m/s'",
    "pressure": "'26 MPa' or '2600 dbar'",
    "frequency": "'1.0e-3/s'",
    "time": "'30 s'",
    "power": "'100 MW'",
    "dimensionless": "'34.6'",
}

def expected(dimension: str, with_unit: bool = True) -> str:
    """What an input of ``dimension`` should look like, for error messages."""
    if dimension in ("dimensionless", "angle"):
        return "a number, e.g. '34.6'" if dimension == "dimensionless" else "an angle in degrees, e.g. '6 deg'"
    article = "an" if dimension[0] in "aeiou" else "a"
    example = _EXAMPLES.get(dimension)
    text = f"{article} {dimension}{' with a unit' if with_unit else ''}"
    return f"{text}, e.g. {example}" if example else text


_NUMBER_UNIT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


def parse_quantity(text, dimension: str, field: str, default_unit: str | None = None):
    """Parse a quantity string such as ``"352 degC"``, ``"25MPa"`` or ``"1.0e-3/s"``.

    Parameters
    ----------
    text : str or pint.Quantity or float
        The value as typed. A bare number takes ``default_unit`` if given.
    dimension : str
        A key of ``DIMENSIONS`` (e.g. ``"temperature"``).
    field : str
        Name of the input, used in error messages (e.g. ``"--diameter"``).
    default_unit : str, optional
        Unit for bare numbers; without it a bare number is an error unless the
        dimension is dimensionless.

    Returns
    -------
    pint.Quantity

    Raises
    ------
    InputError
        If the text does not parse, has the wrong dimension, is not finite or
        lies outside the plausibility limit of ``field`` (``ventflux.limits``).
    """
    if isinstance(text, pint.Quantity):
        q = text
    elif isinstance(text, (int, float, np.floating, np.integer)):
        q = _bare(float(text), dimension, field, default_unit, str(text))
    else:
        raw = str(text).strip()
        if not raw:
            raise InputError(field, text, expected(dimension, with_unit=False))
        m = _NUMBER_UNIT.match(raw)
        try:
            if m and m.group(2) == "":
                q = _bare(float(m.group(1)), dimension, field, default_unit, raw)
            elif m and not m.group(2).startswith(("*", "/")):
                # "352 degC", "25MPa": number then unit; parse the unit alone so
                # offset units are not multiplied (pint refuses that).
                q = Q_(float(m.group(1)), ureg.parse_units(m.group(2)))
            else:
                q = ureg.parse_expression(raw)  # "1.0e-3/s", "2*m"
                if not isinstance(q, pint.Quantity):
                    q = Q_(float(q), "dimensionless")
        except InputError:
            raise
        except Exception:
            if "±" in raw or "+/-" in raw or re.match(r"^(normal|uniform|lognormal|beta)\s*\(", raw):
                # a distribution where one exact value is needed: say that, not that the unit is missing
                raise InputError(field, text, f"one exact value (this input cannot be uncertain), "
                                              f"{expected(dimension)}") from None
            raise InputError(field, text, expected(dimension)) from None
    q = require_dimension(q, dimension, field)
    if not isinstance(text, pint.Quantity) or np.ndim(q.magnitude) == 0:
        # Non-finite values are refused at parse level, always; implausible
        # magnitudes against the one table of ``ventflux.limits``.
        from . import limits

        limits.check_finite(field, q.magnitude, text)
        if np.ndim(q.magnitude) == 0:
            limits.check(field, q, text, dimension)
    return q


def _bare(value, dimension, field, default_unit, shown):
    if default_unit is not None:
        return Q_(value, default_unit)
    if dimension == "dimensionless":
        return Q_(value, "dimensionless")
    raise InputError(field, shown, expected(dimension))


def require_dimension(q, dimension: str, field: str):
    """Return ``q`` if it has the named dimension, else raise ``InputError``."""
    want = DIMENSIONS[dimension]
    if not isinstance(q, pint.Quantity):
        if dimension == "dimensionless":
            return Q_(q, "dimensionless")
        raise InputError(field, q, f"a {dimension} given as a pint quantity, e.g. Q_(1.4, 'm/s')")
    if not q.check(want):
        raise InputError(field, f"{q:~P}", expected(dimension, with_unit=False))
    return q


def magnitude(q, unit: str, dimension: str | None = None, field: str = "value"):
    """Magnitude of ``q`` in ``unit`` as a float or ndarray (temperatures to K correctly)."""
    if dimension is not None:
        q = require_dimension(q, dimension, field)
    elif not isinstance(q, pint.Quantity):
        raise InputError(field, q, f"a quantity convertible to {unit}")
    return q.to(unit).magnitude


def column_name(name: str, unit: str) -> str:
    """Table column label with its unit, as used throughout: ``heat_power [MW]``."""
    return f"{name} [{unit}]"


def parse_column_name(label: str):
    """Split ``'temperature [degC]'`` into ``('temperature', 'degC')``; unit ``None`` if absent."""
    m = re.match(r"^\s*(.*?)\s*\[(.*)\]\s*$", label)
    if not m:
        return label.strip(), None
    return m.group(1), m.group(2).strip()


def check_units(**dimensions):
    """Decorator: refuse a public function's quantity arguments of the wrong dimension.

    One place for the check that every public function would otherwise write
    itself (the idea of MetPy's ``check_units``): each named argument, when
    given and not None, must be a pint quantity of the named dimension (a key
    of ``DIMENSIONS``), or an ``Uncertain`` whose unit has it; a
    ``"dimensionless"`` argument may also be a plain number. Anything else
    raises one ``InputError`` naming the argument, the value and the
    dimension expected. The call itself is passed through unchanged.

    Examples
    --------
    >>> @check_units(rise_height="length", buoyancy_frequency="frequency")
    ... def f(rise_height, buoyancy_frequency): ...
    """
    import functools
    import inspect

    for name, dim in dimensions.items():
        if dim not in DIMENSIONS:
            raise ValueError(f"check_units: unknown dimension {dim!r} for {name!r}")

    def decorate(func):
        signature = inspect.signature(func)
        missing = set(dimensions) - set(signature.parameters)
        if missing:
            raise TypeError(f"check_units: {func.__name__} has no argument {', '.join(sorted(missing))}")

        @functools.wraps(func)
        def wrapper(*args, **kwargs):
            bound = signature.bind(*args, **kwargs)
            for name, dim in dimensions.items():
                if name in bound.arguments:
                    _check_argument(bound.arguments[name], dim, name)
            return func(*args, **kwargs)

        # an attribute of our own on the wrapper, which the type functools.wraps returns does not declare
        setattr(wrapper, "__wrapped_dimensions__", dict(dimensions))  # noqa: B010 - see above
        return wrapper

    return decorate


def _check_argument(value, dimension: str, name: str) -> None:
    if value is None:
        return
    unit = getattr(value, "unit", None) if type(value).__name__ == "Uncertain" else None
    if unit is not None:  # an Uncertain input: its unit carries the dimension
        value = Q_(1.0, unit)
    if isinstance(value, pint.Quantity):
        if not value.check(DIMENSIONS[dimension]):
            raise InputError(name, f"{value:~P}" if np.ndim(value.magnitude) == 0 else f"an array in {value.units:~P}",
                             expected(dimension, with_unit=False))
        return
    if dimension in ("dimensionless", "angle") and isinstance(value, (int, float, np.integer, np.floating,
                                                                         np.ndarray, list, tuple)):
        return
    shown = value if np.ndim(value) == 0 else f"an array of {np.size(value)} numbers"
    raise InputError(name, shown, f"{expected(dimension, with_unit=False)} given as a pint quantity, "
                     "e.g. ventflux.Q_(1.4, 'm/s')")
