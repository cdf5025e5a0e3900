"""What a circuit module declares: its parts, its netlist builder and its textbook formulas."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Mapping

from bandsmith.common.errors import InputError
from bandsmith.common.limits import PART_RANGES, check_part_value
from bandsmith.solver.netlist import Netlist

__all__ = ["Component", "IdealFormulas", "Topology"]


@dataclass(frozen=True, slots=True)
class Component:
    """One part of a circuit: reference, kind (``R``, ``L``, ``C``), role, and whether it is required.

    Optional parts (an inductor's series resistance) default to ``default`` and may be zero.
    """

    ref: str
    kind: str
    role: str
    required: bool = True
    default: float = 0.0

    def to_json(self) -> dict:
        return {"ref": self.ref, "kind": self.kind, "role": self.role, "required": self.required}


@dataclass(frozen=True, slots=True)
class IdealFormulas:
    """Textbook values for an ideal op-amp: f0 (Hz), Q and the signed centre gain (V/V)."""

    f0_hz: float
    q: float
    gain: float


@dataclass(frozen=True, slots=True)
class Topology:
    """A band-pass circuit known to Bandsmith.

    Parameters
    ----------
    id : str
        Command-line id (``rlc-tank``, ``mfb``, ``sallen-key``).
    title : str
        A readable name.
    inverting : bool
        True when the centre gain is negative.
    components : tuple of Component
        The parts, in display order.
    example : mapping
        A working set of part values (SI units).
    build : callable
        ``values -> Netlist`` for a complete, validated set of part values.
    formulas : callable
        ``values -> IdealFormulas``, the textbook figures (a cross-check, never the measurement).
    synthesize : callable, optional
        ``(target, fixed, *, series) -> dict`` of exact part values meeting a target, ``series``
        the standard series the parts will be chosen from (see ``bandsmith.design.designer``).
    order : int
        Position in listings.
    notes : str
        Design notes shown beside the circuit.
    procedure : str, optional
        The name of a design procedure several circuits share: their ``synthesize`` gives the
        same exact values and notes for the same target, pins and series (only its messages name
        the circuit), so a design of several circuits for one target runs it once.
    """

    id: str
    title: str
    inverting: bool
    components: tuple[Component, ...]
    example: Mapping[str, float]
    build: Callable[[Mapping[str, float]], Netlist]
    formulas: Callable[[Mapping[str, float]], IdealFormulas]
    synthesize: Callable | None = None
    order: int = 100
    notes: str = ""
    procedure: str | None = None
    refs: tuple[str, ...] = field(init=False)
    part_kinds: tuple[tuple[str, str, bool], ...] = field(init=False, repr=False)
    _by_ref: Mapping[str, Component] = field(init=False, repr=False, compare=False)
    _accepts: tuple = field(init=False, repr=False, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "refs", tuple(c.ref for c in self.components))
        # (ref, kind, required) of every part in order: plain strings, a cheap key for caches
        object.__setattr__(self, "part_kinds", tuple((c.ref, c.kind, c.required) for c in self.components))
        object.__setattr__(self, "_by_ref", {c.ref: c for c in self.components})
        # per part, what values_from accepts at once: (component, ref, required, default, the
        # kind's value range of bandsmith.common.limits.PART_RANGES)
        object.__setattr__(self, "_accepts", tuple((c, c.ref, c.required, float(c.default), *PART_RANGES[c.kind]) for c in self.components))

    def component(self, ref: str) -> Component:
        c = self._by_ref.get(ref)
        if c is None:
            raise InputError(ref, f"{self.id} has no part {ref}; its parts are {', '.join(self.refs)}")
        return c

    def values_from(self, given: Mapping[str, float]) -> dict[str, float]:
        """Validate a set of part values (SI floats) and fill optional parts with their defaults.

        Raises
        ------
        InputError
            For an unknown part, a missing required part, a non-finite value, a required part at
            zero or below, or an optional part below zero.
        """
        if not self._by_ref.keys() >= given.keys():
            for ref in given:
                self.component(ref)  # raises for a part the circuit does not have
        out = {}
        for c, ref, required, default, lo, hi in self._accepts:
            if ref not in given:
                if required:
                    raise InputError(ref, f"missing; {self.id} needs {', '.join(x.ref for x in self.components if x.required)}")
                out[ref] = default
                continue
            v = float(given[ref])
            # within the kind's range (0 < lo, so finite and above zero), or an optional part at
            # zero: accepted at once; anything else is refused by _refuse with its reason
            if not (lo <= v <= hi or (v == 0.0 and not required)):
                _refuse(c, v)
            out[ref] = v
        return out

    def netlist(self, given: Mapping[str, float]) -> Netlist:
        """The netlist for a set of part values (validated first)."""
        return self.build(self.values_from(given))

    def to_json(self) -> dict:
        return {
            "id": self.id,
            "title": self.title,
            "inverting": self.inverting,
            "components": [c.to_json() for c in self.components],
            "example": {k: float(v) for k, v in self.example.items()},
        }


def _refuse(c: Component, v: float) -> None:
    """Raise the InputError that :meth:`Topology.values_from` gives for value ``v`` of part ``c``
    (one outside what that part accepts)."""
    if not math.isfinite(v):
        raise InputError(c.ref, f"{v!r} is not a finite number")
    if c.required and v <= 0:
        raise InputError(c.ref, f"must be greater than zero, got {v:g}")
    if not c.required and v < 0:
        raise InputError(c.ref, f"must be zero or more, got {v:g}")
    check_part_value(c.ref, c.kind, v)  # what is left is above zero and outside the kind's range: raises
