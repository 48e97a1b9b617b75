"""IAPWS-95 for water, evaluated explicitly and vectorized (no external solver).

The residual Helmholtz energy φʳ(δ, τ) and the ideal-gas part φ°(δ, τ) of
the release [1]_ (Tables 1 and 2, derivatives from Table 4 and 5) are
evaluated on numpy arrays; density at given (T, p) is found by a safeguarded
Newton iteration on p(ρ) = ρRT(1 + δφʳ_δ), vectorized over all points. For
a fixed temperature every term's τ-dependence is a constant, so the terms
are grouped by their δ-exponents once per temperature and each Newton step
costs about two dozen array operations.

This is what builds the property table and solves the points the table
cannot follow; CoolProp (which implements the same release [2]_) checks it
in the tests and still solves points in the box around the critical point.

Saturation pressure comes from the auxiliary equation of [3]_, which
reproduces IAPWS-95's phase-equilibrium pressure to within a few parts in
10⁵ (a few millikelvin in saturation temperature) below the critical point.

References
----------
.. [1] IAPWS R6-95(2018), Revised Release on the IAPWS Formulation 1995 for
   the Thermodynamic Properties of Ordinary Water Substance for General and
   Scientific Use. Coefficients: Tables 1 and 2; constants: section 2.
.. [2] Bell, I. H., Wronski, J., Quoilin, S., Lemort, V. (2014). Ind. Eng.
   Chem. Res. 53, 2498–2508 (CoolProp).
.. [3] IAPWS SR1-86(1992), Revised Supplementary Release on Saturation
   Properties of Ordinary Water Substance (Wagner and Pruss, 1993,
   J. Phys. Chem. Ref. Data 22, 783), eq. 1.
"""

from __future__ import annotations

import functools

import numpy as np

# Constants of the release [1], section 2 (and eq. 6.3 for R).
T_CRIT = 647.096  # K
RHO_CRIT = 322.0  # kg/m³
P_CRIT = 22.064e6  # Pa
R = 461.51805  # J/(kg K), specific gas constant of the release
#: Changes whenever this module's numbers could change (it keys cached tables).
FORMULATION = "iapws95-explicit-1"

# Ideal-gas part, [1] Table 1.
_N0 = np.array([-8.3204464837497, 6.6832105275932, 3.00632, 0.012436, 0.97315, 1.27950, 0.96956, 0.24873])
_G0 = np.array([1.28728967, 3.53734222, 7.74073708, 9.24437796, 27.5075105])

# Residual part, [1] Table 2: terms 1-7 (polynomial, c = 0) and 8-51 (exponential).
_N = np.array([
    0.012533547935523, 7.8957634722828, -8.7803203303561, 0.31802509345418,
    -0.26145533859358, -0.0078199751687981, 0.0088089493102134, -0.66856572307965,
    0.20433810950965, -6.6212605039687e-05, -0.19232721156002, -0.25709043003438,
    0.16074868486251, -0.040092828925807, 3.9343422603254e-07, -7.5941377088144e-06,
    0.00056250979351888, -1.5608652257135e-05, 1.1537996422951e-09, 3.6582165144204e-07,
    -1.3251180074668e-12, -6.2639586912454e-10, -0.10793600908932, 0.017611491008752,
    0.22132295167546, -0.40247669763528, 0.58083399985759, 0.0049969146990806,
    -0.031358700712549, -0.74315929710341, 0.4780732991548, 0.020527940895948,
    -0.13636435110343, 0.014180634400617, 0.0083326504880713, -0.029052336009585,
    0.038615085574206, -0.020393486513704, -0.0016554050063734, 0.0019955571979541,
    0.00015870308324157, -1.638856834253e-05, 0.043613615723811, 0.034994005463765,
    -0.076788197844621, 0.022446277332006, -6.2689710414685e-05, -5.5711118565645e-10,
    -0.19905718354408, 0.31777497330738, -0.11841182425981,
])

_D = np.array([
    1, 1, 1, 2, 2, 3, 4, 1, 1, 1, 2, 2, 3, 4, 4, 5,
    7, 9, 10, 11, 13, 15, 1, 2, 2, 2, 3, 4, 4, 4, 5, 6,
    6, 7, 9, 9, 9, 9, 9, 10, 10, 12, 3, 4, 4, 5, 14, 3,
    6, 6, 6,
])

