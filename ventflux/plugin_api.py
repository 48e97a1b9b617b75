"""The plugin API: everything a ventflux plugin may import, and nothing else.

A plugin (a distribution with an entry point in the ``ventflux`` group)
imports from this module only, so the core can reorganize its modules without
breaking plugins; ``tests/test_layers.py`` checks the project's own plugins.
A plugin declares the core versions it supports in its ``pyproject.toml``
(``dependencies = ["ventflux>=0.2,<0.3"]``); ``API_VERSION`` is the version of
this contract.

What is here
------------
Hooks and descriptions
    ``hookimpl`` (decorate hook functions), ``Method``, ``Command``,
    ``FluidModelInfo``, ``Reader``, ``VelocitySource`` (what hooks return);
    ``SurveyMethod``, ``SurveySection``, ``MethodEstimate``,
    ``SectionEstimate``, ``ReportPart`` (survey methods and sections, and the
    report titles, tables and figures they supply); ``SurveyKey``,
    ``DataColumn``, ``survey_table`` (the keys and CSV columns a survey
    method or section declares in its ``keys``).
Units and errors
    ``ureg``, ``Q_``, ``parse_quantity``, ``magnitude``, ``require_dimension``,
    ``column_name``, ``parse_column_name``; ``InputError``, ``InputErrors``,
    ``Collector`` (bad input: one line naming the field, exit 2).
Uncertainty (the one propagation driver)
    ``Uncertain``, ``normal``, ``uniform``, ``lognormal``, ``from_mean_sd``,
    ``parse_uncertain``, ``nominal``, ``SharedDraws``, ``named_stream``, ``propagate``,
    ``Propagation``, ``UnphysicalPolicy``, ``summarize``, ``Summary``,
    ``DEFAULT_DRAWS``, ``DEFAULT_SEED``, ``DEFAULT_MAX_UNPHYSICAL``.
Survey values
    ``resolve`` (draws of a survey value through the run's ``SharedDraws``),
    ``nominal_of``, ``as_float``, ``SharedRef``.
Properties
    ``seawater_state``, ``pressure_from_depth``, ``sea_pressure_dbar``,
    ``CP0``, ``fluid_model``, ``FluidModel``, ``absolute_salinity``, ``seawater_enthalpy_density`` (seawater
    from freezing to boiling, continuous across its models).
Estimators
    ``orifice_discharge``, ``in_situ_pressure``, ``diffuse_discharge`` (deterministic, vectorized).
Files and output
    ``read_quantity_table``, ``atomic_write_text``, ``atomic_write_bytes``,
    ``results_directory`` (alias ``atomic_directory``), ``check_results_destination``, ``cache_dir``,
    ``cached_arrays`` (arrays built once per machine),
    ``json_ready``,
    ``sha256_of``,
    ``add_output_options``, ``add_monte_carlo_options``,
    ``monte_carlo_settings``, ``print_json``, ``print_table``, ``write_output``.
Registry look-ups
    ``velocity_from_source``, ``fluid_model_by_name``.
Vocabulary
    ``add_deprecated_option``, ``renamed_key``, ``RENAMED_COLUMNS``, ``warn_deprecated``, ``deprecation_line``
    (old spellings of options, keys and CSV columns, accepted for one release with one deprecation line).
Executors
    ``Executor`` (the protocol: ``map(fn, arguments, on_done)``), ``ExecutorInfo`` (what the
    ``ventflux_executors`` hook returns), ``SerialExecutor`` (the in-process default), ``task_cores``
    (cores a task may use for threads: shared out among a survey's forked workers).
"""

from __future__ import annotations

