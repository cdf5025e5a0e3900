"""The public Python API: ``import bandsmith``.

The reference for every result is the command line: ``to_json()`` must print exactly what the
matching ``bandsmith … --json`` prints (run in-process through ``bandsmith.app.cli.main``). The
docstring checks follow the numpydoc docstring standard (numpydoc.readthedocs.io, "Style guide":
the Parameters, Returns and Attributes sections). The README's worked example runs as it stands.
"""

from __future__ import annotations

import contextlib
import dataclasses
import importlib
import inspect
import io
import pkgutil
import re
import subprocess
import sys
from pathlib import Path

import pytest

import bandsmith
from bandsmith import api
from bandsmith.app.cli import main as cli_main
from bandsmith.app.cli.common import print_json

ROOT = Path(__file__).resolve().parents[1]

PINNED = [
    "list_circuits",
    "design_circuit",
    "compare",
    "analyze",
    "analyze_session",
    "sweep",
    "tolerance",
    "noise",
    "cascade",
    "fit",
    "check_opamps",
    "open_session",
    "save_session",
    "parse_value",
    "format_value",
    "CircuitList",
    "DesignReport",
    "ComparisonReport",
    "AnalysisReport",
    "SessionAnalysisReport",
    "SweepReport",
    "ToleranceReport",
    "NoiseReport",
    "CascadeReport",
    "MeasurementFitReport",
    "OpAmpCheckReport",
    "InputError",
    "filter_bank",
    "BankReport",
    "bias",
    "trim",
    "burst",
    "burst_cascade",
    "BurstReport",
]

FUNCTIONS = [n for n in PINNED if inspect.isfunction(getattr(api, n))]
REPORTS = [n for n in PINNED if n.endswith("Report") or n == "CircuitList"]

# Which leading parameters may be passed by position; every other one is keyword-only.
POSITIONAL = {
    "analyze": ("circuit", "parts"), "sweep": ("circuit", "parts"), "tolerance": ("circuit", "parts"),
    "noise": ("circuit", "parts"), "fit": ("circuit", "parts"), "check_opamps": ("circuit", "parts"),
    "bias": ("circuit", "parts"), "trim": ("circuit", "parts"),
    "design_circuit": ("circuit",), "analyze_session": ("session",), "open_session": ("path",),
    "save_session": ("session", "path"), "parse_value": ("text",), "format_value": ("x", "unit"),
    "burst": ("circuit", "parts"), "burst_cascade": ("report",),
}

# A parameter's name ends in its unit; its description must name the unit (SI symbols, BIPM SI
# Brochure, 9th edition, table 4).
UNIT_SUFFIXES = {"_v_per_rthz": "V/√Hz", "_a_per_rthz": "A/√Hz", "_hz": "Hz", "_ohm": "ohm", "_db": "dB", "_k": "K", "_v": "V"}

MFB = ["R1=16k", "R2=1.1k", "R3=150k", "C1=2.4n", "C2=2.2n"]
DEMO = ROOT / "resources" / "demo_session.bandsmith.json"


def _cli(args, capsys) -> str:
    code = cli_main(list(args))
    out, err = capsys.readouterr()
    assert code == 0, err
    return out


def _printed(obj) -> str:
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        print_json(obj)
    return buf.getvalue()


# ------------------------------------------------------------------ the surface


def test_all_is_pinned():
    assert bandsmith.__all__ == PINNED
    assert api.__all__ == PINNED


def test_every_name_resolves_to_the_api_even_with_every_sub_package_imported():
    # a sub-package imported later becomes an attribute of `bandsmith`; no API name may be one
    for info in pkgutil.walk_packages(bandsmith.__path__, "bandsmith."):
        if info.ispkg and ".app" not in info.name:
            importlib.import_module(info.name)
    for name in PINNED:
        assert getattr(bandsmith, name) is getattr(api, name), name


def test_import_is_light():
    # importing the package loads neither numpy nor scipy: each job imports what it needs
    code = "import sys, bandsmith; print('numpy' in sys.modules, 'scipy' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.split() == ["False", "False"]


def _section(doc: str, title: str) -> str:
    m = re.search(rf"^\s*{title}\n\s*-+\n(.*?)(?=^\s*\w[\w ]*\n\s*-+\n|\Z)", doc, re.S | re.M)
    return m.group(1) if m else ""


