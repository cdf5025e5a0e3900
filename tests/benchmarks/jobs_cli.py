"""Benchmark jobs of the ``bandsmith`` command as a user starts it, timed by run.py (not collected by pytest).

Each is a whole process (``python -m bandsmith.app.entry`` is what the ``bandsmith`` script runs),
wall time measured from here, so start-up, imports and output are all in.

- ``cli_start``: ``bandsmith topologies --json`` and a one-candidate ``bandsmith analyze … --json``
  (the MFB's example values, our own scenario), several runs each;
- ``sweep_1m``: ``bandsmith sweep … --points 1000000 --csv`` written to a file, with the child's
  peak resident memory;
- ``numpy_floor``: ``python -c "import numpy"``, the floor any start-up sits on.

Every child runs as on a user's machine, where the modules' bytecode is cached (``pip install``
compiles it; an editable install writes it on the first run, which the warm-up run is): a
``PYTHONDONTWRITEBYTECODE`` in the benchmark's own environment is not passed on (:func:`user_env`).
"""

from __future__ import annotations

import json
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time

MFB = ["R1=16k", "R2=1.1k", "R3=150k", "C1=2.4n", "C2=2.2n"]


def command() -> list[str]:
    """The ``bandsmith`` command beside this interpreter (a virtualenv's own, not another one found
    first on PATH), else the one on PATH, else the entry point through this interpreter."""
    exe = shutil.which("bandsmith", path=os.path.dirname(sys.executable)) or shutil.which("bandsmith")
    return [exe] if exe else [sys.executable, "-m", "bandsmith.app.entry"]


def user_env(**extra: str) -> dict[str, str]:
    """This process's environment as a user's shell has it: without ``PYTHONDONTWRITEBYTECODE``
    (set in some sandboxes, it makes every start compile our ~200 modules again, ~0.3 s), plus ``extra``."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env.update(extra)
    return env


def _wall(argv: list[str], *, stdout=subprocess.DEVNULL) -> float:
    t0 = time.perf_counter()
    subprocess.run(argv, stdout=stdout, stderr=subprocess.DEVNULL, check=True, env=user_env())
    return time.perf_counter() - t0


def _times(argv: list[str], runs: int) -> list[float]:
    _wall(argv)  # warm the file cache
    return [_wall(argv) for _ in range(runs)]


def cli_start(runs: int = 7) -> dict[str, dict[str, float]]:
    """Wall time (s) of each command: ``{"topologies": {"median", "min"}, "analyze": {...}}``."""
    out = {}
    for name, args in (("topologies", ["topologies", "--json"]), ("analyze", ["analyze", "mfb", *MFB, "--json"])):
        t = _times(command() + args, runs)
        out[name] = {"median": statistics.median(t), "min": min(t)}
    return out


def numpy_floor(runs: int = 7) -> float:
    return min(_times([sys.executable, "-c", "import numpy"], runs))


# A small Python runs the command and reports its peak resident memory: the benchmark's own
# process is large by then, and a child forked straight from it would count its pages.
_PEAK = (
    "import resource, subprocess, sys; "
    "subprocess.run(sys.argv[2:], stdout=open(sys.argv[1], 'wb'), stderr=subprocess.DEVNULL, check=True); "
    "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)"
)


def sweep_1m(runs: int = 3) -> dict[str, float]:
    """Median wall time (s) of a million-point CSV sweep to a file, and its largest peak RSS (MB)."""
    argv = command() + ["sweep", "mfb", *MFB, "--gbw", "1meg", "--points", "1000000", "--csv"]
    times = []
    with tempfile.TemporaryDirectory() as tmp:
        out = os.path.join(tmp, "sweep.csv")
        for _ in range(runs):
            with open(out, "wb") as fh:
                times.append(_wall(argv, stdout=fh))
        peak_kb = max(
            int(subprocess.run([sys.executable, "-c", _PEAK, out, *argv], capture_output=True, text=True, check=True,
                               env=user_env()).stdout.split()[-1])
            for _ in range(2)
        )  # KiB on Linux
    return {"s": statistics.median(times), "peak_mb": peak_kb * 1024 / 1e6}


_FIRST = r"""
import json, statistics, sys, time
sys.path.insert(0, {here!r})
from jobs_analysis import example_values
from bandsmith.design.candidate import Candidate, Conditions
if {preload!r}:
    import scipy.linalg  # a module the multi-op-amp analysis needs: imported, like the others
c = {circuit!r}
values = example_values(c)
cond = Conditions(gbw_hz=1e6)
t0 = time.perf_counter(); Candidate(c, values).analyze(cond).requirements; first = time.perf_counter() - t0
warm = []
for _ in range(21):
    t0 = time.perf_counter(); Candidate(c, values).analyze(cond).requirements; warm.append(time.perf_counter() - t0)
print(json.dumps([first, statistics.median(warm)]))
"""


def first_analysis(circuit: str, *, preload_scipy: bool = True, runs: int = 3) -> tuple[float, float]:
    """``(first, warm)``: one candidate's whole analysis (s; its amplifier needs too, which an
    :class:`~bandsmith.analysis.analyzer.Analysis` works out when first read) as the first in a fresh process (its modules
    already imported: with ``preload_scipy``, scipy.linalg too, which the analysis of a circuit
    with several op-amps imports on first use; its import is start-up, measured by
    :func:`cli_start`) and the median of later ones; each the median over ``runs`` fresh
    processes (a first call is one sample, at the mercy of whatever else the machine does)."""
    here = os.path.dirname(os.path.abspath(__file__))
    firsts, warms = [], []
    for _ in range(runs):
        out = subprocess.run([sys.executable, "-c", _FIRST.format(here=here, circuit=circuit, preload=preload_scipy)],
                             capture_output=True, text=True, check=True, env=user_env()).stdout
        first, warm = json.loads(out.strip().splitlines()[-1])
        firsts.append(first)
        warms.append(warm)
    return statistics.median(firsts), statistics.median(warms)
