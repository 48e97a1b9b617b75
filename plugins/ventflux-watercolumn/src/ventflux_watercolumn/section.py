"""The whole analysis of one section: anomalies, the plume layer, rise heights and the heat flux.

``analyse_section`` does everything that needs no random draws (nominal
background, anomalies, layer, per-profile integrals); ``draw_section``
propagates the uncertainty over ``n`` draws. Every random input is drawn in
one function, ``section_draws``, through the core's ``SharedDraws`` (so a
shared current or vent depth takes the same value in a draw everywhere in a
survey, and the propagation can move to another driver in one edit).

Two passes find the background: first a fit to every sample with warm
outliers (residual above 3 noise sds) removed iteratively; the layer found
with it sets the band (the layer's depths on the section, widened by the
margin); then the fit to the *background samples* proper: every sample
outside the band, within a window above and below it (half the band's
thickness, ``BACKGROUND_WINDOW``), on every profile. The layer is then
found again with that fit. The window is a choice, so its effect is part
of the uncertainty: the background is fitted again over a window twice as
wide, and each draw shifts the flux by u ~ U(−1, 1) times that change (a
named part of the spread). Bracketing the layer's densities from above and
below makes the fit interpolate across them. Taking instead all depths of
the profiles where no layer was detected ("away from the plume") lets the
plume's sub-threshold tails into the background. On the analytic sections
of the tests that biased the flux low by 4–10 % (mean −3.7 % over 12
sections); bracketing gives a mean of +0.2 %. So the section should stay
clear of the rising stem near the seafloor, where the water below the
layer is not background.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ventflux.plugin_api import InputError
from ventflux.plugin_api import CP0

from . import anomaly as an
from .flux import (
    bootstrap_weights,
    fill_along_section,
    heat_flux,
    section_geometry,
    trapezoid_weights,
)
from .layer import bin_edges, bin_profiles, detect_layer

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .layer import LayerIndices

TRACERS = ("temperature", "optical", "either")
#: Background window: the samples within this fraction of the band's thickness above and below it (at least
#: BACKGROUND_MIN_BINS bins). Local enough that a low-degree polynomial follows a curved θ–σ0 relation across the
#: band: on the demo section (analytic flux 65.6 MW) a fit over the whole profile gave 50.9 / 61.3 / 68.9 MW for
#: degrees 1 / 2 / 3, this window 63.1 / 66.0 MW for degrees 1 / 2 (a choice). Degree 3 is not offered: across
#: the band's gap a cubic fitted to two short windows can swing wildly (2.8 GW on the demo).
DEGREES = (1, 2)
BACKGROUND_WINDOW = 0.5
BACKGROUND_MIN_BINS = 4
LEVELS = {"maximum": "top", "spreading": "core", "bottom": "bottom"}


@dataclass
class SectionAnalysis:
    """Nominal results of one section and what the draws need."""

    source: str
    n_samples: int
    n_profiles: int
    excluded_turnaround: int
    edges: np.ndarray  # depth-bin edges, m
    depth: np.ndarray  # bin centres, m
    s: np.ndarray  # profile distance along the section, m
    normal_bearing: float
    beta: np.ndarray  # (K, 2) background coefficients (θ, CT)
    sums: an.BackgroundSums
    noise: float  # K, per-sample Δθ noise
    optical_noise: float | None
    optical_background: float | None
    dtheta_grid: np.ndarray  # (P, Z) binned Δθ
    optical_grid: np.ndarray | None
    layer: LayerIndices
    top_depth: np.ndarray  # (P,) m, NaN without a layer
    core_depth: np.ndarray
    bottom_depth: np.ndarray
    band: tuple  # (first bin, last bin) of the flux integral
    A: np.ndarray  # (P,) see flux.heat_flux
    C: np.ndarray  # (P, K)
    A1: np.ndarray | None
    C1: np.ndarray | None
    D: np.ndarray  # (P,) the flux integrand's change with the background fitted over a window twice as wide
    D1: np.ndarray | None
    shortcut: np.ndarray  # (P,) ρ c_p Δθ profile integrals, nominal
    measured_current: bool
    mean_current: np.ndarray | None  # (2,) m/s, measured
    filled_bins: int
    background_samples: int
    extrapolated: float  # fraction of layer samples outside the background's σ0 range
    vent_depth: float | None
    bin_size: float
    factor: float
    tracer: str
    notes: list = field(default_factory=list)
    dropped: dict = field(default_factory=dict)  # variable -> samples dropped for a missing value
    n_dropped: int = 0
    forced_band: tuple | None = None  # (top, bottom) depth, m, of a band given from outside (a box's common band)
    normal: np.ndarray | None = None  # (2,) unit normal (east, north) of the section
    profile_east: np.ndarray | None = None  # (P,) mean position of each profile, m (local)
    profile_north: np.ndarray | None = None
    # per-sample arrays kept for figures
    sample_depth: np.ndarray | None = None
    sample_dtheta: np.ndarray | None = None
    sample_sigma0: np.ndarray | None = None
    sample_theta: np.ndarray | None = None
    sample_background: np.ndarray | None = None
    sample_profile: np.ndarray | None = None
    sample_is_background: np.ndarray | None = None

    @property
    def found(self):
        return self.layer.found

    def height(self, level: str) -> float:
        """Nominal rise height above the vent, m, of the section's mean layer top/core/bottom."""
        d = {"top": self.top_depth, "core": self.core_depth, "bottom": self.bottom_depth}[LEVELS[level]]
        return float(self.vent_depth - np.nanmean(d[self.found]))

    def height_sd(self, level: str) -> float:
        """Standard uncertainty, m, of ``height(level)``: the standard error of the mean over the profiles with a
        layer and the bin's resolution (uniform over one bin, sd = bin/√12), in quadrature."""
        d = {"top": self.top_depth, "core": self.core_depth, "bottom": self.bottom_depth}[LEVELS[level]]
        d = d[self.found]
        return float(np.sqrt(np.var(d, ddof=1) / d.size + self.bin_size ** 2 / 12.0))

    def rows(self):
        """One row per profile: position, layer depths and heights, peak anomaly."""
        out = []
        for p in range(self.n_profiles):
            r = {"profile": p + 1, "distance [m]": float(self.s[p]), "layer": bool(self.found[p])}
            for name, d in (("top", self.top_depth), ("core", self.core_depth), ("bottom", self.bottom_depth)):
                r[f"{name}_depth [m]"] = float(d[p])
                if self.vent_depth is not None:
                    r[f"{name}_height [m]"] = float(self.vent_depth - d[p])
            r["peak_dtheta [mK]"] = float(1e3 * np.nanmax(self.dtheta_grid[p])) if np.isfinite(
                self.dtheta_grid[p]).any() else float("nan")
            out.append(r)
        return out


