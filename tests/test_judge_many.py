"""Several candidates judged together (judge_many, what a compare's judge_all does) against each
judged alone, and the yield estimates a judging shares (estimate_yield's ``seen``).

Consistency checks of the shared work (no outside source: the lone verdicts and estimates they
are held to are checked against published and Monte Carlo figures in test_verdicts.py and
test_verdicts_yield.py). Every number must be the same float.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from bandsmith.design.compare import compare
from bandsmith.design.designer import Spec
from bandsmith.verdict import VerdictLimits, estimate_yield, judge, judge_many


def _fresh(results):
    """The same designs with analyses that have worked nothing out yet (no requirements kept)."""
    return [r if r.analysis is None else dataclasses.replace(r, analysis=dataclasses.replace(r.analysis, _requirements=None))
            for r in results]


@pytest.mark.parametrize("f0, q, gain, series", [(3.3e3, 4.0, 3.0, "E24"), (870.0, 12.0, 1.0, "E12"), (41e3, 2.0, 10.0, "E96")])
def test_judge_many_gives_each_verdict_judge_gives_alone(f0, q, gain, series):
    results = compare(Spec(f0, q, gain), series=series)
    together = judge_many(_fresh(results))
    alone = [judge(r) for r in _fresh(results)]
    assert together == tuple(alone)
    assert [v.to_json() for v in together] == [v.to_json() for v in alone]


def test_estimates_of_one_model_are_made_once():
    """estimate_yield with ``seen``: the same sensitivities and tolerances (copies, not the same
    objects) give the one estimate made first; another model its own; each the estimate made
    without ``seen``."""
    rng = np.random.default_rng(11)
    refs = ["R1", "R2", "C1", "C2"]
    sens = {k: {r: float(rng.normal()) for r in refs} for k in ("f0", "q", "gain")}
    tol = {"R1": 0.01, "R2": 0.01, "C1": 0.05, "C2": 0.05}
    other = {k: dict(v, R1=v["R1"] + 0.25) for k, v in sens.items()}
    seen: dict = {}
    first = estimate_yield(sens, tol, seen=seen)
    again = estimate_yield({k: dict(v) for k, v in sens.items()}, dict(tol), seen=seen)
    third = estimate_yield(other, tol, seen=seen)
    assert again is first and third is not first
    assert first == estimate_yield(sens, tol) and third == estimate_yield(other, tol)
    # another window is another model
    wide = VerdictLimits(window_f0=0.1)
    assert estimate_yield(sens, tol, wide, seen=seen) == estimate_yield(sens, tol, wide)


def test_least_verdict_then_judge_sharing_seen_gives_judge_alone():
    """A chain's auto bounds a candidate by least_verdict and then judges it, both with one
    ``seen``: the limits least_verdict found serve the judge, whose verdict is the one judge
    gives alone; least_verdict's answer is its own without ``seen``."""
    from bandsmith.design.candidate import Conditions
    from bandsmith.verdict import least_verdict

    results = compare(Spec(2.2e3, 8.0, 2.0), series="E12", conditions=Conditions(gbw_hz=1e6))
    seen: dict = {}
    bounds = [least_verdict(r, seen=seen) for r in results]
    assert bounds == [least_verdict(r) for r in results]
    assert [judge(r, seen=seen) for r in results] == [judge(r) for r in _fresh(results)]
