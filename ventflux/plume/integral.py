"""Integral model of a turbulent plume in a measured stratification, with TEOS-10 densities.

Steady, axisymmetric, top-hat conservation equations [1]_ [2]_ for the fluxes
of volume Q = π b² w, vertical momentum M = π b² w², heat as conservative
temperature and salt as absolute salinity, with the entrainment assumption
dQ/dz = 2π α b w:

    dQ/dz = 2 α (π M)^(1/2)
    dM/dz = g' Q² / M,            g' = g (ρ_a − ρ_p) / ρ_0
    d(Q Θ_p)/dz = Θ_a(z) dQ/dz,   d(Q S_p)/dz = S_a(z) dQ/dz

The plume's density ρ_p is TEOS-10's [3]_ for the mixed SA and CT at the local
pressure, and the ambient's ρ_a likewise from the profile, so the non-linear
equation of state (thermobaricity, the growth of α_Θ with temperature) acts
on the plume; ρ_0 is the ambient density at the vent (Boussinesq). The model
integrates P = M² instead of M (dP/dz = 2 g' Q² stays finite where the
plume stops), and stops at the maximum rise height, where w → 0. The
spreading height is where the plume is first neutrally buoyant (g' = 0).

**Entrainment convention.** α is the top-hat coefficient. A Gaussian profile
with the same volume and momentum fluxes has b_gauss = b_tophat/√2 and the
same entrainment, so α_tophat = √2 α_gauss [1]_ [4]_; the default
``DEFAULT_ENTRAINMENT`` = √2 × 0.093 = 0.132 is the value of [1]_.

**Near-source hot region.** Vent fluid at hundreds of °C lies far outside
TEOS-10's validity. Its enthalpy and salt are conserved through the initial
dilution: the heat carried (an enthalpy difference in the vent-fluid model,
``ventflux.properties``) enters as a conservative-temperature flux
Q (Θ_p − Θ_0) = H/(ρ_0 c_p0), a salt anomaly as a salt flux, and while the
mixture's CT excess over the ambient exceeds ``START_ANOMALY`` (2 K) the
buoyancy is evaluated with TEOS-10's α_Θ and β at the vent (the linear
equation of state that defines the plume's far-field buoyancy flux
F = g α_Θ H/(ρ_0 c_p0)). Below it, within TEOS-10's validity, the full
TEOS-10 density takes over. A pure plume of given heat power starts from the
point-source similarity solution [1]_ close to the source.

**Cross-flow.** With a current U (constant or varying with height) the plume
bends over; along the path s, with horizontal and vertical momentum fluxes
Q u and Q w and V = (u² + w²)^(1/2), the model of [5]_ (see also [6]_):

    dQ/ds = 2π b (α |V − U cos φ| + β U |sin φ|)
    d(Q u)/ds = U dQ/ds,   d(Q w)/ds = π b² g',   dx/ds = cos φ,  dz/ds = sin φ

with φ the angle of the axis above the horizontal, β = ``CROSSFLOW_ENTRAINMENT``
(0.6, [5]_ [6]_) the coefficient of entrainment forced by the cross-flow and
α the shear entrainment. The maximum rise is where w → 0.

**Integration.** A fixed-step fourth-order Runge–Kutta scheme over a whole
ensemble at once (no per-member loop), steps growing geometrically from the
source (h = 0.1 s) up to 1/``STEPS`` of the expected path, with the crossing
of the stop variable placed by cubic Hermite interpolation. A bent-over plume
widens fast as it stops (most of all in a weak current), so there the steps
also shrink to ``TOP_FRACTION`` of the distance left to w = 0.

References
----------
.. [1] Morton, B. R., Taylor, G. I. and Turner, J. S. (1956). Turbulent
   gravitational convection from maintained and instantaneous sources.
   Proc. R. Soc. Lond. A 234, 1–23.
.. [2] Briggs, G. A. (1969). Plume Rise. USAEC Critical Review Series, TID-25075.
.. [3] IOC, SCOR and IAPSO (2010). The international thermodynamic equation of
   seawater – 2010. IOC Manuals and Guides No. 56.
.. [4] Turner, J. S. (1986). Turbulent entrainment: the development of the
   entrainment assumption, and its application to geophysical flows.
   J. Fluid Mech. 173, 431–471.
.. [5] Hoult, D. P., Fay, J. A. and Forney, L. J. (1969). A theory of plume rise
   compared with field observations. J. Air Pollut. Control Assoc. 19, 585–590.
.. [6] Briggs, G. A. (1975). Plume rise predictions. In: Lectures on Air
   Pollution and Environmental Impact Analyses, American Meteorological
   Society, 59–111.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import gsw
import numpy as np

from ..errors import InputError
from ..profiles import AmbientProfile
from ..properties.seawater import CP0
from . import closed_form

#: Top-hat entrainment coefficient, √2 × 0.093 (the Gaussian value of [1]_).
DEFAULT_ENTRAINMENT = 0.093 * np.sqrt(2.0)
#: Cross-flow (forced) entrainment coefficient β [5]_ [6]_ (value from memory).
CROSSFLOW_ENTRAINMENT = 0.6
# Numerical choices made here (no source); the tests show the rise does not depend on them
# (an adaptive reference integrator; the hand-over moved from 0.5 to 8 K).
#: CT excess [K] below which TEOS-10's full density replaces the linear near-source buoyancy.
START_ANOMALY = 2.0
#: Steps over the expected path once steps stop growing (accuracy ~1e-4 in rise height).
STEPS = 120
#: Geometric growth of steps near the source: h = STEP_GROWTH × distance from the source.
STEP_GROWTH = 0.1
#: Near the top of a bent-over plume a step is at most this fraction of the distance left to w = 0 ...
TOP_FRACTION = 0.3
#: ... and at least 1/TOP_REFINEMENT of the regular step.
TOP_REFINEMENT = 100.0
#: Currents below this [m/s] are raised to it (the bent-over equations need U > 0 at the top).
MIN_CURRENT = 1e-3
#: A vent may lie this far [m] (or one CTD bin, if wider) below a cast's deepest point (a choice).
VENT_BELOW_CAST = 10.0


@dataclass
class Column:
    """The ambient above a vent as plain SI arrays, ascending in height above the vent."""

    height: np.ndarray  # m above the vent, starting at 0
    SA: np.ndarray  # g/kg
    CT: np.ndarray  # degC
    p: np.ndarray  # sea pressure, dbar
    vent_depth: float
    latitude: float
    profile: AmbientProfile
    SA0: float = field(init=False)
    CT0: float = field(init=False)
    p0: float = field(init=False)
    rho0: float = field(init=False)
    alpha0: float = field(init=False)
    beta0: float = field(init=False)
    g: float = field(init=False)

    def __post_init__(self):
        self.SA0, self.CT0, self.p0 = float(self.SA[0]), float(self.CT[0]), float(self.p[0])
        self.rho0 = float(gsw.rho(self.SA0, self.CT0, self.p0))
        self.alpha0 = float(gsw.alpha(self.SA0, self.CT0, self.p0))
        self.beta0 = float(gsw.beta(self.SA0, self.CT0, self.p0))
        self.g = float(gsw.grav(self.latitude, self.p0))
        self._dh = np.diff(self.height)
        # SA, CT and p as one table and its steps, so that ``at`` interpolates all three in one gather
        self._table = np.vstack([self.SA, self.CT, self.p])
        self._steps = np.diff(self._table, axis=1)

    @property
    def top(self) -> float:
        """Height of the top of the column above the vent [m]."""
        return float(self.height[-1])

    def at(self, z, scale=1.0):
        """SA, CT, sea pressure at heights ``z``; ``scale`` multiplies the anomalies from the vent (N² ∝ scale)."""
        # minimum/maximum rather than np.clip: this runs four times a step on a handful of members, where
        # the call overhead is the cost
        i = np.minimum(np.maximum(np.searchsorted(self.height, z) - 1, 0), self._dh.size - 1)
        f = np.maximum((z - self.height[i]) / self._dh[i], 0.0)
        sa, ct, p = self._table[:, i] + f * self._steps[:, i]
        if not np.isscalar(scale) or scale != 1.0:
            sa = self.SA0 + scale * (sa - self.SA0)
            ct = self.CT0 + scale * (ct - self.CT0)
        return sa, ct, p

    def heat_to_buoyancy(self):
        """F/H [m⁴ s⁻³ W⁻¹] = g α_Θ / (ρ_0 c_p0) at the vent [3]_."""
        return closed_form._buoyancy_flux_from_heat_power(1.0, self.rho0, self.alpha0, self.g, CP0)

    def mean_n(self, height):
        """Mean N [1/s] over ``height`` above the vent (SI arrays)."""
        return self.profile.mean_buoyancy_frequency(self.vent_depth, np.minimum(height, self.top))


def column_above_vent(profile: AmbientProfile, vent_depth=None) -> Column:
    """The part of ``profile`` above ``vent_depth`` [m] (default: the deepest point of the profile).

    A vent up to one bin (or ``VENT_BELOW_CAST``) below the deepest point is
    accepted, the deepest values extended to it.
    """
    d = profile.depth.to("m").magnitude
    zv = float(d[-1]) if vent_depth is None else float(vent_depth)
    slack = VENT_BELOW_CAST if profile.window is None else max(VENT_BELOW_CAST,
                                                               float(profile.window.to("m").magnitude))
    if not d[0] < zv <= d[-1] + slack:
        raise InputError("vent depth", f"{zv:g} m",
                         f"a depth within the ambient profile, {d[0]:.0f} to {d[-1]:.0f} m")
    SA = profile.absolute_salinity.to("g/kg").magnitude
    CT = profile.conservative_temperature.to("degC").magnitude
    p = profile.sea_pressure.to("dbar").magnitude
    keep = d < zv
    h = np.concatenate([[0.0], (zv - d[keep])[::-1]])
    lat = 0.0 if profile.latitude is None else profile.latitude
    p_vent = np.interp(zv, d, p) if zv <= d[-1] else float(gsw.p_from_z(-zv, lat))

    def col(a, v0):
        return np.concatenate([[v0], a[keep][::-1]])

    return Column(height=h, SA=col(SA, np.interp(zv, d, SA)), CT=col(CT, np.interp(zv, d, CT)),
                  p=col(p, p_vent), vent_depth=zv, latitude=lat, profile=profile)


# --------------------------------------------------------------------------- sources


@dataclass
class Sources:
    """An ensemble of plume sources as SI arrays of one length (see ``pure_plume`` / ``forced_plume``)."""

    Q: np.ndarray  # volume flux at the start [m³/s]
    M: np.ndarray  # vertical momentum flux at the start [m⁴/s²]
    T: np.ndarray  # CT anomaly flux Q (Θ_p − Θ_0) [K m³/s]
    S: np.ndarray  # SA anomaly flux Q (S_p − S_0) [g/kg m³/s]
    z0: np.ndarray  # start height above the vent [m]
    s_ref: np.ndarray  # length that sets the first step [m]
    F: np.ndarray  # far-field buoyancy flux [m⁴/s³]
    Q_vent: np.ndarray  # vent-fluid volume flux at ambient density [m³/s]; NaN for a pure plume

    @property
    def size(self):
        return self.Q.size


def pure_plume(column: Column, heat_power, alpha, z_start):
    """Point source of heat power H [W], started on the similarity solution [1]_ at ``z_start`` [m]."""
    H, a, z = np.broadcast_arrays(*(np.atleast_1d(np.asarray(v, float)) for v in (heat_power, alpha, z_start)))
    F = column.heat_to_buoyancy() * H
    # Top-hat point-source similarity: Q = c_Q z^(5/3), M = c_M z^(4/3) (b = 6αz/5).
    cM = (0.9 * a * np.sqrt(np.pi) * F) ** (2.0 / 3.0)
    cQ = 1.2 * a * np.sqrt(np.pi) * np.sqrt(cM)
    return Sources(Q=cQ * z ** (5 / 3), M=cM * z ** (4 / 3), T=H / (column.rho0 * CP0), S=np.zeros_like(H),
                   z0=z.copy(), s_ref=np.zeros_like(H), F=F, Q_vent=np.full_like(H, np.nan))


def forced_plume(column: Column, volume_flux, momentum_flux, heat_power, salt_flux=0.0):
    """Source with volume flux Q0 [m³/s], momentum flux M0 [m⁴/s²], heat power H [W], SA-anomaly flux."""
    Q, M, H, S = np.broadcast_arrays(*(np.atleast_1d(np.asarray(v, float)) for v in (volume_flux, momentum_flux,
                                                                                       heat_power, salt_flux)))
    F = column.g * (column.alpha0 * H / (column.rho0 * CP0) - column.beta0 * S)
    s_ref = Q / np.sqrt(np.maximum(M, 1e-30))
    return Sources(Q=Q.copy(), M=M.copy(), T=H / (column.rho0 * CP0), S=S.copy(), z0=np.zeros_like(Q),
                   s_ref=np.where(M > 0, s_ref, np.sqrt(Q / np.pi)), F=F, Q_vent=Q.copy())


# --------------------------------------------------------------------------- models


class _Model:
    """Shared buoyancy: linear near the source, full TEOS-10 once the mixture is within validity."""

    def __init__(self, column, alpha, scale, linear=False):
        self.c = column
        self.alpha = alpha
        self.scale = scale
        self.linear = linear  # True: the vent's linear equation of state everywhere (for checks)

    def _take(self, v, idx):
        return v if np.isscalar(v) or np.ndim(v) == 0 else v[idx]

    def buoyancy(self, Q, T, S, z, idx):
        c = self.c
        sa, ct, p = c.at(z, self._take(self.scale, idx))
        Qs = np.maximum(Q, 1e-300)
        ctp = c.CT0 + T / Qs  # the plume's CT and SA, and their excess over the ambient's
        sap = c.SA0 + S / Qs
        dct = ctp - ct
        lin = c.g * (c.alpha0 * dct - c.beta0 * (sap - sa))
        hot = np.abs(dct) > START_ANOMALY
        if self.linear or hot.all():  # near the source every member is hot: TEOS-10 is not evaluated
            return lin, sa, ct
        teos = c.g * (gsw.rho(sa, ct, p) - gsw.rho(sap, ctp, p)) / c.rho0
        return np.where(hot, lin, teos), sa, ct


class VerticalModel(_Model):
    """No current: state (Q, P = M², T, S) against height z."""

    stop = 1  # P
    refine_top = False  # P crosses zero with a finite slope
    heat = 2  # index of the CT anomaly flux
    n_state = 4

    def initial(self, src):
        return np.vstack([src.Q, src.M ** 2, src.T, src.S]), src.z0.copy()

    def rhs(self, s, y, idx):
        Q, P, T, S = y
        M = np.sqrt(np.maximum(P, 0.0))
        dQ = 2.0 * self._take(self.alpha, idx) * np.sqrt(np.pi * M)
        gp, sa, ct = self.buoyancy(Q, T, S, s, idx)
        d = np.empty_like(y)
        d[0] = dQ
        np.multiply(2.0 * gp, Q * Q, out=d[1])
        np.multiply(ct - self.c.CT0, dQ, out=d[2])
        np.multiply(sa - self.c.SA0, dQ, out=d[3])
        return d, gp

    def height(self, s, y):
        return s

    def distance(self, s, y):
        return np.zeros_like(s)

    def radius_velocity(self, s, y):
        Q, P = y[0], y[1]
        M = np.sqrt(np.maximum(P, 0.0))
        with np.errstate(divide="ignore", invalid="ignore"):
            return Q / np.sqrt(np.pi * M), M / Q


class CrossflowModel(_Model):
    """Current U(z): state (Q, Q u, Q w, T, S, x, z) against path length s [5]_."""

    stop = 2  # Q w
    refine_top = True  # with a weak current the plume widens fast as it stops
    heat = 3
    n_state = 7

    def __init__(self, column, alpha, scale, current, current_shape=None, beta=CROSSFLOW_ENTRAINMENT, linear=False):
        super().__init__(column, alpha, scale, linear)
        self.current = current
        self.shape = current_shape  # (heights, factors) or None
        self.beta = beta

    def _U(self, z, idx):
        U = self._take(self.current, idx)
        if self.shape is not None:
            U = U * np.interp(z, *self.shape)
        return np.maximum(U, MIN_CURRENT)

    def initial(self, src):
        zero = np.zeros_like(src.Q)
        return np.vstack([src.Q, zero, src.M, src.T, src.S, zero, src.z0]), src.z0.copy()

    def rhs(self, s, y, idx):
        Q, Mx, Mz, T, S, x, z = y
        Qs = np.maximum(Q, 1e-300)
        u, w = Mx / Qs, Mz / Qs
        V = np.maximum(np.hypot(u, w), 1e-12)
        b = np.sqrt(Qs / (np.pi * V))
        U = self._U(z, idx)
        E = 2.0 * np.pi * b * (self._take(self.alpha, idx) * np.abs(V - U * u / V) + self.beta * U * np.abs(w) / V)
        gp, sa, ct = self.buoyancy(Q, T, S, z, idx)
        d = np.vstack([E, U * E, Q * gp / V, (ct - self.c.CT0) * E, (sa - self.c.SA0) * E, u / V, w / V])
        return d, gp

    def height(self, s, y):
        return y[6]

    def distance(self, s, y):
        return y[5]

    def radius_velocity(self, s, y):
        Q, Mx, Mz = y[0], y[1], y[2]
        with np.errstate(divide="ignore", invalid="ignore"):
            V = np.hypot(Mx, Mz) / Q
            return np.sqrt(Q / (np.pi * V)), V


# --------------------------------------------------------------------------- integrator


def _hermite(y0, y1, d0, d1, h, t):
    t2, t3 = t * t, t * t * t
    return ((2 * t3 - 3 * t2 + 1) * y0 + (t3 - 2 * t2 + t) * h * d0 + (-2 * t3 + 3 * t2) * y1
            + (t3 - t2) * h * d1)


def _hermite_root(y0, y1, d0, d1, h):
    """Fraction t ∈ [0, 1] of the step where the cubic Hermite interpolant crosses zero (y0 > 0 ≥ y1)."""
    t = np.clip(y0 / np.where(y0 - y1 > 0, y0 - y1, 1.0), 0.0, 1.0)
    for _ in range(6):
        f = _hermite(y0, y1, d0, d1, h, t)
        t2 = t * t
        df = (6 * t2 - 6 * t) * y0 + (3 * t2 - 4 * t + 1) * h * d0 + (-6 * t2 + 6 * t) * y1 + (3 * t2 - 2 * t) * h * d1
        t = np.clip(t - f / np.where(np.abs(df) > 0, df, 1.0), 0.0, 1.0)
    return t


@dataclass
class Ensemble:
    """Outcome for every member (SI arrays); ``track`` holds the path of each member when asked."""

    maximum_height: np.ndarray
    spreading_height: np.ndarray
    maximum_distance: np.ndarray
    spreading_distance: np.ndarray
    spreading_volume_flux: np.ndarray
    spreading_anomaly: np.ndarray  # CT excess of the plume at the spreading level [K]
    escaped: np.ndarray  # reached the top of the column first
    track: dict | None = None


def integrate(model, src: Sources, span, track=False, max_steps=None) -> Ensemble:
    """March every member of ``src`` up to its maximum rise (RK4, ensemble-vectorized).

    ``span`` [m] is each member's expected path length to the top (sets the
    step); members that have not stopped after ``max_steps`` are NaN.
    """
    n = src.size
    y, s = model.initial(src)
    span = np.broadcast_to(np.asarray(span, float), (n,))
    hmax = span / STEPS
    out = {k: np.full(n, np.nan) for k in ("zt", "zs", "xt", "xs", "Qs", "dTs")}
    escaped = np.zeros(n, bool)
    active = np.arange(n)
    d, gp = model.rhs(s, y, active)
    steps = max_steps or (6 * STEPS + 200)
    rec: list[tuple[np.ndarray, np.ndarray, np.ndarray]] | None = [] if track else None
    c = model.c
    for _ in range(steps):
        if active.size == 0:
            break
        if rec is not None:
            rec.append((s.copy(), y.copy(), gp.copy()))
        ya, sa, da, ga = y[:, active], s[active], d[:, active], gp[active]
        h = np.minimum(hmax[active], STEP_GROWTH * np.maximum(sa + src.s_ref[active], 1e-6 * span[active]))
        if model.refine_top:
            # approach the top in steps of a fraction of the distance the stop variable needs to reach zero
            with np.errstate(divide="ignore", invalid="ignore"):
                reach = np.where(da[model.stop] < 0, -ya[model.stop] / da[model.stop], np.inf)
            h = np.minimum(h, np.maximum(TOP_FRACTION * reach, hmax[active] / TOP_REFINEMENT))
        k1 = da
        k2, _ = model.rhs(sa + 0.5 * h, ya + 0.5 * h * k1, active)
        k3, _ = model.rhs(sa + 0.5 * h, ya + 0.5 * h * k2, active)
        k4, _ = model.rhs(sa + h, ya + h * k3, active)
        yn = ya + h / 6.0 * (k1 + 2 * k2 + 2 * k3 + k4)
        sn = sa + h
        dn, gn = model.rhs(sn, yn, active)
        # spreading level: first change of the buoyancy's sign from + to −
        cross = (ga > 0) & (gn <= 0) & np.isnan(out["zs"][active])
        if cross.any():
            t = ga[cross] / (ga[cross] - gn[cross])
            idx = active[cross]
            z0_, z1_ = model.height(sa, ya)[cross], model.height(sn, yn)[cross]
            out["zs"][idx] = z0_ + t * (z1_ - z0_)
            x0_, x1_ = model.distance(sa, ya)[cross], model.distance(sn, yn)[cross]
            out["xs"][idx] = x0_ + t * (x1_ - x0_)
            out["Qs"][idx] = ya[0, cross] + t * (yn[0, cross] - ya[0, cross])
            T_ = ya[model.heat, cross] * (1 - t) + t * yn[model.heat, cross]
            _, ct_, _ = c.at(out["zs"][idx], model._take(model.scale, idx))
            out["dTs"][idx] = c.CT0 + T_ / out["Qs"][idx] - ct_
        k = model.stop
        done = yn[k] <= 0.0
        if done.any():
            idx = active[done]
            t = _hermite_root(ya[k, done], yn[k, done], da[k, done], dn[k, done], h[done])
            if model.n_state == 4:
                out["zt"][idx] = sa[done] + t * h[done]
                out["xt"][idx] = 0.0
            else:
                out["zt"][idx] = _hermite(ya[6, done], yn[6, done], da[6, done], dn[6, done], h[done], t)
                out["xt"][idx] = _hermite(ya[5, done], yn[5, done], da[5, done], dn[5, done], h[done], t)
        high = ~done & (model.height(sn, yn) > c.top)
        escaped[active[high]] = True
        y[:, active], s[active], d[:, active], gp[active] = yn, sn, dn, gn
        active = active[~(done | high)]
    res = Ensemble(out["zt"], out["zs"], out["xt"], out["xs"], out["Qs"], out["dTs"], escaped)
    if rec is not None:
        res.track = _track(model, rec)
    return res


def _track(model, rec):
    s = np.array([r[0] for r in rec])
    y = np.array([r[1] for r in rec])  # steps × state × members
    gp = np.array([r[2] for r in rec])
    ys = np.moveaxis(y, 1, 0)
    b, v = model.radius_velocity(s, ys)
    return {"path": s, "height": model.height(s, ys), "distance": model.distance(s, ys), "radius": b,
            "velocity": v, "volume_flux": ys[0], "reduced_gravity": gp}


def expected_span(column: Column, F, current=None):
    """A first estimate of each member's path length to its top [m], from the closed forms.

    Only the step size depends on it: the start (200 m, N = 1e-3 /s where the
    mean N is undefined) and the margin 1.3 are choices, not physics.
    """
    F = np.asarray(F, float)
    z = np.full_like(F, 200.0)
    for _ in range(3):  # the mean N over the rise depends on the rise
        N = column.mean_n(np.maximum(z, 10.0))
        N = np.where(np.isfinite(N), N, 1e-3)
        z = closed_form._rise_height_point_source(F, N)
        if current is not None:
            U = np.maximum(np.asarray(current, float), MIN_CURRENT)
            z = np.minimum(z, closed_form._rise_height_bent_over(F, U, N))
    if current is None:
        return 1.3 * z, z
    U = np.maximum(np.asarray(current, float), MIN_CURRENT)
    return 1.3 * z + U * np.pi / N, z
