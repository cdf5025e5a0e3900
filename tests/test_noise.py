"""Output noise (bandsmith.analysis.noise) against Johnson–Nyquist, a closed form, sympy nodal analysis and scipy quad."""

import math

import numpy as np
import pytest
import scipy.constants
import scipy.integrate
import sympy as sp
from numpy.testing import assert_allclose

from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.solver.mna import IDEAL, OpAmpModel
from bandsmith.analysis.noise import (
    BOLTZMANN_J_PER_K,
    NoiseSettings,
    johnson_density,
    noise_sources,
    noise_transfers,
    output_noise,
)

NOISELESS = NoiseSettings(en_v_per_rthz=0.0, in_a_per_rthz=0.0)


def netlist(topology_id, **changes):
    topo = get_topology(topology_id)
    values = dict(topo.example)
    values.update(changes)
    return topo.netlist(values), values


def test_boltzmann_constant_is_the_exact_si_value():
    # SI Brochure, 9th ed. (2019): k = 1.380649e-23 J/K exactly.
    assert BOLTZMANN_J_PER_K == scipy.constants.k
    assert_allclose(BOLTZMANN_J_PER_K, 1.380649e-23, rtol=0)


@pytest.mark.parametrize(
    "r_ohm, t_k, want_nv",
    [(1e3, 300.0, 4.0704), (1e3, 290.0, 4.0019), (10e3, 300.0, 12.872)],
)
def test_johnson_nyquist_density(r_ohm, t_k, want_nv):
    # √(4kTR) (J. B. Johnson; H. Nyquist, Phys. Rev. 32, 1928) with the exact SI k; the values are
    # derived (√(4kTR) evaluated with k = scipy.constants.k), given to 5 significant figures.
    assert_allclose(johnson_density(r_ohm, t_k) * 1e9, want_nv, rtol=5e-5)


def test_tank_noiseless_opamp_density_at_f0():
    # Derived: at f0 the tank's L and C cancel, so the feedback impedance is R2 and the gain −R2/R1.
    # R1's thermal voltage √(4kT·R1) reaches the output times R2/R1: power 4kT·R1·(R2/R1)²;
    # R2's thermal current √(4kT/R2) flows through the feedback impedance R2: power 4kT·R2.
    # Sum: 4kT·R2²/R1 + 4kT·R2 = 4kT·R2·(1 + R2/R1). An ideal, noiseless op-amp adds nothing.
    nl, v = netlist("rlc-tank")
    t = 300.0
    r = output_noise(nl, NOISELESS)
    k = scipy.constants.k
    assert_allclose(r.total_at_f0_v_rthz, math.sqrt(4 * k * t * v["R2"] * (1 + v["R2"] / v["R1"])), rtol=1e-9)
    assert_allclose(r.at_f0_v_rthz["R2"], math.sqrt(4 * k * t * v["R2"]), rtol=1e-9)
    assert r.at_f0_v_rthz["en"] == 0 and r.integrated_v_rms["in-"] == 0


# -- sympy nodal analysis ------------------------------------------------------------------------

s_ = sp.symbols("s")


def _solve_mfb(v, f_hz, a_s):
    """Transfer from each noise source to the output of the MFB band-pass, from our own equations.

    Nodes: a (R1 to the grounded input, R2 to ground, C1 to m, C2 to out), m (the inverting input,
    R3 to out). KCL as "current leaving through the parts = current injected": a resistor's noise
    current is injected at its non-grounded, non-output node (a current into the op-amp's output
    is absorbed by its voltage source); in− is injected at m; in+ at the grounded + input does
    nothing; en sits in series with the + input, so V+ = en. Op-amp: V_out = A·(V+ − V−), or
    V+ = V− when ideal.
    """
    va, vm, vo, ja, jm, en = sp.symbols("va vm vo ja jm en")
    s = s_
    r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    eqs = [
        sp.Eq(va / r1 + va / r2 + (va - vm) * s * c1 + (va - vo) * s * c2, ja),
        sp.Eq((vm - va) * s * c1 + (vm - vo) / r3, jm),
        sp.Eq(vm, en) if a_s is None else sp.Eq(vo, a_s * (en - vm)),
    ]
    sol = sp.solve(eqs, [va, vm, vo], dict=True)[0][vo]
    unit = {"R1": ja, "R2": ja, "R3": jm, "in-": jm, "en": en}
    out = {}
    for name, x in unit.items():
        expr = sol.subs({y: (1 if y == x else 0) for y in (ja, jm, en)})
        out[name] = np.asarray(sp.lambdify(s, expr, "numpy")(2j * np.pi * f_hz), dtype=complex)
    out["in+"] = np.zeros_like(f_hz, dtype=complex)
    return out


