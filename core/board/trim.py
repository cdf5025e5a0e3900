"""A trim plan: which resistor to make adjustable for f0, Q and gain, the trimmer and fixed resistor
that cover the tolerance spread, and the correction for a measured f0.

The choice comes from the normalised sensitivities ``S = ∂ln y/∂ln x`` of the circuit: for each
figure, among the resistors that move it well (|S| at least a quarter of the largest), the one with
the smallest *interaction*, the largest |S| on the other figures divided by its |S| on this one.
The other figures are, for f0, the gain and the bandwidth (a band-pass is re-centred at constant
bandwidth, S_bw = S_f0 − S_Q); for Q, f0 and the gain; for the gain, f0 and Q. For the
multiple-feedback band-pass this picks the shunt resistor to ground, the classic choice (A. B.
Williams and F. J. Taylor, *Electronic Filter Design Handbook*, 4th ed., McGraw-Hill, 2006, the
chapter on band-pass filters: the MFB band-pass's centre frequency adjusted by R2 at constant
bandwidth and gain; section from memory). It follows from the formulas: ω0² ∝ (1/R1 + 1/R2),
while the bandwidth (C1 + C2)/(R3·C1·C2) and the gain R3·C1/(R1·(C1 + C2)) have no R2 in them.

The spread a trim must cover is 3σ of the figure, σ² = Σ (S_i·σ_i)², each part's value uniform
within ± its tolerance p (σ_i = p/√3, the Monte Carlo's default draw). The trim part must then
move by ±3σ/|S| of its value: a fixed resistor (E24, at or below the low end with its own
tolerance) in series with a trimmer (a 1-2-5 value, ±10 % tolerance, set to 0.1 % of its track —
common practice, no source) reaching the high end.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Mapping

import numpy as np
from scipy.optimize import brentq

from bandsmith.analysis.analyzer import ideal_figures, sensitivities, transfer_function
from bandsmith.analysis.figures import Figures, measure
from bandsmith.common.eseries import neighbours
from bandsmith.common.errors import InputError
from bandsmith.common.jsonutil import finite_or_none
from bandsmith.board.physics import scaled
from bandsmith.solver.netlist import Netlist

__all__ = ["TrimChoice", "Correction", "TrimPlan", "trim_plan", "trimmed_trials", "with_monte_carlo", "DEFAULT_TOLERANCES",
           "TRIMMER_VALUES", "TRIMMER_TOLERANCE", "SETTING_RESOLUTION"]

DEFAULT_TOLERANCES = {"R": 0.01, "C": 0.05, "L": 0.10}
TRIMMER_VALUES = tuple(m * 10.0 ** k for k in range(1, 7) for m in (1.0, 2.0, 5.0))  # 10 Ω … 5 MΩ
TRIMMER_TOLERANCE = 0.10
SETTING_RESOLUTION = 1e-3  # a multi-turn trimmer set to 0.1 % of its track
OTHERS = {"f0": ("gain", "bw"), "q": ("f0", "gain"), "gain": ("f0", "q")}
MOVE_SHARE = 0.25
MIN_S = 1e-3
C0G_TC = 30e-6  # EIA-198 C0G: 0 ± 30 ppm/K  # a resistor with |S| below this does not move the figure


@dataclass(frozen=True, slots=True)
class TrimChoice:
    """The trim for one figure.

    ``part`` is the resistor made adjustable; ``sensitivity`` its S on the figure; ``others`` its S
    on the other figures; ``interaction`` = max |S_other| / |S|; ``spread_3sigma_pct`` the figure's
    3σ spread from the tolerances (per cent); ``fixed_ohm`` + ``trimmer_ohm`` replace the part;
    ``range_pct`` is the figure's guaranteed adjustment each way (per cent) with both parts at their
    tolerance limits; ``resolution_pct`` the figure's change for one setting step (per cent).
    """

    figure: str
    part: str
    nominal_ohm: float
    sensitivity: float
    others: Mapping[str, float]
    interaction: float
    spread_3sigma_pct: float
    trimmer_ohm: float
    fixed_ohm: float
    range_pct: float
    resolution_pct: float

    def to_json(self) -> dict:
        return {"part": self.part, "interaction": self.interaction, "trimmer_ohm": finite_or_none(self.trimmer_ohm),
                "fixed_ohm": finite_or_none(self.fixed_ohm), "range_pct": self.range_pct,
                "resolution_pct": finite_or_none(self.resolution_pct),
                "nominal_ohm": self.nominal_ohm, "sensitivity": self.sensitivity, "others": dict(self.others),
                "spread_3sigma_pct": self.spread_3sigma_pct}


@dataclass(frozen=True, slots=True)
class Correction:
    """The new value of the f0 trim part for a measured f0 (exact solve, and the linear estimate)."""

    part: str
    old_value: float
    new_value: float
    linear_value: float
    measured_f0_hz: float
    target_f0_hz: float
    in_range: bool

    def to_json(self) -> dict:
        return {"part": self.part, "old_value": self.old_value, "new_value": self.new_value,
                "linear_value": self.linear_value, "measured_f0_hz": self.measured_f0_hz,
                "target_f0_hz": self.target_f0_hz, "in_range": self.in_range}


@dataclass(frozen=True)
class TrimPlan:
    """The trims for f0, Q and gain, and a correction when a measured f0 was given.

    Attributes
    ----------
    nominal : Figures
        The circuit's ideal figures.
    f0, q, gain : TrimChoice
        The trim for each figure.
    tolerances : dict
        The tolerance of each part (fraction).
    correction : Correction or None
        With a measured f0.
    monte_carlo : mapping or None
        With trials: ``trials``, ``seed``, ``window_pct`` and the share of trials with f0 inside
        the window before and after trimming (``within_before``, ``within_after``, fractions).
    procedure : tuple of str
        The bench steps, in order.
    """

    nominal: Figures
    f0: TrimChoice
    q: TrimChoice
    gain: TrimChoice
    tolerances: Mapping[str, float]
    correction: Correction | None
    procedure: tuple
    monte_carlo: Mapping[str, float] | None = None

    def to_json(self) -> dict:
        return {"nominal": self.nominal.to_json(), "f0": self.f0.to_json(), "q": self.q.to_json(),
                "gain": self.gain.to_json(), "tolerances": dict(self.tolerances),
                "correction": self.correction.to_json() if self.correction else None,
                "procedure": list(self.procedure),
                "monte_carlo": dict(self.monte_carlo) if self.monte_carlo else None}


def part_tolerances(netlist: Netlist, given: Mapping[str, float]) -> dict[str, float]:
    """Each passive's tolerance: by reference, else by kind, else the default (R 1 %, C 5 %, L 10 %)."""
    known = {"R", "C", "L"} | {e.ref for e in netlist.passives}
    for key in given:
        if key not in known:
            raise InputError(f"tol {key}", f"not a kind (R, C, L) nor a part of this circuit ({', '.join(e.ref for e in netlist.passives)})")
    out = {}
    for e in netlist.passives:
        out[e.ref] = float(given.get(e.ref, given.get(e.kind, DEFAULT_TOLERANCES[e.kind])))
    return out


