"""``bandsmith check``: which op-amps of the shelf will do for one candidate, and how much signal fits."""

from __future__ import annotations

import math

from bandsmith.analysis.analyzer import Tolerances
from bandsmith.design.candidate import Candidate, parse_parts
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.bench.fitcheck import FitReport, fit_check
from bandsmith.bench.headroom import DEFAULT_SUPPLY_V
from bandsmith.bench.shelf import find_amp
from bandsmith.common.values import format_value, parse_fraction, parse_positive

from bandsmith.app.cli.amps import user_shelf
from bandsmith.app.cli.common import Command, print_json, split_assignments
from bandsmith.app.cli.text import UNITS, table


def configure(p):
    p.add_argument("topology", help="circuit id (see `bandsmith topologies`)")
    p.add_argument("parts", nargs="*", metavar="REF=VALUE", help="part values, e.g. R1=4k7 C=10n")
    p.add_argument("--amp", metavar="NAME", action="append", default=[],
                   help="a shelf op-amp to check (repeatable; default every one on the shelf)")
    p.add_argument("--vin", metavar="V", help="input peak amplitude in volts (default 1)")
    p.add_argument("--supply", metavar="V", help=f"symmetric supply ±V in volts (default {DEFAULT_SUPPLY_V:g})")
    p.add_argument("--rload", metavar="R", help="load resistance from the output to ground (ohm)")
    p.add_argument("--tol-f0", metavar="P", help="f0 tolerance for the required GBW (default 1%%)")
    p.add_argument("--tol-q", metavar="P", help="Q tolerance for the required GBW (default 5%%)")
    p.add_argument("--tol-gain-db", metavar="D", help="centre-gain tolerance in dB (default 0.5)")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def _tolerances(args) -> Tolerances:
    d = Tolerances()

    def frac(text, field):
        v = parse_fraction(text, field=field)
        if v <= 0:
            raise InputError(field, "must be greater than zero")
        return v

    return Tolerances(
        f0=frac(args.tol_f0, "tol-f0") if args.tol_f0 is not None else d.f0,
        q=frac(args.tol_q, "tol-q") if args.tol_q is not None else d.q,
        gain_db=parse_positive(args.tol_gain_db, field="tol-gain-db") if args.tol_gain_db is not None else d.gain_db,
    )


def check_json(cand: Candidate, report: FitReport, *, vin_v: float, supply_v: float, rload_ohm: float | None) -> dict:
    """The ``check`` object: candidate, one verdict per model, the circuit's own headroom."""
    return {
        "candidate": {
            "topology": cand.topology_id,
            "components": {k: float(v) for k, v in cand.values.items()},
            "netlist": cand.netlist.to_json(),
            "ideal": report.ideal.to_json(),
            "vin_v": float(vin_v),
            "supply_v": float(supply_v),
            "rload_ohm": None if rload_ohm is None else float(rload_ohm),
        },
        "verdicts": [v.to_json() for v in report.verdicts],
        "headroom": report.headroom.to_json(),
    }


def _r(x) -> str:
    if x is None or not math.isfinite(x):
        return "∞" if x is not None and x > 0 else "—"
    return f"{x:.3g}×"


def print_readable(result: dict) -> None:
    c = result["candidate"]
    topo = get_topology(c["topology"])
    parts = ", ".join(f"{r}={format_value(v, UNITS[topo.component(r).kind])}" for r, v in c["components"].items())
    load = f", load {format_value(c['rload_ohm'], 'Ω')}" if c["rload_ohm"] is not None else ""
    print(f"{topo.id}: {parts}")
    print(f"input {format_value(c['vin_v'], 'V')} peak, supply ±{c['supply_v']:g} V{load}")
    print()
    rows = []
    for v in result["verdicts"]:
        m, a = v["margins"], v["actual"]
        rows.append([
            v["amp"], v["verdict"], _r(m["gbw"]), _r(m["slew"]), _r(m["iout"]),
            format_value(m["swing_v"], "V", digits=3) if m["swing_v"] is not None else "—",
            format_value(a["f0_hz"], "Hz", digits=4) if a["f0_hz"] is not None else "—",
            f"{a['q']:.4g}" if a["q"] is not None else "—",
            format_value(v["headroom"]["max_vin_v"], "V", digits=3) if v["headroom"]["max_vin_v"] is not None else "—",
        ])
    print(table(rows, header=["op-amp", "verdict", "GBW", "slew", "Iout", "swing spare", "f0", "Q", "max input"]))
    print()
    for v in result["verdicts"]:
        print(f"{v['amp']}: {v['verdict']}")
        for reason in v["reasons"]:
            print(f"  - {reason}")
    h = result["headroom"]
    print()
    print("headroom with an ideal op-amp (every node within the rails):")
    rows = [
        [node, format_value(peak, "V", digits=4),
         format_value(h["node_peak_f_hz"][node], "Hz", digits=4) if h["node_peak_f_hz"][node] is not None else "flat",
         format_value(h["node_limit_v"][node], "V", digits=4), h["limits"][node]["what"]]
        for node, peak in h["node_peak_v"].items()
    ]
    print(table(rows, header=["node", "peak", "at", "allowed", "set by"]))
    if h["limiting_node"] is not None:
        print(f"limits first: node {h['limiting_node']!r}; largest input {format_value(h['max_vin_v'], 'V', digits=4)} peak")


def run(args) -> int:
    topo = get_topology(args.topology)
    cand = Candidate(topo.id, parse_parts(topo, split_assignments(args.parts)))
    vin = parse_positive(args.vin, field="vin") if args.vin is not None else 1.0
    supply = parse_positive(args.supply, field="supply") if args.supply is not None else DEFAULT_SUPPLY_V
    rload = parse_positive(args.rload, field="rload") if args.rload is not None else None
    tol = _tolerances(args)
    shelf = user_shelf().amps
    if args.amp:
        amps = []
        for name in args.amp:
            a = find_amp(shelf, name)
            if a not in amps:
                amps.append(a)
    else:
        amps = list(shelf)
    if not amps:
        raise InputError("amp", "the shelf is empty; add an op-amp to it first")
    report = fit_check(cand.netlist, amps, supply_v=supply, vin_v=vin, rload_ohm=rload, tolerances=tol)
    result = check_json(cand, report, vin_v=vin, supply_v=supply, rload_ohm=rload)
    if args.json:
        print_json(result)
    else:
        print_readable(result)
    return 0


COMMAND = Command("check", "check one candidate against the op-amp shelf: verdicts, margins, headroom", configure, run, order=75)
