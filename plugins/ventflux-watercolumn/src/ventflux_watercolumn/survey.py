"""Survey section ``[water_column]``: the heat carried across a tow-yo section, or out of a closed box of sections.

::

    [water_column]
    data = "data/towyo.csv"                 # CSV (units in headers) or netCDF (CF standard names)
    current = "0.04 ± 0.01 m/s"             # constant current (or current columns in the file, or a record)
    current_direction = "80 ± 15 deg"       # toward which it flows, clockwise from north
    vent_depth = "2480 m"                   # default: the site's depth
    compares_with = "field total"           # or "focused"

A closed box instead of one section: ``sections = ["data/north.csv",
"data/east.csv", "data/south.csv", "data/west.csv"]`` (in order around the
box; ``closure_tolerance``, a length, and ``band_top``/``band_bottom``,
depths, optional; ``ventflux_watercolumn.box``).

Currents from a record: ``current_record = "data/mooring.nc"`` (a current
meter's or ADCP's record, ``ventflux_watercolumn.currents``), with
``current_uncertainty`` its accuracy (per component).

Optional: ``current_uncertainty`` (a velocity: a measured current's accuracy,
per horizontal component, drawn once per draw), ``factor`` (detection
threshold in noise sds, 3), ``bin_size`` (5 m), ``degree`` (of the background
fit, 2), ``tracer`` (``temperature``, ``optical``, ``either``), ``margin``
(the band's margin).

The sections are read and analysed when the survey is checked (so
``--check`` refuses what the run would); the run draws the bootstrap, the
current and the vent depth through the survey's shared draws and the
propagation driver (``section.propagate_sections``, the run's
``max_unphysical`` policy). The heat flux counts as a ``check``: compared
draw by draw with the survey's own total, beside the field plume's rise, and
not added to the totals. Samples dropped for missing values are counted in
the run's warnings.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .box import BoxAnalysis

import numpy as np

from ventflux.plugin_api import Q_, DataColumn, InputError, InputErrors, SectionEstimate, SurveyKey, SurveySection

from .section import LEVELS as LEVEL_NAMES
from .section import TRACERS

KEY = "water_column"


def _paths(f, name):
    """A list of file paths (relative to the survey file), each checked; None if the key is absent."""
    raw, _ = f._get(name, False, None)
    if raw is None:
        return None
    if not isinstance(raw, list) or not raw:
        f.error(name, repr(raw), "a list of section files, in order around the box")
        return None
    out = []
    for i, item in enumerate(raw):
        if not isinstance(item, str) or not item.strip():
            f.error(f"{name}[{i}]", repr(item), "a path written as a string, relative to the survey file")
            continue
        p = (f.base_dir / item).resolve() if not Path(item).is_absolute() else Path(item)
        if not p.is_file():
            f.error(f"{name}[{i}]", item, f"an existing file (looked for {p})")
            continue
        out.append(p)
    return out


def _parse(f, ctx):
    spec = {"data": f.path_value("data"),
            "sections": _paths(f, "sections"),
            "current": f.quantity("current", "velocity", minimum=Q_(0.0, "m/s")),
            "current_direction": f.quantity("current_direction", "angle"),
            "current_uncertainty": f.quantity("current_uncertainty", "velocity", uncertain=False,
                                              minimum=Q_(0.0, "m/s")),
            "current_record": f.path_value("current_record"),
            "vent_depth": f.quantity("vent_depth", "length", positive=True),
            "factor": f.number("factor", default=3.0, minimum=1.0),
            "bin_size": f.quantity("bin_size", "length", uncertain=False, positive=True, shareable=False),
            "degree": f.number("degree", default=2, minimum=1, maximum=2, integer=True),
            "tracer": f.string("tracer", default="temperature", choices=TRACERS),
            "margin": f.quantity("margin", "length", uncertain=False, minimum=Q_(0.0, "m"), shareable=False),
            "closure_tolerance": f.quantity("closure_tolerance", "length", uncertain=False, minimum=Q_(0.0, "m"),
                                            shareable=False),
            "band_top": f.quantity("band_top", "length", uncertain=False, minimum=Q_(0.0, "m"), shareable=False),
            "band_bottom": f.quantity("band_bottom", "length", uncertain=False, minimum=Q_(0.0, "m"),
                                      shareable=False),
            "compares_with": f.string("compares_with", default="field total", choices=("field total", "focused"))}
    f.check_unknown()
    if ("data" in f.table) == ("sections" in f.table):
        f.error("data", f.table.get("data", "(missing)"), "one section file (data) or a list of them around a "
                "closed box (sections), not both")
    if ("band_top" in f.table) != ("band_bottom" in f.table):
        f.error("band_top" if "band_top" not in f.table else "band_bottom", "(missing)", "band_top and band_bottom "
                "together")
    if "data" in f.table:
        for k in ("closure_tolerance", "band_top", "band_bottom"):
            if k in f.table:
                f.error(k, f.table[k], "no value for one section (it applies to a box of sections)")
    site = ctx.site
    if spec["vent_depth"] is None and "vent_depth" not in f.table:
        if site is not None and site.depth is not None:
            spec["vent_depth"] = site.depth
        else:
            f.error("vent_depth", "(missing)", "the vent's depth (the site gives a pressure, not a depth)")
    spec["analysis"] = None
    if (spec["data"] is None and not spec["sections"]) or f.errors.errors:
        return spec
    for p in [spec["data"]] if spec["data"] is not None else spec["sections"]:
        ctx.input_files[str(p)] = "water-column section"
    if spec["current_record"] is not None:
        ctx.input_files[str(spec["current_record"])] = "current record"
    try:
        spec["analysis"] = analyse(spec, site)
    except InputErrors as e:
        f.errors.errors.extend(e.errors)
    except InputError as e:
        f.errors.add(e)
    a = spec["analysis"]
    if a is None:
        return spec
    if a.box is None and not a.results[0].found.any():
        f.error("data", f.table["data"], f"a section in which the plume layer exceeds {spec['factor']:g} noise sds "
                "on at least one profile (none does: no flux to compare; lower factor or check the section)")
    if a.measured:
        for k in ("current", "current_direction"):
            if spec[k] is not None:
                f.error(k, f.table[k], "no constant current: the currents are measured (current columns or "
                        "current_record; give their accuracy as current_uncertainty)")
    elif spec["current"] is None:
        f.error("current", "(missing)", "a current speed such as \"0.04 ± 0.01 m/s\" (the section file has no "
                "current columns and no current_record is given)")
    if getattr(ctx, "warnings", None) is not None:
        for r in a.results:
            if r.n_dropped:
                ctx.warnings.add(f"{KEY}.data", f"{Path(r.source).name}: " + _dropped_line(r))
    return spec


def _dropped_line(res) -> str:
    per = ", ".join(f"{k} {v}" for k, v in res.dropped.items())
    return f"{res.n_dropped} samples dropped for missing values (missing: {per})"


@dataclass
class WaterColumnAnalysis:
    """One section or a closed box: the nominal analyses, and what the draws need besides."""

    results: list  # SectionAnalysis, one per section
    names: list
    box: BoxAnalysis | None
    matches: list | None  # RecordMatch per section (a current record), or None
    notes: list = field(default_factory=list)

    @property
    def measured(self) -> bool:
        return bool(self.results[0].measured_current)

    def variability(self):
        """Per section, the current record's covariance during the section (None without a record)."""
        return None if self.matches is None else [m.covariance() for m in self.matches]


