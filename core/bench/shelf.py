"""The op-amp shelf: the handful of op-amp models an engineer keeps, and the shipped archetypes.

A shelf file is one JSON object (UTF-8, keys sorted, indented by two spaces, a final newline)::

    {"format": "bandsmith-shelf", "version": 1,
     "amps": [{"name": "generic 1 MHz bipolar", "gbw_hz": 1000000.0, "a0": 200000.0,
               "f_p2_hz": null, "slew_v_per_us": 0.5, "en_nv_rthz": 20.0, "in_pa_rthz": 0.5,
               "iout_max_ma": 20.0, "supply_min_v": 10.0, "supply_max_v": 36.0,
               "swing_neg_v": 1.5, "swing_pos_v": 1.5, "cm_neg_v": 1.5, "cm_pos_v": 1.5,
               "notes": ""}, ...]}

Every model is an :class:`OpAmp`. Reading never writes: a file that cannot be used raises
:class:`ShelfError` (an :class:`~bandsmith.common.errors.InputError` on the field ``shelf``) and is left as it
is; :func:`open_shelf` turns that into the archetypes plus a warning, so a program always starts
with a usable shelf. Saving is atomic (temporary file in the same folder, flush, fsync,
:func:`os.replace`).

The archetypes (:data:`ARCHETYPES`) are named by what they are, never by a brand or a part number;
their figures are typical of their class (from memory, no source): a design aid to start from,
to be replaced by the datasheet figures of the parts actually stocked.
"""

from __future__ import annotations

import json
import math
import numbers
import os
from dataclasses import dataclass, fields
from pathlib import Path
from typing import Iterable, Sequence

from bandsmith.common.atomic import read_utf8, write_bytes_atomic
from bandsmith.common.errors import InputError
from bandsmith.solver.mna import OpAmpModel

__all__ = [
    "FORMAT",
    "VERSION",
    "OpAmp",
    "ShelfError",
    "ShelfState",
    "ARCHETYPES",
    "amps_to_json",
    "amps_from_json",
    "dumps_shelf",
    "loads_shelf",
    "load_shelf",
    "save_shelf",
    "open_shelf",
    "find_amp",
]

FORMAT = "bandsmith-shelf"
VERSION = 1
_NAME_MAX = 80


class ShelfError(InputError):
    """A shelf file or object that cannot be used.

    Attributes
    ----------
    kind : str
        ``missing``, ``unreadable``, ``damaged``, ``truncated``, ``not-a-shelf``,
        ``newer-version``, ``bad-amp`` or ``write-failed``.
    """

    def __init__(self, kind: str, reason: str):
        super().__init__("shelf", reason)
        self.kind = kind


def _number(obj: dict, key: str, who: str, *, low: float | None = None, strict: bool = True,
            optional: bool = False, default: float | None = None) -> float | None:
    v = obj.get(key, default)
    if v is None:
        if optional:
            return None
        raise InputError(key, f"missing for op-amp {who!r}")
    if isinstance(v, bool) or not isinstance(v, numbers.Real) or not math.isfinite(v):
        raise InputError(key, f"{v!r} is not a finite number (op-amp {who!r})")
    v = float(v)
    if low is not None and (v <= low if strict else v < low):
        word = "above" if strict else "at least"
        raise InputError(key, f"must be {word} {low:g}, got {v:g} (op-amp {who!r})")
    return v


