"""IEC 60063:2015 preferred-number series (E3 to E192) and snapping values onto them.

A standard value is ``code × 10**k`` for a series code (two digits for E3–E24, three for
E48–E192) and any integer ``k``. Inside this module standard values are numbered by one integer
index running through all decades (index ``i`` is code ``i mod n`` of decade ``i // n``, with
``n`` values per decade), and each value is built from its integer code by a single correctly
rounded multiplication or division by an exact power of ten, so 4.7e3 comes out as exactly
4700.0 and 4.7e-9 as exactly ``float("4.7e-9")``.

A value within a relative 1e-9 of a standard value counts as that standard value.

References
----------
IEC 60063:2015, *Preferred number series for resistors and capacitors*, Table 1 (E3–E24) and
Table 2 (E48–E192).
"""

from __future__ import annotations

import bisect
import functools
import math

import numpy as np

from bandsmith.common.errors import InputError

__all__ = [
    "SERIES_NAMES",
    "mantissas",
    "nearest",
    "nearest_array",
    "neighbours",
    "candidates",
    "search_options",
    "search_option_lists",
    "values_between",
    "in_series",
    "coarsest_series",
    "usual_tolerance",
]

SERIES_NAMES = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")

# IEC 60063:2015, Table 1. E3–E24 are tabulated: they are not round(10·10**(i/24)).
_E24 = (10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
        33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91)
# IEC 60063:2015, Table 2.
_E96 = (100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143,
        147, 150, 154, 158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210,
        215, 221, 226, 232, 237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309,
        316, 324, 332, 340, 348, 357, 365, 374, 383, 392, 402, 412, 422, 432, 442, 453,
        464, 475, 487, 499, 511, 523, 536, 549, 562, 576, 590, 604, 619, 634, 649, 665,
        681, 698, 715, 732, 750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953, 976)
# E192 follows round(100·10**(i/192)) except at 920, where the formula gives 919.
_E192 = tuple(920 if c == 919 else c for c in (round(100 * 10 ** (i / 192)) for i in range(192)))

# Each series: (integer codes of one decade, number of digits in a code).
_CODES: dict[str, tuple[tuple[int, ...], int]] = {
    "E3": (_E24[::8], 2),
    "E6": (_E24[::4], 2),
    "E12": (_E24[::2], 2),
    "E24": (_E24, 2),
    "E48": (_E96[::2], 3),
    "E96": (_E96, 3),
    "E192": (_E192, 3),
}

# Usual part tolerance for each series, as a fraction. IEC 60063:2015
# publishes E12 10 %, E24 5 % and E96 1 %; E6 20 %, E48 2 % and E192 0.5 % are common practice,
# no source. E3 has none here.
_TOLERANCE = {"E6": 0.2, "E12": 0.1, "E24": 0.05, "E48": 0.02, "E96": 0.01, "E192": 0.005}

_REL_TOL = 1e-9
# the factors a value is scaled by to take a standard value within _REL_TOL of it as equal (1 ± _REL_TOL)
_UP, _DOWN = 1 + _REL_TOL, 1 - _REL_TOL
_POW10 = np.array([float(f"1e{k}") for k in range(0, 330)])  # exact up to 1e22


def _series(series: str) -> tuple[np.ndarray, int]:
    """Integer codes (as float array) and code digits of a series name, any case."""
    name = series.strip().upper() if isinstance(series, str) else None
    if name not in _CODES:
        raise InputError("series", f'"{series}" is not a series; use one of '
                                   + ", ".join(SERIES_NAMES))
    codes, ndigits = _CODES[name]
    return np.asarray(codes, dtype=float), ndigits


def _positive(x: np.ndarray, field: str = "value") -> np.ndarray:
    try:
        x = np.asarray(x, dtype=float)
    except (TypeError, ValueError):
        raise InputError(field, "is not a number") from None
    if not (np.isfinite(x) & (x > 0)).all():
        raise InputError(field, "must be a finite number greater than zero")
    return x


def _positive_floats(x) -> list[float]:
    """:func:`_positive` of ``x`` flattened to a list of floats; a list or tuple of finite floats
    above zero (a design's few part values) is checked in Python, without an array."""
    if isinstance(x, (list, tuple)) and all(isinstance(v, float) and math.isfinite(v) and v > 0 for v in x):
        return [float(v) for v in x]
    return _positive(x).reshape(-1).tolist()


