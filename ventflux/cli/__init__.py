"""The ``ventflux`` command line.

Subcommands come from the ``ventflux_commands`` hook, so the core's and every
plugin's commands appear side by side. A user's mistake (``InputError``) is
printed as one line per problem on standard error with exit status 2 and no
traceback; anything else is a bug and keeps its traceback.
"""

from __future__ import annotations

import argparse
import sys

from ..errors import InputError, InputErrors

EXIT_USAGE = 2


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors in the project's style (exit status 2)."""

    def error(self, message):
        self.exit(EXIT_USAGE, f"{self.prog}: error: {message}\n")


def build_parser(argv=None) -> argparse.ArgumentParser:
    """The ``ventflux`` parser; only the command named in ``argv`` gets its arguments.

    Every command is listed (name and help), but ``configure`` runs, and so its
    module is imported, only for the one chosen; ``argv=None`` configures all
    (for documentation tools).
    """
    from .. import __version__
    from ..registry import commands

    parser = _Parser(
        prog="ventflux",
        description="Heat and water discharge of seafloor hydrothermal vents from field measurements.",
        epilog="Run 'ventflux COMMAND --help' for the inputs of each command.",
    )
    parser.add_argument("--version", action="version", version=f"ventflux {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    chosen = None if argv is None else next((a for a in argv if not a.startswith("-")), "")
    for cmd in sorted(commands(), key=lambda c: c.name):
        p = sub.add_parser(cmd.name, help=cmd.help, description=cmd.help, aliases=list(cmd.aliases))
        if chosen is None or chosen in (cmd.name, *cmd.aliases):
            cmd.configure(p)
        p.set_defaults(_run=cmd.run)
    return parser


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    parser = build_parser(argv)
    args = parser.parse_args(argv)
    try:
        return int(args._run(args) or 0)
    except InputErrors as errs:
        for line in errs.lines():
            print(f"ventflux {args.command}: error: {line}", file=sys.stderr)
        return EXIT_USAGE
    except InputError as err:
        print(f"ventflux {args.command}: error: {err.line()}", file=sys.stderr)
        return EXIT_USAGE
    except BrokenPipeError:
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