@dataclass(frozen=True, slots=True)
class OpAmp:
    """One op-amp model on the shelf (SI-ish units named in each field).

    Parameters
    ----------
    name : str
        The name the user chooses (unique on a shelf, compared without regard to case).
    gbw_hz : float
        Gain-bandwidth product (Hz).
    a0 : float
        Open-loop DC gain (V/V).
    slew_v_per_us : float
        Slew rate (V/µs).
    iout_max_ma : float
        Largest output current, either direction (mA).
    supply_min_v, supply_max_v : float
        Allowed total supply (V+ − V−), in volts.
    swing_neg_v, swing_pos_v : float
        How close the output gets to the negative and to the positive rail (V, zero or more):
        the output spans ``V− + swing_neg_v`` to ``V+ − swing_pos_v``.
    cm_neg_v, cm_pos_v : float
        Input common-mode range relative to the rails (V): the inputs may span
        ``V− + cm_neg_v`` to ``V+ − cm_pos_v``; negative values reach beyond the rail.
    f_p2_hz : float, optional
        A second open-loop pole (Hz); None for the single-pole model.
    en_nv_rthz : float
        Input voltage-noise density (nV/√Hz).
    in_pa_rthz : float
        Input current-noise density (pA/√Hz).
    notes : str
        Free text.
    """

    name: str
    gbw_hz: float
    a0: float
    slew_v_per_us: float
    iout_max_ma: float
    supply_min_v: float
    supply_max_v: float
    swing_neg_v: float
    swing_pos_v: float
    cm_neg_v: float
    cm_pos_v: float
    f_p2_hz: float | None = None
    en_nv_rthz: float = 0.0
    in_pa_rthz: float = 0.0
    notes: str = ""

    def __post_init__(self):
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError("name", "an op-amp needs a name")
        name = " ".join(self.name.split())
        if len(name) > _NAME_MAX:
            raise InputError("name", f"at most {_NAME_MAX} characters, got {len(name)}")
        object.__setattr__(self, "name", name)
        if not isinstance(self.notes, str):
            raise InputError("notes", f"must be text (op-amp {name!r})")
        obj = {f.name: getattr(self, f.name) for f in fields(self)}
        for key in ("gbw_hz", "a0", "slew_v_per_us", "iout_max_ma", "supply_min_v", "supply_max_v"):
            object.__setattr__(self, key, _number(obj, key, name, low=0.0))
        for key in ("swing_neg_v", "swing_pos_v", "en_nv_rthz", "in_pa_rthz"):
            object.__setattr__(self, key, _number(obj, key, name, low=0.0, strict=False))
        for key in ("cm_neg_v", "cm_pos_v"):
            object.__setattr__(self, key, _number(obj, key, name))
        object.__setattr__(self, "f_p2_hz", _number(obj, "f_p2_hz", name, low=0.0, optional=True))
        if self.supply_min_v > self.supply_max_v:
            raise InputError("supply_min_v", f"{self.supply_min_v:g} V is above supply_max_v {self.supply_max_v:g} V (op-amp {name!r})")
        if self.swing_neg_v + self.swing_pos_v >= self.supply_max_v:
            raise InputError("swing_pos_v", f"the output swing limits leave no range even at the largest supply (op-amp {name!r})")
        if self.cm_neg_v + self.cm_pos_v >= self.supply_max_v:
            raise InputError("cm_pos_v", f"the common-mode limits leave no range even at the largest supply (op-amp {name!r})")
        if self.f_p2_hz is not None and self.f_p2_hz <= self.f_p1_hz:
            raise InputError("f_p2_hz", f"the second pole must lie above the first, {self.f_p1_hz:.4g} Hz = GBW/A0 (op-amp {name!r})")

    @property
    def f_p1_hz(self) -> float:
        """The dominant open-loop pole, GBW/A0 (Hz)."""
        return self.gbw_hz / self.a0

    @property
    def model(self) -> OpAmpModel:
        """The single-pole part of the model (the second pole is left out)."""
        return OpAmpModel(self.gbw_hz, self.a0)

    def to_json(self) -> dict:
        """The model as a shelf-file entry (every field, floats, ``f_p2_hz`` null when absent)."""
        out = {}
        for f in fields(self):
            v = getattr(self, f.name)
            out[f.name] = v if isinstance(v, str) or v is None else float(v)
        return out

    @classmethod
    def from_json(cls, obj) -> "OpAmp":
        """Read one shelf entry; bad or missing values raise :class:`InputError` naming the field."""
        if not isinstance(obj, dict):
            raise InputError("amp", f"an op-amp entry must be a JSON object, got {type(obj).__name__}")
        name = obj.get("name")
        if not isinstance(name, str) or not name.strip():
            raise InputError("name", "an op-amp entry needs a name")
        known = {f.name for f in fields(cls)}
        required = known - {"f_p2_hz", "en_nv_rthz", "in_pa_rthz", "notes"}
        for key in sorted(required):
            if key not in obj:
                raise InputError(key, f"missing for op-amp {name!r}")
        return cls(**{k: v for k, v in obj.items() if k in known})


