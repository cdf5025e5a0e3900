"""Exports of a candidate: SPICE netlist, parts list CSV, response CSV.

The netlist is read back by the small SPICE parser of ``spice_helpers.py`` (SPICE3 syntax: ``*``
comments, the first line a title, R/L/C/V/G/E/X elements, ``.subckt``/``.ends``, ``.ac``, ``.end``)
and then solved by its independent nodal analysis with the macro-model's own elements
(a voltage-controlled current source, a resistor, a capacitor, a voltage-controlled voltage
source). Its response must equal the core's analysis with the single-pole op-amp
A(s) = A0/(1 + s·A0/(2π·GBW)) of the README's "Definitions" — which is checked against scipy.signal.freqs too.
"""

from __future__ import annotations

import csv
import io
import math

import numpy as np
import pytest
import scipy.signal
from numpy.testing import assert_allclose

from bandsmith.app.cli import main as cli_main
from bandsmith.analysis.analyzer import transfer_function
from bandsmith.design.candidate import Candidate
from bandsmith.circuits import all_topologies, get_topology
from bandsmith.common.errors import InputError
from bandsmith.files.exports import IDEAL_GAIN, OPAMP_SUBCKT, parts_csv, response_csv, spice_netlist, write_atomic
from bandsmith.solver.mna import OpAmpModel
from bandsmith.files.session import CandidateEntry
from spice_helpers import parse_spice, solve_spice


def values_with_winding():
    tank = dict(get_topology("rlc-tank").example, RL=15.0)
    return [("rlc-tank", tank)] + [(t.id, dict(t.example)) for t in all_topologies() if t.id != "rlc-tank"]


# --------------------------------------------------------------------------- netlist


@pytest.mark.parametrize("topology_id, values", values_with_winding())
def test_netlist_parses_back_into_the_same_parts(topology_id, values):
    cand = Candidate(topology_id, values)
    text = spice_netlist(cand, gbw_hz=2.2e6, a0=3e5)
    p = parse_spice(text)
    assert p["title"].startswith("*")
    assert p["ended"] and text.rstrip().splitlines()[-1] == ".end"
    assert p["elements"]["VIN"] == ["in", "0", "DC", "0", "AC", "1"]
    got = {name: float(rest[2]) for name, rest in p["elements"].items() if name[0] in "RLC"}
    want = {ref: v for ref, v in cand.values.items() if v > 0}
    assert got == want  # exactly: values are written so that they read back as the same floats
    for e in cand.netlist.passives:
        rest = p["elements"][e.ref]
        if e.kind == "L" and e.series_resistance > 0:
            assert rest[0] == e.nodes[0] and p["elements"]["RL"][1] == e.nodes[1]
            assert rest[1] == p["elements"]["RL"][0]  # the winding in series with L
        else:
            assert rest[:2] == list(e.nodes)
    # one op-amp instance per amplifier, each on its own nodes
    amps = cand.netlist.opamps
    assert amps
    assert sorted(n for n in p["elements"] if n.startswith("X")) == sorted(f"X{op.ref}" for op in amps)
    for op in amps:
        assert p["elements"][f"X{op.ref}"] == [*op.nodes, OPAMP_SUBCKT]
    kind, per_decade, f1, f2 = p["ac"]
    assert kind == "dec" and per_decade == 100 and 0 < f1 < f2


def test_netlist_contains_the_macro_model_with_the_gbw():
    gbw, a0 = 3.3e6, 2e5
    p = parse_spice(spice_netlist(("mfb", get_topology("mfb").example), gbw_hz=gbw, a0=a0))
    sub = p["subckts"][OPAMP_SUBCKT]
    assert sub["ports"] == ["inp", "inn", "out"]
    el = sub["elements"]
    gm = float(el["GIN"][4])
    rp = float(el["RP"][2])
    cp = float(el["CP"][2])
    assert el["GIN"][:4] == ["0", "x", "inp", "inn"]
    assert el["EOUT"] == ["out", "0", "x", "0", "1"]
    assert_allclose(gm * rp, a0, rtol=1e-12)  # DC gain
    assert_allclose(gm / (2 * math.pi * cp), gbw, rtol=1e-12)  # gain-bandwidth product
    # the macro-model's A(jω) = gm·RP/(1 + jω·RP·CP) is the README's single-pole model (scipy.signal.freqs)
    w = 2 * math.pi * np.geomspace(1.0, 1e8, 50)
    _, ref = scipy.signal.freqs([a0], [a0 / (2 * math.pi * gbw), 1.0], worN=w)
    assert_allclose(gm * rp / (1 + 1j * w * rp * cp), ref, rtol=1e-12)


