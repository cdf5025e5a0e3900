"""Exports of a whole chain: the SPICE netlist (stages in series, unique references, one op-amp
macro-model instance per stage) and the parts list (CSV), from the core and from the command line.

The netlist is read back by the small SPICE reader of ``spice_helpers.py`` (SPICE3 syntax: ``*``
comments, a title line, R/L/C/V/G/E/X elements, ``.subckt``/``.ends``, ``.ac``, ``.end``) and solved
by its nodal analysis, subcircuits flattened. Its response is checked against scipy.signal's
analog band-pass (iirfilter, analog=True, btype='bandpass') with exact parts and ideal op-amps, and
against the core's product of the stages with the single-pole op-amp.
"""

from __future__ import annotations

import csv
import io
import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from bandsmith.app.cli import main as cli_main
from bandsmith.design.candidate import Candidate, Conditions
from bandsmith.chain.cascade import Chain, ChainSettings, ChainStage, cascade_session, chain_cascade, design_cascade
from bandsmith.chain.chain_exports import CHAIN_PARTS_HEADER, chain_parts_csv, chain_spice_netlist
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.files.exports import OPAMP_SUBCKT
from bandsmith.files.session import save_session
from bandpass_reference import reference_db
from spice_helpers import parse_spice, solve_spice


# --------------------------------------------------------------------------- chains to export


@pytest.fixture(scope="module")
def built():
    """An order-4 Butterworth chain with E24 parts (auto circuits) and a 2 MHz op-amp."""
    s = ChainSettings.from_request("butterworth", 4, f0_hz=10e3, bw_hz=3e3, gain=2.0, series="E24")
    r = design_cascade(s, conditions=Conditions(gbw_hz=2e6))
    assert r.feasible
    return r


def tank_chain(rl_ohm: float) -> Chain:
    """A one-stage chain on the RLC tank with a winding resistance (a part only it has)."""
    s = ChainSettings.from_request("butterworth", 1, f0_hz=10e3, bw_hz=1e3, circuit="rlc-tank", series="exact")
    values = dict(get_topology("rlc-tank").example, RL=rl_ohm)
    return Chain("tank", s, (ChainStage(1, 10e3, 10.0, 1.0, "rlc-tank", values),))


def stage_parts(parsed: dict, index: int) -> dict[str, tuple[str, float]]:
    """Stage ``index``'s passives read back: element name without suffix → (kind, value)."""
    sfx = f"_S{index}"
    return {name[: -len(sfx)]: (name[0].upper(), float(rest[2])) for name, rest in parsed["elements"].items() if name.endswith(sfx) and name[0].upper() in "RLC"}


# --------------------------------------------------------------------------- netlist



def _amps(stage):
    """The op-amp references of a chain stage's circuit."""
    topo = get_topology(stage.topology_id)
    return [e.ref for e in topo.build(topo.values_from(stage.values)).opamps]

def test_the_netlist_parses_back_into_every_stage_s_parts(built):
    chain = built.chain("chain-1")
    p = parse_spice(chain_spice_netlist(chain, gbw_hz=2e6, a0=1e5))
    assert p["ended"]
    assert p["elements"]["VIN"] == ["in", "0", "DC", "0", "AC", "1"]
    seen = set()
    for st in chain.stages:
        topo = get_topology(st.topology_id)
        want = {c.ref: (c.kind, float(st.values[c.ref])) for c in topo.components if c.required or st.values[c.ref] > 0}
        got = stage_parts(p, st.index)
        assert got == want  # exact: values are written as the shortest text that reads back the same
        seen |= {f"{r}_S{st.index}" for r in got}
    passives = {n for n in p["elements"] if n[0].upper() in "RLC"}
    assert passives == seen  # nothing else, nothing twice


