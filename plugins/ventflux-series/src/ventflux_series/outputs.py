"""The series results folder: a table per vent, one netCDF time series, figures, summary.json and a report.

Written through ``ventflux.io.results_directory`` (complete or not at all; never over a user's files).
Figures are drawn here; nothing here computes physics or statistics beyond formatting.
"""

from __future__ import annotations

import base64
import html
import io
import json
from pathlib import Path

import numpy as np

from ventflux.plugin_api import json_ready, results_directory, subplots

from .analysis import TIDAL_PERIODS_H, VentSeries

CAUTION = ("These estimates are for scientific analysis. They are not for the operational safety of people or "
           "vehicles near hot fluids: follow the operator's procedures and local codes.")


def _iso(t) -> str:
    return np.datetime_as_string(np.datetime64(t, "s")) + "Z"


def vent_table(s: VentSeries, results_by_index) -> str:
    """CSV of one vent's series: time, median and 5–95 % in MW, method, item and quality flags."""
    lines = ["time [UTC],heat_power_median [MW],heat_power_p05 [MW],heat_power_p95 [MW],unphysical_draws,method,"
             "item_file,flags"]
    for i in range(len(s.times)):
        r = results_by_index[int(s.items[i])]
        flags = "; ".join(r.flags).replace('"', "'")
        lines.append(f"{_iso(s.times[i])},{s.median_W[i] / 1e6:.6g},{s.p05_W[i] / 1e6:.6g},{s.p95_W[i] / 1e6:.6g},"
                     f"{int(s.unphysical[i])},{s.method},{r.file},\"{flags}\"")
    return "\n".join(lines) + "\n"


def to_dataset(series: list[VentSeries]):
    """One xarray Dataset: ``heat_power`` (vent × time) quantiles in W, CF time coordinate and attributes."""
    import xarray as xr

    times = np.unique(np.concatenate([s.times for s in series])) if series else np.array([], "datetime64[ns]")
    shape = (len(series), len(times))
    med, lo, hi = (np.full(shape, np.nan) for _ in range(3))
    for v, s in enumerate(series):
        k = np.searchsorted(times, s.times)
        med[v, k], lo[v, k], hi[v, k] = s.median_W, s.p05_W, s.p95_W
    attrs = {"units": "W", "long_name": "heat power of the vent (enthalpy flux above ambient)"}
    ds = xr.Dataset(
        {"heat_power_median": (("vent", "time"), med, {**attrs, "cell_methods": "draw: median"}),
         "heat_power_p05": (("vent", "time"), lo, {**attrs, "cell_methods": "draw: percentile 5"}),
         "heat_power_p95": (("vent", "time"), hi, {**attrs, "cell_methods": "draw: percentile 95"})},
        coords={"vent": [s.vent for s in series], "time": ("time", times, {"standard_name": "time", "axis": "T"})},
        attrs={"Conventions": "CF-1.10", "title": "Vent heat output through time", "source": "ventflux series",
               "comment": CAUTION})
    return ds


def _png(fig) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=150, bbox_inches="tight")
    return buf.getvalue()


def figure_series(s: VentSeries) -> bytes:
    fig, ax = subplots(figsize=(9, 3.6))
    t = s.times.astype("datetime64[s]").astype(object)
    ax.fill_between(t, s.p05_W / 1e6, s.p95_W / 1e6, color="#9ecae1", label="5–95 %", step=None)
    ax.plot(t, s.median_W / 1e6, color="#08519c", lw=1, label="median")
    for st in s.steps:
        ax.axvspan(np.asarray(st.time_low).astype("datetime64[s]").item(),
                   np.asarray(st.time_high).astype("datetime64[s]").item(), color="#fdae6b", alpha=0.5)
        ax.axvline(np.asarray(st.time).astype("datetime64[s]").item(), color="#d94801", lw=1.2,
                   label=f"step {st.size_W / 1e6:+.3g} MW")
    ax.set_ylabel("heat power [MW]")
    ax.set_xlabel("time [UTC]")
    ax.set_title(f"{s.vent}: heat output through time ({s.method})")
    ax.legend(loc="best", fontsize=8)
    fig.autofmt_xdate()
    return _png(fig)