def analyse_section(data, vent_depth=None, current_direction=None, factor=3.0, bin_size=5.0, degree=2,
                    tracer="temperature", margin=None, min_span=20.0, band_depths=None,
                    outward=None) -> SectionAnalysis:
    """Nominal analysis of one section (floats in the units named; see the module notes).

    Parameters
    ----------
    data : SectionData
    vent_depth : float, optional
        Depth of the vent, m (rise heights are measured from it).
    current_direction : float, optional
        Bearing toward which a constant current flows, degrees clockwise from north (orients the normal).
    factor : float
        Detection threshold in background-noise sds.
    bin_size : float
        Depth-bin thickness, m.
    degree : int
        Degree of the background polynomial θ(σ₀).
    tracer : {"temperature", "optical", "either"}
    margin : float, optional
        Band margin, m, each side (default half the band's thickness).
    min_span : float
        Smallest pressure span of a profile, dbar.
    band_depths : (float, float), optional
        Top and bottom depth, m, of the flux integral, given instead of found from the layer (a closed box
        integrates every section over one band, including sections the layer does not reach).
    outward : (float, float), optional
        A horizontal direction (east, north) the section's normal is to point along (a box's outward side);
        without it the normal points downstream.
    """
    if tracer not in TRACERS:
        raise InputError("tracer", tracer, "one of " + ", ".join(TRACERS))
    if degree not in DEGREES:
        raise InputError("degree", degree, "1 or 2")
    if tracer != "temperature" and data.optical is None:
        raise InputError("tracer", tracer, "'temperature' (the section has no optical column)", where=data.source)
    st = an.teos10_state(data)
    prof, excluded = an.profile_numbers(data, min_span=min_span)
    P = int(prof.max()) + 1
    edges = bin_edges(st.depth, bin_size)
    depth = 0.5 * (edges[:-1] + edges[1:])
    zi = np.clip(np.searchsorted(edges, st.depth, side="right") - 1, 0, depth.size - 1)
    notes = list(data.notes)
    if data.dropped_note():
        notes.append(data.dropped_note())
    if excluded:
        notes.append(f"{excluded} samples at turnarounds (profiles spanning < {min_span:g} dbar) left out.")

    # pass 1: every sample, warm outliers clipped
    mask = prof >= 0
    for _ in range(5):
        sums = an.background_sums(st, prof, mask, degree, P)
        beta = an.solve_background(sums)
        dth, _ = an.anomalies(st, sums, beta)
        noise = an.robust_sd(dth[mask])
        new = (prof >= 0) & (dth < 3.0 * noise + np.median(dth[mask]))
        if np.array_equal(new, mask):
            break
        mask = new
    layer, band, opt_bg, opt_noise, score_of = _detect(st, data, prof, P, edges, dth, mask, noise, factor, tracer)
    forced = None
    if band_depths is not None:
        top, bottom = sorted(float(b) for b in band_depths)
        if top > depth[-1] or bottom < depth[0]:
            raise InputError("band", f"{top:g} to {bottom:g} m", f"depths within the section's {edges[0]:g} to "
                             f"{edges[-1]:g} m", where=data.source)
        forced = (int(np.clip(np.searchsorted(edges, top, side="right") - 1, 0, depth.size - 1)),
                  int(np.clip(np.searchsorted(edges, bottom, side="left") - 1, 0, depth.size - 1)))
        band = forced
    # pass 2: background proper
    if layer.found.any() or forced is not None:
        mask = _background_mask(prof, zi, band)
        sums = an.background_sums(st, prof, mask, degree, P)
        beta = an.solve_background(sums)
        dth, _ = an.anomalies(st, sums, beta)
        noise = an.robust_sd(dth[mask])
        layer, band, opt_bg, opt_noise, score_of = _detect(st, data, prof, P, edges, dth, mask, noise, factor,
                                                           tracer)
        band = forced if forced is not None else band
    dth, _ = an.anomalies(st, sums, beta)
    # the fit's reach: the same fit over a window twice as wide
    sums_alt = an.background_sums(st, prof, _background_mask(prof, zi, band, 2.0) if (
        layer.found.any() or forced is not None) else mask,
                                  degree, P)
    bg_shift = (st.CT - an.anomalies(st, sums, beta)[1]) - (st.CT - an.anomalies(st, sums_alt, an.solve_background(
        sums_alt))[1])
    if not noise > 0:
        raise InputError("background", "no scatter about the θ–σ0 fit", "a section with sensor noise (a "
                         "noiseless record cannot set a detection threshold)", where=data.source)
    _, g = bin_profiles(prof, st.depth, edges, P, dtheta=dth)
    dtheta_grid = g["dtheta"]
    found = layer.found
    td, cd, bd = (np.where(found, depth[np.maximum(i, 0)], np.nan) for i in (layer.top, layer.core, layer.bottom))

    # σ0 coverage of the background over the layer's samples
    in_layer = (prof >= 0) & layer.mask[np.maximum(prof, 0), zi]
    bg_sig = st.sigma0[mask]
    extrap = float(np.mean((st.sigma0[in_layer] < bg_sig.min()) | (st.sigma0[in_layer] > bg_sig.max()))) \
        if in_layer.any() else 0.0
    if extrap > 0.05:
        notes.append(f"The background θ–σ0 fit is extrapolated to {100 * extrap:.0f} % of the layer's samples "
                     "(no water of their density away from the plume): the anomaly there rests on the fit's form.")

    # flux integrals over the band
    measured = data.current_east is not None
    down = None
    if measured:
        down = np.array([np.mean(data.current_east), np.mean(data.current_north)])
    elif current_direction is not None:
        b = np.radians(current_direction)
        down = np.array([np.sin(b), np.cos(b)])
    geo = section_geometry(data.east, data.north, prof, P, downstream=down if outward is None else
                           np.asarray(outward, float))
    lo, hi = band
    if not found.any() and forced is None:
        lo, hi = 0, -1
        notes.append("No plume layer exceeds the threshold on any profile: no rise height, flux not computed.")
    X = sums.basis(st.sigma0)
    un = (data.current_east * geo.normal[0] + data.current_north * geo.normal[1]) if measured else 1.0
    wts = st.rho * CP0
    cols = {"A": wts * un * st.CT, "C": (wts * un)[:, None] * X, "D": wts * un * bg_shift,
            "S": st.rho * st.cp * un * dth}
    if measured:
        cols.update(A1=wts * st.CT, C1=wts[:, None] * X, D1=wts * bg_shift)
    _, gr = bin_profiles(prof, st.depth, edges, P, **cols)
    filled = 0
    integ = {}
    for name, arr in gr.items():
        part = arr[:, lo:hi + 1]
        if part.shape[1]:
            part, nf = fill_along_section(part, geo.s)
            filled = max(filled, nf)
        integ[name] = np.nansum(part, axis=1) * bin_size
    if filled:
        notes.append(f"{filled} depth bins of the band were not sampled by their profile and were filled by "
                     "linear interpolation along the section.")
    if found.any() and (found[np.argmin(geo.s)] or found[np.argmax(geo.s)]):
        notes.append("The layer reaches an end of the section: the flux across it is a lower bound.")
    return SectionAnalysis(
        source=data.source, n_samples=data.size, n_profiles=P, excluded_turnaround=excluded, edges=edges,
        depth=depth, s=geo.s, normal_bearing=geo.normal_bearing, beta=beta, sums=sums, noise=noise,
        optical_noise=opt_noise, optical_background=opt_bg, dtheta_grid=dtheta_grid,
        optical_grid=score_of.get("optical"), layer=layer, top_depth=td, core_depth=cd, bottom_depth=bd,
        band=(lo, hi), A=integ["A"], C=integ["C"], A1=integ.get("A1"), C1=integ.get("C1"), shortcut=integ["S"],
        D=integ["D"], D1=integ.get("D1"),
        forced_band=None if forced is None else (float(edges[forced[0]]), float(edges[forced[1] + 1])),
        measured_current=measured, mean_current=down if measured else None, filled_bins=filled,
        background_samples=int(mask.sum()), extrapolated=extrap, vent_depth=vent_depth, bin_size=bin_size,
        factor=factor, tracer=tracer, notes=notes, dropped=dict(data.dropped), n_dropped=data.n_dropped,
        normal=geo.normal, profile_east=geo.east, profile_north=geo.north, sample_depth=st.depth, sample_dtheta=dth,
        sample_sigma0=st.sigma0, sample_theta=st.theta,
        sample_background=st.theta - dth, sample_profile=prof, sample_is_background=mask)


