"""Design from a target: exact part values, standard values chosen by a combination search, checks.

:func:`design` runs a circuit's own design procedure (``Topology.synthesize``, written in its
module), checks that every part can be made, chooses standard values and analyses the chosen
parts, reporting the errors against the target and warnings where the design is feasible but
impractical.

Choosing standard values
------------------------
Every part that is neither pinned nor an inductor's winding resistance is offered the standard
values up to ``width`` steps of the series below and above its exact value (by default one step:
the two standard values that bracket it, or — for a value already standard, such as the capacitor
level a design procedure chose — itself and its two neighbours). Inductors are taken from E12
when E24 is asked (:func:`part_series_of`). All combinations are analysed in one batch (through
the circuit's coefficient expansion, :mod:`bandsmith.solver.expansion`, or one batched solve where it does not
apply; measured by :func:`bandsmith.analysis.figures.measure` — in closed form for second-order band-passes, by
exact roots otherwise, or on a grid around the target for very large batches), and the
combination with the least weighted error wins:

    E = √((Δf0/f0 / tol_f0)² + (ΔQ/Q / tol_q)² + (Δgain_dB / tol_gain_db)²),

the errors relative to the target and weighted by the tolerances of the conditions (by default
1 %, 5 % and 0.5 dB). Unstable combinations (a denominator failing Routh's test) are never chosen.
Because rounding every part alone to its nearest standard value is one of the combinations, the
search is never worse than that. The reported errors come from the full analysis of the chosen
parts, not from the search.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from bandsmith.analysis.analyzer import Analysis, Tolerances, transfer_function
from bandsmith.design.candidate import Candidate, Conditions
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.limits import check_part_value
from bandsmith.common.eseries import SERIES_NAMES, in_series, search_options
from bandsmith.solver.expansion import ExpansionUnavailable, unit_expansion
from bandsmith.analysis.figures import Figures, measure
from bandsmith.analysis.inductor import inductor_q_needed, inductor_q_warning
from bandsmith.circuits.synthesis import MADE, PRACTICAL, Infeasible, Spec, hurwitz_stable, search_grid
from bandsmith.circuits.topology import Topology
from bandsmith.common.values import format_value, parse_value, KIND_UNITS

__all__ = [
    "Spec",
    "DesignResult",
    "Choice",
    "design",
    "design_json",
    "errors_of",
    "weighted_error",
    "choose_standard",
    "spread_of",
    "parse_fixed",
    "part_series_of",
]

UNITS = {"R": "Ω", "L": "H", "C": "F"}
_KIND_NAMES = {"R": "resistor", "C": "capacitor", "L": "inductor"}
# Warn when the tolerance needed on every part to hold Q within its tolerance falls below this.
_TIGHT_PARTS = 0.005
# Warn above these spreads (largest/smallest value among resistors, among capacitors).
_SPREAD_R, _SPREAD_C = 1000.0, 100.0
# Batches up to this size are measured by exact roots (global, and cheaper there), larger on a grid.
_ROOTS_UP_TO = 4096


@dataclass(frozen=True, slots=True)
class Choice:
    """The outcome of a standard-value search.

    ``values`` are the chosen parts (None when no combination is stable); ``weighted`` and
    ``weighted_rounded`` are the weighted errors (see the module notes) of the chosen
    combination and of every part rounded alone, as measured in the search.
    """

    values: dict[str, float] | None
    combinations: int
    weighted: float
    weighted_rounded: float


@dataclass(frozen=True, slots=True)
class DesignResult:
    """A design of one circuit for one target.

    Attributes
    ----------
    topology_id : str
    spec : Spec
    feasible : bool
        False when the circuit cannot meet the target; ``reason`` then says why.
    reason : str or None
    exact : dict
        Exact part values (SI units) from the circuit's design procedure; empty when infeasible.
    chosen : dict
        The parts chosen from ``series`` (pinned parts and the winding resistance kept as given).
    series : str
        ``E6`` ... ``E192`` or ``exact``.
    ideal : Figures or None
        Figures of the chosen parts with an ideal op-amp.
    errors : dict or None
        ``f0_pct``, ``q_pct``, ``gain_db``: the chosen parts' ideal figures against the target.
    warnings : tuple of str
        Feasible but impractical: large spread, parts outside what is usually stocked, parts
        needing tight tolerances, errors beyond the tolerances.
    analysis : Analysis or None
        Full analysis of the chosen parts under ``conditions``.
    notes : tuple of str
        What the design procedure chose (impedance level, amplifier gain) and why.
    fixed : tuple of str
        The pinned parts.
    conditions : Conditions
    search : Choice or None
        The standard-value search (None with ``series="exact"``).
    """

    topology_id: str
    spec: Spec
    feasible: bool
    reason: str | None
    exact: Mapping[str, float]
    chosen: Mapping[str, float]
    series: str
    ideal: Figures | None
    errors: Mapping[str, float] | None
    warnings: tuple[str, ...]
    analysis: Analysis | None
    notes: tuple[str, ...] = ()
    fixed: tuple[str, ...] = ()
    conditions: Conditions = field(default_factory=Conditions)
    search: Choice | None = None

    @property
    def topology(self) -> Topology:
        return get_topology(self.topology_id)


def parse_fixed(topology: Topology, fixed: Mapping[str, float | str] | None) -> dict[str, float]:
    """Pinned parts as SI floats: known references, values in any notation, above zero (RL: zero or more)."""
    out = {}
    for ref, v in (fixed or {}).items():
        comp = topology.component(ref)
        x = parse_value(v, field=ref, unit=KIND_UNITS.get(comp.kind))
        if not math.isfinite(x):
            raise InputError(ref, f"{x!r} is not a finite number")
        if comp.required and x <= 0:
            raise InputError(ref, f"must be greater than zero, got {x:g}")
        if not comp.required and x < 0:
            raise InputError(ref, f"must be zero or more, got {x:g}")
        if x > 0:
            check_part_value(ref, comp.kind, x)
        out[ref] = x
    return out


def errors_of(fig: Figures, spec: Spec, i: int = 0) -> dict[str, float]:
    """``f0_pct``, ``q_pct``, ``gain_db`` of member ``i`` of ``fig`` against the target."""
    one = fig.item(i)
    return {
        "f0_pct": 100.0 * (one.f0_hz / spec.f0_hz - 1.0),
        "q_pct": 100.0 * (one.q / spec.q - 1.0),
        "gain_db": one.gain_center_db - 20.0 * math.log10(spec.gain),
    }


def weighted_error(errors: Mapping[str, float], tolerances: Tolerances = Tolerances()) -> float:
    """The search's weighted error of an ``errors`` dict (see the module notes); inf if undefined."""
    e = math.sqrt(
        (errors["f0_pct"] / 100.0 / tolerances.f0) ** 2
        + (errors["q_pct"] / 100.0 / tolerances.q) ** 2
        + (errors["gain_db"] / tolerances.gain_db) ** 2
    )
    return e if math.isfinite(e) else math.inf


