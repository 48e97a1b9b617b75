"""Checks of current records, netCDF profile × level layouts, missing samples and closed boxes.

Every expected value comes from an analytic solution written in the tests (``watercolumn_synthetic``), never
from the plugin's own formulas.
"""

import json
import sys
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from ventflux.errors import InputError, InputErrors
from ventflux.uncertainty import SharedDraws, UnphysicalPolicy, normal
from ventflux.units import Q_

sys.path.insert(0, str(Path(__file__).resolve().parent))
from ventflux_watercolumn.currents import read_current_record
from ventflux_watercolumn.reading import read_section
from ventflux_watercolumn.survey import analyse, propagate_analysis
from watercolumn_synthetic import CP0, box_sides, towyo, write_csv

LAT, LON = -17.3, -113.6
SITE = SimpleNamespace(latitude=LAT, longitude=LON)


def _spec(**kw):
    spec = {"data": None, "sections": None, "current": None, "current_direction": None, "current_uncertainty": None,
            "current_record": None, "vent_depth": None, "factor": 3.0, "bin_size": None, "degree": 2,
            "tracer": "temperature", "margin": None, "closure_tolerance": None, "band_top": None, "band_bottom": None}
    spec.update(kw)
    return spec


def _run(spec, n=1500, seed=5):
    a = analyse(spec, SITE)
    per, out = propagate_analysis(spec, a, SharedDraws(n, seed), UnphysicalPolicy())
    return a, per, out


# ------------------------------------------------------------------ currents from a record


def _record_nc(path, t, north, east=None, depth=None, units="cm s-1", epoch="2026-03-01 00:00:00"):
    import xarray as xr

    scale = 100.0 if units == "cm s-1" else 1.0
    east = np.zeros_like(north) if east is None else east
    dims = ("bin", "time") if depth is not None else ("time",)
    vals = (north.T, east.T) if depth is not None else (north, east)
    data = {"v": (dims, scale * vals[0], {"standard_name": "northward_sea_water_velocity", "units": units}),
            "u": (dims, scale * vals[1], {"standard_name": "eastward_sea_water_velocity", "units": units}),
            "t": ("time", t, {"standard_name": "time", "units": f"seconds since {epoch}"})}
    if depth is not None:
        data["z"] = ("bin", depth, {"standard_name": "depth", "units": "m", "positive": "down"})
    xr.Dataset(data, attrs={"Conventions": "CF-1.8", "featureType": "timeSeries"}).to_netcdf(path, engine="h5netcdf")
    return path


def test_time_varying_current_record_matches_a_hand_integration(tmp_path):
    # Hand integration (analytic, in the test): the ship runs along x = v t, so a current meter's record
    # u(t) = u0 + u1 cos(k v t) is u(x) = u0 + u1 cos(k x) at every sample. Over the Gaussian layer,
    # ∫ exp(−(x − xc)²/2σx²) cos(k x) dx = √(2π) σx exp(−k²σx²/2) cos(k xc) (the Gaussian's characteristic
    # function), so H = ρ c_p0 a 2π σz σx [u0 + u1 exp(−k²σx²/2) cos(k xc)].
    d = towyo()
    section = write_csv(tmp_path / "towyo.csv", d)
    u0, u1, k, ship = 0.05, 0.03, 1 / 600.0, 0.5
    t = np.arange(-600.0, d["time"][-1] + 600.0, 60.0)
    rec = _record_nc(tmp_path / "meter.nc", t, u0 + u1 * np.cos(k * ship * t))
    H = d["rho_core"] * CP0 * d["a"] * 2 * np.pi * d["sz"] * d["sx"] * (
        u0 + u1 * np.exp(-0.5 * (k * d["sx"]) ** 2) * np.cos(k * d["xc"]))
    a, _, out = _run(_spec(data=section, current_record=rec, current_uncertainty=Q_(0.002, "m/s"), vent_depth=None))
    lo, hi = np.nanpercentile(out.heat_flux, [2.5, 97.5])
    assert lo < H < hi, (lo, H, hi)
    assert abs(out.nominal_heat_flux / H - 1) < 0.05
    # the same section with the constant u0: the ratio isolates the current's weighting, exactly as analytic
    _, _, const = _run(_spec(data=section, current=Q_(u0, "m/s"), current_direction=Q_(0.0, "deg")))
    expected = 1 + (u1 / u0) * np.exp(-0.5 * (k * d["sx"]) ** 2) * np.cos(k * d["xc"])
    assert abs(out.nominal_heat_flux / const.nominal_heat_flux / expected - 1) < 0.01
    # the record's epoch is kept, the section (a CSV) has none: compared as written, and said so
    assert any("compared as written" in n for n in a.results[0].notes)
    # a smooth tide is followed by the interpolation: its successive-difference variability is small
    assert a.matches[0].variability(a.results[0].normal) < 0.1 * u1


