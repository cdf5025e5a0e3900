"""What every sub-command shares: argument reading, error handling and output."""

from __future__ import annotations

import argparse
import json
import sys
import warnings
from dataclasses import dataclass
from typing import Callable, Sequence

from bandsmith.common.limits import DEFAULT_A0
from bandsmith.common.jsonutil import finite_or_none
from bandsmith.common.errors import InputError
from bandsmith.common.limits import one_line

__all__ = [
    "Command",
    "CliParser",
    "run_guarded",
    "add_circuit_arguments",
    "require_topology",
    "add_amp_options",
    "add_opamp_options",
    "add_gbw_tolerance_options",
    "amp_options",
    "opamp_options",
    "add_source_option",
    "save_report",
    "emit",
    "print_json",
    "EXIT_OK",
    "EXIT_INTERNAL",
    "EXIT_BAD_INPUT",
]

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT = 0, 1, 2
_MESSAGE_CHARS = 300  # a message longer than this (a long input echoed in it) is cut, on one line


@dataclass(frozen=True)
class Command:
    """A sub-command: its name, one-line help, how to set up its parser and how to run it."""

    name: str
    help: str
    configure: Callable[[argparse.ArgumentParser], None]
    run: Callable[[argparse.Namespace], int]
    order: int = 100


class CliParser(argparse.ArgumentParser):
    """An argument parser whose errors are one line naming the option, exit status 2."""

    def error(self, message: str):  # noqa: D401 - argparse's signature
        sys.stderr.write(one_line(f"{self.prog}: {message}", _MESSAGE_CHARS) + "\n")
        sys.exit(EXIT_BAD_INPUT)


def run_guarded(run: Callable[[argparse.Namespace], int], args: argparse.Namespace) -> int:
    """Run a command: bad input → exit 2 and one line; an internal failure → exit 1, no traceback.

    Warnings (numpy's floating-point ones on a degenerate design, say) are not printed: stderr
    carries only the one-line message.
    """
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return run(args)
    except InputError as exc:
        print(one_line(str(exc), _MESSAGE_CHARS), file=sys.stderr)
        return EXIT_BAD_INPUT
    except BrokenPipeError:
        return EXIT_OK
    except Exception as exc:  # an internal failure: a short message, never a traceback
        print(one_line(f"bandsmith: internal error: {type(exc).__name__}: {exc}", _MESSAGE_CHARS), file=sys.stderr)
        return EXIT_INTERNAL


TOPOLOGY_HELP = "circuit id (see `bandsmith topologies`)"
PARTS_HELP = "part values, e.g. R1=4k7 C=10n"


def add_circuit_arguments(p: argparse.ArgumentParser, *, optional: bool = False, topology_help: str = TOPOLOGY_HELP, parts_help: str = PARTS_HELP) -> None:
    """The positional circuit id and ``REF=VALUE`` part values of the commands about one candidate
    (the id may be left out where ``optional``: a command that also reads a session)."""
    p.add_argument("topology", **({"nargs": "?"} if optional else {}), help=topology_help)
    p.add_argument("parts", nargs="*", metavar="REF=VALUE", help=parts_help)


def require_topology(args: argparse.Namespace, alternative: str = "") -> None:
    """Bad input when the circuit id is missing (``alternative``: what may stand instead, e.g. " or --session FILE")."""
    if not args.topology:
        raise InputError("topology", f"missing; give a circuit id (see `bandsmith topologies`){alternative}")


def add_opamp_options(p: argparse.ArgumentParser) -> None:
    """``--gbw F`` and ``--a0 A``: the op-amp model (ideal without ``--gbw``)."""
    p.add_argument("--gbw", metavar="F", help="op-amp gain-bandwidth (Hz); without it the op-amp is ideal")
    p.add_argument("--a0", metavar="A", help="op-amp open-loop DC gain (default 1e5)")


