"""Ambient seawater through the property layer against TEOS-10's check values."""

from pathlib import Path

import gsw
import numpy as np
import pytest

from ventflux.errors import InputError
from ventflux.properties import pressure_from_depth, seawater_state
from ventflux.units import Q_

# gsw-python ships the TEOS-10 check values computed by the reference
# (MATLAB) GSW toolbox, with a tolerance for each function ("_ca").
CHECK = Path(gsw.__file__).parent / "tests" / "gsw_cv_v3_0.npz"


@pytest.fixture(scope="module")
def cv():
    if not CHECK.exists():
        pytest.skip("gsw check-value file not installed")
    return np.load(CHECK)


def test_seawater_state_reproduces_teos10_check_values(cv):
    SP, t, p = cv["SP_chck_cast"], cv["t_chck_cast"], cv["p_chck_cast"]
    lon = np.broadcast_to(cv["long_chck_cast"], SP.shape)
    lat = np.broadcast_to(cv["lat_chck_cast"], SP.shape)
    ok = np.isfinite(SP) & np.isfinite(t) & np.isfinite(p)
    s = seawater_state(Q_(t[ok], "degC"), SP[ok], Q_(p[ok] * 1e4 + 101325.0, "Pa"), lon[ok], lat[ok])
    checks = [
        (s.absolute_salinity.to("g/kg").magnitude, cv["SA_from_SP"][ok], cv["SA_from_SP_ca"]),
        (s.conservative_temperature.to("degC").magnitude, cv["CT_from_t"][ok], cv["CT_from_t_ca"]),
        (s.density.to("kg/m^3").magnitude, cv["rho"][ok], cv["rho_ca"]),
        (s.thermal_expansion.to("1/K").magnitude, cv["alpha"][ok], cv["alpha_ca"]),
        (s.heat_capacity.to("J/(kg*K)").magnitude, cv["cp_t_exact"][ok], cv["cp_t_exact_ca"]),
        (s.enthalpy.to("J/kg").magnitude, cv["enthalpy_t_exact"][ok], cv["enthalpy_t_exact_ca"]),
    ]
    for ours, ref, tol in checks:
        # The sea-pressure conversion (absolute - 101325 Pa) round-trips to ~1e-12 dbar.
        np.testing.assert_allclose(ours, ref, rtol=0, atol=10 * float(tol) + 1e-12 * np.abs(ref).max())


def test_pressure_from_depth_matches_teos10_check_values(cv):
    # The check value p_from_z is computed at the heights z_from_p (negative down).
    depth = -cv["z_from_p"]
    p_ref = cv["p_from_z"]
    lat = np.broadcast_to(cv["lat_chck_cast"], depth.shape)
    ok = np.isfinite(depth) & np.isfinite(p_ref)
    p = pressure_from_depth(Q_(np.abs(depth[ok]), "m"), lat[ok])
    tol = 10 * float(cv["p_from_z_ca"]) * 1e4
    np.testing.assert_allclose(p.to("Pa").magnitude, p_ref[ok] * 1e4 + 101325.0, rtol=0, atol=tol + 1e-6)


def test_standard_seawater_density_near_reference():
    # Density of SP = 35 seawater at 0 degC and the surface: 1028.1 kg/m3
    # (TEOS-10 manual, Table D.4 neighbourhood; from memory, to 0.1 kg/m3).
    s = seawater_state(Q_(0, "degC"), 35.0, Q_(101325, "Pa"))
    assert s.density.to("kg/m^3").magnitude == pytest.approx(1028.1, abs=0.1)


def test_outside_teos10_funnel_is_refused():
    with pytest.raises(InputError) as err:
        seawater_state(Q_(60, "degC"), 35.0, Q_(25, "MPa"))
    assert err.value.field == "ambient temperature"
    with pytest.raises(InputError):
        seawater_state(Q_(2, "degC"), 50.0, Q_(25, "MPa"))


def test_negative_depth_refused():
    with pytest.raises(InputError):
        pressure_from_depth(Q_(-10, "m"))
