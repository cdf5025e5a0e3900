"""Filter banks (``bandsmith.bank``, ``api.filter_bank``, ``bandsmith bank``), each check against a source
outside the project: IEC 61260-1:2014 (band centres, edges and nominal labels; formulas from
memory), scipy.signal.freqs (the channels' and the sum's response), the multiple-feedback
band-pass transfer function (S. Franco, *Design with Operational Amplifiers and Analog Integrated
Circuits*, 3rd ed., ch. 3) and the second-order band-pass magnitude |H| = 1/√(1 + Q²(r − 1/r)²)."""

import csv
import io
import json
import math
import time
from pathlib import Path

import numpy as np
import pytest
import scipy.signal

import bandsmith
from bandsmith.bank import centres as C
from bandsmith.common.errors import InputError

from cli_helpers import run_command

ROOT = Path(__file__).resolve().parents[1]

# IEC 61260-1:2014 nominal mid-band frequencies of the one-third-octave bands, 25 Hz to 10 kHz
# (the R10 preferred numbers of ISO 3), and of the octave bands 31.5 Hz to 16 kHz.
THIRD_LABELS = [25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800,
                1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000, 10000]
OCTAVE_LABELS = [31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000, 16000]


@pytest.fixture(scope="module")
def bank31():
    bandsmith.filter_bank(centres_hz=[1000, 1259], series="E96")  # imports and first-call caches
    t = time.perf_counter()
    report = bandsmith.filter_bank(octave_fraction=3, from_hz=20, to_hz="20k", series="E96")
    return report, time.perf_counter() - t


# ------------------------------------------------------------------ centres on a rule


def test_third_octave_centres_are_the_exact_base_ten_mid_band_frequencies():
    # IEC 61260-1:2014, 5.4: fm = 1000·G^(x/3) with G = 10^(3/10), i.e. 1000·10^(x/10)
    x, fm, labels = C.fraction_centres(3, 100, 10_000)
    assert list(x) == list(range(-10, 11))
    exact = 1000.0 * 10.0 ** (x / 10.0)
    assert np.max(np.abs(fm / exact - 1.0)) < 1e-9
    assert list(labels) == THIRD_LABELS[6:]
    _, _, labels = C.fraction_centres(3, 25, 10_000)
    assert list(labels) == THIRD_LABELS


def test_octave_labels_and_even_fraction_formula():
    # octave bands: fm = 1000·G^x; labels per IEC 61260-1:2014 (from memory)
    _, fm, labels = C.fraction_centres(1, 31.5, 16_000)
    assert list(labels) == OCTAVE_LABELS
    assert fm[5] == pytest.approx(1000.0, rel=1e-12)
    # even b: fm = 1000·G^((2x+1)/(2b)); two sixth-octave bands fill the third-octave band at 1 kHz
    # exactly (derived from the standard's edge formulas f1,2 = fm·G^(∓1/(2b)))
    lo3, hi3 = C.band_edges_hz(1000.0, 3)
    lo6, _ = C.band_edges_hz(C.mid_band_hz(-1, 6), 6)
    _, hi6 = C.band_edges_hz(C.mid_band_hz(0, 6), 6)
    assert float(lo6) == pytest.approx(float(lo3), rel=1e-12)
    assert float(hi6) == pytest.approx(float(hi3), rel=1e-12)
    assert float(C.mid_band_hz(0, 6)) == pytest.approx(1000.0 * 10 ** (3 / 120), rel=1e-12)


@pytest.mark.parametrize("b", [1, 2, 3, 6, 12, 24])
def test_band_q_puts_the_minus_3_db_points_on_the_band_edges(b):
    # Q = √(G^(1/b))/(G^(1/b) − 1); a second-order band-pass with that Q, evaluated by
    # scipy.signal.freqs, is 1/√2 of its peak at the IEC 61260-1 band edges
    q = C.band_q(b)
    r = (10 ** 0.3) ** (1 / b)
    assert q == pytest.approx(math.sqrt(r) / (r - 1), rel=1e-12)
    w0 = 2 * math.pi * 1000.0
    lo, hi = C.band_edges_hz(1000.0, b)
    _, h = scipy.signal.freqs([w0 / q, 0], [1, w0 / q, w0 * w0], worN=2 * math.pi * np.array([float(lo), float(hi)]))
    assert np.abs(h) == pytest.approx([2 ** -0.5] * 2, rel=1e-9)