def _weighted_batch(fig: Figures, spec: Spec, tol: Tolerances) -> np.ndarray:
    with np.errstate(invalid="ignore", divide="ignore"):
        e = np.sqrt(
            ((fig.f0_hz / spec.f0_hz - 1.0) / tol.f0) ** 2
            + ((fig.q / spec.q - 1.0) / tol.q) ** 2
            + ((fig.gain_center_db - 20.0 * math.log10(spec.gain)) / tol.gain_db) ** 2
        )
    return np.where(np.isfinite(e), e, np.inf)


def part_series_of(kind: str, series: str) -> str:
    """The series a part of this kind is chosen from: inductors from E12 when E24 is asked.

    Inductors are seldom stocked in E24 values (common practice, no source); E12 is a subset of
    E24, so the chosen values still lie in the series asked for.
    """
    return "E12" if kind == "L" and series == "E24" else series


def _options(x: np.ndarray, series: str, width: int) -> list[np.ndarray]:
    """For each value, the standard values up to ``width`` steps of the series below and above it
    (:func:`bandsmith.common.eseries.search_options`)."""
    return search_options(x, series, width)[0]


def _combinations(netlist, over: Mapping[str, np.ndarray], w_ref: float):
    """Transfer functions of every combination (part values by reference, arrays of one length).

    Through the netlist's coefficient expansion (:mod:`bandsmith.solver.expansion`, built once per circuit)
    when it applies, else one batched solve.
    """
    try:
        exp, variables = unit_expansion(netlist)
    except ExpansionUnavailable:
        return transfer_function(netlist, overrides=over, w_ref=w_ref)
    size = len(next(iter(over.values())))
    ratios = np.empty((size, len(exp.variables)))
    for j, (v, unit) in enumerate(zip(variables, exp.variables)):
        ratios[:, j] = (over[v.name] if v.name in over else v.value) / unit.value
    return exp.rational(ratios, w_ref=w_ref)


