"""Reading a bench sweep from CSV or whitespace-separated text (the rules are in :mod:`bandsmith.bench.measured`)."""


from __future__ import annotations

import hashlib
import math
import os
import re
from dataclasses import replace
from pathlib import Path

import numpy as np

from bandsmith.common.atomic import read_bytes_limited
from bandsmith.common.limits import FREQ_RANGE_HZ, MAG_DB_RANGE
from bandsmith.bench.measured_model import FREQ_UNITS, MIN_POINTS, ColumnMapping, MappingNeeded, Measurement, MeasurementError, TableScan

__all__ = ["scan_table", "guess_mapping", "read_measurement"]


_COMMENT_STARTS = ("#", ";", "!", "%", "//")
_TRANSLATE = str.maketrans({"\u2212": "-", "\u2012": "-", "\u2013": "-", "\u00a0": " ", "\u202f": " ", "\ufeff": ""})
_DATA_START = re.compile(r"^\s*[\"']?[+\-]?(\d|[.,]\d)")


def _load(source: str | bytes | os.PathLike, name: str | None) -> tuple[str, str, str]:
    """``(text, source name, sha256)`` of a path, of bytes, or of text that contains a newline."""
    if isinstance(source, (bytes, bytearray)):
        raw, src = bytes(source), name or "text"
    elif isinstance(source, os.PathLike) or (isinstance(source, str) and "\n" not in source and "\r" not in source):
        path = Path(source)
        src = name or path.name
        if not path.exists():
            raise MeasurementError("no such file", source=str(source))
        if path.is_dir():
            raise MeasurementError("is a folder, not a file", source=str(source))

        def refuse(kind: str, message: str) -> MeasurementError:
            return MeasurementError(message.replace(str(path), "it", 1), source=src)

        raw = read_bytes_limited(path, what="measured file", error=refuse)
    elif isinstance(source, str):
        raw, src = source.encode("utf-8"), name or "text"
    else:
        raise MeasurementError(f"expected a file path or text, got {type(source).__name__}", source=name or "measured")
    digest = hashlib.sha256(raw).hexdigest()
    if b"\x00" in raw[:4096] and not raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise MeasurementError("is a binary file, not text", source=src)
    for enc in ("utf-8-sig", "utf-16") if raw.startswith((b"\xff\xfe", b"\xfe\xff")) else ("utf-8-sig", "cp1252", "latin-1"):
        try:
            text = raw.decode(enc)
            break
        except UnicodeDecodeError:
            continue
    return text, src, digest


def _is_comment(s: str) -> bool:
    return s.startswith(_COMMENT_STARTS)


def _strip_inline(s: str) -> str:
    for ch in ("#", "!"):
        k = s.find(ch)
        if k > 0:
            s = s[:k]
    return s.strip()


def _split(s: str, sep: str) -> list[str]:
    if sep == " ":
        parts = s.split()
    else:
        parts = [p.strip() for p in s.split(sep)]
        while parts and parts[-1] == "":  # a trailing separator
            parts.pop()
    return [p.strip().strip("\"'").strip() for p in parts]


def _number(tok: str, decimal: str) -> float | None:
    if decimal == ",":
        if "." in tok:
            return None
        tok = tok.replace(",", ".")
    if not tok or tok.lower().lstrip("+-") in ("inf", "infinity", "nan"):
        return None
    try:
        return float(tok)
    except ValueError:
        return None


_DIALECTS = ((";", ","), (";", "."), ("\t", "."), ("\t", ","), (",", "."), (" ", "."), (" ", ","))


def _parse_row(s: str, sep: str, decimal: str) -> list[float] | None:
    toks = _split(s, sep)
    vals = [_number(t, decimal) for t in toks]
    return None if not vals or any(v is None for v in vals) else vals


