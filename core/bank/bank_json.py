"""The ``bandsmith bank --json`` object and the bank's exports (one netlist, one parts list).

JSON keys (SI units): ``rule`` (how the centres were set), ``series``, ``circuit_mode``,
``circuit_reason``, ``channels`` (each ``index`` from 1, ``f0_hz`` — the chosen parts' centre —,
``target_f0_hz``, ``label_hz``, ``q`` and ``gain`` — the target Q and centre-gain magnitude —,
``circuit``, ``chosen``, ``figures`` (the chosen parts' FIGURES), ``errors``, ``shared``,
``reused_from``, ``opamps``, ``notes``), ``bom`` (formatted value → quantity), ``bom_lines``,
``distinct_values``, ``distinct_values_alone``, ``opamps`` (the packing), ``centre_gain_spread_db``,
``isolation_db`` (N×N, row i = channel i at every channel's centre), ``isolation_neighbours_db``,
``sum_ripple_db``, ``sum_min_db``, ``sum_max_db``, ``covered_band_hz`` and ``response``
(``f_hz``, ``sum_db``, ``channels_db``).
"""

from __future__ import annotations

import csv
import io

import numpy as np

from bandsmith.analysis.analyzer import DEFAULT_A0
from bandsmith.bank.bom import bom_lines, opamp_count, pack_opamps
from bandsmith.bank.build import Bank
from bandsmith.bank.response import BankResponse, bank_response
from bandsmith.common.cautions import cautions_comment
from bandsmith.common.errors import InputError
from bandsmith.common.jsonutil import finite_or_none
from bandsmith.design.candidate import Candidate
from bandsmith.design.standard import errors_of
from bandsmith.files.exports import _comment_text, _num, _series_of, element_lines, opamp_subckt_lines
from bandsmith.circuits.synthesis import Spec
from bandsmith.solver.mna import OpAmpModel

__all__ = ["bank_json", "bank_spice_netlist", "bank_parts_csv", "BANK_PARTS_HEADER", "channel_suffix"]

BANK_PARTS_HEADER = ["kind", "value", "formatted_value", "series", "quantity", "references"]


def channel_suffix(index: int) -> str:
    """Suffix of every element name of channel ``index`` (from 1): ``"_CH<index>"``."""
    return f"_CH{index}"


def _figures(ch):
    a = ch.analysis
    return a.actual if a.actual is not None else a.ideal


def _round_list(a, nd=6):
    return [finite_or_none(round(float(x), nd)) for x in np.asarray(a).reshape(-1)]


def bank_json(bank: Bank, response: BankResponse | None = None, *, points: int = 400) -> dict:
    """The ``bank --json`` object (see the module notes)."""
    r = response if response is not None else bank_response(bank, points=points)
    lines = bom_lines((ch.circuit, ch.chosen) for ch in bank.channels)
    alone = bom_lines(zip(bank.alone_circuits, bank.alone))
    per = [opamp_count(ch.analysis.netlist) for ch in bank.channels]
    channels = []
    for ch, n_op in zip(bank.channels, per):
        fig = _figures(ch)
        channels.append({
            "index": ch.index + 1,
            "f0_hz": finite_or_none(float(np.asarray(fig.f0_hz).reshape(-1)[0])),
            "target_f0_hz": ch.target_f0_hz,
            "label_hz": ch.label_hz,
            "q": ch.q,
            "gain": ch.gain,
            "circuit": ch.circuit,
            "chosen": {k: float(v) for k, v in ch.chosen.items()},
            "figures": fig.to_json(),
            "errors": errors_of(fig, Spec(ch.target_f0_hz, ch.q, ch.gain)),
            "shared": ch.shared,
            "reused_from": None if ch.reused_from is None else ch.reused_from + 1,
            "opamps": n_op,
            "notes": list(ch.notes),
        })
    iso = r.isolation_db
    n = len(bank.channels)
    return {
        "rule": dict(bank.rule),
        "series": bank.series,
        "circuit_mode": bank.circuit_mode,
        "circuit_reason": bank.circuit_reason,
        "channels": channels,
        "bom": {ln.text: ln.quantity for ln in lines},
        "bom_lines": [{"kind": ln.kind, "value": ln.value, "text": ln.text, "quantity": ln.quantity, "refs": list(ln.refs)} for ln in lines],
        "distinct_values": len(lines),
        "distinct_values_alone": len(alone),
        "opamps": pack_opamps(sum(per)),
        "centre_gain_spread_db": float(np.max(r.centre_gain_db) - np.min(r.centre_gain_db)),
        "isolation_db": [_round_list(row) for row in iso],
        "isolation_neighbours_db": [
            {"below": finite_or_none(round(float(iso[i, i - 1]), 6)) if i > 0 else None,
             "above": finite_or_none(round(float(iso[i, i + 1]), 6)) if i < n - 1 else None}
            for i in range(n)
        ],
        "sum_ripple_db": r.sum_ripple_db,
        "sum_min_db": r.sum_min_db,
        "sum_max_db": r.sum_max_db,
        "covered_band_hz": list(r.band_hz),
        "response": {
            "f_hz": _round_list(r.f_hz, 9),
            "sum_db": _round_list(r.total_db, 6),
            "channels_db": [_round_list(row, 4) for row in r.channels_db],
        },
    }


