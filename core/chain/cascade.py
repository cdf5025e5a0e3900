"""Higher-order band-pass filters as chains of second-order stages built from our circuits.

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
- ``auto`` (per stage): among the circuits whose design is feasible, whose required GBW exists and
  whose spread is sane, the one needing the least GBW among those whose chosen parts meet the
  stage's f0, Q and gain within its tolerances; when none does, the closest one (least
  tolerance-weighted error), with a warning.
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

from bandsmith.chain.bandpass import Band, CascadePlan, SectionPlan, band_from, biquad_bandpass, peak_over_frequency, plan_cascade
from bandsmith.analysis.analyzer import Tolerances
from bandsmith.design.candidate import Candidate, Conditions
from bandsmith.circuits import get_topology, topology_ids
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import SERIES_NAMES
from bandsmith.common.limits import check_id
from bandsmith.analysis.figures import Figures
from bandsmith.chain.prototypes import Prototype, check_order, check_response, check_ripple, prototype
from bandsmith.solver.rational import Rational
from bandsmith.common.values import format_value

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

AUTO = "auto"
MAX_R_SPREAD = 1000.0
MAX_C_SPREAD = 100.0
# A stage's f0 is held within this share of its own bandwidth, its Q within STAGE_Q_TOL.
STAGE_F0_SHARE = 0.05
STAGE_Q_TOL = 0.05
# The sharpest stage any of our circuits is asked to build (common practice, no source: a tank
# cannot beat its inductor's own Q, a few hundred at best; the RC circuits give out well before).
MAX_STAGE_Q = 300.0
# Chosen parts that miss a stage by more than these make it unbuildable (beside f0 off by more
# than half the stage's bandwidth).
GROSS_Q_PCT = 25.0
GROSS_GAIN_DB = 3.0
# Above this in-band deviation from the reference (dB) the chain carries a warning.
WARN_BAND_DEV_DB = 1.0
_SERIES_CHOICES = SERIES_NAMES + ("exact",)
_HALF_POWER_DB = 10.0 * math.log10(0.5)


# --------------------------------------------------------------------------- settings and the saved chain


def _positive(name: str, v) -> float:
    if isinstance(v, bool):
        raise InputError(name, f"must be a finite number above zero, got {v!r}")
    try:
        x = float(v)
    except (TypeError, ValueError):
        raise InputError(name, f"must be a finite number above zero, got {v!r}") from None
    if not (math.isfinite(x) and x > 0):
        raise InputError(name, f"must be a finite number above zero, got {v!r}")
    return x


def circuit_choices() -> tuple[str, ...]:
    """``auto`` and every circuit id."""
    return (AUTO,) + topology_ids()


@dataclass(frozen=True, slots=True)
class ChainSettings:
    """What a chain is asked to be.

    Parameters
    ----------
    response : str
        ``butterworth``, ``chebyshev`` or ``bessel``.
    order : int
        Prototype order N (1 … 8); the band-pass has N stages.
    f_low_hz, f_high_hz : float
        Band edges (Hz): −3 dB points, or the ripple-band edges for Chebyshev.
    gain : float
        Magnitude at the geometric centre (V/V).
    ripple_db : float, optional
        Chebyshev ripple (dB), 0.5 by default; None for the others.
    circuit : str
        ``auto`` or a circuit id used for every stage.
    series : str
        Series the parts come from (``E6`` … ``E192``) or ``exact``.
    """

    response: str
    order: int
    f_low_hz: float
    f_high_hz: float
    gain: float = 1.0
    ripple_db: float | None = None
    circuit: str = AUTO
    series: str = "E24"

    def __post_init__(self):
        response = check_response(self.response)
        object.__setattr__(self, "response", response)
        object.__setattr__(self, "order", check_order(self.order))
        object.__setattr__(self, "ripple_db", check_ripple(response, self.ripple_db))
        band = band_from(f_low_hz=self.f_low_hz, f_high_hz=self.f_high_hz)
        object.__setattr__(self, "f_low_hz", band.f_low_hz)
        object.__setattr__(self, "f_high_hz", band.f_high_hz)
        object.__setattr__(self, "gain", _positive("gain", self.gain))
        if self.circuit not in circuit_choices():
            raise InputError("circuit", f"{self.circuit!r} is not a circuit; choose one of {', '.join(circuit_choices())}")
        if self.series not in _SERIES_CHOICES:
            raise InputError("series", f"{self.series!r} is not a series; choose one of {', '.join(_SERIES_CHOICES)}")

    @classmethod
    def from_request(cls, response: str, order, *, f0_hz=None, bw_hz=None, f_low_hz=None, f_high_hz=None, ripple_db=None, gain=1.0, circuit=AUTO, series="E24") -> "ChainSettings":
        """Settings from a centre and bandwidth or from the edges (see :func:`bandsmith.chain.bandpass.band_from`)."""
        response = check_response(response)
        order = check_order(order)
        band = band_from(f0_hz=f0_hz, bw_hz=bw_hz, f_low_hz=f_low_hz, f_high_hz=f_high_hz)
        return cls(response, order, band.f_low_hz, band.f_high_hz, gain=gain, ripple_db=ripple_db, circuit=circuit, series=series)

    @property
    def band(self) -> Band:
        return Band(self.f_low_hz, self.f_high_hz)

    def prototype(self) -> Prototype:
        return prototype(self.response, self.order, ripple_db=self.ripple_db)

    @property
    def edge_level_db(self) -> float:
        """Level of the band edges below the peak (dB): −3.01, or −R for Chebyshev."""
        return -self.ripple_db if self.response == "chebyshev" else _HALF_POWER_DB

    def to_json(self) -> dict:
        band = self.band
        return {
            "response": self.response,
            "order": self.order,
            "f0_hz": band.f0_hz,
            "bw_hz": band.bw_hz,
            "q": band.q_bp,
            "f_low_hz": self.f_low_hz,
            "f_high_hz": self.f_high_hz,
            "gain": self.gain,
            "ripple_db": self.ripple_db,
            "circuit": self.circuit,
            "series": self.series,
        }

    @classmethod
    def from_json(cls, obj: Mapping[str, Any]) -> "ChainSettings":
        """Read :meth:`to_json`'s object (``f0_hz``, ``bw_hz`` and ``q`` are derived and ignored)."""
        if not isinstance(obj, Mapping):
            raise InputError("settings", f"must be an object, got {type(obj).__name__}")
        for key in ("response", "order", "f_low_hz", "f_high_hz"):
            if key not in obj:
                raise InputError(key, "missing from the chain settings")
        return cls(
            response=obj["response"],
            order=obj["order"],
            f_low_hz=_positive("f_low_hz", obj["f_low_hz"]),
            f_high_hz=_positive("f_high_hz", obj["f_high_hz"]),
            gain=obj.get("gain", 1.0),
            ripple_db=obj.get("ripple_db"),
            circuit=obj.get("circuit", AUTO),
            series=obj.get("series", "E24"),
        )


