"""Checks of ventflux-watercolumn against TEOS-10 (gsw), an analytic advected plume layer and CF netCDF input."""

import sys
from pathlib import Path

import gsw
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.aggregate import SharedDraws
from ventflux.errors import InputError, InputErrors
from ventflux.uncertainty import normal
from ventflux.units import Q_

sys.path.insert(0, str(Path(__file__).resolve().parent))
from ventflux_watercolumn.anomaly import teos10_state
from ventflux_watercolumn.flux import bootstrap_weights
from ventflux_watercolumn.reading import read_section
from ventflux_watercolumn.section import analyse_section, draw_section, section_draws
from watercolumn_synthetic import towyo, write_csv

LAT, LON = -17.3, -113.6


@pytest.fixture(scope="module")
def synthetic(tmp_path_factory):
    d = towyo()
    path = write_csv(tmp_path_factory.mktemp("wc") / "towyo.csv", d)
    return d, read_section(path, latitude=LAT, longitude=LON)


def test_potential_temperature_and_density_match_gsw(synthetic):
    # Source: TEOS-10 through gsw (IOC et al. 2010). θ by the direct route pt0_from_t(SA, t, p), σ0 as
    # rho(SA, CT, 0) − 1000: routes other than the plugin's (pt_from_CT, sigma0).
    _, data = synthetic
    s = teos10_state(data)
    SA = gsw.SA_from_SP(data.salinity, data.sea_pressure, LON, LAT)
    np.testing.assert_allclose(s.theta, gsw.pt0_from_t(SA, data.temperature, data.sea_pressure), atol=1e-9)
    CT = gsw.CT_from_t(SA, data.temperature, data.sea_pressure)
    np.testing.assert_allclose(s.sigma0, gsw.rho(SA, CT, 0.0) - 1000.0, atol=1e-9)
    np.testing.assert_allclose(s.depth, -gsw.z_from_p(data.sea_pressure, LAT), atol=1e-9)
    # potential temperature below in-situ temperature at depth (adiabatic cooling on the way up)
    assert np.all(s.theta < data.temperature)


def _expected_layer(d, res, factor_noise):
    """Per profile, from the analytic field: shallowest bin whose mean true Δθ exceeds the threshold."""
    period = 2 * (2400.0 - 1900.0) / 1.0
    prof = np.floor(d["time"] / (period / 2)).astype(int)
    true = d["a"] * np.exp(-0.5 * ((d["depth"] - d["zc"]) / d["sz"]) ** 2) * \
        np.exp(-0.5 * ((d["east"] - d["xc"]) / d["sx"]) ** 2)
    edges = res.edges
    tops = np.full(res.n_profiles, np.nan)
    peak = np.zeros(res.n_profiles)
    for p in range(res.n_profiles):
        m = prof == p
        s, _ = np.histogram(d["depth"][m], edges, weights=true[m])
        c, _ = np.histogram(d["depth"][m], edges)
        mean = np.where(c > 0, s / np.maximum(c, 1), 0)
        peak[p] = mean.max()
        above = np.flatnonzero(mean > factor_noise)
        if above.size:
            tops[p] = 0.5 * (edges[above[0]] + edges[above[0] + 1])
    return tops, peak


