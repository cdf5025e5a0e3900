"""``bandsmith fit``: which parts explain a measured response of a built candidate."""

from __future__ import annotations

from bandsmith import api
from bandsmith.common.units import PART_UNITS
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.bench.measured import FREQ_UNITS, ColumnMapping, MappingNeeded, guess_mapping, read_measurement, scan_table
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, add_circuit_arguments, emit
from bandsmith.app.cli.text import table

_MAPPING_HINT = "give --columns F,M[,P] (column numbers from 1) and the units with --freq-unit, --mag-unit, --phase-unit"


def configure(p):
    add_circuit_arguments(p, parts_help="the design's part values, e.g. R1=4k7 C=10n")
    p.add_argument("--measured", metavar="FILE", required=True, help="measured response (CSV or whitespace-separated text)")
    p.add_argument("--parts", dest="fit_parts", metavar="REF,REF,…", help="parts to fit (default: every part above zero)")
    p.add_argument("--range", metavar="P", help="allowed change of every fitted part, e.g. 20%% (default: 3× its tolerance)")
    p.add_argument("--tol", action="append", default=[], metavar="KIND=P", help="tolerance of a part kind for the default ranges (R=1%%, C=5%%, L=10%%); repeatable")
    p.add_argument("--gbw", metavar="F", help="op-amp gain-bandwidth (Hz) of the model; without it the op-amp is ideal")
    p.add_argument("--a0", metavar="A", help="op-amp open-loop gain of the model (default 1e5)")
    p.add_argument("--columns", metavar="F,M[,P]", help="which columns hold frequency, magnitude and phase (numbers from 1)")
    p.add_argument("--freq-unit", choices=tuple(FREQ_UNITS), help="unit of the frequency column")
    p.add_argument("--mag-unit", choices=("dB", "linear"), help="unit of the magnitude column")
    p.add_argument("--phase-unit", choices=("deg", "rad"), help="unit of the phase column")
    p.add_argument("--magnitude-only", action="store_true", help="fit the magnitude only, even where there is phase")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def _mapping(args) -> ColumnMapping | None:
    if args.columns is None:
        return None
    toks = [t.strip() for t in args.columns.split(",")]
    if len(toks) not in (2, 3) or not all(t.isdigit() and int(t) >= 1 for t in toks):
        raise InputError("columns", f"{args.columns!r} is not F,M or F,M,P with column numbers from 1, e.g. 1,2,3")
    cols = [int(t) - 1 for t in toks]
    return ColumnMapping(
        freq=cols[0], mag=cols[1], phase=cols[2] if len(cols) == 3 else None,
        freq_unit=args.freq_unit, mag_unit=args.mag_unit, phase_unit=args.phase_unit,
    )


def _read(args):
    mapping = _mapping(args)
    units_only = args.columns is None and (args.freq_unit or args.mag_unit or args.phase_unit)
    try:
        if units_only:  # the file's own columns, the units from the options
            guess, _, problem = guess_mapping(scan_table(args.measured))
            if guess is None:
                raise InputError("columns", f"{args.measured}: {problem}; {_MAPPING_HINT}")
            mapping = ColumnMapping(
                freq=guess.freq, mag=guess.mag, phase=guess.phase,
                freq_unit=args.freq_unit or guess.freq_unit, mag_unit=args.mag_unit or guess.mag_unit,
                phase_unit=args.phase_unit or guess.phase_unit,
            )
        return read_measurement(args.measured, mapping=mapping)
    except MappingNeeded as exc:
        raise InputError("measured", f"{exc.reason}; {_MAPPING_HINT}") from None


def fit_report(args) -> api.MeasurementFitReport:
    """The fit of ``bandsmith fit`` for parsed arguments (the circuit and parts checked before the file is read)."""
    api.candidate_of(get_topology(args.topology).id, args.parts)
    m = _read(args)
    return api.fit(
        args.topology,
        args.parts,
        measured=m,
        fit_parts=None if args.fit_parts is None else args.fit_parts.split(","),
        part_range=args.range,
        tolerances=args.tol,
        gbw_hz=args.gbw,
        a0=args.a0,
        magnitude_only=args.magnitude_only,
    )


def print_readable(r: dict) -> None:
    topo = get_topology(r["topology"])
    ms, dz, fz = r["measured"], r["design_figures"], r["fitted_figures"]
    print(f"{topo.id}: {ms['source']} ({ms['points']} points, {'magnitude and phase' if ms['has_phase'] else 'magnitude'};"
          f" fitted on the {'complex response' if r['mode'] == 'complex' else 'magnitude'})")
    for n in ms["file_notes"] + ms["notes"]:
        print(f"  note: {n}")
    print()
    rows = [
        ["f0", format_value(ms["f0_hz"], "Hz", digits=5), format_value(dz["f0_hz"], "Hz", digits=5), format_value(fz["f0_hz"], "Hz", digits=5)],
        ["Q", format_value(ms["q"]), format_value(dz["q"]), format_value(fz["q"])],
        ["centre gain", format_value(ms["gain_center_db"], "dB"), format_value(dz["gain_center_db"], "dB"), format_value(fz["gain_center_db"], "dB")],
    ]
    print(table(rows, header=["figure", "measured", "design", "fitted"]))
    print()
    rows = []
    for ref in r["parts"]:
        unit = PART_UNITS[topo.component(ref).kind]
        rows.append([ref, format_value(r["nominal"][ref], unit), format_value(r["fitted"][ref], unit), f"{r['change_pct'][ref]:+.2f} %",
                     f"±{r['range_pct'][ref]:g} %" + (" (edge)" if ref in r["at_bound"] else "")])
    print(table(rows, header=["part", "design", "fitted", "change", "range"]))
    print(f"residual: {r['residual_db_rms']:.3g} dB rms" + (f", {r['residual_phase_deg_rms']:.3g}° rms" if r["residual_phase_deg_rms"] is not None else "")
          + f" (design: {r['nominal_residual_db_rms']:.3g} dB rms)")
    print()
    rows = [[a["part"], f"{a['change_pct']:+.2f} %", f"{a['residual_db_rms']:.3g} dB", f"{a['explained_pct']:.1f} %"] for a in r["alone"]]
    print(table(rows, header=["alone", "change", "residual rms", "explains"]))
    print()
    print(r["summary"])
    for n in r["notes"]:
        print(f"note: {n}")


def run(args) -> int:
    result = fit_report(args).to_json()
    return emit(args, result, print_readable)


COMMAND = Command("fit", "fit a design's parts to a measured response: which parts explain the difference", configure, run, order=60)
