"""The session keeps banks: ``extras["banks"]``, a list of bank records.

A record holds what rebuilds the bank: ``id``, ``rule``, ``series``, ``circuit_mode``,
``circuit_reason``, and per channel ``target_f0_hz``, ``label_hz``, ``q``, ``gain``, ``circuit`` and
``chosen`` (SI units), ``shared`` and ``candidate_id`` (the session candidate holding the same
parts, or None); and, for comparison, ``distinct_values_alone``. The response, isolation and bill
of materials are computed again from the parts when read (:func:`banks_in`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping

from bandsmith.bank.bom import distinct_count
from bandsmith.bank.build import Bank, Channel, MAX_CHANNELS
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.limits import MAX_CANDIDATES
from bandsmith.design.candidate import Candidate, Conditions

__all__ = ["EXTRAS_KEY", "SavedBank", "bank_record", "bank_session", "banks_in"]

EXTRAS_KEY = "banks"


@dataclass(frozen=True, slots=True)
class SavedBank:
    """A bank read back from a session.

    Attributes
    ----------
    id : str
    bank : Bank
        Rebuilt from the saved parts (analysed under the session's op-amp).
    distinct_values_alone : int or None
        As saved (designing each channel alone is not repeated).
    """

    id: str
    bank: Bank
    distinct_values_alone: int | None


def bank_record(bank: Bank, bank_id: str = "bank-1", candidate_ids: tuple | None = None) -> dict:
    """The JSON record of a bank (see the module notes)."""
    ids = candidate_ids or (None,) * len(bank.channels)
    return {
        "id": bank_id,
        "rule": dict(bank.rule),
        "series": bank.series,
        "circuit_mode": bank.circuit_mode,
        "circuit_reason": bank.circuit_reason,
        "distinct_values_alone": distinct_count(zip(bank.alone_circuits, bank.alone)),
        "channels": [
            {
                "target_f0_hz": ch.target_f0_hz,
                "label_hz": ch.label_hz,
                "q": ch.q,
                "gain": ch.gain,
                "circuit": ch.circuit,
                "chosen": {k: float(v) for k, v in ch.chosen.items()},
                "shared": ch.shared,
                "candidate_id": cid,
            }
            for ch, cid in zip(bank.channels, ids)
        ],
    }


def bank_session(bank: Bank, *, bank_id: str = "bank-1", notes: str = ""):
    """A session keeping the bank under ``extras["banks"]``; its channels are also pinned candidates
    ``ch-1`` … when there are at most as many as a session holds (else only the record).

    The session's target is the middle channel.
    """
    from bandsmith.files.session import CandidateEntry, OpAmpSpec, Session, Target

    chs = bank.channels
    mid = chs[len(chs) // 2]
    c = bank.conditions
    snap = None if bank.series == "exact" else bank.series
    entries: tuple = ()
    ids = None
    if len(chs) <= MAX_CANDIDATES:
        ids = tuple(f"ch-{ch.index + 1}" for ch in chs)
        entries = tuple(
            CandidateEntry(
                id=cid, topology_id=ch.circuit, values=ch.chosen, pinned=True, snap=snap,
                notes=f"{bank_id} channel {ch.index + 1} of {len(chs)}: f0 {ch.target_f0_hz:.6g} Hz, Q {ch.q:.6g}, gain {ch.gain:.6g}",
            )
            for cid, ch in zip(ids, chs)
        )
    return Session(
        target=Target(f0_hz=mid.target_f0_hz, q=mid.q, gain=mid.gain, vin_v=c.vin_v, series=bank.series),
        candidates=entries,
        opamp=OpAmpSpec(gbw_hz=c.gbw_hz, a0=c.a0),
        tolerances=c.tolerances,
        rload_ohm=c.rload_ohm,
        notes=notes,
        extras={EXTRAS_KEY: [bank_record(bank, bank_id, ids)]},
    )


def _num(rec: Mapping, key: str, where: str, *, optional: bool = False) -> float | None:
    v = rec.get(key)
    if v is None and optional:
        return None
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v <= 0:
        raise InputError(key, f"{where}: must be a number above zero, got {v!r}")
    return float(v)


def _read(rec: Any, conditions: Conditions) -> SavedBank:
    if not isinstance(rec, Mapping):
        raise InputError(EXTRAS_KEY, "a bank record must be an object")
    bid = rec.get("id")
    if not isinstance(bid, str) or not bid:
        raise InputError("id", "a bank record needs an id (text)")
    raw = rec.get("channels")
    if not isinstance(raw, list) or not 1 <= len(raw) <= MAX_CHANNELS:
        raise InputError("channels", f"bank {bid}: a list of 1 to {MAX_CHANNELS} channels is needed")
    series = rec.get("series", "exact")
    channels = []
    for i, ch in enumerate(raw):
        where = f"bank {bid} channel {i + 1}"
        if not isinstance(ch, Mapping):
            raise InputError("channels", f"{where}: must be an object")
        circuit = get_topology(ch.get("circuit"))
        chosen = ch.get("chosen")
        if not isinstance(chosen, Mapping):
            raise InputError("chosen", f"{where}: must be an object of part values")
        cand = Candidate(circuit.id, dict(chosen))  # validates the parts
        channels.append(Channel(
            index=i,
            target_f0_hz=_num(ch, "target_f0_hz", where),
            q=_num(ch, "q", where),
            gain=_num(ch, "gain", where),
            label_hz=_num(ch, "label_hz", where, optional=True),
            circuit=circuit.id,
            chosen=dict(cand.values),
            analysis=cand.analyze(conditions),
            shared=bool(ch.get("shared", False)),
        ))
    alone = rec.get("distinct_values_alone")
    bank = Bank(
        channels=tuple(channels),
        series=str(series),
        circuit_mode=str(rec.get("circuit_mode", "")),
        circuit_reason=str(rec.get("circuit_reason", "")),
        alone=(),
        alone_circuits=(),
        rule=dict(rec.get("rule") or {}),
        conditions=conditions,
    )
    return SavedBank(bid, bank, alone if isinstance(alone, int) and not isinstance(alone, bool) else None)


def banks_in(session) -> tuple[tuple[SavedBank, ...], tuple[str, ...]]:
    """The banks a session keeps, and a plain-words problem for each record that cannot be read."""
    raw = session.extras.get(EXTRAS_KEY)
    if raw is None:
        return (), ()
    if not isinstance(raw, list):
        return (), (f'the session\'s "{EXTRAS_KEY}" section is not a list, so no bank could be read',)
    conditions = Conditions(gbw_hz=session.opamp.gbw_hz, a0=session.opamp.a0, vin_v=session.target.vin_v,
                            rload_ohm=session.rload_ohm, tolerances=session.tolerances)
    out, problems = [], []
    for n, rec in enumerate(raw, start=1):
        try:
            out.append(_read(rec, conditions))
        except InputError as exc:
            problems.append(f"bank record {n} cannot be read: {exc}")
    return tuple(out), tuple(problems)
