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
import io
import json
import platform
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import InputError
from ..io import check_results_destination, results_directory, sha256_of

CAUTION = ("These estimates are for scientific analysis. They are not for the operational safety of people or "
           "vehicles near hot fluids: follow the operator's procedures and local codes.")


def _mw(s):
    s = s.to("MW")
    return {"median [MW]": s.median.magnitude, "p05 [MW]": s.p05.magnitude, "p95 [MW]": s.p95.magnitude,
            "mean [MW]": s.mean.magnitude, "std [MW]": s.std.magnitude}


def check_output_location(out_dir: Path, spec):
    """Refuse an output folder that holds, or is, any input, or anything ventflux did not write."""
    check_results_destination(out_dir, "--out")
    out = Path(out_dir).resolve()
    for f in spec.input_files:
        p = Path(f).resolve()
        if out == p or out in p.parents:
            raise InputError("--out", str(out_dir), f"a folder that contains no input file (it contains {p})")


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
            row["mass_flux_median [kg/s]"] = float(np.median(m))
            row["annual_volume_median [km^3/yr]"] = float(np.median(vr.throughput.annual_volume.to("km^3/yr").m))
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
                    "heat_mining_time_median [yr]": r["mining"].median.magnitude,
                    "heat_mining_time_p05 [yr]": r["mining"].p05.magnitude,
                    "heat_mining_time_p95 [yr]": r["mining"].p95.magnitude,
                    "decline_time_median [yr]": r["decline"].median.magnitude,
                    "conductive_time [yr]": r["conductive"], "controlling": r["controlling"]})
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
                out[f"{_slug(vr.name)}_{stem}"] = _method_table(result, key)
    for key, s in result.sections.items():
        first = next(iter(s.tables), key)
        for stem, _, _ in s.figures:
            out[f"{key}_{stem}"] = first
    return out


def _plain(s):
    return {"mean": float(s.mean.magnitude), "median": float(s.median.magnitude), "p05": float(s.p05.magnitude),
            "p95": float(s.p95.magnitude), "std": float(s.std.magnitude)}


def _nom(q):
    """Central value of an exit temperature that may be an ``Uncertain``."""
    from ..uncertainty import nominal

    return nominal(q)


def _summary(q):
    from ..uncertainty import summarize

    return summarize(q)


# ---- figures -----------------------------------------------------------------
def figures_of(result) -> list:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

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
                rows.append((y, f"{vr.name}: {k}", lo, med, hi, k))
                y += 1
            y += 0.5
        fig, ax = plt.subplots(figsize=(7.5, 1.0 + 0.4 * len(rows)))
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
        fig.tight_layout()
        figs.append(("vents_by_method", fig, "Heat power of each vent by each method, and their combination."))
    if result.split is not None:
        fig, ax = plt.subplots(figsize=(6.5, 3.4))
        for k, c in (("focused", "C3"), ("diffuse", "C0"), ("total", "k")):
            d = result.split.draws[k].to("MW").magnitude
            ax.hist(d, bins=60, histtype="step", color=c, label=k, density=True)
        ax.set_xlabel("heat power [MW]")
        ax.set_ylabel("probability density")
        frac = result.split.diffuse_fraction
        ax.set_title(f"Focused and diffuse discharge (diffuse fraction {frac.median.m:.2f}, "
                     f"5–95 %: {frac.p05.m:.2f}–{frac.p95.m:.2f})", fontsize=9)
        ax.legend()
        fig.tight_layout()
        figs.append(("focused_diffuse", fig, "Monte Carlo distributions of the focused, diffuse and total output."))
    if result.reservoirs:
        fig, ax = plt.subplots(figsize=(6.5, 0.8 + 0.6 * len(result.reservoirs)))
        for i, r in enumerate(result.reservoirs):
            m = r["mining"]
            ax.errorbar(m.median.m, i, xerr=[[m.median.m - m.p05.m], [m.p95.m - m.median.m]], fmt="o", color="C1",
                        capsize=3, label="heat-mining time" if i == 0 else None)
            ax.plot(r["conductive"], i, "s", color="C2", label="conductive time L²/κ" if i == 0 else None)
        ax.set_yticks(range(len(result.reservoirs)), [r["name"] for r in result.reservoirs])
        ax.set_xscale("log")
        ax.set_xlabel("time [yr]")
        ax.legend(fontsize=8)
        ax.invert_yaxis()
        fig.tight_layout()
        figs.append(("reservoirs", fig, "How long each heat-reservoir hypothesis can feed the output."))
    for vr in result.vents:
        for e in vr.methods.values():
            figs += [(f"{_slug(vr.name)}_{stem}", f, cap) for stem, f, cap in e.figures]
    for key, s in result.sections.items():
        figs += [(f"{key}_{stem}", f, cap) for stem, f, cap in s.figures]
    return figs


def _slug(name):
    return "".join(ch if ch.isalnum() else "-" for ch in name.lower()).strip("-") or "survey"


