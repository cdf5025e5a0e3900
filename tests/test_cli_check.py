"""``bandsmith amps`` and ``bandsmith check`` run as commands (in-process through the entry point,
tests/cli_helpers.py), with the shelf file set by the environment."""

import json
from pathlib import Path

import pytest
from numpy.testing import assert_allclose

from cli_helpers import run_command
from bandsmith.bench.shelf import ARCHETYPES, OpAmp, save_shelf

ROOT = Path(__file__).resolve().parents[1]
SK = ["sallen-key", "R1=4k53", "R2=4k53", "R3=4k53", "C1=100n", "C2=100n", "RA=10k", "RB=22k1"]


def bandsmith(*args, shelf):
    return run_command(args, cwd=ROOT, env={"BANDSMITH_SHELF": str(shelf)})


def run_json(*args, shelf):
    p = bandsmith(*args, "--json", shelf=shelf)
    assert p.returncode == 0, p.stderr
    return json.loads(p.stdout), p.stderr


def bench_shelf(path):
    amps = (
        OpAmp("bench quad", gbw_hz=3e6, a0=2e5, slew_v_per_us=1.5, iout_max_ma=20.0, supply_min_v=6.0,
              supply_max_v=36.0, swing_neg_v=1.2, swing_pos_v=1.2, cm_neg_v=1.5, cm_pos_v=1.5, en_nv_rthz=9.0),
        OpAmp("slow spare", gbw_hz=20e3, a0=1e5, slew_v_per_us=0.02, iout_max_ma=2.0, supply_min_v=3.0,
              supply_max_v=36.0, swing_neg_v=1.0, swing_pos_v=1.0, cm_neg_v=1.0, cm_pos_v=1.0),
    )
    save_shelf(amps, path)
    return amps


def test_amps_without_a_file_lists_the_archetypes(tmp_path):
    shelf = tmp_path / "none" / "shelf.json"
    out, err = run_json("amps", shelf=shelf)
    assert err == ""
    assert [a["name"] for a in out["amps"]] == [a.name for a in ARCHETYPES]
    for a in out["amps"]:
        assert {"name", "gbw_hz", "a0", "slew_v_per_us", "f_p2_hz", "en_nv_rthz", "in_pa_rthz", "iout_max_ma",
                "supply_min_v", "supply_max_v", "swing_neg_v", "swing_pos_v", "cm_neg_v", "cm_pos_v"} <= set(a)
    assert out["source"] == "archetypes"
    assert not shelf.exists()  # listing never writes


def test_amps_reads_the_shelf_file(tmp_path):
    shelf = tmp_path / "shelf.json"
    amps = bench_shelf(shelf)
    out, _ = run_json("amps", shelf=shelf)
    assert [OpAmp.from_json(a) for a in out["amps"]] == list(amps)
    p = bandsmith("amps", shelf=shelf)
    assert p.returncode == 0 and "bench quad" in p.stdout and str(shelf) in p.stdout


def test_damaged_shelf_warns_keeps_file_and_uses_archetypes(tmp_path):
    shelf = tmp_path / "shelf.json"
    shelf.write_bytes(b'{"format": "bandsmith-shelf", "version": 1, "amps": [{"name": ')
    before = shelf.read_bytes()
    out, err = run_json("amps", shelf=shelf)
    assert [a["name"] for a in out["amps"]] == [a.name for a in ARCHETYPES]
    assert "truncated" in err and "archetypes" in err and str(shelf) in err
    assert out["warning"] and out["source"] == "archetypes"
    got, err = run_json("check", *SK, shelf=shelf)
    assert len(got["verdicts"]) == len(ARCHETYPES) and "archetypes" in err
    assert shelf.read_bytes() == before