def figure_periodogram(s: VentSeries) -> bytes | None:
    if s.periodogram is None:
        return None


    pg = s.periodogram
    fig, ax = subplots(figsize=(9, 3.2))
    ax.semilogx(pg.period_h, pg.power, color="#333", lw=0.8)
    found_by = {c.name: c.found for c in s.constituents}
    for name, period in TIDAL_PERIODS_H.items():
        found = found_by.get(name, False)
        ax.axvline(period, color="#d62728" if found else "#bbb", ls="--", lw=0.8)
        ax.text(period, ax.get_ylim()[1] * 0.95, name, rotation=90, va="top", ha="right", fontsize=7,
                color="#d62728" if found else "#777")
    ax.set_xlabel("period [h]")
    ax.set_ylabel("normalized Lomb–Scargle power")
    ax.set_title(f"{s.vent}: periods in the output (tidal constituents dashed; red where found)")
    return _png(fig)


def _b64(png: bytes, alt: str) -> str:
    return (f"<figure><img alt='{html.escape(alt)}' style='max-width:100%' "
            f"src='data:image/png;base64,{base64.b64encode(png).decode()}'></figure>")


def summary_of(manifest, series: list[VentSeries], results, stats: dict, inputs: dict) -> dict:
    def steps(s):
        return [{"time_utc": _iso(st.time), "time_low_utc": _iso(st.time_low), "time_high_utc": _iso(st.time_high),
                 "size_W": st.size_W, "size_sd_W": st.size_sd_W} for st in s.steps]

    vents = {}
    for s in series:
        m = s.mean_draws_W[np.isfinite(s.mean_draws_W)]
        vents[s.vent] = {
            "method": s.method, "time_steps": int(len(s.times)),
            "mean_heat_power_median_W": float(np.median(m)) if m.size else None,
            "mean_heat_power_p05_W": float(np.percentile(m, 5)) if m.size else None,
            "mean_heat_power_p95_W": float(np.percentile(m, 95)) if m.size else None,
            "trend_W_per_day": s.trend_W_per_day, "trend_sd_W_per_day": s.trend_sd_W_per_day,
            "steps": steps(s),
            # JSON keys carry SI units (ventflux.vocabulary): periods in s, phases in rad.
            "periodogram_peak_periods_s": [] if s.periodogram is None else [p * 3600.0 for p in s.periodogram.peaks_h],
            "tidal_constituents": {c.name: {"period_s": c.period_h * 3600.0, "resolved": c.resolved, "found": c.found,
                                            "amplitude_W": c.amplitude_W, "amplitude_se_W": c.amplitude_se_W,
                                            "phase_rad": float(np.deg2rad(c.phase_deg))} for c in s.constituents},
            "notes": s.notes}
    failed = [{"item_file": r.file, "vent": r.vent, "reason": r.error} for r in results if not r.ok]
    flagged = [{"item_file": r.file, "vent": r.vent, "flags": r.flags} for r in results if r.ok and r.flags]
    return {"series": manifest.name, "vents": vents, "failed_items": failed, "flagged_items": flagged,
            "run": {**stats, "draws": manifest.draws, "seed": manifest.seed, "interval_s": manifest.interval_s,
                    "max_unphysical_share": manifest.max_unphysical},
            "inputs": inputs}