def _length(q, unit="m"):
    return None if q is None else float(q.to(unit).magnitude)


def analyse(spec, site) -> WaterColumnAnalysis:
    """Read and analyse the section (or box of sections) named by a parsed ``[water_column]`` table."""
    from ventflux.plugin_api import nominal_of

    from .reading import read_section
    from .section import analyse_section

    lat = getattr(site, "latitude", None)
    lon = getattr(site, "longitude", None)
    paths = [spec["data"]] if spec.get("data") is not None else list(spec["sections"])
    datas = [read_section(p, latitude=lat, longitude=lon) for p in paths]
    record = None
    if spec.get("current_record") is not None:
        from .currents import read_current_record

        record = read_current_record(spec["current_record"])
        for d in datas:
            if d.current_east is not None:
                raise InputError("current_record", str(spec["current_record"]), "no record: the section file "
                                 f"{Path(d.source).name} has current columns already")
    vd, cd = spec.get("vent_depth"), spec.get("current_direction")
    settings = dict(vent_depth=None if vd is None else float(nominal_of(vd).to("m").magnitude),
                    current_direction=None if cd is None else float(nominal_of(cd).to("degree").magnitude),
                    factor=float(spec["factor"]), bin_size=_length(spec.get("bin_size")) or 5.0,
                    degree=int(spec["degree"]), tracer=spec["tracer"], margin=_length(spec.get("margin")))
    matches: list | None = None
    if record is not None:
        pairs = [_with_record(d, record, lat) for d in datas]
        datas, matches = [d for d, _ in pairs], [m for _, m in pairs]
    names = [Path(p).name for p in paths]
    if len(datas) == 1:
        res = analyse_section(datas[0], **settings)
        if matches:
            res.notes.extend(matches[0].notes)
        return WaterColumnAnalysis(results=[res], names=names, box=None, matches=matches)
    from .box import analyse_box

    def one(d, band_depths=None, outward=None):
        return analyse_section(d, band_depths=band_depths, outward=outward, **settings)

    band = None
    if spec.get("band_top") is not None:
        band = (_length(spec["band_top"]), _length(spec["band_bottom"]))
    box = analyse_box(datas, names, one, tolerance=_length(spec.get("closure_tolerance")), band=band)
    notes = list(box.notes)
    for m in matches or []:
        notes.extend(n for n in m.notes if n not in notes)
    return WaterColumnAnalysis(results=box.sections, names=names, box=box, matches=matches, notes=notes)


