"""Same answers as an earlier commit: the command line's JSON of this tree against another revision's.

Speed work must leave the results alone. This script runs the ``bandsmith`` command of the
current tree and of an earlier revision on one seeded list of inputs and compares the two JSON
trees key by key::

    python tests/benchmarks/identical.py --against REV [--circuits a,b,...] [--targets N]
                                         [--seed S] [--ignore PATTERN ...]

What is run, per tree (the JSON printed by the command line is the contract between versions;
the Python import names changed over time, so nothing here imports either tree):

- ``compare --f0 F --q Q --gain G --series S [--gbw GBW] --json`` for N random targets: f0
  log-uniform 50 Hz-200 kHz, Q log-uniform 0.5-60, gain log-uniform 0.3-30, series among E12,
  E24, E96 and exact, GBW among none, 1 MHz, 10 MHz and 100 MHz;
- ``tolerance CIRCUIT PARTS --trials 20000 --seed K --json`` on every circuit's example parts
  (ideal op-amp; ``--gbw 1M --gbw-tol 0.2``; normal distribution with ``--gbw 10M``; the tank
  also with a winding resistance);
- ``analyze CIRCUIT PARTS --gbw G --json`` for every target and circuit, on the parts the
  current tree chose, each scaled by its own random factor (log-uniform 0.7-1.4), so both trees
  analyse the same off-grid values.

How it compares: lists of objects are matched by their ``topology``, ``ref``, ``code`` or ``id``
key; every number to ``--rtol`` relative (|a - b| / max(|a|, |b|), default 1e-12; NaN equals
NaN), except figures that sit near zero (errors in % and dB, gains in dB, phases), which pass
by the absolute amount that the same relative tolerance allows (:func:`absolute_rules`,
``--atol``); chosen part values (``chosen``, ``components``, a netlist element's ``value``)
exactly; strings, booleans and None exactly. A key only the current tree prints is listed and
not compared (the old tree lacks it); a key only the old tree prints is a difference. A circuit
the old tree does not have is skipped and said, and so is a case with an option the old
command's ``--help`` does not list. ``--ignore PATTERN`` (repeatable) leaves out a key path and
everything under it; a pattern is matched against the whole path, for example
``compare.candidates[*].requirements.amplifiers[*].iout_peak_ma``, where ``*`` stands for any
text. ``--save-runs FILE`` keeps what both trees printed; ``--from-runs FILE`` compares it again
(other patterns, fewer circuits) without running anything.

The old revision is checked out with ``git worktree add --detach`` in a temporary folder and
installed editable (``--no-deps``) in a throwaway virtualenv that sees this interpreter's site
packages; both are removed at the end, also on error or Ctrl-C. The current tree runs with this
interpreter. Both run with one BLAS thread (OPENBLAS_NUM_THREADS=1 and the like), two processes
at a time (the machine is shared).

Prints the maximum relative difference per key path pattern, the worst few, the differences
grouped by key path with counts, and a last line of JSON (``{"identical": ..., ...}``). Exit
status 0 when the trees agree within the tolerance, 1 when they do not, 2 on bad arguments or a
revision that cannot be installed.
"""

from __future__ import annotations

