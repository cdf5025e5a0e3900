"""The parts' physics: capacitor dielectrics, the inductor's self-resonance, temperature drift.

Facts used (each marked with its source):

- Class-1 ceramic C0G (NP0): temperature coefficient 0 ± 30 ppm/K, no voltage coefficient
  (EIA-198 / IEC 60384-8 temperature-characteristic code "C0G").
- Class-2 ceramic X7R: capacitance within ±15 % from −55 °C to +125 °C (EIA-198 code "X7R":
  X = −55 °C, 7 = +125 °C, R = ±15 %). Its loss of capacitance under DC bias depends on the part;
  ``DC_BIAS_LOSS_AT_RATED`` (−30 % at the rated voltage, linear in between) is common practice,
  no source — read the maker's curve for the real part.
- An inductor is its inductance L with the winding's resistance R in series and a parallel
  (inter-winding) capacitance Cp across both. Its impedance ``Z = (R + jωL)/(1 − ω²LCp + jωRCp)``
  is real (the self-resonance) at ``ω² = 1/(L·Cp) − R²/L²`` (derived by setting Im Z = 0).
- Resistor tempco: metal film 50 ppm/K (common practice, no source; IEC 60115-1 lists the
  classes); an inductor's ferrite core +200 ppm/K (common practice, no source).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping

from bandsmith.analysis.analyzer import ideal_figures, sensitivities
from bandsmith.analysis.figures import Figures
from bandsmith.common.errors import InputError
from bandsmith.solver.netlist import Element, Netlist

__all__ = [
    "X7R_SPAN", "C0G_TC", "DC_BIAS_LOSS_AT_RATED", "DEFAULT_TEMPCO", "SETS_SHARE",
    "CapacitorAdvice", "InductorResonance", "Drift", "capacitor_advice", "self_resonance_hz",
    "inductor_resonance", "temperature_drift", "scaled", "BoardPhysics", "board_physics",
]

X7R_SPAN = 0.15
C0G_TC = 30e-6
DC_BIAS_LOSS_AT_RATED = 0.30
DEFAULT_TEMPCO = {"R": 50e-6, "C": 0.0, "L": 200e-6}  # per kelvin: metal film, C0G, ferrite
SETS_SHARE = 0.1  # a capacitor with |S| ≥ 0.1 on f0 or Q "sets" it
T_REF_C = 25.0


def scaled(netlist: Netlist, factors: Mapping[str, float]) -> Netlist:
    """A copy with some parts' values multiplied by a factor (by reference)."""
    return netlist.with_values({e.ref: e.value * factors[e.ref] for e in netlist.elements if e.ref in factors})


def _change(base: Figures, other: Figures) -> dict:
    return {"f0_pct": 100 * (float(other.f0_hz[0]) / float(base.f0_hz[0]) - 1),
            "q_pct": 100 * (float(other.q[0]) / float(base.q[0]) - 1),
            "gain_pct": 100 * (float(other.gain_center[0]) / float(base.gain_center[0]) - 1)}


@dataclass(frozen=True, slots=True)
class CapacitorAdvice:
    """One capacitor: what it sets, the dielectric to use, and what a class-2 ceramic would do.

    ``dc_v`` is the DC voltage across it (V) and ``shift`` the figures' change (per cent) from an X7R's
    loss under that bias; ``spread_low``/``spread_high`` the change at −15 % and +15 % (X7R over
    −55…125 °C), every other part nominal.
    """

    ref: str
    s_f0: float
    s_q: float
    sets: tuple
    dielectric: str
    dc_v: float
    shift: Mapping[str, float]
    spread_low: Mapping[str, float]
    spread_high: Mapping[str, float]

    def to_json(self) -> dict:
        return {"ref": self.ref, "s_f0": self.s_f0, "s_q": self.s_q, "sets": list(self.sets),
                "dielectric": self.dielectric, "dc_v": self.dc_v, "x7r_dc_bias_shift": dict(self.shift),
                "x7r_temperature_spread": {"low": dict(self.spread_low), "high": dict(self.spread_high)}}


