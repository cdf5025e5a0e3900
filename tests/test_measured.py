"""Reading measured responses (bandsmith.bench.measured) and reading f0, Q and gain off them (bandsmith.bench.readoff).

The data are made by the tests (tests/measured_helpers.py): a known design with a part moved by a
known amount, computed with scipy.signal.freqs from the textbook biquad, sampled at 201 log
points with seeded scatter, written in several layouts.
"""

from __future__ import annotations

import hashlib
import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from bandsmith.common.errors import InputError
from bandsmith.bench.measured import (
    ColumnMapping,
    MappingNeeded,
    Measurement,
    MeasurementError,
    read_measurement,
    scan_table,
    session_measurements,
    with_measurement,
)
from bandsmith.bench.readoff import read_off, read_off_measurement
from bandsmith.files.session import CandidateEntry, Session, Target, dumps_session, loads_session

from measured_helpers import MFB, TANK, sweep, true_figures, write_layouts, moved


@pytest.fixture(scope="module")
def board(tmp_path_factory):
    """The MFB example with C2 6 % high, in every layout."""
    f, mag, ph = sweep("mfb", MFB, {"C2": 0.06})
    paths = write_layouts(tmp_path_factory.mktemp("layouts"), f, mag, ph)
    return f, mag, ph, paths


# --------------------------------------------------------------------------- layouts


@pytest.mark.parametrize("layout", ["csv_khz", "semicolon_comma", "whitespace", "linear_rad", "quoted_magnitude"])
def test_every_layout_reads_the_same_sweep(board, layout):
    f, mag, ph, paths = board
    m = read_measurement(paths[layout])
    assert m.points == f.size
    assert m.source == paths[layout].name
    # Written with 6+ significant digits in every layout: the round trip is that exact.
    assert_allclose(m.f_hz, f, rtol=1e-8)
    assert_allclose(m.mag_db, mag, atol=2e-5)
    if layout == "quoted_magnitude":
        assert m.phase_deg is None and not m.has_phase
    else:
        assert_allclose(m.phase_deg, ph, atol=2e-4)


def test_units_come_from_the_header(board):
    _, _, _, paths = board
    assert read_measurement(paths["csv_khz"]).mapping.freq_unit == "kHz"
    lin = read_measurement(paths["linear_rad"]).mapping
    assert (lin.freq_unit, lin.mag_unit, lin.phase_unit) == ("MHz", "linear", "rad")
    semi = scan_table(paths["semicolon_comma"])
    assert (semi.separator, semi.decimal) == (";", ",")
    # The file's own notes are empty when the header said everything.
    assert read_measurement(paths["csv_khz"]).notes == ()


def test_guesses_are_recorded(board):
    _, _, _, paths = board
    m = read_measurement(paths["whitespace"])
    text = " ".join(m.notes)
    assert "Hz" in text and "dB" in text and "degrees" in text


def test_hash_is_of_the_file_bytes(board):
    _, _, _, paths = board
    p = paths["semicolon_comma"]
    m = read_measurement(p)
    # SHA-256 as FIPS 180-4 defines it, computed by the standard library.
    assert m.sha256 == hashlib.sha256(p.read_bytes()).hexdigest()
    assert m.matches_file(p)
    assert not m.matches_file(paths["csv_khz"])


def test_text_with_decimal_comma_and_spaces():
    # Decimal comma with white space between the columns (common practice in comma-decimal locales, no source).
    text = "f mag\n1000,5  -3,25\n2000,25  1,5\n4000  −2\n"
    m = read_measurement(text)
    assert_allclose(m.f_hz, [1000.5, 2000.25, 4000.0])
    assert_allclose(m.mag_db, [-3.25, 1.5, -2.0])


def test_rows_out_of_order_are_sorted():
    m = read_measurement("Hz,dB\n300,-1\n100,-5\n200,0\n")
    assert_allclose(m.f_hz, [100, 200, 300])
    assert_allclose(m.mag_db, [-5, 0, -1])
    assert "sorted" in " ".join(m.notes)


def test_inline_comments_and_trailing_separator():
    m = read_measurement("freq;gain (dB);\n100;-3; # low\n200;0;\n400;-3;\n")
    assert_allclose(m.mag_db, [-3, 0, -3])