def _solve_sallen_key(v, f_hz, a_s):
    """The same for the Sallen–Key band-pass (variant with C1 from a to ground).

    Nodes: a (R1 to the grounded input, C1 to ground, R2 to out, C2 to b), b (the + input, R3 to
    ground), m (the − input, RA to ground, RB to out). V+ = V_b + en.
    """
    va, vb, vm, vo, ja, jb, jm, en = sp.symbols("va vb vm vo ja jb jm en")
    s = s_
    r1, r2, r3, c1, c2, ra, rb = (v[k] for k in ("R1", "R2", "R3", "C1", "C2", "RA", "RB"))
    eqs = [
        sp.Eq(va / r1 + va * s * c1 + (va - vo) / r2 + (va - vb) * s * c2, ja),
        sp.Eq((vb - va) * s * c2 + vb / r3, jb),
        sp.Eq(vm / ra + (vm - vo) / rb, jm),
        sp.Eq(vb + en, vm) if a_s is None else sp.Eq(vo, a_s * (vb + en - vm)),
    ]
    sol = sp.solve(eqs, [va, vb, vm, vo], dict=True)[0][vo]
    unit = {"R1": ja, "R2": ja, "R3": jb, "RA": jm, "RB": jm, "in+": jb, "in-": jm, "en": en}
    out = {}
    for name, x in unit.items():
        expr = sol.subs({y: (1 if y == x else 0) for y in (ja, jb, jm, en)})
        out[name] = np.asarray(sp.lambdify(s, expr, "numpy")(2j * np.pi * f_hz), dtype=complex)
    return out


@pytest.mark.parametrize("topology_id, solver", [("mfb", _solve_mfb), ("sallen-key", _solve_sallen_key)])
@pytest.mark.parametrize("gbw", [None, 1e6])
def test_noise_transfers_match_sympy_nodal_analysis(topology_id, solver, gbw):
    # The reference writes its own nodal equations (docstrings above) and solves them with sympy;
    # the single-pole op-amp is A(s) = A0/(1 + s·A0/(2π·GBW)) (the README's op-amp model, "Definitions"). Signs differ
    # by convention only, so magnitudes are compared.
    nl, v = netlist(topology_id)
    f = np.geomspace(50.0, 50e3, 13)
    a0 = 1e5
    a_s = None if gbw is None else a0 / (1 + s_ * a0 / (2 * sp.pi * gbw))
    want = solver(v, f, a_s)
    got = noise_transfers(nl, f, opamp=IDEAL if gbw is None else OpAmpModel(gbw, a0))
    assert set(got) == set(want)
    for name in want:
        scale = max(np.max(np.abs(want[name])), 1e-300)
        assert_allclose(np.abs(got[name]), np.abs(want[name]), rtol=1e-9, atol=1e-12 * scale, err_msg=name)


def test_winding_resistance_noise_transfer():
    # Derived: with an ideal op-amp the inverting input n1 is a virtual ground (0 V) and R1, with
    # both ends at 0 V, carries nothing. The tank's three branches run from n1 to the output; the
    # inductor branch holds the noise voltage e in series with RL + sL. KCL at n1:
    #   (0 − V_out)/R2 + (0 − V_out)·sC + (0 − V_out − e)/(RL + sL) = 0
    # so |V_out/e| = |1/Z_L| / |1/R2 + sC + 1/Z_L| with Z_L = RL + sL.
    nl, v = netlist("rlc-tank", RL=40.0)
    f = np.geomspace(1e3, 1e5, 9)
    s = 2j * np.pi * f
    zl = v["RL"] + s * v["L"]
    want = (1 / zl) / (1 / v["R2"] + s * v["C"] + 1 / zl)
    got = noise_transfers(nl, f)["RL"]
    assert_allclose(np.abs(got), np.abs(want), rtol=1e-10)
    r = output_noise(nl, NOISELESS)
    assert "RL" in r.integrated_v_rms and r.integrated_v_rms["RL"] > 0