def _with_record(data, record, latitude):
    import gsw

    from .currents import currents_at

    depth = -gsw.z_from_p(data.sea_pressure, 0.0 if latitude is None and data.latitude is None else
                          (data.latitude if data.latitude is not None else latitude))
    return currents_at(record, data, depth)


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
    res = analyse(spec, site).results[0]
    if res.found.sum() < 2:
        raise InputError("rise_height", str(path), "a section with a plume layer on at least 2 profiles (found on "
                         f"{int(res.found.sum())})", where=str(path))
    return normal(Q_(res.height(level), "m"), Q_(res.height_sd(level), "m"))


def propagate_analysis(spec, a: WaterColumnAnalysis, draws, policy, key=KEY):
    """Draws of the heat flux through one section or out of a box: ``(per-section draws, total draws)``."""
    from .section import propagate_sections

    keys = [key] if a.box is None else [f"{key}/box/{n}" for n in a.names]
    return propagate_sections(a.results, keys, draws, policy, current=spec.get("current"),
                              current_direction=spec.get("current_direction"),
                              current_uncertainty=spec.get("current_uncertainty"),
                              current_variability=a.variability(), vent_depth=spec.get("vent_depth"),
                              shared_key=key)


def _estimate(spec, ctx):
    a = spec["analysis"]
    per, out = propagate_analysis(spec, a, ctx.draws, ctx.policy)
    res = a.results[0]
    if a.box is None:
        rows = summary_rows(res, out)
        what = f"across the tow-yo section {Path(res.source).name} by the plume layer"
        tables = {"water_column": rows, "water_column_profiles": res.rows()}
    else:
        rows = box_rows(a, per, out)
        what = f"out of the closed box of {len(a.results)} sections ({', '.join(a.names)})"
        tables = {"water_column": rows, "water_column_profiles": [
            {"section": n, **r} for n, r_ in zip(a.names, a.results) for r in r_.rows()]}
    notes = [(f"Water column: heat carried {what} (ρ c_p0 ΔΘ u·n over the layer's band), compared with the "
              f"{spec['compares_with']} of the survey.")]
    notes += [f"Water column: {n}" for n in a.notes]
    for name, r in zip(a.names, a.results):
        notes += [f"Water column ({name}): {n}" if a.box is not None else f"Water column: {n}" for n in r.notes]
    notes += [f"Water column: {n}" for n in _draw_notes(out)]
    from .figures import section_figures

    if a.box is None:
        figures = section_figures(res, per[0])
    else:
        from .figures import box_plot

        figures = [("water_column_box", box_plot(a, per, out), "Closed box in plan: each side's profiles, its "
                    "outward normal and the heat flux out through it; the net flux with its 90 % interval.")]
        figures += [fig for i, (r, p) in enumerate(zip(a.results, per))
                    for fig in _prefixed(section_figures(r, p), i + 1)]
    return SectionEstimate(category="check", names=["water-column heat flux"],
                           heat_power=Q_(out.heat_flux.reshape(1, -1), "W"), rows=rows, tables=tables,
                           figures=figures, notes=notes, compares_with=spec["compares_with"])


def _prefixed(figs, i):
    return [(f"box{i}_{stem}", png, caption) for stem, png, caption in figs]


def _draw_notes(out) -> list:
    notes = []
    if out.unphysical:
        notes.append(f"{out.unphysical} of {out.n_draws} draws dropped as impossible (a negative current speed or "
                     "vent depth, or a resampled background that cannot be fitted), counted and within the run's "
                     "limit.")
    return notes


