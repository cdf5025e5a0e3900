"""Fuzzing the command line in process: every sub-command's values and options.

The contract (the project's rule for bad input): ``bandsmith.app.cli.main(argv)`` returns 0, or 2
with exactly one line on stderr that starts with the field it names; never 1, never a traceback;
input files stay byte-identical. Hypothesis (derandomized, so CI sees the same cases every run)
draws the values from numbers in every notation, the extremes of double precision (1e-320, 1e300,
1e-400, 5e-324, 1.8e308), non-numbers, long and control-character text.

``BANDSMITH_FUZZ_EXAMPLES`` sets the examples per test (default 25) for a longer run.
"""

from __future__ import annotations

import contextlib
import io
import json
import os

import numpy as np
import pytest
import scipy.signal
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bandsmith.app.cli import main as cli_main
from bandsmith.circuits import get_topology

EXAMPLES = int(os.environ.get("BANDSMITH_FUZZ_EXAMPLES", "25"))
FUZZ = settings(max_examples=EXAMPLES, derandomize=True, deadline=None, database=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])

# Values: ordinary notations (IEC 60062 RKM codes, SI prefixes), the limits of IEEE 754 double
# precision (smallest subnormal 5e-324, largest finite 1.8e308), under/overflowing literals and
# text that is no number at all.
ODD = ["0", "-1", "1e-320", "1e-300", "1e300", "1e-400", "1e400", "5e-324", "1.7976931348623157e308",
       "nan", "inf", "-inf", "", " ", "R", "4k7Ω", "10nF", "1MEGA", "1e", "--1", "0x10", "١٢",
       "\x00", "a\nb", "\ud800", "9" * 400, "1" * 5000, "%", "1%", "-0", "+5", "1_000"]
NORMAL = ["4k7", "10n", "2.2k", "1M", "866", "82k", "3.3k", "1e6", "0.5", "8", "4", "1", "100", "2R2"]
values = st.one_of(st.sampled_from(NORMAL), st.sampled_from(NORMAL), st.sampled_from(NORMAL), st.sampled_from(ODD),
                   st.floats(min_value=1e-320, max_value=1e300).map(repr),
                   st.floats(allow_nan=True, allow_infinity=True).map(repr), st.text(max_size=12))


