"""Higher-order band-pass filters as chains of second-order stages built from our circuits.

This module is the building: the rules below, the built stage and chain, and the functions that
apply the rules, kept together (some 550 lines) because every one of them reads the same rules.
What a chain is asked to be is in :mod:`bandsmith.chain.chain_settings`, measuring a built chain
in :mod:`bandsmith.chain.chain_measure`, its JSON and session form in :mod:`bandsmith.chain.cascade_json`.

A request (response family, prototype order N, band, centre gain) becomes N band-pass sections
(:mod:`bandsmith.chain.bandpass`: Geffe's transformation, ascending-Q order, equal internal peaks), each
built from a circuit by :func:`bandsmith.design.designer.design`, either the one the user names or, with
``auto``, one chosen by the rule below. The built chain is then measured as a whole.

Rules
-----
- Stage tolerances: in a chain a stage's f0 must stay within a share of its own bandwidth, so each
  stage is held to f0 within ``STAGE_F0_SHARE/Q`` (5 % of its bandwidth) and Q within
  ``STAGE_Q_TOL`` (5 %), or the given tolerances where those are tighter; the gain tolerance is
  the one given. These weight the standard-value search and set the stage's required GBW
  (its ``requirements`` carry them). Measured: with the f0 tolerance left at 1 %, an op-amp of the
  reported GBW moved an order-6 Butterworth (stage Q up to 30) by 4.6 dB within the band; with
  the share rule by 0.5 dB.
- A stage is not built when its Q is above ``MAX_STAGE_Q`` (300, common practice, no source),
  or when the chosen parts miss it grossly: f0 off by more than half its bandwidth, Q by more than
  25 %, the gain by more than 3 dB.
- ``auto`` (per stage): when some circuit's design is feasible, with a required GBW and a sane
  spread, every circuit that does not miss the stage grossly is judged
  (:func:`bandsmith.chain.stage_verdicts.choose_auto`): the best verdict first, the sane ones
  before the others, the nearest fit, then :func:`bandsmith.verdict.rank`'s figure of merit; a not-buildable
  circuit is never chosen while a buildable or marginal one exists. A note says when the pick
  misses the stage's tolerances.
- Verdicts (:mod:`bandsmith.chain.stage_verdicts`): each stage judged against its own target and
  stage tolerances, the chain by its worst stage and its in-band deviation; the chain's warnings
  list every stage outside its hold.
- Band edges: −3 dB points for Butterworth and Bessel, the ripple-band edges (−R dB below the peak)
  for Chebyshev; the whole's centre is ``√(f_low·f_high)``; ``gain`` is the magnitude there.
- Stages are driven by op-amp outputs, which the op-amp model treats as ideal voltage sources, so
  the chain's response is the product of the stages' responses (ideal and finite op-amp alike).
- Each stage's amplifier needs are computed for the amplitude that reaches it when the chain's
  input is a sine of peak ``vin`` at the stage's own f0: ``vin·|H_1…H_(k−1)(f_k)|`` (its
  ``requirements.vin_v``). A stage's output current includes the current into the next stage's
  input (the two circuits solved together at the stage's f0); the load resistor of the
  conditions is on the last stage's output only. Its ``peak_internal_gain_db`` is the peak over
  all frequencies of the response from the chain's input to its output, with the chosen parts.
- A sane spread (common practice, no source): the largest resistor at most ``MAX_R_SPREAD`` times
  the smallest, the largest capacitor at most ``MAX_C_SPREAD`` times the smallest.
- The overall figures are measured on the built chain's response: the band edges where it crosses
  the family's edge level below its peak, the −3 dB points, the centre gain, and the ripple (the
  peak minus the deepest dip between the band edges; 0 for a response with one maximum).
- ``reference_max_dev_db`` is the largest |dB difference| over the sweep between the built chain
  (ideal op-amp) and scipy.signal's band-pass of the same family, order and edges
  (``iirfilter(..., analog=True, btype='bandpass')``, ``bessel(..., norm='mag')``) scaled to the
  requested centre gain; ``passband_max_dev_db`` is the same within the band edges.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any, Mapping

import numpy as np

from bandsmith.chain.bandpass import CascadePlan, SectionPlan, biquad_bandpass, plan_cascade
from bandsmith.analysis.analyzer import Tolerances, opamp_output_currents
from bandsmith.design.candidate import Candidate, Conditions
from bandsmith.design.designer import DesignResult, Spec, designs_or_errors, spread_of
from bandsmith.design.standard import errors_of, figure_misses, weighted_error
from bandsmith.circuits import topology_ids
from bandsmith.common.errors import InputError
from bandsmith.solver.rational import Rational
from bandsmith.common.values import format_value
from bandsmith.chain.chain_settings import AUTO, STAGE_HOLD, Chain, ChainSettings, ChainStage, circuit_choices
from bandsmith.chain.cascade_json import cascade_json, cascade_session, chains_in
from bandsmith.chain.chain_measure import Overall, chain_peaks, deviations_db, largest, measure_chains, reference_zpk, sweep_frequencies
from bandsmith.chain.stage_designs import PendingStage, prepare_stages
from bandsmith.chain.stage_verdicts import choose_auto, hold_warnings

__all__ = [
    "AUTO",
    "MAX_R_SPREAD",
    "MAX_C_SPREAD",
    "ChainSettings",
    "ChainStage",
    "Chain",
    "Attempt",
    "Stage",
    "Overall",
    "Cascade",
    "design_cascade",
    "with_stage_circuit",
    "chain_cascade",
    "stage_tolerances",
    "circuit_choices",
    "cascade_json",
    "reference_zpk",
    "cascade_session",
    "chains_in",
]

MAX_R_SPREAD = 1000.0
MAX_C_SPREAD = 100.0
# A stage's f0 is held within this share of its own bandwidth, its Q within STAGE_Q_TOL
# (the documented limits and their sources: bandsmith.chain.chain_settings.StageHold).
STAGE_F0_SHARE = STAGE_HOLD.f0_share
STAGE_Q_TOL = STAGE_HOLD.q_tol
# The sharpest stage any of our circuits is asked to build (common practice, no source: a tank
# cannot beat its inductor's own Q, a few hundred at best; the RC circuits give out well before).
MAX_STAGE_Q = 300.0
# Chosen parts that miss a stage by more than these make it unbuildable (beside f0 off by more
# than half the stage's bandwidth).
GROSS_Q_PCT = STAGE_HOLD.gross_q_pct
GROSS_GAIN_DB = STAGE_HOLD.gross_gain_db
# Above this in-band deviation from the reference (dB) the chain carries a warning.
WARN_BAND_DEV_DB = STAGE_HOLD.band_dev_marginal_db


# --------------------------------------------------------------------------- settings and the saved chain


# --------------------------------------------------------------------------- building


@dataclass(frozen=True, slots=True)
class Attempt:
    """One circuit tried for a stage: whether it works, how close it comes and what it needs.

    ``reason`` says why a feasible design is still not usable (no GBW is enough, or the spread
    is not sane); ``errors`` are the chosen parts' ``f0_pct``, ``q_pct``, ``gain_db`` against the
    stage's target, ``within`` whether they lie inside the tolerances, ``weighted`` their
    tolerance-weighted size (:func:`bandsmith.design.standard.weighted_error`).
    """

    topology_id: str
    feasible: bool
    gbw_hz: float | None
    r_spread: float | None
    c_spread: float | None
    reason: str | None
    errors: Mapping[str, float] | None = None
    within: bool = False
    weighted: float = math.inf

    @property
    def sane(self) -> bool:
        """Feasible, a finite required GBW, and a sane spread."""
        return self.feasible and self.gbw_hz is not None and self.reason is None

    def to_json(self) -> dict:
        return {
            "circuit": self.topology_id,
            "feasible": self.feasible,
            "usable": self.sane,
            "within_tolerances": self.within,
            "gbw_hz": self.gbw_hz,
            "r_spread": self.r_spread,
            "c_spread": self.c_spread,
            "errors": None if self.errors is None else dict(self.errors),
            "reason": self.reason,
        }


@dataclass(frozen=True, slots=True)
class Stage:
    """One built stage.

    Attributes
    ----------
    plan : SectionPlan
        Its section target (f0, Q, own peak gain).
    vin_v : float
        The peak amplitude reaching it (see the module notes), used for its amplifier needs.
    result : DesignResult or None
        The chosen circuit's design; None when no circuit could be tried.
    attempts : tuple of Attempt
        Every circuit tried (one unless ``auto``).
    feasible : bool
    reason : str or None
        Why the stage cannot be built, in plain words.
    h_ideal, h_actual : Rational or None
        Its transfer function with an ideal and with the finite op-amp (chosen parts).
    peak_internal_gain_db : float or None
        Peak over frequency of the chain's response up to this stage's output (chosen parts).
    warnings : tuple of str
        The design's warnings and the chain's own (no circuit within tolerance, say).
    """

    plan: SectionPlan
    vin_v: float
    result: Any
    attempts: tuple[Attempt, ...]
    feasible: bool
    reason: str | None
    h_ideal: Rational | None = field(default=None, repr=False)
    h_actual: Rational | None = field(default=None, repr=False)
    peak_internal_gain_db: float | None = None
    warnings: tuple[str, ...] = ()

    @property
    def index(self) -> int:
        return self.plan.index

    @property
    def circuit(self) -> str | None:
        return self.result.topology_id if self.result is not None else None

    @property
    def chosen(self) -> dict | None:
        return dict(self.result.chosen) if self.feasible else None


@dataclass(frozen=True, slots=True)
class Cascade:
    """A chain, designed and measured.

    Attributes
    ----------
    settings : ChainSettings
    conditions : Conditions
        The op-amp and drive the stages were analysed with.
    plan : CascadePlan
        The section targets.
    stages : tuple of Stage
        In signal order.
    feasible : bool
        True when every stage is built.
    reason : str or None
        Plain words on what cannot be built.
    overall, overall_actual : Overall or None
        The built chain's figures with an ideal and with the finite op-amp (None without ``gbw``).
    reference_max_dev_db, passband_max_dev_db, actual_max_dev_db : float or None
        Deviation from the reference response (module notes); the last with the finite op-amp.
    sweep_f_hz : ndarray
        The log-spaced frequencies the overall figures and deviations were measured on.
    warnings : tuple of str
        The chain's own: every stage outside its hold, a built response far from the reference.
    """

    settings: ChainSettings
    conditions: Conditions
    plan: CascadePlan
    stages: tuple[Stage, ...]
    feasible: bool
    reason: str | None
    overall: Overall | None
    overall_actual: Overall | None
    reference_max_dev_db: float | None
    passband_max_dev_db: float | None
    actual_max_dev_db: float | None
    sweep_f_hz: np.ndarray = field(repr=False)
    warnings: tuple[str, ...] = ()

    def stage_responses(self, f_hz: np.ndarray, *, actual: bool = False) -> np.ndarray:
        """Each stage's response at frequencies in Hz, ``(N, F)`` complex (chosen parts).

        A stage that could not be built contributes its planned ideal section.
        """
        f = np.asarray(f_hz, dtype=float)
        stacked = _stacked(self.stages, actual)
        if stacked is not None:  # every stage built: one evaluation of all of them
            return stacked.at_f(f)
        out = np.empty((len(self.stages), f.size), dtype=complex)
        for k, st in enumerate(self.stages):
            out[k] = _stage_response(st, f, actual=actual)
        return out

    def response(self, f_hz: np.ndarray, *, actual: bool = False) -> np.ndarray:
        """The whole chain's response at frequencies in Hz, ``(F,)`` complex."""
        return np.prod(self.stage_responses(f_hz, actual=actual), axis=0)

    def reference_response(self, f_hz: np.ndarray) -> np.ndarray:
        """scipy.signal's band-pass of the same family, order and edges, scaled to the gain."""
        import scipy.signal  # here, not at import: it costs the window 0.6 s at start

        z, p, k = reference_zpk(self.settings)
        _, h = scipy.signal.freqs_zpk(z, p, k, worN=2 * math.pi * np.asarray(f_hz, dtype=float))
        return h

    def chain(self, chain_id: str = "chain-1", *, candidate_ids: tuple[str, ...] | None = None, notes: str = "") -> Chain:
        """The chain to save (every stage must be built)."""
        if not self.feasible:
            raise InputError("chain", f"the chain cannot be built: {self.reason}")
        ids = candidate_ids if candidate_ids is not None else (None,) * len(self.stages)
        stages = tuple(
            ChainStage(st.index, st.plan.f0_hz, st.plan.q, st.plan.gain, st.circuit, st.chosen, cid) for st, cid in zip(self.stages, ids)
        )
        return Chain(chain_id, self.settings, stages, notes)