def _parse_block(body: list[tuple[int, str]], sep: str, decimal: str, ncol: int) -> tuple[np.ndarray, np.ndarray] | None:
    """All data rows at once with numpy's compiled reader, for the plain case (decimal points, every
    row ``ncol`` finite numbers); None when anything is out of the ordinary, for the row-by-row
    reader to read (or to name the line that is wrong). Same floats either way: both round each
    decimal number once, correctly."""
    if decimal != "." or not body:
        return None
    try:
        values = np.loadtxt([s for _, s in body], delimiter=None if sep == " " else sep, comments=None,
                            dtype=float, ndmin=2, quotechar=None)
    except (ValueError, TypeError):
        return None
    if values.shape != (len(body), ncol) or not np.all(np.isfinite(values)):
        return None
    return values, np.array([i for i, _ in body], dtype=int)


def _sniff(sample: list[str]) -> tuple[str, str, int]:
    """The dialect that reads most sample lines with one field count (≥ 2 preferred)."""
    best = None
    for rank, (sep, dec) in enumerate(_DIALECTS):
        if sep != " " and not any(sep in s for s in sample):
            continue
        counts: dict[int, int] = {}
        for s in sample:
            row = _parse_row(s, sep, dec)
            if row is not None:
                counts[len(row)] = counts.get(len(row), 0) + 1
        if not counts:
            continue
        ncol, hits = max(counts.items(), key=lambda kv: (kv[1], kv[0]))
        key = (ncol >= 2, hits, -rank)
        if best is None or key > best[0]:
            best = (key, sep, dec, ncol)
    if best is None:
        return " ", ".", 0
    return best[1], best[2], best[3]


_UNIT_IN_BRACKETS = re.compile(r"[\(\[\{]\s*([^\)\]\}]*?)\s*[\)\]\}]")


def _header_tokens(s: str, sep: str, ncol: int) -> list[str] | None:
    """Column names of a header line, or None when it does not split into ``ncol`` names."""
    if sep != " ":
        toks = _split(s, sep)
        return toks if len(toks) == ncol else None
    toks = [t.strip() for t in re.split(r"\t|\s{2,}", s.strip()) if t.strip()]
    if len(toks) == ncol:
        return toks
    merged: list[str] = []
    for t in s.split():
        if merged and (t[0] in "([{" or t.startswith("/")):
            merged[-1] += " " + t
        elif merged and merged[-1].endswith("/"):
            merged[-1] += t
        else:
            merged.append(t)
    return merged if len(merged) == ncol else None


def scan_table(source: str | bytes | os.PathLike, *, name: str | None = None) -> TableScan:
    """Read the numbers of a measurement file (path, bytes, or text with a newline).

    Raises
    ------
    MeasurementError
        No data, a single column, or a line that is not numbers (with its line number).
    """
    text, src, digest = _load(source, name)
    entries: list[tuple[int, str, bool]] = []  # (line number, content, was a comment)
    for i, raw in enumerate(text.splitlines(), start=1):
        s = raw.translate(_TRANSLATE).strip()
        if not s:
            continue
        if _is_comment(s):
            entries.append((i, s.lstrip("#;!%/").strip(), True))
            continue
        entries.append((i, _strip_inline(s), False))
    data_like = [(i, s) for i, s, c in entries if not c and s and _DATA_START.match(s)]
    if not data_like:
        if not any(not c for _, _, c in entries):
            raise MeasurementError("is empty: no data lines (only blank or comment lines)", source=src)
        raise MeasurementError("has no lines of numbers; a measurement needs rows of frequency and magnitude", source=src)
    sep, dec, ncol = _sniff([s for _, s in data_like[:60]])
    if ncol == 0:
        i, s = data_like[0]
        raise MeasurementError(f'"{s[:40]}" is not a row of numbers', line=i, source=src)
    if ncol == 1:
        raise MeasurementError(
            "has only one column of numbers; a measurement needs a frequency column and a magnitude column", source=src
        )
    first = data_like[0][0]
    fast = _parse_block([(i, s) for i, s, c in entries if not c and i >= first], sep, dec, ncol)
    rows: list[list[float]] = []
    lines: list[int] = []
    for i, s, comment in entries if fast is None else ():
        if comment or i < first:
            continue
        row = _parse_row(s, sep, dec)
        if row is None:
            toks = _split(s, sep)
            bad = next((t for t in toks if _number(t, dec) is None), s)
            what = "a decimal point where the file uses decimal commas" if dec == "," and "." in bad else "not a number"
            raise MeasurementError(f'"{bad[:40]}" is {what}', line=i, source=src)
        if len(row) != ncol:
            raise MeasurementError(f"{len(row)} values where the other rows have {ncol}", line=i, source=src)
        rows.append(row)
        lines.append(i)
    values = np.array(rows, dtype=float) if fast is None else fast[0]
    line_numbers = np.array(lines, dtype=int) if fast is None else fast[1]
    names: tuple[str, ...] = ("",) * ncol
    header_line = None
    before = [(i, s, c) for i, s, c in entries if i < first and s]
    for i, s, c in reversed(before):
        toks = _header_tokens(s, sep, ncol)
        if toks is not None and any(ch.isalpha() for ch in s):
            names, header_line = tuple(toks), i
            break
        if not c:  # the last non-comment line before the data is the header or nothing is
            break
    return TableScan(
        source=src, sha256=digest, values=values, lines=line_numbers,
        names=names, separator=sep, decimal=dec, header_line=header_line,
    )


