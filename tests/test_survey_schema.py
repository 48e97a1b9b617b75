"""The survey schema: the keys the parser accepts are exactly the keys ``survey --format`` documents.

Strict mode (``ventflux.survey.schema.strict_schema``, on for the whole suite in ``conftest.py``) makes
a parser that reads an undeclared key raise; the tests below add the other direction: a key the schema
does not declare is refused in every table, and every declared key is accepted (read) in every table.
"""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pytest
from conftest import survey_site

from ventflux.cli import main
from ventflux.errors import InputError, InputErrors
from ventflux.survey.fields import Fields
from ventflux.survey.schema import UndeclaredKey, find, strict_schema, tables
from ventflux.survey.spec import load_survey, survey_schema
from ventflux.survey.template import SAMPLE_DATA, template_text, write_template
from ventflux.vocabulary import RENAMED_KEYS, deprecation_line

DEMO = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge"


def _errors(path) -> list[InputError]:
    try:
        load_survey(path)
    except InputErrors as e:
        return e.errors
    except InputError as e:
        return [e]
    return []


def _unknown(errors) -> list[str]:
    return [e.field for e in errors if e.value == "(unknown key)"]


# ---- the parser against the schema ---------------------------------------------------------------
def test_the_demo_reads_only_declared_keys():
    with strict_schema():
        spec = load_survey(DEMO / "survey.toml")
    assert not spec.warnings, spec.warnings.lines()  # the demo uses today's vocabulary
    assert [v.position.east for v in spec.vents] == [0.0, -64.0, 45.0]
    pos = spec.sections["diffuse"]["positions"]
    assert set(pos) == set(spec.sections["diffuse"]["table"].names) and all(p.local for p in pos.values())


def _value(key) -> str:
    """A TOML value of the right type for ``key`` (its example where it has one; validity does not matter)."""
    if key.example is not None:
        return key.example
    if key.choices:
        return f'"{key.choices[0]}"'
    return {"path": '"nothing-here.csv"', "position": '{ east = "1 m", north = "2 m" }', "boolean": "false",
            "list": "[1, 2]", "mapping": "{}", "integer": "2", "number": "0.5", "string": '"x"'}.get(key.kind, '"1"')


def _every_table(extra: str | None) -> str:
    """A survey holding every table of the schema with every declared key (and ``extra`` in each)."""
    out = []
    for path, t in tables(survey_schema()):
        out.append(f"[[{path}]]" if t.many else f"[{path}]")
        if t.open:
            out.append('"anything" = "1.0 ± 0.1"')
        out += [f"{k.name} = {_value(k)}" for k in t.keys if k.kind != "table"]
        if extra:
            out.append(f"{extra} = 1")
    return "\n".join(out) + "\n"


def test_every_declared_key_is_accepted_in_every_table(tmp_path):
    p = tmp_path / "survey.toml"
    p.write_text(_every_table(None), encoding="utf-8")
    with strict_schema():
        errors = _errors(p)
    assert errors  # nonsense values; but no key is unknown
    assert _unknown(errors) == []


def test_a_key_the_schema_does_not_declare_is_refused_in_every_table(tmp_path):
    p = tmp_path / "survey.toml"
    p.write_text(_every_table("zz_not_a_key"), encoding="utf-8")
    with strict_schema():
        errors = _errors(p)
    fields = [re.sub(r" \(vent '.*'\)$", "", f) for f in _unknown(errors)]  # a vent's errors also name it
    refused = {re.sub(r"\[\d+\]", "", f).removesuffix(".zz_not_a_key") for f in fields if f.endswith("zz_not_a_key")}
    every = {path for path, t in tables(survey_schema()) if not t.open}
    assert refused == every
    msg = next(e for e in errors if e.field.startswith("vent[0].orifice[0].zz_not_a_key")).allowed
    assert "exit_temperature" in msg and "velocity_factor" in msg and "profile_factor" in msg


def test_reading_an_undeclared_key_is_a_parser_bug_in_strict_mode(tmp_path):
    schema = find(survey_schema(), "vent.orifice")
    f = Fields({"velocity": "1 m/s"}, "vent[0].orifice[0]", _collector(), "here", tmp_path, {}, schema=schema,
               scope="vent.orifice")
    with strict_schema(), pytest.raises(UndeclaredKey, match="vent.orifice.speed"):
        f.quantity("speed", "velocity")
    with strict_schema(False):
        assert f.quantity("speed", "velocity") is None  # outside strict mode it is recorded, not raised


def _collector():
    from ventflux.errors import Collector

    return Collector()


# ---- renamed keys ----------------------------------------------------------------------------------------------
SITE = survey_site()

VENT = """
[[vent]]
name = "A"
{position}
  [[vent.orifice]]
  {key} = "350 degC"
  velocity = "1.0 m/s"
  diameter = "10 cm"
"""


