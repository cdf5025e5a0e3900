"""Multiple-feedback (Delyiannis–Friend) band-pass on one inverting op-amp (``mfb``).

Netlist: R1 from the input to node ``a``; R2 from ``a`` to ground; C1 from ``a`` to the inverting
input ``m``; C2 from ``a`` to the output; R3 from ``m`` to the output; the non-inverting input
grounded.

Notes
-----
With an ideal op-amp,

    H(s) = −(s/(R1·C2)) / (s² + s·(C1 + C2)/(R3·C1·C2) + (1/R1 + 1/R2)/(R3·C1·C2)),

so ``ω0 = √((1/R1 + 1/R2)/(R3·C1·C2))``, ``Q = ω0·R3·C1·C2/(C1 + C2)`` and the centre gain is
``H0 = −R3·C1/(R1·(C1 + C2))``.

Design (``synthesize``). Dividing the gain by Q gives ``|H0|/Q = 1/(ω0·R1·C2)``, so for any
capacitors C1, C2 the target fixes the resistors:

    R1 = Q/(|H0|·ω0·C2),   R3 = Q·(C1 + C2)/(ω0·C1·C2),   1/R2 = ω0·(Q·(C1 + C2) − |H0|·C2/Q),

which needs ``|H0| < Q²·(1 + C1/C2)``. With equal capacitors C (the default, and Franco's
procedure) this is ``R3 = Q/(π·f0·C)``, ``R1 = R3/(2|H0|)``, ``R2 = Q/((2Q² − |H0|)·ω0·C)``, and
the gain must stay below ``2Q²``. Unpinned, C comes from the E6 series at the impedance level that
puts the resistors best in 1 kΩ–1 MΩ; pinned parts fix C1 and C2 through the equations above.

References
----------
S. Franco, *Design with Operational Amplifiers and Analog Integrated Circuits*, 3rd ed.,
McGraw-Hill, ch. 3 (the multiple-feedback band-pass, labels mapped to ours).
"""

from __future__ import annotations

import math
from typing import Mapping

from bandsmith.solver.netlist import Element, Netlist
from bandsmith.circuits.synthesis import Exact, Infeasible, OverDetermined, Spec, choose_level, solve_pinned
from bandsmith.circuits.topology import Component, IdealFormulas, Topology
from bandsmith.common.values import format_value

COMPONENTS = (
    Component("R1", "R", "input resistor; sets the centre gain"),
    Component("R2", "R", "shunt resistor to ground; tunes f0 without touching the gain"),
    Component("R3", "R", "feedback resistor; sets Q and bandwidth"),
    Component("C1", "C", "capacitor to the inverting input"),
    Component("C2", "C", "capacitor to the output"),
)

# A 2 kHz alarm-tone detector for a machine-room monitor (our own scenario): Q ≈ 5, gain ≈ −4.
EXAMPLE = {"R1": 10e3, "R2": 866.0, "R3": 82e3, "C1": 10e-9, "C2": 10e-9}


# The op-amps, which carry no value: made once (an Element is immutable)
_U1 = Element("U1", "opamp", ("0", "m", "out"))


def build(v: Mapping[str, float]) -> Netlist:
    """Netlist of the multiple-feedback band-pass for validated part values (ohm, F)."""
    return Netlist(
        (
            Element("R1", "R", ("in", "a"), v["R1"]),
            Element("R2", "R", ("a", "0"), v["R2"]),
            Element("C1", "C", ("a", "m"), v["C1"]),
            Element("C2", "C", ("a", "out"), v["C2"]),
            Element("R3", "R", ("m", "out"), v["R3"]),
            _U1,
        )
    )


def formulas(v: Mapping[str, float]) -> IdealFormulas:
    """Textbook ideal figures."""
    r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    w0 = math.sqrt((1.0 / r1 + 1.0 / r2) / (r3 * c1 * c2))
    return IdealFormulas(
        f0_hz=w0 / (2.0 * math.pi),
        q=w0 * r3 * c1 * c2 / (c1 + c2),
        gain=-r3 * c1 / (r1 * (c1 + c2)),
    )


def _parts(spec: Spec, c1: float, c2: float) -> dict[str, float]:
    """Every part for capacitors C1, C2 (R2 NaN where the gain is out of reach)."""
    w, q, h = spec.w0, spec.q, spec.gain
    g2 = w * (q * (c1 + c2) - h * c2 / q)
    return {
        "R1": q / (h * w * c2),
        "R2": 1.0 / g2 if g2 > 0 else math.nan,
        "R3": q * (c1 + c2) / (w * c1 * c2),
        "C1": c1,
        "C2": c2,
    }


