"""Jet products: centreline velocity profile, exit velocity, and the clip-to-result pipeline.

Heights ``z`` are measured up from the orifice (the image's up). The
centreline at each height is the column of the largest time-averaged upward
velocity (within an optional half-width of the orifice); its spread is the
standard deviation over frame pairs there, and the profile's lateral width the
second moment of the positive upward velocity across the row. The exit
velocity is the centreline velocity extrapolated to ``z = 0`` by a weighted
straight-line fit over the lowest heights (common practice, no source); it is
an estimate of the centreline speed at the orifice, which the orifice method
takes as the exit velocity.

Two corrections turn the measured centreline speed into the plume's
centreline speed, each reported per height with its factor:

* Window averaging. A window of ``L`` px averages the velocity across the
  jet; for a Gaussian lateral profile of half-width ``b`` the centre value is
  lowered by ``sqrt(pi) (b/L) erf(L/(2b))`` (the box average of a Gaussian).
  ``b`` comes from the measured profile, whose lateral variance is the jet's
  plus the window's ``L^2/12``: its three values around the centreline give
  the measured width (a Gaussian through three points).
* Line of sight (``view="volume"``, the default for dive video): the camera
  sees the tracer through the whole plume; ``sightline`` gives the factor
  between the apparent and the centreline speed, with the tracer-to-velocity
  width ratio ``λ`` and the tracer pattern's width measured on the clip.
  ``view="sheet"`` (a light sheet through the axis) has no such factor.

A jet narrower than about two windows (full width at half maximum of the
measured profile below ``2 L`` at the heights of the exit estimate) is
flagged, with the window size that would resolve it: the averaging
correction is then large and the exit speed uncertain.

Perspective is not corrected: the scale is assumed uniform over the region,
true when the camera looks square-on at the jet's plane.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ventflux.plugin_api import InputError
from ventflux.plugin_api import Q_, magnitude, parse_quantity

from .plume import DEFAULT_PLUME_CONSTANT, PlumeFit, buoyancy_flux_from_centreline, heat_power_from_buoyancy_flux
from .sightline import DEFAULT_VIEW, DEFAULT_WIDTH_RATIO_RANGE, check_view

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import pint

    from .averaging import MeanField

#: Nominal tracer-to-velocity width ratio: the middle of the default range (sightline).
DEFAULT_WIDTH_RATIO = 0.5 * sum(DEFAULT_WIDTH_RATIO_RANGE)
#: A jet narrower than this many windows (full width at half maximum) is flagged (the issue's "about two").
NARROW_JET_WINDOWS = 2.0
#: Correlation settings of a jet's analysis unless given: window sizes of the passes [px], the windows' overlap
#: and the tracking mode's search radius [px] (those of ``averaging.mean_field_of_clip``).
DEFAULT_PASSES = (64, 32, 32)
DEFAULT_OVERLAP = 0.5
DEFAULT_SEARCH_RADIUS = 3.0


@dataclass
class CentrelineProfile:
    """Upward centreline velocity by height above the orifice."""

    height: pint.Quantity  # m
    velocity: pint.Quantity  # m/s, time mean
    velocity_sd: pint.Quantity  # m/s, sd over frame pairs
    velocity_se: pint.Quantity  # m/s, standard error of the mean
    samples: np.ndarray  # valid pairs at each point
    centre_x: np.ndarray  # column of the centreline, full-frame pixels
    half_width: pint.Quantity  # m, lateral sd of the upward-velocity profile
    lateral_sd_px: np.ndarray | None = None  # px, Gaussian sd through the 3 values around the centreline
    apparent_velocity: pint.Quantity | None = None  # m/s, as measured, before the corrections
    window_factor: np.ndarray | None = None  # measured over point centreline speed (window averaging)
    sightline_factor: np.ndarray | None = None  # apparent over centreline speed (line of sight; 1 for a sheet)


def centreline_profile(mean_field, metres_per_pixel, orifice_xy, search_half_width=None) -> CentrelineProfile:
    """Centreline upward velocity ``w_c(z)`` above an orifice from a time-averaged field.

    Parameters
    ----------
    mean_field : ventflux_video.averaging.MeanField
    metres_per_pixel : pint.Quantity
        Length of one pixel.
    orifice_xy : (float, float)
        Column and row of the orifice in full-frame pixels.
    search_half_width : pint.Quantity, optional
        Look for the centreline only this far either side of the orifice.

    Returns
    -------
    CentrelineProfile
        Heights above the orifice, lowest first.
    """
    mpp = magnitude(metres_per_pixel, "m", "length", "metres per pixel")
    ox, oy = (float(v) for v in orifice_xy)
    u, w, u_sd, w_sd = mean_field.velocity(metres_per_pixel)
    w, w_sd = w.to("m/s").magnitude, w_sd.to("m/s").magnitude
    above = mean_field.y < oy
    if not above.any():
        raise InputError("--orifice", f"{ox:g},{oy:g}",
                         "an orifice below some of the region's window centres (row larger)")
    cols = np.ones(mean_field.x.size, bool)
    if search_half_width is not None:
        hw = magnitude(search_half_width, "m", "length", "search half-width") / mpp
        cols = np.abs(mean_field.x - ox) <= hw
        if not cols.any():
            raise InputError("search half-width", f"{search_half_width:~P}", "a width that reaches a window column")
    rows = np.flatnonzero(above)[::-1]  # lowest (largest row) first
    ww = np.where(cols[None, :], w[rows], -np.inf)
    ww = np.where(np.isfinite(ww), ww, -np.inf)
    j = np.argmax(ww, axis=1)
    wc = w[rows, j]
    sd = w_sd[rows, j]
    n = mean_field.count[rows, j]
    with np.errstate(invalid="ignore", divide="ignore"):
        se = sd / np.sqrt(n)
        pos = np.where(cols[None, :] & np.isfinite(w[rows]), np.clip(w[rows], 0, None), 0.0)
        xc = (pos * mean_field.x).sum(axis=1) / pos.sum(axis=1)
        spread = np.sqrt((pos * (mean_field.x[None, :] - xc[:, None]) ** 2).sum(axis=1) / pos.sum(axis=1))
        # Gaussian through the centre value and its two neighbours: ln(w0/w-) + ln(w0/w+) = step^2 / sd^2.
        left = w[rows, np.clip(j - 1, 0, None)]
        right = w[rows, np.clip(j + 1, None, w.shape[1] - 1)]
        drop = np.log(wc / left) + np.log(wc / right)
        step = float(np.median(np.diff(mean_field.x))) if mean_field.x.size > 1 else np.nan
        lateral = np.where((j > 0) & (j < w.shape[1] - 1) & (left > 0) & (right > 0) & (drop > 0),
                           step / np.sqrt(drop), np.nan)
    return CentrelineProfile(
        height=Q_((oy - mean_field.y[rows]) * mpp, "m"),
        velocity=Q_(wc, "m/s"),
        velocity_sd=Q_(sd, "m/s"),
        velocity_se=Q_(se, "m/s"),
        samples=n,
        centre_x=mean_field.x[j],
        half_width=Q_(spread * mpp, "m"),
        lateral_sd_px=_running_median(lateral, 5),
    )


def _running_median(values, n):
    """Median over ``n`` neighbouring heights (NaN ignored): the three-point width is noisy height by height."""
    v = np.asarray(values, float)
    if v.size == 0:
        return v
    pad = np.pad(v, n // 2, mode="edge")
    win = np.lib.stride_tricks.sliding_window_view(pad, n)
    with np.errstate(invalid="ignore"):
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            return np.nanmedian(win, axis=1)


def window_factor(lateral_sd_px, window):
    """Measured over point centreline speed for a Gaussian jet seen through ``window`` px windows (module notes).

    ``lateral_sd_px`` is the measured lateral standard deviation (window blur
    included); NaN where the jet is not resolved (measured variance ≤ L²/12).
    """
    var = np.asarray(lateral_sd_px, float) ** 2 - window**2 / 12.0
    with np.errstate(invalid="ignore", divide="ignore"):
        b = np.sqrt(2.0 * np.where(var > 0, var, np.nan))  # 1/e half-width
        from scipy.special import erf

        return np.sqrt(np.pi) * b / window * erf(window / (2.0 * b))


def corrected_profile(profile: CentrelineProfile, interval, metres_per_pixel, window, view=DEFAULT_VIEW,
                      width_ratio=DEFAULT_WIDTH_RATIO, pattern_width=None) -> CentrelineProfile:
    """The centreline profile corrected for window averaging and, for a volume view, the line of sight.

    Parameters
    ----------
    profile : CentrelineProfile
        As measured (``centreline_profile``).
    interval : pint.Quantity
        Time between the frames of a pair.
    metres_per_pixel : pint.Quantity
    window : int
        Final window size, px.
    view : {"volume", "sheet"}
    width_ratio : float
        Tracer-to-velocity width ratio ``λ`` (volume view).
    pattern_width : float, optional
        Tracer pattern's autocorrelation width, px (``MeanField.pattern_width``).

    Returns
    -------
    CentrelineProfile
        With ``apparent_velocity``, ``window_factor`` and ``sightline_factor`` set;
        a height whose window factor cannot be found (jet unresolved) keeps
        factor 1 there and is flagged by ``narrow_jet``.
    """
    from dataclasses import replace

    from .sightline import centreline_displacement

    check_view(view)
    w = profile.velocity.to("m/s").magnitude
    px_per_pair = magnitude(interval, "s", "time", "frame interval") / magnitude(metres_per_pixel, "m", "length")
    fw = window_factor(profile.lateral_sd_px, window) if profile.lateral_sd_px is not None else np.ones_like(w)
    fw = np.where(np.isfinite(fw) & (fw > 0), fw, 1.0)
    point = w * px_per_pair / fw  # apparent displacement at the window centre, px
    if view == "volume":
        with np.errstate(invalid="ignore", divide="ignore"):
            fs = point / centreline_displacement(point, width_ratio, pattern_width)
        fs = np.where(np.isfinite(fs) & (fs > 0), fs, 1.0)
    else:
        fs = np.ones_like(w)
    total = fw * fs
    return replace(profile, velocity=Q_(w / total, "m/s"), velocity_sd=profile.velocity_sd / total,
                   velocity_se=profile.velocity_se / total, apparent_velocity=profile.velocity, window_factor=fw,
                   sightline_factor=fs)


def narrow_jet(profile: CentrelineProfile, window, points=4):
    """A one-line reason if the jet is narrower than ``NARROW_JET_WINDOWS`` windows at the exit heights, else None."""
    lat = profile.lateral_sd_px
    if lat is None:
        return None
    z = profile.height.to("m").magnitude
    ok = np.isfinite(profile.velocity.to("m/s").magnitude) & np.isfinite(z)
    sd = lat[ok][:points]
    sd = sd[np.isfinite(sd)]
    fwhm = 2.0 * np.sqrt(2.0 * np.log(2.0)) * float(np.median(sd)) if sd.size else 0.0
    if fwhm >= NARROW_JET_WINDOWS * window:
        return None
    true_var = (fwhm / 2.3548) ** 2 - window**2 / 12.0
    true_fwhm = 2.3548 * np.sqrt(true_var) if true_var > 0 else 0.0
    suggest = int(2 * np.floor(true_fwhm / NARROW_JET_WINDOWS / 2)) if true_fwhm else 0
    hint = (f"use --windows {2 * suggest},{suggest},{suggest} (windows of {suggest} px)" if suggest >= 8 else
            "film it closer or at a higher resolution (windows under 8 px cannot resolve it)")
    return (f"jet narrower than {NARROW_JET_WINDOWS:g} windows at the exit heights (measured width at half "
            f"maximum {fwhm:.0f} px against {window} px windows): the exit velocity is uncertain; {hint}")


def exit_velocity(profile: CentrelineProfile, points=4):
    """Centreline velocity extrapolated to the orifice (``z = 0``) from the lowest ``points`` heights.

    A straight line is fitted by least squares weighted by each point's
    standard error; the standard deviation of the intercept is scaled by the
    residual scatter when that exceeds the stated errors (common practice, no source).

    Returns
    -------
    (pint.Quantity, pint.Quantity)
        Exit velocity and its standard deviation.
    """
    if not (isinstance(points, int) and points >= 2):
        raise InputError("--exit-points", points, "a whole number ≥ 2 of heights for the extrapolation")
    z = profile.height.to("m").magnitude
    w = profile.velocity.to("m/s").magnitude
    se = profile.velocity_se.to("m/s").magnitude
    ok = np.isfinite(w) & np.isfinite(z)
    if ok.sum() < points:
        raise InputError("--exit-points", points,
                         f"at most the {int(ok.sum())} heights with a velocity above the orifice")
    z, w, se = z[ok][:points], w[ok][:points], se[ok][:points]
    se = np.where(np.isfinite(se) & (se > 0), se, np.nanmax(np.r_[se[np.isfinite(se)], 1e-6]))
    wt = 1 / se**2
    A = np.stack([np.ones_like(z), z], axis=1)
    cov = np.linalg.inv(A.T @ (A * wt[:, None]))
    coef = cov @ (A.T @ (wt * w))
    dof = len(z) - 2
    if dof > 0:
        chi2 = float(np.sum(wt * (w - A @ coef) ** 2) / dof)
        cov = cov * max(chi2, 1.0)
    return Q_(float(coef[0]), "m/s"), Q_(float(np.sqrt(cov[0, 0])), "m/s")


def plume_buoyancy_flux(profile: CentrelineProfile, heights=None, plume_constant=DEFAULT_PLUME_CONSTANT) -> PlumeFit:
    """Fit pure-plume theory to the centreline profile within ``heights = (low, high)`` (quantities)."""
    z = profile.height.to("m").magnitude
    keep = np.isfinite(z) & (z > 0)
    if heights is not None:
        lo, hi = (magnitude(h, "m", "length", "plume fit heights") if h is not None else None for h in heights)
        if lo is not None:
            keep &= z >= lo
        if hi is not None:
            keep &= z <= hi
    return buoyancy_flux_from_centreline(profile.height[keep], profile.velocity[keep], profile.velocity_se[keep],
                                         plume_constant)


@dataclass
class JetAnalysis:
    """Everything ``analyze_jet_clip`` derives from one clip."""

    exit_velocity: pint.Quantity
    exit_velocity_sd: pint.Quantity
    buoyancy_flux: pint.Quantity
    buoyancy_flux_sd: pint.Quantity
    virtual_origin: pint.Quantity
    heat_power: pint.Quantity | None  # None without an ambient temperature and pressure
    heat_power_sd: pint.Quantity | None
    plume: PlumeFit
    profile: CentrelineProfile
    field: MeanField
    metres_per_pixel: pint.Quantity
    orifice_xy: tuple
    frame_rate: pint.Quantity
    view: str = DEFAULT_VIEW
    width_ratio: float = DEFAULT_WIDTH_RATIO
    flags: tuple = ()

    def as_dict(self):
        out = {
            "exit_velocity_m_s": self.exit_velocity.to("m/s").magnitude,
            "exit_velocity_sd_m_s": self.exit_velocity_sd.to("m/s").magnitude,
            "heat_power_W": None if self.heat_power is None else self.heat_power.to("W").magnitude,
            "heat_power_sd_W": None if self.heat_power_sd is None else self.heat_power_sd.to("W").magnitude,
            "pixel_size_m": self.metres_per_pixel.to("m").magnitude,
            "orifice_px": list(self.orifice_xy),
            "frame_rate_per_s": self.frame_rate.to("1/s").magnitude,
            "frame_pairs": self.field.pairs,
            "frames_skipped": self.field.skipped_frames,
            "frames_missing": self.field.missing_frames,
            "replaced_vector_fraction": self.field.replaced_fraction,
            "mode": self.field.mode,
            "frame_gaps": list(self.field.frame_gaps),
            "duplicate_frames": list(self.field.duplicate_frames),
            "variable_frame_rate": self.field.variable_rate,
            "background_removed": self.field.background_removed,
            "view": self.view,
            "tracer_to_velocity_width_ratio": self.width_ratio if self.view == "volume" else None,
            "pattern_width_px": self.field.pattern_width,
            "sightline_factor_median": float(np.median(self.profile.sightline_factor))
            if self.profile.sightline_factor is not None else 1.0,
            "window_factor_median": float(np.median(self.profile.window_factor))
            if self.profile.window_factor is not None else 1.0,
            "flags": list(self.flags),
        }
        out.update(self.plume.as_dict())
        return out


def analyze_jet_clip(path, metres_per_pixel, orifice_xy, roi=None, ambient_temperature=None, ambient_salinity=None,
                     pressure=None, latitude=None, frame_rate=None, passes=DEFAULT_PASSES, overlap=DEFAULT_OVERLAP,
                     gap=1, pairs=None, start=0, stop=None, plume_constant=DEFAULT_PLUME_CONSTANT, plume_heights=None,
                     exit_points=4, search_half_width=None, mode="correlation", search_radius=DEFAULT_SEARCH_RADIUS,
                     progress=False, view=DEFAULT_VIEW, width_ratio=DEFAULT_WIDTH_RATIO,
                     background="median", field=None) -> JetAnalysis:
    """Exit velocity, buoyancy flux and heat power of a vent jet from one clip.

    Parameters
    ----------
    path : str
        Video file, image folder or glob pattern.
    metres_per_pixel : pint.Quantity
        Pixel size (see ``ventflux_video.scale``).
    orifice_xy : (float, float)
        Orifice column and row in full-frame pixels.
    roi : Region or "LEFT,TOP,WIDTH,HEIGHT", optional
        Region of interest.
    ambient_temperature, ambient_salinity, pressure : pint.Quantity, optional
        Ambient seawater (in-situ temperature, practical salinity, absolute
        pressure) for the heat power; without them the heat power is ``None``.
    latitude : optional
        For local gravity.
    frame_rate : pint.Quantity, optional
        Override of the file's frame rate.
    passes, overlap, gap, pairs, start, stop
        Correlation settings and frame selection (``mean_displacement_field``).
    plume_constant : float
        ``k`` of ``w_c = k (F/(z - z0))^(1/3)`` (``plume.DEFAULT_PLUME_CONSTANT``).
    plume_heights : (pint.Quantity or None, pint.Quantity or None), optional
        Height range used for the plume fit.
    exit_points : int
        Lowest heights used for the exit-velocity extrapolation.
    search_half_width : pint.Quantity, optional
        Centreline search distance either side of the orifice.
    mode : {"correlation", "tracking"}
        Velocimetry mode.
    search_radius : float
        Tracking mode: search radius around each predicted position, pixels.
    progress : bool
        Progress bar.
    view : {"volume", "sheet"}
        ``volume`` (default): the camera sees the whole plume; centreline
        speeds are corrected for the line of sight (module notes).
    width_ratio : float
        Tracer-to-velocity width ratio ``λ`` for the volume view
        (``DEFAULT_WIDTH_RATIO``, the middle of ``sightline.DEFAULT_WIDTH_RATIO_RANGE``).
    background : {"median", "none"}
        Static-background removal before correlation (``averaging``).
    field : (ventflux_video.averaging.MeanField, pint.Quantity), optional
        The clip's mean field and frame rate when already computed by ``clip_field`` with these clip and
        correlation settings (a survey begins it while the file is checked, ``ventflux.ahead``); else computed
        here.

    Returns
    -------
    JetAnalysis
        ``flags`` names what puts a result in doubt (a narrow jet, frame gaps).
    """
    mpp = parse_quantity(metres_per_pixel, "length", "metres per pixel")
    check_scale(mpp)
    check_view(view)
    if field is None:
        field = clip_field(path, frame_rate, roi, start, stop, mode, passes, overlap, gap, pairs, search_radius,
                           background, progress)
    field, rate = field
    profile = corrected_profile(centreline_profile(field, mpp, orifice_xy, search_half_width), field.interval, mpp,
                                passes[-1], view, width_ratio, field.pattern_width)
    flags = [f for f in (narrow_jet(profile, passes[-1], exit_points), frame_flag(field)) if f]
    w0, w0_sd = exit_velocity(profile, exit_points)
    fit = plume_buoyancy_flux(profile, plume_heights, plume_constant)
    heat = heat_sd = None
    if ambient_temperature is not None and pressure is not None:
        salinity = 35.0 if ambient_salinity is None else ambient_salinity
        heat = heat_power_from_buoyancy_flux(fit.buoyancy_flux, ambient_temperature, salinity, pressure, latitude)
        heat_sd = heat * (fit.buoyancy_flux_sd / fit.buoyancy_flux).to("dimensionless").magnitude
    return JetAnalysis(w0, w0_sd, fit.buoyancy_flux, fit.buoyancy_flux_sd, fit.virtual_origin, heat, heat_sd, fit,
                       profile, field, mpp.to("m"), tuple(float(v) for v in orifice_xy), rate,
                       view, float(width_ratio), tuple(flags))


def clip_field(path, frame_rate=None, roi=None, start=0, stop=None, mode="correlation", passes=DEFAULT_PASSES,
               overlap=DEFAULT_OVERLAP, gap=1, pairs=None, search_radius=DEFAULT_SEARCH_RADIUS, background="median",
               progress=False):
    """The time-averaged displacement field of a clip (``averaging.mean_field_of_clip``) and the clip's frame rate;
    parameters as for ``analyze_jet_clip``. The part of a jet's analysis that takes long and depends on the clip
    alone."""
    from .averaging import mean_field_of_clip
    from .frames import FrameStream

    stream = FrameStream(path, frame_rate=frame_rate, region=roi, start=start, stop=stop, progress=progress)
    return mean_field_of_clip(stream, mode, passes, overlap, gap, pairs, search_radius, background), stream.frame_rate


def frame_flag(field):
    """A one-line note of missing or duplicate frame numbers in an image sequence, else None."""
    parts = []
    if field.frame_gaps:
        shown = ", ".join(map(str, field.frame_gaps[:5])) + (" ..." if len(field.frame_gaps) > 5 else "")
        parts.append(f"{len(field.frame_gaps)} frame number(s) missing ({shown}; pairs across them left out)")
    if field.duplicate_frames:
        parts.append(f"{len(field.duplicate_frames)} duplicate frame number(s) left out "
                     f"({', '.join(field.duplicate_frames[:3])})")
    return "; ".join(parts) or None


def check_scale(metres_per_pixel, field="--pixel-size"):
    """Refuse a zero, negative or non-finite pixel size."""
    v = metres_per_pixel.to("m").magnitude
    if not (np.isfinite(v) and v > 0):
        raise InputError(field, f"{metres_per_pixel:~P}", "a pixel size > 0, e.g. '0.5 mm'")
    return metres_per_pixel


def exit_velocity_from_clip(path, metres_per_pixel, orifice_xy, **options):
    """Velocity source for the orifice estimator: ``(exit velocity, its sd)`` from a clip."""
    options.pop("ambient_temperature", None)
    options.pop("pressure", None)
    result = analyze_jet_clip(path, metres_per_pixel, orifice_xy, **options)
    return result.exit_velocity, result.exit_velocity_sd


def check_funnel_pressure(pressure):
    """Refuse an absolute pressure outside the seawater model's range (TEOS-10's, checked by the core)."""
    from ventflux.plugin_api import seawater_state

    seawater_state(Q_(2.0, "degC"), 35.0, pressure)  # the pressure's check is the model's own
    return pressure
