"""The stage chains a session keeps under ``extras["chains"]``, and the conditions they run under (no Qt).

The stage-chain pane and the report read the chains here, so both agree on what an unreadable
entry means: it is left as it is, with the reason in words (:func:`saved_chains`).
"""

from __future__ import annotations

from dataclasses import replace

from bandsmith.chain.cascade import Chain
from bandsmith.common.errors import InputError
from bandsmith.design.candidate import Conditions
from bandsmith.files.session import Session

__all__ = ["EXTRAS_KEY", "chain_conditions", "saved_chains"]

EXTRAS_KEY = "chains"


def chain_conditions(session: Session) -> Conditions:
    """What a chain is analysed under: the session's op-amp, input level, load and tolerances
    (its source resistance is a candidate's input, not a chain's)."""
    return replace(session.conditions, rsource_ohm=None)


def saved_chains(session: Session) -> tuple[list[Chain], list[str]]:
    """The usable chains of a session and, in words, any entry that could not be read."""
    raw = session.extras.get(EXTRAS_KEY, [])
    if not isinstance(raw, list):
        return [], [f"the session's {EXTRAS_KEY!r} section is not a list and was left alone"]
    chains, problems = [], []
    for i, obj in enumerate(raw):
        try:
            chains.append(Chain.from_json(obj))
        except InputError as exc:
            problems.append(f"chain {i + 1} of the session cannot be read ({exc}) and is left as it is")
    return chains, problems
