"""Sallen–Key band-pass around a non-inverting amplifier of gain K (``sallen-key``).

Netlist (the variant with the shunt capacitor at node ``a``): R1 from the input to ``a``; C1 from
``a`` to ground; R2 from ``a`` to the output (positive feedback); C2 from ``a`` to the
non-inverting input ``b``; R3 from ``b`` to ground. The amplifier's gain resistors are in the
netlist: RA from the inverting input ``m`` to ground, RB from the output to ``m``, so that
``K = 1 + RB/RA`` and a finite op-amp acts on them too.

Notes
-----
With an ideal op-amp,

    H(s) = (K·s/(R1·C1)) / (s² + s·[1/(R1·C1) + (1−K)/(R2·C1) + 1/(R3·C1) + 1/(R3·C2)]
                            + (R1 + R2)/(R1·R2·R3·C1·C2)).

With all resistors equal to R and both capacitors equal to C: ``ω0 = √2/(RC)``,
``Q = √2/(4 − K)``, centre gain ``K/(4 − K)``; the circuit is unstable for ``K ≥ 4``.

Design (``synthesize``). In the equal-part design the gain is tied to Q (``K = 4 − √2/Q``, gain
``2√2·Q − 1``), so a target with another gain needs unequal resistors. With conductances
normalised as ``x_i = 1/(R_i·ω0·C1)`` and ``r = C1/C2``, the three target equations become

    x1 = |H0|/(K·Q),   x3·(x1 + x2)·r = 1,   x1 + (1 − K)·x2 + (1 + r)·x3 = 1/Q,

and with ``y = x1 + x2`` the last two give ``(K − 1)·y² − (K·x1 − 1/Q)·y − (1 + r)/r = 0``, which
has exactly one positive root for ``K > 1``. For ``Q ≥ 0.5`` that root always exceeds ``x1``, so
every ``K > 1`` gives a stable design meeting f0, Q and the gain: R1 acts as the input divider that
sets the gain. The procedure takes ``C1 = C2``, chooses ``K`` (searched over 1.05–21) for the
least resistor spread — which is the equal-resistor design ``K = 4 − √2/Q`` exactly when the gain
asked is ``2√2·Q − 1`` — and the capacitor level from the E6 series that puts the resistors best in
1 kΩ–1 MΩ; RA and RB are then centred on the other resistors with ``RB/RA = K − 1``. Pinned parts
replace these choices in that order (equal capacitors kept longest); pinning both RA and RB fixes
``K``. High Q makes Q steeply sensitive to K (``S(Q; K) = 2√2·Q − 1`` in the equal-part design),
which the design warns about.

References
----------
S. Franco, *Design with Operational Amplifiers and Analog Integrated Circuits*, 3rd ed.,
McGraw-Hill, ch. 3 (the Sallen–Key band-pass, labels mapped to ours).
"""

from __future__ import annotations

import math
from typing import Mapping

import numpy as np

from bandsmith.solver.netlist import Element, Netlist
from bandsmith.circuits.synthesis import Exact, Infeasible, OverDetermined, Spec, choose_level, solve_pinned
from bandsmith.circuits.topology import Component, IdealFormulas, Topology
from bandsmith.common.values import format_value

COMPONENTS = (
    Component("R1", "R", "input resistor"),
    Component("R2", "R", "positive-feedback resistor from the output"),
    Component("R3", "R", "resistor from the non-inverting input to ground"),
    Component("C1", "C", "shunt capacitor to ground"),
    Component("C2", "C", "series capacitor to the non-inverting input"),
    Component("RA", "R", "amplifier gain resistor to ground (K = 1 + RB/RA)"),
    Component("RB", "R", "amplifier feedback resistor (K = 1 + RB/RA)"),
)

# A 500 Hz hum-band probe for a vibration logger (our own scenario): Q ≈ 1.8, gain ≈ +4.
EXAMPLE = {"R1": 4530.0, "R2": 4530.0, "R3": 4530.0, "C1": 100e-9, "C2": 100e-9, "RA": 10e3, "RB": 22.1e3}


# The op-amps, which carry no value: made once (an Element is immutable)
_U1 = Element("U1", "opamp", ("b", "m", "out"))


def build(v: Mapping[str, float]) -> Netlist:
    """Netlist of the Sallen–Key band-pass for validated part values (ohm, F)."""
    return Netlist(
        (
            Element("R1", "R", ("in", "a"), v["R1"]),
            Element("C1", "C", ("a", "0"), v["C1"]),
            Element("R2", "R", ("a", "out"), v["R2"]),
            Element("C2", "C", ("a", "b"), v["C2"]),
            Element("R3", "R", ("b", "0"), v["R3"]),
            Element("RA", "R", ("m", "0"), v["RA"]),
            Element("RB", "R", ("out", "m"), v["RB"]),
            _U1,
        )
    )


