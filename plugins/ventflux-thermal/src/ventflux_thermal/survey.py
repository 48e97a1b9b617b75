"""Survey section ``[sediment_probes]``: conductive heat loss through the field's sedimented area.

Each record is reduced to heat flow with its standard uncertainty
(``probe.reduce_penetration``). The sedimented area's mean heat flow is the
mean over stations, with the stations resampled in every draw (so their
spread enters the uncertainty) and each station's own uncertainty drawn
too; a calibration factor on conductivity, typically shared
(``calibration = "@probe calibration"``), scales every station alike.
The section's output, mean heat flow × area, counts as ``conductive`` heat:
reported beside the focused and diffuse discharge and added to the total.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from ventflux.plugin_api import InputError, InputErrors
from ventflux.plugin_api import SectionEstimate, SurveySection
from ventflux.plugin_api import resolve
from ventflux.plugin_api import Q_


def _parse(f, ctx):
    spec = {"area": f.quantity("area", "area", required=True, positive=True),
            "calibration": f.quantity("calibration", "dimensionless", positive=True),
            "decay_model": f.string("decay_model", default="cylinder", choices=("cylinder", "line-source"))}
    rec = f.table.get("records")
    f.used.add("records")
    paths = []
    if isinstance(rec, str):
        p = (ctx.base_dir / rec).resolve()
        if p.is_dir():
            paths = sorted(p.glob("*.csv"))
            if not paths:
                f.error("records", rec, "a folder holding probe records (*.csv)")
        elif p.is_file():
            paths = [p]
        else:
            f.error("records", rec, "an existing probe record or a folder of them")
    elif isinstance(rec, list) and rec and all(isinstance(r, str) for r in rec):
        for r in rec:
            p = (ctx.base_dir / r).resolve()
            if p.is_file():
                paths.append(p)
            else:
                f.error("records", r, "an existing probe record")
    else:
        f.error("records", repr(rec), "a folder or a list of probe-record files")
    f.check_unknown()
    results = []
    for p in paths:
        ctx.input_files[str(p)] = "sediment probe record"
        try:
            from .probe import reduce_penetration

            results.append(reduce_penetration(p, method=spec["decay_model"] or "cylinder"))
        except InputErrors as e:
            f.errors.errors.extend(e.errors)
        except InputError as e:
            f.errors.add(e)
    spec["results"] = results
    return spec


def _estimate(spec, ctx):
    d = ctx.draws
    n = d.n_draws
    res = spec["results"]
    q = np.array([r.heat_flow for r in res])
    sq = np.array([r.heat_flow_uncertainty for r in res])
    rng = np.random.default_rng(np.random.SeedSequence([d.seed, 7001]))
    pick = rng.integers(0, q.size, size=(q.size, n))  # bootstrap the stations in every draw
    drawn = q[pick] + sq[pick] * rng.standard_normal((q.size, n))
    mean_q = drawn.mean(axis=0)
    if spec["calibration"] is not None:
        cal = resolve(spec["calibration"], "sediment_probes/calibration", d)
        mean_q = mean_q * np.broadcast_to(cal.to("dimensionless").magnitude, (n,))
    area = resolve(spec["area"], "sediment_probes/area", d).to("m^2").magnitude
    H = mean_q * np.broadcast_to(area, (n,))
    rows = [{"record": Path(r.record).name, "heat_flow [mW/m^2]": 1e3 * r.heat_flow,
             "heat_flow_se [mW/m^2]": 1e3 * r.heat_flow_se, "heat_flow_uncertainty [mW/m^2]":
             1e3 * r.heat_flow_uncertainty, "mean_conductivity [W/(m K)]": float(np.mean(r.conductivity)),
             "sensors": int(r.depth.size)} for r in res]
    return SectionEstimate(category="conductive", names=["sedimented area"], heat_power=Q_(H.reshape(1, n), "W"),
                           rows=rows, tables={"sediment_probes": rows}, figures=_figures(res),
                           notes=["Conductive heat loss: the stations' mean heat flow (bootstrapped) times the "
                                  "sedimented area; reported beside the focused and diffuse discharge."])


def _figures(results):
    """Temperature against thermal resistance for each station, as PNG bytes for the report."""
    from .figures import resistance_png

    return [(f"{Path(r.record).stem}_resistance", resistance_png(r),
             f"{Path(r.record).stem}: equilibrium temperature against cumulative thermal resistance; the slope is "
             "the heat flow.") for r in results]


SEDIMENT_PROBES = SurveySection(key="sediment_probes",
                                summary="sediment heat-flow probe records → conductive heat loss of the sedimented area",
                                parse=_parse, estimate=_estimate, provider="ventflux-thermal")