def _background_mask(prof, zi, band, widen=1.0):
    """Samples outside the band, within the background window (times ``widen``) above and below it."""
    w = max(BACKGROUND_MIN_BINS, int(np.ceil(widen * BACKGROUND_WINDOW * (band[1] - band[0] + 1))))
    return (prof >= 0) & (((zi < band[0]) & (zi >= band[0] - w)) | ((zi > band[1]) & (zi <= band[1] + w)))


def _margin(band, bin_size, margin):
    return 0.5 * (band[1] - band[0] + 1) * bin_size if margin is None else float(margin)


def _detect(st, data, prof, P, edges, dth, mask, noise, factor, tracer):
    cols = {"dtheta": dth}
    opt_bg = opt_noise = None
    if data.optical is not None:
        opt_bg = float(np.median(data.optical[mask]))
        opt_noise = an.robust_sd(data.optical[mask])
        cols["optical"] = data.optical - opt_bg
    _, g = bin_profiles(prof, st.depth, edges, P, **cols)
    score = g["dtheta"] / (factor * noise) if noise > 0 else np.zeros_like(g["dtheta"])
    if tracer != "temperature":
        so = g["optical"] / (factor * opt_noise) if opt_noise and opt_noise > 0 else np.zeros_like(score)
        score = so if tracer == "optical" else np.fmax(score, so)
    layer = detect_layer(score)
    f = layer.found
    band = (int(layer.top[f].min()), int(layer.bottom[f].max())) if f.any() else (0, -1)
    if f.any():
        m = int(np.ceil(_margin(band, edges[1] - edges[0], None) / (edges[1] - edges[0])))
        band = (max(0, band[0] - m), min(edges.size - 2, band[1] + m))
    return layer, band, opt_bg, opt_noise, g


