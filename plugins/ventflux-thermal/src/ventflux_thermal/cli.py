"""Command-line access: ``probe-heat-flow``, ``profile-advection``, ``array-anomaly``.

Examples
--------
A whole cruise's penetrations, metadata read from each record's header::

    ventflux probe-heat-flow records/ --out heat_flow.csv --figures figs/

One record with its metadata given on the command line::

    ventflux probe-heat-flow pen07.csv --sensor-depths "0.5,1.0,1.5,2.0,2.5 m" --penetration-time "60 s" \\
        --pulse-time "600 s" --pulse-energy "700 J/m" --tilt "6 deg" --json

Fluid flow from a temperature-depth profile, and a thermistor array::

    ventflux profile-advection core12.csv --conductivity "1.0 ± 0.1 W/(m K)" --depth "2200 m" --json
    ventflux array-anomaly grid3.csv --reference ambient --patch mat=T1,T2,T3 --patch crack=T4,T5
"""

from __future__ import annotations

import csv
import io
import sys
from pathlib import Path

import numpy as np

from ventflux.plugin_api import (
    Q_,
    InputError,
    InputErrors,
    add_deprecated_option,
    add_monte_carlo_options,
    add_output_options,
    atomic_write_text,
    monte_carlo_settings,
    parse_quantity,
    parse_uncertain,
    print_json,
    print_table,
    subplots,
    write_output,
)

from .constants import DEFAULT_SALINITY, METHODS, ProbeConstants
from .jsonkeys import print_deprecation, si_json

# --------------------------------------------------------------------------- probe-heat-flow


def configure_probe(p):
    p.add_argument("records", nargs="+", help="probe record CSVs and/or folders of them (*.csv)")
    p.add_argument("--sensor-depths", help="sensor distances along the probe below the seafloor, e.g. '0.5,1.0,1.5 m'")
    p.add_argument("--penetration-time", help="time of penetration on the record's clock, e.g. '60 s'")
    p.add_argument("--pulse-time", help="time of the heat pulse, e.g. '600 s'")
    p.add_argument("--pulse-energy", help="heat-pulse energy per unit length, e.g. '700 J/m'")
    p.add_argument("--tilt", help="probe tilt from vertical, e.g. '6 deg' (default 0)")
    p.add_argument("--conductivity", help="known conductivities (one, or one per sensor, e.g. '0.9,1.0,1.1 W/(m K)') "
                                          "instead of the heat pulse")
    p.add_argument("--decay-model", choices=METHODS, default="cylinder",
                   help="cylinder: instantaneously heated cylinder; line-source: late-time 1/t asymptote")
    p.add_argument("--pulse-duration", help="length of the heat pulse from its logged start, e.g. '10 s' "
                                            "(default: the record's header, else 0 s)")
    p.add_argument("--exclude-sensor", action="append", default=[], metavar="SENSOR",
                   help="leave a sensor column out, e.g. T3 (repeatable, or comma-separated)")
    d = ProbeConstants()
    p.add_argument("--probe-radius", help=f"sensor-tube radius, may carry '± sd' (default: header, else "
                                          f"{d.radius * 1e3:g} mm)")
    p.add_argument("--probe-heat-capacity", help=f"probe volumetric heat capacity (default: header, else "
                                                 f"{d.probe_heat_capacity:g} J/(m^3 K))")
    p.add_argument("--sediment-heat-capacity", help=f"sediment volumetric heat capacity (default: header, else "
                                                    f"{d.sediment_heat_capacity:g} ± "
                                                    f"{d.uncertainty['sediment_heat_capacity']:g} J/(m^3 K))")
    p.add_argument("--station", action="store_true",
                   help="each record is a station's continuous record: find and reduce every penetration in it")
    p.add_argument("--navigation", help="navigation CSV (time, x/y [m] or latitude/longitude [deg]) for --station: "
                                        "positions and distance along the transect")
    p.add_argument("--out", help="write the table of penetrations to this CSV (units in the headers)")
    p.add_argument("--figures", help="folder for figures: T against thermal resistance and the decay fits")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    add_deprecated_option(p, "--no-progress", "--quiet", "quiet", takes_value=False)
    add_monte_carlo_options(p.add_argument_group("Monte Carlo of the conductivity fits"))
    add_output_options(p)



