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
    Quantity("rise height of a plume", "--rise-height", "rise_height", "rise_height [m]", "rise_height_m"),
    Quantity("half spreading rate of a ridge", "--half-spreading-rate", "half_spreading_rate",
             "half_spreading_rate [mm/yr]", "half_spreading_rate_m_s"),
    Quantity("pixel size of a clip", "--pixel-size", "pixel_size", "pixel_size [mm]", "pixel_size_m"),
    Quantity("Monte Carlo draws, seed", "--draws, --seed", "[run] draws, seed", "", "draws, seed"),
    Quantity("limit on unphysical draws", "--max-unphysical", "[run] max_unphysical", "",
             "max_unphysical_share"),
    Quantity("draws dropped as unphysical", "", "", "unphysical_draws", "unphysical_draws"),
    Quantity("plausibility override", "--allow-implausible", "[run] allow_implausible", "",
             "implausible_values_allowed"),
    Quantity("progress messages off", "--quiet", "", "", ""),
    Quantity("where tasks run (executor: serial, a Dask cluster)", "--scheduler, --workers", "", "",
             "scheduler"),
)

#: Old option spelling → new, per command (``"*"``: every command that has it).
RENAMED_OPTIONS: dict[str, dict[str, str]] = {
    "orifice": {"--temperature": "--exit-temperature", "--pressure": "--absolute-pressure"},
    "plume-rise": {"--power": "--heat-power", "--pressure": "--absolute-pressure"},
    "diffuse": {"--salinity": "--ambient-salinity", "--pressure": "--absolute-pressure"},
    "summarize": {"--power": "--heat-power", "--half-rate": "--half-spreading-rate",
                  "--salinity": "--ambient-salinity"},
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
    """Stores into the new option's destination and prints one deprecation line."""

    def __init__(self, option_strings, dest, new: str = "", **kwargs):
        self.new = new
        super().__init__(option_strings, dest, **kwargs)

    def __call__(self, parser, namespace, values, option_string=None):
        warn_deprecated(option_string or self.option_strings[0], self.new)
        setattr(namespace, self.dest, True if self.nargs == 0 else values)


def add_deprecated_option(parser, old: str, new: str, dest: str, takes_value: bool = True) -> None:
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
                        help=argparse.SUPPRESS, default=argparse.SUPPRESS)


def markdown_table() -> str:
    """The contributor guide's vocabulary table, as Markdown."""
    head = "| quantity | option | survey key | CSV column | JSON key |\n|---|---|---|---|---|\n"

    def cell(text):
        return ", ".join(f"`{t.strip()}`" for t in text.split(",")) if text else "—"

    return head + "\n".join(
        f"| {q.quantity} | {cell(q.option)} | {cell(q.survey_key)} | {cell(q.csv_column)} | {cell(q.json_key)} |"
        for q in QUANTITIES)
