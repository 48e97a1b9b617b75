"""The summarizer: the questions asked of a vent field's output, with uncertainty.

Four questions, each a function taking exact quantities or ``Uncertain``
inputs and returning an ``Answer`` (Monte Carlo summaries with units):

* ``water_answer``: heat power → mass flux, volume flux at vent and ambient
  conditions, annual throughput (``ventflux.throughput``);
* ``reservoir_answer``: heat-mining time, decline lifetime and conductive
  timescale of a reservoir, with the controlling one (``ventflux.reservoir``);
* ``reservoir_size_answer``: the reservoir needed to sustain a power for a time;
* ``flank_answer``: ridge-flank heat deficit against a plate-cooling
  reference and the equivalent column of circulated seawater
  (``ventflux.ridge_flank``).

Monte Carlo goes through the package's one driver (``uncertainty.propagate``):
every uncertain input is drawn once
as an array, the domain function runs once on the arrays, and the outputs are
summarized. Inputs that must be positive (a power, a volume, an uncertain
porosity) drop the draws that are not, and refuse the distribution if more
than ``max_unphysical`` (5 % by default) are dropped.
Without an uncertain input the answer is exact (one evaluation). An input
may also be given as an array of draws made elsewhere (a field total's
draws from ``ventflux.aggregate.field_total``), so the survey run can carry
its correlated draws straight into the reservoir question.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pint

from . import reservoir as rv
from . import ridge_flank as rf
from .errors import InputError
from .orifice import DEFAULT_AMBIENT_SALINITY
from .properties import seawater_heat as sh
from .throughput import water_throughput
from .uncertainty import (
    DEFAULT_DRAWS,
    DEFAULT_MAX_UNPHYSICAL,
    DEFAULT_SEED,
    SharedDraws,
    Summary,
    Uncertain,
    UnphysicalPolicy,
    propagate,
    summarize,
)
from .units import Q_
from .vocabulary import json_key, si_unit

#: Former name of the package-wide limit on dropped draws (``uncertainty.DEFAULT_MAX_UNPHYSICAL``).
MAX_DROPPED_SHARE = DEFAULT_MAX_UNPHYSICAL


from .presentation import Presentable  # noqa: E402 - the one presentation of results (repr, pandas, xarray)


@dataclass(frozen=True, repr=False)
class Answer(Presentable):
    """One question's answer: outputs (name → (Summary, unit)), labels and the inputs used."""

    question: str
    outputs: dict
    labels: dict = field(default_factory=dict)
    inputs: dict = field(default_factory=dict)
    draws: int = 1
    dropped: int = 0
    seed: int | None = None
    samples: dict = field(default_factory=dict, repr=False)  # name → quantity array of the draws
    max_unphysical: float = DEFAULT_MAX_UNPHYSICAL  # the limit the draws were held to

    def value(self, name):
        """Median of an output as a quantity in its reporting unit."""
        s, unit = self.outputs[name]
        return s.median.to(unit)

    def as_dict(self) -> dict:
        """Flat JSON-ready dictionary, units in the key names (``mass_flux_kg_s_median``)."""
        out = {"question": self.question, "draws": self.draws, "unphysical_draws": self.dropped,
               "max_unphysical_share": self.max_unphysical, "seed": self.seed}
        for name, (s, unit) in self.outputs.items():  # JSON in SI units (ventflux.vocabulary.si_unit)
            si = si_unit(unit)
            if self.draws > 1:
                out.update(s.as_dict(name, si or "dimensionless"))
            else:
                out[json_key(name, si)] = float(s.median.to(si or "dimensionless").magnitude)
        out.update(self.labels)
        out["inputs"] = dict(self.inputs)
        return out

    def rows(self) -> list:
        """``(label, value, unit)`` rows for ``print_table``; ``median [p05, p95]`` when uncertain."""
        rows = []
        for name, (s, unit) in self.outputs.items():
            s = s.to(unit)
            shown: str | float
            if self.draws > 1:
                shown = f"{s.median.magnitude:.4g} [{s.p05.magnitude:.4g}, {s.p95.magnitude:.4g}]"
            else:
                shown = float(s.median.magnitude)
            rows.append((name.replace("_", " "), shown, unit))
        rows.extend((k.replace("_", " "), v, "") for k, v in self.labels.items())
        return rows


