"""Headroom: node peaks against independent nodal equations, the limiting node, the largest input."""

import math

import numpy as np
import pytest
import scipy.optimize
from numpy.testing import assert_allclose

from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.bench.headroom import headroom, node_limits
from bandsmith.bench.shelf import OpAmp


def shelf_amp(**over):
    base = dict(
        name="test amp", gbw_hz=10e6, a0=1e5, slew_v_per_us=10.0, iout_max_ma=50.0, supply_min_v=2.0,
        supply_max_v=40.0, swing_neg_v=1.5, swing_pos_v=1.0, cm_neg_v=2.0, cm_pos_v=1.0,
    )
    base.update(over)
    return OpAmp(**base)


# --- independent nodal equations (numpy), written from the circuits' netlists ---------------------

def mfb_nodes(v, f):
    """MFB, ideal op-amp: V(m) = 0. KCL at a: (Va−Vin)/R1 + Va/R2 + sC1·Va + sC2·(Va−Vout) = 0;
    KCL at m: −sC1·Va − Vout/R3 = 0, so Vout = −sC1·R3·Va. Vin = 1."""
    s = 2j * np.pi * f
    va = (1 / v["R1"]) / (1 / v["R1"] + 1 / v["R2"] + s * v["C1"] + s * v["C2"] + s * v["C2"] * s * v["C1"] * v["R3"])
    return {"in": np.ones_like(va), "a": va, "m": np.zeros_like(va), "out": -s * v["C1"] * v["R3"] * va}


def sallen_key_nodes(v, f):
    """Sallen–Key, ideal op-amp: V(m) = V(b), V(m) = Vout·RA/(RA+RB), so Vout = K·Vb.
    KCL at a: (Va−Vin)/R1 + sC1·Va + (Va−K·Vb)/R2 + sC2·(Va−Vb) = 0;
    KCL at b: sC2·(Vb−Va) + Vb/R3 = 0. Two unknowns (Va, Vb), Vin = 1."""
    s = 2j * np.pi * f
    k = 1 + v["RB"] / v["RA"]
    m = np.zeros(f.shape + (2, 2), complex)
    m[..., 0, 0] = 1 / v["R1"] + s * v["C1"] + 1 / v["R2"] + s * v["C2"]
    m[..., 0, 1] = -k / v["R2"] - s * v["C2"]
    m[..., 1, 0] = -s * v["C2"]
    m[..., 1, 1] = s * v["C2"] + 1 / v["R3"]
    rhs = np.zeros(f.shape + (2, 1), complex)
    rhs[..., 0, 0] = 1 / v["R1"]
    x = np.linalg.solve(m, rhs)[..., 0]
    va, vb = x[..., 0], x[..., 1]
    return {"in": np.ones_like(va), "a": va, "b": vb, "m": vb, "out": k * vb}


def tank_nodes(v, f):
    """Tank, ideal op-amp: V(n1) = 0; Vout = −Z/R1 with Z = R2 ∥ (RL + sL) ∥ 1/(sC)."""
    s = 2j * np.pi * f
    y = 1 / v["R2"] + 1 / (v.get("RL", 0.0) + s * v["L"]) + s * v["C"]
    out = -1 / (v["R1"] * y)
    return {"in": np.ones_like(out), "n1": np.zeros_like(out), "out": out}


NODES = {"mfb": mfb_nodes, "sallen-key": sallen_key_nodes, "rlc-tank": tank_nodes}


def independent_peak(fn, v, node, f0):
    """max |V_node| over f0/1000 … 1000·f0: a dense log grid, then a bounded scalar search."""
    f = f0 * np.geomspace(1e-3, 1e3, 20001)
    mag = np.abs(fn(v, f)[node])
    i = int(np.argmax(mag))
    if np.ptp(mag) <= 1e-12 * mag.max():
        return float(mag.max())
    lo, hi = np.log(f[max(i - 1, 0)]), np.log(f[min(i + 1, f.size - 1)])
    res = scipy.optimize.minimize_scalar(
        lambda lf: -abs(fn(v, np.array([math.exp(lf)]))[node][0]), bounds=(lo, hi), method="bounded",
        options={"xatol": 1e-10},
    )
    return max(float(-res.fun), float(mag.max()))


CASES = [
    ("mfb", None),
    ("sallen-key", None),
    ("rlc-tank", None),
    # A 21 kHz ultrasonic pick-off (our own scenario): Q ≈ 26, gain −15.
    ("mfb", {"R1": 13e3, "R2": 150.0, "R3": 390e3, "C1": 1e-9, "C2": 1e-9}),
    # Equal-part Sallen–Key, K = 3.5 (Q = √2/(4−K) ≈ 2.83).
    ("sallen-key", {"R1": 10e3, "R2": 10e3, "R3": 10e3, "C1": 10e-9, "C2": 10e-9, "RA": 10e3, "RB": 25e3}),
    ("rlc-tank", {"R1": 2e3, "R2": 20e3, "L": 22e-3, "C": 47e-9, "RL": 12.0}),
]


