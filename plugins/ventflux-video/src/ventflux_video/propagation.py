"""Monte Carlo of a jet clip's results: every uncertain input of the video method, drawn by name.

One function, ``jet_draws``, turns a ``JetAnalysis`` into draws of the exit
velocity, the buoyancy flux and the heat power. It draws through the core's
named inputs through the one driver, ``ventflux.plugin_api.propagate``, on
the run's ``SharedDraws``, so an input shared between vents, such as one
camera's scale or the plume constant, is drawn once per draw for all of them,
and impossible draws are dropped, counted and refused above the run's share
(``UnphysicalPolicy``); it holds no generator of its own. ``video-jet`` and
the survey's ``[vent.video]`` call it alike, so the same clip, vent name and
seed give the same draws.

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
import pint

from ventflux.plugin_api import (
    DEFAULT_MAX_UNPHYSICAL,
    Q_,
    Propagation,
    SharedRef,
    Uncertain,
    UnphysicalPolicy,
    as_float,
    nominal_of,
    propagate,
)

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
    """Draws of a jet's results (the kept draws), each part's relative standard deviation and the bookkeeping."""

    exit_velocity: pint.Quantity  # m/s, (kept,)
    buoyancy_flux: pint.Quantity  # m^4/s^3, (kept,)
    heat_power: pint.Quantity | None  # W, (kept,)
    parts: dict  # part -> {"buoyancy_flux": rel sd, "exit_velocity": rel sd}
    inputs: dict  # part -> input name used
    propagation: Propagation  # the driver's bookkeeping (keep, unphysical draws, policy, provenance)

    def expand(self, q):
        """Draws of ``q`` (kept) on all the run's draws, NaN where a draw was dropped as unphysical."""
        return self.propagation.expand(q)

    def provenance(self) -> dict:
        return self.propagation.provenance()


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
    lam = np.asarray(lam_draws, float)
    if res.view != "volume" or p.apparent_velocity is None or not np.any(rows):
        return np.ones(np.shape(lam))
    px = res.field.interval.to("s").magnitude / res.metres_per_pixel.to("m").magnitude
    point = (p.apparent_velocity.to("m/s").magnitude * px / p.window_factor)[rows]
    width = res.field.pattern_width
    base = centreline_displacement(point, lam0, width)
    with np.errstate(invalid="ignore", divide="ignore"):
        out = centreline_displacement(point[None, :], np.atleast_1d(lam)[:, None], width) / base[None, :]
    return np.nanmedian(out, axis=1).reshape(np.shape(lam)) if np.ndim(lam) else float(np.nanmedian(out))


class _Jet:
    """The deterministic, vectorized estimator of a jet's draws: factors on the nominal analysis."""

    def __init__(self, res):
        self.res = res
        p = res.profile
        z = p.height.to("m").magnitude
        ok = np.isfinite(p.velocity.to("m/s").magnitude) & np.isfinite(z)
        self.exit_rows = np.isin(np.arange(z.size), np.flatnonzero(ok)[:4])
        self.fit_rows = ok & (z > 0)
        self.k0 = float(res.plume.plume_constant)
        self.lam0 = float(res.width_ratio)
        self.f0 = res.buoyancy_flux.to("m^4/s^3").magnitude
        self.w0 = res.exit_velocity.to("m/s").magnitude

    def factors(self, plume_constant, width_ratio, scale, correlation, fit, fit_exit):
        k, lam, s, c, fit_f, fit_w = (np.asarray(as_float(v), float) for v in
                                      (plume_constant, width_ratio, scale, correlation, fit, fit_exit))
        los_fit = _ratio_of_inversions(self.res, lam, self.lam0, self.fit_rows)
        los_exit = _ratio_of_inversions(self.res, lam, self.lam0, self.exit_rows)
        one = np.ones(np.broadcast(k, lam, s, c, fit_f, fit_w).shape)
        f = {"plume_constant": (self.k0 / k) ** 3 * one, "tracer_to_velocity_width_ratio": los_fit**3 * one,
             "scale": s**4 * one, "correlation": c**3 * one, "fit": fit_f * one}
        w = {"plume_constant": one, "tracer_to_velocity_width_ratio": los_exit * one, "scale": s * one,
             "correlation": c * one, "fit": fit_w * one}
        return f, w

    def physical(self, args) -> np.ndarray:
        """Draws the jet's results exist for: positive factors (k, λ, scale, correlation) and a rising exit flow."""
        f, w = self.factors(**args)
        F = np.prod(list(f.values()), axis=0)
        W = self.w0 * np.prod(list(w.values()), axis=0)
        good = np.isfinite(F) & (F > 0) & np.isfinite(W) & (W > 0)
        for name in ("plume_constant", "width_ratio", "scale", "correlation"):
            good &= np.asarray(as_float(args[name]), float) > 0
        return good

    def __call__(self, **args):
        f, w = self.factors(**args)
        F = self.f0 * np.prod(list(f.values()), axis=0)
        W = self.w0 * np.prod(list(w.values()), axis=0)
        H = None if self.res.heat_power is None else Q_(self.res.heat_power.to("W").magnitude * F / self.f0, "W")
        parts = {name: {"buoyancy_flux": float(np.std(f[name]) / np.mean(f[name])),
                        "exit_velocity": float(np.std(w[name]) / np.mean(w[name]))} for name in PARTS}
        return Q_(W, "m/s"), Q_(F, "m^4/s^3"), H, parts