def _unit_text(name: str) -> str:
    m = _UNIT_IN_BRACKETS.search(name)
    if m:
        return m.group(1)
    if "/" in name and not name.strip().startswith("/"):
        tail = name.rsplit("/", 1)[1].strip()
        if tail and tail.lower() not in ("v",):  # "V/V" is a ratio, handled below
            return tail
    if "_" in name:
        return name.rsplit("_", 1)[1]
    return name


def _freq_unit(name: str) -> str | None:
    for text in (_unit_text(name), name):
        low = text.strip().lower()  # "mhz" is read as MHz: nobody sweeps a band-pass in millihertz
        for unit in ("ghz", "mhz", "khz", "hz"):
            if low == unit or re.search(rf"(^|[^a-z]){unit}($|[^a-z])", low):
                return {"ghz": "GHz", "mhz": "MHz", "khz": "kHz", "hz": "Hz"}[unit]
    return None


def _mag_unit(name: str) -> str | None:
    low = name.lower()
    if re.search(r"(^|[^a-z])db[a-z]?($|[^a-z])", low):
        return "dB"
    if re.search(r"v/v|(^|[^a-z])(lin|linear|ratio|abs)($|[^a-z])|\|h\|", low):
        return "linear"
    return None


def _phase_unit(name: str) -> str | None:
    low = name.lower()
    if "°" in name or re.search(r"(^|[^a-z])deg(ree)?s?($|[^a-z])", low):
        return "deg"
    if re.search(r"(^|[^a-z])rad(ian)?s?($|[^a-z])", low):
        return "rad"
    return None


def _kind(name: str) -> str | None:
    low = name.lower().strip()
    if not low:
        return None
    if re.search(r"phase|phi|φ|angle|(^|[^a-z])arg($|[^a-z])", low) or _phase_unit(name):
        return "phase"
    if re.search(r"freq|(^|[^a-z])f($|[^a-z])", low) or _freq_unit(name):
        return "freq"
    if re.search(r"mag|gain|ampl|level|resp|(^|[^a-z])(h|out|vout|y)($|[^a-z])", low) or _mag_unit(name):
        return "mag"
    return None


