"""``bandsmith sweep``: the frequency response of one candidate as a table or CSV."""

from __future__ import annotations

import csv
import sys

import numpy as np

from bandsmith.analysis.analyzer import sweep, transfer_function
from bandsmith.solver.mna import IDEAL
from bandsmith.design.candidate import Candidate, parse_parts
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.values import parse_positive

from bandsmith.app.cli.common import Command, add_amp_options, conditions_from, split_assignments
from bandsmith.app.cli.text import table

HEADER = ["frequency_hz", "magnitude_db", "phase_deg", "group_delay_s"]


def configure(p):
    p.add_argument("topology", help="circuit id (see `bandsmith topologies`)")
    p.add_argument("parts", nargs="*", metavar="REF=VALUE", help="part values, e.g. R1=4k7 C=10n")
    add_amp_options(p, tolerances=False)
    p.add_argument("--from", dest="f_from", metavar="F", help="first frequency (default 10 Hz)")
    p.add_argument("--to", dest="f_to", metavar="F", help="last frequency (default 10 MHz)")
    p.add_argument("--points", metavar="N", help="number of log-spaced points (default 1000)")
    p.add_argument("--csv", action="store_true", help="print CSV with a header row")


def sweep_rows(topology_id: str, assignments: dict[str, str], conditions, f_from: float, f_to: float, points: int) -> list[list[float]]:
    """Rows of (frequency_hz, magnitude_db, phase_deg, group_delay_s), phase unwrapped."""
    topo = get_topology(topology_id)
    cand = Candidate(topo.id, parse_parts(topo, assignments))
    h = transfer_function(cand.netlist, conditions.opamp or IDEAL)
    r = sweep(h, np.geomspace(f_from, f_to, points))
    return np.column_stack([r.f_hz, r.magnitude_db, r.phase_deg, r.group_delay_s]).tolist()


def run(args) -> int:
    conditions = conditions_from(args)
    f_from = parse_positive(args.f_from, field="from") if args.f_from is not None else 10.0
    f_to = parse_positive(args.f_to, field="to") if args.f_to is not None else 10e6
    if f_to <= f_from:
        raise InputError("to", f"must be above --from ({f_from:g} Hz)")
    points = 1000
    if args.points is not None:
        try:
            points = int(args.points)
        except ValueError:
            raise InputError("points", f"{args.points!r} is not a whole number") from None
        if not 2 <= points <= 1_000_000:
            raise InputError("points", "must be from 2 to 1000000")
    rows = sweep_rows(args.topology, split_assignments(args.parts), conditions, f_from, f_to, points)
    if args.csv:
        w = csv.writer(sys.stdout, lineterminator="\n")
        w.writerow(HEADER)
        w.writerows([f"{v:.10g}" for v in row] for row in rows)
    else:
        print(table([[f"{v:.6g}" for v in row] for row in rows], header=HEADER))
    return 0


COMMAND = Command("sweep", "frequency response of one candidate (magnitude, phase, group delay)", configure, run, order=30)