def run_cli(argv: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = cli_main(list(argv))
        except SystemExit as exc:  # argparse's own errors (exit 2 on a one-line message)
            code = exc.code if isinstance(exc.code, int) else 1
    return code, out.getvalue(), err.getvalue()


def check_contract(argv, code, out, err):
    assert code in (0, 2), (argv, code, err)
    assert "Traceback" not in err and "internal error" not in err, (argv, err)
    if code == 2:
        assert err.count("\n") == 1 and err.endswith("\n"), (argv, err)
        assert ": " in err, (argv, err)


@st.composite
def part_lists(draw):
    base = dict(get_topology("mfb").example)
    vals = {k: repr(v) for k, v in base.items()}
    for k in draw(st.lists(st.sampled_from(sorted(vals)), max_size=2, unique=True)):
        vals[k] = draw(values)
    return [f"{k}={v}" for k, v in vals.items()]


def options(names):
    return st.lists(st.tuples(st.sampled_from(names), values), max_size=2).map(
        lambda pairs: [x for name, v in pairs for x in (name, v)])


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """A session and a measured file of our own, and their bytes (to check they are left alone)."""
    d = tmp_path_factory.mktemp("fuzz")
    topo = get_topology("mfb")
    session = {"format": "bandsmith-session", "version": 1,
               "target": {"f0_hz": 2400.0, "q": 8.0, "gain": 4.0},
               "candidates": [{"id": "mfb", "topology": "mfb", "values": dict(topo.example)}]}
    sp = d / "s.json"
    sp.write_text(json.dumps(session), encoding="utf-8")
    v = topo.example  # the textbook MFB band-pass (scipy.signal.freqs), 101 points
    r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    b, a = [-1.0 / (r1 * c2), 0.0], [1.0, (c1 + c2) / (r3 * c1 * c2), (1 / r1 + 1 / r2) / (r3 * c1 * c2)]
    f = np.geomspace(500.0, 12e3, 101)
    _, h = scipy.signal.freqs(b, a, worN=2 * np.pi * f)
    mp = d / "m.csv"
    mp.write_text("f_hz,mag_db,phase_deg\n" + "".join(
        f"{x:.9g},{20 * np.log10(abs(y)):.6f},{np.degrees(np.angle(y)):.4f}\n" for x, y in zip(f, h)), encoding="utf-8")
    return {"session": sp, "measured": mp, "out": d / "out", "bytes": {sp: sp.read_bytes(), mp: mp.read_bytes()}}


def unchanged(files):
    for p, raw in files["bytes"].items():
        assert p.read_bytes() == raw


@FUZZ
@given(parts=part_lists(), opts=options(["--gbw", "--a0", "--vin", "--rload", "--tol-f0", "--tol-q", "--tol-gain-db"]))
def test_analyze(parts, opts):
    argv = ["analyze", "mfb", *parts, *opts]
    check_contract(argv, *run_cli(argv))


@FUZZ
@given(parts=part_lists(), opts=options(["--gbw", "--from", "--to", "--points", "--vin"]))
def test_sweep(parts, opts):
    argv = ["sweep", "mfb", *parts, *opts, "--csv"]
    check_contract(argv, *run_cli(argv))


@FUZZ
@given(parts=part_lists(), opts=options(["--en", "--in", "--temp", "--gbw", "--a0", "--vin"]))
def test_noise(parts, opts):
    argv = ["noise", "mfb", *parts, *opts]
    check_contract(argv, *run_cli(argv))


@FUZZ
@given(topo=st.sampled_from(["mfb", "sallen-key", "rlc-tank"]), f0=values, q=values, gain=values,
       opts=options(["--gbw", "--series", "--fix", "--a0"]))
def test_design(topo, f0, q, gain, opts):
    argv = ["design", topo, "--f0", f0, "--q", q, "--gain", gain, *opts]
    check_contract(argv, *run_cli(argv))


@FUZZ
@given(parts=part_lists(), opts=options(["--trials", "--seed", "--tol", "--dist", "--gbw", "--gbw-tol", "--window-f0"]))
def test_tolerance(parts, opts):
    argv = ["tolerance", "mfb", *parts, "--trials", "200", *opts]
    if "--trials" in opts[:-1] and not _small_count(opts):
        return  # a huge trial count is a long run, not a fuzz case
    check_contract(argv, *run_cli(argv))


def _small_count(opts):
    for name, v in zip(opts[::2], opts[1::2]):
        if name == "--trials":
            try:
                return int(v) <= 2000
            except ValueError:
                return True
    return True


@FUZZ
@given(opts=options(["--order", "--f0", "--bw", "--f-low", "--f-high", "--ripple-db", "--gain", "--series", "--gbw"]),
       response=st.sampled_from(["butterworth", "chebyshev", "bessel", "x"]))
def test_cascade(opts, response):
    argv = ["cascade", "--response", response, "--order", "2", "--f0", "2k", "--bw", "500", *opts]
    check_contract(argv, *run_cli(argv))


@FUZZ
@given(parts=part_lists(), opts=options(["--range", "--tol", "--gbw", "--columns", "--parts"]))
def test_fit(files, parts, opts):
    argv = ["fit", "mfb", *parts, "--measured", str(files["measured"]), *opts]
    check_contract(argv, *run_cli(argv))
    unchanged(files)


@FUZZ
@given(what=st.sampled_from(["--netlist", "--parts", "--response"]), opts=options(["--from", "--to", "--points", "--candidate", "--chain"]),
       name=st.sampled_from(["x.cir", "", ".", "..", "a" * 300 + ".csv", "sub/none/x.cir", "\n.cir"]))
def test_export(files, what, opts, name):
    target = str(files["out"].parent / name) if name not in ("", ".", "..") else name
    argv = ["export", str(files["session"]), what, target, *opts]
    check_contract(argv, *run_cli(argv))
    unchanged(files)


@FUZZ
@given(argv=st.lists(st.one_of(values, st.sampled_from(["--json", "--save", "--gbw", "-o", "--help"])), max_size=6),
       cmd=st.sampled_from(["analyze", "sweep", "noise", "design", "compare", "tolerance", "cascade", "fit", "export",
                            "check", "amps", "topologies", "report", "nope"]))
def test_any_words(cmd, argv):
    """Whatever follows a sub-command: never an internal error (argparse's usage lines aside)."""
    if "--help" in argv or (cmd == "tolerance" and any(a.isdigit() and len(a) > 4 for a in argv)):
        return
    full = [cmd, *argv]
    code, out, err = run_cli(full)
    assert code in (0, 2), (full, code, err)
    assert "Traceback" not in err and "internal error" not in err, (full, err)
