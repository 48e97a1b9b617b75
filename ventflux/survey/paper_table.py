"""The survey's paper-ready summary: each headline value with its 5–95 % interval, rounded for print.

Rounding rule (the three-digit rule of the *Review of Particle Physics*,
introduction, section "Rounding" [1]_; from memory): the uncertainty is
the smaller distance from the value to an end of its 5–95 % interval. Take its
three leading significant digits: from 100 to 354 it keeps two significant
digits, from 355 to 949 one, and from 950 to 999 it is rounded up to 1000 and
keeps two. The value and both ends of the interval are then rounded to the
same decimal place as that uncertainty. Examples: 12.3456 with interval
11.2–14.1 → ``12.3 (11.2–14.1)``; 70.6 with 52.7–94.2 → ``71 (53–94)``.

Written as ``summary_table.csv`` and ``summary_table.md`` in the results
folder, and shown at the top of the report.

References
----------
.. [1] Review of Particle Physics, Introduction, "Rounding" (published every two years; the rule has been
   unchanged for decades).
"""

from __future__ import annotations

import math
from dataclasses import dataclass


def rounding_decimals(value: float, low: float, high: float) -> int:
    """Decimal places (negative: tens, hundreds, ...) to which the value and its interval are rounded.

    Parameters
    ----------
    value, low, high : float
        The central value and the 5 % and 95 % points, in one unit.

    Returns
    -------
    int
        The argument of ``round(x, n)``; 3 significant digits of the value when the interval has zero width.
    """
    candidates = [abs(d) for d in (value - low, high - value) if math.isfinite(d) and d > 0]
    if not candidates:  # an exact value: three significant digits
        return 2 - _exponent(value) if value != 0.0 and math.isfinite(value) else 0
    u = min(candidates)
    e = _exponent(u)
    lead = u / 10.0 ** (e - 2)  # the three leading digits as a number 100 ≤ lead < 1000
    lead = round(lead, 6)
    if lead >= 950:  # rounds up to 1000: two significant digits of the next decade
        return -e
    if lead < 355:
        return -e + 1
    return -e


def _exponent(x: float) -> int:
    return int(math.floor(math.log10(abs(x))))


def format_number(x: float, decimals: int) -> str:
    """``x`` rounded to ``decimals`` places and written without a spurious sign or exponent."""
    if not math.isfinite(x):
        return "–"
    r = round(x, decimals)
    if decimals <= 0:
        text = f"{int(round(r)):d}"
    else:
        text = f"{r:.{decimals}f}"
    return "0" if text in ("-0", "-0." + "0" * max(decimals, 0)) else text


def rounded(value: float, low: float, high: float) -> tuple[str, str, str]:
    """``(value, low, high)`` as text, rounded by the module's rule."""
    n = rounding_decimals(value, low, high)
    return format_number(value, n), format_number(low, n), format_number(high, n)


def paper_cell(value: float, low: float, high: float) -> str:
    """``'12.3 (11.2–14.1)'``: the value with its 5–95 % interval, rounded by the module's rule."""
    v, lo, hi = rounded(value, low, high)
    return f"{v} ({lo}–{hi})"


@dataclass(frozen=True)
class PaperRow:
    quantity: str
    unit: str
    value: float
    p05: float
    p95: float

    def as_row(self) -> dict:
        v, lo, hi = rounded(self.value, self.p05, self.p95)
        return {"quantity": self.quantity, "unit": self.unit, "median": v, "p05": lo, "p95": hi,
                "value (5–95 %)": f"{v} ({lo}–{hi})"}


def _row(name, summary, unit, scale_unit=None) -> PaperRow:
    s = summary.to(scale_unit or unit)
    return PaperRow(name, unit, float(s.median.magnitude), float(s.p05.magnitude), float(s.p95.magnitude))


def paper_rows(result) -> list[PaperRow]:
    """The headline numbers of a survey, in the order a paper's table lists them."""
    from ..uncertainty import summarize

    rows = []
    if result.total is not None:
        rows.append(_row("Total heat power", result.total, "MW"))
    for label, ft in (("Focused heat power", result.focused), ("Diffuse heat power", result.diffuse),
                      ("Conductive heat power", result.conductive)):
        if ft is not None:
            rows.append(_row(label, ft.summary, "MW"))
    if result.split is not None:
        f = result.split.diffuse_fraction.to("percent")
        rows.append(PaperRow("Diffuse share of the fluid-borne heat", "%", float(f.median.m), float(f.p05.m),
                             float(f.p95.m)))
    names = {"focused_mass_flux": ("Focused mass flux", "kg/s"), "focused_volume_flux":
             ("Focused volume flux (ambient density)", "m^3/s"), "diffuse_volume_flux": ("Diffuse volume flux",
                                                                                         "m^3/s")}
    for k, s in result.water.items():
        label, unit = names.get(k, (k.replace("_", " ").capitalize(), "kg/s" if "mass" in k else "m^3/s"))
        rows.append(_row(label, s, unit))
    for vr in result.vents:
        if vr.heat_power is not None:
            rows.append(_row(f"{vr.name}: heat power", summarize(vr.heat_power.to("MW")), "MW"))
    for r in result.reservoirs:
        rows.append(_row(f"{r['name']}: heat-mining time", r["mining"], "yr"))
        rows.append(_row(f"{r['name']}: decline time", r["decline"], "yr"))
    return rows


def table_rows(result) -> list[dict]:
    """The paper table as rows of text (``quantity``, ``unit``, ``median``, ``p05``, ``p95``, combined cell)."""
    return [r.as_row() for r in paper_rows(result)]


def markdown(rows: list[dict], title: str = "") -> str:
    """The paper table as a Markdown pipe table (one column of value and interval)."""
    head = (f"**{title}**\n\n" if title else "") + "| Quantity | Unit | Median (5–95 %) |\n|---|---|---:|\n"
    body = "\n".join(f"| {r['quantity']} | {_unit_text(r['unit'])} | {r['value (5–95 %)']} |" for r in rows)
    note = f"\n\n{RULE}\n"
    return head + body + note


def _unit_text(unit: str) -> str:
    return unit.replace("^3", "³").replace("^2", "²")


def csv_rows(rows: list[dict]) -> list[dict]:
    """The CSV form: rounded text columns with the unit in a column of its own."""
    return [{"quantity": r["quantity"], "unit": r["unit"], "median": r["median"], "p05": r["p05"], "p95": r["p95"],
             "median_and_interval": r["value (5–95 %)"]} for r in rows]


#: The rounding rule in one sentence, for the report.
RULE = ("Median and 5–95 % interval of the Monte Carlo draws, rounded to the significant digits of the smaller "
        "distance from the median to an end of the interval: two digits when its leading digits are 100–354, one "
        "when 355–949, two of the next decade when 950–999.")