@functools.lru_cache(maxsize=64)
def _combination_index(sizes: tuple[int, ...]) -> np.ndarray:
    """Index rows ``(len(sizes), N + 1)`` that enumerate every combination of options of these
    counts (the last part fastest, as ``np.meshgrid(..., indexing="ij")``), then one more column
    that points each part at the entry after its options (the nearest value)."""
    grid = np.indices(sizes).reshape(len(sizes), -1)
    index = np.concatenate([grid, np.array(sizes)[:, None]], axis=1)
    index.setflags(write=False)
    return index


def choose_standard(
    topology: Topology,
    exact: Mapping[str, float],
    spec: Spec,
    series: str,
    *,
    keep: tuple[str, ...] = (),
    tolerances: Tolerances = Tolerances(),
    width: int = 1,
) -> Choice:
    """Choose standard values for the parts not in ``keep`` by a batched combination search.

    See the module notes. Optional parts (the winding resistance) are never changed.
    """
    values = topology.values_from(dict(exact))
    free = [c.ref for c in topology.components if c.required and c.ref not in keep]
    netlist = topology.build(values)
    if not free:
        h = transfer_function(netlist, w_ref=spec.w0)
        cost = float(np.where(hurwitz_stable(h.den), _weighted_batch(measure(h), spec, tolerances), np.inf)[0])
        return Choice(values if math.isfinite(cost) else None, 1, cost, cost)
    x = np.array([values[r] for r in free])
    part_series = [part_series_of(topology.component(r).kind, series) for r in free]
    options = [None] * len(free)
    rounded = np.empty(len(free))
    for ps in set(part_series):
        idx = [i for i, p in enumerate(part_series) if p == ps]
        opts, near = search_options(x[idx], ps, width)
        for i, o in zip(idx, opts):
            options[i] = o
        rounded[idx] = near
    # Every combination of the options, and last the member that rounds every part alone to its
    # nearest standard value, for comparison: each part's options with its nearest value after
    # them, taken by a combination index.
    index = _combination_index(tuple(o.size for o in options))
    over = {r: np.append(o, v)[k] for r, o, v, k in zip(free, options, rounded.tolist(), index)}
    with np.errstate(all="ignore"):  # far-off combinations may overflow; they are simply not chosen
        h = _combinations(netlist, over, spec.w0)
        # exact polynomial roots up to a few thousand members; a grid around the target beyond
        fig = measure(h) if h.batch <= _ROOTS_UP_TO else measure(h, grid=search_grid(spec.q))
        cost = np.where(hurwitz_stable(h.den) & fig.valid, _weighted_batch(fig, spec, tolerances), np.inf)
    i = int(np.argmin(cost[:-1]))
    chosen = dict(values)
    chosen.update({r: float(over[r][i]) for r in free})
    return Choice(
        values=chosen if math.isfinite(cost[i]) else None,
        combinations=int(cost.size - 1),
        weighted=float(cost[i]),
        weighted_rounded=float(cost[-1]),
    )


def spread_of(topology: Topology, values: Mapping[str, float]) -> dict[str, float | None]:
    """Largest over smallest value among the resistors (``r``) and among the capacitors (``c``).

    The winding resistance is not a resistor here; None where a circuit has no such part.
    """
    out = {}
    for kind, key in (("R", "r"), ("C", "c")):
        vals = [values[c.ref] for c in topology.components if c.kind == kind and c.required and values.get(c.ref, 0) > 0]
        out[key] = max(vals) / min(vals) if vals else None
    return out


def _limits(topology: Topology, values: Mapping[str, float]) -> str | None:
    """A reason when a part lies outside what is made (MADE), else None."""
    for c in topology.components:
        v = values.get(c.ref, 0.0)
        if not c.required:
            continue
        lo, hi = MADE[c.kind]
        if not (lo <= v <= hi):
            word = "above" if v > hi else "below"
            return (
                f"{c.ref} would be {format_value(v, UNITS[c.kind])}, {word} any {_KIND_NAMES[c.kind]} made "
                f"({format_value(lo, UNITS[c.kind])} to {format_value(hi, UNITS[c.kind])}); this target is out of this circuit's reach"
            )
    return None