def _described(section: str) -> dict[str, str]:
    """Parameter name → its description, from a numpydoc section (``a, b : type`` shares one)."""
    out: dict[str, str] = {}
    names: list[str] = []
    for line in section.splitlines():
        if re.match(r"^\S", line):
            names = [n.strip() for n in line.split(":")[0].split(",")]
            for n in names:
                out[n] = ""
        elif line.strip():
            for n in names:
                out[n] += line.strip() + " "
    return out


@pytest.mark.parametrize("name", FUNCTIONS)
def test_functions_have_numpydoc_with_units(name):
    fn = getattr(api, name)
    doc = inspect.getdoc(fn) or ""
    assert doc.splitlines()[0].endswith("."), "a one-line summary first"
    assert _section(doc, "Returns"), "a Returns section"
    params = _described(_section(doc, "Parameters"))
    for p in inspect.signature(fn).parameters:
        assert params.get(p), f"{name}: parameter {p!r} not described"
        for suffix, unit in UNIT_SUFFIXES.items():
            if p.endswith(suffix):
                assert unit in params[p], f"{name}: {p!r} must give its unit {unit}"
                break


@pytest.mark.parametrize("name", REPORTS)
def test_results_are_documented_frozen_dataclasses_with_to_json(name):
    cls = getattr(api, name)
    assert dataclasses.is_dataclass(cls) and cls.__dataclass_params__.frozen
    doc = inspect.getdoc(cls) or ""
    attrs = _described(_section(doc, "Attributes"))
    for f in dataclasses.fields(cls):
        assert attrs.get(f.name), f"{name}: attribute {f.name!r} not described"
    assert callable(cls.to_json) and inspect.getdoc(cls.to_json)


@pytest.mark.parametrize("name", FUNCTIONS)
def test_options_are_keyword_only(name):
    params = list(inspect.signature(getattr(api, name)).parameters.values())
    allowed = POSITIONAL.get(name, ())
    assert tuple(p.name for p in params[: len(allowed)]) == allowed
    for p in params[len(allowed):]:
        assert p.kind is inspect.Parameter.KEYWORD_ONLY, f"{name}: {p.name} must be keyword-only"


def test_a_result_cannot_be_changed():
    d = bandsmith.design_circuit("mfb", f0_hz="3.15k", q=4, gain=5)
    with pytest.raises(dataclasses.FrozenInstanceError):
        d.result = None
    with pytest.raises(TypeError):
        d.chosen["R1"] = 1.0  # the core's values are a read-only mapping
    s = bandsmith.sweep("mfb", MFB, points=3)
    with pytest.raises(ValueError):
        s.f_hz[0] = 1.0  # read-only arrays


def test_bad_input_names_the_field():
    with pytest.raises(bandsmith.InputError) as e:
        bandsmith.design_circuit("mfb", f0_hz="fast", q=4, gain=5)
    assert e.value.field == "f0"
    with pytest.raises(bandsmith.InputError) as e:
        bandsmith.design_circuit("mfb", f0_hz="1k", q=4, bw_hz=250, gain=5)
    assert e.value.field == "q"
    with pytest.raises(bandsmith.InputError) as e:
        bandsmith.analyze("mfb", {"R1": "16k"})
    assert "R2" in str(e.value)


def test_values():
    # RKM code "4k7" = 4.7 kΩ (IEC 60062, letter and digit code for resistance values)
    assert bandsmith.parse_value("4k7") == 4700.0
    assert bandsmith.parse_value("2.2n") == pytest.approx(2.2e-9)
    assert bandsmith.format_value(4700, "Ω") == "4.7 kΩ"
    with pytest.raises(bandsmith.InputError):
        bandsmith.parse_value("four")


# ------------------------------------------------------------------ to_json() is the command's JSON


