"""``bandsmith noise``: output noise of one candidate, per source, integrated, and the SNR."""

from __future__ import annotations

from bandsmith import api
from bandsmith.common.values import format_value

from bandsmith.app.cli.common import Command, add_circuit_arguments, add_opamp_options, add_source_option, emit, opamp_options, require_topology
from bandsmith.app.cli.text import table


def configure(p):
    add_circuit_arguments(p)
    p.add_argument("--en", metavar="V_PER_RTHZ", help="op-amp voltage noise density, V/√Hz (default 10n)")
    p.add_argument("--in", dest="in_", metavar="A_PER_RTHZ", help="op-amp current noise density at each input, A/√Hz (default 1p)")
    p.add_argument("--temp", metavar="K", help="temperature in kelvin (default 300)")
    add_opamp_options(p)
    p.add_argument("--band", nargs=2, metavar=("F1", "F2"), help="integration band in Hz (default f0/10 to 10·f0)")
    p.add_argument("--vin", metavar="V", help="input sine peak amplitude for the SNR (default 1)")
    add_source_option(p)
    p.add_argument("--json", action="store_true", help="print one JSON object")


def print_readable(r: dict) -> None:
    amp = "ideal op-amp" if r["opamp"] is None else f"GBW {format_value(r['opamp']['gbw_hz'], 'Hz')}"
    f1, f2 = r["band_hz"]
    print(
        f"{r['topology']}: f0 {format_value(r['f0_hz'], 'Hz', digits=5)}, {amp}, {r['temperature_k']:g} K, "
        f"en {format_value(r['en_v_per_rthz'], 'V/√Hz')}, in {format_value(r['in_a_per_rthz'], 'A/√Hz')}"
    )
    total = r["integrated_uv_rms"] ** 2
    rows = []
    order = sorted(r["contributions"].items(), key=lambda kv: -kv[1]["integrated_uv_rms"])
    for name, c in order:
        share = 100.0 * c["integrated_uv_rms"] ** 2 / total if total > 0 else 0.0
        rows.append([name, f"{c['density_at_f0_nv_rthz']:.4g}", f"{c['integrated_uv_rms']:.4g}", f"{share:.1f}"])
    rows.append(["total", f"{r['density_at_f0_nv_rthz']:.4g}", f"{r['integrated_uv_rms']:.4g}", "100.0" if total > 0 else "0.0"])
    print(table(rows, header=["source", "at f0 (nV/√Hz)", f"{format_value(f1, 'Hz')}–{format_value(f2, 'Hz')} (µV rms)", "share (%)"]))
    print()
    snr = "∞ (noiseless)" if r["snr_db"] is None else f"{r['snr_db']:.2f} dB"
    print(f"signal {format_value(r['signal_uv_rms'] * 1e-6, 'V')} rms at f0 for {format_value(r['vin_v'], 'V')} peak in; SNR {snr}")


def run(args) -> int:
    require_topology(args)
    report = api.noise(
        args.topology,
        args.parts,
        en_v_per_rthz=args.en,
        in_a_per_rthz=args.in_,
        temperature_k=args.temp,
        band_hz=args.band,
        **opamp_options(args),
        vin_v=args.vin if args.vin is not None else 1.0,
        rsource_ohm=args.rsource,
    )
    result = report.to_json()
    return emit(args, result, print_readable)


COMMAND = Command("noise", "output noise per source (resistors, op-amp en and in), integrated over a band, and the SNR", configure, run, order=45)
