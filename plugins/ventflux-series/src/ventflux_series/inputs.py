"""Draws of every input of a series, made once on the client and handed to every item.

A vent's fixed inputs (its orifice, its velocity model, its camera's pixel size) are drawn once per Monte Carlo
draw for the whole series under the name ``"<vent>/<key>"``; an input that refers to ``[shared]`` as ``"@name"``
is drawn once under ``"shared/<name>"`` for every vent that uses it. So a systematic error is the same draw at
every time step, and the same in a serial and a distributed run.
"""

from __future__ import annotations

import numpy as np

from ventflux.plugin_api import SharedDraws
from ventflux.plugin_api import Uncertain

from .manifest import Manifest, SharedName

#: SI unit each input is handed to the estimators in.
SI_UNITS = {"diameter": "m", "velocity": "m/s", "temperature_offset": "K", "area": "m^2",
            "active_fraction": "dimensionless", "exit_temperature": "K", "pixel_size": "m"}


def _si(q, key):
    unit = SI_UNITS[key]
    if key == "temperature_offset":  # a calibration offset is a temperature difference
        return q.to("delta_degC").magnitude if str(q.units) in ("degree_Celsius", "degC") else q.to("K").magnitude
    return q.to(unit).magnitude


def series_input_draws(manifest: Manifest) -> tuple[dict[str, dict], dict[str, str]]:
    """Per vent, each input's draws as SI magnitudes (array of ``draws`` or a scalar); and their provenance."""
    d = SharedDraws(manifest.draws, manifest.seed)
    out: dict[str, dict] = {}
    for vent in manifest.vents.values():
        mine = {}
        for key, value in vent.inputs.items():
            if isinstance(value, SharedName):
                q = d.draw(f"shared/{value.name}", manifest.shared[value.name])
            else:
                q = d.draw(f"{vent.name}/{key}", value)
            mag = _si(q, key)
            mine[key] = np.asarray(mag, float) if np.ndim(mag) else float(mag)
        out[vent.name] = mine
    return out, d.describe()


def site_state(manifest: Manifest) -> dict:
    """The site as plain SI numbers: absolute pressure, ambient temperature, salinity, latitude."""
    from ventflux.plugin_api import in_situ_pressure

    s = manifest.site
    lat = s.get("latitude")
    from ventflux.plugin_api import Q_

    p = in_situ_pressure(pressure=s.get("pressure"), depth=s.get("depth"),
                         latitude=None if lat is None else Q_(lat, "degree"))
    return {"pressure_Pa": float(p.to("Pa").magnitude),
            "ambient_temperature_K": float(s["ambient_temperature"].to("K").magnitude),
            "ambient_salinity": float(s.get("ambient_salinity", 35.0)), "latitude": lat}


def describe_inputs(manifest: Manifest) -> dict[str, str]:
    """Every input as written, for the report and the provenance."""
    rows = {f"shared/{k}": str(v) for k, v in manifest.shared.items()}
    for vent in manifest.vents.values():
        for key, value in vent.inputs.items():
            rows[f"{vent.name}/{key}"] = f"@{value.name}" if isinstance(value, SharedName) else (
                str(value) if isinstance(value, Uncertain) else f"{value:~P}")
    return rows
