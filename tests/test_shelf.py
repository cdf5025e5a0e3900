"""The op-amp shelf: models, the shipped archetypes, shelf files (load, save, damage)."""

import dataclasses
import json
import os
import re

import pytest
from numpy.testing import assert_allclose

from bandsmith.common.errors import InputError
from bandsmith.bench.shelf import (
    ARCHETYPES,
    FORMAT,
    VERSION,
    OpAmp,
    ShelfError,
    amps_from_json,
    dumps_shelf,
    find_amp,
    load_shelf,
    loads_shelf,
    open_shelf,
    save_shelf,
)


def amp(**over):
    base = dict(
        name="bench amp", gbw_hz=3e6, a0=1e5, slew_v_per_us=2.0, iout_max_ma=25.0, supply_min_v=5.0,
        supply_max_v=30.0, swing_neg_v=1.0, swing_pos_v=1.0, cm_neg_v=1.5, cm_pos_v=1.0,
    )
    base.update(over)
    return OpAmp(**base)


# --- the archetypes carry no brand and no part number -------------------------------------------

# A generic name: "generic", a GBW with its unit, then words of the class (letters and hyphens,
# such as the trade words CMOS, JFET).
GENERIC = re.compile(r"^generic \d+(\.\d+)? [kM]Hz( [A-Za-z][A-Za-z-]*)+$")
# A part-number-like token: letters and digits run together (e.g. two letters then four digits),
# which no archetype name, note or field may contain. Units written apart ("10 MHz") are fine.
PART_NUMBER = re.compile(r"\b(?=[A-Za-z0-9-]*[A-Za-z])(?=[A-Za-z0-9-]*\d)[A-Za-z0-9-]{3,}\b")


def test_archetypes_are_named_by_what_they_are():
    assert len(ARCHETYPES) >= 3
    names = [a.name for a in ARCHETYPES]
    assert len(set(n.casefold() for n in names)) == len(names)
    for a in ARCHETYPES:
        assert GENERIC.match(a.name), a.name
        # The GBW in the name is the model's own.
        value, unit = re.match(r"^generic (\S+) (\S+)", a.name).groups()
        assert_allclose(float(value) * {"kHz": 1e3, "MHz": 1e6}[unit], a.gbw_hz, rtol=1e-12)


def test_archetypes_carry_no_part_number_anywhere():
    text = dumps_shelf(ARCHETYPES)
    for entry in json.loads(text)["amps"]:
        for key, v in entry.items():
            if isinstance(v, str):
                assert not PART_NUMBER.search(v), (key, v)
    assert PART_NUMBER.search("a TL0-like X1234 token")  # the pattern does catch such tokens


def test_archetypes_include_a_second_pole_model_and_rail_to_rail():
    assert any(a.f_p2_hz is not None for a in ARCHETYPES)
    rr = [a for a in ARCHETYPES if "rail-to-rail" in a.name]
    assert rr and all(a.swing_neg_v < 0.1 and a.cm_neg_v <= 0 for a in rr)


# --- models --------------------------------------------------------------------------------------

def test_round_trip_json():
    for a in ARCHETYPES + (amp(f_p2_hz=20e6, notes="x"),):
        assert OpAmp.from_json(json.loads(json.dumps(a.to_json()))) == a


def test_name_spaces_normalised_and_dominant_pole():
    a = amp(name="  my   amp ")
    assert a.name == "my amp"
    assert_allclose(a.f_p1_hz, 30.0, rtol=1e-12)
    assert a.model.gbw_hz == 3e6 and a.model.a0 == 1e5


@pytest.mark.parametrize(
    "over,field",
    [
        (dict(gbw_hz=0.0), "gbw_hz"),
        (dict(gbw_hz=float("nan")), "gbw_hz"),
        (dict(a0=-1.0), "a0"),
        (dict(slew_v_per_us=0.0), "slew_v_per_us"),
        (dict(iout_max_ma=float("inf")), "iout_max_ma"),
        (dict(supply_min_v=31.0), "supply_min_v"),
        (dict(swing_neg_v=-0.1), "swing_neg_v"),
        (dict(swing_neg_v=15.0, swing_pos_v=15.0), "swing_pos_v"),
        (dict(cm_neg_v=20.0, cm_pos_v=10.0), "cm_pos_v"),
        (dict(f_p2_hz=10.0), "f_p2_hz"),  # below GBW/A0 = 30 Hz
        (dict(en_nv_rthz=-1.0), "en_nv_rthz"),
        (dict(name=" "), "name"),
        (dict(gbw_hz=True), "gbw_hz"),
    ],
)
def test_bad_values_name_the_field(over, field):
    with pytest.raises(InputError) as exc:
        amp(**over)
    assert exc.value.field == field


