"""The op-amp model with an optional second pole, against nodal equations written in the test."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from bandsmith.solver.ampmodel import amp_system, amp_transfer_function, open_loop_gain
from bandsmith.analysis.analyzer import transfer_function
from bandsmith.circuits import get_topology
from bandsmith.solver.mna import OpAmpModel, build_system


def two_pole_gain(f, gbw, a0, fp2):
    """A(s) = A0 / ((1 + s·A0/ωt)·(1 + s/ωp2)), the textbook two-pole open-loop model."""
    s = 2j * np.pi * f
    return a0 / ((1 + s * a0 / (2 * np.pi * gbw)) * (1 + s / (2 * np.pi * fp2)))


def mfb_finite(v, f, a):
    """MFB with a finite op-amp A (non-inverting input grounded): unknowns Va, Vm, Vout.
    KCL a: (Va−1)/R1 + Va/R2 + sC1(Va−Vm) + sC2(Va−Vout) = 0
    KCL m: sC1(Vm−Va) + (Vm−Vout)/R3 = 0
    amp:   Vout = A·(0 − Vm)"""
    s = 2j * np.pi * f
    m = np.zeros(f.shape + (3, 3), complex)
    m[..., 0, :] = np.stack([1 / v["R1"] + 1 / v["R2"] + s * v["C1"] + s * v["C2"], -s * v["C1"], -s * v["C2"]], -1)
    m[..., 1, :] = np.stack([-s * v["C1"], s * v["C1"] + 1 / v["R3"] + 0 * s, -1 / v["R3"] + 0 * s], -1)
    m[..., 2, :] = np.stack([0 * s, a, np.ones_like(s)], -1)
    rhs = np.zeros(f.shape + (3, 1), complex)
    rhs[..., 0, 0] = 1 / v["R1"]
    return np.linalg.solve(m, rhs)[..., 2, 0]


def sk_finite(v, f, a):
    """Sallen–Key with a finite op-amp A: unknowns Va, Vb, Vm, Vout.
    KCL a: (Va−1)/R1 + sC1·Va + (Va−Vout)/R2 + sC2(Va−Vb) = 0
    KCL b: sC2(Vb−Va) + Vb/R3 = 0
    KCL m: Vm/RA + (Vm−Vout)/RB = 0
    amp:   Vout = A·(Vb − Vm)"""
    s = 2j * np.pi * f
    z = 0 * s
    m = np.zeros(f.shape + (4, 4), complex)
    m[..., 0, :] = np.stack([1 / v["R1"] + s * v["C1"] + 1 / v["R2"] + s * v["C2"], -s * v["C2"], z, -1 / v["R2"] + z], -1)
    m[..., 1, :] = np.stack([-s * v["C2"], s * v["C2"] + 1 / v["R3"], z, z], -1)
    m[..., 2, :] = np.stack([z, z, 1 / v["RA"] + 1 / v["RB"] + z, -1 / v["RB"] + z], -1)
    m[..., 3, :] = np.stack([z, -a, a, np.ones_like(s)], -1)
    rhs = np.zeros(f.shape + (4, 1), complex)
    rhs[..., 0, 0] = 1 / v["R1"]
    return np.linalg.solve(m, rhs)[..., 3, 0]


@pytest.mark.parametrize("tid,fn", [("mfb", mfb_finite), ("sallen-key", sk_finite)])
@pytest.mark.parametrize("gbw,a0,fp2", [(1e6, 2e5, 3e6), (5e6, 3e4, 8e6), (100e6, 3e4, 200e6)])
def test_two_pole_matches_nodal_equations(tid, fn, gbw, a0, fp2):
    topo = get_topology(tid)
    v = topo.example
    net = topo.netlist(v)
    f = np.geomspace(10.0, 1e7, 400)
    want = fn(v, f, two_pole_gain(f, gbw, a0, fp2))
    got_sys = amp_system(net, gbw_hz=gbw, a0=a0, f_p2_hz=fp2).transfer(2j * np.pi * f)[0]
    assert_allclose(got_sys, want, rtol=1e-9)
    got = amp_transfer_function(net, gbw_hz=gbw, a0=a0, f_p2_hz=fp2).at_f(f)[0]
    assert_allclose(got, want, rtol=1e-7)  # the rational form's coefficients carry ~1e-9 rounding


@pytest.mark.parametrize("tid", ["mfb", "sallen-key", "rlc-tank"])
def test_without_second_pole_it_is_the_core_model(tid):
    topo = get_topology(tid)
    net = topo.netlist(topo.example)
    ref = build_system(net, OpAmpModel(2e6, 1e5))
    mine = amp_system(net, gbw_hz=2e6, a0=1e5)
    assert_allclose(mine.G, ref.G) and assert_allclose(mine.C, ref.C)
    f = np.geomspace(10.0, 1e6, 50)
    assert_allclose(amp_transfer_function(net, gbw_hz=2e6, a0=1e5).at_f(f), transfer_function(net, OpAmpModel(2e6, 1e5)).at_f(f), rtol=1e-10)
    assert_allclose(amp_system(net, gbw_hz=None).G, build_system(net).G)


def test_far_second_pole_tends_to_single_pole():
    topo = get_topology("mfb")
    net = topo.netlist(topo.example)
    f = np.geomspace(100.0, 1e5, 50)
    one = amp_transfer_function(net, gbw_hz=1e6, a0=1e5).at_f(f)
    far = amp_transfer_function(net, gbw_hz=1e6, a0=1e5, f_p2_hz=1e12).at_f(f)
    assert_allclose(far, one, rtol=1e-5)


def test_open_loop_gain():
    f = np.array([0.0, 1e3, 1e6])
    assert_allclose(open_loop_gain(f, gbw_hz=1e6, a0=1e5), 1e5 / (1 + 2j * np.pi * f * 1e5 / (2 * np.pi * 1e6)))
    assert_allclose(open_loop_gain(f, gbw_hz=1e6, a0=1e5, f_p2_hz=2e6), two_pole_gain(f, 1e6, 1e5, 2e6))


def test_second_pole_needs_gbw():
    topo = get_topology("mfb")
    with pytest.raises(ValueError):
        amp_system(topo.netlist(topo.example), gbw_hz=None, f_p2_hz=1e6)
