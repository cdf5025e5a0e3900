"""The ``bandsmith`` command, against the interface the README documents ("Command line").

The commands run in-process through ``bandsmith.app.entry.main`` (what the installed entry point
calls; tests/cli_helpers.py captures stdout, stderr and the exit status), each call once per run.
A few smoke tests (marked ``cli``) run the installed program itself and check that it prints
exactly what the in-process call prints; they fail when the program is not installed.
"""

from __future__ import annotations

import csv
import io
import json
import math
import subprocess

import numpy as np
import pytest
import scipy.signal
from numpy.testing import assert_allclose

from bandsmith.app.cli import main as cli_main
from cli_helpers import run_command, run_installed

cli = pytest.mark.cli


TANK = ["rlc-tank", "R1=3k3", "R2=6k8", "L=10m", "C=22n"]
MFB = ["mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n"]
SK = ["sallen-key", "R1=4k53", "R2=4k53", "R3=4k53", "C1=100n", "C2=100n", "RA=10k", "RB=22k1"]

# Bad input (README, "Command line", exit status): exit 2, one stderr line naming the field, nothing on stdout.
BAD = {
    "bad-value": (["analyze", "rlc-tank", "R1=4x7", "R2=6k8", "L=10m", "C=22n"], "R1"),
    "unknown-part": (["analyze", *TANK, "R9=1k"], "R9"),
    "missing-part": (["analyze", "rlc-tank", "R1=3k3", "R2=6k8", "L=10m"], "C"),
    "zero-value": (["analyze", "rlc-tank", "R1=3k3", "R2=0", "L=10m", "C=22n"], "R2"),
    "negative-value": (["analyze", "mfb", "R1=10k", "R2=-866", "R3=82k", "C1=10n", "C2=10n"], "R2"),
    "nan-value": (["analyze", "rlc-tank", "R1=3k3", "R2=6k8", "L=nan", "C=22n"], "L"),
    "inf-value": (["analyze", "rlc-tank", "R1=3k3", "R2=6k8", "L=10m", "C=inf"], "C"),
    "negative-optional": (["analyze", *TANK, "RL=-1"], "RL"),
    "bad-gbw-text": (["analyze", *TANK, "--gbw", "fast"], "gbw"),
    "zero-gbw": (["analyze", *TANK, "--gbw", "0"], "gbw"),
    "negative-gbw": (["analyze", *TANK, "--gbw=-1M"], "gbw"),
    "bad-a0": (["analyze", *TANK, "--gbw", "1M", "--a0", "lots"], "a0"),
    "bad-vin": (["analyze", *TANK, "--vin", "0"], "vin"),
    "bad-rload": (["analyze", *TANK, "--rload", "-600"], "rload"),
    "bad-tol": (["analyze", *TANK, "--tol-q", "5"], "tol-q"),  # a bare 5 is 500 %: refused
    "bad-points-text": (["sweep", *TANK, "--points", "many"], "points"),
    "bad-points-fraction": (["sweep", *TANK, "--points", "1.5"], "points"),
    "bad-points-one": (["sweep", *TANK, "--points", "1"], "points"),
    "bad-range": (["sweep", *TANK, "--from", "1M", "--to", "1k"], "to"),
    "unknown-topology": (["analyze", "twin-tee", "R1=1k"], "topology"),
    "malformed-token": (["analyze", "rlc-tank", "R1", "3k3", "R2=6k8", "L=10m", "C=22n"], "R1"),
    "empty-ref": (["sweep", "rlc-tank", "=3k3", "R2=6k8", "L=10m", "C=22n"], "=3k3"),
    "repeated-part": (["analyze", *TANK, "R1=1k"], "R1"),
    # no measurable band-pass peak (Q = R2·√(C/L) ≈ 1e600, beyond double precision): bad input, not NaN figures
    "unmeasurable": (["analyze", "rlc-tank", "R1=1", "R2=1e300", "L=1e-300", "C=1e300"], "R2"),
}

# the bad inputs also run through the entry point (one of each kind)
BAD_THROUGH_ENTRY = ["bad-value", "missing-part", "nan-value", "negative-gbw", "bad-points-fraction",
                     "unknown-topology", "unmeasurable"]

