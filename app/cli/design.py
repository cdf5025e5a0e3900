"""``bandsmith design``: part values of one circuit for a target (f0, Q or bandwidth, centre gain)."""

from __future__ import annotations

import math

from bandsmith import api
from bandsmith.common.units import PART_UNITS
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import SERIES_NAMES
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, add_amp_options, amp_options, emit, save_report
from bandsmith.app.cli.text import figures_rows, requirements_rows, sensitivity_table, signed_error, table

SERIES_HELP = "standard series for the parts: " + ", ".join(SERIES_NAMES) + " or exact (default E24)"


def add_target_options(p) -> None:
    """The target options shared by ``design`` and ``compare``."""
    p.add_argument("--f0", metavar="F", help="centre frequency (Hz), e.g. 2.4k")
    group = p.add_mutually_exclusive_group()
    group.add_argument("--q", metavar="Q", help="quality factor f0/bandwidth")
    group.add_argument("--bw", metavar="B", help="-3 dB bandwidth (Hz), instead of --q")
    p.add_argument("--gain", metavar="G", help="magnitude of the centre gain (V/V); its sign follows the circuit")
    p.add_argument("--series", metavar="S", default="E24", help=SERIES_HELP)
    p.add_argument("--save", metavar="FILE", help="also write the result as a session file")
    add_amp_options(p)
    p.add_argument("--json", action="store_true", help="print one JSON object")


def target_options(args) -> dict:
    """The target and series as typed, keyed as :func:`bandsmith.design_circuit` takes them; a missing one is bad input."""
    if args.f0 is None:
        raise InputError("f0", "missing; give the centre frequency, e.g. --f0 2.4k")
    if args.q is None and args.bw is None:
        raise InputError("q", "missing; give --q Q or --bw BANDWIDTH")
    if args.gain is None:
        raise InputError("gain", "missing; give the centre-gain magnitude, e.g. --gain 4")
    return {"f0_hz": args.f0, "q": args.q, "bw_hz": args.bw, "gain": args.gain, "series": args.series}


def configure(p):
    p.add_argument("topology", help="circuit id (see `bandsmith topologies`)")
    add_target_options(p)
    p.add_argument("--fix", action="append", default=[], metavar="REF=VALUE", help="pin a part (repeatable), e.g. --fix C1=10n")


def print_design(report: api.DesignReport) -> None:
    """The readable form of one design."""
    r = report.result
    topo = get_topology(r.topology_id)
    s = r.spec
    print(f"{topo.id}: {topo.title}")
    print(
        f"target: f0 {format_value(s.f0_hz, 'Hz')}, Q {s.q:.5g} (bandwidth {format_value(s.bw_hz, 'Hz')}), "
        f"centre gain {'−' if topo.inverting else '+'}{s.gain:.5g}; parts from {r.series}"
    )
    if not r.feasible:
        print(f"not feasible: {r.reason}")
        if r.exact:
            rows = [[ref, format_value(v, PART_UNITS[topo.component(ref).kind], digits=5)] for ref, v in r.exact.items()]
            print(table(rows, header=["part", "exact"]))
        return
    rows = []
    for ref, v in r.chosen.items():
        unit = PART_UNITS[topo.component(ref).kind]
        mark = "pinned" if ref in r.fixed else ""
        rows.append([ref, format_value(r.exact[ref], unit, digits=5), format_value(v, unit, digits=4), mark])
    print()
    print(table(rows, header=["part", "exact", "chosen", ""]))
    print()
    f = r.ideal.item()
    e = r.errors
    target_gain = -s.gain if topo.inverting else s.gain
    print(table(
        [
            ["f0", format_value(s.f0_hz, "Hz", digits=5), format_value(f.f0_hz, "Hz", digits=5), signed_error(e["f0_pct"])],
            ["Q", f"{s.q:.5g}", f"{f.q:.5g}", signed_error(e["q_pct"])],
            ["centre gain", f"{target_gain:.5g}", f"{f.gain_center:.5g}", signed_error(e["gain_db"], "dB")],
        ],
        header=["figure", "target", "chosen parts", "error"],
    ))
    if r.search is not None and math.isfinite(r.search.weighted):
        print(f"(searched {r.search.combinations} combinations; weighted error {r.search.weighted:.3g}, "
              f"each part rounded alone {r.search.weighted_rounded:.3g})")
    for title, items in (("notes", r.notes), ("warnings", r.warnings)):
        if items:
            print()
            print(f"{title}:")
            for item in items:
                print(f"  - {item}")
    j = report.to_json()
    if j["actual"] is not None:
        print()
        gbw = format_value(j["opamp"]["gbw_hz"], "Hz")
        act = figures_rows(j["actual"])
        print(table([row + [a[1]] for row, a in zip(figures_rows(j["ideal"]), act)], header=["figure", "ideal op-amp", f"GBW {gbw}"]))
    print()
    print(table(requirements_rows(j["requirements"]), header=["amplifier needs", ""]))
    print()
    print(sensitivity_table(j["sensitivity"]))


def run(args) -> int:
    report = api.design_circuit(args.topology, **target_options(args), fix=args.fix, **amp_options(args))
    save_report(args, report)
    return emit(args, report.to_json(), lambda _out: print_design(report), written=[f"session written to {args.save}"] if args.save else [])


COMMAND = Command("design", "part values of one circuit for a target f0, Q (or bandwidth) and gain", configure, run, order=40)
