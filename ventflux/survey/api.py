"""What a survey method or section provides, and what it is given.

Plugins extend the field survey through two hooks
(``ventflux_survey_methods``, ``ventflux_survey_sections``) returning these
objects. A method measures one focused vent (its table in the survey file
is ``[vent.<key>]`` or ``[[vent.<key>]]``); a section is a field-wide table
(``[<key>]``). Both work in two steps: ``parse`` validates the table and
records every problem in the ``Fields`` it is given (nothing is computed),
then ``estimate`` turns the parsed value into Monte Carlo draws, drawing
every input through ``context.draws`` so that inputs shared between vents
are drawn once per draw.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable

from ..uncertainty import DEFAULT_DRAWS, DEFAULT_MAX_UNPHYSICAL, DEFAULT_SEED, SharedDraws, UnphysicalPolicy

if TYPE_CHECKING:
    import numpy as np
    import pint

    from ..profiles import AmbientProfile
    from .spec import SiteSpec


@dataclass(frozen=True)
class ReportPart:
    """How a survey method or section appears in the report, so the core names no method.

    Attributes
    ----------
    table : str, optional
        For a method: the table its rows (``MethodEstimate.rows``) go to,
        one row per vent or orifice; default the method's key.
    titles : dict
        Table name → heading in the report (default: the name, capitalized).
    intro : dict
        Table name → a sentence shown under the heading.
    rank : int
        Where the part's tables and figures go in the report, lower first
        (the core's: field totals 0, vents and methods 10, focused-vent
        methods 20–39, field sections 40–89, reservoirs 90).
    """

    table: str | None = None
    titles: dict[str, str] = field(default_factory=dict)
    intro: dict[str, str] = field(default_factory=dict)
    rank: int = 50


@dataclass(frozen=True)
class SurveyMethod:
    key: str
    summary: str
    parse: Callable  # (fields: Fields, context: ParseContext) -> spec
    estimate: Callable  # (spec, vent_name: str, context: RunContext) -> MethodEstimate
    many: bool = False  # an array of tables ([[vent.orifice]]) rather than one table
    provider: str = "ventflux"
    report: ReportPart = field(default_factory=lambda: ReportPart(rank=30))
    #: The keys of the method's table (``ventflux.survey.schema.SurveyKey``): the validator refuses any other,
    #: and ``ventflux survey --format`` documents them.
    keys: tuple = ()


@dataclass(frozen=True)
class SurveySection:
    key: str
    summary: str
    parse: Callable  # (fields, context) -> spec
    estimate: Callable  # (spec, context) -> SectionEstimate
    provider: str = "ventflux"
    report: ReportPart = field(default_factory=ReportPart)
    #: The keys of the section's table (``ventflux.survey.schema.SurveyKey``), as for ``SurveyMethod.keys``.
    keys: tuple = ()


@dataclass
class MethodEstimate:
    """One method's estimate of one vent: heat power draws (shape ``(n_draws,)``) and its tables."""

    heat_power: pint.Quantity  # draws, shape (n_draws,)
    nominal_heat_power: pint.Quantity
    exit_temperature: pint.Quantity | None = None  # for the vent's water throughput, if the method measured it
    mass_flux: pint.Quantity | None = None  # draws, if the method measures it directly
    rows: list = field(default_factory=list)  # detail rows for this method's table
    figures: list = field(default_factory=list)  # (file stem, matplotlib figure, caption)
    notes: list = field(default_factory=list)


@dataclass
class SectionEstimate:
    """A field-wide section's items: per-item draws, shape ``(n_items, n_draws)``."""

    category: str  # "focused", "diffuse", "conductive" (heat conducted, not discharged), or not added to the
    # totals: "check" (an independent estimate compared with them) or "context"
    names: list
    heat_power: pint.Quantity  # draws, shape (n_items, n_draws)
    volume_flux: pint.Quantity | None = None
    rows: list = field(default_factory=list)
    tables: dict = field(default_factory=dict)  # extra tables: name -> list of dict rows
    figures: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    compares_with: str = "field total"  # for a "check": "field total" or "focused"


@dataclass
class RunSettings:
    """The run's Monte Carlo settings as the file and the command line set them: every table's ``Fields.run``
    and the parsers' ``ParseContext.run`` are this one object."""

    draws: int = DEFAULT_DRAWS
    seed: int = DEFAULT_SEED
    max_unphysical: float = DEFAULT_MAX_UNPHYSICAL
    #: Where the limit was set, for a refusal: the file's key or the command line's option.
    option: str = "run.max_unphysical"
    #: Draws ≤ 0 counted per (stream, kelvin, draws, seed) (``refuses_draws``).
    _counted: dict = field(default_factory=dict, repr=False)

    def refuses_draws(self, stream: str, value, dimension: str) -> str:
        """Why the run would refuse the draws of ``value`` under ``stream`` for being ≤ 0 (``""``: it would not).

        The run's own draws (same name, seed and count) are counted against its limit.
        """
        import numpy as np

        key = (stream, dimension == "temperature", self.draws, self.seed)
        if key not in self._counted:  # a shared value many keys refer to is drawn and counted once
            q = SharedDraws(self.draws, self.seed).draw(stream, value)
            m = q.to("K").magnitude if dimension == "temperature" else q.to_base_units().magnitude
            self._counted[key] = int(np.count_nonzero(~(np.asarray(m) > 0)))
        bad = self._counted[key]
        if bad <= self.max_unphysical * self.draws:
            return ""
        return (f"{self.max_unphysical:.1%} of the run's {self.draws} draws ({bad} are ≤ 0, above "
                f"{self.option}; narrow the spread or use a lognormal)")


