"""Mutation fuzz of the survey file: what ``--check`` accepts, the run accepts.

Hypothesis mutates the demo survey (``examples/oskeran-ridge``) and its data
files in a private copy — a value scaled by powers of ten, given another
unit, a spread, a distribution, ``nan``; a CTD row changed, swapped,
repeated or dropped; a patch or class row repeated or re-classed — and
asserts the contract between validation and the run: a file that passes
``load_survey`` (what ``ventflux survey --check`` runs) never fails
validation when computed (``run_survey`` raises no ``InputError``, and no
other error either).

To keep a few hundred variants inside the default suite, the base file
drops the video clip and the probe records (their readers are checked by
their plugins' own tests) and uses the closed-form plume relation instead
of the integral model. The ``slow`` marker runs many more variants, and 30
plausible edits of the whole demo (its video, probe records, CTD cast and the
integral plume model), most of which pass ``--check``.
"""

from __future__ import annotations

import re
import shutil
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ventflux.errors import InputError, InputErrors

DEMO = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge"
RUN_DRAWS = 400
FULL_RUN_DRAWS = 4000

_QUANTITY = re.compile(r'^(\s*)(\w+) = "([^"@]+)"\s*$')
_NUMBER = re.compile(r"^(\s*)(latitude|longitude|ambient_salinity|porosity|draws|seed) = ([-0-9.e]+)\s*$")
UNITS = ["degC", "K", "m", "cm", "mm", "km", "m/s", "cm/s", "mm/yr", "m^2", "km^2", "km^3", "MPa", "dbar",
         "1/s", "W", "MW", "K/m", ""]


def _light(text: str) -> str:
    """The demo without video and probe records, with the closed-form plume relation (fast to run)."""
    text = re.sub(r"\n  \[vent\.video\].*?(?=\n  \[\[vent\.orifice\]\])", "\n", text, flags=re.DOTALL)
    text = re.sub(r"\n\[sediment_probes\].*?(?=\n\[field_plume\])", "\n", text, flags=re.DOTALL)
    return text.replace('level = "maximum"', 'level = "maximum"\nmethod = "closed-form"')


def _number(draw_):
    return draw_(st.one_of(
        st.floats(-1e3, 1e4, allow_nan=False, allow_infinity=False),
        st.sampled_from([0.0, -1.0, 1e-30, 1e30, 60.0, -5.0, 1100.0, 20000.0]),
    ))


@st.composite
def quantity_text(draw, old: str):
    """A new value for a quantity written ``old`` (``"351 ± 2 degC"``)."""
    m = re.match(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)", old)
    base = float(m.group(1)) if m else 1.0
    unit = old.split()[-1] if len(old.split()) > 1 and not old.split()[-1][0].isdigit() else ""
    kind = draw(st.sampled_from(["scale", "spread", "unit", "uniform", "lognormal", "special", "negate"]))
    if kind == "scale":
        x = base * draw(st.one_of(st.floats(0.3, 3.0), st.builds(lambda k: 10.0 ** k, st.integers(-8, 8))))
        return f"{x:g} {unit}".strip()
    if kind == "spread":
        f = draw(st.one_of(st.floats(0.0, 0.3), st.floats(0.0, 3.0)))
        return f"{base:g} ± {abs(base) * f:g} {unit}".strip()
    if kind == "unit":
        return f"{base:g} {draw(st.sampled_from(UNITS))}".strip()
    if kind == "uniform":
        lo = base * draw(st.floats(-1.0, 1.5))
        return f"uniform({lo:g}, {lo + abs(base) * draw(st.floats(0.01, 2.0)):g}) {unit}".strip()
    if kind == "lognormal":
        return f"lognormal({abs(base) or 1:g}, {draw(st.floats(1.0, 4.0)):g}) {unit}".strip()
    if kind == "negate":
        return f"{-base:g} {unit}".strip()
    return draw(st.sampled_from([f"nan {unit}", f"inf {unit}", f"1e999 {unit}", "", f"{base:g} {unit} extra"])).strip()


def _toml_lines(text):
    lines = text.splitlines()
    q = [i for i, ln in enumerate(lines) if _QUANTITY.match(ln) and not ln.strip().startswith(("name", "cruise",
                                                                                                  "supplies",
                                                                                                  "reference"))]
    n = [i for i, ln in enumerate(lines) if _NUMBER.match(ln)]
    return lines, q, n


