"""Reading and writing component values: plain numbers, SI prefixes and IEC 60062 RKM codes.

Everything a user types as a value passes through :func:`parse_value` (or one of its checked
variants); everything shown to a user passes through :func:`format_value` or :func:`format_rkm`.
Values are SI base units (ohm, F, H, Hz, V, A, s) on both sides; a unit symbol after a value is
read and ignored, the caller knows which quantity it asked for.

Accepted forms (surrounding white space is ignored)::

    4700  4.7e3  -2.5  .5          plain numbers
    10n  4.7u  4.7µ  2.2k  1M  1m  SI prefix f p n u/µ m k/K M G T ("1M" mega, "1m" milli)
    1meg  1MEG  1Meg               mega, as in SPICE
    4k7  2R2  R47  470R  4n7  1µ0  IEC 60062 RKM code: the letter stands for the decimal point
    10nF  1kHz  4.7 kΩ  1 mH  2R2Ω  an optional unit: Ω ohm ohms F H Hz V A s

"1F" is one farad and "1H" one henry (F and H are units, never prefixes); "R" alone is no value.
"""

from __future__ import annotations

import math
import numbers
import re

from bandsmith.common.errors import InputError

__all__ = [
    "parse_value",
    "parse_positive",
    "parse_nonnegative",
    "parse_fraction",
    "value_hint",
    "format_value",
    "format_rkm",
    "UNPREFIXED_UNITS",
]

_HINT = "try 4k7, 4700 or 4.7e3"
# Examples that fit the field's unit (a GBW is not told to try a resistor code).
_UNIT_HINTS = {
    "Ω": _HINT,
    "F": "try 10n, 10nF or 1e-8",
    "H": "try 10m, 10mH or 0.01",
    "Hz": "try 2k, 2kHz or 2e3",
    "V": "try 15, 15V or 1.5e1",
    "A": "try 10m, 10mA or 0.01",
    "s": "try 1m, 1ms or 1e-3",
    "dB": "try 0.5, 3 or 1e1",
    "V/√Hz": "try 10n, 10nV or 1e-8",
    "A/√Hz": "try 1p, 1pA or 1e-12",
    "V/µs": "try 13, 0.5 or 1e1",
    "K": "try 300 or 3e2",
}


def value_hint(unit: str | None = None) -> str:
    """Examples of notation for a field of ``unit`` (``"Hz"``, ``"F"``, …); resistor codes when None."""
    if unit is None:
        return _HINT
    return _UNIT_HINTS.get(unit, "try 2.5, 2500 or 2.5e3")

# Decimal exponent of each SI prefix and RKM letter. "u" is the ASCII spelling of micro.
_PREFIX_EXP = {
    "f": -15, "p": -12, "n": -9, "u": -6, "μ": -6, "m": -3,
    "k": 3, "K": 3, "M": 6, "G": 9, "T": 12,
}
_RKM_EXP = {**_PREFIX_EXP, "R": 0, "r": 0}

_UNIT = r"(?P<unit>(?i:ohms?)|Ω|F|H|(?i:hz)|V|A|s)"
_SIGN = r"(?P<sign>[+-]?)"
_PLAIN_RE = re.compile(
    _SIGN
    + r"(?P<int>[0-9]*)(?:\.(?P<frac>[0-9]*))?(?:[eE](?P<exp>[+-]?[0-9]+))?"
    + r"\s*(?P<prefix>(?i:meg)|[fpnuμmkKMGT])?\s*" + _UNIT + r"?"
)
_RKM_RE = re.compile(
    _SIGN + r"(?P<int>[0-9]*)(?P<letter>[RrfpnuμmkKMGT])(?P<frac>[0-9]*)\s*" + _UNIT + r"?"
)
_FRACTION_RE = re.compile(
    _SIGN + r"(?P<int>[0-9]*)(?:\.(?P<frac>[0-9]*))?(?:[eE](?P<exp>[+-]?[0-9]+))?\s*(?P<pct>%)?"
)
_NON_FINITE = {"nan", "inf", "infinity"}
# The unit a part kind is written in (bandsmith.common.units); a value given with another unit is refused.
_UNIT_NAMES = {"Ω": "ohm", "F": "farad", "H": "henry", "Hz": "hertz", "V": "volt", "A": "ampere", "s": "second"}


def _canonical_unit(u: str) -> str:
    return "Ω" if u.lower().startswith("ohm") else ("Hz" if u.lower() == "hz" else u)
_MAX_EXP_DIGITS = 6  # longer exponents overflow or underflow a float anyway


