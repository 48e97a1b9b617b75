"""A catalogue of bad inputs, one per row, across every command and the survey file.

Each row is a user's mistake: a typo of a unit or an exponent, a value that
is physically impossible, a broken data file, a path that cannot be used.
For each, ventflux must answer with exit status 2 and exactly one line per
problem on standard error, each naming the key or option (the survey's full
key path, or the data file and line), with no traceback, and write nothing.
The commands run in-process through ``ventflux.cli.main``.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

from ventflux.cli import main

DEMO = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge"

ORIFICE = ["orifice", "--exit-temperature", "352 degC", "--velocity", "1.4 ± 0.2 m/s", "--diameter", "12 cm",
           "--depth", "2550 m", "--ambient-temperature", "2.1 degC", "--draws", "200"]
PLUME = ["plume-rise", "--rise-height", "250 ± 30 m", "--buoyancy-frequency", "1.0e-3/s",
         "--ambient-temperature", "2.0degC", "--ambient-salinity", "34.6", "--absolute-pressure", "25MPa",
         "--draws", "200"]
DIFFUSE = ["diffuse", "--area", "12 m^2", "--active-fraction", "0.4", "--anomaly", "3.2 ± 0.5 K",
           "--velocity", "0.8 ± 0.2 cm/s", "--ambient-temperature", "2.1 degC", "--depth", "2200 m", "--draws", "200"]
WATER = ["summarize", "water", "--heat-power", "100 ± 20 MW", "--exit-temperature", "350 degC",
         "--absolute-pressure", "25 MPa",
         "--ambient-temperature", "2 degC", "--draws", "200"]
RESERVOIR = ["summarize", "reservoir", "--heat-power", "100 MW", "--volume", "0.01 km^3", "--temperature-drop", "800 K",
             "--porosity", "0", "--draws", "200"]
SIZE = ["summarize", "size", "--heat-power", "100 MW", "--duration", "10 yr", "--temperature-drop", "800 K",
        "--porosity", "0", "--area", "1 km^2", "--draws", "200"]
FLANK = ["summarize", "flank", "--observed", "1 Myr=250 mW/m^2", "--observed", "2 Myr=200 mW/m^2", "--draws", "200"]


def _with(base, option, value):
    """``base`` with ``option`` set to ``value`` (replaced if present, appended if not)."""
    args = list(base)
    if option in args:
        args[args.index(option) + 1] = value
    else:
        args += [option, value]
    return args


def _without(base, option):
    args = list(base)
    i = args.index(option)
    del args[i:i + 2]
    return args


# (id, command line, the names that must appear, one per expected line)
CLI_CASES = [
    # orifice
    ("orifice-velocity-1e30", _with(ORIFICE, "--velocity", "1e30 m/s"), ["--velocity"]),
    ("orifice-velocity-inf", _with(ORIFICE, "--velocity", "inf m/s"), ["--velocity"]),
    ("orifice-velocity-nan", _with(ORIFICE, "--velocity", "nan m/s"), ["--velocity"]),
    ("orifice-velocity-no-unit", _with(ORIFICE, "--velocity", "1.4"), ["--velocity"]),
    ("orifice-velocity-wrong-dimension", _with(ORIFICE, "--velocity", "1.4 m"), ["--velocity"]),
    ("orifice-velocity-huge-spread", _with(ORIFICE, "--velocity", "2 ± 15 m/s"), ["--velocity"]),
    ("orifice-velocity-negative", _with(ORIFICE, "--velocity", "-1 m/s"), ["--velocity"]),
    ("orifice-diameter-inf", _with(ORIFICE, "--diameter", "inf cm"), ["--diameter"]),
    ("orifice-diameter-1e-30", _with(ORIFICE, "--diameter", "1e-30 mm"), ["--diameter"]),
    ("orifice-diameter-km", _with(ORIFICE, "--diameter", "12 km"), ["--diameter"]),
    ("orifice-diameter-typo-unit", _with(ORIFICE, "--diameter", "12 cmm"), ["--diameter"]),
    ("orifice-area-727-km2", _with(_without(ORIFICE, "--diameter"), "--area", "727 km^2"), ["--area"]),
    ("orifice-temperature-overflow", _with(ORIFICE, "--exit-temperature", "1e999 degC"), ["--exit-temperature"]),
    ("orifice-temperature-5000C", _with(ORIFICE, "--exit-temperature", "5000 degC"), ["--exit-temperature"]),
    ("orifice-temperature-uniform-reversed", _with(ORIFICE, "--exit-temperature", "uniform(360, 340) degC"),
     ["--exit-temperature"]),
    ("orifice-temperature-lognormal-degC", _with(ORIFICE, "--exit-temperature", "lognormal(350, 1.1) degC"),
     ["--exit-temperature"]),
    ("orifice-ambient-minus-5", _with(ORIFICE, "--ambient-temperature", "-5 degC"), ["--ambient-temperature"]),
    ("orifice-ambient-salinity-60", _with(ORIFICE, "--ambient-salinity", "60"), ["--ambient-salinity"]),
    ("orifice-depth-20-km", _with(ORIFICE, "--depth", "20 km"), ["--depth"]),
    ("orifice-depth-nan", _with(ORIFICE, "--depth", "nan m"), ["--depth"]),
    ("orifice-seed-negative", _with(ORIFICE, "--seed", "-1"), ["--seed"]),
    ("orifice-seed-2-32", _with(ORIFICE, "--seed", str(2**32)), ["--seed"]),
    ("orifice-draws-1e9", _with(ORIFICE, "--draws", "1000000000000"), ["--draws"]),
    ("orifice-draws-zero", _with(ORIFICE, "--draws", "0"), ["--draws"]),
    ("orifice-draws-text", _with(ORIFICE, "--draws", "many"), ["--draws"]),
    ("orifice-nul-byte", _with(ORIFICE, "--exit-temperature", "352\0 degC"), ["--exit-temperature"]),
    ("orifice-unknown-option", ORIFICE + ["--velocty", "1 m/s"], ["--velocty"]),
    # plume-rise
    ("plume-height-20-km", _with(PLUME, "--rise-height", "20 km"), ["--rise-height"]),
    ("plume-height-inf", _with(PLUME, "--rise-height", "inf m"), ["--rise-height"]),
    ("plume-height-negative", _with(PLUME, "--rise-height", "-250 m"), ["--rise-height"]),
    ("plume-N-absurd", _with(PLUME, "--buoyancy-frequency", "10/s"), ["--buoyancy-frequency"]),
    ("plume-N-nan", _with(PLUME, "--buoyancy-frequency", "nan/s"), ["--buoyancy-frequency"]),
    ("plume-N-dimension", _with(PLUME, "--buoyancy-frequency", "1e-3 m"), ["--buoyancy-frequency"]),
    ("plume-ambient-minus-5", _with(PLUME, "--ambient-temperature", "-5 degC"), ["--ambient-temperature"]),
    ("plume-salinity-60", _with(PLUME, "--ambient-salinity", "60"), ["--ambient-salinity"]),
    ("plume-pressure-1e6-MPa", _with(PLUME, "--absolute-pressure", "1e6 MPa"), ["--absolute-pressure"]),
    ("plume-entrainment-5", _with(PLUME, "--entrainment", "5"), ["--entrainment"]),
    ("plume-seed-negative", _with(PLUME, "--seed", "-3"), ["--seed"]),
    ("plume-draws-1e12", _with(PLUME, "--draws", "1000000000000"), ["--draws"]),
    ("plume-current-100", PLUME + ["--current", "100 m/s"], ["--current"]),
    # diffuse
    ("diffuse-area-727-km2", _with(DIFFUSE, "--area", "727 km^2"), ["--area"]),
    ("diffuse-area-inf", _with(DIFFUSE, "--area", "inf m^2"), ["--area"]),
    ("diffuse-fraction-nan", _with(DIFFUSE, "--active-fraction", "nan"), ["--active-fraction"]),
    ("diffuse-fraction-1.5", _with(DIFFUSE, "--active-fraction", "1.5"), ["--active-fraction"]),
    ("diffuse-anomaly-1e4", _with(DIFFUSE, "--anomaly", "1e4 K"), ["--anomaly"]),
    ("diffuse-velocity-1e30", _with(DIFFUSE, "--velocity", "1e30 cm/s"), ["--velocity"]),
    ("diffuse-ambient-minus-5", _with(DIFFUSE, "--ambient-temperature", "-5 degC"), ["--ambient-temperature"]),
    ("diffuse-salinity-60", _with(DIFFUSE, "--ambient-salinity", "60"), ["--ambient-salinity"]),
    ("diffuse-seed-negative", _with(DIFFUSE, "--seed", "-1"), ["--seed"]),
    ("diffuse-draws-1e12", _with(DIFFUSE, "--draws", "1000000000000"), ["--draws"]),
    # summarize
    ("water-power-1e30", _with(WATER, "--heat-power", "1e30 MW"), ["--heat-power"]),
    ("water-power-inf", _with(WATER, "--heat-power", "inf MW"), ["--heat-power"]),
    ("water-ambient-minus-5", _with(WATER, "--ambient-temperature", "-5 degC"), ["--ambient-temperature"]),
    ("water-seed-negative", _with(WATER, "--seed", "-1"), ["--seed"]),
    ("water-draws-1e12", _with(WATER, "--draws", "1000000000000"), ["--draws"]),
    ("reservoir-power-nan", _with(RESERVOIR, "--heat-power", "nan MW"), ["--heat-power"]),
    ("reservoir-volume-1e9-km3", _with(RESERVOIR, "--volume", "1e9 km^3"), ["--volume"]),
    ("reservoir-drop-1e5", _with(RESERVOIR, "--temperature-drop", "1e5 K"), ["--temperature-drop"]),
    ("reservoir-seed-2-32", _with(RESERVOIR, "--seed", str(2**32)), ["--seed"]),
    ("size-power-1e30", _with(SIZE, "--heat-power", "1e30 W"), ["--heat-power"]),
    ("size-area-inf", _with(SIZE, "--area", "inf km^2"), ["--area"]),
    ("size-draws-1e12", _with(SIZE, "--draws", "1000000000000"), ["--draws"]),
    ("flank-seed-negative", _with(FLANK, "--seed", "-1"), ["--seed"]),
    ("flank-half-rate-absurd", FLANK + ["--half-spreading-rate", "1e6 mm/yr"], ["--half-spreading-rate"]),
]


def _probe_cases(tmp):
    rec = tmp / "data" / "probes" / "OSK26-HF01.csv"
    bad_header = tmp / "bad_header.csv"
    raw = rec.read_bytes().replace(b"(invented)", b"(invent\xe9d)", 1)
    bad_header.write_bytes(raw)
    blocker = tmp / "blocker"
    blocker.write_text("a file where a folder is needed\n")
    base = ["probe-heat-flow", str(rec)]
    return [
        ("probe-non-utf8-header", ["probe-heat-flow", str(bad_header)], [str(bad_header.name)]),
        ("probe-missing-record", ["probe-heat-flow", str(tmp / "nope.csv")], ["nope.csv"]),
        ("probe-conductivity-1e6", base + ["--conductivity", "1e6 W/(m K)"], ["--conductivity"]),
        ("probe-conductivity-inf", base + ["--conductivity", "inf W/(m K)"], ["--conductivity"]),
        ("probe-out-through-file", base + ["--out", str(blocker / "t.csv")], ["--out"]),
        # the shared Monte Carlo options of the one driver
        ("probe-seed-negative", base + ["--seed", "-1", "--out", str(tmp / "hf.csv")], ["--seed"]),
        ("probe-draws-1e12", base + ["--draws", "1000000000000"], ["--draws"]),
        ("probe-draws-text", base + ["--draws", "many"], ["--draws"]),
        ("probe-max-unphysical-1.5", base + ["--max-unphysical", "1.5", "--out", str(tmp / "hf.csv")],
         ["--max-unphysical"]),
        ("probe-max-unphysical-text", base + ["--max-unphysical", "some"], ["--max-unphysical"]),
        ("probe-tilt-nan", base + ["--tilt", "nan deg"], ["--tilt"]),
        ("probe-radius-1e30", base + ["--probe-radius", "1e30 mm"], ["--probe-radius"]),
    ]


def _advection_cases(tmp):
    prof = tmp / "core.csv"
    prof.write_text("depth [m],temperature [degC]\n" + "".join(f"{0.25 * i:.2f},{2.0 + 0.5 * i:.3f}\n"
                                                               for i in range(1, 9)))
    base = ["profile-advection", str(prof), "--conductivity", "1.0 ± 0.1 W/(m K)", "--depth", "2200 m"]
    return [
        ("advection-conductivity-1e6", _with(base, "--conductivity", "1e6 W/(m K)"), ["--conductivity"]),
        ("advection-depth-inf", _with(base, "--depth", "inf m"), ["--depth"]),
        ("advection-depth-20-km", _with(base, "--depth", "20 km"), ["--depth"]),
        ("advection-salinity-60", base + ["--salinity", "60"], ["--salinity"]),
        ("advection-missing-profile", ["profile-advection", str(tmp / "none.csv"), "--conductivity", "1 W/(m K)",
                                       "--depth", "2200 m"], ["none.csv"]),
        ("advection-absolute-pressure-inf", _without(base, "--depth") + ["--absolute-pressure", "inf MPa"],
         ["--absolute-pressure"]),
        ("advection-pressure-and-depth", base + ["--absolute-pressure", "22 MPa"], ["--absolute-pressure/--depth"]),
    ]


def _array_cases(tmp):
    rec = tmp / "grid.csv"
    rec.write_text("time [s],ambient [degC],S0 [degC],S1 [degC]\n"
                   + "".join(f"{60.0 * i:.1f},2.05,{2.5 + 0.01 * (i % 7):.3f},{3.0 + 0.01 * (i % 5):.3f}\n"
                             for i in range(400)))
    text = tmp / "grid_text.csv"
    lines = rec.read_text().splitlines()
    lines[5] = lines[5].replace("2.05", "n/a", 1)
    text.write_text("\n".join(lines) + "\n")
    header_only = tmp / "grid_header.csv"
    header_only.write_text(lines[0] + "\n")
    return [
        ("array-non-numeric-cell", ["array-anomaly", str(text)], ["grid_text.csv:6"]),
        ("array-header-only", ["array-anomaly", str(header_only)], ["grid_header.csv"]),
        ("array-unknown-sensor", ["array-anomaly", str(rec), "--patch", "mat=S0,S9"], ["--patch"]),
        ("array-unknown-reference", ["array-anomaly", str(rec), "--reference", "bottom"], ["bottom"]),
        ("array-peaks-0", ["array-anomaly", str(rec), "--peaks", "0"], ["--peaks"]),
        ("array-patch-without-sensors", ["array-anomaly", str(rec), "--patch", "mat"], ["--patch"]),
        ("array-patch-twice", ["array-anomaly", str(rec), "--patch", "mat=S0", "--patch", "mat=S1"], ["--patch"]),
        ("array-sensor-is-time", ["array-anomaly", str(rec), "--sensors", "time,S0"], ["sensors"]),
    ]


def _video_cases(tmp):
    clip = str(tmp / "data" / "gildhorn_jet.mp4")
    jet = ["video-jet", clip, "--pixel-size", "4 mm", "--orifice", "79.5,248"]
    field = ["video-field", clip, "--pixel-size", "4 mm"]
    scale = ["video-scale", clip]
    return [
        ("video-jet-pixel-1e-30", _with(jet, "--pixel-size", "1e-30 mm"), ["--pixel-size"]),
        ("video-jet-pixel-inf", _with(jet, "--pixel-size", "inf mm"), ["--pixel-size"]),
        ("video-jet-pixel-km", _with(jet, "--pixel-size", "3 km"), ["--pixel-size"]),
        ("video-jet-frame-rate-1e9", jet + ["--frame-rate", "1e9/s"], ["--frame-rate"]),
        ("video-jet-missing-clip", ["video-jet", str(tmp / "none.mp4"), "--pixel-size", "4 mm", "--orifice", "1,1"],
         ["none.mp4"]),
        ("video-field-pixel-1e-30", _with(field, "--pixel-size", "1e-30 mm"), ["--pixel-size"]),
        ("video-field-pixel-nan", _with(field, "--pixel-size", "nan mm"), ["--pixel-size"]),
        ("video-field-frame-rate-0", field + ["--frame-rate", "0/s"], ["--frame-rate"]),
        ("video-scale-distance-inf", scale + ["--points", "1,1,20,20", "--distance", "inf cm"], ["--distance"]),
        # the shared Monte Carlo options of the one driver, and the vocabulary's names
        ("video-jet-seed-negative", jet + ["--seed", "-1", "--out", str(tmp / "jet")], ["--seed"]),
        ("video-jet-draws-1e12", jet + ["--draws", "1000000000000"], ["--draws"]),
        ("video-jet-draws-one", jet + ["--draws", "1"], ["--draws"]),
        ("video-jet-max-unphysical-1", jet + ["--max-unphysical", "1", "--out", str(tmp / "jet")],
         ["--max-unphysical"]),
        ("video-jet-max-unphysical-text", jet + ["--max-unphysical", "few"], ["--max-unphysical"]),
        ("video-jet-absolute-pressure-1e6-MPa", jet + ["--absolute-pressure", "1e6 MPa", "--ambient-temperature",
                                                      "2 degC"], ["--absolute-pressure"]),
        ("video-jet-ambient-without-pressure", jet + ["--ambient-temperature", "2 degC"], ["--absolute-pressure"]),
        ("video-jet-plume-constant-negative", jet + ["--plume-constant", "-4"], ["--plume-constant"]),
        ("video-jet-width-ratio-nan", jet + ["--tracer-to-velocity-width-ratio", "nan"],
         ["--tracer-to-velocity-width-ratio"]),
        ("video-jet-orifice-text", _with(jet, "--orifice", "left,248"), ["--orifice"]),
        ("video-jet-windows-text", jet + ["--windows", "32,x"], ["--windows"]),
        ("video-field-pixel-spread-absurd", _with(field, "--pixel-size", "4 ± 1e6 mm"), ["--pixel-size"]),
    ]


# Survey-file mutations: (id, {file: (old, new)}, names that must appear, one per expected line)
SURVEY_CASES = [
    ("survey-salinity-60", {"survey.toml": ("ambient_salinity = 34.686", "ambient_salinity = 60")},
     ["site.ambient_salinity"]),
    ("survey-ambient-minus-5", {"survey.toml": ('ambient_temperature = "2.06 ± 0.02 degC"',
                                                'ambient_temperature = "-5 degC"')}, ["site.ambient_temperature"]),
    ("survey-ambient-nan", {"survey.toml": ('ambient_temperature = "2.06 ± 0.02 degC"',
                                            'ambient_temperature = "nan degC"')}, ["site.ambient_temperature"]),
    ("survey-plume-20-km", {"survey.toml": ('height = "195 ± 20 m"', 'height = "20 km"')},
     ["vent[0].plume_rise.rise_height"]),
    ("survey-plume-above-sea-surface", {"survey.toml": ('height = "195 ± 20 m"', 'height = "2500 ± 20 m"')},
     ["vent[0].plume_rise.rise_height"]),
    ("survey-field-plume-20-km", {"survey.toml": ('height = "290 ± 35 m"', 'height = "20 km"')},
     ["field_plume.rise_height"]),
    ("survey-pore-fluid-1100C", {"survey.toml": ("porosity = 0.0\nmelt_volume", "porosity = 0.05\nmelt_volume")},
     ["reservoir[1].temperature"]),
    ("survey-pore-fluid-default-porosity", {"survey.toml": ("porosity = 0.0\nmelt_volume", "melt_volume")},
     ["reservoir[1].temperature"]),
    ("survey-velocity-1e30", {"survey.toml": ('velocity = "1.55 ± 0.25 m/s"', 'velocity = "1e30 m/s"')},
     ["vent[0].orifice[0].velocity"]),
    ("survey-velocity-mostly-negative", {"survey.toml": ('velocity = "1.55 ± 0.25 m/s"',
                                                         'velocity = "0.6 ± 3 m/s"')},
     ["vent[0].orifice[0].velocity"]),
    ("survey-diameter-inf", {"survey.toml": ('diameter = "9.5 ± 0.8 cm"', 'diameter = "inf cm"')},
     ["vent[0].orifice[0].diameter"]),
    ("survey-pixel-1e-30", {"survey.toml": ('pixel_size = "4 mm"', 'pixel_size = "1e-30 mm"')},
     ["vent[0].video.pixel_size"]),
    ("survey-temperature-wrong-dimension", {"survey.toml": ('temperature = "351 ± 2 degC"',
                                                            'temperature = "351 ± 2 m"')},
     ["vent[0].orifice[0].exit_temperature"]),
    ("survey-shared-wrong-dimension", {"survey.toml": ('"hot probe offset" = "0 ± 1.5 K"',
                                                       '"hot probe offset" = "0 ± 1.5 m"')},
     ["temperature_offset"] * 6),
    ("survey-shared-undefined", {"survey.toml": ('size_factor = "@laser scale"\n  diameter = "9.5',
                                                 'size_factor = "@laser scales"\n  diameter = "9.5')},
     ["vent[0].orifice[0].size_factor"]),
    ("survey-seed-negative", {"survey.toml": ("seed = 20261202", "seed = -1")}, ["run.seed"]),
    ("survey-seed-2-32", {"survey.toml": ("seed = 20261202", f"seed = {2**32}")}, ["run.seed"]),
    ("survey-draws-huge", {"survey.toml": ("draws = 10000", "draws = 100000000000")}, ["run.draws"]),
    ("survey-latitude-nan", {"survey.toml": ("latitude = -17.3", "latitude = nan")}, ["site.latitude"]),
    ("survey-unknown-key", {"survey.toml": ('velocity_kind = "centerline"', 'velocity_knd = "centerline"')},
     ["vent[0].orifice[0].velocity_knd"]),
    ("survey-duplicate-vent", {"survey.toml": ('name = "Coalcap"', 'name = "Gildhorn"')}, ["vent[1].name"]),
    ("survey-two-problems", {"survey.toml": ('velocity = "1.2 ± 0.2 m/s"', 'velocity = "1e30 m/s"'),
                             "data/area_classes.csv": ("sediment,9500,1500", "sediment,9500,1500\nmat,100,10")},
     ["vent[1].orifice[0].velocity", "area_classes.csv:6"]),
    ("survey-duplicate-area-class", {"data/area_classes.csv": ("sediment,9500,1500", "sediment,9500,1500\nmat,100,10")},
     ["area_classes.csv:6"]),
    ("survey-duplicate-patch-row", {"data/patches.csv": ("P02,mat", "P01,mat")}, ["patches.csv:4"]),
    ("survey-unknown-patch-class", {"data/patches.csv": ("P02,mat", "P02,vent cap")}, ["diffuse.patches"]),
    ("survey-patch-non-numeric", {"data/patches.csv": ("P02,mat,28.2", "P02,mat,twenty")}, ["patches.csv:4"]),
    ("survey-ctd-unsorted", {"data/ctd_cast.csv": ("\n1524.0,", "\n1521.0,")}, ["ctd_cast.csv:5"]),
    ("survey-ctd-non-numeric", {"data/ctd_cast.csv": ("1522.0,2.9203", "1522.0,x")}, ["ctd_cast.csv:4"]),
    ("survey-ctd-header-only", {"data/ctd_cast.csv": (None, "sea_pressure [dbar],temperature [degC],salinity\n")},
     ["ctd_cast.csv"]),
    ("survey-ctd-salinity-60", {"data/ctd_cast.csv": ("1522.0,2.9203,34.6418", "1522.0,2.9203,60")},
     ["ctd_cast.csv:4"]),
    ("survey-ctd-unstable", {"data/ctd_cast.csv": ("CTD-UNSTABLE", None)}, ["site.ctd"]),
    ("survey-flank-non-numeric", {"data/flank_heat_flow.csv": ("0.6,245", "0.6,hot")}, ["flank_heat_flow.csv:3"]),
    ("survey-probe-non-utf8", {"data/probes/OSK26-HF01.csv": ("(invented)", b"(invent\xe9d)")}, ["OSK26-HF01.csv"]),
    ("survey-not-toml", {"survey.toml": ("[site]", "[site")}, ["survey file"]),
    ("survey-probe-records-nul", {"survey.toml": ('records = "data/probes"', 'records = "data/pro\\u0000bes"')},
     ["sediment_probes.records"]),
    ("survey-field-plume-exact", {"survey.toml": ('height = "290 ± 35 m"\nlevel = "maximum"',
                                                  'height = "290 m"\nlevel = "maximum"\nmethod = "closed-form"')},
     ["field_plume.rise_height"]),
    ("survey-patch-spread-absurd", {"data/patches.csv": ("6.06,0.65", "6.06,152")}, ["patches.csv:3"]),
    ("survey-flank-rise-tail",
     {"survey.toml": ('temperature_rise = "8 ± 3 K"', 'temperature_rise = "lognormal(8, 2) K"')},
     ["ridge_flank.temperature_rise"]),
    ("survey-ctd-path-nul", {"survey.toml": ('ctd = "data/ctd_cast.csv"', 'ctd = "data/ctd\\u0000cast.csv"')},
     ["site.ctd"]),
    # one spiked sample: 0 degC in a 2.3 degC stretch of the cast fails the real-time spike test (2 degC below
    # 500 dbar) and is named by its line
    ("survey-ctd-spike", {"data/ctd_cast.csv": ("2160.0,2.3114", "2160.0,0.0")}, ["ctd_cast.csv:323"]),
    # a smaller spike (0.5 K) passes the spike test, but caps the field's plume: the rise height's 95 % point has no
    # plume solution, as the run would find for more than 5 % of its draws
    ("survey-ctd-spike-caps-the-field-plume", {"data/ctd_cast.csv": ("2160.0,2.3114", "2160.0,1.8")},
     ["field_plume.rise_height"]),
]


@pytest.fixture
def demo(tmp_path):
    """A private copy of the demo survey and its data files."""
    shutil.copytree(DEMO, tmp_path / "demo", ignore=shutil.ignore_patterns("make_demo_data.py"))
    return tmp_path / "demo"


def _listing(root: Path):
    return sorted(str(p.relative_to(root)) for p in root.rglob("*"))


def _run(capsys, argv, names, root: Path, out: Path | None = None):
    before = _listing(root)
    rc = main([str(a) for a in argv])
    cap = capsys.readouterr()
    lines = [ln for ln in cap.err.splitlines() if ln.strip()]
    assert rc == 2, (rc, cap.err)
    assert "Traceback" not in cap.err and "Traceback" not in cap.out
    errors = [ln for ln in lines if ": error: " in ln]
    assert len(errors) == len(lines) == len(names), lines
    for name in names:
        assert any(name in ln for ln in errors), (name, lines)
    assert _listing(root) == before, "a refused input wrote something"
    if out is not None:
        assert not out.exists()


def _case_id(c):
    return c.values[0] if hasattr(c, "values") else c[0]


@pytest.mark.parametrize("case_id, argv, names", CLI_CASES, ids=[_case_id(c) for c in CLI_CASES])
def test_cli_refuses_in_one_line(case_id, argv, names, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    _run(capsys, argv, names, tmp_path)


def _file_cases(demo):
    return _probe_cases(demo) + _advection_cases(demo) + _array_cases(demo) + _video_cases(demo)


FILE_CASE_IDS = ["probe-non-utf8-header", "probe-missing-record", "probe-conductivity-1e6", "probe-conductivity-inf",
                 "probe-out-through-file", "advection-conductivity-1e6", "advection-depth-inf", "advection-depth-20-km",
                 "advection-salinity-60", "advection-missing-profile", "array-non-numeric-cell", "array-header-only",
                 "array-unknown-sensor", "array-unknown-reference", "video-jet-pixel-1e-30", "video-jet-pixel-inf",
                 "video-jet-pixel-km", "video-jet-frame-rate-1e9", "video-jet-missing-clip",
                 "video-field-pixel-1e-30", "video-field-pixel-nan", "video-field-frame-rate-0",
                 "video-scale-distance-inf",
                 "probe-seed-negative", "probe-draws-1e12", "probe-draws-text", "probe-max-unphysical-1.5",
                 "probe-max-unphysical-text", "probe-tilt-nan", "probe-radius-1e30",
                 "advection-absolute-pressure-inf", "advection-pressure-and-depth",
                 "array-peaks-0", "array-patch-without-sensors", "array-patch-twice", "array-sensor-is-time",
                 "video-jet-seed-negative", "video-jet-draws-1e12", "video-jet-draws-one", "video-jet-max-unphysical-1",
                 "video-jet-max-unphysical-text", "video-jet-absolute-pressure-1e6-MPa",
                 "video-jet-ambient-without-pressure", "video-jet-plume-constant-negative", "video-jet-width-ratio-nan",
                 "video-jet-orifice-text", "video-jet-windows-text", "video-field-pixel-spread-absurd"]


@pytest.mark.parametrize("case_id", FILE_CASE_IDS)
def test_plugin_commands_refuse_in_one_line(case_id, demo, capsys, monkeypatch):
    monkeypatch.chdir(demo)
    cases = {c[0]: c for c in _file_cases(demo)}
    _, argv, names = cases[case_id]
    _run(capsys, argv, names, demo.parent)


def _mutate(demo: Path, edits: dict):
    for rel, (old, new) in edits.items():
        p = demo / rel
        if old is None:
            p.write_text(new)
        elif old == "CTD-UNSTABLE":  # lighter water below heavier over 200 m: an overturning column
            lines = p.read_text().splitlines()
            out = []
            for ln in lines:
                cells = ln.split(",")
                try:
                    pr = float(cells[0])
                except ValueError:
                    out.append(ln)
                    continue
                if 1700 <= pr <= 1900:
                    cells[1] = f"{float(cells[1]) + 0.004 * (pr - 1700):.4f}"
                out.append(",".join(cells))
            p.write_text("\n".join(out) + "\n")
        elif isinstance(new, bytes):
            raw = p.read_bytes()
            assert old.encode() in raw
            p.write_bytes(raw.replace(old.encode(), new, 1))
        else:
            text = p.read_text()
            assert old in text, (rel, old)
            p.write_text(text.replace(old, new, 1))


@pytest.mark.parametrize("case", SURVEY_CASES, ids=[c[0] for c in SURVEY_CASES])
@pytest.mark.parametrize("check", [True, False], ids=["check", "run"])
def test_survey_refuses_every_problem_at_once(case, check, demo, capsys, monkeypatch):
    monkeypatch.chdir(demo.parent)
    _, edits, names = case
    _mutate(demo, edits)
    out = demo.parent / "results"
    argv = ["survey", str(demo / "survey.toml"), "--quiet"] + (["--check"] if check else ["--out", str(out)])
    _run(capsys, argv, names, demo.parent, out)


@pytest.mark.parametrize("share", ["1.5", "-0.1", "few"])
def test_survey_max_unphysical_option_is_one_line(share, demo, capsys, monkeypatch):
    monkeypatch.chdir(demo.parent)
    out = demo.parent / "results"
    _run(capsys, ["survey", str(demo / "survey.toml"), "--quiet", "--max-unphysical", share, "--out", str(out)],
         ["--max-unphysical"], demo.parent, out)


def test_catalogue_size():
    """The catalogue holds at least 100 bad inputs (the survey's run twice: --check and the run)."""
    assert len(CLI_CASES) + len(FILE_CASE_IDS) + len(SURVEY_CASES) >= 100


def test_survey_output_through_a_file_is_one_line(demo, capsys, monkeypatch):
    monkeypatch.chdir(demo.parent)
    blocker = demo.parent / "blocker"
    blocker.write_text("not a folder\n")
    rc = main(["survey", str(demo / "survey.toml"), "--quiet", "--draws", "100", "--out", str(blocker / "res")])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and "--out" in err[0] and "Traceback" not in err[0]
    assert blocker.read_text() == "not a folder\n"


def test_read_only_location_is_one_line(demo, capsys, monkeypatch):
    """A read-only location (simulated: creating anything under it raises EROFS, as a read-only mount does;
    permissions would not stop root) is one line naming --out, and nothing is left behind."""
    import errno

    ro = demo.parent / "ro"
    ro.mkdir()
    real_mkdir = os.mkdir

    def read_only(path, *a, **k):
        if str(ro) in os.fsdecode(path):
            raise OSError(errno.EROFS, os.strerror(errno.EROFS), os.fsdecode(path))
        return real_mkdir(path, *a, **k)

    monkeypatch.setattr(os, "mkdir", read_only)
    monkeypatch.chdir(demo.parent)
    rc = main(["survey", str(demo / "survey.toml"), "--quiet", "--draws", "100", "--out", str(ro / "res")])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and "--out" in err[0] and "Traceback" not in err[0], err
    assert list(ro.iterdir()) == []


def test_full_disk_is_one_line(tmp_path, capsys, monkeypatch):
    """A full disk (simulated: flushing a written file to disk raises ENOSPC) is one line, exit 2, no leftovers."""
    import errno

    def full(fd):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    res = tmp_path / "res"
    res.mkdir()
    monkeypatch.setattr(os, "fsync", full)
    rc = main(["plume-rise", *PLUME[1:], "--profile-table", str(res / "p.csv")])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and "--profile-table" in err[0] and "Traceback" not in err[0]
    assert list(res.iterdir()) == []
