"""One vocabulary: the name of each quantity in options, survey keys, CSV columns and JSON keys.

Every command, the survey file, the tables and the JSON use the names below
(the contributor guide's vocabulary table is generated from ``QUANTITIES``).
Names used by earlier releases are still accepted for one release: an old
option or survey key works, with one deprecation line on standard error (and,
in a survey, an entry in the run's warnings), naming the new spelling.

Conventions (common practice, no source): options ``--kebab-case``; survey
keys and CSV columns ``snake_case``; CSV columns carry their unit in brackets
(``heat_power [MW]``); JSON keys carry the SI unit after an underscore
(``heat_power_W``; temperatures in ``degC``, a derived SI unit; ratios bare);
dimensionless quantities are written with unit ``1`` (the CF and UDUNITS
convention); spreads are ``_sd`` (standard deviation of the draws) and
percentiles ``_p05``/``_p50``/``_p95``. "Absolute pressure" (the in-situ
pressure, including the atmosphere) and "sea pressure" (absolute minus one
standard atmosphere, what a CTD reports) are never both called "pressure".
"""

from __future__ import annotations

import argparse
import re
import sys
from dataclasses import dataclass

#: The release after which the old spellings below stop being accepted.
REMOVED_IN = "0.4"


@dataclass(frozen=True)
class Quantity:
    """How one quantity is written everywhere (empty string: not used there)."""

    quantity: str
    option: str = ""
    survey_key: str = ""
    csv_column: str = ""
    json_key: str = ""


