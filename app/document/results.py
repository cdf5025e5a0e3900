"""What the window shows of one candidate, assembled from core calls (no Qt, no maths of its own).

:func:`analyse_entry` runs :meth:`bandsmith.design.candidate.Candidate.analyze` under the session's
conditions, then asks the core for the curves the plots draw: the frequency response on the
session's common grid (:func:`bandsmith.analysis.analyzer.sweep`), the step response
(:func:`bandsmith.analysis.timeresponse.step_response`), poles and zeros (:class:`bandsmith.solver.rational.Rational`) and
the error-versus-GBW ladder (:mod:`bandsmith.analysis.gbw_sweep`). Results are frozen and cached by what they
depend on, so undo, redo and edits of one candidate re-use the others' work.
"""

from __future__ import annotations

import math
from collections import OrderedDict
from dataclasses import dataclass, field

import numpy as np

from bandsmith.analysis.analyzer import Analysis, Response, sweep
from bandsmith.design.candidate import Candidate, Conditions
from bandsmith.analysis.figures import Figures
from bandsmith.analysis.gbw_sweep import GbwSweep, gbw_error_sweep, gbw_ladder
from bandsmith.files.session import CandidateEntry, Session
from bandsmith.analysis.timeresponse import StepResponse, step_response
from bandsmith.design.standard import errors_of, figure_misses

__all__ = ["CandidateResult", "ResultCache", "frequency_grid", "analyse_entry"]

# Points of the common frequency grid: 1001 over four decades is 250 per decade (0.9 % steps), so a
# Q of 20 (a 5 % band) still has a dozen points across its band.
_GRID_POINTS = 1001
_GRID_DECADES_EACH_SIDE = 2.0


def frequency_grid(f0_hz: float) -> np.ndarray:
    """The frequencies (Hz) every candidate is drawn at: two decades each side of the target f0."""
    k = 10.0**_GRID_DECADES_EACH_SIDE
    return np.geomspace(f0_hz / k, f0_hz * k, _GRID_POINTS)


@dataclass(frozen=True, slots=True)
class CandidateResult:
    """One analysed candidate, ready to draw.

    ``error`` is set (and the rest None) when the analysis failed; its text names the reason.
    ``figures`` are those with the session's op-amp (the ideal ones when the op-amp is ideal).
    Poles and zeros are in Hz (``s / 2π``).
    """

    entry: CandidateEntry
    conditions: Conditions
    analysis: Analysis | None = None
    figures: Figures | None = None
    response: Response | None = None
    step: StepResponse | None = None
    poles_hz: np.ndarray = field(default_factory=lambda: np.zeros(0, complex))
    zeros_hz: np.ndarray = field(default_factory=lambda: np.zeros(0, complex))
    gbw: GbwSweep | None = None
    error: str | None = None

    @property
    def ok(self) -> bool:
        return self.error is None


def analyse_entry(
    entry: CandidateEntry, conditions: Conditions, f_hz: np.ndarray, *, analysis: Analysis | None = None
) -> CandidateResult:
    """Analyse one candidate under ``conditions`` and gather its curves on the grid ``f_hz``.

    ``analysis``, when given, is that candidate's analysis already made under the same conditions
    (by the design that chose its parts) and is used instead of analysing again.
    """
    try:
        an = analysis if analysis is not None else Candidate(entry.topology_id, entry.values).analyze(conditions)
        h = an.h_actual if an.h_actual is not None else an.h_ideal
        fig = (an.actual if an.actual is not None else an.ideal).item()
        response = sweep(h, f_hz)
        step = an.step if an.h_actual is None else step_response(h)
        ideal = an.ideal.item()
        req = an.requirements
        gbw = None
        if math.isfinite(ideal.f0_hz):
            wanted = [g for g in (conditions.gbw_hz, req.gbw_hz) if g is not None and math.isfinite(g)]
            ladder = gbw_ladder(
                ideal.f0_hz,
                lo_hz=min(wanted) / 3.0 if wanted else None,
                hi_hz=max(wanted) * 3.0 if wanted else None,
            )
            gbw = gbw_error_sweep(
                an.netlist, an.ideal, ladder, a0=conditions.a0, tolerances=conditions.tolerances, family=an.family
            )
        two_pi = 2.0 * math.pi
        return CandidateResult(
            entry=entry,
            conditions=conditions,
            analysis=an,
            figures=fig,
            response=response,
            step=step,
            poles_hz=np.asarray(h.poles(0)) / two_pi,
            zeros_hz=np.asarray(h.zeros(0)) / two_pi,
            gbw=gbw,
        )
    except Exception as exc:  # a design the core cannot analyse: shown in its column, never a crash
        return CandidateResult(entry=entry, conditions=conditions, error=f"cannot analyse this design: {exc}")


class ResultCache:
    """Results keyed by what they depend on (circuit, values, conditions, target f0); least recently used go first."""

    def __init__(self, size: int = 64):
        self._size = size
        self._items: OrderedDict[tuple, CandidateResult] = OrderedDict()

    @staticmethod
    def key(entry: CandidateEntry, conditions: Conditions, f0_hz: float) -> tuple:
        return (entry.topology_id, tuple(sorted(entry.values.items())), conditions, float(f0_hz))

    def put_analysis(self, session: Session, entry: CandidateEntry, analysis: Analysis) -> None:
        """Keep ``entry``'s result built from an analysis already made under the session's conditions."""
        cond = session.conditions_for(entry)
        k = self.key(entry, cond, session.target.f0_hz)
        if k not in self._items:
            self._items[k] = analyse_entry(entry, cond, frequency_grid(session.target.f0_hz), analysis=analysis)
            while len(self._items) > self._size:
                self._items.popitem(last=False)

    def get(self, session: Session, entry: CandidateEntry) -> CandidateResult:
        """The result of ``entry`` in ``session``, computed on first request."""
        cond = session.conditions_for(entry)
        k = self.key(entry, cond, session.target.f0_hz)
        hit = self._items.get(k)
        if hit is not None:
            self._items.move_to_end(k)
            if hit.entry != entry:  # same design, other switches or id: keep the curves, show the entry
                hit = _with_entry(hit, entry)
            return hit
        res = analyse_entry(entry, cond, frequency_grid(session.target.f0_hz))
        self._items[k] = res
        while len(self._items) > self._size:
            self._items.popitem(last=False)
        return res


def _with_entry(res: CandidateResult, entry: CandidateEntry) -> CandidateResult:
    from dataclasses import replace

    return replace(res, entry=entry)


@dataclass(frozen=True, slots=True)
class TargetErrors:
    """How far achieved figures are from the target: f0 and Q in percent, the gain in dB.

    ``*_ok`` say whether each is within the session's tolerances (f0, Q fractions; gain dB).
    """

    f0_pct: float
    q_pct: float
    gain_db: float
    f0_ok: bool
    q_ok: bool
    gain_ok: bool


def target_errors(fig: Figures, target, tolerances) -> TargetErrors:
    """Errors of figures against a :class:`bandsmith.files.session.Target`, each judged against
    the session's tolerances (the core's :func:`bandsmith.design.standard.errors_of` and
    :func:`~bandsmith.design.standard.figure_misses`)."""
    e = errors_of(fig, target.spec)
    missed = {key for key, *_ in figure_misses(e, tolerances)}
    return TargetErrors(
        f0_pct=e["f0_pct"],
        q_pct=e["q_pct"],
        gain_db=e["gain_db"],
        f0_ok="f0_pct" not in missed,
        q_ok="q_pct" not in missed,
        gain_ok="gain_db" not in missed,
    )


__all__ += ["TargetErrors", "target_errors"]