@dataclass(frozen=True, slots=True)
class ChainStage:
    """One stage of a saved chain: its section target and the circuit with its parts.

    ``candidate_id`` names the session candidate holding the same parts (or None).
    """

    index: int
    f0_hz: float
    q: float
    gain: float
    topology_id: str
    values: Mapping[str, float]
    candidate_id: str | None = None

    def __post_init__(self):
        if isinstance(self.index, bool) or not isinstance(self.index, int) or self.index < 1:
            raise InputError("index", f"a stage index must be a whole number from 1, got {self.index!r}")
        for name in ("f0_hz", "q", "gain"):
            object.__setattr__(self, name, _positive(name, getattr(self, name)))
        object.__setattr__(self, "values", get_topology(self.topology_id).values_from(dict(self.values)))

    def to_json(self) -> dict:
        return {
            "index": self.index,
            "f0_hz": self.f0_hz,
            "q": self.q,
            "gain": self.gain,
            "circuit": self.topology_id,
            "values": {k: float(v) for k, v in self.values.items()},
            "candidate": self.candidate_id,
        }

    @classmethod
    def from_json(cls, obj: Mapping[str, Any]) -> "ChainStage":
        if not isinstance(obj, Mapping):
            raise InputError("stages", f"a stage must be an object, got {type(obj).__name__}")
        for key in ("index", "f0_hz", "q", "gain", "circuit", "values"):
            if key not in obj:
                raise InputError(key, "missing from a chain stage")
        if not isinstance(obj["values"], Mapping):
            raise InputError("values", "must be an object of part values")
        return cls(obj["index"], obj["f0_hz"], obj["q"], obj["gain"], obj["circuit"], dict(obj["values"]), obj.get("candidate"))