def test_check_json_has_the_contract_keys(tmp_path):
    shelf = tmp_path / "shelf.json"
    bench_shelf(shelf)
    out, err = run_json("check", *SK, "--vin", "0.5", "--supply", "12", "--rload", "2k", shelf=shelf)
    assert err == ""
    assert set(out) == {"candidate", "verdicts", "headroom"}
    c = out["candidate"]
    assert c["topology"] == "sallen-key" and c["supply_v"] == 12.0 and c["vin_v"] == 0.5 and c["rload_ohm"] == 2000.0
    assert_allclose(c["components"]["R1"], 4530.0)
    assert [v["amp"] for v in out["verdicts"]] == ["bench quad", "slow spare"]
    for v in out["verdicts"]:
        assert v["verdict"] in ("fits", "marginal", "does not fit")
        assert v["reasons"] and all(isinstance(r, str) and r for r in v["reasons"])
        assert set(v["margins"]) >= {"gbw", "slew", "iout", "swing_v"}
        assert set(v["actual"]) >= {"f0_hz", "q", "bw_hz", "gain_center", "gain_center_db", "phase_center_deg"}
    h = out["headroom"]
    assert set(h) >= {"node_peak_v", "limiting_node", "max_vin_v"}
    assert set(h["node_peak_v"]) == {"in", "a", "b", "m", "out"}
    assert h["limiting_node"] == "out"
    # max_vin_v brings the limiting node to the rails: peak/vin·max_vin = 12 V.
    assert_allclose(h["node_peak_v"]["out"] / 0.5 * h["max_vin_v"], 12.0, rtol=1e-9)
    bench, slow = out["verdicts"]
    assert bench["verdict"] == "fits"
    # 20 kHz GBW for a 500 Hz stage of gain 4: far too slow.
    assert slow["verdict"] == "does not fit" and slow["margins"]["gbw"] < 1
    assert any("GBW" in r for r in slow["reasons"])


def test_check_selected_amp_case_insensitive_and_readable(tmp_path):
    shelf = tmp_path / "none.json"
    out, _ = run_json("check", *SK, "--amp", "GENERIC 1 MHz bipolar", shelf=shelf)
    assert [v["amp"] for v in out["verdicts"]] == ["generic 1 MHz bipolar"]
    assert out["candidate"]["supply_v"] == 15.0  # the default ±15 V
    p = bandsmith("check", *SK, "--amp", "generic 1 MHz bipolar", "--amp", "generic 10 MHz CMOS rail-to-rail", shelf=shelf)
    assert p.returncode == 0, p.stderr
    assert "fits" in p.stdout and "does not fit" in p.stdout and "limits first" in p.stdout


@pytest.mark.parametrize(
    "args,field",
    [
        (["--amp", "no such amp"], "amp"),
        (["--supply", "-5"], "supply"),
        (["--vin", "0"], "vin"),
        (["--rload", "4x7"], "rload"),
        (["--tol-q", "0"], "tol-q"),
    ],
)
def test_bad_input_exit_2_one_line(tmp_path, args, field):
    p = bandsmith("check", *SK, *args, "--json", shelf=tmp_path / "none.json")
    assert p.returncode == 2
    assert p.stdout == ""
    lines = p.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"{field}:")


def test_bad_parts_exit_2(tmp_path):
    p = bandsmith("check", "mfb", "R1=10k", shelf=tmp_path / "none.json")
    assert p.returncode == 2 and p.stderr.strip().startswith("R2:")
    p = bandsmith("check", "nope", "R1=10k", shelf=tmp_path / "none.json")
    assert p.returncode == 2


def test_empty_shelf_is_bad_input(tmp_path):
    shelf = tmp_path / "shelf.json"
    save_shelf((), shelf)
    p = bandsmith("check", *SK, shelf=shelf)
    assert p.returncode == 2 and p.stderr.startswith("amp:")
    out, _ = run_json("amps", shelf=shelf)
    assert out["amps"] == [] and out["source"] == str(shelf)


def test_shelf_path_env_and_config_folder(monkeypatch, tmp_path):
    from bandsmith.app import shelf_paths
    from PySide6 import QtCore

    monkeypatch.setenv("BANDSMITH_SHELF", str(tmp_path / "x.json"))
    assert shelf_paths.shelf_path() == tmp_path / "x.json"
    monkeypatch.delenv("BANDSMITH_SHELF")
    before = QtCore.QCoreApplication.applicationName()
    p = shelf_paths.shelf_path()
    assert p.name == "shelf.json" and p.parent.name == "Bandsmith"
    assert QtCore.QCoreApplication.applicationName() == before  # the names are put back