@pytest.mark.parametrize("tid,values", CASES)
def test_node_peaks_equal_independent_nodal_solution(tid, values):
    topo = get_topology(tid)
    v = topo.values_from(values or topo.example)
    net = topo.netlist(v)
    vin = 0.7
    h = headroom(net, vin_v=vin, supply_v=15.0)
    f0 = h.node_peak_f_hz["out"]
    assert set(h.node_peak_v) == set(NODES[tid](v, np.array([1.0])))
    for node, got in h.node_peak_v.items():
        want = vin * independent_peak(NODES[tid], v, node, f0)
        # Both searches converge on the same flat maximum; 1e-8 relative is the search's own accuracy.
        assert_allclose(got, want, rtol=1e-8, atol=1e-12 * vin, err_msg=node)


def test_output_peak_frequency_is_f0_for_the_ideal_biquad():
    topo = get_topology("mfb")
    h = headroom(topo.netlist(topo.example), vin_v=1.0)
    # Ideal MFB biquad: the output peaks at f0 = 1/(2π·√(R1∥R2·R3·C1·C2)) for C1 = C2 (Franco, ch. 3).
    v = topo.example
    r12 = v["R1"] * v["R2"] / (v["R1"] + v["R2"])
    f0 = 1 / (2 * math.pi * math.sqrt(r12 * v["R3"] * v["C1"] * v["C2"]))
    assert_allclose(h.node_peak_f_hz["out"], f0, rtol=1e-6)
    assert h.node_peak_f_hz["in"] is not None and math.isnan(h.node_peak_f_hz["in"])  # flat
    assert h.node_peak_v["m"] == 0.0  # an ideal op-amp's virtual ground


def sk_equal(k, r=10e3, c=10e-9):
    ra = 10e3
    return {"R1": r, "R2": r, "R3": r, "C1": c, "C2": c, "RA": ra, "RB": (k - 1) * ra}


def test_sallen_key_internal_node_peaks_above_the_output_at_low_q():
    # Expectation, from the nodal equations above: at b, sC2(Vb − Va) + Vb/R3 = 0, so
    # Va = Vb·(1 + 1/(s·R3·C2)) and, with Vout = K·Vb,  |Va/Vout| = √(1 + 1/(ω·R3·C2)²) / K.
    # Equal parts: ω0 = √2/(R·C) (Franco, ch. 3), so ω0·R3·C2 = √2 and |Va/Vout|(f0) = √(3/2)/K.
    # The output peaks at f0, so node a peaks above the output wherever √(3/2)/K > 1, i.e.
    # K < √(3/2) ≈ 1.2247, which is Q = √2/(4 − K) < 0.51: a low-Q stage. At high Q (K near 4)
    # node a sits well below the output.
    topo = get_topology("sallen-key")
    low = headroom(topo.netlist(sk_equal(1.1)), vin_v=1.0)
    assert low.node_peak_v["a"] > low.node_peak_v["out"]
    assert low.node_peak_v["a"] >= math.sqrt(1.5) / 1.1 * low.node_peak_v["out"] * (1 - 1e-9)
    # b follows the output divided by K exactly (ideal op-amp).
    assert_allclose(low.node_peak_v["b"], low.node_peak_v["out"] / 1.1, rtol=1e-9)
    high = headroom(topo.netlist(sk_equal(3.5)), vin_v=1.0)
    assert high.node_peak_v["a"] < high.node_peak_v["out"]
    # At high Q both peaks sit at f0, so the ratio is close to √(3/2)/K.
    assert_allclose(high.node_peak_v["a"] / high.node_peak_v["out"], math.sqrt(1.5) / 3.5, rtol=0.05)
    # With an ideal op-amp and the rails only: the high-Q stage's output limits first; the low-Q
    # stage attenuates (centre gain K/(4 − K) ≈ 0.38), so its input reaches the rails first.
    assert high.limiting_node == "out"
    assert low.limiting_node == "in"


