"""The Python API: top-level names, the units decorator, and how results present themselves.

Reference values: the closed-form plume rise z = 5.0 (F/π)^(1/4) N^(-3/4)
(Morton, Taylor & Turner 1956; Briggs 1969) and the bent-over rise
2.6 (F/(π U N²))^(1/3) (Briggs 1975) are written out here; statistics of the
draws are recomputed with NumPy.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

import ventflux as vf
from ventflux.errors import InputError
from ventflux.uncertainty import Uncertain
from ventflux.units import Q_, check_units

ORIFICE = dict(velocity=Q_(1.4, "m/s"), diameter=Q_(12, "cm"), pressure=Q_(26, "MPa"),
               ambient_temperature=Q_(2.1, "degC"))


# --------------------------------------------------------------------------- top-level names
def test_every_public_name_resolves_and_is_documented():
    for name in vf.__all__:
        obj = getattr(vf, name)
        if callable(obj) and getattr(obj, "__module__", "").startswith("ventflux"):
            assert (obj.__doc__ or "").strip(), f"vf.{name} has no docstring"
    assert set(vf.__all__) <= set(dir(vf))
    with pytest.raises(AttributeError, match="no attribute 'nonexistent'"):
        vf.nonexistent  # noqa: B018


def test_import_ventflux_loads_no_heavy_module():
    code = ("import sys, json, ventflux; "
            "print(json.dumps(sorted(m for m in ('pint', 'numpy', 'CoolProp', 'xarray', 'pandas', 'matplotlib') "
            "if m in sys.modules)))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, timeout=120)
    assert json.loads(out.stdout) == []


def test_top_level_names_are_the_modules_objects():
    from ventflux import orifice, profiles
    from ventflux.survey import python_api

    assert vf.orifice_discharge is orifice.orifice_discharge
    assert vf.read_ctd_cast is profiles.read_ctd_cast
    assert vf.Survey is python_api.Survey


# --------------------------------------------------------------------------- check_units
@check_units(length="length", factor="dimensionless")
def _f(length, factor=1.0, other=None):
    return length * factor


def test_check_units_passes_quantities_of_the_right_dimension():
    assert _f(Q_(2, "km"), 3) == Q_(6, "km")
    assert _f(length=Q_(2, "m"), factor=Q_(0.5, "dimensionless")).to("m").magnitude == 1.0
    u = Uncertain("normal", 2.0, 0.1, "m")
    assert check_units(x="length")(lambda x: x)(u) is u  # an Uncertain's unit is checked, the value passed on


@pytest.mark.parametrize("args, kwargs, text", [
    ((Q_(2, "s"),), {}, "length: '2 s' is not allowed; expected a length"),
    ((2.0,), {}, "length: 2.0 is not allowed; expected a length"),
    ((Q_(2, "m"), Q_(1, "m")), {}, "factor: '1 m' is not allowed"),
    ((), {"length": Uncertain("normal", 2.0, 0.1, "kg")}, "length"),
])
def test_check_units_refuses_with_one_line_naming_the_argument(args, kwargs, text):
    with pytest.raises(InputError) as e:
        _f(*args, **kwargs)
    assert text in str(e.value) and "\n" not in str(e.value)


def test_check_units_refuses_an_unknown_dimension_or_argument_at_definition():
    with pytest.raises(ValueError):
        check_units(x="colour")
    with pytest.raises(TypeError):
        check_units(y="length")(lambda x: x)


# --------------------------------------------------------------------------- closed-form plume functions
@pytest.mark.parametrize("F, N", [(0.05, 1e-3), (2.0, 5e-4), (1e-3, 2e-3)])
def test_closed_form_rise_takes_quantities_and_matches_the_published_formula(F, N):
    # z_max = 5.0 (F/π)^(1/4) N^(-3/4) (Morton, Taylor & Turner 1956; Briggs 1969); 0.76 z_max spreading (from memory)
    z = vf.rise_height_point_source(Q_(F, "m^4/s^3"), Q_(N, "1/s"))
    assert z.to("m").magnitude == pytest.approx(5.0 * (F / np.pi) ** 0.25 * N ** -0.75, rel=1e-12)
    z_min = vf.rise_height_point_source(Q_(F * 1e8, "cm^4/s^3"), Q_(N * 60, "1/min"))
    assert z_min.to("m").magnitude == pytest.approx(z.to("m").magnitude, rel=1e-12)
    # bent over by a 0.1 m/s current: 2.6 (F/(π U N²))^(1/3) (Briggs 1975)
    from ventflux.plume import closed_form

    zb = closed_form.rise_height_bent_over(Q_(F, "m^4/s^3"), Q_(10, "cm/s"), Q_(N, "1/s"))
    assert zb.to("m").magnitude == pytest.approx(2.6 * (F / (np.pi * 0.1 * N ** 2)) ** (1 / 3), rel=1e-12)


def test_closed_form_heat_power_is_rho_cp0_f_over_g_alpha():
    from ventflux.plume import closed_form

    H = closed_form.heat_power_from_buoyancy_flux(Q_(0.1, "m^4/s^3"), Q_(1040, "kg/m^3"), Q_(1e-4, "1/K"),
                                                  Q_(9.8, "m/s^2"), Q_(3991.87, "J/(kg*K)"))
    assert H.to("W").magnitude == pytest.approx(1040 * 3991.87 * 0.1 / (9.8 * 1e-4), rel=1e-12)
    F = closed_form.buoyancy_flux_from_heat_power(H, Q_(1040, "kg/m^3"), Q_(1e-4, "1/K"), Q_(9.8, "m/s^2"),
                                                  Q_(3991.87, "J/(kg*K)"))
    assert F.to("m^4/s^3").magnitude == pytest.approx(0.1, rel=1e-12)


def test_closed_form_refuses_bare_floats_and_wrong_dimensions():
    with pytest.raises(InputError, match="buoyancy_flux"):
        vf.rise_height_point_source(0.05, Q_(1e-3, "1/s"))
    with pytest.raises(InputError, match="buoyancy_frequency"):
        vf.rise_height_point_source(Q_(0.05, "m^4/s^3"), Q_(1e-3, "m/s"))
    with pytest.raises(InputError, match="level"):
        vf.rise_height_point_source(Q_(0.05, "m^4/s^3"), Q_(1e-3, "1/s"), level="top")


# --------------------------------------------------------------------------- results present themselves
@pytest.fixture(scope="module")
def uncertain_orifice():
    return vf.orifice_discharge_uncertain(2000, 7, temperature=Uncertain("normal", 352, 3, "degC"),
                                          **{**ORIFICE, "velocity": Uncertain("normal", 1.4, 0.2, "m/s")})


def test_repr_shows_median_and_interval_never_the_draws(uncertain_orifice):
    r = uncertain_orifice
    text = repr(r)
    draws = r.draws.heat_power.to("MW").magnitude
    assert len(text.splitlines()) <= 14 and len(text) < 1500
    med, p05, p95 = np.percentile(draws, [50, 5, 95])
    line = next(ln for ln in text.splitlines() if ln.strip().startswith("heat_power "))
    assert f"{med:.4g} MW" in line and f"{p05:.4g} to {p95:.4g}" in line and "5–95 %" in line
    assert "draws kept" in text.splitlines()[0]
    html = r._repr_html_()
    assert html.startswith("<div") and "<table>" in html and f"{med:.4g}" in html


def test_to_dataframe_statistics_are_numpys(uncertain_orifice):
    r = uncertain_orifice
    df = r.to_dataframe().set_index("quantity")
    x = r.draws.heat_power.to("W").magnitude
    row = df.loc["heat_power"]
    assert row["unit"] == "W"
    np.testing.assert_allclose([row.p05, row.p50, row.p95], np.percentile(x, [5, 50, 95]), rtol=1e-12)
    assert row["sd"] == pytest.approx(np.std(x, ddof=1), rel=1e-12)
    assert row["nominal"] == pytest.approx(r.nominal.heat_power.to("W").magnitude, rel=1e-12)
    assert "absolute_pressure" in df.index  # the vocabulary's name, not "pressure"
    wide = r.to_dataframe(draws=True)
    assert wide.index.name == "draw" and len(wide) == x.size
    np.testing.assert_array_equal(wide["heat_power [W]"].to_numpy(), x)


def test_to_xarray_has_draws_units_and_cf_names(uncertain_orifice):
    r = uncertain_orifice
    ds = r.to_xarray()
    hp = ds["heat_power"]
    assert hp.dims == ("draw",) and hp.attrs["units"] == "W"
    np.testing.assert_array_equal(hp.values, r.draws.heat_power.to("W").magnitude)
    assert float(ds["heat_power_nominal"]) == pytest.approx(r.nominal.heat_power.to("W").magnitude)
    assert ds["ambient_density"].attrs["standard_name"] == "sea_water_density"
    assert ds["volume_flux_exit"].attrs["units"] == "m3/s"
    assert ds.attrs["seed"] == 7


def test_an_exact_result_shows_values_without_an_interval():
    r = vf.orifice_discharge(Q_(352, "degC"), **ORIFICE)
    text = repr(r)
    assert f"{r.heat_power.to('MW').magnitude:.4g} MW" in text and "5–95" not in text
    df = r.to_dataframe()
    assert df.loc[df.quantity == "heat_power", "nominal"].item() == pytest.approx(r.heat_power.to("W").magnitude)
    with pytest.raises(InputError, match="draws"):
        r.to_dataframe(draws=True)
    assert r.to_xarray()["heat_power"].dims == ()


def test_several_orifices_are_an_orifice_dimension():
    r = vf.orifice_discharge(Q_([352, 340], "degC"), **ORIFICE)
    ds = r.to_xarray()
    assert ds["heat_power"].dims == ("orifice",)
    assert "heat_power[1]" in repr(r)


def test_diffuse_patches_and_their_draws():
    from ventflux.diffuse import diffuse_propagation

    args = (Q_([40.0, 25.0], "m^2"), np.array([0.3, 0.5]), Q_([8.0, 12.0], "delta_degC"), Q_([1e-3, 2e-3], "m/s"),
            Q_(2.1, "degC"), 34.6, Q_(26, "MPa"))
    nominal = vf.diffuse_discharge(*args)
    assert nominal.to_xarray()["heat_power"].dims == ("patch",)
    prop = diffuse_propagation(args[0], args[1], args[2], Uncertain("normal", 1.5e-3, 2e-4, "m/s"), *args[4:],
                               draws=500, seed=3)
    ds = prop.to_xarray()
    assert ds["heat_power"].dims == ("patch", "draw")
    np.testing.assert_array_equal(ds["heat_power"].values, prop.draws.heat_power.to("W").magnitude)
    df = prop.to_dataframe()
    assert set(df.columns) >= {"quantity", "patch", "unit", "p05", "p50", "p95"}
    assert "5–95 %" in repr(prop)


def test_plume_rise_result_presents_its_draws():
    r = vf.heat_power_from_rise_height(Uncertain("normal", 250, 20, "m"), Q_(1e-3, "1/s"), method="closed-form",
                                       draws=400, seed=2, pressure=Q_(25, "MPa"), ambient_temperature=Q_(2, "degC"),
                                       ambient_salinity=34.6)
    ds = r.to_xarray()
    assert ds["heat_power"].dims == ("draw",) and ds.sizes["draw"] == 400
    med = np.nanmedian(r.heat_power.to("MW").magnitude)
    assert f"{med:.4g} MW" in repr(r)
    assert "closed-form" in repr(r).splitlines()[0]


def test_reservoir_results_present_themselves():
    heat = vf.reservoir_heat(Q_(300, "delta_degC"), volume=Q_(1, "km^3"), porosity=0.0)
    assert "stored_heat" in repr(heat) and "PJ" in repr(heat)
    life = vf.reservoir_lifetime(Q_(100, "MW"), heat)
    df = life.to_dataframe().set_index("quantity")
    assert df.loc["heat_mining_time", "nominal"] == pytest.approx(
        (heat.total / Q_(100, "MW")).to("year").magnitude, rel=1e-12)
    ans = vf.reservoir_answer(Uncertain("normal", 100, 10, "MW"), Q_(300, "delta_degC"), volume=Q_(1, "km^3"),
                              porosity=0.0, draws=500, seed=4)
    text = repr(ans)
    assert "5–95 %" in text and "heat_mining_time" in text
    assert "heat_mining_time" in ans.to_xarray()


# --------------------------------------------------------------------------- the survey
SURVEY = """
[site]
name = "Test Mound"
depth = "2500 m"
latitude = 12.5
longitude = -40.25
ambient_temperature = "2.0 ± 0.05 degC"
ambient_salinity = 34.6