import argparse
import concurrent.futures
import json
import math
import os
import re
import shutil
import subprocess
import sys
import tempfile
import time
import zlib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
TRIALS = 20000
TIMEOUT_S = 300  # one command; a wrong argument list could open the window and wait
SERIES = ("E12", "E24", "E96", "exact")
GBWS = (None, 1e6, 1e7, 1e8)
# Keys that name an element of a list of objects, tried in this order (candidates, amplifiers,
# netlist elements, verdict reasons).
LIST_KEYS = ("topology", "ref", "code", "id")
# Chosen part values: compared exactly, not to the relative tolerance.
EXACT = re.compile(r"(^|\.)(chosen|components)\.[^.\[]+$|\.elements\[\*\]\.value$")
ENV_ONE_THREAD = {k: "1" for k in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")}


# ---------------------------------------------------------------------------------------------
# Running the two trees


@dataclass(frozen=True)
class Tree:
    """One tree to run: its label and the command that starts its ``bandsmith``."""

    label: str
    argv: tuple[str, ...]


@dataclass(frozen=True)
class Result:
    """What one command printed: its exit status, its JSON (None if none) and its last error line."""

    code: int
    data: object
    error: str


def run(tree: Tree, args: list[str], cwd: str) -> Result:
    """Run ``bandsmith ARGS`` of one tree and read its JSON."""
    env = {**os.environ, **ENV_ONE_THREAD, "QT_QPA_PLATFORM": "offscreen"}
    try:
        p = subprocess.run([*tree.argv, *args], capture_output=True, text=True, cwd=cwd, env=env,
                           stdin=subprocess.DEVNULL, timeout=TIMEOUT_S)
    except subprocess.TimeoutExpired:
        return Result(-1, None, f"no answer within {TIMEOUT_S} s")
    err = (p.stderr.strip().splitlines() or [""])[-1]
    try:
        data = json.loads(p.stdout) if p.stdout.strip() else None
    except json.JSONDecodeError:
        data, err = None, err or "output is not JSON"
    return Result(p.returncode, data, err)


def make_old_tree(rev: str, tmp: Path) -> Tree:
    """Check out REV in TMP/tree and install it editable in a virtualenv TMP/venv."""
    tree, venv = tmp / "tree", tmp / "venv"
    subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "--detach", "-q", str(tree), rev], check=True)
    subprocess.run([sys.executable, "-m", "venv", "--system-site-packages", str(venv)], check=True)
    subprocess.run([str(venv / "bin" / "pip"), "install", "-q", "--no-deps", "-e", str(tree)], check=True, cwd=str(tmp))
    where = subprocess.run([str(venv / "bin" / "python"), "-c", "import bandsmith; print(bandsmith.__file__)"],
                           capture_output=True, text=True, cwd=str(tmp)).stdout.strip()
    if not where or not Path(where).resolve().is_relative_to(tree.resolve()):  # not this tree compared with itself
        sys.exit(f"identical: the old tree's interpreter imports bandsmith from {where or 'nowhere'}, not from {tree}")
    return Tree(f"{rev} (old)", (str(venv / "bin" / "bandsmith"),))


def remove_old_tree(tmp: Path) -> None:
    """Remove the worktree (and git's record of it) and the temporary folder."""
    tree = tmp / "tree"
    if tree.exists():
        subprocess.run(["git", "-C", str(ROOT), "worktree", "remove", "--force", str(tree)],
                       capture_output=True)
    shutil.rmtree(tmp, ignore_errors=True)
    # git keeps a record of a worktree whose folder went without `worktree remove`; drop only ours.
    admin = subprocess.run(["git", "-C", str(ROOT), "rev-parse", "--git-common-dir"], capture_output=True,
                           text=True).stdout.strip()
    if admin:
        base = Path(admin) if Path(admin).is_absolute() else ROOT / admin
        for meta in (base / "worktrees").glob("*"):
            gitdir = meta / "gitdir"
            if gitdir.is_file() and gitdir.read_text().strip().startswith(str(tmp)):
                shutil.rmtree(meta, ignore_errors=True)


def current_tree() -> Tree:
    """This tree, through this interpreter; refuses when the interpreter imports another tree."""
    argv = (sys.executable, "-m", "bandsmith.app.entry")
    where = subprocess.run([sys.executable, "-c", "import bandsmith; print(bandsmith.__file__)"],
                           capture_output=True, text=True, cwd=tempfile.gettempdir()).stdout.strip()
    if not where or not Path(where).resolve().is_relative_to(ROOT):
        sys.exit(f"identical: this interpreter imports bandsmith from {where or 'nowhere'}, not from {ROOT}; "
                 "install this tree editable in it")
    head = subprocess.run(["git", "-C", str(ROOT), "rev-parse", "--short", "HEAD"], capture_output=True,
                          text=True).stdout.strip()
    dirty = subprocess.run(["git", "-C", str(ROOT), "status", "--porcelain", "--untracked-files=no"],
                           capture_output=True, text=True).stdout.strip()
    return Tree(f"{head}{' + changes' if dirty else ''} (current)", argv)


