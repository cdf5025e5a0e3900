"""``bandsmith tolerance``: Monte Carlo spread, yield and worst case of one candidate."""

from __future__ import annotations

from bandsmith import api
from bandsmith.common.units import PART_UNITS
from bandsmith.circuits import get_topology
from bandsmith.spread.tolerance import STAT_KEYS
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, add_circuit_arguments, add_opamp_options, add_source_option, emit, opamp_options
from bandsmith.app.cli.text import figures_rows, table


def configure(p):
    add_circuit_arguments(p)
    p.add_argument(
        "--tol",
        action="append",
        default=[],
        metavar="KIND_OR_REF=P",
        help="tolerance of a kind (R, C, L) or of one part (C2=2%%); repeatable; defaults R=1%% C=5%% L=10%%",
    )
    p.add_argument("--dist", choices=("uniform", "normal"), default="uniform", help="uniform ±p, or normal with p = 3σ (default uniform)")
    p.add_argument("--trials", metavar="N", help="number of Monte Carlo trials (default 10000)")
    p.add_argument("--seed", metavar="S", help="random seed, a whole number (default 1); the same seed gives the same numbers")
    add_opamp_options(p)
    p.add_argument("--gbw-tol", metavar="P", help="spread of the GBW (needs --gbw; default 0)")
    p.add_argument("--window-f0", metavar="P", help="yield window for f0 around nominal (default ±5%%)")
    p.add_argument("--window-q", metavar="P", help="yield window for Q around nominal (default ±10%%)")
    p.add_argument("--window-gain-db", metavar="D", help="yield window for the centre gain in dB (default ±1)")
    add_source_option(p)
    p.add_argument("--json", action="store_true", help="print one JSON object")


def options_from(args) -> dict:
    """The spread options as typed, keyed as :func:`bandsmith.tolerance` takes them."""
    tol = api.split_assignments(args.tol, field="tol", form="KIND_OR_REF=P; write e.g. R=1% or C2=2%")
    return {
        "tolerances": tol, "dist": args.dist, "trials": args.trials, "seed": args.seed, "gbw_tol": args.gbw_tol,
        "window_f0": args.window_f0, "window_q": args.window_q, "window_gain_db": args.window_gain_db,
        **opamp_options(args),
        "rsource_ohm": getattr(args, "rsource", None),
    }


def _cell(key: str, v) -> str:
    if v is None:
        return "—"
    if key == "f0_hz":
        return format_value(v, "Hz", digits=5)
    if key == "gain_center_db":
        return f"{v:.3f}"
    return f"{v:.4g}"


def _corner(c: dict) -> str:
    return " ".join(f"{ref}{'+' if p > 0 else '−'}{100 * abs(p):g}%" for ref, p in c.items()) or "nominal"


def print_readable(r: dict) -> None:
    topo = get_topology(r["topology"])
    amp = "ideal op-amp" if r["opamp"] is None else f"GBW {format_value(r['opamp']['gbw_hz'], 'Hz')}"
    if r["opamp"] is not None and r.get("gbw_tol"):
        amp += f" ±{100 * r['gbw_tol']:g} %"
    print(f"{topo.id}: {r['trials']} trials, {r['dist']}, seed {r['seed']}, {amp}")
    parts = [
        [ref, format_value(v, PART_UNITS[topo.component(ref).kind]), f"±{100 * r['tolerances'][ref]:g} %" if ref in r["tolerances"] else "—"]
        for ref, v in r["components"].items()
    ]
    print(table(parts, header=["part", "value", "tolerance"]))
    print()
    print(table(figures_rows(r["nominal"]), header=["nominal", ""]))
    print()
    names = {"f0_hz": "f0", "q": "Q", "gain_center_db": "gain (dB)"}
    rows = [[names[k]] + [_cell(k, r[k][s]) for s in STAT_KEYS] for k in names]
    print(table(rows, header=["figure"] + list(STAT_KEYS)))
    print()
    w = r["window"]
    print(
        f"yield {100 * r['yield']:.2f} % within f0 ±{100 * w['f0']:g} %, Q ±{100 * w['q']:g} %, gain ±{w['gain_db']:g} dB"
        + (f"; {r['failed_trials']} trials unstable or without a peak" if r["failed_trials"] else "")
    )
    print()
    wc = r["worst_case"]
    print(f"worst case ({wc['method']}, {wc['corner_count']} corners" + (f", {wc['unstable_corners']} unstable" if wc["unstable_corners"] else "") + ")")
    rows = []
    for k in names:
        lo, hi = wc[k]
        clo, chi = wc["corners"][k]
        rows.append([names[k] + " lowest", _cell(k, lo), _corner(clo)])
        rows.append([names[k] + " highest", _cell(k, hi), _corner(chi)])
    print(table(rows, header=["", "value", "corner"]))


def run(args) -> int:
    result = api.tolerance(args.topology, args.parts, **options_from(args)).to_json()
    return emit(args, result, print_readable)


COMMAND = Command("tolerance", "Monte Carlo tolerance spread, yield and worst case of one candidate", configure, run, order=40)