# Typical of each class (from memory, no source). Names say what the model is, never whose it is.
ARCHETYPES: tuple[OpAmp, ...] = (
    OpAmp("generic 1 MHz bipolar", gbw_hz=1e6, a0=2e5, slew_v_per_us=0.5, iout_max_ma=20.0,
          supply_min_v=10.0, supply_max_v=36.0, swing_neg_v=1.5, swing_pos_v=1.5, cm_neg_v=1.5,
          cm_pos_v=1.5, en_nv_rthz=20.0, in_pa_rthz=0.5,
          notes="general-purpose bipolar, internally compensated; split supplies"),
    OpAmp("generic 10 MHz low-noise bipolar", gbw_hz=10e6, a0=1e6, slew_v_per_us=7.0, iout_max_ma=30.0,
          supply_min_v=10.0, supply_max_v=36.0, swing_neg_v=1.5, swing_pos_v=1.5, cm_neg_v=2.0,
          cm_pos_v=2.0, en_nv_rthz=4.0, in_pa_rthz=0.7,
          notes="audio-grade bipolar input; low voltage noise, moderate current noise"),
    OpAmp("generic 4 MHz JFET-input", gbw_hz=4e6, a0=2e5, slew_v_per_us=13.0, iout_max_ma=20.0,
          supply_min_v=10.0, supply_max_v=36.0, swing_neg_v=1.5, swing_pos_v=1.5, cm_neg_v=4.0,
          cm_pos_v=0.5, en_nv_rthz=18.0, in_pa_rthz=0.01,
          notes="JFET inputs: tiny current noise; the common-mode range stops well short of the negative rail"),
    OpAmp("generic 10 MHz CMOS rail-to-rail", gbw_hz=10e6, a0=1e5, slew_v_per_us=6.0, iout_max_ma=30.0,
          supply_min_v=2.5, supply_max_v=5.5, swing_neg_v=0.05, swing_pos_v=0.05, cm_neg_v=-0.1,
          cm_pos_v=-0.1, en_nv_rthz=10.0, in_pa_rthz=0.001,
          notes="low-voltage CMOS, rail-to-rail input and output"),
    OpAmp("generic 1 MHz CMOS micropower rail-to-rail", gbw_hz=1e6, a0=3e5, slew_v_per_us=0.6,
          iout_max_ma=10.0, supply_min_v=1.8, supply_max_v=5.5, swing_neg_v=0.02, swing_pos_v=0.02,
          cm_neg_v=-0.1, cm_pos_v=-0.1, en_nv_rthz=30.0, in_pa_rthz=0.001,
          notes="battery-powered CMOS; small output current"),
    OpAmp("generic 100 MHz high-speed bipolar", gbw_hz=100e6, a0=3e4, f_p2_hz=200e6,
          slew_v_per_us=300.0, iout_max_ma=60.0, supply_min_v=5.0, supply_max_v=12.6, swing_neg_v=1.2,
          swing_pos_v=1.2, cm_neg_v=1.5, cm_pos_v=1.5, en_nv_rthz=5.0, in_pa_rthz=2.0,
          notes="wideband voltage-feedback; a second pole above the GBW"),
)


def _check_unique(amps: Sequence[OpAmp]) -> None:
    seen: dict[str, str] = {}
    for a in amps:
        key = a.name.casefold()
        if key in seen:
            raise InputError("name", f"two op-amps are named {a.name!r}; names on a shelf must differ")
        seen[key] = a.name


def amps_to_json(amps: Iterable[OpAmp]) -> list[dict]:
    """A list of shelf entries (for a shelf file, or to copy the shelf into a session)."""
    return [a.to_json() for a in amps]


def amps_from_json(items) -> tuple[OpAmp, ...]:
    """Read a list of shelf entries; names must be unique. Raises :class:`InputError`."""
    if not isinstance(items, list):
        raise InputError("amps", f"must be a list of op-amps, got {type(items).__name__}")
    amps = tuple(OpAmp.from_json(x) for x in items)
    _check_unique(amps)
    return amps


def dumps_shelf(amps: Iterable[OpAmp]) -> str:
    """Canonical shelf-file text (keys sorted, indent 2, final newline)."""
    amps = tuple(amps)
    _check_unique(amps)
    obj = {"format": FORMAT, "version": VERSION, "amps": amps_to_json(amps)}
    return json.dumps(obj, indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False) + "\n"


def _reject_constant(name: str):
    raise ValueError(f"{name} is not a number JSON allows")