# ---------------------------------------------------------------------------------------------
# The inputs


@dataclass(frozen=True)
class Case:
    """One command with its arguments, and the circuit it concerns (None for compare)."""

    name: str
    kind: str
    args: tuple[str, ...]
    circuit: str | None = None


def num(x: float) -> str:
    """A number as the command line reads it back exactly."""
    return repr(float(x))


def parts_args(parts: dict[str, float]) -> list[str]:
    return [f"{ref}={num(v)}" for ref, v in parts.items()]


def stream(seed: int, *names: object) -> np.random.Generator:
    """A generator of its own for one input: target I is the same whatever N or the circuits are."""
    return np.random.default_rng([seed, *(zlib.crc32(str(n).encode()) for n in names)])


def random_targets(n: int, seed: int) -> list[dict]:
    """N targets: f0, Q and gain log-uniform, a series and an op-amp GBW (None = ideal)."""
    out = []
    for i in range(n):
        rng = stream(seed, "target", i)
        f0 = 10 ** rng.uniform(math.log10(50.0), math.log10(2e5))
        q = 10 ** rng.uniform(math.log10(0.5), math.log10(60.0))
        gain = 10 ** rng.uniform(math.log10(0.3), math.log10(30.0))
        out.append({"f0": f0, "q": q, "gain": gain, "series": SERIES[rng.integers(len(SERIES))],
                    "gbw": GBWS[rng.integers(len(GBWS))]})
    return out


def compare_case(i: int, t: dict) -> Case:
    args = ["compare", "--f0", num(t["f0"]), "--q", num(t["q"]), "--gain", num(t["gain"]),
            "--series", t["series"], "--json"]
    if t["gbw"]:
        args += ["--gbw", num(t["gbw"])]
    gbw = f"{t['gbw']:.0e}" if t["gbw"] else "ideal"
    name = f"compare#{i} f0={t['f0']:.6g} q={t['q']:.4g} gain={t['gain']:.4g} {t['series']} gbw={gbw}"
    return Case(name, "compare", tuple(args))


def tolerance_cases(examples: dict[str, dict[str, float]], seed: int) -> list[Case]:
    """Per circuit: its example with an ideal op-amp, with a spread GBW, and normal spreads."""
    out = []
    for c, parts in examples.items():
        variants = [("ideal", parts, []), ("gbw 1M±20%", parts, ["--gbw", "1e6", "--gbw-tol", "0.2"]),
                    ("normal gbw 10M", parts, ["--dist", "normal", "--gbw", "1e7"])]
        if "RL" in parts:  # the tank's inductor with a winding resistance (another root path)
            variants.append(("RL", {**parts, "RL": 25.0}, []))
        for label, p, extra in variants:
            k = int(stream(seed, "tolerance", c, label).integers(1, 2**31))
            args = ["tolerance", c, *parts_args(p), "--trials", str(TRIALS), "--seed", str(k), *extra, "--json"]
            out.append(Case(f"tolerance {c} {label} seed={k}", "tolerance", tuple(args), c))
    return out


def analyze_cases(targets: list[dict], designed: dict[int, object], circuits: list[str],
                  seed: int) -> list[Case]:
    """Per target and circuit: the current tree's chosen parts, each scaled by a random factor."""
    out = []
    for i, t in enumerate(targets):
        data = designed.get(i)
        cands = {c.get("topology"): c for c in (data or {}).get("candidates", []) if isinstance(c, dict)}
        gbw = t["gbw"] or GBWS[1 + stream(seed, "analyze", i).integers(len(GBWS) - 1)]
        for c in circuits:
            cand = cands.get(c)
            factors = 10 ** stream(seed, "analyze", i, c).uniform(math.log10(0.7), math.log10(1.4), size=16)
            if not cand or not cand.get("feasible") or not cand.get("chosen"):
                continue
            parts = {ref: v * f for (ref, v), f in zip(cand["chosen"].items(), factors)}
            args = ["analyze", c, *parts_args(parts), "--gbw", num(gbw), "--json"]
            out.append(Case(f"analyze#{i} {c} gbw={gbw:.0e}", "analyze", tuple(args), c))
    return out