@st.composite
def toml_mutation(draw, text):
    lines, q, n = _toml_lines(text)
    if n and draw(st.booleans()) and draw(st.integers(0, 3)) == 0:
        i = draw(st.sampled_from(n))
        ind, key, _ = _NUMBER.match(lines[i]).groups()
        value = draw(st.one_of(st.integers(-10, 2**33).map(str), st.builds(lambda f: f"{f!r}", st.floats(
            -1e3, 1e3, allow_nan=False)), st.sampled_from(["nan", "inf", '"x"'])))
        lines[i] = f"{ind}{key} = {value}"
    else:
        i = draw(st.sampled_from(q))
        ind, key, old = _QUANTITY.match(lines[i]).groups()
        lines[i] = f'{ind}{key} = "{draw(quantity_text(old))}"'
    return "\n".join(lines) + "\n"


@st.composite
def csv_mutation(draw, text):
    """Change a cell, or swap, repeat, drop or re-class a data row of a CSV."""
    lines = text.splitlines()
    data = [i for i, ln in enumerate(lines) if ln and not ln.startswith("#")][1:]
    if not data:
        return text
    i = draw(st.sampled_from(data))
    kind = draw(st.sampled_from(["cell", "swap", "repeat", "drop", "text", "class"]))
    cells = lines[i].split(",")
    if kind == "cell":
        j = draw(st.integers(0, len(cells) - 1))
        cells[j] = f"{_number(draw):g}"
        lines[i] = ",".join(cells)
    elif kind == "text":
        j = draw(st.integers(0, len(cells) - 1))
        cells[j] = draw(st.sampled_from(["", "x", "nan", "1,2"]))
        lines[i] = ",".join(cells)
    elif kind == "class":
        cells[draw(st.integers(0, min(1, len(cells) - 1)))] = draw(st.sampled_from(["mat", "sediment", "crust",
                                                                                     "P01"]))
        lines[i] = ",".join(cells)
    elif kind == "swap":
        k = draw(st.sampled_from(data))
        lines[i], lines[k] = lines[k], lines[i]
    elif kind == "repeat":
        lines.insert(i, lines[i])
    else:
        del lines[i]
    return "\n".join(lines) + "\n"


FILES = ["survey.toml", "survey.toml", "survey.toml", "data/ctd_cast.csv", "data/patches.csv",
         "data/area_classes.csv", "data/flank_heat_flow.csv"]


@st.composite
def variant(draw, base_text):
    """A set of 1-3 mutations: {file: new text}."""
    out = {"survey.toml": base_text}
    for _ in range(draw(st.integers(1, 3))):
        f = draw(st.sampled_from(FILES))
        text = out.get(f) or (DEMO / f).read_text()
        out[f] = draw(toml_mutation(text) if f == "survey.toml" else csv_mutation(text))
    return out


_FIRST_NUMBER = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")


@st.composite
def gentle_quantity(draw, old: str):
    """A plausible edit of a quantity: its value scaled by 0.5-2, its spread widened or added."""
    if draw(st.booleans()):
        f = draw(st.floats(0.5, 2.0))
        return _FIRST_NUMBER.sub(lambda m: f"{float(m.group(0)) * f:.6g}", old, count=1)
    m = re.match(r"^\s*([-+]?[\d.eE+-]+)\s*±\s*([\d.eE+-]+)\s*(.*)$", old)
    if m:
        return f"{m.group(1)} ± {float(m.group(2)) * draw(st.floats(0.5, 4.0)):.4g} {m.group(3)}".strip()
    n = _FIRST_NUMBER.match(old.strip())
    if n is None or old.strip().startswith(("uniform", "normal", "lognormal")):
        return old
    rest = old.strip()[n.end():].strip()
    return f"{n.group(0)} ± {abs(float(n.group(0))) * draw(st.floats(0.01, 0.3)):.4g} {rest}".strip()


@st.composite
def gentle_csv(draw, text: str, rel: str):
    """A plausible edit of a data file: a CTD sample spiked by up to ±2.5 K or ±0.5 in salinity (deep in the
    cast, where the plumes rise), a row dropped, or a number of a table scaled by 0.5-2."""
    lines = text.splitlines()
    data = [i for i, ln in enumerate(lines) if ln and not ln.startswith("#")][1:]
    if rel.endswith("ctd_cast.csv"):
        deep = [i for i in data if float(lines[i].split(",")[0]) >= 1900]
        i = draw(st.sampled_from(deep))
        cells = lines[i].split(",")
        kind = draw(st.sampled_from(["temperature", "temperature", "salinity", "drop"]))
        if kind == "drop":
            del lines[i]
        else:
            j, d = (1, draw(st.floats(-2.5, 2.5))) if kind == "temperature" else (2, draw(st.floats(-0.5, 0.5)))
            cells[j] = f"{float(cells[j]) + d:.4f}"
            lines[i] = ",".join(cells)
        return "\n".join(lines) + "\n"
    i = draw(st.sampled_from(data))
    cells = lines[i].split(",")
    numeric = [j for j, c in enumerate(cells) if _FIRST_NUMBER.fullmatch(c.strip())]
    if numeric:
        j = draw(st.sampled_from(numeric))
        cells[j] = f"{float(cells[j]) * draw(st.floats(0.5, 2.0)):.6g}"
        lines[i] = ",".join(cells)
    return "\n".join(lines) + "\n"


