"""Verdicts in a chain: each stage judged, the whole chain judged, and ``auto``'s choice by verdict.

- A stage's verdict is :func:`bandsmith.verdict.judge` of its design against its own stage target,
  with the stage tolerances it was designed with (:class:`bandsmith.chain.chain_settings.StageHold`:
  f0 within 5 % of the stage's bandwidth, Q within 5 %, the gain within the given tolerance). A
  stage that could not be built is ``not buildable`` with the reason it was not built.
- The chain's verdict is its worst stage's. Its reasons name each stage that is not ``buildable``
  (code ``stage``) and add the chain's own: the built chain (ideal op-amp) against its ideal
  family response within the pass band (code ``band_dev``; ``marginal`` above
  ``StageHold.band_dev_marginal_db``, ``not buildable`` above ``StageHold.band_dev_max_db``), and
  code ``not_built`` when a stage could not be built.
- A stage is *outside its hold* when its chosen parts put f0, Q or the gain beyond its stage
  tolerances; the chain's warnings list every such stage (:func:`hold_warnings`).
- ``auto`` (per stage): every circuit whose design is feasible and does not miss the stage
  grossly is judged. The best verdict wins, so a not-buildable circuit is never chosen while a
  buildable or marginal one exists for that stage. Within one verdict: the sane ones (a finite
  required GBW and a sane spread) before the others; among ``not buildable`` ones the fewer
  reasons of that weight; then the nearest fit (the least tolerance-weighted figure error,
  :func:`bandsmith.design.standard.weighted_error`, in steps of ``FIT_STEP``); then :func:`bandsmith.verdict.rank`'s order
  (its figure of merit). The nearest fit comes before the figure of merit because in a chain the
  stages' small misses add up. Measured on eleven standard-part chains (E24 and E96,
  Butterworth, Chebyshev and Bessel, orders 2 to 8): with rank's order alone, two of them moved
  further from the ideal response in the band than before (1.84 dB and 1.65 dB, where the
  earlier least-GBW rule gave up to 1.51 dB); with the nearest fit first the largest was 1.34 dB.
  The pick is the one judging them all gives; :func:`choose_auto` judges only those that numbers
  the designs already have leave a chance of winning (its notes).
"""

from __future__ import annotations

import heapq
import math
from typing import TYPE_CHECKING, Sequence

from bandsmith.chain.chain_settings import STAGE_HOLD, StageHold
from bandsmith.design.standard import figure_misses
from bandsmith.verdict import BUILDABLE, MARGINAL, NOT_BUILDABLE, VERDICTS, Reason, Verdict, VerdictLimits, heaviest, heaviest_first, judge, least_verdict, merit_key

if TYPE_CHECKING:
    from bandsmith.chain.cascade import Cascade, Stage

#: Fits closer than this (in units of the stage tolerances, as ``weighted_error`` counts them)
#: count as equal in ``auto``'s choice, so that rank's figure of merit decides between them
#: (chosen here: a tenth of the tolerance).
FIT_STEP = 0.1

__all__ = ["FIT_STEP", "stage_verdict", "hold_miss", "hold_warnings", "chain_verdict", "choose_auto", "verdicts_json"]


def _stage_id(index: int) -> str:
    return f"stage-{index}"


def stage_verdict(stage: "Stage", limits: VerdictLimits = VerdictLimits()) -> Verdict:
    """The verdict of one stage against its own stage target (module notes)."""
    cid = _stage_id(stage.index)
    if not stage.feasible or stage.result is None or not stage.result.feasible:
        why = stage.reason or "the stage could not be built"
        return Verdict(cid, NOT_BUILDABLE, (Reason("not_built", why, None, None, NOT_BUILDABLE),), None, None, None, None, 0, False)
    return judge(stage.result, limits, candidate=cid)


def hold_miss(stage: "Stage") -> str | None:
    """Plain words on how a stage's chosen parts miss its hold, or None when within it.

    The hold is the stage tolerances it was designed with (``result.conditions.tolerances``).
    """
    res = stage.result
    if res is None or not res.feasible or res.errors is None:
        return None
    out = []
    for key, value, limit, unit in figure_misses(res.errors, res.conditions.tolerances):
        name = {"f0_pct": "f0", "q_pct": "Q", "gain_db": "gain"}[key]
        extra = f" ({abs(value) * stage.plan.q:.3g} % of its bandwidth)" if name == "f0" and math.isfinite(value) else ""
        out.append(f"{name} {value:+.3g} {unit}{extra} against ±{limit:.3g} {unit}")
    if not out:
        return None
    return f"stage {stage.index} ({res.topology_id}, {res.series} parts) is outside its hold: " + ", ".join(out)


def hold_warnings(stages: Sequence["Stage"]) -> tuple[str, ...]:
    """One warning for every stage outside its hold (module notes), in signal order."""
    return tuple(w for w in (hold_miss(s) for s in stages) if w is not None)


