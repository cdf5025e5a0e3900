"""A built chain as JSON (``bandsmith cascade --json``) and in a session (``extras["chains"]``)."""

from __future__ import annotations

import math

from bandsmith.common.errors import InputError
from bandsmith.analysis.figures import Figures
from bandsmith.chain.chain_settings import Chain
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from bandsmith.chain.cascade import Cascade, Stage

__all__ = ["cascade_json", "cascade_session", "chains_in"]


def _fig_json(fig: Figures | None) -> dict | None:
    return fig.to_json() if fig is not None else None


def _stage_json(st: Stage) -> dict:
    res = st.result
    an = res.analysis if (res is not None and st.feasible) else None
    out = {
        "index": st.index,
        "f0_hz": st.plan.f0_hz,
        "q": st.plan.q,
        "gain": st.plan.gain,
        "circuit": st.circuit if st.feasible else None,
        "feasible": st.feasible,
        "reason": st.reason,
        "chosen": st.chosen,
        "exact": dict(res.exact) if st.feasible else None,
        "series": res.series if st.feasible else None,
        "ideal": an.ideal.to_json() if an is not None else None,
        "actual": _fig_json(an.actual) if an is not None else None,
        "errors": dict(res.errors) if st.feasible else None,
        "warnings": list(st.warnings),
        "requirements": an.requirements.to_json() if an is not None else None,
        "vin_v": st.vin_v,
        "peak_internal_gain_db": st.peak_internal_gain_db,
        "planned_peak_internal_gain_db": st.plan.peak_internal_gain_db,
        "lowpass_pole": [st.plan.lowpass_pole.real, st.plan.lowpass_pole.imag],
        "tried": [a.to_json() for a in st.attempts],
    }
    if an is not None:
        out["netlist"] = an.netlist.to_json()
    return out


def cascade_json(result: Cascade) -> dict:
    """The ``bandsmith cascade --json`` object (issue 6's contract, with extra keys)."""
    s = result.settings
    from bandsmith.chain.stage_verdicts import verdicts_json

    gbws = [st.result.analysis.requirements.gbw_hz if st.feasible and st.result.analysis is not None else None for st in result.stages]
    stage_verdicts, chain_verdict = verdicts_json(result)
    sections = [_stage_json(st) | sv for st, sv in zip(result.stages, stage_verdicts)]
    return {
        "verdict": chain_verdict["verdict"],
        "reasons": chain_verdict["reasons"],
        "response": s.response,
        "order": s.order,
        "spec": s.to_json(),
        "feasible": result.feasible,
        "reason": result.reason,
        "warnings": list(result.warnings),
        "sections": sections,
        "overall": result.overall.to_json() if result.overall is not None else None,
        "overall_actual": result.overall_actual.to_json() if result.overall_actual is not None else None,
        "opamp": None if result.conditions.opamp is None else result.conditions.opamp.to_json(),
        "required_gbw_hz": (max(gbws) if gbws and all(g is not None for g in gbws) else None) if result.feasible else None,
        "peak_gain_db": 20 * math.log10(result.plan.peak_gain),
        "reference_max_dev_db": result.reference_max_dev_db,
        "passband_max_dev_db": result.passband_max_dev_db,
        "actual_max_dev_db": result.actual_max_dev_db,
        "sweep": {"f_from_hz": float(result.sweep_f_hz[0]), "f_to_hz": float(result.sweep_f_hz[-1]), "points": int(result.sweep_f_hz.size)},
    }


def cascade_session(result: Cascade, *, chain_id: str = "chain-1", notes: str = ""):
    """A session holding a built chain: its stages as pinned candidates ``stage-1`` … and the
    chain itself under ``extras["chains"]``.

    The target is the whole band: f0 the geometric centre, Q = f0/bandwidth, the centre gain.
    """
    from bandsmith.files.session import CandidateEntry, OpAmpSpec, Session, Target

    if not result.feasible:
        raise InputError("save", f"the chain cannot be built, so nothing was saved: {result.reason}")
    s = result.settings
    c = result.conditions
    ids = tuple(f"stage-{st.index}" for st in result.stages)
    snap = None if s.series == "exact" else s.series
    entries = tuple(
        CandidateEntry(
            id=cid,
            topology_id=st.circuit,
            values=st.chosen,
            pinned=True,
            snap=snap,
            notes=f"{chain_id} stage {st.index} of {len(result.stages)}: f0 {st.plan.f0_hz:.6g} Hz, Q {st.plan.q:.6g}, gain {st.plan.gain:.6g}",
        )
        for cid, st in zip(ids, result.stages)
    )
    chain = result.chain(chain_id, candidate_ids=ids, notes=notes)
    band = s.band
    return Session(
        target=Target(f0_hz=band.f0_hz, q=band.q_bp, gain=s.gain, vin_v=c.vin_v, series=s.series),
        candidates=entries,
        opamp=OpAmpSpec(gbw_hz=c.gbw_hz, a0=c.a0),
        tolerances=c.tolerances,
        rload_ohm=c.rload_ohm,
        notes=notes,
        extras={"chains": [chain.to_json()]},
    )


def chains_in(session) -> tuple[Chain, ...]:
    """The chains a session keeps under ``extras["chains"]`` (none when absent).

    Raises
    ------
    SessionError
        Of kind ``wrong-type`` or ``impossible-value`` naming the chain and the field.
    """
    from bandsmith.files.session import SessionError

    raw = session.extras.get("chains", [])
    if not isinstance(raw, list):
        raise SessionError("wrong-type", "the session has a value of the wrong type: chains should be a list")
    out = []
    for i, obj in enumerate(raw):
        try:
            out.append(Chain.from_json(obj))
        except InputError as exc:
            raise SessionError("impossible-value", f"the session has an impossible value: chains[{i}].{exc.field} {exc.reason}") from None
    return tuple(out)
