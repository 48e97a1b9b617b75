"""Field-wide survey sections that are not added to the totals: checks and context.

``[field_plume]``: the rise of the plume above the whole field, inverted for
heat power (the same integral plume model as ``[vent.plume_rise]``) and
compared with the field's own total (focused, or focused + diffuse) on the
same draws: an independent check of the sum of the parts.

``[ridge_flank]``: conductive heat flow observed on the ridge flank around
the field against a conductive cooling reference, integrated over crustal
age: the advective heat deficit, per area and per ridge length, and the
column of circulated seawater it implies (``ventflux.summarizer.flank_answer``).
"""

from __future__ import annotations

import numpy as np

from ..units import Q_
from .api import ReportPart, SectionEstimate, SurveySection
from .plume_method import PLUME_RISE, PLUME_RISE_KEYS
from .schema import DataColumn, SurveyKey

COMPARES_WITH = SurveyKey("compares_with", "string", "the survey total this check is compared with",
                          choices=("field total", "focused"), default='"field total"')
FIELD_PLUME_KEYS = (*PLUME_RISE_KEYS, COMPARES_WITH)

RIDGE_FLANK_KEYS = (
    SurveyKey("observations", "path", "conductive heat flow observed on the ridge flank (CSV)", required=True,
              columns=(DataColumn("age", "Myr", "crustal age of the observation"),
                       DataColumn("heat_flow", "mW/m^2", "observed conductive heat flow")),
              example='"data/flank_heat_flow.csv"'),
    SurveyKey("reference", "string", "conductive cooling reference the observations are compared with",
              choices=("gdh1", "half-space"), default='"gdh1"'),
    SurveyKey("half_spreading_rate", "velocity", "half spreading rate of the ridge (for the deficit per ridge "
              "length)", uncertain=True, example='"30 ± 5 mm/yr"'),
    SurveyKey("temperature_rise", "temperature", "warming of the circulated seawater (for its volume)",
              uncertain=True, example='"6 ± 2 K"'),
)


def _parse_field_plume(f, ctx):
    compares = f.string("compares_with", default="field total", choices=("field total", "focused"))
    spec = PLUME_RISE.parse(f, ctx)
    spec["compares_with"] = compares
    return spec


def _estimate_field_plume(spec, ctx):
    est = PLUME_RISE.estimate(spec, "field plume", ctx)
    return SectionEstimate(category="check", names=["field plume rise"], heat_power=est.heat_power.reshape(1, -1),
                           rows=est.rows, tables={"field_plume": est.rows}, figures=est.figures,
                           notes=[f"Field plume: the rise of the plume above the whole field, inverted for heat "
                                  f"power and compared with the {spec['compares_with']} of the survey."],
                           compares_with=spec["compares_with"])


FIELD_PLUME = SurveySection(key="field_plume", summary="rise of the plume above the whole field, as a check on the "
                                                       "sum of vents and patches (not added to the totals)",
                            parse=_parse_field_plume, estimate=_estimate_field_plume, keys=FIELD_PLUME_KEYS)


#: What the flank's water column means, under its table in the report.
FLANK_WATER_COLUMN = ("The water column is the height of seawater, per square metre of seafloor, that warmed by the "
                      "given temperature rise as it circulates through the flank's crust would carry off the heat "
                      "deficit: the deficit divided by the seawater's enthalpy gain per cubic metre at the "
                      "seafloor's pressure.")


def _parse_flank(f, ctx):
    from ..errors import InputError, InputErrors
    from ..tables import read_quantity_table

    spec = {"observations": f.path_value("observations", required=True),
            "reference": f.string("reference", default="gdh1", choices=("gdh1", "half-space")),
            "half_spreading_rate": f.quantity("half_spreading_rate", "velocity", positive=True),
            "temperature_rise": f.quantity("temperature_rise", "temperature", positive=True)}
    f.check_unknown()
    spec["table"] = None
    if spec["observations"] is not None:
        ctx.input_files[str(spec["observations"])] = "ridge-flank heat flow"
        try:
            spec["table"] = read_quantity_table(spec["observations"], {"age": "time", "heat_flow": "heat flux"})
        except InputErrors as e:
            f.errors.errors.extend(e.errors)
        except InputError as e:
            f.errors.add(e)
    return spec


def _estimate_flank(spec, ctx):
    from ..summarizer import flank_answer

    t = spec["table"]
    ans = flank_answer(t["age"], t["heat_flow"], reference=spec["reference"],
                       half_spreading_rate=spec["half_spreading_rate"], temperature_rise=spec["temperature_rise"],
                       ambient_temperature=Q_(float(np.mean(ctx.ambient_temperature.to("K").magnitude)), "K"),
                       pressure=ctx.pressure, salinity=float(np.mean(ctx.ambient_salinity)),
                       draws=ctx.draws.n_draws, seed=ctx.draws.seed, max_unphysical=ctx.policy)
    rows = []
    for name, (summ, unit) in ans.outputs.items():
        q = summ.to(unit)
        rows.append({"quantity": name.replace("_", " "), "unit": unit, "median": float(q.median.magnitude),
                     "p05": float(q.p05.magnitude), "p95": float(q.p95.magnitude)})
    return SectionEstimate(category="context", names=[], heat_power=Q_(np.zeros((0, ctx.draws.n_draws)), "W"),
                           rows=rows, tables={"ridge_flank": rows},
                           notes=[f"Ridge flank: observed conductive heat flow against the {spec['reference']} "
                                  "reference over the observed ages; the deficit is heat carried off by circulating "
                                  "seawater."])


RIDGE_FLANK = SurveySection(key="ridge_flank", summary="ridge-flank heat flow against a conductive cooling reference: "
                                                       "advective heat deficit and circulated seawater",
                            parse=_parse_flank, estimate=_estimate_flank, keys=RIDGE_FLANK_KEYS,
                            report=ReportPart(intro={"ridge_flank": FLANK_WATER_COLUMN}))