def guess_mapping(scan: TableScan) -> tuple[ColumnMapping | None, tuple[str, ...], str | None]:
    """What the file itself says, plus safe guesses.

    Returns
    -------
    mapping : ColumnMapping or None
        The columns (units possibly None where the file does not state them); None when the
        columns cannot be told.
    notes : tuple of str
        The guesses made.
    problem : str or None
        Why a mapping is needed, when it is.
    """
    notes: list[str] = []
    kinds = [_kind(n) for n in scan.names]
    found = {k: [i for i, x in enumerate(kinds) if x == k] for k in ("freq", "mag", "phase")}
    ncol = scan.columns
    has_header = scan.header_line is not None
    if any(len(v) > 1 for v in found.values()):
        dup = next(k for k, v in found.items() if len(v) > 1)
        word = {"freq": "frequency", "mag": "magnitude", "phase": "phase"}[dup]
        return None, (), f"more than one column looks like the {word} ({', '.join(scan.names[i] for i in found[dup])})"
    freq = found["freq"][0] if found["freq"] else None
    mag = found["mag"][0] if found["mag"] else None
    phase = found["phase"][0] if found["phase"] else None
    free = [i for i in range(ncol) if i not in (freq, mag, phase)]
    if freq is None:
        if ncol > 3 and not has_header:
            return None, (), f"{ncol} columns and no header"
        if 0 in free:
            freq = 0
            free.remove(0)
            notes.append("the first column is read as the frequency")
        else:
            return None, (), "no column is named as the frequency"
    if mag is None:
        if not free or (ncol > 3 and not has_header):
            return None, (), "no column is named as the magnitude"
        mag = free.pop(0)
        notes.append(f"column {mag + 1} is read as the magnitude")
    if phase is None and free and not has_header and ncol == 3:
        phase = free.pop(0)
        notes.append(f"column {phase + 1} is read as the phase")
    if free:
        cols = ", ".join(f"{i + 1}" + (f" ({scan.names[i]})" if scan.names[i] else "") for i in free)
        notes.append(f"column{'s' if len(free) > 1 else ''} {cols} not used")
    names = scan.names
    mapping = ColumnMapping(
        freq=freq, mag=mag, phase=phase,
        freq_unit=_freq_unit(names[freq]) if names[freq] else None,
        mag_unit=_mag_unit(names[mag]) if names[mag] else None,
        phase_unit=(_phase_unit(names[phase]) if names[phase] else None) if phase is not None else None,
    )
    return mapping, tuple(notes), None


def _resolve_units(scan: TableScan, mapping: ColumnMapping, notes: list[str]) -> ColumnMapping:
    names = scan.names
    fu, mu, pu = mapping.freq_unit, mapping.mag_unit, mapping.phase_unit
    if fu is None:
        fu = _freq_unit(names[mapping.freq]) if names[mapping.freq] else None
        if fu is None:
            fu = "Hz"
            notes.append("frequency read as Hz (no unit stated)")
    if mu is None:
        mu = _mag_unit(names[mapping.mag]) if names[mapping.mag] else None
        if mu is None:
            col = scan.values[:, mapping.mag]
            if np.any(col <= 0):
                mu = "dB"
                notes.append("magnitude read as dB (no unit stated; it has values at or below zero)")
            else:
                raise MappingNeeded(
                    "the magnitude's unit is not stated and its values are all above zero, so they could be dB or "
                    "linear (V/V)", scan=scan, guess=replace(mapping, freq_unit=fu),
                )
    if mapping.phase is not None and pu is None:
        pu = _phase_unit(names[mapping.phase]) if names[mapping.phase] else None
        if pu is None:
            col = scan.values[:, mapping.phase]
            pu = "deg" if np.max(np.abs(col)) > 2.05 * math.pi else "rad"
            notes.append(
                "phase read as degrees (no unit stated; it goes beyond ±2π)" if pu == "deg"
                else "phase read as radians (no unit stated; it stays within ±2π)"
            )
    return replace(mapping, freq_unit=fu, mag_unit=mu, phase_unit=pu)