@dataclass(frozen=True, slots=True)
class Chain:
    """A built chain as a session keeps it (under ``extras["chains"]``): settings and stages."""

    id: str
    settings: ChainSettings
    stages: tuple[ChainStage, ...]
    notes: str = ""

    def __post_init__(self):
        check_id("id", self.id, "a chain id")
        stages = tuple(self.stages)
        if [s.index for s in stages] != list(range(1, len(stages) + 1)):
            raise InputError("stages", "stage indices must run 1, 2, 3, … in order")
        if len(stages) != self.settings.order:
            raise InputError("stages", f"an order-{self.settings.order} chain has {self.settings.order} stages, not {len(stages)}")
        object.__setattr__(self, "stages", stages)

    def to_json(self) -> dict:
        return {"id": self.id, "settings": self.settings.to_json(), "stages": [s.to_json() for s in self.stages], "notes": self.notes}

    @classmethod
    def from_json(cls, obj: Mapping[str, Any]) -> "Chain":
        """Read :meth:`to_json`'s object; InputError naming the field for anything wrong."""
        if not isinstance(obj, Mapping):
            raise InputError("chains", f"a chain must be an object, got {type(obj).__name__}")
        if "settings" not in obj or "stages" not in obj:
            raise InputError("chains", "a chain needs its settings and stages")
        stages = obj["stages"]
        if not isinstance(stages, list):
            raise InputError("stages", "must be a list")
        notes = obj.get("notes", "")
        if not isinstance(notes, str):
            raise InputError("notes", "must be text")
        return cls(obj.get("id", "chain-1"), ChainSettings.from_json(obj["settings"]), tuple(ChainStage.from_json(s) for s in stages), notes)

    def candidates(self) -> tuple[Candidate, ...]:
        """The stages as validated candidates (signal order)."""
        return tuple(Candidate(s.topology_id, s.values) for s in self.stages)


# --------------------------------------------------------------------------- building


@dataclass(frozen=True, slots=True)
class Attempt:
    """One circuit tried for a stage: whether it works, how close it comes and what it needs.

    ``reason`` says why a feasible design is still not usable (no GBW is enough, or the spread
    is not sane); ``errors`` are the chosen parts' ``f0_pct``, ``q_pct``, ``gain_db`` against the
    stage's target, ``within`` whether they lie inside the tolerances, ``weighted`` their
    tolerance-weighted size (:func:`bandsmith.design.designer.weighted_error`).
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
class Overall:
    """Figures of a whole chain's response (Hz, dB)."""

    f_low_hz: float
    f_high_hz: float
    f0_hz: float
    gain_center_db: float
    ripple_db: float
    peak_gain_db: float
    f_peak_hz: float
    edge_level_db: float
    f_low_3db_hz: float
    f_high_3db_hz: float

    def to_json(self) -> dict:
        def f(x):
            return float(x) if math.isfinite(x) else None

        return {
            "f_low_hz": f(self.f_low_hz),
            "f_high_hz": f(self.f_high_hz),
            "f0_hz": f(self.f0_hz),
            "bw_hz": f(self.f_high_hz - self.f_low_hz),
            "gain_center_db": f(self.gain_center_db),
            "ripple_db": f(self.ripple_db),
            "peak_gain_db": f(self.peak_gain_db),
            "f_peak_hz": f(self.f_peak_hz),
            "edge_level_db": f(self.edge_level_db),
            "f_low_3db_hz": f(self.f_low_3db_hz),
            "f_high_3db_hz": f(self.f_high_3db_hz),
        }


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
        The chain's own: a built response far from the reference.
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
        out = np.empty((len(self.stages), f.size), dtype=complex)
        for k, st in enumerate(self.stages):
            h = st.h_actual if actual and st.h_actual is not None else st.h_ideal
            if h is None:
                out[k] = biquad_bandpass(2j * math.pi * f, [2 * math.pi * st.plan.f0_hz], [st.plan.q], [st.plan.gain])[0]
            else:
                out[k] = h.at_f(f)[0]
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


