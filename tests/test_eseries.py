"""Tests for bandsmith.common.eseries: IEC 60063 series and snapping values onto them."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from bandsmith.common.errors import InputError
from bandsmith.common.eseries import (
    SERIES_NAMES,
    candidates,
    in_series,
    mantissas,
    nearest,
    nearest_array,
    neighbours,
    usual_tolerance,
    values_between,
)

# IEC 60063:2015, Table 1 (two digits) [published]
E12_IEC = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82]
E24_IEC = [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
           33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91]
# IEC 60063:2015, Table 2 (three digits) [published]
E96_IEC = [100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143,
           147, 150, 154, 158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210,
           215, 221, 226, 232, 237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309,
           316, 324, 332, 340, 348, 357, 365, 374, 383, 392, 402, 412, 422, 432, 442, 453,
           464, 475, 487, 499, 511, 523, 536, 549, 562, 576, 590, 604, 619, 634, 649, 665,
           681, 698, 715, 732, 750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953, 976]

HYPOTHESIS = settings(derandomize=True, deadline=None, max_examples=300)


def codes(series, scale):
    """Series mantissas as integer codes (E12 → 10, 12, ...)."""
    return [round(m * scale) for m in mantissas(series)]


# ------------------------------------------------------------ the published tables

@pytest.mark.parametrize(
    ("series", "expected", "scale"),
    [("E12", E12_IEC, 10), ("E24", E24_IEC, 10), ("E96", E96_IEC, 100)],
)
def test_series_match_iec_60063(series, expected, scale):
    # IEC 60063:2015, Table 1 (E12, E24) and Table 2 (E96)
    assert_allclose(np.array(mantissas(series)) * scale, expected, rtol=1e-12)
    assert len(mantissas(series)) == len(expected)


@pytest.mark.parametrize(
    ("series", "expected", "scale"),
    [("E12", E12_IEC, 10), ("E24", E24_IEC, 10), ("E96", E96_IEC, 100)],
)
def test_every_decade_holds_the_published_values(series, expected, scale):
    # IEC 60063:2015, Tables 1 and 2: a series value times any power of ten is a standard value
    for decade in range(-13, 10):
        got = values_between(10.0**decade, 9.99 * 10.0**decade, series)
        want = [float(f"{c}e{decade}") / scale for c in expected]
        assert_allclose(got, want, rtol=1e-12)


# ------------------------------------------------------------ derived invariants

def test_e96_is_the_rounded_geometric_series():
    # derived (checked here on the published table): E96[i] = round(100·10^(i/96)) for every i
    assert codes("E96", 100) == [round(100 * 10 ** (i / 96)) for i in range(96)]


def test_e48_is_every_other_e96_value():
    # derived: E48 = E96[::2], checked against the published E96 list
    assert codes("E48", 100) == E96_IEC[::2]
    assert codes("E48", 100) == [round(100 * 10 ** (i / 48)) for i in range(48)]


def test_e12_is_every_other_e24_value():
    # derived: E12 = E24[::2], on the published IEC 60063 lists
    assert E12_IEC == E24_IEC[::2]
    assert codes("E12", 10) == codes("E24", 10)[::2]


def test_e6_and_e3_are_every_other_value_of_the_next_series():
    # from memory: E6 = 10 15 22 33 47 68 and E3 = 10 22 47, each every other value of the next
    assert codes("E6", 10) == [10, 15, 22, 33, 47, 68] == E12_IEC[::2]
    assert codes("E3", 10) == [10, 22, 47] == E12_IEC[::4]


def test_e192_is_the_formula_except_920():
    # derived: E192 = round(100·10^(i/192)) except 920, where the formula gives 919
    formula = [round(100 * 10 ** (i / 192)) for i in range(192)]
    got = codes("E192", 100)
    differ = [(g, f) for g, f in zip(got, formula) if g != f]
    assert differ == [(920, 919)]
    assert got[::2] == E96_IEC  # derived: every other E192 value is the published E96


def test_e24_is_not_the_formula():
    # derived: E24 differs from round(10·10^(i/24)) at exactly these values,
    # which is why E3–E24 are tabulated
    formula = [round(10 * 10 ** (i / 24)) for i in range(24)]
    differ = [c for c, f in zip(E24_IEC, formula) if c != f]
    assert differ == [27, 30, 33, 36, 39, 43, 47, 82]
    assert codes("E24", 10) == E24_IEC


@pytest.mark.parametrize("series", SERIES_NAMES)
def test_mantissas_lie_in_one_decade_ascending(series):
    # derived: a decade of a series is increasing and lies in [1, 10)
    m = np.array(mantissas(series))
    assert len(m) == int(series[1:])
    assert m[0] >= 1 and m[-1] < 10
    assert np.all(np.diff(m) > 0)


def test_names_are_case_blind_and_unknown_names_are_refused():
    assert_allclose(mantissas("e12"), mantissas("E12"))
    with pytest.raises(InputError) as err:
        mantissas("E7")
    assert err.value.field == "series"
    for name in SERIES_NAMES:
        assert name in err.value.reason


# ------------------------------------------------------------ exact floats

@pytest.mark.parametrize(
    ("x", "series", "shown"),
    [(4.7e3, "E12", "4700.0"), (4.7e-9, "E12", "4.7e-09"), (1e-3, "E24", "0.001"),
     (3.3e5, "E6", "330000.0"), (1.02e-12, "E96", "1.02e-12"), (9.2, "E192", "9.2")],
)
def test_standard_values_come_out_clean(x, series, shown):
    # the value is the decimal itself, not 4699.999…: repr of the float is the short decimal
    assert in_series(x, series)
    assert repr(nearest(x, series)) == shown
    lo, hi = neighbours(x, series)
    assert (repr(lo), repr(hi)) == (shown, shown)


def test_in_series_relative_tolerance():
    assert in_series(4700 * (1 + 1e-12), "E12")
    assert not in_series(4700 * (1 + 1e-6), "E12")
    assert in_series(4700 * (1 + 1e-6), "E12", rel_tol=1e-5)
    assert not in_series(4800, "E12")
    assert not in_series(0.0, "E12") and not in_series(-4700, "E12")
    assert not in_series(math.inf, "E12") and not in_series(math.nan, "E12")


# ------------------------------------------------------------ snapping

def test_nearest_is_on_a_log_scale():
    # derived: 1.1 is nearer 1.2 than 1.0 on a log scale (log 1.1/1.0 = 0.0414 > log 1.2/1.1
    # = 0.0378), although it is the arithmetic midpoint; the log midpoint is sqrt(1.2)
    assert_allclose(nearest(1.1, "E12"), 1.2)
    assert_allclose(nearest(1.09, "E12"), 1.0)
    assert_allclose(nearest(4500, "E12"), 4700)
    assert_allclose(nearest(9.9e-6, "E12"), 1e-5)  # crosses into the next decade
    assert_allclose(nearest(0.95, "E24"), 0.91)  # derived: sqrt(0.91) = 0.954 > 0.95


def test_neighbours_and_candidates_examples():
    assert_allclose(neighbours(4500, "E12"), (3900, 4700))
    assert_allclose(neighbours(0.99, "E6"), (0.68, 1.0))
    assert_allclose(neighbours(1000, "E96"), (1000, 1000))
    assert_allclose(candidates(4500, "E12"), (3300, 3900, 4700, 5600))
    assert_allclose(candidates(4700, "E12"), (3900, 4700, 5600))  # x is a standard value
    assert_allclose(candidates(1.05e-9, "E3", count=3), (2.2e-10, 4.7e-10, 1e-9, 2.2e-9,
                                                         4.7e-9, 1e-8))


def test_values_between():
    assert_allclose(values_between(1e3, 1e4, "E12"),
                    [1e3, 1.2e3, 1.5e3, 1.8e3, 2.2e3, 2.7e3, 3.3e3, 3.9e3, 4.7e3, 5.6e3, 6.8e3,
                     8.2e3, 1e4])
    assert_allclose(values_between(3e-9, 1e-8, "E6"), [3.3e-9, 4.7e-9, 6.8e-9, 1e-8])
    assert values_between(2.0, 1.0, "E6").size == 0
    assert values_between(1.6, 2.1, "E6").size == 0
    assert len(values_between(1.0, 1e3, "E192")) == 3 * 192 + 1


def test_nearest_array_keeps_shape():
    x = np.array([[1.04, 2.0], [3.0, 4e5]])
    got = nearest_array(x, "E24")
    assert got.shape == x.shape
    assert_allclose(got, [[1.0, 2.0], [3.0, 3.9e5]])


@pytest.mark.parametrize("bad", [0.0, -1.0, math.inf, math.nan])
def test_bad_values_are_refused(bad):
    for call in (lambda: nearest(bad, "E12"), lambda: neighbours(bad, "E12"),
                 lambda: candidates(bad, "E12")):
        with pytest.raises(InputError) as err:
            call()
        assert err.value.field == "value"
    with pytest.raises(InputError):
        nearest_array(np.array([1.0, bad]), "E12")


def test_bad_count_is_refused():
    with pytest.raises(InputError) as err:
        candidates(1.0, "E12", count=0)
    assert err.value.field == "count"


@given(
    x=st.floats(min_value=1e-15, max_value=1e12),
    series=st.sampled_from(SERIES_NAMES),
)
@HYPOTHESIS
def test_snapping_properties(x, series):
    lo, hi = neighbours(x, series)
    same = math.isclose(lo, hi, rel_tol=1e-12)
    assert lo <= x * (1 + 1e-9) and hi >= x * (1 - 1e-9)
    assert in_series(lo, series) and in_series(hi, series)
    # no standard value lies strictly between the two neighbours
    assert len(values_between(lo, hi, series)) == (1 if same else 2)
    # the nearest is the log-closer neighbour; the array form agrees with the scalar one
    near = nearest(x, series)
    assert math.isclose(near, lo, rel_tol=1e-12) or math.isclose(near, hi, rel_tol=1e-12)
    assert abs(math.log(near / x)) <= min(abs(math.log(lo / x)), abs(math.log(hi / x))) + 1e-12
    assert_allclose(nearest_array(np.array([x]), series), [near], rtol=0)
    # candidates: ascending, unique, around x, and they include both neighbours
    c = candidates(x, series, count=2)
    assert np.all(np.diff(c) > 0)
    assert len(c) == (3 if same else 4)
    assert np.isclose(c, lo, rtol=1e-12).any() and np.isclose(c, hi, rtol=1e-12).any()


# ------------------------------------------------------------ tolerances

def test_usual_tolerance():
    # IEC 60063:2015 [published]: E12 10 %, E24 5 %, E96 1 %
    assert_allclose([usual_tolerance(s) for s in ("E12", "E24", "E96")], [0.10, 0.05, 0.01])
    # common practice, no source: E6 20 %, E48 2 %, E192 0.5 %
    assert_allclose([usual_tolerance(s) for s in ("e6", "E48", "E192")], [0.2, 0.02, 0.005])
    with pytest.raises(InputError) as err:
        usual_tolerance("E3")
    assert err.value.field == "series"
