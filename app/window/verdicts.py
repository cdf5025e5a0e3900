"""Shelf verdicts of the active candidates: one book per workbench state, shared by every view.

The candidate columns (a verdict strip each), the shelf pane and the response plots (the chosen
op-amp's curve) read the same :class:`VerdictBook` (:meth:`VerdictBook.of` a state). The book
holds no widgets; every number comes from :mod:`bandsmith.bench.fitcheck`, :mod:`bandsmith.bench.headroom` and
:mod:`bandsmith.solver.ampmodel`.

When it computes
----------------
A part edit re-plots at once and costs the book nothing: the verdicts of a changed candidate are
computed :data:`DELAY_MS` after the edits pause, one candidate per turn of the event loop (a
candidate against six models takes about 30 ms), and only while the shelf has models. Each
(candidate, model) verdict is cached, so an edit of one part or one model recomputes only what it
touches. :meth:`VerdictBook.reports_now` computes whatever is stale at once (the shelf pane, tests).

The models are the shelf the shelf pane gives (:meth:`VerdictBook.set_shelf`) followed by the
models the session carries in ``extras["shelf"]["amps"]`` that are not on the shelf; the supply is
the session's ``extras["shelf"]["supply_v"]`` (±15 V when it has none).

Choosing
--------
Each candidate may have one chosen model (:meth:`VerdictBook.choose`): a view state, not part of
the document. :meth:`VerdictBook.response` gives the candidate's response with it on the
candidate's own plot grid, and the chosen verdict carries its headroom.
"""

from __future__ import annotations

import math
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np
from PySide6 import QtCore

from bandsmith.solver.ampmodel import amp_transfer_function
from bandsmith.analysis.analyzer import sweep
from bandsmith.design.candidate import Candidate
from bandsmith.bench.fitcheck import FitReport, Verdict, basis_of, check_amp
from bandsmith.analysis.figures import Figures, measure
from bandsmith.bench.headroom import headroom
from bandsmith.files.session import CandidateEntry
from bandsmith.bench.shelf import OpAmp
from bandsmith.common.values import format_value

from bandsmith.app.document.extras_shelf import SESSION_KEY, session_amps, session_supply_v

__all__ = [
    "SESSION_KEY",
    "DELAY_MS",
    "AmpResponse",
    "VerdictBook",
    "session_supply_v",
    "session_amps",
    "verdict_tooltip",
]

DELAY_MS = 250


def verdict_tooltip(v: Verdict) -> str:
    """A verdict's reasons and margins in plain text (for tooltips)."""
    m = v.margins

    def r(x):
        return "—" if x is None or not math.isfinite(x) else f"{x:.3g}×"

    lines = [f"{v.amp.name}: {v.verdict}"] + [f"• {t}" for t in v.reasons]
    lines.append(
        f"margins: GBW {r(m.gbw)}, slew {r(m.slew)}, output current {r(m.iout)}, "
        f"swing {format_value(m.swing_v, 'V', digits=3)} to spare"
    )
    return "\n".join(lines)


@dataclass(frozen=True, slots=True)
class AmpResponse:
    """A candidate's response with one shelf model, on the frequencies of its own curves.

    ``magnitude_db`` and ``phase_deg`` (unwrapped along the sweep, as the candidate's own phase
    curve) are :func:`bandsmith.analysis.analyzer.sweep` of :func:`bandsmith.solver.ampmodel.amp_transfer_function`;
    ``figures`` are measured on that transfer function (scalars, :meth:`Figures.item`).
    """

    candidate_id: str
    amp: OpAmp
    f_hz: np.ndarray
    magnitude_db: np.ndarray
    phase_deg: np.ndarray
    figures: Figures


class _Lru:
    def __init__(self, size: int):
        self._d: OrderedDict = OrderedDict()
        self._size = size

    def get(self, key, make):
        if key in self._d:
            self._d.move_to_end(key)
            return self._d[key]
        value = make()
        self._d[key] = value
        while len(self._d) > self._size:
            self._d.popitem(last=False)
        return value


