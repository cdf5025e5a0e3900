"""Exports of one candidate: a SPICE netlist, the parts list (CSV) and the response table (CSV).

The netlist is plain SPICE3 syntax (``*`` comments, R/L/C elements, a ``.subckt`` op-amp, an AC
source, an ``.ac`` sweep, ``.end``). The op-amp is the single-pole model the analysis uses,
``A(s) = A0/(1 + s·A0/(2π·GBW))``, built from a voltage-controlled current source ``gm`` into a
resistor ``A0/gm`` parallel with a capacitor ``gm/(2π·GBW)`` (its pole at ``GBW/A0``), followed
by a unity-gain voltage buffer. Without a GBW the op-amp is approximated by a flat gain of 1e9.
"""

from __future__ import annotations

import csv
import io
import math
import os
from pathlib import Path
from typing import Any

import numpy as np

from bandsmith.common.units import PART_UNITS
from bandsmith.analysis.analyzer import DEFAULT_A0, ideal_figures, sweep, transfer_function
from bandsmith.design.candidate import Candidate
from bandsmith.common.cautions import cautions_comment
from bandsmith.common.eseries import coarsest_series
from bandsmith.common.atomic import write_bytes_atomic
from bandsmith.common.errors import InputError
from bandsmith.solver.mna import IDEAL, OpAmpModel

__all__ = [
    "OPAMP_SUBCKT",
    "IDEAL_GAIN",
    "RESPONSE_HEADER",
    "PARTS_HEADER",
    "spice_netlist",
    "element_lines",
    "opamp_subckt_lines",
    "parts_csv",
    "response_csv",
    "write_csv",
    "write_atomic",
]

OPAMP_SUBCKT = "BANDSMITH_OPAMP"
IDEAL_GAIN = 1e9
_GM = 1e-3  # transconductance of the macro-model's input stage (S)
RESPONSE_HEADER = ["frequency_hz", "magnitude_db", "phase_deg", "group_delay_s"]
PARTS_HEADER = ["reference", "kind", "value", "formatted_value", "series", "role"]


def _candidate(obj: Any) -> tuple[Candidate, str]:
    """A Candidate and an id from a CandidateEntry, a Candidate or a (topology_id, values) pair."""
    if isinstance(obj, Candidate):
        return obj, obj.topology_id
    if isinstance(obj, tuple) and len(obj) == 2:
        return Candidate(obj[0], obj[1]), obj[0]
    topology_id = getattr(obj, "topology_id", None)
    values = getattr(obj, "values", None)
    if topology_id is None or values is None:
        raise InputError("candidate", f"cannot export {type(obj).__name__}; give a session candidate or a Candidate")
    return Candidate(topology_id, values), getattr(obj, "id", topology_id)


def _comment_text(text: str) -> str:
    """Text made safe for a one-line SPICE comment: every character that is not printable (a
    newline, a carriage return, ...) becomes ``?``, so nothing after ``*`` can start a new line."""
    return "".join(c if c.isprintable() else "?" for c in str(text))


def _num(x: float) -> str:
    """A SPICE number: the shortest text that reads back as the same float (never a suffix)."""
    return repr(float(x))


def _name(ref: str, kind: str) -> str:
    """A SPICE element name: the reference when it starts with its kind letter, else prefixed."""
    return ref if ref[:1].upper() == kind else f"{kind}_{ref}"


