"""``bandsmith tolerance`` and ``bandsmith noise`` run as commands, in-process through the entry point (tests/cli_helpers.py) (README, `bandsmith tolerance` and `bandsmith noise`)."""

import json
import math
from pathlib import Path

import pytest
import scipy.constants
from numpy.testing import assert_allclose

from cli_helpers import run_command

ROOT = Path(__file__).resolve().parents[1]
MFB = ["mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n"]
TANK = ["rlc-tank", "R1=3k3", "R2=6k8", "L=10m", "C=22n"]
STATS = ["mean", "std", "min", "p1", "p5", "p50", "p95", "p99", "max"]
FIGURES = {"f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "gain_center_db", "phase_center_deg"}


def bandsmith(*args):
    return run_command(args, cwd=ROOT)


def ok_json(*args):
    p = bandsmith(*args, "--json")
    assert p.returncode == 0, p.stderr
    assert p.stderr == ""
    return json.loads(p.stdout)


def bad(*args, field):
    p = bandsmith(*args)
    assert p.returncode == 2, (p.returncode, p.stderr)
    assert p.stdout == ""
    lines = p.stderr.strip().splitlines()
    assert len(lines) == 1, p.stderr
    assert field in lines[0] and "Traceback" not in p.stderr
    return lines[0]


# -- tolerance ----------------------------------------------------------------------------------


def test_tolerance_json_shape():
    out = ok_json("tolerance", *MFB, "--tol", "C2=2%", "--trials", "5000", "--seed", "21", "--gbw", "1meg", "--gbw-tol", "20%")
    for key in ("trials", "seed", "dist", "tolerances", "nominal", "f0_hz", "q", "gain_center_db", "window", "yield", "worst_case"):
        assert key in out
    assert (out["trials"], out["seed"], out["dist"]) == (5000, 21, "uniform")
    assert out["tolerances"] == {"R1": 0.01, "R2": 0.01, "C1": 0.05, "C2": 0.02, "R3": 0.01}
    assert set(out["nominal"]) == FIGURES
    for key in ("f0_hz", "q", "gain_center_db"):
        assert list(out[key]) == STATS
        st = out[key]
        assert st["min"] <= st["p1"] <= st["p5"] <= st["p50"] <= st["p95"] <= st["p99"] <= st["max"]
        lo, hi = out["worst_case"][key]
        assert lo <= hi
        corners = out["worst_case"]["corners"][key]
        assert len(corners) == 2 and set(corners[0]) == {"R1", "R2", "R3", "C1", "C2", "gbw"}
    assert out["window"] == {"f0": 0.05, "q": 0.1, "gain_db": 1.0}
    assert 0.0 <= out["yield"] <= 1.0
    assert out["gbw_tol"] == 0.2 and out["opamp"]["gbw_hz"] == 1e6


def test_resistors_held_exact_fix_the_tank_gain():
    # The tank's centre gain is −R2/R1 (parallel tank, derived by nodal analysis): with --tol R=0% it cannot move.
    out = ok_json("tolerance", *TANK, "--tol", "R=0%", "--trials", "3000")
    assert out["tolerances"]["R1"] == 0.0 and out["tolerances"]["R2"] == 0.0
    assert out["tolerances"]["L"] == 0.1 and out["tolerances"]["C"] == 0.05
    assert_allclose(out["gain_center_db"]["std"], 0.0, atol=1e-9)
    assert_allclose(out["gain_center_db"]["mean"], 20 * math.log10(6800 / 3300), rtol=1e-9)
    assert out["f0_hz"]["std"] > 0
    assert out["worst_case"]["gain_center_db"][0] == pytest.approx(out["worst_case"]["gain_center_db"][1], rel=1e-9)


def test_same_seed_same_output():
    args = ("tolerance", *MFB, "--trials", "4000", "--dist", "normal", "--json")
    a, b, c = bandsmith(*args, "--seed", "5"), bandsmith(*args, "--seed", "5"), bandsmith(*args, "--seed", "6")
    assert a.returncode == b.returncode == c.returncode == 0
    assert a.stdout == b.stdout
    assert a.stdout != c.stdout
    assert json.loads(a.stdout)["dist"] == "normal"


def test_wide_window_passes_everything():
    out = ok_json("tolerance", *MFB, "--trials", "2000", "--window-f0", "100%", "--window-q", "100%", "--window-gain-db", "100")
    assert out["yield"] == 1.0
    assert out["window"] == {"f0": 1.0, "q": 1.0, "gain_db": 100.0}


def test_tolerance_readable():
    p = bandsmith("tolerance", *TANK, "RL=20", "--trials", "2000")
    assert p.returncode == 0 and p.stderr == ""
    assert "yield" in p.stdout and "worst case" in p.stdout and "p95" in p.stdout


@pytest.mark.parametrize(
    "extra, field",
    [
        (["--trials", "0"], "trials"),
        (["--trials", "-3"], "trials"),
        (["--trials", "2.5"], "trials"),
        (["--trials", "many"], "trials"),
        (["--seed", "-1"], "seed"),
        (["--tol", "C9=1%"], "tol"),
        (["--tol", "R=60%"], "tol R"),
        (["--tol", "R"], "tol"),
        (["--tol", "C=abc"], "tol C"),
        (["--gbw-tol", "10%"], "gbw-tol"),
        (["--dist", "gauss"], "--dist"),
        (["--window-q", "0"], "window-q"),
        (["--gbw", "-1"], "gbw"),
    ],
)
def test_tolerance_bad_input(extra, field):
    bad("tolerance", *MFB, *extra, "--json", field=field)


def test_tolerance_bad_part():
    bad("tolerance", "mfb", "R1=4x7", "R2=866", "R3=82k", "C1=10n", "C2=10n", field="R1")


# -- noise --------------------------------------------------------------------------------------


def test_noise_json_noiseless_opamp_tank():
    # Tank with an ideal, noiseless op-amp at f0: √(4kT·R2·(1 + R2/R1)) (derived in test_noise.py).
    out = ok_json("noise", *TANK, "--en", "0", "--in", "0")
    for key in ("temperature_k", "band_hz", "density_at_f0_nv_rthz", "integrated_uv_rms", "snr_db", "contributions"):
        assert key in out
    assert out["temperature_k"] == 300.0
    k = scipy.constants.k
    assert_allclose(out["density_at_f0_nv_rthz"], math.sqrt(4 * k * 300 * 6800 * (1 + 6800 / 3300)) * 1e9, rtol=1e-9)
    assert list(out["contributions"]) == ["R1", "R2", "en", "in+", "in-"]
    assert out["contributions"]["en"] == {"density_at_f0_nv_rthz": 0.0, "integrated_uv_rms": 0.0}
    f0 = 1 / (2 * math.pi * math.sqrt(10e-3 * 22e-9))
    assert_allclose(out["band_hz"], [f0 / 10, f0 * 10], rtol=1e-9)
    assert out["opamp"] is None


def test_noise_options():
    out = ok_json("noise", *MFB, "--en", "5n", "--in", "2p", "--temp", "320", "--gbw", "2meg", "--band", "1k", "4k", "--vin", "0.1")
    assert out["temperature_k"] == 320.0 and out["band_hz"] == [1000.0, 4000.0]
    assert out["opamp"]["gbw_hz"] == 2e6
    total = math.sqrt(sum(c["integrated_uv_rms"] ** 2 for c in out["contributions"].values()))
    assert_allclose(out["integrated_uv_rms"], total, rtol=1e-12)
    signal_uv = abs(out["gain_center"]) * 0.1 / math.sqrt(2) * 1e6
    assert_allclose(out["snr_db"], 20 * math.log10(signal_uv / out["integrated_uv_rms"]), rtol=1e-12)
    assert out["contributions"]["in+"]["integrated_uv_rms"] == 0.0  # the + input is grounded


def test_noise_readable():
    p = bandsmith("noise", *TANK, "RL=15")
    assert p.returncode == 0 and p.stderr == ""
    assert "SNR" in p.stdout and "RL" in p.stdout and "total" in p.stdout


@pytest.mark.parametrize(
    "extra, field",
    [
        (["--en", "-1n"], "en"),
        (["--in", "x"], "in"),
        (["--temp", "0"], "temp"),
        (["--band", "10k", "1k"], "band"),
        (["--vin", "0"], "vin"),
        (["--band", "1k"], "--band"),
    ],
)
def test_noise_bad_input(extra, field):
    bad("noise", *MFB, *extra, "--json", field=field)


@pytest.mark.parametrize("command, option, token", [
    ("tolerance", "--tol", "R1%"), ("trim", "--tol", "=2%"), ("trim", "--tc", "R50"), ("bias", "--tc", "C"),
])
def test_a_malformed_assignment_names_its_option(command, option, token):
    # KEY=VALUE options of every command read the same way (one parser): the option named, exit 2
    extra = ("--supply", "12") if command == "bias" else ()
    line = bad(command, "mfb", "R1=16k", "R2=1.1k", "R3=150k", "C1=2.4n", "C2=2.2n", *extra, option, token, field=option.lstrip("-"))
    assert repr(token) in line


@pytest.mark.parametrize("command, option, tokens", [
    ("tolerance", "--tol", ("R=1%", "R=2%")), ("trim", "--tol", ("C=5%", "C=2%")), ("bias", "--tc", ("R=50", "R=25")),
])
def test_an_assignment_given_twice_is_refused(command, option, tokens):
    args = [a for t in tokens for a in (option, t)] + (["--supply", "12"] if command == "bias" else [])
    line = bad(command, "mfb", "R1=16k", "R2=1.1k", "R3=150k", "C1=2.4n", "C2=2.2n", *args, field=option.lstrip("-"))
    assert "given twice" in line
