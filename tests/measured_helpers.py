"""Synthetic bench measurements for the measurement, diagnosis and ``fit`` tests.

The "board" is a known design with one or two parts moved by a known amount. Its response is
computed outside the project: the textbook biquad of each circuit (derived by nodal analysis;
checked with sympy in test_circuits_sympy.py) evaluated by ``scipy.signal.freqs``. It is sampled at 201
log-spaced points from f0/3 to 3·f0, as a network analyser's sweep would be, with seeded
Gaussian scatter of 0.05 dB and 0.5° (a bench instrument's trace noise; common practice, no
source), and written in the layouts the tests read.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import scipy.signal

NOISE_DB = 0.05
NOISE_DEG = 0.5
POINTS = 201

# The circuits' example designs (core/circuits/*.py EXAMPLE), written out here on purpose.
TANK = {"R1": 3300.0, "R2": 6800.0, "L": 0.01, "C": 22e-9}
MFB = {"R1": 10e3, "R2": 866.0, "R3": 82e3, "C1": 10e-9, "C2": 10e-9}


def biquad(topology: str, v: dict) -> tuple[np.ndarray, np.ndarray]:
    """``(b, a)`` in s of the ideal-op-amp band-pass (derived by nodal analysis)."""
    if topology == "rlc-tank":
        # H(s) = -(s/(R1·C)) / (s² + s/(R2·C) + 1/(L·C))
        return np.array([-1.0 / (v["R1"] * v["C"]), 0.0]), np.array([1.0, 1.0 / (v["R2"] * v["C"]), 1.0 / (v["L"] * v["C"])])
    if topology == "mfb":
        # H(s) = -(s/(R1·C2)) / (s² + s·(C1+C2)/(R3·C1·C2) + (1/R1 + 1/R2)/(R3·C1·C2))
        r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
        return np.array([-1.0 / (r1 * c2), 0.0]), np.array([1.0, (c1 + c2) / (r3 * c1 * c2), (1 / r1 + 1 / r2) / (r3 * c1 * c2)])
    raise KeyError(topology)


def true_figures(topology: str, v: dict) -> dict:
    """f0, Q and centre gain of the biquad ``k·s/(s² + (ω0/Q)·s + ω0²)``: the peak of |H| is at
    ω0 exactly, the −3 dB bandwidth is ω0/Q exactly, the peak gain is k·Q/ω0 (derived)."""
    b, a = biquad(topology, v)
    w0 = math.sqrt(a[2])
    q = w0 / a[1]
    gain = b[0] / a[1]
    return {"f0_hz": w0 / (2 * math.pi), "q": q, "gain": gain, "gain_db": 20 * math.log10(abs(gain))}


def moved(v: dict, moves: dict) -> dict:
    out = dict(v)
    for k, frac in moves.items():
        out[k] = out[k] * (1.0 + frac)
    return out


def sweep(topology: str, design: dict, moves: dict, *, seed: int = 7, noise: bool = True):
    """``(f_hz, mag_db, phase_deg)`` of the moved board around the design's f0."""
    f0 = true_figures(topology, design)["f0_hz"]
    f = np.geomspace(f0 / 3.0, f0 * 3.0, POINTS)
    b, a = biquad(topology, moved(design, moves))
    _, h = scipy.signal.freqs(b, a, worN=2 * np.pi * f)
    mag = 20 * np.log10(np.abs(h))
    ph = np.degrees(np.angle(h))
    if noise:
        rng = np.random.default_rng(seed)
        mag = mag + rng.normal(0.0, NOISE_DB, f.size)
        ph = ph + rng.normal(0.0, NOISE_DEG, f.size)
    return f, mag, ph


def _fmt(x: float, digits: int, comma: bool = False, minus: str = "-") -> str:
    s = f"{x:.{digits}f}"
    if comma:
        s = s.replace(".", ",")
    return s.replace("-", minus)


def write_layouts(folder: Path, f, mag, ph) -> dict[str, Path]:
    """The same sweep in several layouts; returns name → path."""
    folder.mkdir(parents=True, exist_ok=True)
    lin = 10 ** (mag / 20)
    out = {}

    p = folder / "csv_khz.csv"  # CSV, a header with units, kHz, a comment line first
    rows = ["# board 3, bench sweep", "Frequency (kHz),Gain (dB),Phase (deg)"]
    rows += [f"{_fmt(x / 1e3, 9)},{_fmt(m, 5)},{_fmt(q, 4)}" for x, m, q in zip(f, mag, ph)]
    p.write_text("\n".join(rows) + "\n", encoding="utf-8")
    out["csv_khz"] = p

    p = folder / "semicolon_comma.csv"  # semicolons, decimal commas, the typographic minus, CRLF
    minus = "\u2212"
    rows = ["frequency [Hz];magnitude [dB];phase [°]"]
    rows += [f"{_fmt(x, 6, True)};{_fmt(m, 5, True, minus)};{_fmt(q, 4, True, minus)}" for x, m, q in zip(f, mag, ph)]
    p.write_bytes(("\r\n".join(rows) + "\r\n").encode("utf-8"))
    out["semicolon_comma"] = p

    p = folder / "whitespace.txt"  # white space, comments of three kinds, no header, Hz, dB, degrees
    rows = ["! exported sweep", "# f  mag  phase", "; 201 points", ""]
    for k, (x, m, q) in enumerate(zip(f, mag, ph)):
        rows.append(f"{_fmt(x, 6):>14}   {_fmt(m, 5):>10}\t{_fmt(q, 4):>10}")
        if k == 100:
            rows.append("# centre of the band")
    p.write_text("\n".join(rows) + "\n", encoding="utf-8")
    out["whitespace"] = p

    p = folder / "linear_rad.tsv"  # tabs, linear magnitude, phase in radians, MHz, a BOM
    rows = ["Frequency/MHz\t|H| (V/V)\tPhase (rad)"]
    rows += [f"{_fmt(x / 1e6, 12)}\t{_fmt(g, 7)}\t{_fmt(math.radians(q), 7)}" for x, g, q in zip(f, lin, ph)]
    p.write_bytes(b"\xef\xbb\xbf" + ("\n".join(rows) + "\n").encode("utf-8"))
    out["linear_rad"] = p

    p = folder / "quoted_magnitude.csv"  # quoted CSV, snake-case units, magnitude only
    rows = ['"freq_hz","gain_db"'] + [f'"{_fmt(x, 6)}","{_fmt(m, 5)}"' for x, m in zip(f, mag)]
    p.write_text("\n".join(rows) + "\n", encoding="utf-8")
    out["quoted_magnitude"] = p
    return out