_T = np.array([
    -0.5, 0.875, 1, 0.5, 0.75, 0.375, 1, 4, 6, 12, 1, 5, 4, 2, 13, 9,
    3, 4, 11, 4, 13, 1, 7, 1, 9, 10, 10, 3, 7, 10, 10, 6,
    10, 10, 1, 2, 3, 4, 8, 6, 9, 8, 16, 22, 23, 23, 10, 50,
    44, 46, 50,
])

_C = np.array([
    0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1, 1, 1, 1,
    1, 1, 1, 1, 1, 1, 2, 2, 2, 2, 2, 2, 2, 2, 2, 2,
    2, 2, 2, 2, 2, 2, 2, 2, 2, 2, 3, 3, 3, 3, 4, 6,
    6, 6, 6,
])

# Terms 52-54 (Gaussian bell-shaped).
_N3 = np.array([-31.306260323435, 31.546140237781, -2521.3154341695])
_D3 = np.array([3, 3, 3])
_T3 = np.array([0.0, 1.0, 4.0])
_ALPHA3 = np.array([20.0, 20.0, 20.0])
_BETA3 = np.array([150.0, 150.0, 250.0])
_GAMMA3 = np.array([1.21, 1.21, 1.25])
_EPS3 = np.array([1.0, 1.0, 1.0])
# Terms 55-56 (non-analytic, significant only near the critical point).
_N4 = np.array([-0.14874640856724, 0.31806110878444])
_A4 = np.array([3.5, 3.5])
_B4 = np.array([0.85, 0.95])
_BB4 = np.array([0.2, 0.2])
_CC4 = np.array([28.0, 32.0])
_DD4 = np.array([700.0, 800.0])
_AA4 = np.array([0.32, 0.32])
_BETA4 = np.array([0.3, 0.3])

# Auxiliary saturation-pressure equation, [3] eq. 1.
_A_SAT = np.array([-7.85951783, 1.84408259, -11.7866497, 22.6807411, -15.9618719, 1.80122502])
_E_SAT = np.array([1.0, 1.5, 3.0, 3.5, 4.0, 7.5])

# Terms 1-51 grouped by (d, c): each group's δ-part is shared, its τ-part summed once per temperature.
_GROUPS = sorted(set(zip(_D.tolist(), _C.tolist())))
_DG_I = np.array([d for d, _ in _GROUPS])
_CG_I = np.array([c for _, c in _GROUPS])
_CS = (0, 1, 2, 3, 4, 6)
# Groups ordered by c then d, so that each c's groups are contiguous rows (summed slice by slice,
# not by a matrix product: BLAS threads are slow on a busy machine).
_ORDER = sorted(range(len(_GROUPS)), key=lambda g: (_GROUPS[g][1], _GROUPS[g][0]))
_GROUPS = [_GROUPS[g] for g in _ORDER]
_DG_I = np.array([d for d, _ in _GROUPS])
_CG_I = np.array([c for _, c in _GROUPS])
_DG = _DG_I.astype(float)
_DDG = _DG_I * (_DG_I - 1.0)
_STARTS = [[c for _, c in _GROUPS].index(c) for c in _CS]
_SPANS = list(zip(_STARTS, _STARTS[1:] + [len(_GROUPS)]))
# The terms in group order, and where each group starts (τ-parts summed with add.reduceat too).
_GROUP_OF = np.array([_GROUPS.index((d, c)) for d, c in zip(_D.tolist(), _C.tolist())])
_TERMS = np.argsort(_GROUP_OF, kind="stable")
_TERM_STARTS = np.searchsorted(_GROUP_OF[_TERMS], np.arange(len(_GROUPS)))
_TAU_INT = np.arange(int(_T.max()) + 1)
_IS_INT = _T == np.round(_T)
# |τ - 1| or |δ - 1| beyond which the non-analytic terms (ψ = exp(-C(δ-1)² - D(τ-1)²), C ≥ 28, D ≥ 700)
# and their derivatives are below 1e-15 and skipped.
_NONANALYTIC_TAU = 0.25
_NONANALYTIC_DELTA = 1.2