def _renamer(index: int, nl):
    def node(name: str) -> str:
        if name == nl.ground:
            return "0"
        if name == nl.input:
            return "in"
        return f"ch{index}_{name}"

    return node


def bank_spice_netlist(bank: Bank, *, gbw_hz: float | None = None, a0: float = DEFAULT_A0, points_per_decade: int = 100) -> str:
    """One SPICE netlist of every channel: a common input ``in``, channel k's output ``ch<k>_out``.

    Element names end in ``_CH<k>``; the ``.ac`` sweep runs a decade either side of the bank.
    """
    opamp = OpAmpModel(gbw_hz, a0)  # validates
    if isinstance(points_per_decade, bool) or not isinstance(points_per_decade, int) or points_per_decade <= 0:
        raise InputError("points", "must be a whole number above zero")
    chs = bank.channels
    lines = [
        f"* Bandsmith export: filter bank of {len(chs)} channel{'s' if len(chs) != 1 else ''}, parts {bank.series}",
        "* input node in (AC source VIN), ground 0; channel k ends at node ch<k>_out; element names end in _CH<k>",
        f"* op-amps: {'ideal, approximated by a flat gain of 1e9' if opamp.ideal else f'single-pole macro-model, GBW = {_num(opamp.gbw_hz)} Hz'}",
        cautions_comment("* "),
        "VIN in 0 DC 0 AC 1",
    ]
    for ch in chs:
        k = ch.index + 1
        cand = Candidate(ch.circuit, ch.chosen)
        nl = cand.netlist
        lines.append(f"* channel {k}: {ch.circuit} ({_comment_text(cand.topology.title)}), target f0 {ch.target_f0_hz:.6g} Hz, Q {ch.q:.6g}, gain {ch.gain:.6g}")
        lines += element_lines(nl, node=_renamer(k, nl), suffix=channel_suffix(k))
    lines += opamp_subckt_lines(opamp)
    f1, f2 = chs[0].target_f0_hz / 10.0, chs[-1].target_f0_hz * 10.0
    lines += [f".ac dec {points_per_decade} {_num(f1)} {_num(f2)}", ".end"]
    return "\n".join(lines) + "\n"


def bank_parts_csv(bank: Bank) -> str:
    """The purchaser's parts list: one row per distinct value with its quantity and references,
    then the op-amp packages (columns :data:`BANK_PARTS_HEADER`)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(BANK_PARTS_HEADER)
    for ln in bom_lines((ch.circuit, ch.chosen) for ch in bank.channels):
        w.writerow([ln.kind, _num(ln.value), ln.text, _series_of(ln.value), ln.quantity, " ".join(ln.refs)])
    pack = pack_opamps(sum(opamp_count(ch.analysis.netlist) for ch in bank.channels))
    if pack["quads"]:
        w.writerow(["opamp", "", "quad op-amp", "", pack["quads"], ""])
    if pack["duals"]:
        w.writerow(["opamp", "", "dual op-amp", "", pack["duals"], ""])
    return buf.getvalue()