# ----------------------------------------------------------------------------- uncertainty


def section_draws(draws, key, n_profiles, current=None, current_direction=None, current_uncertainty=None,
                  vent_depth=None, bin_size=5.0, current_variability=None, shared_key=None):
    """Every random input of one section, drawn through the core's shared draws (one place to change).

    Parameters
    ----------
    draws : ventflux.aggregate.SharedDraws
    key : str
        The section's key path (names its own inputs, e.g. ``water_column/profile bootstrap 3``).
    current, current_direction, vent_depth
        Survey values (quantities, ``Uncertain`` or ``SharedRef``), or None. ``propagate_sections`` passes
        None and draws them through the propagation driver instead.
    current_uncertainty : pint.Quantity, optional
        A measured current's accuracy (standard deviation of each horizontal component).
    current_variability : array (2, 2), optional
        Covariance, (m/s)², of the east and north components of a current record during the section
        (``currents.RecordMatch.covariance``).
    shared_key : str, optional
        Key of the inputs a box's sections share (current, its accuracy and variability, the background
        window, the vent depth): one draw of each for every section. Default ``key``.

    Returns
    -------
    dict
        ``picks`` (n, P), ``offset`` (2, n) m/s horizontal current offset (or None), ``window`` (n,),
        ``resolution`` {level: (n,)} m, and ``current``, ``current_direction``, ``vent_depth`` (n,) if given.
    """
    from ventflux.plugin_api import Q_, nominal_of, normal, resolve, uniform

    n = draws.n_draws
    skey = key if shared_key is None else shared_key
    u = draws.draw_each([f"{key}/profile bootstrap {i + 1}" for i in range(n_profiles)],
                        [uniform(Q_(0.0, ""), Q_(1.0, ""))] * n_profiles, "")
    picks = np.minimum((u.magnitude.T * n_profiles).astype(int), n_profiles - 1)  # (n, P)
    out = {"picks": picks}

    def mag(value, name, unit):
        if value is None:
            return None
        return np.broadcast_to(np.asarray(resolve(value, f"{skey}/{name}", draws).to(unit).magnitude, float), (n,))

    out["current"] = mag(current, "current", "m/s")
    out["current_direction"] = mag(current_direction, "current_direction", "degree")
    out["nominal"] = {name: None if v is None else float(nominal_of(v).to(unit).magnitude)
                      for name, v, unit in (("current", current, "m/s"), ("current_direction", current_direction,
                                                                              "degree"))}
    std = normal(Q_(0.0, ""), Q_(1.0, ""))

    def unit_normals(name):
        return np.stack([np.asarray(draws.draw(f"{skey}/{name} {c}", std).to("").magnitude, float)
                         for c in ("east", "north")])

    offset = None
    if current_uncertainty is not None:  # the instrument: isotropic, sd per component
        offset = current_uncertainty.to("m/s").magnitude * unit_normals("current accuracy")
    if current_variability is not None:  # the record's variability: its own covariance (module notes, currents)
        w, v = np.linalg.eigh(np.asarray(current_variability, float))
        root = v * np.sqrt(np.clip(w, 0.0, None))
        d = root @ unit_normals("current variability")
        offset = d if offset is None else offset + d
    out["offset"] = offset
    out["vent_depth"] = mag(vent_depth, "vent_depth", "m")
    out["window"] = draws.draw(f"{skey}/background window", uniform(Q_(-1.0, ""), Q_(1.0, ""))).to("").magnitude
    half = 0.5 * bin_size  # the bounds made as quantities: pint's stubs type a negated one as a PlainQuantity
    out["resolution"] = {lvl: draws.draw(f"{key}/{lvl} bin resolution",
                                         uniform(Q_(-half, "m"), Q_(half, "m"))).to("m").magnitude
                         for lvl in ("top", "core", "bottom")}
    return out


