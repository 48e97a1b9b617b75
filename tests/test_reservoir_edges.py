"""Reservoirs at the edges: pore fluid in any single phase, reservoir pressure, conductive length of a sheet.

References: IAPWS R6-95 by CoolProp's HEOS backend called directly (not ventflux's table); Turcotte, D. L.
and Schubert, G. (2002), Geodynamics, 2nd ed., ch. 4: conduction in a slab (Fourier series) and in a
half-space (heat lost 2 k ΔT √(t / π κ) per area), from memory, written out here independently.
"""

import json

import numpy as np
import pytest
from conftest import survey_site

from ventflux import reservoir as rv
from ventflux.cli import main
from ventflux.errors import InputError
from ventflux.units import Q_


def _coolprop(T, p):
    import CoolProp.CoolProp as CP

    return (CP.PropsSI("Hmass", "T", T, "P", p, "HEOS::Water"), CP.PropsSI("Dmass", "T", T, "P", p, "HEOS::Water"))


@pytest.mark.parametrize("p_mpa", [18.0, 18.8, 22.0, 25.0, 30.0])
@pytest.mark.parametrize("t0_c", [400.0, 600.0, 800.0])
def test_vapour_like_and_supercritical_pore_water_match_direct_iapws95(p_mpa, t0_c):
    # IAPWS-95 by CoolProp HEOS direct: ρ(T0) [h(T0) − h(T0 − 300 K)], the fluid in whatever phase it has.
    T0, T1, p = t0_c + 273.15, t0_c + 273.15 - 300.0, p_mpa * 1e6
    h0, rho0 = _coolprop(T0, p)
    h1, _ = _coolprop(T1, p)
    got = rv.pore_fluid_heat_density(Q_(t0_c, "degC"), Q_(300.0, "K"), Q_(p_mpa, "MPa")).to("J/m^3").magnitude
    assert got == pytest.approx(rho0 * (h0 - h1), rel=1e-4)


def test_600_degc_at_18_8_mpa_is_vapour_like_not_boiling():
    # Below the critical pressure (22.064 MPa, IAPWS-95) and far above the saturation temperature (359 degC at
    # 18.8 MPa): single-phase vapour-like water. Before, this was refused as "boiling".
    heat = rv.reservoir_heat(Q_(300, "K"), area=Q_(1, "km^2"), thickness=Q_(50, "m"), temperature=Q_(600, "degC"),
                             pressure=Q_(18.8, "MPa"))
    assert heat.pore_fluid.magnitude > 0
    assert heat.pore_fluid_phase == "vapour-like"
    assert rv.reservoir_heat(Q_(300, "K"), volume=Q_(1, "km^3"), temperature=Q_(600, "degC"),
                             pressure=Q_(25, "MPa")).pore_fluid_phase == "supercritical"


def test_a_state_on_the_saturation_curve_is_refused_naming_it():
    import CoolProp.CoolProp as CP

    tsat = CP.PropsSI("T", "P", 10e6, "Q", 0, "HEOS::Water") - 273.15  # 311.0 degC
    with pytest.raises(InputError, match="saturation curve") as err:
        rv.pore_fluid_heat_density(Q_(tsat + 0.01, "degC"), Q_(100, "K"), Q_(10, "MPa"))
    assert err.value.field == "reservoir temperature"
    with pytest.raises(InputError, match="saturation curve") as err:
        rv.pore_fluid_heat_density(Q_(tsat + 100.01, "degC"), Q_(100, "K"), Q_(10, "MPa"))
    assert err.value.field == "temperature drop"
    # cooling across the curve (vapour to liquid) is fine: the difference includes the latent heat
    got = rv.pore_fluid_heat_density(Q_(tsat + 50, "degC"), Q_(100, "K"), Q_(10, "MPa")).magnitude
    h0, rho0 = _coolprop(tsat + 50 + 273.15, 10e6)
    h1, _ = _coolprop(tsat - 50 + 273.15, 10e6)
    assert got == pytest.approx(rho0 * (h0 - h1), rel=1e-4)
    assert h0 - h1 > 1.2e6  # more than the latent heat at 10 MPa, 1.3 MJ/kg (IAPWS-95, from memory)


def test_reservoir_pressure_hydrostatic_and_lithostatic():
    # p = p_seafloor + ρ g z, g = 9.80665 m/s² (standard gravity), ρ = 1025 (seawater) or the rock density
    p = rv.reservoir_pressure(Q_(25, "MPa"), Q_(1.5, "km"))
    assert p.to("Pa").magnitude == pytest.approx(25e6 + 1025 * 9.80665 * 1500)
    p = rv.reservoir_pressure(Q_(25, "MPa"), Q_(1.5, "km"), "lithostatic")
    assert p.to("Pa").magnitude == pytest.approx(25e6 + 2900 * 9.80665 * 1500)
    a = rv.reservoir_heat(Q_(300, "K"), volume=Q_(1, "km^3"), temperature=Q_(600, "degC"),
                          depth_below_seafloor=Q_(1.5, "km"), seafloor_pressure=Q_(25, "MPa"))
    b = rv.reservoir_heat(Q_(300, "K"), volume=Q_(1, "km^3"), temperature=Q_(600, "degC"),
                          pressure=Q_(25e6 + 1025 * 9.80665 * 1500, "Pa"))
    assert a.pore_fluid.magnitude == pytest.approx(b.pore_fluid.magnitude, rel=1e-12)
    with pytest.raises(InputError) as err:
        rv.reservoir_heat(Q_(300, "K"), volume=Q_(1, "km^3"), temperature=Q_(600, "degC"))
    assert err.value.field == "reservoir pressure"