def test_phase_in_radians_guessed_by_range():
    m = read_measurement("100 -3 1.2\n200 0 0.1\n400 -3 -1.2\n")
    assert_allclose(m.phase_deg, np.degrees([1.2, 0.1, -1.2]))
    assert "radians" in " ".join(m.notes)


# --------------------------------------------------------------------------- errors


def test_a_bad_line_reports_its_number(tmp_path, board):
    f, mag, ph, _ = board
    rows = ["Frequency (Hz),Gain (dB),Phase (deg)"] + [f"{x:.6f},{m:.5f},{q:.4f}" for x, m, q in zip(f, mag, ph)]
    rows[57] = "1234.5,-3.2x,12"  # line 58 of the file
    p = tmp_path / "bad.csv"
    p.write_text("\n".join(rows) + "\n")
    with pytest.raises(MeasurementError) as err:
        read_measurement(p)
    assert err.value.line == 58
    assert "line 58" in str(err.value) and "-3.2x" in str(err.value)
    assert isinstance(err.value, InputError) and err.value.field == "measured"


def test_a_short_line_reports_its_number():
    with pytest.raises(MeasurementError) as err:
        read_measurement("# x\n100,-3,10\n200,0\n400,-3,-10\n")
    assert err.value.line == 3 and "2 values" in str(err.value)


def test_a_decimal_point_in_a_decimal_comma_file():
    with pytest.raises(MeasurementError) as err:
        read_measurement("100;−3,5\n200;0,5\n400;-3.5\n")
    assert err.value.line == 3 and "decimal" in str(err.value)


@pytest.mark.parametrize(
    "text, words",
    [
        ("", "empty"),
        ("\n\n   \n", "empty"),
        ("# only a comment\n; and another\n", "empty"),
        ("frequency,gain\n", "no lines of numbers"),
        ("100\n200\n300\n", "only one column"),
        ("Hz\n100\n200\n300\n", "only one column"),
    ],
)
def test_empty_and_one_column_files_say_so(text, words):
    with pytest.raises(MeasurementError) as err:
        read_measurement(text if text else b"")
    assert words in str(err.value)


def test_missing_file(tmp_path):
    with pytest.raises(MeasurementError) as err:
        read_measurement(tmp_path / "nope.csv")
    assert "no such file" in str(err.value)


def test_other_bad_data():
    with pytest.raises(MeasurementError, match="not above zero"):
        read_measurement("Hz,V/V\n100,0.5\n200,0\n400,0.5\n")
    with pytest.raises(MeasurementError, match="line 3.*appears twice|appears twice.*line"):
        read_measurement("Hz,dB\n100,-3\n100,-2\n400,-3\n")
    with pytest.raises(MeasurementError, match="at least 3"):
        read_measurement("Hz,dB\n100,-3\n200,0\n")
    with pytest.raises(MeasurementError, match="not above zero"):
        read_measurement("Hz,dB\n0,-3\n200,0\n400,-3\n")


# --------------------------------------------------------------------------- column mapping


def test_unstated_positive_magnitude_needs_a_mapping():
    text = "100 0.5\n200 2.0\n400 0.5\n"
    with pytest.raises(MappingNeeded) as err:
        read_measurement(text)
    assert "dB or linear" in str(err.value)
    assert err.value.scan.columns == 2
    m = read_measurement(text, mapping=ColumnMapping(0, 1, mag_unit="linear"))
    assert_allclose(m.mag_db, 20 * np.log10([0.5, 2.0, 0.5]))


def test_many_columns_without_a_header_need_a_mapping():
    text = "1 100 -3 10\n2 200 0 0\n3 400 -3 -10\n"
    with pytest.raises(MappingNeeded):
        read_measurement(text)
    m = read_measurement(text, mapping=ColumnMapping(freq=1, mag=2, phase=3, freq_unit="kHz", mag_unit="dB", phase_unit="deg"))
    assert_allclose(m.f_hz, [1e5, 2e5, 4e5])
    assert_allclose(m.phase_deg, [10, 0, -10])


def test_mapping_outside_the_file():
    with pytest.raises(MeasurementError, match="column 5"):
        read_measurement("100,-3\n200,0\n400,-3\n", mapping=ColumnMapping(freq=0, mag=4))
    with pytest.raises(InputError):
        ColumnMapping(freq=1, mag=1)


# --------------------------------------------------------------------------- sessions


