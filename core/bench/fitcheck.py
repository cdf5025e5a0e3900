"""Fit check: will this shelf op-amp do for this candidate, and with what margin?

Every margin is a ratio, available over needed (above 1: enough), except ``swing_v`` and ``cm_v``,
the volts to spare:

- ``gbw``: the model's GBW over the required GBW (:func:`bandsmith.analysis.analyzer.required_gbw` with the
  model's A0 and the tolerances);
- ``slew``: the slew rate over the larger of the sine and the step needs at the input level;
- ``iout``: the largest output current over the current the op-amp delivers at f0 into the circuit
  and the load;
- ``swing``: the output's allowed peak on the supply (the rails less the model's swing limits) over
  the output's peak over frequency (:mod:`bandsmith.bench.headroom`, with this model);
- ``cm``: each op-amp input's allowed peak (the common-mode range) over its peak; the smallest.

The verdict is "does not fit" when a margin is below 1, the supply is outside the model's range,
the circuit with this model (two poles where given) is unstable (a closed-loop pole in the right
half-plane), or its response leaves the tolerances of the ideal figures;
"marginal" when a margin is at least 1 but below its comfort factor (:data:`MARGINAL_FACTORS`:
1.5 for GBW, 1.25 for the others; common practice, no source); "fits" otherwise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Iterable, Mapping

import numpy as np

from bandsmith.common.jsonutil import finite_or_none
from bandsmith.common.units import to_ma, to_v_per_us
from bandsmith.solver.ampmodel import amp_transfer_function
from bandsmith.analysis.analyzer import Requirements, Tolerances, required_gbw, requirements, transfer_function, within_tolerances
from bandsmith.common.errors import InputError
from bandsmith.analysis.figures import Figures, measure
from bandsmith.bench.headroom import DEFAULT_SUPPLY_V, Headroom, headroom
from bandsmith.solver.netlist import Netlist
from bandsmith.bench.shelf import OpAmp
from bandsmith.analysis.timeresponse import max_step_slope
from bandsmith.common.values import format_value

__all__ = [
    "FITS",
    "MARGINAL",
    "DOES_NOT_FIT",
    "VERDICTS",
    "MARGINAL_FACTORS",
    "Margins",
    "Needs",
    "Verdict",
    "FitReport",
    "Basis",
    "basis_of",
    "check_amp",
    "fit_check",
]

FITS, MARGINAL, DOES_NOT_FIT = "fits", "marginal", "does not fit"
VERDICTS = (FITS, MARGINAL, DOES_NOT_FIT)

# Below these factors a margin above 1 is "marginal" (common practice, no source).
MARGINAL_FACTORS: Mapping[str, float] = {"gbw": 1.5, "slew": 1.25, "iout": 1.25, "swing": 1.25, "cm": 1.25}

_LABELS = {"gbw": "GBW", "slew": "slew rate", "iout": "output current", "swing": "output swing", "cm": "input common-mode range"}


def _ratio(available: float, needed: float) -> float:
    if needed is None or not math.isfinite(needed):
        return math.nan
    if needed <= 0:
        return math.inf if available > 0 else 0.0
    return available / needed


@dataclass(frozen=True, slots=True)
class Margins:
    """Available over needed (ratios), and the volts to spare for the output and the inputs."""

    gbw: float
    slew: float
    iout: float
    swing: float
    swing_v: float
    cm: float
    cm_v: float

    def ratios(self) -> dict[str, float]:
        return {"gbw": self.gbw, "slew": self.slew, "iout": self.iout, "swing": self.swing, "cm": self.cm}

    def to_json(self) -> dict:
        f = finite_or_none

        return {k: f(getattr(self, k)) for k in ("gbw", "slew", "iout", "swing_v", "swing", "cm", "cm_v")}


@dataclass(frozen=True, slots=True)
class Needs:
    """What the candidate asks of this op-amp at the input level (units in the names).

    Stored in SI (V/s, A); the data-sheet units (V/µs, mA) are the properties below and the JSON.
    """

    gbw_hz: float | None
    gbw_reason: str | None
    slew_sine_v_per_s: float
    slew_step_v_per_s: float
    iout_a: float
    vout_peak_v: float
    out_allowed_v: float
    cm_node: str | None
    cm_peak_v: float
    cm_allowed_v: float
    supply_total_v: float

    @property
    def slew_sine_v_per_us(self) -> float:
        return to_v_per_us(self.slew_sine_v_per_s)

    @property
    def slew_step_v_per_us(self) -> float:
        return to_v_per_us(self.slew_step_v_per_s)

    @property
    def slew_v_per_us(self) -> float:
        return max(self.slew_sine_v_per_us, self.slew_step_v_per_us)

    @property
    def iout_ma(self) -> float:
        return to_ma(self.iout_a)

    def to_json(self) -> dict:
        f = finite_or_none

        return {
            "gbw_hz": f(self.gbw_hz),
            "gbw_reason": self.gbw_reason,
            "slew_v_per_us": f(self.slew_v_per_us),
            "slew_sine_v_per_us": f(self.slew_sine_v_per_us),
            "slew_step_v_per_us": f(self.slew_step_v_per_us),
            "iout_ma": f(self.iout_ma),
            "vout_peak_v": f(self.vout_peak_v),
            "out_allowed_v": f(self.out_allowed_v),
            "cm_node": self.cm_node,
            "cm_peak_v": f(self.cm_peak_v),
            "cm_allowed_v": f(self.cm_allowed_v),
            "supply_total_v": f(self.supply_total_v),
        }


@dataclass(frozen=True, slots=True)
class Verdict:
    """One shelf model against one candidate."""

    amp: OpAmp
    verdict: str
    reasons: tuple[str, ...]
    margins: Margins
    needs: Needs
    actual: Figures
    response_ok: bool
    supply_ok: bool
    headroom: Headroom
    stable: bool = True

    def to_json(self) -> dict:
        """``{"amp", "verdict", "reasons", "margins", "actual", "needs", "response_ok", "supply_ok",
        "stable", "headroom"}``."""
        return {
            "amp": self.amp.name,
            "verdict": self.verdict,
            "reasons": list(self.reasons),
            "margins": self.margins.to_json(),
            "actual": self.actual.to_json(),
            "needs": self.needs.to_json(),
            "response_ok": bool(self.response_ok),
            "supply_ok": bool(self.supply_ok),
            "stable": bool(self.stable),
            "headroom": self.headroom.to_json(),
        }


@dataclass(frozen=True, slots=True)
class FitReport:
    """Every checked model, and the headroom of the circuit itself (ideal op-amp, the rails only)."""

    ideal: Figures
    verdicts: tuple[Verdict, ...]
    headroom: Headroom

    def verdict(self, name: str) -> Verdict:
        key = name.casefold()
        for v in self.verdicts:
            if v.amp.name.casefold() == key:
                return v
        raise KeyError(name)


@dataclass(frozen=True, slots=True, eq=False)
class Basis:
    """What every model's check of one candidate shares, computed once (:func:`basis_of`).

    The ideal figures, the largest step slope (1/s per volt, :func:`bandsmith.analysis.timeresponse.max_step_slope`),
    the right-half-plane poles with an ideal op-amp (rad/s; usually none), and the required GBW
    found so far for each (A0, tolerances).
    """

    ideal: Figures
    step_slope_per_s: float
    ideal_unstable: np.ndarray
    gbw: dict = field(default_factory=dict, repr=False)

    def required_gbw(self, netlist: Netlist, a0: float, tolerances: Tolerances) -> tuple[float | None, str | None]:
        key = (float(a0), tolerances)
        if key not in self.gbw:
            self.gbw[key] = required_gbw(netlist, self.ideal, a0=a0, tolerances=tolerances)
        return self.gbw[key]


def basis_of(netlist: Netlist) -> Basis:
    """The shared part of a candidate's checks (pass it to :func:`check_amp` for each model)."""
    h = transfer_function(netlist)
    poles = h.poles(0)
    return Basis(measure(h), max_step_slope(h), poles[poles.real >= 0])