def _normalise(text: str) -> str:
    """Strip and fold look-alike characters: micro sign, ohm sign, minus sign."""
    return (text.strip().replace("\u00b5", "μ").replace("\u2126", "Ω")
            .replace("\u2212", "-"))


def _shown(text: str) -> str:
    """The user's text as it appears in a one-line message: printable and not too long."""
    text = text.strip()
    if len(text) > 40:
        text = text[:37] + "…"
    return "".join(c if c.isprintable() else c.encode("unicode_escape").decode("ascii")
                   for c in text)


def _exponent(digits: str | None) -> int:
    """Read an exponent string, clamping absurd lengths (they give inf or 0 anyway)."""
    if not digits:
        return 0
    sign = -1 if digits[0] == "-" else 1
    body = digits.lstrip("+-").lstrip("0")
    if len(body) > _MAX_EXP_DIGITS:
        return sign * 10**_MAX_EXP_DIGITS
    return sign * int(body or "0")


def _decimal(sign: str, int_part: str, frac_part: str, exp: int) -> float:
    """``sign int_part . frac_part × 10**exp`` rounded once, so "4n7" is exactly float("4.7e-9")."""
    return float(f"{sign}{int_part or '0'}.{frac_part or '0'}e{exp}")


def _from_number(value: numbers.Real, field: str) -> float:
    try:
        x = float(value)
    except (OverflowError, ValueError, TypeError):
        raise InputError(field, f"{value!r} is not a finite number") from None
    if not math.isfinite(x):
        raise InputError(field, f"{x!r} is not a finite number")
    return x + 0.0  # folds -0.0 into 0.0


def parse_value(text: str | float | int, *, field: str, unit: str | None = None) -> float:
    """Read a value typed by a user.

    Parameters
    ----------
    text : str, float or int
        A plain number, a number with an SI prefix, or an IEC 60062 RKM code, optionally followed by
        a unit symbol (see the module docstring). Numbers are accepted as they are, if finite.
    field : str
        Name of the field the value came from, used in the error message (e.g. ``"R1"``).
    unit : str, optional
        The unit the field is in (``"Ω"``, ``"F"``, ``"H"``, ``"Hz"``, ...; see :data:`bandsmith.common.units.PART_UNITS`
        for parts). A value written with another unit (``"10nF"`` for a resistor, ``"1MEGA"``,
        one megaampere, for a capacitor) is refused; without ``unit`` any unit is read and ignored.
        The examples of an error message fit it too (:func:`value_hint`).

    Returns
    -------
    float
        The value in SI base units (``"4k7"`` → 4700.0, ``"10nF"`` → 1e-8). May be negative or
        zero; use :func:`parse_positive` or :func:`parse_nonnegative` to rule those out.

    Raises
    ------
    InputError
        For empty, unreadable or non-finite input, naming `field`. No other exception is raised
        for any string.
    """
    if isinstance(text, numbers.Real) and not isinstance(text, bool):
        return _from_number(text, field)
    if not isinstance(text, str):
        raise InputError(field, f"{type(text).__name__} is not a value; {value_hint(unit)}")
    s = _normalise(text)
    if not s:
        raise InputError(field, f"no value given; {value_hint(unit)}")
    m = _PLAIN_RE.fullmatch(s)
    if m and (m["int"] or m["frac"]):
        prefix = m["prefix"] or ""
        shift = 6 if prefix.lower() == "meg" else _PREFIX_EXP.get(prefix, 0)
        x = _decimal(m["sign"], m["int"], m["frac"], _exponent(m["exp"]) + shift)
    else:
        m = _RKM_RE.fullmatch(s)
        if not (m and (m["int"] or m["frac"])):
            if s.lstrip("+-").lower() in _NON_FINITE:
                raise InputError(field, f'"{_shown(text)}" is not a finite number')
            raise InputError(field, f'"{_shown(text)}" is not a value; {value_hint(unit)}')
        x = _decimal(m["sign"], m["int"], m["frac"], _RKM_EXP[m["letter"]])
    if unit is not None and m["unit"] and _canonical_unit(m["unit"]) != unit:
        got = _canonical_unit(m["unit"])
        raise InputError(field, f'"{_shown(text)}" is in {_UNIT_NAMES.get(got, got)}s ({got}), but {field} is in {_UNIT_NAMES.get(unit, unit)}s ({unit})')
    if not math.isfinite(x):
        raise InputError(field, f'"{_shown(text)}" is too large to be a value')
    if x == 0 and (m["int"] + (m["frac"] or "")).strip("0"):
        raise InputError(field, f'"{_shown(text)}" is too small to be a value: it rounds to zero')
    return x + 0.0