@st.composite
def gentle_variant(draw, base_text):
    """1-2 plausible edits of the whole demo: what a scientist revising a survey might write."""
    out = {"survey.toml": base_text}
    for _ in range(draw(st.integers(1, 2))):
        f = draw(st.sampled_from(["survey.toml", "survey.toml", "data/ctd_cast.csv", "data/ctd_cast.csv",
                                  "data/patches.csv", "data/area_classes.csv", "data/flank_heat_flow.csv"]))
        text = out.get(f) or (DEMO / f).read_text()
        if f == "survey.toml":
            lines, q, _ = _toml_lines(text)
            i = draw(st.sampled_from(q))
            ind, key, old = _QUANTITY.match(lines[i]).groups()
            lines[i] = f'{ind}{key} = "{draw(gentle_quantity(old))}"'
            out[f] = "\n".join(lines) + "\n"
        else:
            out[f] = draw(gentle_csv(text, f))
    return out


def _check_then_run(files: dict, counts: dict, full: bool = False):
    from ventflux.survey.run import run_survey
    from ventflux.survey.spec import load_survey

    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp) / "demo"
        skip = ("make_demo_data.py",) if full else ("*.mp4", "probes", "make_demo_data.py")
        shutil.copytree(DEMO, root, ignore=shutil.ignore_patterns(*skip))
        for rel, text in files.items():
            (root / rel).write_text(text)
        try:
            # fewer draws than the file's, as `ventflux survey --draws N --check` and the run then both use: a
            # check that makes the run's computation (a plume's rise) must see the draws the run will see
            spec = load_survey(root / "survey.toml", draws=FULL_RUN_DRAWS if full else RUN_DRAWS)
        except (InputError, InputErrors):
            counts["refused by --check"] += 1
            return
        counts["passed --check"] += 1
        try:
            run_survey(spec)
        except (InputError, InputErrors) as e:
            raise AssertionError(f"--check passed but the run refused:\n{e}\nchanged lines:\n" + _diff(files)) from None


def _diff(files: dict) -> str:
    import difflib

    out = []
    for rel, text in files.items():
        base = (DEMO / rel).read_text()
        if rel == "survey.toml" and 'method = "closed-form"' in text:
            base = LIGHT
        out += [f"{rel}: {ln}" for ln in difflib.unified_diff(base.splitlines(), text.splitlines(), lineterm="", n=0)
                if ln[:1] in "+-" and not ln.startswith(("+++", "---"))]
    return "\n".join(out)


LIGHT = _light((DEMO / "survey.toml").read_text())


def _fuzz(n, full=False):
    counts = {"passed --check": 0, "refused by --check": 0}

    @settings(max_examples=n, deadline=None, derandomize=True, database=None,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
    @given(gentle_variant((DEMO / "survey.toml").read_text()) if full else variant(LIGHT))
    def prop(files):
        _check_then_run(files, counts, full)

    prop()
    return counts


def test_light_demo_passes_check_and_runs():
    counts = {"passed --check": 0, "refused by --check": 0}
    _check_then_run({"survey.toml": LIGHT}, counts)
    assert counts["passed --check"] == 1


def test_what_check_accepts_the_run_accepts():
    counts = _fuzz(300)
    print(f"\nsurvey mutation fuzz: {counts}")
    # the fuzz must exercise both sides of the contract, or it tests nothing
    assert counts["passed --check"] >= 20 and counts["refused by --check"] >= 20


@pytest.mark.slow
def test_what_check_accepts_the_run_accepts_many():
    counts = _fuzz(3000)
    print(f"\nsurvey mutation fuzz (slow): {counts}")
    assert counts["passed --check"] >= 200


@pytest.mark.slow
def test_what_check_accepts_the_run_accepts_on_the_whole_demo():
    """The whole demo, with its video clip, probe records and the integral plume model (about 30 s a run).

    Plausible edits (values scaled by 0.5-2, spreads widened, CTD samples spiked deep in the cast, table numbers
    scaled), so that most variants pass ``--check`` and the run is exercised, and some do not.
    """
    counts = _fuzz(30, full=True)
    print(f"\nsurvey mutation fuzz (whole demo): {counts}")
    assert counts["passed --check"] >= 12 and counts["refused by --check"] >= 3
