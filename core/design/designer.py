"""Design from a target: exact part values, standard values chosen by a combination search, checks.

:func:`design` runs a circuit's own design procedure (``Topology.synthesize``, written in its
module), checks that every part can be made, chooses standard values and analyses the chosen
parts, reporting the errors against the target and warnings where the design is feasible but
impractical.

The standard-value search is in :mod:`bandsmith.design.standard`.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field, replace
from typing import Mapping, NamedTuple, Sequence

from bandsmith.common.units import PART_UNITS
from bandsmith.common.jsonutil import finite_or_none
from bandsmith.analysis.analyzer import Analysis, Tolerances
from bandsmith.design.candidate import Candidate, Conditions, analyze_candidates
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.limits import check_part_value
from bandsmith.common.eseries import SERIES_NAMES, in_series
from bandsmith.analysis.figures import Figures, defined
from bandsmith.analysis.inductor import inductor_q_needed, inductor_q_warning
from bandsmith.circuits.synthesis import MADE, PRACTICAL, Infeasible, Spec
from bandsmith.solver.stability import hurwitz_stable_one
from bandsmith.circuits.topology import Topology
from bandsmith.common.values import format_value, parse_value
from bandsmith.design.standard import Choice, choose_standard_groups, errors_of, errors_of_one, figure_misses

__all__ = [
    "Spec",
    "DesignResult",
    "design",
    "design_many",
    "designs_or_errors",
    "prepare_designs",
    "prepare_designs_many",
    "PreparedDesigns",
    "design_json",
    "spread_of",
    "needs_inductor",
    "parse_fixed",
]

_KIND_NAMES = {"R": "resistor", "C": "capacitor", "L": "inductor"}
# Warn when the tolerance needed on every part to hold Q within its tolerance falls below this.
_TIGHT_PARTS = 0.005
# Warn above these spreads (largest/smallest value among resistors, among capacitors).
_SPREAD_R, _SPREAD_C = 1000.0, 100.0


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
    # (chosen, its spread_of) as the design worked it out for its warnings: read by part_spread
    # while ``chosen`` is that very mapping (a copy made with other parts works its own out)
    _spread: tuple | None = field(default=None, repr=False, compare=False)

    @property
    def topology(self) -> Topology:
        return get_topology(self.topology_id)

    @property
    def part_spread(self) -> dict[str, float | None]:
        """:func:`spread_of` of the chosen parts (the one the design worked out for its
        warnings where it has it: a compare's verdict and JSON read it again). Read only."""
        known = self._spread
        if known is not None and known[0] is self.chosen:
            return known[1]
        return spread_of(self.topology, self.chosen)


def parse_fixed(topology: Topology, fixed: Mapping[str, float | str] | None) -> dict[str, float]:
    """Pinned parts as SI floats: known references, values in any notation, above zero (RL: zero or more)."""
    out = {}
    for ref, v in (fixed or {}).items():
        comp = topology.component(ref)
        x = parse_value(v, field=ref, unit=PART_UNITS.get(comp.kind))
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


def spread_of(topology: Topology, values: Mapping[str, float]) -> dict[str, float | None]:
    """Largest over smallest value among the resistors (``r``) and among the capacitors (``c``).

    The winding resistance is not a resistor here; None where a circuit has no such part.
    """
    return _spread(_parts_of(topology.part_kinds), values)


def _spread(roles: _PartRoles, values: Mapping[str, float]) -> dict[str, float | None]:
    """:func:`spread_of` from the circuit's :func:`_parts_of`."""
    rs = [v for ref in roles.resistors if (v := values.get(ref, 0)) > 0]
    cs = [v for ref in roles.capacitors if (v := values.get(ref, 0)) > 0]
    return {"r": max(rs) / min(rs) if rs else None, "c": max(cs) / min(cs) if cs else None}


class _PartRoles(NamedTuple):
    """What the designer reads of a circuit's parts (:func:`_parts_of`)."""

    required: tuple[tuple[str, str, float, float], ...]  # (ref, kind, practical low, practical high)
    resistors: tuple[str, ...]  # the required resistors, in order
    capacitors: tuple[str, ...]  # the required capacitors, in order
    inductor: bool  # whether it has an inductor


@functools.lru_cache(maxsize=64)
def _parts_of(part_kinds: tuple[tuple[str, str, bool], ...]) -> _PartRoles:
    """What the designer reads of a circuit's parts (its ``(ref, kind, required)``), worked out
    once per parts list: each required part with its :data:`~bandsmith.circuits.synthesis.PRACTICAL`
    range, the required resistors and capacitors, and whether it has an inductor."""
    required = tuple((ref, kind, *PRACTICAL[kind]) for ref, kind, req in part_kinds if req)
    return _PartRoles(required, tuple(ref for ref, kind, _, _ in required if kind == "R"),
                      tuple(ref for ref, kind, _, _ in required if kind == "C"), any(kind == "L" for _, kind, _ in part_kinds))


def needs_inductor(topology: Topology) -> bool:
    """True when the circuit has an inductor among its parts."""
    return _parts_of(topology.part_kinds).inductor


def _limits(topology: Topology, values: Mapping[str, float]) -> str | None:
    """A reason when a part lies outside what is made (MADE), else None."""
    for ref, kind, required in topology.part_kinds:
        if not required:
            continue
        v = values.get(ref, 0.0)
        lo, hi = MADE[kind]
        if not (lo <= v <= hi):
            word = "above" if v > hi else "below"
            return (
                f"{ref} would be {format_value(v, PART_UNITS[kind])}, {word} any {_KIND_NAMES[kind]} made "
                f"({format_value(lo, PART_UNITS[kind])} to {format_value(hi, PART_UNITS[kind])}); this target is out of this circuit's reach"
            )
    return None


# How _warnings shows each figure a design misses (of standard.figure_misses' keys).
_MISSES_SHOWN = {"f0_pct": "f0 {:+.3g} % (tolerance ±{:g} %)", "q_pct": "Q {:+.3g} % (±{:g} %)", "gain_db": "gain {:+.3g} dB (±{:g} dB)"}


def _warnings(topology: Topology, chosen: Mapping[str, float], exact: Mapping[str, float], result_errors, analysis: Analysis, series: str, tol: Tolerances, fixed,
              roles: _PartRoles, sp: Mapping[str, float | None]) -> list[str]:
    """A design's warnings (``roles``: the circuit's :func:`_parts_of`, which its caller has read;
    ``sp``: the chosen parts' :func:`_spread`, which it has worked out)."""
    out = []
    for ref, kind, lo, hi in roles.required:
        v = chosen.get(ref, 0.0)
        if v > hi or v < lo:
            unit = PART_UNITS[kind]
            if kind == "L":
                what = "larger than most catalogue inductors" if v > hi else "smaller than most catalogue inductors"
            elif kind == "C":
                what = "too large for a stable film or ceramic part" if v > hi else "close to stray capacitance"
            else:
                what = "high: leakage, noise and stray capacitance matter" if v > hi else "low: it loads the op-amp and its driver"
            out.append(f"{ref} = {format_value(v, unit)} is {what} (usual range {format_value(lo, unit)} to {format_value(hi, unit)})")
    if sp["r"] is not None and sp["r"] > _SPREAD_R:
        out.append(f"large resistor spread: {sp['r']:.3g} : 1 between the largest and the smallest resistor")
    if sp["c"] is not None and sp["c"] > _SPREAD_C:
        out.append(f"large capacitor spread: {sp['c']:.3g} : 1 between the largest and the smallest capacitor")
    sq = analysis.sensitivity.get("q", {})
    total = sum(map(abs, filter(math.isfinite, sq.values())))  # (in the dict's order, as a loop would add them)
    if total > 0:
        needed = tol.q / total
        if needed < _TIGHT_PARTS:
            worst = sorted(sq, key=lambda r: -abs(sq[r]))[:2]
            out.append(
                f"Q is very sensitive to the parts (sum of |S(Q)| = {total:.3g}, most to {' and '.join(worst)}): holding Q within "
                f"±{100 * tol.q:g} % takes parts of about ±{100 * needed:.2g} % or a trimmer"
            )
    if series != "exact" and result_errors is not None:
        misses = [_MISSES_SHOWN[key].format(value, limit) for key, value, limit, _unit in figure_misses(result_errors, tol)]
        if misses:
            out.append(f"with {series} values the best combination still misses: " + ", ".join(misses) + "; use a finer series or trim a part")
        if fixed:
            off = [r for r in fixed if topology.component(r).required and not in_series(chosen[r], series)]
            if off:
                out.append(f"pinned {', '.join(off)} {'is' if len(off) == 1 else 'are'} not {series} values; kept as given")
    return out


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
    return design_many((topology_id,), spec, series=series, fixed=fixed, conditions=conditions, width=width)[0]


def design_many(topology_ids: Sequence[str], spec: Spec, **options) -> list[DesignResult]:
    """:func:`design` of several circuits for one target (``options`` as :func:`designs_or_errors`
    takes them), raising the first :class:`InputError` that :func:`design` would raise for one."""
    out = designs_or_errors(topology_ids, spec, **options)
    for res in out:
        if isinstance(res, InputError):
            raise res
    return out


def designs_or_errors(topology_ids: Sequence[str], spec: Spec, **options) -> list[DesignResult | InputError]:
    """:func:`design` of several circuits for one target (``options`` — ``series``, ``fixed``,
    ``conditions``, ``width`` — as :func:`prepare_designs` takes them): each chooses its parts
    alone, and the analyses of those that got parts share one batch
    (:func:`bandsmith.design.candidate.analyze_candidates`); each circuit's :class:`InputError`
    is kept in its place (a chain lists the circuits that cannot build a stage, and why).
    ``fixed`` pins the same parts on every circuit (most callers pin none)."""
    prepared = prepare_designs(topology_ids, spec, **options)
    ready = prepared.candidates()
    return prepared.concluded(analyze_candidates(ready, prepared.conditions) if ready else [])


@dataclass(frozen=True, slots=True)
class PreparedDesigns:
    """Several circuits' designs for one target with their parts chosen, waiting for the analyses
    of those parts (:func:`prepare_designs`); a caller that analyses many targets' candidates in
    one batch (a chain's stages) concludes each target's from its own.

    ``made`` holds per circuit, in the order asked, the :class:`InputError` it raised, its
    infeasible :class:`DesignResult`, or its design with its parts chosen, all under
    ``conditions``."""

    spec: Spec
    series: str
    conditions: Conditions
    made: tuple

    def candidates(self) -> list[Candidate]:
        """The candidates to analyse: every design with its parts, in order."""
        return [m.candidate for m in self.made if isinstance(m, _Prepared)]

    def conditions_at(self, vin_v: float | None) -> Conditions:
        """These conditions at the input amplitude ``vin_v`` (V peak; None: their own)."""
        if vin_v is None or vin_v == self.conditions.vin_v:
            return self.conditions
        return replace(self.conditions, vin_v=vin_v)

    def concluded(self, analyses: Sequence, vin_v: float | None = None) -> list[DesignResult | InputError]:
        """Each circuit's result, given the analyses of :meth:`candidates` (in their order, made
        under these conditions; an analysis may be the :class:`InputError` it raised): what
        :func:`designs_or_errors` gives for the conditions at the amplitude ``vin_v`` (V peak, by
        default theirs). The amplitude reaches only the amplifier needs, so the parts chosen hold
        and each analysis is taken at it (:meth:`~bandsmith.analysis.analyzer.Analysis.with_vin`)."""
        conditions = self.conditions_at(vin_v)
        found = iter(analyses)
        out: list[DesignResult | InputError] = []
        for m in self.made:
            if isinstance(m, _Prepared):
                analysis = next(found)
                out.append(analysis if isinstance(analysis, InputError)
                           else _conclude(m, analysis.with_vin(conditions.vin_v), self.spec, self.series, conditions))
            elif isinstance(m, DesignResult) and m.conditions is not conditions:  # infeasible before any analysis
                out.append(replace(m, conditions=conditions))
            else:
                out.append(m)
        return out


def prepare_designs(
    topology_ids: Sequence[str],
    spec: Spec,
    *,
    series: str = "E24",
    fixed: Mapping[str, float | str] | None = None,
    conditions: Conditions = Conditions(),
    width: int = 1,
) -> PreparedDesigns:
    """:func:`designs_or_errors` up to the analyses: every circuit's exact design and its parts
    chosen (the standard-value searches of all of them in one call)."""
    return prepare_designs_many([(topology_ids, spec, conditions)], series=series, fixed=fixed, width=width)[0]


def prepare_designs_many(
    requests: Sequence[tuple[Sequence[str], Spec, Conditions]],
    *,
    series: str = "E24",
    fixed: Mapping[str, float | str] | None = None,
    width: int = 1,
) -> list[PreparedDesigns]:
    """:func:`prepare_designs` of several targets, each request ``(topology_ids, spec,
    conditions)`` (a chain's stages): the same designs, the standard-value searches of every
    target's circuits in one call (:func:`bandsmith.design.standard.choose_standard_groups`)."""
    made: list[list] = []
    for topology_ids, spec, conditions in requests:
        ms: list = []
        shared: dict = {}  # (a procedure several circuits share, run once for this target: _prepare)
        for t in topology_ids:
            try:
                ms.append(_prepare(t, spec, series, fixed, conditions, shared))
            except InputError as exc:
                ms.append(exc)
        made.append(ms)
    _choose_parts([(ms, spec, conditions) for ms, (_, spec, conditions) in zip(made, requests)], series, width)
    return [PreparedDesigns(spec, series, conditions, tuple(ms)) for ms, (_, spec, conditions) in zip(made, requests)]


@dataclass(frozen=True, slots=True)
class _Exact:
    """A design up to its exact values, waiting for its standard parts (:func:`_choose_parts`)."""

    topology: Topology
    exact: dict
    notes: tuple[str, ...]
    pins: dict


@dataclass(frozen=True, slots=True)
class _Prepared:
    """A design with its parts chosen (``choice`` None for exact parts), waiting for its analysis."""

    design: _Exact
    choice: Choice | None
    candidate: Candidate


def _prepare(topology_id: str, spec: Spec, series: str, fixed, conditions: Conditions, shared: dict | None = None) -> DesignResult | _Exact:
    """The design up to its exact values: an :class:`_Exact`, or the infeasible result.

    ``shared`` (one per target) keeps the exact values of a design procedure several circuits
    share (:attr:`Topology.procedure`) by pins and series, so that it runs once for them: the same
    values and notes (its messages, which name the circuit, come only from a run that fails,
    and a failed run is not kept)."""
    topo = get_topology(topology_id)
    if not isinstance(spec, Spec):
        raise InputError("spec", "must be a design target (bandsmith.design.designer.Spec)")
    if series not in SERIES_NAMES + ("exact",):
        raise InputError("series", f"{series!r} is not a series; choose one of {', '.join(SERIES_NAMES)} or exact")
    pins = parse_fixed(topo, fixed)
    if topo.synthesize is None:
        return _infeasible(topo, spec, series, f"{topo.title} has no design procedure yet; enter its parts by hand", pins, conditions)
    key = None if shared is None or topo.procedure is None else (topo.procedure, tuple(pins.items()), series)
    exact = None if key is None else shared.get(key)
    if exact is None:
        try:
            exact = topo.synthesize(spec, pins, series=series)
        except Infeasible as exc:
            return _infeasible(topo, spec, series, exc.reason, pins, conditions)
        if key is not None:
            shared[key] = exact
    notes = tuple(getattr(exact, "notes", ()))
    try:
        exact = topo.values_from(exact)
    except InputError as exc:  # the target, not a part the user typed, is what is out of reach
        return _infeasible(topo, spec, series, _out_of_reach(exc), pins, conditions)
    reason = _limits(topo, exact)
    if reason:
        return _infeasible(topo, spec, series, reason, pins, conditions, exact, notes)
    if conditions.rsource_ohm is not None:  # a known source resistance completes the input resistor
        from bandsmith.design.source import absorb_source

        exact, absorbed = absorb_source(topo.build(exact), exact, conditions.rsource_ohm, tuple(pins))
        notes = notes + absorbed
        try:  # (the lowered input resistor checked as every part is: the exact values are values_from's)
            exact = topo.values_from(exact)
        except InputError as exc:
            return _infeasible(topo, spec, series, _out_of_reach(exc), pins, conditions)
    return _Exact(topo, exact, notes, pins)


def _out_of_reach(exc: InputError) -> str:
    """The reason of a design whose exact value is outside what a part can be."""
    return f"this target needs {exc.field} = {exc.reason.replace(' is outside', ', outside', 1)}"


def _choose_parts(targets: list[tuple[list, Spec, Conditions]], series: str, width: int) -> None:
    """Each :class:`_Exact` of every target's ``made`` (of its ``(made, spec, conditions)``)
    replaced by its :class:`_Prepared` (its parts chosen) or by the infeasible result: the
    standard-value searches of every circuit of every target in one call
    (:func:`bandsmith.design.standard.choose_standard_groups`), each circuit's parts chosen alone."""
    todos = [[i for i, m in enumerate(made) if isinstance(m, _Exact)] for made, _, _ in targets]
    if series == "exact":
        for (made, _, _), todo in zip(targets, todos):
            for i in todo:
                made[i] = _Prepared(made[i], None, Candidate(made[i].topology.id, dict(made[i].exact)))
        return
    # (each exact design is values_from's already: _prepare)
    chosen = choose_standard_groups([[(made[i].topology, made[i].exact, spec, series, tuple(made[i].pins), conditions.tolerances, width)
                                      for i in todo] for (made, spec, conditions), todo in zip(targets, todos)], checked=True)
    for (made, spec, conditions), todo, choices in zip(targets, todos, chosen):
        for i, choice in zip(todo, choices):
            m = made[i]
            if choice.values is None:
                made[i] = _infeasible(m.topology, spec, series, _NO_STANDARD.format(series=series), m.pins, conditions, m.exact, m.notes)
            else:
                made[i] = _Prepared(m, choice, Candidate(m.topology.id, choice.values))


def _conclude(made: _Prepared, analysis: Analysis, spec: Spec, series: str, conditions: Conditions) -> DesignResult:
    """The design of prepared parts, from their analysis."""
    d = made.design
    topo, exact, notes, pins = d.topology, d.exact, d.notes, d.pins
    ideal = analysis.ideal.item()
    if not (hurwitz_stable_one(analysis.h_ideal.den[0].tolist()) and defined(ideal.f0_hz, ideal.q, ideal.gain_center_db)):
        return _infeasible(topo, spec, series, "the chosen parts do not give a stable band-pass", pins, conditions, exact, notes)
    errors = errors_of_one(ideal, spec)
    return _feasible(topo, spec, series, exact, made.candidate, analysis, errors, notes, pins, conditions, made.choice)


_NO_STANDARD = (
    "no combination of {series} values near the exact design gives a stable band-pass near the target; "
    "use a finer series (the exact values are given)"
)


def _feasible(topo, spec: Spec, series: str, exact: dict, cand: Candidate, analysis, errors: dict, notes, pins, conditions: Conditions,
              choice) -> DesignResult:
    """The result of a design that works, given its errors (:func:`errors_of` of its ideal
    figures): its warnings and analysis."""
    roles = _parts_of(topo.part_kinds)
    sp = _spread(roles, cand.values)
    warnings = _warnings(topo, cand.values, exact, errors, analysis, series, conditions.tolerances, pins, roles, sp)
    if roles.inductor:  # a real inductor must reach its share of the Q
        w = inductor_q_warning(inductor_q_needed(spec.q))
        if w:
            warnings.append(w)
    # (topology_id, spec, feasible, reason, exact, chosen, series, ideal, errors, warnings, analysis,
    # notes, fixed, conditions, search; positional: quicker than by keyword)
    chosen = dict(cand.values)
    return DesignResult(topo.id, spec, True, None, dict(exact), chosen, series, analysis.ideal, errors, tuple(warnings),
                        analysis, notes, tuple(pins), conditions, choice, (chosen, sp))


def _errors_actual(result: DesignResult) -> dict | None:
    a = result.analysis
    if a is None or a.actual is None:
        return None
    return errors_of(a.actual, result.spec)


def design_json(result: DesignResult) -> dict:
    """The README's DESIGN object (plus ``warnings``, ``notes``, ``fixed``, ``search``, ...)."""
    a = result.analysis
    body = a.to_json() if a is not None else {"netlist": None, "ideal": None, "actual": None, "opamp": None, "requirements": None, "sensitivity": None}
    s = result.search
    chosen = dict(zip(result.chosen, map(float, result.chosen.values())))
    return {
        "topology": result.topology_id,
        "spec": result.spec.to_json(),
        "feasible": result.feasible,
        "reason": result.reason,
        "exact": dict(zip(result.exact, map(float, result.exact.values()))),
        "chosen": chosen,
        "components": dict(chosen),
        "series": result.series,
        "fixed": list(result.fixed),
        "errors": dict(result.errors) if result.errors is not None else None,
        "errors_actual": _errors_actual(result),
        "warnings": list(result.warnings),
        "notes": list(result.notes),
        "search": None if s is None else {
            "combinations": s.combinations,
            "weighted_error": finite_or_none(s.weighted),
            "weighted_error_rounded": finite_or_none(s.weighted_rounded),
        },
        **body,
    }