@dataclass
class SectionDraws:
    """Draws of the section's heat flux (W) and rise heights (m), with the parts of the flux's spread."""

    heat_flux: np.ndarray  # (n,)
    heights: dict  # level -> (n,)
    parts: dict  # name -> (n,) draws with only that source varying
    nominal_heat_flux: float
    shortcut_heat_flux: float
    failed: int
    unphysical: int = 0  # draws dropped by the propagation's policy (impossible inputs)
    n_draws: int = 0


def draw_section(res: SectionAnalysis, drawn) -> SectionDraws:
    """Propagate the drawn inputs (``section_draws``) through the section's nominal analysis."""
    picks = drawn["picks"]
    n, P = picks.shape
    W, N = bootstrap_weights(res.s, picks)
    order = np.argsort(res.s)
    w0 = np.empty(P)
    w0[order] = trapezoid_weights(res.s[order])
    beta_b = an.solve_background(res.sums, N)[:, :, 1]  # CT column, refit on the drawn profiles
    beta0 = res.beta[:, 1]
    if res.measured_current:
        speed, speed0 = 1.0, 1.0
        vec = drawn.get("offset")
        if vec is None:
            off = np.zeros(n)
            msg = ("The measured current's uncertainty was not given (current_uncertainty): the heat flux's "
                   "interval leaves it out.")
            if msg not in res.notes:
                res.notes.append(msg)
        else:
            nrm = res.normal if res.normal is not None else np.array([np.sin(np.radians(res.normal_bearing)),
                                                                      np.cos(np.radians(res.normal_bearing))])
            off = vec[0] * nrm[0] + vec[1] * nrm[1]
        off0 = 0.0
        args = {"A1": res.A1, "C1": res.C1}
        window_args = {"A1": res.A1 + drawn["window"][:, None] * res.D1, "C1": res.C1}
    else:
        if drawn["current"] is None:
            raise InputError("current", "(missing)", "a current speed (and direction), or current columns in the "
                             "section file")
        bearing, nom = drawn["current_direction"], drawn["nominal"]
        cosang = np.ones(n) if bearing is None else np.cos(np.radians(bearing - res.normal_bearing))
        speed = drawn["current"] * cosang
        speed0 = nom["current"] * (1.0 if bearing is None else float(
            np.cos(np.radians(nom["current_direction"] - res.normal_bearing))))
        off = off0 = None  # type: ignore[assignment]  # a constant current has no offset
        args = window_args = {}

    def H(beta, Wt, sp, of, window=False):
        if window:  # the background's reach: shifted by u ∈ [−1, 1] of the change with a window twice as wide
            return heat_flux(res.A + drawn["window"][:, None] * res.D, res.C, beta, Wt, sp, offset=of,
                             **window_args)
        return heat_flux(res.A, res.C, beta, Wt, sp, offset=of, **args)

    total = H(beta_b, W, speed, off, window=True)
    nominal = float(H(beta0, w0, speed0, off0))
    parts = {"profile sampling": H(beta0, W, speed0, off0),  # the bootstrap over profiles
             "background fit": H(beta_b, w0, speed0, off0),
             "current": H(beta0, w0, speed, off),
             "background window": H(beta0, w0, speed0, off0, window=True)}  # against one twice as wide
    if not res.found.any() and res.forced_band is None:  # nothing integrated: a zero would read as measured
        nan = np.full(n, np.nan)
        total, nominal, parts = nan, float("nan"), {k: nan for k in parts}
    failed = int((~np.isfinite(total)).sum()) if res.found.any() else 0
    heights = {}
    if res.found.any() and (res.vent_depth is not None or drawn["vent_depth"] is not None):
        vd = drawn["vent_depth"] if drawn["vent_depth"] is not None else np.full(n, res.vent_depth)
        for lvl, name in (("maximum", "top"), ("spreading", "core"), ("bottom", "bottom")):
            dp = {"top": res.top_depth, "core": res.core_depth, "bottom": res.bottom_depth}[name][picks]
            cnt = np.isfinite(dp).sum(axis=1)  # a draw that picked no profile with a layer has no height
            with np.errstate(invalid="ignore", divide="ignore"):
                mean = np.where(cnt > 0, np.nansum(dp, axis=1) / cnt, np.nan)
            heights[lvl] = vd - mean + drawn["resolution"][name]
    shortcut = float(np.sum(w0 * res.shortcut) * speed0) if np.isfinite(nominal) else float("nan")
    return SectionDraws(heat_flux=total, heights=heights, parts=parts, nominal_heat_flux=nominal,
                        shortcut_heat_flux=shortcut, failed=failed, n_draws=n)


