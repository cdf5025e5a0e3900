"""Readable plain-text tables for the terminal (the default output of the commands)."""

from __future__ import annotations

import math

from bandsmith.common.values import format_value

__all__ = ["table", "figures_rows", "requirements_rows", "sensitivity_table", "signed_error"]



def table(rows: list[list[str]], *, header: list[str] | None = None) -> str:
    """Columns padded to their widest cell; numbers right-aligned, words left-aligned."""
    allrows = ([header] if header else []) + rows
    if not allrows:
        return ""
    widths = [max(len(r[i]) for r in allrows if i < len(r)) for i in range(max(len(r) for r in allrows))]
    lines = []
    for k, r in enumerate(allrows):
        cells = [c.rjust(widths[i]) if i and _numeric(c) else c.ljust(widths[i]) for i, c in enumerate(r)]
        lines.append("  ".join(cells).rstrip())
        if header and k == 0:
            lines.append("  ".join("-" * w for w in widths))
    return "\n".join(lines)


def signed_error(x: float | None, unit: str = "%") -> str:
    """An error with its sign, 3 significant digits; rounding noise (below 1e-9) shows as 0."""
    if x is None or not math.isfinite(x):
        return "—"
    return f"{0.0 if abs(x) < 1e-9 else x:+.3g} {unit}"


def _numeric(cell: str) -> bool:
    return bool(cell) and (cell[0].isdigit() or cell[0] in "+-.—")


def figures_rows(fig: dict) -> list[list[str]]:
    """FIGURES as label/value rows."""
    return [
        ["f0", format_value(fig["f0_hz"], "Hz", digits=5)],
        ["Q", format_value(fig["q"], digits=5)],
        ["bandwidth", format_value(fig["bw_hz"], "Hz", digits=5)],
        ["f_low / f_high", f"{format_value(fig['f_low_hz'], 'Hz', digits=5)} / {format_value(fig['f_high_hz'], 'Hz', digits=5)}"],
        ["centre gain", f"{format_value(fig['gain_center'], digits=5)} ({format_value(fig['gain_center_db'], 'dB', digits=4)})"],
        ["centre phase", format_value(fig["phase_center_deg"], "°", digits=4)],
    ]


def requirements_rows(req: dict) -> list[list[str]]:
    """REQUIREMENTS as label/value rows."""
    gbw = format_value(req["gbw_hz"], "Hz", digits=4) if req["gbw_hz"] is not None else f"none ({req['gbw_reason']})"
    return [
        ["required GBW", gbw],
        ["  within", f"f0 ±{100 * req['tol_f0']:g} %, Q ±{100 * req['tol_q']:g} %, gain ±{req['tol_gain_db']:g} dB, A0 {req['a0']:g}"],
        ["  rule of thumb", format_value(req.get("gbw_rule_of_thumb_hz"), "Hz", digits=3) + " (A(f0) 40 dB above the gain)"],
        ["output peak", format_value(req["vout_peak_v"], "V", digits=4) + f" for {format_value(req['vin_v'], 'V', digits=4)} in"],
        ["slew, sine at f0", format_value(req["slew_sine_v_per_us"], "V/µs", digits=4)],
        ["slew, input step", format_value(req["slew_step_v_per_us"], "V/µs", digits=4)],
        ["output current", format_value(req["iout_peak_ma"] * 1e-3 if req["iout_peak_ma"] is not None else None, "A", digits=4) + " peak at f0"],
    ]


def sensitivity_table(sens: dict) -> str:
    """Parts as rows, S(f0), S(Q), S(gain) as columns."""
    refs = list(sens["f0"])
    rows = [[r] + [f"{sens[k][r]:+.3f}" for k in ("f0", "q", "gain")] for r in refs]
    return table(rows, header=["part", "S(f0)", "S(Q)", "S(gain)"])
