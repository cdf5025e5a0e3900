"""The op-amp shelf a session carries under ``extras["shelf"]``: its models and its supply (no Qt).

The window's verdict book (:mod:`bandsmith.app.window.verdicts`), the shelf pane and the report
read them here, so all agree on what a session without the section, or with an unusable one, means.
"""

from __future__ import annotations

import math

from bandsmith.bench.headroom import DEFAULT_SUPPLY_V
from bandsmith.bench.shelf import OpAmp, amps_from_json
from bandsmith.common.errors import InputError
from bandsmith.files.session import Session

__all__ = ["SESSION_KEY", "session_supply_v", "session_amps", "session_chosen", "chosen_amp"]

SESSION_KEY = "shelf"


def session_supply_v(session: Session) -> float:
    """The session's supply ±V (``extras["shelf"]["supply_v"]``), or the default ±15 V."""
    sec = session.extras.get(SESSION_KEY)
    v = sec.get("supply_v") if isinstance(sec, dict) else None
    if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) and v > 0:
        return float(v)
    return DEFAULT_SUPPLY_V


def session_amps(session: Session) -> tuple[OpAmp, ...]:
    """Models the session carries (copied into it from the shelf); an unusable section gives none."""
    sec = session.extras.get(SESSION_KEY)
    if not isinstance(sec, dict):
        return ()
    try:
        return amps_from_json(sec.get("amps", []))
    except InputError:
        return ()


def session_chosen(session: Session) -> dict[str, str]:
    """The shelf model kept as chosen for each candidate (``extras["shelf"]["chosen"]``: id → model
    name); an unusable section gives none."""
    sec = session.extras.get(SESSION_KEY)
    chosen = sec.get("chosen") if isinstance(sec, dict) else None
    return {str(k): v for k, v in chosen.items() if isinstance(v, str)} if isinstance(chosen, dict) else {}


def chosen_amp(session: Session, candidate_id: str | None) -> OpAmp | None:
    """The model kept as chosen for ``candidate_id``, among the session's models, or None."""
    name = session_chosen(session).get(candidate_id or "")
    if name is None:
        return None
    return next((a for a in session_amps(session) if a.name.casefold() == name.casefold()), None)
