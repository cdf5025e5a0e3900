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
import os
from pathlib import Path

from bandsmith.common.atomic import write_bytes_atomic
from bandsmith.common.errors import InputError
from bandsmith.common.limits import one_line
# What a session holds is in session_model, reading it in session_read; both are re-exported here.
from bandsmith.files.session_model import FORMAT, SERIES_CHOICES, VERSION, CandidateEntry, OpAmpSpec, Session, SessionError, Target, surrogate_at
from bandsmith.files.session_read import load_session, loads_session, session_from_json

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
    if s.rsource_ohm is not None:  # written only when given: files without a source stay as they were
        out["rsource_ohm"] = s.rsource_ohm
    return out


def dumps_session(s: Session) -> str:
    """Canonical text of a session: sorted keys, indent 2, UTF-8 characters kept, final newline."""
    obj = session_to_json(s)
    try:
        text = json.dumps(obj, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False)
    except (TypeError, ValueError) as exc:
        raise InputError("extras", f"a section cannot be written as JSON ({exc})") from None
    where = surrogate_at(obj, "")
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


