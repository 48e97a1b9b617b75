"""Write a survey's results folder: tables (CSV), figures (PNG), a JSON summary and an HTML report.

The folder is built under a temporary name and renamed into place when
complete (``ventflux.io.results_directory``), so a half-written folder is never
mistaken for a finished one; ``summary.json`` holds the provenance: package
and plugin versions, a SHA-256 of every input file, the seed, the draws,
every parameter and every default used.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import json
import math
import platform
import re
from pathlib import Path

import numpy as np
import pandas as pd

from ..io import check_output_location, file_stem, results_directory, sha256_of
from .rendering import subplots

CAUTION = ("These estimates are for scientific analysis. They are not for the operational safety of people or "
           "vehicles near hot fluids: follow the operator's procedures and local codes.")


#: The statistics of a Monte Carlo summary in a table, in their one spelling (``ventflux.vocabulary``).
STATS = (("p50", "median"), ("p05", "p05"), ("p95", "p95"), ("mean", "mean"), ("sd", "std"))


def _mw(s):
    s = s.to("MW")
    return {f"{k} [MW]": float(getattr(s, attr).magnitude) for k, attr in STATS}


def tables_of(result) -> dict:
    """Every results table as a list of row dictionaries (units in the column names)."""
    t = {}
    vents = []
    for vr in result.vents:
        s = _summary(vr.heat_power)
        row = {"vent": vr.name, "methods": " + ".join(vr.methods), **{f"heat_power_{k}": v for k, v in _mw(s).items()}}
        if vr.comparison is not None:
            row["methods_consistent"] = vr.comparison.consistent
        if vr.throughput is not None:
            m = vr.throughput.mass_flux.to("kg/s").magnitude
            row["exit_temperature [degC]"] = float(_nom(vr.exit_temperature).to("degC").magnitude)
            row["mass_flux_p50 [kg/s]"] = float(np.median(m))
            row["annual_volume_p50 [km^3/yr]"] = float(np.median(vr.throughput.annual_volume.to("km^3/yr").m))
        vents.append(row)
    t["vents"] = vents
    methods, pairs = [], []
    for vr in result.vents:
        for key, e in vr.methods.items():
            s = _summary(e.heat_power)
            methods.append({"vent": vr.name, "method": key, "nominal_heat_power [MW]":
                            float(e.nominal_heat_power.to("MW").magnitude),
                            **{f"heat_power_{k}": v for k, v in _mw(s).items()},
                            "weight_in_combination": (vr.comparison.weights[key] if vr.comparison else 1.0)})
        if vr.comparison is not None:
            methods.append({"vent": vr.name, "method": "combined", **{f"heat_power_{k}": v for k, v in
                                                                      _mw(vr.comparison.combined).items()},
                            "weight_in_combination": float("nan")})
            for p in vr.comparison.pair_rows():
                pairs.append({"vent": vr.name, **p})
    t["methods"] = methods
    if pairs:
        t["method_pairs"] = pairs
    for vr in result.vents:  # each method's own table, named by its report part
        for key, e in vr.methods.items():
            if e.rows:
                t.setdefault(_method_table(result, key), []).extend(e.rows)
    for s in result.sections.values():
        t.update(s.tables)
    totals = []
    for label, ft in (("focused", result.focused), ("diffuse", result.diffuse), ("conductive", result.conductive)):
        if ft is not None:
            totals.append({"quantity": f"{label} heat power", "unit": "MW", **_plain(ft.summary.to("MW"))})
    if result.total is not None:
        totals.append({"quantity": "total heat power", "unit": "MW", **_plain(result.total.to("MW"))})
    if result.split is not None:
        totals.append({"quantity": "diffuse fraction", "unit": "1", **_plain(result.split.diffuse_fraction)})
    for k, s in result.water.items():
        unit = "kg/s" if "mass" in k else "m^3/s"
        totals.append({"quantity": k.replace("_", " "), "unit": unit, **_plain(s.to(unit))})
    t["field_totals"] = totals
    checks = []
    for key, cmp in result.checks:
        for (name, summ), p in zip(cmp.methods.items(), [None] + cmp.pairs):
            row = {"check": key, "estimate": name, **{f"heat_power_{k}": v for k, v in _mw(summ).items()}}
            if p is not None:
                row.update({"ratio_to_sum": 1 / p.ratio, "normalized_difference": -p.normalized_difference,
                            "consistent": p.consistent})
            checks.append(row)
    if checks:
        t["field_checks"] = checks
    res = []
    for r in result.reservoirs:
        res.append({"reservoir": r["name"], "supplied_by": r["supplies"],
                    "heat [J]": float(np.atleast_1d(r["heat"].total.to("J").magnitude)[0]),
                    "heat_mining_time_p50 [yr]": r["mining"].median.magnitude,
                    "heat_mining_time_p05 [yr]": r["mining"].p05.magnitude,
                    "heat_mining_time_p95 [yr]": r["mining"].p95.magnitude,
                    "decline_time_p50 [yr]": r["decline"].median.magnitude,
                    "decline_time_p05 [yr]": r["decline"].p05.magnitude,
                    "decline_time_p95 [yr]": r["decline"].p95.magnitude,
                    "conductive_time [yr]": r["conductive"],
                    "conductive_length": _labels(r).get("conductive_length", ""),
                    "pore_fluid_phase": _pore_fluid_phase(r),
                    "controlling": r["controlling"]})
    if res:
        t["reservoirs"] = res
    return t


def _method_table(result, key):
    part = result.report_parts.get(key)
    return (part.table if part is not None and part.table else None) or key


#: The core's own tables: (rank, heading), and the figures shown under each.
CORE_TABLES = {"field_totals": (0, "Field totals"), "field_checks": (1, "Field-wide checks"),
               "vents": (10, "Vents"), "methods": (11, "Methods for each vent"),
               "method_pairs": (12, "Do the methods agree?"), "reservoirs": (90, "Heat reservoirs")}
CORE_FIGURES = {"vents": ["vents_by_method"], "field_totals": ["focused_diffuse"], "reservoirs": ["reservoirs"]}
CORE_INTRO = {"method_pairs": "A pair of methods is consistent when their log-ratio differs from zero by at most "
                              "two standard deviations of its own Monte Carlo spread; the combined estimate weights "
                              "the methods by the inverse covariance of their log draws."}


def _layout(result, tables):
    """Tables in report order with their headings and intros, from the core's and each part's ``ReportPart``."""
    rank, title, intro = {}, {}, dict(CORE_INTRO)
    for name, (r, t) in CORE_TABLES.items():
        rank[name], title[name] = (r, 0), t
    for key, part in result.report_parts.items():
        owned = list(part.titles) + [_method_table(result, key), key]
        for i, name in enumerate(owned):
            rank.setdefault(name, (part.rank, i))
            if name in part.titles:
                title.setdefault(name, part.titles[name])
        intro.update({k: v for k, v in part.intro.items() if k not in intro})
    names = sorted(tables, key=lambda n: (*rank.get(n, (60, 0)), n))
    return [(n, title.get(n, n.replace("_", " ").capitalize()), intro.get(n)) for n in names]


def _figure_tables(result):
    """Figure stem → the table it is shown under (a method's under its table, a section's under its first)."""
    out = {stem: table for table, stems in CORE_FIGURES.items() for stem in stems}
    for vr in result.vents:
        for key, e in vr.methods.items():
            for stem, _, _ in e.figures:
                out[f"{file_stem(vr.name)}_{stem}"] = _method_table(result, key)
    for key, s in result.sections.items():
        first = next(iter(s.tables), key)
        for stem, _, _ in s.figures:
            out[f"{key}_{stem}"] = first
    return out


def _plain(s):
    return {k: float(getattr(s, attr).magnitude) for k, attr in STATS}


def _pore_fluid_phase(r) -> str:
    """The pore fluid's phase, "none" for a reservoir without porosity, "not determined" when the answer has none."""
    phase = _labels(r).get("pore_fluid_phase")
    if phase:
        return str(phase)
    inputs = getattr(r.get("answer"), "inputs", {}) or {}
    try:
        porosity = float(str(inputs.get("porosity", "nan")).split()[0])
    except ValueError:
        porosity = float("nan")
    return "none (no porosity)" if porosity == 0 else "not determined"