def reference_zpk(settings: ChainSettings) -> tuple[np.ndarray, np.ndarray, float]:
    """Zeros, poles (rad/s) and gain of scipy.signal's band-pass for the settings.

    ``iirfilter(N, [ω_low, ω_high], rp=R, btype='bandpass', analog=True, ftype='butter'|'cheby1')``
    or ``bessel(N, [ω_low, ω_high], btype='bandpass', analog=True, norm='mag')``, with the gain
    scaled so that the magnitude at the geometric centre is ``settings.gain``.
    """
    import scipy.signal  # here, not at import: it costs the window 0.6 s at start

    wn = [2 * math.pi * settings.f_low_hz, 2 * math.pi * settings.f_high_hz]
    n = settings.order
    if settings.response == "bessel":
        z, p, k = scipy.signal.bessel(n, wn, btype="bandpass", analog=True, norm="mag", output="zpk")
    else:
        ftype = "butter" if settings.response == "butterworth" else "cheby1"
        z, p, k = scipy.signal.iirfilter(n, wn, rp=settings.ripple_db, btype="bandpass", analog=True, ftype=ftype, output="zpk")
    wc = 2 * math.pi * settings.band.f0_hz
    _, hc = scipy.signal.freqs_zpk(z, p, k, worN=[wc])
    return z, p, float(k) * settings.gain / float(abs(hc[0]))


def _design(topology_id: str, plan: SectionPlan, series: str, conditions: Conditions):
    from bandsmith.design.designer import Spec, design

    return design(topology_id, Spec(plan.f0_hz, plan.q, plan.gain), series=series, conditions=conditions)


def _attempt(topology_id: str, plan: SectionPlan, series: str, conditions: Conditions):
    from bandsmith.design.designer import spread_of, weighted_error

    try:
        res = _design(topology_id, plan, series, conditions)
    except InputError as exc:
        return None, Attempt(topology_id, False, None, None, None, exc.reason)
    if not res.feasible:
        return res, Attempt(topology_id, False, None, None, None, res.reason or "cannot meet the stage's target")
    sp = spread_of(res.topology, res.chosen)
    rs, cs = sp["r"] or 1.0, sp["c"] or 1.0
    errors = dict(res.errors)
    tol = conditions.tolerances
    within = abs(errors["f0_pct"]) <= 100 * tol.f0 and abs(errors["q_pct"]) <= 100 * tol.q and abs(errors["gain_db"]) <= tol.gain_db
    weighted = weighted_error(errors, tol)
    gbw = res.analysis.requirements.gbw_hz if res.analysis is not None else None
    gross = _gross_miss(errors, plan.q, series)
    if gross:
        return res, Attempt(topology_id, False, gbw, rs, cs, gross, errors, False, weighted)
    reason = None
    if gbw is None:
        why = res.analysis.requirements.gbw_reason if res.analysis is not None else None
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
    half_bw_pct = 100.0 / (2.0 * q)
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
    return Tolerances(f0=min(tol.f0, STAGE_F0_SHARE / q), q=min(tol.q, STAGE_Q_TOL), gain_db=tol.gain_db)


def _build_stage(plan: SectionPlan, vin_v: float, settings: ChainSettings, conditions: Conditions) -> Stage:
    if plan.q > MAX_STAGE_Q:
        return Stage(
            plan, vin_v, None, (), False,
            f"Q {plan.q:.4g} is above {MAX_STAGE_Q:g}, beyond any of our circuits with real parts ({_Q_CAP_WHY})",
        )
    cond = replace(conditions, vin_v=vin_v, tolerances=stage_tolerances(conditions.tolerances, plan.q))
    if settings.circuit != AUTO:
        res, att = _attempt(settings.circuit, plan, settings.series, cond)
        if not att.feasible:
            return Stage(plan, vin_v, res, (att,), False, f"{settings.circuit} cannot build it: {att.reason}")
        return _finish(plan, vin_v, res, (att,), conditions, (f"{att.reason}",) if att.reason else ())
    tried = [_attempt(t, plan, settings.series, cond) for t in topology_ids()]
    attempts = tuple(a for _, a in tried)
    usable = [(i, res, a) for i, (res, a) in enumerate(tried) if a.sane]
    if not usable:
        why = "; ".join(f"{a.topology_id}: {a.reason}" for a in attempts)
        first = next((res for res, a in tried if res is not None), None)
        return Stage(plan, vin_v, first, attempts, False, f"no circuit builds it with sane parts ({why})")
    meets = [t for t in usable if t[2].within]
    note = ()
    if meets:  # the least GBW among those that meet the stage's target within the tolerances
        best = min(meets, key=lambda t: (t[2].gbw_hz, t[0]))
    else:  # none does with these parts: the closest one
        best = min(usable, key=lambda t: (t[2].weighted, t[0]))
        e = best[2].errors
        note = (
            f"no circuit meets this stage within its tolerances with {settings.series} parts; the closest, {best[2].topology_id}, "
            f"is off by f0 {e['f0_pct']:+.3g} %, Q {e['q_pct']:+.3g} %, gain {e['gain_db']:+.3g} dB (a finer series or a trimmer helps)",
        )
    return _finish(plan, vin_v, best[1], attempts, conditions, note)


