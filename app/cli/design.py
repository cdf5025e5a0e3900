"""``bandsmith design``: part values of one circuit for a target (f0, Q or bandwidth, centre gain)."""

from __future__ import annotations

import math

from bandsmith.circuits import get_topology
from bandsmith.design.designer import DesignResult, Spec, design, design_json
from bandsmith.files.design_session import design_session
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import SERIES_NAMES
from bandsmith.files.session import save_session
from bandsmith.common.values import format_value, parse_positive

from bandsmith.app.cli.common import check_save_path, Command, add_amp_options, conditions_from, print_json, split_assignments
from bandsmith.app.cli.text import UNITS, figures_rows, requirements_rows, sensitivity_table, signed_error, table

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


def spec_from(args) -> Spec:
    """The target from ``--f0``, ``--q``/``--bw`` and ``--gain`` (each required)."""
    if args.f0 is None:
        raise InputError("f0", "missing; give the centre frequency, e.g. --f0 2.4k")
    if args.q is None and args.bw is None:
        raise InputError("q", "missing; give --q Q or --bw BANDWIDTH")
    if args.gain is None:
        raise InputError("gain", "missing; give the centre-gain magnitude, e.g. --gain 4")
    f0 = parse_positive(args.f0, field="f0")
    gain = parse_positive(args.gain, field="gain")
    if args.bw is not None:
        return Spec.from_bandwidth(f0, parse_positive(args.bw, field="bw"), gain)
    return Spec(f0_hz=f0, q=parse_positive(args.q, field="q"), gain=gain)


def series_from(args) -> str:
    text = (args.series or "E24").strip()
    if text.lower() == "exact":
        return "exact"
    name = text.upper()
    if name not in SERIES_NAMES:
        raise InputError("series", f"{text!r} is not a series; choose one of {', '.join(SERIES_NAMES)} or exact")
    return name


def configure(p):
    p.add_argument("topology", help="circuit id (see `bandsmith topologies`)")
    add_target_options(p)
    p.add_argument("--fix", action="append", default=[], metavar="REF=VALUE", help="pin a part (repeatable), e.g. --fix C1=10n")


def print_design(r: DesignResult) -> None:
    """The readable form of one design."""
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
            rows = [[ref, format_value(v, UNITS[topo.component(ref).kind], digits=5)] for ref, v in r.exact.items()]
            print(table(rows, header=["part", "exact"]))
        return
    rows = []
    for ref, v in r.chosen.items():
        unit = UNITS[topo.component(ref).kind]
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
    j = design_json(r)
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
    spec = spec_from(args)
    series = series_from(args)
    conditions = conditions_from(args)
    topo = get_topology(args.topology)
    fixed = split_assignments(args.fix)
    result = design(topo.id, spec, series=series, fixed=fixed, conditions=conditions)
    check_save_path(args.save)
    if args.save:
        save_session(design_session(spec, [result], series=series, conditions=conditions), args.save)
    if args.json:
        print_json(design_json(result))
    else:
        print_design(result)
        if args.save:
            print()
            print(f"session written to {args.save}")
    return 0


COMMAND = Command("design", "part values of one circuit for a target f0, Q (or bandwidth) and gain", configure, run, order=40)
