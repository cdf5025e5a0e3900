"""A measured frequency response and its column mapping, their errors, and measurements kept in a session.

Reading a file into these is :mod:`bandsmith.bench.measured_read`; :mod:`bandsmith.bench.measured`
describes what is read and re-exports both.
"""


from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass, replace
from typing import Any, Mapping

import numpy as np

from bandsmith.common.atomic import read_bytes_limited
from bandsmith.common.errors import InputError
from bandsmith.common.limits import FREQ_RANGE_HZ, MAG_DB_RANGE

__all__ = ["MeasurementError", "MappingNeeded", "ColumnMapping", "TableScan", "Measurement", "measurement_to_json", "measurement_from_json", "session_measurements", "with_measurement", "FREQ_UNITS", "MAG_UNITS", "PHASE_UNITS", "EXTRAS_KEY", "MIN_POINTS"]


FREQ_UNITS = {"Hz": 1.0, "kHz": 1e3, "MHz": 1e6, "GHz": 1e9}
MAG_UNITS = ("dB", "linear")
PHASE_UNITS = ("deg", "rad")
EXTRAS_KEY = "measurements"
MIN_POINTS = 3


class MeasurementError(InputError):
    """A measurement that cannot be read.

    Attributes
    ----------
    line : int or None
        1-based line number of the offending line, where there is one.
    source : str
        The file name (or ``"text"``).
    """

    def __init__(self, reason: str, *, line: int | None = None, source: str = "text"):
        where = source + (f", line {line}" if line is not None else "")
        super().__init__("measured", f"{where}: {reason}")
        self.line = line
        self.source = source


class MappingNeeded(MeasurementError):
    """The file can be read but does not say which column is what (or in which unit).

    ``scan`` is the :class:`TableScan` for a column-mapping step; ``guess`` the mapping guessed
    so far (its unknown parts ``None``).
    """

    def __init__(self, reason: str, *, scan: "TableScan", guess: "ColumnMapping | None" = None):
        super().__init__(reason + "; say which column is what (a column mapping)", source=scan.source)
        self.scan = scan
        self.guess = guess


@dataclass(frozen=True, slots=True)
class ColumnMapping:
    """Which column is what, and in which unit.

    Parameters
    ----------
    freq, mag : int
        0-based column indices of the frequency and magnitude.
    phase : int or None
        0-based column index of the phase, or None for a magnitude-only measurement.
    freq_unit : str or None
        ``Hz``, ``kHz``, ``MHz`` or ``GHz``; None reads it from the header (Hz if absent).
    mag_unit : str or None
        ``dB`` or ``linear`` (V/V); None reads it from the header or guesses.
    phase_unit : str or None
        ``deg`` or ``rad``; None reads it from the header or guesses.
    """

    freq: int = 0
    mag: int = 1
    phase: int | None = None
    freq_unit: str | None = None
    mag_unit: str | None = None
    phase_unit: str | None = None

    def __post_init__(self):
        cols = [("freq", self.freq), ("mag", self.mag)] + ([("phase", self.phase)] if self.phase is not None else [])
        for name, c in cols:
            if isinstance(c, bool) or not isinstance(c, (int, np.integer)) or c < 0:
                raise InputError("columns", f"the {name} column must be a column number, got {c!r}")
        idx = [c for _, c in cols]
        if len(set(idx)) != len(idx):
            raise InputError("columns", "frequency, magnitude and phase must be different columns")
        if self.freq_unit is not None and self.freq_unit not in FREQ_UNITS:
            raise InputError("freq-unit", f"must be one of {', '.join(FREQ_UNITS)}, got {self.freq_unit!r}")
        if self.mag_unit is not None and self.mag_unit not in MAG_UNITS:
            raise InputError("mag-unit", f"must be dB or linear, got {self.mag_unit!r}")
        if self.phase_unit is not None and self.phase_unit not in PHASE_UNITS:
            raise InputError("phase-unit", f"must be deg or rad, got {self.phase_unit!r}")

    def to_json(self) -> dict:
        return {
            "freq": int(self.freq), "mag": int(self.mag), "phase": None if self.phase is None else int(self.phase),
            "freq_unit": self.freq_unit, "mag_unit": self.mag_unit, "phase_unit": self.phase_unit,
        }