def _finish(plan, vin_v, res, attempts, conditions: Conditions, notes: tuple[str, ...] = ()) -> Stage:
    an = res.analysis
    if an is not None:
        h_ideal, h_actual = an.h_ideal, an.h_actual
    else:  # pragma: no cover - design() always analyses a feasible result
        from bandsmith.analysis.analyzer import transfer_function

        net = Candidate(res.topology_id, res.chosen).netlist
        h_ideal = transfer_function(net)
        h_actual = transfer_function(net, conditions.opamp) if conditions.opamp is not None else None
    if conditions.opamp is not None and h_actual is None:
        from bandsmith.analysis.analyzer import transfer_function

        h_actual = transfer_function(Candidate(res.topology_id, res.chosen).netlist, conditions.opamp)
    return Stage(plan, vin_v, res, attempts, True, None, h_ideal, h_actual, warnings=tuple(res.warnings) + tuple(notes))


def _sweep(settings: ChainSettings, q_max: float) -> np.ndarray:
    band = settings.band
    r = max(10.0, (band.f_high_hz / band.f_low_hz) ** 2)
    span = 2.0 * math.log(r)
    n = int(min(max(span * 40.0 * max(q_max, 0.5), 2000), 400_000)) + 1
    return np.geomspace(band.f0_hz / r, band.f0_hz * r, n)


def _crossing(mag_fn, lo_hz: np.ndarray, hi_hz: np.ndarray, level: float) -> np.ndarray:
    """Where ``mag_fn`` crosses ``level`` between each pair of brackets (bisection in log f)."""
    a, b = np.log(lo_hz), np.log(hi_hz)
    fa = mag_fn(np.exp(a)) - level
    for _ in range(60):
        m = 0.5 * (a + b)
        fm = mag_fn(np.exp(m)) - level
        same = np.signbit(fm) == np.signbit(fa)
        a, fa = np.where(same, m, a), np.where(same, fm, fa)
        b = np.where(same, b, m)
    return np.exp(0.5 * (a + b))


def _edges(mag_fn, f: np.ndarray, mag: np.ndarray, level: float) -> tuple[float, float]:
    above = np.flatnonzero(mag >= level)
    if above.size == 0 or above[0] == 0 or above[-1] == f.size - 1:
        return math.nan, math.nan
    i0, i1 = above[0], above[-1]
    lo, hi = _crossing(mag_fn, np.array([f[i0 - 1], f[i1]]), np.array([f[i0], f[i1 + 1]]), level)
    return float(lo), float(hi)


def _measure(response, settings: ChainSettings, f: np.ndarray, q_max: float) -> Overall:
    """Overall figures of a chain response ``response(f_hz) -> complex (F,)`` on the sweep ``f``."""

    def mag_fn(x):
        x = np.asarray(x, dtype=float)
        return np.abs(response(x.reshape(-1))).reshape(x.shape)

    mag = mag_fn(f)
    peak, f_pk = peak_over_frequency(lambda x: mag_fn(x).reshape(1, -1), float(f[0]), float(f[-1]), q_max=q_max, rows=1)
    peak, f_pk = float(peak[0]), float(f_pk[0])
    lo, hi = _edges(mag_fn, f, mag, peak * 10 ** (settings.edge_level_db / 20))
    lo3, hi3 = _edges(mag_fn, f, mag, peak * 10 ** (_HALF_POWER_DB / 20))
    f0 = math.sqrt(lo * hi) if math.isfinite(lo) and math.isfinite(hi) else math.nan
    gc = float(20 * np.log10(mag_fn(np.array([f0]))[0])) if math.isfinite(f0) else math.nan
    ripple = math.nan
    if math.isfinite(lo):
        inside = np.flatnonzero((f > lo) & (f < hi))
        if inside.size >= 3:
            m = mag[inside]
            dips = np.flatnonzero((m[1:-1] < m[:-2]) & (m[1:-1] <= m[2:])) + 1
            if dips.size == 0:
                ripple = 0.0
            else:
                # Refine every dip on local grids (the magnitude is flat to second order there).
                lf = np.log(f[inside[dips]])
                delta = np.log(f[1] / f[0])
                for _ in range(2):
                    local = lf[:, None] + np.linspace(-delta, delta, 201)[None, :]
                    ml = mag_fn(np.exp(local))
                    j = np.argmin(ml, axis=1)
                    lf = local[np.arange(lf.size), j]
                    delta /= 100.0
                deepest = float(np.min(ml[np.arange(lf.size), j]))
                ripple = 20 * math.log10(peak / deepest)
                if ripple < 1e-9:  # rounding noise on a maximally flat top
                    ripple = 0.0
        else:
            ripple = 0.0
    return Overall(lo, hi, f0, gc, ripple, 20 * math.log10(peak), f_pk, settings.edge_level_db, lo3, hi3)