@dataclass
class ParseContext:
    """What a parser may consult: the survey's folder and its site-wide values."""

    base_dir: Path
    site: SiteSpec | None
    input_files: dict  # path -> role, every file the survey reads (for hashing)
    warnings: Any = None  # the run's Warnings: exclusions a parser counts (dropped samples) are recorded there
    #: The run's Monte Carlo settings (``[run]`` or the command line): a parser that draws while reading uses them,
    #: so that ``--check`` and the run agree on what is refused (also ``draws``, ``seed``, ``max_unphysical``).
    run: RunSettings = field(default_factory=RunSettings)
    #: Where a check that takes long says what it is doing (``ventflux.waiting``); None: it says nothing.
    progress: Callable[[str], None] | None = None
    #: The site's CTD cast, read once by the site's check (``read_stratification``); None without a readable one.
    stratification: AmbientProfile | None = None

    @property
    def draws(self) -> int:
        return self.run.draws

    @property
    def seed(self) -> int:
        return self.run.seed

    @property
    def max_unphysical(self) -> float:
        return self.run.max_unphysical

    @property
    def max_unphysical_option(self) -> str:
        """How the user set that limit, named in a refusal: the file's key, or the command line's option."""
        return self.run.option

    def trial_run(self) -> RunContext:
        """The context the run will give its estimates (its draws, seed, limit and cast), for a check that must
        refuse exactly what the run refuses (``run_context``)."""
        assert self.site is not None  # callers check the site first
        return run_context(self.site, SharedDraws(self.draws, self.seed),
                           UnphysicalPolicy(self.max_unphysical, self.max_unphysical_option), self.stratification)


@dataclass
class RunContext:
    """What an estimator is given: the shared draws and the site."""

    draws: SharedDraws
    site: SiteSpec
    pressure: pint.Quantity  # absolute
    ambient_temperature: pint.Quantity  # draws (n,) shared by every consumer
    ambient_salinity: float | np.ndarray  # draws or one value
    stratification: AmbientProfile | None = None  # the site's CTD cast, if given
    progress: Callable = lambda msg: None
    #: The run's one rule for impossible draws (``[run] max_unphysical``); pass it to ``propagate``.
    policy: UnphysicalPolicy = field(default_factory=lambda: UnphysicalPolicy(option="run.max_unphysical"))


def read_stratification(site: SiteSpec) -> AmbientProfile:
    """The site's CTD cast as the run reads it (``[site] ctd``, its window and position)."""
    from .. import profiles

    kwargs: dict[str, Any] = {"latitude": site.latitude, "longitude": site.longitude}
    if site.ctd_window is not None:
        kwargs["window"] = site.ctd_window
    if getattr(site, "ctd_profile", None) is not None:
        kwargs["profile"] = site.ctd_profile
    return profiles.read_ctd_cast(site.ctd, **kwargs)


def run_context(site: SiteSpec, draws: SharedDraws, policy: UnphysicalPolicy, stratification=None,
                progress: Callable = lambda msg: None) -> RunContext:
    """The context every estimate of a run is given: the site's pressure and its ambient draws.

    One definition for the run and for a check that must see what the run will see (``--check`` propagates a
    plume's rise on the run's own draws: its refusals are then the run's).
    """
    import numpy as np

    from ..orifice import in_situ_pressure
    from ..uncertainty import SITE_INPUT_NAMES
    from ..units import Q_

    pressure = in_situ_pressure(site.pressure, site.depth, site.latitude)
    ambient = draws.draw(SITE_INPUT_NAMES["ambient_temperature"], site.ambient_temperature)
    if np.ndim(ambient.magnitude) == 0:
        ambient = Q_(np.full(draws.n_draws, ambient.to("K").magnitude), "K")
    salinity = draws.draw(SITE_INPUT_NAMES["ambient_salinity"], site.ambient_salinity)
    salinity = salinity.to("dimensionless").magnitude if hasattr(salinity, "to") else salinity
    return RunContext(draws=draws, site=site, pressure=pressure, ambient_temperature=ambient,
                      ambient_salinity=salinity, stratification=stratification, progress=progress, policy=policy)
