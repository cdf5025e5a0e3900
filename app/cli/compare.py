"""``bandsmith compare``: every circuit designed for one target, side by side."""

from __future__ import annotations

import math

from bandsmith import api
from bandsmith.common.units import PART_UNITS
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value, parse_fraction, parse_positive
from bandsmith.verdict import VerdictLimits

from bandsmith.app.cli.common import Command, amp_options, emit, save_report
from bandsmith.app.cli.design import add_target_options, target_options
from bandsmith.app.cli.text import signed_error, table


# Verdict limit options: (option, VerdictLimits field, reader, help).
_LIMIT_OPTIONS = (
    ("--max-gbw", "gbw_max_hz", "value", "required GBW above this makes a candidate not buildable (default 50 MHz)"),
    ("--ordinary-gbw", "gbw_ordinary_hz", "value", "required GBW above this makes it marginal (default 10 MHz)"),
    ("--min-yield", "yield_min", "fraction", "yield below this makes it not buildable (default 50%%)"),
    ("--good-yield", "yield_marginal", "fraction", "yield below this makes it marginal (default 90%%)"),
    ("--max-r-spread", "r_spread_marginal", "value", "resistor spread above this makes it marginal (default 1000)"),
    ("--max-c-spread", "c_spread_marginal", "value", "capacitor spread above this makes it marginal (default 100)"),
    ("--opamp-slew", "opamp_slew_v_per_us", "value", "the op-amp's slew rate in V/µs, when known"),
    ("--opamp-iout", "opamp_iout_ma", "value", "the op-amp's output current in mA, when known"),
)


def configure(p):
    add_target_options(p)
    g = p.add_argument_group("verdict limits")
    for option, _, _, text in _LIMIT_OPTIONS:
        g.add_argument(option, metavar="X", help=text)


def limits_from(args) -> VerdictLimits:
    """The verdict limits from the command line (defaults for those not given)."""
    kw = {}
    for option, name, reader, _ in _LIMIT_OPTIONS:
        text = getattr(args, option[2:].replace("-", "_"), None)
        if text is None:
            continue
        field = option[2:]
        v = parse_fraction(text, field=field) if reader == "fraction" else parse_positive(text, field=field)
        if reader == "fraction" and not 0 < v <= 1:
            raise InputError(field, f"must be a yield above 0 and at most 100%, got {text!r}")
        kw[name] = v
    # One limit of a pair given alone moves the other only as far as it must.
    default = VerdictLimits()
    for low, high in (("yield_min", "yield_marginal"), ("gbw_ordinary_hz", "gbw_max_hz"),
                      ("r_spread_marginal", "r_spread_max"), ("c_spread_marginal", "c_spread_max")):
        if low in kw and high not in kw:
            kw[high] = max(kw[low], getattr(default, high))
        if high in kw and low not in kw:
            kw[low] = min(kw[high], getattr(default, low))
    try:
        return VerdictLimits(**kw)
    except InputError as exc:  # name the option, not the field of the limits object
        options = {name.replace("_", "-"): option[2:] for option, name, _, _ in _LIMIT_OPTIONS}
        raise InputError(options.get(exc.field, exc.field), exc.reason) from None


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
    _print_verdicts(out)
    gbw = (out.get("figures_with") or {}).get("gbw_hz")
    if gbw is not None:
        print(f"figures below are with the op-amp of GBW {format_value(gbw, 'Hz')} (single pole); errors against the target")
    else:
        print("figures below are with an ideal op-amp; errors against the target")
    print()
    header = [""] + [c["topology"] for c in cands]
    refs: list[str] = []
    for c in cands:
        for ref in get_topology(c["topology"]).refs:
            if ref not in refs:
                refs.append(ref)
    rows = [
        ["verdict"] + [c.get("verdict", "—") for c in cands],
        ["rank"] + [str(c.get("rank", "—")) for c in cands],
        ["feasible"] + ["yes" if c["feasible"] else "no" for c in cands],
    ]
    for ref in refs:
        row = [ref]
        for c in cands:
            topo = get_topology(c["topology"])
            if ref not in topo.refs or not c["feasible"]:
                row.append("—")
            else:
                row.append(_v(c["chosen"][ref], PART_UNITS[topo.component(ref).kind]))
        rows.append(row)

    def shown(c):
        return c.get("actual") if gbw is not None and c.get("actual") else c["ideal"]

    def fig(key, unit="", digits=5):
        return [_v(shown(c)[key], unit, digits) if shown(c) else "—" for c in cands]

    def shown_errors(c):  # the candidate's own errors against the target, with the op-amp shown
        return c.get("errors_actual") if gbw is not None and c.get("actual") else c.get("errors")

    def err(key, unit="%"):
        return [signed_error(shown_errors(c)[key], unit) if shown_errors(c) else "—" for c in cands]

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
        ["yield"] + [f"{c['yield']['yield_pct']:.1f} %" if c.get("yield") else "—" for c in cands],
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


def _print_verdicts(out: dict) -> None:
    """The recommendation first, then every candidate best first with its verdict and reasons."""
    rec = out.get("recommended")
    print(f"recommended: {rec}" if rec else "recommended: none")
    print(f"  {out.get('recommended_reason')}")
    print()
    for c in sorted(out["candidates"], key=lambda c: c.get("rank", 0)):
        y = c.get("yield")
        extra = f", yield {y['yield_pct']:.1f} %" if y else ""
        print(f"{c.get('rank')}. {c['topology']}: {c.get('verdict')}{extra}")
        for r in c.get("reasons", []):
            print(f"     - {r['text']}")
    print()


def run(args) -> int:
    report = api.compare(**target_options(args), **amp_options(args), limits=limits_from(args))
    save_report(args, report)
    return emit(args, report.to_json(), print_compare, written=[f"session written to {args.save}"] if args.save else [])


COMMAND = Command("compare", "design every circuit for one target, judge each (buildable, marginal, not buildable) and rank them", configure, run, order=45)
