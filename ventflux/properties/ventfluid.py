"""Hot vent fluid: pure water from IAPWS-95 (explicit evaluation, tabulated; CoolProp for checks).

Vent fluids are seawater-derived brines or vapours, but no equation of state
for H2O-NaCl of IAPWS-95's accuracy is in a standard library; ventflux treats
the fluid as pure water. For a fluid near seawater salinity the enthalpy
difference between exit and ambient temperature, which is what the heat
budget uses, differs from pure water's by a few percent (mostly through the
lower heat capacity of saline water); densities differ by a few percent too.
A brine model can be added as a plugin through the ``ventflux_fluid_models``
hook (see DEVELOPERS.md).

Speed: ``IAPWS95Water`` evaluates bicubic Hermite patches on a table of
IAPWS-95 values (node values and fourth-order node derivatives, no fitting
at evaluation) built once per machine and cached on disk, and solves
directly the narrow bands where a patch cannot follow the fluid (next to the
saturation curve, around the critical point and up the steep start of the
pseudo-critical line). When every point shares one pressure (a site's
pressure: an orifice's or a field's Monte Carlo draws) the patches are first
interpolated to that pressure once per temperature node, leaving one cubic in
T per cell: one row gather and a Horner step a point, equal to the full
bicubic evaluation to rounding. The table and the direct solves use the explicit,
vectorized Helmholtz-energy evaluation in ``ventflux.properties.iapws95``
(the table builds in about two seconds on a busy 2-core machine, with a
message); the saturation check uses the IAPWS auxiliary saturation equation.
So a check or a tabulated point never imports CoolProp; it serves the
``iapws95-water-direct`` model, the rare point the explicit solver cannot
settle, and the tests. ``tests/benchmarks/bench_properties.py`` measures
speed and error against CoolProp's own tables.

References
----------
.. [1] IAPWS R6-95(2018), Revised Release on the IAPWS Formulation 1995 for
   the Thermodynamic Properties of Ordinary Water Substance for General and
   Scientific Use.
.. [2] Bell, I. H., Wronski, J., Quoilin, S., Lemort, V. (2014). Pure and
   pseudo-pure fluid thermophysical property evaluation and the open-source
   thermophysical property library CoolProp. Ind. Eng. Chem. Res. 53, 2498.
"""

from __future__ import annotations

import functools
import hashlib
from typing import Protocol

import numpy as np

from ..errors import InputError
from . import iapws95

DEFAULT_MODEL = "iapws95-water"

# IAPWS-95 critical constants [1], section 2.
T_CRIT = 647.096  # K
P_CRIT = 22.064e6  # Pa
# Range of validity stated in [1], section 5: 273.16 K (triple point) to
# 1273 K at pressures up to 1000 MPa (the release extrapolates beyond; we do not).
T_MIN, T_MAX = 273.16, 1273.0
P_MIN, P_MAX = 611.657, 1000e6  # Pa; the lower bound is the triple-point pressure


class FluidModel(Protocol):
    """What every vent-fluid equation of state provides (SI floats or arrays).

    ``check(T, p, field)`` raises ``InputError`` for any point outside the
    model's validity or not in a single liquid-like phase;
    ``enthalpy_density(T, p)`` returns specific enthalpy [J/kg] and density
    [kg/m³]; ``saturation_temperature(p)`` [K] is NaN above the critical
    pressure.
    """

    name: str

    def check(self, T, p, field: str = "temperature") -> None: ...

    def valid(self, T, p) -> np.ndarray: ...

    def enthalpy_density(self, T, p) -> tuple[np.ndarray, np.ndarray]: ...

    def saturation_temperature(self, p) -> np.ndarray: ...


def _coolprop():
    import CoolProp.CoolProp as CP

    return CP


def _direct(T, p):
    """Direct IAPWS-95 enthalpy and density (CoolProp's vectorized PropsSI)."""
    CP = _coolprop()
    T = np.atleast_1d(np.asarray(T, float))
    p = np.atleast_1d(np.asarray(p, float))
    T, p = np.broadcast_arrays(T, p)
    if T.size == 0:
        return np.empty(T.shape), np.empty(T.shape)
    h = CP.PropsSI("Hmass", "T", T.ravel(), "P", p.ravel(), "Water").reshape(T.shape)
    d = CP.PropsSI("Dmass", "T", T.ravel(), "P", p.ravel(), "Water").reshape(T.shape)
    return h, d


