"""The designs of a chain's stages, made together before the chain is built stage by stage.

A stage's designs (:func:`bandsmith.design.designer.designs_or_errors` of its circuits for its
target) depend on its target, its stage tolerances and, for the first stage, the source
resistance, all known from the plan. The amplitude that reaches a stage depends on the stages
built before it, but it reaches only the amplifier needs, which an analysis works out when first
asked for (:attr:`bandsmith.analysis.analyzer.Analysis.requirements`, from its ``drive``), and
the conditions a result carries. So every stage's circuits are prepared and their parts chosen
first (:func:`prepare_stages`), and the analyses of all stages that share their conditions up to
the amplitude are made in one batch (:func:`bandsmith.design.candidate.analyze_candidates`: each
candidate's figures and required GBW measured member by member, as alone); once the stages before
it are built, a stage's results are concluded under its own conditions, amplitude included
(:meth:`PendingStage.results`). They are the results :func:`designs_or_errors` gives for the
stage's conditions.

One exception: a load capacitance's current is worked out with the analysis itself, and it needs
the amplitude; with one, each stage's analyses wait for its amplitude (one batch per stage).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace

from bandsmith.common.errors import InputError
from bandsmith.design.candidate import Conditions, analyze_candidates
from bandsmith.design.designer import (
    Spec,
    _choose_parts,
    _conclude,
    _prepare,
    _Prepared,
)

__all__ = ["PendingStage", "prepare_stages"]


@dataclass(frozen=True, slots=True)
class PendingStage:
    """One stage's designs up to what its amplitude decides.

    Attributes
    ----------
    spec : Spec
        The stage's target.
    series : str
    conditions : Conditions
        The stage's conditions with the chain's input amplitude in place of its own.
    made : list
        Per circuit (in the order asked): an :class:`InputError`, an infeasible ``DesignResult``
        (under ``conditions``) or the prepared design with its parts chosen.
    analyses : list or None
        Per circuit the analysis of its chosen parts (or the :class:`InputError` it raised) where
        it has parts, None for the others; None when the analyses wait for the amplitude.
    """

    spec: Spec
    series: str
    conditions: Conditions
    made: list
    analyses: list | None = None

    def results(self, vin_v: float) -> tuple[Conditions, list]:
        """The stage's conditions with the amplitude ``vin_v`` (V peak) that reaches it, and its
        designs under them: per circuit what :func:`bandsmith.design.designer.designs_or_errors`
        gives for those conditions."""
        same = vin_v == self.conditions.vin_v
        conditions = self.conditions if same else replace(self.conditions, vin_v=vin_v)
        analyses = self.analyses
        if analyses is None:
            ready = [i for i, m in enumerate(self.made) if isinstance(m, _Prepared)]
            analyses = [None] * len(self.made)
            for i, an in zip(ready, analyze_candidates([self.made[i].candidate for i in ready], conditions) if ready else []):
                analyses[i] = an
        out = []
        for m, an in zip(self.made, analyses):
            if isinstance(m, InputError):
                out.append(m)
            elif not isinstance(m, _Prepared):  # infeasible before any analysis
                out.append(m if same else replace(m, conditions=conditions))
            elif isinstance(an, InputError):
                out.append(an)
            else:
                if an.drive.vin_v != vin_v:
                    an = replace(an, drive=an.drive._replace(vin_v=vin_v))
                out.append(_conclude(m, an, self.spec, self.series, conditions))
        return conditions, out


def prepare_stages(stages: Sequence[tuple[Sequence[str], Spec, Conditions]], series: str) -> list[PendingStage]:
    """Every stage's circuits ``(ids, target, conditions)`` prepared, their parts chosen, and
    (without a load capacitance) analysed: the candidates of all stages whose conditions are
    equal in one batch. The conditions' amplitude is a stand-in (module notes)."""
    made_all = []
    for ids, spec, cond in stages:
        made = []
        for t in ids:
            try:
                made.append(_prepare(t, spec, series, None, cond))
            except InputError as exc:
                made.append(exc)
        _choose_parts(made, spec, series, cond, 1)
        made_all.append(made)
    analyses: list[list | None] = [None] * len(stages)
    groups: dict[Conditions, list[int]] = {}
    for k, (_, _, cond) in enumerate(stages):
        if cond.cload_f is None:  # with one, the analysis needs the amplitude
            groups.setdefault(cond, []).append(k)
    for cond, ks in groups.items():
        ready = [(k, i) for k in ks for i, m in enumerate(made_all[k]) if isinstance(m, _Prepared)]
        done = analyze_candidates([made_all[k][i].candidate for k, i in ready], cond) if ready else []
        for k in ks:
            analyses[k] = [None] * len(made_all[k])
        for (k, i), an in zip(ready, done):
            analyses[k][i] = an
    return [PendingStage(spec, series, cond, made, an) for (_, spec, cond), made, an in zip(stages, made_all, analyses)]