def _value(index: np.ndarray, codes: np.ndarray, ndigits: int) -> np.ndarray:
    """Standard value number `index` (all decades), rounded once from its decimal form."""
    n = len(codes)
    code = codes[index % n]
    exp = index // n - (ndigits - 1)
    up = _POW10[np.clip(exp, 0, len(_POW10) - 1)]
    down = _POW10[np.clip(-exp, 0, len(_POW10) - 1)]
    return np.where(exp >= 0, code * up, code / down)


def _floor_index(x: np.ndarray, codes: np.ndarray, ndigits: int) -> np.ndarray:
    """Index of the largest standard value <= x (values within _REL_TOL of x count as equal)."""
    n = len(codes)
    log_mant = np.log10(codes) - (ndigits - 1)
    lx = np.log10(x)
    decade = np.floor(lx)
    j = np.searchsorted(log_mant, lx - decade, side="right") - 1
    index = (decade.astype(np.int64) * n + np.maximum(j, 0)).astype(np.int64)
    ceiling = x * (1 + _REL_TOL)
    # The log estimate is off by at most one step from rounding; two passes each way settle it.
    for _ in range(2):
        index = index + (_value(index + 1, codes, ndigits) <= ceiling)
    for _ in range(2):
        index = index - (_value(index, codes, ndigits) > ceiling)
    return index


def _bracket(x: np.ndarray, codes: np.ndarray, ndigits: int) -> tuple[np.ndarray, np.ndarray]:
    """Indices (lo, hi) of the neighbours of x; lo == hi when x is a standard value."""
    lo = _floor_index(x, codes, ndigits)
    exact = _value(lo, codes, ndigits) >= x * (1 - _REL_TOL)
    return lo, np.where(exact, lo, lo + 1)


def mantissas(series: str) -> tuple[float, ...]:
    """The values of one decade of a series, in [1, 10).

    Parameters
    ----------
    series : str
        One of :data:`SERIES_NAMES`, any case (``"E12"``, ``"e12"``).

    Returns
    -------
    tuple of float
        E.g. ``mantissas("E12")`` → ``(1.0, 1.2, 1.5, ..., 8.2)``.
    """
    codes, ndigits = _series(series)
    return tuple(float(v) for v in _value(np.arange(len(codes)), codes, ndigits))


def nearest_array(x: np.ndarray, series: str) -> np.ndarray:
    """Nearest standard value on a log scale for each element of `x`.

    Parameters
    ----------
    x : array_like
        Values (any unit), finite and > 0.
    series : str
        Series name, see :data:`SERIES_NAMES`.

    Returns
    -------
    numpy.ndarray
        Same shape as `x`. On an exact tie (the geometric mean of two neighbours) the lower wins.
    """
    codes, ndigits = _series(series)
    x = _positive(x)
    lo, hi = _bracket(x, codes, ndigits)
    v_lo, v_hi = _value(lo, codes, ndigits), _value(hi, codes, ndigits)
    return np.where(np.log(x / v_lo) <= np.log(v_hi / x), v_lo, v_hi)


def nearest(x: float, series: str) -> float:
    """Nearest standard value to `x` on a log scale, in any decade.

    Parameters
    ----------
    x : float
        Value (any unit, e.g. ohm or farad), finite and > 0.
    series : str
        Series name, see :data:`SERIES_NAMES`.

    Returns
    -------
    float
        E.g. ``nearest(4500.0, "E12")`` → 4700.0. See :func:`nearest_array` for arrays.
    """
    return float(nearest_array(float(x), series))


def neighbours(x: float, series: str) -> tuple[float, float]:
    """The largest standard value <= `x` and the smallest >= `x`.

    Parameters
    ----------
    x : float
        Value, finite and > 0.
    series : str
        Series name, see :data:`SERIES_NAMES`.

    Returns
    -------
    (float, float)
        ``(below, above)``; both are the standard value itself when `x` is one (within 1e-9).
    """
    codes, ndigits = _series(series)
    x = _positive(x)
    lo, hi = _bracket(x, codes, ndigits)
    return float(_value(lo, codes, ndigits)), float(_value(hi, codes, ndigits))


