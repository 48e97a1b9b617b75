"""Run a whole survey: every vent and section, field totals, method comparison, reservoirs.

One ``SharedDraws`` serves the whole run, so draw ``j`` of every vent, patch
and section is one consistent realization of the field: inputs shared
between vents (the site's ambient temperature, a camera's pixel scale, a
probe calibration, the CTD cast) take the same value in draw ``j``
everywhere, and their errors do not average away in the totals.

Every method and section propagates through ``ventflux.uncertainty.propagate``
with the run's one ``UnphysicalPolicy`` (``[run] max_unphysical``, 5 % by
default). Draws that some method could not evaluate (NaN) are dropped for the
whole field, column by column; their number is reported, and the run is
refused when more than the same share of columns is lost.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np
import pint

from ..aggregate import (
    FieldTotal,
    FocusedDiffuseSplit,
    MethodComparison,
    compare_methods,
    field_total,
    focused_diffuse_split,
)
from ..uncertainty import SharedDraws, Summary, Uncertain, UnphysicalPolicy, summarize
from ..units import Q_
from .api import MethodEstimate, ReportPart, SectionEstimate, read_stratification, run_context
from .spec import SurveySpec, survey_components

if TYPE_CHECKING:
    from ..throughput import WaterThroughput


@dataclass
class VentResult:
    name: str
    methods: dict[str, MethodEstimate]  # method key -> its estimate
    heat_power: pint.Quantity | None  # combined draws (after column filtering)
    comparison: MethodComparison | None = None  # when several methods
    throughput: WaterThroughput | None = None
    exit_temperature: pint.Quantity | Uncertain | None = None


from ..presentation import Presentable  # noqa: E402 - the one presentation of results (repr, pandas, xarray)


@dataclass(repr=False)
class SurveyResult(Presentable):
    spec: SurveySpec
    pressure: pint.Quantity
    vents: list[VentResult]
    sections: dict[str, SectionEstimate]
    focused: FieldTotal | None
    diffuse: FieldTotal | None
    conductive: FieldTotal | None  # heat conducted through sediment
    total: Summary | None  # focused + diffuse + conductive
    split: FocusedDiffuseSplit | None
    water: dict[str, Summary]  # field water flux by name
    reservoirs: list[dict]
    dropped_draws: int
    n_draws: int
    elapsed: float
    shared_inputs: dict[str, str]
    checks: list[tuple[str, MethodComparison]] = field(default_factory=list)  # field-level checks
    notes: list[str] = field(default_factory=list)
    #: key of every method and section used → its ``ReportPart`` (titles, tables, order in the report)
    report_parts: dict[str, ReportPart] = field(default_factory=dict)
    # Uncertainty budget (ventflux.survey.budget): the run's draws, its kept draw columns, the budget's mode.
    draws: SharedDraws | None = None
    keep: np.ndarray | None = None
    budget_mode: str = "draws"  # what ``ventflux.survey.budget.survey_budget(result)`` does by default


def run_survey(spec: SurveySpec, progress=lambda msg: None, draws=None, executor=None,
               meanwhile=None, spare=None) -> SurveyResult:
    """Compute everything a survey file asks for (see ``ventflux.survey.spec``).

    ``draws``: the run's named draws (default a new ``SharedDraws``; the uncertainty budget's design passes its own).
    ``executor``: where the vents are estimated (``ventflux.executor``; default this process).
    ``meanwhile``, ``spare``: run here while forked workers estimate (``ventflux.executor.ForkExecutor.map``).
    """
    t0 = time.perf_counter()
    methods, sections = survey_components()
    draws = SharedDraws(spec.draws, spec.seed) if draws is None else draws
    policy = UnphysicalPolicy(spec.max_unphysical, spec.max_unphysical_option)
    site = spec.site
    strat = None
    if site.ctd is not None:
        progress("reading the CTD cast")
        strat = read_stratification(site)
    ctx = run_context(site, draws, policy, strat, progress)
    pressure = ctx.pressure

    from ..executor import SerialExecutor, estimate_survey  # serially here, or one task per method and section

    if executor is not None and not isinstance(executor, SerialExecutor):
        # Methods draw figures in their tasks and the report draws its own here: import matplotlib once before
        # the tasks are forked, not once in every worker and again here (about 0.45 s each time, measured)
        import matplotlib.backends.backend_agg  # noqa: F401
        import matplotlib.figure  # noqa: F401

    per_vent, sec = estimate_survey(spec.vents, methods, spec.sections, sections, ctx, executor, meanwhile,
                                   spare)
    vents = [VentResult(name=v.name, methods=est, heat_power=None) for v, est in zip(spec.vents, per_vent, strict=True)]

    # One mask of usable draw columns for the whole field, under the run's one limit.
    masks = {}
    for vr in vents:
        for k, e in vr.methods.items():
            masks[f"{vr.name}/{k}"] = np.isfinite(e.heat_power.magnitude) & (e.heat_power.magnitude > 0)
    for k, s in sec.items():
        if s.category in ("focused", "diffuse", "conductive"):
            masks[k] = np.all(np.isfinite(np.atleast_2d(s.heat_power.magnitude)), axis=0)
    keep = np.ones(spec.draws, bool)
    for m in masks.values():
        keep &= np.broadcast_to(m, keep.shape)
    if not keep.all():
        worst = min(masks, key=lambda k: int(np.count_nonzero(masks[k])))
        policy.enforce(keep, worst, f"{int((~keep).sum())} of {spec.draws} draws of the field unusable",
                       "draws (over the whole field)")
    dropped = int((~keep).sum())

    progress("field totals and method comparison")
    for vr, v in zip(vents, spec.vents):
        est = {k: Q_(e.heat_power.to("MW").magnitude[keep], "MW") for k, e in vr.methods.items()}
        if len(est) > 1:
            vr.comparison = compare_methods(est, "MW", seed=spec.seed)
            vr.heat_power = vr.comparison.combined_draws
        else:
            vr.heat_power = next(iter(est.values()))
        temps = [e.exit_temperature for e in vr.methods.values() if e.exit_temperature is not None]
        vr.exit_temperature = v.exit_temperature if v.exit_temperature is not None else (temps[0] if temps else None)
        if vr.exit_temperature is not None:
            vr.throughput = _throughput(vr, ctx, keep)

    focused_items: list[pint.Quantity] = [vr.heat_power.to("W") for vr in vents if vr.heat_power is not None]
    diffuse_items: list[pint.Quantity] = []
    conductive_items: list[pint.Quantity] = []
    for s in sec.values():
        if s.category in ("check", "context"):
            continue
        h = Q_(np.atleast_2d(s.heat_power.to("W").magnitude)[:, keep], "W")
        {"focused": focused_items, "diffuse": diffuse_items, "conductive": conductive_items}[s.category].append(h)
    focused = field_total([np.atleast_2d(q.magnitude) * q.units for q in focused_items], "MW", spec.seed) \
        if focused_items else None
    diffuse = field_total(diffuse_items, "MW", spec.seed) if diffuse_items else None
    conductive = field_total(conductive_items, "MW", spec.seed) if conductive_items else None
    split = None
    if focused is not None and diffuse is not None:
        split = focused_diffuse_split(focused, diffuse, spec.seed)
    total = None
    parts = [t.draws.to("MW").magnitude for t in (focused, diffuse, conductive) if t is not None]
    if parts:
        total = summarize(Q_(np.sum(np.broadcast_arrays(*parts), axis=0), "MW"), spec.seed)

    checks = _field_checks(sec, focused, diffuse, keep, spec.seed)
    water = _field_water(vents, sec, keep, spec.seed)
    reservoirs = [_reservoir(r, vents, focused, diffuse, pressure, spec.seed, policy) for r in spec.reservoirs]
    shared = {k: v for k, v in draws.describe().items() if k.startswith(("shared/", "site/"))}
    return SurveyResult(spec=spec, pressure=pressure, vents=vents, sections=sec, focused=focused, diffuse=diffuse,
                        conductive=conductive, total=total, split=split, water=water, reservoirs=reservoirs,
                        dropped_draws=dropped,
                        n_draws=int(keep.sum()), elapsed=time.perf_counter() - t0, shared_inputs=shared,
                        checks=checks, draws=draws, keep=keep,
                        report_parts={**{k: methods[k].report for v in spec.vents for k in v.methods},
                                      **{k: sections[k].report for k in spec.sections}})


def _field_checks(sec, focused, diffuse, keep, seed):
    """Compare each field-level check (a field plume's rise, say) with the survey's own total, draw by draw."""
    out = []
    for key, s in sec.items():
        if s.category != "check":
            continue
        parts = [focused] if s.compares_with == "focused" else [focused, diffuse]
        parts = [p.draws.to("MW") for p in parts if p is not None]
        if not parts:
            continue
        own = sum(parts).to("MW").magnitude
        other = np.atleast_2d(s.heat_power.to("MW").magnitude)[0, keep]
        ok = np.isfinite(other) & (other > 0)  # draws the check's own model could not use
        own, other = Q_(own[ok], "MW"), Q_(other[ok], "MW")
        label = "sum of focused vents" if s.compares_with == "focused" else "sum of vents and patches"
        out.append((key, compare_methods({label: own, s.names[0]: other}, "MW", seed=seed)))
    return out


def _throughput(vr, ctx, keep):
    from ..throughput import water_throughput

    T = vr.exit_temperature
    T = T.nominal if hasattr(T, "nominal") else T
    Ta = Q_(ctx.ambient_temperature.to("K").magnitude[keep], "K")
    S = ctx.ambient_salinity[keep] if np.ndim(ctx.ambient_salinity) == 1 else ctx.ambient_salinity
    return water_throughput(vr.heat_power.to("W"), T, ctx.pressure, Ta, S)


def _field_water(vents, sec, keep, seed):
    out = {}
    mass = [vr.throughput.mass_flux.to("kg/s").magnitude for vr in vents if vr.throughput is not None]
    vol = [vr.throughput.volume_flux_ambient.to("m^3/s").magnitude for vr in vents if vr.throughput is not None]
    if mass:
        out["focused_mass_flux"] = summarize(Q_(np.sum(mass, axis=0), "kg/s"), seed)
        out["focused_volume_flux"] = summarize(Q_(np.sum(vol, axis=0), "m^3/s"), seed)
    dv = [np.atleast_2d(s.volume_flux.to("m^3/s").magnitude)[:, keep].sum(axis=0) for s in sec.values()
          if s.volume_flux is not None and s.category == "diffuse"]
    if dv:
        out["diffuse_volume_flux"] = summarize(Q_(np.sum(dv, axis=0), "m^3/s"), seed)
    return out


def _reservoir(r, vents, focused, diffuse, pressure, seed, policy=None):
    """A reservoir hypothesis through ``summarizer.reservoir_answer``: the route of ``ventflux summarize reservoir``."""
    from ..summarizer import reservoir_answer

    if r.supplies == "focused":
        P = focused.draws
    elif r.supplies == "diffuse":
        P = diffuse.draws
    elif r.supplies == "field total":
        P = sum(t.draws.to("W") for t in (focused, diffuse) if t is not None)
    else:
        P = next(vr.heat_power for vr in vents if vr.name == r.supplies)
    opts = dict(r.options)
    if opts.get("porosity", 0.05) > 0 and "temperature" in opts:
        opts.setdefault("pressure", pressure)
    if "temperature" not in opts:
        opts.setdefault("porosity", 0.0)
    limit = policy.max_share if policy is not None else UnphysicalPolicy.max_share
    ans = reservoir_answer(P.to("W"), size=r.size, seed=seed, max_unphysical=limit, **opts)
    mining = ans.outputs["heat_mining_time"][0].to("year")
    decline = ans.outputs["decline_time"][0].to("year")
    conductive = ans.outputs.get("conductive_time")
    return {"name": r.name, "supplies": r.supplies, "answer": ans, "heat": _StoredHeat(ans.value("stored_heat")),
            "mining": mining, "decline": decline,
            "conductive": float(conductive[0].median.to("year").magnitude) if conductive else float("nan"),
            "controlling": ans.labels["controlling"]}


@dataclass(frozen=True)
class _StoredHeat:
    total: pint.Quantity  # J