def _choose(figure: str, sens: Mapping[str, Mapping[str, float]], resistors, taken=()) -> tuple[str, float, dict, float]:
    """The part for ``figure``: one not trimming another figure where there is one, then the least
    interaction (to 6 digits), then the largest |S|. Parts moving the figure by less than a quarter of
    the best one are passed over."""
    own = {r: abs(sens[figure][r]) for r in resistors}
    best = max(own.values())
    if best <= 1e-6:
        raise InputError("parts", f"no part moves {figure}")
    rows = []
    for r in resistors:
        if own[r] < MOVE_SHARE * best:
            continue
        others = {o: float(sens[o][r]) for o in OTHERS[figure]}
        inter = max(abs(v) for v in others.values()) / own[r]
        inter = 0.0 if inter < 1e-9 else inter  # numerical noise of the central differences
        rows.append((r in taken, round(inter, 6), -own[r], r, others, inter))
    *_, part, others, inter = min(rows)
    return part, float(sens[figure][part]), others, float(inter)


def _trimmer(nominal: float, s: float, need: float, tol_fixed: float) -> tuple[float, float, float, float]:
    """Fixed (E24) and trimmer (1-2-5) for a ±need figure move; guaranteed range and resolution (fractions)."""
    r = need / abs(s)
    top = nominal * (1 - r) / (1 + tol_fixed)
    fixed = 0.0 if top <= 0 else neighbours(top, "E24")[0]
    if fixed > top * (1 + 1e-9):
        fixed = neighbours(fixed * 0.999, "E24")[0]
    want = (nominal * (1 + r) - fixed * (1 - tol_fixed)) / (1 - TRIMMER_TOLERANCE)
    trimmer = next((t for t in TRIMMER_VALUES if t >= want), TRIMMER_VALUES[-1])
    lo = fixed * (1 + tol_fixed) / nominal - 1
    hi = (fixed * (1 - tol_fixed) + trimmer * (1 - TRIMMER_TOLERANCE)) / nominal - 1
    reach = abs(s) * min(-lo, hi)
    resolution = abs(s) * SETTING_RESOLUTION * trimmer / nominal
    return fixed, trimmer, reach, resolution