def _fmt(x: float, unit: str) -> str:
    return format_value(x, unit, digits=3)


def _x(r: float) -> str:
    return "∞×" if math.isinf(r) else f"{r:.3g}×"


def check_amp(
    netlist: Netlist,
    amp: OpAmp,
    *,
    supply_v: float = DEFAULT_SUPPLY_V,
    vin_v: float = 1.0,
    rload_ohm: float | None = None,
    tolerances: Tolerances = Tolerances(),
    basis: Basis | None = None,
) -> Verdict:
    """Check one shelf model against one candidate.

    Parameters
    ----------
    netlist : Netlist
        The candidate's circuit.
    amp : OpAmp
        The shelf model.
    supply_v : float
        The symmetric supply ±V (V).
    vin_v : float
        Input peak amplitude (V), for slew, current, swing and common-mode needs.
    rload_ohm : float, optional
        A load from the output to ground (ohm).
    tolerances : Tolerances
        For the required GBW and for the response with this model.
    basis : Basis, optional
        The candidate's :func:`basis_of`, when several models are checked against it.
    """
    _check_conditions(supply_v, vin_v, rload_ohm)
    shared = basis if basis is not None else basis_of(netlist)
    ideal = shared.ideal
    ref = ideal.item()
    gbw_need, gbw_reason = shared.required_gbw(netlist, amp.a0, tolerances)
    req: Requirements = requirements(
        netlist, ideal, shared.step_slope_per_s, vin_v=vin_v, a0=amp.a0, rload_ohm=rload_ohm, tolerances=tolerances,
        gbw_search=(gbw_need, gbw_reason),
    )
    room = headroom(netlist, vin_v=vin_v, supply_v=supply_v, amp=amp, rload_ohm=rload_ohm)

    w_ref = 2.0 * math.pi * ref.f0_hz if math.isfinite(ref.f0_hz) else None
    h_actual = amp_transfer_function(netlist, gbw_hz=amp.gbw_hz, a0=amp.a0, f_p2_hz=amp.f_p2_hz, w_ref=w_ref)
    actual = measure(h_actual)
    poles = h_actual.poles(0)
    unstable = poles[poles.real >= 0]
    stable = unstable.size == 0
    in_tolerance = bool(within_tolerances(actual, ref, tolerances)[0])
    response_ok = stable and in_tolerance

    out_allowed, out_peak = _tightest_output(netlist, room)
    cm_node, cm_allowed, cm_peak = _tightest_input(netlist, room, amp, supply_v)

    margins = Margins(
        gbw=_ratio(amp.gbw_hz, gbw_need) if gbw_need is not None else 0.0,
        slew=_ratio(amp.slew_v_per_us, max(req.slew_sine_v_per_us, req.slew_step_v_per_us)),
        iout=_ratio(amp.iout_max_ma, req.iout_peak_ma),
        swing=_ratio(out_allowed, out_peak),
        swing_v=out_allowed - out_peak,
        cm=_ratio(cm_allowed, cm_peak),
        cm_v=cm_allowed - cm_peak,
    )
    needs = Needs(
        gbw_hz=gbw_need,
        gbw_reason=gbw_reason,
        slew_sine_v_per_s=req.slew_sine_v_per_s,
        slew_step_v_per_s=req.slew_step_v_per_s,
        iout_a=req.iout_peak_a,
        vout_peak_v=out_peak,
        out_allowed_v=out_allowed,
        cm_node=None if cm_node == netlist.ground else cm_node,
        cm_peak_v=cm_peak,
        cm_allowed_v=cm_allowed,
        supply_total_v=2.0 * supply_v,
    )
    total = 2.0 * supply_v
    supply_ok = amp.supply_min_v <= total <= amp.supply_max_v
    verdict, reasons = _judge(amp, margins, needs, actual.item(), ref, in_tolerance or not stable, supply_ok, supply_v, vin_v, rload_ohm, tolerances)
    if shared.ideal_unstable.size:  # a design that needs the op-amp's roll-off to be stable is no design
        unstable = shared.ideal_unstable
        stable = False
        response_ok = False
    if not stable:
        verdict, reasons = _unstable(verdict, reasons, unstable, ideal_too=bool(shared.ideal_unstable.size))
    return Verdict(amp, verdict, reasons, margins, needs, actual, response_ok, supply_ok, room, stable)