def test_adcp_record_is_interpolated_in_depth(tmp_path):
    # ADCP bins every 5 m; u(z) = u0 [1 + β ((z − zc)/σz)²] toward north. ∫ exp(−ζ²/2σz²)(1 + β ζ²/σz²) dζ
    # = √(2π) σz (1 + β) (the Gaussian's second moment), so the flux is the constant-u0 flux times (1 + β).
    d = towyo()
    section = write_csv(tmp_path / "towyo.csv", d)
    u0, beta = 0.05, 0.5
    depth = np.arange(1850.0, 2455.0, 5.0)
    t = np.array([-100.0, d["time"][-1] + 100.0])
    prof = u0 * (1 + beta * ((depth - d["zc"]) / d["sz"]) ** 2)
    north = np.tile(prof, (t.size, 1))
    north[0, 3] = np.nan  # one missing cell: filled in time from the same bin, and counted
    rec = _record_nc(tmp_path / "adcp.nc", t, north, depth=depth, units="m s-1")
    r = read_current_record(rec)
    assert r.levels.size == depth.size and r.filled == 1
    a, _, out = _run(_spec(data=section, current_record=rec))
    _, _, const = _run(_spec(data=section, current=Q_(u0, "m/s"), current_direction=Q_(0.0, "deg")))
    assert abs(out.nominal_heat_flux / const.nominal_heat_flux / (1 + beta) - 1) < 0.015
    assert any("filled in time" in n for n in a.results[0].notes)


def test_current_record_csv_and_refusals(tmp_path):
    d = towyo(n_profiles=4)
    section = write_csv(tmp_path / "towyo.csv", d)
    t = np.arange(0.0, d["time"][-1] + 60.0, 30.0)
    csv = tmp_path / "meter.csv"
    np.savetxt(csv, np.column_stack([t, np.zeros_like(t), np.full_like(t, 5.0)]), delimiter=",",
               header="time [s],current_east [cm/s],current_north [cm/s]", comments="", fmt="%.10g")
    r = read_current_record(csv)
    np.testing.assert_allclose(r.north, 0.05)
    short = tmp_path / "short.csv"
    short.write_text("time [s],current_east [m/s],current_north [m/s]\n0,0,0.05\n100,0,0.05\n")
    with pytest.raises(InputError, match="covering the section's times"):
        analyse(_spec(data=section, current_record=short), SITE)
    bad = tmp_path / "bad.csv"
    bad.write_text("time [s],current_east [m/s]\n0,0\n")
    with pytest.raises((InputError, InputErrors), match="current_north"):
        read_current_record(bad)


# ------------------------------------------------------------------ netCDF layouts and missing samples


def _flat_csv(path, cols, profile=None, blank=None):
    """A CSV twin; ``blank`` (column name → boolean mask) leaves those cells empty."""
    names = list(cols)
    header = ",".join(names + (["profile"] if profile is not None else []))
    rows = []
    for i in range(len(cols[names[0]])):
        cells = ["" if blank and k in blank and blank[k][i] else repr(float(cols[k][i])) for k in names]
        if profile is not None:
            cells.append(str(int(profile[i])))
        rows.append(",".join(cells))
    path.write_text(header + "\n" + "\n".join(rows) + "\n")
    return path