def formulas(v: Mapping[str, float]) -> IdealFormulas:
    """Textbook ideal figures from the transfer function above."""
    r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    k = 1.0 + v["RB"] / v["RA"]
    a1 = 1.0 / (r1 * c1) + (1.0 - k) / (r2 * c1) + 1.0 / (r3 * c1) + 1.0 / (r3 * c2)
    w0 = math.sqrt((r1 + r2) / (r1 * r2 * r3 * c1 * c2))
    q = w0 / a1 if a1 > 0 else math.inf
    return IdealFormulas(f0_hz=w0 / (2.0 * math.pi), q=q, gain=(k / (r1 * c1)) / a1 if a1 > 0 else math.inf)


_K_MIN, _K_MAX = 1.05, 21.0
_FILTER = ("R1", "R2", "R3", "C1", "C2")


def _normalised(spec: Spec, k, r):
    """``x1, x2, x3`` (arrays; x2 ≤ 0 where the gain cannot be met) for gain K and C1/C2 = r."""
    if type(k) is float and type(r) is float:
        one = _normalised_one(spec, k, r)
        if one is not None:
            return one
    k = np.asarray(k, dtype=float)
    if type(r) is not float:  # (one plain r, the usual case, enters as the same double)
        r = np.asarray(r, dtype=float)
    q = spec.q
    x1 = spec.gain / (k * q)
    a = k - 1.0
    b = -(k * x1 - 1.0 / q)
    c = -(1.0 + r) / r
    root = np.sqrt(b * b - 4.0 * a * c)
    # The positive root, written without cancellation for either sign of b (the branch not taken
    # may divide by zero: K = 1 on the grid's edge, or b + root = 0).
    with np.errstate(divide="ignore", invalid="ignore"):
        y = np.where(b <= 0, (-b + root) / (2.0 * a), (2.0 * (1.0 + r) / r) / (b + root))
    return x1, y - x1, 1.0 / (r * y)


def _normalised_one(spec: Spec, k: float, r: float) -> tuple[float, float, float] | None:
    """:func:`_normalised` of one K and one r in plain numbers (the same IEEE operations, so the
    same values, at a tenth of the cost of numpy on scalars); None where a root or a quotient is
    not a finite number (the array form gives those as NaN or inf)."""
    q = spec.q
    x1 = spec.gain / (k * q)
    a = k - 1.0
    b = -(k * x1 - 1.0 / q)
    c = -(1.0 + r) / r
    d = b * b - 4.0 * a * c
    if not d >= 0.0:
        return None
    root = math.sqrt(d)
    try:
        y = (-b + root) / (2.0 * a) if b <= 0 else (2.0 * (1.0 + r) / r) / (b + root)
        return x1, y - x1, 1.0 / (r * y)
    except ZeroDivisionError:
        return None


def _spread(x1, x2, x3):
    """Largest over least of R1, R2, R3's normalised values (inf where the least is not above
    zero); three plain numbers, none NaN, in plain numbers (the same comparisons and quotient)."""
    if type(x1) is float and type(x2) is float and type(x3) is float and not math.isnan(x1 + x2 + x3):
        lo = min(x1, x2, x3)
        return max(x1, x2, x3) / lo if lo > 0 else math.inf
    lo = np.minimum(np.minimum(x1, x2), x3)
    with np.errstate(invalid="ignore", divide="ignore"):
        out = np.maximum(np.maximum(x1, x2), x3) / lo
    return np.where(lo > 0, out, np.inf)


_KM1_GRID = np.geomspace(_K_MIN - 1.0, _K_MAX - 1.0, 160)  # K − 1, logarithmic
_K_GRID = 1.0 + _KM1_GRID  # the gains K of that grid
_UNIT_FINE = np.linspace(0.0, 1.0, 161)
# Numbers the grid's spreads take for r = 1 (C1 = C2, the usual design) that depend on K alone:
# _normalised's a = K − 1, 4·a·c with c = −(1 + r)/r = −2, and 2·a (the same operations, made once).
_K_GRID_A = _K_GRID - 1.0
_K_GRID_TERMS = (_K_GRID_A, 4.0 * _K_GRID_A * -2.0, 2.0 * _K_GRID_A)
# How far from 1 the centre gain must be for b = 1/Q − K·x1 to have one sign at every K (below).
_GAIN_MARGIN = 1e-9


