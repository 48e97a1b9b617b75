"""The survey file: a human-editable TOML description of one vent-field survey.

Layout (every key is documented in ``ventflux survey --format``)::

    [site]            name, depth or pressure, latitude, longitude,
                      ambient_temperature, ambient_salinity, ctd (a CSV cast)
    [run]             draws, seed, max_unphysical (share of draws dropped as
                      physically impossible before the run refuses; 0.05)
    [shared]          named uncertain inputs drawn once per draw for every
                      value that refers to them as "@name"
    [[vent]]          one table per focused vent: name, exit_temperature,
                      and one or more methods as sub-tables
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

from ..errors import Collector, InputError
from ..units import Q_
from .api import ParseContext
from .fields import Fields

#: Default Monte Carlo draws of a survey run (a choice: the 5-95 % limits of
#: 10,000 draws are reproducible to about 1 % of the interval width).
DEFAULT_DRAWS = 10_000


@dataclass
class SiteSpec:
    name: str
    pressure: object
    depth: object
    latitude: float
    longitude: float
    ambient_temperature: object
    ambient_salinity: object
    ctd: Path | None
    ctd_window: object
    cruise: str | None = None


@dataclass
class VentSpec:
    name: str
    exit_temperature: object
    methods: dict  # method key -> parsed spec (a list for "many" methods)


@dataclass
class ReservoirSpec:
    name: str
    supplies: str
    options: dict
    size: object


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


def survey_components():
    """Survey methods and sections of the core and every plugin, by their key in the survey file."""
    from ..registry import survey_methods, survey_sections

    methods = {m.key: m for m in survey_methods()}
    sections = {s.key: s for s in survey_sections()}
    return methods, sections


def load_survey(path) -> SurveySpec:
    """Read and validate a survey file; raise ``InputErrors`` listing every problem.

    Parameters
    ----------
    path : path-like
        The TOML file; relative paths inside it are relative to its folder.

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
    errs = Collector()
    defaults: dict = {}
    top = Fields(raw, "", errs, where, path.parent, defaults)
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
    top.shared.update(shared)

    site = _parse_site(top.sub("site", required=True), input_files)
    run = top.sub("run")
    from ..uncertainty import DEFAULT_MAX_UNPHYSICAL

    draws = DEFAULT_DRAWS
    seed = None
    max_unphysical = DEFAULT_MAX_UNPHYSICAL
    if run is not None:
        draws = run.number("draws", default=DEFAULT_DRAWS, minimum=100, maximum=1_000_000, integer=True)
        seed = run.number("seed", default=None, minimum=0, integer=True)
        max_unphysical = run.number("max_unphysical", default=DEFAULT_MAX_UNPHYSICAL, minimum=0, maximum=0.99)
        run.check_unknown()
    from ..uncertainty import DEFAULT_SEED

    seed = DEFAULT_SEED if seed is None else seed
    if run is None or "seed" not in run.table:
        defaults["run.seed"] = str(DEFAULT_SEED)
    if run is None:
        defaults["run.draws"] = str(DEFAULT_DRAWS)

    methods, sections = survey_components()
    ctx = ParseContext(base_dir=path.parent, site=site, input_files=input_files)
    vents = []
    names = set()
    for vf in top.subs("vent"):
        name = vf.string("name", required=True) or vf.path
        if name in names:
            vf.error("name", name, "a vent name used only once in the survey")
        names.add(name)
        exit_t = vf.quantity("exit_temperature", "temperature")
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
        vents.append(VentSpec(name=name, exit_temperature=exit_t, methods=parsed))
    parsed_sections = {}
    for key, s in sections.items():
        if key in raw:
            parsed_sections[key] = s.parse(top.sub(key), ctx)
    reservoirs = [_parse_reservoir(rf, names, site) for rf in top.subs("reservoir")]
    top.check_unknown()
    if not vents and not parsed_sections:
        errs.add(InputError("survey", "no [[vent]] and no field-wide section", "at least one vent or section",
                            where=where))
    errs.raise_if_any()
    return SurveySpec(path=path, site=site, draws=int(draws), seed=int(seed), shared=shared, vents=vents,
                      sections=parsed_sections, reservoirs=reservoirs, defaults_used=defaults,
                      input_files=input_files, max_unphysical=float(max_unphysical))


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


def _parse_site(f: Fields | None, input_files: dict) -> SiteSpec | None:
    if f is None:
        return None
    name = f.string("name", required=True)
    cruise = f.string("cruise")
    depth = f.quantity("depth", "length", uncertain=False, positive=True)
    pressure = f.quantity("pressure", "pressure", uncertain=False, positive=True)
    if (depth is None) == (pressure is None) and ("depth" in f.table) == ("pressure" in f.table):
        f.error("depth", "both or neither of depth and pressure", "exactly one of depth or pressure")
    lat = f.number("latitude", required=True, minimum=-90, maximum=90)
    lon = f.number("longitude", required=True, minimum=-180, maximum=360)
    t_amb = f.quantity("ambient_temperature", "temperature", required=True)
    s_amb = f.quantity("ambient_salinity", "dimensionless", default=None)
    if s_amb is None and "ambient_salinity" not in f.table:
        from ..orifice import DEFAULT_AMBIENT_SALINITY

        s_amb = Q_(DEFAULT_AMBIENT_SALINITY, "dimensionless")
        f.defaults[f.key("ambient_salinity")] = f"{DEFAULT_AMBIENT_SALINITY} (TEOS-10 reference salinity)"
    ctd = f.path_value("ctd")
    if ctd is not None:
        input_files[str(ctd)] = "CTD cast"
    window = f.quantity("ctd_smoothing", "length", uncertain=False, positive=True)
    f.check_unknown()
    return SiteSpec(name=name, pressure=pressure, depth=depth, latitude=lat, longitude=lon,
                    ambient_temperature=t_amb, ambient_salinity=s_amb, ctd=ctd, ctd_window=window, cruise=cruise)


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