def jet_draws(res, draws, names, plume_constant=None, width_ratio=None, scale=None,
              max_unphysical: float | UnphysicalPolicy = DEFAULT_MAX_UNPHYSICAL) -> JetDraws:
    """Draws of a ``JetAnalysis``'s exit velocity, buoyancy flux and heat power, through the core's driver.

    Every input is drawn by ``ventflux.plugin_api.propagate`` under its name;
    draws with a non-positive plume constant, width ratio, scale or
    correlation factor, or a non-rising exit velocity, are dropped and
    counted under the run's ``UnphysicalPolicy`` (refused above its share).

    Parameters
    ----------
    res : ventflux_video.jet.JetAnalysis
        Analysed with the nominal values of the inputs below.
    draws : ventflux.plugin_api.SharedDraws
        The run's named draws.
    names : dict
        Own input names of the parts (``"fit"``, ``"correlation"``,
        ``"scale"``, ``"plume_constant"``, ``"tracer_to_velocity_width_ratio"``),
        per vent, e.g. ``"vent A/video/fit"``; a shared reference uses its
        shared name and a default constant its one name for every vent.
    plume_constant, width_ratio, scale : quantity, Uncertain or SharedRef, optional
        ``None``: the default distributions (module notes); ``scale`` is a
        dimensionless factor on the pixel size (nominal 1; ``None``: exact).
    max_unphysical : float or UnphysicalPolicy
        The run's rule for impossible draws (default 5 %).
    """
    inputs, stream, used = {}, {}, {}

    def take(part, key, value, name):
        if isinstance(value, SharedRef):  # a [shared] input: one stream for all its users
            name, value = "shared/" + value.name, value.value
        inputs[key], stream[key], used[part] = value, name, name

    # Defaults are one property of plumes, shared by every vent: one name for all of them.
    take("plume_constant", "plume_constant", default_plume_constant() if plume_constant is None else plume_constant,
         "video/plume_constant" if plume_constant is None else names["plume_constant"])
    if res.view == "volume":
        take("tracer_to_velocity_width_ratio", "width_ratio",
             default_width_ratio() if width_ratio is None else width_ratio,
             "video/tracer_to_velocity_width_ratio" if width_ratio is None else
             names["tracer_to_velocity_width_ratio"])
    else:
        inputs["width_ratio"] = Q_(float(res.width_ratio), "dimensionless")
    if scale is not None:
        s0 = float(as_float(nominal_of(scale)))
        take("scale", "scale", scale, names["scale"])
    else:
        inputs["scale"], s0 = Q_(1.0, "dimensionless"), 1.0
    jet = _Jet(res)
    p = res.profile
    px = res.field.interval.to("s").magnitude / res.metres_per_pixel.to("m").magnitude
    fit_rows = jet.fit_rows
    d_fit = np.nanmedian(p.velocity.to("m/s").magnitude[fit_rows]) * px if fit_rows.any() else np.nan
    fw = np.nanmedian(p.window_factor[fit_rows]) if p.window_factor is not None and fit_rows.any() else 1.0
    corr_sd = float(np.hypot(CORRELATION_BIAS_PX / d_fit if d_fit > 0 else 0.0, WINDOW_CORRECTION_SHARE * (1 - fw)))
    take("correlation", "correlation", _spread(corr_sd, "normal"), names["correlation"])
    take("fit", "fit", _spread(float(res.buoyancy_flux_sd.to("m^4/s^3").magnitude / jet.f0) if jet.f0 > 0 else 0.0,
                               "lognormal"), names["fit"])
    rel_w = float(res.exit_velocity_sd.to("m/s").magnitude / abs(jet.w0)) if jet.w0 else 0.0
    inputs["fit_exit"], stream["fit_exit"] = _spread(rel_w, "normal"), names["fit"] + " (exit)"

    def estimator(scale, **rest):  # the scale as a factor of nominal 1
        return jet(scale=np.asarray(as_float(scale), float) / s0, **rest)

    def physical(args):
        return jet.physical({**args, "scale": np.asarray(as_float(args["scale"]), float) / s0})

    prop = propagate(estimator, inputs, names=stream, draws=draws, physical=physical, max_unphysical=max_unphysical)
    W, F, H, parts = prop.result
    return JetDraws(W, F, H, parts, used, prop)


def jet_summary(res, mc: JetDraws) -> dict:
    """The JSON of a jet's analysis and its Monte Carlo (SI units in the keys), as ``video-jet`` prints it.

    The nominal results (``res.as_dict()``), the draws' summaries of the exit
    velocity, buoyancy flux and heat power, each part's relative spread, every
    input by name, and the driver's provenance (``draws``, ``seed``,
    ``unphysical_draws``, ``max_unphysical_share``).
    """
    from ventflux.plugin_api import summarize

    prop = mc.propagation
    out = res.as_dict()
    out["exit_velocity_sd_m_s"] = summarize(mc.exit_velocity).std.to("m/s").magnitude
    out["exit_velocity_fit_sd_m_s"] = res.exit_velocity_sd.to("m/s").magnitude
    out.update(summarize(mc.buoyancy_flux).as_dict("buoyancy_flux", "m^4/s^3"))
    out["buoyancy_flux_sd_m4_s3"] = out["buoyancy_flux_m4_s3_sd"]
    if mc.heat_power is not None:
        out.update(summarize(mc.heat_power).as_dict("heat_power", "W"))
        out["heat_power_sd_W"] = out["heat_power_W_sd"]
    out["uncertainty_parts_relative_sd"] = mc.parts
    out["uncertainty_inputs"] = {name: prop.inputs.get(name, "exact") for name in mc.inputs.values()}
    prov = prop.provenance()
    out.update({k: prov[k] for k in ("draws", "seed", "unphysical_draws", "max_unphysical_share")})
    return out


def part_names(vent: str) -> dict:
    """Each part's own input name for ``vent`` (``"vent A/video/fit"``): the survey's and ``video-jet --name``'s."""
    return {part: f"{vent}/video/{'scale_factor' if part == 'scale' else part}" for part in PARTS}
