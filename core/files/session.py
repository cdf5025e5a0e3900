"""Session files: the whole design (target, candidates, op-amp, tolerances, notes) as one JSON file.

A session file is one JSON object (UTF-8, keys sorted, indented by two spaces, a final newline)::

    {"format": "bandsmith-session", "version": 1,
     "target": {"f0_hz": 2400.0, "q": 8.0, "gain": 4.0, "vin_v": 0.5, "series": "E24"},
     "opamp": {"gbw_hz": 1000000.0, "a0": 100000.0},
     "tolerances": {"f0": 0.01, "q": 0.05, "gain_db": 0.5},
     "rload_ohm": null,
     "candidates": [{"id": "mfb", "topology": "mfb", "values": {"R1": 3300.0, ...},
                     "enabled": true, "pinned": false, "snap": "E24", "fixed": ["C1"], "notes": ""}],
     "notes": "free text"}

Any other top-level key belongs to a later feature (``"spread"``, ``"noise"``, ``"chains"``, ...):
it is kept verbatim in :attr:`Session.extras` and written back unchanged.

Reading never writes. A file that cannot be used raises :class:`SessionError` (an
:class:`~bandsmith.common.errors.InputError` on the field ``session``) whose :attr:`~SessionError.kind` says
why: ``missing``, ``unreadable``, ``damaged``, ``truncated``, ``not-a-session``, ``newer-version``,
``wrong-type`` or ``impossible-value``. Saving is atomic: a temporary file in the same folder is
written, flushed and fsynced, then renamed over the target with :func:`os.replace`, so an interrupted
save leaves the old file as it was. :func:`dumps_session` is canonical, so save → load → save gives
the same bytes.

Older versions are upgraded on load by the functions in ``_UPGRADES`` (version ``n`` → ``n + 1``);
version 1 is the first.
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Callable, Mapping

from bandsmith.analysis.analyzer import DEFAULT_A0, Tolerances
from bandsmith.design.candidate import Conditions
from bandsmith.circuits import get_topology
from bandsmith.common.atomic import read_utf8, write_bytes_atomic
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import SERIES_NAMES
from bandsmith.common.limits import A0_RANGE, FREQ_RANGE_HZ, TARGET_RANGES, VIN_RANGE_V, check_id, check_part_value, check_range, one_line

__all__ = [
    "FORMAT",
    "VERSION",
    "SERIES_CHOICES",
    "SessionError",
    "Target",
    "OpAmpSpec",
    "CandidateEntry",
    "Session",
    "session_to_json",
    "session_from_json",
    "dumps_session",
    "loads_session",
    "load_session",
    "save_session",
    "recovery_path",
]

FORMAT = "bandsmith-session"
VERSION = 1
SERIES_CHOICES = SERIES_NAMES + ("exact",)
_KNOWN_KEYS = frozenset({"format", "version", "target", "opamp", "tolerances", "rload_ohm", "candidates", "notes"})

# Upgrades of older files: version n -> a function taking the version-n object, returning version n+1.
_UPGRADES: dict[int, Callable[[dict], dict]] = {}


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


def _surrogate_at(obj: Any, where: str) -> str | None:
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
            if isinstance(k, str) and _surrogate_at(k, sub) is not None:
                return sub
            found = _surrogate_at(v, sub)
            if found is not None:
                return found
    elif isinstance(obj, (list, tuple)):
        for i, v in enumerate(obj):
            found = _surrogate_at(v, f"{where}[{i}]")
            if found is not None:
                return found
    return None


def _check_text(name: str, v: Any) -> None:
    if not isinstance(v, str):
        raise InputError(name, f"must be text, got {type(v).__name__}")
    if _surrogate_at(v, name) is not None:
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

    def __post_init__(self):
        cands = tuple(self.candidates)
        ids = [c.id for c in cands]
        dup = sorted({i for i in ids if ids.count(i) > 1})
        if dup:
            raise InputError("id", f"candidate ids must be unique; {', '.join(dup)} appears more than once")
        object.__setattr__(self, "candidates", cands)
        _check_text("notes", self.notes)
        _finite_positive("rload", self.rload_ohm, optional=True)
        if self.rload_ohm is not None:
            check_part_value("rload", "R", float(self.rload_ohm))
        if self.rload_ohm is not None:
            object.__setattr__(self, "rload_ohm", float(self.rload_ohm))
        clash = sorted(set(self.extras) & _KNOWN_KEYS)
        if clash:
            raise InputError("extras", f"{', '.join(clash)} is a section of the session itself, not an extra")
        object.__setattr__(self, "extras", dict(self.extras))

    def conditions_for(self, entry: CandidateEntry | str) -> Conditions:
        """The analysis conditions of a candidate (the session's op-amp, drive, load, tolerances)."""
        if isinstance(entry, str):
            entry = self.candidate(entry)
        return Conditions(
            gbw_hz=self.opamp.gbw_hz,
            a0=self.opamp.a0,
            vin_v=self.target.vin_v,
            rload_ohm=self.rload_ohm,
            tolerances=self.tolerances,
        )

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


# --------------------------------------------------------------------------- writing


def _entry_json(c: CandidateEntry) -> dict:
    return {
        "id": c.id,
        "topology": c.topology_id,
        "values": {k: float(v) for k, v in c.values.items()},
        "enabled": c.enabled,
        "pinned": c.pinned,
        "snap": c.snap,
        "fixed": list(c.fixed),
        "notes": c.notes,
    }


def session_to_json(s: Session) -> dict:
    """The session as a JSON-ready dict (the format the module docstring describes)."""
    out = dict(s.extras)
    out.update(
        {
            "format": FORMAT,
            "version": VERSION,
            "target": {
                "f0_hz": s.target.f0_hz,
                "q": s.target.q,
                "gain": s.target.gain,
                "vin_v": s.target.vin_v,
                "series": s.target.series,
            },
            "opamp": {"gbw_hz": s.opamp.gbw_hz, "a0": s.opamp.a0},
            "tolerances": {"f0": float(s.tolerances.f0), "q": float(s.tolerances.q), "gain_db": float(s.tolerances.gain_db)},
            "rload_ohm": s.rload_ohm,
            "candidates": [_entry_json(c) for c in s.candidates],
            "notes": s.notes,
        }
    )
    return out


def dumps_session(s: Session) -> str:
    """Canonical text of a session: sorted keys, indent 2, UTF-8 characters kept, final newline."""
    obj = session_to_json(s)
    try:
        text = json.dumps(obj, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False)
    except (TypeError, ValueError) as exc:
        raise InputError("extras", f"a section cannot be written as JSON ({exc})") from None
    where = _surrogate_at(obj, "")
    if where is not None:
        raise SessionError("write-failed", f"{one_line(where, 80)} holds a lone surrogate character (such as \\ud800), which no UTF-8 file can store; remove it (nothing was written)")
    return text + "\n"


def recovery_path(path: str | os.PathLike) -> Path:
    """Where the window keeps the recovery copy of ``path`` while it has unsaved changes."""
    p = Path(path)
    return p.with_name(p.name + ".recovery")


def save_session(s: Session, path: str | os.PathLike) -> None:
    """Write a session atomically: a temporary file in the same folder, flush, fsync, rename.

    If anything fails before the rename, the old file (if any) is left as it was and the temporary
    file is removed. A failure to write is a :class:`SessionError` of kind ``write-failed``.
    """
    target = Path(path)
    try:
        write_bytes_atomic(target, dumps_session(s))
    except OSError as exc:
        raise SessionError("write-failed", f"cannot write {target}: {exc.strerror or exc}; the old file is unchanged") from None


# --------------------------------------------------------------------------- reading


_TYPE_NAMES = {dict: "an object", list: "a list", str: "text", bool: "true/false", int: "a number", float: "a number", type(None): "null"}


def _kind_of(v: Any) -> str:
    return _TYPE_NAMES.get(type(v), type(v).__name__)


class _Reader:
    """Typed access to a parsed session object, with messages naming the source and the key path."""

    def __init__(self, source: str):
        self.source = source

    def fail(self, kind: str, what: str) -> SessionError:
        return SessionError(kind, f"{self.source} {what}")

    def wrong(self, where: str, expected: str, v: Any) -> SessionError:
        return self.fail("wrong-type", f"has a value of the wrong type: {where} should be {expected}, got {_kind_of(v)}")

    def impossible(self, where: str, reason: str) -> SessionError:
        return self.fail("impossible-value", f"has an impossible value: {where} {reason}")

    def obj(self, parent: dict, key: str, where: str, *, optional: bool = False) -> dict:
        if key not in parent:
            if optional:
                return {}
            raise self.fail("wrong-type", f"lacks a required entry: {where}")
        v = parent[key]
        if not isinstance(v, dict):
            raise self.wrong(where, "an object", v)
        return v

    def number(self, parent: dict, key: str, where: str, *, default: Any = ..., nullable: bool = False) -> float | None:
        if key not in parent:
            if default is ...:
                raise self.fail("wrong-type", f"lacks a required entry: {where}")
            return default
        v = parent[key]
        if v is None and nullable:
            return None
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise self.wrong(where, "a number" + (" or null" if nullable else ""), v)
        v = float(v)
        if not math.isfinite(v):
            raise self.impossible(where, f"must be a finite number, got {v!r}")
        return v

    def positive(self, parent: dict, key: str, where: str, **kw) -> float | None:
        v = self.number(parent, key, where, **kw)
        if v is not None and v <= 0:
            raise self.impossible(where, f"must be above zero, got {v:g}")
        return v

    def text(self, parent: dict, key: str, where: str, *, default: Any = ..., nullable: bool = False) -> str | None:
        if key not in parent:
            if default is ...:
                raise self.fail("wrong-type", f"lacks a required entry: {where}")
            return default
        v = parent[key]
        if v is None and nullable:
            return None
        if not isinstance(v, str):
            raise self.wrong(where, "text" + (" or null" if nullable else ""), v)
        return v

    def flag(self, parent: dict, key: str, where: str, default: bool) -> bool:
        v = parent.get(key, default)
        if not isinstance(v, bool):
            raise self.wrong(where, "true or false", v)
        return v


def _read_candidate(r: _Reader, c: Any, i: int) -> CandidateEntry:
    w = f"candidates[{i}]"
    if not isinstance(c, dict):
        raise r.wrong(w, "an object", c)
    topo_id = r.text(c, "topology", f"{w}.topology")
    cid = r.text(c, "id", f"{w}.id", default=topo_id)
    values_obj = r.obj(c, "values", f"{w}.values")
    values = {}
    for ref, v in values_obj.items():
        values[ref] = r.number(values_obj, ref, f"{w}.values.{ref}")
    fixed = c.get("fixed", [])
    if not isinstance(fixed, list) or not all(isinstance(x, str) for x in fixed):
        raise r.wrong(f"{w}.fixed", "a list of part names", fixed)
    snap = r.text(c, "snap", f"{w}.snap", default=None, nullable=True)
    try:
        return CandidateEntry(
            id=cid,
            topology_id=topo_id,
            values=values,
            enabled=r.flag(c, "enabled", f"{w}.enabled", True),
            pinned=r.flag(c, "pinned", f"{w}.pinned", False),
            snap=snap,
            fixed=tuple(fixed),
            notes=r.text(c, "notes", f"{w}.notes", default=""),
        )
    except SessionError:
        raise
    except InputError as exc:
        where = f"{w}.values.{exc.field}" if exc.field in values or exc.field in _refs(topo_id) else f"{w}.{exc.field}"
        raise r.impossible(where, exc.reason) from None


def _refs(topology_id: str) -> tuple[str, ...]:
    try:
        return get_topology(topology_id).refs
    except InputError:
        return ()


def _upgrade(r: _Reader, obj: dict, version: int) -> dict:
    while version < VERSION:
        step = _UPGRADES.get(version)
        if step is None:
            raise r.impossible("version", f"{version} is not a session version this program knows (1 to {VERSION})")
        obj = step(dict(obj))
        version += 1
        obj["version"] = version
    return obj


def session_from_json(obj: Any, *, source: str = "the session") -> Session:
    """Read a parsed session object (validating it; older versions are upgraded).

    Raises
    ------
    SessionError
        Naming what is wrong: not a session, a newer version, a wrong type or an impossible value.
    """
    r = _Reader(source)
    if not isinstance(obj, dict):
        raise r.fail("not-a-session", f"is not a Bandsmith session: its top level is {_kind_of(obj)}, not an object")
    fmt = obj.get("format")
    if fmt != FORMAT:
        found = "it has no format name" if fmt is None else f"its format is {fmt!r}"
        raise r.fail("not-a-session", f'is not a Bandsmith session: {found}, not "{FORMAT}"')
    version = obj.get("version")
    if isinstance(version, bool) or not isinstance(version, int):
        if isinstance(version, float) and version.is_integer():
            version = int(version)
        else:
            raise r.wrong("version", "a whole number", version)
    if version > VERSION:
        raise r.fail("newer-version", f"was written by a newer Bandsmith (session version {version}; this one reads up to {VERSION}); open it with a newer version")
    if version < VERSION:
        obj = _upgrade(r, obj, version)

    t = r.obj(obj, "target", "target")
    o = r.obj(obj, "opamp", "opamp", optional=True)
    tol = r.obj(obj, "tolerances", "tolerances", optional=True)
    cands = obj.get("candidates", [])
    if not isinstance(cands, list):
        raise r.wrong("candidates", "a list", cands)
    try:
        target = Target(
            f0_hz=r.positive(t, "f0_hz", "target.f0_hz"),
            q=r.positive(t, "q", "target.q"),
            gain=r.positive(t, "gain", "target.gain"),
            vin_v=r.positive(t, "vin_v", "target.vin_v", default=1.0),
            series=r.text(t, "series", "target.series", default="E24"),
        )
    except SessionError:
        raise
    except InputError as exc:
        raise r.impossible(f"target.{exc.field}", exc.reason) from None
    try:
        opamp = OpAmpSpec(
            gbw_hz=r.positive(o, "gbw_hz", "opamp.gbw_hz", default=None, nullable=True),
            a0=r.positive(o, "a0", "opamp.a0", default=DEFAULT_A0),
        )
    except SessionError:
        raise
    except InputError as exc:
        raise r.impossible({"gbw": "opamp.gbw_hz"}.get(exc.field, f"opamp.{exc.field}"), exc.reason) from None
    tolerances = Tolerances(
        f0=r.positive(tol, "f0", "tolerances.f0", default=Tolerances().f0),
        q=r.positive(tol, "q", "tolerances.q", default=Tolerances().q),
        gain_db=r.positive(tol, "gain_db", "tolerances.gain_db", default=Tolerances().gain_db),
    )
    entries = tuple(_read_candidate(r, c, i) for i, c in enumerate(cands))
    rload = r.positive(obj, "rload_ohm", "rload_ohm", default=None, nullable=True)
    notes = r.text(obj, "notes", "notes", default="")
    extras = {k: v for k, v in obj.items() if k not in _KNOWN_KEYS}
    chains = extras.get("chains")
    if isinstance(chains, list):  # chain ids reach netlists too: checked here, the rest where chains are read
        for i, ch in enumerate(chains):
            if isinstance(ch, dict) and "id" in ch:
                try:
                    check_id("id", ch["id"], "a chain id")
                except InputError as exc:
                    raise r.impossible(f"chains[{i}].id", exc.reason) from None
    try:
        return Session(target=target, candidates=entries, opamp=opamp, tolerances=tolerances, rload_ohm=rload, notes=notes, extras=extras)
    except InputError as exc:
        raise r.impossible("candidates" if exc.field == "id" else exc.field, exc.reason) from None


def _ends_early(text: str) -> bool:
    """Whether the text stops inside a string or with brackets still open (a cut-off file)."""
    depth = 0
    in_string = escaped = False
    for ch in text:
        if in_string:
            if escaped:
                escaped = False
            elif ch == "\\":
                escaped = True
            elif ch == '"':
                in_string = False
        elif ch == '"':
            in_string = True
        elif ch in "{[":
            depth += 1
        elif ch in "}]":
            depth -= 1
            if depth < 0:
                return False
    return in_string or depth > 0


def _reject_constant(name: str):
    raise ValueError(f"{name} is not a JSON number")


def loads_session(text: str, *, source: str = "the session") -> Session:
    """Read a session from its text. Raises :class:`SessionError` (damaged, truncated, ...)."""
    r = _Reader(source)
    if not text.strip():
        raise r.fail("truncated", "is empty (truncated?); nothing was read")
    try:
        obj = json.loads(text, parse_constant=_reject_constant)
    except json.JSONDecodeError as exc:
        if exc.pos >= len(text.rstrip()) or _ends_early(text):
            raise r.fail("truncated", "is truncated: it ends before its JSON is complete; it may be an interrupted copy") from None
        raise r.fail("damaged", f"is damaged: not valid JSON at line {exc.lineno}, column {exc.colno} ({exc.msg})") from None
    except ValueError as exc:
        raise r.fail("damaged", f"is damaged: {exc}") from None
    except RecursionError:
        raise r.fail("damaged", "is damaged: nested too deeply to read") from None
    try:
        where = _surrogate_at(obj, "")
    except RecursionError:
        raise r.fail("damaged", "is damaged: nested too deeply to read") from None
    if where is not None:
        raise r.fail("damaged", f"is damaged: {one_line(where, 80)} holds a lone surrogate (a \\ud800-style escape that is no character), which cannot be saved again")
    return session_from_json(obj, source=source)


def load_session(path: str | os.PathLike) -> Session:
    """Open a session file. It is only read, never written.

    Raises
    ------
    SessionError
        A missing, unreadable, damaged, truncated, newer-version, wrong-typed or impossible file,
        with a message that says which.
    """
    p = Path(path)
    text = read_utf8(p, what="session file", error=SessionError)
    return loads_session(text, source=str(p))
