"""``bandsmith sweep``: the frequency response of one candidate as a table or CSV."""

from __future__ import annotations

import sys

from bandsmith import api

from bandsmith.app.cli.common import Command, add_amp_options, add_circuit_arguments, amp_options
from bandsmith.app.cli.text import table
from bandsmith.files.exports import write_csv

HEADER = list(api.SweepReport.COLUMNS)
def configure(p):
    add_circuit_arguments(p)
    add_amp_options(p, tolerances=False)
    p.add_argument("--from", dest="f_from", metavar="F", help="first frequency (default 10 Hz)")
    p.add_argument("--to", dest="f_to", metavar="F", help="last frequency (default 10 MHz)")
    p.add_argument("--points", metavar="N", help="number of log-spaced points (default 1000)")
    p.add_argument("--csv", action="store_true", help="print CSV with a header row")


def run(args) -> int:
    options = amp_options(args)
    conditions = api.conditions_of(**options)  # every amp option is checked, though the sweep uses GBW and A0 only
    report = api.sweep(
        args.topology,
        args.parts,
        f_from_hz=args.f_from if args.f_from is not None else 10.0,
        f_to_hz=args.f_to if args.f_to is not None else 10e6,
        points=args.points if args.points is not None else 1000,
        gbw_hz=conditions.gbw_hz,
        a0=conditions.a0,
    )
    if args.csv:
        sys.stdout.write(",".join(HEADER) + "\n")
        write_csv(sys.stdout, (report.f_hz, report.magnitude_db, report.phase_deg, report.group_delay_s))
    else:
        print(table([[f"{v:.6g}" for v in row] for row in report.rows()], header=HEADER))
    return 0


COMMAND = Command("sweep", "frequency response of one candidate (magnitude, phase, group delay)", configure, run, order=30)