from . import __version__ as CORE_VERSION
from .cli.montecarlo import add_monte_carlo_options, monte_carlo_settings
from .cli.output import add_output_options, print_json, print_table, write_output
from .ahead import start as start_ahead
from .ahead import take as take_ahead
from .cachedir import cached_arrays
from .diffuse import diffuse_discharge
from .errors import Collector, InputError, InputErrors
from .executor import Executor, ExecutorInfo, SerialExecutor, task_cores
from .hookspecs import hookimpl
from .io import (
    atomic_directory,
    atomic_write_bytes,
    atomic_write_text,
    cache_dir,
    check_results_destination,
    json_ready,
    results_directory,
    sha256_of,
)
from .orifice import in_situ_pressure, orifice_discharge
from .properties import FluidModel, fluid_model, pressure_from_depth, seawater_state
from .properties.seawater import CP0, STANDARD_ATMOSPHERE, absolute_salinity, sea_pressure_dbar
from .properties.seawater_heat import seawater_enthalpy_density
from .registry import (
    Command,
    FluidModelInfo,
    Method,
    Reader,
    VelocitySource,
    velocity_from_source,
)
from .registry import fluid_model as fluid_model_by_name
from .survey.api import (
    MethodEstimate,
    ReportPart,
    SectionEstimate,
    SurveyMethod,
    SurveySection,
)
from .survey.fields import SharedRef, as_float, nominal_of, resolve
from .survey.rendering import subplots
from .survey.schema import DataColumn, SurveyKey
from .survey.schema import table as survey_table
from .tables import read_quantity_table
from .uncertainty import (
    DEFAULT_DRAWS,
    DEFAULT_MAX_UNPHYSICAL,
    DEFAULT_SEED,
    Propagation,
    SharedDraws,
    Summary,
    Uncertain,
    UnphysicalPolicy,
    from_mean_sd,
    lognormal,
    named_stream,
    nominal,
    normal,
    parse_uncertain,
    propagate,
    summarize,
    uniform,
    unit_tag,
)
from .vocabulary import RENAMED_COLUMNS, add_deprecated_option, deprecation_line, renamed_key, warn_deprecated
from .units import (
    DIMENSIONS,
    Q_,
    column_name,
    magnitude,
    parse_column_name,
    parse_quantity,
    require_dimension,
    ureg,
)

#: Version of this plugin contract (changes when a name here changes meaning or goes away).
API_VERSION = "1"

__all__ = [
                          "subplots",
                          "API_VERSION",
                          "RENAMED_COLUMNS",
                          "Executor",
                          "ExecutorInfo",
                          "SerialExecutor",
                          "task_cores",
                          "start_ahead",
                          "take_ahead",
                          "CORE_VERSION",
                          "DIMENSIONS",
                          "STANDARD_ATMOSPHERE",
                          "absolute_salinity",
                          "seawater_enthalpy_density",
                          "cache_dir",
                          "cached_arrays",
                          "check_results_destination",
                          "json_ready",
                          "diffuse_discharge",
                          "in_situ_pressure",
                          "orifice_discharge",
                          "results_directory",
                          "sha256_of",
                          "unit_tag",
                          "CP0",
                          "DEFAULT_DRAWS",
                          "DEFAULT_MAX_UNPHYSICAL",
                          "DEFAULT_SEED",
                          "Q_",
                          "Collector",
                          "Command",
                          "FluidModel",
                          "FluidModelInfo",
                          "InputError",
                          "InputErrors",
                          "Method",
                          "MethodEstimate",
                          "Propagation",
                          "Reader",
                          "ReportPart",
                          "SectionEstimate",
                          "SharedDraws",
                          "named_stream",
                          "SharedRef",
                          "Summary",
                          "SurveyMethod",
                          "SurveySection",
                          "SurveyKey",
                          "DataColumn",
                          "survey_table",
                          "Uncertain",
                          "UnphysicalPolicy",
                          "VelocitySource",
                          "add_monte_carlo_options",
                          "add_deprecated_option",
                          "deprecation_line",
                          "renamed_key",
                          "warn_deprecated",
                          "add_output_options",
                          "as_float",
                          "atomic_directory",
                          "atomic_write_bytes",
                          "atomic_write_text",
                          "column_name",
                          "fluid_model",
                          "fluid_model_by_name",
                          "from_mean_sd",
                          "hookimpl",
                          "lognormal",
                          "magnitude",
                          "monte_carlo_settings",
                          "nominal",
                          "nominal_of",
                          "normal",
                          "parse_column_name",
                          "parse_quantity",
                          "parse_uncertain",
                          "pressure_from_depth",
                          "print_json",
                          "print_table",
                          "propagate",
                          "read_quantity_table",
                          "require_dimension",
                          "resolve",
                          "sea_pressure_dbar",
                          "seawater_state",
                          "summarize",
                          "uniform",
                          "ureg",
                          "velocity_from_source",
                          "write_output",
]
