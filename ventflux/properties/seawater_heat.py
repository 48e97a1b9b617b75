"""Seawater heat content and density from the freezing point to boiling.

Diffuse fluid is mostly entrained seawater, warmed by anything from a few
kelvin to well over a hundred. One seawater model does not cover that range,
so this module joins three, each where it is valid, into one enthalpy
function of (temperature, absolute salinity, pressure) in TEOS-10's
reference state:

1. **TEOS-10** [1] (gsw's exact Gibbs-function routines ``*_t_exact``) from
   the freezing point to ``TEOS10_T_MAX`` = 40 °C, absolute salinity
   0–42 g/kg, sea pressure 0–10 000 dbar: the oceanographic standard range
   of the Gibbs function [1], [2]. Expected error: that of TEOS-10 itself
   (density about 4e-6 relative, heat capacity about 0.1 %; [1], from memory).
2. **IAPWS-95 water + IAPWS-08 saline part** from 40 °C to
   ``SALINE_T_MAX`` = 80 °C. IAPWS-08 [2] defines seawater as pure water plus
   a saline Gibbs function; TEOS-10 is the same saline part on the
   IAPWS-09 fit of pure water, which ends at 40 °C in the ocean's pressure
   range. Here the pure-water part is IAPWS-95 [3] itself (CoolProp) and the
   saline part is TEOS-10's, read from gsw as ``g(S_A, t, p) − g(0, t, p)``
   (the pure-water terms cancel exactly). The saline part's stated range
   reaches 80 °C (the extended range of [2], the limit the ``iapws``
   package enforces: 261–353 K, up to 100 MPa, up to 120 g/kg); its accuracy
   between 40 and 80 °C is lower than in the oceanographic range (heat
   capacity within about 0.5 %, from memory of [2]).
3. **IAPWS-95 water + a held salinity correction** above 80 °C, up to the
   boiling point of pure water at the in-situ pressure (seawater boils
   about 0.5 K higher; the pure-water limit is the conservative one). The
   saline part's contribution to the enthalpy is continued linearly from
   80 °C with its 80 °C slope (so the saline share of the heat capacity,
   about −4 % at 35 g/kg, is held), and its contribution to the specific
   volume is held at its 80 °C value. Expected error: no standard covers
   this range; the change of the saline heat-capacity deficit of sea salt
   solutions between 80 and 200 °C is of order 1 % of c_p (from memory),
   so heat content is expected within about 1 % and density within about
   0.5 %. Use a brine model (a fluid-model plugin) where that matters.

Joins: at each join the higher model's *differences* are added to the lower
model's value, ``H(T) = H(T_j) + [h_upper(T) − h_upper(T_j)]``, so the
enthalpy is continuous in value by construction and its slope (the heat
capacity) changes only by the difference between the two models at the join
(IAPWS-09 against IAPWS-95 at 40 °C, about 1e-5; nothing at 80 °C). Density
is continuous to the same order. ``tests/test_seawater_heat.py`` sweeps the
anomaly across both joins at several pressures and measures the jumps.

Every result names its model per point (``MODEL_NAMES``).

References
----------
.. [1] IOC, SCOR and IAPSO (2010). The international thermodynamic equation
   of seawater – 2010 (TEOS-10). IOC Manuals and Guides No. 56.
.. [2] IAPWS R13-08 (2008). Release on the IAPWS Formulation 2008 for the
   Thermodynamic Properties of Seawater.
.. [3] IAPWS R6-95(2018). Revised Release on the IAPWS Formulation 1995 for
   the Thermodynamic Properties of Ordinary Water Substance.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import gsw
import numpy as np

from ..errors import InputError

#: Upper temperature of TEOS-10's Gibbs function in the ocean's pressure range [1], degC.
TEOS10_T_MAX = 40.0
#: Upper temperature of IAPWS-08's saline part (its extended range [2]), degC.
SALINE_T_MAX = 80.0
#: Absolute salinity range of TEOS-10 [1], g/kg.
SA_MAX = 42.0
#: Sea-pressure range of TEOS-10 [1], dbar (100 MPa).
P_SEA_MAX = 10_000.0
_ATM = 101_325.0
_K = 273.15

#: Model codes (per point) and their names, as results report them.
TEOS10, IAPWS08, HELD_SALINE = 0, 1, 2
MODEL_NAMES = (
    "TEOS-10",
    "IAPWS-95 water + IAPWS-08 saline part",
    "IAPWS-95 water + saline part held from 80 degC",
)


@dataclass(frozen=True)
class SeawaterHeat:
    """Heat content of warmed seawater (plain SI arrays, broadcast shape)."""

    specific_heat_content: np.ndarray  # J/kg, H(T1) − H(T0)
    density: np.ndarray  # kg/m³ at T1
    model: np.ndarray  # model code per point (index into MODEL_NAMES), of the warm end

    def model_names(self) -> np.ndarray:
        return np.asarray(MODEL_NAMES, dtype=object)[self.model]


def freezing_temperature(SA, p_sea):
    """In-situ freezing temperature of air-saturated seawater [degC] (TEOS-10 ``t_freezing`` [1]).

    Ocean water is close to air-saturated; air lowers the freezing point by
    about 2.5 mK against air-free water.
    """
    return gsw.t_freezing(np.asarray(SA, float), np.asarray(p_sea, float), 1.0)


#: No seawater TEOS-10 covers freezes above this in-situ temperature (pure water at the surface freezes at
#: +0.0024 degC air-free; 0 g/kg is TEOS-10's lowest salinity) [1]; only colder points need t_freezing.
_NEVER_FROZEN = 0.01


def _below_freezing(SA, t, p):
    """Mask of points below their freezing point, and the freezing points (NaN where not needed).

    ``t_freezing`` is gsw's most expensive call here; it is evaluated only for
    points colder than ``_NEVER_FROZEN``.
    """
    tf = np.full(t.shape, np.nan)
    near = t < _NEVER_FROZEN
    if near.any():
        tf[near] = freezing_temperature(SA[near], np.clip(p[near], 0, None))
    return near & (t < tf), tf


def teos10_valid(SA, t, p_sea):
    """Mask of points inside TEOS-10's oceanographic standard range [1].

    Absolute salinity 0–42 g/kg, sea pressure 0–10 000 dbar, in-situ
    temperature from the freezing point to 40 °C.
    """
    SA, t, p = np.broadcast_arrays(np.asarray(SA, float), np.asarray(t, float), np.asarray(p_sea, float))
    ok = (SA >= 0) & (SA <= SA_MAX) & (p >= -1e-9) & (p <= P_SEA_MAX) & (t <= TEOS10_T_MAX)
    frozen, _ = _below_freezing(np.where(ok, SA, 0.0), t, np.where(ok, p, 0.0))
    return ok & ~frozen


def check_teos10(SA, t, p_sea, field="ambient temperature"):
    """Raise ``InputError`` (naming the quantity out of range) for any point outside TEOS-10 [1]."""
    SA, t, p = np.broadcast_arrays(np.asarray(SA, float), np.asarray(t, float), np.asarray(p_sea, float))
    bad = (SA < 0) | (SA > SA_MAX)
    if bad.any():
        raise InputError("ambient salinity", f"{SA[bad].flat[0]:.4g} g/kg absolute",
                         f"0 to {SA_MAX:g} g/kg (TEOS-10 validity)")
    bad = (p < -1e-9) | (p > P_SEA_MAX)
    if bad.any():
        raise InputError("pressure", f"{p[bad].flat[0]:.5g} dbar sea pressure",
                         f"0 to {P_SEA_MAX:g} dbar sea pressure (TEOS-10 validity)")
    hot = t > TEOS10_T_MAX
    if hot.any():
        raise InputError(field, f"{t[hot].flat[0]:.4g} degC",
                         f"seawater at most {TEOS10_T_MAX:g} degC (TEOS-10 validity); "
                         "hot vent fluid belongs to the vent-fluid model")
    cold, tf = _below_freezing(SA, t, p)
    if cold.any():
        i = np.flatnonzero(cold.ravel())[0]
        raise InputError(field, f"{t.ravel()[i]:.4g} degC",
                         f"liquid seawater, at or above its freezing point {tf.ravel()[i]:.3f} degC at "
                         f"{p.ravel()[i]:.0f} dbar (TEOS-10 t_freezing)")


@functools.lru_cache(maxsize=1)
def _water():
    from .ventfluid import IAPWS95Water

    return IAPWS95Water()


def _normal_salinity(SA):
    """``SA`` with subnormal values (below 2.2e-308 g/kg) set to 0.

    TEOS-10's Gibbs function takes ln(SA); gsw returns NaN for a subnormal
    SA, while any salinity that small is pure water at double precision.
    """
    SA = np.asarray(SA, float)
    return np.where((SA > 0) & (SA < np.finfo(float).tiny), 0.0, SA)


def _saline(SA, t, p_sea):
    """IAPWS-08 saline part at (SA g/kg, t degC, p dbar): enthalpy [J/kg], its T-slope [J/(kg K)], volume [m³/kg].

    TEOS-10's Gibbs function is pure water plus the saline part; at SA = 0
    the saline part vanishes, so the difference isolates it [1], [2].
    """
    T = t + _K
    g_t = gsw.gibbs(0, 1, 0, SA, t, p_sea) - gsw.gibbs(0, 1, 0, 0.0, t, p_sea)
    g = gsw.gibbs(0, 0, 0, SA, t, p_sea) - gsw.gibbs(0, 0, 0, 0.0, t, p_sea)
    g_tt = gsw.gibbs(0, 2, 0, SA, t, p_sea) - gsw.gibbs(0, 2, 0, 0.0, t, p_sea)
    g_p = gsw.gibbs(0, 0, 1, SA, t, p_sea) - gsw.gibbs(0, 0, 1, 0.0, t, p_sea)
    return g - T * g_t, -T * g_tt, g_p


def seawater_enthalpy_density(t, SA, p_sea, field="temperature", check=True):
    """Specific enthalpy [J/kg] (TEOS-10's reference state), density [kg/m³] and model code.

    Parameters
    ----------
    t : array_like
        In-situ temperature [degC], from the freezing point to below the
        boiling point of pure water at the pressure.
    SA : array_like
        Absolute salinity [g/kg], 0–42.
    p_sea : array_like
        Sea pressure [dbar], 0–10 000.
    field : str
        Name of the temperature in error messages.
    check : bool
        Check salinity, pressure and the freezing point (callers that have
        checked them already pass False; boiling is always checked).

    Returns
    -------
    h, rho, model : numpy.ndarray
        ``model`` indexes ``MODEL_NAMES``.

    Raises
    ------
    InputError
        Salinity or pressure out of range, seawater below its freezing point,
        or at or above the boiling point.
    """
    t, SA, p = np.broadcast_arrays(np.asarray(t, float), _normal_salinity(SA), np.asarray(p_sea, float))
    shape = t.shape
    t, SA, p = t.ravel(), SA.ravel(), p.ravel()
    if check:  # the cold side and the ranges of salinity and pressure are TEOS-10's at every point
        check_teos10(SA, np.minimum(t, TEOS10_T_MAX), p, field)
    h = np.empty(t.shape)
    rho = np.empty(t.shape)
    model = model_of(t)
    cold = t <= TEOS10_T_MAX
    if cold.all():  # the usual diffuse case: no masked copies
        h = gsw.enthalpy_t_exact(SA, t, p)
        rho = gsw.rho_t_exact(SA, t, p)
        return h.reshape(shape), rho.reshape(shape), model.reshape(shape)
    if cold.any():
        h[cold] = gsw.enthalpy_t_exact(SA[cold], t[cold], p[cold])
        rho[cold] = gsw.rho_t_exact(SA[cold], t[cold], p[cold])
    warm = ~cold
    if warm.any():
        h[warm], rho[warm] = _warm(t[warm], SA[warm], p[warm], field)
    return h.reshape(shape), rho.reshape(shape), model.reshape(shape)


def _warm(t, SA, p, field):
    """Points above 40 °C: TEOS-10 at 40 °C plus IAPWS-95 and saline-part differences."""
    water = _water()
    P = p * 1e4 + _ATM
    water.check(t + _K, P, field)  # IAPWS-95's range; refuses boiling with the saturation temperature
    tj = np.full(t.shape, TEOS10_T_MAX)
    ts = np.minimum(t, SALINE_T_MAX)
    h_join = gsw.enthalpy_t_exact(SA, tj, p)
    hw, dw = water.enthalpy_density(np.stack([t, tj]) + _K, np.stack([P, P]))
    hs_j, _, _ = _saline(SA, tj, p)
    hs, cs, vs = _saline(SA, ts, p)
    beyond = t > SALINE_T_MAX
    # above 80 °C the saline enthalpy continues with its 80 °C slope; its volume is held
    hs = hs + np.where(beyond, cs * (t - ts), 0.0)
    h = h_join + (hw[0] - hw[1]) + (hs - hs_j)
    rho = 1.0 / (1.0 / dw[0] + vs)
    return h, rho


def model_of(t):
    """Model code (index into ``MODEL_NAMES``) of seawater at in-situ temperature ``t`` [degC]."""
    t = np.asarray(t, float)
    return np.where(t <= TEOS10_T_MAX, TEOS10, np.where(t <= SALINE_T_MAX, IAPWS08, HELD_SALINE)).astype(np.int8)


def seawater_heat_content(t_warm, t_ambient, SA, p_sea, field="temperature"):
    """Heat carried per kilogram of seawater warmed from ``t_ambient`` to ``t_warm``, and its density.

    ``Δh = H(t_warm) − H(t_ambient)`` at one salinity and the in-situ
    pressure from the joined seawater model above; the ambient end must lie
    in TEOS-10's range.

    Parameters
    ----------
    t_warm, t_ambient : array_like
        In-situ temperatures [degC].
    SA : array_like
        Absolute salinity [g/kg].
    p_sea : array_like
        Sea pressure [dbar].

    Returns
    -------
    SeawaterHeat
    """
    t0, SA0, p0 = np.asarray(t_ambient, float), _normal_salinity(SA), np.asarray(p_sea, float)
    check_teos10(SA0, t0, p0, "ambient temperature")  # on the inputs as given (often scalars), before broadcasting
    t1 = np.asarray(t_warm, float)
    if np.any(t1 < t0):
        below = np.broadcast_to(t1, np.broadcast_shapes(t1.shape, t0.shape)) < t0
        i = np.flatnonzero(below.ravel())[0]
        shown = np.broadcast_to(t1, below.shape).ravel()[i]
        raise InputError(field, f"{shown:.4g} degC", "a temperature at or above the ambient temperature")
    t1, SA, p = np.broadcast_arrays(t1, SA0, p0)
    h1, rho, model = seawater_enthalpy_density(t1, SA, p, field, check=False)
    # The ambient end at its own shape: a shared ambient (one value, or one per draw) is evaluated once,
    # not once per patch; the difference broadcasts.
    h0 = gsw.enthalpy_t_exact(SA0, t0, p0)
    return SeawaterHeat(h1 - h0, rho, model)


def model_names(t):
    """Names (``MODEL_NAMES``) of the seawater model at in-situ temperature ``t`` [degC]."""
    return np.asarray(MODEL_NAMES, dtype=object)[model_of(t)]
