"""The shipped table of expansion fits (bandsmith/resources/expansions.json): regenerated here and
compared with the file, and the fallback to fitting for a structure the table does not hold.

The fits themselves are checked against the MNA solver in test_expansion.py (which now reads
them from the table) and, when the table is written, by the expansion's own verification.
"""

import json
import sys
from pathlib import Path

import numpy as np
import pytest

import bandsmith.solver.expansion as E
from bandsmith.circuits import get_topology
from bandsmith.solver.mna import IDEAL, OpAmpModel, build_system
from bandsmith.solver.netlist import Element
from bandsmith.solver.rational import rational_from_system

sys.path.insert(0, str(Path(__file__).parent))
from expansion_table import structures, table_entries  # noqa: E402


def _shipped() -> dict:
    return json.loads(E.table_path().read_text(encoding="utf-8"))


def test_the_shipped_table_is_what_the_generator_writes_now():
    # Every entry is one the generator writes now (a circuit's netlist that changed leaves a stale
    # entry: run python tests/expansion_table.py). A circuit added after the table was written has
    # no entry and needs none: it is fitted at first use (test below), so adding one changes nothing here.
    shipped = _shipped()
    assert shipped.pop("stamp") == E._table_stamp()
    index = shipped.pop("index")
    fresh = table_entries()
    assert shipped and sorted(shipped) == sorted(index)
    stale = sorted(set(shipped) - set(fresh))
    assert not stale, f"{len(stale)} entries for structures no circuit has now: run python tests/expansion_table.py"
    for name, old in shipped.items():
        entry = fresh[name]
        assert set(old) == set(entry)
        if "unavailable" in entry:
            assert old == entry
            continue
        assert (old["n_var"], old["low"], old["exps"]) == (entry["n_var"], entry["low"], entry["exps"])
        rows = len(entry["exps"]) // entry["n_var"]
        for part in ("den", "num"):  # integer-point determinants: equal to rounding (BLAS may differ)
            a, b = E._dense_of(old[part], rows), E._dense_of(entry[part], rows)
            assert a.shape == b.shape
            np.testing.assert_allclose(a, b, rtol=0, atol=1e-12 * np.abs(b).max())


def test_the_index_points_at_each_entry():
    raw = E.table_path().read_bytes()
    base = raw.index(b"\n", raw.index(b'"index": ')) + 1
    for name, (start, end, digest) in _shipped()["index"].items():
        assert json.loads(raw[base + start : base + end]) == _shipped()[name]
        assert E._digest(raw[base + start : base + end]) == digest


def test_a_circuit_in_the_table_has_every_structure_there():
    # all of a circuit's structures or none (one added after the table was written)
    table = E._load_table()
    found: dict[str, list[bool]] = {}
    for label, net, amp in structures():
        key = E._structure_key(net, E.circuit_variables(net, amp))
        found.setdefault(label.split()[0], []).append(E.structure_hash(key) in table)
    assert any(any(hits) for hits in found.values())
    for circuit, hits in found.items():
        assert all(hits) or not any(hits), f"{circuit}: run python tests/expansion_table.py"


@pytest.fixture
def no_fits(monkeypatch):
    """Fresh caches (the table is read again)."""
    monkeypatch.setattr(E, "_FITS", {})
    monkeypatch.setattr(E, "_UNIT", {})
    monkeypatch.setattr(E, "_TABLE", None)


def _agrees_with_solver(net, amp):
    exp, variables = E.unit_expansion(net, amp)
    ratios = np.array([[v.value / u.value for v, u in zip(variables, exp.variables)]])
    w = 2 * np.pi * 1e3
    mine = exp.rational(ratios, w_ref=w)
    ref = rational_from_system(build_system(net, amp), w)
    s = 2j * np.pi * np.geomspace(100.0, 1e4, 7)
    np.testing.assert_allclose(mine.at_s(s), ref.at_s(s), rtol=1e-9)


def test_a_shipped_fit_is_used_without_fitting(no_fits, monkeypatch):
    topo = get_topology("sallen-key")
    net = topo.build(topo.example)

    def fail(*a, **k):
        raise AssertionError("fitted although the table has the structure")

    monkeypatch.setattr(E, "_structural_fit", fail)
    _agrees_with_solver(net, OpAmpModel(gbw_hz=1e6))


def test_a_structure_not_in_the_table_is_fitted(no_fits, monkeypatch):
    # a circuit added later (here: the MFB with an extra capacitor across its output)
    topo = get_topology("mfb")
    base = topo.build(topo.example)
    net = base.with_element(Element("CX", "C", (base.output, "0"), 1e-9))
    calls = []
    real = E._structural_fit
    monkeypatch.setattr(E, "_structural_fit", lambda *a: calls.append(1) or real(*a))
    _agrees_with_solver(net, IDEAL)
    assert calls == [1]