def _stage_response(st: Stage, f: np.ndarray, *, actual: bool = False) -> np.ndarray:
    """One stage's response at frequencies ``f`` (Hz), ``(F,)`` complex: its chosen parts' (the
    finite op-amp's where asked and known), or its planned ideal section where it is not built."""
    h = st.h_actual if actual and st.h_actual is not None else st.h_ideal
    if h is None:
        return biquad_bandpass(2j * math.pi * f, [2 * math.pi * st.plan.f0_hz], [st.plan.q], [st.plan.gain])[0]
    return h.at_f(f)[0]


def _stacked(stages: tuple[Stage, ...], actual: bool) -> Rational | None:
    """Every stage's transfer function (the finite op-amp's where asked and known) as one batch,
    or None when a stage has none (or there is no stage).

    Each stage's first member (as :meth:`Cascade.stage_responses` always took), its coefficients
    padded with leading zeros to a common length: Horner's rule then gives each stage the very
    value its own evaluation gives, in one pass over all stages.
    """
    hs = [st.h_actual if actual and st.h_actual is not None else st.h_ideal for st in stages]
    if not hs or any(h is None for h in hs):
        return None
    return Rational.joined([h.take(slice(0, 1)) for h in hs])


def _attempts(ids, plan: SectionPlan, series: str, made: list, conditions: Conditions):
    """``(result, Attempt)`` of each circuit for a stage from its designs ``made`` (in the order
    of ``ids``: a result, or the :class:`InputError` that circuit raised) under ``conditions``."""
    return [(None, Attempt(t, False, None, None, None, res.reason)) if isinstance(res, InputError) else _assess(t, res, plan, series, conditions)
            for t, res in zip(ids, made)]


