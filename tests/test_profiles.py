"""CTD cast reading and processing (ventflux.profiles) against TEOS-10 computed independently."""

import gsw
import numpy as np
import pytest

from ventflux.errors import InputError, InputErrors
from ventflux.profiles import constant_stratification, read_ctd_cast, uniform_ambient, vent_depth_of
from ventflux.units import Q_

LAT = 12.5  # invented position of the test casts
LON = -40.0


def _linear_ct_cast(path, header="pressure [dbar],temperature [degC],salinity", step=1.0, reverse=False,
                    dct_dp=-5e-4, top=1500.0, bottom=2500.0):
    """A cast whose conservative temperature is linear in pressure and absolute salinity uniform.

    The in-situ temperatures are made with TEOS-10's t_from_CT, so the file is
    what a CTD would record of that analytic water column.
    """
    p = np.arange(top, bottom + step / 2, step)
    SA = np.full_like(p, 34.9)
    CT = 2.0 + dct_dp * (p - bottom)
    t = gsw.t_from_CT(SA, CT, p)
    SP = gsw.SP_from_SA(SA, p, LON, LAT)
    rows = list(zip(p, t, SP))
    if reverse:
        rows = rows[::-1]
    lines = [header] + [f"{a:.3f},{b:.6f},{c:.6f}" for a, b, c in rows]
    path.write_text("\n".join(lines) + "\n")
    return p, SA, CT


def test_buoyancy_frequency_of_a_linear_ct_cast_matches_g_alpha_dct_dz(tmp_path):
    # Analytic check: with uniform SA, N² = g α_Θ dΘ/dz (TEOS-10 manual, IOC et al. 2010, eq. 3.10.2).
    f = tmp_path / "cast.csv"
    p, SA, CT = _linear_ct_cast(f)
    prof = read_ctd_cast(f, latitude=LAT, longitude=LON, window=Q_(10, "m"))
    pm = prof.sea_pressure.magnitude
    z = -gsw.z_from_p(pm, LAT)
    dct_dz = np.gradient(np.interp(pm, p, CT), -z)  # per metre upward
    expected = gsw.grav(LAT, pm) * gsw.alpha(34.9, np.interp(pm, p, CT), pm) * dct_dz
    got = np.interp(z, prof.n2_depth.magnitude, prof.buoyancy_frequency_squared.magnitude)
    assert np.allclose(got[2:-2], expected[2:-2], rtol=0.01)
    assert np.allclose(prof.absolute_salinity.magnitude, 34.9, atol=2e-4)
    assert prof.depth.magnitude[0] < prof.depth.magnitude[-1]


def test_binning_window_sets_the_level_spacing(tmp_path):
    f = tmp_path / "cast.csv"
    _linear_ct_cast(f, step=1.0)
    fine = read_ctd_cast(f, latitude=LAT, window=None)
    coarse = read_ctd_cast(f, latitude=LAT, window=Q_(20, "m"))
    assert fine.depth.size > 900
    spacing = np.diff(coarse.depth.magnitude)
    assert np.allclose(spacing[1:-1], 20.0, atol=0.5)


def test_depth_column_and_up_cast_give_the_same_profile(tmp_path):
    a, b = tmp_path / "a.csv", tmp_path / "b.csv"
    _linear_ct_cast(a)
    _linear_ct_cast(b, reverse=True)
    pa = read_ctd_cast(a, latitude=LAT, longitude=LON)
    pb = read_ctd_cast(b, latitude=LAT, longitude=LON)
    assert np.allclose(pa.conservative_temperature.magnitude, pb.conservative_temperature.magnitude, atol=1e-9)
    # a depth column instead of pressure: TEOS-10's z_from_p links them
    c = tmp_path / "c.csv"
    p = np.arange(1500.0, 2500.0, 2.0)
    z = -gsw.z_from_p(p, LAT)
    c.write_text("depth [m],temperature [degC],salinity\n" + "".join(
        f"{zz:.4f},{2.5 - 4e-4 * (pp - 1500):.5f},34.6\n" for zz, pp in zip(z, p)))
    pc = read_ctd_cast(c, latitude=LAT, window=None)
    assert np.allclose(pc.sea_pressure.magnitude, p, atol=1e-6)


def test_non_monotonic_cast_is_refused_naming_the_line(tmp_path):
    f = tmp_path / "loop.csv"
    f.write_text("pressure [dbar],temperature [degC],salinity\n2000,2.5,34.6\n2001,2.49,34.6\n2000.5,2.495,34.6\n"
                 "2002,2.48,34.6\n")
    with pytest.raises(InputError) as e:
        read_ctd_cast(f)
    assert e.value.where.endswith(":4") and "strictly increase" in e.value.allowed


