"""Hostile input: each test here failed before its fix (one finding each, see the docstrings).

The contract checked is the project's own rule for bad input: an :class:`InputError` (exit 2 on
the command line, one line naming the field) or a correct result, never a crash or a file that
does something the user did not ask for.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from bandsmith.app.cli import main as cli_main
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.files.session import CandidateEntry, Session, SessionError, Target, load_session, save_session

INJECTED = "mfb\n.control\nshell echo injected\n.endc\n*"


def _session_obj(**cand) -> dict:
    entry = {"id": "mfb", "topology": "mfb", "values": dict(get_topology("mfb").example)}
    entry.update(cand)
    return {"format": "bandsmith-session", "version": 1,
            "target": {"f0_hz": 2400.0, "q": 8.0, "gain": 4.0}, "candidates": [entry]}


def _write(tmp_path: Path, obj, name="s.json") -> Path:
    p = tmp_path / name
    p.write_text(json.dumps(obj), encoding="utf-8")
    return p


def _cli(argv, capsys):
    try:
        code = cli_main(list(argv))
    except SystemExit as exc:  # argparse's own errors
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


# ------------------------------------------------------------------ 1. netlist injection


def test_reader_refuses_an_id_with_a_newline_naming_the_field(tmp_path):
    p = _write(tmp_path, _session_obj(id=INJECTED))
    with pytest.raises(SessionError) as exc:
        load_session(p)
    assert "candidates[0].id" in str(exc.value)
    assert "\n" not in str(exc.value)


@pytest.mark.parametrize("bad", ["", " mfb", "-mfb", "a b", "a;b", "x" * 65, "é", "a\rb", "<b>"])
def test_candidate_entry_refuses_ids_outside_the_character_set(bad):
    with pytest.raises(InputError) as exc:
        CandidateEntry(bad, "mfb", dict(get_topology("mfb").example))
    assert exc.value.field == "id"


@pytest.mark.parametrize("good", ["mfb", "sallen-key-2", "stage-1", "A.b_c-9", "x" * 64])
def test_candidate_entry_accepts_ids_of_the_character_set(good):
    assert CandidateEntry(good, "mfb", dict(get_topology("mfb").example)).id == good


def test_export_of_an_injected_session_writes_no_netlist(tmp_path, capsys):
    p = _write(tmp_path, _session_obj(id=INJECTED))
    before = p.read_bytes()
    out = tmp_path / "x.cir"
    code, _, err = _cli(["export", str(p), "--netlist", str(out)], capsys)
    assert code == 2 and not out.exists()
    assert err.count("\n") == 1 and "candidates[0].id" in err
    assert p.read_bytes() == before


def test_chain_id_is_checked():
    from bandsmith.chain.cascade import Chain

    with pytest.raises(InputError) as exc:
        Chain(INJECTED, None, ())  # the id is checked first
    assert exc.value.field == "id"


def test_netlist_comment_never_breaks_a_line():
    """A duck-typed entry (not validated) still cannot put a line into the netlist."""
    from bandsmith.files.exports import spice_netlist

    class Loose:
        id = INJECTED
        topology_id = "mfb"
        values = dict(get_topology("mfb").example)

    text = spice_netlist(Loose())
    assert not any(line.startswith((".control", "shell", ".endc")) for line in text.splitlines())


def test_parts_csv_quotes_what_needs_quoting():
    """CSV (RFC 4180, section 2): a field with a comma, quote or line break is quoted; Python's
    csv module reads it back as one field."""
    import csv
    import io

    from bandsmith.common.limits import one_line

    row = ["a,b", 'q"x', "l\nm"]
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerow(row)
    assert next(csv.reader(io.StringIO(buf.getvalue()))) == row
    assert "\n" not in one_line("a\nb")


def test_report_escapes_notes():
    """HTML 5 (WHATWG, section 13.1.2): text with < and & must be written as character references."""
    from bandsmith.app.report.builder import build_report_html

    entry = CandidateEntry("mfb", "mfb", dict(get_topology("mfb").example), notes="<script>x</script> & co")
    s = Session(Target(2400.0, 8.0, 4.0), (entry,), notes="<img src=x onerror=y>")
    html = build_report_html(s, images=False)
    assert "<script>x" not in html and "<img src=x" not in html
    assert "&lt;script&gt;" in html and "&lt;img src=x" in html


# ------------------------------------------------------------------ 2. fit memory


def test_fit_memory_does_not_grow_with_the_square_of_the_points(tmp_path):
    """6 000 points: a full SVD's left factor alone would be 12 000² doubles (1.15 GB); the thin
    SVD and chunked evaluation keep the whole fit far below that (numpy.linalg.svd,
    ``full_matrices=False``)."""
    import tracemalloc

    import numpy as np
    import scipy.signal

    from measured_helpers import MFB, biquad, moved, true_figures

    from bandsmith.bench.diagnose import diagnose
    from bandsmith.bench.measured import read_measurement
    from bandsmith.design.candidate import Candidate

    f0 = true_figures("mfb", MFB)["f0_hz"]
    f = np.geomspace(f0 / 3.0, f0 * 3.0, 6000)
    b, a = biquad("mfb", moved(MFB, {"R3": 0.02}))
    _, h = scipy.signal.freqs(b, a, worN=2 * np.pi * f)  # the board, outside the project
    p = tmp_path / "m.csv"
    p.write_text("f,db,deg\n" + "".join(f"{x:.17g},{20 * np.log10(abs(y)):.17g},{np.degrees(np.angle(y)):.17g}\n" for x, y in zip(f, h)))
    m = read_measurement(p)
    tracemalloc.start()
    try:
        d = diagnose(Candidate("mfb", MFB), m)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 150e6
    assert d.to_json()  # a complete result


# ------------------------------------------------------------------ 3. finite but extreme values

EXTREME = [
    (["analyze", "mfb", "R1=10k", "R2=866", "R3=1e-320", "C1=10n", "C2=10n"], "R3"),
    (["analyze", "mfb", "R1=10k", "R2=866", "R3=1e-300", "C1=10n", "C2=10n"], "R3"),
    (["noise", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", "--en", "1e300"], "en"),
    (["design", "mfb", "--f0", "1e-320", "--q", "8", "--gain", "4"], "f0"),
    (["design", "mfb", "--f0", "1e308", "--q", "8", "--gain", "4"], "f0"),
    (["design", "mfb", "--f0", "1k", "--q", "1e-300", "--gain", "4"], "q"),
    (["design", "mfb", "--f0", "1k", "--q", "8", "--gain", "4", "--gbw", "1e-320"], "gbw"),
    # found by the long fuzz run (BANDSMITH_FUZZ_EXAMPLES=1500)
    (["analyze", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", "--rload", "1e-320"], "rload"),
    (["noise", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", "--vin", "1e-320"], "vin"),
]


@pytest.mark.parametrize("argv,field", EXTREME)
def test_extreme_values_are_bad_input_naming_the_field(argv, field, capsys):
    code, out, err = _cli(argv, capsys)
    assert code == 2, err
    assert err.count("\n") == 1 and err.startswith(f"{field}: ")
    assert "range" in err


def test_a_vanishing_chebyshev_ripple_is_bad_input(capsys):
    code, _, err = _cli(["cascade", "--response", "chebyshev", "--order", "2", "--f0", "2k", "--bw", "500", "--ripple-db", "1e-320"], capsys)
    assert code == 2 and err.startswith("ripple-db: ")


def test_an_underflowing_literal_is_not_reported_as_zero():
    from bandsmith.common.values import parse_positive

    with pytest.raises(InputError) as exc:
        parse_positive("1e-400", field="R3")
    assert "got 0" not in str(exc.value) and "too small" in str(exc.value)
    from bandsmith.common.values import parse_value

    assert parse_value("0e-400", field="x") == 0.0


def test_extreme_values_in_a_session_name_the_key(tmp_path):
    obj = _session_obj()
    obj["candidates"][0]["values"]["R3"] = 1e-300
    with pytest.raises(SessionError) as exc:
        load_session(_write(tmp_path, obj))
    assert "candidates[0].values.R3" in str(exc.value)
    obj = _session_obj()
    obj["target"]["f0_hz"] = 1e300
    with pytest.raises(SessionError) as exc:
        load_session(_write(tmp_path, obj))
    assert "target.f0" in str(exc.value)
    obj = _session_obj()
    obj["opamp"] = {"gbw_hz": 1e-320}
    with pytest.raises(SessionError) as exc:
        load_session(_write(tmp_path, obj))
    assert "opamp.gbw_hz" in str(exc.value)


@pytest.mark.parametrize("rows,what", [
    ("1e-300,0,0\n1e300,0,0\n" + "".join(f"{k}e3,0,0\n" for k in range(1, 9)), "frequency"),
    ("".join(f"{k}e3,{1e300 if k == 4 else 0},0\n" for k in range(1, 9)), "magnitude"),
])
def test_extreme_measured_data_names_the_line(tmp_path, rows, what):
    from bandsmith.bench.measured import MeasurementError, read_measurement

    p = tmp_path / "m.csv"
    p.write_text("f_hz,mag_db,phase_deg\n" + rows)
    with pytest.raises(MeasurementError) as exc:
        read_measurement(p)
    assert what in str(exc.value) and "line" in str(exc.value) and "range" in str(exc.value)


# ------------------------------------------------------------------ 4. readers without limits


def _fifo(tmp_path):
    import os

    p = tmp_path / "pipe"
    os.mkfifo(p)
    return p


def test_session_reader_refuses_a_fifo_and_a_device(tmp_path):
    """POSIX: open(2) with O_NONBLOCK on a FIFO returns at once; the reader must not wait."""
    with pytest.raises(SessionError) as exc:
        load_session(_fifo(tmp_path))
    assert "pipe" in str(exc.value)
    with pytest.raises(SessionError) as exc:
        load_session("/dev/zero")
    assert "device" in str(exc.value)


def test_shelf_and_measured_readers_refuse_a_fifo(tmp_path):
    from bandsmith.bench.measured import MeasurementError, read_measurement
    from bandsmith.bench.shelf import ShelfError, load_shelf

    with pytest.raises(ShelfError):
        load_shelf(_fifo(tmp_path))
    with pytest.raises(MeasurementError) as exc:
        read_measurement("/dev/zero")
    assert "device" in str(exc.value)


def test_file_size_caps(tmp_path, monkeypatch):
    from bandsmith.common import limits

    p = _write(tmp_path, _session_obj())
    monkeypatch.setitem(limits.MAX_FILE_BYTES, "session file", 100)
    with pytest.raises(SessionError) as exc:
        load_session(p)
    assert "at most" in str(exc.value)


def test_export_of_a_fifo_session_exits_2(tmp_path, capsys):
    code, _, err = _cli(["export", str(_fifo(tmp_path)), "--netlist", str(tmp_path / "x.cir")], capsys)
    assert code == 2 and err.count("\n") == 1


# ------------------------------------------------------------------ 5. lone surrogates


def test_a_lone_surrogate_is_refused_on_read_naming_where(tmp_path):
    """RFC 8259, section 8.2: a \\u escape of a lone surrogate is legal JSON but no Unicode
    character; UTF-8 (RFC 3629) cannot encode it, so such a session could never be saved."""
    p = tmp_path / "s.json"
    p.write_text(json.dumps(_session_obj(notes="x")).replace('"notes": "x"', '"notes": "a\\ud800b"'), encoding="utf-8")
    with pytest.raises(SessionError) as exc:
        load_session(p)
    assert "candidates[0].notes" in str(exc.value) and "surrogate" in str(exc.value)


def test_a_lone_surrogate_is_refused_on_edit_and_on_save(tmp_path):
    with pytest.raises(InputError) as exc:
        CandidateEntry("mfb", "mfb", dict(get_topology("mfb").example), notes="a\ud800")
    assert exc.value.field == "notes"
    with pytest.raises(InputError):
        Session(Target(2400.0, 8.0, 4.0), (), notes="\udfff")
    s = Session(Target(2400.0, 8.0, 4.0), (), extras={"later": {"k": "\ud800"}})
    out = tmp_path / "out.json"
    with pytest.raises(SessionError) as exc:  # an InputError: the window's Save shows it
        save_session(s, out)
    assert "later.k" in str(exc.value) and not out.exists()


def test_report_of_a_surrogate_session_exits_2(tmp_path, capsys):
    p = tmp_path / "s.json"
    p.write_text(json.dumps(_session_obj()).replace('"format"', '"notes": "\\udc80", "format"'), encoding="utf-8")
    code, _, err = _cli(["report", str(p), "-o", str(tmp_path / "r.html")], capsys)
    assert code == 2 and err.count("\n") == 1 and "surrogate" in err


# ------------------------------------------------------------------ 6. recovery copies and reused process ids


def test_a_copy_left_by_an_earlier_run_with_this_pid_is_offered_and_not_overwritten(tmp_path):
    """A reused process id (Linux: ids wrap and containers restart from 1): the copy a crashed
    run left under this very pid belongs to another run and must be offered, not taken over."""
    import os

    pytest.importorskip("PySide6")
    from bandsmith.app.window import recovery

    old_key = f"unsaved-{os.getpid()}-0123456789ab"
    copy = tmp_path / f"{old_key}.bandsmith.json"
    s = Session(Target(2400.0, 8.0, 4.0), ())
    save_session(s, copy)
    meta = {"pid": os.getpid(), "run": "0123456789ab", "start": "1", "original": "", "saved_at": 5.0}
    (tmp_path / f"{old_key}.meta.json").write_text(json.dumps(meta))
    found = recovery.left_behind(tmp_path)
    assert [c.path for c in found] == [copy]
    assert found[0].load() == s


def test_a_copy_of_a_live_process_with_another_start_time_is_offered(tmp_path):
    import os

    pytest.importorskip("PySide6")
    from bandsmith.app.window import recovery

    parent = os.getppid()
    if recovery._start_time(parent) is None:
        pytest.skip("no /proc start times here")
    copy = tmp_path / f"unsaved-{parent}-feedfacecafe.bandsmith.json"
    save_session(Session(Target(2400.0, 8.0, 4.0), ()), copy)
    meta = {"pid": parent, "run": "feedfacecafe", "start": "-1", "original": "", "saved_at": 5.0}
    (tmp_path / f"unsaved-{parent}-feedfacecafe.meta.json").write_text(json.dumps(meta))
    assert [c.path for c in recovery.left_behind(tmp_path)] == [copy]
    meta["start"] = recovery._start_time(parent)  # the same run: still alive, not offered
    (tmp_path / f"unsaved-{parent}-feedfacecafe.meta.json").write_text(json.dumps(meta))
    assert recovery.left_behind(tmp_path) == []


# ------------------------------------------------------------------ 7. the atomic writer


def test_writing_through_a_symlink_updates_its_target(tmp_path):
    """POSIX rename(2) replaces the link itself; a save must update the file the link names."""
    import os

    from bandsmith.common.atomic import write_bytes_atomic

    real = tmp_path / "real.txt"
    real.write_text("old")
    link = tmp_path / "link.txt"
    os.symlink(real, link)
    write_bytes_atomic(link, "new")
    assert link.is_symlink() and real.read_text() == "new"


@pytest.mark.parametrize("kind", ["fifo", "device", "folder", "dot"])
def test_the_writer_refuses_what_is_not_a_regular_file(tmp_path, kind):
    import os
    import stat

    from bandsmith.common.atomic import write_bytes_atomic

    if kind == "fifo":
        target = _fifo(tmp_path)
    elif kind == "device":
        target = tmp_path / "null-link"
        os.symlink("/dev/null", target)  # written through a link to a device: refused, device kept
    elif kind == "folder":
        target = tmp_path / "d"
        target.mkdir()
    else:
        target = tmp_path / "."
    with pytest.raises(OSError) as exc:
        write_bytes_atomic(target, "x")
    assert "regular file" in str(exc.value) or "folder" in str(exc.value)
    if kind == "device":
        assert stat.S_ISCHR(os.stat("/dev/null").st_mode)
    if kind == "fifo":
        assert stat.S_ISFIFO(os.stat(target).st_mode)


def test_stale_temporary_files_of_killed_saves_are_cleared(tmp_path):
    import subprocess
    import sys

    from bandsmith.common.atomic import write_bytes_atomic

    gone = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    pid = int(gone.stdout)  # a process that has ended
    stale = tmp_path / f".s.json.bsw{pid}-abc123.tmp"
    stale.write_text("half")
    other = tmp_path / f".t.json.bsw{pid}-abc123.tmp"  # another file's: left alone
    other.write_text("half")
    write_bytes_atomic(tmp_path / "s.json", "{}")
    assert not stale.exists() and other.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([other.name, "s.json"])


def test_cli_output_dot_is_a_clear_message(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    p = _write(tmp_path, _session_obj())
    code, _, err = _cli(["export", str(p), "--netlist", "."], capsys)
    assert code == 2 and "busy" not in err and "folder" in err


# ------------------------------------------------------------------ 8. messages and wrongly accepted inputs


@pytest.mark.parametrize("cmd", [
    ["design", "mfb", "--f0", "1k", "--q", "5", "--gain", "2"],
    ["compare", "--f0", "1k", "--q", "5", "--gain", "2"],
])
def test_save_with_an_empty_name_is_bad_input(cmd, capsys):
    code, _, err = _cli(cmd + ["--save", ""], capsys)
    assert code == 2 and err.startswith("save: ")


@pytest.mark.parametrize("part,text,unit", [("C1", "4k7Ω", "ohm"), ("C1", "1MEGA", "ampere"), ("R1", "10nF", "farad")])
def test_a_unit_contradicting_the_part_kind_is_refused(part, text, unit, capsys):
    """SI brochure (BIPM, 9th edition, table 4): Ω, F, A are distinct units; "1MEGA" reads as one
    megaampere (SPICE's MEG, then the ampere's symbol)."""
    vals = {"R1": "10k", "R2": "866", "R3": "82k", "C1": "10n", "C2": "10n", part: text}
    code, _, err = _cli(["analyze", "mfb", *(f"{k}={v}" for k, v in vals.items())], capsys)
    assert code == 2 and err.startswith(f"{part}: ") and unit in err


def test_a_matching_unit_is_still_read(capsys):
    code, _, err = _cli(["analyze", "mfb", "R1=10kΩ", "R2=866ohm", "R3=82k", "C1=10nF", "C2=10n"], capsys)
    assert code == 0, err


def test_long_inputs_are_not_echoed_whole(capsys, tmp_path):
    code, _, err = _cli(["analyze", "mfb", "R1=" + "x" * 10_000, "R2=866", "R3=82k", "C1=10n", "C2=10n"], capsys)
    assert code == 2 and len(err) < 400
    code, _, err = _cli(["tolerance", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", "--seed", "9" * 5000], capsys)
    assert code == 2 and err.startswith("seed: ") and len(err) < 400
    code, _, err = _cli(["report", str(_write(tmp_path, _session_obj())), "-o", str(tmp_path / ("a" * 300 + ".html"))], capsys)
    assert code == 2 and err.startswith("output: ")


def test_sallen_key_with_r1_and_r2_pinned_meets_the_target():
    """Finding 11: pinning R1 and R2 ended in ZeroDivisionError. The exact parts are checked on
    the closed-form variant-A biquad (S. Franco, Design with Operational Amplifiers and Analog
    Integrated Circuits, 3rd ed., ch. 3, Sallen–Key band-pass): ω0 = √a0, Q = ω0/a1, H(jω0) = b1/a1."""
    import math

    from bandsmith.circuits.synthesis import Spec
    from bandsmith.design.designer import design

    r = design("sallen-key", Spec(3300.0, 4.0, 3.0), fixed={"R1": "22k", "R2": "6k8"})
    assert r.feasible
    v = r.exact
    k = 1.0 + v["RB"] / v["RA"]
    r1, r2, r3, ca, cb = (v[x] for x in ("R1", "R2", "R3", "C1", "C2"))
    a1 = 1 / (r1 * ca) + (1 - k) / (r2 * ca) + 1 / (r3 * ca) + 1 / (r3 * cb)
    a0 = (r1 + r2) / (r1 * r2 * r3 * ca * cb)
    w0 = math.sqrt(a0)
    assert w0 / (2 * math.pi) == pytest.approx(3300.0, rel=1e-6)
    assert w0 / a1 == pytest.approx(4.0, rel=1e-6)
    assert k / (r1 * ca) / a1 == pytest.approx(3.0, rel=1e-6)


def test_spread_envelope_reads_past_the_first_chunk():
    """Finding 12: more trials than one chunk (CHUNK = 20 000) raised ValueError."""
    import numpy as np

    from bandsmith.spread.tolerance import CHUNK, SpreadSettings, magnitude_envelope

    nl = get_topology("mfb").netlist(get_topology("mfb").example)
    n = CHUNK + 1500
    env = magnitude_envelope(nl, SpreadSettings(trials=n + 10, seed=4), np.geomspace(500, 8000, 20), trials=n)
    assert env.trials == n and env.magnitude_db.shape == (3, 20)
    assert np.all(np.diff(env.magnitude_db, axis=0) >= -1e-12)  # 5th ≤ 50th ≤ 95th percentile


def test_a_damaged_shelf_section_is_said_in_the_report():
    """Finding 13: the other damaged sections get a note; the shelf's was dropped silently."""
    from bandsmith.app.report.builder import build_report_html
    from bandsmith.app.window.verdicts import SESSION_KEY

    entry = CandidateEntry("mfb", "mfb", dict(get_topology("mfb").example))
    s = Session(Target(2400.0, 8.0, 4.0), (entry,), extras={SESSION_KEY: {"amps": [{"name": 5}]}})
    html = build_report_html(s, images=False)
    assert "op-amp models cannot be used" in html


