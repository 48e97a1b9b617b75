"""One constant-c_p shortcut and one default entrainment coefficient across commands.

Sources: TEOS-10's c_p0 = 3991.86795711963 J/(kg K) (IOC, SCOR and IAPSO 2010, eq. 3.3.3); the top-hat
entrainment coefficient √2 × 0.093 of Morton, Taylor & Turner (1956), Gaussian 0.093 (from memory).
"""

import json

import numpy as np
import pytest

from ventflux.cli import main
from ventflux.diffuse import diffuse_discharge
from ventflux.orifice import orifice_discharge
from ventflux.throughput import water_throughput
from ventflux.units import Q_

CP0 = 3991.86795711963


def test_orifice_diffuse_and_throughput_share_the_c_p0_shortcut():
    T, Ta, p = 30.0, 2.0, Q_(25, "MPa")
    o = orifice_discharge(Q_(T, "degC"), Q_(1, "m/s"), Q_(0.1, "m"), pressure=p, ambient_temperature=Q_(Ta, "degC"))
    d = diffuse_discharge(Q_([1.0], "m^2"), 1.0, Q_([T - Ta], "K"), Q_(1.0, "cm/s"), Q_(Ta, "degC"), 35.0, p)
    w = water_throughput(Q_(1, "MW"), Q_(T, "degC"), p, Q_(Ta, "degC"))
    per_kg = [o.heat_power_constant_cp.to("W").magnitude / o.mass_flux.to("kg/s").magnitude,
              d.heat_power_cp_shortcut.to("W").magnitude[0] / d.mass_flux.to("kg/s").magnitude[0],
              w.shortcut_heat_content.to("J/kg").magnitude]
    np.testing.assert_allclose(per_kg, CP0 * (T - Ta), rtol=1e-12)


def test_plume_rise_default_entrainment_is_the_library_default(capsys):
    from ventflux.plume import DEFAULT_ENTRAINMENT
    from ventflux.plume.closed_form import CLOSED_FORM_ENTRAINMENT

    assert DEFAULT_ENTRAINMENT == pytest.approx(0.093 * np.sqrt(2), rel=1e-15)
    assert CLOSED_FORM_ENTRAINMENT == DEFAULT_ENTRAINMENT
    site = ["--ambient-temperature", "2.0degC", "--ambient-salinity", "34.6", "--absolute-pressure", "25MPa"]
    assert main(["plume-rise", "--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *site, "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert float(d["entrainment_tophat"]) == DEFAULT_ENTRAINMENT
    explicit = ["--entrainment", repr(float(0.093 * np.sqrt(2)))]
    assert main(["plume-rise", "--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *site, *explicit,
                 "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["heat_power_W"] == d["heat_power_W"]


def test_closed_form_beside_a_current_says_it_ignores_the_current(capsys):
    site = ["--ambient-temperature", "2.0degC", "--ambient-salinity", "34.6", "--absolute-pressure", "25MPa"]
    assert main(["plume-rise", "--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *site,
                 "--current", "0.05 m/s"]) == 0
    line = next(x for x in capsys.readouterr().out.splitlines() if "closed form" in x)
    assert "ignores the current" in line
    assert main(["plume-rise", "--rise-height", "200 m", "--buoyancy-frequency", "1e-3/s", *site]) == 0
    line = next(x for x in capsys.readouterr().out.splitlines() if "closed form" in x)
    assert "current" not in line
