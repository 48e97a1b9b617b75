"""An analytic tow-yo across a Gaussian plume layer advected by a uniform current, for tests and benchmarks.

Built independently of the plugin (only gsw, the TEOS-10 reference library, and numpy):

- background: potential temperature linear in practical salinity (θ = θ0 + G (S − S0)), salinity
  linear in depth;
- plume layer: a conservative-temperature anomaly ΔΘ(x, z) = a exp(−(z − zc)²/2σz²) exp(−(x − xc)²/2σx²),
  density-compensated (absolute salinity raised by ΔΘ·α/β, gsw.alpha_on_beta, so σ0 is unchanged, as for
  water spreading at its level of neutral buoyancy);
- current: uniform, speed u, normal to the section;
- known heat flux H = ρ c_p0 u a (2π σz σx) (the Gaussian's integral, with ρ at the core).

The instrument runs along x at ``ship`` m/s while yo-ing between ``z_top`` and ``z_bottom`` at ``winch`` m/s,
sampling at 1 Hz, with sensor noise on temperature and salinity.
"""

import gsw
import numpy as np

CP0 = 3991.86795711963  # TEOS-10 c_p0, J/(kg K) (IOC et al. 2010, eq. 3.3.3)


def towyo(n_profiles=20, spacing=None, ship=0.5, winch=1.0, z_top=1900.0, z_bottom=2400.0, a=0.03, zc=2150.0,
          sz=30.0, xc=None, sx=None, u=0.05, t_noise=3e-4, s_noise=1e-4, lat=-17.3, lon=-113.6, seed=1):
    t, z = _yo(n_profiles, winch, z_top, z_bottom)
    x = ship * t
    length = x[-1]
    xc = 0.5 * length if xc is None else xc
    sx = 0.12 * length if sx is None else sx
    dct = a * np.exp(-0.5 * ((z - zc) / sz) ** 2) * np.exp(-0.5 * ((x - xc) / sx) ** 2)
    out = _water(t, z, dct, zc, t_noise, s_noise, lat, lon, seed)
    H = out["rho_core"] * CP0 * u * a * 2 * np.pi * sz * sx
    return {**out, "east": x, "north": np.zeros_like(t), "heat_flux": H, "xc": xc, "sx": sx, "zc": zc, "sz": sz,
            "a": a}


def _yo(n_profiles, winch, z_top, z_bottom):
    """Times (1 Hz) and depths of a yo between ``z_top`` and ``z_bottom`` at ``winch`` m/s."""
    period = 2 * (z_bottom - z_top) / winch  # one down- and one up-cast, s
    t = np.arange(0.0, n_profiles * period / 2, 1.0)
    phase = (t % period) / period
    z = np.where(phase < 0.5, z_top + 2 * phase * (z_bottom - z_top), z_bottom - (2 * phase - 1) * (z_bottom - z_top))
    return t, z


def _water(t, z, dct, zc, t_noise, s_noise, lat, lon, seed):
    """In-situ temperature and practical salinity of the background plus a density-compensated ΔΘ, with noise."""
    rng = np.random.default_rng(seed)
    p = gsw.p_from_z(-z, lat)
    S0, S1 = 34.64, 34.69
    sp_b = S0 + (S1 - S0) * (z - 1800.0) / 700.0
    theta_b = 2.6 - 10.0 * (sp_b - S0)  # linear θ–S
    sa = gsw.SA_from_SP(sp_b, p, lon, lat)
    ct = gsw.CT_from_pt(sa, theta_b)
    sa2 = sa + dct * gsw.alpha_on_beta(sa, ct, 0.0)
    ct2 = ct + dct
    temp = gsw.t_from_CT(sa2, ct2, p) + rng.normal(0, t_noise, t.size)
    sp = gsw.SP_from_SA(sa2, p, lon, lat) + rng.normal(0, s_noise, t.size)
    pc = gsw.p_from_z(-zc, lat)
    rho_c = float(gsw.rho(gsw.SA_from_SP(np.interp(zc, z[np.argsort(z)], sp_b[np.argsort(z)]), pc, lon, lat),
                          np.interp(zc, np.sort(z), ct[np.argsort(z)]), pc))
    return {"time": t, "pressure": p, "temperature": temp, "salinity": sp, "latitude": lat, "longitude": lon,
            "depth": z, "noise_theta": t_noise, "rho_core": rho_c}


def box_sides(side=2000.0, a=0.03, zc=2150.0, sz=20.0, sc=120.0, bearing=70.0, onset=100.0, n_profiles=40,
              winch=2.0, z_top=1950.0, z_bottom=2350.0, u=0.05, t_noise=3e-4, s_noise=1e-4, lat=-17.3, lon=-113.6,
              seed=2):
    """Four tow-yos along the sides of a square box around a steady source at its centre (east/north 0, 0).

    The current is uniform, ``u`` toward ``bearing``. The source's layer is a density-compensated
    ΔΘ = a exp(−(z − zc)²/2σz²) exp(−c²/2σc²) S(l), with l the distance downstream of the source along the
    current, c across it, and S(l) = (1 + tanh(l/onset))/2 the layer switching on over the source. It is
    steady and carried by a divergence-free current, so the heat leaving the box is what the source adds:
    H = ρ c_p0 u a 2π σz σc (the tube's cross-section integral times u; S → 1 downstream, 0 upstream).
    Sides run north, east, south, west (clockwise from the north-west corner).
    """
    h = side / 2
    corners = [(-h, h), (h, h), (h, -h), (-h, -h)]
    b = np.radians(bearing)
    along_dir = np.array([np.sin(b), np.cos(b)])
    sides = []
    for k in range(4):
        (e0, n0), (e1, n1) = corners[k], corners[(k + 1) % 4]
        t, z = _yo(n_profiles, winch, z_top, z_bottom)
        f = t / t[-1]
        e, n = e0 + f * (e1 - e0), n0 + f * (n1 - n0)
        along = e * along_dir[0] + n * along_dir[1]
        cross = e * along_dir[1] - n * along_dir[0]
        dct = a * np.exp(-0.5 * ((z - zc) / sz) ** 2) * np.exp(-0.5 * (cross / sc) ** 2) * 0.5 * (
            1 + np.tanh(along / onset))
        w = _water(t, z, dct, zc, t_noise, s_noise, lat, lon, seed + k)
        sides.append({**w, "east": e, "north": n})
    H = sides[0]["rho_core"] * CP0 * u * a * 2 * np.pi * sz * sc
    return sides, H


def write_csv(path, d):
    cols = ["time [s]", "east [m]", "north [m]", "sea_pressure [dbar]", "temperature [degC]", "salinity"]
    arr = np.column_stack([d["time"], d["east"], d["north"], d["pressure"], d["temperature"], d["salinity"]])
    np.savetxt(path, arr, delimiter=",", header=",".join(cols), comments="", fmt="%.10g")
    return path
