"""Water throughput and the summarizer (library and ``ventflux summarize``).

References used: IAPWS-95 through the independent ``iapws`` package (IAPWS
R6-95(2018)); TEOS-10 through gsw called directly (IOC et al. 2010).
"""

import json

import gsw
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux import summarizer as sm
from ventflux.cli import main
from ventflux.errors import InputError
from ventflux.throughput import water_throughput
from ventflux.uncertainty import normal
from ventflux.units import Q_

YEAR = 3.15576e7  # s, Julian year (pint's "year")


def test_throughput_against_iapws_and_teos10_reference_libraries():
    iapws = pytest.importorskip("iapws")
    P, T, Ta, p = 100e6, 623.15, 275.15, 25.0  # W, K, K, MPa
    hot, cold = iapws.IAPWS95(T=T, P=p), iapws.IAPWS95(T=Ta, P=p)
    mdot = P / ((hot.h - cold.h) * 1e3)  # iapws enthalpies are kJ/kg
    SA = gsw.SR_from_SP(35.0)
    p_sea = (p * 1e6 - 101325.0) / 1e4
    rho_sw = gsw.rho(SA, gsw.CT_from_t(SA, Ta - 273.15, p_sea), p_sea)
    w = water_throughput(Q_(P, "W"), Q_(T, "K"), Q_(p, "MPa"), Q_(Ta, "K"), salinity=35.0)
    assert w.mass_flux.to("kg/s").magnitude == pytest.approx(mdot, rel=1e-4)
    assert w.volume_flux_vent.to("m^3/s").magnitude == pytest.approx(mdot / hot.rho, rel=1e-4)
    assert w.volume_flux_ambient.to("m^3/s").magnitude == pytest.approx(mdot / rho_sw, rel=1e-4)
    # annual figures by hand: kg/s × s/yr, and / ρ / 1e9 m³ per km³
    assert w.annual_mass.to("kg/year").magnitude == pytest.approx(mdot * YEAR, rel=1e-4)
    assert w.annual_volume.to("km^3/year").magnitude == pytest.approx(mdot * YEAR / rho_sw / 1e9, rel=1e-4)
    # the c_p ΔT shortcut is reported beside the answer and differs from it at vent temperatures
    assert w.shortcut_mass_flux.magnitude > 1.05 * w.mass_flux.magnitude


def test_throughput_refuses_boiling_and_nonpositive_power():
    with pytest.raises(InputError, match="power"):
        water_throughput(Q_(0.0, "MW"), Q_(350.0, "degC"), Q_(25.0, "MPa"), Q_(2.0, "degC"))
    with pytest.raises(InputError, match="saturation"):
        water_throughput(Q_(10.0, "MW"), Q_(350.0, "degC"), Q_(10.0, "MPa"), Q_(2.0, "degC"))


@settings(max_examples=25, deadline=None)
@given(st.floats(0.01, 1e3), st.floats(0.01, 1e3), st.floats(20.0, 380.0))
def test_mass_flux_grows_with_power_and_falls_with_exit_temperature(p1, p2, t_exit):
    lo, hi = sorted((p1, p2))
    w = water_throughput(Q_([lo, hi], "MW"), Q_(t_exit, "degC"), Q_(30.0, "MPa"), Q_(2.0, "degC"))
    assert w.mass_flux.magnitude[0] <= w.mass_flux.magnitude[1]
    hotter = water_throughput(Q_(lo, "MW"), Q_(t_exit + 5.0, "degC"), Q_(30.0, "MPa"), Q_(2.0, "degC"))
    assert hotter.mass_flux.magnitude < w.mass_flux.magnitude[0]


@settings(max_examples=20, deadline=None)
@given(st.floats(0.1, 500.0))
def test_throughput_does_not_depend_on_units(power_mw):
    a = water_throughput(Q_(power_mw, "MW"), Q_(300.0, "degC"), Q_(25.0, "MPa"), Q_(2.0, "degC"))
    b = water_throughput(Q_(power_mw * 1e3, "kW"), Q_(573.15, "K"), Q_(250.0, "bar"), Q_(275.15, "K"))
    assert a.mass_flux.to("kg/s").magnitude == pytest.approx(b.mass_flux.to("kg/s").magnitude, rel=1e-9)