def test_one_op_amp_macro_model_per_stage(built):
    chain = built.chain("chain-1")
    p = parse_spice(chain_spice_netlist(chain, gbw_hz=2e6, a0=1e5))
    xs = {n: rest for n, rest in p["elements"].items() if n[0].upper() == "X"}
    # one instance per amplifier of every stage
    assert sorted(xs) == sorted(f"X{u}_S{st.index}" for st in chain.stages for u in _amps(st))
    assert all(rest[-1] == OPAMP_SUBCKT for rest in xs.values())
    assert list(p["subckts"]) == [OPAMP_SUBCKT]
    sub = p["subckts"][OPAMP_SUBCKT]["elements"]
    # The single-pole model: gm into RP || CP with RP = A0/gm, pole at GBW/A0 (bandsmith.files.exports notes).
    gm, rp, cp = float(sub["GIN"][4]), float(sub["RP"][2]), float(sub["CP"][2])
    assert_allclose(rp * gm, 1e5, rtol=1e-12)
    assert_allclose(1 / (2 * math.pi * rp * cp), 2e6 / 1e5, rtol=1e-12)


def test_the_stages_are_in_series_from_in_to_out(built):
    chain = built.chain("chain-1")
    n = len(chain.stages)
    p = parse_spice(chain_spice_netlist(chain))
    for st in chain.stages:
        nl = Candidate(st.topology_id, st.values).netlist
        node_in = "in" if st.index == 1 else f"s{st.index - 1}_out"
        node_out = "out" if st.index == n else f"s{st.index}_out"
        for e in nl.elements:
            name = (f"X{e.ref}" if e.kind == "opamp" else e.ref) + f"_S{st.index}"
            nodes = p["elements"][name][: 3 if e.kind == "opamp" else 2]
            for orig, written in zip(e.nodes, nodes):
                if orig == nl.input:
                    assert written == node_in
                elif orig == nl.output:
                    assert written == node_out
                elif orig == nl.ground:
                    assert written == "0"
                else:
                    assert written == f"s{st.index}_{orig}"


def test_the_netlist_response_is_the_product_of_the_stages(built):
    # Independent nodal solution of the exported text against the core's chain with the op-amp.
    f = np.geomspace(2e3, 50e3, 300)
    h = solve_spice(parse_spice(chain_spice_netlist(built, gbw_hz=2e6, a0=1e5)), f)
    assert_allclose(h, built.response(f, actual=True), rtol=1e-7)


@pytest.mark.parametrize("response, order", [("butterworth", 3), ("chebyshev", 4), ("bessel", 2)])
def test_exact_parts_and_ideal_op_amps_match_scipy(response, order):
    # Reference: scipy.signal's analog band-pass of the same family, order and edges
    # (iirfilter(analog=True, btype='bandpass'); bessel(norm='mag')), scaled to the centre gain.
    s = ChainSettings.from_request(response, order, f0_hz=5e3, bw_hz=2e3, gain=1.5, series="exact", ripple_db=0.5 if response == "chebyshev" else None)
    r = design_cascade(s)
    assert r.feasible
    f = np.geomspace(500.0, 50e3, 400)
    h = solve_spice(parse_spice(chain_spice_netlist(r.chain("x"))), f)
    ref_db = reference_db(response, order, s.f_low_hz, s.f_high_hz, f, gain=1.5, ripple_db=0.5)
    # An ideal op-amp is a flat gain of 1e9 in the netlist: within 0.01 dB.
    assert_allclose(20 * np.log10(np.abs(h)), ref_db, atol=0.01)


def test_a_winding_resistance_is_its_own_element_in_series():
    chain = tank_chain(15.0)
    p = parse_spice(chain_spice_netlist(chain))
    assert float(p["elements"]["RL_S1"][2]) == 15.0
    l_nodes, rl_nodes = p["elements"]["L_S1"][:2], p["elements"]["RL_S1"][:2]
    assert l_nodes[1] == rl_nodes[0]  # through a node of its own
    f = np.geomspace(1e3, 100e3, 200)
    assert_allclose(solve_spice(p, f), chain_cascade(chain).response(f), rtol=1e-6)


def test_the_default_sweep_is_fine_enough_for_the_sharpest_stage(built):
    p = parse_spice(chain_spice_netlist(built))
    kind, ppd, f1, f2 = p["ac"]
    q_max = max(st.plan.q for st in built.stages)
    assert kind == "dec" and f1 < built.settings.f_low_hz and f2 > built.settings.f_high_hz
    # Ten points across the sharpest stage's bandwidth f0/Q (at least 100 per decade).
    assert ppd >= 100 and 10 ** (1 / ppd) <= 1 + 1 / (10 * q_max)


