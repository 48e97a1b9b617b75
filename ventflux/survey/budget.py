"""The survey's uncertainty budget: which input owns the variance of each result.

Results: each vent's heat power by each method, each vent's combined heat
power, the focused, diffuse and conductive totals, the field total and the
diffuse fraction. Inputs: every uncertain input of the run by the name it was
drawn under (a key path such as ``Gildhorn/orifice[0]/velocity``, a shared
name from ``[shared]``, the site's ambient temperature, a model constant).
A vent's results are budgeted over its own inputs (``<vent>/…``) and the
field-wide ones (``shared/``, ``site/``, ``constants/``): another vent's or
a section's inputs never enter its estimate (their indices are zero by
construction) and are left out; the field-wide results take every input.

Two modes (``ventflux survey --budget``):

``draws`` (default)
    From the run's own draws: no new evaluation. Every input's draws are
    regenerated from its own random stream (each name seeds its own stream,
    so this is exact) and restricted to the draw columns the run kept.
    Estimators and their justification: ``ventflux.sensitivity``.
``full``
    A dedicated design (``ventflux.sensitivity.pick_freeze_design``): the
    survey is run once more on ``N (k + 2 + t)`` draws, ``k`` the number of
    uncertain inputs and ``t`` the what-if inputs (the most important ones
    found from the draws), ``N`` the base draws (default: the run's draws / 10,
    at least 500). The cost multiple of the run is stated in the budget.

The what-if width (5–95 %, in the result's unit) is the spread left if one
input were known exactly at its nominal value.
"""

from __future__ import annotations

import copy
import time
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from .. import sensitivity
from ..errors import InputError
from ..uncertainty import SharedDraws, named_stream
from .rendering import subplots

MODES = ("draws", "full", "off")
#: The budget row of the variance share no single named input explains.
UNATTRIBUTED = "(interactions and unnamed randomness)"
#: Inputs per headline figure (a readability choice).
FIGURE_INPUTS = 10
#: What-if inputs per result.
WHATIF_INPUTS = 3


@dataclass
class SurveyBudget:
    """Sensitivity indices of every result of a survey to every uncertain input."""

    mode: str
    indices: dict  # result name -> ventflux.sensitivity.Indices
    headline: list  # result names with a figure
    vents: dict  # vent name -> result name of its (combined) heat power
    inputs: dict  # input name -> distribution as written
    elapsed: float
    run_elapsed: float
    evaluations_multiple: float  # model evaluations of the budget / evaluations of the run (0 for "draws")
    notes: list = field(default_factory=list)

    def rows(self) -> list[dict]:
        """Every (result, input) pair, most important input first within each result, then the share of the
        variance no single input explains (interactions, and randomness not drawn under a name)."""
        out = []
        for ind in self.indices.values():
            rows = ind.rows()
            rest: dict = {k: (np.nan if isinstance(v, float) else None) for k, v in rows[0].items()}
            rest.update(result=ind.output, input=UNATTRIBUTED, rank=None, first_order=ind.interaction,
                        first_order_error=ind.interaction_error, draws=ind.n, estimator=ind.estimator,
                        negligible=bool(ind.interaction <= sensitivity.NEGLIGIBLE * ind.interaction_error))
            out += rows + [rest]
        return out

    def as_dict(self) -> dict:
        return {"mode": self.mode, "estimator": next(iter(self.indices.values())).estimator if self.indices else "",
                "cost": {"budget_s": self.elapsed, "run_s": self.run_elapsed,
                         "fraction_of_run": self.elapsed / self.run_elapsed if self.run_elapsed else None,
                         "evaluations_multiple": self.evaluations_multiple},
                "inputs": self.inputs, "sentences": self.sentences(), "notes": self.notes,
                "rows": [_json_row(r) for r in self.rows()]}

    def sentences(self) -> list[str]:
        """One sentence per vent (which input to measure better, and what knowing it would buy), then the field."""
        out = [self._sentence(vent, self.indices[key], "the heat power") for vent, key in self.vents.items()]
        if "field total" in self.indices:
            out.append(self._sentence("Field total", self.indices["field total"], "the field's total heat output"))
        return out

    @staticmethod
    def _sentence(who: str, ind, what: str) -> str:
        top = ind.top(1)
        rest = ""
        if ind.interaction > 0.1 and ind.interaction > sensitivity.NEGLIGIBLE * ind.interaction_error:
            rest = (f" {ind.interaction:.0%} of the variance is explained by no single input (interactions, or "
                    "randomness drawn without a name such as the resampling of sampled diffuse patches).")
        if not top:
            return f"{who}: no single input stands out above its estimation error." + rest
        i = ind.names.index(top[0])
        u = f" {ind.unit}" if ind.unit else ""
        w = ind.width_if_known.get(top[0], np.nan)
        gain = (f"; known exactly, the 5–95 % width of {ind.width:.3g}{u} would shrink to {w:.3g}{u}"
                if np.isfinite(w) else "")
        verb = "narrow the range of" if top[0].startswith("constants/") else "measure"
        better = "" if top[0].startswith("constants/") else " better"
        return (f"{who}: {verb} {label(top[0])}{better}: it carries {ind.first[i]:.0%} ± {_pct(ind.first_error[i])} "
                f"of the variance of {what} on its own (total effect "
                f"{'at most ' if ind.estimator == sensitivity.GIVEN_DATA else ''}{ind.total[i]:.0%}){gain}." + rest)