def spice_netlist(
    entry_or_candidate: Any,
    *,
    gbw_hz: float | None = None,
    a0: float = DEFAULT_A0,
    f_start_hz: float | None = None,
    f_stop_hz: float | None = None,
    points_per_decade: int = 100,
) -> str:
    """A SPICE netlist of a candidate.

    Parameters
    ----------
    entry_or_candidate : CandidateEntry, Candidate or (topology_id, values)
        What to export.
    gbw_hz : float, optional
        The op-amp's gain-bandwidth (Hz); None approximates an ideal op-amp by a flat gain of 1e9.
    a0 : float
        Open-loop DC gain of the macro-model.
    f_start_hz, f_stop_hz : float, optional
        The ``.ac`` sweep; by default two decades either side of the candidate's f0.
    points_per_decade : int
        Points per decade of the sweep.

    Returns
    -------
    str
        The netlist text, ending with ``.end`` and a newline. Input ``in``, output ``out``,
        ground ``0``.
    """
    cand, cid = _candidate(entry_or_candidate)
    opamp = OpAmpModel(gbw_hz, a0)  # validates
    topo = cand.topology
    nl = cand.netlist
    fig = ideal_figures(nl).item()
    f0 = fig.f0_hz if math.isfinite(fig.f0_hz) else 1e3
    f1 = f_start_hz if f_start_hz is not None else f0 / 100.0
    f2 = f_stop_hz if f_stop_hz is not None else f0 * 100.0
    if not (math.isfinite(f1) and math.isfinite(f2) and 0 < f1 < f2):
        raise InputError("from", f"the sweep must run from a frequency above zero to a higher one, got {f1:g} to {f2:g} Hz")
    if not (isinstance(points_per_decade, int) and points_per_decade > 0):
        raise InputError("points", "must be a whole number above zero")
    lines = [
        f"* Bandsmith export: candidate {_comment_text(cid)}, {topo.id} ({topo.title})",
        f"* ideal-op-amp figures of these parts: f0 {fig.f0_hz:.6g} Hz, Q {fig.q:.6g}, centre gain {fig.gain_center:.6g}",
        "* input node in (AC source VIN), output node out, ground 0",
    ]
    if opamp.ideal:
        lines.append(f"* op-amp: ideal, approximated by a flat gain of {IDEAL_GAIN:g}")
    else:
        lines.append(f"* op-amp: single-pole macro-model, GBW = {_num(opamp.gbw_hz)} Hz, A0 = {_num(opamp.a0)}")
    lines.append(cautions_comment("* "))
    lines.append(f"VIN {nl.input} {nl.ground} DC 0 AC 1")
    lines += element_lines(nl)
    lines += opamp_subckt_lines(opamp)
    lines += [
        f".ac dec {points_per_decade} {_num(f1)} {_num(f2)}",
        ".end",
    ]
    return "\n".join(lines) + "\n"


def element_lines(nl, *, node=None, suffix: str = "") -> list[str]:
    """SPICE lines of a netlist's parts and op-amps (no source, subcircuit or control lines).

    Parameters
    ----------
    nl : bandsmith.solver.netlist.Netlist
        The circuit.
    node : callable, optional
        ``node(name) -> str`` renames every node (ground included); identity by default.
    suffix : str
        Appended to every element name (``"_S2"`` makes ``R1`` into ``R1_S2``), so several
        circuits can share one netlist.

    An inductor with a winding resistance becomes the inductor and a resistor in series through a
    node of its own; an op-amp becomes an instance of :data:`OPAMP_SUBCKT`.
    """
    rename = node or (lambda n: n)
    out = []
    for e in nl.elements:
        nodes = [rename(n) for n in e.nodes]
        if e.kind == "opamp":
            plus, minus, o = nodes
            out.append(f"X{e.ref}{suffix} {plus} {minus} {o} {OPAMP_SUBCKT}")
        elif e.kind == "L" and e.series_resistance > 0:
            mid = f"{nodes[0]}_{e.ref}"
            out.append(f"{_name(e.ref, 'L')}{suffix} {nodes[0]} {mid} {_num(e.value)}")
            out.append(f"{_name(e.series_ref or 'RL', 'R')}{suffix} {mid} {nodes[1]} {_num(e.series_resistance)}")
        else:
            out.append(f"{_name(e.ref, e.kind)}{suffix} {nodes[0]} {nodes[1]} {_num(e.value)}")
    return out


def opamp_subckt_lines(opamp: OpAmpModel) -> list[str]:
    """The ``.subckt`` … ``.ends`` lines of the op-amp macro-model (module notes)."""
    gain = IDEAL_GAIN if opamp.ideal else opamp.a0
    lines = [
        f".subckt {OPAMP_SUBCKT} inp inn out",
        "* A(s) = A0/(1 + s*A0/(2*pi*GBW)): gm into RP || CP, then a unity buffer",
        f"GIN 0 x inp inn {_num(_GM)}",
        f"RP x 0 {_num(gain / _GM)}",
    ]
    if not opamp.ideal:
        lines.append(f"CP x 0 {_num(_GM / (2.0 * math.pi * opamp.gbw_hz))}")
    lines += ["EOUT out 0 x 0 1", f".ends {OPAMP_SUBCKT}"]
    return lines