def _check_conditions(supply_v: float, vin_v: float, rload_ohm: float | None) -> None:
    if not (math.isfinite(supply_v) and supply_v > 0):
        raise InputError("supply", f"must be a finite number above zero (the ±V of a symmetric supply), got {supply_v!r}")
    if not (math.isfinite(vin_v) and vin_v > 0):
        raise InputError("vin", f"must be a finite number above zero, got {vin_v!r}")
    if rload_ohm is not None and not (math.isfinite(rload_ohm) and rload_ohm > 0):
        raise InputError("rload", f"must be a finite number above zero, got {rload_ohm!r}")


def _tightest_output(netlist: Netlist, room) -> tuple[float, float]:
    """Output swing: ``(allowed, peak)`` (V) of the op-amp output with the least room for its peak."""
    outs = [e.nodes[2] for e in netlist.opamps]
    swing_pairs = [(room.limits[o].amplitude_v, room.node_peak_v[o]) for o in outs]
    return min(swing_pairs, key=lambda p: _ratio(*p))


def _tightest_input(netlist: Netlist, room, amp: OpAmp, supply_v: float) -> tuple[str, float, float]:
    """Common mode: ``(node, allowed, peak)`` of the op-amp input with the least room (a grounded
    input sits at 0 V)."""
    cm_pairs = []
    for e in netlist.opamps:
        for n in e.nodes[:2]:
            if n == netlist.ground:
                lim = amp_cm_amplitude(amp, supply_v)
                cm_pairs.append((n, lim, 0.0))
            else:
                cm_pairs.append((n, room.limits[n].amplitude_v, room.node_peak_v[n]))
    return min(cm_pairs, key=lambda p: (_ratio(p[1], p[2]), p[1] - p[2]))


