"""``bandsmith cascade``: a higher-order band-pass as a chain of second-order stages."""

from __future__ import annotations

from bandsmith import api
from bandsmith.common.units import PART_UNITS
from bandsmith.chain.cascade import AUTO
from bandsmith.circuits import get_topology
from bandsmith.chain.prototypes import RESPONSES
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, add_amp_options, amp_options, emit, save_report
from bandsmith.app.cli.text import table


def configure(p):
    p.add_argument("--response", metavar="NAME", help=f"prototype family: {', '.join(RESPONSES)}")
    p.add_argument("--order", metavar="N", help="prototype order 1 to 8 (the band-pass has N stages), or auto: the least meeting the --reject points")
    p.add_argument("--f0", metavar="F", help="geometric centre of the band (Hz), with --bw")
    p.add_argument("--bw", metavar="B", help="bandwidth f_high − f_low (Hz)")
    p.add_argument("--f-low", metavar="F1", help="lower band edge (Hz): −3 dB, or the ripple-band edge for chebyshev")
    p.add_argument("--f-high", metavar="F2", help="upper band edge (Hz)")
    p.add_argument("--ripple-db", metavar="R", help="chebyshev passband ripple in dB (default 0.5)")
    p.add_argument("--gain", metavar="G", help="gain magnitude at the geometric centre √(f_low·f_high) (default 1)")
    p.add_argument("--circuit", metavar="ID", default=AUTO, help="auto (per stage: the best verdict, then the nearest fit and the ranking) or a circuit id for every stage")
    p.add_argument("--series", metavar="S", default="E24", help="E6 … E192 or exact (default E24)")
    p.add_argument("--reject", metavar="F=DB", action="append", default=[],
                   help="attenuation of at least DB dB below the centre gain at frequency F (repeatable); makes a mask")
    p.add_argument("--pass-loss-db", metavar="L", help="loss allowed at the pass-band edges with a mask (butterworth, below 3.01 dB; chebyshev: its ripple)")
    p.add_argument("--parts-alone", action="store_true",
                   help="choose each stage's standard values alone (default: all stages together, for the least in-band deviation of the whole chain)")
    add_amp_options(p)
    p.add_argument("--save", metavar="FILE", help="write a session file with the chain")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def _num(x, unit="", digits=5):
    if x is None:
        return "—"
    if unit == "dB":
        d = min(digits, 3)
        return f"{round(x, d) + 0.0:.{d}f} dB"
    return format_value(x, unit, digits=digits)


def _parts(circuit: str, chosen: dict) -> str:
    topo = get_topology(circuit)
    return " ".join(f"{ref}={format_value(v, PART_UNITS[topo.component(ref).kind], digits=3)}" for ref, v in chosen.items() if v > 0 or topo.component(ref).required)


def print_verdicts(out: dict) -> None:
    """The chain's verdict and reasons, then each stage's verdict and its first reasons."""
    print(f"chain: {out['verdict']}")
    for r in out["reasons"]:
        print(f"  - {r['text']}")
    for sec in out["sections"]:
        circuit = f" ({sec['circuit']})" if sec["circuit"] else ""
        print(f"stage {sec['index']}{circuit}: {sec['verdict']}")
        for r in sec["reasons"]:
            print(f"  - {r['text']}")
    print()


def print_readable(out: dict) -> None:
    print_verdicts(out)
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
                sec["verdict"],
                _num(sec["f0_hz"], "Hz"),
                f"{sec['q']:.4g}",
                f"{sec['gain']:.4g}",
                _num(sec["peak_internal_gain_db"], "dB", 2),
                _num(req.get("gbw_hz"), "Hz", 3),
                _parts(sec["circuit"], sec["chosen"]) if sec["feasible"] else "not built (below)",
            ]
        )
    print(table(rows, header=["stage", "circuit", "verdict", "f0", "Q", "gain", "peak so far", "needs GBW", "parts"]))
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
    j = out.get("joint")
    if j is not None and j["passband_dev_alone_db"] is not None:
        rows.append(["parts chosen together", f"{_num(j['passband_dev_joint_db'], 'dB', 3)} off in the band; each stage alone {_num(j['passband_dev_alone_db'], 'dB', 3)}"])
    print("whole chain")
    width = max(len(r[0]) for r in rows)
    for label, value in rows:
        print(f"  {label.ljust(width)}  {value}")
    if out.get("mask") is not None:
        print_mask(out)


def print_mask(out: dict) -> None:
    """The mask's margins, as measured on the built chain."""
    print()
    how = "the least order meeting it" if out.get("order_auto") else "the order given"
    print(f"mask (order {out['order']}, {how}; measured with the {out['mask_on']}): {'met' if out['mask_met'] else 'NOT met'}")
    rows = [[_num(p["f_hz"], "Hz"), f"≥ {p['required_db']:.4g} dB down", f"{p['achieved_db']:.4g} dB down", f"{p['margin_db']:+.3f} dB"] for p in out["mask"]]
    rows += [[_num(p["f_hz"], "Hz"), f"≤ {p['allowed_db']:.4g} dB loss", f"{p['loss_db']:.4g} dB loss", f"{p['margin_db']:+.3f} dB"] for p in out["pass_band"]]
    print(table(rows, header=["at", "required", "achieved", "margin"]))
    fams = ", ".join(f"{k} {v if v is not None else '> 8'}" for k, v in out["orders_by_family"].items())
    print(f"least order per family: {fams}")
    for n in out.get("mask_notes", []):
        print(f"note: {n}")


def run(args) -> int:
    report = api.cascade(
        response=args.response,
        order=args.order,
        f0_hz=args.f0,
        bw_hz=args.bw,
        f_low_hz=args.f_low,
        f_high_hz=args.f_high,
        ripple_db=args.ripple_db,
        gain=args.gain if args.gain is not None else 1.0,
        circuit=args.circuit,
        series=args.series,
        **amp_options(args),
        reject=args.reject or None,
        pass_loss_db=args.pass_loss_db,
        joint=not args.parts_alone,
    )
    out = report.to_json()
    save_report(args, report)
    return emit(args, out, print_readable, written=[f"saved {args.save}"] if args.save else [])


COMMAND = Command("cascade", "design a higher-order band-pass as a chain of second-order stages", configure, run, order=60)
