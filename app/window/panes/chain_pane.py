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

:func:`install` adds the pane to the window. The plots are :class:`~bandsmith.app.window.widgets.chain_plots.ChainPlots`.
"""

from __future__ import annotations

import json
import math
from typing import Callable

from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.common.units import PART_UNITS
from bandsmith.chain.bandpass import band_from
from bandsmith.design.candidate import Conditions
from bandsmith.chain.cascade import (
    AUTO,
    Cascade,
    Chain,
    ChainSettings,
    chain_cascade,
    circuit_choices,
    design_cascade,
    with_stage_circuit,
)
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import SERIES_NAMES
from bandsmith.chain.prototypes import DEFAULT_RIPPLE_DB
from bandsmith.files.session import Session
from bandsmith.common.values import format_value, parse_positive

from bandsmith.app.window.background import BackgroundJob
from bandsmith.app.window.widgets.chain_plots import ChainPlots, response_title
from bandsmith.app.window.theme import BAD, GOOD, MUTED, WARN, candidate_style, error_label
from bandsmith.app.window.widgets.value_field import ValueField

__all__ = ["EXTRAS_KEY", "ChainPane", "chain_conditions", "saved_chains", "install"]

EXTRAS_KEY = "chains"
_NETLIST_FILTER = "SPICE netlist (*.cir *.sp *.net)"
_CSV_FILTER = "CSV table (*.csv)"


# --------------------------------------------------------------------------- helpers (no widgets)


def chain_conditions(session: Session) -> Conditions:
    """What a chain is analysed under: the session's op-amp, input level, load and tolerances."""
    return Conditions(
        gbw_hz=session.opamp.gbw_hz,
        a0=session.opamp.a0,
        vin_v=session.target.vin_v,
        rload_ohm=session.rload_ohm,
        tolerances=session.tolerances,
    )


def saved_chains(session: Session) -> tuple[list[Chain], list[str]]:
    """The usable chains of a session and, in words, any entry that could not be read."""
    raw = session.extras.get(EXTRAS_KEY, [])
    if not isinstance(raw, list):
        return [], [f"the session's {EXTRAS_KEY!r} section is not a list and was left alone"]
    chains, problems = [], []
    for i, obj in enumerate(raw):
        try:
            chains.append(Chain.from_json(obj))
        except InputError as exc:
            problems.append(f"chain {i + 1} of the session cannot be read ({exc}) and is left as it is")
    return chains, problems


def _chain_key(chain: Chain) -> str:
    return json.dumps(chain.to_json(), sort_keys=True)


def _signed(x, unit: str, decimals: int = 2) -> str:
    if x is None or not math.isfinite(x):
        return "—"
    if abs(x) < 0.5 * 10.0**-decimals:
        return f"{0.0:.{decimals}f} {unit}"
    return f"{x:+.{decimals}f} {unit}"


def _parts_text(topology_id: str, values) -> str:
    topo = get_topology(topology_id)
    out = []
    for c in topo.components:
        v = float(values[c.ref])
        if not c.required and v <= 0:
            continue
        out.append(f"{c.ref} {format_value(v, PART_UNITS[c.kind], digits=3)}".replace(" ", "\u00a0"))
    return ", ".join(out)  # no-break spaces: a long list wraps between parts, never inside one


def _first_clause(reason: str | None) -> str:
    """A stage's reason up to its parenthesised detail (the detail pane shows all of it)."""
    if not reason:
        return ""
    cut = reason.find(" (")
    return reason if cut < 0 else reason[:cut]


def _esc(text: str) -> str:
    from html import escape

    return escape(text)


# --------------------------------------------------------------------------- the pane