def capacitor_advice(netlist: Netlist, *, dc_v: Mapping[str, float] | None = None, rated_v: float = 50.0) -> tuple[CapacitorAdvice, ...]:
    """Dielectric advice for every capacitor of a circuit.

    Parameters
    ----------
    netlist : Netlist
        The circuit.
    dc_v : mapping, optional
        DC voltage across each capacitor in V (0 where absent: a split supply).
    rated_v : float
        The class-2 capacitor's rated voltage in V (for the DC-bias loss).
    """
    base = ideal_figures(netlist)
    sens = sensitivities(netlist)
    out = []
    for e in netlist.passives:
        if e.kind != "C":
            continue
        sf, sq = float(sens["f0"].get(e.ref, 0.0)), float(sens["q"].get(e.ref, 0.0))
        sets = tuple(n for n, s in (("f0", sf), ("Q", sq)) if abs(s) >= SETS_SHARE)
        dielectric = ("C0G/NP0 ceramic or film (PP/PPS): it sets " + " and ".join(sets)) if sets else \
            "any dielectric: it sets neither f0 nor Q"
        v = abs(float((dc_v or {}).get(e.ref, 0.0)))
        loss = DC_BIAS_LOSS_AT_RATED * min(v / rated_v, 1.0)
        shift = _change(base, ideal_figures(scaled(netlist, {e.ref: 1 - loss}))) if loss > 0 else \
            {"f0_pct": 0.0, "q_pct": 0.0, "gain_pct": 0.0}
        lo = _change(base, ideal_figures(scaled(netlist, {e.ref: 1 - X7R_SPAN})))
        hi = _change(base, ideal_figures(scaled(netlist, {e.ref: 1 + X7R_SPAN})))
        out.append(CapacitorAdvice(e.ref, sf, sq, sets, dielectric, v, shift, lo, hi))
    return tuple(out)


def self_resonance_hz(l_h: float, cp_f: float, r_ohm: float = 0.0) -> float:
    """The self-resonant frequency (Hz) of L with R in series and Cp across both: ω² = 1/(L·Cp) − R²/L²."""
    w2 = 1.0 / (l_h * cp_f) - (r_ohm / l_h) ** 2
    if w2 <= 0:
        raise InputError("cp", "the winding resistance is too large for the inductor to resonate")
    return math.sqrt(w2) / (2 * math.pi)


@dataclass(frozen=True, slots=True)
class InductorResonance:
    """An inductor's self-resonance against the circuit's f0, the figures with Cp in the model, and
    the figures at the ends of its core's tolerance (``core_low``/``core_high``, per cent)."""

    ref: str
    cp_f: float | None
    srf_hz: float | None
    f0_hz: float
    ratio: float | None
    warning: str | None
    change: Mapping[str, float] | None
    core_tolerance: float
    core_low: Mapping[str, float]
    core_high: Mapping[str, float]

    def to_json(self) -> dict:
        return {"ref": self.ref, "cp_f": self.cp_f, "srf_hz": self.srf_hz, "f0_hz": self.f0_hz,
                "srf_over_f0": self.ratio, "warning": self.warning,
                "change_with_cp": dict(self.change) if self.change is not None else None,
                "core_tolerance": self.core_tolerance,
                "core_spread": {"low": dict(self.core_low), "high": dict(self.core_high)}}


def inductor_resonance(netlist: Netlist, cp_f: float | None, *, core_tolerance: float = 0.10) -> tuple[InductorResonance, ...]:
    """Each inductor's self-resonance with a parallel capacitance ``cp_f`` (F; None: not known), a
    warning within a decade of f0, and the figures at ± its core's tolerance (default 10 %, a
    ferrite-cored inductor's usual grade; common practice, no source)."""
    if cp_f is not None and not (math.isfinite(cp_f) and cp_f > 0):
        raise InputError("cp", f"must be a finite capacitance above zero, got {cp_f!r}")
    if not (math.isfinite(core_tolerance) and 0 <= core_tolerance < 1):
        raise InputError("core-tol", f"must be a fraction from 0 to 1, got {core_tolerance!r}")
    base = ideal_figures(netlist)
    f0 = float(base.f0_hz[0])
    out = []
    for e in netlist.passives:
        if e.kind != "L":
            continue
        lo = _change(base, ideal_figures(scaled(netlist, {e.ref: 1 - core_tolerance})))
        hi = _change(base, ideal_figures(scaled(netlist, {e.ref: 1 + core_tolerance})))
        if cp_f is None:
            out.append(InductorResonance(e.ref, None, None, f0, None, None, None, core_tolerance, lo, hi))
            continue
        srf = self_resonance_hz(e.value, cp_f, e.series_resistance)
        with_cp = netlist.with_element(Element(f"CP_{e.ref}", "C", e.nodes, cp_f))
        ratio = srf / f0
        warning = (f"{e.ref} resonates by itself at {srf:.4g} Hz, within a decade of f0 ({f0:.4g} Hz): "
                   "choose a coil with less winding capacitance") if ratio < 10 else None
        out.append(InductorResonance(e.ref, cp_f, srf, f0, ratio, warning, _change(base, ideal_figures(with_cp)),
                                     core_tolerance, lo, hi))
    return tuple(out)