def parse_positive(text: str | float | int, *, field: str, unit: str | None = None) -> float:
    """Read a value as :func:`parse_value` does and require it to be greater than zero.

    Raises
    ------
    InputError
        As :func:`parse_value`, or with reason ``"must be greater than zero"``.
    """
    x = parse_value(text, field=field, unit=unit)
    if not x > 0:
        raise InputError(field, "must be greater than zero")
    return x


def parse_nonnegative(text: str | float | int, *, field: str, unit: str | None = None) -> float:
    """Read a value as :func:`parse_value` does and require it to be zero or more.

    Raises
    ------
    InputError
        As :func:`parse_value`, or with reason ``"must not be negative"``.
    """
    x = parse_value(text, field=field, unit=unit)
    if x < 0:
        raise InputError(field, "must not be negative")
    return x


def parse_fraction(text: str | float, *, field: str) -> float:
    """Read a tolerance or other proportion: ``"1%"`` → 0.01, ``"0.5 %"`` → 0.005, ``"0.01"``.

    A bare number is taken as a fraction and must not exceed 1 (``"5"`` is refused with a hint to
    write ``5%``, rather than read silently as 500 %). With a percent sign any size is allowed.
    Zero is allowed.

    Parameters
    ----------
    text : str or float
        The typed proportion, or a number (a fraction, at most 1).
    field : str
        Name of the field, used in the error message.

    Returns
    -------
    float
        The proportion as a fraction (dimensionless), >= 0.

    Raises
    ------
    InputError
        For unreadable, negative or non-finite input, or a bare number above 1, naming `field`.
    """
    if isinstance(text, numbers.Real) and not isinstance(text, bool):
        x, percent, shown = _from_number(text, field), False, repr(float(text))
    elif isinstance(text, str):
        s, shown = _normalise(text), _shown(text)
        m = _FRACTION_RE.fullmatch(s)
        if not s:
            raise InputError(field, "no value given; try 1% or 0.01")
        if not (m and (m["int"] or m["frac"])):
            raise InputError(field, f'"{shown}" is not a proportion; try 1% or 0.01')
        percent = m["pct"] is not None
        x = _decimal(m["sign"], m["int"], m["frac"], _exponent(m["exp"]) - 2 * percent) + 0.0
        if not math.isfinite(x):
            raise InputError(field, f'"{shown}" is too large')
    else:
        raise InputError(field, f"{type(text).__name__} is not a proportion; try 1% or 0.01")
    if x < 0:
        raise InputError(field, "must not be negative")
    if not percent and x > 1:
        raise InputError(field, f'"{shown}" is more than 1 (100 %); write {shown}% for percent')
    return x


# ---------------------------------------------------------------- formatting

_ENG_PREFIX = {-15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G",
               12: "T"}


def _significant(x: float, digits: int) -> tuple[str, int]:
    """Digits of ``|x|`` rounded to `digits` significant figures, and the decimal exponent.

    ``_significant(4712.0, 3)`` → ``("471", 3)``: the value is 4.71 × 10**3.
    """
    mant, exp = f"{abs(x):.{digits - 1}e}".split("e")
    return mant.replace(".", ""), int(exp)


def _place_point(d: str, n_int: int) -> tuple[str, str]:
    """Split digit string `d` with `n_int` digits before the point (may be <= 0 or > len(d))."""
    if n_int <= 0:
        return "", "0" * -n_int + d
    return d[:n_int].ljust(n_int, "0"), d[n_int:]


# Units that never take an SI prefix ("mdB" and "k%" read as nonsense): written plainly.
UNPREFIXED_UNITS = ("dB", "°", "%")