def test_synthetic_section_flux_and_layer(synthetic):
    # Analytic solution written in the test (watercolumn_synthetic): a density-compensated Gaussian ΔΘ layer
    # advected by a uniform current normal to the section, over a linear θ–S background with sensor noise;
    # H = ρ c_p0 u a 2π σz σx.
    d, data = synthetic
    res = analyse_section(data, vent_depth=2480.0, current_direction=0.0)
    assert res.n_profiles == 20
    draws = SharedDraws(4000, 7)
    out = draw_section(res, section_draws(draws, "test", res.n_profiles, current=normal(Q_(0.05, "m/s"),
                                          Q_(0.005, "m/s")), current_direction=normal(Q_(0.0, "deg"),
                                                                                       Q_(5.0, "deg"))))
    lo, hi = np.percentile(out.heat_flux, [2.5, 97.5])
    assert lo < d["heat_flux"] < hi, (lo, d["heat_flux"], hi)
    assert abs(out.nominal_heat_flux / d["heat_flux"] - 1) < 0.05
    assert out.failed == 0
    # the constant-c_p shortcut is shown beside and close (θ and Θ anomalies differ by < 1 % here)
    assert abs(out.shortcut_heat_flux / out.nominal_heat_flux - 1) < 0.03
    # layer: core and top within one depth bin (the sampling interval) where the crossing is sharp
    tops, peak = _expected_layer(d, res, res.factor * res.noise)
    sharp = peak > 6 * res.factor * res.noise
    assert sharp.sum() >= 6
    assert np.all(res.found[sharp])
    assert np.all(np.abs(res.core_depth[sharp] - d["zc"]) <= res.bin_size)
    assert np.all(np.abs(res.top_depth[sharp] - tops[sharp]) <= res.bin_size)
    # rise heights: the vent depth minus the layer's mean depths, ordered top > core > bottom
    h = {k: np.median(v) for k, v in out.heights.items()}
    assert h["maximum"] > h["spreading"] > h["bottom"]
    assert abs(h["spreading"] - (2480.0 - d["zc"])) <= res.bin_size
    # no anomaly, no layer: the same section without the plume
    d0 = towyo(a=0.0)
    flat = read_section(write_csv(Path(data.source).with_name("flat.csv"), d0), latitude=LAT, longitude=LON)
    r0 = analyse_section(flat, vent_depth=2480.0)
    assert r0.found.sum() <= 1  # a 3-sd threshold on ~100 bins × 20 profiles of means: rare false alarms
    if not r0.found.any():  # no layer: the flux is not computed (NaN), never a zero that reads as measured
        o0 = draw_section(r0, section_draws(SharedDraws(50, 1), "flat", r0.n_profiles, current=Q_(0.05, "m/s")))
        assert np.isnan(o0.heat_flux).all() and np.isnan(o0.nominal_heat_flux)


def test_flux_scales_with_current_and_flips_with_direction(synthetic):
    _, data = synthetic
    res = analyse_section(data, vent_depth=2480.0, current_direction=0.0)
    a = draw_section(res, section_draws(SharedDraws(200, 1), "x", res.n_profiles, current=Q_(0.05, "m/s")))
    b = draw_section(res, section_draws(SharedDraws(200, 1), "x", res.n_profiles, current=Q_(0.10, "m/s")))
    c = draw_section(res, section_draws(SharedDraws(200, 1), "x", res.n_profiles, current=Q_(0.05, "m/s"),
                                       current_direction=Q_(180.0, "deg")))
    np.testing.assert_allclose(b.heat_flux, 2 * a.heat_flux, rtol=1e-12)
    np.testing.assert_allclose(c.heat_flux, -a.heat_flux, rtol=1e-9)


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(0, 1e4, allow_nan=False), min_size=2, max_size=12, unique=True), st.integers(0, 2**31))
def test_bootstrap_weights_integrate_the_drawn_span(s, seed):
    # Invariant of the trapezoid rule: the weights of the drawn profiles add up to the span they cover.
    s = np.asarray(s)
    picks = np.random.default_rng(seed).integers(0, s.size, (5, s.size))
    W, N = bootstrap_weights(s, picks)
    span = s[picks].max(axis=1) - s[picks].min(axis=1)
    np.testing.assert_allclose(W.sum(axis=1), span, rtol=1e-12, atol=1e-9)
    np.testing.assert_array_equal(N.sum(axis=1), s.size)


def _netcdf_twin(d, path, absolute_pressure=False):
    import xarray as xr

    n = d["time"].size
    p = d["pressure"] * 1e4 + 101325.0 if absolute_pressure else d["pressure"]
    ds = xr.Dataset(
        {"t": ("obs", d["time"], {"standard_name": "time", "units": "seconds since 2026-03-01 00:00:00"}),
         "x": ("obs", d["east"], {"standard_name": "projection_x_coordinate", "units": "m"}),
         "y": ("obs", d["north"], {"standard_name": "projection_y_coordinate", "units": "m"}),
         "PRES": ("obs", p, {"standard_name": "sea_water_pressure" if absolute_pressure else
                             "sea_water_pressure_due_to_sea_water", "units": "Pa" if absolute_pressure else "dbar"}),
         "TEMP": ("obs", d["temperature"], {"standard_name": "sea_water_temperature", "units": "degree_Celsius"}),
         "PSAL": ("obs", d["salinity"], {"standard_name": "sea_water_practical_salinity", "units": "1"}),
         "UCUR": ("obs", np.full(n, 4.0), {"standard_name": "eastward_sea_water_velocity", "units": "cm s-1"}),
         "VCUR": ("obs", np.full(n, 1.5), {"standard_name": "northward_sea_water_velocity", "units": "cm s-1"})},
        attrs={"Conventions": "CF-1.8", "featureType": "trajectory"})
    ds.to_netcdf(path, engine="h5netcdf")
    return path


