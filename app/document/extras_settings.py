"""The tolerance-spread and noise settings a session keeps, and how they apply to one circuit (no Qt).

The window keeps :class:`bandsmith.spread.tolerance.SpreadSettings` under ``session.extras["spread"]`` and
:class:`bandsmith.analysis.noise.NoiseSettings` under ``session.extras["noise"]`` (each its ``to_json()``). The
spread pane, the noise pane and the report read them here, so all three agree on what a session
without them, or with an unreadable section, means:

- no ``"spread"`` section: the defaults in the window, and no spread in the report;
- no ``"noise"`` section: the defaults everywhere;
- an unreadable section: the defaults, with the reason (so the user can see why).

The settings are shared by every candidate. :func:`spread_for_circuit` fits them to one circuit:
per-part tolerances of parts the circuit does not have are left out, and a GBW spread is left out
for an ideal op-amp (there is no GBW to vary); each with a note saying so.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from bandsmith.common.errors import InputError
from bandsmith.solver.mna import OpAmpModel
from bandsmith.solver.netlist import Netlist
from bandsmith.files.session import Session
from bandsmith.spread.tolerance import KINDS, SpreadSettings

__all__ = [
    "SPREAD_KEY",
    "NOISE_KEY",
    "Stored",
    "stored_spread",
    "stored_noise",
    "circuit_refs",
    "spread_for_circuit",
]

SPREAD_KEY = "spread"
NOISE_KEY = "noise"


@dataclass(frozen=True, slots=True)
class Stored:
    """Settings read from a session: ``saved`` is False when the session had no section (or an
    unreadable one, then ``problem`` says why) and ``settings`` are the defaults."""

    settings: object
    saved: bool
    problem: str | None = None


def _stored(session: Session, key: str, cls) -> Stored:
    obj = session.extras.get(key)
    if obj is None:
        return Stored(cls(), False)
    try:
        return Stored(cls.from_json(obj), True)
    except InputError as exc:
        return Stored(cls(), False, f"the session's {key} settings cannot be used ({exc}); the defaults apply")


def stored_spread(session: Session) -> Stored:
    """The session's :class:`SpreadSettings` (``extras["spread"]``), or the defaults."""
    return _stored(session, SPREAD_KEY, SpreadSettings)


def stored_noise(session: Session) -> Stored:
    """The session's :class:`NoiseSettings` (``extras["noise"]``), or the defaults."""
    from bandsmith.analysis.noise import NoiseSettings  # imported when asked: the noise analysis is not needed to open a session

    return _stored(session, NOISE_KEY, NoiseSettings)


def circuit_refs(netlist: Netlist) -> tuple[str, ...]:
    """References of the parts a tolerance can name: passives, then winding resistances above zero."""
    out = []
    for e in netlist.passives:
        out.append(e.ref)
        if e.kind == "L" and e.series_resistance > 0:
            out.append(e.series_ref or e.ref + ".rs")
    return tuple(out)


def spread_for_circuit(settings: SpreadSettings, netlist: Netlist, opamp: OpAmpModel) -> tuple[SpreadSettings, tuple[str, ...]]:
    """The settings as they apply to one circuit, and notes on what was left out.

    Per-part tolerances of parts the circuit lacks are dropped; a GBW spread is dropped for an
    ideal op-amp.
    """
    refs = set(circuit_refs(netlist))
    notes = []
    dropped = sorted(k for k in settings.tolerances if k not in KINDS and k not in refs)
    tol = {k: v for k, v in settings.tolerances.items() if k not in dropped}
    if dropped:
        notes.append(f"per-part tolerance{'s' if len(dropped) > 1 else ''} of {', '.join(dropped)} not used: this circuit has no such part")
    gbw_tol = settings.gbw_tol
    if gbw_tol > 0 and opamp.ideal:
        gbw_tol = 0.0
        notes.append("GBW spread not used: the op-amp is ideal (give its GBW to vary it)")
    return replace(settings, tolerances=tol, gbw_tol=gbw_tol), tuple(notes)
