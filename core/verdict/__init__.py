"""Verdicts: which candidate to build.

Every designed candidate gets a verdict — ``buildable``, ``marginal`` or ``not buildable`` — with its
reasons in plain words and the number behind each (:mod:`bandsmith.verdict.judge`), judged against one
settable :class:`VerdictLimits` (:mod:`bandsmith.verdict.limits`); its yield under ordinary part
tolerances is estimated from the sensitivities and confirmed by a short Monte Carlo
(:mod:`bandsmith.verdict.yield_estimate`); a comparison ranks the candidates and recommends one
(:mod:`bandsmith.verdict.ranking`, :mod:`bandsmith.verdict.comparison`).
"""

from bandsmith.verdict.comparison import Comparison, compare_verdicts, comparison_json, judge_all
from bandsmith.verdict.judge import BUILDABLE, MARGINAL, NOT_BUILDABLE, VERDICTS, Reason, Verdict, heaviest, heaviest_first, judge, judge_many, least_verdict
from bandsmith.verdict.limits import LIMIT_SOURCES, VerdictLimits
from bandsmith.verdict.ranking import Ranking, merit_key, rank
from bandsmith.verdict.yield_estimate import YieldEstimate, confirm_yield, estimate_yield

__all__ = [
    "BUILDABLE", "MARGINAL", "NOT_BUILDABLE", "VERDICTS",
    "VerdictLimits", "LIMIT_SOURCES",
    "Reason", "Verdict", "judge", "judge_many", "least_verdict", "heaviest", "heaviest_first",
    "Ranking", "rank", "merit_key",
    "Comparison", "compare_verdicts", "judge_all", "comparison_json",
    "YieldEstimate", "estimate_yield", "confirm_yield",
]