def test_from_json_missing_field_and_wrong_type():
    obj = amp().to_json()
    del obj["slew_v_per_us"]
    with pytest.raises(InputError, match="slew_v_per_us"):
        OpAmp.from_json(obj)
    with pytest.raises(InputError):
        OpAmp.from_json(["not", "a", "dict"])
    obj = amp().to_json()
    obj["gbw_hz"] = "1 MHz"
    with pytest.raises(InputError, match="gbw_hz"):
        OpAmp.from_json(obj)
    # Optional fields may be absent.
    obj = amp().to_json()
    for k in ("f_p2_hz", "en_nv_rthz", "in_pa_rthz", "notes"):
        del obj[k]
    assert OpAmp.from_json(obj) == amp()


def test_duplicate_names_refused():
    with pytest.raises(InputError, match="two op-amps"):
        amps_from_json([amp().to_json(), amp(name="BENCH AMP").to_json()])


def test_find_amp():
    assert find_amp(ARCHETYPES, "Generic 1 MHz  BIPOLAR") is ARCHETYPES[0]
    with pytest.raises(InputError) as exc:
        find_amp(ARCHETYPES, "nothing")
    assert exc.value.field == "amp" and "generic 1 MHz bipolar" in exc.value.reason


# --- files ---------------------------------------------------------------------------------------

def test_save_load_is_canonical(tmp_path):
    p = tmp_path / "sub" / "shelf.json"  # the folder is created
    amps = (amp(), amp(name="fast one", gbw_hz=50e6, f_p2_hz=120e6)) + ARCHETYPES[:2]
    save_shelf(amps, p)
    assert load_shelf(p) == amps
    first = p.read_bytes()
    save_shelf(load_shelf(p), p)
    assert p.read_bytes() == first
    obj = json.loads(first)
    assert obj["format"] == FORMAT and obj["version"] == VERSION
    assert [x for x in os.listdir(p.parent) if x != "shelf.json"] == []  # no temporary file left


def test_empty_shelf_is_allowed(tmp_path):
    p = tmp_path / "shelf.json"
    save_shelf((), p)
    assert load_shelf(p) == ()


DAMAGES = {
    "damaged": b'{"format": "bandsmith-shelf", "version": 1, "amps": [}',
    "truncated": b'{"format": "bandsmith-shelf", "version": 1, "amps": [',
    "not-a-shelf": b'{"format": "something-else", "amps": []}',
    "newer-version": b'{"format": "bandsmith-shelf", "version": 99, "amps": []}',
    "bad-amp": b'{"format": "bandsmith-shelf", "version": 1, "amps": [{"name": "x", "gbw_hz": -1}]}',
}


@pytest.mark.parametrize("kind", sorted(DAMAGES))
def test_damaged_file_clear_message_untouched_and_archetypes(tmp_path, kind):
    p = tmp_path / "shelf.json"
    p.write_bytes(DAMAGES[kind])
    before = (p.read_bytes(), p.stat().st_mtime_ns)
    with pytest.raises(ShelfError) as exc:
        load_shelf(p)
    assert exc.value.kind == kind
    assert str(p) in str(exc.value) and str(exc.value).startswith("shelf: ")
    state = open_shelf(p)
    assert state.amps == ARCHETYPES and not state.from_file
    assert state.warning and str(p) in state.warning and "archetypes" in state.warning
    assert (p.read_bytes(), p.stat().st_mtime_ns) == before


def test_missing_file_is_the_first_run(tmp_path):
    state = open_shelf(tmp_path / "none.json")
    assert state.amps == ARCHETYPES and state.warning is None and not state.from_file
    assert not (tmp_path / "none.json").exists()
    with pytest.raises(ShelfError) as exc:
        load_shelf(tmp_path / "none.json")
    assert exc.value.kind == "missing"


def test_not_utf8_and_nan_refused(tmp_path):
    p = tmp_path / "shelf.json"
    p.write_bytes(b"\xff\xfe\x00garbage")
    with pytest.raises(ShelfError, match="UTF-8"):
        load_shelf(p)
    with pytest.raises(ShelfError):
        loads_shelf('{"format": "bandsmith-shelf", "version": 1, "amps": [{"name": "x", "gbw_hz": NaN}]}')


def test_failed_save_leaves_old_file(tmp_path, monkeypatch):
    p = tmp_path / "shelf.json"
    save_shelf((amp(),), p)
    before = p.read_bytes()

    def boom(*a, **k):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "fsync", boom)
    with pytest.raises(ShelfError) as exc:
        save_shelf(ARCHETYPES, p)
    assert exc.value.kind == "write-failed"
    assert p.read_bytes() == before
    assert os.listdir(tmp_path) == ["shelf.json"]


def test_frozen():
    with pytest.raises(dataclasses.FrozenInstanceError):
        ARCHETYPES[0].gbw_hz = 1.0