def _survey(tmp_path, text):
    p = tmp_path / "survey.toml"
    p.write_text(text, encoding="utf-8")
    return p


def test_old_key_is_read_with_a_deprecation_warning(tmp_path):
    new = load_survey(_survey(tmp_path, SITE + VENT.format(key="exit_temperature", position="")))
    old = load_survey(_survey(tmp_path, SITE + VENT.format(key="temperature", position="")))
    assert old.vents[0].methods["orifice"][0]["temperature"] == new.vents[0].methods["orifice"][0]["temperature"]
    assert not new.warnings
    assert old.warnings.as_list() == [{"key": "vent[0].orifice[0].temperature",
                                       "message": deprecation_line("temperature", "exit_temperature")}]


def test_old_and_new_spelling_together_are_refused(tmp_path):
    text = SITE + VENT.format(key="exit_temperature", position="").replace(
        'velocity = "1.0 m/s"', 'velocity = "1.0 m/s"\n  temperature = "340 degC"')
    with pytest.raises(InputError, match="either 'exit_temperature' or its deprecated spelling 'temperature'"):
        load_survey(_survey(tmp_path, text))


def test_site_pressure_is_absolute_pressure(tmp_path):
    text = SITE.replace('depth = "2500 m"', 'pressure = "25.4 MPa"') + VENT.format(key="exit_temperature",
                                                                                    position="")
    spec = load_survey(_survey(tmp_path, text))
    assert spec.site.pressure.to("MPa").magnitude == pytest.approx(25.4)
    assert [w["key"] for w in spec.warnings.as_list()] == ["site.pressure"]
    both = text.replace('pressure = "25.4 MPa"', 'absolute_pressure = "25.4 MPa"')
    assert not load_survey(_survey(tmp_path, both)).warnings


@pytest.mark.parametrize("scope", sorted(s for s in RENAMED_KEYS if s != "*"))
def test_every_renamed_key_is_declared_under_its_new_name(scope):
    for old, new in RENAMED_KEYS[scope].items():
        t = find(survey_schema(), scope)
        assert t is not None and t.child(new) is not None and t.child(old) is None


def test_any_table_reads_metres_per_pixel_as_pixel_size(tmp_path):
    f = Fields({"metres_per_pixel": "4 mm"}, "vent[0].video", _collector(), "here", tmp_path, {},
               schema=find(survey_schema(), "vent.video"), scope="vent.video")
    with strict_schema():
        q = f.quantity("pixel_size", "length", uncertain=False)
        f.check_unknown()
    assert q.to("mm").magnitude == pytest.approx(4.0) and not f.errors.errors
    assert f.warnings.lines() == ["vent[0].video.metres_per_pixel: " + deprecation_line("metres_per_pixel",
                                                                                           "pixel_size")]


def test_old_ctd_pressure_column_is_read_with_a_warning(tmp_path):
    cast = "\n".join(f"{p:.0f},{2.0 + 0.0004 * (2600 - p):.4f},34.6" for p in range(2300, 2601, 10))
    (tmp_path / "old.csv").write_text("pressure [dbar],temperature [degC],salinity\n" + cast + "\n")
    (tmp_path / "new.csv").write_text("sea_pressure [dbar],temperature [degC],salinity\n" + cast + "\n")
    body = SITE.replace('depth = "2500 m"', 'depth = "2450 m"') + VENT.format(key="exit_temperature", position="")
    old = load_survey(_survey(tmp_path, body.replace("ambient_salinity", 'ctd = "old.csv"\nambient_salinity')))
    assert [w["key"] for w in old.warnings.as_list()] == ["site.ctd"]
    assert "'sea_pressure [dbar]'" in old.warnings.as_list()[0]["message"]
    new = load_survey(_survey(tmp_path, body.replace("ambient_salinity", 'ctd = "new.csv"\nambient_salinity')))
    assert not new.warnings and new.site.ctd_extent == pytest.approx(old.site.ctd_extent)


# ---- positions --------------------------------------------------------------------------------------------
@pytest.mark.parametrize("position, expected", [
    ('position = { latitude = 10.001, longitude = -100.002 }', (10.001, -100.002, None, None)),
    ('position = { east = "120 m", north = "-0.035 km" }', (None, None, 120.0, -35.0)),
    ('position = { east = 5, north = 6.5 }', (None, None, 5.0, 6.5)),
    ("", None),
])
def test_vent_position(tmp_path, position, expected):
    spec = load_survey(_survey(tmp_path, SITE + VENT.format(key="exit_temperature", position=position)))
    p = spec.vents[0].position
    assert (p if p is None else (p.latitude, p.longitude, p.east, p.north)) == expected


