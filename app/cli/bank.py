"""``bandsmith bank``: many band-pass channels designed together (a filter bank)."""

from __future__ import annotations

from pathlib import Path

from bandsmith import api
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, emit, save_report
from bandsmith.app.cli.text import table


def configure(p):
    p.add_argument("--octave-fraction", metavar="B", help="bands of 1/B octave on the IEC 61260-1 base-ten centres (1 octave, 3 third-octave …)")
    p.add_argument("--from", dest="from_hz", metavar="F1", help="lowest centre (Hz), snapped to the nearest band")
    p.add_argument("--to", dest="to_hz", metavar="F2", help="highest centre (Hz), snapped to the nearest band")
    p.add_argument("--centres", metavar="F,F,…", help="centres typed as a comma-separated list (Hz)")
    p.add_argument("--count", metavar="N", help="instead of --octave-fraction: N centres from F1 to F2, evenly spaced on a log scale")
    p.add_argument("--linear", action="store_true", help="with --count: evenly spaced in hertz instead")
    p.add_argument("--q", metavar="Q", help="Q of every channel (default: from the band width, neighbours crossing at −3 dB)")
    p.add_argument("--gain", metavar="G", default="1", help="centre-gain magnitude of every channel (default 1)")
    p.add_argument("--circuit", metavar="ID", default="auto", help="auto (the verdicts' choice for the hardest channel), per-channel, or a circuit id")
    p.add_argument("--series", metavar="S", default="E24", help="E6 … E192 or exact (default E24)")
    p.add_argument("--gbw", metavar="F", help="op-amp gain-bandwidth (Hz); default an ideal op-amp")
    p.add_argument("--netlist", metavar="OUT.cir", help="write one SPICE netlist of every channel")
    p.add_argument("--parts", metavar="OUT.csv", help="write the parts list with quantities")
    p.add_argument("--save", metavar="FILE", help="write a session file keeping the bank (and its channels as candidates)")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def _db(x):
    return "—" if x is None else f"{round(x, 2) + 0.0:.2f}"  # no "-0.00"


def print_readable(out: dict) -> None:
    ch = out["channels"]
    rule = out["rule"]
    how = {
        "fraction": lambda: f"1/{rule['b']}-octave bands ({rule['standard']})",
        "log": lambda: "evenly spaced on a log scale",
        "linear": lambda: "evenly spaced in hertz",
    }.get(rule.get("kind"), lambda: "centres as listed")()
    print(f"{len(ch)} channels, {how}, parts {out['series']}")
    print(f"circuit: {out['circuit_reason']}")
    print()
    rows = []
    for c, iso in zip(ch, out["isolation_neighbours_db"]):
        fig = c["figures"]
        rows.append([
            str(c["index"]),
            format_value(c["label_hz"], "Hz") if c["label_hz"] is not None else "",
            format_value(c["target_f0_hz"], "Hz", digits=5),
            format_value(c["f0_hz"], "Hz", digits=5),
            f"{fig['q']:.4g}" if fig["q"] is not None else "—",
            _db(fig["gain_center_db"]),
            _db(iso["below"]), _db(iso["above"]),
            c["circuit"],
        ])
    print(table(rows, header=["ch", "label", "target f0", "f0", "Q", "gain dB", "iso ↓ dB", "iso ↑ dB", "circuit"]))
    print()
    op = out["opamps"]
    print(f"distinct values: {out['distinct_values']} (designing each channel alone: {out['distinct_values_alone']})")
    print(f"op-amps: {op['opamps']} in {op['quads']} quad(s) and {op['duals']} dual(s)")
    print(f"centre gains within {out['centre_gain_spread_db']:.3g} dB of each other")
    lo, hi = out["covered_band_hz"]
    print(f"sum of the channels: ripple {out['sum_ripple_db']:.3g} dB from {format_value(lo, 'Hz')} to {format_value(hi, 'Hz')}")
    print()
    print(table([[ln["text"], str(ln["quantity"])] for ln in out["bom_lines"]], header=["value", "qty"]))


def _write(path: str, text: str) -> None:
    from bandsmith.files.exports import write_atomic

    write_atomic(Path(path), text)


def run(args) -> int:
    report = api.filter_bank(
        octave_fraction=args.octave_fraction,
        from_hz=args.from_hz,
        to_hz=args.to_hz,
        centres_hz=args.centres,
        count=args.count,
        linear=args.linear,
        q=args.q,
        gain=args.gain,
        circuit=args.circuit,
        series=args.series,
        gbw_hz=args.gbw,
    )
    out = report.to_json()
    if args.netlist:
        _write(args.netlist, report.netlist(gbw_hz=args.gbw))
    if args.parts:
        _write(args.parts, report.parts_csv())
    save_report(args, report)
    return emit(args, out, print_readable, written=[f"wrote {p}" for p in (args.netlist, args.parts, args.save) if p])


COMMAND = Command("bank", "design a filter bank: many band-pass channels on a rule or a list, designed together", configure, run, order=65)