def _tau_powers(tau):
    """τ^t for every term's exponent t (51 × n): integer powers by repeated products, the rest by pow."""
    ints = np.empty((_TAU_INT.size, tau.size))
    ints[0] = 1.0
    for k in range(1, _TAU_INT.size):
        ints[k] = ints[k - 1] * tau
    out = np.empty((_T.size, tau.size))
    out[_IS_INT] = ints[_T[_IS_INT].astype(int)]
    out[~_IS_INT] = tau[None, :] ** _T[~_IS_INT, None]
    return out


class Isotherms:
    """The τ-parts of every residual term at temperatures ``T`` [K] (an array), for repeated use in δ.

    Distinct temperatures are evaluated once (a table's nodes share few).
    """

    def __init__(self, T):
        T = np.asarray(T, float)
        self.T = T
        uT, inv = np.unique(T, return_inverse=True)
        tau = T_CRIT / uT
        nt = (_N[:, None] * _tau_powers(tau))[_TERMS]
        A = np.add.reduceat(nt, _TERM_STARTS, axis=0)  # Σ n τ^t per group
        At = np.add.reduceat(nt * (_T[_TERMS, None] / tau[None, :]), _TERM_STARTS, axis=0)  # Σ n t τ^(t-1)
        g = (_N3[:, None] * tau[None, :] ** _T3[:, None]
             * np.exp(-_BETA3[:, None] * (tau[None, :] - _GAMMA3[:, None]) ** 2))
        G = g.sum(axis=0)  # the three bell terms share d = 3, α = 20 and ε = 1
        Gt = (g * (_T3[:, None] / tau[None, :] - 2 * _BETA3[:, None] * (tau[None, :] - _GAMMA3[:, None]))).sum(0)
        self.tau = tau[inv]
        self.A, self.At, self.G, self.Gt = A[:, inv], At[:, inv], G[inv], Gt[inv]
        self.near = np.abs(self.tau - 1.0) < _NONANALYTIC_TAU

    def take(self, idx) -> Isotherms:
        """The same isotherms at positions ``idx`` only."""
        out = Isotherms.__new__(Isotherms)
        out.T, out.tau = self.T[idx], self.tau[idx]
        out.A, out.At = self.A[:, idx], self.At[:, idx]
        out.G, out.Gt, out.near = self.G[idx], self.Gt[idx], self.near[idx]
        return out

    def residual(self, delta, tau_derivative=False):
        """(δφʳ_δ, δ²φʳ_δδ) at reduced density ``delta``, and φʳ_τ if ``tau_derivative`` (else None)."""
        delta = np.asarray(delta, float)
        powers = np.empty((16, delta.size))
        powers[0] = 1.0
        for k in range(1, 16):
            powers[k] = powers[k - 1] * delta
        Y = self.A * powers[_DG_I]
        P = [np.einsum("gn->n", Y[a:b]) for a, b in _SPANS]
        P1 = [np.einsum("g,gn->n", _DG[a:b], Y[a:b]) for a, b in _SPANS]
        P2 = [np.einsum("g,gn->n", _DDG[a:b], Y[a:b]) for a, b in _SPANS]
        d1 = np.zeros(delta.size)
        d2 = np.zeros(delta.size)
        for k, c in enumerate(_CS):
            # f = P(δ) exp(-δ^c): δf' = e(δP' - uP), δ²f'' = e(δ²P'' - 2u δP' + (u² + u - cu)P), u = cδ^c
            if c == 0:
                d1 += P1[k]
                d2 += P2[k]
                continue
            u = c * powers[c]
            e = np.exp(-powers[c])
            d1 += e * (P1[k] - u * P[k])
            d2 += e * (P2[k] - 2.0 * u * P1[k] + (u * u + u - c * u) * P[k])
        # bell-shaped terms, δ-part δ³ exp(-20 (δ-1)²)
        dm = delta - 1.0
        bell_d = powers[3] * np.exp(-20.0 * dm * dm)
        bell = self.G * bell_d
        s = 3.0 - 40.0 * delta * dm  # δ ∂/∂δ of log(δ³ e^{-20(δ-1)²})
        d1 += bell * s
        d2 += bell * (s * (s - 1.0) - 40.0 * delta * (2.0 * delta - 1.0))
        tau_d: np.ndarray | None = None
        if tau_derivative:
            Yt = self.At * powers[_DG_I]
            Pt = [np.einsum("gn->n", Yt[a:b]) for a, b in _SPANS]
            tau_d = Pt[0] + sum(Pt[k] * np.exp(-powers[c]) for k, c in enumerate(_CS) if c) + self.Gt * bell_d
        near = self.near & (np.abs(dm) < _NONANALYTIC_DELTA)
        if near.any():
            idx = np.flatnonzero(near)
            n1, n2, nt = _nonanalytic(delta[idx], self.tau[idx], tau_derivative)
            d1[idx] += n1
            d2[idx] += n2
            if tau_derivative:
                assert tau_d is not None  # made above whenever tau_derivative
                tau_d[idx] += nt
        return d1, d2, tau_d

    def pressure(self, rho):
        """Pressure [Pa] and ∂p/∂ρ at fixed T [Pa m³/kg] at density ``rho`` [kg/m³]."""
        d1, d2, _ = self.residual(rho / RHO_CRIT)
        rt = R * self.T
        return rho * rt * (1.0 + d1), rt * (1.0 + 2.0 * d1 + d2)

    def enthalpy(self, rho):
        """Specific enthalpy [J/kg] at density ``rho`` [kg/m³] ([1] Table 3)."""
        d1, _, tr = self.residual(rho / RHO_CRIT, tau_derivative=True)
        tau = self.tau
        e = np.exp(-_G0[:, None] * tau[None, :])
        t0 = _N0[1] + _N0[2] / tau + (_N0[3:, None] * _G0[:, None] * (1.0 / (1.0 - e) - 1.0)).sum(axis=0)
        return R * self.T * (1.0 + tau * (t0 + tr) + d1)


