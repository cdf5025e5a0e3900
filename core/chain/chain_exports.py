"""Exports of a whole chain of stages: one SPICE netlist and one parts list (CSV).

The netlist puts the stages in series: the source ``VIN`` drives node ``in``, stage k's output is
node ``s<k>_out`` and the input of stage k+1, the last stage's output is ``out``, ground ``0``.
Every other node of stage k is ``s<k>_<node>`` and every element name carries the suffix
``_S<k>`` (``R1_S2`` is R1 of stage 2), so the references are unique across the chain. Each
stage's op-amp is one instance of the macro-model of :mod:`bandsmith.files.exports` (one ``.subckt``
definition shared by all); its output is an ideal voltage source, so the netlist's response is
the product of the stages' responses, as :mod:`bandsmith.chain.cascade` computes it.

The parts list names each part by the same reference as the netlist, with its stage, its
reference within the stage's circuit, its value (SI units), the value formatted, the coarsest
IEC 60063 series it belongs to and its role.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from typing import Any, Mapping

from bandsmith.common.units import PART_UNITS
from bandsmith.analysis.analyzer import DEFAULT_A0
from bandsmith.design.candidate import Candidate
from bandsmith.common.cautions import cautions_comment
from bandsmith.common.errors import InputError
from bandsmith.files.exports import OPAMP_SUBCKT, _comment_text, _name, _num, _series_of, element_lines, opamp_subckt_lines
from bandsmith.solver.mna import OpAmpModel
from bandsmith.common.values import format_value

__all__ = ["CHAIN_PARTS_HEADER", "ChainPart", "stage_suffix", "chain_spice_netlist", "chain_parts_csv", "chain_parts"]

CHAIN_PARTS_HEADER = ["stage", "reference", "stage_reference", "circuit", "kind", "value", "formatted_value", "series", "role"]


def stage_suffix(index: int) -> str:
    """The suffix of every element name of stage ``index`` (from 1): ``"_S<index>"``."""
    return f"_S{index}"


@dataclass(frozen=True, slots=True)
class _StageParts:
    index: int
    topology_id: str
    values: Mapping[str, float]
    f0_hz: float
    q: float
    gain: float


def _stages(obj: Any) -> tuple[str, Any, tuple[_StageParts, ...]]:
    """(chain id, settings, stages) of a :class:`bandsmith.chain.cascade.Chain` or a built :class:`bandsmith.chain.cascade.Cascade`."""
    from bandsmith.chain.cascade import Cascade, Chain

    if isinstance(obj, Chain):
        st = tuple(_StageParts(s.index, s.topology_id, dict(s.values), s.f0_hz, s.q, s.gain) for s in obj.stages)
        return obj.id, obj.settings, st
    if isinstance(obj, Cascade):
        if not obj.feasible:
            raise InputError("chain", f"the chain cannot be built, so there is nothing to export: {obj.reason}")
        st = tuple(_StageParts(s.index, s.circuit, s.chosen, s.plan.f0_hz, s.plan.q, s.plan.gain) for s in obj.stages)
        return "chain", obj.settings, st
    raise InputError("chain", f"cannot export {type(obj).__name__}; give a saved chain or a built one")


def _renamer(index: int, count: int, nl):
    def node(n: str) -> str:
        if n == nl.ground:
            return "0"
        if n == nl.input:
            return "in" if index == 1 else f"s{index - 1}_out"
        if n == nl.output:
            return "out" if index == count else f"s{index}_out"
        return f"s{index}_{n}"

    return node


def _settings_text(settings) -> str:
    ripple = f" {settings.ripple_db:g} dB" if settings.ripple_db is not None else ""
    return (
        f"{settings.response}{ripple}, order {settings.order}: band {settings.f_low_hz:.6g} Hz to {settings.f_high_hz:.6g} Hz "
        f"(centre {settings.band.f0_hz:.6g} Hz), centre gain {settings.gain:.6g}, parts {settings.series}"
    )


def chain_spice_netlist(
    chain_or_cascade: Any,
    *,
    gbw_hz: float | None = None,
    a0: float = DEFAULT_A0,
    f_start_hz: float | None = None,
    f_stop_hz: float | None = None,
    points_per_decade: int | None = None,
) -> str:
    """A SPICE netlist of a whole chain, its stages in series (module notes).

    Parameters
    ----------
    chain_or_cascade : Chain or Cascade
        A saved chain, or a built one (every stage built).
    gbw_hz : float, optional
        The op-amps' gain-bandwidth (Hz); None approximates ideal op-amps by a flat gain of 1e9.
    a0 : float
        Open-loop DC gain of the macro-model.
    f_start_hz, f_stop_hz : float, optional
        The ``.ac`` sweep; by default two decades either side of the band's centre.
    points_per_decade : int, optional
        Points per decade of the sweep; by default enough for ten points across the sharpest
        stage's bandwidth (at least 100).

    Returns
    -------
    str
        The netlist text, ending with ``.end`` and a newline.
    """
    chain_id, settings, stages = _stages(chain_or_cascade)
    opamp = OpAmpModel(gbw_hz, a0)  # validates
    f0 = settings.band.f0_hz
    f1 = f_start_hz if f_start_hz is not None else f0 / 100.0
    f2 = f_stop_hz if f_stop_hz is not None else f0 * 100.0
    if not (math.isfinite(f1) and math.isfinite(f2) and 0 < f1 < f2):
        raise InputError("from", f"the sweep must run from a frequency above zero to a higher one, got {f1:g} to {f2:g} Hz")
    if points_per_decade is None:
        # Ten points per stage bandwidth f0/Q: a step of log10(1 + 1/(10 Q)) decades.
        q_max = max(s.q for s in stages)
        points_per_decade = max(100, int(math.ceil(1.0 / math.log10(1.0 + 1.0 / (10.0 * q_max)))))
    if isinstance(points_per_decade, bool) or not isinstance(points_per_decade, int) or points_per_decade <= 0:
        raise InputError("points", "must be a whole number above zero")
    n = len(stages)
    lines = [
        f"* Bandsmith export: chain {_comment_text(chain_id)}, {n} stage{'s' if n != 1 else ''} in series",
        f"* {_settings_text(settings)}",
        "* input node in (AC source VIN), output node out, ground 0; stage k ends at node s<k>_out",
        "* element names end in _S<k> for stage k",
    ]
    if opamp.ideal:
        lines.append(f"* op-amps: ideal, approximated by a flat gain of 1e9 ({OPAMP_SUBCKT}, one instance per stage)")
    else:
        lines.append(f"* op-amps: single-pole macro-model {OPAMP_SUBCKT}, GBW = {_num(opamp.gbw_hz)} Hz, A0 = {_num(opamp.a0)}, one instance per stage")
    lines.append(cautions_comment("* "))
    lines.append("VIN in 0 DC 0 AC 1")
    for st in stages:
        cand = Candidate(st.topology_id, st.values)
        nl = cand.netlist
        node = _renamer(st.index, n, nl)
        lines.append(
            f"* stage {st.index}: {st.topology_id} ({cand.topology.title}), target f0 {st.f0_hz:.6g} Hz, Q {st.q:.6g}, "
            f"gain {st.gain:.6g}; {node(nl.input)} -> {node(nl.output)}"
        )
        lines += element_lines(nl, node=node, suffix=stage_suffix(st.index))
    lines += opamp_subckt_lines(opamp)
    lines += [f".ac dec {points_per_decade} {_num(f1)} {_num(f2)}", ".end"]
    return "\n".join(lines) + "\n"


@dataclass(frozen=True, slots=True)
class ChainPart:
    """One row of a chain's parts list (see :data:`CHAIN_PARTS_HEADER`); ``value`` in SI units, None for an ideal op-amp."""

    stage: int
    reference: str
    stage_reference: str
    circuit: str
    kind: str
    value: float | None
    formatted_value: str
    series: str
    role: str

    def row(self) -> list[str]:
        value = "" if self.value is None else _num(self.value)
        return [str(self.stage), self.reference, self.stage_reference, self.circuit, self.kind, value, self.formatted_value, self.series, self.role]


