"""Survey section ``[sediment_probes]``: conductive heat loss through the field's sedimented area.

Keys (paths relative to the survey file)::

    [sediment_probes]
    records = "data/probes"              # a folder of single-penetration records, or a list of files
    area = "9500 ± 1500 m^2"
    calibration = "@probe calibration"   # conductivity calibration factor, shared by every station
    decay_model = "cylinder"
    exclude_sensors = { "HF03.csv" = ["T4"] }   # per record: sensor columns to leave out

    [sediment_probes.probe]              # the probe description shared by the stations (each may be uncertain)
    radius = "4 mm"
    probe_heat_capacity = "3.4e6 J/(m^3 K)"
    sediment_heat_capacity = "3.4e6 ± 0.2e6 J/(m^3 K)"
    heat_pulse_energy = "700 J/m"
    heat_pulse_duration = "10 s"

    [[sediment_probes.station]]          # a continuous station record: every penetration found and reduced
    record = "data/station07.csv"
    navigation = "data/nav07.csv"        # optional
    exclude_sensors = ["T2"]

Each penetration is reduced to heat flow with its total standard uncertainty
(``probe.reduce_record``: regression, conductivity fits, probe constants,
tilt). The sedimented area's mean heat flow is the mean over penetrations,
resampled in every draw (so their spread enters the uncertainty), each drawn
from its own uncertainty; the calibration factor on conductivity (heat flow
scales with it) is drawn once per draw for all of them
(``heat_flow_draws``). The section's output, mean heat flow × area, counts
as ``conductive`` heat: reported beside the focused and diffuse discharge
and added to the total.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ventflux.plugin_api import InputError, InputErrors
from ventflux.plugin_api import SectionEstimate, SurveySection
from ventflux.plugin_api import DataColumn, SurveyKey, survey_table
from ventflux.plugin_api import resolve
from ventflux.plugin_api import normal, uniform
from ventflux.plugin_api import Q_

from .constants import METHODS, PROBE_FIELDS, ProbeConstants

if TYPE_CHECKING:
    from .probe import PenetrationResult
    from .station import StationResult


def _sensor_list(f, value, name):
    if isinstance(value, str):
        value = [value]
    if not (isinstance(value, list) and value and all(isinstance(v, str) and v.strip() for v in value)):
        f.error(name, repr(value), "a list of sensor column names, e.g. [\"T2\", \"T5\"]")
        return ()
    return tuple(v.strip() for v in value)


def _probe(f):
    """The ``[sediment_probes.probe]`` table as a ProbeConstants, with every default named for the provenance."""
    sub = f.sub("probe")
    values = {}
    if sub is not None:
        for key, (_unit, dim) in PROBE_FIELDS.items():
            v = sub.quantity(key, dim, positive=key != "heat_pulse_duration", shareable=False)
            if v is not None:
                values[key] = v
        sub.check_unknown()
    d = ProbeConstants()
    for key in ("radius", "probe_heat_capacity", "sediment_heat_capacity"):
        if key not in values:
            sd = d.uncertainty.get(key)
            f.defaults[f.key(f"probe.{key}")] = (f"{getattr(d, key):g} {PROBE_FIELDS[key][0]}"
                                                 + (f" ± {sd:g}" if sd else "") + " (common practice, no source)")
    return values


def _reduce(kind, path, options, f, results, stations, notes):
    from .probe import reduce_penetration
    from .station import reduce_station

    try:
        if kind == "station":
            st = reduce_station(path, **options)
            stations.append(st)
            results.extend(st.results)
            notes.extend(st.notes)
            for label, why in st.skipped.items():
                notes.append(f"{Path(path).name} ({label}) skipped: {why}")
        else:
            results.append(reduce_penetration(path, **options))
    except InputErrors as e:
        f.errors.errors.extend(e.errors)
    except InputError as e:
        f.errors.add(e)


def _parse(f, ctx):
    from .probe import probe_from_inputs

    spec = {"area": f.quantity("area", "area", required=True, positive=True),
            "calibration": f.quantity("calibration", "dimensionless", positive=True),
            "decay_model": f.string("decay_model", default="cylinder", choices=METHODS)}
    method = spec["decay_model"] or "cylinder"
    probe_values = _probe(f)
    f.mark_used("exclude_sensors")
    exclude = f.table.get("exclude_sensors", {})
    if not isinstance(exclude, dict):
        f.error("exclude_sensors", repr(exclude), "a table of record file name = [sensor columns]")
        exclude = {}
    exclude = {name: _sensor_list(f, v, f"exclude_sensors.{name}") for name, v in exclude.items()}
    rec = f.table.get("records")
    f.mark_used("records")
    paths = []
    if rec is None:
        pass
    elif isinstance(rec, str):
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
    station_specs = []
    for s in f.subs("station"):
        path = s.path_value("record", required=True)
        nav = s.path_value("navigation")
        s.mark_used("exclude_sensors")
        ex = _sensor_list(s, s.table["exclude_sensors"], "exclude_sensors") if "exclude_sensors" in s.table else ()
        s.check_unknown()
        if path is not None:
            station_specs.append((path, nav, ex))
    if rec is None and not station_specs:
        f.error("records", "(missing)", "probe records (a folder or list) or [[sediment_probes.station]] tables")
    unknown_names = sorted(set(exclude) - {p.name for p in paths})
    for name in unknown_names:
        f.error(f"exclude_sensors.{name}", name, "the file name of one of the section's records")
    f.check_unknown()
    results: list[PenetrationResult] = []
    stations: list[StationResult] = []
    notes: list[str] = []
    try:
        probe = probe_from_inputs(None, {}, probe_values, fields={k: f"probe.{k}" for k in probe_values})
    except (InputError, InputErrors) as e:  # implausible values: reported under their key paths
        for err in (e.errors if isinstance(e, InputErrors) else [e]):
            f.error(err.field, err.value, err.allowed)
        probe = None
    # the run's draws, seed and limit on impossible draws: what the run redraws, --check has already refused
    run = dict(draws=ctx.draws, seed=ctx.seed, max_unphysical=ctx.max_unphysical)
    if probe is not None:
        for p in paths:
            ctx.input_files[str(p)] = "sediment probe record"
            _reduce("penetration", p, dict(method=method, probe=probe, exclude_sensors=exclude.get(p.name, ()),
                                           **run), f, results, stations, notes)
        for path, nav, ex in station_specs:
            ctx.input_files[str(path)] = "sediment probe station record"
            if nav is not None:
                ctx.input_files[str(nav)] = "navigation"
            _reduce("station", path, dict(method=method, probe=probe, exclude_sensors=ex, navigation=nav, **run), f,
                    results, stations, notes)
    spec["results"], spec["stations"], spec["notes"] = results, stations, notes
    return spec


def _name(r) -> str:
    return Path(r.record).name + (f" {r.label}" if r.label else "")


def heat_flow_draws(results, draws, calibration=None, key="sediment_probes") -> np.ndarray:
    """Draws of the mean heat flow over penetrations, W/m², shape ``(n_draws,)``.

    Every random number comes from the core's named streams (``draws``, a
    ``SharedDraws``): each penetration's heat flow (normal, its total standard
    uncertainty) under its own name, the resampling of penetrations as one
    uniform index per slot, and the calibration factor through ``resolve``,
    so a ``"@name"`` of ``[shared]`` is drawn once per draw for every station.
    """
    names = [_name(r) for r in results]
    m = len(results)
    q = draws.draw_each([f"{key}/{n}/heat flow" for n in names],
                        [normal(Q_(r.heat_flow, "W/m^2"), Q_(r.heat_flow_uncertainty, "W/m^2")) for r in results],
                        "W/m^2").magnitude
    if m > 1:  # resample the penetrations in every draw (bootstrap): their spread enters the uncertainty
        u = draws.draw_each([f"{key}/resampling/{i}" for i in range(m)],
                            [uniform(Q_(0.0, "dimensionless"), Q_(float(m), "dimensionless"))] * m,
                            "dimensionless").magnitude
        pick = np.minimum(u.astype(int), m - 1)
        q = np.take_along_axis(q, pick, axis=0)
    mean_q = q.mean(axis=0)
    if calibration is not None:
        cal = resolve(calibration, f"{key}/calibration", draws)
        mean_q = mean_q * np.broadcast_to(np.asarray(cal.to("dimensionless").magnitude, float), mean_q.shape)
    return mean_q


def _estimate(spec, ctx):
    d = ctx.draws
    n = d.n_draws
    if not spec["results"]:
        raise InputError("sediment_probes", "no penetration reduced", "at least one reduced penetration")
    from .probe import respread

    # the conductivity fits' Monte Carlo again with the run's draws and rule (as probe-heat-flow --seed would)
    res = [respread(r, d, ctx.policy) for r in spec["results"]]
    mean_q = heat_flow_draws(res, d, spec["calibration"])
    area = resolve(spec["area"], "sediment_probes/area", d).to("m^2").magnitude
    H = mean_q * np.broadcast_to(area, (n,))
    rows = []
    for r in res:
        row = {"record": Path(r.record).name, "penetration": r.label, "heat_flow [mW/m^2]": 1e3 * r.heat_flow,
               "heat_flow_se [mW/m^2]": 1e3 * r.heat_flow_se,
               "heat_flow_uncertainty [mW/m^2]": 1e3 * r.heat_flow_uncertainty,
               "mean_conductivity [W/(m K)]": float(np.mean(r.conductivity)), "sensors": int(r.depth.size),
               "excluded_sensors": "; ".join(f"{k}: {v}" for k, v in r.excluded.items()),
               "flags": "; ".join(r.flags)}
        for part in ("regression", "conductivity fits", "probe constants", "tilt", "interpolated conductivity"):
            row[f"heat_flow_u_{part.replace(' ', '_')} [mW/m^2]"] = 1e3 * r.uncertainty_parts.get(part, 0.0)
        rows.append(row)
    notes = ["Conductive heat loss: the penetrations' mean heat flow (resampled, each drawn from its total "
             "uncertainty) times the sedimented area; the conductivity calibration is drawn once per draw for every "
             "station. Reported beside the focused and diffuse discharge."]
    notes += [f"{w}" for r in res for w in r.warnings] + [f"{_name(r)}: {fl}" for r in res for fl in r.flags]
    notes += spec.get("notes", [])
    return SectionEstimate(category="conductive", names=["sedimented area"], heat_power=Q_(H.reshape(1, n), "W"),
                           rows=rows, tables={"sediment_probes": rows}, figures=_figures(res, spec["stations"]),
                           notes=notes)


def _figures(results, stations):
    """Temperature against thermal resistance for each penetration, and each station's transect (matplotlib figures)."""
    from .figures import resistance_plot, transect_plot

    out = [(f"{Path(r.record).stem}{'_' + r.label if r.label else ''}_resistance", resistance_plot(r),
            f"{_name(r)}: equilibrium temperature against cumulative thermal resistance; the slope is the heat flow "
            "(± total uncertainty, its regression standard error named).") for r in results]
    out += [(f"{Path(s.record).stem}_transect", transect_plot(s), f"{Path(s.record).name}: heat flow ± total "
             "uncertainty along the transect.") for s in stations if s.results]
    return out


