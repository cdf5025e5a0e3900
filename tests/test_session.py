"""Session files: round trip, the distinct messages for unusable files, atomic save, upgrades.

The checks here are of the file format Bandsmith defines itself (core/session.py); the JSON
grammar is RFC 8259's, as Python's json module reads it.
"""

from __future__ import annotations

import json
import os
from dataclasses import replace
from pathlib import Path

import pytest

import bandsmith.files.session as session_mod
from bandsmith.analysis.analyzer import Tolerances
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.files.session import (
    FORMAT,
    VERSION,
    CandidateEntry,
    OpAmpSpec,
    Session,
    SessionError,
    Target,
    dumps_session,
    load_session,
    loads_session,
    recovery_path,
    save_session,
    session_from_json,
    session_to_json,
)

DEMO = Path(__file__).resolve().parents[1] / "resources" / "demo_session.bandsmith.json"


def sample() -> Session:
    # Invented test data (no source needed): a 3 kHz target with two candidates and extras.
    mfb = get_topology("mfb").example
    tank = dict(get_topology("rlc-tank").example, RL=4.5)
    return Session(
        target=Target(f0_hz=3000.0, q=5.0, gain=2.0, vin_v=0.3, series="E96"),
        candidates=(
            CandidateEntry("mfb", "mfb", mfb, snap="E24", fixed=("C1",), notes="first try"),
            CandidateEntry("mfb-2", "mfb", mfb, enabled=False, pinned=True),
            CandidateEntry("rlc-tank", "rlc-tank", tank),
        ),
        opamp=OpAmpSpec(gbw_hz=2.5e6, a0=2e5),
        tolerances=Tolerances(f0=0.02, q=0.1, gain_db=1.0),
        rload_ohm=2000.0,
        notes="Ünïcode notes — kept as written",
        extras={"spread": {"trials": 1000, "seed": 7}, "noise": [1, 2, 3]},
    )


def sample_json_with(path: tuple, value) -> dict:
    """The sample session's JSON object with the entry at ``path`` (keys and indices) set to ``value``."""
    obj = session_to_json(sample())
    node = obj
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    return obj


def write(tmp_path: Path, text: str | bytes, name: str = "s.bandsmith.json") -> Path:
    p = tmp_path / name
    p.write_bytes(text.encode("utf-8") if isinstance(text, str) else text)
    return p


def expect(path: Path, kind: str, *words: str) -> SessionError:
    before = path.read_bytes()
    with pytest.raises(SessionError) as info:
        load_session(path)
    err = info.value
    assert err.kind == kind
    assert err.field == "session"
    msg = str(err)
    assert "\n" not in msg
    for w in words:
        assert w in msg, msg
    assert path.read_bytes() == before  # loading never writes
    return err


def test_save_load_save_is_byte_identical(tmp_path):
    p = tmp_path / "a.bandsmith.json"
    save_session(sample(), p)
    first = p.read_bytes()
    again = load_session(p)
    save_session(again, p)
    assert p.read_bytes() == first
    assert again == sample()


def test_the_file_carries_format_and_version_and_keeps_extras(tmp_path):
    p = tmp_path / "a.json"
    save_session(sample(), p)
    obj = json.loads(p.read_text(encoding="utf-8"))
    assert obj["format"] == FORMAT == "bandsmith-session"
    assert obj["version"] == VERSION == 1
    assert obj["spread"] == {"trials": 1000, "seed": 7}
    assert obj["noise"] == [1, 2, 3]
    assert [c["id"] for c in obj["candidates"]] == ["mfb", "mfb-2", "rlc-tank"]
    assert obj["candidates"][1]["enabled"] is False and obj["candidates"][1]["pinned"] is True
    assert obj["candidates"][2]["values"]["RL"] == 4.5
    assert load_session(p).extras == {"spread": {"trials": 1000, "seed": 7}, "noise": [1, 2, 3]}