# ---- the cached table ------------------------------------------------------
# Table domain and node spacing. Nodes are dense where the fluid changes fast:
# the compressed-liquid-to-supercritical transition at 600-720 K and the
# pressures 18-45 MPa where the pseudo-critical line lies.
_T_NODES = np.unique(np.concatenate([
    np.arange(273.16, 600.0, 1.0),
    np.arange(600.0, 720.0, 0.2),
    np.arange(720.0, 900.0 + 1e-9, 1.0),
]))
_P_NODES = np.unique(np.concatenate([
    np.arange(1e6, 18e6, 0.5e6),
    np.arange(18e6, P_CRIT, 0.25e6),
    [P_CRIT],
    np.arange(22.25e6, 45e6, 0.25e6),
    np.arange(45e6, 100e6 + 1, 1e6),
]))
_TABLE_VERSION = "7"
# Bands solved directly instead of interpolated (K, Pa): within _SAT_BAND of
# the saturation temperature below the critical pressure, and in a box around
# the critical point. Chosen from the benchmark's error map.
_SAT_BAND = 4.0
_CRIT_BOX_T = (12.0, 30.0)  # below, above the critical temperature
_CRIT_BOX_P = (2.5e6, 8.0e6)  # below, above the critical pressure


def _table_key():
    """Hash of everything the table's values depend on: its version, the formulation's code and the grid."""
    tag = f"{_TABLE_VERSION}|{iapws95.FORMULATION}|{_T_NODES.size}|{_P_NODES.size}"
    tag += "|" + hashlib.sha256(_T_NODES.tobytes() + _P_NODES.tobytes()).hexdigest()
    return hashlib.sha256(tag.encode()).hexdigest()[:16]


def _build_table(progress=None):
    """IAPWS-95 values on the grid; vapour nodes continued from the liquid side.

    Below the critical pressure the nodes above the saturation temperature lie
    in the vapour; a spline through the liquid-vapour jump would ring into the
    liquid. Those nodes are filled with a linear continuation from saturated
    liquid (value and temperature slope), which keeps the spline smooth on the
    liquid side. Points near saturation are never read from the table anyway.
    """
    TT, PP = np.meshgrid(_T_NODES, _P_NODES, indexing="ij")
    tsat = iapws95.saturation_temperature(_P_NODES)
    vapour = np.isfinite(tsat)[None, :] & (TT >= tsat[None, :] - 0.5)
    h = np.empty(TT.shape)
    d = np.empty(TT.shape)
    liq = ~vapour
    # the continuation's two liquid states per subcritical isobar are solved with the nodes
    cols = np.flatnonzero(np.isfinite(tsat) & vapour.any(axis=0))
    ts = tsat[cols] - 0.5
    T_all = np.concatenate([TT[liq], ts, ts - 0.5])
    p_all = np.concatenate([PP[liq], _P_NODES[cols], _P_NODES[cols]])
    if progress is not None:
        progress(f"building the IAPWS-95 property table ({T_all.size:,} states, once per machine) ...")
    # Starting densities: solve every 8th temperature of the grid from scratch, interpolate between
    # them along each isobar; the full grid then needs two or three Newton steps a node.
    coarse = np.zeros(TT.shape, bool)
    coarse[::8] = True
    coarse[-1] = True
    coarse &= liq
    rho_c = np.full(TT.shape, np.nan)
    rho_c[coarse] = iapws95.density(TT[coarse], PP[coarse])
    guess = np.full(TT.shape, np.nan)
    for j in range(TT.shape[1]):
        ok = np.isfinite(rho_c[:, j])
        if ok.sum() >= 2:
            guess[:, j] = np.interp(_T_NODES, _T_NODES[ok], rho_c[ok, j])
    g_cols = guess[np.clip(np.searchsorted(_T_NODES, ts), 0, _T_NODES.size - 1), cols]
    h_all, d_all = iapws95.enthalpy_density(T_all, p_all, guess=np.concatenate([guess[liq], g_cols, g_cols]))
    if not (np.isfinite(h_all).all() and np.isfinite(d_all).all()):
        raise RuntimeError("IAPWS-95 table build: the density iteration failed at some nodes")
    n = int(liq.sum())
    h[liq], d[liq] = h_all[:n], d_all[:n]
    h0, hm = h_all[n:n + cols.size], h_all[n + cols.size:]
    d0, dm = d_all[n:n + cols.size], d_all[n + cols.size:]
    for k, j in enumerate(cols.tolist()):
        col = vapour[:, j]
        dT = TT[col, j] - ts[k]
        h[col, j] = h0[k] + (h0[k] - hm[k]) / 0.5 * dT
        d[col, j] = d0[k] + (d0[k] - dm[k]) / 0.5 * dT
    return h, d


