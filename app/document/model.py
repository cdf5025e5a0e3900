"""The workbench's document in plain Python: the session, its file, its undo history and the analyses.

The document is an immutable :class:`bandsmith.files.session.Session`. Nothing changes it in place:
an edit builds a new Session (``dataclasses.replace``) and goes through :meth:`Document.edit`, which
pushes an :class:`~bandsmith.app.document.history.Edit` on the :class:`~bandsmith.app.document.history.History`.
Applying a document re-analyses every active candidate (through
:class:`~bandsmith.app.document.results.ResultCache`, so only changed ones cost anything) and
notifies, in order, ``session_changed`` and ``analyses_changed``.

Notifications are plain callbacks (:class:`~bandsmith.app.document.history.Callbacks`); the window's
:class:`~bandsmith.app.window.state.WorkbenchState` re-emits them as Qt signals. Nothing here
imports Qt, so the document and its history are tested without a display.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Mapping

from bandsmith.common.limits import MAX_CANDIDATES
from bandsmith.common.units import part_unit
from bandsmith.common.eseries import nearest
from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value
from bandsmith.design.candidate import Candidate
from bandsmith.files.session import CandidateEntry, Session

from bandsmith.app.document.history import Callbacks, Edit, History
from bandsmith.app.document.results import CandidateResult, ResultCache

__all__ = ["Document", "entry_kind"]


class Document:
    """The session document and everything derived from it.

    Notifications (each a :class:`Callbacks`; ``connect`` a callable)
    -----------------------------------------------------------------
    session_changed(Session)
        After any change of the document (edit, undo, redo, open, new).
    analyses_changed()
        After the results of the active candidates were brought up to date.
    path_changed(str)
        The file the document belongs to ("" for an untitled session).
    clean_changed(bool)
        True when the document matches its file (nothing unsaved).
    current_changed(str)
        The candidate the user selected (exports and reports act on it).
    notice(str)
        A short message for the status bar (a redesign that was not possible, ...).

    ``history.changed`` tells when undo/redo availability or texts may have changed.
    """

    def __init__(self, session: Session, path: str | None = None):
        self.session_changed = Callbacks()
        self.analyses_changed = Callbacks()
        self.path_changed = Callbacks()
        self.clean_changed = Callbacks()
        self.current_changed = Callbacks()
        self.notice = Callbacks()
        self._session = session
        self._path = path or ""
        self._cache = ResultCache()
        self._results: dict[str, CandidateResult] = {}
        self._styles: dict[str, int] = {}
        self._current = ""
        self._forced_dirty = False
        self.history: History[Session] = History(self._apply)
        self.history.clean_changed.connect(lambda _clean: self.clean_changed.emit(self.is_clean))
        self._assign_styles()
        self._pick_current()
        self._analyse()

    # ------------------------------------------------------------------ reading
    @property
    def session(self) -> Session:
        return self._session

    @property
    def path(self) -> str:
        return self._path

    @property
    def results(self) -> Mapping[str, CandidateResult]:
        """Results of the enabled candidates, by candidate id, in session order."""
        return self._results

    @property
    def current_id(self) -> str:
        return self._current

    @property
    def is_clean(self) -> bool:
        return self.history.is_clean and not self._forced_dirty

    def style_index(self, candidate_id: str) -> int:
        """The number of a candidate's drawing style (stable while it exists; 0 for an unknown id)."""
        return self._styles.get(candidate_id, 0)

    def result(self, candidate_id: str) -> CandidateResult | None:
        return self._results.get(candidate_id)

    # ------------------------------------------------------------------ whole documents
    def replace_document(self, session: Session, path: str | None, *, clean: bool = True) -> None:
        """Start over with another document (New, Open, a restored recovery copy): history cleared."""
        was_clean = self.is_clean
        self.history.clear()
        self.history.set_clean()
        self._forced_dirty = not clean
        self._cache = ResultCache()
        self._styles = {}
        self._current = ""
        self._set_path(path or "")
        self._apply(session)
        if was_clean != self.is_clean:
            self.clean_changed.emit(self.is_clean)

    def mark_saved(self, path: str) -> None:
        """The document was written to ``path``: it is now clean."""
        self._set_path(path)
        was_clean = self.is_clean
        self._forced_dirty = False
        self.history.set_clean()
        if not was_clean:
            self.clean_changed.emit(True)

    # ------------------------------------------------------------------ edits (undoable)
    def edit(self, after: Session, text: str) -> None:
        """Make ``after`` the document, undoably. A no-op when nothing changed."""
        if after == self._session:
            return
        self.history.push(Edit(self._session, after, text))

    def undo(self) -> None:
        self.history.undo()

    def redo(self) -> None:
        self.history.redo()

    def set_extra(self, key: str, value, text: str) -> None:
        """Set one section of ``session.extras`` (a plain JSON value), undoably; None removes it."""
        extras = dict(self._session.extras)
        if value is None:
            extras.pop(key, None)
        else:
            extras[key] = value
        self.edit(replace(self._session, extras=extras), text)

    def set_part(self, candidate_id: str, ref: str, value: float) -> None:
        """Set one part (SI units); snapped to the candidate's series when it has one."""
        entry = self._session.candidate(candidate_id)
        kind = entry_kind(entry, ref)
        typed = value
        if entry.snap and value > 0:
            value = nearest(value, entry.snap)
        values = dict(entry.values)
        values[ref] = value
        new = replace(entry, values=values)  # validated by CandidateEntry
        unit = part_unit(kind)
        snapped = value != typed and abs(value - typed) > 1e-9 * abs(typed)
        self.edit(self._session.with_candidate(new), f"{ref} of {candidate_id} = {format_value(value, unit)}")
        if snapped:
            # A typed value is never changed without a word.
            self.notice.emit(
                f"{ref} of {candidate_id}: {format_value(typed, unit)} is not in {entry.snap}; snapped to "
                f"{format_value(value, unit)} (choose exact values or a finer series to keep it)"
            )

    def set_fixed(self, candidate_id: str, ref: str, fixed: bool) -> None:
        """Keep (or free) a part when the candidate is redesigned."""
        entry = self._session.candidate(candidate_id)
        refs = [r for r in entry.fixed if r != ref] + ([ref] if fixed else [])
        new = replace(entry, fixed=tuple(refs))
        self.edit(self._session.with_candidate(new), f"{'keep' if fixed else 'free'} {ref} of {candidate_id}")

    def set_enabled(self, candidate_id: str, enabled: bool) -> None:
        entry = self._session.candidate(candidate_id)
        self.edit(self._session.with_candidate(replace(entry, enabled=enabled)), f"switch {candidate_id} {'on' if enabled else 'off'}")

    def set_pinned(self, candidate_id: str, pinned: bool) -> None:
        entry = self._session.candidate(candidate_id)
        self.edit(self._session.with_candidate(replace(entry, pinned=pinned)), f"{'pin' if pinned else 'unpin'} {candidate_id}")

    def set_snap(self, candidate_id: str, series: str | None) -> None:
        """Move a candidate to ``series`` (None: keep exact values from now on).

        To a series, the candidate is redesigned for the target in that series (its kept parts
        stay): rounding the present values to another series moves f0, Q and the gain. When no
        design is possible the present values are rounded instead, and a notice says so and
        suggests Redesign.
        """
        entry = self._session.candidate(candidate_id)
        if not series:
            new = replace(entry, snap=None)
            self.edit(self._session.with_candidate(new), f"{candidate_id}: exact values")
            return
        designed, reason = self._designed(replace(entry, snap=series), self._session)
        if designed is not None:
            self.edit(self._session.with_candidate(designed), f"{candidate_id}: redesigned in {series}")
            return
        values = {r: (nearest(v, series) if v > 0 else v) for r, v in entry.values.items()}
        new = replace(entry, snap=series, values=values)
        self.edit(self._session.with_candidate(new), f"{candidate_id}: snap to {series}")
        self.notice.emit(f"{candidate_id}: present values rounded to {series} ({reason}); the figures may move — try Redesign")

    def _room_for_another(self) -> bool:
        """False, with a notice, when the session holds as many candidates as it can."""
        if len(self._session.candidates) < MAX_CANDIDATES:
            return True
        self.notice.emit(f"a session holds at most {MAX_CANDIDATES} candidates: remove one first")
        return False

    def duplicate(self, candidate_id: str) -> str | None:
        """Add a copy of a candidate right after it (to try a variant); returns the new id, or None
        (with a notice) when the session is full."""
        if not self._room_for_another():
            return None
        entry = self._session.candidate(candidate_id)
        new_id = self._session.new_candidate_id(entry.topology_id)
        copy = replace(entry, id=new_id, pinned=False)
        cands = list(self._session.candidates)
        cands.insert(cands.index(entry) + 1, copy)
        self.edit(replace(self._session, candidates=tuple(cands)), f"duplicate {candidate_id} as {new_id}")
        self.set_current(new_id)
        return new_id

    def remove(self, candidate_id: str) -> None:
        self.edit(self._session.without_candidate(candidate_id), f"remove {candidate_id}")

    def add_candidate(self, topology_id: str) -> str | None:
        """Add a candidate of a circuit, designed for the target where the core can; returns its id,
        or None (with a notice) when the session is full."""
        from bandsmith.circuits import get_topology

        if not self._room_for_another():
            return None
        topo = get_topology(topology_id)
        new_id = self._session.new_candidate_id(topology_id)
        series = self._session.target.series
        snap = None if series == "exact" else series
        entry = CandidateEntry(id=new_id, topology_id=topology_id, values=dict(topo.example), snap=snap)
        designed, reason = self._designed(entry, self._session)
        if designed is not None:
            entry = designed
        elif reason:
            self.notice.emit(f"{new_id}: {reason}; the circuit's example values are used")
        self.edit(self._session.with_candidate(entry), f"add {new_id}")
        self.set_current(new_id)
        return new_id

    def set_target(self, **changes) -> None:
        """Change the target (f0_hz, q, gain, vin_v, series); unpinned candidates are redesigned.

        A candidate that is pinned keeps its parts; one the core cannot design for the new target
        keeps its parts too, and a notice says why.
        """
        old = self._session
        target = replace(old.target, **changes)
        if target == old.target:
            return
        s = replace(old, target=target)
        redesign = any(k in changes for k in ("f0_hz", "q", "gain", "series"))
        if redesign:
            s = self._redesigned(s, [c.id for c in s.candidates if not c.pinned], series_changed="series" in changes)
        what = ", ".join(f"{k}" for k in changes)
        self.edit(s, f"target {what}")

    def set_opamp(self, **changes) -> None:
        """Change the op-amp (gbw_hz — None for ideal — and a0)."""
        opamp = replace(self._session.opamp, **changes)
        self.edit(replace(self._session, opamp=opamp), "op-amp " + ", ".join(changes))

    def redesign(self, candidate_id: str) -> None:
        """Choose new parts for one candidate from the target (its kept parts stay)."""
        s = self._redesigned(self._session, [candidate_id], series_changed=False)
        self.edit(s, f"redesign {candidate_id}")

    def set_current(self, candidate_id: str) -> None:
        if candidate_id != self._current:
            self._current = candidate_id
            self.current_changed.emit(candidate_id)

    # ------------------------------------------------------------------ internals
    def _designed(self, entry: CandidateEntry, session: Session) -> tuple[CandidateEntry | None, str | None]:
        from bandsmith.design.designer import design

        try:
            fixed = {r: entry.values[r] for r in entry.fixed}
            res = design(
                entry.topology_id,
                session.target.spec,
                series=entry.snap or "exact",
                fixed=fixed or None,
                conditions=session.conditions_for(entry),
            )
        except InputError as exc:
            return None, str(exc)
        if not res.feasible:
            return None, res.reason or "no design for this target"
        values = dict(entry.values)
        values.update({k: float(v) for k, v in res.chosen.items()})
        designed = replace(entry, values=values)
        # The design analysed exactly these parts under these conditions: keep that work.
        if res.analysis is not None and res.analysis.netlist.values() == Candidate(designed.topology_id, values).netlist.values():
            self._cache.put_analysis(session, designed, res.analysis)
        return designed, None

    def _redesigned(self, s: Session, ids: list[str], *, series_changed: bool) -> Session:
        problems = []
        for cid in ids:
            entry = s.candidate(cid)
            if series_changed:
                entry = replace(entry, snap=None if s.target.series == "exact" else s.target.series)
            designed, reason = self._designed(entry, s)
            if designed is None:
                problems.append(f"{cid}: {reason}")
                designed = entry
            s = s.with_candidate(designed)
        if problems:
            self.notice.emit("kept the parts of " + "; ".join(problems))
        return s

    def _apply(self, session: Session) -> None:
        """Make ``session`` the document (called by the history and by replace_document)."""
        self._session = session
        self._assign_styles()
        self._pick_current()
        self._analyse()
        self.session_changed.emit(session)
        self.analyses_changed.emit()

    def _analyse(self) -> None:
        s = self._session
        self._results = {c.id: self._cache.get(s, c) for c in s.candidates if c.enabled}

    def _assign_styles(self) -> None:
        ids = [c.id for c in self._session.candidates]
        self._styles = {k: v for k, v in self._styles.items() if k in ids}
        for cid in ids:
            if cid not in self._styles:
                used = set(self._styles.values())
                self._styles[cid] = next(i for i in range(len(ids) + 1) if i not in used)

    def _pick_current(self) -> None:
        ids = [c.id for c in self._session.candidates]
        if self._current not in ids:
            active = [c.id for c in self._session.candidates if c.enabled]
            self._current = (active or ids or [""])[0]
            self.current_changed.emit(self._current)

    def _set_path(self, path: str) -> None:
        if path != self._path:
            self._path = path
            self.path_changed.emit(path)


def entry_kind(entry: CandidateEntry, ref: str) -> str:
    """The kind (R, C, L) of a part of a candidate."""
    from bandsmith.circuits import get_topology

    return get_topology(entry.topology_id).component(ref).kind