def _f0_of(netlist: Netlist, ref: str, value: float) -> float:
    return float(ideal_figures(netlist.with_values({ref: value})).f0_hz[0])


def _correction(netlist: Netlist, choice: TrimChoice, measured: float, target: float,
                fitted: Mapping[str, float] | None = None) -> Correction:
    r0 = choice.nominal_ohm
    if fitted:  # the fit located the deviation: solve on the fitted circuit for the target itself
        netlist = scaled(netlist, {e.ref: fitted[e.ref] / e.value for e in netlist.passives if e.ref in fitted})
        r0 = netlist.element(choice.part).value
        measured = _f0_of(netlist, choice.part, r0)
        goal = target
    else:
        model = _f0_of(netlist, choice.part, r0)
        goal = target * model / measured  # the built stage is the model scaled by measured/model
    lin = r0 * (target / measured) ** (1.0 / choice.sensitivity)
    try:
        x = brentq(lambda lx: math.log(_f0_of(netlist, choice.part, math.exp(lx)) / goal),
                   math.log(r0 / 20), math.log(r0 * 20), xtol=1e-10)
        new = math.exp(x)
    except ValueError:
        raise InputError("measured-f0", f"no value of {choice.part} within ×20 brings f0 to {target:g} Hz") from None
    tol = DEFAULT_TOLERANCES["R"]
    if not math.isfinite(choice.fixed_ohm):
        return Correction(choice.part, choice.nominal_ohm, new, lin, measured, target, True)
    in_range = choice.fixed_ohm * (1 + tol) <= new <= choice.fixed_ohm * (1 - tol) + choice.trimmer_ohm * (1 - TRIMMER_TOLERANCE)
    return Correction(choice.part, choice.nominal_ohm, new, lin, measured, target, bool(in_range))