def _assess(topology_id: str, res, plan: SectionPlan, series: str, conditions: Conditions):
    """A circuit's design for a stage and what the stage makes of it: ``(result, Attempt)``."""
    if not res.feasible:
        return res, Attempt(topology_id, False, None, None, None, res.reason or "cannot meet the stage's target")
    sp = spread_of(res.topology, res.chosen)
    rs, cs = sp["r"] or 1.0, sp["c"] or 1.0
    errors = dict(res.errors)
    tol = conditions.tolerances
    within = not figure_misses(errors, tol)
    weighted = weighted_error(errors, tol)
    gbw, why = res.analysis.required_gbw if res.analysis is not None else (None, None)
    gross = _gross_miss(errors, plan.q, series)
    if gross:
        return res, Attempt(topology_id, False, gbw, rs, cs, gross, errors, False, weighted)
    reason = None
    if gbw is None:
        reason = f"no op-amp gain-bandwidth is enough ({why})" if why else "no op-amp gain-bandwidth is enough"
    elif rs > MAX_R_SPREAD:
        reason = f"its resistors spread {rs:.3g}:1, more than {MAX_R_SPREAD:g}:1"
    elif cs > MAX_C_SPREAD:
        reason = f"its capacitors spread {cs:.3g}:1, more than {MAX_C_SPREAD:g}:1"
    return res, Attempt(topology_id, True, gbw, rs, cs, reason, errors, within, weighted)


