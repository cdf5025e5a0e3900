"""The work behind the stage-chain pane: jobs off the GUI thread, the measured chains it keeps,
and the undoable edits of the session's chains.

Designing (:func:`bandsmith.chain.cascade.design_cascade`), changing a stage
(:func:`bandsmith.chain.cascade.with_stage_circuit`) and measuring a saved chain
(:func:`bandsmith.chain.cascade.chain_cascade`) run as :class:`~bandsmith.app.window.background.BackgroundJob` s,
one at a time (a new one cancels the one running). A measured chain is kept by its saved form and
its conditions, so showing it again costs nothing. Every change of the session goes through the
state's undoable :meth:`~bandsmith.app.window.state.WorkbenchState.set_extra`.
"""

from __future__ import annotations

import json
from typing import Callable

from PySide6 import QtCore

from bandsmith.chain.cascade import Cascade, Chain
from bandsmith.design.candidate import Conditions

from bandsmith.app.document.extras_chains import EXTRAS_KEY, chain_conditions, saved_chains
from bandsmith.app.window.background import BackgroundJob

__all__ = ["ChainController"]

_CACHE_SIZE = 48


def _chain_key(chain: Chain) -> str:
    return json.dumps(chain.to_json(), sort_keys=True)


class ChainController(QtCore.QObject):
    """Jobs, the cache of measured chains and the session's chains, for one workbench state.

    Signals
    -------
    busy_changed(str)
        A job started (its title and "…") or ended ("").
    """

    busy_changed = QtCore.Signal(str)

    def __init__(self, state, run_job: Callable[[BackgroundJob], object] | None = None, parent: QtCore.QObject | None = None):
        super().__init__(parent)
        self.state = state
        self._run_job = run_job or (lambda job: job.start())
        self._job: BackgroundJob | None = None
        self._cache: dict = {}

    # ------------------------------------------------------------------ the session's chains
    def chains(self) -> list[Chain]:
        return saved_chains(self.state.session)[0]

    def conditions(self) -> Conditions:
        return chain_conditions(self.state.session)

    def new_id(self) -> str:
        """The first free ``chain-N`` (ids of unreadable entries count as taken)."""
        used = {c.id for c in self.chains()}
        raw = self.state.session.extras.get(EXTRAS_KEY, [])
        if isinstance(raw, list):
            used |= {o.get("id") for o in raw if isinstance(o, dict)}
        k = 1
        while f"chain-{k}" in used:
            k += 1
        return f"chain-{k}"

    def keep(self, result: Cascade, cid: str, conditions: Conditions, text: str) -> None:
        """Put a built chain into the session under ``cid`` (replacing one of that id), undoably."""
        old = next((c for c in self.chains() if c.id == cid), None)
        chain = result.chain(cid, notes=old.notes if old is not None else "")
        self.remember(chain, conditions, result)
        raw = self.state.session.extras.get(EXTRAS_KEY, [])
        raw = list(raw) if isinstance(raw, list) else []
        for i, obj in enumerate(raw):
            if isinstance(obj, dict) and obj.get("id") == cid:
                raw[i] = chain.to_json()
                break
        else:
            raw.append(chain.to_json())
        self.state.set_extra(EXTRAS_KEY, raw, text)

    def remove(self, cid: str) -> None:
        """Take chain ``cid`` out of the session (undoable)."""
        raw = self.state.session.extras.get(EXTRAS_KEY, [])
        raw = [o for o in raw if not (isinstance(o, dict) and o.get("id") == cid)] if isinstance(raw, list) else []
        self.state.set_extra(EXTRAS_KEY, raw or None, f"remove {cid}")

    # ------------------------------------------------------------------ measured chains
    def remember(self, chain: Chain, conditions: Conditions, result: Cascade) -> None:
        if len(self._cache) > _CACHE_SIZE:
            self._cache.pop(next(iter(self._cache)))
        self._cache[(_chain_key(chain), conditions)] = result

    def cached(self, chain: Chain, conditions: Conditions) -> Cascade | None:
        return self._cache.get((_chain_key(chain), conditions))

    # ------------------------------------------------------------------ jobs
    @property
    def busy(self) -> bool:
        """True while a design, a stage change or a measurement runs."""
        return self._job is not None

    def start(self, title: str, work: Callable[[], object], done: Callable[[object], None], failed: Callable[[str], None]) -> None:
        """Run ``work()`` off the GUI thread, then ``done(result)`` or ``failed(text)`` (a job
        started later wins: the earlier one is cancelled and its outcome dropped)."""
        if self._job is not None:
            self._job.cancel()
        job = BackgroundJob(lambda _progress, _cancelled: work(), title, self)
        self._job = job
        self.busy_changed.emit(title + "…")

        def on_finished(result, job=job):
            if job is not self._job:
                job.deleteLater()
                return
            self._end_job()
            done(result)

        def on_failed(text, job=job):
            if job is not self._job:
                job.deleteLater()
                return
            self._end_job()
            failed(text)

        def on_cancelled(job=job):
            if job is self._job:
                self._end_job()
            else:
                job.deleteLater()

        job.finished.connect(on_finished)
        job.failed.connect(on_failed)
        job.cancelled.connect(on_cancelled)
        self._run_job(job)

    def _end_job(self) -> None:
        if self._job is not None:
            self._job.deleteLater()
        self._job = None
        self.busy_changed.emit("")