def _named(value, name):
    """``(stream name, value)`` of a survey value: a ``[shared]`` reference is drawn under its shared name."""
    from ventflux.plugin_api import SharedRef

    if isinstance(value, SharedRef):
        return "shared/" + value.name, value.value
    return name, value


def _physical(args):
    """Draws the estimator can evaluate: a current speed ≥ 0, a vent depth > 0, a background that can be fitted."""
    ok = np.ones(np.shape(args["u"].magnitude)[-1] if np.ndim(args["u"].magnitude) else 1, bool)
    for name, lo, strict in (("current", 0.0, False), ("vent_depth", 0.0, True)):
        v = args.get(name)
        if v is None:
            continue
        m = np.asarray(v.magnitude, float)
        ok = ok & ((m > lo) if strict else (m >= lo))
    return ok


def propagate_sections(results, keys, draws, policy, *, current=None, current_direction=None,
                       current_uncertainty=None, current_variability=None, vent_depth=None, shared_key=None):
    """Draws of one section's or a closed box's heat flux, through the one propagation driver.

    The current, its direction and the vent depth are inputs of ``ventflux.plugin_api.propagate`` (drawn
    once per draw under the shared key, shared by every section, impossible draws dropped and counted by
    ``policy``); each section's bootstrap over its profiles is its own; the current's accuracy and
    variability and the background window are drawn once per draw for all sections (``section_draws``).

    Parameters
    ----------
    results : list of SectionAnalysis
    keys : list of str
        One key per section (names its bootstrap streams).
    draws : SharedDraws
    policy : UnphysicalPolicy
    current, current_direction, vent_depth
        Survey values or None.
    current_uncertainty : pint.Quantity, optional
    current_variability : list of (2, 2) arrays or None, optional
        Per section (a box's sections share one record; its covariance over the box's time is the same).

    Returns
    -------
    (list of SectionDraws, SectionDraws)
        Each section's draws and the sum over the sections, on all ``n_draws`` (NaN where dropped).
    """
    from ventflux.plugin_api import Q_, propagate

    skey = shared_key or keys[0]
    n = draws.n_draws
    variability = current_variability or [None] * len(results)
    drawn = [section_draws(draws, k, r.n_profiles, current_uncertainty=current_uncertainty,
                           current_variability=v, bin_size=r.bin_size, shared_key=skey)
             for r, k, v in zip(results, keys, variability)]
    inputs, names = {"u": Q_(np.arange(n, dtype=float), "")}, {}
    given = {"u": inputs.pop("u")}  # the draw index: subset with the kept draws
    for name, value in (("current", current), ("current_direction", current_direction), ("vent_depth", vent_depth)):
        if value is not None:
            names[name], inputs[name] = _named(value, f"{skey}/{name}")
    from ventflux.plugin_api import nominal_of

    nominal = {name: None if v is None else float(nominal_of(v).to(unit).magnitude)
               for name, v, unit in (("current", current, "m/s"), ("current_direction", current_direction, "degree"))}

    def estimator(u, current=None, current_direction=None, vent_depth=None):
        idx = np.asarray(u.magnitude, int)
        out = []
        for r, d in zip(results, drawn):
            sub = {"picks": d["picks"][idx], "window": d["window"][idx],
                   "offset": None if d["offset"] is None else d["offset"][:, idx],
                   "resolution": {k: v[idx] for k, v in d["resolution"].items()}, "nominal": nominal}
            for name, v, unit in (("current", current, "m/s"), ("current_direction", current_direction, "degree"),
                                  ("vent_depth", vent_depth, "m")):
                sub[name] = None if v is None else np.broadcast_to(np.asarray(v.to(unit).magnitude, float),
                                                                   idx.shape)
            out.append(draw_section(r, sub))
        return out

    def physical(args):  # and, per section, a background that the drawn profiles can fit
        ok = _physical(args)
        idx = np.asarray(args["u"].magnitude, int)
        for r, d in zip(results, drawn):
            _, counts = bootstrap_weights(r.s, d["picks"][idx])
            ok = ok & np.isfinite(an.solve_background(r.sums, counts)).all(axis=(1, 2))
        return ok

    prop = propagate(estimator, inputs, names=names, draws=draws, physical=physical, max_unphysical=policy,
                     drawn=given)

    def full(a):
        return prop.expand(Q_(np.asarray(a, float), "")).magnitude

    per = []
    for sd in prop.result:
        per.append(SectionDraws(heat_flux=full(sd.heat_flux), heights={k: full(v) for k, v in sd.heights.items()},
                                parts={k: full(v) for k, v in sd.parts.items()},
                                nominal_heat_flux=sd.nominal_heat_flux, shortcut_heat_flux=sd.shortcut_heat_flux,
                                failed=sd.failed, unphysical=prop.unphysical, n_draws=n))
    if len(per) == 1:
        return per, per[0]
    heat_flux = sum(p.heat_flux for p in per)
    assert isinstance(heat_flux, np.ndarray)  # two sections or more: a sum of arrays, not the empty sum 0
    total = SectionDraws(heat_flux=heat_flux, heights={},
                         parts={k: sum(p.parts[k] for p in per) for k in per[0].parts},
                         nominal_heat_flux=float(sum(p.nominal_heat_flux for p in per)),
                         shortcut_heat_flux=float(sum(p.shortcut_heat_flux for p in per)),
                         failed=int(sum(p.failed for p in per)), unphysical=prop.unphysical, n_draws=n)
    return per, total