GOOD = {
    "topologies-json": ["topologies", "--json"],
    "help": ["--help"],
    "analyze-tank-gbw-json": ["analyze", *TANK, "RL=4R7", "--gbw", "1M", "--a0", "2e5", "--vin", "0.5", "--rload", "2k2", "--tol-f0", "0.5%", "--tol-q", "2%", "--tol-gain-db", "0.2", "--json"],
    "analyze-sk-json": ["analyze", *SK, "--gbw", "10M", "--json"],
    "analyze-mfb-gbw-table": ["analyze", *MFB, "--gbw", "1M"],
    "sweep-default-csv": ["sweep", *TANK, "--csv"],
    "sweep-tank-csv": ["sweep", *TANK, "--from", "1k", "--to", "100k", "--points", "401", "--csv"],
    "sweep-table": ["sweep", *MFB, "--points", "5"],
}

def _example_calls() -> dict[str, list[str]]:
    """``analyze ID REF=VALUE … --json`` for every circuit's example (started early; the test checks
    that these are the examples ``bandsmith topologies --json`` prints)."""
    from bandsmith.circuits import all_topologies

    return {
        t.id: ["analyze", t.id, *[f"{k}={v!r}" for k, v in t.to_json()["example"].items()], "--json"]
        for t in all_topologies()
    }


_RESULTS: dict[tuple, subprocess.CompletedProcess] = {}


def run(args) -> subprocess.CompletedProcess:
    """``bandsmith ARGS…`` through the entry point, once per run (several tests read one call)."""
    key = tuple(args)
    if key not in _RESULTS:
        _RESULTS[key] = run_command(list(args))
    return _RESULTS[key]


def _in_process(args, capsys):
    """Run ``bandsmith.app.cli.main`` (what the installed entry point calls) and capture its output."""
    try:
        code = cli_main(list(args))
    except SystemExit as exc:  # argparse's --help and errors
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


def ok_json(name):
    r = run(GOOD[name] if name in GOOD else _example_calls()[name])
    assert r.returncode == 0, r.stderr
    assert r.stderr == ""
    return json.loads(r.stdout)  # exactly one JSON object on stdout (json.loads refuses trailing text)


# ------------------------------------------------------------------ through bandsmith.app.cli.main


def _check_bad(code, stdout, stderr, field):
    assert code == 2, (code, stdout, stderr)
    assert stdout == ""
    lines = stderr.splitlines()
    assert len(lines) == 1, stderr
    assert "Traceback" not in stderr
    assert field in lines[0], f"{field!r} not named in {lines[0]!r}"
    assert len(lines[0]) > len(field) + 5  # a reason beside the field


@pytest.mark.parametrize("case", list(BAD))
def test_bad_input_in_process(case, capsys):
    # the same entry function the installed command calls; argparse's own errors exit via SystemExit
    args, field = BAD[case]
    _check_bad(*_in_process(args, capsys), field)


def test_topologies_table(capsys):
    code, out, err = _in_process(["topologies"], capsys)
    assert code == 0 and err == ""
    for word in ("rlc-tank", "mfb", "sallen-key", "R1", "RL"):
        assert word in out
    with pytest.raises(json.JSONDecodeError):
        json.loads(out)


def test_every_command_has_help(capsys):
    # every sub-command's --help prints (exit 0) without a traceback (a stray "%" once broke one)
    from bandsmith.app.cli import commands

    for cmd in commands():
        code, out, err = _in_process([cmd.name, "--help"], capsys)
        assert code == 0 and "usage:" in out and err == "", cmd.name


def test_sweep_with_finite_opamp_is_continuous(capsys):
    code, out, err = _in_process(["sweep", *SK, "--gbw", "1M", "--points", "300", "--csv"], capsys)
    assert code == 0 and err == ""
    rows = list(csv.reader(io.StringIO(out)))
    assert rows[0] == ["frequency_hz", "magnitude_db", "phase_deg", "group_delay_s"]
    a = np.array(rows[1:], dtype=float)
    assert a.shape == (300, 4)
    f, phase = a[:, 0], a[:, 2]
    assert np.all(np.diff(f) > 0)
    # unwrapped: a single-pole op-amp adds at most −90° more; no jump of ±360°
    assert np.max(np.abs(np.diff(phase))) < 90
    assert phase.max() - phase.min() < 360


# ------------------------------------------------------------------ bad input