def _labels(r) -> dict:
    """A reservoir's labels (``summarizer.reservoir_answer``: controlling process, conductive length, phase)."""
    ans = r.get("answer")
    return dict(getattr(ans, "labels", {}) or {})


def _nom(q):
    """Central value of an exit temperature that may be an ``Uncertain``."""
    from ..uncertainty import nominal

    return nominal(q)


def _summary(q):
    from ..uncertainty import summarize

    return summarize(q)


# ---- figures -----------------------------------------------------------------
def figures_of(result) -> list:
    figs = []
    if result.vents:
        rows = []  # (y, label, lo, median, hi, method)
        y = 0.0
        for vr in result.vents:
            items = [(k, e.heat_power.to("MW").magnitude) for k, e in vr.methods.items()]
            if vr.comparison is not None:
                items.append(("combined", vr.comparison.combined_draws.to("MW").magnitude))
            for k, d in items:
                lo, med, hi = np.percentile(d[np.isfinite(d)], [5, 50, 95])
                rows.append((y, f"{vr.name}: {method_label(k)}", lo, med, hi, k))
                y += 1
            y += 0.5
        fig, ax = subplots(figsize=(7.5, 1.0 + 0.4 * len(rows)))
        colours: dict[str, str] = {}
        for yy, _, lo, med, hi, k in rows:
            c = colours.setdefault(k, f"C{len(colours)}")
            ax.errorbar(med, yy, xerr=[[med - lo], [hi - med]], fmt="D" if k == "combined" else "o", color=c,
                        capsize=3)
        ax.set_yticks([r[0] for r in rows], [r[1] for r in rows])
        ax.set_xscale("log")
        ax.set_xlabel("heat power [MW] (median and 5–95 % interval)")
        ax.invert_yaxis()
        ax.grid(axis="x", alpha=0.3)
        ax.set_title("Heat power by vent and method")
        fig.set_layout_engine("tight")
        figs.append(("vents_by_method", fig, "Heat power of each vent by each method, and their combination."))
    if result.split is not None:
        fig, ax = subplots(figsize=(6.5, 3.4))
        for k, c in (("focused", "C3"), ("diffuse", "C0"), ("total", "k")):
            d = result.split.draws[k].to("MW").magnitude
            ax.hist(d, bins=60, histtype="step", color=c, label=k, density=True)
        ax.set_xlabel("heat power [MW]")
        ax.set_ylabel("probability density [1/MW]")
        frac = result.split.diffuse_fraction
        ax.set_title(f"Focused and diffuse discharge (diffuse fraction {frac.median.m:.2f}, "
                     f"5–95 %: {frac.p05.m:.2f}–{frac.p95.m:.2f})", fontsize=9)
        ax.legend()
        fig.set_layout_engine("tight")
        figs.append(("focused_diffuse", fig, "Monte Carlo distributions of the focused, diffuse and total output."))
    if result.reservoirs:
        figs.append(("reservoirs", reservoir_figure(result.reservoirs),
                     "How long each heat-reservoir hypothesis can feed the output: the heat-mining time (stored heat "
                     "over today's output), the decline time of an output that falls as the reservoir cools, and "
                     "the conductive time L²/κ (median and 5–95 % interval)."))
    from .sitemap import places, site_map_figure

    on_map = places(result)
    if on_map:
        figs.append(("site_map", site_map_figure(on_map, result.spec.site.name),
                     "Vents and diffuse patches at their positions, in metres east and north of the site's latitude "
                     "and longitude."))
    for vr in result.vents:
        for e in vr.methods.values():
            figs += [(f"{file_stem(vr.name)}_{stem}", f, cap) for stem, f, cap in e.figures]
    for key, s in result.sections.items():
        figs += [(f"{key}_{stem}", f, cap) for stem, f, cap in s.figures]
    return figs


