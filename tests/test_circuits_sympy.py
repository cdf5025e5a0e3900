"""The core's transfer functions against nodal equations written and solved here with sympy.

Source: sympy (a general-purpose computer-algebra library). Each circuit's node equations are
written below by hand from the circuit description (the README's "The circuits" table / the circuit modules'
docstrings), independently of ``bandsmith.solver.mna`` and the circuit netlists, solved symbolically for
Vout/Vin, turned into numpy functions with ``lambdify`` and compared with the core's response at
seeded random part values and frequencies, to 1e-9 relative.

Op-amp models written here: ideal (a nullor: V+ = V−, no input current) and single-pole
A(s) = A0/(1 + s·A0/(2π·GBW)) with Vout = A(s)·(V+ − V−) and no input current.
"""

from __future__ import annotations

import functools

import numpy as np
import pytest
import sympy as sp
from numpy.testing import assert_allclose

from bandsmith.analysis.analyzer import transfer_function
from bandsmith.circuits import get_topology
from bandsmith.solver.mna import IDEAL, OpAmpModel, build_system

RTOL = 1e-9
N_SAMPLES = 25  # random part sets per circuit and op-amp model
N_FREQ = 12  # random frequencies per part set

s = sp.Symbol("s")
A0, GBW = sp.symbols("A0 GBW", positive=True)
VIN = sp.Symbol("Vin")


def _opamp_gain(ideal: bool):
    """None for the ideal op-amp; else the single-pole A(s) = A0/(1 + s·A0/(2π·GBW))."""
    return None if ideal else A0 / (1 + s * A0 / (2 * sp.pi * GBW))


# ------------------------------------------------------------------ nodal equations, by hand


def tank_equations(ideal: bool):
    """Inverting amplifier, R1 from Vin to the inverting input n1, R2 ∥ (RL + sL) ∥ C from n1 to out.

    KCL at n1 (no current into the op-amp input):
        (Vin − V1)/R1 + (Vout − V1)·(1/R2 + s·C + 1/(RL + s·L)) = 0
    Op-amp, V+ = 0:  ideal V1 = 0;  finite Vout = A(s)·(0 − V1).
    """
    R1, R2, L, C, RL = sp.symbols("R1 R2 L C RL", positive=True)
    V1, Vo = sp.symbols("V1 Vo")
    yf = 1 / R2 + s * C + 1 / (RL + s * L)
    eqs = [sp.Eq((VIN - V1) / R1 + (Vo - V1) * yf, 0)]
    a = _opamp_gain(ideal)
    eqs.append(sp.Eq(V1, 0) if a is None else sp.Eq(Vo, a * (0 - V1)))
    return (R1, R2, L, C, RL), ("R1", "R2", "L", "C", "RL"), eqs, (V1, Vo), Vo


def mfb_equations(ideal: bool):
    """Multiple feedback: R1 Vin→a, R2 a→gnd, C1 a→m (inverting input), C2 a→out, R3 m→out.

    KCL at a:  (Vin − Va)/R1 − Va/R2 + (Vm − Va)·s·C1 + (Vout − Va)·s·C2 = 0
    KCL at m:  (Va − Vm)·s·C1 + (Vout − Vm)/R3 = 0
    Op-amp, V+ = 0:  ideal Vm = 0;  finite Vout = A(s)·(0 − Vm).
    """
    R1, R2, R3, C1, C2 = sp.symbols("R1 R2 R3 C1 C2", positive=True)
    Va, Vm, Vo = sp.symbols("Va Vm Vo")
    eqs = [
        sp.Eq((VIN - Va) / R1 - Va / R2 + (Vm - Va) * s * C1 + (Vo - Va) * s * C2, 0),
        sp.Eq((Va - Vm) * s * C1 + (Vo - Vm) / R3, 0),
    ]
    a = _opamp_gain(ideal)
    eqs.append(sp.Eq(Vm, 0) if a is None else sp.Eq(Vo, a * (0 - Vm)))
    return (R1, R2, R3, C1, C2), ("R1", "R2", "R3", "C1", "C2"), eqs, (Va, Vm, Vo), Vo