def report_html(manifest, series, summary, figures) -> str:
    esc = html.escape
    parts = [f"""<!DOCTYPE html><html lang="en"><head><meta charset="utf-8">
<title>ventflux series report: {esc(manifest.name)}</title><style>
body{{font-family:system-ui,sans-serif;max-width:62rem;margin:2rem auto;padding:0 1rem;color:#222;line-height:1.45}}
table{{border-collapse:collapse;font-size:.85rem;width:100%}}
td,th{{padding:.2rem .4rem;border-bottom:1px solid #e3e3e3;text-align:left;overflow-wrap:anywhere}}
th{{background:#f4f4f4}} img{{max-width:100%;height:auto}}
.caution{{background:#fff4e0;border-left:4px solid #e0a030;padding:.6rem 1rem}}
@media print{{body{{max-width:none;margin:0}} figure{{break-inside:avoid}}}}
</style></head><body><h1>Heat output through time: {esc(manifest.name)}</h1>
<p class="caution">{esc(CAUTION)}</p>"""]
    run = summary["run"]
    parts.append(f"<p>{run['items']} items ({run['computed']} computed, {run['cached']} from the cache; scheduler "
                 f"{esc(str(run['scheduler']))}); {run['draws']} Monte Carlo draws (seed {run['seed']}), inputs of a "
                 "vent drawn once for its whole series so systematic errors do not average away over time; "
                 f"records averaged over {run['interval_s'] / 3600:g} h windows.</p>")
    for s in series:
        v = summary["vents"][s.vent]
        parts.append(f"<h2>{esc(s.vent)}</h2>")
        if v["mean_heat_power_median_W"] is not None:
            parts.append(f"<p>Mean output over the series <b>{v['mean_heat_power_median_W'] / 1e6:.3g} MW</b> "
                         f"(5–95 %: {v['mean_heat_power_p05_W'] / 1e6:.3g}–"
                         f"{v['mean_heat_power_p95_W'] / 1e6:.3g} MW);"
                         f" trend {s.trend_W_per_day / 1e6:+.3g} ± {s.trend_sd_W_per_day / 1e6:.2g} MW/day.</p>")
        for st in v["steps"]:
            parts.append(f"<p>Step of {st['size_W'] / 1e6:+.3g} ± {st['size_sd_W'] / 1e6:.2g} MW at "
                         f"{esc(st['time_utc'])} (90 %: {esc(st['time_low_utc'])} – {esc(st['time_high_utc'])}).</p>")
        found = [f"{k} ({c['amplitude_W'] / 1e6:.2g} ± {c['amplitude_se_W'] / 1e6:.1g} MW)"
                 for k, c in v["tidal_constituents"].items() if c["found"]]
        unresolved = [k for k, c in v["tidal_constituents"].items() if not c["resolved"]]
        if v["tidal_constituents"]:
            parts.append("<p>Tidal constituents found (amplitude above three standard errors): "
                         + (esc(", ".join(found)) or "none")
                         + (f"; not resolved by this record's length: {esc(', '.join(unresolved))}"
                            if unresolved else "")
                         + ". Strongest periodogram peaks: "
                         + esc(", ".join(f"{p / 3600:.2f} h" for p in v["periodogram_peak_periods_s"])) + ".</p>")
        for png, alt in figures.get(s.vent, []):
            parts.append(_b64(png, alt))
        for n in s.notes:
            parts.append(f"<p><i>{esc(n)}</i></p>")
    rows = summary["failed_items"]
    parts.append("<h2>Items that failed</h2>" + ("<p>None.</p>" if not rows else "<table><tr><th>Item</th><th>Vent</th>"
                 "<th>Reason</th></tr>" + "".join(f"<tr><td>{esc(r['item_file'])}</td><td>{esc(r['vent'])}</td>"
                                                  f"<td>{esc(r['reason'])}</td></tr>" for r in rows) + "</table>"))
    flagged = summary["flagged_items"]
    if flagged:
        parts.append("<h2>Quality notes</h2><ul>" + "".join(
            f"<li>{esc(r['item_file'])}: {esc('; '.join(r['flags']))}</li>" for r in flagged) + "</ul>")
    parts.append("<h2>Inputs</h2><table><tr><th>Input</th><th>As written</th></tr>" + "".join(
        f"<tr><td>{esc(k)}</td><td>{esc(v)}</td></tr>" for k, v in summary["inputs"].items()) + "</table>")
    parts.append("<p style='font-size:.8rem;color:#777'>Step and trend intervals assume independent residuals; "
                 "real records are autocorrelated, so they are somewhat too narrow.</p></body></html>")
    return "\n".join(parts)


def write_results(out: Path, manifest, series, results, stats, inputs) -> Path:
    """Write the folder; return the report's path."""
    by_index = {r.index: r for r in results}
    summary = json_ready(summary_of(manifest, series, results, stats, inputs))
    figures = {}
    for s in series:
        figs = []
        if len(s.times):
            figs.append((figure_series(s), f"{s.vent} heat output through time"))
            pg = figure_periodogram(s)
            if pg is not None:
                figs.append((pg, f"{s.vent} periodogram"))
        figures[s.vent] = figs
    ds = to_dataset(series)
    with results_directory(out, "--out") as tmp:
        (tmp / "tables").mkdir()
        (tmp / "figures").mkdir()
        for s in series:
            slug = "".join(c if c.isalnum() else "-" for c in s.vent.lower()).strip("-")
            (tmp / "tables" / f"{slug}.csv").write_text(vent_table(s, by_index), encoding="utf-8")
            for k, (png, _) in enumerate(figures[s.vent]):
                (tmp / "figures" / f"{slug}-{'series' if k == 0 else 'periodogram'}.png").write_bytes(png)
        failed = ["item_file,vent,reason"] + [f"{r['item_file']},{r['vent']},\"{r['reason']}\""
                                             for r in summary["failed_items"]]
        (tmp / "tables" / "failed_items.csv").write_text("\n".join(failed) + "\n", encoding="utf-8")
        ds.to_netcdf(tmp / "series.nc")
        (tmp / "summary.json").write_text(json.dumps(summary, indent=2, ensure_ascii=False) + "\n", encoding="utf-8")
        (tmp / "report.html").write_text(report_html(manifest, series, summary, figures), encoding="utf-8")
    return out / "report.html"
