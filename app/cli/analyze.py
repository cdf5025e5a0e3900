"""``bandsmith analyze``: figures, amplifier needs and sensitivities of one candidate."""

from __future__ import annotations

from bandsmith.design.candidate import Candidate, analysis_json, parse_parts
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, add_amp_options, conditions_from, print_json, split_assignments
from bandsmith.app.cli.text import UNITS, figures_rows, requirements_rows, sensitivity_table, table


def configure(p):
    p.add_argument("topology", nargs="?", help="circuit id (see `bandsmith topologies`)")
    p.add_argument("parts", nargs="*", metavar="REF=VALUE", help="part values, e.g. R1=4k7 C=10n")
    p.add_argument("--session", metavar="FILE", help="analyse every candidate of a session file (its op-amp and drive unless given here)")
    add_amp_options(p)
    p.add_argument("--json", action="store_true", help="print one JSON object")


def analyze_one(topology_id: str, assignments: dict[str, str], conditions) -> dict:
    """The README's ANALYZE object for typed parts."""
    topo = get_topology(topology_id)
    cand = Candidate(topo.id, parse_parts(topo, assignments))
    return analysis_json(cand, cand.analyze(conditions))


def print_readable(result: dict) -> None:
    topo = get_topology(result["topology"])
    print(f"{topo.id}: {topo.title}")
    parts = [[ref, format_value(v, UNITS[topo.component(ref).kind])] for ref, v in result["components"].items()]
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


def _session_conditions(session, entry, args):
    """The session's conditions for a candidate, with any op-amp or drive option given on the command line instead."""
    from dataclasses import replace

    base = session.conditions_for(entry)
    given = conditions_from(args)
    changes = {}
    for name, option in (("gbw_hz", "gbw"), ("a0", "a0"), ("vin_v", "vin"), ("rload_ohm", "rload")):
        if getattr(args, option, None) is not None:
            changes[name] = getattr(given, name)
    if any(getattr(args, o, None) is not None for o in ("tol_f0", "tol_q", "tol_gain_db")):
        changes["tolerances"] = given.tolerances
    return replace(base, **changes) if changes else base


def run(args) -> int:
    conditions = conditions_from(args)
    if args.session:
        if args.topology or args.parts:
            raise InputError("session", "give either a session file or a circuit with its parts, not both")
        from bandsmith.files.session import load_session  # issue 3's sessions

        session = load_session(args.session)
        results = [
            dict(analyze_one(c.topology_id, dict(c.values), _session_conditions(session, c, args)), id=c.id, enabled=c.enabled)
            for c in session.candidates
        ]
        if args.json:
            print_json({"candidates": results})
        else:
            for r in results:
                print(f"== {r['id']}")
                print_readable(r)
                print()
        return 0
    if not args.topology:
        raise InputError("topology", "missing; give a circuit id (see `bandsmith topologies`) or --session FILE")
    result = analyze_one(args.topology, split_assignments(args.parts), conditions)
    if args.json:
        print_json(result)
    else:
        print_readable(result)
    return 0


COMMAND = Command("analyze", "analyse one candidate: figures, amplifier needs, sensitivities", configure, run, order=20)