def test_bad_input_is_named():
    s = ChainSettings.from_request("chebyshev", 6, f0_hz=10e3, bw_hz=2e3, series="E24", circuit="sallen-key")
    r = design_cascade(s)
    assert not r.feasible
    with pytest.raises(InputError) as exc:
        chain_spice_netlist(r)
    assert exc.value.field == "chain" and "cannot be built" in exc.value.reason
    with pytest.raises(InputError):
        chain_parts_csv("not a chain")
    with pytest.raises(InputError) as exc:
        chain_spice_netlist(tank_chain(0.0), f_start_hz=1e4, f_stop_hz=1e3)
    assert exc.value.field == "from"


# --------------------------------------------------------------------------- parts list


def read_csv(text: str) -> list[dict]:
    rows = list(csv.reader(io.StringIO(text)))
    assert rows[0] == CHAIN_PARTS_HEADER
    return [dict(zip(rows[0], r)) for r in rows[1:]]


def test_the_parts_list_lists_every_part_with_the_netlist_s_references(built):
    chain = built.chain("chain-1")
    rows = read_csv(chain_parts_csv(chain, gbw_hz=2e6))
    p = parse_spice(chain_spice_netlist(chain, gbw_hz=2e6))
    for st in chain.stages:
        topo = get_topology(st.topology_id)
        mine = [r for r in rows if r["stage"] == str(st.index)]
        passives = {r["stage_reference"]: r for r in mine if r["kind"] != "opamp"}
        assert set(passives) == {c.ref for c in topo.components if c.required or st.values[c.ref] > 0}
        for ref, r in passives.items():
            assert float(r["value"]) == float(st.values[ref])
            assert r["circuit"] == st.topology_id and r["kind"] == topo.component(ref).kind and r["role"]
            assert r["reference"] in p["elements"]  # the same name as in the netlist
        amps = [r for r in mine if r["kind"] == "opamp"]
        assert [a["reference"] for a in amps] == [f"X{u}_S{st.index}" for u in _amps(st)]
        assert all(float(a["value"]) == 2e6 for a in amps)
    refs = [r["reference"] for r in rows]
    assert len(refs) == len(set(refs))


def test_the_parts_list_names_the_series_and_the_winding_only_when_there_is_one():
    # IEC 60063: 3.3 kΩ is in E6; the tank's example values read back with their series.
    rows = read_csv(chain_parts_csv(tank_chain(15.0)))
    assert {r["stage_reference"] for r in rows} == {"R1", "R2", "L", "C", "RL", "U1"}
    assert next(r for r in rows if r["stage_reference"] == "U1")["formatted_value"] == "ideal"
    rows = read_csv(chain_parts_csv(tank_chain(0.0)))
    assert "RL" not in {r["stage_reference"] for r in rows}
    r1 = next(r for r in rows if r["stage_reference"] == "R1")
    assert r1["series"] == "E6" and r1["formatted_value"] == "3.3 kΩ"


# --------------------------------------------------------------------------- command line


def test_bandsmith_export_chain(built, tmp_path, capsys):
    path = tmp_path / "chain.bandsmith.json"
    save_session(cascade_session(built, chain_id="band-a"), path)
    net, parts = tmp_path / "c.cir", tmp_path / "c.csv"
    assert cli_main(["export", str(path), "--netlist", str(net), "--chain", "band-a"]) == 0
    assert cli_main(["export", str(path), "--parts", str(parts), "--chain", "band-a"]) == 0
    assert "chain band-a" in capsys.readouterr().out
    chain = built.chain("band-a")
    p = parse_spice(net.read_text(encoding="utf-8"))
    for st in chain.stages:
        assert stage_parts(p, st.index) == {c.ref: (c.kind, float(st.values[c.ref])) for c in get_topology(st.topology_id).components if c.required or st.values[c.ref] > 0}
    assert len(read_csv(parts.read_text(encoding="utf-8"))) == sum(len([v for v in s.values.values() if v > 0]) + len(_amps(s)) for s in chain.stages)
    # A chain the session does not have, or a response table of a chain: one line naming the option.
    assert cli_main(["export", str(path), "--netlist", str(net), "--chain", "nope"]) == 2
    err = capsys.readouterr().err
    assert "chain" in err and "band-a" in err
    assert cli_main(["export", str(path), "--response", str(parts), "--chain", "band-a"]) == 2
    assert "--response is for one candidate" in capsys.readouterr().err
