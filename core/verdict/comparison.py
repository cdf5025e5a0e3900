"""A comparison with verdicts: every circuit designed for one target, judged, ranked, one recommended.

:func:`compare_verdicts` wraps :func:`bandsmith.design.compare.compare`; :func:`comparison_json`
extends its JSON (:func:`bandsmith.design.compare.compare_json`, every key kept) with, per
candidate, ``verdict``, ``reasons`` (``{code, text, value, limit, weight}``), ``rank`` (1 = best)
and ``yield``, and at the top ``recommended`` (an id or None), ``recommended_reason``,
``figures_with`` (what op-amp the verdict's figures were judged with) and ``limits``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

from bandsmith.design.candidate import Conditions
from bandsmith.design.compare import compare, compare_json
from bandsmith.design.designer import DesignResult, Spec
from bandsmith.verdict.judge import Verdict, judge_many
from bandsmith.verdict.limits import VerdictLimits
from bandsmith.verdict.ranking import Ranking, rank

__all__ = ["Comparison", "compare_verdicts", "judge_all", "comparison_json"]


@dataclass(frozen=True, slots=True)
class Comparison:
    """Designs for one target with their verdicts and ranking.

    Attributes
    ----------
    spec : Spec
    results : tuple of DesignResult
        In the order of the comparison (every circuit with a design procedure).
    verdicts : tuple of Verdict
        One per result, same order.
    ranking : Ranking
    limits : VerdictLimits
    """

    spec: Spec
    results: tuple[DesignResult, ...]
    verdicts: tuple[Verdict, ...]
    ranking: Ranking
    limits: VerdictLimits

    @property
    def recommended(self) -> str | None:
        return self.ranking.recommended

    def ranked(self) -> tuple[tuple[DesignResult, Verdict, int], ...]:
        """``(result, verdict, rank)`` best first."""
        return tuple((self.results[i], self.verdicts[i], self.ranking.ranks[i]) for i in self.ranking.order)


def judge_all(spec: Spec, results: Sequence[DesignResult], limits: VerdictLimits = VerdictLimits()) -> Comparison:
    """Judge and rank designs already made (ids are the circuit ids), judged together
    (:func:`bandsmith.verdict.judge.judge_many`)."""
    verdicts = judge_many(results, limits)
    return Comparison(spec, tuple(results), verdicts, rank(verdicts), limits)


def compare_verdicts(
    spec: Spec,
    *,
    series: str = "E24",
    conditions: Conditions = Conditions(),
    limits: VerdictLimits = VerdictLimits(),
    width: int = 1,
) -> Comparison:
    """Design every circuit for ``spec``, judge each and rank them.

    Parameters are those of :func:`bandsmith.design.compare.compare`, and ``limits`` for the verdicts;
    ``conditions.gbw_hz`` is the session's op-amp, ``conditions.tolerances`` the design tolerances.
    """
    return judge_all(spec, compare(spec, series=series, conditions=conditions, width=width), limits)


def comparison_json(comparison: Comparison) -> dict:
    """The compare object with the verdict keys added (see the module notes)."""
    out = compare_json(comparison.spec, comparison.results)
    for cand, v, r in zip(out["candidates"], comparison.verdicts, comparison.ranking.ranks):
        cand.update(v.to_json())
        cand["rank"] = r
    gbw = comparison.results[0].conditions.gbw_hz if comparison.results else None
    out["recommended"] = comparison.ranking.recommended
    out["recommended_reason"] = comparison.ranking.reason
    out["figures_with"] = {"opamp": "ideal" if gbw is None else "single-pole", "gbw_hz": gbw}
    out["limits"] = comparison.limits.to_json()
    return out