def _series_of(x: float) -> str:
    """The coarsest IEC 60063 series holding ``x``, or ``none``."""
    return coarsest_series(x) or "none"


def parts_csv(entry_or_candidate: Any, *, gbw_hz: float | None = None) -> str:
    """The parts list as CSV: ``reference,kind,value,formatted_value,series,role``.

    ``value`` is in SI units; ``series`` is the coarsest standard series the value belongs to
    (``none`` for a value in no series). The op-amp is listed last with its GBW when given. A
    winding resistance is listed only when above zero (it is part of the inductor, not a resistor).
    """
    from bandsmith.common.values import format_value

    cand, _ = _candidate(entry_or_candidate)
    topo = cand.topology
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(PARTS_HEADER)
    for c in topo.components:
        v = cand.values[c.ref]
        if not c.required and v <= 0:
            continue
        w.writerow([c.ref, c.kind, _num(v), format_value(v, PART_UNITS[c.kind]), _series_of(v), c.role])
    for e in cand.netlist.opamps:
        value = "" if gbw_hz is None else _num(gbw_hz)
        shown = "ideal" if gbw_hz is None else f"GBW {format_value(gbw_hz, 'Hz')}"
        w.writerow([e.ref, "opamp", value, shown, "", f"op-amp (+in {e.nodes[0]}, −in {e.nodes[1]}, out {e.nodes[2]})"])
    return buf.getvalue()


_CSV_BLOCK = 65536  # rows formatted per write: a few MB of text at a time


def write_csv(out, columns, fmt: str = "%.10g") -> None:
    """Columns of floats as CSV lines, each value ``fmt``-formatted, without a header.

    One ``%`` operation per block of rows over a format repeated for the block (the C formatter,
    not a Python call per value): the same text as formatting each value, ``"%.10g" % v`` being
    ``f"{v:.10g}"``.
    """
    table = np.column_stack(columns)
    line = ",".join([fmt] * table.shape[1]) + "\n"
    for start in range(0, table.shape[0], _CSV_BLOCK):
        block = table[start : start + _CSV_BLOCK]
        out.write((line * block.shape[0]) % tuple(block.ravel().tolist()))


def response_csv(
    entry_or_candidate: Any,
    *,
    gbw_hz: float | None = None,
    a0: float = DEFAULT_A0,
    f_hz: np.ndarray | None = None,
) -> str:
    """The frequency response as CSV, as ``bandsmith sweep --csv`` prints it.

    Columns ``frequency_hz,magnitude_db,phase_deg,group_delay_s`` (phase unwrapped); by default
    1000 log-spaced points from 10 Hz to 10 MHz; the single-pole op-amp when ``gbw_hz`` is given.
    """
    cand, _ = _candidate(entry_or_candidate)
    opamp = IDEAL if gbw_hz is None else OpAmpModel(gbw_hz, a0)
    f = np.geomspace(10.0, 10e6, 1000) if f_hz is None else np.asarray(f_hz, dtype=float)
    if f.ndim != 1 or f.size < 1 or not np.all(np.isfinite(f) & (f > 0)):
        raise InputError("frequencies", "must be finite and above zero")
    r = sweep(transfer_function(cand.netlist, opamp), f)
    buf = io.StringIO()
    buf.write(",".join(RESPONSE_HEADER) + "\n")
    write_csv(buf, (r.f_hz, r.magnitude_db, r.phase_deg, r.group_delay_s))
    return buf.getvalue()


def write_atomic(path: str | os.PathLike, text: str | bytes) -> Path:
    """Write text (UTF-8) or bytes atomically (:func:`bandsmith.common.atomic.write_bytes_atomic`:
    a temporary file in the same folder, fsync, rename); returns the path.

    Raises
    ------
    InputError
        On the field ``output`` when the file cannot be written (the old one is left as it was).
    """
    target = Path(path)
    try:
        write_bytes_atomic(target, text)
    except OSError as exc:
        raise InputError("output", f"cannot write {target}: {exc.strerror or exc}") from None
    return target