def test_typed_centres_with_equal_ratios_get_the_rule_q():
    f = 1000.0 * 10 ** (np.arange(5) / 10)
    assert C.q_for_crossing(f) == pytest.approx(np.full(5, C.band_q(3)), rel=1e-12)
    with pytest.raises(InputError):
        C.listed_centres([1000, 1000])


def test_evenly_spaced_centres():
    # equal ratios r = 10^(1/3) between four centres from 100 Hz to 1 kHz: Q = √r/(r − 1) (derived from
    # the −3 dB points f0·(√(1 + 1/(4Q²)) ∓ 1/(2Q)) meeting at the geometric means)
    out = bandsmith.filter_bank(count=4, from_hz=100, to_hz="1k", circuit="mfb").to_json()
    r = 10 ** (1 / 3)
    assert [c["target_f0_hz"] for c in out["channels"]] == pytest.approx([100, 215.443469, 464.158883, 1000], rel=1e-8)
    assert all(c["q"] == pytest.approx(math.sqrt(r) / (r - 1), rel=1e-12) for c in out["channels"])
    lin = bandsmith.filter_bank(count=3, from_hz=1000, to_hz=2000, linear=True, q=10, circuit="mfb").to_json()
    assert [c["target_f0_hz"] for c in lin["channels"]] == [1000, 1500, 2000]
    with pytest.raises(InputError) as e:
        bandsmith.filter_bank(count=3, octave_fraction=3, from_hz=100, to_hz=1000)
    assert e.value.field == "count"


# ------------------------------------------------------------------ designed together


def test_31_channel_third_octave_bank_e96(bank31):
    report, seconds = bank31
    out = report.to_json()
    ch = out["channels"]
    assert len(ch) == 31
    assert [c["label_hz"] for c in ch][:3] == [20, 25, 31.5] and ch[-1]["label_hz"] == 20000
    gains = np.array([c["figures"]["gain_center_db"] for c in ch])
    assert np.max(np.abs(gains - gains.mean())) <= 0.2  # every centre gain within ±0.2 dB
    assert out["distinct_values"] < out["distinct_values_alone"]
    assert sum(out["bom"].values()) == sum(len(c["chosen"]) for c in ch)
    assert len(out["bom"]) == out["distinct_values"]
    # every part lies in E96 (IEC 60063:2015) or, for the capacitors, in E6
    from bandsmith.common.eseries import in_series

    for c in ch:
        for ref, v in c["chosen"].items():
            assert in_series(v, "E96") or (ref.startswith("C") and in_series(v, "E6")), (ref, v)
    assert len({c["circuit"] for c in ch}) == 1
    assert seconds < 1.0, f"built in {seconds:.2f} s"
    print(f"distinct values {out['distinct_values']} vs alone {out['distinct_values_alone']}, {seconds:.3f} s")


def test_sum_against_scipy_freqs_of_the_same_transfer_functions(bank31):
    report, _ = bank31
    bank = report.result
    f = np.asarray(report.response.f_hz)
    total = np.zeros(f.size, complex)
    for chan in bank.channels:
        h = chan.analysis.h_ideal  # H(s) = N(s/w_ref)/D(s/w_ref)
        _, hi = scipy.signal.freqs(h.num[0], h.den[0], worN=2 * math.pi * f / h.w_ref[0])
        total += hi
    out = report.to_json()
    assert np.allclose(out["response"]["sum_db"], 20 * np.log10(np.abs(total)), atol=1e-5)
    # the ripple over the covered band, recomputed on a grid of its own
    lo, hi = out["covered_band_hz"]
    g = np.geomspace(lo, hi, 20001)
    s = np.zeros(g.size, complex)
    for chan in bank.channels:
        h = chan.analysis.h_ideal
        s += scipy.signal.freqs(h.num[0], h.den[0], worN=2 * math.pi * g / h.w_ref[0])[1]
    s_db = 20 * np.log10(np.abs(s))
    assert out["sum_ripple_db"] == pytest.approx(np.ptp(s_db), abs=0.01)


