"""A source resistance in series with the input (``--rsource``): checked against closed forms."""

import json
import math
import subprocess
import sys
from pathlib import Path

import pytest

from bandsmith import api

TANK = ["R1=1k", "R2=10k", "L=10m", "C=100n"]
K_B = 1.380649e-23  # Boltzmann constant, J/K (CODATA 2018, exact in the 2019 SI)


def test_tank_centre_gain_is_minus_r2_over_r1_plus_rs():
    # The inverting tank at f0 (L ∥ C open): the source resistance adds to R1, so the gain is
    # −R2/(R1 + Rs) (inverting amplifier, any op-amp textbook; derived).
    for rs in (50.0, 500.0, 4.7e3):
        g = api.analyze("rlc-tank", TANK, rsource_ohm=rs).to_json()["ideal"]["gain_center"]
        assert g == pytest.approx(-10e3 / (1e3 + rs), rel=1e-9)


def test_without_rsource_nothing_changes():
    a = api.analyze("rlc-tank", TANK).to_json()
    assert a["ideal"]["gain_center"] == pytest.approx(-10.0, rel=1e-12)
    assert all(e["ref"] != "RSOURCE" for e in a["netlist"]["elements"])


def test_source_is_an_element_of_the_netlist():
    a = api.analyze("rlc-tank", TANK, rsource_ohm=500).to_json()
    rs = [e for e in a["netlist"]["elements"] if e["ref"] == "RSOURCE"]
    assert len(rs) == 1 and rs[0]["value"] == 500.0 and a["netlist"]["input"] in rs[0]["nodes"]


def test_source_resistance_noise_is_its_thermal_noise_times_the_gain():
    # Johnson–Nyquist: √(4kTR) V/√Hz, carried to the output by R2/(R1 + Rs) at f0 (derived).
    rs, t = 500.0, 300.0
    out = api.noise("rlc-tank", TANK, rsource_ohm=rs, temperature_k=t).to_json()
    got = out["contributions"]["RSOURCE"]["density_at_f0_nv_rthz"] * 1e-9
    assert got == pytest.approx(math.sqrt(4 * K_B * t * rs) * 10e3 / (1e3 + rs), rel=1e-6)


@pytest.mark.parametrize("circuit", ["rlc-tank", "mfb", "sallen-key", "dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_design_with_a_known_source_meets_the_target_exactly(circuit):
    # The input resistor is lowered by Rs, so the source completes it: at exact values the
    # circuit driven through Rs has the target f0, Q and gain (derived: series resistors add).
    r = api.design_circuit(circuit, f0_hz=1e3, q=5, gain=1, series="exact", rsource_ohm=600).to_json()
    assert r["feasible"]
    assert abs(r["errors"]["f0_pct"]) < 1e-9 and abs(r["errors"]["q_pct"]) < 1e-9 and abs(r["errors"]["gain_db"]) < 1e-9
    assert any("source resistance" in w for w in r["warnings"] + r.get("notes", []))


def test_tolerance_spreads_the_source_too():
    out = api.tolerance("rlc-tank", TANK, rsource_ohm=500, trials=200).to_json()
    assert "RSOURCE" in out["tolerances"]
    assert out["nominal"]["gain_center"] == pytest.approx(-10e3 / 1.5e3, rel=1e-9)


def test_cascade_source_on_the_first_stage_only():
    # The first stage's input is where the source is; later stages are driven by op-amp outputs.
    rep = api.cascade(response="butterworth", order=2, f0_hz=1e3, bw_hz=200, series="exact", rsource_ohm=1e3)
    nets = [st.result.analysis.netlist for st in rep.result.stages]
    assert any(e.ref == "RSOURCE" for e in nets[0].elements)
    assert not any(e.ref == "RSOURCE" for e in nets[1].elements)
    assert abs(rep.to_json()["overall"]["gain_center_db"]) < 1e-6  # absorbed: the chain still meets its gain


def test_session_keeps_the_source(tmp_path):
    rep = api.design_circuit("mfb", f0_hz=1e3, q=5, gain=1, rsource_ohm=600)
    path = tmp_path / "s.json"
    api.save_session(rep.to_session(), path)
    assert api.open_session(path).rsource_ohm == 600.0


def test_cli_rsource_and_bad_value():
    run = lambda *a: subprocess.run([sys.executable, "-m", "bandsmith.app.cli", *a], capture_output=True, text=True)
    ok = run("analyze", "rlc-tank", *TANK, "--rsource", "1k", "--json")
    assert ok.returncode == 0 and json.loads(ok.stdout)["ideal"]["gain_center"] == pytest.approx(-5.0)
    bad = run("analyze", "rlc-tank", *TANK, "--rsource", "-3", "--json")
    assert bad.returncode == 2 and "rsource" in bad.stderr


def test_the_report_states_the_source_resistance(tmp_path):
    # The session's source resistance is part of every analysis; the report's target says so.
    from dataclasses import replace

    from bandsmith.app.report.builder import write_report
    from bandsmith.files.session import load_session

    demo = Path(__file__).resolve().parents[1] / "resources" / "demo_session.bandsmith.json"
    s = replace(load_session(demo), rsource_ohm=600.0)
    out = tmp_path / "r.html"
    write_report(s, out)
    text = out.read_text(encoding="utf-8")
    assert "source resistance" in text and "600 Ω in series with the input" in text