def _gross_miss(errors: Mapping[str, float], q: float, series: str) -> str | None:
    """Why the chosen parts miss a stage so far that the chain would be meaningless, or None.

    f0 off by more than half the stage's bandwidth (``1/(2Q)``), Q by more than
    ``GROSS_Q_PCT`` %, or the gain by more than ``GROSS_GAIN_DB`` dB.
    """
    half_bw_pct = 100.0 * STAGE_HOLD.gross_f0_share / q
    parts = "exact parts" if series == "exact" else f"the best {series} parts"
    if abs(errors["f0_pct"]) > half_bw_pct:
        finer = "" if series in ("exact", "E192") else "; a finer series may do"
        return f"{parts} put f0 {errors['f0_pct']:+.3g} % off, more than half the stage's bandwidth (±{half_bw_pct:.3g} %){finer}"
    if abs(errors["q_pct"]) > GROSS_Q_PCT:
        return f"{parts} put Q {errors['q_pct']:+.3g} % off (more than ±{GROSS_Q_PCT:g} %)"
    if abs(errors["gain_db"]) > GROSS_GAIN_DB:
        return f"{parts} put the gain {errors['gain_db']:+.3g} dB off (more than ±{GROSS_GAIN_DB:g} dB)"
    return None


_Q_CAP_WHY = "an inductor's own Q, part tolerances and the op-amp's gain limit one stage to a Q of a few hundred"


