"""``bandsmith topologies``: the circuits Bandsmith knows, their parts and an example each."""

from __future__ import annotations

from bandsmith import api
from bandsmith.common.units import PART_UNITS
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, print_json
from bandsmith.app.cli.text import table


def configure(p):
    p.add_argument("--json", action="store_true", help="print one JSON object")


def run(args) -> int:
    topos = api.list_circuits()
    if args.json:
        print_json(topos.to_json())
        return 0
    for t in topos:
        print(f"{t.id}: {t.title}{' (inverting)' if t.inverting else ''}")
        rows = [
            [c.ref, c.kind, format_value(t.example.get(c.ref, 0.0), PART_UNITS[c.kind]), c.role + ("" if c.required else " [optional]")]
            for c in t.components
        ]
        print(table(rows, header=["part", "kind", "example", "role"]))
        if t.notes:
            print(f"note: {t.notes}")
        print()
    return 0


COMMAND = Command("topologies", "list the band-pass circuits, their parts and a working example", configure, run, order=10)
