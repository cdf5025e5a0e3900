"""Reading a session file: checks every field, names what is wrong, upgrades older versions (:mod:`bandsmith.files.session` describes the file)."""

from __future__ import annotations

import json
import math
import os
from pathlib import Path
from typing import Any, Callable

from bandsmith.analysis.analyzer import DEFAULT_A0, Tolerances
from bandsmith.circuits import get_topology
from bandsmith.common.atomic import read_utf8
from bandsmith.common.errors import InputError
from bandsmith.common.limits import check_id, one_line
from bandsmith.files.session_model import FORMAT, KNOWN_KEYS, VERSION, CandidateEntry, OpAmpSpec, Session, SessionError, Target, surrogate_at

__all__ = ["session_from_json", "loads_session", "load_session"]


# Upgrades of older files: version n -> a function taking the version-n object, returning version n+1.
_UPGRADES: dict[int, Callable[[dict], dict]] = {}


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

    def _entry(self, parent: dict, key: str, where: str, default: Any, nullable: bool) -> tuple[bool, Any]:
        """``(True, value)`` when the entry is settled without a type check (missing with a
        default, or null where null is allowed); ``(False, raw value)`` otherwise."""
        if key not in parent:
            if default is ...:
                raise self.fail("wrong-type", f"lacks a required entry: {where}")
            return True, default
        v = parent[key]
        if v is None and nullable:
            return True, None
        return False, v

    def number(self, parent: dict, key: str, where: str, *, default: Any = ..., nullable: bool = False) -> float | None:
        settled, v = self._entry(parent, key, where, default, nullable)
        if settled:
            return v
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
        settled, v = self._entry(parent, key, where, default, nullable)
        if settled:
            return v
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
    rsource = r.positive(obj, "rsource_ohm", "rsource_ohm", default=None, nullable=True)
    notes = r.text(obj, "notes", "notes", default="")
    extras = {k: v for k, v in obj.items() if k not in KNOWN_KEYS}
    chains = extras.get("chains")
    if isinstance(chains, list):  # chain ids reach netlists too: checked here, the rest where chains are read
        for i, ch in enumerate(chains):
            if isinstance(ch, dict) and "id" in ch:
                try:
                    check_id("id", ch["id"], "a chain id")
                except InputError as exc:
                    raise r.impossible(f"chains[{i}].id", exc.reason) from None
    try:
        return Session(target=target, candidates=entries, opamp=opamp, tolerances=tolerances, rload_ohm=rload, notes=notes, extras=extras, rsource_ohm=rsource)
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
        where = surrogate_at(obj, "")
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