# -- integration, SNR, bookkeeping ------------------------------------------------------------------


@pytest.mark.parametrize("q", [0.5, 10.0, 100.0])
def test_integrated_noise_matches_quad(q):
    # Reference: scipy.integrate.quad of the closed-form output density of the tank with an ideal
    # noiseless op-amp, S(f) = 4kT·R1·|H|² + (4kT/R2)·|Z_f|², Z_f = 1/(1/R2 + sC + 1/(sL)),
    # H = −Z_f/R1 (parallel tank, derived by nodal analysis); epsabs=0 because the integrand is of order
    # 1e-16 V²/Hz. The trapezoid on the module's log grid (at least 100·Q points per decade) is
    # good to about 5e-7 here; 1e-5 allowed.
    # Parts from the parallel-resonance relations: f0 = 1/(2π√(LC)) = 5 kHz, Q = R2·√(C/L), gain 2.
    l_h = 2e-3
    c = 1 / ((2 * math.pi * 5e3) ** 2 * l_h)
    v = {"L": l_h, "C": c, "R2": q * math.sqrt(l_h / c)}
    v["R1"] = v["R2"] / 2
    nl = get_topology("rlc-tank").netlist(v)
    k, t = scipy.constants.k, 300.0
    r = output_noise(nl, NOISELESS)

    def density(f):
        s = 2j * math.pi * f
        zf = 1 / (1 / v["R2"] + s * v["C"] + 1 / (s * v["L"]))
        return 4 * k * t * v["R1"] * abs(zf / v["R1"]) ** 2 + 4 * k * t / v["R2"] * abs(zf) ** 2

    f1, f2 = r.band_hz
    f0 = 1 / (2 * math.pi * math.sqrt(v["L"] * v["C"]))
    assert_allclose([f1, f2], [f0 / 10, f0 * 10], rtol=1e-9)
    want, _ = scipy.integrate.quad(density, f1, f2, points=[f0], limit=400, epsabs=0.0, epsrel=1e-10)
    assert_allclose(r.total_v_rms, math.sqrt(want), rtol=1e-5)
    # With a band of the user's the integral follows it.
    r2 = output_noise(nl, NoiseSettings(en_v_per_rthz=0.0, in_a_per_rthz=0.0, band_hz=(f0 / 2, f0 * 2)))
    want2, _ = scipy.integrate.quad(density, f0 / 2, f0 * 2, points=[f0], limit=400, epsabs=0.0, epsrel=1e-10)
    assert_allclose(r2.total_v_rms, math.sqrt(want2), rtol=1e-5)


@pytest.mark.parametrize("topology_id", ["rlc-tank", "mfb", "sallen-key"])
def test_powers_add_and_snr(topology_id):
    nl, _ = netlist(topology_id)
    r = output_noise(nl, NoiseSettings(en_v_per_rthz=8e-9, in_a_per_rthz=2e-12), opamp=OpAmpModel(5e6), vin_v=0.2)
    assert_allclose(r.total_at_f0_v_rthz**2, sum(x**2 for x in r.at_f0_v_rthz.values()), rtol=1e-12)
    assert_allclose(r.total_v_rms**2, sum(x**2 for x in r.integrated_v_rms.values()), rtol=1e-12)
    # A sine of peak vin at f0 has rms |gain|·vin/√2.
    assert_allclose(r.signal_v_rms, abs(r.gain_center) * 0.2 / math.sqrt(2), rtol=1e-12)
    assert_allclose(r.snr_db, 20 * math.log10(r.signal_v_rms / r.total_v_rms), rtol=1e-12)
    obj = r.to_json()
    for key in ("temperature_k", "band_hz", "density_at_f0_nv_rthz", "integrated_uv_rms", "snr_db", "contributions"):
        assert key in obj
    names = [e.ref for e in nl.passives if e.kind == "R"] + ["en", "in+", "in-"]
    assert list(obj["contributions"]) == names
    for c in obj["contributions"].values():
        assert set(c) == {"density_at_f0_nv_rthz", "integrated_uv_rms"}
    assert_allclose(obj["integrated_uv_rms"], r.total_v_rms * 1e6, rtol=1e-15)


