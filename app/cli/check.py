"""``bandsmith check``: which op-amps of the shelf will do for one candidate, and how much signal fits."""

from __future__ import annotations

import math

from bandsmith import api
from bandsmith.common.units import PART_UNITS
from bandsmith.circuits import get_topology
from bandsmith.bench.headroom import DEFAULT_SUPPLY_V
from bandsmith.common.values import format_value, parse_positive

from bandsmith.app.cli.amps import user_shelf
from bandsmith.app.cli.common import Command, add_circuit_arguments, add_gbw_tolerance_options, emit
from bandsmith.app.cli.text import table


def configure(p):
    add_circuit_arguments(p)
    p.add_argument("--amp", metavar="NAME", action="append", default=[],
                   help="a shelf op-amp to check (repeatable; default every one on the shelf)")
    p.add_argument("--vin", metavar="V", help="input peak amplitude in volts (default 1)")
    p.add_argument("--supply", metavar="V", help=f"symmetric supply ±V in volts (default {DEFAULT_SUPPLY_V:g})")
    p.add_argument("--rload", metavar="R", help="load resistance from the output to ground (ohm)")
    add_gbw_tolerance_options(p)
    p.add_argument("--json", action="store_true", help="print one JSON object")


def _r(x) -> str:
    if x is None or not math.isfinite(x):
        return "∞" if x is not None and x > 0 else "—"
    return f"{x:.3g}×"


def print_readable(result: dict) -> None:
    c = result["candidate"]
    topo = get_topology(c["topology"])
    parts = ", ".join(f"{r}={format_value(v, PART_UNITS[topo.component(r).kind])}" for r, v in c["components"].items())
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
    # The options are read in the order they have always been, so the first bad one is the one named;
    # the shelf file is read only once they are good.
    api.candidate_of(get_topology(args.topology).id, args.parts)
    options = {
        "vin_v": parse_positive(args.vin, field="vin") if args.vin is not None else 1.0,
        "supply_v": parse_positive(args.supply, field="supply") if args.supply is not None else DEFAULT_SUPPLY_V,
        "rload_ohm": parse_positive(args.rload, field="rload") if args.rload is not None else None,
        "tol_f0": args.tol_f0, "tol_q": args.tol_q, "tol_gain_db": args.tol_gain_db,
    }
    api.tolerances_of(args.tol_f0, args.tol_q, args.tol_gain_db)
    report = api.check_opamps(args.topology, args.parts, amps=args.amp or None, shelf=user_shelf().amps, **options)
    result = report.to_json()
    return emit(args, result, print_readable)


COMMAND = Command("check", "check one candidate against the op-amp shelf: verdicts, margins, headroom", configure, run, order=75)