@pytest.mark.parametrize("absurd", ["1e+30", "-50", "2e4"])
def test_a_row_outside_the_ocean_is_one_error_with_its_value_as_written(tmp_path, absurd):
    # One mistyped pressure: one line naming it as written, not a complaint about the rows after it (its order)
    # nor a depth computed from it; and no numpy overflow warning on the way.
    import warnings

    _linear_ct_cast(tmp_path / "cast.csv", header="sea_pressure [dbar],temperature [degC],salinity", step=10.0)
    lines = (tmp_path / "cast.csv").read_text().splitlines()
    lines[5] = absurd + lines[5][lines[5].index(","):]
    (tmp_path / "cast.csv").write_text("\n".join(lines) + "\n")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        with pytest.raises(InputError) as e:
            read_ctd_cast(tmp_path / "cast.csv", latitude=LAT, longitude=LON)
    assert e.value.where.endswith(":6")
    assert e.value.field == "sea_pressure" and e.value.value == f"{float(absurd):g}"
    # the limit is the pressure of 11000 m at the cast's latitude (TEOS-10's p_from_z)
    assert f"{float(gsw.p_from_z(-11000.0, LAT)):.0f} dbar" in e.value.allowed


def test_long_unstable_stretch_is_refused_short_one_kept(tmp_path):
    p = np.arange(1500.0, 2500.0, 1.0)
    t = 3.0 - 1e-3 * (p - 1500)
    bad = t.copy()
    bad[(p > 2000) & (p < 2200)] = 1.0 + 1e-3 * (p[(p > 2000) & (p < 2200)] - 2000)  # 200 m overturn
    short = t.copy()
    short[(p > 2000) & (p < 2015)] += 3e-3 * (p[(p > 2000) & (p < 2015)] - 2000)  # 15 m inversion
    for name, temp in (("bad", bad), ("short", short)):
        (tmp_path / f"{name}.csv").write_text("pressure [dbar],temperature [degC],salinity\n" + "".join(
            f"{a},{b:.5f},34.6\n" for a, b in zip(p, temp)))
    with pytest.raises(InputError, match="statically stable"):
        read_ctd_cast(tmp_path / "bad.csv")
    prof = read_ctd_cast(tmp_path / "short.csv")
    assert (prof.buoyancy_frequency_squared.magnitude < 0).any()


def test_missing_column_and_bad_cells_are_all_reported(tmp_path):
    f = tmp_path / "broken.csv"
    f.write_text("pressure [dbar],temperature [degC]\n2000,2.5\n")
    with pytest.raises(InputError, match="salinity"):
        read_ctd_cast(f)
    g = tmp_path / "cells.csv"
    g.write_text("pressure [dbar],temperature [degC],salinity\n2000,2.5,34.6\n2001,warm,34.6\n2002,2.4,\n")
    with pytest.raises(InputErrors) as e:
        read_ctd_cast(g)
    wheres = [x.where for x in e.value.errors]
    assert wheres == [f"{g}:3", f"{g}:4"]


def test_constant_stratification_has_the_requested_n():
    # gsw.Nsquared, TEOS-10's own N², applied to the built column (IOC et al. 2010).
    prof = constant_stratification(Q_(1.0e-3, "1/s"), Q_(2.0, "degC"), 34.6, depth=Q_(2500, "m"),
                                   height=Q_(800, "m"), latitude=LAT)
    n2 = prof.buoyancy_frequency_squared.to("1/s^2").magnitude
    assert np.allclose(n2, 1e-6, rtol=2e-3)
    assert prof.mean_buoyancy_frequency(2500.0, 300.0) == pytest.approx(1e-3, rel=2e-3)
    flat = uniform_ambient(Q_(2.0, "degC"), 34.6, depth=Q_(2500, "m"), height=Q_(100, "m"))
    assert np.allclose(flat.buoyancy_frequency_squared.magnitude, 0.0, atol=1e-12)


@pytest.mark.parametrize("N", [Q_(0, "1/s"), Q_(-1e-3, "1/s")])
def test_non_positive_n_is_refused(N):
    with pytest.raises(InputError, match="N > 0"):
        constant_stratification(N, Q_(2.0, "degC"), 34.6, depth=Q_(2500, "m"))


def test_vent_depth_from_pressure_follows_teos10():
    # TEOS-10 z_from_p: 25 MPa absolute is 2489.87 dbar of sea pressure.
    z = vent_depth_of(pressure=Q_(25, "MPa"), latitude=0.0)
    assert z == pytest.approx(-gsw.z_from_p(2489.8675, 0.0), rel=1e-9)
    with pytest.raises(InputError):
        vent_depth_of(depth=Q_(-5, "m"))