def test_resistor_noise_scales_with_root_temperature():
    nl, _ = netlist("mfb")
    cold = output_noise(nl, NoiseSettings(en_v_per_rthz=0.0, in_a_per_rthz=0.0, temperature_k=250.0))
    hot = output_noise(nl, NoiseSettings(en_v_per_rthz=0.0, in_a_per_rthz=0.0, temperature_k=400.0))
    assert_allclose(hot.total_v_rms / cold.total_v_rms, math.sqrt(400 / 250), rtol=1e-12)


def test_opamp_sources_scale_with_their_density():
    nl, _ = netlist("sallen-key")
    a = output_noise(nl, NoiseSettings(en_v_per_rthz=1e-9, in_a_per_rthz=1e-12))
    b = output_noise(nl, NoiseSettings(en_v_per_rthz=3e-9, in_a_per_rthz=5e-12))
    assert_allclose(b.integrated_v_rms["en"], 3 * a.integrated_v_rms["en"], rtol=1e-12)
    assert_allclose(b.integrated_v_rms["in+"], 5 * a.integrated_v_rms["in+"], rtol=1e-12)
    assert_allclose(b.integrated_v_rms["R1"], a.integrated_v_rms["R1"], rtol=1e-12)


def test_sources_listed():
    nl, v = netlist("rlc-tank", RL=10.0)
    src = {s.name: s for s in noise_sources(nl, NoiseSettings(temperature_k=300.0))}
    assert list(src) == ["R1", "R2", "RL", "en", "in+", "in-"]
    assert src["R1"].unit == "A" and src["RL"].unit == "V" and src["en"].unit == "V"
    assert_allclose(src["R1"].density, math.sqrt(4 * scipy.constants.k * 300 / v["R1"]), rtol=1e-15)
    assert_allclose(src["RL"].density, math.sqrt(4 * scipy.constants.k * 300 * 10.0), rtol=1e-15)


# -- settings -----------------------------------------------------------------------------------


def test_noise_settings_round_trip():
    s = NoiseSettings(en_v_per_rthz=4e-9, in_a_per_rthz=0.0, temperature_k=320.0, band_hz=(100.0, 1e4))
    assert NoiseSettings.from_json(s.to_json()) == s
    assert NoiseSettings.from_json({}) == NoiseSettings()
    assert NoiseSettings.from_json(NoiseSettings().to_json()).band_hz is None


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"en_v_per_rthz": -1e-9}, "en"),
        ({"in_a_per_rthz": math.nan}, "in"),
        ({"temperature_k": 0.0}, "temp"),
        ({"band_hz": (1e4, 1e3)}, "band"),
        ({"band_hz": (0.0, 1e3)}, "band"),
        ({"band_hz": (1.0,)}, "band"),
    ],
)
def test_noise_settings_reject_bad_values(kwargs, field):
    with pytest.raises(InputError) as err:
        NoiseSettings(**kwargs)
    assert err.value.field == field


@pytest.mark.parametrize("obj", [[], {"en": 1e-9}, {"band_hz": "1k-2k"}, {"temperature_k": "300"}])
def test_noise_settings_from_bad_json(obj):
    with pytest.raises(InputError):
        NoiseSettings.from_json(obj)


def test_bad_vin():
    nl, _ = netlist("mfb")
    with pytest.raises(InputError) as err:
        output_noise(nl, vin_v=0.0)
    assert err.value.field == "vin"
