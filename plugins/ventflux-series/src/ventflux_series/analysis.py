"""A vent's heat output through time: per-step summaries, the whole-series mean, tidal periods, trend and steps.

Model of the output (per-step medians y at times t, in days):

    y(t) = a + b t + Σ_c [α_c cos(ω_c t) + β_c sin(ω_c t)] + Σ_k s_k H(t − τ_k) + e(t)

with the tidal constituents c that the record's length resolves (Rayleigh criterion: |f₁ − f₂| T ≥ 1), a linear
trend b and steps s_k at times τ_k. Steps are found one at a time (binary segmentation on the residual
projection, vectorized over every candidate time) and kept while the Bayesian information criterion drops by
more than ``STEP_BIC`` (10: "very strong" evidence on the scale of Kass & Raftery 1995), with the number of
samples replaced by the effective number n(1 − r₁)/(1 + r₁) of AR(1) residuals (r₁ their lag-1
autocorrelation with the step fitted). The time of a step carries a 90 % interval from its profile likelihood,
p(τ) ∝ RSS(τ)^(−n_eff/2). Residual structure beyond AR(1) still makes intervals somewhat too narrow: stated in
the report.

Tidal constituents are estimated by least squares within the same model (harmonic analysis): a resolved
constituent is "found" when its amplitude exceeds ``FOUND_SE`` standard errors. The Lomb–Scargle periodogram
(uneven sampling allowed) of the output after removing trend and steps is shown beside it, with the
constituents marked and its strongest peaks listed; leakage between close lines makes a periodogram alone a
poor judge of which constituent is present, so it decides nothing.

References
----------
.. [1] Lomb, N. R. (1976). Least-squares frequency analysis of unequally spaced data. Astrophys. Space Sci.
       39, 447–462. Scargle, J. D. (1982). ApJ 263, 835–853.
.. [2] Kass, R. E. & Raftery, A. E. (1995). Bayes factors. J. Am. Stat. Assoc. 90, 773–795.
.. [3] Tidal constituent periods (hours): M2 12.4206, S2 12.0000, N2 12.6583, K1 23.9345, O1 25.8193
       (standard values, from memory).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

#: Principal tidal constituents and their periods in hours (from memory, see [3]).
TIDAL_PERIODS_H = {"M2": 12.4206, "S2": 12.0000, "N2": 12.6583, "K1": 23.9345, "O1": 25.8193}
#: Minimum drop of the BIC for a step to be kept (Kass & Raftery 1995: > 10 is very strong evidence).
STEP_BIC = 10.0
#: At most this many steps per series.
MAX_STEPS = 5
#: A periodogram peak is listed when it exceeds this multiple of the periodogram's median (choice).
PEAK_FACTOR = 10.0
#: A constituent is found when its fitted amplitude exceeds this many standard errors (choice: about 3 sigma).
FOUND_SE = 3.0


@dataclass
class Step:
    time: np.datetime64
    time_low: np.datetime64  # 90 % interval of the step's time
    time_high: np.datetime64
    size_W: float
    size_sd_W: float


@dataclass
class Periodogram:
    period_h: np.ndarray
    power: np.ndarray
    peaks_h: list[float]


@dataclass
class Constituent:
    name: str
    period_h: float
    resolved: bool
    amplitude_W: float = float("nan")
    amplitude_se_W: float = float("nan")
    phase_deg: float = float("nan")  # of the cosine, relative to the series' first time step

    @property
    def found(self) -> bool:
        return bool(self.resolved and self.amplitude_W > FOUND_SE * self.amplitude_se_W)


@dataclass
class VentSeries:
    """One vent's heat output through time, with what its analysis found."""

    vent: str
    method: str
    times: np.ndarray  # datetime64[ns]
    median_W: np.ndarray
    p05_W: np.ndarray
    p95_W: np.ndarray
    unphysical: np.ndarray
    items: np.ndarray  # index of the item each step came from
    mean_draws_W: np.ndarray  # the whole series' mean output, per draw (systematic errors kept)
    trend_W_per_day: float = float("nan")
    trend_sd_W_per_day: float = float("nan")
    steps: list[Step] = field(default_factory=list)
    periodogram: Periodogram | None = None
    constituents: list[Constituent] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def assemble(results, vent: str, method: str) -> VentSeries:
    """Stack a vent's item results in time order and summarize each step over its draws."""
    mine = [r for r in results if r.vent == vent and r.ok and len(r.times)]
    if not mine:
        empty = np.array([], float)
        return VentSeries(vent, method, np.array([], "datetime64[ns]"), empty, empty, empty, np.array([], int),
                          np.array([], int), empty, notes=["no item of this vent gave a value"])
    times = np.concatenate([r.times for r in mine])
    draws = np.concatenate([r.power_draws for r in mine]).astype(float)
    unphysical = np.concatenate([r.unphysical for r in mine])
    items = np.concatenate([np.full(len(r.times), r.index) for r in mine])
    order = np.argsort(times, kind="stable")
    times, draws, unphysical, items = times[order], draws[order], unphysical[order], items[order]
    notes = []
    dup = np.r_[False, times[1:] == times[:-1]]
    if dup.any():
        notes.append(f"{int(dup.sum())} time steps given by more than one item: all kept, in item order")
    with np.errstate(all="ignore"):
        q = np.nanpercentile(draws, [50, 5, 95], axis=1) if draws.size else np.empty((3, 0))
        mean_draws = np.nanmean(draws, axis=0)  # each draw's mean over time: a systematic error stays whole
    return VentSeries(vent, method, times, q[0], q[1], q[2], unphysical, items, mean_draws, notes=notes)