def _records(items):
    out = []
    for item in items:
        path = Path(item)
        if path.is_dir():
            found = sorted(path.glob("*.csv"))
            if not found:
                raise InputError("records", item, "a folder containing probe records (*.csv)")
            out.extend(found)
        elif path.is_file():
            out.append(path)
        else:
            raise InputError("records", item, "an existing record file or folder")
    return out


def _list_quantity(text, unit_dim, field):
    """'0.5,1.0,1.5 m' → quantity array (the unit after the last number applies to all)."""
    if text is None:
        return None
    parts = [s.strip() for s in text.split(",")]
    last = parse_quantity(parts[-1], unit_dim, field)
    try:
        values = [float(s) for s in parts[:-1]] + [float(last.magnitude)]
    except ValueError:
        raise InputError(field, text,
                         "comma-separated numbers with one unit at the end, e.g. '0.5,1.0,1.5 m'") from None
    return Q_(np.array(values), last.units)


def probe_options(args) -> dict:
    """The probe-reduction arguments of ``probe-heat-flow`` (quantities; None where not given)."""
    def q(text, dim, name, unit=None):
        return None if text is None else parse_quantity(text, dim, name, unit)

    def u(text, dim, name):
        return None if text is None else parse_uncertain(text, dim, name)

    overrides = {"radius": u(args.probe_radius, "length", "--probe-radius"),
                 "probe_heat_capacity": u(args.probe_heat_capacity, "volumetric heat capacity",
                                          "--probe-heat-capacity"),
                 "sediment_heat_capacity": u(args.sediment_heat_capacity, "volumetric heat capacity",
                                             "--sediment-heat-capacity")}
    exclude = tuple(s.strip() for item in args.exclude_sensor for s in item.split(",") if s.strip())
    return dict(
        sensor_depths=_list_quantity(args.sensor_depths, "length", "--sensor-depths"),
        penetration_time=q(args.penetration_time, "time", "--penetration-time", "s"),
        heat_pulse_time=q(args.pulse_time, "time", "--pulse-time", "s"),
        heat_pulse_energy=q(args.pulse_energy, "energy per length", "--pulse-energy"),
        heat_pulse_duration=q(args.pulse_duration, "time", "--pulse-duration", "s"),
        tilt=None if args.tilt is None else parse_uncertain(args.tilt, "angle", "--tilt", "degree"),
        conductivity=_list_quantity(args.conductivity, "thermal conductivity", "--conductivity"),
        method=args.decay_model, exclude_sensors=exclude, probe_overrides=overrides)


