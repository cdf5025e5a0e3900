"""Property-based tests (hypothesis, derandomized): wide part values, malformed text, symmetry.

- Any part values in wide log-uniform ranges give finite figures or a clear InputError, never
  another exception (README "Command line": bad input is exit 2, never a crash).
- Any malformed value text given to the parsing of typed parts (``bandsmith.design.candidate.parse_parts``,
  what the command line and the window use) gives InputError, never another exception.
- The ideal band-pass biquad's magnitude is symmetric about f0 on a log axis (derived below).
"""

from __future__ import annotations

import math
import string

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from bandsmith.analysis.analyzer import transfer_function
from bandsmith.design.candidate import Candidate, Conditions, parse_parts
from bandsmith.circuits import get_topology, topology_ids
from bandsmith.common.errors import InputError

SETTINGS = settings(derandomize=True, deadline=None, max_examples=100,
                    suppress_health_check=[HealthCheck.too_slow])

# log10 ranges of part values: far wider than any real part, so the core meets extremes
EXP = {"R": (-2.0, 10.0), "C": (-15.0, -1.0), "L": (-9.0, 2.0)}


# log10 ranges of parts as they are bought (common practice, no source): for properties of
# working band-pass designs, where the extremes above would mostly be filtered out.
EXP_STOCKED = {"R": (1.0, 7.0), "C": (-12.0, -4.0), "L": (-6.0, 0.0)}


@st.composite
def part_values(draw, topology_id, ranges=EXP):
    topo = get_topology(topology_id)
    out = {}
    for c in topo.components:
        lo, hi = ranges[c.kind]
        if not c.required:
            # the optional winding resistance: absent, zero or anything from 1 mΩ to 10 kΩ
            choice = draw(st.sampled_from(["absent", "zero", "value"]))
            if choice == "zero":
                out[c.ref] = 0.0
            elif choice == "value":
                out[c.ref] = 10.0 ** draw(st.floats(-3.0, 4.0))
            continue
        out[c.ref] = 10.0 ** draw(st.floats(lo, hi))
    return out