def _days(times, t0):
    return (times - t0).astype("timedelta64[ns]").astype(float) / 86400e9


def resolved_constituents(span_days: float) -> list[str]:
    """Constituents separable from each other over ``span_days`` (Rayleigh criterion), M2 and K1 first."""
    chosen: list[str] = []
    for name in ("M2", "K1", "S2", "O1", "N2"):
        f = 24.0 / TIDAL_PERIODS_H[name]
        if TIDAL_PERIODS_H[name] / 24.0 * 2 > span_days:
            continue
        if all(abs(f - 24.0 / TIDAL_PERIODS_H[c]) * span_days >= 1.0 for c in chosen):
            chosen.append(name)
    return chosen


def _base_design(t_days, constituents):
    cols = [np.ones_like(t_days), t_days - t_days.mean()]
    for c in constituents:
        w = 2 * np.pi * 24.0 / TIDAL_PERIODS_H[c]
        cols += [np.cos(w * t_days), np.sin(w * t_days)]
    return np.stack(cols, axis=1)


def detect_steps(t_days, y, constituents, guard: float = 0.05):
    """Steps by binary segmentation with the BIC rule; returns (step indices, their τ intervals, design)."""
    n = len(y)
    X = _base_design(t_days, constituents)
    steps: list[tuple[int, int, int]] = []
    lo_i, hi_i = max(2, int(guard * n)), min(n - 2, int((1 - guard) * n))
    if hi_i <= lo_i:
        return steps, X
    cand = np.arange(lo_i, hi_i)
    for _ in range(MAX_STEPS):
        Q, _ = np.linalg.qr(X)
        ry = y - Q @ (Q.T @ y)
        rss0 = float(ry @ ry)
        # H[:, j] = step at cand[j]; residualize every candidate against X at once.
        H = (np.arange(n)[:, None] >= cand[None, :]).astype(float)
        RH = H - Q @ (Q.T @ H)
        denom = np.einsum("ij,ij->j", RH, RH)
        gain = np.where(denom > 1e-12, (RH.T @ ry) ** 2 / np.maximum(denom, 1e-12), 0.0)
        rss = np.maximum(rss0 - gain, 1e-300)
        j = int(np.argmax(gain))
        # Residuals of a real record are autocorrelated; with AR(1) residuals the information in n samples is
        # that of n_eff = n (1 − r1)/(1 + r1) independent ones (r1: lag-1 autocorrelation of the residual
        # with the step fitted). Using n_eff keeps slow structure from being cut into spurious steps.
        ralt = ry - RH[:, j] * (RH[:, j] @ ry) / max(denom[j], 1e-12)  # residual with the best step fitted
        r1 = float(np.clip(np.corrcoef(ralt[:-1], ralt[1:])[0, 1], 0.0, 0.98)) if n > 3 else 0.0
        n_eff = n * (1 - r1) / (1 + r1)
        bic_drop = n_eff * np.log(rss0 / rss[j]) - 2 * np.log(n)
        if not bic_drop > STEP_BIC:
            break
        # Profile likelihood of the step time around the best candidate.
        logl = -0.5 * n_eff * np.log(rss / rss[j])
        p = np.exp(logl - logl.max())
        p /= p.sum()
        cdf = np.cumsum(p)
        lo = cand[min(int(np.searchsorted(cdf, 0.05)), len(cand) - 1)]
        hi = cand[min(int(np.searchsorted(cdf, 0.95)), len(cand) - 1)]
        steps.append((int(cand[j]), int(lo), int(hi)))
        X = np.column_stack([X, H[:, j]])
        # The averaging window that straddles a step holds a mixed value; a second "step" beside the first
        # would only fit that one window, so candidates within two steps of an accepted one are dropped.
        cand = cand[np.abs(cand - cand[j]) > 2]
        if cand.size == 0:
            break
    return steps, X