def _nonanalytic(delta, tau, tau_derivative):
    """Terms 55-56 of [1] Table 2 and their derivatives ([1] Table 5): δφ_δ, δ²φ_δδ, φ_τ summed."""
    dm = delta - 1.0
    dm = np.where(np.abs(dm) < 1e-12, 1e-12, dm)  # the derivatives have removable singularities at δ = 1
    sq = dm * dm
    d1 = np.zeros(delta.shape)
    d2 = np.zeros(delta.shape)
    dt = np.zeros(delta.shape)
    for n, a, b, B, C, D, A, beta in zip(_N4, _A4, _B4, _BB4, _CC4, _DD4, _AA4, _BETA4):
        theta = (1.0 - tau) + A * sq ** (1.0 / (2.0 * beta))
        Delta = theta * theta + B * sq ** a
        psi = np.exp(-C * sq - D * (tau - 1.0) ** 2)
        psi_d = -2.0 * C * dm * psi
        psi_dd = (2.0 * C * sq - 1.0) * 2.0 * C * psi
        Dd = dm * (A * theta * 2.0 / beta * sq ** (0.5 / beta - 1.0) + 2.0 * B * a * sq ** (a - 1.0))
        Ddd = Dd / dm + sq * (4.0 * B * a * (a - 1.0) * sq ** (a - 2.0)
                             + 2.0 * A * A * (1.0 / beta) ** 2 * (sq ** (0.5 / beta - 1.0)) ** 2
                             + A * theta * 4.0 / beta * (0.5 / beta - 1.0) * sq ** (0.5 / beta - 2.0))
        Db = Delta ** b
        Dbd = b * Delta ** (b - 1.0) * Dd
        Dbdd = b * (Delta ** (b - 1.0) * Ddd + (b - 1.0) * Delta ** (b - 2.0) * Dd * Dd)
        phi_d = n * (Db * (psi + delta * psi_d) + Dbd * delta * psi)
        phi_dd = n * (Db * (2.0 * psi_d + delta * psi_dd) + 2.0 * Dbd * (psi + delta * psi_d) + Dbdd * delta * psi)
        d1 += delta * phi_d
        d2 += delta * delta * phi_dd
        if tau_derivative:
            Dbt = -2.0 * theta * b * Delta ** (b - 1.0)
            psi_t = -2.0 * D * (tau - 1.0) * psi
            dt += n * delta * (Dbt * psi + Db * psi_t)
    return d1, d2, dt