def _slab_heat_remaining(tau):
    """Fraction of a sheet's excess heat left at t = tau·L²/κ: sheet of thickness L, top face held at the
    surrounding temperature, bottom face insulated (Fourier series, Turcotte & Schubert ch. 4, from memory):
    Σ 8 / ((2n+1)² π²) exp(−(2n+1)² π² tau / 4)."""
    n = np.arange(200)
    m = 2 * n + 1
    return float(np.sum(8 / (m**2 * np.pi**2) * np.exp(-(m**2) * np.pi**2 * tau / 4)))


def test_sheet_uses_its_thickness_and_matches_textbook_cooling_times():
    heat = rv.reservoir_heat(Q_(300, "K"), area=Q_(1, "km^2"), thickness=Q_(50, "m"), porosity=0)
    life = rv.reservoir_lifetime(Q_(100, "MW"), heat)
    assert life.size.to("m").magnitude == pytest.approx(50.0)
    assert "thickness" in life.size_basis
    t = life.conductive_time.to("s").magnitude
    kappa, L = 1e-6, 50.0
    assert life.conductive_time.to("year").magnitude == pytest.approx(79.2, abs=0.1)  # 50²/1e-6 s
    # by L²/κ the sheet has lost > 90 % of its heat (series), and a half-space conducts the sheet's
    # heat ρcΔT·L away in π L²/(4κ): the scale agrees with both within a factor 2.5
    assert _slab_heat_remaining(t * kappa / L**2) < 0.1
    assert _slab_heat_remaining(0.1) > 0.5
    t_half_space = np.pi * L**2 / (4 * kappa)
    assert 1 / 2.5 < t / t_half_space < 2.5
    both = rv.reservoir_lifetime(Q_(100, "MW"), heat, cooled_faces=2)
    assert both.size.to("m").magnitude == pytest.approx(25.0)
    equant = rv.reservoir_lifetime(Q_(100, "MW"), rv.reservoir_heat(Q_(300, "K"), volume=Q_(0.05, "km^3"),
                                                                     porosity=0))
    assert equant.size.to("m").magnitude == pytest.approx(368.4, abs=0.1)
    assert "cube root" in equant.size_basis
    given = rv.reservoir_lifetime(Q_(100, "MW"), heat, size=Q_(80, "m"))
    assert given.size_basis == "given length"


def test_summarize_reservoir_depth_below_seafloor_and_named_length(capsys):
    rc = main(["summarize", "reservoir", "--heat-power", "100 MW", "--area", "1 km^2", "--thickness", "50 m",
               "--temperature-drop", "300 K", "--temperature", "600 degC", "--depth-below-seafloor", "1 km",
               "--seafloor-pressure", "8 MPa", "--json"])
    assert rc == 0
    out = json.loads(capsys.readouterr().out)
    assert out["size_m"] == pytest.approx(50.0)
    assert out["conductive_length"].startswith("sheet thickness")
    assert out["pore_fluid_phase"] == "vapour-like"  # 18.1 MPa, 600 degC
    rc = main(["summarize", "reservoir", "--heat-power", "100 MW", "--volume", "0.01 km^3", "--temperature-drop",
               "300 K", "--temperature", "600 degC"])
    assert rc == 2
    err = capsys.readouterr().err
    assert "reservoir pressure" in err and "Traceback" not in err


_SURVEY = survey_site(absolute_pressure="8 MPa", ambient_salinity=None) + """
[[vent]]
name = "A"
  [[vent.orifice]]
  exit_temperature = "250 degC"
  velocity = "1.0 m/s"
  diameter = "10 cm"

[[reservoir]]
name = "shallow sheet"
area = "1 km^2"
thickness = "50 m"
temperature_drop = "300 K"
temperature = "{t0}"
porosity = 0.05
{pressure_key}
"""


def test_survey_reservoir_pressure_keys_and_check_names_the_key(tmp_path):
    from ventflux.errors import InputErrors
    from ventflux.survey.spec import load_survey

    path = tmp_path / "s.toml"
    # 8 MPa + 1025 kg/m³ · g · 1 km = 18.05 MPa: 600 degC is vapour-like there, accepted
    path.write_text(_SURVEY.format(t0="600 degC", pressure_key='depth_below_seafloor = "1 km"'), encoding="utf-8")
    spec = load_survey(path)
    p = spec.reservoirs[0].options["pressure"].to("Pa").magnitude
    assert p == pytest.approx(8e6 + 1025 * 9.80665 * 1000)
    # on the saturation curve at 10 MPa (311.0 degC, IAPWS-95): refused at --check, naming the key
    path.write_text(_SURVEY.format(t0="311.0 degC", pressure_key='pressure = "10 MPa"'), encoding="utf-8")
    with pytest.raises((InputError, InputErrors)) as err:
        load_survey(path)
    assert "reservoir[0].temperature" in str(err.value) and "saturation" in str(err.value)
    # neither key: the site's seafloor pressure, recorded as a default used
    path.write_text(_SURVEY.format(t0="600 degC", pressure_key=""), encoding="utf-8")
    spec = load_survey(path)
    assert spec.reservoirs[0].options["pressure"].to("MPa").magnitude == pytest.approx(8.0)
    assert "reservoir[0].pressure" in spec.defaults_used
