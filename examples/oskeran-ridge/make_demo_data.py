"""Make the data files of the fictional Oskeran Ridge survey (cruise OSK-26).

Everything here is invented: the site, its vents, the numbers. They are
plausible in magnitude for a basalt-hosted vent field at about 2.5 km depth
and serve only as a demonstration; no check of ventflux uses them.

Run: python make_demo_data.py   (writes into data/ next to this script; deterministic)
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
DATA = HERE / "data"
RNG = np.random.default_rng(2026_11_07)


def write_csv(path, header, rows, comment=None):
    path.parent.mkdir(parents=True, exist_ok=True)
    with open(path, "w", newline="", encoding="utf-8") as fh:
        if comment:
            fh.write(f"# {comment}\n")
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)


def ctd_cast():
    """A downcast from 1500 m to about 1 m above the seafloor at 2480 m, 2 dbar bins.

    Deep-water stratification of the invented site: potential temperature
    falling by about 0.9 K over the lowest kilometre, salinity rising slightly,
    which gives a buoyancy frequency near 1e-3 1/s, with 1 mK sensor noise.
    """
    import gsw

    p = np.arange(1520.0, 2512.0 + 0.1, 2.0)  # sea pressure, dbar (to about 1 m above the seafloor)
    z = -gsw.z_from_p(p, -17.3)
    theta = 2.02 + 0.95 * np.exp(-(z - 1500.0) / 520.0) - 0.95 * np.exp(-(2480 - 1500.0) / 520.0)
    sp = 34.686 - 0.045 * np.exp(-(z - 1500.0) / 600.0)
    sa = gsw.SA_from_SP(sp, p, -113.6, -17.3)
    ct = gsw.CT_from_pt(sa, theta)
    t = gsw.t_from_CT(sa, ct, p) + RNG.normal(0, 0.001, p.size)
    rows = [(f"{a:.1f}", f"{b:.4f}", f"{c:.4f}") for a, b, c in zip(p, t, sp + RNG.normal(0, 0.0005, p.size))]
    write_csv(DATA / "ctd_cast.csv", ["sea_pressure [dbar]", "temperature [degC]", "salinity"], rows,
              "Oskeran Ridge, cast OSK-26-C03 (invented), in-situ temperature, practical salinity")


def patches():
    """Sampled diffuse-flow patches: photo-mosaic areas, thermistor anomalies, seepage velocities."""
    classes = {"mat": (8, 3.5, 0.45, 0.25), "cracked basalt": (6, 2.0, 0.25, 0.2), "sediment": (4, 0.8, 0.15, 0.06)}
    rows = []
    k = 1
    for cls, (n, dT, frac, w_cm) in classes.items():
        for _ in range(n):
            area = RNG.uniform(4, 35)
            rows.append((f"P{k:02d}", cls, f"{area:.1f}", f"{area * 0.08:.1f}",
                         f"{np.clip(frac * RNG.lognormal(0, 0.3), 0.02, 0.95):.2f}", "0.05",
                         f"{dT * RNG.lognormal(0, 0.35):.2f}", f"{0.3 + 0.1 * dT:.2f}",
                         f"{w_cm * RNG.lognormal(0, 0.4):.3f}", f"{0.3 * w_cm:.3f}"))
            k += 1
    # Where each patch is, east/north of the Gildhorn spire (the survey's local origin): mats close around the
    # vents, cracked basalt farther out, sediment on the apron. A stream of its own, so the other data stay as
    # they were before positions were added.
    pos = np.random.default_rng(2026_12_02)
    reach = {"mat": (10, 60), "cracked basalt": (50, 140), "sediment": (120, 260)}
    rows = [r + tuple(f"{v:.0f}" for v in _east_north(pos, *reach[r[1]])) for r in rows]
    write_csv(DATA / "patches.csv",
              ["patch", "class", "area [m^2]", "area_sd [m^2]", "active_fraction", "active_fraction_sd",
               "temperature_anomaly [K]", "temperature_anomaly_sd [K]", "velocity [cm/s]", "velocity_sd [cm/s]",
               "east [m]", "north [m]"],
              rows, "diffuse-flow patches sampled on dives OSK-26-D04 to D09 (invented); east/north from the "
                    "Gildhorn spire")
    write_csv(DATA / "area_classes.csv", ["class", "area [m^2]", "area_sd [m^2]"],
              [("mat", "1850", "250"), ("cracked basalt", "4200", "600"), ("sediment", "9500", "1500")],
              "mapped area of each seafloor class from the photo mosaic (invented)")


def _east_north(rng, near, far):
    """A point at a distance from ``near`` to ``far`` metres of the origin, in any direction."""
    r, a = rng.uniform(near, far), rng.uniform(0, 2 * np.pi)
    return r * np.sin(a), r * np.cos(a)


def probe_records():
    """Four sediment heat-flow penetrations on the sediment apron west of the field.

    Each record is rendered from the decay of an instantaneously heated cylinder
    (the same model the reduction fits; fine for demo data, which is no check):
    frictional heating at penetration, a calibrated heat pulse 7 minutes later,
    1 mK sensor noise, equilibrium temperatures from T0 + q R(z).
    """
    from ventflux_thermal.decay import cylinder_decay

    radius, rc_probe, rc_sed = 0.004, 3.4e6, 3.4e6
    alpha = 2 * rc_sed / rc_probe
    t = np.arange(0.0, 900.0 + 0.5, 1.0)
    t_pen, t_hp, energy, tilt = 60.0, 480.0, 700.0, 5.0
    along = np.array([0.6, 1.2, 1.8, 2.4, 3.0])
    depth = along * np.cos(np.radians(tilt))
    for k_station, (name, q) in enumerate([("OSK26-HF01", 1.9), ("OSK26-HF02", 1.2), ("OSK26-HF03", 2.6),
                                           ("OSK26-HF04", 0.9)]):
        k = RNG.uniform(0.85, 1.15, along.size)
        R = np.cumsum(np.diff(np.concatenate([[0.0], depth])) / k)
        T_eq = 2.06 + q * R
        cols = []
        for i in range(along.size):
            kappa = k[i] / rc_sed
            Ti = np.full(t.size, 2.06)
            on = t >= t_pen
            A = RNG.uniform(0.6, 1.4)
            Ti[on] = T_eq[i] + A * cylinder_decay(alpha, kappa * (t[on] - t_pen + 2.0) / radius**2)
            hp = t > t_hp
            Ti[hp] += energy / (np.pi * radius**2 * rc_probe) * cylinder_decay(alpha, kappa * (t[hp] - t_hp) /
                                                                                radius**2)
            cols.append(Ti + RNG.normal(0, 0.001, t.size))
        path = DATA / "probes" / f"{name}.csv"
        path.parent.mkdir(parents=True, exist_ok=True)
        with open(path, "w", newline="", encoding="utf-8") as fh:
            fh.write(f"# station {name}, Oskeran Ridge sediment apron (invented)\n")
            fh.write(f"# penetration_time [s]: {t_pen:g}\n# heat_pulse_time [s]: {t_hp:g}\n")
            fh.write(f"# heat_pulse_energy [J/m]: {energy:g}\n# tilt [deg]: {tilt:g}\n")
            fh.write("# sensor_depths [m]: " + ", ".join(f"{a:g}" for a in along) + "\n")
            w = csv.writer(fh)
            w.writerow(["time [s]"] + [f"T{i + 1} [degC]" for i in range(along.size)])
            for j in range(t.size):
                w.writerow([f"{t[j]:.1f}"] + [f"{c[j]:.4f}" for c in cols])
        del k_station


def flank_heat_flow():
    """Conductive heat flow measured on the ridge flank east of the field (a heat-flow transect).

    Values fall short of a conductive cooling reference by about half, as
    circulation on young flanks is expected to make them (plausible magnitudes).
    """
    ages = np.array([0.6, 1.1, 1.7, 2.4, 3.2, 4.1, 5.0, 6.2])
    q = 500.0 / np.sqrt(ages) * RNG.uniform(0.35, 0.6, ages.size)
    write_csv(DATA / "flank_heat_flow.csv", ["age [Myr]", "heat_flow [mW/m^2]"],
              [(f"{a:.1f}", f"{b:.0f}") for a, b in zip(ages, q)],
              "ridge-flank heat-flow transect OSK-26-T1 (invented): crustal age from magnetic anomalies")


def video_clip():
    """Two seconds of the Gildhorn main spire's plume, filmed from the submersible (synthetic).

    A particle texture advected by the pure-plume centreline law w = k (F/z)^(1/3)
    with the buoyancy flux of a 10.5 MW plume at the site (TEOS-10), rendered at
    4 mm a pixel and 50 frames a second by the video plugin's generator, seen as a
    dive camera sees it: through the whole plume (tracer 1.1 times as wide as the
    velocity profile), not on a light sheet.
    """
    import gsw
    from ventflux.properties.seawater import CP0
    from ventflux_video.synthetic import render_plume_clip

    p_sea = gsw.p_from_z(-2480.0, -17.3)
    sa = gsw.SA_from_SP(34.686, p_sea, -113.6, -17.3)
    ct = gsw.CT_from_t(sa, 2.06, p_sea)
    rho, alpha = gsw.rho(sa, ct, p_sea), gsw.alpha(sa, ct, p_sea)
    g = gsw.grav(-17.3, p_sea)
    F = g * alpha * 10.5e6 / (rho * CP0)
    truth = render_plume_clip(DATA / "gildhorn_jet.mp4", seconds=2.0, shape=(256, 160), buoyancy_flux=F,
                              virtual_origin=-0.3, metres_per_pixel=0.004, frame_rate=50.0, lateral_sd=0.2, seed=26,
                              width_ratio=1.1)
    print(f"clip: F = {F:.3g} m^4/s^3, orifice at pixel {truth.orifice_xy}")


if __name__ == "__main__":
    ctd_cast()
    patches()
    probe_records()
    flank_heat_flow()
    video_clip()
    print(f"wrote demo data to {DATA}")