QUANTITIES: tuple[Quantity, ...] = (
    Quantity("exit temperature of vent fluid", "--exit-temperature", "exit_temperature",
             "exit_temperature [degC]", "exit_temperature_degC"),
    Quantity("exit velocity (area mean)", "--velocity", "velocity", "mean_velocity [m/s]", "mean_velocity_m_s"),
    Quantity("orifice size", "--diameter, --minor-diameter, --area", "diameter, minor_diameter, area",
             "area [cm^2]", "area_m2"),
    Quantity("ambient in-situ temperature", "--ambient-temperature", "ambient_temperature",
             "temperature [degC] (CTD)", "ambient_temperature_degC"),
    Quantity("ambient practical salinity", "--ambient-salinity", "ambient_salinity", "salinity [1] (CTD)",
             "ambient_salinity"),
    Quantity("absolute in-situ pressure", "--absolute-pressure", "absolute_pressure", "absolute_pressure [dbar]",
             "absolute_pressure_Pa"),
    Quantity("sea pressure (absolute minus one atmosphere)", "--sea-pressure", "sea_pressure",
             "sea_pressure [dbar]", "sea_pressure_Pa"),
    Quantity("depth below the sea surface", "--depth", "depth", "depth [m]", "depth_m"),
    Quantity("heat power", "--heat-power", "heat_power", "heat_power [MW]", "heat_power_W"),
    Quantity("heat power by the constant-c_p shortcut (shown beside)", "", "",
             "heat_power_constant_cp [MW]", "heat_power_constant_cp_W"),
    Quantity("volume flux", "", "", "volume_flux [m^3/s]", "volume_flux_m3_s"),
    Quantity("rise height of a plume", "--rise-height", "rise_height", "rise_height [m]", "rise_height_m"),
    Quantity("half spreading rate of a ridge", "--half-spreading-rate", "half_spreading_rate",
             "half_spreading_rate [mm/yr]", "half_spreading_rate_m_s"),
    Quantity("pixel size of a clip", "--pixel-size", "pixel_size", "pixel_size [mm]", "pixel_size_m"),
    Quantity("Monte Carlo draws, seed", "--draws, --seed", "[run] draws, seed", "", "draws, seed"),
    Quantity("limit on unphysical draws", "--max-unphysical", "[run] max_unphysical", "",
             "max_unphysical_share"),
    Quantity("draws dropped as unphysical", "", "", "unphysical_draws", "unphysical_draws"),
    Quantity("spread and percentiles of the draws", "", "", "heat_power_sd [MW], heat_power_p05 [MW]",
             "heat_power_W_sd, heat_power_W_p05, heat_power_W_p95"),
    Quantity("uncertainty budget", "--budget", "", "first_order, total_effect, width_if_known [MW]",
             "budget, first_order, total_effect, width_if_known_W"),
    Quantity("plausibility override", "--allow-implausible", "[run] allow_implausible", "",
             "implausible_values_allowed"),
    Quantity("progress messages off", "--quiet", "", "", ""),
    Quantity("current speed across a water-column section (a constant)", "--current", "water_column.current", "",
             ""),
    Quantity("bearing toward which the current flows", "--current-direction", "water_column.current_direction", "",
             ""),
    Quantity("measured current components", "", "", "current_east [m/s], current_north [m/s]", ""),
    Quantity("current meter or ADCP record", "--current-record", "water_column.current_record", "", ""),
    Quantity("accuracy of a measured current (per component)", "--current-uncertainty",
             "water_column.current_uncertainty", "", ""),
    Quantity("sections of a closed box", "section files (positional)", "water_column.sections", "", "box"),
    Quantity("largest gap allowed between a box's sections", "--closure-tolerance",
             "water_column.closure_tolerance", "", "closure_tolerance_m"),
    Quantity("depth band of a box's integral", "--band-top, --band-bottom",
             "water_column.band_top, water_column.band_bottom", "", "band_top_m, band_bottom_m"),
    Quantity("heat flux across a section / out of a box", "", "", "", "heat_flux_W, net_heat_flux_W"),
    Quantity("samples dropped for missing values", "", "", "", "missing_samples_dropped"),
    Quantity("conductive length of a reservoir", "--size, --cooled-faces", "size", "", "conductive_length"),
    Quantity("pressure below the seafloor (reservoir)", "--depth-below-seafloor, --seafloor-pressure, "
             "--pressure-regime", "depth_below_seafloor, pressure_regime", "", ""),
    Quantity("flank deficit span", "--deficit-span", "", "", "water_column_deficit"),
    Quantity("view of a clip", "--view", "view", "view", "view"),
    Quantity("tracer-to-velocity width ratio", "--tracer-to-velocity-width-ratio", "tracer_to_velocity_width_ratio",
             "", "tracer_to_velocity_width_ratio"),
    Quantity("heat-pulse duration", "--pulse-duration", "sediment_probes.probe.heat_pulse_duration", "", "probe"),
    Quantity("sensors left out", "--exclude-sensor", "exclude_sensors", "excluded_sensors", "excluded_sensors"),
    Quantity("where tasks run (executor: auto, serial, a Dask cluster)", "--scheduler, --workers", "", "",
             "scheduler"),
)

#: Old option spelling → new, per command (``"*"``: every command that has it; ``"summarize water"``: one
#: question of a command with questions). ``apply_renamed_options`` adds them to the parsers.
RENAMED_OPTIONS: dict[str, dict[str, str]] = {
    "orifice": {"--temperature": "--exit-temperature", "--pressure": "--absolute-pressure"},
    "plume-rise": {"--power": "--heat-power", "--pressure": "--absolute-pressure"},
    "diffuse": {"--salinity": "--ambient-salinity", "--pressure": "--absolute-pressure"},
    "summarize": {"--power": "--heat-power", "--half-rate": "--half-spreading-rate",
                  "--salinity": "--ambient-salinity", "--pressure": "--absolute-pressure"},
    "summarize water": {"--temperature": "--exit-temperature"},
    "*": {"--no-progress": "--quiet"},
}

#: Old survey key → new, by the table it sits in (``"*"``: any table).
RENAMED_KEYS: dict[str, dict[str, str]] = {
    "vent.orifice": {"temperature": "exit_temperature"},
    "vent.plume_rise": {"height": "rise_height"},
    "field_plume": {"height": "rise_height"},
    "site": {"pressure": "absolute_pressure"},
    "*": {"metres_per_pixel": "pixel_size"},
}

#: Old CSV column name (without its unit) → new.
RENAMED_COLUMNS: dict[str, str] = {"pressure": "sea_pressure"}


