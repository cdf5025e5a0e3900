"""``bandsmith compare``: every circuit designed for one target, side by side."""

from __future__ import annotations

import math

from bandsmith.circuits import get_topology
from bandsmith.design.compare import compare, compare_json
from bandsmith.files.design_session import design_session
from bandsmith.files.session import save_session
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import check_save_path, Command, conditions_from, print_json
from bandsmith.app.cli.design import add_target_options, series_from, spec_from
from bandsmith.app.cli.text import UNITS, signed_error, table


def configure(p):
    add_target_options(p)


def _v(x, unit="", digits=4) -> str:
    return "—" if x is None or (isinstance(x, float) and not math.isfinite(x)) else format_value(x, unit, digits=digits)


def print_compare(out: dict) -> None:
    """The readable side-by-side table of a compare object."""
    cands = out["candidates"]
    spec = out["spec"]
    print(
        f"target: f0 {format_value(spec['f0_hz'], 'Hz')}, Q {spec['q']:.5g} (bandwidth {format_value(spec['bw_hz'], 'Hz')}), "
        f"|centre gain| {spec['gain']:.5g}; parts from {out['series']}"
    )
    print()
    header = [""] + [c["topology"] for c in cands]
    refs: list[str] = []
    for c in cands:
        for ref in get_topology(c["topology"]).refs:
            if ref not in refs:
                refs.append(ref)
    rows = [["feasible"] + ["yes" if c["feasible"] else "no" for c in cands]]
    for ref in refs:
        row = [ref]
        for c in cands:
            topo = get_topology(c["topology"])
            if ref not in topo.refs or not c["feasible"]:
                row.append("—")
            else:
                row.append(_v(c["chosen"][ref], UNITS[topo.component(ref).kind]))
        rows.append(row)

    def fig(key, unit="", digits=5):
        return [_v(c["ideal"][key], unit, digits) if c["ideal"] else "—" for c in cands]

    def err(key, unit="%"):
        return [signed_error(c["errors"][key], unit) if c["errors"] else "—" for c in cands]

    def req(key, unit="", scale=1.0):
        return [_v(c["requirements"][key] * scale if c["requirements"] and c["requirements"][key] is not None else None, unit) for c in cands]

    rows += [
        ["f0"] + fig("f0_hz", "Hz"),
        ["Q"] + fig("q"),
        ["centre gain"] + fig("gain_center"),
        ["f0 error"] + err("f0_pct"),
        ["Q error"] + err("q_pct"),
        ["gain error"] + err("gain_db", "dB"),
        ["required GBW"] + req("gbw_hz", "Hz"),
        ["slew, sine"] + req("slew_sine_v_per_us", "V/µs"),
        ["slew, step"] + req("slew_step_v_per_us", "V/µs"),
        ["output current"] + req("iout_peak_ma", "A", 1e-3),
        ["R spread"] + [f"{c['spread']['r']:.3g} : 1" if c["spread"] and c["spread"]["r"] else "—" for c in cands],
        ["C spread"] + [f"{c['spread']['c']:.3g} : 1" if c["spread"] and c["spread"]["c"] else "—" for c in cands],
        ["parts"] + [str(c["part_count"]) for c in cands],
        ["inductor"] + ["yes" if c["needs_inductor"] else "no" for c in cands],
        ["warnings"] + [str(len(c["warnings"])) for c in cands],
    ]
    print(table(rows, header=header))
    for c in cands:
        lines = ([f"not feasible: {c['reason']}"] if not c["feasible"] else []) + [f"warning: {w}" for w in c["warnings"]]
        if lines:
            print()
            print(f"{c['topology']}:")
            for line in lines:
                print(f"  - {line}")


def run(args) -> int:
    spec = spec_from(args)
    series = series_from(args)
    conditions = conditions_from(args)
    results = compare(spec, series=series, conditions=conditions)
    check_save_path(args.save)
    if args.save:
        save_session(design_session(spec, results, series=series, conditions=conditions), args.save)
    out = compare_json(spec, results)
    if args.json:
        print_json(out)
    else:
        print_compare(out)
        if args.save:
            print()
            print(f"session written to {args.save}")
    return 0


COMMAND = Command("compare", "design every circuit for one target and compare them side by side", configure, run, order=45)