def _pct(x: float) -> str:
    return f"{x:.1%}" if abs(x) < 0.01 else f"{x:.0%}"


def _json_row(row: dict) -> dict:
    """A budget row for JSON: widths in SI with the unit in the key (``width_if_known_W``; a ratio's bare)."""
    from .si_keys import json_row

    return json_row(row)


def csv_rows(rows: list[dict]) -> list[dict]:
    """Budget rows for ``tables/budget.csv``: one pair of width columns and a ``unit`` column.

    Each result has its own unit (MW for a heat power, 1 for the diffuse fraction), so the widths cannot carry
    one unit in their column name; the ``unit`` column names it row by row.
    """
    out = []
    for r in rows:
        row, unit = {}, ""
        for k, v in r.items():
            name, _, u = str(k).partition(" [")
            if name in ("width_p05_p95", "width_if_known"):
                unit = u.rstrip("]") or unit
                row[name] = v
            else:
                row[k] = v
        row["unit"] = unit or "1"
        out.append(row)
    return out


def label(name: str, quote: str = "'") -> str:
    """An input's name as the user wrote it: shared inputs by their ``[shared]`` name."""
    if name.startswith("shared/"):
        return f"{quote}{name[7:]}{quote} (shared)"
    if name.startswith("site/"):
        return "the site's " + name[5:]
    if name.startswith("constants/"):
        return f"the {name[10:]} (a model constant)"
    return f"{quote}{name}{quote}"


def _named(draws):
    """Name -> distribution of every uncertain input of a run's draws."""
    from ..uncertainty import Uncertain

    known = getattr(draws, "inputs", None)
    known = known() if callable(known) else getattr(draws, "_known", {})
    return {k: v for k, v in sorted(known.items()) if isinstance(v, Uncertain)}


def input_draws(draws, keep=None) -> tuple[dict, dict]:
    """Every uncertain input's draws (magnitudes in the unit it was given in), restricted to ``keep``.

    Each name's draws are regenerated from its own stream, exactly as the run drew them.
    """
    named = _named(draws)
    shared = getattr(draws, "_shared", {})
    samples = getattr(draws, "samples", None)  # a driver that hands out any input's draws by name
    X, nominal = {}, {}
    for k, u in named.items():
        q = samples(k) if callable(samples) else shared.get(k)
        if q is None:  # per-item inputs are not kept; each name's own stream gives them again, exactly
            q = u.sample(draws.n_draws, draws.rng(k))
        x = np.asarray(q.to(u.unit).magnitude, float)
        X[k] = x[keep] if keep is not None else x
        nominal[k] = float(u.nominal.to(u.unit).magnitude)
    return X, nominal


