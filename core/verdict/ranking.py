"""Ranking candidates by verdict, then by a figure of merit, and the recommendation.

Order (best first), each key deciding only where the ones before it tie:

1. the verdict: ``buildable``, then ``marginal``, then ``not buildable``;
2. the fewer reasons of that weight (the nearer miss first);
3. the yield under the part tolerances, in steps of 5 percentage points (so that a Monte Carlo's
   scatter of a point or two does not decide);
4. no inductor before an inductor (a wound part is larger, dearer and less ideal);
5. the lower required GBW (a slower, cheaper op-amp; a candidate with none last), compared on a
   logarithmic grid of 1e-9 relative steps, so that two circuits whose need is the same in theory
   are not ordered by the last bits of their searches;
6. the fewer parts;
7. the candidate's position in the comparison (stable).

The recommended candidate is the first one when it is ``buildable``; otherwise there is none, and
the reason names the nearest candidate and what holds it back.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

from bandsmith.common.values import format_value
from bandsmith.verdict.judge import BUILDABLE, VERDICTS, Verdict

__all__ = ["YIELD_STEP", "GBW_STEP", "Ranking", "merit_key", "rank"]

#: Yields closer than this count as equal in the ranking.
YIELD_STEP = 0.05
#: Required GBWs within this relative step count as equal in the ranking (rounding, not engineering).
GBW_STEP = 1e-9


def merit_key(v: Verdict, position: int = 0) -> tuple:
    """The sort key of a verdict (smaller is better; see the module notes)."""
    y = -1.0 if v.yield_fraction is None else v.yield_fraction
    g = v.required_gbw_hz
    gbw = round(math.log(g) / GBW_STEP) if g is not None and math.isfinite(g) and g > 0 else math.inf
    heavy = [r.weight for r in v.reasons].count(v.verdict)
    return (VERDICTS.index(v.verdict), heavy, -math.floor(y / YIELD_STEP + 1e-9), v.needs_inductor, gbw, v.part_count, position)


@dataclass(frozen=True, slots=True)
class Ranking:
    """Ranks of a sequence of verdicts (in their given order) and the recommendation.

    Attributes
    ----------
    ranks : tuple of int
        The rank of each verdict, 1 = best.
    order : tuple of int
        Positions of the verdicts, best first.
    recommended : str or None
        The recommended candidate's id; None when none is buildable.
    reason : str
        Why (which candidate and for what, or why none).
    """

    ranks: tuple[int, ...]
    order: tuple[int, ...]
    recommended: str | None
    reason: str


def rank(verdicts: Sequence[Verdict]) -> Ranking:
    """Rank ``verdicts`` and choose the recommended candidate (see the module notes)."""
    order = tuple(sorted(range(len(verdicts)), key=lambda i: merit_key(verdicts[i], i)))
    ranks = [0] * len(verdicts)
    for r, i in enumerate(order, start=1):
        ranks[i] = r
    if not order:
        return Ranking((), (), None, "there is no candidate to judge")
    best = verdicts[order[0]]
    if best.verdict == BUILDABLE:
        why = [f"yield {100 * best.yield_fraction:.1f} %" if best.yield_fraction is not None else None,
               f"op-amp of {format_value(best.required_gbw_hz, 'Hz')} GBW" if best.required_gbw_hz is not None else None,
               f"{best.part_count} parts", "with an inductor" if best.needs_inductor else "no inductor"]
        others = [v.verdict for v in verdicts].count(BUILDABLE) - 1
        lead = "the only buildable candidate" if others == 0 else f"the best of {others + 1} buildable candidates"
        return Ranking(tuple(ranks), order, best.candidate, f"{best.candidate}: {lead} ({', '.join(w for w in why if w)})")
    first = best.reasons[0].text if best.reasons else best.verdict
    return Ranking(
        tuple(ranks), order, None,
        f"no candidate is buildable; the nearest is {best.candidate} ({best.verdict}: {first})",
    )