def periodogram(t_days, y, span_days) -> Periodogram:
    from scipy.signal import lombscargle

    dt = np.median(np.diff(t_days)) if len(t_days) > 1 else 1.0
    f_lo, f_hi = 1.0 / span_days, 0.5 / dt  # cycles per day
    freqs = np.linspace(f_lo, f_hi, max(400, int(8 * span_days * (f_hi - f_lo))))
    yc = y - y.mean()
    power = lombscargle(t_days, yc, 2 * np.pi * freqs, normalize=True)
    noise = float(np.median(power)) or 1e-12
    is_peak = np.r_[False, (power[1:-1] > power[:-2]) & (power[1:-1] >= power[2:]), False]
    idx = np.flatnonzero(is_peak & (power > PEAK_FACTOR * noise))
    idx = idx[np.argsort(power[idx])[::-1][:5]]
    return Periodogram(24.0 / freqs, power, [float(24.0 / freqs[i]) for i in idx])


def analyze(series: VentSeries, min_steps: int = 12) -> VentSeries:
    """Trend, steps and periodogram of one vent's series (in place; also returned)."""
    ok = np.isfinite(series.median_W)
    if ok.sum() >= min_steps and np.ptp(series.median_W[ok]) == 0:
        series.notes.append("the output is constant through time: no trend, step or period to find")
        return series
    if ok.sum() < min_steps:
        series.notes.append(f"only {int(ok.sum())} time steps with a value: no trend, step or period analysis "
                            f"(needs {min_steps})")
        return series
    t0 = series.times[ok][0]
    t = _days(series.times[ok], t0)
    y = series.median_W[ok]
    span = float(t[-1] - t[0])
    cons = resolved_constituents(span)
    steps, X = detect_steps(t, y, cons)
    coef, *_ = np.linalg.lstsq(X, y, rcond=None)
    resid = y - X @ coef
    dof = max(len(y) - X.shape[1], 1)
    cov = np.linalg.pinv(X.T @ X) * float(resid @ resid) / dof
    series.trend_W_per_day, series.trend_sd_W_per_day = float(coef[1]), float(np.sqrt(cov[1, 1]))
    base = X.shape[1] - len(steps)
    times_ok = series.times[ok]
    for k, (i, lo, hi) in enumerate(steps):
        c = base + k
        # A step "at i" happened after step i-1 and by step i; averaged windows blur it over one window, so its
        # time is the midpoint and its interval runs from the last step before to the first step after.
        mid = times_ok[i - 1] + (times_ok[i] - times_ok[i - 1]) // 2
        series.steps.append(Step(mid, times_ok[lo - 1], times_ok[hi], float(coef[c]), float(np.sqrt(cov[c, c]))))
    series.steps.sort(key=lambda s: s.time)
    for name in TIDAL_PERIODS_H:
        if name not in cons:
            series.constituents.append(Constituent(name, TIDAL_PERIODS_H[name], False))
            continue
        c = 2 + 2 * cons.index(name)
        a, b = coef[c], coef[c + 1]
        amp = float(np.hypot(a, b))
        g = np.array([a, b]) / max(amp, 1e-300)  # gradient of the amplitude (delta method)
        se = float(np.sqrt(g @ cov[c:c + 2, c:c + 2] @ g))
        series.constituents.append(Constituent(name, TIDAL_PERIODS_H[name], True, amp, se,
                                                float(np.degrees(np.arctan2(b, a)))))
    # The periodogram sees the output with trend and steps removed, tides left in.
    step_part = X[:, base:] @ coef[base:] if steps else 0.0
    series.periodogram = periodogram(t, y - coef[1] * X[:, 1] - step_part, span)
    if not cons:
        series.notes.append(f"record of {span:.1f} days: too short to resolve tidal constituents")
    return series
