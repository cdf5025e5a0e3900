"""``bandsmith cascade`` run as a command (in-process through the entry point, tests/cli_helpers.py),
and its sections given back to ``bandsmith analyze``."""

import json
import math
from pathlib import Path

import pytest
from numpy.testing import assert_allclose

from cli_helpers import run_command

ROOT = Path(__file__).resolve().parents[1]


def bandsmith(*args, cwd=None):
    return run_command(args, cwd=cwd or ROOT)


def cascade_json(*args):
    p = bandsmith("cascade", *args, "--json")
    assert p.returncode == 0, p.stderr
    assert p.stderr == ""
    return json.loads(p.stdout)


FIGURES = ("f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "gain_center_db", "phase_center_deg")


def test_sections_reproduce_with_analyze():
    # A 12 kHz telemetry sub-carrier filter, 3 kHz wide, Chebyshev 0.5 dB (our own scenario).
    out = cascade_json("--response", "chebyshev", "--order", "4", "--f0", "12k", "--bw", "3k", "--gain", "4", "--gbw", "10meg", "--vin", "0.5")
    assert out["response"] == "chebyshev" and out["order"] == 4 and out["feasible"] is True
    assert len(out["sections"]) == 4
    assert_allclose(out["overall"]["f0_hz"], math.sqrt(out["overall"]["f_low_hz"] * out["overall"]["f_high_hz"]), rtol=1e-12)
    last = len(out["sections"])
    for sec in out["sections"]:
        parts = [f"{k}={v!r}" for k, v in sec["chosen"].items()]
        req = sec["requirements"]
        # The stage's drive and its own tolerances (a chain holds each stage tighter) go along.
        extra = ["--vin", repr(req["vin_v"]), "--tol-f0", repr(req["tol_f0"]), "--tol-q", repr(req["tol_q"]), "--tol-gain-db", repr(req["tol_gain_db"])]
        p = bandsmith("analyze", sec["circuit"], *parts, "--gbw", "10meg", *extra, "--json")
        assert p.returncode == 0, p.stderr
        got = json.loads(p.stdout)
        for key in FIGURES:
            assert_allclose(got["ideal"][key], sec["ideal"][key], rtol=1e-9, atol=1e-9)
        for key in ("gbw_hz", "vout_peak_v", "slew_sine_v_per_us", "slew_step_v_per_us", "iout_peak_ma"):
            if key == "iout_peak_ma" and sec["index"] < last:
                continue  # an inner stage also drives the next stage's input (tests/test_cascade.py)
            assert_allclose(got["requirements"][key], sec["requirements"][key], rtol=1e-9)


@pytest.mark.parametrize("order", ["0", "9", "2.5", "x", "-3"])
def test_order_must_be_integer_1_to_8(order):
    p = bandsmith("cascade", "--response", "butterworth", "--order", order, "--f0", "1k", "--bw", "100")
    assert p.returncode == 2
    assert p.stdout == ""
    lines = p.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("order:")


@pytest.mark.parametrize(
    "args,field",
    [
        (["--response", "butterworth", "--f0", "1k", "--bw", "100"], "order"),
        (["--order", "2", "--f0", "1k", "--bw", "100"], "response"),
        (["--response", "sharp", "--order", "2", "--f0", "1k", "--bw", "100"], "response"),
        (["--response", "butterworth", "--order", "2", "--f0", "1k"], "bw"),
        (["--response", "butterworth", "--order", "2", "--f0", "1k", "--bw", "4x7"], "bw"),
        (["--response", "butterworth", "--order", "2", "--f-low", "2k", "--f-high", "1k"], "f-high"),
        (["--response", "butterworth", "--order", "2", "--f0", "1k", "--bw", "100", "--ripple-db", "1"], "ripple-db"),
        (["--response", "butterworth", "--order", "2", "--f0", "1k", "--bw", "100", "--circuit", "twin-t"], "circuit"),
        (["--response", "butterworth", "--order", "2", "--f0", "1k", "--bw", "100", "--series", "E5"], "series"),
        (["--response", "butterworth", "--order", "2", "--f0", "1k", "--bw", "100", "--gain", "-2"], "gain"),
    ],
)
def test_bad_input_names_the_field(args, field):
    p = bandsmith("cascade", *args, "--json")
    assert p.returncode == 2
    assert p.stdout == ""
    lines = p.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"{field}:"), p.stderr


def test_edges_instead_of_centre_and_width():
    out = cascade_json("--response", "butterworth", "--order", "3", "--f-low", "9k", "--f-high", "11k", "--series", "exact")
    assert_allclose([out["overall"]["f_low_hz"], out["overall"]["f_high_hz"]], [9e3, 11e3], rtol=1e-4)
    assert out["reference_max_dev_db"] <= 0.01


def test_infeasible_is_a_plain_answer_and_save_writes_nothing(tmp_path):
    args = ["--response", "chebyshev", "--ripple-db", "1", "--order", "8", "--f0", "10k", "--bw", "10"]
    out = cascade_json(*args)
    assert out["feasible"] is False and "cannot be built" in out["reason"]
    target = tmp_path / "chain.json"
    p = bandsmith("cascade", *args, "--save", str(target))
    assert p.returncode == 2 and p.stderr.startswith("save:")
    assert not target.exists()


def test_save_opens_as_session(tmp_path):
    target = tmp_path / "chain.json"
    out = cascade_json("--response", "bessel", "--order", "3", "--f0", "5k", "--bw", "2k", "--gain", "2", "--save", str(target))
    doc = json.loads(target.read_text(encoding="utf-8"))
    assert doc["format"] == "bandsmith-session"
    assert len(doc["chains"]) == 1 and len(doc["chains"][0]["stages"]) == 3
    p = bandsmith("analyze", "--session", str(target), "--json")
    assert p.returncode == 0, p.stderr
    cands = json.loads(p.stdout)["candidates"]
    assert [c["id"] for c in cands] == ["stage-1", "stage-2", "stage-3"]
    for c, sec in zip(cands, out["sections"]):
        assert c["topology"] == sec["circuit"]
        assert_allclose(c["ideal"]["f0_hz"], sec["ideal"]["f0_hz"], rtol=1e-9)
        assert_allclose(c["ideal"]["q"], sec["ideal"]["q"], rtol=1e-9)


def test_readable_output():
    p = bandsmith("cascade", "--response", "butterworth", "--order", "2", "--f0", "1k", "--bw", "200", "--gain", "2")
    assert p.returncode == 0, p.stderr
    assert "stage" in p.stdout and "whole chain" in p.stdout