def format_value(x: float | None, unit: str = "", *, digits: int = 4) -> str:
    """Write a value in engineering notation with an SI prefix: 4700, "Ω" → ``"4.7 kΩ"``.

    Parameters
    ----------
    x : float or None
        Value in SI base units; None (a figure that does not exist) is written ``"—"``.
    unit : str, optional
        Unit symbol appended after the prefix (``"Ω"``, ``"F"``, ``"H"``, ``"Hz"``, ``"V"``, ...).
    digits : int, optional
        Significant digits kept (trailing zeros are dropped). Default 4.

    Returns
    -------
    str
        E.g. ``"10 nF"``, ``"15.92 kHz"``, ``"0 Ω"``, ``"-2.2 mV"``; ``"—"`` for nan or None,
        ``"∞ Hz"`` for infinity. Prefixes run from f (1e-15) to T (1e12); outside that range the
        number is written with an exponent (``"1e-18 F"``). :func:`parse_value` reads every finite
        result back. Units of :data:`UNPREFIXED_UNITS` take no prefix: ``"12.26 dB"``, ``"180°"``.
    """
    if digits < 1:
        raise InputError("digits", "must be at least 1")
    if x is None:
        return "—"
    x = float(x)
    tail = f" {unit}" if unit else ""
    if math.isnan(x):
        return "—"
    sign = "-" if x < 0 else ""
    if math.isinf(x):
        return f"{sign}∞{tail}"
    if unit in UNPREFIXED_UNITS:
        text = f"{round(x, 9) + 0.0:.{digits}g}"  # + 0.0: rounding noise never shows as "-0"
        return text + unit if unit == "°" else f"{text} {unit}"
    if x == 0:
        return f"0{tail}"
    d, exp = _significant(x, digits)
    eng = 3 * (exp // 3)
    if eng not in _ENG_PREFIX:
        frac = d[1:].rstrip("0")
        return f"{sign}{d[0]}{'.' + frac if frac else ''}e{exp}{tail}"
    int_part, frac = _place_point(d, exp - eng + 1)
    frac = frac.rstrip("0")
    number = int_part + ("." + frac if frac else "")
    suffix = _ENG_PREFIX[eng] + unit
    return f"{sign}{number} {suffix}" if suffix else f"{sign}{number}"


# Letters of IEC 60062:2016 RKM codes, with their decimal exponents, lowest first.
_RKM_LETTERS = {
    "R": ((0, "R"), (3, "k"), (6, "M"), (9, "G")),
    "C": ((-12, "p"), (-9, "n"), (-6, "µ"), (-3, "m")),
}
_RKM_LETTERS["L"] = _RKM_LETTERS["C"]


def format_rkm(x: float, kind: str, *, digits: int = 3, ascii_only: bool = False) -> str:
    """Write a value as an IEC 60062 RKM code: 4700 → ``"4k7"``, 4.7e-9 → ``"4n7"``.

    Parameters
    ----------
    x : float
        Value in ohm (kind ``"R"``), farad (``"C"``) or henry (``"L"``); finite and >= 0.
    kind : {"R", "C", "L"}
        Which letters to use: R k M G for resistance, p n µ m for capacitance and inductance.
    digits : int, optional
        Significant digits kept, default 3.
    ascii_only : bool, optional
        Write ``u`` instead of ``µ`` for micro (for plain-ASCII files).

    Returns
    -------
    str
        The code. :func:`parse_value` reads it back.

    Notes
    -----
    The rule, applied after rounding to `digits` significant figures:

    1. The letter is the largest of the kind whose multiplier does not exceed the value (the
       lowest letter for smaller values, the highest for larger ones), so 1 to 999 digits stand
       before it: 4700 → ``4k7``, 470 → ``470R``, 1.5e12 → ``1500G``, 4.7e-14 F → ``p047``.
    2. Trailing zeros after the letter are dropped; then zeros are appended until the code shows
       at least two digits: 1 → ``1R0``, 1e6 → ``1M0``, 0.1 → ``R10``, 10 → ``10R``, 47e3 → ``47k``.
    3. A value below one is written letter first: 0.47 → ``R47`` (as IEC 60062 writes it).
    4. Capacitance or inductance of 1 F / 1 H and above has no letter and is written as a plain
       decimal number (1.5 H → ``1.5``); zero is ``0R`` for resistance and ``0`` otherwise.
    """
    letters = _RKM_LETTERS.get(str(kind).upper())
    if letters is None:
        raise InputError("kind", f'"{kind}" is not a part kind; use R, C or L')
    if digits < 1:
        raise InputError("digits", "must be at least 1")
    x = float(x)
    if not math.isfinite(x):
        raise InputError("value", f"{x!r} is not a finite number")
    if x < 0:
        raise InputError("value", "must not be negative")
    if x == 0:
        return "0R" if letters[0][1] == "R" else "0"
    d, exp = _significant(x, digits)
    if letters[0][1] != "R" and exp >= 0:
        int_part, frac = _place_point(d, exp + 1)
        frac = frac.rstrip("0")
        return int_part + ("." + frac if frac else "")
    letter_exp, letter = letters[0]
    for e, name in letters:
        if e <= exp:
            letter_exp, letter = e, name
    if ascii_only and letter == "µ":
        letter = "u"
    int_part, frac = _place_point(d, exp - letter_exp + 1)
    frac = frac.rstrip("0")
    frac += "0" * max(0, 2 - len(int_part) - len(frac))
    return f"{int_part}{letter}{frac}"