# ---- summary and provenance ---------------------------------------------------
def summary_of(result, tables) -> dict:
    from ..registry import distribution_versions

    spec = result.spec
    out = {"scenario": spec.site.name, "cruise": spec.site.cruise, "complete": True,
           "created": _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")}
    if result.focused is not None:
        out.update(result.focused.summary.as_dict("focused_heat_power", "MW"))
    if result.diffuse is not None:
        out.update(result.diffuse.summary.as_dict("diffuse_heat_power", "MW"))
    if result.conductive is not None:
        out.update(result.conductive.summary.as_dict("conductive_heat_power", "MW"))
    if result.total is not None:
        out.update(result.total.as_dict("total_heat_power", "MW"))
    if result.split is not None:
        out.update(result.split.diffuse_fraction.as_dict("diffuse_fraction", "dimensionless"))
    for k, s in result.water.items():
        unit = "kg/s" if "mass" in k else "m^3/s"
        out.update(s.as_dict(k, unit))
    out["vents"] = tables["vents"]
    out["method_pairs"] = tables.get("method_pairs", [])
    out["reservoirs"] = tables.get("reservoirs", [])
    out["provenance"] = {
        "versions": {**distribution_versions(), "python": platform.python_version(), **_library_versions()},
        "inputs": {str(Path(p)): {"role": role, "sha256": sha256_of(p)} for p, role in spec.input_files.items()},
        "seed": spec.seed, "draws_requested": spec.draws, "draws_used": result.n_draws,
        "unphysical_draws": result.dropped_draws,
        "max_unphysical_share": getattr(spec, "max_unphysical", 0.05),
        "shared_inputs": result.shared_inputs,
        "defaults_used": spec.defaults_used,
        "pressure_Pa": float(result.pressure.to("Pa").magnitude),
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
    check_output_location(out_dir, result.spec)
    tables = tables_of(result)
    figs = figures_of(result)
    summary = summary_of(result, tables)
    import matplotlib.pyplot as plt

    with results_directory(out_dir, "--out") as tmp:
        (tmp / "tables").mkdir()
        (tmp / "figures").mkdir()
        for name, rows in tables.items():
            _frame(rows).to_csv(tmp / "tables" / f"{name}.csv", index=False)
        images = []
        for stem, fig, caption in figs:
            if isinstance(fig, bytes):  # a method may hand over a finished PNG
                data = fig
            else:
                buf = io.BytesIO()
                fig.savefig(buf, format="png", dpi=110)
                plt.close(fig)
                data = buf.getvalue()
            (tmp / "figures" / f"{stem}.png").write_bytes(data)
            images.append((stem, caption, data))
        (tmp / "summary.json").write_text(json.dumps(_clean(summary), indent=2, ensure_ascii=False) + "\n",
                                          encoding="utf-8")
        # Uncertainty budget: tables/budget.csv, budget.json, its figures and its report section.
        from .budget import write_budget

        budget_html = write_budget(result, tmp, _figure)
        from .netcdf import write_netcdf  # results.nc: the whole result in one netCDF file

        write_netcdf(result, tmp / "results.nc", draws=getattr(result.spec, "netcdf_draws", False))
        (tmp / "report.html").write_text(_html(result, tables, images, summary, budget_html), encoding="utf-8")
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


_LABEL_WORDS = {"p05": "5 %", "p95": "95 %", "std": "s.d.", "median": "median", "degC": "°C", "MW": "MW"}


def human_label(column: str) -> str:
    """A column name as a reader sees it: ``heat_power_p05 [MW]`` → ``Heat power 5 % [MW]``.

    The CSV tables keep the machine names (stable for scripts); only the report shows these labels.
    """
    name, _, unit = column.partition(" [")
    words = [_LABEL_WORDS.get(w, w) for w in name.replace("_", " ").split()]
    text = " ".join(words)
    text = text[:1].upper() + text[1:]
    return f"{text} [{unit}" if unit else text


def _table_html(rows):
    if not rows:
        return "<p>(none)</p>"
    frame = _frame(rows)
    frame.columns = [human_label(str(c)) for c in frame.columns]
    table = frame.to_html(index=False, float_format=lambda x: f"{x:.4g}", na_rep="–", border=0, classes="t")
    return f"<div class='wrap'>{table}</div>"


def _html(result, tables, images, summary, budget_html="") -> str:
    spec = result.spec
    esc = html.escape
    parts = [f"""<!DOCTYPE html><html lang="en"><head><meta charset="utf-8">
<title>ventflux survey report: {esc(spec.site.name)}</title>
<style>
body{{font-family:system-ui,sans-serif;max-width:62rem;margin:2rem auto;padding:0 1rem;color:#222;line-height:1.45}}
h1{{font-size:1.6rem}} h2{{font-size:1.2rem;border-bottom:1px solid #ccc;padding-bottom:.2rem;margin-top:2rem}}
table.t{{border-collapse:collapse;font-size:.8rem;margin:.5rem 0;width:100%;table-layout:fixed}}
table.t td,table.t th{{padding:.2rem .35rem;border-bottom:1px solid #e3e3e3;text-align:right;overflow-wrap:anywhere}}
table.t th{{overflow-wrap:anywhere}}
table.t th{{background:#f4f4f4;font-weight:600;vertical-align:bottom}} table.t td:first-child{{text-align:left}}
.caution{{background:#fff4e0;border-left:4px solid #e0a030;padding:.6rem 1rem}}
.key{{font-size:1.1rem}} figure{{margin:1rem 0}} figcaption{{font-size:.85rem;color:#555}}
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
    b64 = base64.b64encode(data).decode("ascii")
    return (f"<figure><img alt='{html.escape(stem)}' style='max-width:100%' src='data:image/png;base64,{b64}'>"
            f"<figcaption>{html.escape(caption)}</figcaption></figure>")