FIGURE_KEYS = ("f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "gain_center_db", "phase_center_deg")


def _check_analysis(topology_id, values, conditions):
    try:
        cand = Candidate(topology_id, values)
        res = cand.analyze(conditions)
    except InputError as exc:  # a clear error: names a field and a reason
        assert exc.field and exc.reason
        assert str(exc).startswith(f"{exc.field}: ")
        return
    fig = res.ideal.item()
    for key in FIGURE_KEYS:
        assert math.isfinite(getattr(fig, key)), f"{key} not finite for {values}"
    assert fig.f_low_hz < fig.f0_hz < fig.f_high_hz
    req = res.requirements
    for key in ("vout_peak_v", "slew_sine_v_per_us", "iout_peak_ma"):
        assert math.isfinite(getattr(req, key)), key
    # Found: an unstable circuit (a Sallen–Key whose gain K is too high; poles in the right
    # half-plane) is analysed on its jω-axis response, and its step response grows without bound,
    # so the step slew is infinite (null in JSON). Anything stable must give a finite step slew.
    _, den = res.h_ideal.to_s()
    unstable = bool(np.any(np.roots(den).real > 0))
    assert math.isfinite(req.slew_step_v_per_us) or unstable, "infinite step slew of a stable circuit"
    assert (req.gbw_hz is None) == (req.gbw_reason is not None)
    for sens in res.sensitivity.values():
        assert all(math.isfinite(x) for x in sens.values())
    if res.actual is not None:
        # the finite op-amp may leave no band-pass peak (NaN), but never a half-defined result
        a = res.actual.item()
        assert math.isfinite(a.f0_hz) or not math.isfinite(a.q)


@SETTINGS
@given(data=st.data(), topology_id=st.sampled_from(["rlc-tank", "mfb", "sallen-key"]))
def test_any_part_values_give_finite_figures_or_input_error(data, topology_id):
    values = data.draw(part_values(topology_id))
    _check_analysis(topology_id, values, Conditions())


@SETTINGS
@given(
    data=st.data(),
    topology_id=st.sampled_from(["rlc-tank", "mfb", "sallen-key"]),
    gbw_exp=st.floats(0.0, 10.0),
    a0_exp=st.floats(0.0, 8.0),
    vin=st.floats(1e-6, 1e3),
    rload_exp=st.one_of(st.none(), st.floats(0.0, 7.0)),
)
def test_any_conditions_give_finite_figures_or_input_error(data, topology_id, gbw_exp, a0_exp, vin, rload_exp):
    values = data.draw(part_values(topology_id))
    cond = Conditions(
        gbw_hz=10.0**gbw_exp, a0=10.0**a0_exp, vin_v=vin, rload_ohm=None if rload_exp is None else 10.0**rload_exp
    )
    _check_analysis(topology_id, values, cond)


@pytest.mark.parametrize(
    ("topology_id", "values"),
    [
        # found by the properties above: eigvals on NaN coefficients raised LinAlgError
        ("rlc-tank", {"R1": 1.0, "R2": 1.0, "L": 10.0, "C": 1e-15}),
        ("rlc-tank", {"R1": 501.0, "R2": 4.82e8, "L": 3.15e-7, "C": 5.3e-7}),
        # found: the required-GBW fine search indexed past its end (IndexError)
        ("mfb", {"R1": 0.14544570063125414, "R2": 54.086320656255744, "R3": 0.029077641186308005,
                 "C1": 1.2622921198970573e-13, "C2": 4.371892369530349e-09}),
        # found: sensitivities not finite while the nominal figures were (Q ≈ 5e7)
        ("rlc-tank", {"R1": 5.74e7, "R2": 8.98e8, "L": 0.00471, "C": 1.63e-5}),
        # an unstable Sallen–Key (K = 101): finite figures, infinite step slew
        ("sallen-key", {"R1": 1.0, "R2": 1.0, "R3": 1.0, "C1": 0.1, "C2": 0.1, "RA": 1.0, "RB": 100.0}),
    ],
)
def test_regressions_found_by_the_properties(topology_id, values):
    _check_analysis(topology_id, values, Conditions())
    _check_analysis(topology_id, values, Conditions(gbw_hz=1e6))


@SETTINGS
@given(
    topology_id=st.sampled_from(["rlc-tank", "mfb", "sallen-key"]),
    bad=st.sampled_from([0.0, -1.0, -1e-12, math.nan, math.inf, -math.inf]),
    which=st.integers(0, 10),
)
def test_zero_negative_and_non_finite_parts_are_input_errors(topology_id, bad, which):
    # README "Command line": zero or negative values of required parts and non-finite numbers are bad input
    topo = get_topology(topology_id)
    values = dict(topo.example)
    ref = topo.refs[which % len(topo.refs)]
    if not topo.component(ref).required and bad == 0.0:
        return  # an optional part may be zero
    values[ref] = bad
    with pytest.raises(InputError) as exc:
        Candidate(topology_id, values)
    assert exc.value.field == ref


# ------------------------------------------------------------------ malformed typed values

# characters that can never appear in a value (not a digit, sign, point, exponent, prefix, RKM
# letter or unit letter): any text containing one is malformed
JUNK = "xXqQwWbBjJ#@!?/\\;:,()[]{}<>=_~^&*|'\"`$"
VALUE_ALPHABET = string.digits + ".eE+-kKMGTmunpfRrµμ %ΩFHzAVs" + JUNK


@st.composite
def malformed_text(draw):
    """Text built around a valid-looking value with at least one impossible character in it."""
    head = draw(st.text(alphabet=VALUE_ALPHABET, max_size=8))
    tail = draw(st.text(alphabet=VALUE_ALPHABET, max_size=8))
    junk = draw(st.text(alphabet=JUNK, min_size=1, max_size=3))
    return head + junk + tail


@SETTINGS
@given(text=malformed_text(), topology_id=st.sampled_from(["rlc-tank", "mfb", "sallen-key"]), which=st.integers(0, 10))
def test_malformed_value_text_gives_input_error(text, topology_id, which):
    topo = get_topology(topology_id)
    given = {r: str(v) for r, v in topo.example.items()}
    ref = topo.refs[which % len(topo.refs)]
    given[ref] = text
    try:
        parse_parts(topo, given)
    except InputError as exc:
        assert exc.field == ref, f"error names {exc.field!r}, not {ref!r}"
        assert exc.reason
    else:
        raise AssertionError(f"{text!r} accepted as a value")


@SETTINGS
@given(text=st.one_of(st.text(max_size=20), st.text(alphabet=VALUE_ALPHABET, max_size=12)),
       topology_id=st.sampled_from(["rlc-tank", "mfb", "sallen-key"]))
def test_any_text_gives_a_value_or_input_error(text, topology_id):
    # any text at all: a finite, usable value or InputError naming the part, nothing else
    topo = get_topology(topology_id)
    given = {r: str(v) for r, v in topo.example.items()}
    ref = topo.refs[0]
    given[ref] = text
    try:
        out = parse_parts(topo, given)
    except InputError as exc:
        assert exc.field == ref
    else:
        assert math.isfinite(out[ref]) and out[ref] > 0


@SETTINGS
@given(ref=st.text(alphabet=string.ascii_letters + string.digits + "_-", min_size=1, max_size=6),
       topology_id=st.sampled_from(["rlc-tank", "mfb", "sallen-key"]))
def test_unknown_part_names_give_input_error(ref, topology_id):
    topo = get_topology(topology_id)
    assume(ref not in topo.refs)
    given = {r: str(v) for r, v in topo.example.items()}
    given[ref] = "1k"
    with pytest.raises(InputError) as exc:
        parse_parts(topo, given)
    assert exc.value.field == ref


@SETTINGS
@given(name=st.text(max_size=12))
def test_unknown_topology_gives_input_error(name):
    assume(name not in topology_ids())
    try:
        get_topology(name)
    except InputError as exc:
        assert exc.field == "topology"
    else:
        raise AssertionError(name)


# ------------------------------------------------------------------ log-axis symmetry
#
# derived: for H = G·(ω0/Q)·s/(s² + (ω0/Q)·s + ω0²) and ω = k·ω0,
#   |H|² = G²·(k/Q)² / ((1 − k²)² + (k/Q)²);
# replacing k by 1/k and multiplying top and bottom by k⁴ gives the same expression, so
# |H(f0·k)| = |H(f0/k)| for every k > 0 (f0 is the geometric centre of the response).


@st.composite
def stable_biquad_parts(draw, topology_id):
    v = draw(part_values(topology_id, EXP_STOCKED))
    v.pop("RL", None)  # RL adds a zero: not the pure biquad
    if topology_id == "sallen-key":
        k = 1 + v["RB"] / v["RA"]
        r1, r2, r3, c1, c2 = (v[x] for x in ("R1", "R2", "R3", "C1", "C2"))
        a1 = 1 / (r1 * c1) + (1 - k) / (r2 * c1) + 1 / (r3 * c1) + 1 / (r3 * c2)
        w0 = math.sqrt((r1 + r2) / (r1 * r2 * r3 * c1 * c2))
        assume(a1 > 0 and w0 / a1 < 1e3)  # stable, Q below 1000
    return v


@SETTINGS
@given(data=st.data(), topology_id=st.sampled_from(["rlc-tank", "mfb", "sallen-key"]),
       k=st.floats(1.001, 100.0))
def test_ideal_magnitude_is_symmetric_about_f0_on_a_log_axis(data, topology_id, k):
    v = data.draw(stable_biquad_parts(topology_id))
    topo = get_topology(topology_id)
    ff = topo.formulas(v)
    f0 = ff.f0_hz
    # Found: the response is exact to about 1e-16 of the input's scale (the floor of the linear
    # solve), so a centre gain of 1e-7 is only good to ~1e-8 relative; keep to designs a band-pass
    # can be (gain 1e-3 to 1e5, Q 0.01 to 1e4).
    assume(1e-3 < f0 < 1e12 and 1e-3 <= abs(ff.gain) <= 1e5 and 1e-2 <= ff.q <= 1e4)
    h = transfer_function(topo.netlist(v))
    mag = np.abs(h.at_f(np.array([f0 * k, f0 / k])))[0]
    assert_allclose(mag[0], mag[1], rtol=1e-8)
