"""Start-up stays light: listing commands imports no heavy module.

The check runs in a fresh interpreter and reads ``sys.modules`` after the
parser for ``ventflux --help`` has been built (issue: interactive latency).
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

HEAVY = ("CoolProp", "matplotlib", "scipy.signal")

_SCRIPT = r"""
import contextlib, io, json, sys
from importlib import metadata
if {core_only}:
    _all = metadata.entry_points
    def _no_plugins(**kw):
        return [] if kw.get("group") == "ventflux" else _all(**kw)
    metadata.entry_points = _no_plugins
from ventflux.cli import main
out = io.StringIO()
with contextlib.redirect_stdout(out):
    try:
        main({argv!r})
    except SystemExit:
        pass
print(json.dumps({{"loaded": sorted(m for m in {heavy!r} if m in sys.modules), "help": out.getvalue()}}))
"""


def _run(argv, core_only, heavy=HEAVY):
    code = _SCRIPT.format(core_only=core_only, argv=list(argv), heavy=tuple(heavy))
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=False)
    assert res.returncode == 0, res.stderr
    return json.loads(res.stdout.strip().splitlines()[-1])


def test_core_help_imports_no_heavy_module():
    out = _run(["--help"], core_only=True)
    assert out["loaded"] == []
    # every core command is still listed with its help
    for name in ("orifice", "plume-rise", "diffuse", "summarize", "survey", "methods"):
        assert name in out["help"]


def test_command_help_imports_only_that_command():
    out = _run(["summarize", "--help"], core_only=True)
    assert "QUESTION" in out["help"]  # the chosen command is configured
    assert "CoolProp" not in out["loaded"]


def test_help_with_installed_plugins_imports_no_heavy_module():
    assert _run(["--help"], core_only=False)["loaded"] == []


def test_every_core_command_configures():
    # Deferred registration must still reach each command's configure().
    from ventflux.cli import build_parser

    parser = build_parser()  # all commands configured
    for name in ("orifice", "plume-rise", "diffuse", "summarize", "survey", "methods"):
        with pytest.raises(SystemExit):
            parser.parse_args([name, "--help"])


def test_orifice_estimate_does_not_import_coolprop():
    # The saturation check and tabulated points need no CoolProp (explicit IAPWS-95 and the cached table).
    out = _run(["orifice", "--exit-temperature", "352 degC", "--velocity", "1.4 m/s", "--diameter", "12 cm",
                "--absolute-pressure", "26 MPa", "--ambient-temperature", "2.1 degC", "--json"], core_only=True)
    assert '"heat_power_W"' in out["help"]  # the command ran and printed its JSON
    assert "CoolProp" not in out["loaded"] and "matplotlib" not in out["loaded"]


def test_checking_a_survey_imports_nothing_for_the_results():
    # ``survey --check`` reads and validates every file; the tables, figures and netCDF file need pandas,
    # matplotlib and xarray, which a check does not (about 0.3 s for pandas alone)
    from pathlib import Path

    demo = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge" / "survey.toml"
    out = _run(["survey", str(demo), "--check"], core_only=False,
               heavy=("pandas", "matplotlib", "xarray", "CoolProp"))
    assert "valid" in out["help"]  # the check ran and passed
    assert out["loaded"] == []