def chain_parts(chain_or_cascade: Any, *, gbw_hz: float | None = None) -> tuple[ChainPart, ...]:
    """Every part of a chain, stage by stage, op-amps after each stage's passives.

    A winding resistance is listed only when above zero (it is part of the inductor).
    """
    _, _, stages = _stages(chain_or_cascade)
    out = []
    for st in stages:
        cand = Candidate(st.topology_id, st.values)
        sfx = stage_suffix(st.index)
        for c in cand.topology.components:
            v = float(cand.values[c.ref])
            if not c.required and v <= 0:
                continue
            out.append(ChainPart(st.index, _name(c.ref, c.kind) + sfx, c.ref, st.topology_id, c.kind, v, format_value(v, PART_UNITS[c.kind]), _series_of(v), c.role))
        for e in cand.netlist.opamps:
            shown = "ideal" if gbw_hz is None else f"GBW {format_value(gbw_hz, 'Hz')}"
            out.append(ChainPart(st.index, f"X{e.ref}{sfx}", e.ref, st.topology_id, "opamp", None if gbw_hz is None else float(gbw_hz), shown, "", "op-amp"))
    return tuple(out)


def chain_parts_csv(chain_or_cascade: Any, *, gbw_hz: float | None = None) -> str:
    """The parts list of a whole chain as CSV, columns :data:`CHAIN_PARTS_HEADER` (module notes)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CHAIN_PARTS_HEADER)
    for p in chain_parts(chain_or_cascade, gbw_hz=gbw_hz):
        w.writerow(p.row())
    return buf.getvalue()
