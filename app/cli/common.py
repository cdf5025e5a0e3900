"""What every sub-command shares: argument reading, error handling and output."""

from __future__ import annotations

import argparse
import json
import math
import sys
import warnings
from dataclasses import dataclass
from typing import Callable

from bandsmith.analysis.analyzer import Tolerances
from bandsmith.design.candidate import Conditions
from bandsmith.common.errors import InputError
from bandsmith.common.limits import one_line
from bandsmith.common.values import parse_fraction, parse_positive

__all__ = [
    "Command",
    "CliParser",
    "run_guarded",
    "check_save_path",
    "split_assignments",
    "add_amp_options",
    "conditions_from",
    "print_json",
    "EXIT_OK",
    "EXIT_INTERNAL",
    "EXIT_BAD_INPUT",
]

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT = 0, 1, 2
_MESSAGE_CHARS = 300  # a message longer than this (a long input echoed in it) is cut, on one line


def check_save_path(path: str | None) -> str | None:
    """``--save``'s value: None when not given; an empty one is bad input, not "save nothing"."""
    if path is not None and not path.strip():
        raise InputError("save", "give the name of the session file to write")
    return path


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


def split_assignments(tokens: list[str], *, what: str = "part") -> dict[str, str]:
    """``["R1=4k7", "C=10n"]`` → ``{"R1": "4k7", "C": "10n"}``; malformed tokens are bad input."""
    out: dict[str, str] = {}
    for tok in tokens:
        ref, sep, text = tok.partition("=")
        ref = ref.strip()
        if not sep or not ref:
            raise InputError(tok, f"expected {what} as REF=VALUE, e.g. R1=4k7")
        if ref in out:
            raise InputError(ref, "given twice")
        out[ref] = text.strip()
    return out


def add_amp_options(p: argparse.ArgumentParser, *, tolerances: bool = True) -> None:
    """The op-amp and drive options shared by the analysing commands."""
    p.add_argument("--gbw", metavar="F", help="op-amp gain-bandwidth (Hz); without it the op-amp is ideal")
    p.add_argument("--a0", metavar="A", help="op-amp open-loop DC gain (default 1e5)")
    p.add_argument("--vin", metavar="V", help="input peak amplitude in volts (default 1)")
    p.add_argument("--rload", metavar="R", help="load resistance from the output to ground (ohm)")
    if tolerances:
        p.add_argument("--tol-f0", metavar="P", help="f0 tolerance for the required GBW (default 1%%)")
        p.add_argument("--tol-q", metavar="P", help="Q tolerance for the required GBW (default 5%%)")
        p.add_argument("--tol-gain-db", metavar="D", help="centre-gain tolerance in dB (default 0.5)")


def _positive_fraction(text: str, field: str) -> float:
    v = parse_fraction(text, field=field)
    if v <= 0:
        raise InputError(field, "must be greater than zero")
    return v


def conditions_from(args: argparse.Namespace) -> Conditions:
    """Read the op-amp and drive options into :class:`Conditions`."""
    gbw = parse_positive(args.gbw, field="gbw") if getattr(args, "gbw", None) is not None else None
    a0 = parse_positive(args.a0, field="a0") if getattr(args, "a0", None) is not None else 1e5
    vin = parse_positive(args.vin, field="vin") if getattr(args, "vin", None) is not None else 1.0
    rload = parse_positive(args.rload, field="rload") if getattr(args, "rload", None) is not None else None
    tol = Tolerances()
    if getattr(args, "tol_f0", None) is not None or getattr(args, "tol_q", None) is not None or getattr(args, "tol_gain_db", None) is not None:
        tol = Tolerances(
            f0=_positive_fraction(args.tol_f0, "tol-f0") if args.tol_f0 is not None else tol.f0,
            q=_positive_fraction(args.tol_q, "tol-q") if args.tol_q is not None else tol.q,
            gain_db=parse_positive(args.tol_gain_db, field="tol-gain-db") if args.tol_gain_db is not None else tol.gain_db,
        )
    return Conditions(gbw_hz=gbw, a0=a0, vin_v=vin, rload_ohm=rload, tolerances=tol)


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
    return f if math.isfinite(f) else None


def print_json(obj) -> None:
    """Print exactly one JSON object on stdout (numpy scalars made floats, non-finite as null)."""
    sys.stdout.write(json.dumps(_clean(obj), ensure_ascii=False) + "\n")