@dataclass(frozen=True, slots=True)
class TableScan:
    """The numbers of a measurement file before the columns are given a meaning.

    Attributes
    ----------
    source : str
        File name (or ``"text"``).
    sha256 : str
        Hex SHA-256 of the file's bytes.
    values : ndarray
        ``(N, C)`` numbers, one row per data line.
    lines : ndarray
        ``(N,)`` 1-based line numbers of the rows.
    names : tuple of str
        Column names from the header (``""`` where there is none).
    separator : str
        ``","``, ``";"``, ``"\\t"`` or ``" "`` (white space).
    decimal : str
        ``"."`` or ``","``.
    header_line : int or None
        Line number of the header row.
    """

    source: str
    sha256: str
    values: np.ndarray
    lines: np.ndarray
    names: tuple[str, ...]
    separator: str
    decimal: str
    header_line: int | None

    @property
    def columns(self) -> int:
        return int(self.values.shape[1])


@dataclass(frozen=True, slots=True)
class Measurement:
    """A measured frequency response, sorted by frequency.

    Attributes
    ----------
    f_hz : ndarray
        ``(N,)`` frequencies in Hz, increasing.
    mag_db : ndarray
        ``(N,)`` magnitude in dB (20·log10 of V/V).
    phase_deg : ndarray or None
        ``(N,)`` phase in degrees as measured (not unwrapped), or None.
    source : str
        File name the data came from.
    sha256 : str
        Hex SHA-256 of the file's bytes (to tell whether a file is the one measured).
    notes : tuple of str
        What was guessed or changed while reading (units assumed, rows sorted, ...).
    mapping : ColumnMapping or None
        The mapping that was used, units filled in.
    """

    f_hz: np.ndarray
    mag_db: np.ndarray
    phase_deg: np.ndarray | None
    source: str
    sha256: str
    notes: tuple[str, ...] = ()
    mapping: ColumnMapping | None = None

    def __post_init__(self):
        f = np.array(self.f_hz, dtype=float).reshape(-1)
        m = np.array(self.mag_db, dtype=float).reshape(-1)
        p = None if self.phase_deg is None else np.array(self.phase_deg, dtype=float).reshape(-1)
        if m.shape != f.shape or (p is not None and p.shape != f.shape):
            raise MeasurementError("frequency, magnitude and phase must have the same number of points", source=self.source)
        if f.size < MIN_POINTS:
            raise MeasurementError(f"{f.size} points; a measurement needs at least {MIN_POINTS}", source=self.source)
        if not (np.all(np.isfinite(f)) and np.all(f > 0)):
            raise MeasurementError("frequencies must be finite and above zero", source=self.source)
        if np.any(np.diff(f) <= 0):
            raise MeasurementError("frequencies must increase", source=self.source)
        if not np.all(np.isfinite(m)) or (p is not None and not np.all(np.isfinite(p))):
            raise MeasurementError("magnitude and phase must be finite", source=self.source)
        if f[0] < FREQ_RANGE_HZ[0] or f[-1] > FREQ_RANGE_HZ[1]:
            raise MeasurementError(f"frequencies must lie from {FREQ_RANGE_HZ[0]:g} to {FREQ_RANGE_HZ[1]:g} Hz", source=self.source)
        if np.any(m < MAG_DB_RANGE[0]) or np.any(m > MAG_DB_RANGE[1]):
            raise MeasurementError(f"magnitudes must lie from {MAG_DB_RANGE[0]:g} to {MAG_DB_RANGE[1]:g} dB", source=self.source)
        for a in (f, m, p):
            if a is not None:
                a.flags.writeable = False
        object.__setattr__(self, "f_hz", f)
        object.__setattr__(self, "mag_db", m)
        object.__setattr__(self, "phase_deg", p)
        object.__setattr__(self, "notes", tuple(self.notes))

    @property
    def points(self) -> int:
        return int(self.f_hz.size)

    @property
    def has_phase(self) -> bool:
        return self.phase_deg is not None

    @property
    def h(self) -> np.ndarray | None:
        """Complex response (V/V) where the phase is known, else None."""
        if self.phase_deg is None:
            return None
        return 10.0 ** (self.mag_db / 20.0) * np.exp(1j * np.radians(self.phase_deg))

    @property
    def phase_unwrapped_deg(self) -> np.ndarray | None:
        """Phase made continuous over the sweep (degrees), for plotting."""
        if self.phase_deg is None:
            return None
        return np.degrees(np.unwrap(np.radians(self.phase_deg)))

    def matches_file(self, path: str | os.PathLike) -> bool:
        """True when the file at ``path`` has the bytes this measurement was read from."""
        try:
            raw = read_bytes_limited(path, what="measured file", error=lambda kind, msg: OSError(msg))
            return hashlib.sha256(raw).hexdigest() == self.sha256
        except OSError:
            return False