def run_probe(args) -> int:
    from .probe import probe_from_inputs, reduce_penetration, result_row

    mc = monte_carlo_settings(args)
    records = _records(args.records)
    kwargs = probe_options(args)
    probe = probe_from_inputs(None, {}, kwargs.pop("probe_overrides"), fields={
        "radius": "--probe-radius", "probe_heat_capacity": "--probe-heat-capacity",
        "sediment_heat_capacity": "--sediment-heat-capacity", "heat_pulse_energy": "--pulse-energy",
        "heat_pulse_duration": "--pulse-duration"})
    kwargs.update(probe=probe, keep_record=args.figures is not None, draws=mc.draws, seed=mc.seed,
                  max_unphysical=mc.max_unphysical)
    if args.navigation and not args.station:
        raise InputError("--navigation", args.navigation, "a navigation table together with --station")
    from tqdm import tqdm

    results, errors, stations = [], [], []
    bar = tqdm(records, desc="stations" if args.station else "penetrations", unit="record", file=sys.stderr,
               disable=True if (args.quiet or len(records) < 2) else None)
    for path in bar:  # one record per iteration; each reduction is vectorized inside
        try:
            if args.station:
                from .station import reduce_station

                st = reduce_station(path, **{k: v for k, v in kwargs.items() if k not in (
                    "penetration_time", "heat_pulse_time")}, navigation=args.navigation)
                stations.append(st)
                results.extend(st.results)
            else:
                results.append(reduce_penetration(path, **kwargs))
        except InputErrors as e:
            errors.extend(e.errors)
        except InputError as e:
            errors.append(e if e.where else InputError(e.field, e.value, e.allowed, where=str(path)))
    if args.figures and results:
        from .figures import decay_figure, record_figure, resistance_figure, transect_figure

        folder = Path(args.figures)
        for res in results:
            stem = Path(res.record).stem + (f"_{res.label}" if res.label else "")
            write_output("--figures", folder, resistance_figure, res, folder / f"{stem}_temperature_resistance.png")
            write_output("--figures", folder, decay_figure, res, folder / f"{stem}_decay_fits.png", probe)
        for st in stations:
            stem = Path(st.record).stem
            write_output("--figures", folder, record_figure, st, folder / f"{stem}_record.png")
            if st.results:
                write_output("--figures", folder, transect_figure, st, folder / f"{stem}_transect.png")
    rows = [result_row(r) for r in results]
    if args.station:
        where = {(st.record, r.label): st for st in stations for r in st.results}
        for row, r in zip(rows, results):
            st = where[(r.record, r.label)]
            pos = st.positions.get(r.label)
            row.update({"time": st.times.get(r.label, ""), "penetration_time [s]": r.penetration_time,
                        "x [m]": pos[0] if pos else "", "y [m]": pos[1] if pos else "",
                        "distance [m]": st.distance.get(r.label, "")})
    if args.out and rows:
        buf = io.StringIO()
        # the union of the rows' columns (an uncertainty part present for some penetrations only is blank for others)
        w = csv.DictWriter(buf, fieldnames=list(dict.fromkeys(k for row in rows for k in row)), restval="")
        w.writeheader()
        w.writerows({k: (f"{v:.6g}" if isinstance(v, float) else v) for k, v in row.items()} for row in rows)
        write_output("--out", args.out, atomic_write_text, args.out, buf.getvalue())
    if args.json:
        renamed: set[tuple[str, str]] = set()
        print_json(si_json({"method": "probe-heat-flow", "decay_model": args.decay_model, "draws": mc.draws,
                    "seed": mc.seed, "max_unphysical_share": mc.max_unphysical,
                    "unphysical_draws": sum(r.monte_carlo.get("unphysical_draws", 0) for r in results),
                    "penetrations": [r.as_dict() for r in results],
                    "skipped": {Path(st.record).name: st.skipped for st in stations if st.skipped},
                    "failed": [e.line() for e in errors]}, renamed))
        print_deprecation(renamed, "probe-heat-flow")
    else:
        for r in results:
            d = r.as_dict()
            table = [(f"{s['depth_m']:.3f} m", f"{s['equilibrium_temperature_degC']:.4f} °C  "
                      f"k={s['conductivity_W_m_K']:.4g}±{s['conductivity_uncertainty_W_m_K']:.2g} W/(m K) "
                      f"(fit SE {s['conductivity_se_W_m_K']:.2g})  "
                      f"res {s['residual_mK']:+.2f} mK", "") for s in d["sensors"]]
            parts = ", ".join(f"{k} {v:.2g}" for k, v in d["uncertainty_parts_mW_m2"].items())
            table.append(("heat flow", f"{d['heat_flow_mW_m2']:.2f} ± {d['heat_flow_uncertainty_mW_m2']:.2f} "
                          f"(total; {parts})", "mW/m^2"))
            table.append(("unphysical draws (dropped)", f"{d.get('unphysical_draws', 0)} of {mc.draws} (limit "
                          f"{100 * mc.max_unphysical:g} %)", ""))
            print_table(table, title=f"{Path(r.record).name}{' ' + r.label if r.label else ''} ({r.method})")
    for st in stations:
        for line in st.notes:
            print(f"warning: {line}", file=sys.stderr)
        for label, why in st.skipped.items():
            print(f"warning: {Path(st.record).name} ({label}): skipped: {why}", file=sys.stderr)
    for r in results:  # exclusions and doubts, one line each, on stderr
        for line in r.warnings + [f"{r.record}: {f}" for f in r.flags]:
            print(f"warning: {line}", file=sys.stderr)
    if errors:
        raise InputErrors(errors) if len(errors) > 1 else errors[0]
    return 0


