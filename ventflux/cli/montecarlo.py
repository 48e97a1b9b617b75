"""The Monte Carlo options every command shares: ``--draws``, ``--seed``, ``--max-unphysical``.

One vocabulary and one validation for them, so a command cannot drift from
the others or from a survey file's ``[run]`` table (``draws``, ``seed``,
``max_unphysical``).
"""

from __future__ import annotations

from dataclasses import dataclass

from ..uncertainty import (
    DEFAULT_DRAWS,
    DEFAULT_MAX_UNPHYSICAL,
    DEFAULT_SEED,
    check_draws,
    check_max_unphysical,
    check_seed,
)


def add_monte_carlo_options(group, draws_default: int | None = DEFAULT_DRAWS) -> None:
    """Add ``--draws``, ``--seed`` and ``--max-unphysical`` to an argparse group.

    ``draws_default=None``: the command draws only when an input carries an
    uncertainty (then ``DEFAULT_DRAWS`` times).
    """
    when = "" if draws_default is not None else " when any input carries an uncertainty"
    group.add_argument("--draws", default=draws_default, metavar="N",
                       help=f"Monte Carlo draws (default {DEFAULT_DRAWS}{when})")
    group.add_argument("--seed", default=DEFAULT_SEED, metavar="N",
                       help=f"random seed, 0 to 4294967295 (default {DEFAULT_SEED})")
    group.add_argument("--max-unphysical", default=DEFAULT_MAX_UNPHYSICAL, metavar="SHARE",
                       help="largest share of draws that may be dropped as physically impossible (counted and "
                            f"reported) before the inputs are refused (default {DEFAULT_MAX_UNPHYSICAL:g})")


@dataclass(frozen=True)
class MonteCarloSettings:
    draws: int | None
    seed: int
    max_unphysical: float


def monte_carlo_settings(args) -> MonteCarloSettings:
    """The validated ``--draws``, ``--seed`` and ``--max-unphysical`` (``InputError`` naming the option)."""
    draws = None if args.draws is None else check_draws(whole_number(args.draws, "--draws"), "--draws")
    seed = check_seed(whole_number(args.seed, "--seed"), "--seed")
    share = check_max_unphysical(args.max_unphysical, "--max-unphysical")
    return MonteCarloSettings(draws, seed, share)


def whole_number(text, option):
    """An option's text as a whole number (argparse gives strings)."""
    from ..errors import InputError

    if isinstance(text, int):
        return text
    try:
        return int(str(text).strip())
    except ValueError:
        raise InputError(option, text, "a whole number") from None
