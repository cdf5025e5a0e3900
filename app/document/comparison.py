"""The session's candidates judged and ranked (no Qt): what the at-a-glance comparison shows.

Every number comes from :mod:`bandsmith.verdict`: each active candidate, with the parts it has in
the session (hand-edited or designed), is wrapped as a :class:`bandsmith.design.designer.DesignResult`
(its analysis under the session's conditions, as the window already made it) and judged by
:func:`bandsmith.verdict.judge`; :func:`bandsmith.verdict.rank` orders the verdicts and picks the
recommended candidate. The limits are the session's (``extras["verdict_limits"]``, the
:meth:`bandsmith.verdict.VerdictLimits.to_json` object), or the defaults:

- no section: the defaults (a session that never changed them);
- an unreadable section: the defaults, and :attr:`SessionComparison.problem` says why.

A switched-off candidate is listed but not judged (it has no analysis); a candidate the core could
not analyse is ``not buildable`` with that reason.

Caching
-------
A verdict depends on the circuit, its parts, the session's conditions, the target and the limits;
:class:`ComparisonCache` keeps recent verdicts by exactly that, so an edit of one part re-judges one
candidate, and keeps the last comparison by session, so every view of one document state (the
table, each column) shares one computation. :func:`comparison_of` hands out one cache per document.
"""

from __future__ import annotations

import weakref
from collections import OrderedDict
from dataclasses import dataclass
from typing import Callable, Mapping

from bandsmith.analysis.analyzer import Analysis
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.design.compare import needs_inductor, part_count
from bandsmith.design.designer import DesignResult, design, spread_of
from bandsmith.design.standard import errors_of
from bandsmith.files.session import CandidateEntry, Session
from bandsmith.verdict import Verdict, VerdictLimits, judge, rank

from bandsmith.app.document.extras_settings import Stored
from bandsmith.app.document.results import target_errors

__all__ = [
    "LIMITS_KEY",
    "stored_limits",
    "limits_section",
    "CandidateJudgement",
    "SessionComparison",
    "design_result_of",
    "design_notes",
    "judge_session",
    "ComparisonCache",
    "comparison_of",
    "cache_of",
    "NOTES_PENDING",
]

LIMITS_KEY = "verdict_limits"

#: A candidate's design notes while they are deferred (:attr:`ComparisonCache.defer_notes`): working
#: them out runs the circuit's design procedure, which the window's start leaves for after it shows.
NOTES_PENDING = ("working out the design notes…",)


def stored_limits(session: Session) -> Stored:
    """The session's :class:`VerdictLimits` (``extras["verdict_limits"]``), or the defaults.

    ``Stored.saved`` is False without a section; with an unreadable one ``Stored.problem`` says why.
    """
    obj = session.extras.get(LIMITS_KEY)
    if obj is None:
        return Stored(VerdictLimits(), False)
    try:
        return Stored(VerdictLimits.from_json(obj), True)
    except (InputError, TypeError) as exc:
        return Stored(VerdictLimits(), False, f"the session's verdict limits cannot be used ({exc}); the defaults apply")


def limits_section(limits: VerdictLimits) -> dict | None:
    """What to keep under ``extras["verdict_limits"]``: the limits' JSON, or None (no section) for the defaults."""
    return None if limits == VerdictLimits() else limits.to_json()


@dataclass(frozen=True, slots=True)
class CandidateJudgement:
    """One row of the comparison.

    Attributes
    ----------
    entry : CandidateEntry
    verdict : Verdict or None
        None for a switched-off candidate (not judged).
    rank : int or None
        1 = best among the judged ones.
    errors : mapping or None
        ``f0_pct``, ``q_pct`` (per cent) and ``gain_db`` (dB) of the figures the window draws (with
        the session's op-amp when it has a GBW, else ideal) against the target.
    errors_ok : mapping or None
        The same keys: whether each is within the session's design tolerances.
    r_spread, c_spread : float or None
        Largest over smallest resistor / capacitor (None where the circuit has none).
    notes : tuple of str
        What the circuit's design procedure chooses for this target (impedance level, gain split).
    recommended : bool
    """

    entry: CandidateEntry
    verdict: Verdict | None
    rank: int | None
    errors: Mapping[str, float] | None
    errors_ok: Mapping[str, bool] | None
    r_spread: float | None
    c_spread: float | None
    notes: tuple[str, ...]
    recommended: bool = False

    @property
    def id(self) -> str:
        return self.entry.id

    @property
    def part_count(self) -> int:
        return self.verdict.part_count if self.verdict is not None else part_count(get_topology(self.entry.topology_id))

    @property
    def needs_inductor(self) -> bool:
        return needs_inductor(get_topology(self.entry.topology_id))


