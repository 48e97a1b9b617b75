"""Hook specifications: the contract between the ventflux core and its plugins.

A plugin is a module (or object) with functions named like the specifications
below, each decorated with ``ventflux.hookimpl``. It is found through the
``ventflux`` entry-point group, for example in the plugin's ``pyproject.toml``::

    [project.entry-points.ventflux]
    thermal = "ventflux_thermal.plugin"

Every hook returns a list (possibly empty) of small description objects; the
core collects the lists from all plugins. Hooks are called without side
effects, so listing the methods is cheap.

A plugin imports from ``ventflux.plugin_api`` only (``hookimpl``, the
description objects, units, errors, the propagation driver, ...) and declares
the core versions it supports in its ``pyproject.toml``, e.g.
``dependencies = ["ventflux>=0.2,<0.3"]``. The core registers its own hooks
(``ventflux.core_plugin``) through the same mechanism.
"""

from __future__ import annotations

import pluggy

PROJECT = "ventflux"
hookspec = pluggy.HookspecMarker(PROJECT)
hookimpl = pluggy.HookimplMarker(PROJECT)


@hookspec
def ventflux_estimation_methods():
    """Estimation methods this distribution provides.

    Returns
    -------
    list of ventflux.plugin_api.Method
        Each names a method (``"orifice"``, ``"plume-rise"``, ...), what it
        estimates, and the inputs it needs.
    """


@hookspec
def ventflux_fluid_models():
    """Equations of state for hot vent fluid.

    Returns
    -------
    list of ventflux.plugin_api.FluidModelInfo
        Each with a name (``"iapws95-water"``) and a factory returning an
        object that implements ``ventflux.properties.FluidModel``.
    """


@hookspec
def ventflux_input_readers():
    """Readers for field-data files (CTD casts, probe records, video, ...).

    Returns
    -------
    list of ventflux.plugin_api.Reader
        Each with a name, the kind of data it reads, the file suffixes it
        accepts and a ``read(path, **options)`` callable.
    """


@hookspec
def ventflux_velocity_sources():
    """Sources of a fluid velocity that can feed the orifice and diffuse estimators.

    Returns
    -------
    list of ventflux.plugin_api.VelocitySource
        Each with a name, which estimators it feeds (``"orifice"``,
        ``"diffuse"``) and a callable returning a velocity as a pint quantity
        (plus, optionally, its standard uncertainty).
    """


@hookspec
def ventflux_commands():
    """Command-line subcommands.

    Returns
    -------
    list of ventflux.plugin_api.Command
        Each with a name, a one-line help, ``configure(parser)`` to add its
        arguments to an ``argparse`` sub-parser, and ``run(args) -> int``.
    """


@hookspec
def ventflux_survey_methods():
    """Methods a focused vent of a field survey may be measured with.

    Returns
    -------
    list of ventflux.plugin_api.SurveyMethod
        Each names the key of the vent's table in the survey file
        (``orifice``, ``plume_rise``, ``video``, ...), parses and validates
        that table, and turns it into Monte Carlo draws of the vent's heat
        power through the one propagation driver
        (``propagate(..., draws=context.draws, max_unphysical=context.policy)``).
        Its ``report`` (a ``ReportPart``) gives the title and place of its
        table in the report; its figures come with its ``MethodEstimate``.
    """


@hookspec
def ventflux_survey_sections():
    """Field-wide sections of a survey file (diffuse patches, sediment probes, ...).

    Returns
    -------
    list of ventflux.plugin_api.SurveySection
        Each names a top-level table of the survey file, parses and validates
        it, and returns per-item draws of heat power and volume flux with the
        category they count towards (``focused`` or ``diffuse``). Its
        ``report`` (a ``ReportPart``) gives the titles and place of the
        tables it returns in ``SectionEstimate.tables``.
    """


@hookspec
def ventflux_executors():
    """Places to run independent tasks other than this process (worker processes, a cluster).

    Returns
    -------
    list of ventflux.plugin_api.ExecutorInfo
        Each with a name, a one-line summary, ``accepts(where)`` (whether it
        understands the string a user gave, e.g. ``--scheduler local`` or a
        scheduler address) and ``open(where, workers)``, a context manager
        yielding an executor whose ``map(fn, arguments, on_done)`` returns
        ``fn(*a)`` for each tuple in order (``ventflux.executor``). An
        executor decides where a task runs, never what it computes.
    """
