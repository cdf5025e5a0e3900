"""The "Stage chain" pane: a higher-order band-pass built as a chain of second-order stages.

Layout: on the left, the request for a new chain (response family, order, the band as centre and
bandwidth or as its edges, ripple for Chebyshev, centre gain, circuit, series) with the Build
button, and under it what the shown chain achieved, its warnings and, for a chain that cannot be
built, the reasons in plain words. On the right, three plots sharing one frequency axis — the
whole chain against the ideal response of its family, the deviation between them, and every
stage's own response beneath — then the stages (circuit, target, parts, peak so far, GBW need;
each stage's circuit can be changed in place) and the details of the selected stage.

Chains live in the session (``extras["chains"]``, as :mod:`bandsmith.chain.cascade` defines them) and every
change goes through the state's undoable :meth:`~bandsmith.app.window.state.WorkbenchState.set_extra`.
A saved chain is measured from its saved parts (:func:`bandsmith.chain.cascade.chain_cascade`); designing
(:func:`bandsmith.chain.cascade.design_cascade`, up to a few tenths of a second), changing a stage
(:func:`bandsmith.chain.cascade.with_stage_circuit`) and measuring run off the GUI thread as
:class:`~bandsmith.app.window.background.BackgroundJob` s. A chain that cannot be built is shown with its
reasons but not kept; changing one of its stages to a circuit that can build it keeps it.

:func:`install` adds the pane to the window. The pane only puts together its parts: the request
form (:mod:`~bandsmith.app.window.panes.chain_form`), the jobs, cache and session edits
(:mod:`~bandsmith.app.window.panes.chain_controller`) and what is shown
(:mod:`~bandsmith.app.window.panes.chain_view`, with :class:`~bandsmith.app.plots.chain_plots.ChainPlots`).
"""

from __future__ import annotations

import math
from html import escape
from typing import Callable

from PySide6 import QtCore, QtWidgets

from bandsmith.chain.cascade import AUTO, Cascade, Chain, chain_cascade, design_cascade, with_stage_circuit
from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value
from bandsmith.design.candidate import Conditions
from bandsmith.files.session import Session

from bandsmith.app.document.extras_chains import EXTRAS_KEY, chain_conditions, saved_chains
from bandsmith.app.plots.chain_text import response_title
from bandsmith.app.window.panes.shown_only import RecomputeWhenShown
from bandsmith.app.window.background import BackgroundJob
from bandsmith.app.window.panes.chain_controller import ChainController
from bandsmith.app.window.panes.chain_form import ChainForm
from bandsmith.app.window.panes.chain_view import ChainView, first_clause, summary_html
from bandsmith.app.window.theme import BAD, MUTED, section_title, selectable_label

__all__ = ["EXTRAS_KEY", "ChainPane", "chain_conditions", "saved_chains", "install"]

_NETLIST_FILTER = "SPICE netlist (*.cir *.sp *.net)"
_CSV_FILTER = "CSV table (*.csv)"
_FORM_FIELDS = (
    "response_combo", "order_spin", "ripple_field", "ripple_label", "band_mode", "band_a_label", "band_a",
    "band_b_label", "band_b", "edge_note", "gain_field", "circuit_combo", "series_combo", "btn_build", "form_error",
)