def _given_draws(inputs, observations):
    """Inputs passed as draw arrays already (1-D quantities with more than one value)."""
    return {k: v for k, v in inputs.items() if k not in observations and isinstance(v, pint.Quantity)
            and np.ndim(v.magnitude) == 1 and np.size(v.magnitude) > 1}


def _run(question, fn, inputs, outputs, positive=(), draws=DEFAULT_DRAWS, seed=DEFAULT_SEED, observations=(),
         max_unphysical=DEFAULT_MAX_UNPHYSICAL):
    """Propagate through the package's one driver (``uncertainty.propagate``) and summarize ``outputs``.

    ``outputs`` maps name → (getter, unit). An input given as a 1-D quantity
    array is taken as draws made elsewhere (e.g. a field total's draws from
    ``ventflux.aggregate``); the uncertain inputs are then drawn as many
    times. ``observations`` names inputs that are arrays along something
    else (ages of heat-flow observations). Draws of a ``positive`` input that
    are not positive are dropped and counted; above ``max_unphysical`` of
    the draws the input is refused.
    """
    uncertain = {k: v for k, v in inputs.items() if isinstance(v, Uncertain)}
    given = _given_draws(inputs, observations)
    sizes = {np.size(v.magnitude) for v in given.values()}
    if len(sizes) > 1:
        raise InputError("draws", ", ".join(f"{k}: {np.size(v.magnitude)}" for k, v in given.items()),
                         "the same number of draws in every input given as draws")
    n = sizes.pop() if sizes else (int(draws) if uncertain else 1)
    if uncertain and n < 2:
        raise InputError("draws", draws, "an integer ≥ 2")
    if n == 1:
        result, dropped = fn(**inputs), 0
    else:
        checked = [k for k in positive if k in uncertain or k in given]

        def physical(args):
            keep = np.ones((), bool)
            for k in checked:
                keep = keep & (np.asarray(args[k].magnitude) > 0)
            return keep

        prop = propagate(fn, {k: v for k, v in inputs.items() if k not in given}, draws=SharedDraws(n, seed),
                         physical=physical, max_unphysical=max_unphysical, drawn=given,
                         labels={k: f"{n} given draws" for k in given})
        result, dropped = prop.result, prop.unphysical
    m = n - dropped
    summaries, samples = {}, {}
    for name, (get, unit) in outputs.items():
        q = get(result)
        if q is None:
            continue
        mag = np.atleast_1d(np.asarray(q.to(unit).magnitude, float))
        if mag.size not in (1, m):
            raise InputError("inputs", f"arrays of {mag.size} values",
                             "single values or distributions (for arrays call the domain functions directly)")
        if m > 1:
            # an output that no uncertain input reaches is one value: repeat it over the draws
            samples[name] = Q_(np.broadcast_to(mag, (m,)).copy(), unit)
            summaries[name] = (summarize(samples[name], seed), unit)
        else:
            samples[name] = Q_(mag, unit)
            summaries[name] = (_exact(Q_(float(mag[0]), unit)), unit)
    shown = {k: (f"{np.size(v.magnitude)} given draws" if k in given else str(v) if v is not None else None)
             for k, v in inputs.items()}
    return result, Answer(question, summaries, {}, shown, m, dropped, seed if uncertain else None, samples,
                          max_unphysical.max_share if isinstance(max_unphysical, UnphysicalPolicy)
                          else float(max_unphysical))


def _exact(q) -> Summary:
    return Summary(q, q, q, q, q * 0, 1, None)


def _attr(*path):
    def get(obj):
        for p in path:
            obj = obj[p] if isinstance(obj, dict) else getattr(obj, p)
            if obj is None:
                return None
        return obj
    return get


WATER_OUTPUTS = {
    "mass_flux": (_attr("mass_flux"), "kg/s"),
    "volume_flux_vent": (_attr("volume_flux_vent"), "m^3/s"),
    "volume_flux_ambient": (_attr("volume_flux_ambient"), "m^3/s"),
    "annual_mass": (_attr("annual_mass"), "kg/year"),
    "annual_volume": (_attr("annual_volume"), "km^3/year"),
    "specific_heat_content": (_attr("specific_heat_content"), "kJ/kg"),
    "vent_density": (_attr("vent_density"), "kg/m^3"),
    "ambient_density": (_attr("ambient_density"), "kg/m^3"),
    "shortcut_heat_content": (_attr("shortcut_heat_content"), "kJ/kg"),
    "shortcut_mass_flux": (_attr("shortcut_mass_flux"), "kg/s"),
}


