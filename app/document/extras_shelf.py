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

__all__ = ["SESSION_KEY", "session_supply_v", "session_amps"]

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
