"""Single-supply biasing: DC node voltages, coupling corners, the reference, the swing and the response.

Every check is against something written here independently of the package: a nodal DC solve done
with sympy from Kirchhoff's current law and Ohm's law, the RC corner 1/(2πRC) (Sedra & Smith,
*Microelectronic Circuits*, single-time-constant networks; from memory), and the textbook transfer function of the
inverting tank circuit evaluated with scipy.signal.freqs.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import sympy as sp
from scipy import signal

from bandsmith import api
from bandsmith.app.cli import main as cli_main
from bandsmith.board.bias import BiasSettings, bias_circuit
from bandsmith.board.dc import dc_operating_point, floating_nodes
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import neighbours
from bandsmith.solver.netlist import Element, Netlist

# our own scenario: a 2 kHz tone pick-off on a 9 V battery rail
MFB = {"R1": 10e3, "R2": 866.0, "R3": 82e3, "C1": 10e-9, "C2": 10e-9}
TANK = {"R1": 3.3e3, "R2": 6.8e3, "L": 10e-3, "C": 22e-9}


def test_dc_nodes_of_the_mfb_match_a_sympy_nodal_solve():
    vs, r, ib = 9.0, 100e3, 50e-9  # supply, each divider resistor, bias current into each pin
    b = api.bias("mfb", MFB, supply_v=vs, divider_ohm=r, bias_current_a=ib)
    ref, a, m, out, vin = sp.symbols("ref a m out vin")
    R1, R2, R3 = (sp.nsimplify(MFB[k]) for k in ("R1", "R2", "R3"))
    Vs, Rt, Ib = sp.nsimplify(vs), sp.nsimplify(r), sp.Rational(5, 10**8)
    eqs = [
        (Vs - ref) / Rt - ref / Rt + (a - ref) / R2 - Ib,  # KCL at the reference (+ input draws Ib)
        (a - vin) / R1,                                    # the input node behind the coupling capacitor
        (vin - a) / R1 + (ref - a) / R2,                   # node a (C1, C2 open)
        (out - m) / R3 - Ib,                               # the inverting input: R3 feeds its bias current
        m - ref,                                           # ideal op-amp: inputs at the same voltage
    ]
    sol = sp.solve(eqs, [ref, a, m, out, vin], dict=True)[0]
    got = b.node_dc_v
    for name, sym in (("ref", ref), ("a", a), ("m", m), ("out", out), ("in", vin)):
        assert got[name] == pytest.approx(float(sol[sym]), abs=1e-9), name
    assert got["out"] == pytest.approx(float(sol[ref]) + 50e-9 * 82e3)  # Ohm's law on R3
    assert got["src"] == 0.0 and got["load"] == pytest.approx(0.0, abs=1e-12)
    assert b.reference_v == pytest.approx(float(sol[ref]))


@pytest.mark.parametrize("circuit", ["mfb", "sallen-key", "rlc-tank", "dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_every_circuit_sits_at_mid_supply_with_ideal_op_amps(circuit):
    # with no bias current the only DC source is the divider: every circuit node at Vs/2 (KCL: no current flows)
    from bandsmith.circuits import get_topology

    b = api.bias(circuit, dict(get_topology(circuit).example), supply_v=12)
    for node, v in b.node_dc_v.items():
        if node not in ("src", "load", "0", "vs"):
            assert v == pytest.approx(6.0, abs=1e-9), node
    assert b.reference_impedance_ohm == pytest.approx(50e3)  # 100k ∥ 100k


def test_coupling_corners_are_rc_corners_a_decade_below_the_band():
    b = api.bias("rlc-tank", TANK, supply_v=5, rload_ohm=22e3)
    f_low = float(b.figures_split.f_low_hz)
    cin, cout = b.coupling
    # R1 into the inverting input's virtual ground: the input capacitor works into R1 exactly
    assert cin.resistance_ohm == pytest.approx(TANK["R1"], rel=1e-9)
    assert cin.corner_hz == pytest.approx(1 / (2 * math.pi * TANK["R1"] * cin.capacitance_f))
    assert cout.corner_hz == pytest.approx(1 / (2 * math.pi * 22e3 * cout.capacitance_f))
    for c, r in ((cin, TANK["R1"]), (cout, 22e3)):
        assert c.corner_hz <= f_low / 10
        smaller = neighbours(c.capacitance_f * 0.999, "E12")[0]  # the E12 step below would not do
        assert 1 / (2 * math.pi * r * smaller) > f_low / 10


def test_response_with_the_bias_network_is_the_textbook_tank_times_two_rc_high_passes():
    b = api.bias("rlc-tank", TANK, supply_v=5, reference="buffered")
    cin, cout = (c.capacitance_f for c in b.coupling)
    r1, r2, l, c = TANK["R1"], TANK["R2"], TANK["L"], TANK["C"]
    # H = −Zf·s·Cin/(1 + s·R1·Cin) · s·Cout·RL/(1 + s·Cout·RL), Zf = R2 ∥ sL ∥ 1/(sC) = s·L·R2/(s²·R2·L·C + s·L + R2)
    num = np.polymul([-r2 * l * cin, 0.0, 0.0], [cout * 10e3, 0.0])
    den = np.polymul(np.polymul([r2 * l * c, l, r2], [r1 * cin, 1.0]), [cout * 10e3, 1.0])
    f = np.geomspace(50, 200e3, 400)
    _, h = signal.freqs(num, den, worN=2 * np.pi * f)
    np.testing.assert_allclose(b.response(f), h, rtol=1e-7)


def test_divider_reference_impedance_bypass_and_start_up():
    b = api.bias("mfb", MFB, supply_v=9, divider_ohm=47e3)
    r_th = 47e3 / 2
    assert b.reference_impedance_ohm == pytest.approx(r_th)
    assert b.bypass_corner_hz == pytest.approx(1 / (2 * math.pi * r_th * b.bypass_f))
    # first-order charge: within 0.1 % after τ·ln(1000)
    assert b.settle_s == pytest.approx(r_th * b.bypass_f * math.log(1000))
    w0 = 2 * math.pi * float(b.figures_split.f0_hz)
    assert b.reference_impedance_f0_ohm == pytest.approx(abs(1 / (1 / r_th + 1j * w0 * b.bypass_f)))
    # the bypass keeps the reference under 1 % of R2 (866 Ω) at the band's lower edge
    wl = 2 * math.pi * float(b.figures_split.f_low_hz)
    assert abs(1 / (1 / r_th + 1j * wl * b.bypass_f)) < 0.01 * 866


def test_swing_margin_against_the_rails_by_hand():
    vin = 0.3
    b = api.bias("rlc-tank", TANK, supply_v=5, reference="buffered", vin_v=vin, headroom_v=0.1)
    # the tank's peak gain is R2/R1 at f0 (the coupling corners a decade away take a few 0.1 %)
    peak = TANK["R2"] / TANK["R1"] * vin
    assert b.out_peak_v == pytest.approx(peak, rel=5e-3)
    assert b.swing_margin_v == pytest.approx(2.5 - 0.1 - b.out_peak_v, rel=1e-9)
    clipped = api.bias("rlc-tank", TANK, supply_v=5, reference="buffered", vin_v=2.0)
    assert clipped.swing_margin_v < 0 and any("clips" in n for n in clipped.notes)


def test_a_node_reached_only_through_a_capacitor_gets_a_bias_resistor():
    # the MFB followed by an AC-coupled unity follower: the follower's + input floats at DC
    mfb = api.candidate_of("mfb", MFB).netlist
    stage = tuple(
        Element(e.ref, e.kind, tuple("o1" if n == "out" else n for n in e.nodes), e.value) for e in mfb.elements
    ) + (Element("C9", "C", ("o1", "p"), 1e-6), Element("U2", "opamp", ("p", "out", "out")))
    net = Netlist(stage)
    assert floating_nodes(net.elements, ("0", "in")) == ("p",)
    with pytest.raises(InputError):
        dc_operating_point(net.elements, {"0": 0.0, "in": 0.0})
    b = bias_circuit(net, BiasSettings(supply_v=9))
    (rb,) = b.bias_resistors
    assert rb.nodes == ("p", "ref")
    assert 1 / (2 * math.pi * rb.value * 1e-6) <= float(b.figures_split.f_low_hz) / 10
    assert any("no DC path" in n for n in b.notes)
    assert b.node_dc_v["p"] == pytest.approx(4.5) and b.node_dc_v["out"] == pytest.approx(4.5)


def test_command_prints_the_contract_keys(capsys):
    code = cli_main(["bias", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", "--supply", "9", "--json"])
    out = json.loads(capsys.readouterr().out)
    assert code == 0
    for key in ("node_dc_v", "reference_v", "reference_impedance_ohm", "coupling", "swing_margin_v", "response"):
        assert key in out
    assert out["node_dc_v"]["out"] == pytest.approx(4.5)
    assert {c["where"] for c in out["coupling"]} == {"input", "output"}


@pytest.mark.parametrize("args, field", [
    (["--supply", "0"], "supply"), (["--supply", "9", "--reference", "zener"], None),
    (["--supply", "9", "--corner-ratio", "3"], "corner-ratio"), (["--supply", "9", "--headroom", "5"], "headroom"),
])
def test_bad_options_exit_2_naming_the_field(args, field, capsys):
    try:
        code = cli_main(["bias", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", *args])
    except SystemExit as stop:  # argparse's own refusal
        code = stop.code
    err = capsys.readouterr().err
    assert code == 2 and len(err.strip().splitlines()) == 1
    if field:
        assert field in err