def sallen_key_equations(ideal: bool):
    """Sallen–Key: R1 Vin→a, C1 a→gnd, R2 a→out, C2 a→b (+ input), R3 b→gnd; RA m→gnd, RB out→m.

    KCL at a:  (Vin − Va)/R1 − Va·s·C1 + (Vout − Va)/R2 + (Vb − Va)·s·C2 = 0
    KCL at b:  (Va − Vb)·s·C2 − Vb/R3 = 0
    KCL at m:  −Vm/RA + (Vout − Vm)/RB = 0
    Op-amp:  ideal Vb = Vm;  finite Vout = A(s)·(Vb − Vm).
    """
    R1, R2, R3, C1, C2, RA, RB = sp.symbols("R1 R2 R3 C1 C2 RA RB", positive=True)
    Va, Vb, Vm, Vo = sp.symbols("Va Vb Vm Vo")
    eqs = [
        sp.Eq((VIN - Va) / R1 - Va * s * C1 + (Vo - Va) / R2 + (Vb - Va) * s * C2, 0),
        sp.Eq((Va - Vb) * s * C2 - Vb / R3, 0),
        sp.Eq(-Vm / RA + (Vo - Vm) / RB, 0),
    ]
    a = _opamp_gain(ideal)
    eqs.append(sp.Eq(Vb, Vm) if a is None else sp.Eq(Vo, a * (Vb - Vm)))
    return (R1, R2, R3, C1, C2, RA, RB), ("R1", "R2", "R3", "C1", "C2", "RA", "RB"), eqs, (Va, Vb, Vm, Vo), Vo


EQUATIONS = {"rlc-tank": tank_equations, "mfb": mfb_equations, "sallen-key": sallen_key_equations}


@functools.cache
def symbolic_transfer(topology_id: str, ideal: bool):
    """Vout/Vin solved by sympy and lambdified: ``f(s, *parts[, gbw, a0]) -> complex``."""
    syms, refs, eqs, unknowns, vo = EQUATIONS[topology_id](ideal)
    sol = sp.solve(eqs, unknowns, dict=True)
    assert len(sol) == 1, "the nodal equations have one solution"
    h = sp.simplify(sol[0][vo] / VIN)
    args = (s,) + syms + (() if ideal else (GBW, A0))
    return refs, h, sp.lambdify(args, h, modules="numpy")


# ------------------------------------------------------------------ random part values (seeded)

RANGES = {  # log-uniform ranges, SI units
    "R": (100.0, 1e6),
    "C": (100e-12, 1e-6),
    "L": (100e-6, 1.0),
}
KINDS = {
    "R1": "R", "R2": "R", "R3": "R", "RA": "R", "RB": "R", "RL": "R",
    "L": "L", "C": "C", "C1": "C", "C2": "C",
}


def _log_uniform(rng, lo, hi, size=None):
    return np.exp(rng.uniform(np.log(lo), np.log(hi), size))


def random_parts(rng, topology_id: str) -> dict[str, float]:
    refs = get_topology(topology_id).refs
    out = {r: float(_log_uniform(rng, *RANGES[KINDS[r]])) for r in refs}
    if topology_id == "rlc-tank":
        # winding resistance: zero in a quarter of the cases, else up to about the tank impedance
        z = np.sqrt(out["L"] / out["C"])
        out["RL"] = 0.0 if rng.uniform() < 0.25 else float(_log_uniform(rng, 1e-3 * z, z))
    return out


def natural_hz(topology_id: str, v: dict[str, float]) -> float:
    """A frequency scale for the sample (from the circuit's own formulas, for picking test points)."""
    topo = get_topology(topology_id)
    return topo.formulas(v).f0_hz


def random_freqs(rng, f_ref: float, n: int = N_FREQ) -> np.ndarray:
    """Frequencies log-uniform over two decades each side of ``f_ref``, plus ``f_ref`` itself."""
    return np.concatenate([[f_ref], f_ref * _log_uniform(rng, 1e-2, 1e2, n - 1)])


def _reference(topology_id, ideal, v, f, gbw=None, a0=None):
    refs, _, fn = symbolic_transfer(topology_id, ideal)
    sv = 2j * np.pi * f
    args = [v[r] for r in refs] + ([] if ideal else [gbw, a0])
    return np.asarray(fn(sv, *args), dtype=complex) * np.ones_like(sv)


CIRCUITS = ["rlc-tank", "mfb", "sallen-key"]


def _assert_both_solvers(nl, opamp, f, want, what: str) -> None:
    """The MNA solver's transfer and the rational transfer function both equal ``want`` at ``f``."""
    got_rational = transfer_function(nl, opamp).at_f(f)[0]
    got_mna = build_system(nl, opamp).transfer(2j * np.pi * f)[0]
    assert_allclose(got_mna, want, rtol=RTOL, err_msg=f"MnaSystem.transfer, {what}")
    assert_allclose(got_rational, want, rtol=RTOL, err_msg=f"Rational.at_f, {what}")