def water_answer(power, temperature, pressure, ambient_temperature, salinity=DEFAULT_AMBIENT_SALINITY,
                 draws=DEFAULT_DRAWS, seed=DEFAULT_SEED,
                 max_unphysical=DEFAULT_MAX_UNPHYSICAL) -> Answer:
    """Mass flux, volume fluxes and annual water throughput carried by ``power``.

    Parameters are those of ``ventflux.throughput.water_throughput``; any may
    be ``Uncertain``. The shortcut ``c_p ΔT`` figures are reported beside
    the enthalpy-difference ones for comparison only.
    """
    _, ans = _run("water", water_throughput,
                  dict(power=power, temperature=temperature, pressure=pressure,
                       ambient_temperature=ambient_temperature, salinity=salinity),
                  WATER_OUTPUTS, positive=("power", "pressure"), draws=draws, seed=seed, max_unphysical=max_unphysical)
    ans.labels["heat_content_model"] = "IAPWS-95 pure water at both ends; ambient density TEOS-10"
    ans.labels["shortcut"] = "c_p0 (T - T_ambient), TEOS-10's c_p0 = 3991.87 J/(kg K)"
    return ans


RESERVOIR_OUTPUTS = {
    "stored_heat": (_attr("heat", "total"), "J"),
    "rock_heat": (_attr("heat", "rock"), "J"),
    "pore_fluid_heat": (_attr("heat", "pore_fluid"), "J"),
    "latent_heat": (_attr("heat", "latent"), "J"),
    "volume": (_attr("heat", "volume"), "km^3"),
    "heat_mining_time": (_attr("mining_time"), "year"),
    "efolding_time": (_attr("efolding_time"), "year"),
    "decline_time": (_attr("decline_time"), "year"),
    "conductive_time": (_attr("conductive_time"), "year"),
    "size": (_attr("size"), "m"),
}


def _lifetime(power, size=None, diffusivity=rv.THERMAL_DIFFUSIVITY, spent_fraction=rv.SPENT_FRACTION,
              cooled_faces=1, **heat):
    return rv.reservoir_lifetime(power, rv.reservoir_heat(**heat), size=size, diffusivity=diffusivity,
                                 fraction=spent_fraction, cooled_faces=cooled_faces)


def reservoir_answer(power, temperature_drop, volume=None, area=None, thickness=None,
                     rock_density=rv.ROCK_DENSITY, rock_heat_capacity=rv.ROCK_HEAT_CAPACITY, porosity=rv.POROSITY,
                     temperature=None, pressure=None, melt_volume=None, latent_heat=rv.LATENT_HEAT,
                     melt_density=rv.MELT_DENSITY, size=None, diffusivity=rv.THERMAL_DIFFUSIVITY,
                     spent_fraction=rv.SPENT_FRACTION, draws=DEFAULT_DRAWS, seed=DEFAULT_SEED,
                     depth_below_seafloor=None, seafloor_pressure=None, pressure_regime="hydrostatic",
                     cooled_faces=1, max_unphysical=DEFAULT_MAX_UNPHYSICAL) -> Answer:
    """Heat-mining time, exponential-decline lifetime and ``L²/κ``, with the controlling one.

    Parameters are those of ``ventflux.reservoir.reservoir_heat`` and
    ``reservoir_lifetime`` (defaults documented there, with sources); any
    quantity may be ``Uncertain``. ``controlling`` is labelled with the share
    of draws in which each process is the faster; ``conductive_length`` names
    the length of ``L²/κ`` and ``pore_fluid_phase`` the pore fluid's state.
    """
    inputs = dict(power=power, temperature_drop=temperature_drop, volume=volume, area=area, thickness=thickness,
                  rock_density=rock_density, rock_heat_capacity=rock_heat_capacity, porosity=porosity,
                  temperature=temperature, pressure=pressure, melt_volume=melt_volume, latent_heat=latent_heat,
                  melt_density=melt_density, size=size, diffusivity=diffusivity, spent_fraction=spent_fraction,
                  depth_below_seafloor=depth_below_seafloor, seafloor_pressure=seafloor_pressure,
                  pressure_regime=pressure_regime, cooled_faces=cooled_faces)
    life, ans = _run("reservoir", _lifetime, inputs, RESERVOIR_OUTPUTS,
                     positive=("power", "temperature_drop", "volume", "area", "thickness", "rock_density",
                               "rock_heat_capacity", "size", "diffusivity", "melt_volume", "latent_heat",
                               "porosity"),
                     draws=draws, seed=seed, max_unphysical=max_unphysical)
    share = float(np.mean(np.atleast_1d(life.controlling) == "advective decline"))
    label = "advective decline" if share >= 0.5 else "conductive cooling"
    ans.labels["controlling"] = label
    ans.labels["controlling_share"] = share if label == "advective decline" else 1.0 - share
    ans.labels["spent_fraction"] = float(spent_fraction)
    ans.labels["conductive_length"] = life.size_basis
    if life.heat.pore_fluid_phase:
        ans.labels["pore_fluid_phase"] = life.heat.pore_fluid_phase
    return ans