def synthesize(spec: Spec, fixed: dict[str, float] | None = None, *, series: str = "E24") -> Exact:
    """Exact part values for a target (see the module notes); pinned parts keep their values.

    ``series`` is the one the parts will be chosen from (the capacitor level is taken in it).

    Raises
    ------
    Infeasible
        A gain at or above ``Q²·(1 + C1/C2)`` (``2Q²`` with equal capacitors), or pins that
        leave no solution.
    """
    fixed = dict(fixed or {})
    q, h = spec.q, spec.gain
    limit = 2.0 * q * q
    if not fixed:
        if h >= limit * (1.0 - 1e-12):
            need = h / (q * q) - 1.0
            raise Infeasible(
                f"with equal capacitors the multiple-feedback band-pass reaches a centre gain below "
                f"2·Q² = {limit:.4g} only, and {h:.4g} was asked; lower the gain, raise Q, or pin "
                f"unequal capacitors with C1/C2 above |gain|/Q² − 1 = {need:.4g}"
            )
        unit = {"R1": q / (h * spec.w0), "R2": q / ((limit - h) * spec.w0), "R3": 2.0 * q / spec.w0, "C1": 1.0, "C2": 1.0}
        c = choose_level(unit, {r: r[0] for r in unit}, "C1", series)
        r3 = q / (math.pi * spec.f0_hz * c)
        values = {"R1": r3 / (2.0 * h), "R2": q / ((limit - h) * spec.w0 * c), "R3": r3, "C1": c, "C2": c}
        note = (
            f"impedance level: C1 = C2 = {format_value(c, 'F')} chosen so that the resistors sit best in "
            f"1 kΩ–1 MΩ (common practice); pin a part with --fix to set another level"
        )
        return Exact(values, [note])

    def parts(th):
        return _parts(spec, math.exp(th[0]), math.exp(th[1]))

    if not _reachable(spec, fixed):
        raise Infeasible(_gain_reason(spec, fixed))
    guess = fixed.get("C1") or fixed.get("C2") or 10e-9
    try:
        th, used = solve_pinned([math.log(guess)] * 2, parts, fixed, [("equal capacitors", lambda th: th[0] - th[1])])
    except OverDetermined:
        raise
    except Infeasible:
        raise Infeasible(_gain_reason(spec, fixed)) from None
    c1 = fixed.get("C1", math.exp(th[0]))
    c2 = fixed.get("C2", math.exp(th[1]))
    values = _parts(spec, c1, c2)
    values.update(fixed)
    if not all(v > 0 and math.isfinite(v) for v in values.values()):
        raise Infeasible(_gain_reason(spec, fixed))
    notes = [f"{', '.join(sorted(fixed))} pinned; the other parts follow"]
    if used:
        notes.append("C1 = C2 (equal capacitors) takes up the remaining freedom")
    return Exact(values, notes)


def _reachable(spec: Spec, fixed: dict[str, float]) -> bool:
    """Whether pinned capacitors leave the gain within reach (others are left to the solver)."""
    if "C1" in fixed and "C2" in fixed:
        return spec.gain < spec.q**2 * (1.0 + fixed["C1"] / fixed["C2"])
    return True


def _gain_reason(spec: Spec, fixed: dict[str, float]) -> str:
    pins = ", ".join(f"{r} = {format_value(v, 'F' if r[0] == 'C' else 'Ω')}" for r, v in sorted(fixed.items()))
    return (
        f"no multiple-feedback design meets f0 {format_value(spec.f0_hz, 'Hz')}, Q {spec.q:.4g}, gain "
        f"{spec.gain:.4g} with {pins}: the gain must stay below Q²·(1 + C1/C2) and every resistor "
        f"must come out positive; pin other parts or fewer"
    )


TOPOLOGY = Topology(
    id="mfb",
    title="Multiple-feedback band-pass (Delyiannis–Friend)",
    inverting=True,
    components=COMPONENTS,
    example=EXAMPLE,
    build=build,
    formulas=formulas,
    synthesize=synthesize,
    order=20,
    notes="No inductor, low sensitivity; the centre gain is limited to below 2·Q² with equal capacitors.",
)