# ---------------------------------------------------------------------------------------------
# Comparing two JSON trees


@dataclass
class Tally:
    """What the comparison found, by key path pattern (list positions as [*])."""

    rtol: float
    ignore: list[re.Pattern]
    atol: list[tuple[re.Pattern, float]]
    compared: int = 0
    max_rel: dict[str, tuple[float, str, str, object, object]] = field(default_factory=dict)
    diffs: dict[str, list[tuple[str, str, object, object, str]]] = field(default_factory=dict)
    only_new: dict[str, int] = field(default_factory=dict)
    ignored: dict[str, int] = field(default_factory=dict)
    near_zero: dict[str, tuple[int, float]] = field(default_factory=dict)
    parts_compared: int = 0
    parts_differ: int = 0

    def diff(self, pattern: str, case: str, path: str, old, new, why: str) -> None:
        self.diffs.setdefault(pattern, []).append((case, path, old, new, why))

    def skipped(self, pattern: str, path: str) -> bool:
        for rx in self.ignore:
            if rx.fullmatch(pattern) or rx.fullmatch(path):
                self.ignored[pattern] = self.ignored.get(pattern, 0) + 1
                return True
        return False


def glob(pattern: str) -> re.Pattern:
    """A key path pattern: ``*`` is any text, everything else literal."""
    return re.compile(".*".join(re.escape(p) for p in pattern.split("*")))


def absolute_rules(rtol: float, given: list[str]) -> list[tuple[re.Pattern, float]]:
    """Absolute tolerances for figures that sit near zero, where a relative one means nothing.

    The figure behind each is held to RTOL relative, which allows: a gain or a gain error in dB
    20/ln 10 · RTOL, an error in percent (``errors.f0_pct``) 100 · RTOL percentage points, a phase
    in degrees 180/π · RTOL (the angle of a complex value known to RTOL relative); a verdict
    reason's value is such an error (``reasons[q_error_opamp].value`` in %, ``gain_error`` in dB).
    A rule is matched against the key pattern and the concrete path. ``--atol PATTERN=A`` rules
    come first.
    """
    rules = []
    for item in given:
        pattern, _, a = item.rpartition("=")
        try:
            rules.append((glob(pattern), float(a)))
        except ValueError:
            sys.exit(f"identical: --atol wants PATTERN=NUMBER, got {item!r}")
    db, pct, deg = 20 / math.log(10) * rtol, 100 * rtol, 180 / math.pi * rtol
    return rules + [(glob("*errors*_db"), db), (glob("*gain_center_db"), db), (glob("*errors*_pct"), pct),
                    (glob("*phase*_deg"), deg), (glob("*reasons[gain_error*].value"), db),
                    (glob("*reasons[f0_error*].value"), pct), (glob("*reasons[q_error*].value"), pct)]


def rel(a: float, b: float) -> float:
    if a == b or (math.isnan(a) and math.isnan(b)):
        return 0.0
    if not (math.isfinite(a) and math.isfinite(b)):
        return math.inf
    return abs(a - b) / max(abs(a), abs(b))


