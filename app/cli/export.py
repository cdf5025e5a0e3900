"""``bandsmith export``: one export of a session candidate (SPICE netlist, parts CSV, response CSV),
or with ``--chain ID`` the netlist or parts list of a whole chain kept in the session."""

from __future__ import annotations

import sys

import numpy as np

from bandsmith.common.errors import InputError
from bandsmith.files.exports import parts_csv, response_csv, spice_netlist, write_atomic
from bandsmith.api import open_session
from bandsmith.common.values import parse_positive

from bandsmith.app.cli.common import Command


def configure(p):
    p.add_argument("session", metavar="FILE", help="session file")
    what = p.add_mutually_exclusive_group()
    what.add_argument("--netlist", metavar="OUT.cir", help="write a SPICE netlist of the candidate")
    what.add_argument("--parts", metavar="OUT.csv", help="write the parts list (CSV)")
    what.add_argument("--response", metavar="OUT.csv", help="write the frequency response (CSV, as `sweep --csv`)")
    p.add_argument("--candidate", metavar="ID", help="candidate id (default: the first one switched on)")
    p.add_argument("--chain", metavar="ID", help="a chain kept in the session: the netlist or parts list of all its stages")
    p.add_argument("--from", dest="f_from", metavar="F", help="response/sweep start frequency")
    p.add_argument("--to", dest="f_to", metavar="F", help="response/sweep stop frequency")
    p.add_argument("--points", metavar="N", help="response points (default 1000) or netlist points per decade (default 100)")


def _write_out(out: str, text: str, what: str) -> int:
    """Write ``text`` to the file ``out`` (atomically, saying so) or, for ``-``, to stdout; exit 0."""
    if out == "-":
        sys.stdout.write(text)
    else:
        write_atomic(out, text)
        print(f"wrote {out} ({what})")
    return 0


def _points(text: str | None, default: int) -> int:
    if text is None:
        return default
    try:
        n = int(text)
    except ValueError:
        raise InputError("points", f"{text!r} is not a whole number") from None
    if not 2 <= n <= 1_000_000:
        raise InputError("points", "must be from 2 to 1000000")
    return n


def _run_chain(args, session) -> int:
    """``--chain ID``: the netlist or parts list of a chain kept in the session."""
    from bandsmith.chain.cascade import chains_in
    from bandsmith.chain.chain_exports import chain_parts_csv, chain_spice_netlist

    if args.response:
        raise InputError("chain", "--response is for one candidate; a chain exports --netlist or --parts")
    if args.candidate is not None:
        raise InputError("chain", "give --chain or --candidate, not both")
    f_from = parse_positive(args.f_from, field="from") if args.f_from is not None else None
    f_to = parse_positive(args.f_to, field="to") if args.f_to is not None else None
    chains = chains_in(session)
    chain = next((c for c in chains if c.id == args.chain), None)
    if chain is None:
        known = ", ".join(c.id for c in chains) or "none"
        raise InputError("chain", f"{args.chain!r} is not a chain of {args.session} (its chains: {known})")
    o = session.opamp
    if args.netlist:
        ppd = _points(args.points, 100) if args.points is not None else None
        out, text = args.netlist, chain_spice_netlist(chain, gbw_hz=o.gbw_hz, a0=o.a0, f_start_hz=f_from, f_stop_hz=f_to, points_per_decade=ppd)
    else:
        out, text = args.parts, chain_parts_csv(chain, gbw_hz=o.gbw_hz)
    return _write_out(out, text, f"chain {chain.id}")


def run(args) -> int:
    for name in ("netlist", "parts", "response"):
        given = getattr(args, name)
        if given is not None and not given.strip():
            raise InputError(name, "give the name of the file to write")
    if not (args.netlist or args.parts or args.response):
        raise InputError("export", "say what to write: --netlist OUT.cir, --parts OUT.csv or --response OUT.csv")
    session = open_session(args.session)
    if args.chain is not None:
        return _run_chain(args, session)
    if args.candidate is not None:
        entry = session.candidate(args.candidate)
    else:
        on = [c for c in session.candidates if c.enabled] or list(session.candidates)
        if not on:
            raise InputError("candidate", f"{args.session} has no candidate to export")
        entry = on[0]
    f_from = parse_positive(args.f_from, field="from") if args.f_from is not None else None
    f_to = parse_positive(args.f_to, field="to") if args.f_to is not None else None
    if f_from is not None and f_to is not None and f_to <= f_from:
        raise InputError("to", f"must be above --from ({f_from:g} Hz)")
    gbw, a0 = session.opamp.gbw_hz, session.opamp.a0
    if args.netlist:
        out, text = args.netlist, spice_netlist(entry, gbw_hz=gbw, a0=a0, f_start_hz=f_from, f_stop_hz=f_to, points_per_decade=_points(args.points, 100))
    elif args.parts:
        out, text = args.parts, parts_csv(entry, gbw_hz=gbw)
    else:
        f = np.geomspace(f_from if f_from is not None else 10.0, f_to if f_to is not None else 10e6, _points(args.points, 1000))
        if f[-1] <= f[0]:
            raise InputError("to", "must be above --from")
        out, text = args.response, response_csv(entry, gbw_hz=gbw, a0=a0, f_hz=f)
    return _write_out(out, text, f"candidate {entry.id}")


COMMAND = Command("export", "write a SPICE netlist, parts list or response table of a session candidate", configure, run, order=60)