def result_draws(result, full_length: bool = False) -> tuple[dict, dict, list, dict]:
    """Draws of every budgeted result: (name -> array, name -> unit, headline names, vent -> result name).

    ``full_length``: scatter the kept columns back to the run's full draws (NaN elsewhere).
    """
    keep = result.keep
    Y, units, head, vents = {}, {}, [], {}

    def put(name, arr, unit, kept=True, headline=False):
        a = np.asarray(arr, float).ravel()
        if full_length and kept:
            full = np.full(keep.size, np.nan)
            full[keep] = a
            a = full
        elif not full_length and not kept:
            a = a[keep]
        Y[name], units[name] = a, unit
        if headline:
            head.append(name)

    for vr in result.vents:
        for k, e in vr.methods.items():
            put(f"{vr.name}: {k}", e.heat_power.to("MW").magnitude, "MW", kept=False,
                headline=len(vr.methods) == 1)
        if len(vr.methods) > 1:
            put(f"{vr.name}: combined", vr.heat_power.to("MW").magnitude, "MW", headline=True)
        vents[vr.name] = f"{vr.name}: combined" if len(vr.methods) > 1 else f"{vr.name}: {next(iter(vr.methods))}"
    parts = []
    for part in ("focused", "diffuse", "conductive"):
        t = getattr(result, part)
        if t is not None:
            d = t.draws.to("MW").magnitude
            parts.append(d)
            put(f"{part} total", d, "MW", headline=part == "diffuse")
    if parts:
        put("field total", np.sum(np.broadcast_arrays(*parts), axis=0), "MW", headline=True)
    if result.split is not None:
        put("diffuse fraction", result.split.draws["diffuse_fraction"].to("dimensionless").magnitude, "",
            headline=True)
    return Y, units, head, vents


FIELD_WIDE = ("shared/", "site/", "constants/")


def _groups(Y: dict, vents: list) -> dict:
    """Results by the vent they belong to (``None``: field-wide results)."""
    out: dict = {}
    for o in Y:
        owner = next((v for v in vents if o.startswith(f"{v}: ")), None)
        out.setdefault(owner, []).append(o)
    return out


def _affects(name: str, vent) -> bool:
    """Whether an input can affect a vent's results: its own inputs (``<vent>/…``) and the field-wide ones.

    Inputs of other vents and of field sections are drawn under their own key paths and never enter
    another vent's estimate: their indices are zero by construction, so they are left out.
    """
    return vent is None or name.startswith(f"{vent}/") or name.startswith(FIELD_WIDE)


