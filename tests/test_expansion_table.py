"""The shipped table of expansion fits (bandsmith/resources/expansions.json): regenerated here and
compared with the file, and the fallback to fitting for a structure the table does not hold.

The fits themselves are checked against the MNA solver in test_expansion.py (which now reads
them from the table) and, when the table is written, by the expansion's own verification.
"""

import hashlib
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

def _load_table() -> dict:
    """The shipped table's index as ``{hash: (start, end, digest)}`` read through the module's own
    reader (expansion._read_index, expansion._span); empty when the file is missing, stale or not
    laid out as the table."""
    table = E._read_index()
    if not table:
        return {}
    records = table[0]
    return {name: E._span(records, name) for name in (records[at : at + 20].decode("ascii") for at in range(0, len(records), E._RECORD))}



def _shipped() -> dict:
    return json.loads(E.table_path().read_text(encoding="utf-8"))


def test_the_shipped_table_is_what_the_generator_writes_now():
    # Every entry is one the generator writes now (a circuit's netlist that changed leaves a stale
    # entry: run python tests/expansion_table.py). A circuit added after the table was written has
    # no entry and needs none: it is fitted at first use (test below), so adding one changes nothing here.
    shipped = _shipped()
    assert shipped.pop("stamp") == E._table_stamp()
    assert isinstance(shipped.pop("index"), str)
    index = _load_table()
    fresh = table_entries()
    assert shipped and sorted(shipped) == sorted(index)
    stale = sorted(set(shipped) - set(fresh))
    assert not stale, f"{len(stale)} entries for structures no circuit has now: run python tests/expansion_table.py"
    for name, old in shipped.items():
        entry = fresh[name]
        if entry.startswith("unavailable: "):
            assert old == entry
            continue
        n_var = int(entry.split(" ")[0])
        a, b = (E._entry_fit(json.dumps(e).encode(), ("C",) * n_var) for e in (old, entry))
        assert np.array_equal(a.exps, b.exps) and (a.low, a.num_powers, a.den_powers) == (b.low, b.num_powers, b.den_powers)
        for part in ("den", "num"):  # integer-point determinants: equal to rounding (BLAS may differ)
            x, y = getattr(a, part), getattr(b, part)
            assert x.shape == y.shape
            np.testing.assert_allclose(x, y, rtol=0, atol=1e-12 * np.abs(y).max())


def test_the_index_points_at_each_entry():
    raw = E.table_path().read_bytes()
    base = raw.index(b"\n", raw.index(b'"index": ')) + 1
    shipped = _shipped()
    index = _load_table()
    assert sorted(index) == sorted(set(shipped) - {"stamp", "index"})
    for name, (start, end, digest) in index.items():
        assert json.loads(raw[base + start : base + end]) == shipped[name]
        assert E._digest(raw[base + start : base + end]) == digest
        assert digest == hashlib.blake2b(raw[base + start : base + end], digest_size=8).hexdigest()  # Python's hashlib


def test_the_stamp_is_written_out_as_json_writes_it():
    # the file's stamp line is checked by comparing bytes with the text written out in the module
    assert E._STAMP_TEXT == json.dumps(E._table_stamp(), sort_keys=True)
    assert json.loads(E._STAMP_TEXT) == E._table_stamp()


def test_a_fit_round_trips_bit_for_bit():
    # base64 (RFC 4648) of IEEE 754 binary64 values: the very bits come back (extremes included:
    # the smallest subnormal, the largest finite value, one ulp either side of 1)
    values = [1.0, -3.0000000000000036, 5e-324, 1.7976931348623157e308, np.nextafter(1.0, 2.0), np.nextafter(1.0, 0.0), -2.5e-300]
    both = np.zeros((5, 5))
    both.reshape(-1)[[0, 2, 4, 7, 9, 13, 24]] = values
    exps = np.array([[0, 1], [1, 0], [1, 1], [2, 0], [0, 2]])
    fit = E._fit_of(np.ascontiguousarray(exps.T, dtype=float), ("R", "C"), both[:, :3], both[:, 3:], 1)
    text = E._entry_text(fit, 2)
    back = E._entry_fit(json.dumps(text).encode(), ("R", "C"))
    assert back.exps_ratio.tobytes() == fit.exps_ratio.tobytes()  # a resistor's row negated (its stamp 1/R)
    assert np.array_equal(back.exps_ratio, np.array([[0.0, -1, -1, -2, 0], [1, 0, 1, 0, 2]]))
    assert back.exps.dtype == exps.dtype and np.array_equal(back.exps, exps) and back.low == 1
    assert (back.num_powers, back.den_powers) == (fit.num_powers, fit.den_powers)
    for part in ("den", "num"):
        assert np.ascontiguousarray(getattr(back, part)).tobytes() == np.ascontiguousarray(getattr(fit, part)).tobytes()
    assert E._entry_fit(json.dumps(text).encode(), ("R", "C", "C")) is None  # another structure's variables
    assert E._entry_fit(json.dumps("unavailable: no transfer").encode(), ("R", "C")) == "no transfer"


