"""Fuzzing the file readers: session, measured data and the op-amp shelf.

The contract: a reader returns what it read or raises the project's bad-input error
(:class:`~bandsmith.common.errors.InputError`: SessionError, MeasurementError, ShelfError) with a
one-line message; nothing else escapes. A session that reads must write again and read back
equal (save → load → save gives the same bytes). Hypothesis is derandomized; the damaged files are
mutations of valid ones of our own: values replaced by extreme numbers (the limits of IEEE 754
double precision), wrong types, text with line breaks, lone surrogates and markup, cut short.

``BANDSMITH_FUZZ_EXAMPLES`` sets the examples per test (default 25) for a longer run.
"""

from __future__ import annotations

import copy
import json
import os

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bandsmith.bench.measured import read_measurement
from bandsmith.bench.shelf import dumps_shelf, loads_shelf
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.files.session import dumps_session, loads_session

EXAMPLES = int(os.environ.get("BANDSMITH_FUZZ_EXAMPLES", "25"))
FUZZ = settings(max_examples=EXAMPLES, derandomize=True, deadline=None, database=None,
                suppress_health_check=[HealthCheck.too_slow])

leaves = st.one_of(
    st.sampled_from([0, -1, 1e-320, 1e-300, 5e-324, 1e300, 1.7976931348623157e308, True, None, "", "mfb",
                     "a\nb", "\ud800", "<b>x</b>", "x" * 200, [], {}, "E24", "exact", 2, 1.5]),
    st.floats(allow_nan=False, allow_infinity=False),
    st.integers(min_value=-(10**30), max_value=10**30),
    st.text(max_size=10),
)


def _paths(obj, prefix=()):
    yield prefix
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _paths(v, prefix + (i,))


@st.composite
def mutated(draw, base):
    obj = copy.deepcopy(base)
    for _ in range(draw(st.integers(min_value=1, max_value=3))):
        paths = [p for p in _paths(obj) if p]
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        parent = obj
        for k in path[:-1]:
            parent = parent[k]
        parent[path[-1]] = draw(leaves)
    return obj


def _text(obj, cut):
    """JSON text (``\\u`` escapes carry lone surrogates into it, as JSON allows), cut short by ``cut``."""
    text = json.dumps(obj)
    return text[: max(0, len(text) - cut)] if cut else text


SESSION = {
    "format": "bandsmith-session", "version": 1,
    "target": {"f0_hz": 2400.0, "q": 8.0, "gain": 4.0, "vin_v": 0.5, "series": "E24"},
    "opamp": {"gbw_hz": 1e6, "a0": 1e5},
    "tolerances": {"f0": 0.01, "q": 0.05, "gain_db": 0.5},
    "rload_ohm": None,
    "candidates": [
        {"id": "mfb", "topology": "mfb", "values": dict(get_topology("mfb").example), "enabled": True,
         "pinned": False, "snap": "E24", "fixed": ["C1"], "notes": "first"},
        {"id": "sallen-key", "topology": "sallen-key", "values": dict(get_topology("sallen-key").example)},
    ],
    "notes": "bench 3",
}


@FUZZ
@given(obj=mutated(SESSION), cut=st.sampled_from([0, 0, 0, 1, 7]))
def test_session_reader(obj, cut):
    text = _text(obj, cut)
    try:
        s = loads_session(text, source="fuzz.json")
    except InputError as exc:
        assert "\n" not in str(exc)
        return
    again = dumps_session(s)
    assert dumps_session(loads_session(again)) == again


_SHELF = {
    "format": "bandsmith-shelf", "version": 1,
    "amps": [{"name": "general 1 MHz", "gbw_hz": 1e6, "a0": 2e5, "f_p2_hz": None, "slew_v_per_us": 0.5,
              "en_nv_rthz": 20.0, "in_pa_rthz": 0.5, "iout_max_ma": 20.0, "supply_min_v": 10.0, "supply_max_v": 36.0,
              "swing_neg_v": 1.5, "swing_pos_v": 1.5, "cm_neg_v": 1.5, "cm_pos_v": 1.5, "notes": ""}],
}


def test_the_shelf_base_reads():
    assert len(loads_shelf(json.dumps(_SHELF))) == 1


@FUZZ
@given(obj=mutated(_SHELF), cut=st.sampled_from([0, 0, 1, 5]))
def test_shelf_reader(obj, cut):
    try:
        amps = loads_shelf(_text(obj, cut), source="fuzz-shelf.json")
    except InputError as exc:
        assert "\n" not in str(exc)
        return
    assert loads_shelf(dumps_shelf(amps)) == amps


NUMS = st.one_of(
    st.sampled_from(["1e-300", "1e300", "1e400", "-1e400", "1e-400", "0", "-0", "nan", "inf", "1,5", "", "x", "1e", "\u22121"]),
    st.floats(min_value=1e-6, max_value=1e12).map(lambda x: f"{x:.6g}"),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
)


@FUZZ
@given(rows=st.lists(st.lists(NUMS, min_size=1, max_size=4), min_size=0, max_size=30),
       sep=st.sampled_from([",", ";", "\t", " "]), header=st.sampled_from(["", "f_hz,mag_db,phase_deg\n", "# x\n", "Frequency/MHz\tdB\n"]),
       base=st.booleans())
def test_measured_reader(rows, sep, header, base):
    lines = [sep.join(r) for r in rows]
    if base:  # a plain sweep of our own with the drawn rows spliced in
        lines = [f"{1e3 * (1 + k)},{-k / 10},{-k}" for k in range(12)] + lines
    text = header + "\n".join(lines) + "\n"
    try:
        read_measurement(text.encode("utf-8"), name="fuzz.csv")
    except InputError as exc:
        assert "\n" not in str(exc)