_RECORD_COLUMNS = (
    DataColumn("time", "s", "time of each sample (or an ISO 8601 'time' column)"),
    DataColumn("T1", "degC", "temperature of sensor 1 (T2, T3, ... for the others); the header lines carry "
                             "sensor_depths, heat_pulse_energy, tilt, ... as '# name [unit]: value'"),
)

#: The keys of ``[sediment_probes]`` and its sub-tables (declared for the validator and ``--format``).
SEDIMENT_PROBES_KEYS = (
    SurveyKey("records", "path", "a folder of single-penetration records (*.csv), or a list of files",
              required="unless [[sediment_probes.station]] tables are given", columns=_RECORD_COLUMNS),
    SurveyKey("area", "area", "the sedimented area the mean heat flow applies to", required=True, uncertain=True),
    SurveyKey("calibration", "dimensionless", "calibration factor on conductivity (heat flow scales with it; "
              "\"@name\" of [shared] for one probe)", uncertain=True),
    SurveyKey("decay_model", "string", "model of the heat pulse's decay", choices=tuple(METHODS),
              default='"cylinder"'),
    SurveyKey("exclude_sensors", "mapping", "per record file name: the sensor columns to leave out, e.g. "
              "{ \"HF03.csv\" = [\"T4\"] }"),
    survey_table("probe", "the probe description shared by the stations (each may be uncertain)",
                 [SurveyKey(k, dim, f"the probe's {k.replace('_', ' ')}", uncertain=True)
                  for k, (_u, dim) in PROBE_FIELDS.items()], provider="ventflux-thermal"),
    survey_table("station", "a continuous station record: every penetration found and reduced", [
        SurveyKey("record", "path", "the station's record (CSV)", required=True, columns=_RECORD_COLUMNS),
        SurveyKey("navigation", "path", "the station's navigation (CSV)"),
        SurveyKey("exclude_sensors", "list", "sensor columns to leave out, e.g. [\"T2\"]"),
    ], many=True, provider="ventflux-thermal"),
)

SEDIMENT_PROBES = SurveySection(key="sediment_probes",
                                summary="sediment heat-flow probe records → conductive heat loss of the "
                                        "sedimented area",
                                parse=_parse, estimate=_estimate, provider="ventflux-thermal",
                                keys=SEDIMENT_PROBES_KEYS)
