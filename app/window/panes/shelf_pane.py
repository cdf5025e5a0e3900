"""The op-amp shelf pane: the shelf editor, every model's verdict per candidate, and the chosen one.

Layout: on the left the verdict board (one row per shelf model, one column per active candidate,
each cell a word with a symbol and a tint: "✓ fits", "◐ marginal", "✗ does not fit", so it reads
without colour) above the shelf editor (one row per model, every figure editable in any notation
of :mod:`bandsmith.common.values`); on the right the chosen pair: its reasons, the candidate's magnitude
response with an ideal op-amp and with the chosen one, and its headroom (every node's peak, what it
may reach, the node that limits first and the largest input).

The shelf lives in the user's configuration folder (:mod:`bandsmith.app.shelf_paths`); edits are saved with
"Save shelf". The supply (±V) belongs to the session, in its ``"shelf"`` section, with the models
copied into it by "Copy to session" (so that a session carries the op-amps it was checked with).
The verdicts come from the state's :class:`~bandsmith.app.window.verdicts.VerdictBook`, which the candidate
columns' verdict strips read too (the pane gives it the shelf); the pane asks for them only while
it is visible. Choosing a pair here chooses it in the book as well, so the candidate's column shows
it and the Responses plots draw it (:mod:`bandsmith.app.window.widgets.amp_overlay`).

The module runs past 500 lines because its three parts (board, editor, chosen pair) share one
selection and one recompute cycle, so they stay one view; the shelf's editable model lives apart,
in :mod:`bandsmith.app.window.panes.shelf_model`.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.solver.ampmodel import amp_transfer_function
from bandsmith.analysis.analyzer import transfer_function
from bandsmith.design.candidate import Candidate
from bandsmith.common.errors import InputError
from bandsmith.bench.fitcheck import FITS, FitReport
from bandsmith.bench.shelf import OpAmp, ShelfError, ShelfState
from bandsmith.common.values import format_value, parse_positive

from bandsmith.app.window.panes.shelf_model import EDITOR_COLUMNS, EDITOR_TIPS, ShelfModel, cell_text, read_cell
from bandsmith.app.window.panes.shown_only import RecomputeWhenShown
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.theme import BAD, GOOD, error_label, section_title
from bandsmith.app.window.widgets.plots import LogAxis
from bandsmith.app.window.widgets.value_field import ValueField
from bandsmith.app.window.widgets.verdict_strip import VERDICT_LOOK
from bandsmith.app.window.verdicts import SESSION_KEY, VerdictBook, session_amps, session_supply_v, verdict_tooltip

__all__ = ["ShelfModel", "ShelfPane", "VERDICT_LOOK", "SESSION_KEY", "install"]


class _FramedSelection(QtWidgets.QStyledItemDelegate):
    """The selected verdict keeps its word, colour and tint, and gets a dark frame instead."""

    def paint(self, painter, option, index):
        opt = QtWidgets.QStyleOptionViewItem(option)
        flags = QtWidgets.QStyle.StateFlag
        selected = bool(opt.state & flags.State_Selected)
        opt.state &= ~(flags.State_Selected | flags.State_HasFocus)
        super().paint(painter, opt, index)
        if selected:
            painter.save()
            painter.setPen(QtGui.QPen(QtGui.QColor("#202124"), 2.0))
            painter.drawRect(opt.rect.adjusted(1, 1, -1, -1))
            painter.restore()


def reasons_text(pairs) -> str:
    """The reasons of one model's verdicts over the candidates ``(candidate id, Verdict)``, in words.

    A reason every candidate shares is said once ("the ±15 V supply … is above its largest,
    5.5 V"); the others are prefixed with their candidate. A model that fits every candidate says
    so. Reasons of a "fits" verdict (its comfortable margins) are left out.
    """
    if not pairs:
        return ""
    if all(v.verdict == FITS for _, v in pairs):
        return "fits every candidate"
    lists = [(cid, [r for r in v.reasons] if v.verdict != FITS else []) for cid, v in pairs]
    common = [r for r in lists[0][1] if all(r in rs for _, rs in lists)]
    parts = list(common)
    for cid, rs in lists:
        parts += [f"{cid}: {r}" for r in rs if r not in common]
    return "; ".join(parts)


# Below this pane width (px) the verdicts and shelf sit above the chosen pair's plot, not beside it.
_SIDE_BY_SIDE_FROM = 1100


class ShelfPane(RecomputeWhenShown, QtWidgets.QWidget):
    """The shelf pane over a workbench state and a shelf.

    Parameters
    ----------
    state : WorkbenchState
        The session and its candidates.
    shelf : ShelfState, optional
        The shelf to start from; by default the user's (:func:`bandsmith.app.shelf_paths.open_user_shelf`).
    """

    chosen_changed = QtCore.Signal(str, str)  # candidate id, amp name

    def __init__(self, state: WorkbenchState, shelf: ShelfState | None = None, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("shelfPane")
        self.state = state
        if shelf is None:
            from bandsmith.app.shelf_paths import open_user_shelf

            shelf = open_user_shelf()
        self.shelf = ShelfModel(shelf, self)
        self.book = VerdictBook.of(state)
        self.book.set_shelf(self.shelf.amps)
        self._reports: dict[str, FitReport] = {}
        self._dirty = True
        self._chosen: tuple[str, str] | None = None
        self._filling = False

        outer = QtWidgets.QVBoxLayout(self)
        outer.setContentsMargins(6, 6, 6, 6)
        outer.setSpacing(4)
        self._build_banner(outer)
        self._build_supply_bar(outer)

        split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Horizontal, self)
        split.setChildrenCollapsible(False)
        outer.addWidget(split, 1)

        left = QtWidgets.QWidget(split)
        ll = QtWidgets.QVBoxLayout(left)
        ll.setContentsMargins(0, 0, 0, 0)
        self._build_verdict_table(left, ll)
        # The shelf editor in a box of its own: beside the chosen pair it sits under the
        # verdicts; on a narrow pane it moves under the chosen pair (verdicts, pair, shelf).
        self._editor_box = QtWidgets.QWidget(left)
        el = QtWidgets.QVBoxLayout(self._editor_box)
        el.setContentsMargins(0, 0, 0, 0)
        self._build_shelf_editor(self._editor_box, el)
        self._build_shelf_buttons(self._editor_box, el)
        ll.addWidget(self._editor_box, 3)
        self._left_layout = ll

        right = QtWidgets.QWidget(split)
        rl = QtWidgets.QVBoxLayout(right)
        rl.setContentsMargins(0, 0, 0, 0)
        self._build_detail(right, rl)
        self._build_headroom(right, rl)
        split.addWidget(left)
        split.addWidget(right)
        split.setStretchFactor(0, 3)
        split.setStretchFactor(1, 2)
        right.setMinimumWidth(320)
        split.setSizes([740, 540])
        self.splitter = split

        self.shelf.changed.connect(self._on_shelf_changed)
        self.shelf.modified_changed.connect(lambda _m: self._show_file())
        state.session_changed.connect(self._on_session_changed)
        state.analyses_changed.connect(self.mark_dirty)
        self.book.chosen_changed.connect(self._on_book_chosen)
        self._fill_editor()
        self._show_file()
        self._on_session_changed(state.session)

    def _build_banner(self, outer: QtWidgets.QVBoxLayout) -> None:
        """The warning line shown when the shelf file could not be read as it was."""
        self.banner = QtWidgets.QLabel(self)
        self.banner.setObjectName("shelfWarning")
        self.banner.setWordWrap(True)
        self.banner.setStyleSheet(f"color: {BAD}; background: #fdf1f1; border: 1px solid {BAD}; padding: 4px;")
        self.banner.setVisible(bool(self.shelf.warning))
        self.banner.setText(f"⚠ {self.shelf.warning}" if self.shelf.warning else "")
        outer.addWidget(self.banner)

    def _build_supply_bar(self, outer: QtWidgets.QVBoxLayout) -> None:
        """The supply field (±V, kept in the session) and the line of conditions beside it."""
        bar = QtWidgets.QHBoxLayout()
        bar.addWidget(QtWidgets.QLabel("Supply ±", self))
        self.supply = ValueField(
            "supply", "V", parse=lambda t: parse_positive(t, field="supply"),
            tooltip="Symmetric supply ±V, in volts (the session keeps it). Every node swings about 0 V.", parent=self,
        )
        self.supply.setMaximumWidth(110)
        self.supply.committed.connect(self._on_supply_committed)
        bar.addWidget(self.supply)
        self.conditions = QtWidgets.QLabel(self)
        self.conditions.setObjectName("shelfConditions")
        self.conditions.setStyleSheet("color: #5f6368;")
        self.conditions.setWordWrap(True)  # long; it must not set the pane's (and the window's) width
        bar.addWidget(self.conditions, 1)
        outer.addLayout(bar)

    def _build_verdict_table(self, left: QtWidgets.QWidget, ll: QtWidgets.QVBoxLayout) -> None:
        """The verdict board: one row per shelf model, one column per active candidate."""
        t = section_title(left, "Verdicts — op-amps on the shelf against each active candidate (click one to see it)", wrap=True)
        ll.addWidget(t)
        self.verdicts = QtWidgets.QTableWidget(left)
        self.verdicts.setObjectName("verdicts")
        self.verdicts.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.verdicts.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.SingleSelection)
        self.verdicts.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectionBehavior.SelectItems)
        self.verdicts.currentCellChanged.connect(self._on_verdict_cell)
        self.verdicts.verticalHeader().setDefaultSectionSize(24)
        self.verdicts.setItemDelegate(_FramedSelection(self.verdicts))
        ll.addWidget(self.verdicts, 2)

    def _build_shelf_editor(self, left: QtWidgets.QWidget, ll: QtWidgets.QVBoxLayout) -> None:
        """The shelf editor (one row per model, every figure editable) and its error line."""
        t = section_title(left, "Shelf — your op-amp models (edit a cell; type values as 10M, 200k, 0.5)", wrap=True)
        ll.addWidget(t)
        self.editor = QtWidgets.QTableWidget(0, len(EDITOR_COLUMNS), left)
        self.editor.setObjectName("shelfTable")
        self.editor.setHorizontalHeaderLabels([c[1] for c in EDITOR_COLUMNS])
        for i, (key, _h, _u, _how) in enumerate(EDITOR_COLUMNS):
            if key in EDITOR_TIPS:
                self.editor.horizontalHeaderItem(i).setToolTip(EDITOR_TIPS[key])
        self.editor.itemChanged.connect(self._on_editor_item)
        self.editor.verticalHeader().setDefaultSectionSize(24)
        ll.addWidget(self.editor, 3)
        self.editor_error = error_label(left)
        ll.addWidget(self.editor_error)

    def _build_shelf_buttons(self, left: QtWidgets.QWidget, ll: QtWidgets.QVBoxLayout) -> None:
        """Add, duplicate, remove, restore and save buttons under the editor, and the shelf file's line."""
        buttons = QtWidgets.QGridLayout()  # two rows, so the pane stays narrow enough beside the board
        self.btn_add = QtWidgets.QPushButton("Add model", left)
        self.btn_dup = QtWidgets.QPushButton("Duplicate", left)
        self.btn_remove = QtWidgets.QPushButton("Remove", left)
        self.btn_restore = QtWidgets.QPushButton("Add back the generic models", left)
        self.btn_save = QtWidgets.QPushButton("Save shelf", left)
        self.btn_save.setObjectName("saveShelf")
        for b, tip in (
            (self.btn_add, "Add a model to the shelf"),
            (self.btn_dup, "Duplicate the selected model"),
            (self.btn_remove, "Remove the selected model from the shelf"),
            (self.btn_restore, "Put back the shipped generic models that are not on the shelf"),
            (self.btn_save, "Write the shelf to your configuration folder"),
        ):
            b.setToolTip(tip)
        for k, b in enumerate((self.btn_add, self.btn_dup, self.btn_remove)):
            buttons.addWidget(b, 0, k)
        buttons.addWidget(self.btn_restore, 1, 0, 1, 2)
        buttons.addWidget(self.btn_save, 1, 2)
        buttons.setColumnStretch(3, 1)
        ll.addLayout(buttons)
        self.shelf_file = QtWidgets.QLabel(left)
        self.shelf_file.setObjectName("shelfFile")
        self.shelf_file.setStyleSheet("color: #5f6368;")
        self.shelf_file.setWordWrap(True)
        ll.addWidget(self.shelf_file)
        self.btn_add.clicked.connect(lambda: self._select_editor_row(self.shelf.add()))
        self.btn_dup.clicked.connect(self._on_duplicate)
        self.btn_remove.clicked.connect(self._on_remove)
        self.btn_restore.clicked.connect(self.shelf.restore_archetypes)
        self.btn_save.clicked.connect(self.save_shelf)

    def _build_detail(self, right: QtWidgets.QWidget, rl: QtWidgets.QVBoxLayout) -> None:
        """The chosen pair's title and reasons, and its magnitude with an ideal and with the chosen op-amp."""
        self.detail_title = QtWidgets.QLabel("Choose a verdict in the table", right)
        self.detail_title.setObjectName("detailTitle")
        self.detail_title.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.detail_title.setWordWrap(True)
        rl.addWidget(self.detail_title)
        self.detail_reasons = QtWidgets.QLabel(right)
        self.detail_reasons.setObjectName("detailReasons")
        self.detail_reasons.setWordWrap(True)
        self.detail_reasons.setTextFormat(QtCore.Qt.TextFormat.RichText)
        rl.addWidget(self.detail_reasons)
        # The workbench's own log axis (plain decade ticks): pyqtgraph's, with an SI prefix, ran
        # its labels together ("0.50.60.70.80.91").
        self.plot = pg.PlotWidget(right, axisItems={"bottom": LogAxis("bottom")})
        self.plot.setObjectName("overlay")
        self.plot.setLogMode(x=True, y=False)
        self.plot.setLabel("bottom", "frequency (Hz)")
        self.plot.setLabel("left", "magnitude", units="dB")
        self.plot.showGrid(x=True, y=True, alpha=0.25)
        self.plot.addLegend(offset=(6, 6))
        self.plot.setMinimumHeight(200)
        self.curve_ideal = self.plot.plot([], [], name="ideal op-amp")
        self.curve_amp = self.plot.plot([], [], name="with the chosen op-amp")
        rl.addWidget(self.plot, 2)

    def _build_headroom(self, right: QtWidgets.QWidget, rl: QtWidgets.QVBoxLayout) -> None:
        """The chosen pair's headroom table, its largest input and the Copy to session button."""
        t = section_title(right, "Headroom at the input level", wrap=True)
        rl.addWidget(t)
        self.headroom_table = QtWidgets.QTableWidget(0, 5, right)
        self.headroom_table.setObjectName("headroomTable")
        self.headroom_table.setHorizontalHeaderLabels(["node", "peak", "may reach", "to spare", "set by"])
        self.headroom_table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.headroom_table.verticalHeader().hide()
        self.headroom_table.horizontalHeader().setStretchLastSection(True)
        rl.addWidget(self.headroom_table, 1)
        self.max_input = QtWidgets.QLabel(right)
        self.max_input.setObjectName("maxInput")
        self.max_input.setWordWrap(True)
        rl.addWidget(self.max_input)
        self.btn_copy = QtWidgets.QPushButton("Copy to session", right)
        self.btn_copy.setObjectName("copyToSession")
        self.btn_copy.setToolTip("Keep this op-amp model in the session, as the one chosen for this candidate")
        self.btn_copy.setEnabled(False)
        self.btn_copy.clicked.connect(self.copy_to_session)
        rl.addWidget(self.btn_copy, 0, QtCore.Qt.AlignmentFlag.AlignLeft)

    # ------------------------------------------------------------------ reading
    @property
    def supply_v(self) -> float:
        return session_supply_v(self.state.session)

    def session_amps(self) -> tuple[OpAmp, ...]:
        """Models the session carries (copied into it earlier); unusable entries are left out."""
        return session_amps(self.state.session)

    def amps(self) -> tuple[OpAmp, ...]:
        """What the verdicts are for: the shelf, then session models not on the shelf."""
        return self.book.amps()

    def _candidates(self) -> list:
        return [c for c in self.state.session.candidates if c.enabled]

    def reports(self) -> dict[str, FitReport]:
        """The fit report of every active candidate (computed now if needed)."""
        if self._dirty:
            self._compute()
        return self._reports

    def verdict(self, candidate_id: str, amp_name: str):
        return self.reports()[candidate_id].verdict(amp_name)

    # ------------------------------------------------------------------ computing

    def _compute(self) -> None:
        """Fit reports of the active candidates, from the book (each (candidate, model) verdict is
        cached there, so an edit of one model or one candidate recomputes only what it touches)."""
        self._reports = self.book.reports_now()
        self._dirty = False

    def refresh(self) -> None:
        """Recompute (cached) and redraw the verdicts and the chosen pair."""
        self._compute()
        self._fill_verdicts()
        self._show_chosen()

    # ------------------------------------------------------------------ views
    def _on_session_changed(self, _session) -> None:
        self.supply.set_value(self.supply_v)
        s = self.state.session
        load = f", load {format_value(s.rload_ohm, 'Ω')}" if s.rload_ohm else ""
        self.conditions.setText(
            f"input {format_value(s.target.vin_v, 'V')} peak{load}; GBW needs within f0 ±{100 * s.tolerances.f0:g} %, "
            f"Q ±{100 * s.tolerances.q:g} %, gain ±{s.tolerances.gain_db:g} dB. Supply limits, common-mode range and "
            "swing remain yours to check against the datasheet."
        )
        self.mark_dirty()

    def _on_shelf_changed(self) -> None:
        self.book.set_shelf(self.shelf.amps)
        self._fill_editor()
        self.mark_dirty()

    def _show_file(self) -> None:
        where = str(self.shelf.path) if self.shelf.path else "(no file)"
        state = "unsaved changes" if self.shelf.modified else ("saved" if self.shelf.from_file else "generic models; not saved yet")
        self.shelf_file.setText(f"Shelf file: {where} — {state}")
        self.btn_save.setEnabled(self.shelf.path is not None and (self.shelf.modified or not self.shelf.from_file))

    def _fill_editor(self) -> None:
        self._filling = True
        try:
            amps = self.shelf.amps
            self.editor.setRowCount(len(amps))
            for r, a in enumerate(amps):
                for c, (key, _h, unit, how) in enumerate(EDITOR_COLUMNS):
                    item = QtWidgets.QTableWidgetItem(cell_text(a, key, unit, how))
                    if key in EDITOR_TIPS:
                        item.setToolTip(EDITOR_TIPS[key])
                    self.editor.setItem(r, c, item)
            self.editor.resizeColumnsToContents()
        finally:
            self._filling = False

    def _on_editor_item(self, item: QtWidgets.QTableWidgetItem) -> None:
        if self._filling:
            return
        row, col = item.row(), item.column()
        key, _h, unit, how = EDITOR_COLUMNS[col]
        old = self.shelf.amps[row]
        try:
            value = read_cell(item.text(), key, how)
            new = replace(old, **{key: value})
            self.shelf.replace_amp(row, new)
        except InputError as exc:
            self.editor_error.setText(f"{old.name}: {exc}")
            self.editor_error.show()
            self._filling = True
            item.setText(cell_text(old, key, unit, how))
            self._filling = False
            return
        self.editor_error.hide()

    def _select_editor_row(self, row: int) -> None:
        self.editor.setCurrentCell(row, 0)

    def _on_duplicate(self) -> None:
        row = self.editor.currentRow()
        if 0 <= row < len(self.shelf.amps):
            self._select_editor_row(self.shelf.duplicate(row))

    def _on_remove(self) -> None:
        row = self.editor.currentRow()
        if 0 <= row < len(self.shelf.amps):
            self.shelf.remove(row)

    def save_shelf(self) -> bool:
        """Write the shelf file; a failure is shown under the editor."""
        try:
            self.shelf.save()
        except (ShelfError, InputError) as exc:
            self.editor_error.setText(str(exc))
            self.editor_error.show()
            return False
        self.banner.hide()
        self._show_file()
        self.state.notice.emit(f"Saved the op-amp shelf to {self.shelf.path}")
        return True

    def _fill_verdicts(self) -> None:
        amps = self.amps()
        cands = [c for c in self._candidates() if c.id in self._reports]
        session_names = {a.name.casefold() for a in self.session_amps()} - {a.name.casefold() for a in self.shelf.amps}
        self.verdicts.blockSignals(True)
        try:
            self.verdicts.clear()
            self.verdicts.setRowCount(len(amps))
            self.verdicts.setColumnCount(len(cands) + 1)
            self.verdicts.setHorizontalHeaderLabels([c.id for c in cands] + ["why"])
            for j, c in enumerate(cands):
                head = self.verdicts.horizontalHeaderItem(j)
                style = self.state.style(c.id)
                head.setForeground(QtGui.QColor(style.colour))
                head.setToolTip(f"candidate {c.id} ({c.topology_id})")
            self.verdicts.setVerticalHeaderLabels(
                [a.name + (" (session)" if a.name.casefold() in session_names else "") for a in amps]
            )
            for j, c in enumerate(cands):
                rep = self._reports[c.id]
                for i, a in enumerate(amps):
                    v = rep.verdict(a.name)
                    symbol, fg, bg = VERDICT_LOOK[v.verdict]
                    item = QtWidgets.QTableWidgetItem(f"{symbol} {v.verdict}")
                    item.setForeground(QtGui.QColor(fg))
                    item.setBackground(QtGui.QColor(bg))
                    item.setData(QtCore.Qt.ItemDataRole.UserRole, (c.id, a.name))
                    item.setToolTip(self._tooltip(v))
                    f = item.font()
                    f.setBold(v.verdict != FITS)
                    item.setFont(f)
                    self.verdicts.setItem(i, j, item)
            why_col = len(cands)
            self.verdicts.horizontalHeaderItem(why_col).setToolTip("The reasons behind each model's verdicts, in words (the same as in each cell's tooltip).")
            for i, a in enumerate(amps):
                text = reasons_text([(c.id, self._reports[c.id].verdict(a.name)) for c in cands])
                item = QtWidgets.QTableWidgetItem(text)
                item.setFlags(QtCore.Qt.ItemFlag.ItemIsEnabled)
                item.setToolTip(text)
                self.verdicts.setItem(i, why_col, item)
            self.verdicts.resizeColumnsToContents()
            self.verdicts.setWordWrap(True)
            self.verdicts.setColumnWidth(why_col, max(260, min(self.verdicts.columnWidth(why_col), 520)))
            self.verdicts.horizontalHeader().setStretchLastSection(True)
            self.verdicts.resizeRowsToContents()
            self._fit_heights()
            if self._chosen is not None:
                pos = self._position(*self._chosen)
                if pos is None:
                    self._chosen = None
                else:
                    self.verdicts.setCurrentCell(*pos)
        finally:
            self.verdicts.blockSignals(False)

    def _position(self, cid: str, amp_name: str):
        for i in range(self.verdicts.rowCount()):
            for j in range(self.verdicts.columnCount()):
                it = self.verdicts.item(i, j)
                if it is not None and it.data(QtCore.Qt.ItemDataRole.UserRole) == (cid, amp_name):
                    return i, j
        return None

    @staticmethod
    def _tooltip(v) -> str:
        return verdict_tooltip(v)

    def cell_text(self, candidate_id: str, amp_name: str) -> str:
        """What the verdict board shows for a pair (as a user reads it)."""
        pos = self._position(candidate_id, amp_name)
        return "" if pos is None else self.verdicts.item(*pos).text()

    # ------------------------------------------------------------------ the chosen pair
    def _on_verdict_cell(self, row: int, col: int, _prow: int, _pcol: int) -> None:
        it = self.verdicts.item(row, col) if row >= 0 and col >= 0 else None
        if it is None or it.data(QtCore.Qt.ItemDataRole.UserRole) is None:
            return  # the "why" column: nothing to choose
        cid, name = it.data(QtCore.Qt.ItemDataRole.UserRole)
        self.choose(cid, name)

    def choose(self, candidate_id: str, amp_name: str) -> None:
        """Show one candidate with one shelf model: reasons, overlay, headroom (and choose it in
        the book: the candidate's column and the Responses plots show it too)."""
        self._chosen = (candidate_id, amp_name)
        self.book.choose(candidate_id, amp_name)
        if self._dirty:
            self.refresh()
        else:
            pos = self._position(candidate_id, amp_name)
            if pos is not None and (self.verdicts.currentRow(), self.verdicts.currentColumn()) != pos:
                self.verdicts.blockSignals(True)
                self.verdicts.setCurrentCell(*pos)
                self.verdicts.blockSignals(False)
            self._show_chosen()
        self.chosen_changed.emit(candidate_id, amp_name)

    def _on_book_chosen(self, candidate_id: str, amp_name: str) -> None:
        """A model chosen elsewhere (a column's verdict strip) is shown here too."""
        if amp_name and (candidate_id, amp_name) != self._chosen:
            self.choose(candidate_id, amp_name)

    def _fit_heights(self) -> None:
        """The verdict table as tall as its rows (up to ten); on a narrow pane, the three blocks
        stacked at the heights they need (verdicts, the chosen pair, the shelf)."""
        t = self.verdicts
        rows = min(t.rowCount(), 10)
        bar = t.horizontalScrollBar().sizeHint().height()
        h = t.horizontalHeader().sizeHint().height() + rows * t.verticalHeader().defaultSectionSize() + 2 * t.frameWidth() + bar
        t.setMinimumHeight(min(h, 4 * t.verticalHeader().defaultSectionSize() + 40))
        t.setMaximumHeight(max(h, 60))
        if self.splitter.orientation() == QtCore.Qt.Orientation.Vertical:
            top = self.splitter.widget(0)
            heights = [top.sizeHint().height(), self.splitter.widget(1).sizeHint().height(), self._editor_box.sizeHint().height()]
            top.setMaximumHeight(heights[0])
            self.splitter.setSizes(heights)
        else:
            self.splitter.widget(0).setMaximumHeight(16777215)

    def _choose_text(self) -> str:
        where = "above" if self.splitter.orientation() == QtCore.Qt.Orientation.Vertical else "on the left"
        return f"Choose a verdict {where} to see its response and headroom here"

    def resizeEvent(self, event) -> None:  # noqa: N802 - Qt's name
        # Narrow (a laptop, the board beside): the verdicts and the shelf above the chosen pair's
        # plot and headroom, each at the pane's full width, so no verdict column is hidden.
        vertical = event.size().width() < _SIDE_BY_SIDE_FROM
        orientation = QtCore.Qt.Orientation.Vertical if vertical else QtCore.Qt.Orientation.Horizontal
        if self.splitter.orientation() != orientation:
            self.splitter.setOrientation(orientation)
            if vertical:
                self.splitter.addWidget(self._editor_box)  # verdicts, the chosen pair, the shelf
            else:
                self._left_layout.addWidget(self._editor_box, 3)
            self._fit_heights()
            if self._chosen is None:
                self.detail_title.setText(self._choose_text())
        super().resizeEvent(event)

    def _show_chosen(self) -> None:
        pair = self._chosen
        # No empty plot frame (with a meaningless axis) before a verdict is picked.
        self.plot.setVisible(pair is not None and pair[0] in self._reports)
        if pair is None or pair[0] not in self._reports:
            self.detail_title.setText(self._choose_text())
            self.detail_reasons.setText("")
            self.curve_ideal.setData([], [])
            self.curve_amp.setData([], [])
            self.headroom_table.setRowCount(0)
            self.max_input.setText("")
            self.btn_copy.setEnabled(False)
            return
        cid, name = pair
        try:
            v = self._reports[cid].verdict(name)
        except KeyError:
            self._chosen = None
            return self._show_chosen()
        symbol, fg, _bg = VERDICT_LOOK[v.verdict]
        self.detail_title.setText(
            f"<b>{cid}</b> with <b>{v.amp.name}</b>: <span style='color:{fg}'><b>{symbol} {v.verdict}</b></span>"
        )
        self.detail_reasons.setText("<br>".join(f"• {r}" for r in v.reasons))
        self._draw_overlay(cid, v.amp)
        self._fill_headroom(v.headroom)
        self.btn_copy.setEnabled(True)

    def _draw_overlay(self, cid: str, amp: OpAmp) -> None:
        entry = self.state.session.candidate(cid)
        net = Candidate(entry.topology_id, entry.values).netlist
        f0 = self._reports[cid].ideal.item().f0_hz
        if not math.isfinite(f0):
            f0 = 1e3
        f = f0 * np.geomspace(1 / 30, 30, 400)
        h_ideal = transfer_function(net).at_f(f)[0]
        h_amp = amp_transfer_function(net, gbw_hz=amp.gbw_hz, a0=amp.a0, f_p2_hz=amp.f_p2_hz).at_f(f)[0]
        style = self.state.style(cid)
        self.curve_ideal.setData(f, 20 * np.log10(np.abs(h_ideal)))
        self.curve_ideal.setPen(pg.mkPen("#8a8f98", width=1.5, style=QtCore.Qt.PenStyle.DashLine))
        self.curve_amp.setData(f, 20 * np.log10(np.abs(h_amp)))
        self.curve_amp.setPen(style.pen(2.5))
        legend = self.plot.plotItem.legend
        if legend is not None and len(legend.items) > 1:
            legend.items[1][1].setText(f"{cid} with {amp.name}")

    def _fill_headroom(self, room) -> None:
        nodes = list(room.node_peak_v)
        self.headroom_table.setRowCount(len(nodes))
        for r, node in enumerate(nodes):
            lim = room.limits[node]
            spare = room.spare_v(node)
            limiting = node == room.limiting_node
            cells = [
                node + ("  ◀ limits first" if limiting else ""),
                format_value(room.node_peak_v[node], "V", digits=4),
                "±" + format_value(lim.amplitude_v, "V", digits=4),
                format_value(spare, "V", digits=3) + ("  ✗ clips" if spare < 0 else ""),
                lim.what,
            ]
            for c, text in enumerate(cells):
                item = QtWidgets.QTableWidgetItem(text)
                if limiting:
                    f = item.font()
                    f.setBold(True)
                    item.setFont(f)
                if spare < 0 and c == 3:
                    item.setForeground(QtGui.QColor(BAD))
                self.headroom_table.setItem(r, c, item)
        self.headroom_table.resizeColumnsToContents()
        if room.limiting_node is None:
            self.max_input.setText("No node limits the input.")
        else:
            fits = room.max_vin_v >= room.vin_v
            mark = "✓" if fits else "✗"
            colour = GOOD if fits else BAD
            self.max_input.setText(
                f"<span style='color:{colour}'>{mark}</span> Largest input before node <b>{room.limiting_node}</b> "
                f"reaches its limit: <b>{format_value(room.max_vin_v, 'V', digits=4)}</b> peak "
                f"(now {format_value(room.vin_v, 'V', digits=4)}, supply ±{room.supply_v:g} V)."
            )

    # ------------------------------------------------------------------ writing to the session
    def _section(self) -> dict:
        sec = self.state.session.extras.get(SESSION_KEY)
        return dict(sec) if isinstance(sec, dict) else {}

    def _on_supply_committed(self, value: float) -> None:
        sec = self._section()
        sec["supply_v"] = float(value)
        self.state.set_extra(SESSION_KEY, sec, f"supply ±{value:g} V")

    def copy_to_session(self) -> None:
        """Keep the chosen model in the session (its figures copied), as chosen for the candidate."""
        if self._chosen is None:
            return
        cid, name = self._chosen
        amp = next(a for a in self.amps() if a.name == name)
        sec = self._section()
        kept = [a for a in self.session_amps() if a.name.casefold() != amp.name.casefold()] + [amp]
        sec["amps"] = [a.to_json() for a in kept]
        chosen = dict(sec.get("chosen") or {})
        chosen[cid] = amp.name
        sec["chosen"] = chosen
        sec.setdefault("supply_v", self.supply_v)
        self.state.set_extra(SESSION_KEY, sec, f"{cid}: op-amp {amp.name}")


def install(window) -> ShelfPane:
    """Add the shelf pane to a :class:`~bandsmith.app.window.main_window.WorkbenchWindow` as a tab."""
    pane = ShelfPane(window.state, parent=window)
    window.shelf_pane = pane
    window.add_pane("Op-amp shelf", pane)
    from bandsmith.app.window.widgets.amp_overlay import install as install_amp_overlay

    install_amp_overlay(window)
    return pane