def add_gbw_tolerance_options(p: argparse.ArgumentParser) -> None:
    """``--tol-f0``, ``--tol-q``, ``--tol-gain-db``: how far the figures may stray for the required GBW."""
    p.add_argument("--tol-f0", metavar="P", help="f0 tolerance for the required GBW (default 1%%)")
    p.add_argument("--tol-q", metavar="P", help="Q tolerance for the required GBW (default 5%%)")
    p.add_argument("--tol-gain-db", metavar="D", help="centre-gain tolerance in dB (default 0.5)")


def add_amp_options(p: argparse.ArgumentParser, *, tolerances: bool = True) -> None:
    """The op-amp and drive options shared by the analysing commands."""
    add_opamp_options(p)
    p.add_argument("--vin", metavar="V", help="input peak amplitude in volts (default 1)")
    p.add_argument("--rload", metavar="R", help="load resistance from the output to ground (ohm)")
    if tolerances:  # the analysing commands (not sweep) also take a source resistance and a load capacitance
        add_source_option(p)
        p.add_argument("--cload", metavar="C", help="load capacitance from the output to ground (F), beside --rload: counted in the output current")
        add_gbw_tolerance_options(p)


def add_source_option(p: argparse.ArgumentParser) -> None:
    """``--rsource R``: a source resistance in series with the input (an element of the netlist)."""
    p.add_argument("--rsource", metavar="R", help="source resistance in series with the input (ohm), seen by every analysis")


def opamp_options(args: argparse.Namespace) -> dict:
    """``--gbw`` and ``--a0`` as typed, keyed as the API takes them (A0 at its default when absent)."""
    a0 = getattr(args, "a0", None)
    return {"gbw_hz": getattr(args, "gbw", None), "a0": a0 if a0 is not None else DEFAULT_A0}


def amp_options(args: argparse.Namespace) -> dict:
    """The op-amp and drive options as typed, keyed as the API takes them (absent ones at their defaults)."""
    out = {
        **opamp_options(args),
        "vin_v": getattr(args, "vin", None) if getattr(args, "vin", None) is not None else 1.0,
        "rload_ohm": getattr(args, "rload", None),
    }
    for key in ("tol_f0", "tol_q", "tol_gain_db"):
        out[key] = getattr(args, key, None)
    if hasattr(args, "rsource"):
        out["rsource_ohm"] = args.rsource
    if hasattr(args, "cload"):
        out["cload_f"] = args.cload
    return out


def _clean(obj):
    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if isinstance(obj, bool) or obj is None or isinstance(obj, str):
        return obj
    if isinstance(obj, int):
        return obj
    try:
        f = float(obj)
    except (TypeError, ValueError):
        return str(obj)
    return finite_or_none(f)


def print_json(obj) -> None:
    """Print exactly one JSON object on stdout (numpy scalars made floats, non-finite as null)."""
    sys.stdout.write(json.dumps(_clean(obj), ensure_ascii=False) + "\n")


def tempcos_from(items) -> dict[str, float]:
    """``--tc KIND=PPM`` options as temperature coefficients per kelvin, by kind or part.

    The error's example leaves C out: it is the one kind whose default differs between the
    commands that take ``--tc`` (bias, trim), and each command's help gives its own defaults.
    """
    from bandsmith import api

    given = api.split_assignments(items, field="tc", form="KIND=PPM (R=50, L=200, R2=25)")
    return {k: api.parse_value(v, field=f"tc {k}") * 1e-6 for k, v in given.items()}


def save_report(args: argparse.Namespace, report) -> None:
    """``--save FILE``: write the report's session (an empty name is refused by save_session, not read as "save nothing")."""
    if args.save is not None:
        from bandsmith import api

        api.save_session(report.to_session(), args.save)


def emit(args, out: dict, readable: Callable[[dict], None], *, written: Sequence[str] = ()) -> int:
    """Print a command's result: its JSON object with ``--json``, else ``readable(out)`` and then each
    line of ``written`` (what the command wrote to files) after a blank line; exit 0."""
    if args.json:
        print_json(out)
    else:
        readable(out)
        for line in written:
            print(f"\n{line}")
    return 0
