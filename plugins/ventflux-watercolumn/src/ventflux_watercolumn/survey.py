"""Survey section ``[water_column]``: the heat carried across a tow-yo section, as a check on the field's total.

::

    [water_column]
    data = "data/towyo.csv"                 # CSV (units in headers) or netCDF (CF standard names)
    current = "0.04 ± 0.01 m/s"             # constant current (or current columns in the file)
    current_direction = "80 ± 15 deg"       # toward which it flows, clockwise from north
    vent_depth = "2480 m"                   # default: the site's depth
    compares_with = "field total"           # or "focused"

Optional: ``current_uncertainty`` (a velocity: the measured current's error
along the normal, drawn once per draw), ``factor`` (detection threshold in
noise sds, 3), ``bin_size`` (5 m), ``degree`` (of the background fit, 2),
``tracer`` (``temperature``, ``optical``, ``either``), ``margin`` (the band's
margin).

The section is read and analysed when the survey is checked (so ``--check``
refuses what the run would); the run draws the bootstrap, the current and
the vent depth through the survey's shared draws. Its heat flux counts as a
``check``: compared draw by draw with the survey's own total, beside the
field plume's rise, and not added to the totals. Its rise heights are
reported with their uncertainty.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ventflux.plugin_api import InputError, InputErrors
from ventflux.plugin_api import SectionEstimate, SurveySection
from ventflux.plugin_api import DataColumn, SurveyKey
from ventflux.plugin_api import Q_

from .section import LEVELS as LEVEL_NAMES
from .section import TRACERS

KEY = "water_column"


def _parse(f, ctx):
    spec = {"data": f.path_value("data", required=True),
            "current": f.quantity("current", "velocity", minimum=Q_(0.0, "m/s")),
            "current_direction": f.quantity("current_direction", "angle"),
            "current_uncertainty": f.quantity("current_uncertainty", "velocity", uncertain=False,
                                              minimum=Q_(0.0, "m/s")),
            "vent_depth": f.quantity("vent_depth", "length", positive=True),
            "factor": f.number("factor", default=3.0, minimum=1.0),
            "bin_size": f.quantity("bin_size", "length", uncertain=False, positive=True, shareable=False),
            "degree": f.number("degree", default=2, minimum=1, maximum=2, integer=True),
            "tracer": f.string("tracer", default="temperature", choices=TRACERS),
            "margin": f.quantity("margin", "length", uncertain=False, minimum=Q_(0.0, "m"), shareable=False),
            "compares_with": f.string("compares_with", default="field total", choices=("field total", "focused"))}
    f.check_unknown()
    site = ctx.site
    if spec["vent_depth"] is None and "vent_depth" not in f.table:
        if site is not None and site.depth is not None:
            spec["vent_depth"] = site.depth
        else:
            f.error("vent_depth", "(missing)", "the vent's depth (the site gives a pressure, not a depth)")
    spec["analysis"] = None
    if spec["data"] is None or f.errors.errors:
        return spec
    ctx.input_files[str(spec["data"])] = "water-column section"
    try:
        spec["analysis"] = analyse(spec, site)
    except InputErrors as e:
        f.errors.errors.extend(e.errors)
    except InputError as e:
        f.errors.add(e)
    if spec["analysis"] is not None and not spec["analysis"].found.any():
        f.error("data", f.table["data"], f"a section in which the plume layer exceeds {spec['factor']:g} noise sds "
                "on at least one profile (none does: no flux to compare; lower factor or check the section)")
    if spec["analysis"] is not None and spec["analysis"].measured_current:
        for k in ("current", "current_direction"):
            if spec[k] is not None:
                f.error(k, f.table[k], "no constant current: the section file has current columns "
                        "(give their error as current_uncertainty)")
    if spec["analysis"] is not None and not spec["analysis"].measured_current and spec["current"] is None:
        f.error("current", "(missing)", "a current speed such as \"0.04 ± 0.01 m/s\" (the section file has no "
                "current columns)")
    return spec


def analyse(spec, site):
    """Read and analyse the section named by a parsed ``[water_column]`` table (nominal values)."""
    from ventflux.plugin_api import nominal_of

    from .reading import read_section
    from .section import analyse_section

    lat = getattr(site, "latitude", None)
    lon = getattr(site, "longitude", None)
    data = read_section(spec["data"], latitude=lat, longitude=lon)
    vd = spec["vent_depth"]
    cd = spec["current_direction"]
    return analyse_section(
        data, vent_depth=None if vd is None else float(nominal_of(vd).to("m").magnitude),
        current_direction=None if cd is None else float(nominal_of(cd).to("degree").magnitude),
        factor=float(spec["factor"]), bin_size=5.0 if spec["bin_size"] is None else float(
            spec["bin_size"].to("m").magnitude), degree=int(spec["degree"]), tracer=spec["tracer"],
        margin=None if spec["margin"] is None else float(spec["margin"].to("m").magnitude))


def rise_height(path, level="maximum", site=None):
    """The observed rise height above the vents from a section file, for ``[vent.plume_rise]``/``[field_plume]``.

    ``level`` ``maximum`` is the layer's mean top, ``spreading`` its mean core, each above the site's depth;
    the uncertainty is ``SectionAnalysis.height_sd``. Returns a normal ``Uncertain`` (m).
    """
    from ventflux.plugin_api import normal

    depth = getattr(site, "depth", None)
    if depth is None:
        raise InputError("rise_height", str(path), "a plain height, or a water-column file with the site's depth in "
                         "[site] depth (heights are measured from it)")
    spec = {"data": Path(path), "current": None, "current_direction": None, "vent_depth": depth, "factor": 3.0,
            "bin_size": None, "degree": 2, "tracer": "temperature", "margin": None}
    res = analyse(spec, site)
    if res.found.sum() < 2:
        raise InputError("rise_height", str(path), "a section with a plume layer on at least 2 profiles (found on "
                         f"{int(res.found.sum())})", where=str(path))
    return normal(Q_(res.height(level), "m"), Q_(res.height_sd(level), "m"))


def _estimate(spec, ctx):
    from .section import draw_section, section_draws

    res = spec["analysis"]
    drawn = section_draws(ctx.draws, KEY, res.n_profiles, current=spec["current"],
                          current_direction=spec["current_direction"],
                          current_uncertainty=spec["current_uncertainty"], vent_depth=spec["vent_depth"],
                          bin_size=res.bin_size)
    out = draw_section(res, drawn)
    rows = summary_rows(res, out)
    notes = [(f"Water column: heat carried across the tow-yo section {Path(res.source).name} by the plume layer "
              f"(ρ c_p0 ΔΘ u·n over the layer's band), compared with the {spec['compares_with']} of the survey.")]
    notes += [f"Water column: {n}" for n in res.notes]
    if out.failed:
        notes.append(f"Water column: {out.failed} draws whose resampled background could not be fitted are NaN "
                     "and left out of the comparison.")
    from .figures import section_figures

    return SectionEstimate(category="check", names=["water-column heat flux"],
                           heat_power=Q_(out.heat_flux.reshape(1, -1), "W"), rows=rows,
                           tables={"water_column": rows, "water_column_profiles": res.rows()},
                           figures=section_figures(res, out), notes=notes, compares_with=spec["compares_with"])


def summaries(res, out) -> dict:
    """Monte Carlo summaries (``ventflux.uncertainty.Summary``) by name: heat flux (W), its parts, rise heights (m)."""
    from ventflux.plugin_api import summarize

    def summ(draws, unit):
        d = np.asarray(draws, float)
        return summarize(Q_(d, unit)) if np.isfinite(d).any() else None

    out_ = {"heat_flux": summ(out.heat_flux, "W")}
    out_.update({f"heat_flux: {k} only": summ(v, "W") for k, v in out.parts.items()})
    if res.found.any():
        out_.update({f"rise_height_{lvl}": summ(d, "m") for lvl, d in out.heights.items()})
    return out_


def summary_rows(res, out):
    """Rows ``quantity, unit, nominal, mean, median, p05, p95, std``: heat flux with its parts, rise heights."""
    rows = []
    for name, s in summaries(res, out).items():
        is_height = name.startswith("rise_height_")
        unit, scale = ("m", 1.0) if is_height else ("MW", 1e-6)
        if is_height:
            lvl = name[len("rise_height_"):]
            label = f"rise height ({lvl}: layer {LEVEL_NAMES[lvl]})"
            nominal = res.height(lvl)
        else:
            label, nominal = name.replace("_", " "), out.nominal_heat_flux * scale
        r = {"quantity": label, "unit": unit, "nominal": nominal}
        if s is not None:
            s = s.to(unit)
            r.update({k: float(getattr(s, k).magnitude) for k in ("mean", "median", "p05", "p95", "std")})
        rows.append(r)
    rows.append({"quantity": "heat flux, constant-c_p shortcut ρ c_p Δθ", "unit": "MW",
                 "nominal": 1e-6 * out.shortcut_heat_flux})
    rows.append({"quantity": "profiles with a layer", "unit": "", "nominal": int(res.found.sum())})
    rows.append({"quantity": "profiles", "unit": "", "nominal": res.n_profiles})
    rows.append({"quantity": "background noise of Δθ", "unit": "mK", "nominal": 1e3 * res.noise})
    rows.append({"quantity": "detection threshold", "unit": "mK", "nominal": 1e3 * res.noise * res.factor})
    return rows


#: The keys of ``[water_column]`` (declared for the survey's validator and ``ventflux survey --format``).
WATER_COLUMN_KEYS = (
    SurveyKey("data", "path", "the section: CSV (units in headers) or netCDF (CF standard names)", required=True,
              columns=(DataColumn("time", "s", "time of each sample"),
                       DataColumn("east", "m", "position east of a local origin (or latitude, longitude)"),
                       DataColumn("north", "m", "position north of a local origin"),
                       DataColumn("pressure", "dbar", "sea pressure"),
                       DataColumn("temperature", "degC", "in-situ temperature"),
                       DataColumn("salinity", "", "practical salinity"),
                       DataColumn("optical", "", "light backscatter or turbidity, any linear scale", required=False),
                       DataColumn("current_east", "m/s", "measured current (with current_north)", required=False),
                       DataColumn("profile", "", "profile number of each sample", required=False))),
    SurveyKey("current", "velocity", "constant current speed (when the file has no current columns)",
              uncertain=True),
    SurveyKey("current_direction", "angle", "direction the current flows toward, clockwise from north",
              uncertain=True),
    SurveyKey("current_uncertainty", "velocity", "error of the measured current along the section's normal"),
    SurveyKey("vent_depth", "length", "depth of the vents", uncertain=True, default="the site's depth"),
    SurveyKey("factor", "number", "detection threshold in noise standard deviations", default="3"),
    SurveyKey("bin_size", "length", "vertical bin of the profiles", default="5 m"),
    SurveyKey("degree", "integer", "degree of the background fit (1 or 2)", default="2"),
    SurveyKey("tracer", "string", "tracer that finds the plume layer", choices=tuple(TRACERS),
              default='"temperature"'),
    SurveyKey("margin", "length", "margin of the layer's band"),
    SurveyKey("compares_with", "string", "the survey total this check is compared with",
              choices=("field total", "focused"), default='"field total"'),
)

WATER_COLUMN = SurveySection(key=KEY, summary="tow-yo section across the plume layer → heat flux through a "
                                              "control surface and rise heights, as a check on the sum of vents "
                                              "and patches (not added to the totals)",
                             parse=_parse, estimate=_estimate, provider="ventflux-watercolumn",
                             keys=WATER_COLUMN_KEYS)