def _table_is_ignored(monkeypatch, path, circuit=None) -> None:
    """With the table read from ``path`` nothing is loaded, and ``circuit`` (if given) is fitted afresh, agreeing with the solver."""
    monkeypatch.setattr(E, "table_path", lambda: path)
    assert E._load_table() == {}
    if circuit is not None:
        topo = get_topology(circuit)
        _agrees_with_solver(topo.build(topo.example), IDEAL)


def test_a_stale_table_is_ignored(no_fits, monkeypatch, tmp_path):
    text = E.table_path().read_text(encoding="utf-8").replace(f'"format": {E.TABLE_FORMAT}', '"format": 0', 1)
    assert text != E.table_path().read_text(encoding="utf-8")
    (tmp_path / "expansions.json").write_text(text, encoding="utf-8")
    _table_is_ignored(monkeypatch, tmp_path / "expansions.json", "sallen-key")


def test_a_missing_table_is_ignored(no_fits, monkeypatch, tmp_path):
    _table_is_ignored(monkeypatch, tmp_path / "none.json", "mfb")


def test_a_damaged_table_is_ignored(no_fits, monkeypatch, tmp_path):
    (tmp_path / "expansions.json").write_text("{\n", encoding="utf-8")
    _table_is_ignored(monkeypatch, tmp_path / "expansions.json")


def test_a_damaged_entry_is_fitted(no_fits, monkeypatch, tmp_path):
    topo = get_topology("sallen-key")
    net = topo.build(topo.example)
    name = E.structure_hash(E._structure_key(net, E.circuit_variables(net, IDEAL)))
    text = E.table_path().read_text(encoding="utf-8")
    start = text.index(f'\n"{name}": ') + len(name) + 5
    broken = text[:start] + '{"n_var":1' + " " * (text.index("\n", start) - start - 10) + text[text.index("\n", start):]
    assert len(broken) == len(text)  # the index still points at the right bytes
    (tmp_path / "expansions.json").write_text(broken, encoding="utf-8")
    monkeypatch.setattr(E, "table_path", lambda: tmp_path / "expansions.json")
    _agrees_with_solver(net, IDEAL)


def _with_table(monkeypatch, tmp_path, data: bytes):
    (tmp_path / "expansions.json").write_bytes(data)
    monkeypatch.setattr(E, "table_path", lambda: tmp_path / "expansions.json")


def _sallen_key_entry_span():
    topo = get_topology("sallen-key")
    net = topo.build(topo.example)
    name = E.structure_hash(E._structure_key(net, E.circuit_variables(net, IDEAL)))
    raw = E.table_path().read_bytes()
    start = raw.index(f'\n"{name}": '.encode()) + len(name) + 5
    return net, raw, start, raw.index(b"\n", start)


def test_an_entry_changed_but_still_valid_is_fitted_not_used(no_fits, monkeypatch, tmp_path):
    # one digit of a coefficient changed: still a well-formed entry, so only its digest tells
    net, raw, start, end = _sallen_key_entry_span()
    line = raw[start:end]
    at = line.index(b'"den":[') + 7
    at = line.index(b"[", at) + 1  # the first flat index of the denominator's nonzero entries
    digit = line[at:at + 1]
    changed = line[:at] + (b"1" if digit != b"1" else b"2") + line[at + 1:]
    _with_table(monkeypatch, tmp_path, raw[:start] + changed + raw[end:])
    calls = []
    real = E._structural_fit
    monkeypatch.setattr(E, "_structural_fit", lambda *a: calls.append(1) or real(*a))
    _agrees_with_solver(net, IDEAL)
    assert calls == [1]


@pytest.mark.parametrize("damage", [
    lambda raw: raw.replace(b'"index": {', b'"index": [', 1),              # index of the wrong kind
    lambda raw: raw.replace(b'"stamp": {', b'"stamp": \xff{', 1),          # bytes that are not text
    lambda raw: raw.replace(b'":[', b'":["a",', 1),                        # a span of the wrong kind
    lambda raw: raw[: len(raw) // 2],                                      # cut short
    lambda raw: b"",
])
def test_a_table_that_cannot_be_read_is_ignored_whole(no_fits, monkeypatch, tmp_path, damage):
    _with_table(monkeypatch, tmp_path, damage(E.table_path().read_bytes()))
    assert E._load_table() == {}
    topo = get_topology("sallen-key")
    _agrees_with_solver(topo.build(topo.example), IDEAL)
