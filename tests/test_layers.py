"""The package's import graph: no cycles, and every layer imports only downwards.

The graph is built from the source with ``ast`` (every ``import`` statement,
those inside functions included, since a deferred import still ties the two
modules together; only imports under ``if TYPE_CHECKING:``, which never run,
are left out). Layers, from the bottom:

0. ``units``, ``errors``, ``cachedir``, ``limits`` (plausibility of what users type; and the package's
   ``__init__``)
1. ``properties`` — equations of state; imports only layer 0
2. ``uncertainty``, ``tables``, ``io``, ``profiles``, ``ctd_formats``, ``sensitivity``, ``presentation`` —
   inputs, their distributions, what their draws explain, and how results present themselves
3. estimators: ``orifice``, ``diffuse``, ``plume``, ``reservoir``, ``ridge_flank``,
   ``throughput``, ``aggregate``, ``summarizer``, ``budget`` (of one estimate)
4. the plugin contract: ``hookspecs``, ``registry``, ``executor`` (where tasks run)
5. ``survey``
6. ``cli`` and the plugin API (``plugin_api``)
7. the core's own hook implementations (``core_plugin``) and ``__main__``
"""

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "ventflux"

LAYERS = [
    ("ventflux", "ventflux.units", "ventflux.errors", "ventflux.cachedir", "ventflux.limits", "ventflux.waiting"),
    ("ventflux.properties",),
    ("ventflux.uncertainty", "ventflux.tables", "ventflux.io", "ventflux.profiles", "ventflux.sensitivity",
     "ventflux.ctd_formats", "ventflux.presentation"),
    ("ventflux.orifice", "ventflux.diffuse", "ventflux.plume", "ventflux.reservoir", "ventflux.ridge_flank",
     "ventflux.throughput", "ventflux.aggregate", "ventflux.summarizer", "ventflux.budget"),
    ("ventflux.hookspecs", "ventflux.registry", "ventflux.executor", "ventflux.ahead"),
    ("ventflux.survey",),
    ("ventflux.cli", "ventflux.plugin_api"),
    ("ventflux.core_plugin", "ventflux.__main__"),
]


def _modules():
    mods = {}
    for f in PACKAGE.rglob("*.py"):
        parts = list(f.relative_to(ROOT).with_suffix("").parts)
        is_pkg = parts[-1] == "__init__"
        mods[".".join(parts[:-1] if is_pkg else parts)] = (f, is_pkg)
    return mods


def _targets(mod, is_pkg, node, mods):
    if isinstance(node, ast.Import):
        return [a.name for a in node.names if a.name.split(".")[0] == "ventflux"]
    if not isinstance(node, ast.ImportFrom):
        return []
    if node.level:
        base = mod.split(".") if is_pkg else mod.split(".")[:-1]
        base = base[:len(base) - (node.level - 1)]
        target = ".".join(base + ([node.module] if node.module else []))
    else:
        target = node.module or ""
    if target.split(".")[0] != "ventflux":
        return []
    return [f"{target}.{a.name}" if f"{target}.{a.name}" in mods else target for a in node.names]


def _run_time_nodes(tree):
    """Every node except those under ``if TYPE_CHECKING:`` (imports for annotations only)."""
    todo = [tree]
    while todo:
        node = todo.pop()
        yield node
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.If) and ast.unparse(child.test) in ("TYPE_CHECKING", "typing.TYPE_CHECKING"):
                todo.extend(child.orelse)
                continue
            todo.append(child)


def import_graph():
    mods = _modules()
    graph = {}
    for mod, (path, is_pkg) in mods.items():
        deps = set()
        for node in _run_time_nodes(ast.parse(path.read_text(encoding="utf-8"))):
            for t in _targets(mod, is_pkg, node, mods):
                while t not in mods and "." in t:
                    t = t.rsplit(".", 1)[0]
                if t in mods and t != mod:
                    deps.add(t)
        graph[mod] = deps
    return graph


