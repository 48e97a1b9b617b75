"""TEOS-10 state of each sample, its profile, and the background θ–σ₀ relation.

State (TEOS-10 through gsw [1]): absolute salinity ``SA`` from practical
salinity and position, conservative temperature ``CT``, potential
temperature ``θ`` referenced to the sea surface, potential density anomaly
``σ₀`` (referenced to 0 dbar) and in-situ density ``ρ``.

Background. Away from a plume, deep water lies on a tight θ–σ₀ curve set by
the mixing of the water masses; plume water, entrained near the seafloor
and carried up, lies warm of it. The background is a polynomial of degree
``degree`` (1 or 2, default 2) fitted by least squares to ``θ`` (and
``CT``) against ``σ₀`` over the *background samples*: the water just above
and just below the plume layer (``ventflux_watercolumn.section``). The
anomaly is the difference ``Δθ = θ − θ_b(σ₀)`` (``ΔΘ`` likewise for
conservative temperature, which carries the heat: ``c_p0 ΔΘ`` is a
potential-enthalpy anomaly [2]). The optical anomaly is the optical signal
minus its background median.

The fit is kept as per-profile sums (``XᵀX`` and ``Xᵀy``), so a bootstrap
over profiles refits it for every draw by adding the sums of the drawn
profiles: the fit's uncertainty includes the correlation of samples within
a profile, which an ordinary least-squares covariance of 1 Hz samples would
ignore.

Noise is the robust standard deviation, 1.4826 × median absolute deviation
(exact for a normal distribution [3]), of the background samples' residuals.

Profiles are the up- and down-casts of the record, cut where the smoothed
pressure turns; stretches spanning less than ``min_span`` (turnarounds)
are excluded and counted.

References
----------
.. [1] IOC, SCOR and IAPSO (2010). The international thermodynamic equation
   of seawater – 2010. IOC Manuals and Guides No. 56.
.. [2] McDougall, T. J. (2003). Potential enthalpy: a conservative oceanic
   variable for evaluating heat content and heat fluxes. J. Phys. Oceanogr.
   33, 945–963.
.. [3] Rousseeuw, P. J. and Croux, C. (1993). Alternatives to the median
   absolute deviation. J. Am. Stat. Assoc. 88, 1273–1283.
"""

from __future__ import annotations

from dataclasses import dataclass

import gsw
import numpy as np

from ventflux.plugin_api import InputError

#: Robust standard deviation from the median absolute deviation (normal data) [3].
MAD_TO_SD = 1.4826


@dataclass(frozen=True)
class State:
    """TEOS-10 state per sample (float arrays)."""

    SA: np.ndarray  # g/kg
    CT: np.ndarray  # degC
    theta: np.ndarray  # degC, potential temperature referenced to 0 dbar
    sigma0: np.ndarray  # kg/m^3, potential density anomaly referenced to 0 dbar
    rho: np.ndarray  # kg/m^3, in situ
    cp: np.ndarray  # J/(kg K), isobaric heat capacity in situ (for the constant-c_p shortcut)
    depth: np.ndarray  # m, positive down


def teos10_state(data) -> State:
    """TEOS-10 state of every sample of a ``SectionData``; refuses samples outside TEOS-10's funnel."""
    lat = 0.0 if data.latitude is None else data.latitude
    lon = 0.0 if data.longitude is None else data.longitude
    p, t = data.sea_pressure, data.temperature
    SA = gsw.SA_from_SP(data.salinity, p, lon, lat) if data.longitude is not None else \
        gsw.SR_from_SP(data.salinity) * np.ones_like(p)
    CT = gsw.CT_from_t(SA, t, p)
    outside = np.flatnonzero(~np.asarray(gsw.infunnel(SA, CT, p), bool))
    if outside.size:
        i = outside[0]
        raise InputError("temperature", f"{t[i]:g} degC at {p[i]:.0f} dbar", "seawater within TEOS-10's validity "
                         f"(freezing point to 40 degC, 0-8000 dbar; {outside.size} samples outside)",
                         where=data.where(i))
    return State(SA=SA, CT=CT, theta=gsw.pt_from_CT(SA, CT), sigma0=gsw.sigma0(SA, CT), rho=gsw.rho(SA, CT, p),
                 cp=gsw.cp_t_exact(SA, t, p), depth=-gsw.z_from_p(p, lat))


