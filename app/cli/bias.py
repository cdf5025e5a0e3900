"""``bandsmith bias``: one circuit built for a single supply (reference, coupling, DC node voltages, swing)."""

from __future__ import annotations

from bandsmith import api
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, print_json
from bandsmith.app.cli.text import table


def configure(p):
    p.add_argument("topology", help="circuit id (see `bandsmith topologies`)")
    p.add_argument("parts", nargs="*", metavar="REF=VALUE", help="part values, e.g. R1=4k7 C1=10n")
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


def run(args) -> int:
    result = api.bias(
        args.topology, args.parts, supply_v=args.supply, reference=args.reference, divider_ohm=args.divider,
        rload_ohm=args.rload, vin_v=args.vin, headroom_v=args.headroom, bias_current_a=args.ibias,
        corner_ratio=api.parse_value(args.corner_ratio, field="corner-ratio"),
    ).to_json()
    if args.json:
        print_json(result)
    else:
        print_readable(result)
    return 0


COMMAND = Command("bias", "build one circuit for a single supply: reference, coupling, DC node voltages, swing", configure, run, order=76)