def _summary(stages: tuple[Stage, ...]) -> str:
    """The chain's reason in plain words: which stages cannot be built and why."""
    bad = [s for s in stages if not s.feasible]
    capped = [s for s in bad if s.plan.q > MAX_STAGE_Q]
    parts = []
    if capped:
        q = max(s.plan.q for s in capped)
        which = ", ".join(str(s.index) for s in capped)
        parts.append(
            f"stage{'s' if len(capped) > 1 else ''} {which} need{'' if len(capped) > 1 else 's'} a Q up to {q:.4g}, above the "
            f"{MAX_STAGE_Q:g} any of our circuits reaches with real parts ({_Q_CAP_WHY}); widen the band or lower the order"
        )
    for s in bad:
        if s not in capped:
            parts.append(f"stage {s.index} (f0 {s.plan.f0_hz:.5g} Hz, Q {s.plan.q:.4g}, gain {s.plan.gain:.4g}): {s.reason}")
    return f"{len(bad)} of {len(stages)} stages cannot be built: " + "; ".join(parts)


def stage_tolerances(tol: Tolerances, q: float) -> Tolerances:
    """The tolerances a stage of Q ``q`` is held to in a chain (module notes).

    f0 within ``STAGE_F0_SHARE/Q`` (a share of the stage's own bandwidth) and Q within
    ``STAGE_Q_TOL``, or the given tolerances where those are tighter; the gain tolerance as given.
    """
    gain_db = tol.gain_db if STAGE_HOLD.gain_db is None else min(tol.gain_db, STAGE_HOLD.gain_db)
    return Tolerances(f0=min(tol.f0, STAGE_F0_SHARE / q), q=min(tol.q, STAGE_Q_TOL), gain_db=gain_db)


def _stage_rsource(conditions: Conditions, index: int) -> float | None:
    """The source resistance drives the first stage only; later ones are driven by an op-amp output."""
    return conditions.rsource_ohm if index == 1 else None


def _stage_conditions(conditions: Conditions, plan: SectionPlan, vin_v: float) -> Conditions:
    """A stage's conditions: the amplitude reaching it, its stage tolerances, its source (module notes)."""
    return replace(conditions, vin_v=vin_v, tolerances=stage_tolerances(conditions.tolerances, plan.q), rsource_ohm=_stage_rsource(conditions, plan.index))


def _stage_circuits(settings: ChainSettings) -> list[str]:
    """The circuits tried for every stage: the one named, or with ``auto`` all of them."""
    return list(topology_ids()) if settings.circuit == AUTO else [settings.circuit]