[run]
draws = 300
seed = 11
netcdf_draws = {netcdf_draws}

[[vent]]
name = "North"
  [[vent.orifice]]
  temperature = "340 ± 3 degC"
  velocity = "1.2 ± 0.2 m/s"
  diameter = "8 cm"

[[vent]]
name = "South"
  [[vent.orifice]]
  temperature = "300 ± 3 degC"
  velocity = "0.8 ± 0.1 m/s"
  diameter = "5 cm"
"""


@pytest.fixture(scope="module")
def survey_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("survey")
    (folder / "survey.toml").write_text(SURVEY.format(netcdf_draws="true"), encoding="utf-8")
    survey = vf.Survey.from_file(folder / "survey.toml")
    return survey, survey.run(out=folder / "out"), folder


def test_survey_from_python_checks_runs_and_presents(survey_run):
    survey, result, _ = survey_run
    assert survey.vents == ["North", "South"] and "300 draws" in repr(survey)
    check = survey.check()
    assert check.vents == ["North", "South"] and "valid" in repr(check)
    ds = result.to_xarray()
    assert ds["vent_heat_power"].dims == ("vent", "draw") and list(ds["vent"].values) == ["North", "South"]
    total = ds["total_heat_power"].values
    np.testing.assert_allclose(total, ds["vent_heat_power"].values.sum(axis=0), rtol=1e-12)
    assert ds["total_heat_power"].attrs["units"] == "MW"
    assert "item" not in ds.dims  # a survey of vents only has no section items
    df = result.to_dataframe().set_index("quantity")
    assert df.loc["total_heat_power", "p50"] == pytest.approx(result.total.median.to("MW").magnitude, rel=1e-12)
    assert "total_heat_power" in repr(result) and "5–95 %" in repr(result)


def test_survey_run_options_and_errors(survey_run):
    survey, _, _ = survey_run
    assert survey.run(draws=150, seed=5).n_draws == 150
    with pytest.raises(InputError, match="draws"):
        survey.run(draws=10)


def test_survey_budget_from_python(survey_run):
    # the budget of a run from the top level. Power ∝ velocity × enthalpy difference: a 17 % (North) or 12 %
    # (South) spread in velocity against about 1 % in the enthalpy difference (±3 K of some 300 K) makes each
    # vent's own velocity the first input of its power
    _, result, _ = survey_run
    budget = vf.survey_budget(result)
    first = {r["result"]: r["input"] for r in budget.rows() if r["rank"] == 1}
    assert first["North: orifice"] == "North/orifice[0]/velocity"
    assert first["South: orifice"] == "South/orifice[0]/velocity"
    assert any(line.startswith("North: measure") for line in budget.sentences())


def test_results_nc_holds_statistics_and_draws_on_request(survey_run, tmp_path):
    import xarray as xr

    _, result, folder = survey_run
    with xr.open_dataset(folder / "out" / "results.nc") as nc:
        np.testing.assert_allclose(nc["vent_heat_power"].values, result.to_xarray()["vent_heat_power"].values,
                                   rtol=1e-12)
        assert nc["total_heat_power_p50"].item() == pytest.approx(result.total.median.to("MW").magnitude, rel=1e-9)
        assert nc["total_heat_power_p50"].attrs["units"] == "MW" and nc.attrs["Conventions"] == "CF-1.8"
        assert nc.attrs["draws_included"] == 1
    from ventflux.survey.netcdf import write_netcdf

    path = write_netcdf(result, tmp_path / "small.nc")
    with xr.open_dataset(path) as nc:
        assert "draw" not in nc.dims and "vent_heat_power_p95" in nc
    assert not list(tmp_path.glob(".results-*"))  # no temporary file left behind


def test_results_nc_is_the_file_xarray_writes(survey_run, tmp_path):
    # The survey writes through the h5netcdf store directly (to skip Dask's scheduler look-up); the file must
    # be the one xarray's own to_netcdf writes: same variables, values, attributes and compression. Reference:
    # xarray's Dataset.to_netcdf with the same engine and encoding (a general-purpose library, test only).
    import xarray as xr

    from ventflux.survey.netcdf import results_dataset, write_netcdf

    _, result, _ = survey_run
    ours = write_netcdf(result, tmp_path / "ours.nc", draws=True)
    ds = results_dataset(result, True)
    encoding = {n: {"zlib": True, "complevel": 4} for n, da in ds.data_vars.items()
                if da.dtype.kind == "f" and da.ndim > 0}
    ds.to_netcdf(tmp_path / "theirs.nc", engine="h5netcdf", encoding=encoding)
    with xr.open_dataset(ours) as a, xr.open_dataset(tmp_path / "theirs.nc") as b:
        xr.testing.assert_identical(a, b)
        for name in b.variables:
            for key in ("zlib", "complevel", "chunksizes", "dtype", "_FillValue"):
                va, vb = a[name].encoding.get(key), b[name].encoding.get(key)
                assert va == vb or (va != va and vb != vb), (name, key, va, vb)


def test_netcdf_draws_must_be_true_or_false(tmp_path):
    from ventflux.errors import InputErrors

    (tmp_path / "s.toml").write_text(SURVEY.format(netcdf_draws='"yes"'), encoding="utf-8")
    with pytest.raises((InputError, InputErrors), match="netcdf_draws"):
        vf.Survey.from_file(tmp_path / "s.toml")


@pytest.mark.parametrize("call, argument", [
    (lambda: vf.orifice_discharge(Q_(350, "degC"), Q_(1.4, "m"), Q_(10, "cm"), depth=Q_(2500, "m"),
                                  ambient_temperature=Q_(2, "degC")), "velocity"),
    (lambda: vf.orifice_discharge(Q_(350, "degC"), Q_(1.4, "m/s"), 0.1, depth=Q_(2500, "m"),
                                  ambient_temperature=Q_(2, "degC")), "diameter"),
    (lambda: vf.diffuse_discharge(Q_(10, "m"), 0.4, Q_(3, "K"), Q_(1, "cm/s"), Q_(2, "degC"), 34.6,
                                  Q_(25, "MPa")), "area"),
    (lambda: vf.reservoir_heat(Q_(800, "K"), volume=Q_(1, "km^2")), "volume"),
    (lambda: vf.reservoir_lifetime(Q_(100, "MJ"), Q_(1e18, "J")), "power"),
])
def test_public_estimators_refuse_a_wrong_dimension_by_argument_name(call, argument):
    # One decorator (ventflux.units.check_units) guards the public estimators: a wrong dimension or a bare number
    # is one InputError naming the argument.
    with pytest.raises(InputError) as err:
        call()
    assert err.value.field == argument