def survey_budget(result, mode: str | None = None, *, bootstrap: int = sensitivity.DEFAULT_BOOTSTRAP,
                  base_draws: int | None = None, progress=lambda msg: None) -> SurveyBudget:
    """The uncertainty budget of a finished survey run (see the module notes for the modes).

    Parameters
    ----------
    result : SurveyResult
        A run of ``ventflux.survey.run.run_survey`` (it keeps its draws and kept columns).
    mode : {"draws", "full"}, optional
        Default: the run's ``budget_mode`` (``"draws"`` unless the survey asked otherwise).
    bootstrap : int
        Bootstrap replicates for the indices' errors.
    base_draws : int, optional
        ``N`` of the dedicated design (mode ``"full"``).
    """
    mode = mode or getattr(result, "budget_mode", "draws")
    if mode not in MODES[:2]:
        raise InputError("--budget", mode, "one of " + ", ".join(MODES))
    cache = result.__dict__.setdefault("_budgets", {})
    if (mode, bootstrap, base_draws) in cache:
        return cache[(mode, bootstrap, base_draws)]
    t0 = time.perf_counter()
    X, nominal = input_draws(result.draws, result.keep)
    Y, units, head, vents = result_draws(result)
    named = _named(result.draws)
    notes = []
    if not X:
        raise InputError("survey", str(result.spec.path), "at least one uncertain input for an uncertainty budget")
    progress(f"uncertainty budget from the run's draws ({len(X)} inputs, {len(Y)} results)")
    ind = {}
    for group, outputs in _groups(Y, [vr.name for vr in result.vents]).items():
        keys = [k for k in X if _affects(k, group)] or list(X)
        ind.update(sensitivity.given_data_indices({k: X[k] for k in keys}, {o: Y[o] for o in outputs},
                                                  bootstrap=bootstrap, seed=result.spec.seed, units=units,
                                                  nominal=nominal, whatif=WHATIF_INPUTS))
    ind = {o: ind[o] for o in Y}
    multiple = 0.0
    if mode == "full":
        ind, multiple, more = _full(result, ind, named, nominal, bootstrap, base_draws, units, progress)
        notes += more
    big = [k for k, v in ind.items() if v.estimator == sensitivity.GIVEN_DATA and v.interaction > 0.1
           and v.interaction > 2 * v.interaction_error]
    if big:
        notes.append("More than 10 % of the variance of " + ", ".join(big) + " is not explained by any single "
                     "input: interactions between inputs, or randomness not drawn as a named input (such as the "
                     "resampling of the sampled diffuse patches when they are scaled up to the mapped areas). The "
                     "total effects shown are upper bounds; '--budget full' separates interactions exactly.")
    out = SurveyBudget(mode=mode, indices=ind, headline=head, vents=vents,
                       inputs={k: str(v) for k, v in named.items()}, elapsed=time.perf_counter() - t0,
                       run_elapsed=float(result.elapsed), evaluations_multiple=multiple, notes=notes)
    cache[(mode, bootstrap, base_draws)] = out
    return out