@pytest.mark.parametrize("topology_id", CIRCUITS)
def test_ideal_opamp_matches_sympy(topology_id):
    # sympy: nodal equations written above, solved symbolically; core must agree to 1e-9.
    rng = np.random.default_rng(20240611 + CIRCUITS.index(topology_id))
    topo = get_topology(topology_id)
    for _ in range(N_SAMPLES):
        v = random_parts(rng, topology_id)
        f = random_freqs(rng, natural_hz(topology_id, v))
        want = _reference(topology_id, True, v, f)
        _assert_both_solvers(topo.netlist(v), IDEAL, f, want, f"{v}")


@pytest.mark.parametrize("topology_id", CIRCUITS)
def test_single_pole_opamp_matches_sympy(topology_id):
    # sympy with A(s) = A0/(1 + s·A0/(2π·GBW)) written into the equations above.
    rng = np.random.default_rng(7_000 + CIRCUITS.index(topology_id))
    topo = get_topology(topology_id)
    for _ in range(N_SAMPLES):
        v = random_parts(rng, topology_id)
        f_ref = natural_hz(topology_id, v)
        # GBW from f0/10 to 1e4·f0 (slow to fast op-amps), A0 from 1e3 to 1e7
        gbw = float(f_ref * _log_uniform(rng, 0.1, 1e4))
        a0 = float(_log_uniform(rng, 1e3, 1e7))
        f = random_freqs(rng, f_ref)
        want = _reference(topology_id, False, v, f, gbw, a0)
        _assert_both_solvers(topo.netlist(v), OpAmpModel(gbw, a0), f, want, f"{v}, gbw {gbw}, a0 {a0}")


@pytest.mark.parametrize("topology_id", CIRCUITS)
def test_batched_overrides_match_sympy(topology_id):
    # sympy again, for the batch axis: many variants (±20 % around one design, as a Monte Carlo
    # would make) solved in one call, each against its own symbolic value.
    rng = np.random.default_rng(99 + CIRCUITS.index(topology_id))
    topo = get_topology(topology_id)
    base = topo.example
    n = 64
    over = {r: base[r] * rng.uniform(0.8, 1.2, n) for r in topo.refs if base.get(r, 0.0) > 0}
    gbw = float(natural_hz(topology_id, base)) * rng.uniform(50.0, 5e3, n)
    a0 = _log_uniform(rng, 1e4, 1e6, n)
    f = random_freqs(rng, natural_hz(topology_id, base))
    nl = topo.netlist(base)
    got_ideal = transfer_function(nl, overrides=over).at_f(f)
    got_finite = transfer_function(nl, overrides=over, gbw_hz=gbw, a0=a0).at_f(f)
    for i in range(n):
        v = {r: (over[r][i] if r in over else base.get(r, 0.0)) for r in topo.refs}
        assert_allclose(got_ideal[i], _reference(topology_id, True, v, f), rtol=RTOL)
        assert_allclose(got_finite[i], _reference(topology_id, False, v, f, gbw[i], a0[i]), rtol=RTOL)


def test_symbolic_tank_is_the_parallel_resonance_biquad():
    # derived: with RL = 0 the sympy solution reduces to H = −(s/(R1·C))/(s² + s/(R2·C) + 1/(LC))
    # (the parallel-resonance biquad of any circuit-theory text) — checks the hand-written equations too.
    _, h, _ = symbolic_transfer("rlc-tank", True)
    R1, R2, L, C, RL = sp.symbols("R1 R2 L C RL", positive=True)
    biquad = -(s / (R1 * C)) / (s**2 + s / (R2 * C) + 1 / (L * C))
    assert sp.simplify(h.subs(RL, 0) - biquad) == 0


def test_symbolic_mfb_and_sallen_key_are_the_reference_biquads():
    # derived: the closed forms of test_circuits_reference.py (MFB: Franco, Design with Operational
    # Amplifiers, 3rd ed., ch. 3; Sallen–Key variant A) follow from the hand-written nodal equations.
    _, h, _ = symbolic_transfer("mfb", True)
    R1, R2, R3, C1, C2 = sp.symbols("R1 R2 R3 C1 C2", positive=True)
    mfb = -(s / (R1 * C2)) / (s**2 + s * (C1 + C2) / (R3 * C1 * C2) + (1 / R1 + 1 / R2) / (R3 * C1 * C2))
    assert sp.simplify(h - mfb) == 0
    _, h, _ = symbolic_transfer("sallen-key", True)
    R1, R2, R3, C1, C2, RA, RB = sp.symbols("R1 R2 R3 C1 C2 RA RB", positive=True)
    K = 1 + RB / RA
    sk = (K * s / (R1 * C1)) / (
        s**2 + s * (1 / (R1 * C1) + (1 - K) / (R2 * C1) + 1 / (R3 * C1) + 1 / (R3 * C2))
        + (R1 + R2) / (R1 * R2 * R3 * C1 * C2)
    )
    assert sp.simplify(h - sk) == 0