def test_canonical_text_sorted_indented_with_final_newline():
    text = dumps_session(sample())
    assert text.endswith("}\n")
    assert text == json.dumps(json.loads(text), sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def test_the_demo_session_loads_and_is_canonical():
    s = load_session(DEMO)
    assert dumps_session(s) == DEMO.read_text(encoding="utf-8")
    assert len(s.candidates) >= 3
    assert {c.topology_id for c in s.candidates} == {"mfb", "sallen-key", "rlc-tank", "dabp"}


@pytest.mark.parametrize("cut", [1, 10, 0.5, 0.9, -2])
def test_truncated_files(tmp_path, cut):
    text = dumps_session(sample())
    n = cut if isinstance(cut, int) and cut > 0 else int(len(text) * cut) if cut > 0 else len(text) + cut
    p = write(tmp_path, text[:n])
    expect(p, "truncated", "truncated")


def test_empty_file_counts_as_truncated(tmp_path):
    expect(write(tmp_path, ""), "truncated", "empty")
    expect(write(tmp_path, "  \n", "b.json"), "truncated", "empty")


def test_damaged_files(tmp_path):
    text = dumps_session(sample())
    expect(write(tmp_path, text.replace('"target": {', '"target" {', 1)), "damaged", "damaged", "line")
    expect(write(tmp_path, text.replace("]", "}", 1), "e.json"), "damaged", "damaged")
    expect(write(tmp_path, b"\xff\xfe\x00garbage", "b.json"), "damaged", "not UTF-8")
    expect(write(tmp_path, text.replace("5.0", "NaN", 1), "c.json"), "damaged", "NaN")
    expect(write(tmp_path, text + "trailing", "d.json"), "damaged", "damaged")


def test_newer_version(tmp_path):
    obj = session_to_json(sample())
    obj["version"] = VERSION + 1
    err = expect(write(tmp_path, json.dumps(obj)), "newer-version", "newer", f"version {VERSION + 1}")
    assert "reads up to 1" in str(err)


def test_not_a_session(tmp_path):
    expect(write(tmp_path, "[1, 2]"), "not-a-session", "not a Bandsmith session", "list")
    obj = session_to_json(sample())
    obj["format"] = "something-else"
    expect(write(tmp_path, json.dumps(obj), "b.json"), "not-a-session", "something-else")
    del obj["format"]
    expect(write(tmp_path, json.dumps(obj), "c.json"), "not-a-session", "no format name")


@pytest.mark.parametrize(
    "path, value, where",
    [
        (("target", "q"), "5", "target.q"),
        (("target",), [1], "target"),
        (("opamp", "gbw_hz"), "fast", "opamp.gbw_hz"),
        (("candidates",), {"a": 1}, "candidates"),
        (("candidates", 0, "values", "R1"), "4k7", "candidates[0].values.R1"),
        (("candidates", 0, "enabled"), "yes", "candidates[0].enabled"),
        (("candidates", 0, "fixed"), "C1", "candidates[0].fixed"),
        (("version",), "1", "version"),
        (("notes",), 42, "notes"),
    ],
)
def test_wrong_types(tmp_path, path, value, where):
    expect(write(tmp_path, json.dumps(sample_json_with(path, value))), "wrong-type", "wrong type", where)


def test_missing_required_entry_is_a_wrong_type(tmp_path):
    obj = session_to_json(sample())
    del obj["target"]["f0_hz"]
    expect(write(tmp_path, json.dumps(obj)), "wrong-type", "target.f0_hz")


@pytest.mark.parametrize(
    "path, value, words",
    [
        (("target", "f0_hz"), -1.0, ("target.f0_hz", "above zero")),
        (("target", "q"), 0.0, ("target.q",)),
        (("target", "series"), "E7", ("target.series", "E7")),
        (("tolerances", "q"), -0.1, ("tolerances.q",)),
        (("opamp", "a0"), 0, ("opamp.a0",)),
        (("rload_ohm",), -5, ("rload_ohm",)),
        (("candidates", 0, "values", "R1"), -4700.0, ("candidates[0].values.R1", "greater than zero")),
        (("candidates", 0, "values", "RX"), 1.0, ("candidates[0]", "RX")),
        (("candidates", 0, "topology"), "twin-t", ("candidates[0].topology", "twin-t")),
        (("candidates", 0, "snap"), "E5", ("candidates[0].snap",)),
        (("candidates", 0, "fixed"), ["C9"], ("candidates[0].fixed", "C9")),
        (("candidates", 1, "id"), "mfb", ("unique", "mfb")),
        (("candidates", 2, "values", "RL"), -1.0, ("candidates[2].values.RL", "zero or more")),
        (("version",), 0, ("version", "0")),
    ],
)
def test_impossible_values(tmp_path, path, value, words):
    expect(write(tmp_path, json.dumps(sample_json_with(path, value))), "impossible-value", "impossible value", *words)


def test_missing_and_folder(tmp_path):
    with pytest.raises(SessionError) as info:
        load_session(tmp_path / "nope.json")
    assert info.value.kind == "missing"
    with pytest.raises(SessionError) as info:
        load_session(tmp_path)
    assert info.value.kind == "unreadable"


def test_each_kind_has_its_own_message(tmp_path):
    # damaged, truncated, newer-version, wrong-type: four different one-line messages.
    text = dumps_session(sample())
    newer = session_to_json(sample())
    newer["version"] = 99
    wrong = session_to_json(sample())
    wrong["target"]["gain"] = "big"
    files = {
        "damaged": text.replace(":", ";", 1),
        "truncated": text[: len(text) // 2],
        "newer-version": json.dumps(newer),
        "wrong-type": json.dumps(wrong),
    }
    messages = {}
    for kind, body in files.items():
        err = expect(write(tmp_path, body, f"{kind}.json"), kind)
        messages[kind] = str(err).split(" ", 2)[2]  # drop "session: PATH"
    assert len(set(messages.values())) == 4


def test_interrupted_save_leaves_the_old_file(tmp_path, monkeypatch):
    p = tmp_path / "keep.bandsmith.json"
    save_session(sample(), p)
    before = p.read_bytes()
    changed = replace(sample(), notes="a new version of the notes")

    def broken_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(session_mod.os, "replace", broken_replace)
    with pytest.raises(SessionError) as info:
        save_session(changed, p)
    assert info.value.kind == "write-failed"
    assert "unchanged" in str(info.value)
    assert p.read_bytes() == before
    assert sorted(x.name for x in tmp_path.iterdir()) == ["keep.bandsmith.json"]  # no temporary left


def test_save_interrupted_by_a_signal_also_cleans_up(tmp_path, monkeypatch):
    p = tmp_path / "keep.json"
    save_session(sample(), p)
    before = p.read_bytes()

    def interrupted(src, dst):
        raise KeyboardInterrupt

    monkeypatch.setattr(session_mod.os, "replace", interrupted)
    with pytest.raises(KeyboardInterrupt):
        save_session(replace(sample(), notes="x"), p)
    assert p.read_bytes() == before
    assert [x.name for x in tmp_path.iterdir()] == ["keep.json"]


def test_save_uses_fsync_and_a_temporary_in_the_same_folder(tmp_path, monkeypatch):
    seen = {}
    real_replace, real_fsync = os.replace, os.fsync

    def spy_replace(src, dst):
        seen["src"] = Path(src)
        seen["dst"] = Path(dst)
        return real_replace(src, dst)

    def spy_fsync(fd):
        seen["fsync"] = seen.get("fsync", 0) + 1
        return real_fsync(fd)

    monkeypatch.setattr(session_mod.os, "replace", spy_replace)
    monkeypatch.setattr(session_mod.os, "fsync", spy_fsync)
    save_session(sample(), tmp_path / "x.json")
    assert seen["src"].parent == seen["dst"].parent == tmp_path
    assert seen["fsync"] >= 1


def test_unwritable_folder_is_bad_input(tmp_path):
    with pytest.raises(SessionError) as info:
        save_session(sample(), tmp_path / "no" / "such" / "folder.json")
    assert info.value.kind == "write-failed"


def test_older_versions_are_upgraded(monkeypatch):
    # The upgrade chain, exercised with a pretend version 2 whose upgrade renames a key.
    import bandsmith.files.session_read as session_read  # where a file's version is checked

    monkeypatch.setattr(session_read, "VERSION", 2)

    def one_to_two(obj):
        obj["notes"] = obj.pop("remarks", "")
        return obj

    monkeypatch.setitem(session_read._UPGRADES, 1, one_to_two)
    old = session_to_json(sample())
    old["version"] = 1
    old["remarks"] = old.pop("notes")
    s = session_from_json(old)
    assert s.notes == sample().notes
    assert "remarks" not in s.extras


def test_new_candidate_ids():
    s = sample()
    assert s.new_candidate_id("mfb") == "mfb-3"
    assert s.new_candidate_id("sallen-key") == "sallen-key"
    assert s.new_candidate_id("rlc-tank") == "rlc-tank-2"
    s2 = s.with_candidate(CandidateEntry("mfb-3", "mfb", get_topology("mfb").example))
    assert s2.new_candidate_id("mfb") == "mfb-4"
    assert s2.without_candidate("mfb-3") == s


def test_conditions_for_and_candidate_lookup():
    s = sample()
    c = s.conditions_for("mfb")
    assert c.gbw_hz == 2.5e6 and c.a0 == 2e5 and c.vin_v == 0.3 and c.rload_ohm == 2000.0
    assert c.tolerances == Tolerances(f0=0.02, q=0.1, gain_db=1.0)
    assert s.conditions_for(s.candidates[0]) == c
    with pytest.raises(InputError, match="no candidate 'x'"):
        s.candidate("x")


def test_entries_and_targets_validate():
    with pytest.raises(InputError):
        CandidateEntry("a", "mfb", {"R1": 1.0})  # missing parts
    with pytest.raises(InputError):
        CandidateEntry("", "mfb", get_topology("mfb").example)
    with pytest.raises(InputError):
        Target(f0_hz=float("inf"), q=1.0, gain=1.0)
    with pytest.raises(InputError):
        Target(f0_hz=1.0, q=1.0, gain=1.0, series="E5")
    with pytest.raises(InputError):
        Session(target=Target(1.0, 1.0, 1.0), candidates=(), extras={"target": 1})
    entry = CandidateEntry("t", "rlc-tank", {"R1": 1.0, "R2": 1.0, "L": 1.0, "C": 1.0})
    assert entry.values["RL"] == 0.0  # optional part filled in


def test_recovery_path_is_beside_the_file(tmp_path):
    p = tmp_path / "a.bandsmith.json"
    assert recovery_path(p).parent == tmp_path
    assert recovery_path(p) != p


def test_loads_session_round_trip():
    text = dumps_session(sample())
    assert dumps_session(loads_session(text)) == text
