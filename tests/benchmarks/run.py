"""Benchmark: each job's median time divided by one reference call measured in the same run.

Run ``python tests/benchmarks/run.py``; the last line of output is one JSON object
``{"reference_s": …, "ratios": {JOB: …}, "absolute": {KEY: …}}`` (the README's "Benchmark"). The reference is
``scipy.signal.freqs`` on a second-order band-pass at 1000 frequencies. A job whose module is not
there yet is simply absent. Not collected by pytest (no ``test_`` prefix).
"""

from __future__ import annotations

import gc
import importlib
import json
import statistics
import sys
import time
import tracemalloc
from pathlib import Path
from typing import Callable

import numpy as np
import scipy.signal

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(ROOT / "tests"))


def median_time(fn: Callable[[], object], *, repeat: int, number: int = 1) -> float:
    """Median over ``repeat`` runs of the mean time of ``number`` calls, in seconds."""
    fn()  # warm-up: imports, caches
    times = []
    for _ in range(repeat):
        gc.disable()
        t0 = time.perf_counter()
        for _ in range(number):
            fn()
        times.append((time.perf_counter() - t0) / number)
        gc.enable()
    return statistics.median(times)


def reference_call() -> Callable[[], object]:
    w0, q = 2 * np.pi * 1e3, 5.0
    b, a = [w0 / q, 0.0], [1.0, w0 / q, w0 * w0]
    w = np.logspace(2, 5, 1000)
    return lambda: scipy.signal.freqs(b, a, worN=w)


def analyze_one() -> Callable[[], object]:
    from bandsmith.analysis.analyzer import sweep
    from bandsmith.design.candidate import Candidate, Conditions
    from bandsmith.circuits import get_topology

    topo = get_topology("mfb")
    cand = Candidate(topo.id, topo.example)
    cond = Conditions(gbw_hz=1e6)
    f = np.geomspace(10.0, 10e6, 1000)

    def job():
        a = cand.analyze(cond)
        sweep(a.h_actual, f)

    return job


def compare_e24() -> Callable[[], object]:
    from bandsmith.design.compare import compare
    from bandsmith.design.designer import Spec

    spec = Spec(f0_hz=3.3e3, q=4.0, gain=3.0)
    return lambda: compare(spec, series="E24")


def _optional(module: str, name: str):
    try:
        return getattr(importlib.import_module(module), name)
    except (ImportError, AttributeError):
        return None


def peak_mb(fn: Callable[[], object]) -> float:
    tracemalloc.start()
    fn()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak / 1e6


def fit_100k() -> tuple[float, float]:
    """``bandsmith fit`` (in process) on a 100 000-point measured file: (seconds, peak MB).

    The board is the MFB example with R3 2 % high and C1 3 % low; its response is the textbook
    biquad evaluated by ``scipy.signal.freqs`` at 100 000 log-spaced points from f0/3 to 3·f0.
    Time covers reading the file and the fit; the peak is the largest traced allocation.
    """
    import contextlib
    import io
    import tempfile

    from measured_helpers import MFB, biquad, moved, true_figures

    from bandsmith.app.cli import main as cli_main

    f0 = true_figures("mfb", MFB)["f0_hz"]
    f = np.geomspace(f0 / 3.0, f0 * 3.0, 100_000)
    b, a = biquad("mfb", moved(MFB, {"R3": 0.02, "C1": -0.03}))
    _, h = scipy.signal.freqs(b, a, worN=2 * np.pi * f)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "sweep_100k.csv"
        rows = ["frequency_hz,magnitude_db,phase_deg"]
        rows += [f"{x:.9g},{m:.6f},{p:.5f}" for x, m, p in zip(f, 20 * np.log10(np.abs(h)), np.degrees(np.angle(h)))]
        path.write_text("\n".join(rows) + "\n", encoding="utf-8")
        argv = ["fit", "mfb", *(f"{k}={v!r}" for k, v in MFB.items()), "--measured", str(path), "--json"]

        def run():
            with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
                code = cli_main(argv)
            if code != 0:
                raise RuntimeError(f"fit_100k: bandsmith fit exited {code}")

        t0 = time.perf_counter()
        run()
        seconds = time.perf_counter() - t0
        return seconds, peak_mb(run)


def main() -> dict:
    ref = median_time(reference_call(), repeat=31, number=200)
    ratios: dict[str, float] = {}
    absolute: dict[str, float] = {}

    def job(name: str, make, *, repeat: int, number: int = 1):
        try:
            fn = make()
        except (ImportError, AttributeError) as exc:
            print(f"{name}: not built ({exc})", file=sys.stderr)
            return None
        t = median_time(fn, repeat=repeat, number=number)
        ratios[name] = t / ref
        print(f"{name}: {t * 1e3:.3f} ms median, {t / ref:.1f}x reference", file=sys.stderr)
        return fn

    job("analyze_one", analyze_one, repeat=15, number=10)
    job("compare_e24", compare_e24, repeat=15, number=3)
    mc_peaks = []
    for name in ("mc_ideal_100k", "mc_finite_10k"):
        fn = _optional("jobs_spread", name)
        if fn is not None:
            job(name, lambda fn=fn: fn, repeat=5)
            mc_peaks.append(peak_mb(fn))
    if mc_peaks:
        absolute["mc_peak_mb"] = max(mc_peaks)
    fn = _optional("jobs_cascade", "cascade_order8")
    if fn is not None:
        job("cascade_order8", lambda: fn, repeat=9)
    for key in ("gui_replot_median_ms", "gui_startup_s"):
        fn = _optional("jobs_gui", key)
        if fn is not None:
            absolute[key] = float(fn())
            print(f"{key}: {absolute[key]:.3g}", file=sys.stderr)
    try:
        absolute["fit_100k_s"], absolute["fit_100k_peak_mb"] = fit_100k()
        print(f"fit_100k: {absolute['fit_100k_s']:.3g} s, {absolute['fit_100k_peak_mb']:.3g} MB peak", file=sys.stderr)
    except (ImportError, AttributeError) as exc:
        print(f"fit_100k: not built ({exc})", file=sys.stderr)
    result = {"reference_s": ref, "ratios": ratios, "absolute": absolute}
    print(json.dumps(result))
    return result


if __name__ == "__main__":
    if sys.argv[1:] == ["fit_100k"]:  # the fit job alone
        s, mb = fit_100k()
        print(json.dumps({"absolute": {"fit_100k_s": s, "fit_100k_peak_mb": mb}}))
    else:
        main()
