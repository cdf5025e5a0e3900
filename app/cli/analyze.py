"""``bandsmith analyze``: figures, amplifier needs and sensitivities of one candidate."""

from __future__ import annotations

from bandsmith import api
from bandsmith.common.units import PART_UNITS
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, add_amp_options, add_circuit_arguments, amp_options, emit, print_json, require_topology
from bandsmith.app.cli.text import figures_rows, requirements_rows, sensitivity_table, table


def configure(p):
    add_circuit_arguments(p, optional=True)
    p.add_argument("--session", metavar="FILE", help="analyse every candidate of a session file (its op-amp and drive unless given here)")
    add_amp_options(p)
    p.add_argument("--json", action="store_true", help="print one JSON object")


def print_readable(result: dict) -> None:
    topo = get_topology(result["topology"])
    print(f"{topo.id}: {topo.title}")
    parts = [[ref, format_value(v, PART_UNITS[topo.component(ref).kind])] for ref, v in result["components"].items()]
    print(table(parts, header=["part", "value"]))
    print()
    rows = figures_rows(result["ideal"])
    if result["actual"] is not None:
        act = figures_rows(result["actual"])
        rows = [r + [a[1]] for r, a in zip(rows, act)]
        gbw = format_value(result["opamp"]["gbw_hz"], "Hz")
        print(table(rows, header=["figure", "ideal op-amp", f"GBW {gbw}"]))
    else:
        print(table(rows, header=["figure", "ideal op-amp"]))
    print()
    print(table(requirements_rows(result["requirements"]), header=["amplifier needs", ""]))
    print()
    print(sensitivity_table(result["sensitivity"]))
    for w in result.get("warnings", []):
        print(f"warning: {w}")


def run(args) -> int:
    options = amp_options(args)
    api.conditions_of(**options)  # bad options are reported before anything else
    if args.session:
        if args.topology or args.parts:
            raise InputError("session", "give either a session file or a circuit with its parts, not both")
        given = {"gbw_hz": args.gbw, "a0": args.a0, "vin_v": args.vin, "rload_ohm": args.rload,
                 "tol_f0": args.tol_f0, "tol_q": args.tol_q, "tol_gain_db": args.tol_gain_db,
                 "rsource_ohm": args.rsource, "cload_f": args.cload}
        out = api.analyze_session(api.open_session(args.session), **given).to_json()
        if args.json:
            print_json(out)
        else:
            for r in out["candidates"]:
                print(f"== {r['id']}")
                print_readable(r)
                print()
        return 0
    require_topology(args, " or --session FILE")
    result = api.analyze(args.topology, args.parts, **options).to_json()
    return emit(args, result, print_readable)


COMMAND = Command("analyze", "analyse one candidate: figures, amplifier needs, sensitivities", configure, run, order=20)
