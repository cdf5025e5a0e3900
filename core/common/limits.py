"""The limits of what Bandsmith accepts from outside: names (ids), value ranges and file sizes.

One home for every documented limit, so the command line, the session reader, the measured-data
reader and the window refuse the same things with the same words.

Ids
    A candidate's or a chain's id is 1 to 64 characters: a letter or digit, then letters, digits,
    ``.``, ``_`` or ``-`` (:data:`ID_PATTERN`). Ids are written into SPICE netlist comments, CSV
    files and reports; this character set can never start a new netlist line or a markup tag.

Part values (SI units), per kind (:data:`PART_RANGES`)
    R from 1e-6 Ω to 1e15 Ω, C from 1e-18 F to 1e6 F, L from 1e-15 H to 1e12 H. Wider than any
    real part, narrow enough that products and quotients of a few parts (time constants, MNA
    pencil entries, their squares) stay inside double precision (about 1e-308 to 1e308).

Frequencies (:data:`FREQ_RANGE_HZ`)
    1e-6 Hz to 1e15 Hz for a centre frequency, a GBW or a measured point.

Targets and op-amp figures (:data:`TARGET_RANGES`, :data:`A0_RANGE`, :data:`NOISE_DENSITY_MAX`)
    Q from 1e-3 to 1e5, centre gain from 1e-6 to 1e6 (V/V), open-loop gain A0 from 1e-3 to 1e16,
    noise densities (V/√Hz or A/√Hz) up to 1e-3; a measured magnitude from -400 dB to +400 dB;
    an input amplitude from 1e-9 V to 1e6 V (:data:`VIN_RANGE_V`), a load in the resistor range, a
    Chebyshev ripple of at least 1e-3 dB (:data:`RIPPLE_DB_MIN`).

Files (:data:`MAX_FILE_BYTES`, :data:`MAX_CANDIDATES`)
    Session, shelf and measured-data files are read only when they are regular files of at most
    their size cap (64 MiB for session and shelf files, 256 MiB for measured data). A session holds
    at most 100 candidates: far more than a comparison on one screen, and what keeps the window,
    the analyses and the report (one section and one curve per candidate) bounded.
"""

from __future__ import annotations

import math
import re

from bandsmith.common.errors import InputError
from bandsmith.common.units import PART_UNITS

__all__ = [
    "ID_PATTERN",
    "ID_RULE",
    "check_id",
    "PART_RANGES",
    "FREQ_RANGE_HZ",
    "TARGET_RANGES",
    "A0_RANGE",
    "DEFAULT_A0",
    "NOISE_DENSITY_MAX",
    "MAG_DB_RANGE",
    "VIN_RANGE_V",
    "RIPPLE_DB_MIN",
    "check_range",
    "check_part_value",
    "MAX_FILE_BYTES",
    "MAX_CANDIDATES",
    "one_line",
]

ID_PATTERN = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]{0,63}")
ID_RULE = "1 to 64 characters: a letter or digit, then letters, digits, '.', '_' or '-'"


def one_line(text: str, limit: int = 40) -> str:
    """A user's text as it may appear in a one-line message: control characters escaped, cut to
    ``limit`` characters with an ellipsis."""
    text = str(text)
    cut = text[:limit] + "…" if len(text) > limit else text
    return "".join(c if c.isprintable() else c.encode("unicode_escape", "backslashreplace").decode("ascii") for c in cut)


def check_id(field: str, value: object, what: str = "an id") -> str:
    """Return ``value`` when it is a valid id (:data:`ID_PATTERN`); an InputError naming ``field`` otherwise."""
    if not isinstance(value, str):
        raise InputError(field, f"{what} must be text ({ID_RULE}), got {type(value).__name__}")
    if not ID_PATTERN.fullmatch(value):
        raise InputError(field, f"{what} must be {ID_RULE}; got {one_line(repr(value))}")
    return value


# Part value ranges per kind (SI units), module notes.
PART_RANGES = {"R": (1e-6, 1e15), "C": (1e-18, 1e6), "L": (1e-15, 1e12)}
FREQ_RANGE_HZ = (1e-6, 1e15)
TARGET_RANGES = {"f0": FREQ_RANGE_HZ, "q": (1e-3, 1e5), "gain": (1e-6, 1e6)}
A0_RANGE = (1e-3, 1e16)
#: The op-amp model's open-loop DC gain when none is given (V/V).
DEFAULT_A0 = 1e5
NOISE_DENSITY_MAX = 1e-3
MAG_DB_RANGE = (-400.0, 400.0)
VIN_RANGE_V = (1e-9, 1e6)
RIPPLE_DB_MIN = 1e-3


def check_range(field: str, x: float, lo: float, hi: float, unit: str = "") -> float:
    """Return ``x`` when ``lo <= x <= hi``; an InputError naming the field and the range otherwise.

    Zero and negative values are reported as such ("must be greater than zero") rather than as
    out of range, so a message never says "got 0" for a tiny typed value that is not zero.
    """
    tail = f" {unit}" if unit else ""
    if not math.isfinite(x):
        raise InputError(field, f"{x!r} is not a finite number")
    if not (lo <= x <= hi):
        raise InputError(field, f"{x:.3g}{tail} is outside the range the analysis can resolve, {lo:g} to {hi:g}{tail}")
    return x


def check_part_value(field: str, kind: str, x: float) -> float:
    """Check a part value of kind ``R``, ``C`` or ``L`` against :data:`PART_RANGES`."""
    lo, hi = PART_RANGES[kind]
    return check_range(field, x, lo, hi, PART_UNITS[kind])


MAX_CANDIDATES = 100

MAX_FILE_BYTES = {"session file": 64 << 20, "shelf file": 64 << 20, "measured file": 256 << 20}
