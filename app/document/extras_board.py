"""The board settings a session keeps (``extras["board"]``) and one candidate's bias and trim plan.

Plain Python (no Qt): the Board pane computes with it off the GUI thread and the report's "On the
board" section reads the same settings. :func:`board_of` only calls the API
(:func:`bandsmith.api.bias`, :func:`bandsmith.api.trim`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from bandsmith import api
from bandsmith.common.values import format_value

__all__ = ["BOARD_KEY", "BoardSettings", "stored_board", "board_of", "ohm", "part_value"]

#: The session's extras key for the board settings.
BOARD_KEY = "board"
_REFERENCES = ("divider", "buffered")


@dataclass(frozen=True)
class BoardSettings:
    """What the Board pane keeps: the supply (V), the reference kind and measured f0 by candidate (Hz)."""

    supply_v: float = 12.0
    reference: str = "divider"
    measured_f0_hz: dict = field(default_factory=dict)

    def to_json(self) -> dict:
        return {"supply_v": self.supply_v, "reference": self.reference, "measured_f0_hz": dict(self.measured_f0_hz)}


def stored_board(session) -> BoardSettings:
    """The board settings kept in the session (the defaults for what is missing or unusable)."""
    raw = session.extras.get(BOARD_KEY)
    if not isinstance(raw, dict):
        return BoardSettings()
    supply = raw.get("supply_v")
    supply = float(supply) if isinstance(supply, (int, float)) and math.isfinite(supply) and supply > 0 else 12.0
    ref = raw.get("reference") if raw.get("reference") in _REFERENCES else "divider"
    meas = raw.get("measured_f0_hz") if isinstance(raw.get("measured_f0_hz"), dict) else {}
    meas = {str(k): float(v) for k, v in meas.items() if isinstance(v, (int, float)) and math.isfinite(v) and v > 0}
    return BoardSettings(supply, ref, meas)


def board_of(topology_id: str, values, settings: BoardSettings, *, vin_v: float = 1.0, measured_f0_hz: float | None = None):
    """The candidate's :class:`~bandsmith.board.bias.BiasedCircuit` and :class:`~bandsmith.board.trim.TrimPlan`.

    Raises :class:`~bandsmith.common.errors.InputError` (naming the field) for settings the core refuses.
    """
    biased = api.bias(topology_id, dict(values), supply_v=settings.supply_v, reference=settings.reference, vin_v=vin_v)
    plan = api.trim(topology_id, dict(values), measured_f0_hz=measured_f0_hz)
    return biased, plan


def ohm(x: float) -> str:
    """A resistance for display ("—" when the part is not a resistor)."""
    return format_value(x, "Ω", digits=3) if isinstance(x, (int, float)) and math.isfinite(x) else "—"


def part_value(ref: str, x: float) -> str:
    """A part's value with the unit its reference letter implies."""
    unit = {"C": "F", "L": "H"}.get(ref[:1].upper(), "Ω")
    return format_value(x, unit, digits=4)