def summaries(res, out, heights=True) -> dict:
    """Monte Carlo summaries (``ventflux.uncertainty.Summary``) by name: heat flux (W), its parts, rise heights (m)."""
    from ventflux.plugin_api import summarize

    def summ(draws, unit):
        d = np.asarray(draws, float)
        return summarize(Q_(d, unit)) if np.isfinite(d).any() else None

    out_ = {"heat_flux": summ(out.heat_flux, "W")}
    out_.update({f"heat_flux: {k} only": summ(v, "W") for k, v in out.parts.items()})
    if heights and res is not None and res.found.any():
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
    rows.append({"quantity": "samples dropped for missing values", "unit": "", "nominal": res.n_dropped})
    return rows


def box_rows(a, per, out):
    """Rows of a box: the net heat flux with its parts, then each section's flux with its outward normal."""
    rows = []
    for name, s in summaries(None, out, heights=False).items():
        r = {"quantity": ("net " if name == "heat_flux" else "net ") + name.replace("_", " "), "unit": "MW",
             "nominal": 1e-6 * out.nominal_heat_flux}
        if s is not None:
            s = s.to("MW")
            r.update({k: float(getattr(s, k).magnitude) for k in ("mean", "median", "p05", "p95", "std")})
        rows.append(r)
    rows.append({"quantity": "net heat flux, constant-c_p shortcut ρ c_p Δθ", "unit": "MW",
                 "nominal": 1e-6 * out.shortcut_heat_flux})
    for name, r, p in zip(a.names, a.results, per):
        row = {"quantity": f"heat flux out through {name} (outward normal {r.normal_bearing:.0f}°)", "unit": "MW",
               "nominal": 1e-6 * p.nominal_heat_flux}
        d = p.heat_flux[np.isfinite(p.heat_flux)]
        if d.size:
            row.update({"mean": 1e-6 * d.mean(), "median": 1e-6 * np.median(d), "p05": 1e-6 * np.percentile(d, 5),
                        "p95": 1e-6 * np.percentile(d, 95), "std": 1e-6 * d.std(ddof=1)})
        rows.append(row)
        rows.append({"quantity": f"samples dropped for missing values ({name})", "unit": "", "nominal": r.n_dropped})
    rows.append({"quantity": "largest gap between sections", "unit": "m", "nominal": max(g for *_, g in a.box.gaps)})
    rows.append({"quantity": "closure tolerance", "unit": "m", "nominal": a.box.tolerance})
    return rows


#: The keys of ``[water_column]`` (declared for the survey's validator and ``ventflux survey --format``).
WATER_COLUMN_KEYS = (
    SurveyKey("data", "path", "one section: CSV (units in headers) or netCDF (CF standard names); or give sections",
              columns=(DataColumn("time", "s", "time of each sample"),
                       DataColumn("east", "m", "position east of a local origin (or latitude, longitude)"),
                       DataColumn("north", "m", "position north of a local origin"),
                       DataColumn("sea_pressure", "dbar", "sea pressure (old header: pressure)"),
                       DataColumn("temperature", "degC", "in-situ temperature"),
                       DataColumn("salinity", "", "practical salinity"),
                       DataColumn("optical", "", "light backscatter or turbidity, any linear scale", required=False),
                       DataColumn("current_east", "m/s", "measured current (with current_north)", required=False),
                       DataColumn("profile", "", "profile number of each sample", required=False))),
    SurveyKey("sections", "list", "several section files (paths) in order around a closed box (instead of data)"),
    SurveyKey("current_record", "path", "a current meter's or ADCP's record (CF netCDF or CSV), interpolated to "
              "each sample's time and depth"),
    SurveyKey("closure_tolerance", "length", "largest gap allowed between neighbouring sections of a box",
              default="the widest profile spacing"),
    SurveyKey("band_top", "length", "top of the depth band a box is integrated over (with band_bottom)"),
    SurveyKey("band_bottom", "length", "bottom of the depth band a box is integrated over (with band_top)"),
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

WATER_COLUMN = SurveySection(key=KEY, summary="tow-yo section across the plume layer, or a closed box of sections "
                                              "→ heat flux through a control surface and rise heights, as a check "
                                              "on the sum of vents and patches (not added to the totals)",
                             parse=_parse, estimate=_estimate, provider="ventflux-watercolumn",
                             keys=WATER_COLUMN_KEYS)