def profile_numbers(data, min_span=20.0, smooth=15):
    """Profile number of each sample (−1 for excluded turnarounds) and the number excluded.

    Parameters
    ----------
    data : SectionData
    min_span : float
        Smallest pressure span of a profile, dbar (shorter stretches are turnarounds).
    smooth : int
        Running-mean window, samples, applied to pressure before finding its turns.
    """
    if data.profile is not None:
        _, prof = np.unique(data.profile, return_inverse=True)
        return prof, 0
    p = data.sea_pressure
    k = max(1, min(int(smooth), p.size // 4))
    ps = np.convolve(np.pad(p, (k // 2, k - 1 - k // 2), mode="edge"), np.ones(k) / k, mode="valid")
    sign = np.sign(np.diff(ps))
    sign[sign == 0] = 1  # a flat stretch continues the profile it is in
    seg = np.concatenate([[0], np.cumsum(sign[1:] != sign[:-1])])
    seg = np.concatenate([seg, seg[-1:]])
    lo = np.full(seg.max() + 1, np.inf)
    hi = np.full(seg.max() + 1, -np.inf)
    np.minimum.at(lo, seg, p)
    np.maximum.at(hi, seg, p)
    good = (hi - lo) >= min_span
    renum = np.cumsum(good) - 1
    prof = np.where(good[seg], renum[seg], -1)
    excluded = int((prof < 0).sum())
    if good.sum() < 3:
        raise InputError("profiles", f"{int(good.sum())} found", f"at least 3 up- or down-casts spanning "
                         f"{min_span:g} dbar or more (a tow-yo or several casts)", where=data.source)
    return prof, excluded


def basis(sigma0, sigma_ref, degree, scale=1.0):
    """Polynomial basis of the background fit, columns ``((σ₀ − σ_ref)/scale)**k`` for k = 0..degree.

    Centring and scaling by the background's own spread keeps ``XᵀX`` well conditioned at any degree.
    """
    x = (np.asarray(sigma0) - sigma_ref) / scale
    return np.stack([x ** k for k in range(degree + 1)], axis=-1)


@dataclass(frozen=True)
class BackgroundSums:
    """Per-profile least-squares sums of the background fit (profile p: ``XtX[p]``, ``Xty[p]``)."""

    XtX: np.ndarray  # (P, K, K)
    Xty: np.ndarray  # (P, K, 2): columns θ, CT
    sigma_ref: float
    degree: int
    sigma_scale: float = 1.0

    def basis(self, sigma0):
        """The fit's basis at ``sigma0`` (kg/m³)."""
        return basis(sigma0, self.sigma_ref, self.degree, self.sigma_scale)


def background_sums(state, prof, mask, degree, n_profiles) -> BackgroundSums:
    """Sums of ``XᵀX`` and ``Xᵀy`` over the background samples (``mask``) of each profile."""
    use = mask & (prof >= 0)
    sigma_ref = float(np.median(state.sigma0[use])) if use.any() else 0.0
    scale = float(np.std(state.sigma0[use])) if use.sum() > 1 else 1.0
    scale = scale if scale > 0 else 1.0
    X = basis(state.sigma0[use], sigma_ref, degree, scale)
    y = np.stack([state.theta[use], state.CT[use]], axis=-1)
    K = degree + 1
    p = prof[use]
    XtX = np.zeros((n_profiles, K * K))
    Xty = np.zeros((n_profiles, K * 2))
    outer = (X[:, :, None] * X[:, None, :]).reshape(-1, K * K)
    cross = (X[:, :, None] * y[:, None, :]).reshape(-1, K * 2)
    for j in range(K * K):
        XtX[:, j] = np.bincount(p, outer[:, j], minlength=n_profiles)
    for j in range(K * 2):
        Xty[:, j] = np.bincount(p, cross[:, j], minlength=n_profiles)
    return BackgroundSums(XtX=XtX.reshape(-1, K, K), Xty=Xty.reshape(-1, K, 2), sigma_ref=sigma_ref, degree=degree,
                          sigma_scale=scale)


def solve_background(sums: BackgroundSums, weights=None):
    """Coefficients ``β`` (K, 2) of the fit, or (n, K, 2) for profile weights (n, P) (bootstrap counts).

    Draws whose resampled background cannot determine the fit come back NaN.
    """
    if weights is None:
        A, b = sums.XtX.sum(axis=0), sums.Xty.sum(axis=0)
        if np.linalg.cond(A) > 1e12:
            raise InputError("background", "too few samples away from the plume", "background samples spanning "
                             "a range of potential density (widen the section or lower the margin)")
        return np.linalg.solve(A, b)
    K = sums.XtX.shape[1]
    A = (weights @ sums.XtX.reshape(len(sums.XtX), -1)).reshape(-1, K, K)
    b = (weights @ sums.Xty.reshape(len(sums.Xty), -1)).reshape(-1, K, 2)
    ok = np.abs(np.linalg.det(A)) > 1e-12 * np.prod(np.diagonal(A, axis1=1, axis2=2), axis=1)
    out = np.full((A.shape[0], K, 2), np.nan)
    if ok.any():
        out[ok] = np.linalg.solve(A[ok], b[ok])
    return out


def anomalies(state, sums, beta):
    """``(Δθ, ΔΘ)`` per sample for coefficients ``beta`` (K, 2)."""
    bg = sums.basis(state.sigma0) @ beta
    return state.theta - bg[:, 0], state.CT - bg[:, 1]


def robust_sd(x) -> float:
    """1.4826 × median absolute deviation [3]."""
    x = np.asarray(x)
    if x.size == 0:
        return float("nan")
    return float(MAD_TO_SD * np.median(np.abs(x - np.median(x))))