@pytest.mark.parametrize("topology_id, values", values_with_winding())
def test_netlist_simulates_like_the_core_analysis(topology_id, values):
    # The exported circuit, solved by the nodal analysis above, equals the core's transfer function
    # with the single-pole op-amp.
    cand = Candidate(topology_id, values)
    gbw, a0 = 1.5e6, 1e5
    p = parse_spice(spice_netlist(cand, gbw_hz=gbw, a0=a0))
    f = np.geomspace(50.0, 5e5, 25)
    ours = solve_spice(p, f)
    core = transfer_function(cand.netlist, OpAmpModel(gbw, a0)).at_f(f)[0]
    assert_allclose(ours, core, rtol=1e-7)


def test_ideal_export_is_a_flat_high_gain():
    text = spice_netlist(CandidateEntry("mfb", "mfb", get_topology("mfb").example))
    p = parse_spice(text)
    el = p["subckts"][OPAMP_SUBCKT]["elements"]
    assert "CP" not in el
    assert_allclose(float(el["GIN"][4]) * float(el["RP"][2]), IDEAL_GAIN)
    assert "ideal" in text


def test_netlist_options_and_bad_input():
    text = spice_netlist(("mfb", get_topology("mfb").example), gbw_hz=1e6, f_start_hz=20.0, f_stop_hz=2e4, points_per_decade=10)
    assert parse_spice(text)["ac"] == ("dec", 10, 20.0, 2e4)
    with pytest.raises(InputError):
        spice_netlist(("mfb", get_topology("mfb").example), f_start_hz=100.0, f_stop_hz=10.0)
    with pytest.raises(InputError):
        spice_netlist(("mfb", get_topology("mfb").example), gbw_hz=-1.0)
    with pytest.raises(InputError):
        spice_netlist(object())
    assert "prototype" in text  # the cautions travel with the export (README "Cautions")


# --------------------------------------------------------------------------- parts list


def test_parts_csv():
    mfb = get_topology("mfb")
    rows = list(csv.reader(io.StringIO(parts_csv(("mfb", mfb.example), gbw_hz=1e6))))
    assert rows[0] == ["reference", "kind", "value", "formatted_value", "series", "role"]
    body = {r[0]: r for r in rows[1:]}
    assert list(body) == ["R1", "R2", "R3", "C1", "C2", "U1"]
    for ref, v in mfb.example.items():
        assert float(body[ref][2]) == v
        assert body[ref][1] == mfb.component(ref).kind
        assert body[ref][5] == mfb.component(ref).role
    # IEC 60063: 10 is in E3 (10 22 47); 82 first appears in E12; 866 is in E48 (= E96[::2]), not E24
    assert body["R1"][4] == "E3" and body["C1"][4] == "E3"
    assert body["R3"][4] == "E12"
    assert body["R2"][4] == "E48"
    assert body["R2"][3] == "866 Ω" and body["C1"][3] == "10 nF"
    assert body["U1"][1] == "opamp" and float(body["U1"][2]) == 1e6


def test_parts_csv_lists_a_winding_resistance_only_when_there_is_one():
    tank = get_topology("rlc-tank").example
    refs = [r[0] for r in csv.reader(io.StringIO(parts_csv(("rlc-tank", tank))))][1:]
    assert "RL" not in refs
    refs = [r[0] for r in csv.reader(io.StringIO(parts_csv(("rlc-tank", dict(tank, RL=4.53)))))][1:]
    assert "RL" in refs
    row = next(r for r in csv.reader(io.StringIO(parts_csv(("rlc-tank", dict(tank, RL=4.53))))) if r[0] == "RL")
    assert row[4] == "E96"  # IEC 60063 Table 2: 453 is an E96 value, not E48


# --------------------------------------------------------------------------- response


def test_response_csv_equals_the_sweep_command(capsys):
    ex = get_topology("sallen-key").example
    args = ["sweep", "sallen-key"] + [f"{k}={v!r}" for k, v in ex.items()] + ["--gbw", "2e6", "--csv"]
    assert cli_main(args) == 0
    assert response_csv(("sallen-key", ex), gbw_hz=2e6) == capsys.readouterr().out


def test_response_csv_frequencies():
    text = response_csv(("mfb", get_topology("mfb").example), f_hz=np.array([100.0, 1e3, 2e3]))
    rows = list(csv.reader(io.StringIO(text)))
    assert rows[0] == ["frequency_hz", "magnitude_db", "phase_deg", "group_delay_s"]
    assert [float(r[0]) for r in rows[1:]] == [100.0, 1000.0, 2000.0]
    with pytest.raises(InputError):
        response_csv(("mfb", get_topology("mfb").example), f_hz=np.array([-1.0]))


# --------------------------------------------------------------------------- writing


def test_write_atomic(tmp_path, monkeypatch):
    p = tmp_path / "x.cir"
    write_atomic(p, "first\n")
    assert p.read_text() == "first\n"
    import bandsmith.files.exports as ex

    def broken(src, dst):
        raise OSError(13, "Permission denied")

    monkeypatch.setattr(ex.os, "replace", broken)
    with pytest.raises(InputError, match="output"):
        write_atomic(p, "second\n")
    assert p.read_text() == "first\n"
    assert [q.name for q in tmp_path.iterdir()] == ["x.cir"]