def trim_plan(
    netlist: Netlist,
    *,
    tolerances: Mapping[str, float] | None = None,
    measured_f0_hz: float | None = None,
    target_f0_hz: float | None = None,
    fitted: Mapping[str, float] | None = None,
) -> TrimPlan:
    """The trim plan of a circuit (ideal op-amp).

    Parameters
    ----------
    netlist : Netlist
        The circuit at its nominal values.
    tolerances : mapping, optional
        Tolerances (fractions) by reference or by kind.
    measured_f0_hz, target_f0_hz : float, optional
        A measured f0 and the f0 to reach (the nominal one by default), in Hz.
    fitted : mapping, optional
        Part values fitted to a measured sweep (``bandsmith fit``): the correction is solved on
        that circuit (its f0 is the measured one).
    """
    nominal = ideal_figures(netlist).item(0)
    sens = {k: dict(v) for k, v in sensitivities(netlist).items()}
    sens["bw"] = {r: sens["f0"][r] - sens["q"][r] for r in sens["f0"]}
    tol = part_tolerances(netlist, tolerances or {})
    resistors = [e.ref for e in netlist.passives if e.kind == "R"]
    if not resistors:
        raise InputError("parts", "the circuit has no resistor to trim")
    choices = {}
    every = [e.ref for e in netlist.passives]
    for fig in ("f0", "q", "gain"):
        moving = [r for r in resistors if abs(sens[fig][r]) > MIN_S]
        taken = tuple(c.part for c in choices.values())
        part, s, others, inter = _choose(fig, sens, moving if moving else every, taken)
        sigma = math.sqrt(sum((sens[fig].get(ref, 0.0) * p / math.sqrt(3.0)) ** 2 for ref, p in tol.items()))
        need = 3.0 * sigma
        r0 = netlist.element(part).value
        if netlist.element(part).kind == "R":
            fixed, trimmer, reach, res = _trimmer(r0, s, need, tol[part])
        else:  # no resistor moves it: the L or C itself must be adjustable (slug-tuned coil, trimmer capacitor)
            fixed, trimmer, reach, res = math.nan, math.nan, need, math.nan
        choices[fig] = TrimChoice(fig, part, r0, s, others, inter, 100 * need, trimmer, fixed, 100 * reach, 100 * res)
    correction = None
    if measured_f0_hz is not None or fitted:
        target = target_f0_hz if target_f0_hz is not None else nominal.f0_hz
        correction = _correction(netlist, choices["f0"], measured_f0_hz or math.nan, target, fitted)
    c = choices
    procedure = (
        (f"Fit {c['f0'].part} as {c['f0'].fixed_ohm:.4g} Ω fixed in series with a {c['f0'].trimmer_ohm:.4g} Ω trimmer set to mid-track."
         if math.isfinite(c["f0"].trimmer_ohm) else
         f"No resistor moves f0: make {c['f0'].part} adjustable over ±{c['f0'].range_pct / abs(c['f0'].sensitivity):.3g} % "
         "(a slug-tuned inductor or a trimmer capacitor in parallel)."),
        f"Trim f0 first with {c['f0'].part} (it moves f0 with S = {c['f0'].sensitivity:+.3g}; "
        + (f"the gain and the bandwidth by at most {c['f0'].interaction:.2g}× as much)."
           if c["f0"].interaction > 0 else "the gain and the bandwidth not at all)."),
        f"Then Q with {c['q'].part} (S = {c['q'].sensitivity:+.3g}), and re-check f0.",
        f"Gain last with {c['gain'].part} (S = {c['gain'].sensitivity:+.3g}).",
    )
    return TrimPlan(nominal, c["f0"], c["q"], c["gain"], tol, correction, procedure)