class ChainPane(RecomputeWhenShown, QtWidgets.QWidget):
    """The stage-chain pane over a workbench state.

    Parameters
    ----------
    state : WorkbenchState
        The session; chains are read from and written to its extras.
    run_job : callable, optional
        ``run_job(job)`` starts a :class:`BackgroundJob` (the window's, with its status bar);
        by default the job is simply started.
    prompter : Prompter, optional
        File dialogs and messages for the exports.

    Signals
    -------
    shown_changed()
        The shown chain (or attempt) was drawn anew.
    """

    shown_changed = QtCore.Signal()

    def __init__(self, state, *, run_job: Callable[[BackgroundJob], object] | None = None, prompter=None, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("chainPane")
        self.state = state
        self.prompter = prompter
        self.controller = ChainController(state, run_job, self)
        self.controller.busy_changed.connect(self._on_busy_changed)
        self._shown: Cascade | None = None
        self._shown_id: str | None = None  # the chain the shown result is (or would be) saved as
        self._shown_saved = False
        self._want_id: str | None = None
        self._form_for: str | None = None  # the chain whose request the form shows
        self._mask: tuple | None = None  # (f_low, f_high, order, mask keys) of the last chain built to a mask
        self._problems: list[str] = []  # chains of the session that cannot be read
        self._filling = False

        outer = QtWidgets.QVBoxLayout(self)
        outer.setContentsMargins(6, 6, 6, 6)
        outer.setSpacing(4)
        outer.addLayout(self._build_header())
        split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Horizontal, self)
        split.setChildrenCollapsible(False)
        split.addWidget(self._build_left())
        split.addWidget(self._build_right())
        split.setStretchFactor(0, 0)
        split.setStretchFactor(1, 1)
        split.setSizes([330, 800])
        self.splitter = split
        outer.addWidget(split, 1)

        state.session_changed.connect(self._on_session_signal)
        self.form.load_defaults(state.session)
        self._follow_target(state.session)  # its saved chains are filled when the pane is first shown

    # ------------------------------------------------------------------ building
    def _build_header(self) -> QtWidgets.QHBoxLayout:
        bar = QtWidgets.QHBoxLayout()
        label = section_title(self, "Chain")
        bar.addWidget(label)
        self.chain_combo = QtWidgets.QComboBox(self)
        self.chain_combo.setObjectName("chainChoice")
        self.chain_combo.setToolTip("The chains kept in this session; pick one to see it")
        self.chain_combo.setMinimumContentsLength(44)
        self.chain_combo.setSizeAdjustPolicy(QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        self.chain_combo.currentIndexChanged.connect(self._on_chain_chosen)
        bar.addWidget(self.chain_combo)
        self.btn_remove = QtWidgets.QPushButton("Remove chain", self)
        self.btn_remove.setObjectName("removeChain")
        self.btn_remove.setToolTip("Take the shown chain out of the session (undo brings it back)")
        self.btn_remove.clicked.connect(self.remove_shown)
        bar.addWidget(self.btn_remove)
        bar.addSpacing(12)
        self.btn_netlist = QtWidgets.QPushButton("Export netlist…", self)
        self.btn_netlist.setObjectName("exportChainNetlist")
        self.btn_netlist.setToolTip("Write a SPICE netlist of the whole chain: the stages in series, one op-amp model per stage")
        self.btn_netlist.clicked.connect(lambda: self.export_dialog("netlist"))
        self.btn_parts = QtWidgets.QPushButton("Export parts list…", self)
        self.btn_parts.setObjectName("exportChainParts")
        self.btn_parts.setToolTip("Write every part of every stage as a CSV table")
        self.btn_parts.clicked.connect(lambda: self.export_dialog("parts"))
        bar.addWidget(self.btn_netlist)
        bar.addWidget(self.btn_parts)
        bar.addStretch(1)
        self.busy_label = QtWidgets.QLabel(self)
        self.busy_label.setObjectName("chainBusy")
        self.busy_label.setStyleSheet(f"color: {MUTED};")
        bar.addWidget(self.busy_label)
        return bar

    def _build_left(self) -> QtWidgets.QWidget:
        scroll = QtWidgets.QScrollArea(self)
        scroll.setWidgetResizable(True)
        scroll.setFrameShape(QtWidgets.QFrame.Shape.NoFrame)
        scroll.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        inner = QtWidgets.QWidget(scroll)
        lay = QtWidgets.QVBoxLayout(inner)
        lay.setContentsMargins(0, 0, 6, 0)
        lay.setSpacing(6)

        self.form = ChainForm(inner)
        self.form.btn_build.clicked.connect(self.build)
        for name in _FORM_FIELDS:  # the form's widgets, reachable from the pane as before
            setattr(self, name, getattr(self.form, name))
        lay.addWidget(self.form)

        self.summary = selectable_label(inner, "chainSummary", rich=True)
        self.summary.setAlignment(QtCore.Qt.AlignmentFlag.AlignTop | QtCore.Qt.AlignmentFlag.AlignLeft)
        lay.addWidget(self.summary)
        self.messages = selectable_label(inner, "chainMessages", rich=True)
        lay.addWidget(self.messages)
        lay.addStretch(1)
        scroll.setWidget(inner)
        # Never narrower than the form: the scroll area does not scroll sideways, so a narrower
        # view would cut the fields and the wrapped text at its right edge.
        bar = scroll.verticalScrollBar().sizeHint().width()
        scroll.setMinimumWidth(inner.minimumSizeHint().width() + bar + 4)
        self.left_scroll = scroll
        return scroll

    def _build_right(self) -> QtWidgets.QWidget:
        self.view = ChainView(self)
        self.view.stage_circuit_chosen.connect(self.set_stage_circuit)
        self.right_splitter = self.view
        self.plots, self.stage_table, self.detail = self.view.plots, self.view.stage_table, self.view.detail
        return self.view

    def request(self):
        """The settings the form asks for (InputError naming the field when something is off)."""
        return self.form.request()

    # ------------------------------------------------------------------ reading
    @property
    def busy(self) -> bool:
        """True while a design, a stage change or a measurement runs."""
        return self.controller.busy

    @property
    def shown(self) -> Cascade | None:
        """The chain (or the attempt that could not be built) on screen."""
        return self._shown

    @property
    def shown_id(self) -> str | None:
        return self._shown_id

    def chains(self) -> list[Chain]:
        return self.controller.chains()

    def shown_chain(self) -> Chain | None:
        """The saved chain on screen (None for an attempt that is not kept)."""
        if not self._shown_saved:
            return None
        return next((c for c in self.chains() if c.id == self._shown_id), None)

    # ------------------------------------------------------------------ jobs
    def _start(self, title: str, work: Callable[[], object], done: Callable[[object], None]) -> None:
        self.controller.start(title, work, done, lambda text: self._on_job_failed(title, text))

    def _on_job_failed(self, title: str, text: str) -> None:
        self.messages.setText(f"<span style='color:{BAD}'>✗ {escape(title)} failed: {escape(text)}</span>")
        self.shown_changed.emit()

    def _on_busy_changed(self, text: str) -> None:
        self.busy_label.setText(text)
        on = not text
        self.btn_build.setEnabled(on)
        self.view.set_editable(on and self._shown is not None)

    # ------------------------------------------------------------------ user actions
    def build(self) -> None:
        """Design a new chain from the form, off the GUI thread; a buildable one is kept in the session."""
        try:
            settings = self.form.request()
            reject, auto = self.form.mask_request()
        except InputError as exc:
            self.form_error.setText(str(exc))
            self.form_error.show()
            return
        self.form_error.hide()
        conditions = self.controller.conditions()
        if reject:
            from bandsmith.chain.mask_design import design_to_mask

            def done(out) -> None:
                # The mask is kept on the GUI thread, with the chain it was checked on.
                result, keys = out
                self._mask = (result.settings.f_low_hz, result.settings.f_high_hz, result.settings.order, keys)
                self._on_built(result, conditions)

            title = f"Designing a {response_title(settings)} chain to the mask"
            self._start(title, lambda: design_to_mask(settings, reject, conditions=conditions, auto=auto), done)
            return
        self._mask = None
        title = f"Designing a {response_title(settings)} chain of {settings.order} stage{'s' if settings.order != 1 else ''}"
        self._start(title, lambda: design_cascade(settings, conditions=conditions), lambda r: self._on_built(r, conditions))

    def _on_built(self, result: Cascade, conditions: Conditions) -> None:
        cid = self.controller.new_id()
        if not result.feasible:
            self._shown, self._shown_id, self._shown_saved = result, cid, False
            self._on_session_changed(self.state.session)
            self.state.notice.emit(f"The chain cannot be built, so it was not kept: {first_clause(result.reason)}")
            return
        self._keep(result, cid, conditions, f"build {cid} ({response_title(result.settings)}, {result.settings.order} stages)")

    def _keep(self, result: Cascade, cid: str, conditions: Conditions, text: str) -> None:
        """Show a built chain and keep it in the session under ``cid``, undoably."""
        self._want_id = cid
        self._shown, self._shown_id, self._shown_saved = result, cid, True
        self.controller.keep(result, cid, conditions, text)
        self._want_id = None

    def set_stage_circuit(self, index: int, circuit: str) -> None:
        """Rebuild stage ``index`` (from 1) of the shown chain on ``circuit`` (``auto`` or an id)."""
        result, cid, saved = self._shown, self._shown_id, self._shown_saved
        if result is None:
            return
        conditions = result.conditions
        self._start(
            f"Rebuilding stage {index} on {circuit}",
            lambda: with_stage_circuit(result, index, circuit),
            lambda r: self._on_stage_changed(r, cid, saved, index, circuit, conditions),
        )

    def _on_stage_changed(self, result: Cascade, cid: str, saved: bool, index: int, circuit: str, conditions: Conditions) -> None:
        st = result.stages[index - 1]
        if not st.feasible:
            self.state.notice.emit(f"Stage {index} cannot be built on {circuit}: {first_clause(st.reason)}; the chain keeps its stage")
            self._display(self._shown, self._shown_id, saved=self._shown_saved)  # puts the old circuit back in the table
            self.messages.setText(
                f"<span style='color:{BAD}'>✗ Stage {index} cannot be built on {escape(circuit)}:</span> {escape(st.reason or '')}. "
                "The chain keeps the stage it had."
            )
            return
        if not result.feasible:  # this stage is fine now, others still are not
            self._shown, self._shown_id, self._shown_saved = result, cid, False
            self._on_session_changed(self.state.session)
            return
        what = f"{cid} stage {index}: {st.circuit}" + (" (auto)" if circuit == AUTO else "")
        self._keep(result, cid, conditions, what)

    def remove_shown(self) -> None:
        """Take the shown chain out of the session (undoable)."""
        if not self._shown_saved or self._shown_id is None:
            if self._shown is not None:  # an attempt that was never kept: just forget it
                self._shown, self._shown_id = None, None
                self._on_session_changed(self.state.session)
            return
        self.controller.remove(self._shown_id)

    # ------------------------------------------------------------------ exports
    def export_text(self, what: str) -> str:
        """The netlist or parts list of the shown saved chain (InputError when there is none)."""
        from bandsmith.chain.chain_exports import chain_parts_csv, chain_spice_netlist

        chain = self.shown_chain()
        if chain is None:
            raise InputError("chain", "there is no kept chain to export; build one first")
        o = self.state.session.opamp
        if what == "netlist":
            return chain_spice_netlist(chain, gbw_hz=o.gbw_hz, a0=o.a0)
        return chain_parts_csv(chain, gbw_hz=o.gbw_hz)

    def export_to(self, what: str, path: str) -> None:
        from bandsmith.files.exports import write_atomic

        write_atomic(path, self.export_text(what))
        self.state.notice.emit(f"Wrote {path}")

    def export_dialog(self, what: str) -> None:
        chain = self.shown_chain()
        if chain is None or self.prompter is None:
            return
        from pathlib import Path

        stem = Path(self.state.path).name.split(".")[0] if self.state.path else "bandsmith"
        suffix, filt = (".cir", _NETLIST_FILTER) if what == "netlist" else ("-parts.csv", _CSV_FILTER)
        path = self.prompter.ask_save_path(self, str(Path.home() / f"{stem}-{chain.id}{suffix}"), filt)
        if not path:
            return
        try:
            self.export_to(what, path)
        except InputError as exc:
            self.prompter.error(self, "Export failed", str(exc))

    # ------------------------------------------------------------------ following the session
    def _on_session_signal(self, session: Session) -> None:
        """A visible pane refills at once (the form follows the target with it); a hidden one only
        follows the target, and refills its chains when it is next shown, so a part edit elsewhere
        costs it nothing."""
        if not self.isVisible():
            self._follow_target(session)
        self.mark_dirty(now=True)

    def refresh(self) -> None:
        self._dirty = False
        self._on_session_changed(self.state.session)

    def _follow_target(self, session: Session) -> None:
        """The "New chain" form follows the target: a new f0, Q, gain or series is put in it."""
        t = session.target
        target = (t.f0_hz, t.q, t.gain, t.series)
        if getattr(self, "_form_target", target) != target:
            self.form.follow_target(session)
        self._form_target = target

    def _on_session_changed(self, session: Session) -> None:
        self._follow_target(session)
        chains, problems = saved_chains(session)
        ids = [c.id for c in chains]
        want = self._want_id or (self._shown_id if self._shown is not None else None)
        attempt = self._shown is not None and not self._shown_saved and self._shown_id not in ids
        self._filling = True
        try:
            self.chain_combo.clear()
            for c in chains:
                s = c.settings
                self.chain_combo.addItem(
                    f"{c.id}: {response_title(s)}, {s.order} stage{'s' if s.order != 1 else ''}, "
                    f"{format_value(s.f_low_hz, 'Hz', digits=3)} – {format_value(s.f_high_hz, 'Hz', digits=3)}",
                    c.id,
                )
            if attempt:
                self.chain_combo.addItem(f"{self._shown_id}: not kept, cannot be built", self._shown_id)
            if not chains and not attempt:
                self.chain_combo.addItem("no chain yet: set the band on the left and build one", None)
            index = self.chain_combo.findData(want) if want else -1
            if index < 0:
                index = max(0, len(chains) - 1)
            self.chain_combo.setCurrentIndex(index)
        finally:
            self._filling = False
        self._problems = problems
        self._show_selected()

    def _on_chain_chosen(self, _index: int) -> None:
        if not self._filling:
            self._show_selected()

    def _show_selected(self) -> None:
        cid = self.chain_combo.currentData()
        if cid is None:
            self._display(None, None, saved=False)
            return
        chain = next((c for c in self.chains() if c.id == cid), None)
        if chain is None:  # the attempt that is not kept
            if self._shown is not None and self._shown_id == cid:
                self._display(self._shown, cid, saved=False)
            return
        conditions = self.controller.conditions()
        cached = self.controller.cached(chain, conditions)
        if cached is not None:
            self._display(cached, cid, saved=True)
            return
        self._shown_id, self._shown_saved = cid, True
        self._start(
            f"Measuring {cid}",
            lambda: chain_cascade(chain, conditions=conditions),
            lambda r: self._on_measured(r, chain, conditions),
        )

    def _on_measured(self, result: Cascade, chain: Chain, conditions: Conditions) -> None:
        self.controller.remember(chain, conditions, result)
        if self.chain_combo.currentData() == chain.id:
            self._display(result, chain.id, saved=True)

    # ------------------------------------------------------------------ showing
    def _display(self, result: Cascade | None, cid: str | None, *, saved: bool) -> None:
        self._shown, self._shown_id, self._shown_saved = result, cid, saved and result is not None
        self.view.show_cascade(result, editable=not self.controller.busy)
        mask = self._mask
        if result is not None and mask is not None and mask[:3] == (result.settings.f_low_hz, result.settings.f_high_hz, result.settings.order):
            self.view.plots.show_mask(mask[3]["mask"], 20.0 * math.log10(result.settings.gain))
        summary, messages = summary_html(result, cid, saved, self._problems)
        self.summary.setText(summary)
        self.messages.setText(messages)
        kept = self.shown_chain() is not None
        self.btn_remove.setEnabled(result is not None)
        self.btn_remove.setText("Remove chain" if kept or result is None else "Forget attempt")
        self.btn_netlist.setEnabled(kept)
        self.btn_parts.setEnabled(kept)
        # The form shows the request of the chain picked; measuring the same chain again (after
        # an op-amp change, say) leaves what the user is typing alone.
        if result is not None and cid != self._form_for:
            self.form.set_settings(result.settings)
        self._form_for = cid if result is not None else self._form_for
        self.shown_changed.emit()

    def stage_combo(self, index: int) -> QtWidgets.QComboBox:
        """The circuit chooser of stage ``index`` (from 1)."""
        return self.view.stage_combo(index)


def install(window) -> ChainPane:
    """Add the stage-chain pane to a :class:`~bandsmith.app.window.main_window.WorkbenchWindow` as a tab."""
    pane = ChainPane(window.state, run_job=window.run_job, prompter=getattr(window, "prompter", None), parent=window)
    window.chain_pane = pane
    window.add_pane("Stage chain", pane)
    return pane