@pytest.mark.parametrize("case", BAD_THROUGH_ENTRY)
def test_bad_input_exits_2_with_one_line_naming_the_field(case):
    args, field = BAD[case]
    r = run(args)
    _check_bad(r.returncode, r.stdout, r.stderr, field)


def test_bad_value_message_suggests_the_notation():
    # The README's example message ("Command line"): R1: "4x7" is not a value; try 4k7, 4700 or 4.7e3
    line = run(BAD["bad-value"][0]).stderr.strip()
    assert line.startswith("R1:") and '"4x7"' in line


# ------------------------------------------------------------------ topologies


def test_topologies_json():
    # README ("The circuits", `bandsmith topologies`): every circuit id; components with ref, kind, role, required
    data = ok_json("topologies-json")
    topos = {t["id"]: t for t in data["topologies"]}
    assert set(topos) == {"rlc-tank", "mfb", "sallen-key", "dabp", "state-variable", "tow-thomas", "akerberg-mossberg"}
    for t in topos.values():
        assert isinstance(t["title"], str) and t["title"]
        assert isinstance(t["inverting"], bool)
        for c in t["components"]:
            assert set(c) >= {"ref", "kind", "role", "required"}
            assert c["kind"] in ("R", "L", "C") and isinstance(c["required"], bool) and c["role"]
        refs = [c["ref"] for c in t["components"]]
        assert set(t["example"]) <= set(refs)
        assert all(isinstance(x, float) and math.isfinite(x) for x in t["example"].values())
    tank = {c["ref"]: c for c in topos["rlc-tank"]["components"]}
    assert list(tank) == ["R1", "R2", "L", "C", "RL"]
    assert not tank["RL"]["required"] and all(tank[r]["required"] for r in ("R1", "R2", "L", "C"))
    assert topos["rlc-tank"]["inverting"] and topos["mfb"]["inverting"] and not topos["sallen-key"]["inverting"]


def test_every_topology_example_analyses():
    # README (`bandsmith topologies`): every example is a working design — fed back to `analyze`, it analyses (exit 0)
    data = ok_json("topologies-json")
    calls = _example_calls()
    for t in data["topologies"]:
        args = ["analyze", t["id"], *[f"{k}={v!r}" for k, v in t["example"].items()], "--json"]
        assert args == calls[t["id"]]
        r = run(args)
        assert r.returncode == 0, (t["id"], r.stderr)
        out = json.loads(r.stdout)
        assert out["topology"] == t["id"]
        assert all(out["ideal"][k] is not None for k in ("f0_hz", "q", "gain_center"))
        assert (out["ideal"]["gain_center"] < 0) == t["inverting"]


def test_help_lists_every_command():
    r = run(GOOD["help"])
    assert r.returncode == 0, r.stderr
    for cmd in ("topologies", "analyze", "sweep"):
        assert cmd in r.stdout


# ------------------------------------------------------------------ analyze

