"""CTD casts from netCDF files and xarray Datasets, recognised by CF standard names.

Checks: a cast read from netCDF (written here by xarray) and from its CSV twin
gives identical profiles; TEOS-10 variables in the file are converted as gsw
converts them (gsw is the reference implementation of TEOS-10: IOC, SCOR and
IAPSO 2010); the survey's ``ctd`` key takes either format.

The casts are synthetic, made here from a smooth analytic water column
(temperature falling and salinity rising with depth; invented numbers).
"""

from __future__ import annotations

import shutil
from pathlib import Path

import gsw
import numpy as np
import pytest
import xarray as xr
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.errors import InputError, InputErrors
from ventflux.profiles import ambient_profile, read_ctd_cast
from ventflux.units import Q_

DEMO = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge"
FIELDS = ("depth", "sea_pressure", "temperature", "practical_salinity", "absolute_salinity",
          "conservative_temperature", "potential_density", "buoyancy_frequency_squared", "n2_depth")


def _column():
    """Sea pressure [dbar], in-situ temperature [degC] and practical salinity of an analytic cast."""
    p = np.arange(1500.0, 2500.0, 2.0)
    t = 1.9 + 1.2 * np.exp(-(p - 1500.0) / 400.0)
    sp = 34.70 - 0.08 * np.exp(-(p - 1500.0) / 500.0)
    return p, t, sp


def _write_csv(path, p, t, sp):
    rows = [f"{float(a)!r},{float(b)!r},{float(c)!r}" for a, b, c in zip(p, t, sp)]  # repr: every digit
    lines = ["sea_pressure [dbar],temperature [degC],salinity", *rows]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def _dataset(p, t, sp, names=("PRES", "TEMP", "PSAL")):
    return xr.Dataset({
        names[0]: ("level", p, {"standard_name": "sea_water_pressure", "units": "dbar"}),
        names[1]: ("level", t, {"standard_name": "sea_water_temperature", "units": "degree_Celsius"}),
        names[2]: ("level", sp, {"standard_name": "sea_water_practical_salinity", "units": "1"}),
    }, attrs={"title": "synthetic cast"})


def _same(a, b, rtol=0.0):
    for name in FIELDS:
        x, y = getattr(a, name), getattr(b, name)
        assert x.units == y.units, name
        if rtol == 0.0:
            np.testing.assert_array_equal(x.magnitude, y.magnitude, err_msg=name)
        else:
            np.testing.assert_allclose(x.magnitude, y.magnitude, rtol=rtol, atol=0, err_msg=name)