def test_the_names_are_blake2b_of_the_structure():
    topo = get_topology("mfb")
    net = topo.build(topo.example)
    key = E._structure_key(net, E.circuit_variables(net, IDEAL))
    assert E.structure_hash(key) == hashlib.blake2b(repr(key).encode(), digest_size=10).hexdigest()  # Python's hashlib


def test_a_circuit_in_the_table_has_every_structure_there():
    # all of a circuit's structures or none (one added after the table was written)
    table = _load_table()
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
    assert _load_table() == {}
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
    at = line.rindex(b" ") + 1  # the first character of the coefficients' base64
    changed = line[:at] + (b"B" if line[at:at + 1] != b"B" else b"C") + line[at + 1:]  # base64 still
    n_var = int(line[1:line.index(b" ")])
    fit, was = (E._entry_fit(x.rstrip(b","), ("C",) * n_var) for x in (changed, line))  # well-formed: it decodes
    assert fit.den.tobytes() != was.den.tobytes()  # to another coefficient
    _with_table(monkeypatch, tmp_path, raw[:start] + changed + raw[end:])
    calls = []
    real = E._structural_fit
    monkeypatch.setattr(E, "_structural_fit", lambda *a: calls.append(1) or real(*a))
    _agrees_with_solver(net, IDEAL)
    assert calls == [1]


def _first_span_field(raw: bytes) -> int:
    """Where the first index record's start offset is."""
    return raw.index(b":", raw.index(b'"index": "')) + 1


def _head_of(raw: bytes) -> bytes:
    """The file's first three lines (the stamp and the index)."""
    return raw[: raw.index(b"\n", raw.index(b'"index": "')) + 1]


def _separator_moved(raw: bytes) -> bytes:
    """The first record's ":" after its hash swapped with the digit after it: the same bytes, one
    field a digit short and the next a digit long."""
    at = _first_span_field(raw) - 1
    return raw[:at] + raw[at + 1 : at + 2] + b":" + raw[at + 2 :]


@pytest.mark.parametrize("damage", [
    lambda raw: raw.replace(b'"index": "', b'"index": [', 1),              # index of the wrong kind
    lambda raw: raw.replace(b'"stamp": {', b'"stamp": \xff{', 1),          # bytes that are not text
    lambda raw: raw[:_first_span_field(raw)] + b"x" + raw[_first_span_field(raw) + 1:],  # a span of the wrong kind
    lambda raw: raw[:_first_span_field(raw)] + b"0000001" + raw[_first_span_field(raw) + 8:],  # a record cut short
    _separator_moved,                                                       # a separator out of place
    lambda raw: raw[: len(_head_of(raw)) // 2],                             # cut inside the index
    lambda raw: b"",
])
def test_a_table_that_cannot_be_read_is_ignored_whole(no_fits, monkeypatch, tmp_path, damage):
    _with_table(monkeypatch, tmp_path, damage(E.table_path().read_bytes()))
    assert _load_table() == {}
    topo = get_topology("sallen-key")
    _agrees_with_solver(topo.build(topo.example), IDEAL)


@pytest.mark.parametrize("damage", [
    lambda raw: raw[: len(raw) // 2],                                      # cut short
    lambda raw: raw[:-3] + b"}\n",                                          # its last entry cut short
    lambda raw: raw + b"\n",                                                # grown
])
def test_a_cut_or_grown_table_loses_only_the_entries_it_touches(no_fits, monkeypatch, tmp_path, damage):
    # each entry is checked by its length and digest when read: an entry the damage reaches is
    # fitted instead (never a wrong fit), the others are still used
    raw = E.table_path().read_bytes()
    entries = len(_shipped()) - 2
    damaged = damage(raw)
    _with_table(monkeypatch, tmp_path, damaged)
    index = _load_table()
    assert len(index) == entries
    base = len(_head_of(raw))
    touched = {name for name, (start, end, digest) in index.items()
               if damaged[base + start : base + end] != raw[base + start : base + end]}
    for name in index:
        assert (E._table_line(name) is None) == (name in touched)
    for circuit, amp in (("sallen-key", IDEAL), ("state-variable", OpAmpModel(gbw_hz=1e6))):
        topo = get_topology(circuit)
        _agrees_with_solver(topo.build(topo.example), amp)


def test_an_index_longer_than_the_first_read_is_read_on(no_fits, monkeypatch):
    monkeypatch.setattr(E, "_HEAD_READ", 64)
    assert len(_load_table()) == len(_shipped()) - 2
    monkeypatch.setattr(E, "_TABLE", None)
    monkeypatch.setattr(E, "_structural_fit", lambda *a: pytest.fail("fitted although the table has the structure"))
    topo = get_topology("state-variable")
    _agrees_with_solver(topo.build(topo.example), OpAmpModel(gbw_hz=1e6))
