"""The designs of a chain's stages, made together before the chain is built stage by stage.

A stage's designs (:func:`bandsmith.design.designer.designs_or_errors` of its circuits for its
target) depend on its target, its stage tolerances and, for the first stage, the source
resistance, all known from the plan. The amplitude that reaches a stage depends on the stages
built before it, but it reaches only the amplifier needs, which an analysis works out when first
asked for (:attr:`bandsmith.analysis.analyzer.Analysis.requirements`, from its ``drive``), and
the conditions a result carries. So every stage's circuits are prepared and their parts chosen
first (:func:`prepare_stages`, through :func:`bandsmith.design.designer.prepare_designs_many`: the
standard-value searches of every stage's circuits in one call), and the analyses of all stages
that share their conditions up to the amplitude, their stage tolerances and the source resistance
are made in one batch (:func:`bandsmith.design.candidate.analyze_candidates`: each candidate's
figures and required GBW measured member by member under its own stage's, as alone); once the stages before
it are built, a stage's results are concluded under its own conditions, amplitude included
(:meth:`PendingStage.results`). They are the results :func:`designs_or_errors` gives for the
stage's conditions.

One exception: a load capacitance's current is worked out with the analysis itself, and it needs
the amplitude; with one, each stage's analyses wait for its amplitude (one batch per stage).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from bandsmith.design.candidate import Conditions, analyze_candidates, batch_conditions
from bandsmith.design.designer import PreparedDesigns, Spec, prepare_designs_many

__all__ = ["PendingStage", "prepare_stages"]


@dataclass(frozen=True, slots=True)
class PendingStage:
    """One stage's designs up to what its amplitude decides.

    Attributes
    ----------
    prepared : PreparedDesigns
        Its circuits' designs for its target, parts chosen (in the order asked), under the
        stage's conditions with the chain's input amplitude in place of its own.
    analyses : list or None
        The analyses of ``prepared``'s candidates (each an analysis or the :class:`InputError` it
        raised); None when they wait for the amplitude.
    """

    prepared: PreparedDesigns
    analyses: list | None = None

    def results(self, vin_v: float) -> tuple[Conditions, list]:
        """The stage's conditions with the amplitude ``vin_v`` (V peak) that reaches it, and its
        designs under them: per circuit what :func:`bandsmith.design.designer.designs_or_errors`
        gives for those conditions."""
        conditions = self.prepared.conditions_at(vin_v)
        analyses = self.analyses
        if analyses is None:  # (with a load capacitance: analysed at the amplitude itself)
            ready = self.prepared.candidates()
            analyses = analyze_candidates(ready, conditions) if ready else []
        return conditions, self.prepared.concluded(analyses, vin_v)


def prepare_stages(stages: Sequence[tuple[Sequence[str], Spec, Conditions]], series: str) -> list[PendingStage]:
    """Every stage's circuits ``(ids, target, conditions)`` prepared, their parts chosen, and
    (without a load capacitance) analysed: the candidates of all stages whose conditions differ
    at most in their tolerances and source resistance in one batch, each under its own stage's
    (:func:`bandsmith.design.candidate.analyze_candidates`). The conditions' amplitude is a
    stand-in (module notes)."""
    prepared = prepare_designs_many(stages, series=series)
    analyses: list[list | None] = [None] * len(stages)
    groups: dict[Conditions, list[int]] = {}
    for k, (_, _, cond) in enumerate(stages):
        if cond.cload_f is None:  # with one, the analysis needs the amplitude
            groups.setdefault(batch_conditions(cond), []).append(k)
    for ks in groups.values():
        ready = [prepared[k].candidates() for k in ks]
        each = [stages[k][2] for k, cands in zip(ks, ready) for _ in cands]
        done = iter(analyze_candidates([c for cands in ready for c in cands], each) if any(ready) else [])
        for k, cands in zip(ks, ready):
            analyses[k] = [next(done) for _ in cands]
    return [PendingStage(p, an) for p, an in zip(prepared, analyses)]