def test_mfb_bank_sum_against_the_textbook_transfer_function():
    # Franco, 3rd ed., ch. 3: H(s) = −(s/(R1·C2)) / (s² + s·(C1 + C2)/(R3·C1·C2) + (1/R1 + 1/R2)/(R3·C1·C2))
    report = bandsmith.filter_bank(octave_fraction=1, from_hz=63, to_hz="8k", circuit="mfb", series="E96")
    out = report.to_json()
    f = np.array(out["response"]["f_hz"])
    total = np.zeros(f.size, complex)
    for c in out["channels"]:
        p = c["chosen"]
        r1, r2, r3, c1, c2 = (p[k] for k in ("R1", "R2", "R3", "C1", "C2"))
        num = [-1 / (r1 * c2), 0]
        den = [1, (c1 + c2) / (r3 * c1 * c2), (1 / r1 + 1 / r2) / (r3 * c1 * c2)]
        total += scipy.signal.freqs(num, den, worN=2 * math.pi * f)[1]
    assert np.allclose(out["response"]["sum_db"], 20 * np.log10(np.abs(total)), atol=1e-5)
    assert out["opamps"] == {"opamps": 8, "quads": 2, "duals": 0, "packages": 2, "spare": 0}


def test_isolation_matches_the_second_order_band_pass(bank31):
    # |H(f)|/|H(f0)| = 1/√(1 + Q²(r − 1/r)²) at r = f/f0, with each channel's own f0 and Q; with the
    # targets' f0 and Q, neighbours (r = 10^(±1/10)) are about 7.04 dB down
    out = bank31[0].to_json()
    ch = out["channels"]
    iso = np.array(out["isolation_db"])
    for i in range(31):
        f0, q = ch[i]["figures"]["f0_hz"], ch[i]["figures"]["q"]
        for j in (i - 1, i + 1):
            if 0 <= j < 31:
                r = ch[j]["target_f0_hz"] / f0
                assert iso[i, j] == pytest.approx(10 * math.log10(1 + q * q * (r - 1 / r) ** 2), abs=1e-4)
    q, r = C.band_q(3), 10 ** 0.1
    nominal = 10 * math.log10(1 + q * q * (r - 1 / r) ** 2)
    assert nominal == pytest.approx(7.04, abs=0.01)
    assert np.allclose(np.diag(iso, 1), nominal, atol=0.3) and np.allclose(np.diag(iso, -1), nominal, atol=0.3)
    assert out["isolation_neighbours_db"][5]["above"] == pytest.approx(iso[5, 6], abs=1e-6)


def test_capacitors_are_shared_per_decade(bank31):
    out = bank31[0].to_json()
    caps = {v for c in out["channels"] for k, v in c["chosen"].items() if k.startswith("C")}
    assert len(caps) <= 4  # one value per decade of centre frequency over three decades
    mant = {round(v / 10 ** math.floor(math.log10(v)), 6) for v in caps}
    assert len(mant) == 1


# ------------------------------------------------------------------ exports and the command


def test_exports(bank31):
    report = bank31[0]
    net = report.netlist()
    assert net.count("\nVIN ") == 1 and net.rstrip().endswith(".end")
    assert all(f"_CH{k} " in net for k in range(1, 32))
    rows = list(csv.DictReader(io.StringIO(report.parts_csv())))
    passive = [r for r in rows if r["kind"] != "opamp"]
    assert len(passive) == report.to_json()["distinct_values"]
    assert sum(int(r["quantity"]) for r in passive) == sum(len(c.chosen) for c in report.result.channels)


def test_command_json_keys_and_bad_input():
    p = run_command(["bank", "--centres", "697,770,852,941", "--q", "20", "--circuit", "mfb", "--json"], cwd=ROOT)
    assert p.returncode == 0, p.stderr
    out = json.loads(p.stdout)
    for key in ("channels", "bom", "distinct_values", "distinct_values_alone", "isolation_db", "sum_ripple_db"):
        assert key in out
    for c in out["channels"]:
        for key in ("f0_hz", "target_f0_hz", "q", "gain", "circuit", "chosen", "figures"):
            assert key in c
    assert [c["target_f0_hz"] for c in out["channels"]] == [697, 770, 852, 941]
    for args, field in (
        (["--centres", "1k,abc"], "centres"),
        (["--octave-fraction", "0", "--from", "100", "--to", "1k"], "octave-fraction"),
        (["--octave-fraction", "3", "--from", "1k", "--to", "100"], "to"),
        (["--centres", "1k"], "q"),
        (["--octave-fraction", "3", "--from", "100", "--to", "1k", "--circuit", "nope"], "nope"),
    ):
        p = run_command(["bank", *args, "--json"], cwd=ROOT)
        assert p.returncode == 2, (args, p.stdout)
        assert field in p.stderr