def _unstable(verdict: str, reasons: tuple[str, ...], unstable: np.ndarray, *, ideal_too: bool) -> tuple[str, tuple[str, ...]]:
    """An unstable circuit does not fit, whatever else: the reason first, the others after it."""
    f_hz = float(np.max(np.abs(unstable))) / (2.0 * math.pi)
    others = () if verdict == FITS else reasons
    whose = "even with an ideal op-amp" if ideal_too else "with this op-amp"
    reasons = (f"{whose} the circuit is unstable: a closed-loop pole near {_fmt(f_hz, 'Hz')} "
               "lies in the right half-plane",) + others
    return DOES_NOT_FIT, reasons


def amp_cm_amplitude(amp: OpAmp, supply_v: float) -> float:
    """Allowed peak (V) about 0 V of an op-amp input on a ±``supply_v`` supply."""
    return max(0.0, min(supply_v - amp.cm_pos_v, supply_v - amp.cm_neg_v))


def _judge(amp, m: Margins, needs: Needs, actual, ref, response_ok, supply_ok, supply_v, vin_v, rload_ohm, tol):
    bad: list[str] = []
    thin: list[str] = []
    vin = _fmt(vin_v, "V")

    def grade(key: str, ratio: float, fail: str, low: str):
        if not (ratio >= 1.0):  # NaN fails too
            bad.append(fail)
        elif ratio < MARGINAL_FACTORS[key]:
            thin.append(low + f" (comfortable from {MARGINAL_FACTORS[key]:g}×)")

    if not supply_ok:
        total = 2.0 * supply_v
        where = "above its largest" if total > amp.supply_max_v else "below its smallest"
        limit = amp.supply_max_v if total > amp.supply_max_v else amp.supply_min_v
        bad.append(f"the ±{supply_v:g} V supply ({total:g} V total) is {where}, {limit:g} V")
    if needs.gbw_hz is None:
        bad.append(f"no GBW is enough with its A0 of {amp.a0:g}: {needs.gbw_reason}")
    else:
        need = _fmt(needs.gbw_hz, "Hz")
        grade("gbw", m.gbw, f"GBW {_fmt(amp.gbw_hz, 'Hz')} is below the {need} needed ({_x(m.gbw)})",
              f"GBW {_fmt(amp.gbw_hz, 'Hz')} is only {_x(m.gbw)} the {need} needed")
    which = "a sine at f0" if needs.slew_sine_v_per_us >= needs.slew_step_v_per_us else "a step"
    slew_need = f"{needs.slew_v_per_us:.3g} V/µs"
    grade("slew", m.slew, f"slew rate {amp.slew_v_per_us:g} V/µs is below the {slew_need} {which} of {vin} needs ({_x(m.slew)})",
          f"slew rate {amp.slew_v_per_us:g} V/µs is only {_x(m.slew)} the {slew_need} {which} of {vin} needs")
    load = f" with the {_fmt(rload_ohm, 'Ω')} load" if rload_ohm is not None else ""
    i_need = f"{needs.iout_ma:.3g} mA"
    grade("iout", m.iout, f"output current {amp.iout_max_ma:g} mA is below the {i_need} needed at f0{load} ({_x(m.iout)})",
          f"output current {amp.iout_max_ma:g} mA is only {_x(m.iout)} the {i_need} needed at f0{load}")
    peak, allowed = _fmt(needs.vout_peak_v, "V"), _fmt(needs.out_allowed_v, "V")
    grade("swing", m.swing, f"the output must reach ±{peak} but swings only ±{allowed} on ±{supply_v:g} V ({_fmt(-m.swing_v, 'V')} short)",
          f"the output reaches ±{peak} of the ±{allowed} it can swing on ±{supply_v:g} V ({_fmt(m.swing_v, 'V')} to spare)")
    node = f"input node {needs.cm_node!r}" if needs.cm_node else "the grounded input"
    cm_peak, cm_allowed = _fmt(needs.cm_peak_v, "V"), _fmt(needs.cm_allowed_v, "V")
    if needs.cm_allowed_v <= 0:
        bad.append(f"on ±{supply_v:g} V the input common-mode range does not reach 0 V")
    else:
        grade("cm", m.cm, f"{node} swings ±{cm_peak}, beyond the ±{cm_allowed} common-mode range on ±{supply_v:g} V",
              f"{node} swings ±{cm_peak} of the ±{cm_allowed} common-mode range on ±{supply_v:g} V")
    if not response_ok and needs.gbw_hz is not None and m.gbw >= 1.0:
        why = "its second pole moves" if amp.f_p2_hz is not None else "it moves"
        bad.append(
            f"{why} the response out of tolerance: f0 {100 * (actual.f0_hz / ref.f0_hz - 1):+.3g} %, "
            f"Q {100 * (actual.q / ref.q - 1):+.3g} %, gain {actual.gain_center_db - ref.gain_center_db:+.3g} dB "
            f"(allowed ±{100 * tol.f0:g} %, ±{100 * tol.q:g} %, ±{tol.gain_db:g} dB)"
        )
    if bad:
        return DOES_NOT_FIT, tuple(bad + thin)
    if thin:
        return MARGINAL, tuple(thin)
    summary = ", ".join(f"{_LABELS[k]} {_x(r)}" for k, r in m.ratios().items() if k != "cm")
    return FITS, (f"every margin is comfortable: {summary}; {_fmt(m.swing_v, 'V')} of output swing to spare",)


def fit_check(
    netlist: Netlist,
    amps: Iterable[OpAmp],
    *,
    supply_v: float = DEFAULT_SUPPLY_V,
    vin_v: float = 1.0,
    rload_ohm: float | None = None,
    tolerances: Tolerances = Tolerances(),
) -> FitReport:
    """Check every shelf model against a candidate, and the candidate's own headroom.

    The ideal response, its figures and its largest step slope are computed once; the required GBW once
    per distinct A0. The report's ``headroom`` is the circuit's with an ideal op-amp, every node
    limited by the rails only; each verdict carries its model's own.
    """
    shared = basis_of(netlist)
    verdicts = tuple(
        check_amp(netlist, a, supply_v=supply_v, vin_v=vin_v, rload_ohm=rload_ohm, tolerances=tolerances, basis=shared)
        for a in amps
    )
    room = headroom(netlist, vin_v=vin_v, supply_v=supply_v, amp=None, rload_ohm=rload_ohm)
    return FitReport(shared.ideal, verdicts, room)