@pytest.mark.parametrize("position, allowed", [
    ('position = { latitude = 95.0, longitude = 0.0 }', "latitude in degrees from -90 to 90"),
    ('position = { latitude = "10", longitude = 0.0 }', "written as a number"),
    ('position = { east = "120 m" }', "inline table"),
    ('position = { east = "120 s", north = "1 m" }', "length"),
    ('position = { east = "120 m", north = "1 m", latitude = 3.0 }', "inline table"),
    ('position = "here"', "inline table"),
])
def test_bad_vent_position_is_refused_naming_the_key(tmp_path, position, allowed):
    with pytest.raises(InputError) as e:
        load_survey(_survey(tmp_path, SITE + VENT.format(key="exit_temperature", position=position)))
    assert e.value.field.startswith("vent[0].position") and allowed in e.value.allowed


def _patch_survey(tmp_path, extra_header, extra_cells):
    rows = [("P1", "12.0", "0.4", "4.5", "0.2"), ("P2", "20.0", "0.3", "3.0", "0.15")]
    lines = ["patch,area [m^2],active_fraction,temperature_anomaly [K],velocity [cm/s]" + extra_header]
    lines += [",".join(r) + cells for r, cells in zip(rows, extra_cells)]
    (tmp_path / "patches.csv").write_text("\n".join(lines) + "\n")
    return _survey(tmp_path, SITE + '\n[diffuse]\npatches = "patches.csv"\n')


def test_patch_positions(tmp_path):
    spec = load_survey(_patch_survey(tmp_path, ",east [m],north [km]", [",10,0.02", ",-5,-0.01"]))
    pos = spec.sections["diffuse"]["positions"]
    assert (pos["P1"].east, pos["P1"].north, pos["P2"].east, pos["P2"].north) == (10.0, 20.0, -5.0, -10.0)
    spec = load_survey(_patch_survey(tmp_path, ",latitude,longitude", [",10.001,-100.0", ",10.002,-100.001"]))
    assert spec.sections["diffuse"]["positions"]["P2"].longitude == pytest.approx(-100.001)
    assert load_survey(_patch_survey(tmp_path, "", ["", ""])).sections["diffuse"]["positions"] is None


@pytest.mark.parametrize("header, cells, allowed", [
    (",east [m]", [",1", ",2"], "both of a pair"),
    (",east [m],latitude", [",1,2", ",2,3"], "both of a pair"),
    (",latitude,longitude", [",91,0", ",10,0"], "latitude in degrees"),
])
def test_bad_patch_positions_are_refused(tmp_path, header, cells, allowed):
    with pytest.raises(InputError) as e:
        load_survey(_patch_survey(tmp_path, header, cells))
    assert allowed in e.value.allowed


# ---- --format ------------------------------------------------------------------------------------------
def test_format_lists_every_table_and_key(capsys):
    assert main(["survey", "--format"]) == 0
    out = capsys.readouterr().out
    for path, t in tables(survey_schema()):
        assert (f"[[{path}]]" if t.many else f"[{path}]") in out
        for k in t.keys:
            assert re.search(rf"^\s+{re.escape(k.name)}\s", out, re.M), (path, k.name)
            for c in k.columns:
                assert f'"{c.header}"' in out
    for key in ("velocity_factor", "profile_factor", "category", "compares_with", "stratification_scale"):
        assert key in out