@pytest.fixture(scope="module")
def twins(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cast")
    p, t, sp = _column()
    _write_csv(folder / "cast.csv", p, t, sp)
    _dataset(p, t, sp).to_netcdf(folder / "cast.nc", engine="h5netcdf")
    return folder


@pytest.mark.parametrize("window", [None, Q_(5, "m")])
def test_netcdf_and_csv_twin_give_identical_profiles(twins, window):
    kw = {"latitude": -17.3, "longitude": -113.6, "window": window}
    _same(read_ctd_cast(twins / "cast.nc", **kw), read_ctd_cast(twins / "cast.csv", **kw))


def test_an_xarray_dataset_reads_as_its_file(twins):
    p, t, sp = _column()
    _same(read_ctd_cast(_dataset(p, t, sp), window=None), read_ctd_cast(twins / "cast.nc", window=None))


def test_variables_are_found_by_standard_name_and_converted_from_their_units(twins, tmp_path):
    # Other variable names, other units (kelvin, pascal): the same profile up to rounding of the conversions.
    p, t, sp = _column()
    ds = xr.Dataset({
        "a": ("z", (p * 1e4), {"standard_name": "sea_water_pressure", "units": "Pa"}),
        "b": ("z", t + 273.15, {"standard_name": "sea_water_temperature", "units": "K"}),
        "c": ("z", sp, {"standard_name": "sea_water_practical_salinity", "units": "PSU"}),
        "note": ("z", np.zeros_like(p), {"long_name": "not a CF quantity, ignored"}),
    })
    ds.to_netcdf(tmp_path / "other.nc", engine="h5netcdf")
    # (1e-9: N² is a difference quotient of densities, which multiplies the conversions' 1e-16 rounding)
    _same(read_ctd_cast(tmp_path / "other.nc", window=None), read_ctd_cast(twins / "cast.csv", window=None),
          rtol=1e-9)


def test_depth_positive_up_and_udunits_exponents(tmp_path):
    # CF: a depth with positive="up" counts upward (negative below the surface); "g kg-1" is UDUNITS for g/kg.
    p, t, sp = _column()
    z = -gsw.z_from_p(p, 0.0)
    SA = gsw.SR_from_SP(sp)
    ds = xr.Dataset({
        "z": ("n", -z, {"standard_name": "depth", "units": "m", "positive": "up"}),
        "t": ("n", t, {"standard_name": "sea_water_temperature", "units": "degC"}),
        "sa": ("n", SA, {"standard_name": "sea_water_absolute_salinity", "units": "g kg-1"}),
    })
    prof = read_ctd_cast(ds, window=None)
    np.testing.assert_allclose(prof.depth.to("m").magnitude, z, rtol=1e-12)
    np.testing.assert_allclose(prof.absolute_salinity.to("g/kg").magnitude, SA, rtol=1e-12)


def test_teos10_variables_are_converted_as_gsw_converts_them():
    # A cast written as conservative temperature and absolute salinity: the profile's in-situ temperature,
    # practical salinity, potential density and N² are gsw's (gsw-python, TEOS-10's reference code).
    p, t, sp = _column()
    lat, lon = -17.3, -113.6
    SA = gsw.SA_from_SP(sp, p, lon, lat)
    CT = gsw.CT_from_t(SA, t, p)
    ds = xr.Dataset({
        "p": ("n", p, {"standard_name": "sea_water_pressure", "units": "dbar"}),
        "ct": ("n", CT, {"standard_name": "sea_water_conservative_temperature", "units": "degree_Celsius"}),
        "sa": ("n", SA, {"standard_name": "sea_water_absolute_salinity", "units": "g/kg"}),
    })
    prof = read_ctd_cast(ds, latitude=lat, longitude=lon, window=None)
    np.testing.assert_allclose(prof.temperature.to("degC").magnitude, t, rtol=0, atol=1e-10)
    np.testing.assert_allclose(prof.practical_salinity.magnitude, sp, rtol=0, atol=1e-10)
    np.testing.assert_allclose(prof.conservative_temperature.to("degC").magnitude, CT, rtol=0, atol=1e-10)
    np.testing.assert_allclose(prof.absolute_salinity.to("g/kg").magnitude, SA, rtol=0, atol=1e-10)
    np.testing.assert_allclose(prof.potential_density.to("kg/m^3").magnitude, gsw.rho(SA, CT, 0.0), rtol=1e-12)
    n2, _ = gsw.Nsquared(SA, CT, p, lat=lat)
    np.testing.assert_allclose(prof.buoyancy_frequency_squared.to("1/s^2").magnitude, n2, rtol=1e-6, atol=1e-12)


def test_potential_temperature_is_converted_with_gsw():
    p, t, sp = _column()
    SA = gsw.SR_from_SP(sp)
    pt = gsw.pt0_from_t(SA, t, p)
    ds = xr.Dataset({
        "p": ("n", p, {"standard_name": "sea_water_pressure", "units": "dbar"}),
        "pt": ("n", pt, {"standard_name": "sea_water_potential_temperature", "units": "degC"}),
        "s": ("n", sp, {"standard_name": "sea_water_practical_salinity", "units": "1"}),
    })
    prof = read_ctd_cast(ds, window=None)
    np.testing.assert_allclose(prof.temperature.to("degC").magnitude, t, rtol=0, atol=1e-9)


def test_the_constructor_from_arrays_matches_the_file(twins):
    p, t, sp = _column()
    prof = ambient_profile(sea_pressure=Q_(p, "dbar"), temperature=Q_(t, "degC"), salinity=sp, window=None)
    _same(prof, read_ctd_cast(twins / "cast.csv", window=None))
    with pytest.raises(InputError, match="sea_pressure"):
        ambient_profile(sea_pressure=Q_(p, "m"), temperature=Q_(t, "degC"), salinity=sp)
    with pytest.raises(InputError, match="depth or sea_pressure"):
        ambient_profile(temperature=Q_(t, "degC"), salinity=sp)


def test_every_problem_of_a_dataset_is_named_at_once():
    ds = xr.Dataset({"x": ("n", np.arange(3.0), {"units": "m"})})
    with pytest.raises(InputErrors) as e:
        read_ctd_cast(ds)
    text = str(e.value)
    assert "sea_water_pressure" in text and "sea_water_temperature" in text and "practical_salinity" in text


def test_a_missing_value_is_refused_naming_its_level_never_dropped():
    p, t, sp = _column()
    t = t.copy()
    t[7] = np.nan
    with pytest.raises(InputError, match=r"level\[7\]"):
        read_ctd_cast(_dataset(p, t, sp), window=None)


@pytest.mark.parametrize("attrs, match", [
    ({"standard_name": "sea_water_temperature", "units": "m"}, "TEMP.units"),
    ({"standard_name": "sea_water_temperature"}, "TEMP.units"),
    ({"standard_name": "sea_water_temperature", "units": "furlongs per hour"}, "TEMP.units"),
])
def test_wrong_or_missing_units_name_the_variable(attrs, match):
    p, t, sp = _column()
    ds = _dataset(p, t, sp)
    ds["TEMP"].attrs = attrs
    with pytest.raises(InputError, match=match):
        read_ctd_cast(ds)


def test_a_file_with_several_temperatures_uses_teos10s_and_checks_the_others():
    # Conservative temperature and absolute salinity are used; in-situ temperature and practical salinity beside
    # them must agree with what gsw derives (TEOS-10), else the cast is refused naming the variable and level.
    p, t, sp = _column()
    SA = gsw.SR_from_SP(sp)
    ds = _dataset(p, t, sp)
    ds["CT"] = ("level", gsw.CT_from_t(SA, t, p), {"standard_name": "sea_water_conservative_temperature",
                                                    "units": "degC"})
    ds["SA"] = ("level", SA, {"standard_name": "sea_water_absolute_salinity", "units": "g/kg"})
    _same(read_ctd_cast(ds, window=None), read_ctd_cast(_dataset(p, t, sp), window=None), rtol=1e-9)
    ds["TEMP"].values[9] += 0.5  # a different water at one level
    with pytest.raises(InputError, match=r"level\[9\]: TEMP: .*agrees with 'CT'"):
        read_ctd_cast(ds, window=None)


def test_a_profiles_own_dataset_reads_back_as_the_same_profile():
    # AmbientProfile.to_xarray() writes CF standard names; reading it gives the same water column.
    p, t, sp = _column()
    prof = read_ctd_cast(_dataset(p, t, sp), latitude=-17.3, longitude=-113.6)  # 5 m bins
    ds = prof.to_xarray()
    assert ds["temperature"].attrs["standard_name"] == "sea_water_temperature"
    assert ds["depth"].attrs["positive"] == "down"
    again = read_ctd_cast(ds, latitude=-17.3, longitude=-113.6, window=None)
    for name in ("depth", "sea_pressure", "absolute_salinity", "conservative_temperature", "potential_density",
                 "buoyancy_frequency_squared"):
        np.testing.assert_allclose(getattr(again, name).magnitude, getattr(prof, name).magnitude, rtol=1e-9)
    # a bin's mean in-situ temperature is not exactly t(mean SA, mean CT, mean p): micro-kelvins apart
    np.testing.assert_allclose(again.temperature.to("degC").magnitude, prof.temperature.to("degC").magnitude,
                               rtol=0, atol=1e-6)
    assert "levels" in repr(prof).splitlines()[0] and len(repr(prof)) < 1200


def test_an_unreadable_netcdf_file_is_one_line(tmp_path):
    bad = tmp_path / "cast.nc"
    bad.write_text("not a netCDF file")
    with pytest.raises(InputError, match="readable netCDF"):
        read_ctd_cast(bad)


def test_the_survey_ctd_key_takes_a_netcdf_cast(tmp_path):
    # The demo's CSV cast, rewritten as netCDF: the survey check and the run read the same profile.
    from ventflux.survey.api import read_stratification
    from ventflux.survey.spec import load_survey
    from ventflux.tables import read_quantity_table

    shutil.copytree(DEMO, tmp_path / "demo", ignore=shutil.ignore_patterns("series"))
    data = tmp_path / "demo" / "data"
    tbl = read_quantity_table(data / "ctd_cast.csv", {"sea_pressure": "pressure", "temperature": "temperature",
                                                      "salinity": "dimensionless"})
    _dataset(tbl["sea_pressure"].to("dbar").magnitude, tbl["temperature"].to("degC").magnitude,
             tbl["salinity"].magnitude).to_netcdf(data / "ctd_cast.nc", engine="h5netcdf")
    survey = tmp_path / "demo" / "survey.toml"
    text = survey.read_text(encoding="utf-8")
    assert 'ctd = "data/ctd_cast.csv"' in text
    survey.write_text(text.replace('ctd = "data/ctd_cast.csv"', 'ctd = "data/ctd_cast.nc"'), encoding="utf-8")
    spec_nc = load_survey(survey)
    survey.write_text(text, encoding="utf-8")
    spec_csv = load_survey(survey)
    assert spec_nc.site.ctd.suffix == ".nc"
    assert spec_nc.site.ctd_extent == spec_csv.site.ctd_extent
    _same(read_stratification(spec_nc.site), read_stratification(spec_csv.site))


# (unit text, factor from dbar) and (unit text, offset from degC): the file's units, however written, give one cast
_PRESSURE_UNITS = [("dbar", 1.0), ("decibar", 1.0), ("Pa", 1e4), ("kPa", 10.0), ("bar", 0.1), ("MPa", 0.01)]
_TEMPERATURE_UNITS = [("degC", 0.0), ("degree_Celsius", 0.0), ("Celsius", 0.0), ("K", 273.15), ("kelvin", 273.15)]


@settings(max_examples=15, deadline=None)
@given(pu=st.sampled_from(_PRESSURE_UNITS), tu=st.sampled_from(_TEMPERATURE_UNITS),
       order=st.sampled_from(["down", "up"]))
def test_a_cast_does_not_depend_on_how_its_file_writes_units_or_direction(pu, tu, order):
    p, t, sp = _column()
    if order == "up":  # an up-cast: the same water, rows reversed
        p, t, sp = p[::-1], t[::-1], sp[::-1]
    ds = _dataset(p * pu[1], t + tu[1], sp)
    ds["PRES"].attrs["units"], ds["TEMP"].attrs["units"] = pu[0], tu[0]
    reference = read_ctd_cast(_dataset(*_column()), window=None)
    _same(read_ctd_cast(ds, window=None), reference, rtol=1e-9)


# --- a file of several casts: CF discrete sampling geometries for profiles (CF 1.8, chapter 9, appendix H.3) -----
def _three_casts():
    """Three analytic casts of different lengths and waters (the middle one is ``_column()``'s)."""
    p1, t1, s1 = _column()
    p0 = np.arange(1600.0, 2400.0, 4.0)
    p2 = np.arange(1400.0, 2600.0, 3.0)
    casts = [(p0, 1.8 + 1.0 * np.exp(-(p0 - 1600.0) / 300.0), 34.69 - 0.05 * np.exp(-(p0 - 1600.0) / 600.0)),
             (p1, t1, s1),
             (p2, 2.0 + 1.4 * np.exp(-(p2 - 1400.0) / 450.0), 34.71 - 0.09 * np.exp(-(p2 - 1400.0) / 400.0))]
    return casts, ["ST05", "ST07", "ST09"]


def _attrs(i):
    return [{"standard_name": "sea_water_pressure", "units": "dbar"},
            {"standard_name": "sea_water_temperature", "units": "degree_Celsius"},
            {"standard_name": "sea_water_practical_salinity", "units": "1"}][i]


def _contiguous(casts, ids):
    """H.3.4: the levels of every cast one after the other; ``row_size`` counts each cast's levels."""
    cols = [np.concatenate([c[i] for c in casts]) for i in range(3)]
    return xr.Dataset({
        "PRES": ("obs", cols[0], _attrs(0)), "TEMP": ("obs", cols[1], _attrs(1)), "PSAL": ("obs", cols[2], _attrs(2)),
        "row_size": ("profile", np.array([c[0].size for c in casts], "i4"),
                     {"long_name": "levels in each cast", "sample_dimension": "obs"}),
        "station": ("profile", np.array(ids, dtype=object), {"cf_role": "profile_id"}),
    }, attrs={"featureType": "profile", "Conventions": "CF-1.8"})


def _indexed(casts, ids):
    """H.3.5: levels in any order, each with the index of its cast (here interleaved, last level first)."""
    k = np.concatenate([np.full(c[0].size, i) for i, c in enumerate(casts)])
    cols = [np.concatenate([c[i] for c in casts]) for i in range(3)]
    order = np.lexsort((-np.concatenate([np.arange(c[0].size) for c in casts]), k))[::-1]
    return xr.Dataset({
        "PRES": ("obs", cols[0][order], _attrs(0)), "TEMP": ("obs", cols[1][order], _attrs(1)),
        "PSAL": ("obs", cols[2][order], _attrs(2)),
        "cast": ("obs", k[order].astype("i4"), {"long_name": "cast of each level", "instance_dimension": "profile"}),
        "station": ("profile", np.array(ids, dtype=object), {"cf_role": "profile_id"}),
    }, attrs={"featureType": "profile", "Conventions": "CF-1.8"})


@pytest.mark.parametrize("layout", [_contiguous, _indexed])
@pytest.mark.parametrize("which", [1, "ST07"])
def test_one_cast_of_a_ragged_file_reads_as_its_own_file(tmp_path, layout, which):
    # The cast chosen by position or by its profile_id is the same profile as that cast written alone as CSV
    # (the indexed file holds its levels in reverse order: the reader orders them by pressure, as for any file).
    casts, ids = _three_casts()
    layout(casts, ids).to_netcdf(tmp_path / "casts.nc", engine="h5netcdf")
    _write_csv(tmp_path / "one.csv", *casts[1])
    kw = {"latitude": -17.3, "longitude": -113.6, "window": Q_(5, "m")}
    _same(read_ctd_cast(tmp_path / "casts.nc", profile=which, **kw), read_ctd_cast(tmp_path / "one.csv", **kw))


def test_one_cast_of_a_two_dimensional_file(tmp_path):
    # Variables along (cast, level) with one pressure axis for every cast (CF's orthogonal layout)
    casts, ids = _three_casts()
    p, t, sp = _column()
    t2 = np.vstack([t - 0.1, t, t + 0.1])
    ds = xr.Dataset({"PRES": ("level", p, _attrs(0)), "TEMP": (("profile", "level"), t2, _attrs(1)),
                     "PSAL": (("profile", "level"), np.vstack([sp, sp, sp]), _attrs(2)),
                     "station": ("profile", np.array(ids, dtype=object), {"cf_role": "profile_id"})})
    ds.to_netcdf(tmp_path / "grid.nc", engine="h5netcdf")
    _write_csv(tmp_path / "one.csv", p, t, sp)
    _same(read_ctd_cast(tmp_path / "grid.nc", profile="ST07", window=None), read_ctd_cast(tmp_path / "one.csv",
                                                                                          window=None))


def test_a_file_of_several_casts_needs_one_chosen(tmp_path):
    casts, ids = _three_casts()
    _contiguous(casts, ids).to_netcdf(tmp_path / "casts.nc", engine="h5netcdf")
    with pytest.raises(InputError) as e:
        read_ctd_cast(tmp_path / "casts.nc")
    assert e.value.field == "profile" and "file's 3" in e.value.allowed and "ST05, ST07, ST09" in e.value.allowed
    for bad in (3, -1, "ST08", True):
        with pytest.raises(InputError, match="one of the file's 3 casts"):
            read_ctd_cast(tmp_path / "casts.nc", profile=bad)
    _contiguous(casts[:1], ids[:1]).to_netcdf(tmp_path / "one.nc", engine="h5netcdf")
    read_ctd_cast(tmp_path / "one.nc")  # one cast: nothing to choose


def test_a_profile_for_a_file_of_one_cast_is_refused(twins):
    for cast in ("cast.csv", "cast.nc"):
        with pytest.raises(InputError, match="one cast"):
            read_ctd_cast(twins / cast, profile=0)


def test_the_survey_chooses_a_cast_with_ctd_profile(tmp_path):
    # The demo's cast written as the middle one of three (contiguous ragged array): --check passes with
    # [site] ctd_profile naming it, and the run's stratification is the cast's own; without the key, or with it
    # for a CSV cast, the file is refused at site.ctd_profile / site.ctd in one line.
    from ventflux.survey.api import read_stratification
    from ventflux.survey.spec import load_survey
    from ventflux.tables import read_quantity_table

    shutil.copytree(DEMO, tmp_path / "demo")
    cast = read_quantity_table(tmp_path / "demo" / "data" / "ctd_cast.csv",
                               columns={"temperature": "temperature", "salinity": "dimensionless"},
                               optional={"sea_pressure": "pressure"})
    demo = (cast["sea_pressure"].m_as("dbar"), cast["temperature"].m_as("degC"), cast["salinity"].m_as(""))
    casts, ids = _three_casts()
    _contiguous([casts[0], demo, casts[2]], ids).to_netcdf(tmp_path / "demo" / "data" / "casts.nc",
                                                           engine="h5netcdf")
    path = tmp_path / "demo" / "survey.toml"
    text = path.read_text()
    assert 'ctd = "data/ctd_cast.csv"' in text
    path.write_text(text.replace('ctd = "data/ctd_cast.csv"', 'ctd = "data/casts.nc"\nctd_profile = "ST07"'))
    spec = load_survey(path)
    original = load_survey(DEMO / "survey.toml")
    _same(read_stratification(spec.site), read_stratification(original.site))
    path.write_text(text.replace('ctd = "data/ctd_cast.csv"', 'ctd = "data/casts.nc"'))
    with pytest.raises((InputError, InputErrors)) as e:
        load_survey(path)
    lines = e.value.lines() if isinstance(e.value, InputErrors) else [e.value.line()]
    assert len(lines) == 1 and "site.ctd_profile" in lines[0] and "ST05, ST07, ST09" in lines[0], lines
    path.write_text(text.replace('ctd = "data/ctd_cast.csv"', 'ctd = "data/ctd_cast.csv"\nctd_profile = 1'))
    with pytest.raises((InputError, InputErrors), match="site.ctd_profile"):
        load_survey(path)


def test_plume_rise_reads_the_chosen_cast(tmp_path, capsys):
    # ventflux plume-rise --ctd FILE --ctd-profile ID: the same answer as the cast alone; --ctd-profile without
    # --ctd, or a cast the file lacks, is one line naming --ctd-profile.
    import json

    from ventflux.cli import main

    casts, ids = _three_casts()
    _contiguous(casts, ids).to_netcdf(tmp_path / "casts.nc", engine="h5netcdf")
    _write_csv(tmp_path / "one.csv", *casts[1])
    base = ["plume-rise", "--rise-height", "200 m", "--latitude", "-17.3", "--json"]
    assert main(base + ["--ctd", str(tmp_path / "casts.nc"), "--ctd-profile", "ST07"]) == 0
    chosen = json.loads(capsys.readouterr().out)
    assert main(base + ["--ctd", str(tmp_path / "one.csv")]) == 0
    alone = json.loads(capsys.readouterr().out)
    assert chosen["heat_power_W"] == alone["heat_power_W"]
    assert main(base + ["--ctd", str(tmp_path / "casts.nc"), "--ctd-profile", "1"]) == 0
    assert json.loads(capsys.readouterr().out)["heat_power_W"] == alone["heat_power_W"]
    assert main(base + ["--buoyancy-frequency", "1e-3/s", "--ambient-temperature", "2 degC", "--ambient-salinity",
                        "34.6", "--depth", "2000 m",
                        "--ctd-profile", "ST07"]) == 2
    assert "--ctd-profile" in capsys.readouterr().err
    assert main(base + ["--ctd", str(tmp_path / "casts.nc"), "--ctd-profile", "ST08"]) == 2
    err = capsys.readouterr().err
    assert "--ctd-profile" in err and "ST05, ST07, ST09" in err


def test_a_padded_cast_of_a_two_dimensional_file_reads_as_its_own_file(tmp_path):
    # CF's incomplete multidimensional layout: casts of different lengths in one (cast, level) array, the
    # shorter padded with missing values at the end. The padding is not data: the cast reads as the same cast
    # written alone, and the padding is counted in the cast's name; a level missing only one variable is still
    # an error naming it.
    casts, ids = _three_casts()
    n = max(c[0].size for c in casts)

    def padded(i):
        return np.vstack([np.concatenate([c[i], np.full(n - c[i].size, np.nan)]) for c in casts])

    ds = xr.Dataset({"PRES": (("profile", "level"), padded(0), _attrs(0)),
                     "TEMP": (("profile", "level"), padded(1), _attrs(1)),
                     "PSAL": (("profile", "level"), padded(2), _attrs(2)),
                     "station": ("profile", np.array(ids, dtype=object), {"cf_role": "profile_id"})})
    ds.to_netcdf(tmp_path / "padded.nc", engine="h5netcdf")
    _write_csv(tmp_path / "one.csv", *casts[0])
    kw = {"latitude": -17.3, "window": Q_(5, "m")}
    got = read_ctd_cast(tmp_path / "padded.nc", profile="ST05", **kw)
    _same(got, read_ctd_cast(tmp_path / "one.csv", **kw))
    assert f"{n - casts[0][0].size} padding levels" in got.source
    ds["TEMP"][0, 3] = np.nan  # a real gap, not padding
    ds.to_netcdf(tmp_path / "gap.nc", engine="h5netcdf")
    with pytest.raises((InputError, InputErrors), match="missing value"):
        read_ctd_cast(tmp_path / "gap.nc", profile="ST05")