def _say(message):
    import sys

    print(f"ventflux: {message}", file=sys.stderr, flush=True)


def _derivative(x, f, axis):
    """∂f/∂x at the nodes ``x`` along ``axis`` of ``f``: five-point Lagrange stencils, one-sided at the ends.

    Exact for quartics, so its error is O(h⁴) on smooth data, which keeps the
    cubic Hermite patches fourth-order accurate; uneven spacing is handled by
    the stencil weights.
    """
    n = x.size
    start = np.clip(np.arange(n) - 2, 0, n - 5)
    idx = start[:, None] + np.arange(5)[None, :]  # (n, 5) stencil nodes
    xs = x[idx]
    xi = x[:, None]
    w = np.empty((n, 5))
    for k in range(5):
        others = [m for m in range(5) if m != k]
        # L_k'(x_i) = Σ_{m≠k} Π_{l≠k,m} (x_i - x_l) / Π_{l≠k} (x_k - x_l)
        denom = np.prod([xs[:, k] - xs[:, m] for m in others], axis=0)
        num = np.zeros(n)
        for m in others:
            num += np.prod([xi[:, 0] - xs[:, q] for q in others if q != m], axis=0)
        w[:, k] = num / denom
    f = np.moveaxis(f, axis, 0)
    out = np.einsum("nk,nk...->n...", w, f[idx])
    return np.moveaxis(out, 0, axis)


def _patch_nodes(h, d):
    """Values and derivatives at the nodes of both halves of the grid, for bicubic Hermite patches.

    Returns ``(below, above)`` (pressures up to and from the critical
    pressure), each an array (8, nT, nP_half): h, ∂h/∂T, ∂h/∂p, ∂²h/∂T∂p,
    then the same for density (each quantity contiguous, used without a
    copy). Each half's derivatives use its own nodes only, so nothing
    crosses the critical isobar.
    """
    out = []
    for sel in (_P_NODES <= P_CRIT, _P_NODES >= P_CRIT):
        y = _P_NODES[sel]
        c = np.empty((8, _T_NODES.size, y.size))
        for k, f in enumerate((h[:, sel], d[:, sel])):
            fT = _derivative(_T_NODES, f, 0)
            c[4 * k] = f
            c[4 * k + 1] = fT
            c[4 * k + 2] = _derivative(y, f, 1)
            c[4 * k + 3] = _derivative(y, fT, 1)
        out.append(c)
    return tuple(out)


def _load_table():
    """(below, above) node arrays of ``_patch_nodes``, from the cache or built and cached."""
    from ..cachedir import cached_arrays

    def build():
        below, above = _patch_nodes(*_build_table(progress=_say))
        return {"below": below, "above": above}

    z = cached_arrays(f"iapws95-water-{_table_key()}.npz", build, _say)
    return z["below"], z["above"]