def deprecation_line(old: str, new: str, where: str = "") -> str:
    """The one line printed (and recorded) when an old spelling is used."""
    place = f"{where}: " if where else ""
    return f"{place}'{old}' is deprecated; use '{new}' (the old name is accepted until ventflux {REMOVED_IN})"


def warn_deprecated(old: str, new: str, where: str = "", stream=None) -> None:
    """Print the deprecation line to standard error."""
    print(f"ventflux: {deprecation_line(old, new, where)}", file=stream or sys.stderr)


def renamed_key(table: str, key: str) -> str | None:
    """The new name of an old survey ``key`` in ``table`` (``vent.orifice``, ``site``, ...), or None."""
    for scope in (table, "*"):
        new = RENAMED_KEYS.get(scope, {}).get(key)
        if new is not None:
            return new
    return None


class _DeprecatedOption(argparse.Action):
    """Stores into the new option's destination and prints one deprecation line.

    ``target`` (the new option's action) and ``group`` (its mutually exclusive
    group) let the old spelling stand in for a required new option or group
    without joining the group (a hidden member would spoil argparse's usage
    line); ``check_deprecated`` then refuses the old and new spellings, or the
    old one and another member of the group, given together.
    """

    def __init__(self, option_strings, dest, new: str = "", target=None, group=None, **kwargs):
        self.new = new
        self.target = target
        self.group = group
        super().__init__(option_strings, dest, **kwargs)

    def __call__(self, parser, namespace, values, option_string=None):
        old = option_string or self.option_strings[0]
        warn_deprecated(old, self.new)
        value = True if self.nargs == 0 else values
        setattr(namespace, self.dest, value)
        if self.target is not None:
            self.target.required = False  # the old spelling counts as the new one
        if self.group is not None:
            self.group.required = False
        used = list(getattr(namespace, "_deprecated_used", []))
        namespace._deprecated_used = used + [(old, self, value)]


def check_deprecated(parser, namespace, args=()) -> None:
    """After parsing ``args``: an old spelling given together with its new one, or with another option of the
    new one's mutually exclusive group, is a usage error (argparse cannot see it, the alias being outside the
    group)."""
    given = {str(a).split("=", 1)[0] for a in args or () if str(a).startswith("--")}
    for old, action, _value in getattr(namespace, "_deprecated_used", []):
        if action.new in given:
            parser.error(f"argument {old}: not allowed with argument {action.new}")
        for other in getattr(action.group, "_group_actions", []):
            if other is action.target:
                continue
            if getattr(namespace, other.dest, other.default) is not other.default:
                parser.error(f"argument {old}: not allowed with argument {other.option_strings[0]}")
    if hasattr(namespace, "_deprecated_used"):
        delattr(namespace, "_deprecated_used")


def add_deprecated_option(parser, old: str, new: str, dest: str, takes_value: bool = True, *, target=None,
                          group=None) -> None:
    """Accept ``old`` as a hidden alias of ``new`` (same ``dest``), printing a deprecation line when used.

    Examples
    --------
    >>> p = argparse.ArgumentParser()
    >>> _ = p.add_argument("--heat-power", dest="heat_power")
    >>> add_deprecated_option(p, "--power", "--heat-power", "heat_power")
    >>> import io, contextlib
    >>> with contextlib.redirect_stderr(io.StringIO()):
    ...     p.parse_args(["--power", "3 MW"]).heat_power
    '3 MW'
    """
    parser.add_argument(old, dest=dest, action=_DeprecatedOption, new=new, nargs=None if takes_value else 0,
                        help=argparse.SUPPRESS, default=argparse.SUPPRESS, target=target, group=group)


def markdown_table() -> str:
    """The contributor guide's vocabulary table, as Markdown."""
    head = "| quantity | option | survey key | CSV column | JSON key |\n|---|---|---|---|---|\n"

    def cell(text):
        return ", ".join(f"`{t.strip()}`" for t in text.split(",")) if text else "—"

    return head + "\n".join(
        f"| {q.quantity} | {cell(q.option)} | {cell(q.survey_key)} | {cell(q.csv_column)} | {cell(q.json_key)} |"
        for q in QUANTITIES)