@dataclass(frozen=True, slots=True)
class SessionComparison:
    """Every candidate of a session with its verdict, in session order, and the recommendation.

    ``recommended`` is a candidate id or None; ``reason`` says why (or why none); ``figures_with``
    is the session op-amp's GBW (Hz) the figures were judged with, None for an ideal op-amp;
    ``problem`` is set when the session's limits section could not be read.
    """

    rows: tuple[CandidateJudgement, ...]
    recommended: str | None
    reason: str
    limits: VerdictLimits
    figures_with: float | None
    problem: str | None = None

    def row(self, candidate_id: str) -> CandidateJudgement | None:
        for r in self.rows:
            if r.id == candidate_id:
                return r
        return None

    @property
    def judged(self) -> tuple[CandidateJudgement, ...]:
        """The judged rows, best first."""
        return tuple(sorted((r for r in self.rows if r.rank is not None), key=lambda r: r.rank))


def design_result_of(session: Session, entry: CandidateEntry, analysis: Analysis | None, error: str | None = None) -> DesignResult:
    """A session candidate with its own parts as a :class:`DesignResult` for :func:`bandsmith.verdict.judge`.

    ``analysis`` is the candidate's analysis under ``session.conditions_for(entry)``; with None the
    result is infeasible and ``error`` is its reason.
    """
    spec = session.target.spec
    cond = session.conditions_for(entry)
    series = entry.snap or "exact"
    values = dict(entry.values)
    if analysis is None:
        return DesignResult(
            topology_id=entry.topology_id, spec=spec, feasible=False, reason=error or "the circuit could not be analysed",
            exact=values, chosen=values, series=series, ideal=None, errors=None, warnings=(), analysis=None, conditions=cond,
        )
    return DesignResult(
        topology_id=entry.topology_id, spec=spec, feasible=True, reason=None, exact=values, chosen=values,
        series=series, ideal=analysis.ideal, errors=errors_of(analysis.ideal, spec), warnings=(), analysis=analysis,
        fixed=tuple(entry.fixed), conditions=cond,
    )


def design_notes(session: Session, entry: CandidateEntry) -> tuple[str, ...]:
    """What the circuit's design procedure chooses for the session's target (its kept parts held),
    or why it cannot design it; () when the circuit has no procedure."""
    try:
        res = design(entry.topology_id, session.target.spec, series="exact", fixed={r: entry.values[r] for r in entry.fixed} or None,
                     conditions=session.conditions_for(entry))
    except InputError as exc:
        return (str(exc),)
    except Exception as exc:  # a design procedure that fails here is a note, never a crash of the view
        return (f"the design procedure failed for this target ({type(exc).__name__}: {exc})",)
    if not res.feasible and res.reason:
        return tuple(res.notes) + (res.reason,)
    return tuple(res.notes)


def _figure_errors(session: Session, analysis: Analysis) -> tuple[dict, dict]:
    """The errors against the target and whether each is within tolerance (the column's own)."""
    t = target_errors(analysis.actual if analysis.actual is not None else analysis.ideal, session.target, session.tolerances)
    return ({"f0_pct": t.f0_pct, "q_pct": t.q_pct, "gain_db": t.gain_db},
            {"f0_pct": t.f0_ok, "q_pct": t.q_ok, "gain_db": t.gain_ok})


AnalysisOf = Callable[[CandidateEntry], "tuple[Analysis | None, str | None]"]