FIGURES = {"f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "gain_center_db", "phase_center_deg"}
REQUIREMENTS = {"gbw_hz", "gbw_reason", "tol_f0", "tol_q", "tol_gain_db", "a0", "vin_v", "vout_peak_v",
                "slew_sine_v_per_us", "slew_step_v_per_us", "iout_peak_ma"}
TOP = {"topology", "components", "netlist", "ideal", "actual", "opamp", "requirements", "sensitivity"}


def _check_netlist(nl, refs):
    # README (`bandsmith analyze`, NETLIST): ground/input/output, elements with ref, kind, nodes (value; L: series_resistance)
    assert (nl["ground"], nl["input"], nl["output"]) == ("0", "in", "out")
    seen = set()
    for e in nl["elements"]:
        assert e["kind"] in ("R", "L", "C", "opamp")
        assert isinstance(e["nodes"], list)
        if e["kind"] == "opamp":
            assert len(e["nodes"]) == 3
        else:
            assert len(e["nodes"]) == 2 and isinstance(e["value"], float) and e["value"] > 0
        if e["kind"] == "L":
            assert isinstance(e["series_resistance"], float)
        seen.add(e["ref"])
    assert set(refs) - {"RL"} <= seen  # every part is in the netlist (RL as the L's series resistance)
    assert any(e["kind"] == "opamp" for e in nl["elements"])


@pytest.mark.parametrize("name", ["rlc-tank", "mfb"])
def test_analyze_json_ideal_keys(name):
    # the examples' analyses (`analyze ID REF=VALUE … --json`, no --gbw)
    out = ok_json(name)
    assert set(out) >= TOP
    assert set(out["ideal"]) >= FIGURES and set(out["requirements"]) >= REQUIREMENTS
    assert out["actual"] is None and out["opamp"] is None  # README (`bandsmith analyze`): only with --gbw
    _check_netlist(out["netlist"], out["components"])
    assert set(out["sensitivity"]) == {"f0", "q", "gain"}
    for by_ref in out["sensitivity"].values():
        assert set(by_ref) == set(out["components"])
        assert all(isinstance(x, float) for x in by_ref.values())
    req = out["requirements"]
    # README ("Definitions", `bandsmith analyze`) defaults: tolerances 0.01, 0.05, 0.5 dB; A0 1e5; vin 1 V
    assert_allclose([req["tol_f0"], req["tol_q"], req["tol_gain_db"], req["a0"], req["vin_v"]], [0.01, 0.05, 0.5, 1e5, 1.0])
    assert req["gbw_hz"] > 0 and req["gbw_reason"] is None
    # common practice, no source: an inverting band-pass has 180° at its centre
    assert_allclose(out["ideal"]["phase_center_deg"], 180.0, atol=1e-6)
    assert out["ideal"]["gain_center"] < 0
    assert_allclose(out["ideal"]["gain_center_db"], 20 * math.log10(-out["ideal"]["gain_center"]), rtol=1e-12)


def test_analyze_tank_json_values():
    # parallel resonance (circuit theory): f0 = 1/(2π√(LC)), Q = R2·√(C/L), gain −R2/R1
    out = ok_json("rlc-tank")
    v = out["components"]
    assert set(v) == {"R1", "R2", "L", "C", "RL"} and v["RL"] == 0.0
    f0 = 1 / (2 * math.pi * math.sqrt(v["L"] * v["C"]))
    gain = v["R2"] / v["R1"]
    assert_allclose(out["ideal"]["f0_hz"], f0, rtol=1e-9)
    assert_allclose(out["ideal"]["q"], v["R2"] * math.sqrt(v["C"] / v["L"]), rtol=1e-9)
    assert_allclose(out["ideal"]["gain_center"], -gain, rtol=1e-9)
    # derived (see tests/test_requirements.py): iout = vin/R1 at f0, slew_sine = 2π·f0·|gain|·vin
    assert_allclose(out["requirements"]["iout_peak_ma"], 1e3 / v["R1"], rtol=1e-9)
    assert_allclose(out["requirements"]["slew_sine_v_per_us"], 2 * math.pi * f0 * gain * 1e-6, rtol=1e-9)


def test_analyze_json_with_gbw_and_every_option():
    out = ok_json("analyze-tank-gbw-json")
    assert set(out) >= TOP
    assert out["components"]["RL"] == 4.7
    assert set(out["actual"]) >= FIGURES
    assert out["opamp"] == {"gbw_hz": 1e6, "a0": 2e5}
    req = out["requirements"]
    assert_allclose([req["tol_f0"], req["tol_q"], req["tol_gain_db"], req["a0"], req["vin_v"]], [0.005, 0.02, 0.2, 2e5, 0.5])
    L = next(e for e in out["netlist"]["elements"] if e["kind"] == "L")
    assert L["series_resistance"] == 4.7
    assert {e["ref"] for e in out["netlist"]["elements"]} == {"R1", "R2", "L", "C", "U1"}  # the load is no part
    # the finite op-amp moves f0 a little, and not past the tolerance the required GBW guards
    assert_allclose(out["actual"]["f0_hz"], out["ideal"]["f0_hz"], rtol=0.01)


def test_analyze_sallen_key_json():
    # README ("The circuits"): every resistor that sets a gain (the Sallen–Key amplifier's too) is in the netlist
    out = ok_json("analyze-sk-json")
    refs = {e["ref"] for e in out["netlist"]["elements"]}
    assert {"RA", "RB"} <= refs
    assert out["ideal"]["gain_center"] > 0
    assert_allclose(out["ideal"]["phase_center_deg"], 0.0, atol=1e-6)  # non-inverting: 0° at f0
    assert out["opamp"]["gbw_hz"] == 1e7 and out["opamp"]["a0"] == 1e5
    assert set(out["actual"]) >= FIGURES


@pytest.mark.parametrize("name", ["analyze-mfb-gbw-table"])
def test_analyze_readable_table(name):
    r = run(GOOD[name])
    assert r.returncode == 0 and r.stderr == ""
    text = r.stdout
    with pytest.raises(json.JSONDecodeError):
        json.loads(text)
    for word in ("f0", "Q", "bandwidth", "centre gain", "required GBW", "slew", "output current", "R1", "S(f0)"):
        assert word in text, word
    if "gbw" in name:
        assert "GBW 1 MHz" in text  # a column for the finite op-amp
    assert "Hz" in text and "Ω" in text


# ------------------------------------------------------------------ sweep


def _csv(name):
    r = run(GOOD[name])
    assert r.returncode == 0 and r.stderr == ""
    rows = list(csv.reader(io.StringIO(r.stdout)))
    assert rows[0] == ["frequency_hz", "magnitude_db", "phase_deg", "group_delay_s"]  # README (`bandsmith sweep`)
    return np.array(rows[1:], dtype=float)


def test_sweep_default_range_and_points():
    # README (`bandsmith sweep`): log-spaced, default 10 Hz to 10 MHz, 1000 points
    a = _csv("sweep-default-csv")
    assert a.shape == (1000, 4)
    f = a[:, 0]
    assert_allclose([f[0], f[-1]], [10.0, 10e6], rtol=1e-9)
    assert np.all(np.diff(f) > 0)
    assert_allclose(np.diff(np.log(f)), np.log(1e6) / 999, rtol=1e-6)  # log-spaced


def test_sweep_csv_matches_scipy_freqs():
    # scipy.signal.freqs on the tank's closed-form biquad −(s/(R1·C))/(s² + s/(R2·C) + 1/(LC))
    # (derived by nodal analysis; checked with sympy in test_circuits_sympy.py) against the command's CSV (printed to 10 significant digits)
    a = _csv("sweep-tank-csv")
    assert a.shape == (401, 4)
    f, mag_db, phase, gd = a.T
    assert_allclose([f[0], f[-1]], [1e3, 1e5], rtol=1e-9)
    r1, r2, L, c = 3.3e3, 6.8e3, 10e-3, 22e-9
    _, h = scipy.signal.freqs([-1 / (r1 * c), 0], [1, 1 / (r2 * c), 1 / (L * c)], worN=2 * np.pi * f)
    assert_allclose(mag_db, 20 * np.log10(np.abs(h)), atol=1e-7)
    ref_phase = np.degrees(np.unwrap(np.angle(h)))
    turns = np.round((phase[0] - ref_phase[0]) / 360)
    assert_allclose(phase, ref_phase + 360 * turns, atol=1e-6)
    # continuous (unwrapped) phase: no 360° jumps; an inverting band-pass turns through −180° at f0
    assert np.max(np.abs(np.diff(phase))) < 90
    assert np.all(np.diff(phase) < 0)
    assert np.all(gd > 0)


def test_sweep_table_output():
    r = run(GOOD["sweep-table"])
    assert r.returncode == 0 and r.stderr == ""
    lines = r.stdout.splitlines()
    assert "frequency_hz" in lines[0] and "group_delay_s" in lines[0]
    assert len([ln for ln in lines if ln.strip() and ln.strip()[0].isdigit()]) == 5


# ------------------------------------------------------------------ the installed program (smoke tests)


@cli
def test_installed_program_prints_what_the_entry_point_prints():
    # One JSON command and one bad input through the real program: the same stdout, stderr and
    # exit status as the in-process call the other tests read.
    for args in (GOOD["analyze-tank-gbw-json"], BAD["bad-value"][0]):
        real, here = run_installed(args), run(args)
        assert (real.returncode, real.stdout, real.stderr) == (here.returncode, here.stdout, here.stderr), args


@cli
def test_installed_program_help_lists_every_command():
    r = run_installed(["--help"])
    assert r.returncode == 0 and r.stderr == "", r.stderr
    from bandsmith.app.cli import commands

    for cmd in commands():
        assert cmd.name in r.stdout