def chain_verdict(result: "Cascade", stage_verdicts: Sequence[Verdict], hold: StageHold = STAGE_HOLD) -> tuple[str, tuple[Reason, ...]]:
    """The chain's verdict and reasons (module notes), heaviest first."""
    reasons: list[Reason] = []
    if not result.feasible:
        reasons.append(Reason("not_built", result.reason or "a stage could not be built", None, None, NOT_BUILDABLE))
    for st, v in zip(result.stages, stage_verdicts):
        if v.verdict != BUILDABLE:
            first = v.reasons[0].text if v.reasons else v.verdict
            circuit = f" ({st.circuit})" if st.circuit is not None and st.feasible else ""
            more = f" (and {len(v.reasons) - 1} more reason{'s' if len(v.reasons) > 2 else ''})" if len(v.reasons) > 1 else ""
            reasons.append(Reason("stage", f"stage {st.index}{circuit} is {v.verdict}: {first}{more}", None, None, v.verdict))
    dev = result.passband_max_dev_db
    if dev is not None and math.isfinite(dev):
        if dev > hold.band_dev_max_db:
            weight, limit = NOT_BUILDABLE, hold.band_dev_max_db
        elif dev > hold.band_dev_marginal_db:
            weight, limit = MARGINAL, hold.band_dev_marginal_db
        else:
            weight = limit = None
        if weight is not None:
            s = result.settings
            reasons.append(Reason(
                "band_dev",
                f"with {s.series} parts the chain is up to {dev:.3g} dB off the ideal {s.response} response within the band, beyond {limit:g} dB",
                dev, limit, weight,
            ))
    ordered = heaviest_first(reasons)
    verdict = heaviest([v.verdict for v in stage_verdicts] + [r.weight for r in ordered])
    return verdict, ordered


def choose_auto(tried: Sequence[tuple], series: str, limits: VerdictLimits = VerdictLimits()):
    """``auto``'s pick for one stage (module notes).

    Parameters
    ----------
    tried : sequence of (DesignResult or None, Attempt)
        Every circuit tried for the stage, in circuit order.
    series : str
        The parts series (for the note).

    Returns
    -------
    tuple or None
        ``(position in tried, DesignResult, Attempt, notes)`` of the pick, or None when no circuit
        gives a feasible design that does not miss the stage grossly.

    Notes
    -----
    The pick is the least, over every candidate, of the key ``(verdict, not sane, heavy, near,
    merit)``: the verdict's place in ``VERDICTS``; not sane; the number of ``not buildable``
    reasons when the verdict is ``not buildable``, else 0; the nearest-fit step
    ``⌊weighted/FIT_STEP⌋``; :func:`bandsmith.verdict.merit_key` with the candidate's position
    (rank's order, the position last, so no two keys tie). Judging is the costly part, so the
    pick is found by branch and bound: :func:`_least_key` gives, from numbers the design already
    has, a tuple that the first four parts of a candidate's key cannot be below, and the
    attempt's own parts alone, ``(0, not sane, 0, near)``, one that it cannot be below either
    (a verdict's place and a count are never below 0). Candidates
    are taken least bound first: one with the attempt's bound gets :func:`_least_key`'s instead
    and goes back, one with that bound is judged. Once the least bound left is above the first
    four parts of the best key so far, neither it nor any other candidate can be the least, and
    judging stops. The pick is the one judging every candidate gives.
    """
    cands = [(i, res, a) for i, (res, a) in enumerate(tried) if res is not None and a.feasible and res.feasible]
    if not cands:
        return None
    best = pick = None
    # (bound, whether it is _least_key's, position): least bound first, the attempt's before
    # _least_key's where they are equal
    bounds = [((0, not a.sane, 0, _near(a)), False, k) for k, (_, res, a) in enumerate(cands)]
    seen: dict = {}  # the work the judging of this stage's candidates shares (judge's seen)
    heapq.heapify(bounds)
    while bounds:
        bound, settled, k = heapq.heappop(bounds)
        if best is not None and bound > best[:4]:
            break  # this bound and every one left is above the best key's first four parts
        i, res, a = cands[k]
        if not settled:
            heapq.heappush(bounds, (_least_key(res, a, limits, seen), True, k))
            continue
        v = judge(res, limits, candidate=a.topology_id, seen=seen)
        heavy = sum(1 for r in v.reasons if r.weight == NOT_BUILDABLE) if v.verdict == NOT_BUILDABLE else 0
        key = (VERDICTS.index(v.verdict), not a.sane, heavy, _near(a), merit_key(v, k))
        if best is None or key < best:
            best, pick = key, k
    i, res, att = cands[pick]
    notes: tuple[str, ...] = ()
    if not att.within and att.errors is not None:
        e = att.errors
        notes += (
            f"no circuit meets this stage within its tolerances with {series} parts; the best judged, {att.topology_id}, "
            f"is off by f0 {e['f0_pct']:+.3g} %, Q {e['q_pct']:+.3g} %, gain {e['gain_db']:+.3g} dB (a finer series or a trimmer helps)",
        )
    return i, res, att, notes


def _near(a) -> float:
    """The attempt's nearest-fit step ``⌊weighted/FIT_STEP⌋`` (inf for an undefined fit)."""
    return math.floor(a.weighted / FIT_STEP + 1e-9) if math.isfinite(a.weighted) else math.inf


def _least_key(res, a, limits: VerdictLimits, seen: dict | None = None) -> tuple:
    """A lower bound of the first four parts of :func:`choose_auto`'s key, from numbers the design
    already has (no judging): the verdict and count of :func:`bandsmith.verdict.least_verdict`
    (``seen`` as it takes it), the attempt's own sane and nearest-fit parts."""
    verdict, heavy = least_verdict(res, limits, seen=seen)
    return (VERDICTS.index(verdict), not a.sane, heavy, _near(a))


def verdicts_json(result: "Cascade", limits: VerdictLimits = VerdictLimits()) -> tuple[list[dict], dict]:
    """Per-stage ``{"verdict", "reasons"}`` and the chain's ``{"verdict", "reasons"}`` for JSON."""
    per = [stage_verdict(st, limits) for st in result.stages]
    verdict, reasons = chain_verdict(result, per)
    stages = [{"verdict": v.verdict, "reasons": [r.to_json() for r in v.reasons]} for v in per]
    return stages, {"verdict": verdict, "reasons": [r.to_json() for r in reasons]}
