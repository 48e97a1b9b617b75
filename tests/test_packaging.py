"""Packaging: one version source per distribution, py.typed shipped, plugins declare the core range they support."""

import tomllib
from importlib import metadata
from pathlib import Path

import pytest
from packaging.requirements import Requirement

import ventflux

ROOT = Path(__file__).resolve().parents[1]
PLUGINS = {"ventflux-thermal": "ventflux_thermal", "ventflux-video": "ventflux_video"}


def _pyproject(path):
    return tomllib.loads((path / "pyproject.toml").read_text(encoding="utf-8"))


def test_core_version_has_one_source():
    project = _pyproject(ROOT)
    assert "version" not in project["project"] and "version" in project["project"]["dynamic"]
    assert project["tool"]["setuptools"]["dynamic"]["version"] == {"attr": "ventflux.__version__"}
    assert metadata.version("ventflux") == ventflux.__version__


def test_core_ships_py_typed():
    assert (Path(ventflux.__file__).parent / "py.typed").is_file()
    assert "py.typed" in _pyproject(ROOT)["tool"]["setuptools"]["package-data"]["ventflux"]


@pytest.mark.parametrize("dist, module", sorted(PLUGINS.items()))
def test_plugin_version_source_and_supported_core_range(dist, module):
    import importlib

    mod = importlib.import_module(module)
    project = _pyproject(ROOT / "plugins" / dist)
    assert project["tool"]["setuptools"]["dynamic"]["version"] == {"attr": f"{module}.__version__"}
    assert metadata.version(dist) == mod.__version__
    core = [Requirement(r) for r in project["project"]["dependencies"] if Requirement(r).name == "ventflux"]
    assert len(core) == 1
    spec = core[0].specifier
    assert any(s.operator == "<" for s in spec) and any(s.operator == ">=" for s in spec)  # a bounded range
    assert spec.contains(ventflux.__version__)
    assert (Path(mod.__file__).parent / "py.typed").is_file()