def test_netcdf_with_cf_names_reads_like_its_csv_twin(tmp_path):
    # Real-format input: a section written by xarray with CF standard names and units (CF conventions 1.8)
    # reads back identically to the CSV with units in its headers.
    d = towyo(n_profiles=4)
    csv = tmp_path / "twin.csv"
    cols = ["time [s]", "east [m]", "north [m]", "sea_pressure [dbar]", "temperature [degC]", "salinity",
            "current_east [cm/s]", "current_north [cm/s]"]
    n = d["time"].size
    arr = np.column_stack([d["time"], d["east"], d["north"], d["pressure"], d["temperature"], d["salinity"],
                           np.full(n, 4.0), np.full(n, 1.5)])
    np.savetxt(csv, arr, delimiter=",", header=",".join(cols), comments="", fmt="%.17g")
    a = read_section(csv)
    b = read_section(_netcdf_twin(d, tmp_path / "twin.nc"))
    for name in ("time", "east", "north", "sea_pressure", "temperature", "salinity", "current_east",
                 "current_north"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name), err_msg=name)
    c = read_section(_netcdf_twin(d, tmp_path / "abs.nc", absolute_pressure=True))
    np.testing.assert_allclose(c.sea_pressure, a.sea_pressure, atol=1e-9)


def test_bad_inputs_are_one_line_errors(tmp_path):
    import xarray as xr

    bad = tmp_path / "bad.csv"
    bad.write_text("time [s],east [m],north [m],pressure [dbar],temperature [degC]\n0,0,0,100,2\n")
    with pytest.raises((InputError, InputErrors)) as e:
        read_section(bad)
    assert "salinity" in str(e.value) and "bad.csv:1" in str(e.value)
    nc = tmp_path / "bad.nc"
    xr.Dataset({"T": ("o", np.ones(20), {"standard_name": "sea_water_temperature", "units": "furlongs"})}) \
        .to_netcdf(nc, engine="h5netcdf")
    with pytest.raises((InputError, InputErrors)) as e:
        read_section(nc)
    msg = str(e.value)
    assert "T (standard_name sea_water_temperature) units" in msg and "sea_water_practical_salinity" in msg
    d = towyo(n_profiles=4)
    d["time"][50] = d["time"][49]
    with pytest.raises(InputError, match=r"twice\.csv:52: time"):
        read_section(write_csv(tmp_path / "twice.csv", d))


def test_survey_section_parses_and_refuses_like_the_run(tmp_path, synthetic):
    from ventflux.survey.spec import load_survey

    _, data = synthetic
    (tmp_path / "towyo.csv").write_bytes(Path(data.source).read_bytes())
    head = ('[site]\nname = "Test"\ndepth = "2480 m"\nlatitude = -17.3\nlongitude = -113.6\n'
            'ambient_temperature = "2.0 degC"\nambient_salinity = 34.69\n[run]\ndraws = 500\n'
            '[[vent]]\nname = "A"\n  [[vent.orifice]]\n  temperature = "350 ± 2 degC"\n  velocity = "1.0 ± 0.1 m/s"'
            '\n  diameter = "10 cm"\n')
    f = tmp_path / "s.toml"
    f.write_text(head + '[water_column]\ndata = "towyo.csv"\ncurrent = "fast"\nfactr = 3\n')
    with pytest.raises(InputErrors) as e:
        load_survey(f)
    lines = "\n".join(e.value.lines())
    assert "water_column.factr" in lines and "water_column.current" in lines
    f.write_text(head + '[water_column]\ndata = "towyo.csv"\ncurrent = "0.05 m/s"\ntracer = "optical"\n')
    with pytest.raises(InputError, match="tracer: 'optical'.*no optical column"):
        load_survey(f)
    f.write_text(head + '[water_column]\ndata = "towyo.csv"\n')
    with pytest.raises(InputError, match="water_column.current: '\\(missing\\)'"):
        load_survey(f)
    f.write_text(head + '[water_column]\ndata = "towyo.csv"\ncurrent = "0.05 ± 0.005 m/s"\n'
                 'current_direction = "0 ± 5 deg"\n')
    spec = load_survey(f)
    from ventflux.survey.run import run_survey

    result = run_survey(spec)
    est = result.sections["water_column"]
    assert est.category == "check" and est.heat_power.shape == (1, 500)
    assert [k for k, _ in result.checks] == ["water_column"]


