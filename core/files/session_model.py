"""What a session holds: the target, the op-amp, the candidates and the session itself (:mod:`bandsmith.files.session` describes the file)."""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass, field, replace
from typing import Any, Mapping

from bandsmith.analysis.analyzer import DEFAULT_A0, Tolerances
from bandsmith.design.candidate import Conditions
from bandsmith.circuits import get_topology
from bandsmith.circuits.synthesis import Spec
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import SERIES_NAMES
from bandsmith.common.limits import (
    A0_RANGE, FREQ_RANGE_HZ, MAX_CANDIDATES, TARGET_RANGES, VIN_RANGE_V, check_id, check_part_value, check_range,
)

__all__ = ["FORMAT", "VERSION", "SERIES_CHOICES", "KNOWN_KEYS", "SessionError", "surrogate_at", "Target", "OpAmpSpec", "CandidateEntry", "Session"]


FORMAT = "bandsmith-session"


VERSION = 1


SERIES_CHOICES = SERIES_NAMES + ("exact",)


KNOWN_KEYS = frozenset({"format", "version", "target", "opamp", "tolerances", "rload_ohm", "rsource_ohm", "candidates", "notes"})


class SessionError(InputError):
    """A session file or object that cannot be used.

    Attributes
    ----------
    kind : str
        ``missing``, ``unreadable``, ``damaged``, ``truncated``, ``not-a-session``,
        ``newer-version``, ``wrong-type``, ``impossible-value`` or ``write-failed``.
    """

    def __init__(self, kind: str, reason: str):
        super().__init__("session", reason)
        self.kind = kind


def surrogate_at(obj: Any, where: str) -> str | None:
    """The key path of the first text (key or value) inside ``obj`` that holds a lone surrogate
    (``\\ud800``: legal in JSON's ``\\u`` escapes and in Python text, but not UTF-8), else None."""
    if isinstance(obj, str):
        try:
            obj.encode("utf-8")
        except UnicodeEncodeError:
            return where
        return None
    if isinstance(obj, dict):
        for k, v in obj.items():
            sub = f"{where}.{k}" if where else str(k)
            if isinstance(k, str) and surrogate_at(k, sub) is not None:
                return sub
            found = surrogate_at(v, sub)
            if found is not None:
                return found
    elif isinstance(obj, (list, tuple)):
        for i, v in enumerate(obj):
            found = surrogate_at(v, f"{where}[{i}]")
            if found is not None:
                return found
    return None


def _check_text(name: str, v: Any) -> None:
    if not isinstance(v, str):
        raise InputError(name, f"must be text, got {type(v).__name__}")
    if surrogate_at(v, name) is not None:
        raise InputError(name, "holds a lone surrogate character (such as \\ud800), which no UTF-8 file can store; remove it")


def _finite_positive(name: str, v: float | None, *, optional: bool = False) -> None:
    if v is None and optional:
        return
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v <= 0:
        raise InputError(name, f"must be a finite number above zero, got {v!r}")


@dataclass(frozen=True, slots=True)
class Target:
    """What the design aims at.

    Parameters
    ----------
    f0_hz : float
        Centre frequency (Hz).
    q : float
        Quality factor f0 / bandwidth.
    gain : float
        Magnitude of the centre gain (V/V); its sign follows the circuit.
    vin_v : float
        Peak input amplitude (V).
    series : str
        Standard series parts are chosen from (``E6`` ... ``E192``), or ``exact``.
    """

    f0_hz: float
    q: float
    gain: float
    vin_v: float = 1.0
    series: str = "E24"

    def __post_init__(self):
        _finite_positive("f0", self.f0_hz)
        _finite_positive("q", self.q)
        _finite_positive("gain", self.gain)
        _finite_positive("vin", self.vin_v)
        for name, value in (("f0", self.f0_hz), ("q", self.q), ("gain", self.gain)):
            check_range(name, float(value), *TARGET_RANGES[name], "Hz" if name == "f0" else "")
        check_range("vin", float(self.vin_v), *VIN_RANGE_V, "V")
        if self.series not in SERIES_CHOICES:
            raise InputError("series", f"{self.series!r} is not a series; choose one of {', '.join(SERIES_CHOICES)}")
        for name in ("f0_hz", "q", "gain", "vin_v"):
            object.__setattr__(self, name, float(getattr(self, name)))

    @property
    def spec(self) -> Spec:
        """The design target (f0, Q, centre gain) the core's design and error functions take."""
        return Spec(f0_hz=self.f0_hz, q=self.q, gain=self.gain)


@dataclass(frozen=True, slots=True)
class OpAmpSpec:
    """The op-amp the candidates are analysed with: GBW (Hz, None = ideal) and open-loop gain A0."""

    gbw_hz: float | None = None
    a0: float = DEFAULT_A0

    def __post_init__(self):
        _finite_positive("gbw", self.gbw_hz, optional=True)
        _finite_positive("a0", self.a0)
        if self.gbw_hz is not None:
            check_range("gbw", float(self.gbw_hz), *FREQ_RANGE_HZ, "Hz")
        check_range("a0", float(self.a0), *A0_RANGE)
        if self.gbw_hz is not None:
            object.__setattr__(self, "gbw_hz", float(self.gbw_hz))
        object.__setattr__(self, "a0", float(self.a0))