def _build_stage(plan: SectionPlan, vin_v: float, settings: ChainSettings, conditions: Conditions, pending: PendingStage | None = None) -> Stage:
    """A stage built from its circuits' designs (``pending``: made before, with the other stages')."""
    if plan.q > MAX_STAGE_Q:
        return Stage(
            plan, vin_v, None, (), False,
            f"Q {plan.q:.4g} is above {MAX_STAGE_Q:g}, beyond any of our circuits with real parts ({_Q_CAP_WHY})",
        )
    ids = _stage_circuits(settings)
    if pending is not None:
        cond, made = pending.results(vin_v)
    else:  # its circuits' designs, analysed in one batch
        cond = _stage_conditions(conditions, plan, vin_v)
        made = designs_or_errors(ids, Spec(plan.f0_hz, plan.q, plan.gain), series=settings.series, conditions=cond)
    tried = _attempts(ids, plan, settings.series, made, cond)
    if settings.circuit != AUTO:
        res, att = tried[0]
        if not att.feasible:
            return Stage(plan, vin_v, res, (att,), False, f"{settings.circuit} cannot build it: {att.reason}")
        return _finish(plan, vin_v, res, (att,), conditions, (f"{att.reason}",) if att.reason else ())
    attempts = tuple(a for _, a in tried)
    usable = [(i, res, a) for i, (res, a) in enumerate(tried) if a.sane]
    if not usable:
        why = "; ".join(f"{a.topology_id}: {a.reason}" for a in attempts)
        first = next((res for res, a in tried if res is not None), None)
        return Stage(plan, vin_v, first, attempts, False, f"no circuit builds it with sane parts ({why})")
    best = choose_auto(tried, settings.series)  # by verdict, then rank (bandsmith.chain.stage_verdicts)
    return _finish(plan, vin_v, best[1], attempts, conditions, best[3])


def _finish(plan, vin_v, res, attempts, conditions: Conditions, notes: tuple[str, ...] = ()) -> Stage:
    # design() analyses every feasible result, with the conditions' op-amp when there is one
    an = res.analysis
    return Stage(plan, vin_v, res, attempts, True, None, an.h_ideal, an.h_actual, warnings=tuple(res.warnings) + tuple(notes))


class _Amplitudes:
    """The amplitude reaching each stage of a chain built in signal order (module notes): at stage
    k's own f0, ``vin·|H_1…H_(k−1)(f_k)|``, the earlier stages as built (ideal op-amp; a stage not
    built as its planned section).

    Each built stage's response is evaluated once, at every stage's f0 (:meth:`add`); stage k's
    amplitude is numpy's product over the stages before it of column k, ``(k − 1, 1)``, so each
    stage's value is multiplied in signal order, as the partial chain's response there gives it.
    """

    __slots__ = ("_at", "_f0", "_n", "_vin")

    def __init__(self, conditions: Conditions, plan: CascadePlan):
        self._vin = conditions.vin_v
        self._f0 = np.array([sec.f0_hz for sec in plan.sections])
        self._at = np.empty((self._f0.size, self._f0.size), dtype=complex)  # row j: stage j + 1 at every f0
        self._n = 0

    def next(self) -> float:
        """The amplitude (V peak) reaching the next stage."""
        k = self._n
        if k == 0:
            return self._vin
        return self._vin * float(abs(np.prod(self._at[:k, k : k + 1], axis=0)[0]))

    def add(self, stage: Stage) -> None:
        """The next stage, as built."""
        self._at[self._n] = _stage_response(stage, self._f0)
        self._n += 1


def design_cascade(settings: ChainSettings, *, conditions: Conditions = Conditions()) -> Cascade:
    """Design, build and measure a chain of second-order band-pass stages.

    Parameters
    ----------
    settings : ChainSettings
        Family, order, band, centre gain, circuit choice and series.
    conditions : Conditions
        The op-amp (``gbw_hz`` None = ideal), open-loop gain, input peak amplitude ``vin_v`` (V)
        at the chain's input, load and tolerances of the required-GBW search.

    Returns
    -------
    Cascade
        With ``feasible`` False and a plain ``reason`` when a stage cannot be built.

    Notes
    -----
    Every stage's circuits are designed first, their analyses in as few batches as their
    conditions allow (:mod:`bandsmith.chain.stage_designs`); the stages are then built in signal
    order, each concluded under the amplitude the stages before it let through
    (:class:`_Amplitudes`). The results are those of designing each stage once the ones before
    it are built.
    """
    plan = plan_cascade(settings.prototype(), settings.band, settings.gain)
    # every stage's designs made first, in one batch (bandsmith.chain.stage_designs), each with
    # the chain's input amplitude standing in for its own until the stages before it are built
    ids = _stage_circuits(settings)
    buildable = [sec for sec in plan.sections if sec.q <= MAX_STAGE_Q]
    pending = dict(zip(
        (sec.index for sec in buildable),
        prepare_stages([(ids, Spec(sec.f0_hz, sec.q, sec.gain), _stage_conditions(conditions, sec, conditions.vin_v)) for sec in buildable], settings.series),
    ))
    amps = _Amplitudes(conditions, plan)
    built: list[Stage] = []
    for sec in plan.sections:
        built.append(_build_stage(sec, amps.next(), settings, conditions, pending.get(sec.index)))
        amps.add(built[-1])
    return _assemble(settings, conditions, plan, tuple(built))


