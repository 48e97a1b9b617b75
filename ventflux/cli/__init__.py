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
    for i, a in enumerate(argv):
        if "\0" in str(a):  # the operating system cannot take NUL in a path or name: say so before anything
            option = argv[i - 1] if i and str(argv[i - 1]).startswith("--") else f"argument {i + 1}"
            shown = str(a).replace("\0", "\\0")
            print(f"ventflux: error: {option}: '{shown}' is not allowed; expected a value without NUL characters",
                  file=sys.stderr)
            return EXIT_USAGE
    parser = build_parser(argv)
    try:
        args = parser.parse_args(argv)
    except SystemExit as stop:  # --help, --version, or argparse's one-line usage error
        return stop.code if isinstance(stop.code, int) else (0 if stop.code is None else EXIT_USAGE)
    name = f"ventflux {args.command}"
    try:
        _check_common(args)
        return int(args._run(args) or 0)
    except InputErrors as errs:
        for line in errs.lines():
            print(f"{name}: error: {line}", file=sys.stderr)
        return EXIT_USAGE
    except InputError as err:
        print(f"{name}: error: {err.line()}", file=sys.stderr)
        return EXIT_USAGE
    except BrokenPipeError:
        return 0
    except OSError as err:
        # A file-system fault (a path through a file, a read-only folder, a full disk): the user's
        # environment, not a bug. One line naming the option whose path it was, when we can tell.
        print(f"{name}: error: {_os_error_line(err, argv)}", file=sys.stderr)
        return EXIT_USAGE
    except UnicodeDecodeError as err:
        print(f"{name}: error: an input file is not UTF-8 text (byte 0x{err.object[err.start]:02x} at offset "
              f"{err.start}); save it as UTF-8", file=sys.stderr)
        return EXIT_USAGE
    except MemoryError:
        print(f"{name}: error: --draws: the machine ran out of memory; expected fewer draws", file=sys.stderr)
        return EXIT_USAGE


def _check_common(args) -> None:
    """Options every command shares: the seed's range, a draw count the machine can hold, --allow-implausible."""
    from ..limits import check_position, set_allow_implausible
    from ..resources import check_memory
    from ..uncertainty import check_draws, check_seed
    from .montecarlo import whole_number

    set_allow_implausible(bool(getattr(args, "allow_implausible", False)))
    for name in ("latitude", "longitude"):  # one set of bounds for every command (plugins' included)
        if getattr(args, name, None) is not None:
            check_position(name, getattr(args, name), f"--{name}")
    seed = getattr(args, "seed", None)
    if seed is not None:
        check_seed(whole_number(seed, "--seed"), "--seed")
    draws = getattr(args, "draws", None)
    if draws is not None and not isinstance(draws, bool):
        check_memory(check_draws(whole_number(draws, "--draws"), "--draws"))


def _os_error_line(err: OSError, argv) -> str:
    """``--out: '/x/y' is not allowed; expected a path that can be written (Read-only file system)``."""
    from pathlib import Path

    path = err.filename
    what = err.strerror or type(err).__name__
    if path is None:
        return f"a file could not be read or written ({what})"
    target = Path(str(path))
    option = None

    def related(p: Path, sibling: bool) -> bool:
        t, q = target.resolve(), p.resolve()
        if sibling:  # a writer's temporary neighbour, '.res.x42.part' beside 'res'
            return t.parent == q.parent and q.name in t.name
        return t == q or q in t.parents or t in q.parents

    for sibling in (False, True):
        for i, a in enumerate(argv):
            if str(a).startswith("-") or not a:
                continue
            try:
                hit = related(Path(a), sibling)
            except (OSError, ValueError):
                continue
            if hit:
                option = argv[i - 1] if i and str(argv[i - 1]).startswith("--") else "path"
                shown = a
                break
        if option is not None:
            break
    if option is None:
        option, shown = "path", str(path)
    return f"{option}: '{shown}' is not allowed; expected a path that can be read or written here ({what}: {path})"


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