@dataclass(frozen=True, slots=True)
class CandidateEntry:
    """One candidate of a session: a circuit with its part values and its switches.

    Parameters
    ----------
    id : str
        Unique within the session (the topology id, then ``-2``, ``-3``, ...); 1 to 64 letters,
        digits, ``.``, ``_`` or ``-``, starting with a letter or digit
        (:data:`bandsmith.common.limits.ID_PATTERN`), so it is safe in a netlist, a CSV or a report.
    topology_id : str
        Circuit id (see :func:`bandsmith.circuits.topology_ids`).
    values : mapping
        Part values in SI units; validated, optional parts filled with their defaults.
    enabled : bool
        False switches the candidate off (kept, not plotted).
    pinned : bool
        True keeps it from being replaced by a new design.
    snap : str or None
        Series its parts are snapped to, or None for exact values.
    fixed : tuple of str
        Parts the user pinned; a redesign keeps them.
    notes : str
        Free text.
    """

    id: str
    topology_id: str
    values: Mapping[str, float]
    enabled: bool = True
    pinned: bool = False
    snap: str | None = None
    fixed: tuple[str, ...] = ()
    notes: str = ""

    def __post_init__(self):
        check_id("id", self.id, "a candidate id")
        _check_text("notes", self.notes)
        topo = get_topology(self.topology_id)
        object.__setattr__(self, "values", topo.values_from(dict(self.values)))
        if self.snap is not None and self.snap not in SERIES_NAMES:
            raise InputError("snap", f"{self.snap!r} is not a series; choose one of {', '.join(SERIES_NAMES)} or none")
        fixed = tuple(self.fixed)
        for ref in fixed:
            if ref not in topo.refs:
                raise InputError("fixed", f"{self.topology_id} has no part {ref}; its parts are {', '.join(topo.refs)}")
        if len(set(fixed)) != len(fixed):
            raise InputError("fixed", "a part is listed twice")
        object.__setattr__(self, "fixed", fixed)
        object.__setattr__(self, "enabled", bool(self.enabled))
        object.__setattr__(self, "pinned", bool(self.pinned))


@dataclass(frozen=True, slots=True)
class Session:
    """A whole design: the target, every candidate, the op-amp, tolerances, a load and notes.

    ``extras`` holds top-level sections of later features, kept verbatim on a round trip.
    """

    target: Target
    candidates: tuple[CandidateEntry, ...]
    opamp: OpAmpSpec = field(default_factory=OpAmpSpec)
    tolerances: Tolerances = field(default_factory=Tolerances)
    rload_ohm: float | None = None
    notes: str = ""
    extras: Mapping[str, Any] = field(default_factory=dict)
    rsource_ohm: float | None = None

    def __post_init__(self):
        cands = tuple(self.candidates)
        if len(cands) > MAX_CANDIDATES:
            raise InputError("candidates", f"a session holds at most {MAX_CANDIDATES} candidates, got {len(cands)}")
        dup = sorted(i for i, n in Counter(c.id for c in cands).items() if n > 1)
        if dup:
            raise InputError("id", f"candidate ids must be unique; {', '.join(dup)} appears more than once")
        object.__setattr__(self, "candidates", cands)
        _check_text("notes", self.notes)
        _finite_positive("rload", self.rload_ohm, optional=True)
        if self.rload_ohm is not None:
            check_part_value("rload", "R", float(self.rload_ohm))
        if self.rload_ohm is not None:
            object.__setattr__(self, "rload_ohm", float(self.rload_ohm))
        _finite_positive("rsource", self.rsource_ohm, optional=True)
        if self.rsource_ohm is not None:
            check_part_value("rsource", "R", float(self.rsource_ohm))
            object.__setattr__(self, "rsource_ohm", float(self.rsource_ohm))
        clash = sorted(set(self.extras) & KNOWN_KEYS)
        if clash:
            raise InputError("extras", f"{', '.join(clash)} is a section of the session itself, not an extra")
        object.__setattr__(self, "extras", dict(self.extras))

    @property
    def conditions(self) -> Conditions:
        """The analysis conditions the session sets: its op-amp, drive, load, tolerances and source."""
        return Conditions(
            gbw_hz=self.opamp.gbw_hz,
            a0=self.opamp.a0,
            vin_v=self.target.vin_v,
            rload_ohm=self.rload_ohm,
            tolerances=self.tolerances,
            rsource_ohm=self.rsource_ohm,
        )

    def conditions_for(self, entry: CandidateEntry | str) -> Conditions:
        """The analysis conditions of a candidate (:attr:`conditions`; every candidate has the
        session's); an InputError when there is no such candidate."""
        if isinstance(entry, str):
            self.candidate(entry)
        return self.conditions

    def candidate(self, id: str) -> CandidateEntry:
        """The candidate with this id; an InputError naming the ids otherwise."""
        for c in self.candidates:
            if c.id == id:
                return c
        known = ", ".join(c.id for c in self.candidates) or "none"
        raise InputError("candidate", f"no candidate {id!r} in this session; its candidates are {known}")

    def new_candidate_id(self, topology_id: str) -> str:
        """A free id for a new candidate of this circuit: ``mfb``, then ``mfb-2``, ``mfb-3``, ..."""
        taken = {c.id for c in self.candidates}
        if topology_id not in taken:
            return topology_id
        n = 2
        while f"{topology_id}-{n}" in taken:
            n += 1
        return f"{topology_id}-{n}"

    def with_candidate(self, entry: CandidateEntry) -> "Session":
        """A copy with ``entry`` replacing the candidate of the same id, or appended when new."""
        cands = list(self.candidates)
        for i, c in enumerate(cands):
            if c.id == entry.id:
                cands[i] = entry
                break
        else:
            cands.append(entry)
        return replace(self, candidates=tuple(cands))

    def without_candidate(self, id: str) -> "Session":
        """A copy without the candidate ``id`` (which must exist)."""
        self.candidate(id)
        return replace(self, candidates=tuple(c for c in self.candidates if c.id != id))