def _cycle(graph):
    """One import cycle as a list of modules, or None (depth-first search, colours)."""
    state, stack = {}, []

    def visit(v):
        state[v] = 1
        stack.append(v)
        for w in sorted(graph[v]):
            if state.get(w) == 1:
                return stack[stack.index(w):] + [w]
            if w not in state:
                found = visit(w)
                if found:
                    return found
        state[v] = 2
        stack.pop()
        return None

    for v in sorted(graph):
        if v not in state:
            found = visit(v)
            if found:
                return found
    return None


def _layer(mod):
    best = None
    for i, prefixes in enumerate(LAYERS):
        for p in prefixes:
            if (mod == p or mod.startswith(p + ".")) and (best is None or len(p) > best[1]):
                best = (i, len(p))
    return None if best is None else best[0]


def test_the_graph_sees_imports_inside_functions():
    # A check that cannot fail is a defect: the builder must see a known deferred import.
    assert "ventflux.registry" in import_graph()["ventflux.cli"]


def test_no_import_cycles():
    cycle = _cycle(import_graph())
    assert cycle is None, "import cycle: " + " -> ".join(cycle)


def test_annotation_only_imports_are_not_edges():
    assert "ventflux.survey.spec" not in import_graph()["ventflux.survey.api"]


def test_cycle_finder_finds_a_cycle():
    assert _cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}}) == ["a", "b", "c", "a"]
    assert _cycle({"a": {"b"}, "b": set()}) is None


def test_every_module_has_a_layer():
    assert [m for m in import_graph() if _layer(m) is None] == []


def test_layers_import_only_downwards():
    graph = import_graph()
    upward = sorted(f"{m} ({_layer(m)}) imports {d} ({_layer(d)})" for m, deps in graph.items() for d in deps
                    if _layer(d) > _layer(m))
    assert upward == []


def test_properties_import_only_units_errors_and_the_cache_folder():
    graph = import_graph()
    outside = {d for m, deps in graph.items() if m.startswith("ventflux.properties") for d in deps
               if not d.startswith("ventflux.properties")}
    assert outside <= {"ventflux.units", "ventflux.errors", "ventflux.cachedir"}


@pytest.mark.parametrize("plugin", sorted(p.name for p in (ROOT / "plugins").iterdir() if p.is_dir()))
def test_plugins_import_only_the_plugin_api(plugin):
    bad = []
    for f in (ROOT / "plugins" / plugin / "src").rglob("*.py"):
        for node in ast.walk(ast.parse(f.read_text(encoding="utf-8"))):
            names = ([a.name for a in node.names] if isinstance(node, ast.Import)
                     else [node.module or ""] if isinstance(node, ast.ImportFrom) and not node.level else [])
            bad += [f"{f.name}: {n}" for n in names if n.split(".")[0] == "ventflux" and n != "ventflux.plugin_api"]
    assert bad == []


def test_report_names_no_survey_method_or_section():
    # Methods and sections bring their titles and tables through their ReportPart (see survey/api.py).
    import ventflux.survey.report as report
    from ventflux.registry import survey_methods, survey_sections

    source = Path(report.__file__).read_text(encoding="utf-8")
    keys = {m.key for m in survey_methods()} | {s.key for s in survey_sections()}
    assert keys >= {"orifice", "plume_rise", "diffuse"}
    categories = {"focused", "diffuse", "conductive"}  # the field totals' parts, named by the report itself
    assert [k for k in keys - categories if f'"{k}"' in source or f"'{k}'" in source] == []


def test_a_new_method_is_laid_out_from_its_report_part():
    from types import SimpleNamespace

    from ventflux.survey.api import ReportPart
    from ventflux.survey.report import _layout

    result = SimpleNamespace(report_parts={"echo_sounder": ReportPart(table="echoes", titles={"echoes": "Echo rises"},
                                                                      intro={"echoes": "From the ship."}, rank=25)})
    tables = {"vents": [], "echoes": [], "field_totals": [], "reservoirs": []}
    assert _layout(result, tables) == [("field_totals", "Field totals", None), ("vents", "Vents", None),
                                       ("echoes", "Echo rises", "From the ship."),
                                       ("reservoirs", "Heat reservoirs", None)]