@pytest.mark.parametrize(
    "tid,values,amp,supply,expect",
    [
        ("mfb", None, shelf_amp(), 12.0, {"out"}),
        ("sallen-key", None, shelf_amp(), 15.0, {"out"}),
        # JFET-like inputs (far from the negative rail) on ±6 V: the inputs limit, not the output.
        ("sallen-key", sk_equal(1.5), shelf_amp(cm_neg_v=4.0, cm_pos_v=0.5), 6.0, {"b", "m"}),
        ("sallen-key", sk_equal(1.1), None, 5.0, {"in"}),
        ("rlc-tank", None, shelf_amp(f_p2_hz=30e6), 5.0, {"out"}),
    ],
)
def test_largest_input_makes_the_limiting_node_touch_its_limit(tid, values, amp, supply, expect):
    topo = get_topology(tid)
    net = topo.netlist(values or topo.example)
    h = headroom(net, vin_v=1.0, supply_v=supply, amp=amp)
    assert h.limiting_node in expect
    at = headroom(net, vin_v=h.max_vin_v, supply_v=supply, amp=amp)
    node = h.limiting_node
    assert_allclose(at.node_peak_v[node], at.limits[node].amplitude_v, rtol=1e-9)
    for n, peak in at.node_peak_v.items():
        assert peak <= at.limits[n].amplitude_v * (1 + 1e-9), n
        assert_allclose(at.spare_v(n), at.limits[n].amplitude_v - peak, rtol=1e-12, atol=1e-12)
    over = headroom(net, vin_v=h.max_vin_v * 1.001, supply_v=supply, amp=amp)
    assert over.spare_v(node) < 0
    # Node peaks scale with the input level.
    assert_allclose(at.node_peak_v["out"], h.node_peak_v["out"] * h.max_vin_v, rtol=1e-9)


def test_limits_per_node_kind():
    topo = get_topology("sallen-key")
    net = topo.netlist(topo.example)
    a = shelf_amp()
    lim = node_limits(net, 12.0, a)
    assert (lim["out"].low_v, lim["out"].high_v, lim["out"].what) == (-10.5, 11.0, "output swing")
    for n in ("b", "m"):
        assert (lim[n].low_v, lim[n].high_v, lim[n].what) == (-10.0, 11.0, "input common-mode range")
    assert (lim["a"].low_v, lim["a"].high_v) == (-12.0, 12.0) and lim["in"].what == "supply rails"
    assert lim["out"].amplitude_v == 10.5 and lim["b"].amplitude_v == 10.0
    # A common-mode range beyond the rails (rail-to-rail inputs) is kept as the op-amp allows it.
    rr = node_limits(net, 2.5, shelf_amp(cm_neg_v=-0.1, cm_pos_v=-0.1, swing_neg_v=0.05, swing_pos_v=0.05))
    assert_allclose((rr["b"].low_v, rr["b"].high_v), (-2.6, 2.6), rtol=1e-12)


def test_finite_amp_changes_the_peaks_a_little_and_the_virtual_ground_moves():
    topo = get_topology("mfb")
    net = topo.netlist(topo.example)
    ideal = headroom(net, vin_v=1.0)
    slow = headroom(net, vin_v=1.0, amp=shelf_amp(gbw_hz=1e6))
    assert slow.node_peak_v["m"] > 0
    assert abs(slow.node_peak_v["out"] / ideal.node_peak_v["out"] - 1) < 0.05


def test_load_changes_no_node_voltage():
    # The op-amp models have no output resistance: the output is a voltage source, so a load from
    # the output to ground draws current but changes no node voltage (nodal equations unchanged).
    topo = get_topology("mfb")
    net = topo.netlist(topo.example)
    a = shelf_amp(gbw_hz=2e6, a0=2e4)
    free = headroom(net, vin_v=1.0, amp=a)
    loaded = headroom(net, vin_v=1.0, amp=a, rload_ohm=100.0)
    assert "RLOAD" not in loaded.node_peak_v
    for n, v in free.node_peak_v.items():
        assert_allclose(loaded.node_peak_v[n], v, rtol=1e-9)


@pytest.mark.parametrize("kw,field", [(dict(vin_v=0.0), "vin"), (dict(supply_v=-1.0), "supply"), (dict(rload_ohm=0.0), "rload")])
def test_bad_input(kw, field):
    topo = get_topology("mfb")
    with pytest.raises(InputError) as exc:
        headroom(topo.netlist(topo.example), **kw)
    assert exc.value.field == field


def test_json_is_plain():
    import json

    topo = get_topology("rlc-tank")
    obj = headroom(topo.netlist(topo.example), vin_v=0.5, supply_v=9.0, amp=shelf_amp()).to_json()
    text = json.dumps(obj, allow_nan=False)
    back = json.loads(text)
    assert back["limiting_node"] == "out" and back["amp"] == "test amp"
    assert set(back) >= {"node_peak_v", "limiting_node", "max_vin_v"}