def measurement_to_json(m: Measurement, *, candidate: str | None = None) -> dict:
    """A measurement as a session section entry: file name, hash and the points themselves.

    ``candidate`` optionally names the session candidate the board was built from.
    """
    return {
        "source": m.source,
        "sha256": m.sha256,
        "candidate": candidate,
        "f_hz": [float(x) for x in m.f_hz],
        "mag_db": [float(x) for x in m.mag_db],
        "phase_deg": None if m.phase_deg is None else [float(x) for x in m.phase_deg],
        "notes": list(m.notes),
    }


def measurement_from_json(obj: Any) -> Measurement:
    """The inverse of :func:`measurement_to_json` (validated; bad entries are a MeasurementError)."""
    if not isinstance(obj, Mapping):
        raise MeasurementError("a stored measurement must be an object", source="session")
    src = obj.get("source")
    digest = obj.get("sha256")
    if not isinstance(src, str) or not isinstance(digest, str):
        raise MeasurementError("a stored measurement needs its file name and hash", source="session")
    try:
        f = np.asarray(obj["f_hz"], dtype=float)
        m = np.asarray(obj["mag_db"], dtype=float)
        p = None if obj.get("phase_deg") is None else np.asarray(obj["phase_deg"], dtype=float)
    except (KeyError, TypeError, ValueError):
        raise MeasurementError("a stored measurement's points are damaged", source=src) from None
    notes = tuple(str(n) for n in obj.get("notes", ()) or ())
    return Measurement(f_hz=f, mag_db=m, phase_deg=p, source=src, sha256=digest, notes=notes)


def session_measurements(session) -> tuple[tuple[Measurement, str | None], ...]:
    """Every measurement kept in a session's ``extras["measurements"]``, with its candidate id."""
    entries = session.extras.get(EXTRAS_KEY, ()) or ()
    if not isinstance(entries, (list, tuple)):
        raise MeasurementError("the session's measurements section must be a list", source="session")
    return tuple((measurement_from_json(e), e.get("candidate") if isinstance(e, Mapping) else None) for e in entries)


def with_measurement(session, m: Measurement, *, candidate: str | None = None):
    """A copy of ``session`` with ``m`` kept in its measurements (replacing one with the same hash)."""
    entries = [e for e in (session.extras.get(EXTRAS_KEY, ()) or ()) if not (isinstance(e, Mapping) and e.get("sha256") == m.sha256)]
    entries.append(measurement_to_json(m, candidate=candidate))
    extras = dict(session.extras)
    extras[EXTRAS_KEY] = entries
    return replace(session, extras=extras)