class ComparisonCache:
    """Recent verdicts and design notes by what they depend on, and the last comparison by session."""

    def __init__(self, size: int = 64):
        self._size = size
        self._verdicts: OrderedDict[tuple, Verdict] = OrderedDict()
        self._notes: OrderedDict[tuple, tuple[str, ...]] = OrderedDict()
        self._last: tuple[Session, SessionComparison] | None = None
        #: While True, notes not yet worked out read :data:`NOTES_PENDING` (see :meth:`fill_notes`).
        self.defer_notes = False
        self._pending: list[tuple[Session, CandidateEntry]] = []

    def _keep(self, store: OrderedDict, key, make):
        hit = store.get(key)
        if hit is None:
            hit = store[key] = make()
            while len(store) > self._size:
                store.popitem(last=False)
        else:
            store.move_to_end(key)
        return hit

    def verdict(self, session: Session, entry: CandidateEntry, analysis: Analysis | None, error: str | None,
                limits: VerdictLimits, limits_key: tuple | None = None) -> Verdict:
        """The verdict of ``entry``; ``limits_key`` is ``limits.key()`` when the caller has it."""
        key = (entry.id, entry.topology_id, tuple(sorted(entry.values.items())), entry.snap, session.conditions_for(entry),
               session.target.spec, limits.key() if limits_key is None else limits_key, analysis is None, error)
        def make() -> Verdict:
            try:
                return judge(design_result_of(session, entry, analysis, error), limits, candidate=entry.id)
            except Exception as exc:  # a candidate the core cannot judge is not buildable, with the reason
                why = f"cannot judge this design ({type(exc).__name__}: {exc})"
                return judge(design_result_of(session, entry, None, why), limits, candidate=entry.id)

        return self._keep(self._verdicts, key, make)

    def notes(self, session: Session, entry: CandidateEntry) -> tuple[str, ...]:
        key = (entry.topology_id, session.target.spec, tuple((r, entry.values[r]) for r in entry.fixed), session.conditions_for(entry))
        if self.defer_notes and key not in self._notes:
            self._pending.append((session, entry))
            return NOTES_PENDING
        return self._keep(self._notes, key, lambda: design_notes(session, entry))

    def fill_notes(self) -> bool:
        """Stop deferring the notes; True when some were pending (the next comparison has them)."""
        self.defer_notes = False
        pending, self._pending = self._pending, []
        if pending:
            self._last = None  # the last comparison holds NOTES_PENDING: judge again (verdicts are cached)
        return bool(pending)

    def comparison(self, session: Session, analysis_of: AnalysisOf) -> SessionComparison:
        """The comparison of ``session`` (the last one again while the session is the same)."""
        if self._last is not None and self._last[0] is session:
            return self._last[1]
        out = judge_session(session, analysis_of, cache=self)
        self._last = (session, out)
        return out


def judge_session(session: Session, analysis_of: AnalysisOf, *, cache: ComparisonCache | None = None) -> SessionComparison:
    """Judge and rank the session's active candidates (see the module notes).

    Parameters
    ----------
    session : Session
    analysis_of : callable
        ``entry -> (analysis, error)``: the candidate's analysis under the session's conditions, or
        None and why not.
    cache : ComparisonCache, optional
    """
    cache = cache or ComparisonCache()
    stored = stored_limits(session)
    limits = stored.settings
    limits_key = limits.key()
    judged: list[tuple[CandidateEntry, Verdict, Analysis | None]] = []
    for entry in session.candidates:
        if entry.enabled:
            analysis, error = analysis_of(entry)
            judged.append((entry, cache.verdict(session, entry, analysis, error, limits, limits_key), analysis))
    ranking = rank([v for _, v, _ in judged])
    by_id = {e.id: (v, r, a) for (e, v, a), r in zip(judged, ranking.ranks)}
    rows = []
    for entry in session.candidates:
        topo = get_topology(entry.topology_id)
        sp = spread_of(topo, entry.values)
        notes = cache.notes(session, entry)
        if entry.id not in by_id:
            rows.append(CandidateJudgement(entry, None, None, None, None, sp["r"], sp["c"], notes))
            continue
        v, r, a = by_id[entry.id]
        errors, ok = _figure_errors(session, a) if a is not None else (None, None)
        rows.append(CandidateJudgement(entry, v, r, errors, ok, sp["r"], sp["c"], notes, entry.id == ranking.recommended))
    return SessionComparison(tuple(rows), ranking.recommended, ranking.reason, limits, session.opamp.gbw_hz, stored.problem)


_PER_DOCUMENT: "weakref.WeakKeyDictionary[object, ComparisonCache]" = weakref.WeakKeyDictionary()


def cache_of(document) -> ComparisonCache:
    """The :class:`ComparisonCache` of a document (made on first use)."""
    cache = _PER_DOCUMENT.get(document)
    if cache is None:
        cache = _PER_DOCUMENT[document] = ComparisonCache()
    return cache


def comparison_of(document) -> SessionComparison:
    """The comparison of a :class:`bandsmith.app.document.model.Document`'s present session, from
    the analyses it already made (one cache per document)."""
    cache = cache_of(document)

    def analysis_of(entry: CandidateEntry):
        res = document.result(entry.id)
        if res is None:
            return None, "not analysed"
        return res.analysis, res.error

    return cache.comparison(document.session, analysis_of)