def loads_shelf(text: str, *, source: str = "the shelf") -> tuple[OpAmp, ...]:
    """Read a shelf from its text. Raises :class:`ShelfError` saying what is wrong."""
    if not text.strip():
        raise ShelfError("truncated", f"{source} is empty (truncated?)")
    try:
        obj = json.loads(text, parse_constant=_reject_constant)
    except json.JSONDecodeError as exc:
        if exc.pos >= len(text.rstrip()):
            raise ShelfError("truncated", f"{source} is truncated: the JSON ends early (line {exc.lineno})") from None
        raise ShelfError("damaged", f"{source} is damaged: not valid JSON at line {exc.lineno}, column {exc.colno} ({exc.msg})") from None
    except (ValueError, RecursionError) as exc:
        raise ShelfError("damaged", f"{source} is damaged: {exc}") from None
    if not isinstance(obj, dict) or obj.get("format") != FORMAT:
        raise ShelfError("not-a-shelf", f"{source} is not a Bandsmith shelf file (no \"format\": \"{FORMAT}\")")
    version = obj.get("version")
    if isinstance(version, bool) or not isinstance(version, int) or version < 1:
        raise ShelfError("damaged", f"{source} is damaged: \"version\" must be a positive whole number, got {version!r}")
    if version > VERSION:
        raise ShelfError("newer-version", f"{source} is version {version}, newer than this program reads ({VERSION}); update Bandsmith")
    try:
        return amps_from_json(obj.get("amps"))
    except InputError as exc:
        raise ShelfError("bad-amp", f"{source} has an unusable op-amp: {exc}") from None


def load_shelf(path: str | os.PathLike) -> tuple[OpAmp, ...]:
    """Read a shelf file; it is only read, never written.

    Raises
    ------
    ShelfError
        A missing, unreadable, damaged, truncated, newer or otherwise unusable file, with a message
        that says which.
    """
    p = Path(path)
    text = read_utf8(p, what="shelf file", error=ShelfError)
    return loads_shelf(text, source=str(p))


def save_shelf(amps: Iterable[OpAmp], path: str | os.PathLike) -> None:
    """Write a shelf file atomically, creating its folder if needed.

    A temporary file in the same folder is written, flushed and fsynced, then renamed over the
    target, so an interrupted save leaves the old file as it was. Raises :class:`ShelfError`
    (``write-failed``) when the file cannot be written, :class:`InputError` for duplicate names.
    """
    target = Path(path)
    try:
        write_bytes_atomic(target, dumps_shelf(amps), make_folder=True)
    except OSError as exc:
        raise ShelfError("write-failed", f"cannot write {target}: {exc.strerror or exc}") from None


@dataclass(frozen=True, slots=True)
class ShelfState:
    """What a program starts with: the amps, where they came from, and a warning if any.

    ``from_file`` is False when the archetypes are used (no file yet, or an unusable one);
    ``warning`` then says why for an unusable file, and the file has not been touched.
    """

    amps: tuple[OpAmp, ...]
    path: Path | None
    from_file: bool
    warning: str | None = None


def open_shelf(path: str | os.PathLike | None) -> ShelfState:
    """The shelf at ``path``, or the archetypes when there is none or it cannot be used.

    A missing file is the first run: the archetypes, no warning. Any other problem gives the
    archetypes and a warning naming it; the file is left untouched (saving later replaces it).
    """
    if path is None:
        return ShelfState(ARCHETYPES, None, False, None)
    p = Path(path)
    try:
        return ShelfState(load_shelf(p), p, True, None)
    except ShelfError as exc:
        if exc.kind == "missing":
            return ShelfState(ARCHETYPES, p, False, None)
        return ShelfState(ARCHETYPES, p, False, f"{exc.reason}. Using the built-in archetypes; the file was left as it is.")


def find_amp(amps: Iterable[OpAmp], name: str) -> OpAmp:
    """The model called ``name`` (spaces normalised, case ignored). Raises :class:`InputError`."""
    amps = tuple(amps)
    key = " ".join(str(name).split()).casefold()
    for a in amps:
        if a.name.casefold() == key:
            return a
    have = ", ".join(repr(a.name) for a in amps) or "none"
    raise InputError("amp", f"no op-amp named {name!r} on the shelf; it has {have}")
