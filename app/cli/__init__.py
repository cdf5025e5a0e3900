"""The ``bandsmith`` command's sub-commands, all headless: each reads its options, calls the
public API (:mod:`bandsmith.api`) and prints the result's ``to_json()`` or a readable form of it.

With no sub-command, or a session file as the only argument, the command opens the workbench
window instead (:mod:`bandsmith.app.entry` decides, with :func:`wants_window`). Every module of this package that defines ``COMMAND`` (a
:class:`~bandsmith.app.cli.common.Command`) is a sub-command: adding one is adding a module.
"""

from __future__ import annotations

import importlib
import pkgutil
import sys

from bandsmith.app.cli.common import Command, CliParser, run_guarded

__all__ = ["main", "commands", "wants_window"]


def _module_names() -> list[str]:
    return [info.name for info in pkgutil.iter_modules(__path__) if not info.name.startswith("_") and info.name != "common"]


def commands(only: str | None = None) -> tuple[Command, ...]:
    """Every sub-command, in listing order; with ``only``, just the command of that module."""
    found = []
    for name in _module_names() if only is None else [only]:
        mod = importlib.import_module(f"{__name__}.{name}")
        cmd = getattr(mod, "COMMAND", None)
        if isinstance(cmd, Command):
            found.append(cmd)
    return tuple(sorted(found, key=lambda c: (c.order, c.name)))


def _parser(only: str | None = None) -> CliParser:
    parser = CliParser(
        prog="bandsmith",
        description="Bandsmith: active band-pass filter workbench. With no command, opens the window.",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=CliParser)
    for cmd in commands(only):
        # argparse %-formats help strings: a literal "%" in a command's help ("R 1 %") must be doubled
        p = sub.add_parser(cmd.name, help=cmd.help.replace("%", "%%"), description=cmd.help)
        cmd.configure(p)
        p.set_defaults(_run=cmd.run)
    return parser


def wants_window(argv: list[str]) -> bool:
    """True when ``argv`` asks for the window: nothing, or one argument that is not a command."""
    # Command names are their module names: decide without importing them all.
    names = set(_module_names())
    return not argv or (len(argv) == 1 and argv[0] not in names and not argv[0].startswith("-"))


def main(argv: list[str] | None = None) -> int:
    """Run one sub-command (``argv`` without the program name); returns the exit status."""
    argv = list(sys.argv[1:] if argv is None else argv)
    # A command's name is its module's: import only that one (start-up is mostly imports); the
    # full parser (every command) when there is none, for the listing and the errors.
    only = argv[0] if argv and argv[0] in _module_names() else None
    if only is not None and [c.name for c in commands(only)] != [only]:
        only = None
    parser = _parser(only)
    args = parser.parse_args(argv)
    if not getattr(args, "_run", None):
        parser.print_help()
        return 0
    return run_guarded(args._run, args)


if __name__ == "__main__":
    sys.exit(main())