def test_water_answer_with_uncertain_power():
    # Power 100 ± 20 MW (normal) → mass flux percentiles at (1 ∓ 1.645 · 0.2) of the nominal (by hand).
    exact = sm.water_answer(Q_(100.0, "MW"), Q_(350.0, "degC"), Q_(25.0, "MPa"), Q_(2.0, "degC"))
    ans = sm.water_answer(normal(Q_(100.0, "MW"), Q_(20.0, "MW")), Q_(350.0, "degC"), Q_(25.0, "MPa"),
                          Q_(2.0, "degC"), draws=20_000, seed=1)
    m0 = exact.value("mass_flux").magnitude
    s, _ = ans.outputs["mass_flux"]
    assert s.median.magnitude == pytest.approx(m0, rel=0.01)
    assert s.p05.magnitude == pytest.approx(m0 * (1 - 1.645 * 0.2), rel=0.02)
    assert s.p95.magnitude == pytest.approx(m0 * (1 + 1.645 * 0.2), rel=0.02)
    d = ans.as_dict()
    assert d["draws"] == 20_000 and "annual_volume_m3_s_p95" in d


def test_reservoir_answer_names_the_controlling_process():
    ans = sm.reservoir_answer(Q_(100.0, "MW"), Q_(800.0, "K"), volume=Q_(0.01, "km^3"), porosity=0.0)
    assert ans.labels["controlling"] == "advective decline"
    # by hand: 2900 · 1000 · 800 · 1e7 J / 1e8 W = 2.32e8 s = 7.35 yr
    assert ans.value("heat_mining_time").magnitude == pytest.approx(2.32e8 / YEAR, rel=1e-9)
    assert ans.value("conductive_time").magnitude == pytest.approx((1e7 ** (1 / 3)) ** 2 / 1e-6 / YEAR, rel=1e-9)


def test_flank_answer_and_water_column():
    ans = sm.flank_answer(Q_([1.0, 4.0], "Myr"), Q_([0.0, 0.0], "mW/m^2"), temperature_rise=Q_(10.0, "K"),
                          pressure=Q_(35.0, "MPa"), half_spreading_rate=Q_(25.0, "mm/year"))
    # by hand: ∫₁⁴ 510 t^-1/2 dt = 1020 mW/m²·Myr = 3.219e13 J/m²
    assert ans.value("heat_deficit").magnitude == pytest.approx(1020e-3 * 3.15576e13, rel=1e-9)
    # water column = deficit / (ρ Δh) of seawater warmed 2 → 12 °C at 35 MPa, TEOS-10 through gsw directly
    # (IOC et al. 2010; SP 35, reference salinity); of order 100 km or more (common practice, no source)
    p_sea = (35e6 - 101325.0) / 1e4
    SA = gsw.SR_from_SP(35.0)
    uptake = gsw.rho_t_exact(SA, 2.0, p_sea) * (gsw.enthalpy_t_exact(SA, 12.0, p_sea)
                                                - gsw.enthalpy_t_exact(SA, 2.0, p_sea))
    column_km = 1020e-3 * 3.15576e13 / uptake / 1e3
    assert ans.value("water_column").magnitude == pytest.approx(column_km, rel=1e-6)
    assert column_km > 100.0
    with pytest.raises(InputError, match="pressure"):
        sm.flank_answer(Q_([1.0, 4.0], "Myr"), Q_([0.0, 0.0], "mW/m^2"), temperature_rise=Q_(10.0, "K"))


# ---- command line ------------------------------------------------------------

def _run(capsys, *argv):
    rc = main(["summarize", *argv])
    out, err = capsys.readouterr()
    return rc, out, err