def _redrive(st: Stage, vin: float) -> Stage:
    """A built stage re-analysed for the amplitude ``vin`` that now reaches it (parts unchanged)."""
    if not st.feasible or abs(vin / st.vin_v - 1.0) <= 1e-12:
        return replace(st, vin_v=vin)
    res = st.result
    cond = replace(res.conditions, vin_v=vin)
    an = Candidate(res.topology_id, res.chosen).analyze(cond)
    return replace(st, vin_v=vin, result=replace(res, analysis=an, conditions=cond), h_ideal=an.h_ideal, h_actual=an.h_actual if an.h_actual is not None else st.h_actual)


def with_stage_circuit(result: Cascade, index: int, circuit: str) -> Cascade:
    """The chain with stage ``index`` (from 1) redesigned on ``circuit`` (``auto`` or an id).

    The other stages keep their parts; the later ones are re-analysed for the amplitude that now
    reaches them. ``settings.circuit`` keeps the original request.
    """
    n = len(result.stages)
    if isinstance(index, bool) or not isinstance(index, int) or not 1 <= index <= n:
        raise InputError("stage", f"must be a stage number from 1 to {n}, got {index!r}")
    if circuit not in circuit_choices():
        raise InputError("circuit", f"{circuit!r} is not a circuit; choose one of {', '.join(circuit_choices())}")
    settings, conditions, plan = result.settings, result.conditions, result.plan
    amps = _Amplitudes(conditions, plan)
    built = list(result.stages[: index - 1])
    for st in built:
        amps.add(st)
    built.append(_build_stage(plan.sections[index - 1], amps.next(), replace(settings, circuit=circuit), conditions))
    amps.add(built[-1])
    for st in result.stages[index:]:
        built.append(_redrive(st, amps.next()))
        amps.add(built[-1])
    return _assemble(settings, conditions, plan, tuple(built))


def chain_cascade(chain: Chain, *, conditions: Conditions = Conditions()) -> Cascade:
    """Measure a saved chain with its saved parts (nothing is redesigned).

    Each stage is analysed as :func:`design_cascade` would (its drive and its stage tolerances);
    its errors are against the stage's planned target.
    """
    settings = chain.settings
    plan = plan_cascade(settings.prototype(), settings.band, settings.gain)
    amps = _Amplitudes(conditions, plan)
    built: list[Stage] = []
    for sec, saved in zip(plan.sections, chain.stages):
        vin = amps.next()
        cond = _stage_conditions(conditions, sec, vin)
        cand = Candidate(saved.topology_id, saved.values)
        an = cand.analyze(cond)
        spec = Spec(sec.f0_hz, sec.q, sec.gain)
        errors = errors_of(an.ideal, spec)
        tol = cond.tolerances
        within = not figure_misses(errors, tol)
        sp = spread_of(cand.topology, cand.values)
        res = DesignResult(
            topology_id=cand.topology_id, spec=spec, feasible=True, reason=None, exact=dict(cand.values), chosen=dict(cand.values),
            series=settings.series, ideal=an.ideal, errors=errors, warnings=(), analysis=an, conditions=cond,
        )
        att = Attempt(cand.topology_id, True, an.required_gbw[0], sp["r"] or 1.0, sp["c"] or 1.0, None, errors, within, weighted_error(errors, tol))
        built.append(Stage(sec, vin, res, (att,), True, None, an.h_ideal, an.h_actual))
        amps.add(built[-1])
    return _assemble(settings, conditions, plan, tuple(built))