def _grid_spreads(spec: Spec, k: np.ndarray, r: float, terms: tuple | None = None) -> np.ndarray:
    """``_spread(*_normalised(spec, k, r))`` over an array of gains ``k`` for one plain ``r``, the
    same IEEE operations on the same numbers in fewer array calls (``terms``: ``a = k − 1``,
    ``4·a·c`` and ``2·a``, where already made for this ``k`` and ``r``).

    ``b = 1/Q − K·x1`` is ``−(K·x1 − 1/Q)`` exactly (a difference and its negation round alike),
    and ``−b + root`` is ``root − b``. With ``x1 = G/(K·Q)``, ``K·x1`` is ``G/Q`` within a few
    units in the last place and ``1/Q`` within one, so ``b`` is below zero at every K where the
    gain G is above 1 by more than :data:`_GAIN_MARGIN` and above zero where it is below 1 by
    as much: only the quotient :func:`_normalised`'s ``where`` takes there is made. A product by
    ``r = 1`` is exact, so ``x3 = 1/y`` then. Floating-point warnings silenced (a grid may reach
    K where no design exists: its spread is inf there, never the least)."""
    q, gain = spec.q, spec.gain
    with np.errstate(divide="ignore", invalid="ignore"):
        x1 = gain / (k * q)
        if terms is None:
            a = k - 1.0
            terms = (a, 4.0 * a * (-(1.0 + r) / r), 2.0 * a)
        _, four_ac, two_a = terms
        b = 1.0 / q - k * x1
        root = np.sqrt(b * b - four_ac)
        if gain > 1.0 + _GAIN_MARGIN:
            y = (root - b) / two_a
        elif gain < 1.0 - _GAIN_MARGIN:
            y = (2.0 * (1.0 + r) / r) / (b + root)
        else:
            y = np.where(b <= 0, (root - b) / two_a, (2.0 * (1.0 + r) / r) / (b + root))
        x2 = y - x1
        x3 = 1.0 / (y if r == 1.0 else r * y)
        lo = np.minimum(np.minimum(x1, x2), x3)
        out = np.maximum(np.maximum(x1, x2), x3)
        out /= lo
    return np.where(lo > 0, out, np.inf)


def best_gain_k(spec: Spec, r: float = 1.0) -> float:
    """The amplifier gain K (1.05 to 21) that gives the least spread of R1, R2, R3 for C1/C2 = r."""
    if r == 1.0:
        k_eq = 4.0 - math.sqrt(2.0) / spec.q
        if k_eq > 1.0 and float(_spread(*_normalised(spec, k_eq, r))) <= 1.0 + 1e-12:
            return k_eq  # the equal-resistor design meets this gain exactly
    km1 = _KM1_GRID
    r = float(r)
    sp = _grid_spreads(spec, _K_GRID, r, _K_GRID_TERMS if r == 1.0 else None)
    i = int(sp.argmin())
    if not math.isfinite(sp[i]):
        raise Infeasible(f"no amplifier gain K from {_K_MIN} to {_K_MAX:g} meets Q {spec.q:.4g} with gain {spec.gain:.4g} (Q below about 0.35 is out of reach)")
    # Refine between the grid neighbours (the spread is smooth there but for its kink at the
    # optimum) to about 5e-4 in K − 1; any K meets the target exactly, so this only tidies the choice.
    lo, hi = km1[max(i - 1, 0)], km1[min(i + 1, km1.size - 1)]
    fine = lo * (hi / lo) ** _UNIT_FINE
    return 1.0 + float(fine[int(_grid_spreads(spec, 1.0 + fine, r).argmin())])


def _filter_parts(spec: Spec, c1: float, r: float, k: float) -> dict[str, float]:
    x1, x2, x3 = (float(v) for v in _normalised(spec, k, r))
    wc = spec.w0 * c1
    return {
        "R1": 1.0 / (x1 * wc) if x1 * wc > 0 else math.nan,
        "R2": 1.0 / (x2 * wc) if x2 * wc > 0 else math.nan,
        "R3": 1.0 / (x3 * wc) if x3 * wc > 0 else math.nan,  # a search may pass through x = 0
        "C1": c1,
        "C2": c1 / r,
    }


def _gain_network(values: dict[str, float], k: float, fixed: dict[str, float]) -> tuple[float, float]:
    """RA, RB for gain K: pinned ones kept, otherwise centred on the filter's resistors."""
    if "RA" in fixed and "RB" in fixed:
        return fixed["RA"], fixed["RB"]
    if "RA" in fixed:
        return fixed["RA"], (k - 1.0) * fixed["RA"]
    if "RB" in fixed:
        return fixed["RB"] / (k - 1.0), fixed["RB"]
    centre = (values["R1"] * values["R2"] * values["R3"]) ** (1.0 / 3.0)
    ra = centre / math.sqrt(k - 1.0)
    return ra, (k - 1.0) * ra