class ChainPane(QtWidgets.QWidget):
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
        self._run_job = run_job or (lambda job: job.start())
        self.prompter = prompter
        self._job: BackgroundJob | None = None
        self._cache: dict = {}
        self._shown: Cascade | None = None
        self._shown_id: str | None = None  # the chain the shown result is (or would be) saved as
        self._shown_saved = False
        self._want_id: str | None = None
        self._form_for: str | None = None  # the chain whose request the form shows
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

        state.session_changed.connect(self._on_session_changed)
        self._load_defaults(state.session)
        self._on_session_changed(state.session)

    # ------------------------------------------------------------------ building
    def _build_header(self) -> QtWidgets.QHBoxLayout:
        bar = QtWidgets.QHBoxLayout()
        label = QtWidgets.QLabel("Chain", self)
        label.setObjectName("sectionTitle")
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

        box = QtWidgets.QGroupBox("New chain", inner)
        box.setObjectName("chainRequest")
        form = QtWidgets.QFormLayout(box)
        form.setFieldGrowthPolicy(QtWidgets.QFormLayout.FieldGrowthPolicy.AllNonFixedFieldsGrow)
        form.setLabelAlignment(QtCore.Qt.AlignmentFlag.AlignRight)
        form.setVerticalSpacing(5)

        self.response_combo = QtWidgets.QComboBox(box)
        self.response_combo.setObjectName("chainResponse")
        for key, text in (("butterworth", "Butterworth (maximally flat)"), ("chebyshev", "Chebyshev (equal ripple)"), ("bessel", "Bessel (smooth step)")):
            self.response_combo.addItem(text, key)
        self.response_combo.setToolTip("The family of the ideal response the chain is built to")
        self.response_combo.currentIndexChanged.connect(self._on_response_changed)
        form.addRow("Response", self.response_combo)

        self.order_spin = QtWidgets.QSpinBox(box)
        self.order_spin.setObjectName("chainOrder")
        self.order_spin.setRange(1, 8)
        self.order_spin.setValue(4)
        self.order_spin.setSuffix(" stages")
        self.order_spin.setToolTip("Prototype order N, 1 to 8: the band-pass has N second-order stages (order 2N)")
        form.addRow("Order", self.order_spin)

        self.ripple_field = ValueField(
            "ripple", "dB", parse=lambda t: parse_positive(t, field="ripple"), fmt=lambda v: "" if v is None else f"{v:g} dB",
            tooltip="Chebyshev passband ripple in dB (0.1 to 6; 0.5 dB is usual)", parent=box,
        )
        self.ripple_label = QtWidgets.QLabel("Ripple", box)
        form.addRow(self.ripple_label, self.ripple_field)

        self.band_mode = QtWidgets.QComboBox(box)
        self.band_mode.setObjectName("chainBandMode")
        self.band_mode.addItem("centre and bandwidth", "centre")
        self.band_mode.addItem("band edges", "edges")
        self.band_mode.setToolTip("Give the band by its geometric centre and width, or by its two edges")
        self.band_mode.currentIndexChanged.connect(self._on_band_mode_changed)
        form.addRow("Band given by", self.band_mode)
        self.band_a_label = QtWidgets.QLabel("Centre f0", box)
        self.band_a = ValueField("band_a", "Hz", tooltip="Hz, in any notation: 10k, 10 kHz, 1e4", parent=box)
        form.addRow(self.band_a_label, self.band_a)
        self.band_b_label = QtWidgets.QLabel("Bandwidth", box)
        self.band_b = ValueField("band_b", "Hz", tooltip="Hz, in any notation: 2k, 2 kHz, 2e3", parent=box)
        form.addRow(self.band_b_label, self.band_b)
        self.edge_note = QtWidgets.QLabel(box)
        self.edge_note.setObjectName("edgeNote")
        self.edge_note.setWordWrap(True)
        self.edge_note.setStyleSheet(f"color: {MUTED}; font-size: 11px;")
        form.addRow("", self.edge_note)

        self.gain_field = ValueField(
            "chain_gain", "", parse=lambda t: parse_positive(t, field="gain"), fmt=lambda v: "" if v is None else f"{v:g}",
            tooltip="Gain magnitude (V/V) at the band's geometric centre √(f_low·f_high)", parent=box,
        )
        form.addRow("Centre gain (V/V)", self.gain_field)
        for fld in (self.ripple_field, self.band_a, self.band_b, self.gain_field):
            # The form's own values: a good entry is kept and shown in its usual notation.
            fld.committed.connect(lambda v, fld=fld: fld.set_value(v))

        self.circuit_combo = QtWidgets.QComboBox(box)
        self.circuit_combo.setObjectName("chainCircuit")
        self.circuit_combo.addItem("auto: least GBW, per stage", AUTO)
        for cid in circuit_choices()[1:]:
            self.circuit_combo.addItem(cid, cid)
            self.circuit_combo.setItemData(self.circuit_combo.count() - 1, get_topology(cid).title, QtCore.Qt.ItemDataRole.ToolTipRole)
        self.circuit_combo.setToolTip("The circuit every stage is built from, or auto: for each stage the one needing the least GBW with sane parts")
        form.addRow("Circuit", self.circuit_combo)

        self.series_combo = QtWidgets.QComboBox(box)
        self.series_combo.setObjectName("chainSeries")
        for name in SERIES_NAMES + ("exact",):
            self.series_combo.addItem(name, name)
        self.series_combo.setToolTip("The standard series the parts come from (IEC 60063), or exact values")
        form.addRow("Parts from", self.series_combo)

        self.btn_build = QtWidgets.QPushButton("Build chain", box)
        self.btn_build.setObjectName("buildChain")
        self.btn_build.setToolTip("Design every stage and keep the chain in the session (undo takes it away)")
        self.btn_build.clicked.connect(self.build)
        form.addRow("", self.btn_build)
        self.form_error = error_label(box)
        form.addRow(self.form_error)
        lay.addWidget(box)

        self.summary = QtWidgets.QLabel(inner)
        self.summary.setObjectName("chainSummary")
        self.summary.setWordWrap(True)
        self.summary.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.summary.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
        self.summary.setAlignment(QtCore.Qt.AlignmentFlag.AlignTop | QtCore.Qt.AlignmentFlag.AlignLeft)
        lay.addWidget(self.summary)
        self.messages = QtWidgets.QLabel(inner)
        self.messages.setObjectName("chainMessages")
        self.messages.setWordWrap(True)
        self.messages.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.messages.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
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
        split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Vertical, self)
        split.setChildrenCollapsible(False)
        self.plots = ChainPlots(split)
        split.addWidget(self.plots)
        bottom = QtWidgets.QWidget(split)
        bl = QtWidgets.QVBoxLayout(bottom)
        bl.setContentsMargins(0, 2, 0, 0)
        bl.setSpacing(2)
        t = QtWidgets.QLabel("Stages in signal order — pick a circuit to rebuild one stage; select a row for its details", bottom)
        t.setObjectName("sectionTitle")
        bl.addWidget(t)
        self.stage_table = QtWidgets.QTableWidget(0, 8, bottom)
        self.stage_table.setObjectName("chainStages")
        self.stage_table.setHorizontalHeaderLabels(["stage", "circuit", "f0", "Q", "gain", "peak so far", "needs GBW", "parts"])
        tips = {
            2: "The stage's own centre frequency (target)",
            3: "The stage's own Q (target)",
            4: "The stage's own peak gain (target, V/V)",
            5: "Peak over frequency of the response from the chain's input to this stage's output",
            6: "Gain-bandwidth this stage's op-amp needs to keep it within its tolerances",
        }
        for col, tip in tips.items():
            self.stage_table.horizontalHeaderItem(col).setToolTip(tip)
        self.stage_table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.stage_table.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectionBehavior.SelectRows)
        self.stage_table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.SingleSelection)
        self.stage_table.verticalHeader().hide()
        self.stage_table.verticalHeader().setDefaultSectionSize(26)
        self.stage_table.horizontalHeader().setStretchLastSection(True)
        self.stage_table.setWordWrap(True)
        self.stage_table.currentCellChanged.connect(lambda r, _c, _pr, _pc: self._show_stage_detail(r))
        bl.addWidget(self.stage_table, 3)
        self.detail = QtWidgets.QTextBrowser(bottom)
        self.detail.setObjectName("stageDetail")
        self.detail.setOpenLinks(False)
        self.detail.setMinimumHeight(80)
        bl.addWidget(self.detail, 2)
        split.addWidget(bottom)
        split.setStretchFactor(0, 3)
        split.setStretchFactor(1, 2)
        split.setSizes([430, 300])
        self.right_splitter = split
        return split

    # ------------------------------------------------------------------ the request form
    def _load_defaults(self, session: Session) -> None:
        t = session.target
        self._set_form(ChainSettings.from_request("butterworth", 4, f0_hz=t.f0_hz, bw_hz=t.f0_hz / t.q, gain=t.gain, series=t.series))

    def _set_form(self, s: ChainSettings) -> None:
        self._filling = True
        try:
            self.response_combo.setCurrentIndex(self.response_combo.findData(s.response))
            self.order_spin.setValue(s.order)
            self.ripple_field.set_value(s.ripple_db if s.ripple_db is not None else DEFAULT_RIPPLE_DB)
            self._band = (s.f_low_hz, s.f_high_hz)
            self._show_band()
            self.gain_field.set_value(s.gain)
            self.circuit_combo.setCurrentIndex(self.circuit_combo.findData(s.circuit))
            self.series_combo.setCurrentIndex(self.series_combo.findData(s.series))
        finally:
            self._filling = False
        self._on_response_changed()

    def _show_band(self) -> None:
        lo, hi = self._band
        if self.band_mode.currentData() == "edges":
            self.band_a_label.setText("Lower edge")
            self.band_b_label.setText("Upper edge")
            self.band_a.set_value(lo)
            self.band_b.set_value(hi)
        else:
            self.band_a_label.setText("Centre f0")
            self.band_b_label.setText("Bandwidth")
            self.band_a.set_value(math.sqrt(lo * hi))
            self.band_b.set_value(hi - lo)

    def _on_band_mode_changed(self) -> None:
        try:
            self._band = self._band_from_fields(previous_mode=True)
        except InputError:
            pass
        self._show_band()

    def _band_from_fields(self, *, previous_mode: bool = False) -> tuple[float, float]:
        mode = self.band_mode.currentData()
        if previous_mode:  # the fields still hold the other mode's values
            mode = "centre" if mode == "edges" else "edges"
        a, b = self._field_value(self.band_a), self._field_value(self.band_b)
        try:
            band = band_from(f_low_hz=a, f_high_hz=b) if mode == "edges" else band_from(f0_hz=a, bw_hz=b)
        except InputError as exc:
            names = {"f-low": "lower edge", "f-high": "upper edge", "f0": "centre f0", "bw": "bandwidth"}
            reason = exc.reason.replace("f-low", "the lower edge")
            raise InputError(names.get(exc.field, exc.field), reason) from None
        return band.f_low_hz, band.f_high_hz

    def _field_value(self, field: ValueField) -> float:
        """A field's value, reading what is typed even before Enter (a Build click reads it too);
        an InputError names the field as its label does."""
        label = {
            self.band_a: self.band_a_label.text(),
            self.band_b: self.band_b_label.text(),
            self.gain_field: "centre gain",
            self.ripple_field: "ripple",
        }.get(field, field.name)
        text = field.edit.text().strip()
        if text == field._fmt(field.value) and field.value is not None:
            return float(field.value)
        if not text:
            raise InputError(label.lower(), "missing")
        try:
            return parse_positive(text, field=label.lower())
        except InputError as exc:
            raise InputError(label.lower(), exc.reason) from None

    def _on_response_changed(self) -> None:
        cheb = self.response_combo.currentData() == "chebyshev"
        self.ripple_field.setEnabled(cheb)
        self.ripple_label.setEnabled(cheb)
        self.edge_note.setText(
            "Edges: where the passband ripple band ends (−ripple dB)." if cheb else "Edges: the −3 dB points."
        )

    def request(self) -> ChainSettings:
        """The settings the form asks for (InputError naming the field when something is off)."""
        lo, hi = self._band_from_fields()
        response = self.response_combo.currentData()
        return ChainSettings(
            response=response,
            order=self.order_spin.value(),
            f_low_hz=lo,
            f_high_hz=hi,
            gain=self._field_value(self.gain_field),
            ripple_db=self._field_value(self.ripple_field) if response == "chebyshev" else None,
            circuit=self.circuit_combo.currentData(),
            series=self.series_combo.currentData(),
        )

    # ------------------------------------------------------------------ reading
    @property
    def busy(self) -> bool:
        """True while a design, a stage change or a measurement runs."""
        return self._job is not None

    @property
    def shown(self) -> Cascade | None:
        """The chain (or the attempt that could not be built) on screen."""
        return self._shown

    @property
    def shown_id(self) -> str | None:
        return self._shown_id

    def chains(self) -> list[Chain]:
        return saved_chains(self.state.session)[0]

    def shown_chain(self) -> Chain | None:
        """The saved chain on screen (None for an attempt that is not kept)."""
        if not self._shown_saved:
            return None
        return next((c for c in self.chains() if c.id == self._shown_id), None)

    def _conditions(self) -> Conditions:
        return chain_conditions(self.state.session)

    def _new_id(self) -> str:
        used = {c.id for c in self.chains()}
        raw = self.state.session.extras.get(EXTRAS_KEY, [])
        if isinstance(raw, list):
            used |= {o.get("id") for o in raw if isinstance(o, dict)}
        k = 1
        while f"chain-{k}" in used:
            k += 1
        return f"chain-{k}"

    # ------------------------------------------------------------------ jobs
    def _start(self, title: str, work: Callable[[], object], done: Callable[[object], None]) -> None:
        if self._job is not None:
            self._job.cancel()
        job = BackgroundJob(lambda _progress, _cancelled: work(), title, self)
        self._job = job
        self.busy_label.setText(title + "…")
        self._set_inputs_enabled(False)

        def finished(result, job=job):
            if job is not self._job:
                job.deleteLater()
                return
            self._end_job()
            done(result)

        def failed(text, job=job):
            if job is not self._job:
                job.deleteLater()
                return
            self._end_job()
            self.messages.setText(f"<span style='color:{BAD}'>✗ {_esc(title)} failed: {_esc(text)}</span>")
            self.shown_changed.emit()

        def cancelled(job=job):
            if job is self._job:
                self._end_job()
            else:
                job.deleteLater()

        job.finished.connect(finished)
        job.failed.connect(failed)
        job.cancelled.connect(cancelled)
        self._run_job(job)

    def _end_job(self) -> None:
        if self._job is not None:
            self._job.deleteLater()
        self._job = None
        self.busy_label.setText("")
        self._set_inputs_enabled(True)

    def _set_inputs_enabled(self, on: bool) -> None:
        self.btn_build.setEnabled(on)
        for r in range(self.stage_table.rowCount()):
            w = self.stage_table.cellWidget(r, 1)
            if w is not None:
                w.setEnabled(on and self._shown is not None)

    def _remember(self, chain: Chain, conditions: Conditions, result: Cascade) -> None:
        if len(self._cache) > 48:
            self._cache.pop(next(iter(self._cache)))
        self._cache[(_chain_key(chain), conditions)] = result

    # ------------------------------------------------------------------ user actions
    def build(self) -> None:
        """Design a new chain from the form, off the GUI thread; a buildable one is kept in the session."""
        try:
            settings = self.request()
        except InputError as exc:
            self.form_error.setText(str(exc))
            self.form_error.show()
            return
        self.form_error.hide()
        conditions = self._conditions()
        title = f"Designing a {response_title(settings)} chain of {settings.order} stage{'s' if settings.order != 1 else ''}"
        self._start(title, lambda: design_cascade(settings, conditions=conditions), lambda r: self._on_built(r, conditions))

    def _on_built(self, result: Cascade, conditions: Conditions) -> None:
        cid = self._new_id()
        if not result.feasible:
            self._shown, self._shown_id, self._shown_saved = result, cid, False
            self._on_session_changed(self.state.session)
            self.state.notice.emit(f"The chain cannot be built, so it was not kept: {_first_clause(result.reason)}")
            return
        self._keep(result, cid, conditions, f"build {cid} ({response_title(result.settings)}, {result.settings.order} stages)")

    def _keep(self, result: Cascade, cid: str, conditions: Conditions, text: str) -> None:
        """Put a built chain into the session under ``cid`` (replacing one of that id), undoably."""
        old = next((c for c in self.chains() if c.id == cid), None)
        chain = result.chain(cid, notes=old.notes if old is not None else "")
        self._remember(chain, conditions, result)
        raw = self.state.session.extras.get(EXTRAS_KEY, [])
        raw = list(raw) if isinstance(raw, list) else []
        for i, obj in enumerate(raw):
            if isinstance(obj, dict) and obj.get("id") == cid:
                raw[i] = chain.to_json()
                break
        else:
            raw.append(chain.to_json())
        self._want_id = cid
        self._shown, self._shown_id, self._shown_saved = result, cid, True
        self.state.set_extra(EXTRAS_KEY, raw, text)
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
            self.state.notice.emit(f"Stage {index} cannot be built on {circuit}: {_first_clause(st.reason)}; the chain keeps its stage")
            self._display(self._shown, self._shown_id, saved=self._shown_saved)  # puts the old circuit back in the table
            self.messages.setText(
                f"<span style='color:{BAD}'>✗ Stage {index} cannot be built on {_esc(circuit)}:</span> {_esc(st.reason or '')}. "
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
        raw = self.state.session.extras.get(EXTRAS_KEY, [])
        raw = [o for o in raw if not (isinstance(o, dict) and o.get("id") == self._shown_id)] if isinstance(raw, list) else []
        self.state.set_extra(EXTRAS_KEY, raw or None, f"remove {self._shown_id}")

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
    def _on_session_changed(self, session: Session) -> None:
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
        conditions = self._conditions()
        key = (_chain_key(chain), conditions)
        if key in self._cache:
            self._display(self._cache[key], cid, saved=True)
            return
        self._shown_id, self._shown_saved = cid, True
        self._start(
            f"Measuring {cid}",
            lambda: chain_cascade(chain, conditions=conditions),
            lambda r: self._on_measured(r, chain, conditions),
        )

    def _on_measured(self, result: Cascade, chain: Chain, conditions: Conditions) -> None:
        self._remember(chain, conditions, result)
        if self.chain_combo.currentData() == chain.id:
            self._display(result, chain.id, saved=True)

    # ------------------------------------------------------------------ showing
    def _display(self, result: Cascade | None, cid: str | None, *, saved: bool) -> None:
        self._shown, self._shown_id, self._shown_saved = result, cid, saved and result is not None
        self.plots.show_cascade(result)
        self._fill_stages(result)
        self._fill_summary(result, cid, saved)
        kept = self.shown_chain() is not None
        self.btn_remove.setEnabled(result is not None)
        self.btn_remove.setText("Remove chain" if kept or result is None else "Forget attempt")
        self.btn_netlist.setEnabled(kept)
        self.btn_parts.setEnabled(kept)
        # The form shows the request of the chain picked; measuring the same chain again (after
        # an op-amp change, say) leaves what the user is typing alone.
        if result is not None and cid != self._form_for:
            self._set_form(result.settings)
        self._form_for = cid if result is not None else self._form_for
        self.shown_changed.emit()

    def _fill_summary(self, result: Cascade | None, cid: str | None, saved: bool) -> None:
        notes = [f"<span style='color:{WARN}'>⚠ {_esc(p)}</span>" for p in self._problems]
        if result is None:
            self.summary.setText(
                "<b>No chain shown.</b> Set the band on the left and press <b>Build chain</b>: "
                "each stage is designed from one of the circuits and the chain is kept in the session."
            )
            self.messages.setText("<br>".join(notes))
            return
        s = result.settings
        head = f"<b>{_esc(cid or '')}</b>: {_esc(response_title(s))}, order {s.order} ({s.order} stage{'s' if s.order != 1 else ''}), {_esc(s.series)} parts"
        if not result.feasible:
            bad = [st for st in result.stages if not st.feasible]
            lines = [
                head,
                f"<span style='color:{BAD}'><b>✗ Cannot be built</b></span>: {len(bad)} of {len(result.stages)} stages cannot be built, "
                "so this chain is not kept in the session.",
            ]
            lines += [f"• stage {st.index} (f0 {_esc(format_value(st.plan.f0_hz, 'Hz'))}, Q {st.plan.q:.3g}): {_esc(_first_clause(st.reason))}" for st in bad]
            lines.append(
                f"<span style='color:{MUTED}'>Select a stage below for every circuit's reason; widen the band, lower the order, "
                "choose a finer series or another circuit for that stage.</span>"
            )
            self.summary.setText("<br>".join(lines))
            self.messages.setText("<br>".join(notes))
            return
        o = result.overall
        gbws = [st.result.analysis.requirements.gbw_hz for st in result.stages if st.result is not None and st.result.analysis is not None]
        need = max(gbws) if gbws and all(g is not None for g in gbws) else None
        have = result.conditions.gbw_hz
        if need is None:
            verdict = f"<span style='color:{BAD}'>✗ a stage needs more gain-bandwidth than any op-amp has</span>"
        elif have is None:
            verdict = f"needs GBW {_esc(format_value(need, 'Hz', digits=3))} (the most any stage needs); the session's op-amp is ideal"
        elif have >= need:
            verdict = f"<span style='color:{GOOD}'>✓</span> needs GBW {_esc(format_value(need, 'Hz', digits=3))}; the session's {_esc(format_value(have, 'Hz', digits=3))} op-amp is enough"
        else:
            verdict = f"<span style='color:{BAD}'>✗ needs GBW {_esc(format_value(need, 'Hz', digits=3))}; the session's {_esc(format_value(have, 'Hz', digits=3))} op-amp is not enough</span>"
        edge = "ripple-band edges" if s.response == "chebyshev" else "−3 dB points"
        lines = [
            head + ("" if saved else " <i>(not kept)</i>"),
            f"Band asked: {_esc(format_value(s.f_low_hz, 'Hz'))} to {_esc(format_value(s.f_high_hz, 'Hz'))} ({edge}), centre gain {s.gain:.4g}",
            f"Built: edges {_esc(format_value(o.f_low_hz, 'Hz'))} / {_esc(format_value(o.f_high_hz, 'Hz'))}, centre gain {_esc(format_value(o.gain_center_db, 'dB', digits=3))}, "
            f"ripple {_esc(format_value(o.ripple_db, 'dB', digits=2))}, peak {_esc(format_value(o.peak_gain_db, 'dB', digits=3))}",
            f"Off the ideal {_esc(response_title(s))} response: up to <b>{_esc(format_value(result.passband_max_dev_db, 'dB', digits=3))}</b> in the band, "
            f"{_esc(format_value(result.reference_max_dev_db, 'dB', digits=3))} over the whole sweep"
            + (f"; with the op-amp {_esc(format_value(result.actual_max_dev_db, 'dB', digits=3))}" if result.actual_max_dev_db is not None else ""),
            verdict,
        ]
        self.summary.setText("<br>".join(lines))
        for w in result.warnings:
            notes.append(f"<span style='color:{WARN}'>⚠ {_esc(w)}</span>")
        flagged = [st.index for st in result.stages if st.warnings]
        if flagged:
            notes.append(
                f"<span style='color:{WARN}'>⚠ stage{'s' if len(flagged) > 1 else ''} {', '.join(map(str, flagged))} "
                "carry warnings (marked ⚠ below; select one to read them)</span>"
            )
        self.messages.setText("<br>".join(notes))

    def _fill_stages(self, result: Cascade | None) -> None:
        table = self.stage_table
        table.blockSignals(True)
        try:
            table.clearContents()
            stages = result.stages if result is not None else ()
            table.setRowCount(len(stages))
            for r, st in enumerate(stages):
                style = candidate_style(r)
                mark = " ⚠" if st.warnings else ("" if st.feasible else " ✗")
                first = QtWidgets.QTableWidgetItem(f"■ {st.index}{mark}")
                first.setForeground(QtGui.QColor(style.colour if st.feasible else BAD))
                f = first.font()
                f.setBold(True)
                first.setFont(f)
                table.setItem(r, 0, first)
                combo = QtWidgets.QComboBox(table)
                combo.setObjectName(f"stageCircuit{st.index}")
                for c in circuit_choices():
                    combo.addItem(c, c)
                current = st.circuit if st.feasible and st.circuit else AUTO
                combo.setCurrentIndex(combo.findData(current))
                combo.setToolTip("Rebuild this stage on another circuit (auto: the one needing the least GBW)")
                combo.setEnabled(self._job is None)
                combo.activated.connect(lambda _i, combo=combo, idx=st.index, cur=current: self._on_stage_combo(combo, idx, cur))
                table.setCellWidget(r, 1, combo)
                an = st.result.analysis if st.feasible and st.result is not None else None
                cells = [
                    format_value(st.plan.f0_hz, "Hz"),
                    f"{st.plan.q:.4g}",
                    f"{st.plan.gain:.4g}",
                    format_value(st.peak_internal_gain_db, "dB", digits=3) if st.feasible else "—",
                    (format_value(an.requirements.gbw_hz, "Hz", digits=3) if an.requirements.gbw_hz is not None else "none") if an is not None else "—",
                    _parts_text(st.circuit, st.chosen) if st.feasible else "not built: " + _first_clause(st.reason),
                ]
                for c, text in enumerate(cells, start=2):
                    item = QtWidgets.QTableWidgetItem(text)
                    if c < 7:
                        item.setTextAlignment(QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
                    if not st.feasible and c == 7:
                        item.setForeground(QtGui.QColor(BAD))
                    if c == 7:
                        item.setToolTip(text if st.feasible else (st.reason or ""))
                    table.setItem(r, c, item)
            for c in range(7):
                table.resizeColumnToContents(c)
            table.setColumnWidth(1, max(table.columnWidth(1), 112))
            table.resizeRowsToContents()
        finally:
            table.blockSignals(False)
        if stages:
            table.setCurrentCell(0, 0)
            self._show_stage_detail(0)
        else:
            self.detail.setHtml("")

    def _on_stage_combo(self, combo: QtWidgets.QComboBox, index: int, current: str) -> None:
        circuit = combo.currentData()
        if circuit == current and circuit != AUTO:
            return
        self.set_stage_circuit(index, circuit)

    def stage_combo(self, index: int) -> QtWidgets.QComboBox:
        """The circuit chooser of stage ``index`` (from 1)."""
        return self.stage_table.cellWidget(index - 1, 1)

    def _show_stage_detail(self, row: int) -> None:
        result = self._shown
        if result is None or not 0 <= row < len(result.stages):
            self.detail.setHtml("")
            return
        st = result.stages[row]
        p = st.plan
        out = []
        if st.feasible:
            topo = get_topology(st.circuit)
            out.append(f"<b>Stage {st.index}: {_esc(topo.title)}</b> ({_esc(st.circuit)})")
        else:
            out.append(f"<b>Stage {st.index}</b> <span style='color:{BAD}'>✗ not built</span>")
        out.append(
            f"Target: f0 {_esc(format_value(p.f0_hz, 'Hz'))}, Q {p.q:.4g}, own peak gain {p.gain:.4g}; "
            f"input reaching it {_esc(format_value(st.vin_v, 'V'))} peak at its f0."
        )
        if not st.feasible:
            out.append(f"<span style='color:{BAD}'>{_esc(st.reason or '')}</span>")
        else:
            res = st.result
            e = res.errors
            out.append(
                f"Its parts give: f0 {_esc(_signed(e['f0_pct'], '%'))}, Q {_esc(_signed(e['q_pct'], '%'))}, "
                f"gain {_esc(_signed(e['gain_db'], 'dB'))} off the target (ideal op-amp)."
            )
            rows = []
            for c in topo.components:
                v = float(st.chosen[c.ref])
                if not c.required and v <= 0:
                    continue
                rows.append(f"<tr><td><b>{_esc(c.ref)}</b></td><td align='right'>{_esc(format_value(v, PART_UNITS[c.kind], digits=4))}</td><td>{_esc(c.role)}</td></tr>")
            out.append("<table cellspacing='0' cellpadding='2'>" + "".join(rows) + "</table>")
            an = res.analysis
            if an is not None:
                r = an.requirements
                gbw = format_value(r.gbw_hz, "Hz", digits=3) if r.gbw_hz is not None else f"none ({r.gbw_reason})"
                out.append(
                    f"Needs: GBW {_esc(gbw)} (f0 ±{100 * r.tolerances.f0:.3g} %, Q ±{100 * r.tolerances.q:.3g} %, "
                    f"gain ±{r.tolerances.gain_db:g} dB); output {_esc(format_value(r.vout_peak_v, 'V'))} peak; slew "
                    f"{r.slew_sine_v_per_us:.3g} V/µs for a sine at f0, {r.slew_step_v_per_us:.3g} V/µs for a step; "
                    f"output current {_esc(format_value(r.iout_peak_ma * 1e-3, 'A', digits=3))} peak."
                )
        for w in st.warnings:
            out.append(f"<span style='color:{WARN}'>⚠ {_esc(w)}</span>")
        if len(st.attempts) > 1:
            tried = []
            for a in st.attempts:
                if a.sane:
                    ok = "meets its tolerances" if a.within else "usable, outside its tolerances"
                    tried.append(f"{_esc(a.topology_id)}: {ok}, needs GBW {_esc(format_value(a.gbw_hz, 'Hz', digits=3))}")
                else:
                    tried.append(f"{_esc(a.topology_id)}: {_esc(a.reason or 'cannot build it')}")
            out.append("Circuits tried: " + "; ".join(tried) + ".")
        self.detail.setHtml("<p style='margin:0'>" + "</p><p style='margin:4px 0 0 0'>".join(out) + "</p>")


def install(window) -> ChainPane:
    """Add the stage-chain pane to a :class:`~bandsmith.app.window.main_window.WorkbenchWindow` as a tab."""
    pane = ChainPane(window.state, run_job=window.run_job, prompter=getattr(window, "prompter", None), parent=window)
    window.chain_pane = pane
    window.add_pane("Stage chain", pane)
    return pane
