"""Monte Carlo of a jet clip's results: every uncertain input of the video method, drawn by name.

One function, ``jet_draws``, turns a ``JetAnalysis`` into draws of the exit
velocity, the buoyancy flux and the heat power. It draws through the core's
named inputs (``ventflux.survey.fields.resolve`` on a ``SharedDraws``), so an
input shared between vents, such as one camera's scale or the plume constant,
is drawn once per draw for all of them; it holds no generator of its own.

Parts (each an input name, each listed with its share in the result):

``plume_constant``
    ``k`` of ``w_c = k (F/(z - z0))^(1/3)``; by default uniform over
    3.85-4.7, the published values ([2], [3] of ``plume``, from memory).
    ``F ∝ k^-3``. Default name ``video/plume_constant``: the same constant for
    every vent.
``tracer_to_velocity_width_ratio``
    ``λ`` of the line of sight (volume view only), by default uniform over
    ``sightline.DEFAULT_WIDTH_RATIO_RANGE``; each draw re-inverts the apparent
    speeds at the fit's and the exit's heights. Default name
    ``video/tracer_to_velocity_width_ratio``: a property of plumes, shared.
``scale``
    The pixel size's relative error (a given ``"2.5 ± 0.05 mm"``, or the
    laser spots' spread over frames); velocities and heights scale with it,
    so ``F ∝ s^4`` and the exit velocity ``∝ s``.
``correlation``
    The correlation's own error on the centreline speeds: a systematic
    ``CORRELATION_BIAS_PX`` on the centreline displacement (the deformation
    pass's measured accuracy, 0.0065 px RMS in the benchmark, rounded up), and
    a quarter of the window-averaging correction (a choice: the correction
    assumes a Gaussian profile), together on ``w``; ``F ∝ w^3``.
``fit``
    The plume fit's own standard error on ``F`` (lognormal), and the exit
    extrapolation's on the exit velocity (normal).

The profile factor that turns the centreline exit velocity into an area mean
is the orifice estimator's, drawn there (``--velocity-kind centerline``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ventflux.plugin_api import as_float, nominal_of, resolve
from ventflux.plugin_api import Uncertain
from ventflux.plugin_api import Q_

from .plume import PLUME_CONSTANT_RANGE
from .sightline import DEFAULT_WIDTH_RATIO_RANGE, centreline_displacement

#: Systematic error of a centreline displacement, px (measured accuracy of the deformation pass, rounded up).
CORRELATION_BIAS_PX = 0.01
#: Share of the window-averaging correction taken as its standard uncertainty (a choice).
WINDOW_CORRECTION_SHARE = 0.25
PARTS = ("plume_constant", "tracer_to_velocity_width_ratio", "scale", "correlation", "fit")


def default_plume_constant():
    return Uncertain("uniform", *PLUME_CONSTANT_RANGE, "dimensionless")


def default_width_ratio():
    return Uncertain("uniform", *DEFAULT_WIDTH_RATIO_RANGE, "dimensionless")


@dataclass
class JetDraws:
    """Draws of a jet's results and each part's relative standard deviation."""

    exit_velocity: object  # m/s, (n,)
    buoyancy_flux: object  # m^4/s^3, (n,)
    heat_power: object | None  # W, (n,)
    parts: dict  # part -> {"buoyancy_flux": rel sd, "exit_velocity": rel sd}
    inputs: dict  # part -> input name used


def _spread(rel_sd, kind):
    """A factor of nominal 1 with relative standard deviation ``rel_sd`` (exact 1 when it is 0)."""
    if not rel_sd > 0:
        return Q_(1.0, "dimensionless")
    if kind == "lognormal":
        return Uncertain("lognormal", 1.0, float(np.exp(rel_sd)), "dimensionless")
    return Uncertain("normal", 1.0, rel_sd, "dimensionless")


def _ratio_of_inversions(res, lam_draws, lam0, rows):
    """Median over ``rows`` of the centreline displacement for each ``λ`` draw over that for ``λ0``."""
    p = res.profile
    if res.view != "volume" or p.apparent_velocity is None or not np.any(rows):
        return np.ones(np.shape(lam_draws))
    px = res.field.interval.to("s").magnitude / res.metres_per_pixel.to("m").magnitude
    point = (p.apparent_velocity.to("m/s").magnitude * px / p.window_factor)[rows]
    width = res.field.pattern_width
    base = centreline_displacement(point, lam0, width)
    lam = np.asarray(lam_draws, float)
    out = centreline_displacement(point[None, :], lam[:, None], width) / base[None, :]
    return np.nanmedian(out, axis=1)


def jet_draws(res, draws, names, plume_constant=None, width_ratio=None, scale=None) -> JetDraws:
    """Draws of a ``JetAnalysis``'s exit velocity, buoyancy flux and heat power.

    Parameters
    ----------
    res : ventflux_video.jet.JetAnalysis
        Analysed with the nominal values of the inputs below.
    draws : ventflux.aggregate.SharedDraws
        The run's named draws.
    names : dict
        Own input names of the parts (``"fit"``, ``"correlation"``,
        ``"scale"``, ``"plume_constant"``, ``"tracer_to_velocity_width_ratio"``),
        per vent, e.g. ``"vent A/video/fit"``; a shared reference uses its
        shared name and a default constant its one name for every vent.
    plume_constant, width_ratio, scale : quantity, Uncertain or SharedRef, optional
        ``None``: the default distributions (module notes); ``scale`` is a
        dimensionless factor on the pixel size (nominal 1; ``None``: exact).
    """
    n = draws.n_draws
    inputs = {}

    def take(part, value, name):
        inputs[part] = value.name if hasattr(value, "name") and not isinstance(value, Uncertain) else name
        return np.broadcast_to(np.asarray(as_float(resolve(value, name, draws)), float), (n,))

    # Defaults are one property of plumes, shared by every vent: one name for all of them.
    k = take("plume_constant", default_plume_constant() if plume_constant is None else plume_constant,
             "video/plume_constant" if plume_constant is None else names["plume_constant"])
    k0 = float(res.plume.plume_constant)
    lam0 = float(res.width_ratio)
    lam = np.full(n, lam0)
    if res.view == "volume":
        lam = take("tracer_to_velocity_width_ratio", default_width_ratio() if width_ratio is None else width_ratio,
                   "video/tracer_to_velocity_width_ratio" if width_ratio is None else
                   names["tracer_to_velocity_width_ratio"])
    s = np.ones(n)
    if scale is not None:
        s = take("scale", scale, names["scale"]) / float(as_float(nominal_of(scale)))

    p = res.profile
    z = p.height.to("m").magnitude
    ok = np.isfinite(p.velocity.to("m/s").magnitude) & np.isfinite(z)
    exit_rows = np.isin(np.arange(z.size), np.flatnonzero(ok)[:4])
    fit_rows = ok & (z > 0)
    px = res.field.interval.to("s").magnitude / res.metres_per_pixel.to("m").magnitude
    d_fit = np.nanmedian(p.velocity.to("m/s").magnitude[fit_rows]) * px if fit_rows.any() else np.nan
    fw = np.nanmedian(p.window_factor[fit_rows]) if p.window_factor is not None and fit_rows.any() else 1.0
    corr_sd = float(np.hypot(CORRELATION_BIAS_PX / d_fit if d_fit > 0 else 0.0, WINDOW_CORRECTION_SHARE * (1 - fw)))
    c = take("correlation", _spread(corr_sd, "normal"), names["correlation"])
    f0 = res.buoyancy_flux.to("m^4/s^3").magnitude
    fit_f = take("fit", _spread(float(res.buoyancy_flux_sd.to("m^4/s^3").magnitude / f0) if f0 > 0 else 0.0,
                                "lognormal"), names["fit"])
    w0 = res.exit_velocity.to("m/s").magnitude
    rel_w = float(res.exit_velocity_sd.to("m/s").magnitude / abs(w0)) if w0 else 0.0
    fit_w = np.broadcast_to(as_float(resolve(_spread(rel_w, "normal"), names["fit"] + " (exit)", draws)), (n,))

    los_fit = _ratio_of_inversions(res, lam, lam0, fit_rows)
    los_exit = _ratio_of_inversions(res, lam, lam0, exit_rows)
    factors_f = {"plume_constant": (k0 / k) ** 3, "tracer_to_velocity_width_ratio": los_fit**3, "scale": s**4,
                 "correlation": c**3, "fit": fit_f}
    factors_w = {"plume_constant": np.ones(n), "tracer_to_velocity_width_ratio": los_exit, "scale": s,
                 "correlation": c, "fit": fit_w}
    F = f0 * np.prod(list(factors_f.values()), axis=0)
    W = w0 * np.prod(list(factors_w.values()), axis=0)
    H = None
    if res.heat_power is not None:
        H = Q_(res.heat_power.to("W").magnitude * F / f0, "W")
    parts = {name: {"buoyancy_flux": float(np.std(factors_f[name]) / np.mean(factors_f[name])),
                    "exit_velocity": float(np.std(factors_w[name]) / np.mean(factors_w[name]))} for name in PARTS}
    return JetDraws(Q_(W, "m/s"), Q_(F, "m^4/s^3"), H, parts, inputs)
