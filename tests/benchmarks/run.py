"""Benchmark: each job's time divided by one reference call timed beside it in the same run.

Run ``python tests/benchmarks/run.py``; the last line of output is one JSON object
``{"reference_s": …, "ratios": {JOB: …}, "absolute": {KEY: …}}`` (the README's "Benchmark"). The reference is
``scipy.signal.freqs`` on a second-order band-pass at 1000 frequencies. A ratio is the median over
the job's repeats of (the repeat's time per call) / (the reference's time per call in a block of
reference calls timed just before that repeat): the host's speed drifts (the reference alone,
timed once at the start, took 26 µs in one run and 45 µs in the next, on an idle machine), and
a ratio whose two times are taken seconds apart carries that drift; timed in pairs, both sides
of each ratio see the same host. ``reference_s`` is the reference timed once at the start.
A job whose module is not there yet is simply absent. Every job runs over every circuit and
keeps its worst, named under ``"worst"``; a goal not met is printed and the exit status is 1.
Not collected by pytest (no ``test_`` prefix).
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


def median_time(fn: Callable[[], object], *, repeat: int, number: int = 1, warm: bool = True) -> float:
    """Median over ``repeat`` runs of the mean time of ``number`` calls, in seconds."""
    if warm:
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


# Reference calls timed before each repeat of a job (some 2.6 ms at 26 µs a call), after some
# untimed ones: a job leaves the caches to itself, and the first reference calls after it ran
# 6 % slower than in a loop of their own (after 50 untimed ones, as fast), which would have
# flattered the job's ratio.
PAIRED_REFERENCE_CALLS = 100
PAIRED_REFERENCE_WARM = 50


def paired_ratio(fn: Callable[[], object], ref: Callable[[], object], *, repeat: int, number: int = 1,
                 warm: bool = True) -> tuple[float, float]:
    """``(median time, median ratio)`` over ``repeat`` repeats, each a block of
    :data:`PAIRED_REFERENCE_CALLS` reference calls (after :data:`PAIRED_REFERENCE_WARM` untimed
    ones) then ``number`` calls of ``fn`` (after one untimed call with ``warm``: each side timed
    with its own data in the caches, as when each is timed in a loop of its own): the median of
    the mean time per call of ``fn`` (s), and the median of each repeat's ratio of that mean to
    the reference's mean in the block just before it."""
    times, ratios = [], []
    for _ in range(repeat):
        gc.disable()
        for _ in range(PAIRED_REFERENCE_WARM):
            ref()
        t0 = time.perf_counter()
        for _ in range(PAIRED_REFERENCE_CALLS):
            ref()
        t_ref = (time.perf_counter() - t0) / PAIRED_REFERENCE_CALLS
        if warm:
            fn()  # warm-up: imports and caches, then the job's own data in the caches
        t1 = time.perf_counter()
        for _ in range(number):
            fn()
        t_job = (time.perf_counter() - t1) / number
        gc.enable()
        times.append(t_job)
        ratios.append(t_job / t_ref)
    return statistics.median(times), statistics.median(ratios)


def reference_call() -> Callable[[], object]:
    w0, q = 2 * np.pi * 1e3, 5.0
    b, a = [w0 / q, 0.0], [1.0, w0 / q, w0 * w0]
    w = np.logspace(2, 5, 1000)
    return lambda: scipy.signal.freqs(b, a, worN=w)


def _optional(module: str, name: str):
    try:
        return getattr(importlib.import_module(module), name)
    except (ImportError, AttributeError):
        return None


def _optional_module(module: str):
    try:
        return importlib.import_module(module)
    except ImportError:
        return None


def peak_mb(fn: Callable[[], object]) -> float:
    tracemalloc.start()
    fn()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak / 1e6


