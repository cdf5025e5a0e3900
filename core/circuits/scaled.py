"""The design procedure shared by the multi-amplifier circuits: one impedance level, a resistor pair.

The dual-amplifier, state-variable, Tow–Thomas and Åkerberg–Mossberg band-passes are designed
the same way: for capacitors C1 and C2 a closed form gives every resistor of the filter, and one
pair of resistors (an inverter, an amplifier's gain network) enters only through its ratio, so
its own level is free. :func:`synthesize_scaled` takes such a closed form and

- unpinned: takes C1 = C2 from the capacitor series at the level that puts the resistors best in
  1 kΩ–1 MΩ (:func:`bandsmith.circuits.synthesis.choose_level`); the pair sits at the level of an
  anchor resistor (the integrators' ``R``, say);
- with pinned filter parts: solves for C1 and C2 (equal capacitors as the default that takes up
  the remaining freedom, :func:`bandsmith.circuits.synthesis.solve_pinned`);
- with one resistor of the pair pinned: the other follows from the ratio; with both pinned, their
  ratio must be one the circuit can use (``ratio_ok``), and the closed form is given it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

from bandsmith.circuits.synthesis import Exact, Infeasible, OverDetermined, Spec, choose_level, solve_pinned
from bandsmith.common.values import format_value

__all__ = ["Pair", "synthesize_scaled"]


@dataclass(frozen=True, slots=True)
class Pair:
    """Two resistors that act only through their ratio ``high/low``.

    Parameters
    ----------
    low, high : str
        Part references; ``high = ratio · low``.
    anchor : str
        The filter resistor whose value ``low`` takes by default.
    """

    low: str
    high: str
    anchor: str


def synthesize_scaled(
    spec: Spec,
    fixed: dict[str, float] | None,
    series: str,
    *,
    name: str,
    unit: Callable[[Spec, float, float, float | None], dict[str, float]],
    ratio: Callable[[Spec], float],
    pair: Pair,
    ratio_ok: Callable[[Spec, float], str | None] = lambda spec, r: None,
    notes: tuple[str, ...] = (),
) -> Exact:
    """Exact parts of a circuit designed as the module notes describe.

    Parameters
    ----------
    spec : Spec
        The target.
    fixed : dict, optional
        Pinned parts (SI units).
    series : str
        The series the parts will be chosen from (the capacitor level is taken in it).
    name : str
        The circuit's name, for messages.
    unit : callable
        ``(spec, c1, c2, ratio) -> {ref: value}``: the filter's parts (capacitors included, the
        pair excluded) for capacitors ``c1``, ``c2`` (F) and the pair's ratio; it raises
        :class:`Infeasible` for a target out of reach.
    ratio : callable
        ``spec -> ratio`` the design uses for the pair by default.
    pair : Pair
        The resistor pair.
    ratio_ok : callable
        ``(spec, ratio) -> None or reason`` for a ratio fixed by two pinned resistors.
    notes : tuple of str
        Design notes to add (what the gain is tied to, say).
    """
    fixed = dict(fixed or {})
    r = ratio(spec)
    if pair.low in fixed and pair.high in fixed:
        r = fixed[pair.high] / fixed[pair.low]
        why = ratio_ok(spec, r)
        if why:
            raise Infeasible(f"{pair.high}/{pair.low} = {r:.4g} pinned: {why}")
    pins = {k: v for k, v in fixed.items() if k not in (pair.low, pair.high)}
    out = list(notes)
    if not pins:
        base = unit(spec, 1.0, 1.0, r)
        scale_set = dict(base)
        scale_set[pair.low] = base[pair.anchor]
        scale_set[pair.high] = base[pair.anchor] * r
        c = choose_level(scale_set, {k: k[0] for k in scale_set}, "C1", series)
        values = unit(spec, c, c, r)
        out.insert(
            0,
            f"impedance level: C1 = C2 = {format_value(c, 'F')} chosen so that the resistors sit best in "
            f"1 kΩ–1 MΩ (common practice); pin a part with --fix to set another level",
        )
    else:
        def parts(th):
            try:
                return unit(spec, math.exp(th[0]), math.exp(th[1]), r)
            except Infeasible:
                return {k: math.nan for k in pins}

        guess = pins.get("C1") or pins.get("C2") or 10e-9
        try:
            th, used = solve_pinned([math.log(guess)] * 2, parts, pins, [("equal capacitors", lambda th: th[0] - th[1])])
        except OverDetermined as exc:
            raise Infeasible(exc.reason + f" ({pair.low} and {pair.high} set only a ratio: pin them apart)") from None
        except Infeasible:
            shown = ", ".join(f"{k} = {format_value(v, 'F' if k[0] == 'C' else 'Ω')}" for k, v in sorted(pins.items()))
            raise Infeasible(
                f"no {name} design meets f0 {format_value(spec.f0_hz, 'Hz')}, Q {spec.q:.4g}, gain "
                f"{spec.gain:.4g} with {shown}; pin other parts or fewer"
            ) from None
        values = unit(spec, pins.get("C1", math.exp(th[0])), pins.get("C2", math.exp(th[1])), r)
        values.update(pins)
        out.insert(0, f"{', '.join(sorted(fixed))} pinned; the other parts follow")
        if used:
            out.insert(1, "C1 = C2 (equal capacitors) takes up the remaining freedom")
    if pair.low in fixed:
        values[pair.low] = fixed[pair.low]
        values[pair.high] = fixed.get(pair.high, fixed[pair.low] * r)
    elif pair.high in fixed:
        values[pair.high] = fixed[pair.high]
        values[pair.low] = fixed[pair.high] / r
    else:
        values[pair.low] = values[pair.anchor]
        values[pair.high] = values[pair.anchor] * r
    if not all(math.isfinite(v) and v > 0 for v in values.values()):
        raise Infeasible(f"no {name} design with positive parts meets Q {spec.q:.4g} and gain {spec.gain:.4g} here")
    return Exact(values, out)