def reservoir_figure(reservoirs):
    """Heat-mining time, decline time and conductive time of each reservoir hypothesis, on one log axis."""
    fig, ax = subplots(figsize=(7.0, 1.8 + 0.7 * len(reservoirs)))
    for i, r in enumerate(reservoirs):
        for s, dy, colour, marker, label in ((r["mining"], -0.15, "C1", "o", "heat-mining time"),
                                             (r["decline"], 0.15, "C4", "v", "decline time")):
            med, lo, hi = s.median.m, s.p05.m, s.p95.m
            ax.errorbar(med, i + dy, xerr=[[med - lo], [hi - med]], fmt=marker, color=colour, capsize=3,
                        label=label if i == 0 else None)
        ax.plot(r["conductive"], i, "s", color="C2", label="conductive time L²/κ" if i == 0 else None)
        ax.annotate(f"decline {r['decline'].median.m:.3g} yr", (r["decline"].median.m, i + 0.15),
                    xytext=(6, -10), textcoords="offset points", fontsize=7, color="C4")
    ax.set_yticks(range(len(reservoirs)), [r["name"] for r in reservoirs])
    ax.set_ylim(len(reservoirs) - 0.4, -0.6)
    ax.set_xscale("log")
    ax.set_xlabel("time [yr]")
    ax.grid(axis="x", alpha=0.3)
    ax.legend(fontsize=8, loc="upper center", bbox_to_anchor=(0.5, -0.28), ncol=3, frameon=False)  # off the data
    ax.set_title("How long each heat reservoir can feed the output", fontsize=10)
    fig.set_layout_engine("tight")
    return fig