def synthesize(spec: Spec, fixed: dict[str, float] | None = None, *, series: str = "E24") -> Exact:
    """Exact part values for a target (see the module notes); pinned parts keep their values.

    ``series`` is the one the parts will be chosen from (the capacitor level is taken in it).

    Raises
    ------
    Infeasible
        Pins that leave no stable solution, a pinned gain K at or below 1, or a Q out of reach.
    """
    fixed = dict(fixed or {})
    k_pinned = None
    if "RA" in fixed and "RB" in fixed:
        k_pinned = 1.0 + fixed["RB"] / fixed["RA"]
    pins = {r: v for r, v in fixed.items() if r in _FILTER}
    notes = []

    if not pins:
        k = k_pinned if k_pinned is not None else best_gain_k(spec)
        unit = _filter_parts(spec, 1.0, 1.0, k)
        if not all(math.isfinite(v) and v > 0 for v in unit.values()):
            raise Infeasible(f"with K = 1 + RB/RA = {k:.5g} pinned no resistor set meets Q {spec.q:.4g} and gain {spec.gain:.4g}")
        c = choose_level(unit, {r: r[0] for r in unit}, "C1", series)
        values = _filter_parts(spec, c, 1.0, k)
        notes.append(
            f"impedance level: C1 = C2 = {format_value(c, 'F')} chosen so that the resistors sit best in "
            f"1 kΩ–1 MΩ (common practice); pin a part with --fix to set another level"
        )
        if k_pinned is None:
            equal = abs(values["R1"] / values["R2"] - 1.0) < 1e-9 and abs(values["R3"] / values["R2"] - 1.0) < 1e-9
            notes.append(
                f"K = 1 + RB/RA = {k:.5g}: " + ("the equal-resistor design, which gives this gain exactly" if equal else "chosen for the least resistor spread; R1 with R2 sets the gain")
            )
    else:
        def parts(th):
            return _filter_parts(spec, math.exp(th[0]), math.exp(th[1]), 1.0 + math.exp(th[2]))

        defaults = [("equal capacitors", lambda th: th[1])]
        extra = []
        if k_pinned is not None:
            if k_pinned <= 1.0:
                raise Infeasible("RB/RA must be above zero")
            extra.append(lambda th: th[2] - math.log(k_pinned - 1.0))
        else:
            defaults.append(("K for the least resistor spread", lambda th: th[2] - math.log(best_gain_k(spec, math.exp(th[1])) - 1.0)))
        c_guess = pins.get("C1") or pins.get("C2") or 10e-9
        k0 = k_pinned or best_gain_k(spec)
        try:
            th, used = solve_pinned([math.log(c_guess), 0.0, math.log(k0 - 1.0)], parts, pins, defaults, extra=extra)
        except OverDetermined as exc:
            raise Infeasible(exc.reason.replace("pin at most", "pin at most (RA with RB counting as one)")) from None
        except Infeasible:
            shown = ", ".join(f"{r} = {format_value(v, 'F' if r[0] == 'C' else 'Ω')}" for r, v in sorted(fixed.items()))
            raise Infeasible(f"no Sallen–Key design meets f0 {format_value(spec.f0_hz, 'Hz')}, Q {spec.q:.4g}, gain {spec.gain:.4g} with {shown}; pin other parts or fewer") from None
        c1 = pins.get("C1", math.exp(th[0]))
        r = c1 / pins["C2"] if "C2" in pins else math.exp(th[1])
        k = k_pinned if k_pinned is not None else 1.0 + math.exp(th[2])
        values = _filter_parts(spec, c1, r, k)
        values.update(pins)
        notes.append(f"{', '.join(sorted(fixed))} pinned; the other parts follow")
        for name in used:
            notes.append(f"{name} takes up the remaining freedom" + (f" (K = {k:.5g})" if name.startswith("K") else ""))
    ra, rb = _gain_network(values, k, fixed)
    values["RA"], values["RB"] = ra, rb
    if not all(math.isfinite(v) and v > 0 for v in values.values()):
        raise Infeasible(f"no Sallen–Key design with positive parts meets Q {spec.q:.4g} and gain {spec.gain:.4g} here")
    return Exact(values, notes)


TOPOLOGY = Topology(
    id="sallen-key",
    title="Sallen–Key band-pass (non-inverting, gain K)",
    inverting=False,
    components=COMPONENTS,
    example=EXAMPLE,
    build=build,
    formulas=formulas,
    synthesize=synthesize,
    order=30,
    notes="Non-inverting; Q rises steeply as K nears 4, so high-Q stages need tight gain resistors.",
)