def is_num(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def list_key(a: list, b: list) -> str | None:
    """The key that names the objects of both lists, if every element has a distinct one."""
    if not a and not b:
        return None
    items = a + b
    if not all(isinstance(x, dict) for x in items):
        return None
    for k in LIST_KEYS:
        if all(k in x for x in items) and all(len({str(x[k]) for x in lst}) == len(lst) for lst in (a, b)):
            return k
    return None


def walk(t: Tally, case: str, old, new, path: str, pattern: str) -> None:
    if t.skipped(pattern, path):
        return
    if isinstance(old, dict) and isinstance(new, dict):
        for k in new:
            if k not in old:
                if not t.skipped(f"{pattern}.{k}", f"{path}.{k}"):
                    t.only_new[f"{pattern}.{k}"] = t.only_new.get(f"{pattern}.{k}", 0) + 1
        for k in old:
            p, q = f"{path}.{k}", f"{pattern}.{k}"
            if k not in new:
                if not t.skipped(q, p):
                    t.diff(q, case, p, old[k], "(absent)", "only in the old tree")
                continue
            walk(t, case, old[k], new[k], p, q)
        return
    if isinstance(old, list) and isinstance(new, list):
        key = list_key(old, new)
        if key is not None:  # matched by name: [mfb] in the path, [*] in the pattern
            a, b = {str(x[key]): x for x in old}, {str(x[key]): x for x in new}
            for k in b.keys() - a.keys():  # an item (a reason, an amplifier) the old tree did not give
                if not t.skipped(pattern + "[*]", f"{path}[{k}]"):
                    t.diff(pattern + "[*]", case, f"{path}[{k}]", "(absent)", b[k], "only in the current tree")
            for k in a:
                if k not in b:
                    if not t.skipped(pattern + "[*]", f"{path}[{k}]"):
                        t.diff(pattern + "[*]", case, f"{path}[{k}]", a[k], "(absent)", "only in the old tree")
                    continue
                walk(t, case, a[k], b[k], f"{path}[{k}]", pattern + "[*]")
            return
        if all(not isinstance(x, (dict, list)) for x in old + new) and not all(is_num(x) for x in old + new):
            if old != new:  # lists of words (warnings, notes) compared whole
                t.diff(pattern, case, path, old, new, "differs")
            return
        if len(old) != len(new):
            t.diff(pattern, case, path, f"{len(old)} items", f"{len(new)} items", "length differs")
            return
        for i, (a, b) in enumerate(zip(old, new)):
            walk(t, case, a, b, f"{path}[{i}]", pattern + "[*]")
        return
    if is_num(old) and is_num(new):
        r = rel(float(old), float(new))
        if EXACT.search(pattern):
            t.parts_compared += 1
            if old != new:
                t.parts_differ += 1
                t.diff(pattern, case, path, old, new, "chosen part differs")
            return
        t.compared += 1
        if r > t.rtol:  # a figure near zero (an error in %, a gain in dB, a phase) by its absolute rule
            d = abs(float(old) - float(new))
            atol = next((a for rx, a in t.atol if rx.fullmatch(pattern) or rx.fullmatch(path)), None)
            if atol is not None and d <= atol:
                n, m = t.near_zero.get(pattern, (0, 0.0))
                t.near_zero[pattern] = (n + 1, max(m, d))
                return
        if r > t.max_rel.get(pattern, (-1.0,))[0]:
            t.max_rel[pattern] = (r, case, path, old, new)
        if r > t.rtol:
            t.diff(pattern, case, path, old, new, f"rel {r:.3g}")
        return
    if type(old) is not type(new) or old != new:
        t.diff(pattern, case, path, old, new, "differs")


def compare_case_trees(t: Tally, case: Case, old: Result, new: Result, circuits: set[str]) -> None:
    if old.code != new.code:
        t.diff(f"{case.kind}.<exit status>", case.name, "<exit status>", f"{old.code} {old.error}",
               f"{new.code} {new.error}", "exit status differs")
        return
    if old.data is None or new.data is None:
        if (old.data is None) != (new.data is None):
            t.diff(f"{case.kind}.<output>", case.name, "<output>", old.error, new.error, "JSON in one tree only")
        return
    a, b = old.data, new.data
    if case.kind == "compare":  # only the circuits both trees have and were asked for
        a, b = dict(a), dict(b)
        for d in (a, b):
            d["candidates"] = [c for c in d.get("candidates", []) if c.get("topology") in circuits]
    walk(t, case.name, a, b, case.kind, case.kind)


# ---------------------------------------------------------------------------------------------
# Report


def short(x, width: int = 70) -> str:
    s = repr(x) if not isinstance(x, str) else x
    return s if len(s) <= width else s[: width - 1] + "…"


def _counts(title: str, counts: dict[str, int]) -> None:
    """A titled list of key paths with their counts, when there is any."""
    if counts:
        print(title)
        for k, n in sorted(counts.items()):
            print(f"  {n:6d}  {k}")


def report(t: Tally, worst: int, examples: int) -> None:
    print(f"\nnumbers compared: {t.compared}; chosen part values compared exactly: {t.parts_compared} "
          f"({t.parts_differ} differ)")
    nonzero = sorted(((v[0], k) for k, v in t.max_rel.items() if v[0] > 0), reverse=True)
    print(f"max relative difference per key path ({len(nonzero)} of {len(t.max_rel)} patterns not exactly equal):")
    for r, k in nonzero:
        print(f"  {r:10.3g}  {k}")
    print(f"worst {worst}:")
    for r, k in nonzero[:worst]:
        _, case, path, a, b = t.max_rel[k]
        print(f"  {r:10.3g}  {case}  {path}: {a!r} -> {b!r}")
    _counts("keys only the current tree prints (not compared):", t.only_new)
    if t.near_zero:
        print("beyond the relative tolerance but within the absolute one (near zero):")
        for k, (n, m) in sorted(t.near_zero.items()):
            print(f"  {n:6d}  |a-b| <= {m:.3g}  {k}")
    _counts("ignored (--ignore):", t.ignored)
    if t.diffs:
        print(f"DIFFERENCES beyond {t.rtol:g} relative or not equal, by key path ({len(t.diffs)} paths):")
        print(f"  {'count':>6}  {'max rel':>9}  {'max |a-b|':>9}  key path")
        for k, items in sorted(t.diffs.items(), key=lambda kv: -len(kv[1])):
            nums = [(rel(float(a), float(b)), abs(float(a) - float(b))) for _, _, a, b, _ in items
                    if is_num(a) and is_num(b)]
            r = f"{max(x[0] for x in nums):9.3g}  {max(x[1] for x in nums):9.3g}" if nums else f"{'':9}  {'':9}"
            print(f"  {len(items):6d}  {r}  {k}")
            items = sorted(items, key=lambda it: -rel(float(it[2]), float(it[3])) if is_num(it[2]) and is_num(it[3]) else 0)
            for case, path, a, b, why in items[:examples]:
                print(f"            {why}: {case}  {path}\n              old {short(a)}\n              new {short(b)}")
    else:
        print(f"no differences beyond {t.rtol:g} relative")


# ---------------------------------------------------------------------------------------------


def topologies(tree: Tree, cwd: str) -> dict[str, dict[str, float]]:
    r = run(tree, ["topologies", "--json"], cwd)
    if r.code != 0 or not isinstance(r.data, dict):
        sys.exit(f"identical: {tree.label}: topologies --json failed: {r.error}")
    return {t["id"]: t["example"] for t in r.data["topologies"]}


USED_OPTIONS = {"compare": ("--f0", "--q", "--gain", "--series", "--gbw", "--json"),
                "tolerance": ("--trials", "--seed", "--gbw", "--gbw-tol", "--dist", "--json"),
                "analyze": ("--gbw", "--json")}


def old_options(tree: Tree, cwd: str) -> dict[str, set[str]]:
    """The options each command used here lacks in TREE (read off its ``--help``)."""
    out = {}
    for kind, used in USED_OPTIONS.items():
        r = subprocess.run([*tree.argv, kind, "--help"], capture_output=True, text=True, cwd=cwd,
                           stdin=subprocess.DEVNULL, timeout=TIMEOUT_S)
        have = set(re.findall(r"--[a-z0-9-]+", r.stdout))
        out[kind] = {o for o in used if o not in have} if r.returncode == 0 else {"(the command itself)"}
    return out


def runnable(cases: list[Case], lacks: dict[str, set[str]], notes: list[str]) -> list[Case]:
    """The cases whose options the old tree has; the others are said in NOTES and not run."""
    keep, skipped = [], {}
    for c in cases:
        missing = sorted(o for o in lacks.get(c.kind, ()) if o in c.args or o.startswith("("))
        if missing:
            skipped.setdefault((c.kind, tuple(missing)), []).append(c)
        else:
            keep.append(c)
    for (kind, missing), cs in skipped.items():
        notes.append(f"SKIPPED {len(cs)} {kind} cases: the old tree lacks {', '.join(missing)}")
    return keep


def run_all(trees: tuple[Tree, Tree], cases: list[Case], cwd: str, jobs: int) -> list[tuple[Result, Result]]:
    with concurrent.futures.ThreadPoolExecutor(max_workers=jobs) as pool:
        futs = [(pool.submit(run, trees[0], list(c.args), cwd), pool.submit(run, trees[1], list(c.args), cwd))
                for c in cases]
        return [(a.result(), b.result()) for a, b in futs]


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--against", required=True, metavar="REV", help="the earlier revision (commit, tag, branch)")
    ap.add_argument("--circuits", help="comma-separated circuit ids (default: every circuit of the current tree)")
    ap.add_argument("--targets", type=int, default=40, metavar="N", help="random targets (default 40)")
    ap.add_argument("--seed", type=int, default=1, metavar="S", help="seed of the inputs (default 1)")
    ap.add_argument("--ignore", action="append", default=[], metavar="PATTERN",
                    help="leave out a key path and what is under it, e.g. 'compare.candidates[*].notes' (repeatable)")
    ap.add_argument("--atol", action="append", default=[], metavar="PATTERN=A",
                    help="a number under PATTERN also passes when |a - b| <= A (repeatable; before the built-in "
                         "rules for errors in %% and dB, gains in dB and phases in degrees)")
    ap.add_argument("--rtol", type=float, default=1e-12, help="relative tolerance for figures (default 1e-12)")
    ap.add_argument("--jobs", type=int, default=2, choices=(1, 2), help="processes at a time (default 2)")
    ap.add_argument("--worst", type=int, default=8, metavar="N", help="worst differences listed (default 8)")
    ap.add_argument("--examples", type=int, default=2, metavar="N",
                    help="examples shown per key path that differs, worst first (default 2)")
    ap.add_argument("--save-runs", metavar="FILE", help="also write every case and both trees' output to FILE")
    ap.add_argument("--from-runs", metavar="FILE",
                    help="compare the output kept by --save-runs instead of running (other --ignore patterns, "
                         "--circuits a part of them)")
    args = ap.parse_args(argv)
    if args.targets < 0:
        ap.error("--targets must be 0 or more")
    rev = subprocess.run(["git", "-C", str(ROOT), "rev-parse", "--verify", "--short", f"{args.against}^{{commit}}"],
                         capture_output=True, text=True)
    if rev.returncode != 0:
        ap.error(f"--against: {args.against!r} is not a commit of this repository")
    t0 = time.perf_counter()
    if args.from_runs:
        runs = json.loads(Path(args.from_runs).read_text())
    else:
        runs = run_trees(args, rev.stdout.strip(), ap)
        if runs is None:
            return 2
        if args.save_runs:
            Path(args.save_runs).write_text(json.dumps(runs))
    circuits, missing = runs["circuits"], runs["missing"]
    if args.from_runs and args.circuits:  # a part of what was run
        circuits = [c for c in circuits if c in args.circuits.split(",")]
        runs["cases"] = [x for x in runs["cases"] if x[0][3] is None or x[0][3] in circuits]
    print(f"identical: {runs['new']} against {runs['old']}; seed {runs['seed']}, {runs['targets']} targets, "
          f"rtol {args.rtol:g}, {args.jobs} processes")
    print(f"circuits compared: {', '.join(circuits)}")
    if missing:
        print(f"SKIPPED, not in {runs['against']}: {', '.join(missing)} (their candidates, tolerance and analyze runs)")
    for note in runs["notes"]:
        print(f"note: {note}")

    tally = Tally(args.rtol, [glob(p) for p in args.ignore], absolute_rules(args.rtol, args.atol))
    counts: dict[str, int] = {}
    failed: dict[str, int] = {}
    for c, a, b in runs["cases"]:
        case, a, b = Case(c[0], c[1], tuple(c[2]), c[3]), Result(*a), Result(*b)
        counts[case.kind] = counts.get(case.kind, 0) + 1
        if a.code != 0 and b.code != 0:
            failed[case.kind] = failed.get(case.kind, 0) + 1
        compare_case_trees(tally, case, a, b, set(circuits))
    print("cases: " + ", ".join(f"{k} {n}" for k, n in counts.items())
          + (f"; failing in both trees alike: {failed}" if failed else ""))
    report(tally, args.worst, args.examples)
    finite = [v[0] for v in tally.max_rel.values() if math.isfinite(v[0])]
    same = not tally.diffs
    print(json.dumps({
        "identical": same, "against": runs["against"], "current": runs["new"].split(" ")[0],
        "circuits": circuits, "skipped_circuits": missing, "targets": runs["targets"], "seed": runs["seed"],
        "cases": sum(counts.values()), "numbers": tally.compared,
        "max_rel_diff": max(finite, default=0.0), "parts_compared": tally.parts_compared,
        "parts_differ": tally.parts_differ, "difference_paths": len(tally.diffs),
        "differences": sum(len(v) for v in tally.diffs.values()), "only_new_paths": len(tally.only_new),
        "ignored": args.ignore, "seconds": round(time.perf_counter() - t0, 1)}))
    return 0 if same else 1


def run_trees(args: argparse.Namespace, rev: str, ap: argparse.ArgumentParser) -> dict | None:
    """Install REV beside this tree, run every case in both and return what they printed."""
    new = current_tree()
    tmp = Path(tempfile.mkdtemp(prefix="bandsmith-identical-"))
    try:
        try:
            old = make_old_tree(rev, tmp)
        except subprocess.CalledProcessError as e:
            print(f"identical: could not install {args.against}: {e}", file=sys.stderr)
            return None
        cwd = str(tmp)
        ex_new, ex_old = topologies(new, cwd), topologies(old, cwd)
        wanted = args.circuits.split(",") if args.circuits else list(ex_new)
        unknown = [c for c in wanted if c not in ex_new]
        if unknown:
            ap.error(f"--circuits: {', '.join(unknown)} not in the current tree ({', '.join(ex_new)})")
        circuits = [c for c in wanted if c in ex_old]
        notes = [f"{c} has parts {sorted(ex_old[c])} in the old tree, {sorted(ex_new[c])} now"
                 for c in circuits if set(ex_old[c]) != set(ex_new[c])]

        targets = random_targets(args.targets, args.seed)
        cases = [compare_case(i, t) for i, t in enumerate(targets)]
        cases += tolerance_cases({c: ex_new[c] for c in circuits}, args.seed)
        lacks = old_options(old, cwd)
        cases = runnable(cases, lacks, notes)
        results = run_all((old, new), cases, cwd, args.jobs)
        designed = {i: r[1].data for r, c in zip(results, cases) if c.kind == "compare"
                    for i in [int(c.name.split("#")[1].split(" ")[0])]}
        more = runnable(analyze_cases(targets, designed, circuits, args.seed), lacks, notes)
        cases += more
        results += run_all((old, new), more, cwd, args.jobs)
        return {"new": new.label, "old": old.label, "against": args.against, "seed": args.seed,
                "targets": args.targets, "circuits": circuits, "notes": notes,
                "missing": [c for c in wanted if c not in ex_old],
                "cases": [[[c.name, c.kind, list(c.args), c.circuit], [a.code, a.data, a.error], [b.code, b.data, b.error]]
                          for c, (a, b) in zip(cases, results)]}
    finally:
        remove_old_tree(tmp)


if __name__ == "__main__":
    sys.exit(main())