def _full(result, given, named, nominal, bootstrap, base_draws, units, progress):
    from .run import run_survey

    names = list(named)
    top = []
    for v in given.values():
        top += [t for t in v.top(WHATIF_INPUTS) if t not in top]
    fixed = {t: nominal[t] for t in top[:2 * WHATIF_INPUTS]}
    n_base = int(base_draws or max(500, result.spec.draws // 10))
    design = DesignDraws(named, n_base, result.spec.seed, fixed)
    spec = copy.copy(result.spec)
    spec.draws = design.n_draws
    multiple = design.n_draws / result.spec.draws
    progress(f"uncertainty budget, dedicated design: {design.n_draws} draws "
             f"({sensitivity.design_cost(len(names), len(fixed))} blocks of {n_base}; "
             f"{multiple:.3g} times the run's draws)")
    try:
        again = run_survey(spec, progress=progress, draws=design)
    except InputError as e:  # a section that refuses a rare draw instead of dropping it meets more draws here
        raise InputError(e.field, e.value, e.allowed + f" (met in the dedicated design's {design.n_draws} draws; "
                         "'--budget draws' needs no new draws)", e.where) from None
    Y, _, _, _ = result_draws(again, full_length=True)
    ind = sensitivity.pick_freeze_indices(names, Y, n_base, fixed=list(fixed), bootstrap=bootstrap,
                                          seed=result.spec.seed, units=units)
    for o, v in ind.items():  # what-if inputs outside the design's blocks keep their estimate from the draws
        for nm, w in given[o].width_if_known.items():
            v.width_if_known.setdefault(nm, w)
    dropped = n_base - min(v.n for v in ind.values())
    notes = [(f"Dedicated design: {design.n_draws} evaluations ({multiple:.3g} times the run's draws); {dropped} "
             "design rows dropped where a draw was unphysical. What-if widths from the design for "
             f"{', '.join(label(t) for t in fixed)}; from the run's draws for other inputs.")]
    return ind, multiple, notes


class DesignDraws(SharedDraws):
    """Draws of a dedicated design, handed out by input name like the run's own draws.

    Every uncertain input of the first run gets its ``pick_freeze_design``
    column; an input not among them (none, for the same survey) is drawn
    independently from its own named stream, as in any run.
    """

    def __init__(self, named: dict, n_base: int, seed: int, fixed: dict):
        super().__init__(n_base * sensitivity.design_cost(len(named), len(fixed)), seed)
        A = {k: v.sample(n_base, _stream(seed, k, 0)).magnitude for k, v in named.items()}
        B = {k: v.sample(n_base, _stream(seed, k, 1)).magnitude for k, v in named.items()}
        self._cols = sensitivity.pick_freeze_design(A, B, fixed)
        self._units = {k: v.unit for k, v in named.items()}

    def draw(self, name, value):
        from ..units import Q_

        if name in self._cols:
            self._register(name, value)
            return Q_(self._cols[name], self._units[name])
        return super().draw(name, value)

    def draw_each(self, names, values, unit=None):
        from ..units import Q_

        names, values = list(names), list(values)
        out = super().draw_each(names, values, unit)
        unit = str(out.units)
        m = out.magnitude.copy()
        for i, k in enumerate(names):
            if k in self._cols:
                m[i] = Q_(self._cols[k], self._units[k]).to(unit).magnitude
        return Q_(m, unit)


def _stream(seed, name, which):
    """The design's two independent matrices (A, B) draw each input from its own named stream."""
    return named_stream(seed, f"{name}/budget design {'AB'[which]}")


# ---- outputs -------------------------------------------------------------------------
def figures(budget: SurveyBudget) -> list:
    """One bar figure per headline result: first-order and total index of its top inputs, with errors."""
    figs = []
    for key in budget.headline:
        ind = budget.indices[key]
        order = ind.order()[:FIGURE_INPUTS]
        neg = ind.negligible[order]
        labels = [label(ind.names[i], "").replace("_", " ") + (" (negligible)" if g else "")  # as a reader says it
                  for i, g in zip(order, neg)]
        design = ind.estimator == sensitivity.PICK_FREEZE
        if not design:  # totals from the draws are only bounds (first order + the unattributed share): one bar
            labels.append("not explained by any single input")
        y = np.arange(len(labels))
        fig, ax = subplots(figsize=(7.5, 1.2 + 0.38 * len(labels)))
        ax.barh(y[:order.size] - (0.2 if design else 0), ind.first[order], 0.4, xerr=ind.first_error[order],
                color="C0", label="first order", capsize=2)
        if design:
            ax.barh(y + 0.2, ind.total[order], 0.4, xerr=ind.total_error[order], color="C1", label="total effect",
                    capsize=2)
        else:
            ax.barh(y[-1:], [max(ind.interaction, 0.0)], 0.4, xerr=[ind.interaction_error], color="0.6", capsize=2,
                    label="interactions and unnamed randomness")
        ax.set_yticks(y, labels, fontsize=8)
        ax.invert_yaxis()
        ax.set_xlim(0, 1.05)
        ax.set_xlabel("share of the variance [1]")
        ax.set_title(f"Uncertainty budget: {key.replace('_', ' ')}", fontsize=10)
        ax.legend(fontsize=8, loc="best")
        ax.grid(axis="x", alpha=0.3)
        fig.set_layout_engine("tight")
        stem = "budget_" + "".join(ch if ch.isalnum() else "-" for ch in key.lower()).strip("-")
        figs.append((stem, fig, (f"Which inputs own the variance of {key}: first-order and total-effect indices "
                                f"with their bootstrap errors ({ind.n} draws).")))
    return figs


def summary_rows(budget: SurveyBudget) -> list[dict]:
    """Each result's most important inputs and its unattributed share, if significant (the report's table)."""
    rows = []
    for key, ind in budget.indices.items():
        entries = [(label(nm, ""), ind.first[i], ind.first_error[i], ind.total[i], ind.total_error[i],
                    ind.width_if_known.get(nm, np.nan))
                   for nm in ind.top(WHATIF_INPUTS) for i in [ind.names.index(nm)]]
        if ind.interaction > sensitivity.NEGLIGIBLE * ind.interaction_error:
            entries.append((UNATTRIBUTED, ind.interaction, ind.interaction_error, np.nan, np.nan, np.nan))
        rows += [{"result": key, "input": who, "first order": s1, "±": e1, "total effect": st, "± ": et,
                  "5–95 % width": ind.width, "width if known": w, "unit": ind.unit}
                 for who, s1, e1, st, et, w in entries]
    return rows


def write_budget(result, out_dir, images_html, renderer=None) -> str:
    """Write ``tables/budget.csv``, ``budget.json`` and the figures into ``out_dir``; return the report section.

    ``images_html(stem, caption, svg_bytes)`` renders a figure for the report; ``renderer`` (a
    ``ventflux.survey.rendering.FigureRenderer``) renders the figures, by default in this process.
    """
    return start_budget(result, out_dir, images_html, renderer)()


def start_budget(result, out_dir, images_html, renderer=None) -> Callable[[], str]:
    """``write_budget`` in two steps: compute and write the tables, hand the figures to ``renderer``; the
    function returned waits for the figures, writes them and returns the report section.

    The caller can write something else while the figures render (the survey writes its netCDF file).
    """
    import html
    import json

    import pandas as pd

    mode = getattr(result, "budget_mode", "draws")
    if mode == "off" or result.draws is None:
        return lambda: ""
    if not _named(result.draws):
        return lambda: ("<h2>Uncertainty budget</h2><p>Every input of this survey is exact: there is no variance "
                        "to attribute to an input.</p>")
    b = survey_budget(result, mode)
    pd.DataFrame(csv_rows(b.rows())).to_csv(out_dir / "tables" / "budget.csv", index=False)
    from ..io import json_ready as _clean

    (out_dir / "budget.json").write_text(json.dumps(_clean(b.as_dict()), indent=2, ensure_ascii=False) + "\n",
                                         encoding="utf-8")
    esc = html.escape
    parts = ["<h2>Uncertainty budget: what to measure better</h2>",
             "<p>" + "<br>".join(esc(s) for s in b.sentences()) + "</p>",
             ("<p>First-order index: the share of a result's variance that knowing the input exactly would remove "
             "on average; total effect: its share including interactions with other inputs. Errors are bootstrap "
             "standard errors; an input whose indices are below their errors is negligible. The width if known is "
             "the 5–95 % width left with the input fixed at its nominal value. Estimator: "
             f"{esc(next(iter(b.indices.values())).estimator)}. Every pair of result and input is in "
             "<code>tables/budget.csv</code> and <code>budget.json</code>.</p>")]
    rows = summary_rows(b)
    if rows:
        table = pd.DataFrame(rows).to_html(index=False, float_format=lambda x: f"{x:.3g}", na_rep="–", border=0,
                                           classes="t")
        parts.append(f"<div class='wrap'>{table}</div>")
    parts += [f"<p>{esc(n)}</p>" for n in b.notes]
    from .rendering import FigureRenderer

    r = renderer if renderer is not None else FigureRenderer(workers=0)
    jobs = [(stem, caption, r.submit(fig)) for stem, fig, caption in figures(b)]

    def finish() -> str:
        for stem, caption, job in jobs:
            png, svg = job.result()  # PNG at print resolution for the folder, SVG for the report
            (out_dir / "figures" / f"{stem}.png").write_bytes(png)
            parts.append(images_html(stem, caption, svg))
        parts.append("<p>Uncertain inputs and their distributions: " +
                     esc("; ".join(f"{label(k, '')} = {v}" for k, v in b.inputs.items())) + ".</p>")
        return "\n".join(parts)

    return finish


__all__ = [
    "MODES",
    "DesignDraws",
    "SurveyBudget",
    "figures",
    "input_draws",
    "label",
    "result_draws",
    "survey_budget",
    "start_budget",
    "write_budget",
]