def test_an_unreachable_target_blames_the_target_not_a_part(capsys):
    """Finding 9: a target whose parts fall outside the analysable range was reported as the
    part's fault ("R2: ..."), a part the user never typed."""
    code, out, err = _cli(["design", "mfb", "--f0", "1e15", "--q", "1e5", "--gain", "1e6"], capsys)
    assert code == 0 and not err
    assert "not feasible: this target needs R2" in out


@pytest.mark.parametrize("col", [1, 2])
def test_an_overflowing_number_in_a_measured_file_names_its_line(tmp_path, col):
    """Finding 9: 1e400 overflows IEEE 754 double precision to infinity; the message must still
    give the line."""
    from bandsmith.bench.measured import MeasurementError, read_measurement

    rows = [[f"{k}e3", "0", "0"] for k in range(1, 10)]
    rows[4][col] = "1e400"
    p = tmp_path / "m.csv"
    p.write_text("f,db,deg\n" + "".join(",".join(r) + "\n" for r in rows))
    with pytest.raises(MeasurementError) as exc:
        read_measurement(p)
    assert "line 6" in str(exc.value)


def test_an_empty_export_name_is_named(tmp_path, capsys):
    code, _, err = _cli(["export", str(_write(tmp_path, _session_obj())), "--netlist", ""], capsys)
    assert code == 2 and err.startswith("netlist: ")