def test_plume_rise_height_can_be_a_towyo_file(tmp_path, synthetic):
    # [field_plume] height = a section file: the layer's mean top above the site's depth, with its uncertainty.
    from ventflux.survey.spec import load_survey
    from ventflux.uncertainty import Uncertain

    d, data = synthetic
    (tmp_path / "towyo.csv").write_bytes(Path(data.source).read_bytes())
    f = tmp_path / "s.toml"
    f.write_text('[site]\nname = "Test"\ndepth = "2480 m"\nlatitude = -17.3\nlongitude = -113.6\n'
                 'ambient_temperature = "2.0 degC"\nambient_salinity = 34.69\n[run]\ndraws = 500\n'
                 '[[vent]]\nname = "A"\n  [[vent.orifice]]\n  temperature = "350 ± 2 degC"\n'
                 '  velocity = "1.0 ± 0.1 m/s"\n  diameter = "10 cm"\n'
                 '[field_plume]\nheight = "towyo.csv"\nlevel = "spreading"\nbuoyancy_frequency = "1e-3 1/s"\n')
    h = load_survey(f).sections["field_plume"]["height"]
    assert isinstance(h, Uncertain) and h.kind == "normal"
    assert abs(h.a - (2480.0 - d["zc"])) <= 5.0 and 0 < h.b < 5.0
    f.write_text(f.read_text().replace('"towyo.csv"', '"missing.csv"'))
    with pytest.raises(InputError, match="field_plume.height: 'missing.csv'"):
        load_survey(f)


def test_measured_current_columns_give_the_constant_current_result(tmp_path, synthetic):
    # A current meter reading a steady 5 cm/s toward north at every sample is the constant current of 5 cm/s.
    import dataclasses

    _, data = synthetic
    n = data.size
    measured = dataclasses.replace(data, current_east=np.zeros(n), current_north=np.full(n, 0.05))
    rm = analyse_section(measured, vent_depth=2480.0)
    rc = analyse_section(data, vent_depth=2480.0, current_direction=0.0)
    a = draw_section(rm, section_draws(SharedDraws(300, 3), "x", rm.n_profiles,
                                       current_uncertainty=Q_(0.0, "m/s")))
    b = draw_section(rc, section_draws(SharedDraws(300, 3), "x", rc.n_profiles, current=Q_(0.05, "m/s"),
                                       current_direction=Q_(0.0, "deg")))
    np.testing.assert_allclose(a.heat_flux, b.heat_flux, rtol=1e-9)
    assert a.nominal_heat_flux == pytest.approx(b.nominal_heat_flux, rel=1e-9)


def test_cli_prints_json_and_refuses_in_one_line(synthetic, tmp_path, capsys):
    import json

    from ventflux.cli import main

    _, data = synthetic
    args = ["plume-layer", data.source, "--latitude", "-17.3", "--longitude", "-113.6", "--draws", "200"]
    assert main([*args, "--vent-depth", "2480 m", "--current", "0.05 ± 0.005 m/s", "--current-direction", "0 deg",
                 "--json", "--out", str(tmp_path / "p.csv"), "--figures", str(tmp_path / "f")]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["heat_flux_W"] > 0 and out["heat_flux_W_p05"] < out["heat_flux_W"] < out["heat_flux_W_p95"]
    assert {"heat_flux_current_only_W_sd", "rise_height_spreading_m_median", "noise_dtheta_K"} <= set(out)
    assert "top_depth_m" in out["profiles"][0]
    assert (tmp_path / "p.csv").read_text().startswith("profile,")
    assert len(list((tmp_path / "f").glob("*.png"))) == 3
    assert main([*args, "--quiet"]) == 2  # --quiet: no progress line, the refusal alone
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--current" in err[0]


@settings(max_examples=40, deadline=None)
@given(row=st.integers(0, 59), col=st.integers(0, 5),
       cell=st.sampled_from(["", "nan", "inf", "abc", "-5", "1e9", "2,3", "  "]))
def test_a_corrupted_cell_is_refused_in_one_line_or_read(tmp_path_factory, row, col, cell):
    # Fuzzing one cell of a valid file: the reader either accepts it or names the file, line and column.
    d = towyo(n_profiles=4)
    path = write_csv(tmp_path_factory.mktemp("fz") / "f.csv", {k: (v[:60] if hasattr(v, "__len__") else v)
                                                               for k, v in d.items()})
    lines = path.read_text().splitlines()
    cells = lines[row + 1].split(",")
    cells[col] = cell
    lines[row + 1] = ",".join(cells)
    path.write_text("\n".join(lines) + "\n")
    try:
        read_section(path, latitude=LAT, longitude=LON)
    except InputErrors as e:
        assert all("f.csv" in line for line in e.lines())
    except InputError as e:
        assert "f.csv" in e.line() and "\n" not in e.line()