def _peaks_internal(stages: tuple[Stage, ...], cascade_resp, f: np.ndarray, q_max: float) -> np.ndarray:
    n = len(stages)

    def mag_fn(x):
        x = np.asarray(x, dtype=float)
        if x.ndim == 1:
            return np.abs(np.cumprod(cascade_resp(x), axis=0))
        out = np.empty(x.shape)
        for k in range(n):  # one row per stage (at most 8), vectorised over frequency
            out[k] = np.abs(np.prod(cascade_resp(x[k])[: k + 1], axis=0))
        return out

    peaks, _ = peak_over_frequency(mag_fn, float(f[0]), float(f[-1]), q_max=q_max, rows=n)
    return 20 * np.log10(peaks)


def _max_dev_db(a: np.ndarray, b: np.ndarray) -> float:
    with np.errstate(divide="ignore"):
        d = np.abs(20 * np.log10(np.abs(a)) - 20 * np.log10(np.abs(b)))
    return float(np.max(d)) if d.size else math.nan


def _stage_vin(settings: ChainSettings, conditions: Conditions, plan: CascadePlan, built: list[Stage], sec: SectionPlan) -> float:
    """Amplitude reaching a stage at its own f0 (earlier stages as built, ideal op-amp)."""
    if not built:
        return conditions.vin_v
    partial = Cascade(settings, conditions, plan, tuple(built), False, None, None, None, None, None, None, np.empty(0))
    return conditions.vin_v * float(abs(partial.response(np.array([sec.f0_hz]))[0]))


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
    """
    plan = plan_cascade(settings.prototype(), settings.band, settings.gain)
    built: list[Stage] = []
    for sec in plan.sections:
        built.append(_build_stage(sec, _stage_vin(settings, conditions, plan, built, sec), settings, conditions))
    return _assemble(settings, conditions, plan, tuple(built))


def _redrive(settings: ChainSettings, conditions: Conditions, plan: CascadePlan, built: list[Stage], st: Stage) -> Stage:
    """A built stage re-analysed for the amplitude that now reaches it (parts unchanged)."""
    vin = _stage_vin(settings, conditions, plan, built, st.plan)
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
    built = list(result.stages[: index - 1])
    sec = plan.sections[index - 1]
    built.append(_build_stage(sec, _stage_vin(settings, conditions, plan, built, sec), replace(settings, circuit=circuit), conditions))
    for st in result.stages[index:]:
        built.append(_redrive(settings, conditions, plan, built, st))
    return _assemble(settings, conditions, plan, tuple(built))


def chain_cascade(chain: Chain, *, conditions: Conditions = Conditions()) -> Cascade:
    """Measure a saved chain with its saved parts (nothing is redesigned).

    Each stage is analysed as :func:`design_cascade` would (its drive and its stage tolerances);
    its errors are against the stage's planned target.
    """
    from bandsmith.design.designer import DesignResult, Spec, errors_of, spread_of, weighted_error

    settings = chain.settings
    plan = plan_cascade(settings.prototype(), settings.band, settings.gain)
    built: list[Stage] = []
    for sec, saved in zip(plan.sections, chain.stages):
        vin = _stage_vin(settings, conditions, plan, built, sec)
        cond = replace(conditions, vin_v=vin, tolerances=stage_tolerances(conditions.tolerances, sec.q))
        cand = Candidate(saved.topology_id, saved.values)
        an = cand.analyze(cond)
        spec = Spec(sec.f0_hz, sec.q, sec.gain)
        errors = errors_of(an.ideal, spec)
        tol = cond.tolerances
        within = abs(errors["f0_pct"]) <= 100 * tol.f0 and abs(errors["q_pct"]) <= 100 * tol.q and abs(errors["gain_db"]) <= tol.gain_db
        sp = spread_of(cand.topology, cand.values)
        res = DesignResult(
            topology_id=cand.topology_id, spec=spec, feasible=True, reason=None, exact=dict(cand.values), chosen=dict(cand.values),
            series=settings.series, ideal=an.ideal, errors=errors, warnings=(), analysis=an, conditions=cond,
        )
        att = Attempt(cand.topology_id, True, an.requirements.gbw_hz, sp["r"] or 1.0, sp["c"] or 1.0, None, errors, within, weighted_error(errors, tol))
        built.append(Stage(sec, vin, res, (att,), True, None, an.h_ideal, an.h_actual))
    return _assemble(settings, conditions, plan, tuple(built))


def _loaded(stages: tuple[Stage, ...]) -> tuple[Stage, ...]:
    """Built stages with each one's output current into its own circuit and the next stage's
    input (module notes); the last stage keeps its own, with the conditions' load."""
    from bandsmith.analysis.analyzer import opamp_output_current

    out = list(stages)
    for k, (st, nxt) in enumerate(zip(stages[:-1], stages[1:])):
        an = st.result.analysis
        f0 = an.ideal.item().f0_hz
        if not math.isfinite(f0):
            continue
        amps = opamp_output_current(an.netlist, f0, load=nxt.result.analysis.netlist) * st.vin_v
        req = replace(an.requirements, iout_peak_ma=amps * 1e3)
        out[k] = replace(st, result=replace(st.result, analysis=replace(an, requirements=req)))
    return tuple(out)