def read_measurement(
    source: str | bytes | os.PathLike,
    *,
    mapping: ColumnMapping | None = None,
    name: str | None = None,
) -> Measurement:
    """Read a measured frequency response.

    Parameters
    ----------
    source : path, bytes or str
        A file path (a ``str`` without a newline is a path), the file's bytes, or its text.
    mapping : ColumnMapping, optional
        Which column is what; by default read from the header, or guessed (see the module notes).
    name : str, optional
        The source name to record (default: the file name, or ``"text"``).

    Returns
    -------
    Measurement
        Sorted by frequency, magnitude in dB, phase in degrees.

    Raises
    ------
    MappingNeeded
        The file does not say which column is what and it cannot safely be guessed.
    MeasurementError
        Anything else that stops the file being read, with the line number where there is one.
    """
    scan = scan_table(source, name=name)
    notes: list[str] = []
    if mapping is None:
        guess, gnotes, problem = guess_mapping(scan)
        if guess is None:
            raise MappingNeeded(problem or "the columns cannot be told apart", scan=scan)
        mapping = guess
        notes.extend(gnotes)
    else:
        for what, c in (("frequency", mapping.freq), ("magnitude", mapping.mag), ("phase", mapping.phase)):
            if c is not None and c >= scan.columns:
                raise MeasurementError(
                    f"the {what} is set to column {c + 1}, but the file has {scan.columns} columns", source=scan.source
                )
    mapping = _resolve_units(scan, mapping, notes)
    v, lines, src = scan.values, scan.lines, scan.source
    f = v[:, mapping.freq] * FREQ_UNITS[mapping.freq_unit]
    bad = np.flatnonzero(~(np.isfinite(f) & (f > 0)))
    if bad.size:
        raise MeasurementError(f"frequency {v[bad[0], mapping.freq]:g} is not above zero", line=int(lines[bad[0]]), source=src)
    lo, hi = FREQ_RANGE_HZ
    bad = np.flatnonzero((f < lo) | (f > hi))
    if bad.size:
        raise MeasurementError(
            f"frequency {f[bad[0]]:.3g} Hz is outside the range the analysis can resolve, {lo:g} to {hi:g} Hz",
            line=int(lines[bad[0]]), source=src,
        )
    m = v[:, mapping.mag]
    if mapping.mag_unit == "linear":
        bad = np.flatnonzero(m <= 0)
        if bad.size:
            raise MeasurementError(
                f"linear magnitude {m[bad[0]]:g} is not above zero (is the column in dB?)", line=int(lines[bad[0]]), source=src
            )
        m = 20.0 * np.log10(m)
    lo, hi = MAG_DB_RANGE
    bad = np.flatnonzero(~((m >= lo) & (m <= hi)))
    if bad.size:
        raise MeasurementError(
            f"magnitude {m[bad[0]]:.3g} dB is outside the range the analysis can resolve, {lo:g} to {hi:g} dB",
            line=int(lines[bad[0]]), source=src,
        )
    p = None
    if mapping.phase is not None:
        p = v[:, mapping.phase]
        p = np.degrees(p) if mapping.phase_unit == "rad" else p.copy()
        bad = np.flatnonzero(~np.isfinite(p))
        if bad.size:
            raise MeasurementError(f"phase {v[bad[0], mapping.phase]:g} is not a finite number", line=int(lines[bad[0]]), source=src)
    order = np.argsort(f, kind="stable")
    if np.any(np.diff(order) < 0):
        notes.append("rows sorted by frequency")
    f, m, lines_sorted = f[order], m[order], lines[order]
    p = p[order] if p is not None else None
    dup = np.flatnonzero(np.diff(f) <= 0)
    if dup.size:
        k = dup[0]
        a, b = sorted((int(lines_sorted[k]), int(lines_sorted[k + 1])))
        raise MeasurementError(f"frequency {f[k]:g} Hz appears twice (also on line {a})", line=b, source=src)
    if f.size < MIN_POINTS:
        raise MeasurementError(f"has {f.size} data rows; a measurement needs at least {MIN_POINTS}", source=src)
    return Measurement(f_hz=f, mag_db=m, phase_deg=p, source=src, sha256=scan.sha256, notes=tuple(notes), mapping=mapping)