def trimmed_trials(netlist: Netlist, plan: TrimPlan, *, trials: int = 2000, seed: int = 1, keep_values: bool = False):
    """Monte Carlo of f0 before and after trimming f0 with the plan's part (ideal op-amp).

    Every part is drawn uniform within its tolerance; the trim part is then set (three Newton steps
    in ln R on the batch) to bring f0 to nominal, quantised to the trimmer's setting step and held
    within the fixed + trimmer range. Returns (f0 before, f0 after) in Hz, one per trial, and with
    ``keep_values`` the trimmed part values too.
    """
    rng = np.random.default_rng(seed)
    values = {e.ref: e.value * (1 + rng.uniform(-plan.tolerances[e.ref], plan.tolerances[e.ref], trials))
              for e in netlist.passives}
    f_nom = float(plan.nominal.f0_hz)
    choice = plan.f0

    def f0(vals):
        return np.asarray(measure(transfer_function(netlist, overrides=vals)).f0_hz, dtype=float)

    before = f0(values)
    tol_fixed = plan.tolerances[choice.part]
    fixed = choice.fixed_ohm * (1 + rng.uniform(-tol_fixed, tol_fixed, trials))
    trimmer = choice.trimmer_ohm * (1 + rng.uniform(-TRIMMER_TOLERANCE, TRIMMER_TOLERANCE, trials))
    r = values[choice.part].copy()
    current = before
    for _ in range(3):
        r = r * (f_nom / current) ** (1.0 / choice.sensitivity)
        setting = np.clip(r - fixed, 0.0, trimmer)
        step = SETTING_RESOLUTION * trimmer
        r = fixed + np.round(setting / step) * step
        current = f0({**values, choice.part: r})
    if keep_values:
        return before, current, {**values, choice.part: r}
    return before, current


def over_temperature(netlist: Netlist, values: Mapping[str, np.ndarray], t_range: tuple[float, float],
                     tempco: Mapping[str, float], rng: np.random.Generator) -> np.ndarray:
    """f0 (Hz) of each trial at a temperature drawn uniform in ``t_range`` (°C).

    Each part's coefficient is drawn uniform within ± the coefficient of its reference or kind (a
    data sheet's ±α, sign unknown), per K; values move by ``1 + α·(T − 25 °C)``.
    """
    trials = next(iter(values.values())).size
    t = rng.uniform(t_range[0], t_range[1], trials)
    moved = {}
    for e in netlist.passives:
        a = abs(float(tempco.get(e.ref, tempco.get(e.kind, 0.0))))
        moved[e.ref] = values[e.ref] * (1 + rng.uniform(-a, a, trials) * (t - 25.0))
    return np.asarray(measure(transfer_function(netlist, overrides=moved)).f0_hz, dtype=float)


def with_monte_carlo(netlist: Netlist, plan: TrimPlan, *, trials: int, window: float = 0.005, seed: int = 1,
                     t_range: tuple[float, float] | None = None, tempco: Mapping[str, float] | None = None) -> TrimPlan:
    """The plan with a Monte Carlo of f0 before and after trimming (:func:`trimmed_trials`), and,
    with ``t_range`` (°C), of the trimmed stage over temperature (:func:`over_temperature`)."""
    if not (isinstance(trials, int) and 1 <= trials <= 1_000_000):
        raise InputError("trials", f"must be a whole number from 1 to 1000000, got {trials!r}")
    if not (math.isfinite(window) and 0 < window < 1):
        raise InputError("window", f"must be a fraction between 0 and 1, got {window!r}")
    before, after, trimmed = trimmed_trials(netlist, plan, trials=trials, seed=seed, keep_values=True)
    f0 = float(plan.nominal.f0_hz)
    mc = {"trials": trials, "seed": seed, "window_pct": 100 * window,
          "within_before": float(np.mean(np.abs(before / f0 - 1) <= window)),
          "within_after": float(np.mean(np.abs(after / f0 - 1) <= window))}
    if t_range is not None:
        from bandsmith.board.physics import DEFAULT_TEMPCO

        tc = {**DEFAULT_TEMPCO, "C": C0G_TC, **dict(tempco or {})}
        hot = over_temperature(netlist, trimmed, t_range, tc, np.random.default_rng(seed + 1))
        mc.update({"t_low_c": t_range[0], "t_high_c": t_range[1],
                   "within_after_over_temperature": float(np.mean(np.abs(hot / f0 - 1) <= window))})
    return replace(plan, monte_carlo=mc)