def _assemble(settings: ChainSettings, conditions: Conditions, plan: CascadePlan, stages: tuple[Stage, ...]) -> Cascade:
    """Measure built stages as a whole chain (module notes)."""
    q_max = max(s.q for s in plan.sections)
    feasible = all(s.feasible for s in stages)
    reason = None if feasible else _summary(stages)
    f = _sweep(settings, q_max)
    shell = Cascade(settings, conditions, plan, stages, feasible, reason, None, None, None, None, None, f)
    if not feasible:
        return shell
    stages = _loaded(stages)
    peaks_db = _peaks_internal(stages, shell.stage_responses, f, q_max)
    stages = tuple(replace(s, peak_internal_gain_db=float(p)) for s, p in zip(stages, peaks_db))
    shell = replace(shell, stages=stages)
    h = shell.response(f)
    ref = shell.reference_response(f)
    overall = _measure(shell.response, settings, f, q_max)
    band = (f >= settings.f_low_hz) & (f <= settings.f_high_hz)
    overall_actual = actual_dev = None
    if conditions.opamp is not None:
        overall_actual = _measure(lambda x: shell.response(x, actual=True), settings, f, q_max)
        actual_dev = _max_dev_db(shell.response(f, actual=True), ref)
    band_dev = _max_dev_db(h[band], ref[band])
    warnings = []
    if band_dev > WARN_BAND_DEV_DB:
        finer = "" if settings.series in ("exact", "E192") else "; a finer series (E96, say) or trimming the sharpest stages brings it closer"
        warnings.append(f"with {settings.series} parts the chain is up to {band_dev:.3g} dB off the ideal {settings.response} response within the band{finer}")
    if overall_actual is not None:
        act_band = _max_dev_db(shell.response(f[band], actual=True), ref[band])
        if act_band > max(WARN_BAND_DEV_DB, band_dev + 0.5):
            warnings.append(f"with the {format_value(conditions.gbw_hz, 'Hz', digits=3)} op-amp the chain is up to {act_band:.3g} dB off the ideal response within the band; a faster op-amp is needed")
    return replace(
        shell,
        overall=overall,
        overall_actual=overall_actual,
        reference_max_dev_db=_max_dev_db(h, ref),
        passband_max_dev_db=band_dev,
        actual_max_dev_db=actual_dev,
        warnings=tuple(warnings),
    )


# --------------------------------------------------------------------------- JSON and sessions


def _fig_json(fig: Figures | None) -> dict | None:
    return fig.to_json() if fig is not None else None


