"""The survey file: a human-editable TOML description of one vent-field survey.

Layout (every key is declared in ``ventflux.survey.schema`` form beside its
parser, and printed by ``ventflux survey --format``)::

    [site]            name, depth or absolute_pressure, latitude, longitude,
                      ambient_temperature, ambient_salinity, ctd (a CSV cast)
    [run]             draws, seed, max_unphysical (share of draws dropped as
                      physically impossible before the run refuses; 0.05)
    [shared]          named uncertain inputs drawn once per draw for every
                      value that refers to them as "@name"
    [[vent]]          one table per focused vent: name, exit_temperature,
                      position, and one or more methods as sub-tables
                      ([[vent.orifice]], [vent.plume_rise], [vent.video], ...)
    [diffuse]         ... and other field-wide sections
    [[reservoir]]     heat-reservoir hypotheses to test

The whole file is validated before anything is computed; every problem is
reported at once with its key path and, for CSV files, its line.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

import pint

from ..errors import Collector, InputError, InputErrors, Warnings
from ..limits import POSITION_BOUNDS
from ..resources import check_memory
from ..uncertainty import MAX_SEED, Uncertain
from ..units import Q_
from .api import ParseContext
from .fields import REFUSED_SHARED, Fields, Position, SharedRef, key_drawn_as
from .schema import DataColumn, SurveyKey, table

if TYPE_CHECKING:
    from ..profiles import AmbientProfile

#: Default Monte Carlo draws of a survey run (a choice: the 5-95 % limits of
#: 10,000 draws are reproducible to about 1 % of the interval width).
DEFAULT_DRAWS = 10_000


#: The columns of a CTD cast (``[site] ctd``); one of depth and sea pressure is required.
CTD_COLUMNS = (
    DataColumn("sea_pressure", "dbar", "sea pressure (absolute minus one standard atmosphere), as a CTD reports "
                                       "it; formerly 'pressure [dbar]' (still read, deprecated)",
               required="unless depth is given"),
    DataColumn("depth", "m", "depth below the sea surface", required="unless sea_pressure is given"),
    DataColumn("temperature", "degC", "in-situ temperature"),
    DataColumn("salinity", "", "practical salinity (no unit)"),
)

SITE_TABLE = table("site", "where the survey was made and the ambient seawater (required)", [
    SurveyKey("name", "string", "the site's name, used in the report and the results folder", required=True,
              example='"Tarnwick Deep"'),
    SurveyKey("cruise", "string", "the cruise or expedition, for the report", example='"TW-01"'),
    SurveyKey("depth", "length", "depth of the vents below the sea surface", required="unless absolute_pressure "
              "is given (exactly one of the two)", example='"2210 m"'),
    SurveyKey("absolute_pressure", "pressure", "absolute in-situ pressure at the vents (including the atmosphere)",
              required="unless depth is given (exactly one of the two)"),
    SurveyKey("latitude", "number", "latitude of the site in decimal degrees (north positive)", required=True,
              example="-21.75"),
    SurveyKey("longitude", "number", "longitude of the site in decimal degrees (east positive)", required=True,
              example="-118.40"),
    SurveyKey("ambient_temperature", "temperature", "in-situ temperature of the ambient seawater at the vents",
              required=True, uncertain=True, example='"2.10 ± 0.02 degC"'),
    SurveyKey("ambient_salinity", "dimensionless", "practical salinity of the ambient seawater", uncertain=True,
              default="35 (the TEOS-10 standard ocean's practical salinity)", example="34.69"),
    SurveyKey("ctd", "path", "a CTD cast (CSV with units in the headers, or netCDF with CF standard names) "
              "giving the stratification the plumes rise through",
              columns=CTD_COLUMNS, example='"data/ctd_cast.csv"'),
    SurveyKey("ctd_smoothing", "length", "bin width the cast is averaged over before N² is taken",
              default="5 m"),
    SurveyKey("ctd_profile", "integer or text", "for a netCDF file of several casts (CF profiles): the cast to "
              "read, by position (0 first) or by its profile_id (e.g. \"ST07\")"),
])

RUN_TABLE = table("run", "Monte Carlo settings of the run", [
    SurveyKey("draws", "integer", "Monte Carlo draws (100 to 1,000,000; at most what the machine's memory holds)",
              default=str(DEFAULT_DRAWS), example="10000"),
    SurveyKey("seed", "integer", "random seed (0 to 2^32 - 1): the same seed gives the same numbers",
              default="20261202", example="7"),
    SurveyKey("max_unphysical", "number", "largest share of draws dropped as physically impossible (counted and "
              "reported) before the run refuses (0 to 0.99)", default="0.05"),
    SurveyKey("allow_implausible", "boolean", "accept values outside ventflux.limits' plausibility table "
              "(recorded as a warning)", default="false"),
    SurveyKey("netcdf_draws", "boolean", "results.nc keeps every Monte Carlo draw (dimension draw), not only "
              "the summaries", default="false"),
])

SHARED_TABLE = table("shared", "named uncertain inputs drawn once per draw for every value that refers to them as "
                               "\"@name\" (one probe's calibration, one camera's scale, a model constant)", [],
                     open=True)

VENT_KEYS = (
    SurveyKey("name", "string", "the vent's name, used once in the survey", required=True, example='"Emberstack"'),
    SurveyKey("exit_temperature", "temperature", "exit temperature of the vent fluid, for the vent's water flux "
              "when no orifice measurement gives one", uncertain=True),
    SurveyKey("position", "position", "where the vent is, for the report's site map",
              example='{ east = "12 m", north = "-30 m" }'),
)

RESERVOIR_TABLE = table("reservoir", "a heat-reservoir hypothesis: how long could it feed the observed output?", [
    SurveyKey("name", "string", "the hypothesis's name", required=True, example='"cooling dike beneath the field"'),
    SurveyKey("supplies", "string", "what it feeds: \"field total\", \"focused\", \"diffuse\" or a vent's name",
              default='"field total"', example='"field total"'),
    SurveyKey("volume", "volume", "volume of the hot rock", required="unless area and thickness are given",
              example='"0.01 km^3"'),
    SurveyKey("area", "area", "plan area of a sheet-like reservoir (with thickness)"),
    SurveyKey("thickness", "length", "thickness of a sheet-like reservoir (with area)"),
    SurveyKey("temperature_drop", "temperature", "how far the hot rock cools while it feeds the output",
              required=True, example='"300 K"'),
    SurveyKey("temperature", "temperature", "initial temperature of the rock, for the pore fluid's state",
              example='"400 degC"'),
    SurveyKey("porosity", "number", "pore fraction filled with fluid (0 to 0.99)", default="0.05"),
    SurveyKey("melt_volume", "volume", "volume of melt that crystallizes (its latent heat adds to the reservoir)"),
    SurveyKey("rock_density", "density", "density of the rock", default="2900 kg/m^3"),
    SurveyKey("size", "length", "the length L of the conductive time L²/κ",
              default="a sheet's thickness, else the cube root of the volume", example='"200 m"'),
    SurveyKey("pressure", "pressure", "absolute pressure of the reservoir's pore fluid",
              default="the site's seafloor pressure"),
    SurveyKey("depth_below_seafloor", "length", "depth of the reservoir below the seafloor (instead of pressure)"),
    SurveyKey("pressure_regime", "string", "how pressure grows below the seafloor",
              choices=("hydrostatic", "lithostatic"), default='"hydrostatic"'),
], many=True)


@dataclass
class SiteSpec:
    name: str
    pressure: pint.Quantity | None  # absolute, at the vents' depth
    depth: pint.Quantity | None
    latitude: float
    longitude: float
    ambient_temperature: pint.Quantity | Uncertain | None
    ambient_salinity: pint.Quantity | Uncertain | None
    ctd: Path | None
    ctd_window: pint.Quantity | None
    cruise: str | None = None
    #: The cast to read from a netCDF file of several (``[site] ctd_profile``: a position, 0 first, or an id).
    ctd_profile: int | str | None = None
    #: Depth range [m] of the CTD cast after binning, once --check has read it (for cross-checks).
    ctd_extent: tuple | None = None


@dataclass
class VentSpec:
    name: str
    exit_temperature: pint.Quantity | Uncertain | None
    methods: dict  # method key -> parsed spec (a list for "many" methods)
    #: Where the vent is (``[[vent]] position``): latitude/longitude in degrees or east/north in metres; None if
    #: the file gives none.
    position: Position | None = None


@dataclass
class ReservoirSpec:
    name: str
    supplies: str
    options: dict
    size: pint.Quantity | Uncertain | None


@dataclass
class SurveySpec:
    path: Path
    site: SiteSpec
    draws: int
    seed: int
    shared: dict
    vents: list
    sections: dict
    reservoirs: list
    defaults_used: dict
    input_files: dict = field(default_factory=dict)
    #: ``[run] max_unphysical``: largest share of draws dropped as impossible before the run refuses.
    max_unphysical: float = 0.05
    #: Where that limit was set, named when the run refuses (the command line's option replaces it).
    max_unphysical_option: str = "run.max_unphysical"
    #: Problems that do not stop the run (a vent left out of the water total, ...): printed by the command,
    #: listed in the report's warnings section and stored in summary.json.
    warnings: Warnings = field(default_factory=lambda: Warnings())
    #: Whether values outside the plausibility limits were accepted (``--allow-implausible`` or [run]).
    allow_implausible: bool = False
    #: ``[run] netcdf_draws``: whether ``results.nc`` keeps the Monte Carlo draws (``ventflux.survey.netcdf``).
    netcdf_draws: bool = False


def survey_components():
    """Survey methods and sections of the core and every plugin, by their key in the survey file."""
    from ..registry import survey_methods, survey_sections

    methods = {m.key: m for m in survey_methods()}
    sections = {s.key: s for s in survey_sections()}
    return methods, sections


def survey_schema():
    """The schema of the whole survey file (``ventflux.survey.schema``): the core's tables and every installed
    plugin's methods and sections, as one ``SurveyKey`` table."""
    methods, sections = survey_components()
    method_tables = [table(k, m.summary, m.keys, many=m.many, provider=m.provider) for k, m in sorted(methods.items())]
    vent = table("vent", "one focused vent (a chimney, a spire, a cluster of orifices) and the methods that measure "
                         "it; at least one method", list(VENT_KEYS) + method_tables, many=True)
    section_tables = [table(k, s.summary, s.keys, provider=s.provider) for k, s in sorted(sections.items())]
    return table("", "a survey file", [SITE_TABLE, RUN_TABLE, SHARED_TABLE, vent, *section_tables, RESERVOIR_TABLE])


