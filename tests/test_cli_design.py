"""``bandsmith design``, ``compare``, ``export`` and ``analyze --session`` (the README's "Command line" is the reference).

Most calls run in-process through ``bandsmith.app.cli.main`` (the code the entry point runs); a few run the
installed command in a subprocess (marked ``cli``).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from numpy.testing import assert_allclose

from bandsmith.app.cli import main as cli_main
from bandsmith.circuits import topology_ids
from cli_helpers import run_command, run_installed

DESIGN_KEYS = {"topology", "spec", "feasible", "reason", "exact", "chosen", "series", "ideal", "errors", "netlist", "requirements", "sensitivity"}
ANALYZE_KEYS = {"topology", "components", "netlist", "ideal", "actual", "opamp", "requirements", "sensitivity"}
TARGET = ["--f0", "2k4", "--q", "8", "--gain", "4"]


def run(capsys, *argv):
    code = cli_main(list(argv))
    out = capsys.readouterr()
    return code, out.out, out.err


def run_json(capsys, *argv):
    code, out, err = run(capsys, *argv)
    assert code == 0, err
    assert out.count("\n") == 1  # exactly one JSON object
    return json.loads(out)


def test_design_json(capsys):
    j = run_json(capsys, "design", "mfb", *TARGET, "--json")
    assert DESIGN_KEYS <= set(j)
    assert j["feasible"] is True and j["reason"] is None
    assert j["series"] == "E24"
    assert j["spec"]["f0_hz"] == 2400.0 and j["spec"]["q"] == 8.0 and j["spec"]["gain"] == 4.0
    assert j["ideal"]["gain_center"] < 0  # the sign follows the circuit
    assert set(j["errors"]) == {"f0_pct", "q_pct", "gain_db"}


def test_design_bandwidth_equals_q(capsys):
    a = run_json(capsys, "design", "sallen-key", "--f0", "2400", "--bw", "300", "--gain", "4", "--json")
    b = run_json(capsys, "design", "sallen-key", *TARGET, "--json")
    assert a["chosen"] == b["chosen"]


def test_design_exact_round_trip_through_analyze(capsys):
    # The round trip: with --series exact, analysing the designed parts gives the target to 1e-9.
    for tid in ("rlc-tank", "mfb", "sallen-key"):
        d = run_json(capsys, "design", tid, "--f0", "15.5k", "--q", "3.3", "--gain", "2", "--series", "exact", "--json")
        parts = [f"{k}={v!r}" for k, v in d["chosen"].items()]
        a = run_json(capsys, "analyze", tid, *parts, "--json")
        assert_allclose(a["ideal"]["f0_hz"], 15.5e3, rtol=1e-9)
        assert_allclose(a["ideal"]["q"], 3.3, rtol=1e-9)
        assert_allclose(abs(a["ideal"]["gain_center"]), 2.0, rtol=1e-9)


def test_design_errors_equal_analysing_the_chosen_parts(capsys):
    d = run_json(capsys, "design", "mfb", *TARGET, "--series", "E12", "--json")
    a = run_json(capsys, "analyze", "mfb", *[f"{k}={v!r}" for k, v in d["chosen"].items()], "--json")
    assert_allclose(d["errors"]["f0_pct"], 100 * (a["ideal"]["f0_hz"] / 2400 - 1), rtol=1e-9, atol=1e-12)
    assert_allclose(d["errors"]["q_pct"], 100 * (a["ideal"]["q"] / 8 - 1), rtol=1e-9, atol=1e-12)
    assert_allclose(d["errors"]["gain_db"], a["ideal"]["gain_center_db"] - 20 * math.log10(4), rtol=1e-9, atol=1e-12)


def test_design_fix(capsys):
    j = run_json(capsys, "design", "mfb", *TARGET, "--fix", "C1=4n7", "--fix", "C2=4n7", "--json")
    assert j["chosen"]["C1"] == j["chosen"]["C2"] == 4.7e-9
    assert j["fixed"] == ["C1", "C2"]


def test_design_infeasible_is_exit_zero_with_a_reason(capsys):
    j = run_json(capsys, "design", "mfb", "--f0", "1k", "--q", "2", "--gain", "20", "--json")
    assert j["feasible"] is False
    assert "2·Q²" in j["reason"]
    assert j["chosen"] == {} and j["ideal"] is None
    code, out, err = run(capsys, "design", "mfb", "--f0", "1k", "--q", "2", "--gain", "20")
    assert code == 0 and "not feasible" in out


@pytest.mark.parametrize(
    "argv, field",
    [
        (["design", "mfb", "--q", "8", "--gain", "4"], "f0"),
        (["design", "mfb", "--f0", "2k4", "--gain", "4"], "q"),
        (["design", "mfb", "--f0", "2k4", "--q", "8"], "gain"),
        (["design", "mfb", "--f0", "2x4", "--q", "8", "--gain", "4"], "f0"),
        (["design", "mfb", "--f0=-2k", "--q", "8", "--gain", "4"], "f0"),
        (["design", "mfb", *TARGET, "--series", "E7"], "series"),
        (["design", "mfb", *TARGET, "--fix", "C9=1n"], "C9"),
        (["design", "mfb", *TARGET, "--fix", "C1=0"], "C1"),
        (["design", "mfb", *TARGET, "--fix", "C1"], "C1"),
        (["design", "twin-t", *TARGET], "topology"),
        (["design", "mfb", "--f0", "2k4", "--bw", "0", "--gain", "4"], "bw"),
        (["compare", "--f0", "2k4", "--q", "nan", "--gain", "4"], "q"),
        (["compare", "--f0", "2k4", "--q", "8", "--gain", "4", "--gbw", "-1"], "gbw"),
    ],
)
def test_bad_input_is_exit_two_one_line(capsys, argv, field):
    code, out, err = run(capsys, *argv)
    assert code == 2
    assert out == ""
    assert err.count("\n") == 1 and err.startswith(field), err


def test_q_and_bw_together_is_refused(capsys):
    with pytest.raises(SystemExit) as info:
        cli_main(["design", "mfb", "--f0", "1k", "--q", "2", "--bw", "500", "--gain", "1"])
    assert info.value.code == 2


def test_design_readable(capsys):
    code, out, _ = run(capsys, "design", "rlc-tank", *TARGET, "--gbw", "1M")
    assert code == 0
    for word in ("rlc-tank", "exact", "chosen", "centre gain", "required GBW", "impedance level", "S(Q)"):
        assert word in out


def test_compare_json(capsys):
    j = run_json(capsys, "compare", *TARGET, "--series", "E12", "--gbw", "3M", "--json")
    assert set(j) >= {"spec", "candidates"}
    assert [c["topology"] for c in j["candidates"]] == list(topology_ids())
    for c in j["candidates"]:
        assert DESIGN_KEYS <= set(c)
        assert {"spread", "part_count", "needs_inductor"} <= set(c)
        assert c["series"] == "E12"
        assert c["actual"] is not None


def test_compare_readable_table(capsys):
    code, out, _ = run(capsys, "compare", "--f0", "2k4", "--bw", "300", "--gain", "4")
    assert code == 0
    head = out.splitlines()
    assert any("rlc-tank" in l and "mfb" in l and "sallen-key" in l for l in head)
    for word in ("required GBW", "R spread", "inductor", "f0 error"):
        assert word in out


def test_save_then_analyze_session_then_export(tmp_path, capsys):
    path = tmp_path / "alarm.bandsmith.json"
    run_json(capsys, "compare", *TARGET, "--gbw", "2M", "--vin", "0.5", "--save", str(path), "--json")
    saved = path.read_bytes()
    obj = json.loads(saved)
    assert obj["format"] == "bandsmith-session" and obj["version"] == 1
    assert obj["opamp"]["gbw_hz"] == 2e6 and obj["target"]["vin_v"] == 0.5

    j = run_json(capsys, "analyze", "--session", str(path), "--json")
    assert [c["id"] for c in j["candidates"]] == list(topology_ids())
    for c in j["candidates"]:
        assert ANALYZE_KEYS <= set(c)
        assert c["opamp"] == {"gbw_hz": 2e6, "a0": 1e5}
        assert c["requirements"]["vin_v"] == 0.5

    for option, name in (("--netlist", "mfb.cir"), ("--parts", "mfb.csv"), ("--response", "mfb_resp.csv")):
        out = tmp_path / name
        code, stdout, err = run(capsys, "export", str(path), option, str(out), "--candidate", "mfb")
        assert code == 0, err
        assert out.exists() and "mfb" in stdout
    assert "BANDSMITH_OPAMP" in (tmp_path / "mfb.cir").read_text()
    assert "2000000.0" in (tmp_path / "mfb.cir").read_text()  # the session's GBW
    assert (tmp_path / "mfb.csv").read_text(encoding="utf-8").startswith("reference,kind,value,formatted_value,series,role")
    assert (tmp_path / "mfb_resp.csv").read_text().startswith("frequency_hz,magnitude_db,phase_deg,group_delay_s")
    assert path.read_bytes() == saved  # reading a session never writes it

    code, stdout, _ = run(capsys, "export", str(path), "--parts", "-")
    assert code == 0 and stdout.splitlines()[1].startswith("R1,")  # first candidate (rlc-tank) by default


def test_design_save_writes_one_candidate(tmp_path, capsys):
    path = tmp_path / "one.json"
    code, out, _ = run(capsys, "design", "sallen-key", *TARGET, "--fix", "C1=10n", "--save", str(path))
    assert code == 0 and "session written" in out
    obj = json.loads(path.read_text(encoding="utf-8"))
    assert [c["id"] for c in obj["candidates"]] == ["sallen-key"]
    assert obj["candidates"][0]["fixed"] == ["C1"] and obj["candidates"][0]["snap"] == "E24"


@pytest.mark.parametrize(
    "body, word",
    [
        ('{"format": "bandsmith-session", "version": 1, "target": {', "truncated"),
        ('{"format": "bandsmith-session" "version": 1}', "damaged"),
        ('{"format": "bandsmith-session", "version": 7, "target": {}}', "newer"),
        ('{"format": "bandsmith-session", "version": 1, "target": {"f0_hz": "fast", "q": 1, "gain": 1}}', "wrong type"),
        ('{"format": "bandsmith-session", "version": 1, "target": {"f0_hz": -5, "q": 1, "gain": 1}}', "impossible"),
    ],
)
def test_unusable_sessions_are_bad_input_and_untouched(tmp_path, capsys, body, word):
    path = tmp_path / "bad.bandsmith.json"
    path.write_text(body, encoding="utf-8")
    before = path.read_bytes()
    for argv in (["analyze", "--session", str(path), "--json"], ["export", str(path), "--parts", str(tmp_path / "p.csv")]):
        code, out, err = run(capsys, *argv)
        assert code == 2 and out == ""
        assert err.startswith("session:") and word in err and err.count("\n") == 1
    assert path.read_bytes() == before
    assert not (tmp_path / "p.csv").exists()


def test_export_needs_a_kind_and_a_known_candidate(tmp_path, capsys):
    path = tmp_path / "s.json"
    run(capsys, "design", "mfb", *TARGET, "--save", str(path))
    code, _, err = run(capsys, "export", str(path))
    assert code == 2 and err.startswith("export")
    code, _, err = run(capsys, "export", str(path), "--netlist", str(tmp_path / "x.cir"), "--candidate", "nope")
    assert code == 2 and err.startswith("candidate") and "mfb" in err
    assert not (tmp_path / "x.cir").exists()


def test_demo_session_analyses(capsys):
    demo = Path(__file__).resolve().parents[1] / "resources" / "demo_session.bandsmith.json"
    j = run_json(capsys, "analyze", "--session", str(demo), "--json")
    assert len(j["candidates"]) >= 3
    assert all("id" in c for c in j["candidates"])


# --------------------------------------------------------------------------- the installed command


@pytest.mark.cli
def test_installed_command_design_and_compare(tmp_path):
    # the real program (fails when it is not installed); the infeasible design goes through the
    # entry point in-process, the success and the bad input through the program itself
    p = run_installed(["compare", *TARGET, "--json", "--save", str(tmp_path / "s.json")])
    assert p.returncode == 0, p.stderr
    j = json.loads(p.stdout)
    assert len(j["candidates"]) == len(topology_ids())
    p = run_command(["design", "mfb", "--f0", "1k", "--q", "1", "--gain", "9", "--json"])
    assert p.returncode == 0 and json.loads(p.stdout)["feasible"] is False
    p = run_installed(["design", "mfb", "--f0", "1k", "--q", "1", "--gain", "x"])
    assert p.returncode == 2 and p.stdout == "" and p.stderr.startswith("gain") and "Traceback" not in p.stderr