SIZE_OUTPUTS = {
    "volume": (_attr("volume_km3"), "km^3"),
    "cube_side": (_attr("cube_side"), "m"),
    "thickness": (_attr("thickness"), "m"),
    "heat_per_volume": (_attr("heat_per_volume"), "MJ/m^3"),
}


def reservoir_size_answer(power, duration, temperature_drop, area=None, rock_density=rv.ROCK_DENSITY,
                          rock_heat_capacity=rv.ROCK_HEAT_CAPACITY, porosity=rv.POROSITY, temperature=None,
                          pressure=None, draws=DEFAULT_DRAWS, seed=DEFAULT_SEED, depth_below_seafloor=None,
                          seafloor_pressure=None, pressure_regime="hydrostatic",
                          max_unphysical=DEFAULT_MAX_UNPHYSICAL) -> Answer:
    """Hot-rock volume (and thickness under ``area``) that sustains ``power`` for ``duration``.

    The reservoir pressure for the pore fluid is ``pressure`` or comes from ``depth_below_seafloor`` and
    ``seafloor_pressure`` under ``pressure_regime`` (``ventflux.reservoir.reservoir_pressure``).
    """
    inputs = dict(power=power, duration=duration, temperature_drop=temperature_drop, area=area,
                  rock_density=rock_density, rock_heat_capacity=rock_heat_capacity, porosity=porosity,
                  temperature=temperature, pressure=pressure, depth_below_seafloor=depth_below_seafloor,
                  seafloor_pressure=seafloor_pressure, pressure_regime=pressure_regime)
    _, ans = _run("reservoir size", rv.reservoir_size_for, inputs, SIZE_OUTPUTS,
                  positive=("power", "duration", "temperature_drop", "area", "rock_density", "rock_heat_capacity",
                            "porosity"),
                  draws=draws, seed=seed, max_unphysical=max_unphysical)
    return ans


#: Default bottom-water temperature for the ridge-flank question (from memory: deep water is about 1.5–3 °C).
FLANK_AMBIENT_TEMPERATURE = Q_(2.0, "degC")

FLANK_OUTPUTS = {
    "reference_heat": (_attr("deficit", "reference_heat"), "J/m^2"),
    "conductive_heat": (_attr("deficit", "conductive_heat"), "J/m^2"),
    "heat_deficit": (_attr("deficit", "deficit"), "J/m^2"),
    "deficit_fraction": (_attr("deficit", "fraction"), "dimensionless"),
    "mean_advective_flux": (_attr("deficit", "mean_advective_flux"), "mW/m^2"),
    "advective_loss_per_length": (_attr("deficit", "per_length"), "MW/km"),
    "reference_heat_before_first_age": (_attr("deficit", "before_first"), "J/m^2"),
    "heat_deficit_from_axis": (_attr("deficit", "deficit_from_axis"), "J/m^2"),
    "advective_loss_per_length_from_axis": (_attr("deficit", "per_length_from_axis"), "MW/km"),
    "water_column": (_attr("water_column"), "km"),
    "circulated_water_per_length": (_attr("water_per_length"), "m^3/s/km"),
}