# Newton settings (numerical choices made here, no source).
#: Relative change in density at which the iteration stops.
DENSITY_TOLERANCE = 1e-12
MAX_NEWTON = 60
#: Points per chunk of the iteration.
CHUNK = 4096


def density(T, p, guess=None, iso: Isotherms | None = None):
    """Density [kg/m³] at ``T`` [K], ``p`` [Pa] by Newton iteration on p(ρ), vectorized.

    Parameters
    ----------
    T, p : array_like
        Temperature [K] and pressure [Pa] (same shape).
    guess : array_like, optional
        Starting densities [kg/m³]. Without one the iteration starts from
        1100 kg/m³, above every single-phase root at these pressures, and
        descends the liquid branch (or, above the critical temperature, the
        one branch) with bisection as a safeguard. Below the critical
        temperature only the liquid branch is followed: a point in the vapour
        region gives the superheated liquid (check the phase first, as
        ``IAPWS95Water.check`` does).
    iso : Isotherms, optional
        Precomputed τ-parts for ``T`` (reused by ``enthalpy_density``).

    Returns
    -------
    ndarray
        Density; NaN where the iteration did not converge in ``MAX_NEWTON`` steps
        or met a non-positive ∂p/∂ρ (unstable or vapour side below T_c).
    """
    T, p = np.broadcast_arrays(np.asarray(T, float), np.asarray(p, float))
    shape = T.shape
    T, p = T.ravel(), p.ravel()
    iso = Isotherms(T) if iso is None else iso
    rho = np.full(T.size, 1100.0) if guess is None else np.array(np.broadcast_to(guess, shape), float).ravel()
    rho = np.where(np.isfinite(rho) & (rho > 0), rho, 1100.0)
    out = np.empty(T.size)
    for a in range(0, T.size, CHUNK):  # chunks keep the (terms × points) work arrays in cache
        b = min(a + CHUNK, T.size)
        out[a:b] = _newton(T[a:b], p[a:b], rho[a:b], iso.take(slice(a, b)) if T.size > CHUNK else iso)
    return out.reshape(shape)


def _newton(T, p, rho, iso):
    lo = np.zeros(T.size)
    hi = np.full(T.size, 1400.0)  # above every density of water at up to 1000 MPa in the valid range
    out = np.full(T.size, np.nan)
    active = np.arange(T.size)
    sub = iso
    for _ in range(MAX_NEWTON):
        if active.size == 0:
            break
        pr, dp = sub.pressure(rho)
        f = pr - p[active]
        above = f > 0
        hi = np.where(above, np.minimum(hi, rho), hi)
        lo = np.where(above, lo, np.maximum(lo, rho))
        with np.errstate(divide="ignore", invalid="ignore"):
            step = f / dp
        newton = rho - step
        stable = dp > 0
        done = stable & (np.abs(step) <= DENSITY_TOLERANCE * rho)
        new = np.where(stable & (newton >= lo) & (newton <= hi), newton, 0.5 * (lo + hi))
        out[active[done]] = newton[done]
        keep = ~done
        active, rho, lo, hi = active[keep], new[keep], lo[keep], hi[keep]
        sub = sub.take(keep) if not keep.all() else sub
    # Below the critical temperature a single-phase liquid is denser than the critical density; a root
    # below it is the vapour or the unstable branch of the equation, not the state asked for.
    out[(T < T_CRIT) & ~(out > RHO_CRIT)] = np.nan
    return out