def test_format_one_table(capsys):
    assert main(["survey", "--format", "vent.orifice"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("[[vent.orifice]]") and "exit_temperature" in out and "[site]" not in out
    assert main(["survey", "--format", "[diffuse]"]) == 0
    out = capsys.readouterr().out
    assert '"temperature_anomaly [K]"' in out and '"east [m]"' in out and "[[vent.orifice]]" not in out


def test_format_json(capsys):
    assert main(["survey", "--format", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    site = next(t for t in doc["keys"] if t["key"] == "site")
    depth = next(k for k in site["keys"] if k["key"] == "depth")
    assert depth["kind"] == "length" and depth["uncertain"] is False
    assert main(["survey", "--format", "vent.plume_rise", "--json"]) == 0
    one = json.loads(capsys.readouterr().out)
    assert one["path"] == "vent.plume_rise" and "rise_height" in [k["key"] for k in one["keys"]]


def test_format_unknown_table_is_refused(capsys):
    assert main(["survey", "--format", "vent.spigot"]) == 2
    err = capsys.readouterr().err
    assert "vent.spigot" in err and "vent.orifice" in err and "Traceback" not in err


# ---- --template -------------------------------------------------------------------------------------------
def test_template_passes_check_and_refuses_to_overwrite(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(["survey", "--template"]) == 0
    capsys.readouterr()
    written = sorted(p.relative_to(tmp_path).as_posix() for p in tmp_path.rglob("*") if p.is_file())
    assert written == ["data/area_classes.csv", "data/ctd_cast.csv", "data/flank_heat_flow.csv",
                       "data/patches.csv", "survey.toml"]
    with strict_schema():
        spec = load_survey(tmp_path / "survey.toml")
    assert not spec.warnings and spec.vents[0].position is not None
    assert spec.sections["diffuse"]["positions"] is not None
    assert main(["survey", "--check", "survey.toml"]) == 0
    before = (tmp_path / "survey.toml").read_text()
    assert main(["survey", "--template", "survey.toml"]) == 2
    assert "survey.toml" in capsys.readouterr().err and (tmp_path / "survey.toml").read_text() == before


def test_template_lists_every_key_and_its_data_headers_are_declared(tmp_path):
    text = template_text()
    schema = survey_schema()
    for path, t in tables(schema):
        for k in t.keys:
            if k.kind != "table":
                assert re.search(rf"^\s*(# )?{re.escape(k.name)} = ", text, re.M), (path, k.name)
    write_template(tmp_path / "s.toml")
    for key_path, (header, _) in SAMPLE_DATA.items():
        key = find(schema, key_path)
        data = (tmp_path / key.example.strip('"')).read_text().splitlines()
        head = next(line for line in data if not line.startswith("#"))
        assert head == ",".join(next(c.header for c in key.columns if c.name == n) for n in header)


def test_template_in_a_missing_folder_is_refused(tmp_path):
    with pytest.raises(InputError, match="existing folder"):
        write_template(tmp_path / "nowhere" / "survey.toml")
    assert not (tmp_path / "nowhere").exists()


def test_demo_copy_with_old_spellings_passes_with_warnings(tmp_path):
    """The demo as an earlier release wrote it: the same survey, one deprecation warning per old key."""
    shutil.copytree(DEMO / "data", tmp_path / "data")
    text = (DEMO / "survey.toml").read_text()
    text = re.sub(r"^  exit_temperature = ", "  temperature = ", text, flags=re.M)
    text = re.sub(r"^(\s*)rise_height = ", r"\1height = ", text, flags=re.M)
    (tmp_path / "survey.toml").write_text(text)
    with strict_schema():
        spec = load_survey(tmp_path / "survey.toml")
    keys = [w["key"] for w in spec.warnings.as_list()]
    assert len(keys) == 8 and "field_plume.height" in keys and "vent[0].plume_rise.height" in keys


def test_a_plugin_table_without_declared_keys_is_recorded_and_refused_in_strict_mode(tmp_path, monkeypatch):
    """A third-party section that predates the schema still works for users; the test suite refuses it."""
    from ventflux.survey import spec as spec_module
    from ventflux.survey.api import SurveySection
    from ventflux.survey.schema import UNDECLARED_READS, format_text

    def parse(f, ctx):
        value = f.number("width")
        f.check_unknown()
        return {"width": value}

    legacy = SurveySection(key="legacy_sonar", summary="an undeclared plugin section", parse=parse,
                           estimate=lambda spec, ctx: None, provider="sonar-plugin")
    methods, sections = spec_module.survey_components()
    monkeypatch.setattr(spec_module, "survey_components", lambda: (methods, {**sections, "legacy_sonar": legacy}))
    path = _survey(tmp_path, SITE + "\n[legacy_sonar]\nwidth = 3.0\n")
    with strict_schema(False):
        assert load_survey(path).sections["legacy_sonar"] == {"width": 3.0}
    assert "legacy_sonar.width (table without a declaration)" in UNDECLARED_READS
    with strict_schema(), pytest.raises(UndeclaredKey):
        load_survey(path)
    assert "(its provider declares no keys)" in format_text(survey_schema(), "legacy_sonar")


def test_a_position_far_from_the_site_is_flagged(tmp_path):
    far = 'position = { latitude = 10.0, longitude = -99.5 }'  # 0.5° of longitude at 10° N: about 55 km
    spec = load_survey(_survey(tmp_path, SITE + VENT.format(key="exit_temperature", position=far)))
    (w,) = spec.warnings.as_list()
    assert w["key"] == "vent[0].position" and "55 km" in w["message"]
    near = 'position = { latitude = 10.001, longitude = -100.002 }'
    assert not load_survey(_survey(tmp_path, SITE + VENT.format(key="exit_temperature", position=near))).warnings


def test_a_misspelt_key_names_the_closest_declared_one(tmp_path):
    text = SITE + VENT.format(key="exit_temperature", position="").replace('diameter = "10 cm"',
                                                                           'diameter = "10 cm"\n  velocity_knd = "x"')
    with pytest.raises(InputError) as e:
        load_survey(_survey(tmp_path, text))
    assert e.value.value == "(unknown key)" and "(closest: 'velocity_kind')" in e.value.allowed
    assert "ventflux survey --format vent.orifice" in e.value.allowed