CASES = {
    "topologies": (["topologies", "--json"], lambda: bandsmith.list_circuits()),
    "design": (
        ["design", "sallen-key", "--f0", "7k", "--q", "5", "--gain", "2", "--series", "E96", "--fix", "C1=4.7n", "--gbw", "3meg", "--json"],
        lambda: bandsmith.design_circuit("sallen-key", f0_hz="7k", q=5, gain=2, series="E96", fix={"C1": "4.7n"}, gbw_hz=3e6),
    ),
    "compare": (
        ["compare", "--f0", "1k", "--bw", "250", "--gain", "2", "--series", "E12", "--json"],
        lambda: bandsmith.compare(f0_hz=1000, bw_hz=250, gain=2, series="e12"),
    ),
    "analyze": (
        ["analyze", "mfb", *MFB, "--gbw", "3meg", "--rload", "2k", "--json"],
        lambda: bandsmith.analyze("mfb", {"R1": 16e3, "R2": 1.1e3, "R3": "150k", "C1": "2.4n", "C2": 2.2e-9}, gbw_hz="3meg", rload_ohm=2000),
    ),
    "analyze-session": (
        ["analyze", "--session", str(DEMO), "--gbw", "1meg", "--json"],
        lambda: bandsmith.analyze_session(bandsmith.open_session(DEMO), gbw_hz=1e6),
    ),
    "tolerance": (
        ["tolerance", "mfb", *MFB, "--trials", "500", "--tol", "C=2%", "--seed", "7", "--json"],
        lambda: bandsmith.tolerance("mfb", MFB, trials=500, tolerances={"C": 0.02}, seed=7),
    ),
    "noise": (
        ["noise", "mfb", *MFB, "--en", "5n", "--band", "1k", "20k", "--vin", "0.5", "--json"],
        lambda: bandsmith.noise("mfb", MFB, en_v_per_rthz=5e-9, band_hz=(1e3, 2e4), vin_v=0.5),
    ),
    "cascade": (
        ["cascade", "--response", "butterworth", "--order", "3", "--f0", "10k", "--bw", "2k", "--json"],
        lambda: bandsmith.cascade(response="butterworth", order=3, f0_hz=10e3, bw_hz=2e3),
    ),
}


@pytest.mark.parametrize("case", list(CASES))
def test_to_json_is_what_the_command_prints(case, capsys):
    args, call = CASES[case]
    printed = _cli(args, capsys)
    assert _printed(call().to_json()) == printed


def test_check_matches_the_command_on_the_archetypes(capsys, monkeypatch, tmp_path):
    monkeypatch.setenv("BANDSMITH_SHELF", str(tmp_path / "no-shelf.json"))  # no file: the archetypes
    printed = _cli(["check", "mfb", *MFB, "--amp", "generic 4 MHz JFET-input", "--vin", "0.2", "--json"], capsys)
    report = bandsmith.check_opamps("mfb", MFB, amps=["generic 4 MHz JFET-input"], vin_v=0.2)
    assert _printed(report.to_json()) == printed


def test_sweep_matches_the_command_csv(capsys):
    printed = _cli(["sweep", "mfb", *MFB, "--points", "7", "--gbw", "1meg", "--csv"], capsys)
    rows = bandsmith.sweep("mfb", MFB, points=7, gbw_hz=1e6).rows()
    lines = printed.splitlines()
    assert lines[0] == ",".join(api.SweepReport.COLUMNS)
    assert lines[1:] == [",".join(f"{v:.10g}" for v in row) for row in rows]


def test_sessions_round_trip(tmp_path):
    report = bandsmith.compare(f0_hz="3.15k", q=4, gain=5)
    path = tmp_path / "c.bandsmith.json"
    bandsmith.save_session(report.to_session(), path)
    again = bandsmith.open_session(path)
    assert [c.topology_id for c in again.candidates] == [r.topology_id for r in report.results]


# ------------------------------------------------------------------ the README's example


def _readme_example() -> tuple[str, str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("\n## Python API\n", 1)[1].split("\n## ", 1)[0]
    code = re.search(r"```python\n(.*?)```", section, re.S).group(1)
    printed = re.search(r"It prints:\n\n```\n(.*?)```", section, re.S).group(1)
    return code, printed


def test_readme_example_runs_verbatim_and_prints_what_it_says(tmp_path, monkeypatch):
    code, printed = _readme_example()
    monkeypatch.chdir(tmp_path)
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        exec(compile(code, "README.md (Python API)", "exec"), {"__name__": "__readme__"})
    assert buf.getvalue() == printed
    assert (tmp_path / "bearing-monitor.bandsmith.json").exists()