class _Patches:
    """Bicubic Hermite patches on a rectangular grid: ``(h, ρ)`` at points inside it.

    Each cell's polynomial follows from the values and derivatives stored at
    its four corners (16 numbers per property), gathered per point; nothing
    is fitted at evaluation time and no scipy import is needed.
    """

    def __init__(self, x, y, nodes):
        self.x, self.y = x, y
        self.ny = y.size
        # one contiguous array per stored quantity: 1-D gathers are the fastest numpy has
        self.cols = [np.ascontiguousarray(nodes[k]).ravel() for k in range(nodes.shape[0])]
        self._rows: dict[float, np.ndarray] = {}
        self._lut: tuple | None = None

    def row(self, Y):
        """The patches at one pressure ``Y`` as cubics in T: an array (nT − 1, 8), one row per cell.

        Row ``i`` holds the coefficients ``a0..a3`` of ``h = a0 + t (a1 + t (a2 + t a3))``
        with ``t = (T − T_i) / (T_{i+1} − T_i)``, then the same for density.
        They are the bicubic patch's values at ``Y`` (the pressure
        interpolation done once per node instead of once per point), so a
        point needs one row gather and a Horner step; the result equals
        ``__call__`` at ``Y`` to rounding (tested to 1e-13 relative).
        """
        key = float(Y)
        cached = self._rows.get(key)
        if cached is not None:
            return cached
        x, y = self.x, self.y
        j = int(np.clip(np.searchsorted(y, key, side="right") - 1, 0, y.size - 2))
        yj = y[j]
        hy = y[j + 1] - yj
        u = (key - yj) / hy
        u2 = u * u
        vu1 = u2 * (3.0 - 2.0 * u)
        vu0 = 1.0 - vu1
        su0 = (u2 * u - 2.0 * u2 + u) * hy
        su1 = (u2 * u - u2) * hy
        r = np.arange(x.size) * self.ny + j
        r1 = r + 1
        hx = np.diff(x)
        out = np.empty((x.size - 1, 8))
        for k in (0, 4):
            f, fT, fp, fTp = self.cols[k:k + 4]
            g = vu0 * f.take(r) + vu1 * f.take(r1) + su0 * fp.take(r) + su1 * fp.take(r1)
            gT = vu0 * fT.take(r) + vu1 * fT.take(r1) + su0 * fTp.take(r) + su1 * fTp.take(r1)
            g0, g1 = g[:-1], g[1:]
            s0, s1 = gT[:-1] * hx, gT[1:] * hx  # slopes per unit t
            out[:, k] = g0
            out[:, k + 1] = s0
            out[:, k + 2] = 3.0 * (g1 - g0) - 2.0 * s0 - s1
            out[:, k + 3] = 2.0 * (g0 - g1) + s0 + s1
        if len(self._rows) > 64:  # a few site pressures per run; bound the memory anyway
            self._rows.clear()
        self._rows[key] = out
        return out

    def _cell(self, X):
        """Cell index of each temperature, as ``clip(searchsorted(x, X, 'right') - 1, 0, n - 2)``.

        From a bucket table (bucket width a quarter of the smallest node
        spacing, so a bucket holds at most one node) and one correction step
        either way: exact, and a few times faster than a binary search.
        """
        x = self.x
        if self._lut is None:
            w = float(np.min(np.diff(x))) / 4.0
            nb = int(np.ceil((x[-1] - x[0]) / w)) + 2
            starts = x[0] + w * np.arange(nb)
            lut = np.clip(np.searchsorted(x, starts, side="right") - 1, 0, x.size - 2)
            self._lut = (x[0], 1.0 / w, lut.astype(np.intp))
        x0, inv_w, lut = self._lut
        k = np.clip((X - x0) * inv_w, 0, lut.size - 1).astype(np.intp)
        i = lut.take(k)
        i += X >= x.take(i + 1)
        i -= X < x.take(i)
        np.clip(i, 0, x.size - 2, out=i)
        return i

    def along_row(self, X, Y):
        """``(h, ρ)`` at temperatures ``X`` and one pressure ``Y``: the cubic in T of ``row(Y)``."""
        x = self.x
        i = self._cell(X)
        xi = x.take(i)
        t = (X - xi) / (x.take(i + 1) - xi)
        c = self.row(Y).take(i, axis=0)
        h = c[:, 3] * t
        h += c[:, 2]
        h *= t
        h += c[:, 1]
        h *= t
        h += c[:, 0]
        d = c[:, 7] * t
        d += c[:, 6]
        d *= t
        d += c[:, 5]
        d *= t
        d += c[:, 4]
        return h, d

    def __call__(self, X, Y):
        x, y = self.x, self.y
        i = np.clip(np.searchsorted(x, X, side="right") - 1, 0, x.size - 2)
        j = np.clip(np.searchsorted(y, Y, side="right") - 1, 0, y.size - 2)
        xi, yj = x[i], y[j]
        hx = x[i + 1] - xi
        hy = y[j + 1] - yj
        t = (X - xi) / hx
        u = (Y - yj) / hy
        # cubic Hermite basis in p (value at near/far node, slope at near/far node), then in T
        t2, u2 = t * t, u * u
        vu1 = u2 * (3.0 - 2.0 * u)
        vu0 = 1.0 - vu1
        su0 = (u2 * u - 2.0 * u2 + u) * hy
        su1 = (u2 * u - u2) * hy
        vt1 = t2 * (3.0 - 2.0 * t)
        vt0 = 1.0 - vt1
        st0 = (t2 * t - 2.0 * t2 + t) * hx
        st1 = (t2 * t - t2) * hx
        near_row = i * self.ny + j
        out = []
        for k in (0, 4):  # enthalpy, density
            f, fT, fp, fTp = self.cols[k:k + 4]
            acc = 0.0
            for r, vt, st in ((near_row, vt0, st0), (near_row + self.ny, vt1, st1)):
                r1 = r + 1
                # value and T-slope along the row at this pressure, then across the rows
                g = vu0 * f.take(r) + vu1 * f.take(r1) + su0 * fp.take(r) + su1 * fp.take(r1)
                gT = vu0 * fT.take(r) + vu1 * fT.take(r1) + su0 * fTp.take(r) + su1 * fTp.take(r1)
                acc = acc + vt * g + st * gT
            out.append(acc)
        return out[0], out[1]