class VerdictBook(QtCore.QObject):
    """Every active candidate's fit report against the shelf, and each candidate's chosen model.

    Signals
    -------
    changed()
        Reports were brought up to date (some candidates or all), or the models changed.
    chosen_changed(str, str)
        A candidate's chosen model changed: candidate id, model name ("" when none).
    """

    changed = QtCore.Signal()
    chosen_changed = QtCore.Signal(str, str)

    def __init__(self, state, parent: QtCore.QObject | None = None):
        super().__init__(parent if parent is not None else state)
        self.state = state
        self._shelf: tuple[OpAmp, ...] = ()
        self._reports: dict[str, FitReport] = {}
        self._keys: dict[str, tuple] = {}
        self._cache = _Lru(512)
        self._responses = _Lru(64)
        self._chosen: dict[str, str] = {}
        self._timer = QtCore.QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.timeout.connect(self._step)
        state.analyses_changed.connect(self._on_analyses_changed)

    @classmethod
    def of(cls, state) -> "VerdictBook":
        """The book of ``state`` (made on first use; it lives as long as the state)."""
        book = getattr(state, "_verdict_book", None)
        if book is None:
            book = cls(state)
            state._verdict_book = book
        return book

    # ------------------------------------------------------------------ the models
    def set_shelf(self, amps) -> None:
        """The user's shelf models (the shelf pane gives them); verdicts follow after the delay."""
        amps = tuple(amps)
        if amps == self._shelf:
            return
        self._shelf = amps
        self.changed.emit()
        self._schedule()

    def amps(self) -> tuple[OpAmp, ...]:
        """What the verdicts are for: the shelf, then the session's models that are not on it."""
        names = {a.name.casefold() for a in self._shelf}
        return self._shelf + tuple(a for a in session_amps(self.state.session) if a.name.casefold() not in names)

    @property
    def supply_v(self) -> float:
        return session_supply_v(self.state.session)

    # ------------------------------------------------------------------ reading
    def active(self) -> list[CandidateEntry]:
        return [c for c in self.state.session.candidates if c.enabled]

    def report(self, candidate_id: str) -> FitReport | None:
        """The latest report of a candidate (possibly of its previous values: see :meth:`is_current`)."""
        return self._reports.get(candidate_id)

    def is_current(self, candidate_id: str) -> bool:
        """Whether the candidate's report is for its present values, conditions and models."""
        entry = self._entry(candidate_id)
        return entry is not None and self._keys.get(candidate_id) == self._key(entry)

    def pending(self) -> bool:
        """Whether some active candidate's verdicts are still to be computed."""
        return bool(self.amps()) and any(not self.is_current(c.id) for c in self.active())

    def reports_now(self) -> dict[str, FitReport]:
        """Every active candidate's report, computing what is stale now (in session order)."""
        self._timer.stop()
        for c in self.active():
            if not self.is_current(c.id):
                self._compute(c)
        self._prune()
        out = {c.id: self._reports[c.id] for c in self.active() if c.id in self._reports}
        self.changed.emit()
        return out

    def verdict(self, candidate_id: str, amp_name: str) -> Verdict | None:
        rep = self.report(candidate_id)
        if rep is None:
            return None
        try:
            return rep.verdict(amp_name)
        except KeyError:
            return None

    # ------------------------------------------------------------------ choosing
    def chosen(self, candidate_id: str) -> str | None:
        """The chosen model's name for a candidate, or None."""
        return self._chosen.get(candidate_id)

    def choose(self, candidate_id: str, amp_name: str | None) -> None:
        """Choose a model for a candidate (None: none), shown on the plots and in its column."""
        if amp_name == self._chosen.get(candidate_id):
            return
        if amp_name is None:
            self._chosen.pop(candidate_id, None)
        else:
            self._chosen[candidate_id] = amp_name
        self.chosen_changed.emit(candidate_id, amp_name or "")

    def chosen_ids(self) -> tuple[str, ...]:
        return tuple(self._chosen)

    def response(self, candidate_id: str) -> AmpResponse | None:
        """The candidate's response with its chosen model, on its own curves' frequencies.

        None when nothing is chosen, the model is no longer there, or the candidate is not
        analysed (switched off, or its analysis failed).
        """
        name = self.chosen(candidate_id)
        res = self.state.result(candidate_id)
        if name is None or res is None or not res.ok or res.response is None:
            return None
        amp = next((a for a in self.amps() if a.name.casefold() == name.casefold()), None)
        if amp is None:
            return None
        entry = res.entry
        f = res.response.f_hz
        key = (candidate_id, entry.topology_id, tuple(sorted(entry.values.items())), amp, float(f[0]), float(f[-1]), f.size)

        def make():
            net = Candidate(entry.topology_id, entry.values).netlist
            h = amp_transfer_function(net, gbw_hz=amp.gbw_hz, a0=amp.a0, f_p2_hz=amp.f_p2_hz)
            r = sweep(h, f)
            with np.errstate(divide="ignore"):
                mag = r.magnitude_db
            return AmpResponse(candidate_id, amp, f, mag, r.phase_deg, measure(h).item())

        try:
            return self._responses.get(key, make)
        except Exception:  # a model the circuit cannot be solved with: no curve, never a crash
            return None

    # ------------------------------------------------------------------ computing
    def _entry(self, candidate_id: str) -> CandidateEntry | None:
        for c in self.state.session.candidates:
            if c.id == candidate_id:
                return c
        return None

    def _base_key(self, c: CandidateEntry) -> tuple:
        s = self.state.session
        return (c.topology_id, tuple(sorted(c.values.items())), self.supply_v, s.target.vin_v, s.rload_ohm, s.tolerances)

    def _key(self, c: CandidateEntry) -> tuple:
        return self._base_key(c) + (self.amps(),)

    def _compute(self, c: CandidateEntry) -> None:
        s = self.state.session
        supply = self.supply_v
        key = self._base_key(c)

        def make_base():
            try:
                net = Candidate(c.topology_id, c.values).netlist
                room = headroom(net, vin_v=s.target.vin_v, supply_v=supply, rload_ohm=s.rload_ohm)
                return net, basis_of(net), room
            except Exception:  # a design the core cannot check: no verdicts, never a crash
                return None

        base = self._cache.get(key, make_base)
        amps = self.amps()
        self._keys[c.id] = key + (amps,)
        if base is None:
            self._reports.pop(c.id, None)
            return
        net, shared, room = base
        try:
            verdicts = tuple(
                self._cache.get(
                    key + (a,),
                    lambda a=a: check_amp(net, a, supply_v=supply, vin_v=s.target.vin_v, rload_ohm=s.rload_ohm,
                                          tolerances=s.tolerances, basis=shared),
                )
                for a in amps
            )
        except Exception:
            self._reports.pop(c.id, None)
            return
        self._reports[c.id] = FitReport(shared.ideal, verdicts, room)

    def _prune(self) -> None:
        ids = {c.id for c in self.state.session.candidates}
        for cid in list(self._reports):
            if cid not in ids:
                self._reports.pop(cid)
                self._keys.pop(cid, None)
        for cid in list(self._chosen):
            if cid not in ids:
                self.choose(cid, None)

    def _schedule(self) -> None:
        if self.amps():
            self._timer.start(DELAY_MS)

    def _on_analyses_changed(self) -> None:
        self._prune()
        self._schedule()

    def _step(self) -> None:
        """Compute the next stale candidate; come back at once for the one after."""
        for c in self.active():
            if not self.is_current(c.id):
                self._compute(c)
                self.changed.emit()
                self._timer.start(0)
                return