def _warnings(topology: Topology, chosen: Mapping[str, float], exact: Mapping[str, float], result_errors, analysis: Analysis, series: str, tol: Tolerances, fixed) -> list[str]:
    out = []
    for c in topology.components:
        v = chosen.get(c.ref, 0.0)
        if not c.required:
            continue
        lo, hi = PRACTICAL[c.kind]
        if v > hi or v < lo:
            unit = UNITS[c.kind]
            if c.kind == "L":
                what = "larger than most catalogue inductors" if v > hi else "smaller than most catalogue inductors"
            elif c.kind == "C":
                what = "too large for a stable film or ceramic part" if v > hi else "close to stray capacitance"
            else:
                what = "high: leakage, noise and stray capacitance matter" if v > hi else "low: it loads the op-amp and its driver"
            out.append(f"{c.ref} = {format_value(v, unit)} is {what} (usual range {format_value(lo, unit)} to {format_value(hi, unit)})")
    sp = spread_of(topology, chosen)
    if sp["r"] is not None and sp["r"] > _SPREAD_R:
        out.append(f"large resistor spread: {sp['r']:.3g} : 1 between the largest and the smallest resistor")
    if sp["c"] is not None and sp["c"] > _SPREAD_C:
        out.append(f"large capacitor spread: {sp['c']:.3g} : 1 between the largest and the smallest capacitor")
    sq = analysis.sensitivity.get("q", {})
    total = sum(abs(s) for s in sq.values() if math.isfinite(s))
    if total > 0:
        needed = tol.q / total
        if needed < _TIGHT_PARTS:
            worst = sorted(sq, key=lambda r: -abs(sq[r]))[:2]
            out.append(
                f"Q is very sensitive to the parts (sum of |S(Q)| = {total:.3g}, most to {' and '.join(worst)}): holding Q within "
                f"±{100 * tol.q:g} % takes parts of about ±{100 * needed:.2g} % or a trimmer"
            )
    if series != "exact" and result_errors is not None:
        misses = []
        if abs(result_errors["f0_pct"]) > 100 * tol.f0:
            misses.append(f"f0 {result_errors['f0_pct']:+.3g} % (tolerance ±{100 * tol.f0:g} %)")
        if abs(result_errors["q_pct"]) > 100 * tol.q:
            misses.append(f"Q {result_errors['q_pct']:+.3g} % (±{100 * tol.q:g} %)")
        if abs(result_errors["gain_db"]) > tol.gain_db:
            misses.append(f"gain {result_errors['gain_db']:+.3g} dB (±{tol.gain_db:g} dB)")
        if misses:
            out.append(f"with {series} values the best combination still misses: " + ", ".join(misses) + "; use a finer series or trim a part")
        off = [r for r in fixed if topology.component(r).required and not in_series(chosen[r], series)]
        if off:
            out.append(f"pinned {', '.join(off)} {'is' if len(off) == 1 else 'are'} not {series} values; kept as given")
    return out


@functools.lru_cache(maxsize=None)
def _takes_series(fn) -> bool:
    import inspect

    try:
        return "series" in inspect.signature(fn).parameters
    except (TypeError, ValueError):
        return False


def _infeasible(topo: Topology, spec: Spec, series: str, reason: str, fixed, conditions, exact=None, notes=()) -> DesignResult:
    return DesignResult(
        topology_id=topo.id,
        spec=spec,
        feasible=False,
        reason=reason,
        exact=dict(exact or {}),
        chosen={},
        series=series,
        ideal=None,
        errors=None,
        warnings=(),
        analysis=None,
        notes=tuple(notes),
        fixed=tuple(fixed),
        conditions=conditions,
    )