# Goals (issue "Speed on every path"): ratios to the reference, absolute figures in their units.
# A goal not met is printed and makes the exit status 1, after the JSON line.
RATIO_GOALS = {
    "analyze_one": 60.0,
    "compare_e24": 150.0,
    "mc_ideal_100k": 2000.0,
    "mc_finite_10k": 20000.0,
    "mc_finite_1m": 30000.0,
    "cascade_order8": 1000.0,
}
ABSOLUTE_GOALS = {
    "gui_replot_median_ms": 33.0,
    "gui_startup_s": 1.5,
    "fit_100k_s": 5.0,
    "fit_100k_peak_mb": 500.0,
    "mc_peak_mb": 500.0,
    "cli_start_s": 0.30,
    "sweep_1m_s": 2.0,
    "sweep_1m_peak_mb": 300.0,
    "first_analysis_x_warm": 3.0,
}


class Results:
    """What the jobs measured: ratios, absolute figures and each job's worst circuit."""

    def __init__(self, ref: float, ref_call: Callable[[], object]):
        self.ref = ref
        self.ref_call = ref_call
        self.ratios: dict[str, float] = {}
        self.absolute: dict[str, float] = {}
        self.worst: dict[str, str] = {}

    def time_each(self, name: str, make, circuits, *, repeat: int, number: int = 1, warm: bool = True):
        """Time ``make(circuit)()`` for every circuit against the reference timed beside it
        (:func:`paired_ratio`); keep the worst ratio and name its circuit."""
        worst = None
        for c in circuits:
            fn = make(c)
            t, ratio = paired_ratio(fn, self.ref_call, repeat=repeat, number=number, warm=warm)
            print(f"{name}[{c}]: {t * 1e3:.3f} ms median, {ratio:.1f}x reference (paired; "
                  f"{t / self.ref:.1f}x the reference timed at the start)", file=sys.stderr)
            if worst is None or ratio > worst[0]:
                worst = (ratio, c)
        if worst is not None:
            self.ratios[name] = worst[0]
            self.worst[name] = worst[1]
            print(f"{name}: worst {worst[1]}, {worst[0]:.1f}x reference", file=sys.stderr)

    def put(self, key: str, value: float, worst: str | None = None) -> None:
        self.absolute[key] = float(value)
        if worst is not None:
            self.worst[key] = worst
        print(f"{key}: {value:.4g}" + (f" (worst {worst})" if worst else ""), file=sys.stderr)

    def failures(self) -> list[str]:
        out = [f"{k}: {v:.1f}x > {RATIO_GOALS[k]:g}x" for k, v in self.ratios.items() if k in RATIO_GOALS and v > RATIO_GOALS[k]]
        out += [f"{k}: {v:.4g} > {ABSOLUTE_GOALS[k]:g}" for k, v in self.absolute.items() if k in ABSOLUTE_GOALS and v > ABSOLUTE_GOALS[k]]
        return out

    def to_json(self) -> dict:
        return {"reference_s": self.ref, "ratios": self.ratios, "absolute": self.absolute, "worst": self.worst}


def run_analysis_jobs(res: Results) -> None:
    """``analyze_one`` over every circuit (the worst kept) and ``compare_e24`` (every circuit in one call)."""
    jobs = _optional_module("jobs_analysis")
    if jobs is None:
        return
    res.time_each("analyze_one", jobs.analyze_one, jobs.circuits(), repeat=9, number=5)
    res.time_each("compare_e24", lambda _c: jobs.compare_e24(), ["all circuits"], repeat=9, number=2)


def run_spread_jobs(res: Results) -> None:
    """The Monte Carlo jobs over every circuit; ``mc_peak_mb`` is the largest peak of any of them."""
    jobs = _optional_module("jobs_spread")
    if jobs is None:
        return
    from jobs_analysis import circuits

    peaks = []
    for name, repeat in (("mc_ideal_100k", 3), ("mc_finite_10k", 3), ("mc_finite_1m", 1)):
        fn = getattr(jobs, name, None)
        if fn is None:
            continue
        # a million trials: warmed by the 10k job, timed once
        res.time_each(name, lambda c, fn=fn: (lambda: fn(c)), circuits(), repeat=repeat, warm=name != "mc_finite_1m")
        peaks += [(peak_mb(lambda c=c: fn(c)), f"{name}[{c}]") for c in circuits()]
    if peaks:
        mb, where = max(peaks)
        res.put("mc_peak_mb", mb, where)


