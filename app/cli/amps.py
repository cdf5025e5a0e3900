"""``bandsmith amps``: the op-amp shelf (the user's file, or the shipped archetypes)."""

from __future__ import annotations

import sys

from bandsmith.bench.shelf import ShelfState
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, print_json
from bandsmith.app.cli.text import table


def configure(p):
    p.add_argument("--json", action="store_true", help="print one JSON object")


def user_shelf() -> ShelfState:
    """The user's shelf; an unusable file gives the archetypes and a warning on stderr."""
    from bandsmith.app.shelf_paths import open_user_shelf

    state = open_user_shelf()
    if state.warning:
        print(f"bandsmith: shelf: {state.warning}", file=sys.stderr)
    return state


def _span(neg: float, pos: float) -> str:
    """Distances to the rails in words: "1.5 / 1.5 V inside", "0.1 / 0.1 V beyond"."""
    if neg == 0 and pos == 0:
        return "rail to rail"
    if neg >= 0 and pos >= 0:
        return f"{neg:g} / {pos:g} V inside"
    if neg <= 0 and pos <= 0:
        return f"{-neg:g} / {-pos:g} V beyond"
    return f"{neg:+g} / {pos:+g} V inside"


def run(args) -> int:
    state = user_shelf()
    if args.json:
        print_json({
            "amps": [a.to_json() for a in state.amps],
            "source": str(state.path) if state.from_file else "archetypes",
            "path": str(state.path) if state.path is not None else None,
            "warning": state.warning,
        })
        return 0
    where = f"shelf file {state.path}" if state.from_file else "built-in archetypes (no shelf file in use)"
    print(f"op-amp shelf: {where}")
    rows = [
        [
            a.name,
            format_value(a.gbw_hz, "Hz", digits=3),
            f"{a.a0:.3g}",
            format_value(a.f_p2_hz, "Hz", digits=3) if a.f_p2_hz is not None else "—",
            f"{a.slew_v_per_us:g} V/µs",
            f"{a.iout_max_ma:g} mA",
            f"{a.supply_min_v:g}–{a.supply_max_v:g} V",
            _span(a.swing_neg_v, a.swing_pos_v),
            _span(a.cm_neg_v, a.cm_pos_v),
            f"{a.en_nv_rthz:g} nV/√Hz",
            f"{a.in_pa_rthz:g} pA/√Hz",
        ]
        for a in state.amps
    ]
    print(table(rows, header=["name", "GBW", "A0", "2nd pole", "slew", "Iout", "supply", "swing (V−/V+)", "common mode (V−/V+)", "en", "in"]))
    return 0


COMMAND = Command("amps", "list the op-amp shelf (your models, or the generic archetypes)", configure, run, order=70)