def _flank(age, heat_flow, reference, half_spreading_rate, temperature_rise, ambient_temperature, pressure,
           salinity, deficit_span="observed", **half_space):
    d = rf.heat_deficit(age, heat_flow, reference, half_spreading_rate=half_spreading_rate, **half_space)
    out = {"deficit": d, "water_column": None, "water_per_length": None}
    deficit, per_length = d.span(deficit_span)
    if temperature_rise is not None:
        uptake = rf.seawater_heat_uptake(temperature_rise, ambient_temperature, pressure, salinity)
        warm_c = (ambient_temperature.to("degC").magnitude
                  + rf._difference(temperature_rise, "fluid temperature rise").to("K").magnitude)
        out["water_model"] = sorted({str(n) for n in np.ravel(sh.model_names(warm_c))})
        # A negative deficit (more conducted than the reference) means no advective loss: no water.
        heat = np.maximum(deficit.to("J/m^2").magnitude, 0.0)
        out["water_column"] = Q_(heat / uptake.to("J/m^3").magnitude, "m")
        if per_length is not None:
            out["water_per_length"] = (Q_(np.maximum(per_length.to("W/m").magnitude, 0.0), "W/m")
                                       / uptake).to("m^3/s/km")
    return out


def flank_answer(age, heat_flow, reference="gdh1", half_spreading_rate=None, temperature_rise=None,
                 ambient_temperature=FLANK_AMBIENT_TEMPERATURE, pressure=None, salinity=DEFAULT_AMBIENT_SALINITY,
                 conductivity=None, diffusivity=None, temperature_difference=None,
                 draws=DEFAULT_DRAWS, seed=DEFAULT_SEED, deficit_span="observed",
                 max_unphysical=DEFAULT_MAX_UNPHYSICAL) -> Answer:
    """Ridge-flank heat deficit, advective loss per area and per ridge length, and the water column.

    Parameters
    ----------
    age, heat_flow : pint.Quantity
        Observed conductive heat flow (exact arrays) at crustal ages.
    reference : {"gdh1", "half-space"}
    half_spreading_rate : pint.Quantity or Uncertain, optional
    temperature_rise : pint.Quantity or Uncertain, optional
        Warming of the circulated seawater; gives the water column.
    ambient_temperature : pint.Quantity, default 2 degC
        Bottom-water temperature (from memory: deep water is about 1.5–3 °C).
    pressure : pint.Quantity
        Absolute pressure at the seafloor; required with ``temperature_rise``.
    conductivity, diffusivity, temperature_difference : optional
        Half-space parameters (defaults in ``ventflux.ridge_flank``).
    deficit_span : {"observed", "from-axis"}
        The deficit the water column uses: over the observed ages only
        (default), or from age 0, adding the reference's heat loss before the
        first observation (an upper bound: no conduction assumed there). Both
        deficits are reported either way.
    """
    if deficit_span not in rf.DEFICIT_SPANS:
        raise InputError("deficit span", str(deficit_span), "one of " + ", ".join(rf.DEFICIT_SPANS))
    if temperature_rise is not None and pressure is None:
        raise InputError("pressure", "none", "the seafloor pressure, needed for the circulated seawater's enthalpy")
    half_space = {k: v for k, v in dict(conductivity=conductivity, diffusivity=diffusivity,
                                        temperature_difference=temperature_difference).items() if v is not None}
    if half_space and reference != "half-space":
        raise InputError("reference", reference, "'half-space' when half-space parameters are given")
    inputs = dict(age=age, heat_flow=heat_flow, reference=reference, half_spreading_rate=half_spreading_rate,
                  temperature_rise=temperature_rise, ambient_temperature=ambient_temperature, pressure=pressure,
                  salinity=salinity, deficit_span=deficit_span, **half_space)
    out, ans = _run("ridge flank", _flank, inputs, FLANK_OUTPUTS,
                    positive=("half_spreading_rate", "temperature_rise", "conductivity", "diffusivity",
                              "temperature_difference"), draws=draws, seed=seed, max_unphysical=max_unphysical,
                    observations=("age", "heat_flow"))
    ans.labels["reference"] = reference
    if out.get("water_model"):
        ans.labels["circulated_water_model"] = "; ".join(out["water_model"])
    ans.labels["water_column_deficit"] = ("observed ages only" if deficit_span == "observed"
                                          else "from age 0 (no conduction before the first observation)")
    ans.labels["age_range"] = (f"{out['deficit'].age_from.to('Myr').magnitude:g}-"
                               f"{out['deficit'].age_to.to('Myr').magnitude:g} Myr")
    ans.inputs["age"] = f"{np.asarray(age.to('Myr').magnitude).tolist()} Myr"
    ans.inputs["heat_flow"] = f"{np.asarray(heat_flow.to('mW/m^2').magnitude).tolist()} mW/m^2"
    return ans