def candidates(x: float, series: str, *, count: int = 2) -> tuple[float, ...]:
    """Standard values around `x` for a combination search.

    Parameters
    ----------
    x : float
        Value, finite and > 0.
    series : str
        Series name, see :data:`SERIES_NAMES`.
    count : int, optional
        How many values to take on each side, >= 1. Default 2.

    Returns
    -------
    tuple of float
        The `count` standard values <= `x` and the `count` values >= `x`, ascending, without
        duplicates: ``2·count`` values, or ``2·count − 1`` when `x` is itself a standard value.
        ``candidates(4500, "E12")`` → ``(3300.0, 3900.0, 4700.0, 5600.0)``.
    """
    if not isinstance(count, (int, np.integer)) or count < 1:
        raise InputError("count", "must be a whole number of at least 1")
    codes, ndigits = _series(series)
    x = _positive(x)
    lo, hi = _bracket(x, codes, ndigits)
    index = np.unique(np.concatenate([np.arange(lo - count + 1, lo + 1),
                                      np.arange(hi, hi + count)]))
    return tuple(float(v) for v in _value(index, codes, ndigits))


_POW10_LIST = _POW10.tolist()


@functools.lru_cache(maxsize=None)
def _series_lists(series: str) -> tuple[list[float], list[float], int]:
    """A series' codes, their log10 mantissas (in [0, 1)) and code digits, as plain lists."""
    codes, ndigits = _series(series)
    codes_l = codes.tolist()
    return codes_l, [math.log10(c) - (ndigits - 1) for c in codes_l], ndigits


# Standard values from 1e-15 to 1e12 of every unit, kept per series as one ascending list (each
# value built as :func:`_value` builds it) for the combination search's look-ups: every part a
# circuit is made of lies far inside (bandsmith.circuits.synthesis.MADE).
_TABLE_DECADES = (-15, 12)


@functools.lru_cache(maxsize=None)
def _series_table(series: str) -> tuple[list[float], float, float]:
    """``(values, smallest x, largest x)``: the standard values of a series
    over :data:`_TABLE_DECADES` by their index (see the module notes), and the range of ``x``
    whose look-ups (up to 8 steps either side) stay well inside the table."""
    codes_l, _, ndigits = _series_lists(series)
    n = len(codes_l)
    first, last = _TABLE_DECADES[0] * n, _TABLE_DECADES[1] * n
    values = [_value_of(k, codes_l, n, ndigits) for k in range(first, last)]
    return values, values[16], values[-16]


def _value_of(k: int, codes_l: list[float], n: int, ndigits: int) -> float:
    """Standard value number ``k`` as a plain float (as :func:`_value` computes it)."""
    e = k // n - (ndigits - 1)
    return codes_l[k % n] * _POW10_LIST[e] if e >= 0 else codes_l[k % n] / _POW10_LIST[-e]


def search_options(x, series: str, width: int) -> tuple[list[np.ndarray], np.ndarray]:
    """For a few values at once: the standard values a combination search offers each, and each
    one's nearest standard value (:func:`search_option_lists`, as arrays).

    Returns
    -------
    options : list of ndarray
        Ascending standard values, one array per element of ``x``.
    nearest : ndarray
        Shape ``(len(x),)``.
    """
    options, near = search_option_lists(x, series, width)
    return [np.array(o) for o in options], np.array(near)


