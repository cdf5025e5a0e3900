"""``bandsmith trim``: which part to make adjustable for f0, Q and gain, and the correction for a measured f0."""

from __future__ import annotations

from bandsmith import api
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, add_circuit_arguments, emit, tempcos_from
from bandsmith.app.cli.text import table


def configure(p):
    add_circuit_arguments(p, parts_help="part values, e.g. R1=4k7 C1=10n")
    p.add_argument("--tol", metavar="KIND=P", action="append", default=[],
                   help="tolerance by kind or part, e.g. R=1%% C=5%% R2=0.5%% (repeatable; default R 1%%, C 5%%, L 10%%)")
    p.add_argument("--measured-f0", metavar="F", help="the built stage's measured f0 in Hz: gives the correction")
    p.add_argument("--measured", metavar="FILE", help="a measured sweep (as `bandsmith fit` reads it): fit, then correct")
    p.add_argument("--target-f0", metavar="F", help="the f0 to trim to, Hz (default the nominal f0)")
    p.add_argument("--trials", metavar="N", type=int, default=0,
                   help="Monte Carlo of f0 before and after trimming, N trials (default none)")
    p.add_argument("--window", metavar="P", default="0.5%", help="f0 window of that Monte Carlo (default 0.5%%)")
    p.add_argument("--seed", metavar="S", type=int, default=1, help="the Monte Carlo's seed (default 1)")
    p.add_argument("--temp-range", metavar=("T1", "T2"), nargs=2,
                   help="with --trials: also take each trimmed trial to a temperature between T1 and T2 °C")
    p.add_argument("--tc", metavar="KIND=PPM", action="append", default=[],
                   help="± temperature coefficient in ppm/K by kind or part (default R=50 C=30 L=200; repeatable)")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def _ohm(x) -> str:
    return "—" if x is None else format_value(x, "Ω")


def print_readable(r: dict) -> None:
    rows = []
    for fig in ("f0", "q", "gain"):
        c = r[fig]
        rows.append([fig, c["part"], f"{c['sensitivity']:+.3g}", f"{c['interaction']:.2g}", f"±{c['spread_3sigma_pct']:.3g} %",
                     _ohm(c["fixed_ohm"]), _ohm(c["trimmer_ohm"]), f"±{c['range_pct']:.3g} %",
                     "—" if c["resolution_pct"] is None else f"{c['resolution_pct']:.2g} %"])
    print(table(rows, header=["trim", "part", "S", "interaction", "3σ spread", "fixed", "trimmer", "range", "step"]))
    if r["correction"]:
        c = r["correction"]
        print()
        print(f"measured f0 {format_value(c['measured_f0_hz'], 'Hz', digits=5)} → target {format_value(c['target_f0_hz'], 'Hz', digits=5)}: "
              f"set {c['part']} from {c['old_value']:.5g} to {c['new_value']:.5g}"
              + ("" if c["in_range"] else " (outside the trimmer's range)"))
    if r["monte_carlo"]:
        m = r["monte_carlo"]
        print()
        print(f"Monte Carlo, {m['trials']} trials: f0 within ±{m['window_pct']:.3g} % in {100 * m['within_before']:.1f} % "
              f"of them as built, {100 * m['within_after']:.1f} % after trimming {r['f0']['part']}")
        if "within_after_over_temperature" in m:
            print(f"trimmed, then taken to {m['t_low_c']:g}…{m['t_high_c']:g} °C: "
                  f"{100 * m['within_after_over_temperature']:.1f} % still within the window")
    print()
    for i, step in enumerate(r["procedure"], 1):
        print(f"{i}. {step}")


def run(args) -> int:
    result = api.trim(args.topology, args.parts, tolerances=api.split_assignments(args.tol, field="tol", form="KIND=P (R=1%, C=5%, R2=0.5%)"),
                      measured_f0_hz=args.measured_f0, target_f0_hz=args.target_f0,
                      measured=args.measured, trials=args.trials, window=args.window, seed=args.seed,
                      temp_range_c=args.temp_range, tempco=tempcos_from(args.tc)).to_json()
    return emit(args, result, print_readable)


COMMAND = Command("trim", "a trim plan: the part to adjust for f0, Q and gain, trimmer and fixed resistor, correction", configure, run, order=77)