def enthalpy_density(T, p, guess=None):
    """Specific enthalpy [J/kg] and density [kg/m³] at ``T`` [K], ``p`` [Pa] (see ``density``; NaN where it fails)."""
    T, p = np.broadcast_arrays(np.asarray(T, float), np.asarray(p, float))
    shape = T.shape
    T, p = T.ravel(), p.ravel()
    rho0 = np.full(T.size, 1100.0) if guess is None else np.array(np.broadcast_to(guess, shape), float).ravel()
    rho0 = np.where(np.isfinite(rho0) & (rho0 > 0), rho0, 1100.0)
    h = np.full(T.size, np.nan)
    rho = np.empty(T.size)
    for a in range(0, T.size, CHUNK):
        b = min(a + CHUNK, T.size)
        iso = Isotherms(T[a:b])
        r = rho[a:b] = _newton(T[a:b], p[a:b], rho0[a:b], iso)
        ok = np.isfinite(r)
        if ok.all():
            h[a:b] = iso.enthalpy(r)
        elif ok.any():
            h[a:b][ok] = iso.take(ok).enthalpy(r[ok])
    return h.reshape(shape), rho.reshape(shape)


def saturation_pressure(T):
    """Saturation pressure [Pa] at ``T`` [K] below the critical temperature, [3] eq. 1 (NaN above)."""
    T = np.asarray(T, float)
    theta = np.clip(1.0 - T / T_CRIT, 0.0, None)
    s = sum(a * theta ** e for a, e in zip(_A_SAT, _E_SAT))
    return np.where(T < T_CRIT, P_CRIT * np.exp(T_CRIT / np.minimum(T, T_CRIT) * s), np.nan)


def _saturation_slope(T):
    """d ln p_sat / dT [1/K] of [3] eq. 1 at ``T`` [K] < T_c."""
    theta = 1.0 - T / T_CRIT
    s = sum(a * theta ** e for a, e in zip(_A_SAT, _E_SAT))
    ds = sum(a * e * theta ** (e - 1.0) for a, e in zip(_A_SAT, _E_SAT))
    return -(T_CRIT / T * s + ds) / T


def _saturation_temperature_newton(p):
    """Invert [3] eq. 1 by Newton iteration on ln p (to 1e-10 K)."""
    x = np.log(p / P_CRIT)
    t = T_CRIT / (1.0 - x / 7.5)  # start: a straight line in 1/T against ln p
    t = np.clip(t, 250.0, T_CRIT - 1e-6)
    for _ in range(50):
        step = (np.log(saturation_pressure(t) / p)) / _saturation_slope(t)
        t = np.clip(t - step, 200.0, T_CRIT - 1e-9)
        if np.all((np.abs(step) < 1e-10) | (t >= T_CRIT - 1e-9)):  # at p_c itself the root is T_c (clipped)
            break
    return t


# Saturation temperature against ln p on nodes, for cubic Hermite interpolation (slopes from the
# equation itself): built once at import; within 1e-6 K of the exact inverse up to 22.0 MPa and 2e-4 K in the
# last 0.06 MPa below the critical pressure (checked in the tests), far below [3]'s own uncertainty.
_SAT_LNP = np.linspace(np.log(611.0), np.log(P_CRIT), 4001)


@functools.lru_cache(maxsize=1)
def _saturation_nodes():
    T = _saturation_temperature_newton(np.exp(_SAT_LNP))
    slope = 1.0 / _saturation_slope(T)  # dT / d ln p
    slope[-1] = slope[-2]  # the equation's slope at T_c itself; the last cell ends at p_c
    return T, slope


def saturation_temperature(p):
    """Saturation temperature [K] at ``p`` [Pa] from 611 Pa up to the critical pressure (NaN elsewhere).

    The inverse of [3] eq. 1, interpolated (cubic Hermite in ln p) from nodes solved once.
    """
    p = np.asarray(p, float)
    out = np.full(p.shape, np.nan)
    sub = (p >= 611.0) & (p < P_CRIT)
    if not sub.any():
        return out
    x = np.log(p[sub])
    nodes, slopes = _saturation_nodes()
    h = _SAT_LNP[1] - _SAT_LNP[0]
    i = np.clip(((x - _SAT_LNP[0]) / h).astype(int), 0, _SAT_LNP.size - 2)
    t = (x - _SAT_LNP[i]) / h
    t2 = t * t
    v1 = t2 * (3.0 - 2.0 * t)
    out[sub] = ((1.0 - v1) * nodes[i] + v1 * nodes[i + 1]
                + h * ((t2 * t - 2.0 * t2 + t) * slopes[i] + (t2 * t - t2) * slopes[i + 1]))
    return out