def apply_renamed_options(parser, command: str) -> None:
    """Accept the old spellings of ``RENAMED_OPTIONS`` on ``parser`` (and its questions' sub-parsers).

    Called once for every command by the top-level parser, so no command
    repeats it: an old spelling is added wherever its new spelling exists and
    the old one is not an option of its own. The old spelling satisfies a
    required new option (or its required group) and is refused together with
    the new one or another option of its group (``check_deprecated``).
    """
    scopes = [RENAMED_OPTIONS.get(command, {}), RENAMED_OPTIONS.get("*", {})]
    renames: dict[str, str] = {}
    for scope in scopes:
        for old, new in scope.items():
            renames.setdefault(old, new)
    _apply(parser, renames)
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            for name, sub in action.choices.items():
                extra = RENAMED_OPTIONS.get(f"{command} {name}", {})
                _apply(sub, {**renames, **extra})


def _apply(parser, renames: dict[str, str]) -> None:
    by_option = {o: a for a in parser._actions for o in a.option_strings}
    for old, new in renames.items():
        action = by_option.get(new)
        if action is None or old in by_option:
            continue
        group = next((g for g in parser._mutually_exclusive_groups if action in g._group_actions), None)
        add_deprecated_option(parser, old, new, action.dest, takes_value=action.nargs != 0, target=action,
                              group=group)


# ------------------------------------------------------------------------------------------------ JSON keys
#: Statistics of the draws, as JSON key suffixes after the unit (``heat_power_W_p05``).
STATISTICS = ("mean", "median", "p05", "p50", "p95", "sd")

#: SI units (and degC, a derived SI unit; g/kg, the TEOS-10 unit of absolute salinity) a JSON key may carry,
#: preferred in this order for a quantity of their dimension.
SI_UNITS = ("W", "J", "Pa", "K", "degC", "m", "m^2", "m^3", "s", "kg", "m/s", "m^2/s", "m^3/s", "kg/s", "kg/m^3",
            "J/kg", "J/(kg*K)", "J/m^2", "J/m^3", "W/m^2", "W/m", "W/(m*K)", "m^4/s^3", "m/s^2", "1/s", "1/K",
            "g/kg", "mol/kg", "m^3/(s*m)")

#: Numeric JSON values without a unit in their key: counts, shares, ratios and indices (unit ``1``).
BARE_JSON_KEYS = frozenset({
    "draws", "kept_draws", "seed", "unphysical_draws", "max_unphysical_share", "n_sampled", "rank",
    "ambient_salinity", "active_fraction", "entrainment_tophat", "spreading_dilution", "constant_cp_difference",
    "deficit_fraction", "controlling_share", "spent_fraction", "cooled_faces", "first_order", "first_order_error",
    "total_effect", "total_effect_error", "total_effect_lower", "interaction_share", "bootstrap",
    "profile_factor", "stratification_scale", "diffuse_fraction", "porosity", "sensors", "patches_sampled",
})


def unit_tag(unit: str) -> str:
    """``'m^3/s'`` → ``'m3_s'``, ``'J/(kg*K)'`` → ``'J_kg_K'``: a unit as written in a JSON key."""
    return (unit.replace("**", "").replace("^", "").replace("(", "").replace(")", "").replace("/", "_")
            .replace("*", "_").replace(" ", "").replace("°", "deg"))


#: The tags of ``SI_UNITS`` (what a checked JSON key may end with, before a statistic).
SI_TAGS = frozenset(unit_tag(u) for u in SI_UNITS)


