"""A session made from designs: what ``design --save`` and ``compare --save`` write."""

from __future__ import annotations

from dataclasses import replace
from typing import Iterable

from bandsmith.circuits.synthesis import Spec
from bandsmith.design.candidate import Conditions
from bandsmith.design.designer import DesignResult
from bandsmith.files.session import CandidateEntry, OpAmpSpec, Session, Target

__all__ = ["design_session"]


def design_session(spec: Spec, results: Iterable[DesignResult], *, series: str | None = None, conditions: Conditions | None = None, notes: str = ""):
    """A session holding the feasible designs of ``results`` (for ``--save``).

    Each feasible design becomes a candidate (id = its circuit id, ``-2``, ``-3`` ... for
    repeats) with its chosen parts, its series as ``snap``, its pinned parts as ``fixed`` and its
    design notes and warnings as the candidate's notes; infeasible ones are listed in the
    session's notes with their reasons.
    """
    results = list(results)
    if series is None:
        series = results[0].series if results else "E24"
    if conditions is None:
        conditions = results[0].conditions if results else Conditions()
    session = Session(
        target=Target(f0_hz=spec.f0_hz, q=spec.q, gain=spec.gain, vin_v=conditions.vin_v, series=series),
        candidates=(),
        opamp=OpAmpSpec(gbw_hz=conditions.gbw_hz, a0=conditions.a0),
        tolerances=conditions.tolerances,
        rload_ohm=conditions.rload_ohm,
        rsource_ohm=conditions.rsource_ohm,
    )
    lines = [notes] if notes else []
    for r in results:
        if not r.feasible:
            lines.append(f"{r.topology_id}: not feasible: {r.reason}")
            continue
        entry = CandidateEntry(
            id=session.new_candidate_id(r.topology_id),
            topology_id=r.topology_id,
            values=dict(r.chosen),
            snap=None if r.series == "exact" else r.series,
            fixed=tuple(r.fixed),
            notes="\n".join(list(r.notes) + [f"warning: {w}" for w in r.warnings]),
        )
        session = session.with_candidate(entry)
    return replace(session, notes="\n".join(lines))
