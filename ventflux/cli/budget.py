"""``--budget`` for single-estimate commands: which uncertain input owns the variance of the result.

``orifice``, ``plume-rise`` and ``diffuse`` take it. The readable table names
each input by the option the user typed; the JSON's ``budget`` rows carry
their widths in SI units in the key (``width_if_known_W``), as every JSON key.
"""

from __future__ import annotations

import sys

HELP = ("print the uncertainty budget: each uncertain input's share of the result's variance (first order and "
        "total effect) and the 5-95 %% width if it were known exactly; from the estimate's own draws (default) "
        "or a dedicated design (full: 2k + 2 times the draws for k uncertain inputs)")


def add_budget_option(group):
    group.add_argument("--budget", nargs="?", const="draws", choices=("draws", "full"), default=None, help=HELP)


def add_budget(args, payload, estimator, inputs, valid=None, output="heat_power", unit="MW", labels=None):
    """With ``--budget``: compute the budget, add its rows to the JSON ``payload`` and return its readable lines.

    ``estimator(**inputs)`` returns an object with the attribute ``output`` (vectorized over the draws);
    ``labels`` maps an input's keyword to the option that gave it (default ``--<keyword>``).
    """
    if not getattr(args, "budget", None):
        return []
    from ..budget import budget_lines, estimate_budget
    from ..uncertainty import DEFAULT_DRAWS
    from ..vocabulary import json_record
    from .montecarlo import monte_carlo_settings

    mc = monte_carlo_settings(args)  # the same parsing of --draws and --seed as the estimate's own
    ind = estimate_budget(estimator, inputs, output=output, unit=unit, mode=args.budget,
                          draws=mc.draws or DEFAULT_DRAWS, seed=mc.seed, valid=valid)
    payload["budget"] = [json_record(row) for row in ind.rows()]
    shown = {k: "--" + k.replace("_", "-") for k in ind.names}
    return budget_lines(ind, {**shown, **(labels or {})})


def print_budget(lines, out=None):
    if lines:
        (out or sys.stdout).write("\n" + "\n".join(lines) + "\n")