# --------------------------------------------------------------------------- profile-advection


def configure_advection(p):
    p.add_argument("profile", help="CSV with 'depth [m]' (below the seafloor) and 'temperature [degC]'")
    p.add_argument("--conductivity", default="1.0 W/(m K)",
                   help="bulk sediment conductivity, e.g. '1.0 ± 0.1 W/(m K)' (default %(default)s)")
    p.add_argument("--absolute-pressure", dest="absolute_pressure",
                   help="absolute in-situ pressure at the seafloor, e.g. '22 MPa'")
    add_deprecated_option(p, "--pressure", "--absolute-pressure", "absolute_pressure")
    p.add_argument("--depth", help="seafloor depth below the sea surface, e.g. '2200 m' (instead of "
                                   "--absolute-pressure)")
    p.add_argument("--layer-thickness", help="thickness L of the layer (default: the deepest measurement)")
    p.add_argument("--fluid-heat-capacity", help="pore-fluid ρc, e.g. '4.0e6 J/(m^3 K)' (default: TEOS-10)")
    p.add_argument("--salinity", default=f"{DEFAULT_SALINITY:g}",
                   help="pore-fluid practical salinity (default %(default)s, typical deep water; from memory)")
    p.add_argument("--figure", help="PNG of the profile with the fitted curve")
    add_output_options(p)


def run_advection(args) -> int:
    from ventflux.plugin_api import pressure_from_depth

    from .advection import fit_advection, read_profile

    z, T = read_profile(args.profile)
    k = parse_uncertain(args.conductivity, "thermal conductivity", "--conductivity")
    if args.absolute_pressure is not None and args.depth is not None:
        raise InputError("--absolute-pressure/--depth", "both", "one of --absolute-pressure or --depth")
    p = None
    if args.absolute_pressure is not None:
        p = parse_quantity(args.absolute_pressure, "pressure", "--absolute-pressure")
    elif args.depth is not None:
        p = pressure_from_depth(parse_quantity(args.depth, "length", "--depth", "m"))
    L = None if args.layer_thickness is None else parse_quantity(args.layer_thickness, "length", "--layer-thickness")
    rc = None if args.fluid_heat_capacity is None else parse_quantity(args.fluid_heat_capacity,
                                                                      "volumetric heat capacity",
                                                                      "--fluid-heat-capacity")
    salinity = float(parse_quantity(args.salinity, "dimensionless", "--salinity").magnitude)
    if rc is None and p is None:
        raise InputError("--absolute-pressure/--depth", "(missing)", "the in-situ pressure or depth (for the pore "
                         "fluid's "
                         "heat capacity), or --fluid-heat-capacity")
    fit = fit_advection(z, T, k, pressure=p, layer_thickness=L, fluid_heat_capacity=rc, salinity=salinity)
    if args.figure:
        write_output("--figure", args.figure, _profile_figure, z, T, fit, args.figure)
    d = fit.as_dict()
    if args.json:
        renamed: set[tuple[str, str]] = set()
        print_json(si_json({"method": "profile-advection", **d}, renamed))
        print_deprecation(renamed, "profile-advection")
        return 0
    print_table([("Péclet number", f"{d['peclet']:.4g} ± {d['peclet_se']:.2g}", ""),
                 ("flow", d["direction"], ""),
                 ("Darcy velocity (up +)", f"{d['discharge_m_yr']:.4g} ± {d['discharge_se_m_yr']:.2g}", "m/yr"),
                 ("conductive heat flux at seafloor", d["conductive_heat_flux_W_m2"], "W/m^2"),
                 ("advective heat flux", d["advective_heat_flux_W_m2"], "W/m^2"),
                 ("misfit (rms)", d["misfit_rms_mK"], "mK")],
                title=f"{Path(args.profile).name}: steady advection-diffusion fit")
    return 0