def test_reader_refuses_a_chain_id_with_a_newline(tmp_path):
    obj = _session_obj()
    obj["chains"] = [{"id": INJECTED, "settings": {}, "stages": []}]
    with pytest.raises(SessionError) as exc:
        load_session(_write(tmp_path, obj))
    assert "chains[0].id" in str(exc.value)


def test_argument_errors_are_cut_too(capsys):
    code, _, err = _cli(["tolerance", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", "--dist", "z" * 5000], capsys)
    assert code == 2 and len(err) < 400 and err.count("\n") == 1


# ------------------------------------------------------------------ counts (a session's candidates)


def test_a_session_of_too_many_candidates_is_refused_on_read(tmp_path):
    # bandsmith.common.limits.MAX_CANDIDATES bounds what the window, the analyses and the report
    # must handle (the report's cost grows with the candidates); the file is left as it is.
    import json

    from bandsmith.common.limits import MAX_CANDIDATES
    from bandsmith.files.session import SessionError, load_session

    demo = json.loads((Path(__file__).resolve().parents[1] / "resources" / "demo_session.bandsmith.json").read_text())
    first = demo["candidates"][0]
    demo["candidates"] = [dict(first, id=f"c{i}") for i in range(MAX_CANDIDATES + 1)]
    path = tmp_path / "many.bandsmith.json"
    path.write_text(json.dumps(demo))
    before = path.read_bytes()
    with pytest.raises(SessionError) as info:
        load_session(path)
    assert "candidates" in str(info.value) and str(MAX_CANDIDATES) in str(info.value)
    assert path.read_bytes() == before


def test_a_full_session_takes_no_more_candidates_and_says_why():
    from dataclasses import replace

    from bandsmith.app.document.model import Document
    from bandsmith.app.window.demo import demo_session
    from bandsmith.common.limits import MAX_CANDIDATES

    s = demo_session()
    first = s.candidates[0]
    full = replace(s, candidates=tuple(replace(first, id=f"c{i}") for i in range(MAX_CANDIDATES)))
    doc = Document(full)
    notices = []
    doc.notice.connect(notices.append)
    assert doc.duplicate("c0") is None and doc.add_candidate("mfb") is None
    assert len(doc.session.candidates) == MAX_CANDIDATES
    assert notices and "at most" in notices[-1]


@pytest.mark.parametrize("q", [0.5, 0.3])
def test_a_q_where_the_state_variable_leaves_no_gain_is_its_reason_not_a_crash(q, capsys):
    # The state-variable band-pass's centre gain is at most 2·Q − 1 with equal capacitors (its
    # gain-Q tie, derived from its transfer function, module notes): none at Q ≤ 0.5. The compare
    # must say so for that circuit and go on with the others. Q 0.5 once raised ZeroDivisionError
    # while the message was being written.
    assert cli_main(["compare", "--f0", "1000", "--q", str(q), "--gain", "1.2", "--series", "E24", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    sv = next(c for c in out["candidates"] if c["topology"] == "state-variable")
    assert sv["feasible"] is False
    assert "no gain at all" in sv["reason"] and "choose another circuit" in sv["reason"]
    assert any(c["feasible"] for c in out["candidates"])
