"""Constants of the thermal reductions that the command line needs before any fit: no SciPy here.

The command registration builds its parsers from these defaults, so this
module imports only the standard library.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields, replace

#: Decay models of the probe reduction. ``cylinder``: the perfectly conducting cylinder (Carslaw & Jaeger
#: 1959 §13.7) with finite pulses by superposition; ``line-source``: its late-time 1/t asymptote, kept for
#: records that are line sources and flagged with its model error on a finite probe.
METHODS = ("cylinder", "line-source")

#: Default pore-fluid practical salinity: typical deep ocean water, about 34.6–34.7 below 2000 m (from memory).
DEFAULT_SALINITY = 34.7

#: Probe-description fields a probe table or a record header may set, with their units and dimensions.
PROBE_FIELDS = {"radius": ("m", "length"),
                "probe_heat_capacity": ("J/(m^3*K)", "volumetric heat capacity"),
                "sediment_heat_capacity": ("J/(m^3*K)", "volumetric heat capacity"),
                "heat_pulse_energy": ("J/m", "energy per length"),
                "heat_pulse_duration": ("s", "time")}

#: Plausible range of each probe constant (SI; choices made here, common practice, no source): sensor tubes
#: of heat-flow probes are millimetres across, heat capacities those of solids and water (a few MJ/(m³·K)),
#: pulses of tens to thousands of J/m lasting seconds to minutes. A value outside is a typo of a unit or an
#: exponent, refused before any fit.
PLAUSIBLE_PROBE = {"radius": (1e-4, 0.05), "probe_heat_capacity": (1e5, 2e7), "sediment_heat_capacity": (1e5, 2e7),
                   "heat_pulse_energy": (1.0, 1e5), "heat_pulse_duration": (0.0, 3600.0)}

#: Standard uncertainties of the defaults (SI). Marine sediment's volumetric heat capacity spans about
#: 3.0–3.8 MJ/(m³·K) with porosity (from memory), taken here as 3.4 ± 0.2 MJ/(m³·K).
DEFAULT_UNCERTAINTY = {"sediment_heat_capacity": 0.2e6}


@dataclass(frozen=True)
class ProbeConstants:
    """Instrument and sediment constants of the reduction (SI floats).

    Defaults (common practice, no source): a sensor tube of 4 mm radius;
    probe and sediment volumetric heat capacities both 3.4 MJ/(m³·K), so
    α = 2; the starting conductivity 1.0 W/(m·K) lies in the usual range of
    marine sediment, 0.8–1.2 W/(m·K). A heat pulse lasts
    ``heat_pulse_duration`` seconds from its logged start (0: instantaneous).

    ``uncertainty`` maps a field name to its standard uncertainty in the
    field's SI unit (e.g. ``{"radius": 0.0001}``); ``given`` names the fields
    set by the user (the others are defaults and are listed as such in the
    provenance).
    """

    radius: float = 0.004  # m
    probe_heat_capacity: float = 3.4e6  # J/(m^3 K), ρ_p c_p
    sediment_heat_capacity: float = 3.4e6  # J/(m^3 K), ρc
    start_conductivity: float = 1.0  # W/(m K)
    heat_pulse_energy: float | None = None  # J/m (None: from the record or the option)
    heat_pulse_duration: float = 0.0  # s
    uncertainty: dict = field(default_factory=lambda: dict(DEFAULT_UNCERTAINTY), compare=False)
    given: frozenset = frozenset()

    @property
    def alpha(self) -> float:
        """2 ρc / (ρ_p c_p): twice the ratio of the sediment's to the probe's volumetric heat capacity."""
        return 2.0 * self.sediment_heat_capacity / self.probe_heat_capacity

    def with_values(self, **values) -> "ProbeConstants":
        """A copy with ``values`` set and recorded as given."""
        return replace(self, given=self.given | frozenset(k for k, v in values.items() if v is not None),
                       **{k: v for k, v in values.items() if v is not None})

    def provenance(self) -> dict:
        """Every constant with its value (SI), its standard uncertainty and whether it is a default."""
        out = {}
        for f in fields(self):
            if f.name in ("uncertainty", "given"):
                continue
            v = getattr(self, f.name)
            if v is None:
                continue
            out[f.name] = {"value": v, "sd": self.uncertainty.get(f.name, 0.0),
                           "source": "given" if f.name in self.given else "default (common practice, no source)"}
        return out

    def defaults_used(self) -> list[str]:
        return [k for k, v in self.provenance().items() if v["source"] != "given"]


__all__ = ["METHODS", "DEFAULT_SALINITY", "PROBE_FIELDS", "PLAUSIBLE_PROBE", "ProbeConstants"]