def load_survey(path, *, draws=None, seed=None, max_unphysical=None, progress=None) -> SurveySpec:
    """Read and validate a survey file; raise ``InputErrors`` listing every problem.

    Parameters
    ----------
    path : path-like
        The TOML file; relative paths inside it are relative to its folder.
    draws, seed, max_unphysical : optional
        The command line's overrides of ``[run]`` (already validated). Parsers
        that run a Monte Carlo while reading (the probe reduction) use the
        run's settings, so that ``--check`` refuses exactly what the run would.
    progress : callable, optional
        ``progress(message)`` when a check takes more than a second (the plume rise inverted on the run's
        draws); by default nothing is said.

    Returns
    -------
    SurveySpec
    """
    path = Path(path).resolve()
    where = str(path)
    if not path.is_file():
        raise InputError("survey file", str(path), "an existing TOML file")
    try:
        raw = tomllib.loads(path.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as e:
        raise InputError("survey file", "not valid TOML", f"valid TOML ({e})", where=where) from None
    except UnicodeDecodeError:
        raise InputError("survey file", "not UTF-8 text", "a UTF-8 TOML file", where=where) from None
    nul = Collector()  # no file name or value may hold NUL; refuse before any reader meets one
    for key, value in _strings(raw, ""):
        if "\0" in value:
            nul.add(InputError(key, value.replace("\0", "\\0"), "text without NUL characters", where=where))
    nul.raise_if_any()
    allow = raw.get("run", {}).get("allow_implausible", False) if isinstance(raw.get("run"), dict) else False
    from ..limits import allowing_implausible, implausible_allowed

    allowed = allow is True or implausible_allowed()
    with allowing_implausible(allowed):
        spec = _load(raw, path, where, {"draws": draws, "seed": seed, "max_unphysical": max_unphysical}, progress)
    spec.allow_implausible = allowed
    if allowed:
        spec.warnings.add("run.allow_implausible", "values outside the plausibility limits are accepted "
                                                   "(ventflux.limits); check them before trusting the numbers")
    return spec


def _name_the_vent(errs: Collector, first: int, path: str, name):
    """Problems of one vent name it too: ``vent[1].orifice[0].velocity (vent 'Coalcap')``."""
    if not isinstance(name, str) or name == path:
        return
    for k in range(first, len(errs.errors)):
        e = errs.errors[k]
        if e.field == path or str(e.field).startswith((path + ".", path + "[")):
            errs.errors[k] = InputError(f"{e.field} (vent '{name}')", e.value, e.allowed, where=e.where)


def _strings(node, path):
    """Every string of a parsed TOML document with its key path (``vent[0].video.clip``)."""
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _strings(v, f"{path}.{k}" if path else str(k))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _strings(v, f"{path}[{i}]")
    elif isinstance(node, str):
        yield path, node


def _load(raw: dict, path: Path, where: str, overrides: dict | None = None, progress=None) -> SurveySpec:
    errs = Collector()
    warnings = Warnings()
    defaults: dict = {}
    top = Fields(raw, "", errs, where, path.parent, defaults, schema=survey_schema(), warnings=warnings)
    input_files = {str(path): "survey"}

    shared = {}
    sh = top.sub("shared")
    if sh is not None:
        for name in list(sh.table):
            v = sh.table[name]
            dim = "dimensionless"
            if isinstance(v, dict):
                sh.error(name, "(table)", "a value such as \"1.00 ± 0.03\" or \"2.0 ± 0.1 degC\"")
                continue
            text = str(v)
            dim = _guess_dimension(text)
            value = sh.quantity(name, dim, required=True)
            if value is not None:
                shared[name] = value
            else:  # its own line says why; the keys that refer to it say nothing more
                top.shared[name] = REFUSED_SHARED
    top.shared.update(shared)

    run = top.sub("run")
    from ..uncertainty import DEFAULT_MAX_UNPHYSICAL

    draws = DEFAULT_DRAWS
    seed = None
    max_unphysical = DEFAULT_MAX_UNPHYSICAL
    if run is not None:
        draws = run.number("draws", default=DEFAULT_DRAWS, minimum=100, maximum=1_000_000, integer=True)
        seed = run.number("seed", default=None, minimum=0, maximum=MAX_SEED, integer=True)
        allow = run.table.get("allow_implausible", False)
        run.mark_used("allow_implausible")
        if not isinstance(allow, bool):
            run.error("allow_implausible", repr(allow), "true or false")
        max_unphysical = run.number("max_unphysical", default=DEFAULT_MAX_UNPHYSICAL, minimum=0, maximum=0.99)
        run.mark_used("netcdf_draws")  # results.nc keeps the draws (ventflux.survey.netcdf)
        if not isinstance(run.table.get("netcdf_draws", False), bool):
            run.error("netcdf_draws", repr(run.table["netcdf_draws"]), "true or false")
        run.check_unknown()
    from ..uncertainty import DEFAULT_SEED

    seed = DEFAULT_SEED if seed is None else seed
    if run is None or "seed" not in run.table:
        defaults["run.seed"] = str(DEFAULT_SEED)
    if run is None:
        defaults["run.draws"] = str(DEFAULT_DRAWS)

    given = {k: v for k, v in (overrides or {}).items() if v is not None}  # the command line wins over [run]
    draws, seed = given.get("draws", draws), given.get("seed", seed)
    max_unphysical = given.get("max_unphysical", max_unphysical)
    # the draw count is named where it was set: the command line's option, or the file's key
    draws_field, draws_where = (("--draws", None) if "draws" in given else
                                ("run.draws" if run is not None and "draws" in run.table else "--draws", where))
    if draws is not None:
        # Parsers draw while reading (the probe reduction): refuse a count that cannot fit before they start,
        # on what the file holds for certain (the full count, patches and classes included, is checked below).
        before = len(errs.errors)
        with errs.check():
            check_memory(int(draws), _raw_series(raw), draws_field, where=draws_where)
        if len(errs.errors) > before:  # nothing else is read then: what was found so far is reported with it
            errs.raise_if_any()
    # every table is read with the run's settings from here on (the site's, the vents' and the sections' values)
    top.run.draws, top.run.seed = int(draws or DEFAULT_DRAWS), int(seed)
    top.run.max_unphysical = float(max_unphysical if max_unphysical is not None else DEFAULT_MAX_UNPHYSICAL)
    top.run.option = "--max-unphysical" if "max_unphysical" in given else "run.max_unphysical"
    site, cast = _parse_site(top.sub("site", required=True), input_files)
    methods, sections = survey_components()
    ctx = ParseContext(base_dir=path.parent, site=site, input_files=input_files, warnings=warnings, run=top.run,
                       progress=progress, stratification=cast)
    vents = []
    names = set()
    for vf in top.subs("vent"):
        first_error = len(errs.errors)
        name = vf.string("name", required=True) or vf.path
        if name in names:
            vf.error("name", name, "a vent name used only once in the survey")
        names.add(name)
        exit_t = vf.quantity("exit_temperature", "temperature")
        position = vf.position("position")
        parsed = {}
        for key, m in methods.items():
            if key not in vf.table:
                continue
            if m.many:
                parsed[key] = [m.parse(f, ctx) for f in vf.subs(key)]
            else:
                parsed[key] = m.parse(vf.sub(key), ctx)
        if not parsed and isinstance(vf.table, dict):
            vf.error("", name, "a vent with at least one method: " + ", ".join(sorted(methods)))
        vf.check_unknown()
        _check_vent(vf, name, exit_t, parsed, site, warnings, ctx)
        _name_the_vent(errs, first_error, vf.path, name)
        vents.append(VentSpec(name=name, exit_temperature=exit_t, methods=parsed, position=position))
    parsed_sections = {}
    for key, s in sections.items():
        if key in raw:
            parsed_sections[key] = s.parse(top.sub(key), ctx)
    if any("orifice" in v.methods for v in vents) and site is not None:
        _check_ambient_for_vent_fluid(top.sub("site"), site)
    if isinstance(parsed_sections.get("ridge_flank"), dict):
        _check_flank_observations(errs, parsed_sections["ridge_flank"].get("table"))
        _check_flank_rise(top.sub("ridge_flank"), parsed_sections["ridge_flank"].get("temperature_rise"), site)
    _check_positions(site, vents, parsed_sections, warnings)
    reservoirs = [_parse_reservoir(rf, names, site) for rf in top.subs("reservoir")]
    if "field_plume" in parsed_sections and isinstance(parsed_sections["field_plume"], dict):
        fp = top.sub("field_plume")
        if fp is not None:
            _check_rise_height(fp, parsed_sections["field_plume"].get("height"), site)
            _check_plume_spread(fp, parsed_sections["field_plume"])
            _check_plume_solvable(fp, parsed_sections["field_plume"], site, "field plume", ctx)
    top.check_unknown()
    if not vents and not parsed_sections:
        errs.add(InputError("survey", "no [[vent]] and no field-wide section", "at least one vent or section",
                            where=where))
    if draws is not None:
        with errs.check():
            check_memory(int(draws), _series(vents, parsed_sections), draws_field, where=draws_where)
    errs.raise_if_any()
    assert site is not None  # a missing [site] was reported and raised just above
    return SurveySpec(path=path, site=site, draws=int(draws), seed=int(seed), shared=shared, vents=vents,
                      sections=parsed_sections, reservoirs=reservoirs, defaults_used=defaults,
                      input_files=input_files, max_unphysical=float(max_unphysical), warnings=warnings,
                      netcdf_draws=run is not None and run.table.get("netcdf_draws") is True)


#: Farther than this from the site's latitude/longitude, a vent's or patch's position is flagged (a vent field
#: spans a few km; a larger distance is more likely a typo or a sign error than a vent; a choice).
POSITION_WARNING_KM = 20.0


def _check_positions(site, vents, sections, warnings: Warnings) -> None:
    """Flag (not refuse) a latitude/longitude far from the site's: the map would show it, the numbers not."""
    if site is None or site.latitude is None or site.longitude is None:
        return
    import math

    def km(p: Position) -> float:  # equirectangular, mean Earth radius 6371 km: ample at these distances
        dlon = (p.longitude - site.longitude + 180.0) % 360.0 - 180.0
        x = math.radians(dlon) * math.cos(math.radians((p.latitude + site.latitude) / 2))
        return 6371.0 * math.hypot(x, math.radians(p.latitude - site.latitude))

    placed = [(f"vent[{i}].position", f"vent '{v.name}'", v.position) for i, v in enumerate(vents)]
    diffuse = sections.get("diffuse")
    for name, pos in ((diffuse or {}).get("positions") or {}).items() if isinstance(diffuse, dict) else ():
        placed.append(("diffuse.patches", f"patch '{name}'", pos))
    for key, what, pos in placed:
        if pos is not None and pos.latitude is not None and km(pos) > POSITION_WARNING_KM:
            warnings.add(key, f"{what} lies {km(pos):.0f} km from the site's latitude/longitude: check its position")


def _series(vents, sections) -> int:
    """How many arrays of draws a run holds at once, roughly: one per orifice, patch, class and section."""
    n = 8  # the site's shared inputs and the field totals
    for v in vents:
        for parsed in v.methods.values():
            n += 4 * (len(parsed) if isinstance(parsed, list) else 1)
    for parsed in sections.values():
        table = parsed.get("table") if isinstance(parsed, dict) else None
        n += 4 + 4 * len(getattr(table, "names", ()))
    return n


def _raw_series(raw: dict) -> int:
    """A lower bound of ``_series`` from the file as read, before any parser runs: its vents' methods, its
    sections."""
    n = 8
    for vent in raw.get("vent", []) if isinstance(raw.get("vent"), list) else []:
        for value in vent.values() if isinstance(vent, dict) else ():
            if isinstance(value, dict):
                n += 4
            elif isinstance(value, list):
                n += 4 * sum(isinstance(v, dict) for v in value)
    n += 4 * sum(isinstance(v, dict) for k, v in raw.items() if k not in ("site", "run", "shared", "vent"))
    return n


def _check_vent(f: Fields, name, exit_t, methods: dict, site, warnings: Warnings, ctx: ParseContext):
    """Cross-field checks of one vent that no single key can make."""
    plume = methods.get("plume_rise")
    if isinstance(plume, dict):
        sub = f.sub("plume_rise")
        if sub is not None:
            _check_rise_height(sub, plume.get("height"), site)
            _check_plume_solvable(sub, plume, site, name, ctx)
            if len(methods) > 1:
                _check_plume_spread(sub, plume)
    for i, o in enumerate(methods.get("orifice") or []):
        if isinstance(o, dict) and o.get("temperature") is not None:
            sub = f.subs("orifice")[i] if i < len(f.subs("orifice")) else None
            if sub is not None:
                _check_hot_tail(sub, o["temperature"], site)
    _screen_orifices(f, name, methods.get("orifice"), site, ctx)
    if exit_t is None and "orifice" not in methods:
        warnings.add(f.path, f"vent '{name}' has no exit temperature (no exit_temperature and no orifice "
                             "measurement): its heat counts in the totals but it is left out of the field's water "
                             "flux total")


def _screen_orifices(f: Fields, vent: str, orifices, site, run: ParseContext) -> None:
    """A vent's orifices drawn and screened as the run will (``builtin.screen_orifices``, on the run's draws).

    Each input's own 5–95 % range is checked above; what only the draws together show (two inputs each
    impossible in 4 % of their draws drop 8 % of the orifice's draws) is refused here, by the key of the input
    whose draws were impossible most often, as the run would refuse it. Skipped while an input of the vent is
    refused already (its own line says why; the draws of a refused input mean nothing).
    """
    if not orifices or site is None or not all(isinstance(o, dict) for o in orifices):
        return
    if any(str(e.field).startswith(f.path + ".") or e.field == f.path for e in f.errors.errors):
        return
    from .builtin import orifice_key, screen_orifices

    try:
        ctx = run.trial_run()
        refused = screen_orifices(orifices, vent, ctx)
    except (InputError, InputErrors, TypeError, ValueError, AttributeError, ArithmeticError):
        return  # the site's or the inputs' own checks name it
    subs = f.subs("orifice")
    for i, e in refused:
        sub = subs[i] if i < len(subs) else f
        key = orifice_key(str(e.field), orifices[i])
        written = sub.table.get(key, e.value) if key else e.value
        sub.error(key, written, f"{e.allowed} (met in the run's {run.draws} draws; drawn as '{e.field}')")


def _check_plume_spread(f: Fields, plume: dict):
    """A plume estimate compared with other methods needs an uncertainty: an exact one cannot be weighed."""
    def uncertain(v):
        v = v.value if isinstance(v, SharedRef) else v
        return hasattr(v, "kind") and v.b > 0 and not (v.kind == "lognormal" and v.b == 1)

    keys = ["height", "buoyancy_frequency", "stratification_scale", "current"]
    if plume.get("method", "integral") == "integral":
        keys.append("entrainment")
    if plume.get("height") is not None and not any(uncertain(plume.get(k)) for k in keys):
        f.error("rise_height", f.raw("rise_height"), "a rise height with its uncertainty, e.g. \"195 ± 20 m\": this "
                                                  "estimate is compared with others, and an exact one cannot be "
                                                  "weighed against them")


def _check_hot_tail(f: Fields, temperature, site):
    """The exit temperature's 95 % point must stay in the vent-fluid model (not boiling at the site's pressure):
    the run drops draws that boil and refuses an input when more than 5 % do."""
    value = temperature.value if isinstance(temperature, SharedRef) else temperature
    if not hasattr(value, "kind") or site is None:
        return  # an exact value is checked by the method's own parser
    from ..limits import _span
    from ..properties import fluid_model

    p = _site_pressure(site)
    if p is None:
        return
    _, _, hi = _span(value, "K")
    try:
        fluid_model().check(hi, float(p.to("Pa").magnitude), "temperature")
    except InputError as e:
        f.error("exit_temperature", f.raw("exit_temperature"), f"an exit temperature whose 95 % point "
                                                          f"({hi - 273.15:.1f} degC) is still {e.allowed} "
                                                          "(narrow the spread)")


def _check_rise_height(f: Fields, height, site):
    """A plume cannot rise above the sea surface: the rise height (up to its 95 % point) stays below the depth."""
    if height is None or site is None:
        return
    from ..limits import _span

    depth = _site_depth_m(site)
    if depth is None:
        return
    value = height.value if isinstance(height, SharedRef) else height
    try:
        _, _, hi = _span(value, "m")
    except (InputError, TypeError, ValueError, AttributeError):
        return
    if not hi < depth:
        f.error("rise_height", f.raw("rise_height"), f"a rise height below the site's depth ({depth:.0f} m) up to its "
                                                  "95 % point: a plume cannot rise above the sea surface")
    elif site.ctd_extent is not None and not depth - hi >= site.ctd_extent[0] and not f.has("buoyancy_frequency"):
        f.error("rise_height", f.raw("rise_height"), f"a rise height (up to its 95 % point) within the CTD cast: "
                                                      f"at most {depth - site.ctd_extent[0]:.0f} m above the site "
                                                      f"(the cast starts at {site.ctd_extent[0]:.0f} m)")


def _site_depth_m(site):
    try:
        if site.depth is not None:
            return float(site.depth.to("m").magnitude)
        if site.pressure is not None:
            import gsw

            from ..properties.seawater import sea_pressure_dbar

            return float(-gsw.z_from_p(float(sea_pressure_dbar(site.pressure)), site.latitude or 0.0))
    except (InputError, TypeError, ValueError, AttributeError):
        return None
    return None


def _site_pressure(site):
    from ..orifice import in_situ_pressure

    try:
        return in_situ_pressure(site.pressure, site.depth, site.latitude)
    except (InputError, TypeError, ValueError, AttributeError):
        return None


def _guess_dimension(text: str) -> str:
    """Dimension of a [shared] value from its unit (a bare number is a relative factor)."""
    from ..uncertainty import parse_uncertain
    from ..units import DIMENSIONS

    order = ["dimensionless", "temperature"] + [d for d in DIMENSIONS if d not in ("dimensionless", "temperature",
                                                                                   "angle")]
    for name in order:
        try:
            parse_uncertain(text, name, "shared")
            return name
        except InputError:
            continue
    return "dimensionless"


def _parse_site(f: Fields | None, input_files: dict) -> tuple[SiteSpec | None, AmbientProfile | None]:
    """The site, and its CTD cast as the run reads it (None without a readable one)."""
    if f is None:
        return None, None
    name = f.string("name", required=True)
    cruise = f.string("cruise")
    depth = f.quantity("depth", "length", uncertain=False, positive=True)
    pressure = f.quantity("absolute_pressure", "pressure", uncertain=False, positive=True)
    if (depth is None) == (pressure is None) and f.has("depth") == f.has("absolute_pressure"):
        f.error("depth", "both or neither of depth and absolute_pressure", "exactly one of depth or absolute_pressure")
    lat = f.number("latitude", required=True, minimum=POSITION_BOUNDS["latitude"][0],
                   maximum=POSITION_BOUNDS["latitude"][1])
    lon = f.number("longitude", required=True, minimum=POSITION_BOUNDS["longitude"][0],
                   maximum=POSITION_BOUNDS["longitude"][1])
    t_amb = f.quantity("ambient_temperature", "temperature", required=True)
    s_amb = f.quantity("ambient_salinity", "dimensionless", default=None)
    if s_amb is None and "ambient_salinity" not in f.table:
        from ..orifice import DEFAULT_AMBIENT_SALINITY

        s_amb = Q_(DEFAULT_AMBIENT_SALINITY, "dimensionless")
        f.defaults[f.key("ambient_salinity")] = f"{DEFAULT_AMBIENT_SALINITY} (TEOS-10 reference salinity)"
    ctd = f.path_value("ctd")
    if ctd is not None:
        input_files[str(ctd)] = "CTD cast"
    elif "ctd" in f.table:
        # The cast's own error is reported; methods that would use it must not also report a missing
        # stratification, so the site keeps a placeholder (the run never starts with errors).
        ctd = Path("(unreadable CTD cast)")
    window = f.quantity("ctd_smoothing", "length", uncertain=False, positive=True)
    profile = f.table.get("ctd_profile")
    f.mark_used("ctd_profile")
    if profile is not None and (isinstance(profile, bool) or not (
            (isinstance(profile, int) and profile >= 0) or (isinstance(profile, str) and profile.strip()))):
        f.error("ctd_profile", repr(profile), "a cast's position in the file (an integer, 0 first) or its "
                                              "profile_id (text)")
        profile = None
    f.check_unknown()
    site = SiteSpec(name=name, pressure=pressure, depth=depth, latitude=lat, longitude=lon,
                    ambient_temperature=t_amb, ambient_salinity=s_amb, ctd=ctd, ctd_window=window, cruise=cruise,
                    ctd_profile=profile)
    _check_ambient(f, site)
    if ctd is not None and "ctd_smoothing" in f.table and window is None:
        return site, None  # the window's own error is reported; the cast is read once it is fixed
    if ctd is not None and f.key("ctd") not in {e.field for e in f.errors.errors}:
        return site, _check_ctd(f, site)
    return site, None


def _check_ambient(f: Fields, site: SiteSpec):
    """The ambient seawater must lie in TEOS-10's funnel at the site's pressure, over its 5-95 % range."""
    if site.ambient_temperature is None or (site.depth is None and site.pressure is None):
        return
    import gsw
    import numpy as np

    from ..limits import _span
    from ..properties.seawater import absolute_salinity, sea_pressure_dbar

    p_abs = _site_pressure(site)
    if p_abs is None:
        return
    try:
        p = float(sea_pressure_dbar(p_abs))
        t = np.array(_span(site.ambient_temperature, "degC"))
        sp = np.array(_span(site.ambient_salinity, "dimensionless")) if site.ambient_salinity is not None \
            else np.array([35.0])
    except (InputError, TypeError, ValueError, AttributeError):
        return
    for tt, ss in ((t_, s_) for t_ in t for s_ in sp):
        SA = float(absolute_salinity(ss, p, site.longitude, site.latitude))
        CT = float(gsw.CT_from_t(SA, tt, p))
        if not bool(gsw.infunnel(SA, CT, p)):
            tf = float(gsw.t_freezing(SA, p, 0))
            key = "ambient_salinity" if not 0 <= ss <= 42 else "ambient_temperature"
            f.error(key, f.table.get(key), f"seawater within TEOS-10's validity at the site's {p:.0f} dbar over "
                                          f"its 5-95 % range: above its freezing point ({tf:.2f} degC) and at most "
                                          "40 degC, salinity 0-42")
            return


def _check_ambient_for_vent_fluid(f: Fields | None, site: SiteSpec):
    """Orifice heat is an enthalpy difference in the vent-fluid model at both ends, so the ambient water
    (nominal and 5 % point) must lie in that model's validity too (IAPWS-95 starts at 0.01 degC)."""
    if f is None or site.ambient_temperature is None:
        return
    from ..limits import _span
    from ..properties import fluid_model

    p = _site_pressure(site)
    if p is None or f.key("ambient_temperature") in {e.field for e in f.errors.errors}:
        return
    nom, lo, _ = _span(site.ambient_temperature, "K")
    for value in (nom, lo):
        try:
            fluid_model().check(value, float(p.to("Pa").magnitude), "ambient_temperature")
        except InputError as e:
            f.error("ambient_temperature", f.table.get("ambient_temperature"),
                    f"an ambient temperature (and its 5 % point) within the vent-fluid model used at both ends of "
                    f"the orifice enthalpy difference: {e.allowed}")
            return


def _check_flank_rise(f: Fields | None, rise, site):
    """The circulated seawater (ambient + rise) is TEOS-10 seawater, at most 40 degC, in every draw: the
    ridge-flank estimate uses each draw, so the rise's 99.99 % point is checked (about the largest of
    10,000 draws)."""
    if f is None or rise is None or site is None or site.ambient_temperature is None:
        return
    from statistics import NormalDist

    value = rise.value if isinstance(rise, SharedRef) else rise
    z = NormalDist().inv_cdf(0.9999)
    if hasattr(value, "kind"):
        a, b = float(value.a), float(value.b)
        top = {"normal": a + z * b, "uniform": b, "lognormal": a * b ** z}[value.kind]
        from ..units import Q_ as _Q

        top_k = float(_Q(top, value.unit).to("K").magnitude) if value.unit not in ("degree_Celsius",) else top
    else:
        top_k = float(value.to("K").magnitude)
    try:
        from ..limits import _span

        t_amb = _span(site.ambient_temperature, "degC")[0]
    except (TypeError, ValueError, AttributeError):
        return
    if t_amb + top_k > 40.0:
        f.error("temperature_rise", f.table.get("temperature_rise"),
                f"a rise that keeps the circulated seawater within TEOS-10 (at most 40 degC) in every draw: "
                f"its 99.99 % point, {top_k:.3g} K above {t_amb:.3g} degC, is too high (narrow the spread)")


def _check_flank_observations(errs: Collector, table):
    """The ridge-flank integral needs at least two distinct ages and heat flows ≥ 0 (checked at file:line)."""
    if table is None:
        return
    import numpy as np

    age = table["age"].to("Myr").magnitude
    q = table["heat_flow"].to("mW/m^2").magnitude

    def where(i):
        return f"{table.path}:{table.lines[i]}"

    if age.size < 2:
        errs.add(InputError("age", f"{age.size} row", "at least two observations", where=str(table.path)))
    first: dict = {}
    for i, a in enumerate(age):
        if a < 0:
            errs.add(InputError("age", f"{a:g} Myr", "a crustal age ≥ 0", where=where(i)))
        if a in first:
            errs.add(InputError("age", f"{a:g} Myr", f"distinct observation ages (also on line {first[a]})",
                                where=where(i)))
        first.setdefault(a, int(table.lines[i]))
    for j in np.flatnonzero(q < 0):
        errs.add(InputError("heat_flow", f"{q[j]:g} mW/m^2", "a heat flow ≥ 0", where=where(j)))


def _check_ctd(f: Fields, site: SiteSpec) -> AmbientProfile | None:
    """Read the cast now, so that --check finds every problem the run would (order, numbers, stability).

    Returns the cast (the plume checks use it), or None when it is refused."""
    from ..vocabulary import deprecation_line
    from .schema import renamed_columns

    cast = Path(site.ctd or "")
    for old, new in renamed_columns(cast, CTD_COLUMNS):
        f.warnings.add(f.key("ctd"), deprecation_line(old, new, where=f"column of {cast.name}"))
    from .api import read_stratification  # the cast as the run reads it: one reading, its options included

    try:
        prof = read_stratification(site)
    except InputErrors as e:
        f.errors.errors.extend(_in_key(x, f.key("ctd")) for x in e.errors)
        return None
    except InputError as e:
        f.errors.add(_profile_key(f, e) if e.field == "profile" else _in_key(e, f.key("ctd")))
        return None
    z = prof.depth.to("m").magnitude
    site.ctd_extent = (float(z.min()), float(z.max()))
    depth = _site_depth_m(site)
    if depth is not None and not z.min() <= depth <= z.max():
        key = "depth" if site.depth is not None else "absolute_pressure"
        f.error(key, f.raw(key), f"a site within the depth range of the CTD cast ({z.min():.0f} to "
                                       f"{z.max():.0f} m after binning), or a cast that reaches the site")
    return prof


def _check_plume_solvable(f: Fields, plume, site, vent: str, run: ParseContext) -> None:
    """The plume-rise inversion must have a solution in the run's draws, as the run needs.

    The run drops the draws whose rise height no plume reaches in the site's
    stratification (a dense layer or a spike in the cast can cap every plume
    below it) and refuses the estimate when more than ``[run] max_unphysical``
    of them fail; ``--check`` refuses the same file here, by making the run's
    propagation (``plume_method.propagation``) on the run's draws (``run``: its
    count, seed, limit and cast). Each input's own tail (its share of draws ≤ 0)
    is checked where it is read (``Fields.quantity``).
    """
    if not isinstance(plume, dict) or plume.get("height") is None or site is None:
        return

    def key_of(k):  # the parsed plume holds "height"; the file says rise_height (or, for one release, height)
        return "rise_height" if k == "height" and "height" not in f.table else k

    keys = ("height", "entrainment", "buoyancy_frequency", "stratification_scale", "current")
    if any(e.field in {f.key(key_of(k)) for k in keys} for e in f.errors.errors):
        return  # an input of this plume is already refused: its own line says why
    if plume.get("buoyancy_frequency") is None and run.stratification is None:
        return  # neither a cast (or it is refused, with its own line) nor a constant N
    # The run's own propagation on the run's own draws (same seed, count and stream names): the share of draws
    # without a plume solution is then exactly the run's. Trying each input's 5 % and 95 % points one at a time
    # missed joint failures: a spike in the cast that caps the plumes of the high rises and strong entrainments
    # together (found by the whole-demo fuzz of tests/test_check_fuzz.py).
    from ..waiting import notice_if_slow
    from .plume_method import propagation

    try:
        ctx = run.trial_run()
    except (InputError, InputErrors, TypeError, ValueError, AttributeError):
        return  # the site's own checks name it
    try:
        # the run takes this result instead of solving again (same inputs, draws and site)
        with notice_if_slow(run.progress, f"checking {vent if vent == 'field plume' else repr(vent)}: inverting "
                            f"its plume rise on the run's {run.draws} draws (slow with this cast; the run then "
                            "reuses it)"):
            propagation(plume, vent, ctx, track=plume.get("method") == "integral", hand_over=True)
    except InputError as e:
        if not str(e.field).endswith("plume_rise"):  # one input's draws refused: named by its key, as the run would
            stream = str(e.field)
            key = key_drawn_as(stream, plume) or stream.rsplit("/", 1)[-1]
            key = key if key in keys else "height"
            f.error(key_of(key), f.table.get(key_of(key), "(default)"),
                    f"{e.allowed} (met in the run's {run.draws} draws)")
            return
        f.error(key_of("height"), f.table.get(key_of("height")),
                f"a rise height the plume model reaches in the site's stratification in all but at most "
                f"{run.max_unphysical:.1%} of the run's {run.draws} draws ({e.value}; a dense layer or a spike in "
                "the cast can cap the plumes below it; the run drops such draws and refuses above that share)")
    except (InputErrors, TypeError, ValueError, AttributeError, ArithmeticError):
        return  # not this check's to report: the inputs' own checks name them


def _profile_key(f: Fields, e: InputError) -> InputError:
    """The cast chosen in a file of several: named by the key that chooses it (``site.ctd_profile``)."""
    cast = f" in {Path(str(e.where)).name}" if e.where else ""
    return InputError(f.key("ctd_profile"), e.value, f"{e.allowed}{cast}", where=f.where)


def _in_key(e: InputError, key: str) -> InputError:
    """A data file's problem keeps its file:line and also names the survey key that points at the file."""
    if e.where and ":" in str(e.where).rsplit("/", 1)[-1]:
        return e  # file:line already says where
    return InputError(f"{key}: {e.field}" if e.field != key else key, e.value, e.allowed, where=e.where)


def _parse_reservoir(f: Fields, vent_names, site=None) -> ReservoirSpec:
    name = f.string("name", required=True)
    supplies = f.string("supplies", default="field total")
    if supplies is not None and supplies not in ("field total", "focused", "diffuse") and supplies not in vent_names:
        f.error("supplies", supplies, "'field total', 'focused', 'diffuse' or a vent name")
    opts = {}
    for key, dim in (("volume", "volume"), ("area", "area"), ("thickness", "length"),
                     ("temperature_drop", "temperature"), ("temperature", "temperature"),
                     ("melt_volume", "volume"), ("rock_density", "density")):
        v = f.quantity(key, dim, uncertain=False, positive=key not in ("temperature",))
        if v is not None:
            opts[key] = v
    por = f.number("porosity", minimum=0, maximum=0.99)
    if por is not None:
        opts["porosity"] = por
    size = f.quantity("size", "length", uncertain=False, positive=True)
    _reservoir_pressure(f, opts, site)
    if "temperature_drop" not in opts and "temperature_drop" not in f.table:
        f.error("temperature_drop", "(missing)", "the temperature drop of the hot rock, e.g. \"400 K\"")
    if "volume" not in opts and not ("area" in opts and "thickness" in opts) and not (
            {"volume", "area", "thickness"} & set(f.table)):
        f.error("volume", "(missing)", "a volume, or an area and a thickness")
    f.check_unknown()
    return ReservoirSpec(name=name, supplies=supplies or "field total", options=opts, size=size)


def _reservoir_pressure(f: Fields, opts: dict, site) -> None:
    """The reservoir's pressure (given, or the site's seafloor pressure plus a depth below the seafloor),
    and a check of its pore fluid's state, so that --check refuses what the run would."""
    from .. import reservoir as rv

    p = f.quantity("pressure", "pressure", uncertain=False, positive=True)
    z = f.quantity("depth_below_seafloor", "length", uncertain=False)
    regime = f.string("pressure_regime", default="hydrostatic")
    if regime not in rv.PRESSURE_REGIMES:
        f.error("pressure_regime", regime, "one of " + ", ".join(rv.PRESSURE_REGIMES))
        return
    if p is not None and z is not None:
        f.error("depth_below_seafloor", str(z), "either a pressure or a depth below the seafloor, not both")
        return
    seafloor = None
    if site is not None and (site.pressure is not None or site.depth is not None):
        from ..orifice import in_situ_pressure

        try:
            seafloor = in_situ_pressure(site.pressure, site.depth, site.latitude)
        except InputError:
            seafloor = None  # the [site] error is reported there
    wet = opts.get("porosity", rv.POROSITY) > 0 and "temperature" in opts
    try:
        if z is not None and seafloor is not None:
            p = rv.reservoir_pressure(seafloor, z, regime, opts.get("rock_density", rv.ROCK_DENSITY))
        elif p is None and wet and seafloor is not None:
            p = seafloor
            f.defaults[f.key("pressure")] = "the site's seafloor pressure (no pressure or depth_below_seafloor given)"
    except InputError as e:
        f.error("depth_below_seafloor", e.value, e.allowed)
        return
    if p is None:
        return
    opts["pressure"] = p
    if wet and "temperature_drop" in opts:
        keys = {"reservoir temperature": "temperature", "temperature drop": "temperature_drop",
                "reservoir pressure": "depth_below_seafloor" if z is not None else "pressure"}
        try:
            rv.check_pore_fluid(opts["temperature"], opts["temperature_drop"], p)
        except InputError as e:
            f.error(keys.get(e.field, "temperature"), e.value, e.allowed)
