"""``bandsmith fit`` run in-process through the entry point (tests/cli_helpers.py) (the README's
``bandsmith fit`` is the reference).

The measured files are made here (tests/measured_helpers.py): the MFB example with C2 6 % high,
from scipy.signal.freqs on the textbook biquad, with seeded scatter, in several layouts.
"""

from __future__ import annotations

import json

import pytest

from cli_helpers import run_command
from measured_helpers import MFB, moved, sweep, true_figures, write_layouts

DESIGN = ["mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n"]


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fit")
    f, mag, ph = sweep("mfb", MFB, {"C2": 0.06})
    paths = write_layouts(folder, f, mag, ph)
    bad = folder / "bad.csv"
    lines = paths["csv_khz"].read_text().splitlines()
    lines[9] = "1.5,abc,3"  # line 10
    bad.write_text("\n".join(lines) + "\n")
    paths["bad"] = bad
    (folder / "empty.csv").write_text("# nothing measured\n")
    paths["empty"] = folder / "empty.csv"
    (folder / "one.csv").write_text("100\n200\n300\n")
    paths["one"] = folder / "one.csv"
    (folder / "positive.txt").write_text("".join(f"{x:.3f} {10 ** (m / 20):.6f}\n" for x, m in zip(f, mag)))
    paths["positive"] = folder / "positive.txt"
    return paths


@pytest.fixture(scope="module")
def runs(files):
    calls = {
        "csv": [*DESIGN, "--measured", str(files["csv_khz"]), "--json"],
        "semicolon": [*DESIGN, "--measured", str(files["semicolon_comma"]), "--json"],
        "linear": [*DESIGN, "--measured", str(files["linear_rad"]), "--json", "--parts", "C1,C2,R3"],
        "magnitude": [*DESIGN, "--measured", str(files["quoted_magnitude"]), "--json", "--range", "20%"],
        "readable": [*DESIGN, "--measured", str(files["whitespace"])],
        "mapping": [*DESIGN, "--measured", str(files["positive"]), "--mag-unit", "linear", "--json"],
        "bad": [*DESIGN, "--measured", str(files["bad"]), "--json"],
        "empty": [*DESIGN, "--measured", str(files["empty"]), "--json"],
        "one": [*DESIGN, "--measured", str(files["one"]), "--json"],
        "needs-mapping": [*DESIGN, "--measured", str(files["positive"]), "--json"],
        "missing": [*DESIGN, "--measured", str(files["csv_khz"].with_name("nope.csv")), "--json"],
        "bad-part": [*DESIGN, "--measured", str(files["csv_khz"]), "--parts", "C9", "--json"],
        "bad-range": [*DESIGN, "--measured", str(files["csv_khz"]), "--range", "150%", "--json"],
        "bad-columns": [*DESIGN, "--measured", str(files["csv_khz"]), "--columns", "1,x", "--json"],
        "no-file-option": [*DESIGN, "--json"],
    }

    return {name: run_command(["fit", *args]) for name, args in calls.items()}


@pytest.mark.parametrize("name", ["csv", "semicolon", "linear", "magnitude", "mapping"])
def test_fit_json_object(runs, name):
    r = runs[name]
    assert r.returncode == 0, r.stderr
    out = json.loads(r.stdout)  # exactly one JSON object
    for key in ("measured", "fitted", "change_pct", "alone", "residual_db_rms", "summary"):
        assert key in out
    for key in ("f0_hz", "q", "gain_center_db", "points"):
        assert key in out["measured"]
    assert out["measured"]["points"] == 201
    assert out["alone"][0]["part"] == "C2"
    for a in out["alone"]:
        assert set(a) >= {"part", "change_pct", "residual_db_rms"}
    # Within the noise's effect (test_diagnose.py computes the standard error: under 0.1 %).
    assert abs(out["alone"][0]["change_pct"] - 6.0) < 0.4
    assert "C2 about 6 % high explains it" in out["summary"]
    assert set(out["fitted"]) == set(out["change_pct"])
    # The read-off matches the moved design's biquad figures (tolerances as in test_measured.py).
    truth = true_figures("mfb", moved(MFB, {"C2": 0.06}))
    assert out["measured"]["f0_hz"] == pytest.approx(truth["f0_hz"], rel=0.005)
    assert out["measured"]["q"] == pytest.approx(truth["q"], rel=0.04)
    assert out["measured"]["gain_center_db"] == pytest.approx(truth["gain_db"], abs=0.12)


def test_modes_and_options(runs):
    assert json.loads(runs["csv"].stdout)["mode"] == "complex"
    mag = json.loads(runs["magnitude"].stdout)
    assert mag["mode"] == "magnitude" and mag["range_pct"]["C2"] == pytest.approx(20.0)
    lin = json.loads(runs["linear"].stdout)
    assert lin["parts"] == ["C1", "C2", "R3"]
    # Parts held at the design do not appear among the fitted ones.
    assert set(lin["fitted"]) == {"C1", "C2", "R3"}


def test_readable_output(runs):
    r = runs["readable"]
    assert r.returncode == 0, r.stderr
    assert "C2 about 6 % high explains it" in r.stdout
    assert "measured" in r.stdout and "alone" in r.stdout


@pytest.mark.parametrize(
    "name, words",
    [
        ("bad", "line 10"),
        ("empty", "empty"),
        ("one", "one column"),
        ("needs-mapping", "--mag-unit"),
        ("missing", "no such file"),
        ("bad-part", "C9"),
        ("bad-range", "range"),
        ("bad-columns", "columns"),
        ("no-file-option", "--measured"),
    ],
)
def test_bad_input_exits_2_with_one_line(runs, name, words):
    r = runs[name]
    assert r.returncode == 2
    assert r.stdout == ""
    assert words in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1
    assert "Traceback" not in r.stderr