def _loaded(stages: tuple[Stage, ...]) -> tuple[Stage, ...]:
    """Built stages with each one's output current into its own circuit and the next stage's
    input (module notes); the last stage keeps its own, with the conditions' load. The currents
    of all stages in one :func:`bandsmith.analysis.analyzer.opamp_output_currents` (their solves
    stacked; each stage's number as alone)."""
    out = list(stages)
    todo = []
    for k, (st, nxt) in enumerate(zip(stages[:-1], stages[1:])):
        f0 = st.result.analysis.ideal.item().f0_hz
        if math.isfinite(f0):
            todo.append((k, (st.result.analysis.netlist, f0, nxt.result.analysis.netlist)))
    for (k, _), per_volt in zip(todo, opamp_output_currents([case for _, case in todo])):
        st = stages[k]
        an = st.result.analysis
        req = replace(an.requirements, iout_peak_a=per_volt * st.vin_v)
        out[k] = replace(st, result=replace(st.result, analysis=an.with_requirements(req)))
    return tuple(out)


def _assemble(settings: ChainSettings, conditions: Conditions, plan: CascadePlan, stages: tuple[Stage, ...]) -> Cascade:
    """Measure built stages as a whole chain (module notes)."""
    q_max = max(s.q for s in plan.sections)
    feasible = all(s.feasible for s in stages)
    reason = None if feasible else _summary(stages)
    f = sweep_frequencies(settings, q_max)
    shell = Cascade(settings, conditions, plan, stages, feasible, reason, None, None, None, None, None, f, hold_warnings(stages))
    if not feasible:
        return shell
    stages = _loaded(stages)
    # The stages' transfer functions, built once: the ideal ones and (with an op-amp) the finite
    # ones, each response's alone (for many points: the ideal ones keep their short polynomials)
    # and all in one batch (for a few points: one call; padded with leading zeros, each stage's
    # very values).
    parts = [_stacked(stages, False)] + ([] if conditions.opamp is None else [_stacked(stages, True)])
    both = Rational.joined(parts) if len(parts) > 1 else parts[0]
    n = len(stages)

    def chain_mag(x, rows):  # |whole response rows[p] at x[p]| (Hz), (P,); rows one integer (numpy's too): one response's
        if np.ndim(rows) == 0:
            return np.abs(np.prod(parts[int(rows)].at_f(x), axis=0))
        h = both.at_f(x)
        return np.abs(np.prod(h.reshape(-1, n, x.size), axis=1)[rows, np.arange(x.size)])

    peaks_db, peaks, f_peaks = chain_peaks([p.at_f for p in parts], n, f, q_max)
    stages = tuple(replace(s, peak_internal_gain_db=float(p)) for s, p in zip(stages, peaks_db))
    shell = replace(shell, stages=stages)
    hs = np.stack([np.prod(p.at_f(f), axis=0) for p in parts])  # the whole responses on the sweep, ideal first
    mags = np.abs(hs)  # (once: for the figures and the deviations)
    measured = measure_chains(chain_mag, settings, f, mags, peaks, f_peaks)
    overall = measured[0]
    dev = deviations_db(mags, np.abs(shell.reference_response(f)))  # each response's |dB difference| from the reference
    band = (f >= settings.f_low_hz) & (f <= settings.f_high_hz)
    overall_actual = actual_dev = act_band = None
    if conditions.opamp is not None:
        overall_actual = measured[1]
        actual_dev = largest(dev[1])
        act_band = largest(dev[1][band])
    band_dev = largest(dev[0][band])
    warnings = list(shell.warnings)  # every stage outside its hold
    if band_dev > WARN_BAND_DEV_DB:
        finer = "" if settings.series in ("exact", "E192") else "; a finer series (E96, say) or trimming the sharpest stages brings it closer"
        warnings.append(f"with {settings.series} parts the chain is up to {band_dev:.3g} dB off the ideal {settings.response} response within the band{finer}")
    if overall_actual is not None:
        if act_band > max(WARN_BAND_DEV_DB, band_dev + 0.5):
            warnings.append(f"with the {format_value(conditions.gbw_hz, 'Hz', digits=3)} op-amp the chain is up to {act_band:.3g} dB off the ideal response within the band; a faster op-amp is needed")
    return replace(
        shell,
        overall=overall,
        overall_actual=overall_actual,
        reference_max_dev_db=largest(dev[0]),
        passband_max_dev_db=band_dev,
        actual_max_dev_db=actual_dev,
        warnings=tuple(warnings),
    )


# --------------------------------------------------------------------------- JSON and sessions


