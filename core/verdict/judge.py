"""A verdict for one designed candidate: ``buildable``, ``marginal`` or ``not buildable``, with reasons.

The checks, each giving a reason only when a limit of :class:`bandsmith.verdict.limits.VerdictLimits`
(or a design tolerance) is crossed:

=====================  ==============================================================  ================
code                   what                                                            weight
=====================  ==============================================================  ================
``infeasible``         the circuit's design procedure cannot meet the target            not buildable
``unstable``           a pole in the right half-plane (ideal, or with the op-amp)       not buildable
``f0_error`` …         an ideal-op-amp figure (f0, Q, gain) beyond its design tolerance not buildable
``f0_error_opamp`` …   the same with the session's op-amp (``--gbw``)                    not buildable
``r_spread``           largest over smallest resistor                                   marginal / not
``c_spread``           the same for capacitors                                          marginal / not
``part_small/large``   a part outside the practical range of its kind                   marginal
``gbw_none``           no op-amp GBW meets the tolerances (A0 too small)                not buildable
``gbw``                required GBW above ordinary op-amps / above the ceiling          marginal / not
``gbw_opamp``          required GBW above the session's op-amp                           not buildable
``slew``/``iout``      needed slew rate / output current above an ordinary op-amp      marginal
``slew_opamp`` …       the same above the session's op-amp (when known)                 not buildable
``yield``              yield under the part tolerances below the limits                 marginal / not
``inductor_q``         the inductor's winding must reach a Q beyond ordinary parts       marginal / not
=====================  ==============================================================  ================

A candidate's verdict is the heaviest weight among its reasons; with none it is ``buildable``. A
figure beyond its design tolerance is always ``not buildable``. :func:`least_verdict` gives, from
the figure, spread, part-range and GBW checks alone, a verdict that judge's is never better than.

The yield is estimated from the sensitivities (:func:`bandsmith.verdict.yield_estimate.estimate_yield`)
and confirmed by a short fixed-seed Monte Carlo when the estimate lies within
``limits.confirm_band`` of a yield limit, or within twice that where a figure's first-order
spread exceeds ``limits.confirm_sigma`` (the linear model bends there); the verdict then uses the
Monte Carlo's yield. The Monte Carlo is skipped
where it cannot change the verdict (other reasons already make the candidate ``not buildable``, or
``marginal`` with the estimate far from the lower yield limit), which keeps a comparison fast.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from typing import Callable, Iterable, Mapping, NamedTuple, Sequence

from bandsmith.common.jsonutil import finite_or_none
from bandsmith.common.units import PART_UNITS
from bandsmith.analysis.analyzer import requirements_many
from bandsmith.analysis.inductor import inductor_q_needed
from bandsmith.common.values import format_value
from bandsmith.design.compare import needs_inductor, part_count
from bandsmith.design.designer import DesignResult
from bandsmith.circuits.topology import Topology
from bandsmith.design.standard import errors_of, figure_misses
from bandsmith.verdict.limits import VerdictLimits
from bandsmith.verdict.yield_estimate import YieldEstimate, confirm_yield, estimate_yield, part_tolerances_of

__all__ = ["BUILDABLE", "MARGINAL", "NOT_BUILDABLE", "VERDICTS", "Reason", "Verdict", "heaviest", "heaviest_first", "judge", "judge_many", "least_verdict"]

BUILDABLE, MARGINAL, NOT_BUILDABLE = "buildable", "marginal", "not buildable"
#: The verdicts, best first.
VERDICTS = (BUILDABLE, MARGINAL, NOT_BUILDABLE)
_HEAVIEST_FIRST = VERDICTS[::-1]


def heaviest(weights: Iterable[str]) -> str:
    """The heaviest of some verdicts or reason weights (the last in :data:`VERDICTS`' order),
    ``buildable`` for none."""
    present = set(weights)
    return next((w for w in _HEAVIEST_FIRST if w in present), BUILDABLE)


def heaviest_first(reasons: Iterable[Reason]) -> tuple[Reason, ...]:
    """Reasons ordered by weight, heaviest first, in their own order within a weight (a stable
    sort by :data:`VERDICTS`' order, reversed)."""
    reasons = list(reasons)
    return tuple(r for w in _HEAVIEST_FIRST for r in reasons if r.weight == w)


_KIND_WORDS = {"R": "resistor", "C": "capacitor", "L": "inductor"}
_SMALL_WHY = {
    "R": "it loads the op-amp's output and the stage driving it",
    "C": "a few pF of stray capacitance shift it noticeably",
    "L": "its own winding capacitance and lead inductance matter",
}
_LARGE_WHY = {
    "R": "bias current, leakage, noise and stray capacitance matter",
    "C": "only electrolytic or high-k parts come this large: loss, drift and wide tolerance",
    "L": "a large inductor has a low self-resonance and a large winding resistance",
}


@dataclass(frozen=True, slots=True)
class Reason:
    """One reason behind a verdict.

    Attributes
    ----------
    code : str
        A stable key (see the module notes).
    text : str
        The reason in plain words, with its number.
    value, limit : float or None
        The number behind it and the limit it crossed, in the unit the code implies (per cent for
        ``*_error`` of f0 and Q and for ``yield``, dB for the gain error, Hz, V/µs, mA, ratios).
    weight : str
        ``marginal`` or ``not buildable``.
    """

    code: str
    text: str
    value: float | None
    limit: float | None
    weight: str

    def to_json(self) -> dict:
        return {"code": self.code, "text": self.text, "value": finite_or_none(self.value), "limit": finite_or_none(self.limit), "weight": self.weight}


@dataclass(frozen=True, slots=True)
class Verdict:
    """The verdict of one candidate.

    Attributes
    ----------
    candidate : str
        The candidate's id (its circuit id in a comparison).
    verdict : str
        ``buildable``, ``marginal`` or ``not buildable``.
    reasons : tuple of Reason
        Every limit crossed, heaviest first.
    yield_fraction : float or None
        The yield the verdict used (the Monte Carlo's when it ran, else the estimate); None for an
        infeasible candidate.
    estimate : YieldEstimate or None
    yield_mc : float or None
        The confirming Monte Carlo's yield (None when it did not run).
    required_gbw_hz : float or None
    part_count : int
    needs_inductor : bool
    with_opamp : float or None
        The session op-amp's GBW (Hz) the figures were also judged with.
    """

    candidate: str
    verdict: str
    reasons: tuple[Reason, ...]
    yield_fraction: float | None
    estimate: YieldEstimate | None
    yield_mc: float | None
    required_gbw_hz: float | None
    part_count: int
    needs_inductor: bool
    with_opamp: float | None = None

    def to_json(self) -> dict:
        return {
            "verdict": self.verdict,
            "reasons": [r.to_json() for r in self.reasons],
            "yield": None if self.yield_fraction is None else {
                "yield_pct": 100.0 * self.yield_fraction,
                "method": "monte carlo" if self.yield_mc is not None else "first-order estimate",
                "estimate": self.estimate.to_json() if self.estimate is not None else None,
                "monte_carlo_pct": None if self.yield_mc is None else 100.0 * self.yield_mc,
            },
        }


def _ratio(x: float) -> str:
    """A spread as ``72 : 1`` or ``10 000 : 1``."""
    return (f"{x:,.0f}".replace(",", " ") if x >= 1000 else f"{x:.3g}") + " : 1"


class _Crossed(NamedTuple):
    """A limit crossed, its words still to be written (``words()``): :func:`least_verdict` reads
    the weights alone, and judge writes each reason's words once."""

    code: str
    words: Callable[[], str]
    value: float | None
    limit: float | None
    weight: str

    def reason(self) -> Reason:
        return Reason(self.code, self.words(), self.value, self.limit, self.weight)


_FIGURE_NAMES = {"f0_pct": ("f0_error", "f0"), "q_pct": ("q_error", "Q"), "gain_db": ("gain_error", "the centre gain")}


def _figure_reasons(errors: Mapping[str, float], tol, suffix: str, with_what: Callable[[], str]) -> list[_Crossed]:
    """Each figure error (``errors_of``'s keys) beyond the design tolerances ``tol``; ``with_what()``
    gives the words for what the figures were found with (written once for all of them)."""
    out = []
    said: list[str] = []

    def what() -> str:
        if not said:
            said.append(with_what())
        return said[0]

    for key, value, limit, unit in figure_misses(errors, tol):
        code, name = _FIGURE_NAMES[key]
        out.append(_Crossed(
            code + suffix,
            lambda name=name, value=value, limit=limit, unit=unit:
                f"{what()} {name} misses the target by {value:+.3g} {unit}, beyond the ±{limit:g} {unit} design tolerance",
            value, limit, NOT_BUILDABLE,
        ))
    return out


def _spread_reasons(spread: Mapping[str, float | None], limits: VerdictLimits) -> list[_Crossed]:
    out = []
    for key, word, marginal, hard in (("r", "resistor", limits.r_spread_marginal, limits.r_spread_max),
                                      ("c", "capacitor", limits.c_spread_marginal, limits.c_spread_max)):
        s = spread.get(key)
        if s is None:
            continue
        if s > hard:
            out.append(_Crossed(f"{key}_spread", lambda word=word, s=s, hard=hard:
                                f"{word} spread {_ratio(s)} is beyond {_ratio(hard)}: the parts cannot track or be bought from one range", s, hard, NOT_BUILDABLE))
        elif s > marginal:
            out.append(_Crossed(f"{key}_spread", lambda word=word, s=s, marginal=marginal:
                                f"{word} spread {_ratio(s)} is above {_ratio(marginal)}: parts from far-apart ranges that drift apart", s, marginal, MARGINAL))
    return out


def _range_reasons(ranged: tuple[tuple[str, str], ...], chosen: Mapping[str, float], limits: VerdictLimits) -> list[_Crossed]:
    """The parts outside the practical range of their kind; ``ranged`` the circuit's
    ``(reference, kind)`` pairs to check (:class:`_Parts`' ``ranged``)."""
    bounds = {"R": (limits.r_min_ohm, limits.r_max_ohm), "C": (limits.c_min_f, limits.c_max_f), "L": (limits.l_min_h, limits.l_max_h)}
    out = []
    for ref, kind in ranged:
        v = chosen.get(ref, 0.0)
        lo, hi = bounds[kind]
        if v < lo:
            out.append(_Crossed("part_small", lambda ref=ref, kind=kind, v=v, lo=lo:
                                f"{ref} = {format_value(v, PART_UNITS[kind])} is below {format_value(lo, PART_UNITS[kind])}: {_SMALL_WHY[kind]}", v, lo, MARGINAL))
        elif v > hi:
            out.append(_Crossed("part_large", lambda ref=ref, kind=kind, v=v, hi=hi:
                                f"{ref} = {format_value(v, PART_UNITS[kind])} is above {format_value(hi, PART_UNITS[kind])}: {_LARGE_WHY[kind]}", v, hi, MARGINAL))
    return out


class _Parts(NamedTuple):
    """What judge reads of a circuit's parts list (the same for any part values)."""

    kinds: dict[str, str]  # reference -> kind, every part
    kind_set: frozenset[str]  # the kinds among them
    ranged: tuple[tuple[str, str], ...]  # (reference, kind) of the required R, C and L, in order
    count: int  # part_count
    inductor: bool  # needs_inductor


@functools.lru_cache(maxsize=64)
def _kinds_of(part_kinds: tuple[tuple[str, str, bool], ...]) -> tuple[dict[str, str], frozenset[str], tuple[tuple[str, str], ...]]:
    """:class:`_Parts`' ``kinds``, ``kind_set`` and ``ranged`` of a parts list
    (:attr:`~bandsmith.circuits.topology.Topology.part_kinds`), made once per parts list: a
    cache keyed on the circuit's structure (plain strings). The dict is shared: read it only."""
    kinds = {ref: kind for ref, kind, _ in part_kinds}
    ranged = tuple((ref, kind) for ref, kind, required in part_kinds if required and kind in _KIND_WORDS)
    return kinds, frozenset(kinds.values()), ranged


def _parts_of(topo: Topology) -> _Parts:
    """What judge reads of ``topo``'s parts, from its ``part_kinds`` (made once with the topology;
    :func:`_kinds_of`), worked out once per topology object: a compare judges each circuit's
    topology again at every call, and a chain's ``auto`` every stage's (keyed by id, as
    :func:`bandsmith.design.compare.part_count` keys its counts: the entry holds the topology, so
    no other object takes its id while the entry lives)."""
    known = _PARTS.get(id(topo))
    if known is None:
        if len(_PARTS) >= 256:
            _PARTS.clear()
        kinds, kind_set, ranged = _kinds_of(topo.part_kinds)
        known = _PARTS[id(topo)] = (topo, _Parts(kinds, kind_set, ranged, part_count(topo), needs_inductor(topo)))
    return known[1]


_PARTS: dict[int, tuple[Topology, _Parts]] = {}


def _gbw_reasons(result: DesignResult, limits: VerdictLimits) -> list[_Crossed]:
    """The required GBW: none serves, above ordinary op-amps or the ceiling, above the session's
    op-amp. Read from the search the requirements carry (``analysis.required_gbw``, the very
    ``requirements.gbw_hz`` and ``gbw_reason``), so the rest of the requirements is not worked
    out for it."""
    gbw, why = result.analysis.required_gbw
    out = []
    if gbw is None or not math.isfinite(gbw):
        out.append(_Crossed("gbw_none", lambda: f"no op-amp gain-bandwidth holds the figures within the tolerances: {why or 'the open-loop gain is too small'}", None, None, NOT_BUILDABLE))
        return out
    top, ordinary = limits.gbw_max_hz, limits.gbw_ordinary_hz
    if gbw > top:
        out.append(_Crossed("gbw", lambda: f"needs an op-amp of {format_value(gbw, 'Hz')} gain-bandwidth, beyond the {format_value(top, 'Hz')} ceiling", gbw, top, NOT_BUILDABLE))
    elif gbw > ordinary:
        out.append(_Crossed("gbw", lambda: f"needs an op-amp of {format_value(gbw, 'Hz')} gain-bandwidth, above the {format_value(ordinary, 'Hz')} of ordinary op-amps: a fast part and a careful layout", gbw, ordinary, MARGINAL))
    own = result.conditions.gbw_hz
    if own is not None and gbw > own:
        out.append(_Crossed("gbw_opamp", lambda: f"needs {format_value(gbw, 'Hz')} gain-bandwidth; the session's op-amp has {format_value(own, 'Hz')}", gbw, own, NOT_BUILDABLE))
    return out


def _amp_reasons(result: DesignResult, limits: VerdictLimits) -> list[Reason]:
    """The reasons of the op-amps' slew rate and output current."""
    req = result.analysis.requirements
    out = []
    slews = [x for x in (req.slew_sine_v_per_us, req.slew_step_v_per_us) if x is not None and math.isfinite(x)]
    if slews:
        slew = max(slews)
        for code, limit, weight, whose in (("slew_opamp", limits.opamp_slew_v_per_us, NOT_BUILDABLE, "the session's op-amp"),
                                           ("slew", limits.slew_ordinary_v_per_us, MARGINAL, "an ordinary op-amp")):
            if limit is not None and slew > limit:
                out.append(Reason(code, f"needs a slew rate of {slew:.3g} V/µs at {req.vin_v:g} V in, above the {limit:g} V/µs of {whose}", slew, limit, weight))
                break
    iout = req.iout_peak_ma
    if iout is not None and math.isfinite(iout):
        for code, limit, weight, whose in (("iout_opamp", limits.opamp_iout_ma, NOT_BUILDABLE, "the session's op-amp"),
                                           ("iout", limits.iout_ordinary_ma, MARGINAL, "an ordinary op-amp")):
            if limit is not None and iout > limit:
                out.append(Reason(code, f"the op-amp must deliver {iout:.3g} mA peak at {req.vin_v:g} V in, above the {limit:g} mA of {whose}", iout, limit, weight))
                break
    return out


def _yield(result: DesignResult, kinds: Mapping[str, str], limits: VerdictLimits, so_far: str, seen: dict | None) -> tuple[YieldEstimate, float | None, float]:
    """The estimate, the confirming Monte Carlo's yield (or None) and the yield the verdict uses;
    ``kinds`` maps the circuit's part references to their kinds, ``seen`` is estimate_yield's.

    The Monte Carlo runs only where it can change the verdict: not when other reasons already
    make the candidate ``not buildable``; when they make it ``marginal``, only near the lower limit.
    """
    tol = part_tolerances_of(kinds, result.chosen, limits)
    est = estimate_yield(result.analysis.sensitivity, tol, limits, seen=seen)
    if so_far == NOT_BUILDABLE:
        return est, None, est.fraction  # no yield can change the verdict: no Monte Carlo
    edges = (limits.yield_marginal, limits.yield_min) if so_far == BUILDABLE else (limits.yield_min,)
    sigma = est.sigma
    bent = max(sigma["f0"], sigma["q"], math.expm1(sigma["gain_db"] * math.log(10.0) / 20.0)) > limits.confirm_sigma
    band = limits.confirm_band * (2.0 if bent else 1.0)
    near = any([abs(est.fraction - e) < band for e in edges])
    mc = confirm_yield(result.analysis.netlist, tol, limits) if near and tol else None
    return est, mc, est.fraction if mc is None else mc


def _two_figures(x: float) -> str:
    """A spread in plain digits: two significant figures, whole numbers from 100 on (a first-order
    spread of Q can pass 100 %: "±286 %", not "±2.9e+02 %")."""
    return f"{x:.0f}" if abs(x) >= 100 else f"{x:.2g}"


def _yield_reason(est: YieldEstimate, mc: float | None, y: float, limits: VerdictLimits, kinds: frozenset[str]) -> Reason | None:
    if y >= limits.yield_marginal:
        return None
    hard = y < limits.yield_min
    limit = limits.yield_min if hard else limits.yield_marginal
    how = f"{limits.mc_trials} Monte Carlo trials" if mc is not None else "first-order estimate"
    tol = ", ".join(f"{k} {100 * limits.tolerances[k]:g} %" for k in ("R", "C", "L") if k in kinds)
    window = f"f0 ±{100 * limits.window_f0:g} %, Q ±{100 * limits.window_q:g} %, gain ±{limits.window_gain_db:g} dB"
    spread = f"±{_two_figures(est.sigma['gain_db'])} dB" if est.figure == "gain" else f"±{_two_figures(100 * est.sigma[est.figure])} %"
    most = f"; {est.figure_words} varies most ({spread} at one standard deviation), {100 * est.share:.0f} % of that from {est.part}" if est.part else ""
    return Reason(
        "yield",
        f"yield {100 * y:.1f} % ({how}) with parts of {tol} inside {window}, below {100 * limit:g} %{most}",
        100.0 * y, 100.0 * limit, NOT_BUILDABLE if hard else MARGINAL,
    )


def _inductor_reason(result: DesignResult, limits: VerdictLimits) -> Reason | None:
    """The ``inductor_q`` reason of a circuit with an inductor (None when none is due)."""
    tol_q = result.conditions.tolerances.q
    needed = inductor_q_needed(result.spec.q, max_q_loss=min(tol_q, 0.99))
    if needed > limits.inductor_q_max:
        weight, limit, what = NOT_BUILDABLE, limits.inductor_q_max, "any inductor you can buy"
    elif needed > limits.inductor_q_ordinary:
        weight, limit, what = MARGINAL, limits.inductor_q_ordinary, "ordinary small inductors"
    else:
        return None
    return Reason(
        "inductor_q",
        f"to keep Q within ±{100 * tol_q:g} % the inductor's winding needs a Q of {needed:.3g} at f0, beyond the {limit:g} of {what}",
        needed, limit, weight,
    )


def _settled_limits(result: DesignResult, limits: VerdictLimits, seen: dict | None = None) -> list[_Crossed]:
    """The limits crossed in judge's checks on numbers a feasible design already has, in judge's
    order: its figures against the design tolerances with the ideal op-amp and with the session's
    op-amp, the resistor and capacitor spread, the parts' range and the required GBW (what
    :func:`least_verdict` bounds the verdict with); their words are written only when judge asks.
    With ``seen`` (judge's), found once per design: a chain's ``auto`` bounds a candidate by
    :func:`least_verdict` and then judges it."""
    if seen is not None:
        key = ("settled", id(result))  # (the designs outlive the dict: one judging's)
        known = seen.get(key)
        if known is None:
            known = seen[key] = _settled_limits(result, limits)
        return known
    a, topo, tol = result.analysis, result.topology, result.conditions.tolerances
    ranged = _parts_of(topo).ranged
    crossed = _figure_reasons(result.errors, tol, "", lambda: f"with {result.series} parts and an ideal op-amp,")
    if a.actual is not None:
        crossed += _figure_reasons(errors_of(a.actual, result.spec), tol, "_opamp",
                                   lambda: f"with {result.series} parts and the {format_value(a.opamp.gbw_hz, 'Hz')} op-amp,")
    crossed += _spread_reasons(result.part_spread, limits)
    crossed += _range_reasons(ranged, result.chosen, limits)
    crossed += _gbw_reasons(result, limits)
    return crossed


def judge(result: DesignResult, limits: VerdictLimits = VerdictLimits(), *, candidate: str | None = None, seen: dict | None = None) -> Verdict:
    """The verdict of one designed candidate (see the module notes).

    Parameters
    ----------
    result : DesignResult
        A design (:func:`bandsmith.design.designer.design`); its conditions' tolerances are the
        design tolerances and its op-amp (``conditions.gbw_hz``) the session's op-amp.
    limits : VerdictLimits
    candidate : str, optional
        The candidate's id (default: its circuit id).
    seen : dict, optional
        One dict passed to every judge (and :func:`least_verdict`) of one judging of several
        candidates (:func:`judge_many`, a chain's ``auto``), for the work they share, made once:
        the yield estimates of one model, number for number
        (:func:`bandsmith.verdict.yield_estimate.estimate_yield`'s ``seen``), and a design's
        limits crossed that :func:`least_verdict` found before (:func:`_settled_limits`). It lives
        no longer than that judging (its keys hold designs' ids).

    Returns
    -------
    Verdict
    """
    topo = result.topology
    cid = candidate or result.topology_id
    parts = _parts_of(topo)
    count, inductor = parts.count, parts.inductor
    if not result.feasible or result.analysis is None:
        reason = Reason("infeasible", result.reason or "the circuit cannot meet this target", None, None, NOT_BUILDABLE)
        return Verdict(cid, NOT_BUILDABLE, (reason,), None, None, None, None, count, inductor, result.conditions.gbw_hz)
    a = result.analysis
    reasons: list[Reason] = []
    if not a.stable_ideal or a.stable_actual is False:
        reasons.append(Reason("unstable", "; ".join(a.warnings) or "unstable", None, None, NOT_BUILDABLE))
    reasons += [c.reason() for c in _settled_limits(result, limits, seen)]
    reasons += _amp_reasons(result, limits)
    r = _inductor_reason(result, limits) if inductor else None
    if r is not None:
        reasons.append(r)
    so_far = heaviest([r.weight for r in reasons])
    est, mc, y = _yield(result, parts.kinds, limits, so_far, seen)
    r = _yield_reason(est, mc, y, limits, parts.kind_set)
    if r is not None:
        reasons.append(r)
    ordered = heaviest_first(reasons)
    verdict = ordered[0].weight if ordered else BUILDABLE
    req = a.requirements.gbw_hz
    return Verdict(cid, verdict, ordered, y, est, mc, req if req is not None and math.isfinite(req) else None, count, inductor, result.conditions.gbw_hz)


def judge_many(results: Sequence[DesignResult], limits: VerdictLimits = VerdictLimits()) -> tuple[Verdict, ...]:
    """:func:`judge` of several designs (a compare's candidates; ids are the circuit ids), each
    the verdict it gets alone.

    The feasible designs' amplifier needs are worked out together first
    (:func:`bandsmith.analysis.analyzer.requirements_many`: the one-op-amp circuits' output
    currents in one solve), and candidates whose yield model is the same number for number share
    one estimate (``seen``)."""
    requirements_many([r.analysis for r in results if r.feasible and r.analysis is not None])
    seen: dict = {}
    return tuple(judge(r, limits, seen=seen) for r in results)


def least_verdict(result: DesignResult, limits: VerdictLimits = VerdictLimits(), *, seen: dict | None = None) -> tuple[str, int]:
    """The least verdict :func:`judge` can give a design, and the least number of its
    ``not buildable`` reasons, from the checks that need nothing more worked out.

    The checks are judge's own (:func:`_settled_limits`), on the same numbers: a figure (f0, Q,
    gain) beyond its design tolerance with the ideal op-amp and with the session's op-amp, the
    resistor and capacitor spread, the parts' range and the required GBW against the ceiling,
    ordinary op-amps and the session's op-amp. Judge's other checks (stability, slew rate, output
    current, inductor, yield) only add reasons, so its verdict is at least this one (in
    ``VERDICTS``' order) and, when both are ``not buildable``, it has at least this many reasons
    of that weight. Lets a caller that wants only the best of several judge the few that can
    still be best. ``seen`` as :func:`judge` takes it (the limits found here serve its
    judge of the same design).

    Returns
    -------
    verdict : str
        ``buildable``, ``marginal`` or ``not buildable``.
    n_not_buildable : int
        The number of ``not buildable`` reasons among these checks (0 unless ``verdict`` is
        ``not buildable``).
    """
    if not result.feasible or result.analysis is None:
        return NOT_BUILDABLE, 1  # judge gives exactly one reason: infeasible
    weights = [r.weight for r in _settled_limits(result, limits, seen)]
    heavy = weights.count(NOT_BUILDABLE)
    if heavy:
        return NOT_BUILDABLE, heavy
    return (MARGINAL if MARGINAL in weights else BUILDABLE), 0