@dataclass(frozen=True, slots=True)
class Drift:
    """f0, Q and gain at two temperatures (°C) from the parts' temperature coefficients (per K)."""

    t_low_c: float
    t_high_c: float
    tempco: Mapping[str, float]
    low: Mapping[str, float]
    high: Mapping[str, float]

    def to_json(self) -> dict:
        return {"t_low_c": self.t_low_c, "t_high_c": self.t_high_c,
                "tempco_ppm_per_k": {k: v * 1e6 for k, v in self.tempco.items()},
                "at_low": dict(self.low), "at_high": dict(self.high)}


def temperature_drift(netlist: Netlist, t_low_c: float, t_high_c: float, tempco: Mapping[str, float] | None = None) -> Drift:
    """The figures' change (per cent) at ``t_low_c`` and ``t_high_c`` against 25 °C.

    Each part's value is ``x·(1 + α·(T − 25 °C))`` with ``α`` by reference, else by kind (defaults:
    R 50 ppm/K, C 0 — C0G —, L 200 ppm/K).
    """
    for name, t in (("temp-range", t_low_c), ("temp-range", t_high_c)):
        if not (math.isfinite(t) and -273.15 < t < 500):
            raise InputError(name, f"{t!r} °C is not a usable temperature")
    given = dict(tempco or {})
    alpha = {e.ref: float(given.get(e.ref, given.get(e.kind, DEFAULT_TEMPCO[e.kind]))) for e in netlist.passives}
    base = ideal_figures(netlist)

    def at(t):
        return _change(base, ideal_figures(scaled(netlist, {r: 1 + a * (t - T_REF_C) for r, a in alpha.items()})))

    return Drift(t_low_c, t_high_c, alpha, at(t_low_c), at(t_high_c))


@dataclass(frozen=True)
class BoardPhysics:
    """The physics of one circuit on the board: capacitors, inductors, drift, coupling under DC bias."""

    capacitors: tuple
    inductors: tuple
    drift: Drift | None
    coupling_x7r: tuple
    warnings: tuple

    def to_json(self) -> dict:
        return {"capacitors": [c.to_json() for c in self.capacitors],
                "inductors": [i.to_json() for i in self.inductors],
                "drift": self.drift.to_json() if self.drift else None,
                "coupling_if_x7r": list(self.coupling_x7r), "warnings": list(self.warnings)}


def board_physics(
    netlist: Netlist,
    *,
    node_dc_v: Mapping[str, float] | None = None,
    coupling=(),
    cp_f: float | None = None,
    temp_range_c: tuple[float, float] | None = None,
    tempco: Mapping[str, float] | None = None,
    rated_v: float = 50.0,
) -> BoardPhysics:
    """Dielectric advice, self-resonance and drift for a circuit (split-supply netlist).

    ``node_dc_v`` (V, from the single-supply DC solve; the circuit's ground is the node ``ref``)
    gives each capacitor's DC bias; ``coupling`` the coupling capacitors, whose corners an X7R's
    loss under that bias moves up by 1/(1 − loss).
    """
    if not (math.isfinite(rated_v) and rated_v > 0):
        raise InputError("rated", f"must be a finite voltage above zero, got {rated_v!r}")
    volts = dict(node_dc_v or {})

    def v(n):
        return volts.get("ref" if n == netlist.ground else n, 0.0)

    dc = {e.ref: v(e.nodes[0]) - v(e.nodes[1]) for e in netlist.passives if e.kind == "C"} if volts else None
    caps = capacitor_advice(netlist, dc_v=dc, rated_v=rated_v)
    inductors = inductor_resonance(netlist, cp_f)
    drift = temperature_drift(netlist, *temp_range_c, tempco) if temp_range_c is not None else None
    coupled = []
    for c in coupling:
        side = volts.get("src", 0.0) if c.where == "input" else volts.get("load", 0.0)
        across = abs(volts.get(netlist.input if c.where == "input" else netlist.output, 0.0) - side)
        loss = DC_BIAS_LOSS_AT_RATED * min(across / rated_v, 1.0)
        coupled.append({"ref": c.ref, "dc_v": across, "corner_hz": c.corner_hz, "corner_hz_x7r_biased": c.corner_hz / (1 - loss)})
    warnings = tuple(i.warning for i in inductors if i.warning)
    return BoardPhysics(caps, inductors, drift, tuple(coupled), warnings)