def _profile_figure(z, T, fit, path):
    from .advection import profile_shape
    from .figures import _save

    zz = np.linspace(0, fit.layer_thickness, 100)
    model = fit.top_temperature + (fit.base_temperature - fit.top_temperature) * profile_shape(
        fit.peclet, zz / fit.layer_thickness)
    fig, ax = subplots(figsize=(4.5, 5))
    ax.plot(T.to("degC").magnitude, z.to("m").magnitude, "o", color="tab:red", label="measured")
    ax.plot(model - 273.15, zz, "-", color="0.3", label=f"Pe = {fit.peclet:.3g} ± {fit.peclet_se:.2g}")
    ax.invert_yaxis()
    ax.set_xlabel("temperature [°C]")
    ax.set_ylabel("depth below seafloor [m]")
    ax.legend()
    fig.set_layout_engine("tight")
    _save(fig, path)


# --------------------------------------------------------------------------- array-anomaly


def configure_array(p):
    p.add_argument("record", help="CSV: 'time [s]', the reference column and sensor columns, temperatures in degC/K")
    p.add_argument("--reference", default="ambient", help="name of the ambient reference column (default %(default)s)")
    p.add_argument("--sensors", help="comma-separated sensor columns (default: all but time and the reference)")
    p.add_argument("--patch", action="append", default=[], metavar="NAME=S1,S2",
                   help="sensors of one patch (repeatable; default one patch of all sensors)")
    p.add_argument("--peaks", type=int, default=3, help="dominant periods to report (default %(default)s)")
    add_output_options(p)


def run_array(args) -> int:
    from .array import array_anomalies, read_array_record

    sensors = None if args.sensors is None else [s.strip() for s in args.sensors.split(",") if s.strip()]
    t, T, ref, names = read_array_record(args.record, args.reference, sensors)
    patches = {}
    for item in args.patch:
        name, sep, members = item.partition("=")
        cols = [m.strip() for m in members.split(",") if m.strip()]
        if not sep or not name.strip() or not cols:
            raise InputError("--patch", item, "NAME=SENSOR1,SENSOR2,...")
        unknown = [c for c in cols if c not in names]
        if unknown:
            raise InputError("--patch", item, "sensor columns of the record: " + ", ".join(names))
        if name.strip() in patches:
            raise InputError("--patch", item, "a patch name given once (each --patch names a different patch)")
        patches[name.strip()] = cols
    if not 1 <= args.peaks <= 20:
        raise InputError("--peaks", args.peaks, "1 to 20 periods")
    res = array_anomalies(t, T, ref, names, patches or None, n_peaks=args.peaks)
    d = res.as_dict()
    if args.json:
        renamed: set[tuple[str, str]] = set()
        print_json(si_json({"method": "array-anomaly", **d}, renamed))
        print_deprecation(renamed, "array-anomaly")
        return 0
    rows = [(s["sensor"], f"{s['mean_anomaly_K']:.4g} ± {s['std_anomaly_K']:.2g}",
             "K; periods " + _periods(s["dominant_periods_h"])) for s in d["sensors"]]
    print_table(rows, title="anomaly per sensor (mean ± sd in time)")
    rows = [(name, v["anomaly_for_diffuse"], "periods " + _periods(v["dominant_periods_h"]))
            for name, v in d["patches"].items()]
    print_table(rows, title="anomaly per patch (for 'ventflux diffuse --anomaly')")
    return 0


def _periods(hours):
    return ", ".join(f"{p:.3g}" for p in hours) + " h" if hours else "none found"