def test_cli_water_json(capsys):
    rc, out, _ = _run(capsys, "water", "--heat-power", "100 MW", "--exit-temperature", "350 degC",
                      "--absolute-pressure", "25MPa", "--ambient-temperature", "2 degC", "--json")
    assert rc == 0
    d = json.loads(out)
    # IAPWS-95 through the independent `iapws` package (IAPWS R6-95(2018)): ṁ = P / (h(350 °C) − h(2 °C)) at 25 MPa
    iapws = pytest.importorskip("iapws")
    dh = (iapws.IAPWS95(T=623.15, P=25.0).h - iapws.IAPWS95(T=275.15, P=25.0).h) * 1e3
    assert d["mass_flux_kg_s"] == pytest.approx(1e8 / dh, rel=1e-4)


def test_cli_questions_print_tables(capsys):
    rc, out, _ = _run(capsys, "reservoir", "--heat-power", "100 ± 20 MW", "--volume", "0.01 km^3",
                      "--temperature-drop", "800 K", "--porosity", "0", "--draws", "2000")
    assert rc == 0 and "controlling" in out and "advective decline" in out
    rc, out, _ = _run(capsys, "size", "--heat-power", "100 MW", "--duration", "10 yr", "--temperature-drop", "300 K",
                      "--area", "1 km^2", "--porosity", "0")
    assert rc == 0 and "thickness" in out
    rc, out, _ = _run(capsys, "flank", "--observed", "1 Myr=120 mW/m^2", "--observed", "5 Myr=110 mW/m^2",
                      "--half-spreading-rate", "25 mm/yr", "--temperature-rise", "10 K", "--absolute-pressure", "35MPa",
                      "--json")
    d = json.loads(out)
    assert rc == 0 and d["advective_loss_per_length_W_m"] > 0


def test_cli_flank_profile_file(capsys, tmp_path):
    f = tmp_path / "flank.csv"
    f.write_text("age [Myr],heat_flow [mW/m^2]\n1,120\n5,110\n10,100\n")
    rc, out, _ = _run(capsys, "flank", "--profile", str(f), "--reference", "half-space", "--json")
    assert rc == 0 and json.loads(out)["reference"] == "half-space"
    assert f.read_text().startswith("age [Myr]")  # input untouched


@pytest.mark.parametrize("argv, field", [
    (["water", "--heat-power", "5 m", "--exit-temperature", "350 degC", "--absolute-pressure", "25MPa",
      "--ambient-temperature", "2 degC"], "--heat-power"),
    (["reservoir", "--heat-power", "100 MW", "--volume", "0.01 km^3", "--temperature-drop", "800 K",
      "--temperature", "400 degC", "--absolute-pressure", "30MPa"], "--temperature-drop"),
    (["flank", "--observed", "1 Myr"], "--observed"),
    (["size", "--heat-power", "100 MW", "--duration", "-1 yr", "--temperature-drop", "300 K", "--porosity", "0"],
     "duration"),
    (["water", "--heat-power", "100 MW", "--exit-temperature", "350 degC", "--absolute-pressure", "25MPa",
      "--ambient-temperature", "2 degC", "--draws", "1"], "--draws"),
])
def test_cli_bad_input_is_one_line_and_exit_2(capsys, argv, field):
    rc, out, err = _run(capsys, *argv)
    assert rc == 2
    assert len(err.strip().splitlines()) == 1 and field in err and "Traceback" not in err


def test_reservoir_answer_takes_a_field_totals_draws():
    # Field-total draws from the aggregation carried straight in: E/P is monotone in P, so the median
    # mining time is E / median(P) (odd number of draws); by hand E = 2900·1000·800·1e7 J.
    power = Q_(np.linspace(50.0, 150.0, 1001), "MW")
    ans = sm.reservoir_answer(power, Q_(800.0, "K"), volume=Q_(0.01, "km^3"), porosity=0.0)
    assert ans.draws == 1001 and ans.samples["heat_mining_time"].shape == (1001,)
    assert ans.value("heat_mining_time").to("s").magnitude == pytest.approx(2.32e16 / 1e8, rel=1e-9)
    assert ans.inputs["power"] == "1001 given draws"
    with pytest.raises(InputError, match="draws"):
        sm.reservoir_answer(power, Q_(np.full(10, 800.0), "K"), volume=Q_(0.01, "km^3"), porosity=0.0)