def test_measurements_ride_in_the_session(board):
    _, _, _, paths = board
    m = read_measurement(paths["csv_khz"])
    s = Session(target=Target(2000.0, 5.0, 4.0), candidates=(CandidateEntry("mfb", "mfb", MFB),))
    s2 = with_measurement(s, m, candidate="mfb")
    back = session_measurements(loads_session(dumps_session(s2)))
    assert len(back) == 1
    m2, cand = back[0]
    assert cand == "mfb" and m2.source == m.source and m2.sha256 == m.sha256
    assert_allclose(m2.f_hz, m.f_hz, rtol=1e-15)
    assert_allclose(m2.mag_db, m.mag_db, rtol=1e-15)
    assert_allclose(m2.phase_deg, m.phase_deg, rtol=1e-15)
    # The same file again replaces, not duplicates.
    assert len(session_measurements(with_measurement(s2, m))) == 1


# --------------------------------------------------------------------------- read-off

# Tolerances of the read-off on 201 log points from f0/3 to 3·f0 with 0.05 dB scatter, from 300
# seeded trials on each example circuit (a run made while writing this module): f0 scatters by
# 0.05–0.12 % (std), Q by 0.8–1.0 %, the peak gain by 0.02–0.035 dB. The 1-dB parabola also has
# a small bias (no scatter): about −0.009 dB on the peak, so −0.2 % on Q, and up to 0.014 % on f0
# when the points do not sit symmetrically about the peak. The noisy checks allow about four
# standard deviations; the noiseless ones a little more than the interpolation bias.
NOISY = {"f0": 0.005, "q": 0.04, "gain_db": 0.12}
CLEAN = {"f0": 5e-4, "q": 0.005, "gain_db": 0.02}


@pytest.mark.parametrize(
    "topology, design, moves",
    [("mfb", MFB, {"C2": 0.06}), ("rlc-tank", TANK, {"C": 0.06}), ("rlc-tank", TANK, {"R2": -0.025, "C": 0.06}), ("mfb", MFB, {})],
)
@pytest.mark.parametrize("noise", [False, True])
def test_readoff_matches_the_moved_design(topology, design, moves, noise):
    truth = true_figures(topology, moved(design, moves))
    f, mag, ph = sweep(topology, design, moves, noise=noise, seed=11)
    r = read_off(f, mag, ph)
    tol = NOISY if noise else CLEAN
    assert_allclose(r.f0_hz, truth["f0_hz"], rtol=tol["f0"])
    assert_allclose(r.q, truth["q"], rtol=tol["q"])
    assert_allclose(r.gain_center_db, truth["gain_db"], atol=tol["gain_db"])
    # Both circuits invert: the phase at f0 is 180° (common practice, no source), the signed gain negative. The phase
    # falls by 2Q radians per unit of ln f at f0 (derived), so the f0 bias above moves it by up to
    # 0.2° without scatter.
    assert r.gain_center < 0
    assert abs(abs(r.phase_center_deg) - 180.0) < (2.0 if noise else 0.5)
    assert r.bw_hz == pytest.approx(r.f_high_hz - r.f_low_hz)


def test_readoff_without_phase_gives_the_magnitude():
    f, mag, _ = sweep("mfb", MFB, {}, noise=False)
    r = read_off(f, mag)
    assert r.gain_center > 0 and math.isnan(r.phase_center_deg)


def test_readoff_says_what_the_data_do_not_show():
    f, mag, _ = sweep("mfb", MFB, {}, noise=False)
    half = f.size // 2
    r = read_off(f[: half - 40], mag[: half - 40])  # rising all the way: no peak
    assert math.isnan(r.f0_hz) and "no peak" in r.notes[0]
    r = read_off(f[half - 40 : half + 5], mag[half - 40 : half + 5])  # peak, but no upper edge
    assert math.isfinite(r.f0_hz) and math.isnan(r.q) and "above f0" in " ".join(r.notes)


def test_readoff_of_a_measurement(board):
    _, _, _, paths = board
    m = read_measurement(paths["semicolon_comma"])
    r = read_off_measurement(m)
    truth = true_figures("mfb", moved(MFB, {"C2": 0.06}))
    assert_allclose(r.f0_hz, truth["f0_hz"], rtol=NOISY["f0"])
    assert r.points == m.points
    assert isinstance(m, Measurement)