def si_unit(unit: str) -> str:
    """The SI unit a JSON key uses for a quantity reported in ``unit`` ("" when dimensionless).

    >>> si_unit("MW"), si_unit("km^3/year"), si_unit("mW/m^2"), si_unit("percent"), si_unit("degC")
    ('W', 'm^3/s', 'W/m^2', '', 'degC')
    """
    from .units import ureg

    if unit in ("", "1", "dimensionless", "percent", "%"):
        return ""
    if unit in ("degC", "K"):  # temperatures stay what they are (degC in-situ, K a difference)
        return unit
    dim = ureg.Quantity(1.0, unit).dimensionality
    if dim == ureg.Quantity(1.0, "dimensionless").dimensionality:
        return ""
    same = [c for c in SI_UNITS if c != "degC" and ureg.Quantity(1.0, c).dimensionality == dim]
    # Energy per volume is J/m^3 when written with J and Pa when written as a pressure: the leading unit
    # (without its SI prefix) picks among SI units of one dimension.
    lead = re.match(r"[A-Za-zµ]+(\^\d)?", unit.strip())
    heads = [lead.group(0), lead.group(0)[1:]] if lead else []
    for head in heads:
        for candidate in same:
            if head and re.match(rf"{re.escape(head)}(?![A-Za-z^])", candidate):
                return candidate
    if same:
        return same[0]
    return f"{ureg.Quantity(1.0, unit).to_base_units().units:~C}"


def json_key(name: str, unit: str = "", statistic: str = "") -> str:
    """``json_key("heat_power", "W", "p05")`` → ``heat_power_W_p05`` (a bare ``name`` for unit ``""``)."""
    tag = unit_tag(unit) if unit else ""
    return "_".join(p for p in (name, tag, statistic) if p)


def json_value(value, unit: str):
    """``(key unit, value)``: ``value`` (a pint quantity or a float in ``unit``) in the SI unit of ``si_unit``."""
    from .units import ureg

    si = si_unit(unit)
    q = value if hasattr(value, "to") else ureg.Quantity(value, unit)
    return si, q.to(si or "dimensionless").magnitude


def json_record(row: dict) -> dict:
    """A table row's ``"name [unit]"`` keys as JSON keys in SI units (values converted); other keys kept.

    >>> json_record({"input": "velocity", "width_if_known [MW]": 2.0})
    {'input': 'velocity', 'width_if_known_W': 2000000.0}
    """
    out = {}
    for key, value in row.items():
        name, sep, rest = str(key).partition(" [")
        if not sep or not rest.endswith("]") or not isinstance(value, (int, float)):
            out[key] = value
            continue
        si, v = json_value(float(value), rest[:-1])
        out[json_key(name, si)] = float(v)
    return out


#: Spellings the vocabulary replaced, refused in JSON keys by ``json_key_problems``.
_OLD_KEY_PARTS = ("_std", "_se", "_MW", "_kW", "_mW", "_kJ", "_MJ", "_km", "_km2", "_km3", "_year", "_yr", "_Myr",
                  "_percent", "_dimensionless", "_dbar", "_MPa", "_cm", "_mm", "_L_s")
_OLD_KEYS = ("failed_draws", "rejected_draws", "dropped_draws", "pressure_Pa")


def json_key_problems(obj, path: str = "") -> list[str]:
    """Keys of a JSON object (nested) that break the rule: a number's key ends with an SI unit tag (then an
    optional statistic) or is a bare count, share or ratio (``BARE_JSON_KEYS``); no replaced spelling.

    Returns ``"path: why"`` per problem (empty when the object follows the vocabulary).
    """
    problems: list[str] = []
    if isinstance(obj, list):
        for i, item in enumerate(obj):
            problems += json_key_problems(item, f"{path}[{i}]")
        return problems
    if not isinstance(obj, dict):
        return problems
    for key, value in obj.items():
        where = f"{path}.{key}" if path else str(key)
        if isinstance(value, (dict, list)):
            if key != "inputs":  # inputs as the user wrote them: text, named by the estimator's keywords
                problems += json_key_problems(value, where)
            continue
        k = str(key)
        if k in _OLD_KEYS or any(k.endswith(p) or f"{p}_" in k for p in _OLD_KEY_PARTS):
            problems.append(f"{where}: a replaced spelling (see ventflux.vocabulary)")
            continue
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            continue
        stem = k
        for stat in STATISTICS:
            if stem.endswith("_" + stat):
                stem = stem[: -len(stat) - 1]
                break
        if stem in BARE_JSON_KEYS or any(stem.endswith("_" + t) for t in SI_TAGS):
            continue
        problems.append(f"{where}: a number without an SI unit in its key")
    return problems