def _stage_json(st: Stage) -> dict:
    res = st.result
    an = res.analysis if (res is not None and st.feasible) else None
    out = {
        "index": st.index,
        "f0_hz": st.plan.f0_hz,
        "q": st.plan.q,
        "gain": st.plan.gain,
        "circuit": st.circuit if st.feasible else None,
        "feasible": st.feasible,
        "reason": st.reason,
        "chosen": st.chosen,
        "exact": dict(res.exact) if st.feasible else None,
        "series": res.series if st.feasible else None,
        "ideal": an.ideal.to_json() if an is not None else None,
        "actual": _fig_json(an.actual) if an is not None else None,
        "errors": dict(res.errors) if st.feasible else None,
        "warnings": list(st.warnings),
        "requirements": an.requirements.to_json() if an is not None else None,
        "vin_v": st.vin_v,
        "peak_internal_gain_db": st.peak_internal_gain_db,
        "planned_peak_internal_gain_db": st.plan.peak_internal_gain_db,
        "lowpass_pole": [st.plan.lowpass_pole.real, st.plan.lowpass_pole.imag],
        "tried": [a.to_json() for a in st.attempts],
    }
    if an is not None:
        out["netlist"] = an.netlist.to_json()
    return out


def cascade_json(result: Cascade) -> dict:
    """The ``bandsmith cascade --json`` object (issue 6's contract, with extra keys)."""
    s = result.settings
    gbws = [st.result.analysis.requirements.gbw_hz if st.feasible and st.result.analysis is not None else None for st in result.stages]
    return {
        "response": s.response,
        "order": s.order,
        "spec": s.to_json(),
        "feasible": result.feasible,
        "reason": result.reason,
        "warnings": list(result.warnings),
        "sections": [_stage_json(st) for st in result.stages],
        "overall": result.overall.to_json() if result.overall is not None else None,
        "overall_actual": result.overall_actual.to_json() if result.overall_actual is not None else None,
        "opamp": None if result.conditions.opamp is None else result.conditions.opamp.to_json(),
        "required_gbw_hz": (max(gbws) if gbws and all(g is not None for g in gbws) else None) if result.feasible else None,
        "peak_gain_db": 20 * math.log10(result.plan.peak_gain),
        "reference_max_dev_db": result.reference_max_dev_db,
        "passband_max_dev_db": result.passband_max_dev_db,
        "actual_max_dev_db": result.actual_max_dev_db,
        "sweep": {"f_from_hz": float(result.sweep_f_hz[0]), "f_to_hz": float(result.sweep_f_hz[-1]), "points": int(result.sweep_f_hz.size)},
    }


def cascade_session(result: Cascade, *, chain_id: str = "chain-1", notes: str = ""):
    """A session holding a built chain: its stages as pinned candidates ``stage-1`` … and the
    chain itself under ``extras["chains"]``.

    The target is the whole band: f0 the geometric centre, Q = f0/bandwidth, the centre gain.
    """
    from bandsmith.files.session import CandidateEntry, OpAmpSpec, Session, Target

    if not result.feasible:
        raise InputError("save", f"the chain cannot be built, so nothing was saved: {result.reason}")
    s = result.settings
    c = result.conditions
    ids = tuple(f"stage-{st.index}" for st in result.stages)
    snap = None if s.series == "exact" else s.series
    entries = tuple(
        CandidateEntry(
            id=cid,
            topology_id=st.circuit,
            values=st.chosen,
            pinned=True,
            snap=snap,
            notes=f"{chain_id} stage {st.index} of {len(result.stages)}: f0 {st.plan.f0_hz:.6g} Hz, Q {st.plan.q:.6g}, gain {st.plan.gain:.6g}",
        )
        for cid, st in zip(ids, result.stages)
    )
    chain = result.chain(chain_id, candidate_ids=ids, notes=notes)
    band = s.band
    return Session(
        target=Target(f0_hz=band.f0_hz, q=band.q_bp, gain=s.gain, vin_v=c.vin_v, series=s.series),
        candidates=entries,
        opamp=OpAmpSpec(gbw_hz=c.gbw_hz, a0=c.a0),
        tolerances=c.tolerances,
        rload_ohm=c.rload_ohm,
        notes=notes,
        extras={"chains": [chain.to_json()]},
    )


def chains_in(session) -> tuple[Chain, ...]:
    """The chains a session keeps under ``extras["chains"]`` (none when absent).

    Raises
    ------
    SessionError
        Of kind ``wrong-type`` or ``impossible-value`` naming the chain and the field.
    """
    from bandsmith.files.session import SessionError

    raw = session.extras.get("chains", [])
    if not isinstance(raw, list):
        raise SessionError("wrong-type", "the session has a value of the wrong type: chains should be a list")
    out = []
    for i, obj in enumerate(raw):
        try:
            out.append(Chain.from_json(obj))
        except InputError as exc:
            raise SessionError("impossible-value", f"the session has an impossible value: chains[{i}].{exc.field} {exc.reason}") from None
    return tuple(out)
