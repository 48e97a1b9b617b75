"""The ``ventflux`` command line.

Subcommands come from the ``ventflux_commands`` hook, so the core's and every
plugin's commands appear side by side. A user's mistake (``InputError``) is
printed as one line per problem on standard error with exit status 2 and no
traceback; anything else is a bug and keeps its traceback. With ``--json``,
the same problems are also written as one JSON object on the last line of
standard error, ``{"errors": [{"field", "value", "allowed", "where"}]}``, for
every command (plugins' included), so a script never parses prose. Old
option spellings (``ventflux.vocabulary.RENAMED_OPTIONS``) are accepted here,
once for all commands, with one deprecation line each.
"""

from __future__ import annotations

import argparse
import sys

from ..errors import InputError, InputErrors

EXIT_USAGE = 2


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors in the project's style (exit status 2)."""

    #: Set by ``main`` when ``--json`` is on the command line: a usage error is then also JSON.
    json_errors = False

    def parse_known_args(self, args=None, namespace=None):
        from ..vocabulary import check_deprecated

        namespace, extras = super().parse_known_args(args, namespace)
        check_deprecated(self, namespace, sys.argv[1:] if args is None else args)
        return namespace, extras

    def error(self, message):
        self._print_message(f"{self.prog}: error: {message}\n", sys.stderr)
        if _Parser.json_errors:
            print_json_errors([_usage_error(message)])
        self.exit(EXIT_USAGE)


def _usage_error(message: str) -> dict:
    """argparse's message as ``{"field", "value", "allowed", "where"}`` (the option named where it can tell)."""
    import re

    m = re.match(r"argument ([^:]+): (.*)$", message)
    field, rest = (m.group(1).split("/")[0], m.group(2)) if m else ("arguments", message)
    value = None
    v = re.search(r"(?:invalid choice|invalid \w+ value|expected one argument|not allowed with argument)"
                  r"(?:: '([^']*)')?", rest)
    if v and v.group(1) is not None:
        value = v.group(1)
    elif message.startswith("unrecognized arguments: "):
        field, value, rest = "arguments", message.split(": ", 1)[1], "only the options in --help"
    elif message.startswith("the following arguments are required: "):
        field, value = message.split(": ", 1)[1].split(",")[0].strip(), None
        rest = "a value (the option is required)"
    return {"field": field, "value": value, "allowed": rest, "where": None}


def error_record(err) -> dict:
    """One ``InputError`` as the JSON error object's entry."""
    value = err.value
    if not isinstance(value, (str, int, float, bool, type(None))):
        value = str(value)
    return {"field": err.field, "value": value, "allowed": err.allowed, "where": err.where}


def print_json_errors(records, stream=None) -> None:
    """``{"errors": [...]}`` as one line on standard error (after the readable lines)."""
    import json

    from ..io import json_ready

    print(json.dumps({"errors": json_ready(list(records))}, ensure_ascii=False), file=stream or sys.stderr)


def build_parser(argv=None) -> argparse.ArgumentParser:
    """The ``ventflux`` parser; only the command named in ``argv`` gets its arguments.

    Every command is listed (name and help), but ``configure`` runs, and so its
    module is imported, only for the one chosen; ``argv=None`` configures all
    (for documentation tools).
    """
    from .. import __version__
    from ..registry import commands
    from ..vocabulary import apply_renamed_options

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
            apply_renamed_options(p, cmd.name)
        p.set_defaults(_run=cmd.run)
    return parser


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    as_json = "--json" in [str(a) for a in argv]
    for i, a in enumerate(argv):
        if "\0" in str(a):  # the operating system cannot take NUL in a path or name: say so before anything
            option = argv[i - 1] if i and str(argv[i - 1]).startswith("--") else f"argument {i + 1}"
            shown = str(a).replace("\0", "\\0")
            return _fail("ventflux", [InputError(option, shown, "a value without NUL characters")], as_json)
    parser = build_parser(argv)
    _Parser.json_errors = as_json
    try:
        args = parser.parse_args(argv)
    except SystemExit as stop:  # --help, --version, or argparse's one-line usage error
        return stop.code if isinstance(stop.code, int) else (0 if stop.code is None else EXIT_USAGE)
    finally:
        _Parser.json_errors = False
    name = f"ventflux {args.command}"
    as_json = bool(getattr(args, "json", False)) or as_json
    try:
        _check_common(args)
        return int(args._run(args) or 0)
    except InputErrors as errs:
        return _fail(name, errs.errors, as_json)
    except InputError as err:
        return _fail(name, [err], as_json)
    except BrokenPipeError:
        return 0
    except OSError as err:
        # A file-system fault (a path through a file, a read-only folder, a full disk): the user's
        # environment, not a bug. One line naming the option whose path it was, when we can tell.
        return _fail(name, [_os_error(err, argv)], as_json)
    except UnicodeDecodeError as err:
        return _fail(name, [InputError("input file", f"byte 0x{err.object[err.start]:02x} at offset {err.start}",
                                       "UTF-8 text; save the file as UTF-8")], as_json)
    except MemoryError:
        return _fail(name, [InputError("--draws", getattr(args, "draws", None),
                                       "fewer draws (the machine ran out of memory)")], as_json)


def _fail(name: str, errors, as_json: bool) -> int:
    """Print each error as one line (and, with ``--json``, all of them as one JSON object); exit status 2."""
    for err in errors:
        print(f"{name}: error: {err.line()}", file=sys.stderr)
    if as_json:
        print_json_errors([error_record(e) for e in errors])
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


def _os_error(err: OSError, argv) -> InputError:
    """``--out: '/x/y' is not allowed; expected a path that can be written (Read-only file system)``."""
    from pathlib import Path

    path = err.filename
    what = err.strerror or type(err).__name__
    if path is None:
        return InputError("file", what, "a file that can be read or written")
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
    return InputError(option, shown, f"a path that can be read or written here ({what}: {path})")


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
