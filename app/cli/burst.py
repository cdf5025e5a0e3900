"""``bandsmith burst``: the response of one candidate to a tone burst, its envelope, settling and ring-down."""

from __future__ import annotations

from bandsmith import api
from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, add_circuit_arguments, add_opamp_options, add_source_option, emit, opamp_options, require_topology


def configure(p):
    add_circuit_arguments(p, optional=True, topology_help="circuit id (see `bandsmith topologies`); leave out with --session/--chain")
    p.add_argument("--freq", metavar="F", help="the tone (Hz)")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--cycles", metavar="N", help="how many cycles the tone is on")
    g.add_argument("--duration", metavar="T", help="how long the tone is on (s, e.g. 20m)")
    p.add_argument("--within", metavar="P", help="settling band around the steady amplitude (default 1%%)")
    add_opamp_options(p)
    add_source_option(p)
    p.add_argument("--session", metavar="FILE", help="with --chain: the burst through a chain the session keeps (its parts, the session's op-amp or --gbw)")
    p.add_argument("--chain", metavar="ID", help="the chain's id (e.g. chain-1)")
    p.add_argument("--json", action="store_true", help="print one JSON object (with the waveform)")


def _t(x) -> str:
    return "never within the burst" if x is None else format_value(x, "s", digits=4)


def print_readable(r: dict) -> None:
    amp = "with the op-amp" if r["with_opamp"] else "ideal op-amp"
    print(f"{r['topology']}: {r['cycles']:.6g} cycles of {format_value(r['freq_hz'], 'Hz', digits=5)} "
          f"({format_value(r['duration_s'], 's', digits=4)}), {amp}")
    rows = [
        ("steady amplitude", f"{r['steady_amplitude']:.5g} V/V"),
        ("envelope time constant", _t(r["envelope_tau_s"])),
        (f"settles to ±{100 * r['within']:g} %", _t(r["settle_time_s"]) + " after the start"),
        ("rings down to 1 %", _t(r["ringdown_time_s"]) + " after the end"),
    ]
    width = max(len(a) for a, _ in rows)
    for a, b in rows:
        print(f"  {a.ljust(width)}  {b}")


def _chain_report(args):
    """A session's chain, measured with its own parts under the session's op-amp and drive."""
    from bandsmith.chain.cascade import chain_cascade, chains_in

    if args.topology or args.parts:
        raise InputError("session", "give either a circuit with its parts or a session with --chain, not both")
    if not args.chain:
        raise InputError("chain", "missing; give the id of a chain the session keeps (e.g. chain-1)")
    session = api.open_session(args.session)
    chains = {c.id: c for c in chains_in(session)}
    if args.chain not in chains:
        known = ", ".join(chains) or "none"
        raise InputError("chain", f"no chain {args.chain!r} in this session; its chains are {known}")
    from dataclasses import replace

    from bandsmith.app.document.extras_chains import chain_conditions

    conditions = chain_conditions(session)  # as the window analyses the session's chains
    if args.gbw is not None:
        conditions = replace(conditions, gbw_hz=api.parse_value(args.gbw, field="gbw"))
    return api.CascadeReport(chain_cascade(chains[args.chain], conditions=conditions))


def run(args) -> int:
    if args.session or args.chain:
        if args.freq is None:
            raise InputError("freq", "missing; give the tone's frequency, e.g. --freq 1k")
        if not args.session:
            raise InputError("session", "--chain needs --session FILE")
        report = api.burst_cascade(_chain_report(args), freq_hz=args.freq, cycles=args.cycles, duration_s=args.duration,
                                   within=args.within, with_opamp=True)  # the session's op-amp (or --gbw), if any
        return emit(args, report.to_json(), print_readable)
    require_topology(args)
    if args.freq is None:
        raise InputError("freq", "missing; give the tone's frequency, e.g. --freq 1k")
    report = api.burst(
        args.topology,
        args.parts,
        freq_hz=args.freq,
        cycles=args.cycles,
        duration_s=args.duration,
        within=args.within,
        **opamp_options(args),
        rsource_ohm=args.rsource,
    )
    out = report.to_json()
    return emit(args, out, print_readable)


COMMAND = Command("burst", "the response of one candidate to a tone burst: envelope, settling and ring-down", configure, run, order=58)
