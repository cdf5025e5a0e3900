"""``bandsmith cascade``: a higher-order band-pass as a chain of second-order stages."""

from __future__ import annotations

from bandsmith.chain.cascade import AUTO, ChainSettings, cascade_json, cascade_session, circuit_choices, design_cascade
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.chain.prototypes import RESPONSES
from bandsmith.common.values import format_value, parse_positive

from bandsmith.app.cli.common import check_save_path, Command, add_amp_options, conditions_from, print_json
from bandsmith.app.cli.text import UNITS, table


def configure(p):
    p.add_argument("--response", metavar="NAME", help=f"prototype family: {', '.join(RESPONSES)}")
    p.add_argument("--order", metavar="N", help="prototype order 1 to 8 (the band-pass has N stages)")
    p.add_argument("--f0", metavar="F", help="geometric centre of the band (Hz), with --bw")
    p.add_argument("--bw", metavar="B", help="bandwidth f_high − f_low (Hz)")
    p.add_argument("--f-low", metavar="F1", help="lower band edge (Hz): −3 dB, or the ripple-band edge for chebyshev")
    p.add_argument("--f-high", metavar="F2", help="upper band edge (Hz)")
    p.add_argument("--ripple-db", metavar="R", help="chebyshev passband ripple in dB (default 0.5)")
    p.add_argument("--gain", metavar="G", help="gain magnitude at the geometric centre √(f_low·f_high) (default 1)")
    p.add_argument("--circuit", metavar="ID", default=AUTO, help="auto (least GBW with sane parts, per stage) or a circuit id for every stage")
    p.add_argument("--series", metavar="S", default="E24", help="E6 … E192 or exact (default E24)")
    add_amp_options(p)
    p.add_argument("--save", metavar="FILE", help="write a session file with the chain")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def _opt(args, name: str, field: str):
    v = getattr(args, name)
    return None if v is None else parse_positive(v, field=field)


def settings_from(args) -> ChainSettings:
    """Read the command's options into :class:`ChainSettings` (InputError naming the option)."""
    if args.response is None:
        raise InputError("response", f"missing; choose one of {', '.join(RESPONSES)}")
    if args.order is None:
        raise InputError("order", "missing; give an integer from 1 to 8")
    if args.circuit not in circuit_choices():
        raise InputError("circuit", f"{args.circuit!r} is not a circuit; choose one of {', '.join(circuit_choices())}")
    return ChainSettings.from_request(
        args.response,
        args.order,
        f0_hz=_opt(args, "f0", "f0"),
        bw_hz=_opt(args, "bw", "bw"),
        f_low_hz=_opt(args, "f_low", "f-low"),
        f_high_hz=_opt(args, "f_high", "f-high"),
        ripple_db=_opt(args, "ripple_db", "ripple-db"),
        gain=_opt(args, "gain", "gain") if args.gain is not None else 1.0,
        circuit=args.circuit,
        series=args.series,
    )


def _num(x, unit="", digits=5):
    if x is None:
        return "—"
    if unit == "dB":
        d = min(digits, 3)
        return f"{round(x, d) + 0.0:.{d}f} dB"
    return format_value(x, unit, digits=digits)


def _parts(circuit: str, chosen: dict) -> str:
    topo = get_topology(circuit)
    return " ".join(f"{ref}={format_value(v, UNITS[topo.component(ref).kind], digits=3)}" for ref, v in chosen.items() if v > 0 or topo.component(ref).required)


def print_readable(out: dict) -> None:
    s = out["spec"]
    ripple = f" {s['ripple_db']:g} dB" if s["ripple_db"] is not None else ""
    print(
        f"{s['response']}{ripple}, order {s['order']}: band {_num(s['f_low_hz'], 'Hz')} … {_num(s['f_high_hz'], 'Hz')} "
        f"(centre {_num(s['f0_hz'], 'Hz')}, Q {s['q']:.4g}), gain {s['gain']:.4g} at the centre, parts {s['series']}"
    )
    print()
    rows = []
    for sec in out["sections"]:
        req = sec["requirements"] or {}
        rows.append(
            [
                str(sec["index"]),
                sec["circuit"] or "—",
                _num(sec["f0_hz"], "Hz"),
                f"{sec['q']:.4g}",
                f"{sec['gain']:.4g}",
                _num(sec["peak_internal_gain_db"], "dB", 2),
                _num(req.get("gbw_hz"), "Hz", 3),
                _parts(sec["circuit"], sec["chosen"]) if sec["feasible"] else "not built (below)",
            ]
        )
    print(table(rows, header=["stage", "circuit", "f0", "Q", "gain", "peak so far", "needs GBW", "parts"]))
    print()
    if not out["feasible"]:
        print(f"not buildable: {out['reason']}")
        return
    for w in out["warnings"]:
        print(f"warning: {w}")
    for sec in out["sections"]:
        for w in sec["warnings"]:
            print(f"stage {sec['index']}: {w}")
    if out["warnings"] or any(sec["warnings"] for sec in out["sections"]):
        print()
    o = out["overall"]
    rows = [
        ["band edges", f"{_num(o['f_low_hz'], 'Hz')} / {_num(o['f_high_hz'], 'Hz')} (at {o['edge_level_db']:.3g} dB)"],
        ["−3 dB points", f"{_num(o['f_low_3db_hz'], 'Hz')} / {_num(o['f_high_3db_hz'], 'Hz')}"],
        ["centre", _num(o["f0_hz"], "Hz")],
        ["centre gain", _num(o["gain_center_db"], "dB", 3)],
        ["peak gain", _num(o["peak_gain_db"], "dB", 3)],
        ["ripple", _num(o["ripple_db"], "dB", 3)],
        ["off the reference", f"{_num(out['reference_max_dev_db'], 'dB', 3)} over the sweep, {_num(out['passband_max_dev_db'], 'dB', 3)} in the band"],
        ["needs GBW", _num(out["required_gbw_hz"], "Hz", 3) + " (the most any stage needs)"],
    ]
    if out["overall_actual"] is not None:
        a = out["overall_actual"]
        rows.append(["with the op-amp", f"edges {_num(a['f_low_hz'], 'Hz')} / {_num(a['f_high_hz'], 'Hz')}, centre gain {_num(a['gain_center_db'], 'dB', 4)}, {_num(out['actual_max_dev_db'], 'dB', 3)} off the reference"])
    print("whole chain")
    width = max(len(r[0]) for r in rows)
    for label, value in rows:
        print(f"  {label.ljust(width)}  {value}")


def run(args) -> int:
    settings = settings_from(args)
    conditions = conditions_from(args)
    result = design_cascade(settings, conditions=conditions)
    out = cascade_json(result)
    check_save_path(args.save)
    if args.save:
        from bandsmith.files.session import save_session

        save_session(cascade_session(result), args.save)
    if args.json:
        print_json(out)
    else:
        print_readable(out)
        if args.save:
            print(f"\nsaved {args.save}")
    return 0


COMMAND = Command("cascade", "design a higher-order band-pass as a chain of second-order stages", configure, run, order=60)
