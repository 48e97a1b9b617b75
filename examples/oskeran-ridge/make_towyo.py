"""Make the demo tow-yo of the fictional Oskeran Ridge survey (cruise OSK-26): data/towyo.csv.

Everything is invented. A CTD with a light-backscatter sensor is towed across the field's plume layer,
2.6 km downstream of the vents, on a line heading 350° (the current flows toward 80°, across it), yo-ing
between 1950 and 2450 m at 1 m/s while the ship makes 0.4 m/s. The plume layer is an analytic one:
a density-compensated Gaussian conservative-temperature anomaly (peak 10 mK, 18 m thick (sd), 350 m wide
(sd), core 225 m above the vents at 2480 m), advected steadily by a uniform 4 cm/s current, over the
background of the demo's CTD cast (make_demo_data.py); the backscatter anomaly follows the same layer.
Its heat flux is ρ c_p0 u a 2π σz σx ≈ 66 MW, of the order of the demo field's total.
Sensor noise: 0.5 mK on temperature, 0.0002 on salinity, 0.002 on backscatter.

A current meter moored beside the line records every 10 minutes (data/towyo_currents.csv): the same 4 cm/s
toward 80°, with a semidiurnal oscillation of 0.8 cm/s amplitude along it and 0.3 cm/s of noise per component
(invented).

Run: python make_towyo.py   (writes data/towyo.csv and data/towyo_currents.csv next to this script;
deterministic)
"""

from __future__ import annotations

import csv
from pathlib import Path

import gsw
import numpy as np

HERE = Path(__file__).resolve().parent
LAT0, LON0 = -17.3, -113.6  # the demo site's invented position
VENT_DEPTH = 2480.0


def main():
    rng = np.random.default_rng(2026_12_02)
    z_top, z_bot, winch, ship = 1950.0, 2450.0, 1.0, 0.4
    half = (z_bot - z_top) / winch  # one cast, s
    n_casts = 16
    t = np.arange(0.0, n_casts * half, 1.0)
    ph = (t % (2 * half)) / half
    z = np.where(ph < 1, z_top + ph * (z_bot - z_top), z_bot - (ph - 1) * (z_bot - z_top))
    s = ship * t  # along track, m
    heading = np.radians(350.0)
    x0, y0 = 2600.0 * np.sin(np.radians(80.0)), 2600.0 * np.cos(np.radians(80.0))  # line centre, from the vents
    east = x0 + (s - s[-1] / 2) * np.sin(heading)
    north = y0 + (s - s[-1] / 2) * np.cos(heading)
    lat = LAT0 + np.degrees(north / 6_371_008.8)
    lon = LON0 + np.degrees(east / (6_371_008.8 * np.cos(np.radians(LAT0))))
    p = gsw.p_from_z(-z, LAT0)
    theta = 2.02 + 0.95 * np.exp(-(z - 1500.0) / 520.0) - 0.95 * np.exp(-(2480 - 1500.0) / 520.0)
    sp = 34.686 - 0.045 * np.exp(-(z - 1500.0) / 600.0)
    sa = gsw.SA_from_SP(sp, p, lon, lat)
    ct = gsw.CT_from_pt(sa, theta)
    shape = np.exp(-0.5 * ((z - (VENT_DEPTH - 225.0)) / 18.0) ** 2) * np.exp(-0.5 * ((s - s[-1] / 2) / 350.0) ** 2)
    dct = 0.010 * shape
    sa2 = sa + dct * gsw.alpha_on_beta(sa, ct, 0.0)  # same σ0: water spreading at its level of neutral buoyancy
    temp = gsw.t_from_CT(sa2, ct + dct, p) + rng.normal(0, 5e-4, t.size)
    sal = gsw.SP_from_SA(sa2, p, lon, lat) + rng.normal(0, 2e-4, t.size)
    optical = 0.120 + 0.040 * shape + rng.normal(0, 0.002, t.size)
    path = HERE / "data" / "towyo.csv"
    path.parent.mkdir(parents=True, exist_ok=True)
    with open(path, "w", newline="", encoding="utf-8") as fh:
        fh.write("# Oskeran Ridge, tow-yo OSK-26-T01 (invented): sea pressure, in-situ temperature, practical "
                 "salinity, light backscatter (relative units)\n")
        w = csv.writer(fh)
        w.writerow(["time [s]", "latitude [degree]", "longitude [degree]", "sea_pressure [dbar]", "temperature [degC]",
                    "salinity", "optical"])
        w.writerows((f"{a:.0f}", f"{b:.6f}", f"{c:.6f}", f"{d:.2f}", f"{e:.5f}", f"{f:.5f}", f"{g:.4f}")
                    for a, b, c, d, e, f, g in zip(t, lat, lon, p, temp, sal, optical))
    write_current_record(HERE / "data" / "towyo_currents.csv", t[-1], rng)
    rho = float(gsw.rho(np.mean(sa), np.mean(ct), float(gsw.p_from_z(-(VENT_DEPTH - 225.0), LAT0))))
    print(f"wrote {path} ({t.size} samples); analytic heat flux "
          f"{rho * 3991.86795711963 * 0.04 * 0.010 * 2 * np.pi * 18.0 * 350.0 / 1e6:.1f} MW")


def write_current_record(path, duration, rng):
    """The moored current meter's record: 10-minute samples spanning the tow-yo with 20 minutes to spare."""
    tr = np.arange(-1200.0, duration + 1800.0, 600.0)
    speed = 0.04 + 0.008 * np.sin(2 * np.pi * tr / (12.42 * 3600.0))  # semidiurnal period (common practice)
    b = np.radians(80.0)
    ue = speed * np.sin(b) + rng.normal(0, 0.003, tr.size)
    un = speed * np.cos(b) + rng.normal(0, 0.003, tr.size)
    with open(path, "w", newline="", encoding="utf-8") as fh:
        fh.write("# Oskeran Ridge, current meter OSK-26-M1 (invented), moored beside the tow-yo line; times on "
                 "the tow-yo's clock\n")
        w = csv.writer(fh)
        w.writerow(["time [s]", "current_east [m/s]", "current_north [m/s]"])
        w.writerows((f"{a:.0f}", f"{e:.4f}", f"{n:.4f}") for a, e, n in zip(tr, ue, un))


if __name__ == "__main__":
    main()