def test_profile_by_level_netcdf_reads_like_its_csv_twin(tmp_path):
    # CF discrete sampling geometry, featureType "profile" (CF conventions 1.8, ch. 9): data (profile, level),
    # written by xarray; the tail of one profile padded with fill values (a shorter cast): dropped and counted.
    import xarray as xr

    d = towyo(n_profiles=4)
    P, L = 4, d["time"].size // 4
    g = {k: np.asarray(d[k][:P * L], float).reshape(P, L) for k in ("time", "east", "north", "pressure",
                                                                     "temperature", "salinity")}
    g["temperature"][1, L - 30:] = np.nan
    attrs = {"time": ("time", "seconds since 2026-03-01 00:00:00"), "east": ("projection_x_coordinate", "m"),
             "north": ("projection_y_coordinate", "m"), "pressure": ("sea_water_pressure_due_to_sea_water", "dbar"),
             "temperature": ("sea_water_temperature", "degree_Celsius"),
             "salinity": ("sea_water_practical_salinity", "1")}
    ds = xr.Dataset({k: (("profile", "level"), v, {"standard_name": attrs[k][0], "units": attrs[k][1]})
                     for k, v in g.items()}, attrs={"Conventions": "CF-1.8", "featureType": "profile"})
    ds.to_netcdf(tmp_path / "grid.nc", engine="h5netcdf")
    flat = {f"{k if k != 'pressure' else 'sea_pressure'} [{u}]" if u else k: g[k].ravel()
            for k, u in (("time", "s"), ("east", "m"), ("north", "m"), ("pressure", "dbar"), ("temperature", "degC"),
                         ("salinity", ""))}
    twin = _flat_csv(tmp_path / "grid.csv", flat, profile=np.repeat(np.arange(1, P + 1), L),
                     blank={"temperature [degC]": np.isnan(g["temperature"].ravel())})
    a, b = read_section(twin), read_section(tmp_path / "grid.nc")
    assert b.layout == "profile × level" and a.layout == "samples"
    for name in ("time", "east", "north", "sea_pressure", "temperature", "salinity", "profile"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name), err_msg=name)
    assert a.dropped == b.dropped == {"temperature": 30} and a.n_dropped == 30
    # a coordinate per profile (time(profile), position(profile)) and a pressure per level broadcast to the data
    p_lvl = np.linspace(1900.0, 2400.0, L)
    t_prof = np.arange(P) * 1000.0
    ds2 = xr.Dataset({"T": (("cast", "z"), g["temperature"], {"standard_name": "sea_water_temperature",
                                                              "units": "degC"}),
                      "S": (("cast", "z"), g["salinity"], {"standard_name": "sea_water_practical_salinity"}),
                      "p": ("z", p_lvl, {"standard_name": "sea_water_pressure_due_to_sea_water", "units": "dbar"}),
                      "tt": ("cast", t_prof, {"standard_name": "time", "units": "s since 2026-03-01"}),
                      "lat": ("cast", LAT + 1e-3 * np.arange(P), {"standard_name": "latitude",
                                                                   "units": "degrees_north"}),
                      "lon": ("cast", np.full(P, LON), {"standard_name": "longitude", "units": "degrees_east"})},
                     attrs={"featureType": "profile"})
    ds2.to_netcdf(tmp_path / "casts.nc", engine="h5netcdf")
    flat2 = {"time [s]": np.repeat(t_prof, L), "latitude [degree]": np.repeat(LAT + 1e-3 * np.arange(P), L),
             "longitude [degree]": np.full(P * L, LON), "sea_pressure [dbar]": np.tile(p_lvl, P),
             "temperature [degC]": g["temperature"].ravel(), "salinity": g["salinity"].ravel()}
    twin2 = _flat_csv(tmp_path / "casts.csv", flat2, profile=np.repeat(np.arange(1, P + 1), L),
                      blank={"temperature [degC]": np.isnan(g["temperature"].ravel())})
    c, e = read_section(tmp_path / "casts.nc"), read_section(twin2)
    for name in ("time", "east", "north", "sea_pressure", "temperature", "salinity", "profile"):
        np.testing.assert_allclose(getattr(c, name), getattr(e, name), rtol=0, atol=1e-9, err_msg=name)