def method_label(key: str) -> str:
    """A method's key as a reader sees it: its words (underscores as spaces)."""
    return key.replace("_", " ")


#: Table columns whose cells name methods by their key (shown with ``method_label`` in the report; the CSV keeps keys).
METHOD_COLUMNS = {"method", "methods", "first", "second", "check"}


def _method_text(text: str) -> str:
    return " + ".join(method_label(k) for k in text.split(" + "))


# ---- summary and provenance ---------------------------------------------------
def summary_of(result, tables) -> dict:
    """The JSON summary: SI units with the unit in every key, statistics spelled ``_p05``/``_p50``/``_p95``/``_sd``
    (``ventflux.vocabulary``); table rows converted by ``ventflux.survey.si_keys``."""
    from ..registry import distribution_versions
    from .si_keys import json_row, summary_json

    spec = result.spec
    out = {"scenario": spec.site.name, "cruise": spec.site.cruise, "complete": True,
           "created": _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")}
    for name, ft in (("focused_heat_power", result.focused), ("diffuse_heat_power", result.diffuse),
                     ("conductive_heat_power", result.conductive)):
        if ft is not None:
            out.update(summary_json(name, ft.summary, "MW"))
    if result.total is not None:
        out.update(summary_json("total_heat_power", result.total, "MW"))
    if result.split is not None:
        out.update(summary_json("diffuse_fraction", result.split.diffuse_fraction, "1"))
    for k, s in result.water.items():
        out.update(summary_json(k, s, "kg/s" if "mass" in k else "m^3/s"))
    out["vents"] = [json_row(r) for r in tables["vents"]]
    out["method_pairs"] = [json_row(r) for r in tables.get("method_pairs", [])]
    out["reservoirs"] = [json_row(r) for r in tables.get("reservoirs", [])]
    out["provenance"] = {
        "versions": {**distribution_versions(), "python": platform.python_version(), **_library_versions()},
        "inputs": {str(Path(p)): {"role": role, "sha256": sha256_of(p)} for p, role in spec.input_files.items()},
        "seed": spec.seed, "draws_requested": spec.draws, "draws_used": result.n_draws,
        "unphysical_draws": result.dropped_draws,
        "max_unphysical_share": getattr(spec, "max_unphysical", 0.05),
        "shared_inputs": result.shared_inputs,
        "defaults_used": spec.defaults_used,
        "absolute_pressure_Pa": float(result.pressure.to("Pa").magnitude),
        "vent_fluid_model": "iapws95-water (pure water, IAPWS-95 via CoolProp)",
        "ambient_seawater_model": "TEOS-10 via gsw",
        "method_combination": "best linear unbiased estimate on log power with the draws' covariance, "
                              "widened by the Birge factor when methods disagree (ventflux.aggregate)",
        "elapsed_s": result.elapsed,
        "implausible_values_allowed": bool(getattr(spec, "allow_implausible", False)),
    }
    out["warnings"] = spec.warnings.as_list() if hasattr(spec, "warnings") else []  # every exclusion, named
    return out


def _library_versions():
    from importlib import metadata

    out = {}
    for name in ("numpy", "scipy", "pandas", "pint", "gsw", "CoolProp", "matplotlib", "pluggy"):
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            pass
    return out


# ---- writing --------------------------------------------------------------------
def write_results(result, out_dir) -> Path:
    """Write the results folder atomically; return the path of the HTML report."""
    out_dir = Path(out_dir)
    check_output_location(out_dir, result.spec.input_files)
    tables = tables_of(result)
    figs = figures_of(result)
    summary = summary_of(result, tables)
    from . import paper_table
    from .inputs_table import input_rows

    paper = paper_table.table_rows(result)
    inputs = input_rows(result.spec)
    with results_directory(out_dir, "--out") as tmp:
        (tmp / "tables").mkdir()
        (tmp / "figures").mkdir()
        for name, rows in tables.items():
            _frame(rows).to_csv(tmp / "tables" / f"{name}.csv", index=False)
        _frame(inputs).to_csv(tmp / "tables" / "inputs.csv", index=False)
        _frame(paper_table.csv_rows(paper)).to_csv(tmp / "summary_table.csv", index=False)
        (tmp / "summary_table.md").write_text(paper_table.markdown(paper, f"Heat and water discharge: "
                                                                          f"{result.spec.site.name}"),
                                              encoding="utf-8")
        from .budget import start_budget
        from .netcdf import write_netcdf
        from .rendering import FigureRenderer

        with FigureRenderer() as renderer:
            # figures render in worker processes while this one writes the netCDF file and the budget
            pending = []
            for stem, fig, caption in figs:
                # a method may hand over a finished PNG: shown as it is
                pending.append((stem, caption, fig if isinstance(fig, bytes) else renderer.submit(fig)))
            (tmp / "summary.json").write_text(json.dumps(_clean(summary), indent=2, ensure_ascii=False) + "\n",
                                              encoding="utf-8")
            # Uncertainty budget: tables/budget.csv, budget.json, its figures and its report section; its figures
            # render while this process writes the netCDF file (it would otherwise wait for them)
            finish_budget = start_budget(result, tmp, _figure, renderer)
            # results.nc: the whole result in one netCDF file
            write_netcdf(result, tmp / "results.nc", draws=getattr(result.spec, "netcdf_draws", False))
            budget_html = finish_budget()
            images = []
            for stem, caption, job in pending:
                png, shown = (job, job) if isinstance(job, bytes) else job.result()
                (tmp / "figures" / f"{stem}.png").write_bytes(png)
                images.append((stem, caption, shown))
        (tmp / "report.html").write_text(_html(result, tables, images, summary, budget_html, paper, inputs),
                                         encoding="utf-8")
    return out_dir / "report.html"


def _clean(v):
    from ..io import json_ready

    return json_ready(v)


def _plain_cell(v):
    if isinstance(v, (np.ndarray, np.generic)) and np.ndim(v) == 0:
        return v.item()
    return v


def _frame(rows):
    return pd.DataFrame([{k: _plain_cell(v) for k, v in r.items()} for r in rows])


_LABEL_WORDS = {"p05": "5 %", "p95": "95 %", "p50": "median", "std": "s.d.", "sd": "s.d.", "median": "median",
                "degC": "°C", "MW": "MW"}


def human_label(column: str) -> str:
    """A column name as a reader sees it: ``heat_power_p05 [MW]`` → ``Heat power 5 % [MW]``.

    The CSV tables keep the machine names (stable for scripts); only the report shows these labels.
    """
    name, _, unit = column.partition(" [")
    words = [_LABEL_WORDS.get(w, w) for w in name.replace("_", " ").split()]
    text = " ".join(words)
    text = text[:1].upper() + text[1:]
    unit = unit.replace("degC", "°C").replace("^3", "³").replace("^2", "²")
    return f"{text} [{unit}" if unit else text


#: A table with more columns than this and at most ``TRANSPOSE_ROWS`` rows is shown transposed (it fits the page).
TRANSPOSE_COLUMNS = 9
TRANSPOSE_ROWS = 4
_TRIPLE = re.compile(r"^(?P<base>.+)_(?:p50|median) \[(?P<unit>[^\]]*)\]$")


def _combined_intervals(rows: list[dict]) -> tuple[list[dict], set]:
    """The report's view of a table: each ``X_p50``/``X_p05``/``X_p95`` triple as one cell ``12.3 (11.2–14.1)``,
    rounded by ``paper_table``'s rule (the CSV keeps every column). Returns the rows and the combined labels."""
    from .paper_table import paper_cell

    cols = list(dict.fromkeys(k for r in rows for k in r))
    merged, labels = {}, set()
    for c in cols:
        m = _TRIPLE.match(str(c))
        if m and f"{m['base']}_p05 [{m['unit']}]" in cols and f"{m['base']}_p95 [{m['unit']}]" in cols:
            unit = m["unit"].replace("degC", "°C").replace("^3", "³").replace("^2", "²")
            label = f"{human_label(m['base'])} [{unit}], median (5–95 %)"
            merged[c] = (f"{m['base']}_p05 [{m['unit']}]", f"{m['base']}_p95 [{m['unit']}]", label)
            labels.add(label)
    if not merged:
        return rows, labels
    drop = {x for lo, hi, _ in merged.values() for x in (lo, hi)}
    out = []
    for r in rows:
        row = {}
        for c in cols:
            if c in drop:
                continue
            if c in merged:
                lo, hi, label = merged[c]
                v, a, b = (_number(r.get(k)) for k in (c, lo, hi))
                row[label] = paper_cell(v, a, b) if all(math.isfinite(x) for x in (v, a, b)) else "–"
            elif c in r:
                row[c] = r[c]
        out.append(row)
    return out, labels


def _number(v) -> float:
    try:
        return float(v)
    except (TypeError, ValueError):
        return float("nan")


def _cell(v) -> tuple[str, bool]:
    """A table cell as (HTML text, is a number)."""
    v = _plain_cell(v)
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "–", True
    if isinstance(v, (bool, np.bool_)):
        return ("yes" if v else "no"), False
    if isinstance(v, (int, float, np.integer, np.floating)):
        return f"{v:.4g}", True
    return html.escape(str(v)), False


def _table_html(rows, raw_columns=False, widths=None):
    """A table for the report: human column labels (unless ``raw_columns``), interval triples in one cell, numbers
    right-aligned and text left-aligned, transposed when it has many columns and few rows; optional widths in %."""
    if not rows:
        return "<p>(none)</p>"
    rows, done = _combined_intervals(rows)
    rows = [{k: (_method_text(v) if k in METHOD_COLUMNS and isinstance(v, str) else v) for k, v in r.items()}
            for r in rows]
    cols = list(dict.fromkeys(k for r in rows for k in r))
    heads = [c if raw_columns or c in done else human_label(str(c)) for c in cols]
    if len(cols) > TRANSPOSE_COLUMNS and len(rows) <= TRANSPOSE_ROWS and not widths:
        first = [_cell(r.get(cols[0]))[0] for r in rows]
        body = "".join(
            f"<tr><th scope='row'>{html.escape(h)}</th>" + "".join(
                f"<td class='{'n' if num else 's'}'>{text}</td>" for text, num in (_cell(r.get(c)) for r in rows))
            + "</tr>" for c, h in zip(cols[1:], heads[1:]))
        head = (f"<tr><th>{html.escape(heads[0])}</th>" + "".join(f"<th>{t}</th>" for t in first) + "</tr>")
        return f"<div class='wrap'><table class='t tr'><thead>{head}</thead><tbody>{body}</tbody></table></div>"
    colgroup = ("<colgroup>" + "".join(f"<col style='width:{w}%'>" for w in widths) + "</colgroup>") if widths else ""
    head = "<tr>" + "".join(f"<th>{html.escape(h)}</th>" for h in heads) + "</tr>"
    body = "".join("<tr>" + "".join(f"<td class='{'n' if num else 's'}'>{text}</td>"
                                    for text, num in (_cell(r.get(c)) for c in cols)) + "</tr>" for r in rows)
    return (f"<div class='wrap'><table class='t'>{colgroup}<thead>{head}</thead><tbody>{body}</tbody></table>"
            "</div>")


def _unit_html(unit: str) -> str:
    return unit.replace("^3", "³").replace("^2", "²")


def _html(result, tables, images, summary, budget_html="", paper=None, inputs=None) -> str:
    spec = result.spec
    esc = html.escape
    parts = [f"""<!DOCTYPE html><html lang="en"><head><meta charset="utf-8">
<title>ventflux survey report: {esc(spec.site.name)}</title>
<style>
body{{font-family:system-ui,sans-serif;max-width:62rem;margin:2rem auto;padding:0 1rem;color:#222;line-height:1.45}}
h1{{font-size:1.6rem}} h2{{font-size:1.2rem;border-bottom:1px solid #ccc;padding-bottom:.2rem;margin-top:2rem}}
table.t{{border-collapse:collapse;font-size:.8rem;margin:.5rem 0;width:100%;table-layout:fixed}}
table.t td,table.t th{{padding:.2rem .35rem;border-bottom:1px solid #e3e3e3;text-align:left;overflow-wrap:break-word;
hyphens:auto}}
table.t td.n{{text-align:right;font-variant-numeric:tabular-nums}}
table.t.tr th[scope=row]{{text-align:left;font-weight:500}}
table.t th{{background:#f4f4f4;font-weight:600;vertical-align:bottom}}
.caution{{background:#fff4e0;border-left:4px solid #e0a030;padding:.6rem 1rem}}
.key{{font-size:1.1rem}} .note{{color:#555;font-style:italic}}
figure{{margin:1rem 0}} figcaption{{font-size:.85rem;color:#555}}
code{{background:#f4f4f4;padding:0 .2rem;overflow-wrap:anywhere}} .wrap{{max-width:100%}}
img{{max-width:100%;height:auto}} li{{overflow-wrap:anywhere}}
@media print{{body{{max-width:none;margin:0;font-size:9pt}} table.t{{font-size:7.5pt}} h2{{break-after:avoid}}
figure,tr{{break-inside:avoid}} .caution{{border:1px solid #e0a030}}}}
</style></head><body>
<h1>Heat and water discharge: {esc(spec.site.name)}</h1>
<p class="caution">{esc(CAUTION)}</p>"""]
    key = []
    if result.total is not None:
        t = result.total.to("MW")
        key.append(f"Total heat output <b>{t.median.m:.3g} MW</b> (5–95 %: {t.p05.m:.3g}–{t.p95.m:.3g} MW).")
    if result.split is not None:
        f = result.split.diffuse_fraction
        key.append(f"Of the discharge by fluid, diffuse flow carries <b>{f.median.m:.0%}</b> "
                   f"({f.p05.m:.0%}–{f.p95.m:.0%}); focused vents the rest.")
    inconsistent = [vr.name for vr in result.vents if vr.comparison is not None and not vr.comparison.consistent]
    compared = [vr.name for vr in result.vents if vr.comparison is not None]
    if compared:
        n_ok, n = len(compared) - len(inconsistent), len(compared)
        which = (f"the one vent measured by more than one method ({esc(compared[0])})" if n == 1 else
                 f"{n_ok if n_ok else 'all'} of the {n} vents measured by more than one method")
        if n_ok == 0:
            key.append(f"Independent methods disagree beyond their errors for {which}.")
        else:
            key.append(f"Independent methods agree within their errors for {which}" +
                       (f"; they disagree for {esc(', '.join(inconsistent))}." if inconsistent else "."))
    for k, cmp in result.checks:
        p = cmp.pairs[0]
        key.append(f"The {esc(k.replace('_', ' '))} check gives {1 / p.ratio:.2f} times the {esc(p.first)}"
                   + (", within the errors." if p.consistent else ", beyond the errors."))
    parts.append("<p class='key'>" + " ".join(key) + "</p>")
    parts.append(f"<p>Site depth/pressure: {result.pressure.to('MPa').m:.4g} MPa absolute; latitude "
                 f"{spec.site.latitude}, longitude {spec.site.longitude}. Monte Carlo: {result.n_draws} usable draws "
                 f"of {spec.draws} (seed {spec.seed}); {result.dropped_draws} draws dropped as physically impossible "
                 f"(limit {getattr(spec, 'max_unphysical', 0.05):.1%} of the draws, "
                 "<code>[run] max_unphysical</code>).</p>")
    img_by = {stem: (cap, data) for stem, cap, data in images}
    if paper:
        from .paper_table import RULE

        parts.append("<h2>Summary for a paper</h2><p>" + esc(RULE) + " Also written as <code>summary_table.csv"
                     "</code> and <code>summary_table.md</code>.</p>")
        parts.append(_table_html([{"Quantity": r["quantity"], "Unit": _unit_html(r["unit"]),
                                   "Median (5–95 %)": r["value (5–95 %)"]} for r in paper], raw_columns=True))
    parts.append("<h2>Site map</h2>")
    if "site_map" in img_by:
        parts.append(_figure("site_map", *img_by.pop("site_map")))
    else:
        from .sitemap import NO_POSITIONS

        parts.append(f"<p class='note'>{NO_POSITIONS}</p>")
    under = _figure_tables(result)
    shown = set()
    for n, title, intro in _layout(result, tables):
        parts.append(f"<h2>{esc(title)}</h2>")
        if intro:
            parts.append(f"<p>{esc(intro)}</p>")
        parts.append(_table_html(tables[n]))
        for stem in [s for s in img_by if under.get(s) == n]:
            parts.append(_figure(stem, *img_by[stem]))
            shown.add(stem)
    rest = [s for s in img_by if s not in shown]
    if rest:
        parts.append("<h2>Method figures</h2>")
        parts += [_figure(s, *img_by[s]) for s in rest]
    parts.append(budget_html)  # the uncertainty budget's section (ventflux.survey.budget)
    if inputs:
        parts.append("<h2>Inputs as written</h2><p>Every value of the survey file as written, the defaults the run "
                     "used for what the file leaves out, and values given on the command line; shared inputs are "
                     "drawn once per Monte Carlo draw for every use. Also in <code>tables/inputs.csv</code>.</p>")
        parts.append(_table_html(inputs, widths=(34, 14, 34, 18)))
    prov = summary["provenance"]
    parts.append("<h2>Provenance</h2><p>Inputs (SHA-256):</p><ul>" + "".join(
        f"<li><code>{esc(Path(p).name)}</code> ({esc(v['role'])}): <code>{v['sha256'][:16]}…</code></li>"
        for p, v in prov["inputs"].items()) + "</ul>")
    parts.append("<p>Versions: " + esc(", ".join(f"{k} {v}" for k, v in prov["versions"].items())) + "</p>")
    if prov["defaults_used"]:
        parts.append("<p>Defaults used: " + esc("; ".join(f"{k} = {v}" for k, v in prov["defaults_used"].items()))
                     + "</p>")
    if summary.get("warnings"):
        parts.append("<h2>Warnings</h2><ul>" + "".join(f"<li><code>{esc(w['key'])}</code>: {esc(w['message'])}</li>"
                                                       for w in summary["warnings"]) + "</ul>")
    notes = [n for vr in result.vents for e in vr.methods.values() for n in e.notes]
    notes += [n for s in result.sections.values() for n in s.notes]
    if notes:
        parts.append("<h2>Notes</h2><ul>" + "".join(f"<li>{esc(n)}</li>" for n in dict.fromkeys(notes)) + "</ul>")
    parts.append("<p style='font-size:.8rem;color:#777'>Heat is an enthalpy difference at in-situ pressure: vent "
                 "fluid as pure water (IAPWS-95), ambient seawater from TEOS-10. The full summary with every "
                 "number is in <code>summary.json</code>; tables are in <code>tables/</code>.</p></body></html>")
    return "\n".join(parts)


def _figure(stem, caption, data):
    """A figure for the report: SVG or PNG bytes embedded as a data URI (the report is one self-contained file)."""
    mime = "image/png" if data[:8] == b"\x89PNG\r\n\x1a\n" else "image/svg+xml"
    b64 = base64.b64encode(data).decode("ascii")
    return (f"<figure><img alt='{html.escape(caption)}' data-stem='{html.escape(stem)}' style='max-width:100%' "
            f"src='data:{mime};base64,{b64}'><figcaption>{html.escape(caption)}</figcaption></figure>")
