"""``bandsmith bias``: one circuit built for a single supply (reference, coupling, DC node voltages, swing)."""

from __future__ import annotations

from bandsmith import api
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, add_circuit_arguments, emit, tempcos_from
from bandsmith.app.cli.text import table


def configure(p):
    add_circuit_arguments(p, parts_help="part values, e.g. R1=4k7 C1=10n")
    p.add_argument("--supply", metavar="V", required=True, help="the single supply in volts (the other rail is ground)")
    p.add_argument("--reference", choices=("divider", "buffered"), default="divider",
                   help="mid-supply reference: a divider with a bypass capacitor (default) or a buffered one")
    p.add_argument("--divider", metavar="R", default="100k", help="each divider resistor (default 100k)")
    p.add_argument("--rload", metavar="R", default="10k", help="load behind the output coupling capacitor (default 10k)")
    p.add_argument("--vin", metavar="V", default="1", help="input peak amplitude in volts (default 1)")
    p.add_argument("--headroom", metavar="V", default="0", help="how close to a rail the output swings, volts (default 0)")
    p.add_argument("--ibias", metavar="A", default="0", help="op-amp input bias current into each pin, amperes (default 0)")
    p.add_argument("--corner-ratio", metavar="K", default="10",
                   help="coupling corners this many times below the band's lower edge (default 10, at least 10)")
    p.add_argument("--cp", metavar="F", help="the inductor's parallel (winding) capacitance: its self-resonance")
    p.add_argument("--temp-range", metavar=("T1", "T2"), nargs=2, help="drift of f0, Q and gain between two temperatures, °C")
    p.add_argument("--tc", metavar="KIND=PPM", action="append", default=[],
                   help="temperature coefficient in ppm/K by kind or part (default R=50 C=0 L=200; repeatable)")
    p.add_argument("--rated", metavar="V", default="50", help="a class-2 capacitor's rated voltage (default 50)")
    p.add_argument("--spice", metavar="OUT.cir", help="also write a SPICE netlist with the bias network")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def print_readable(r: dict) -> None:
    print(f"single supply {r['supply_v']:g} V, reference {r['reference']}: "
          f"{format_value(r['reference_v'], 'V', digits=4)}, {format_value(r['reference_impedance_ohm'], 'Ω')} DC")
    if r["bypass_f"] is not None:
        print(f"bypass {format_value(r['bypass_f'], 'F')}: corner {format_value(r['bypass_corner_hz'], 'Hz', digits=3)}, "
              f"|Z| at f0 {format_value(r['reference_impedance_f0_ohm'], 'Ω', digits=3)}, "
              f"settles to 0.1 % in {format_value(r['settle_s'], 's', digits=3)}")
    print()
    print(table([[n, format_value(v, "V", digits=5)] for n, v in r["node_dc_v"].items()], header=["node", "DC"]))
    print()
    print(table([[c["ref"], c["where"], format_value(c["capacitance_f"], "F"), format_value(c["resistance_ohm"], "Ω", digits=3),
                  format_value(c["corner_hz"], "Hz", digits=3)] for c in r["coupling"]],
                header=["coupling", "at", "value", "into", "corner"]))
    for b in r["bias_resistors"]:
        print(f"bias resistor {b['ref']} = {format_value(b['value'], 'Ω')} from {b['nodes'][0]} to {b['nodes'][1]}")
    print()
    fs, fb = r["figures_split_supply"], r["figures"]
    print(table([["f0", format_value(fs["f0_hz"], "Hz", digits=5), format_value(fb["f0_hz"], "Hz", digits=5)],
                 ["Q", f"{fs['q']:.4g}", f"{fb['q']:.4g}"],
                 ["gain", f"{fs['gain_center']:.4g}", f"{fb['gain_center']:.4g}"]],
                header=["", "split supply", "single supply"]))
    print(f"output peak {format_value(r['out_peak_v'], 'V', digits=3)}; swing margin to the rails "
          f"{format_value(r['swing_margin_v'], 'V', digits=3)}")
    for n in r["notes"]:
        print(f"note: {n}")
    _print_physics(r["physics"])


def _pct(d: dict) -> str:
    return f"f0 {d['f0_pct']:+.3g} %, Q {d['q_pct']:+.3g} %, gain {d['gain_pct']:+.3g} %"


def _print_physics(ph) -> None:
    if not ph:
        return
    print()
    for c in ph["capacitors"]:
        t = c["x7r_temperature_spread"]
        print(f"{c['ref']}: {c['dielectric']}; as X7R over -55…125 °C: {_pct(t['low'])} to {_pct(t['high'])}")
    for c in ph["coupling_if_x7r"]:
        print(f"{c['ref']} as X7R at {c['dc_v']:.3g} V DC: corner {format_value(c['corner_hz'], 'Hz', digits=3)} → "
              f"{format_value(c['corner_hz_x7r_biased'], 'Hz', digits=3)}")
    for i in ph["inductors"]:
        c = i["core_spread"]
        print(f"{i['ref']}: core ±{100 * i['core_tolerance']:.3g} %: {_pct(c['low'])} to {_pct(c['high'])}")
        if i["srf_hz"] is None:
            continue
        print(f"{i['ref']}: self-resonance {format_value(i['srf_hz'], 'Hz', digits=4)} ({i['srf_over_f0']:.3g}× f0); "
              f"with its winding capacitance {_pct(i['change_with_cp'])}")
    if ph["drift"]:
        d = ph["drift"]
        print(f"drift at {d['t_low_c']:g} °C: {_pct(d['at_low'])}; at {d['t_high_c']:g} °C: {_pct(d['at_high'])}")
    for w in ph["warnings"]:
        print(f"warning: {w}")


def run(args) -> int:
    biased = api.bias(
        args.topology, args.parts, supply_v=args.supply, reference=args.reference, divider_ohm=args.divider,
        rload_ohm=args.rload, vin_v=args.vin, headroom_v=args.headroom, bias_current_a=args.ibias,
        corner_ratio=api.parse_value(args.corner_ratio, field="corner-ratio"),
        cp_f=args.cp, temp_range_c=args.temp_range, tempco=tempcos_from(args.tc), rated_v=args.rated,
    )
    result = biased.to_json()
    if args.spice:
        from bandsmith.board.spice import biased_spice
        from bandsmith.files.exports import write_atomic

        if not args.spice.strip():
            raise api.InputError("spice", "give the name of the file to write")
        try:
            write_atomic(args.spice, biased_spice(biased))
        except api.InputError as exc:
            raise api.InputError("spice", exc.reason) from None
        except OSError as exc:
            raise api.InputError("spice", f"cannot write {args.spice!r}: {exc.strerror or exc}") from None
    return emit(args, result, print_readable)


COMMAND = Command("bias", "build one circuit for a single supply: reference, coupling, DC node voltages, swing", configure, run, order=76)