def design(
    topology_id: str,
    spec: Spec,
    *,
    series: str = "E24",
    fixed: Mapping[str, float | str] | None = None,
    conditions: Conditions = Conditions(),
    width: int = 1,
) -> DesignResult:
    """Design one circuit for a target.

    Parameters
    ----------
    topology_id : str
        Circuit id.
    spec : Spec
        The target: f0 (Hz), Q and the centre-gain magnitude.
    series : str
        ``E3`` ... ``E192`` to choose standard values, or ``exact``.
    fixed : mapping, optional
        Pinned parts ``{ref: value}`` (SI floats or text in any notation); the rest follow.
        The winding resistance ``RL`` of the tank may be pinned (it is never chosen).
    conditions : Conditions
        Op-amp, drive, load and tolerances for the analysis (the tolerances also weight the search).
    width : int
        Standard values offered on each side of every exact value in the search.

    Returns
    -------
    DesignResult
        ``feasible=False`` with a plain reason when the circuit cannot meet the target.

    Raises
    ------
    InputError
        An unknown circuit, series or part, or a pinned value that is not a usable number.
    """
    topo = get_topology(topology_id)
    if not isinstance(spec, Spec):
        raise InputError("spec", "must be a design target (bandsmith.design.designer.Spec)")
    if series not in SERIES_NAMES + ("exact",):
        raise InputError("series", f"{series!r} is not a series; choose one of {', '.join(SERIES_NAMES)} or exact")
    pins = parse_fixed(topo, fixed)
    if topo.synthesize is None:
        return _infeasible(topo, spec, series, f"{topo.title} has no design procedure yet; enter its parts by hand", pins, conditions)
    try:
        if _takes_series(topo.synthesize):
            exact = topo.synthesize(spec, pins, series=series)
        else:  # a design procedure that ignores the series: (spec, fixed) only
            exact = topo.synthesize(spec, pins)
    except Infeasible as exc:
        return _infeasible(topo, spec, series, exc.reason, pins, conditions)
    notes = tuple(getattr(exact, "notes", ()))
    try:
        exact = topo.values_from(dict(exact))
    except InputError as exc:  # the target, not a part the user typed, is what is out of reach
        return _infeasible(topo, spec, series, f"this target needs {exc.field} = {exc.reason.replace(' is outside', ', outside', 1)}", pins, conditions)
    reason = _limits(topo, exact)
    if reason:
        return _infeasible(topo, spec, series, reason, pins, conditions, exact, notes)

    choice = None
    if series == "exact":
        chosen = dict(exact)
    else:
        choice = choose_standard(topo, exact, spec, series, keep=tuple(pins), tolerances=conditions.tolerances, width=width)
        if choice.values is None:
            return _infeasible(
                topo, spec, series,
                f"no combination of {series} values near the exact design gives a stable band-pass near the target; "
                f"use a finer series (the exact values are given)",
                pins, conditions, exact, notes,
            )
        chosen = choice.values
    cand = Candidate(topo.id, chosen)
    analysis = cand.analyze(conditions)
    if not bool(hurwitz_stable(analysis.h_ideal.den)[0]) or not bool(analysis.ideal.valid[0]):
        return _infeasible(topo, spec, series, "the chosen parts do not give a stable band-pass", pins, conditions, exact, notes)
    errors = errors_of(analysis.ideal, spec)
    warnings = _warnings(topo, cand.values, exact, errors, analysis, series, conditions.tolerances, pins)
    if any(c.kind == "L" for c in topo.components):  # a real inductor must reach its share of the Q
        w = inductor_q_warning(inductor_q_needed(spec.q))
        if w:
            warnings.append(w)
    return DesignResult(
        topology_id=topo.id,
        spec=spec,
        feasible=True,
        reason=None,
        exact=dict(exact),
        chosen=dict(cand.values),
        series=series,
        ideal=analysis.ideal,
        errors=errors,
        warnings=tuple(warnings),
        analysis=analysis,
        notes=notes,
        fixed=tuple(pins),
        conditions=conditions,
        search=choice,
    )


def _errors_actual(result: DesignResult) -> dict | None:
    a = result.analysis
    if a is None or a.actual is None:
        return None
    return errors_of(a.actual, result.spec)


def design_json(result: DesignResult) -> dict:
    """CONTRACT.md's DESIGN object (plus ``warnings``, ``notes``, ``fixed``, ``search``, ...)."""
    a = result.analysis
    body = a.to_json() if a is not None else {"netlist": None, "ideal": None, "actual": None, "opamp": None, "requirements": None, "sensitivity": None}
    s = result.search
    return {
        "topology": result.topology_id,
        "spec": result.spec.to_json(),
        "feasible": result.feasible,
        "reason": result.reason,
        "exact": {k: float(v) for k, v in result.exact.items()},
        "chosen": {k: float(v) for k, v in result.chosen.items()},
        "components": {k: float(v) for k, v in result.chosen.items()},
        "series": result.series,
        "fixed": list(result.fixed),
        "errors": dict(result.errors) if result.errors is not None else None,
        "errors_actual": _errors_actual(result),
        "warnings": list(result.warnings),
        "notes": list(result.notes),
        "search": None if s is None else {
            "combinations": s.combinations,
            "weighted_error": s.weighted if math.isfinite(s.weighted) else None,
            "weighted_error_rounded": s.weighted_rounded if math.isfinite(s.weighted_rounded) else None,
        },
        **body,
    }