def test_missing_values_are_dropped_counted_and_reported(tmp_path, capsys):
    from ventflux.cli import main

    d = towyo()
    path = write_csv(tmp_path / "holes.csv", d)
    lines = path.read_text().splitlines()
    for row, col in ((10, 4), (11, 4), (500, 5), (3000, 3)):  # two temperatures, a salinity, a sea pressure
        cells = lines[row].split(",")
        cells[col] = "" if row != 500 else "nan"
        lines[row] = ",".join(cells)
    path.write_text("\n".join(lines) + "\n")
    s = read_section(path, latitude=LAT, longitude=LON)
    assert s.dropped == {"sea_pressure": 1, "temperature": 2, "salinity": 1} and s.n_dropped == 4
    assert s.size == d["time"].size - 4
    assert main(["plume-layer", str(path), "--latitude", str(LAT), "--longitude", str(LON), "--draws", "200",
                 "--current", "0.05 m/s", "--current-direction", "0 deg", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["missing_samples_dropped"] == 4
    assert out["missing_samples_dropped_by_variable"] == {"sea_pressure": 1, "temperature": 2, "salinity": 1}
    assert any("4 of" in n and "temperature 2" in n for n in out["notes"])
    # a variable with no value at all, and a profile with no complete sample, are refused by name
    empty = tmp_path / "empty.csv"
    empty.write_text("time [s],east [m],north [m],sea_pressure [dbar],temperature [degC],salinity\n" +
                     "".join(f"{i},{i},0,{1000 + i},2.0,\n" for i in range(20)))
    with pytest.raises(InputError, match="salinity: '\\(no value\\)'"):
        read_section(empty)
    prof = tmp_path / "prof.csv"
    prof.write_text("time [s],east [m],north [m],sea_pressure [dbar],temperature [degC],salinity,profile\n" +
                    "".join(f"{i},{i},0,{1000 + i},{'' if i >= 15 else 2.0},34.6,{1 + i // 15}\n" for i in range(30)))
    with pytest.raises(InputError, match="profile: '2'"):
        read_section(prof)


def test_old_pressure_header_is_read_with_a_deprecation_line(tmp_path, capsys):
    # vocabulary: RENAMED_COLUMNS pressure → sea_pressure, accepted for one release with one line
    d = towyo(n_profiles=4)
    new = write_csv(tmp_path / "new.csv", d)
    old = tmp_path / "old.csv"
    old.write_text(new.read_text().replace("sea_pressure [dbar]", "pressure [dbar]", 1))
    a, b = read_section(new), read_section(old)
    np.testing.assert_array_equal(a.sea_pressure, b.sea_pressure)
    err = capsys.readouterr().err
    assert "'pressure [dbar]' is deprecated; use 'sea_pressure [dbar]'" in err
    assert b.notes and "deprecated" in b.notes[0] and not a.notes


# ------------------------------------------------------------------ closed box


@pytest.fixture(scope="module")
def box_files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("box")

    def write(sides, stem):
        out = []
        for name, side in zip(("north", "east", "south", "west"), sides):
            out.append(write_csv(folder / f"{stem}_{name}.csv", side))
        return out

    sides, H = box_sides()
    flat, _ = box_sides(a=0.0)
    return write(sides, "src"), H, write(flat, "none")


def test_closed_box_recovers_the_source_and_zero_without_one(box_files):
    # Analytic box (watercolumn_synthetic.box_sides): a steady layer from a source at the centre of a
    # 2 km square, carried by a uniform current toward 70°; the heat leaving the box is ρ c_p0 u a 2π σz σc.
    paths, H, flat = box_files
    current = dict(current=normal(Q_(0.05, "m/s"), Q_(0.002, "m/s")),
                   current_direction=normal(Q_(70.0, "deg"), Q_(2.0, "deg")))
    a, per, out = _run(_spec(sections=paths, **current), n=2000)
    assert [round(b) % 360 for b in a.box.outward_bearings] == [0, 90, 180, 270]
    # the corners' gaps are named with their share of the perimeter: the heat through them is not counted
    import re

    note = next(n for n in a.box.notes if "not counted" in n)
    share = int(re.search(r"\((\d+)% of the box's perimeter\)", note).group(1))
    gaps = sum(g for _, _, g in a.box.gaps)
    walked = sum(float(np.hypot(np.diff(r.profile_east), np.diff(r.profile_north)).sum()) for r in a.box.sections)
    assert 0 < gaps and share == round(100 * gaps / (gaps + walked)) and share < 20
    lo, hi = np.nanpercentile(out.heat_flux, [2.5, 97.5])
    assert lo < H < hi, (lo, H, hi)
    assert abs(out.nominal_heat_flux / H - 1) < 0.1
    assert out.unphysical == 0
    # the east side carries most of it out; the sections' draws add up to the box's
    assert per[1].nominal_heat_flux > 0.8 * H
    np.testing.assert_allclose(sum(p.heat_flux for p in per), out.heat_flux, rtol=1e-12)
    # no source: the net flux is zero within its uncertainty (a band must then be given)
    with pytest.raises(InputError, match="band"):
        analyse(_spec(sections=flat, **current), SITE)
    _, _, zero = _run(_spec(sections=flat, band_top=Q_(2050.0, "m"), band_bottom=Q_(2250.0, "m"), **current),
                      n=2000)
    lo0, hi0 = np.nanpercentile(zero.heat_flux, [2.5, 97.5])
    assert lo0 < 0 < hi0 and abs(zero.nominal_heat_flux) < 0.1 * H


def test_a_box_that_does_not_close_is_refused(box_files):
    paths, _, _ = box_files
    with pytest.raises(InputError, match=r"gap of 2\d\d\d m between src_south.csv and src_north.csv"):
        analyse(_spec(sections=paths[:3], current=Q_(0.05, "m/s"), current_direction=Q_(70.0, "deg")), SITE)
    with pytest.raises(InputErrors, match="closure tolerance 10 m") as e:
        analyse(_spec(sections=paths, current=Q_(0.05, "m/s"), current_direction=Q_(70.0, "deg"),
                      closure_tolerance=Q_(10.0, "m")), SITE)
    assert len(e.value.lines()) == 4  # every gap named, at once


def test_survey_box_and_current_record_keys(box_files, tmp_path):
    # The survey's [water_column] takes a box of sections and a current record; --check refuses what the run
    # would, in one line per problem with the full key path.
    from ventflux.survey.run import run_survey
    from ventflux.survey.spec import load_survey

    paths, _, _ = box_files
    head = ('[site]\nname = "Test"\ndepth = "2480 m"\nlatitude = -17.3\nlongitude = -113.6\n'
            'ambient_temperature = "2.0 degC"\nambient_salinity = 34.69\n[run]\ndraws = 300\n'
            '[[vent]]\nname = "A"\n  [[vent.orifice]]\n  temperature = "350 ± 2 degC"\n  velocity = "1.0 ± 0.1 m/s"'
            '\n  diameter = "10 cm"\n')
    listed = ", ".join(f'"{p}"' for p in paths)
    f = tmp_path / "s.toml"
    f.write_text(head + f'[water_column]\nsections = [{listed}]\ncurrent = "0.05 ± 0.002 m/s"\n'
                 'current_direction = "70 ± 2 deg"\n')
    result = run_survey(load_survey(f))
    est = result.sections["water_column"]
    assert est.category == "check" and est.heat_power.shape == (1, 300)
    assert est.rows[0]["quantity"] == "net heat flux" and len(est.tables["water_column"]) > 4
    f.write_text(head + f'[water_column]\nsections = [{listed}]\ndata = "{paths[0]}"\ncurrent = "0.05 m/s"\n'
                 'band_top = "2000 m"\n')
    with pytest.raises(InputErrors) as e:
        load_survey(f)
    lines = "\n".join(e.value.lines())
    assert "water_column.data" in lines and "water_column.band_bottom" in lines
    t = np.arange(-100.0, 20000.0, 60.0)
    rec = _record_nc(tmp_path / "meter.nc", t, np.full(t.size, 0.05))
    f.write_text(head + f'[water_column]\ndata = "{paths[1]}"\ncurrent_record = "{rec}"\n'
                 'current_uncertainty = "0.002 m/s"\ncurrent = "0.05 m/s"\n')
    with pytest.raises(InputError, match="water_column.current: '0.05 m/s'.*measured"):
        load_survey(f)