def search_option_lists(x, series: str, width: int, *, checked: bool = False) -> tuple[list[list[float]], list[float]]:
    """For a few values at once: the standard values a combination search offers each, and each
    one's nearest standard value, as plain lists of floats.

    A value between two standard values is offered the ``width`` values at or below it and the
    ``width`` at or above it (:func:`candidates` with ``count=width``); a value that is itself
    standard is offered itself and its ``width`` neighbours each side (``count=width + 1``). The
    nearest is :func:`nearest_array`'s. Plain Python numbers inside: for the handful of parts of
    one design that is quicker than array calls, and every value is the same single correctly
    rounded step from its code. The offered values are neighbours in the series, so each is one
    slice of the series' table (:func:`_series_table`), found by bisection; a value beyond the
    table (or a wide ``width``) is located from its logarithm instead.

    ``checked``: ``x`` is a list of finite floats above zero already (a design's part values,
    :meth:`~bandsmith.circuits.topology.Topology.values_from`'s), taken without a second look.

    Returns
    -------
    options : list of list of float
        Ascending standard values, one list per element of ``x``.
    nearest : list of float
        One per element of ``x``.
    """
    codes_l, log_mant, ndigits = _series_lists(series)
    n = len(codes_l)
    table, x_min, x_max = _series_table(series)

    def value(k: int) -> float:
        return _value_of(k, codes_l, n, ndigits)

    options, near = [], []
    inside = width <= 8
    for xv in x if checked else _positive_floats(x):
        ceiling = xv * _UP
        if inside and x_min < xv < x_max:
            # the largest standard value <= ceiling, by bisection of the table
            i = bisect.bisect_right(table, ceiling) - 1
            v_lo = table[i]
            if v_lo >= xv * _DOWN:  # a standard value: its own nearest; itself and width each side
                near.append(v_lo)
                options.append(table[i - width:i + width + 1])
            else:  # width at or below and width above: one run of values
                v_hi = table[i + 1]
                near.append(v_lo if math.log(xv / v_lo) <= math.log(v_hi / xv) else v_hi)
                options.append(table[i - width + 1:i + width + 1])
            continue
        lx = math.log10(xv)
        decade = math.floor(lx)
        lo = decade * n + bisect.bisect_right(log_mant, lx - decade) - 1
        for _ in range(2):  # the log estimate is off by at most one step; settle it both ways
            lo += value(lo + 1) <= ceiling
            lo -= value(lo) > ceiling
        v_lo = value(lo)
        standard = v_lo >= xv * _DOWN
        hi = lo if standard else lo + 1
        v_hi = value(hi)
        near.append(v_lo if math.log(xv / v_lo) <= math.log(v_hi / xv) else v_hi)
        steps = range(width + 1 if standard else width)
        options.append([value(k) for k in sorted({lo - k for k in steps} | {hi + k for k in steps})])
    return options, near


def values_between(lo: float, hi: float, series: str) -> np.ndarray:
    """All standard values in the closed interval [`lo`, `hi`], ascending.

    Parameters
    ----------
    lo, hi : float
        Interval ends (same unit), finite and > 0. ``lo > hi`` gives an empty array.
    series : str
        Series name, see :data:`SERIES_NAMES`.

    Returns
    -------
    numpy.ndarray
        Float array; ends count as inside within a relative 1e-9.
    """
    codes, ndigits = _series(series)
    lo_x, hi_x = _positive(lo, "lo"), _positive(hi, "hi")
    first = _bracket(lo_x, codes, ndigits)[1]
    last = _floor_index(hi_x, codes, ndigits)
    return _value(np.arange(first, last + 1), codes, ndigits)


def in_series(x: float, series: str, *, rel_tol: float = 1e-9) -> bool:
    """Whether `x` is a standard value of `series` within a relative tolerance.

    Parameters
    ----------
    x : float
        Value; zero, negative or non-finite values are never in a series.
    series : str
        Series name, see :data:`SERIES_NAMES`.
    rel_tol : float, optional
        Largest accepted ``|x − standard| / x``. Default 1e-9.
    """
    _series(series)
    x = float(x)
    if not (np.isfinite(x) and x > 0):
        return False
    return bool(abs(nearest(x, series) - x) <= rel_tol * x)


def usual_tolerance(series: str) -> float:
    """The part tolerance a series is usually made in, as a fraction (E24 → 0.05).

    Parameters
    ----------
    series : str
        E6 to E192, any case. E3 has no usual tolerance here and raises InputError.

    Notes
    -----
    E12 10 %, E24 5 % and E96 1 % are published (IEC 60063:2015); E6 20 %,
    E48 2 % and E192 0.5 % are common practice, no source.
    """
    _series(series)
    name = series.strip().upper()
    if name not in _TOLERANCE:
        raise InputError("series", f"{name} has no usual tolerance; use E6 to E192")
    return _TOLERANCE[name]


def coarsest_series(x: float) -> str | None:
    """The coarsest series (E3 first, see :data:`SERIES_NAMES`) holding ``x`` (:func:`in_series`),
    or None: a value zero, negative, not finite or in no series."""
    return next((name for name in SERIES_NAMES if in_series(x, name)), None)