class IAPWS95Water:
    """Pure water from IAPWS-95 [1], tabulated for speed (direct mode: CoolProp [2]).

    Parameters
    ----------
    tabulated : bool, default True
        Interpolate a cached table (worst relative error 1e-4 within 10 K of
        the saturation and pseudo-critical lines, 5e-6 elsewhere over
        2-450 degC x 5-60 MPa; see the benchmark and the tests) or solve every
        point directly with CoolProp.
    allow_vapour : bool, default False
        Below the critical pressure a fluid above its saturation temperature
        has boiled; by default this is an error naming the saturation
        temperature. With ``True`` such points are returned as single-phase
        vapour (the fluid exits as steam, not a two-phase mixture).
    """

    name = DEFAULT_MODEL

    def __init__(self, tabulated: bool = True, allow_vapour: bool = False):
        self.tabulated = tabulated
        self.allow_vapour = allow_vapour
        self._splines = None

    # -- phase and validity ---------------------------------------------------
    def saturation_temperature(self, p):
        """Saturation temperature [K] at pressure ``p`` [Pa]; NaN at or above the critical pressure.

        From the auxiliary saturation equation of IAPWS SR1-86(1992), within a
        few millikelvin of IAPWS-95's own phase equilibrium.
        """
        p = np.asarray(p, float)
        out = np.full(p.shape, np.nan)
        sub = (p < P_CRIT) & (p >= P_MIN)
        out[sub] = iapws95.saturation_temperature(p[sub])
        return out

    def valid(self, T, p):
        """Boolean mask of points inside the model's validity and in one liquid-like phase."""
        T, p = np.broadcast_arrays(np.asarray(T, float), np.asarray(p, float))
        ok = (p >= P_MIN) & (p <= P_MAX) & (T >= T_MIN) & (T <= T_MAX)
        if not self.allow_vapour:
            tsat = self.saturation_temperature(p)
            ok &= ~(np.isfinite(tsat) & (T >= tsat))
        return ok

    def check(self, T, p, field: str = "temperature") -> None:
        """Raise ``InputError`` for points outside IAPWS-95's validity or two-phase."""
        T = np.asarray(T, float)
        p = np.asarray(p, float)
        T, p = np.broadcast_arrays(T, p)
        bad_p = ~((p >= P_MIN) & (p <= P_MAX))
        if bad_p.any():
            v = p[bad_p].flat[0]
            raise InputError("pressure", f"{v / 1e6:.6g} MPa",
                             f"a pressure within IAPWS-95's validity, {P_MIN / 1e6:g} to {P_MAX / 1e6:g} MPa")
        bad_t = ~((T >= T_MIN) & (T <= T_MAX))
        if bad_t.any():
            v = T[bad_t].flat[0]
            raise InputError(field, f"{v - 273.15:.6g} degC",
                             f"a temperature within IAPWS-95's validity, {T_MIN - 273.15:.2f} to "
                             f"{T_MAX - 273.15:.0f} degC (pure-water vent-fluid model)")
        if not self.allow_vapour:
            tsat = self.saturation_temperature(p)
            boiling = np.isfinite(tsat) & (T >= tsat)
            if boiling.any():
                i = np.flatnonzero(boiling.ravel())[0]
                raise InputError(
                    field, f"{T.ravel()[i] - 273.15:.6g} degC",
                    f"a temperature below the saturation temperature {tsat.ravel()[i] - 273.15:.2f} degC at "
                    f"{p.ravel()[i] / 1e6:.4g} MPa: at or above it the fluid boils (two-phase); "
                    "a boiling vent needs a phase-separation model, not this estimate")

    # -- properties -----------------------------------------------------------
    def enthalpy_density(self, T, p):
        """Specific enthalpy [J/kg] and density [kg/m³] at ``T`` [K], ``p`` [Pa].

        Points are not checked here (call ``check`` first); the caller's
        arrays are never modified.
        """
        T = np.asarray(T, float)
        p = np.asarray(p, float)
        # One pressure for every point (a site's pressure; the common case): the patches
        # reduce to one cubic in T per cell, evaluated from a row computed once (same floats).
        p_one = float(p.flat[0]) if p.size and (p.ndim == 0 or p.min() == p.max()) else None
        T, p = np.broadcast_arrays(T, p)
        shape = T.shape
        T = T.ravel()
        p = p.ravel()
        if not self.tabulated:
            h, d = _direct(T, p)
            return h.reshape(shape), d.reshape(shape)
        h = np.empty(T.shape)
        d = np.empty(T.shape)
        direct = self._needs_direct(T, p, p_one)
        if p_one is not None:
            patches = self._spline()[0 if p_one < P_CRIT else 1]
            if not direct.any():
                h, d = patches.along_row(T, p_one)
            elif not direct.all():
                table = ~direct
                h[table], d[table] = patches.along_row(T[table], p_one)
        elif not direct.all():
            table = ~direct
            # Two tables meet at the critical pressure, so the vapour-side fill
            # of the subcritical one never leaks into supercritical points.
            for patches, part in zip(self._spline(), (p < P_CRIT, p >= P_CRIT)):
                sel = table & part
                if sel.all():
                    h, d = patches(T, p)
                elif sel.any():
                    h[sel], d[sel] = patches(T[sel], p[sel])
        if direct.any():
            h[direct], d[direct] = self._solve(T[direct], p[direct])
        return h.reshape(shape), d.reshape(shape)

    def _solve(self, T, p):
        """Points the table cannot follow, solved from the explicit IAPWS-95 (CoolProp where that fails).

        The table's density, close even where it is not accurate enough, starts the iteration.
        """
        guess = np.full(T.shape, np.nan)
        inside = (T >= _T_NODES[0]) & (T <= _T_NODES[-1]) & (p >= _P_NODES[0]) & (p <= _P_NODES[-1])
        for patches, part in zip(self._spline(), (p < P_CRIT, p >= P_CRIT)):
            sel = inside & part
            if sel.any():
                guess[sel] = patches(T[sel], p[sel])[1]
        h, d = iapws95.enthalpy_density(T, p, guess=guess)
        bad = ~(np.isfinite(h) & np.isfinite(d))
        if self.allow_vapour:  # the explicit solver follows the liquid branch only below T_c
            ts = self.saturation_temperature(p)
            bad |= np.isfinite(ts) & (T >= ts)
        if bad.any():
            h[bad], d[bad] = _direct(T[bad], p[bad])
        return h, d

    def _needs_direct(self, T, p, p_one=None):
        if p_one is not None:  # one pressure: the same bands as below, as bounds on T alone
            if not _P_NODES[0] <= p_one <= _P_NODES[-1]:
                return np.ones(T.shape, bool)
            hi = _T_NODES[-1]
            lo_crit = hi_crit = None
            if P_CRIT - _CRIT_BOX_P[0] < p_one < P_CRIT + _CRIT_BOX_P[1]:
                lo_crit, hi_crit = T_CRIT - _CRIT_BOX_T[0], T_CRIT + _CRIT_BOX_T[1]
            out = (T < _T_NODES[0]) | (T > hi)
            if lo_crit is not None:
                out |= (T > lo_crit) & (T < hi_crit)
            if p_one < P_CRIT:
                out |= T > float(self.saturation_temperature(np.array([p_one]))[0]) - _SAT_BAND
            return out
        outside = (T < _T_NODES[0]) | (T > _T_NODES[-1]) | (p < _P_NODES[0]) | (p > _P_NODES[-1])
        near_crit = ((T > T_CRIT - _CRIT_BOX_T[0]) & (T < T_CRIT + _CRIT_BOX_T[1])
                     & (p > P_CRIT - _CRIT_BOX_P[0]) & (p < P_CRIT + _CRIT_BOX_P[1]))
        near_sat = np.zeros(T.shape, bool)
        sub = p < P_CRIT
        if sub.any():
            near_sat[sub] = T[sub] > self.saturation_temperature(p[sub]) - _SAT_BAND
        return outside | near_crit | near_sat

    def _spline(self):
        if self._splines is None:
            self._splines = _splines()
        return self._splines


@functools.lru_cache(maxsize=1)
def _splines():
    """The two halves' patches on the cached table, built once per process and shared by all instances."""
    below, above = _load_table()
    return (_Patches(_T_NODES, _P_NODES[_P_NODES <= P_CRIT], below),
            _Patches(_T_NODES, _P_NODES[_P_NODES >= P_CRIT], above))