def run_cascade_job(res: Results) -> None:
    fn = _optional("jobs_cascade", "cascade_order8")
    if fn is not None:
        res.time_each("cascade_order8", lambda _c: fn, ["circuits chosen per stage"], repeat=9)


def run_cli_jobs(res: Results) -> None:
    """Whole-process jobs: command start-up, a million-point sweep, the first analysis in a fresh process."""
    jobs = _optional_module("jobs_cli")
    if jobs is None:
        return
    from jobs_analysis import circuits

    print(f"numpy import floor: {jobs.numpy_floor():.3f} s (least of 7)", file=sys.stderr)
    start = jobs.cli_start()
    for cmd, t in start.items():
        print(f"cli {cmd}: median {t['median']:.3f} s, least {t['min']:.3f} s", file=sys.stderr)
    cmd = max(start, key=lambda k: start[k]["median"])
    res.put("cli_start_s", start[cmd]["median"], cmd)
    sw = jobs.sweep_1m()
    res.put("sweep_1m_s", sw["s"])
    res.put("sweep_1m_peak_mb", sw["peak_mb"])
    firsts = []
    for c in circuits():
        first, warm = jobs.first_analysis(c)
        cold, _ = jobs.first_analysis(c, preload_scipy=False, runs=1)  # printed only
        print(f"first analysis[{c}]: {first * 1e3:.2f} ms ({cold * 1e3:.2f} ms importing scipy.linalg on first use), "
              f"warm {warm * 1e3:.2f} ms", file=sys.stderr)
        firsts.append((first / warm, c))
    x, c = max(firsts)
    res.put("first_analysis_x_warm", x, c)


def run_gui_jobs(res: Results) -> None:
    """The window's jobs, each in a process of its own as a user's window is (not in this one,
    whose heap the Monte Carlo jobs have grown and fragmented)."""
    import subprocess

    if _optional_module("jobs_gui") is None:
        return
    here = Path(__file__).resolve().parent
    for key in ("gui_replot_median_ms", "gui_startup_s"):
        code = f"import sys; sys.path[:0] = [{str(here)!r}, {str(ROOT / 'tests')!r}]; import jobs_gui; print(jobs_gui.{key}())"
        done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
        if done.returncode != 0:  # the window job's own message, not just an exit status
            raise RuntimeError(f"{key} failed:\n{done.stderr}")
        res.put(key, float(done.stdout.strip().splitlines()[-1]))


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


def run_fit_job(res: Results) -> None:
    seconds, mb = fit_100k()
    res.put("fit_100k_s", seconds)
    res.put("fit_100k_peak_mb", mb)


# Job groups, run in this order; `run.py GROUP …` runs only those named.
GROUPS = {
    "analysis": run_analysis_jobs,
    "spread": run_spread_jobs,
    "cascade": run_cascade_job,
    "cli": run_cli_jobs,
    "fit": run_fit_job,
    "gui": run_gui_jobs,
}


def main(groups: list[str] | None = None) -> dict:
    unknown = sorted(set(groups or ()) - set(GROUPS))
    if unknown:
        sys.exit(f"unknown job groups {', '.join(unknown)}; choose from {', '.join(GROUPS)}")
    ref_call = reference_call()
    res = Results(median_time(ref_call, repeat=31, number=200), ref_call)
    print(f"reference: {res.ref * 1e6:.1f} us", file=sys.stderr)
    for name, run in GROUPS.items():
        if not groups or name in groups:
            run(res)
    result = res.to_json()
    print(json.dumps(result))
    failed = res.failures()
    for line in failed:
        print(f"GOAL NOT MET: {line}", file=sys.stderr)
    if failed:
        sys.exit(1)
    return result


if __name__ == "__main__":
    main(sys.argv[1:])
