"""The at-a-glance comparison: one row per candidate with its verdict and the figures behind it.

Every number comes from :func:`bandsmith.app.document.comparison.comparison_of` (the verdicts of
:mod:`bandsmith.verdict`); the table only formats. Columns: rank (★ marks the recommended candidate),
candidate, verdict, the f0, Q and gain errors against the target (with the session's op-amp when it
has a GBW), the required GBW, the yield under the verdict limits' part tolerances, the resistor and
capacitor spreads, the parts count and whether an inductor is needed. Above the table a line says
which candidate is recommended and why (or why none); a button opens the limits.

The table is as tall as its rows (no scrolling up to :data:`MAX_ROWS`); choosing a row makes that
candidate the current one.
"""

from __future__ import annotations

import math

from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.common.values import format_value
from bandsmith.verdict import BUILDABLE, MARGINAL, NOT_BUILDABLE

from bandsmith.app.document.comparison import CandidateJudgement, SessionComparison, comparison_of
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.plots.status import VERDICT_MARKS
from bandsmith.app.window.theme import BAD, GOOD, INK, MUTED, WARN, section_title

__all__ = ["VERDICT_LOOK", "verdict_text", "ComparisonTable", "COLUMNS", "MAX_ROWS", "RECOMMENDED_MARK"]

#: Symbol, text colour (:data:`~bandsmith.app.plots.status.VERDICT_MARKS`) and a light ground of each verdict.
VERDICT_LOOK = {
    BUILDABLE: (*VERDICT_MARKS[BUILDABLE], "#e5f3e8"),
    MARGINAL: (*VERDICT_MARKS[MARGINAL], "#fbf0dc"),
    NOT_BUILDABLE: (*VERDICT_MARKS[NOT_BUILDABLE], "#fbe6e5"),
}
RECOMMENDED_MARK = "★"
MAX_ROWS = 8

#: (header, tooltip) of each column.
COLUMNS = (
    ("#", "Rank: 1 is best (by verdict, then the figure of merit). ★ marks the recommended candidate."),
    ("Candidate", "The candidate's id (click a row to select it)."),
    ("Verdict", "buildable ●, marginal ◐ or not buildable ✕, judged against the verdict limits (Edit ▸ Verdict limits…)."),
    ("f0 err %", "Centre-frequency error against the target, per cent (with the session's op-amp when it has a GBW)."),
    ("Q err %", "Q error against the target, per cent."),
    ("gain err dB", "Centre-gain error against the target, dB."),
    ("GBW need", "The op-amp gain-bandwidth that keeps f0, Q and gain within the design tolerances."),
    ("yield", "Share of builds inside the yield window with ordinary part tolerances (the limits' tolerances)."),
    ("R spread", "Largest over smallest resistor."),
    ("C spread", "Largest over smallest capacitor."),
    ("parts", "Parts to buy: resistors, capacitors, inductors and op-amps."),
    ("L", "Whether the circuit needs an inductor."),
)


def verdict_text(verdict: str) -> str:
    """A verdict with its symbol ("● buildable")."""
    return f"{VERDICT_LOOK[verdict][0]} {verdict}"


def _ratio(x: float | None) -> str:
    if x is None:
        return "—"
    return f"{x:,.0f}".replace(",", " ") if x >= 100 else f"{x:.3g}"


def _flag(v, *codes: str) -> str | None:
    """The colour of the heaviest reason among ``codes`` (prefixes), None when there is none."""
    hit = [r.weight for r in v.reasons if any(r.code.startswith(c) for c in codes)]
    if not hit:
        return None
    return VERDICT_LOOK[NOT_BUILDABLE if NOT_BUILDABLE in hit else MARGINAL][1]


def _signed(x: float, digits: int = 2) -> str:
    """A signed deviation with a true minus sign; a value that rounds to zero has no sign."""
    if not math.isfinite(x):
        return "—"
    if abs(x) < 0.5 * 10.0**-digits:
        return f"{0.0:.{digits}f}"
    return f"{x:+.{digits}f}".replace("-", "−")


def _looks_alike(a: QtWidgets.QTableWidgetItem, b: QtWidgets.QTableWidgetItem, *, bold_too: bool) -> bool:
    """Whether two cells show the same (text, colours, tooltip, row id; the boldness too unless
    the selection mark sets it, as in the id column)."""
    role = QtCore.Qt.ItemDataRole
    same = (a.text() == b.text() and a.toolTip() == b.toolTip() and a.foreground() == b.foreground()
            and a.background() == b.background() and a.data(role.UserRole) == b.data(role.UserRole))
    if bold_too:
        same = same and a.font().bold() == b.font().bold()
    return same


class ComparisonTable(QtWidgets.QWidget):
    """The recommendation line and the table of candidates (see the module notes).

    Signals
    -------
    limits_requested()
        The user asked for the verdict limits (the window opens its dialog).
    """

    limits_requested = QtCore.Signal()

    def __init__(self, state: WorkbenchState, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("comparisonTable")
        self.state = state
        self.comparison: SessionComparison | None = None
        lay = QtWidgets.QHBoxLayout(self)
        lay.setContentsMargins(6, 4, 6, 4)
        lay.setSpacing(10)
        side = QtWidgets.QVBoxLayout()
        side.setSpacing(2)
        head = QtWidgets.QHBoxLayout()
        self.title = section_title(self, "Which to build")
        self.limits_button = QtWidgets.QToolButton(self)
        self.limits_button.setObjectName("verdictLimits")
        self.limits_button.setText("Limits…")
        self.limits_button.setToolTip("Show or change what makes a candidate marginal or not buildable.")
        self.limits_button.clicked.connect(self.limits_requested.emit)
        head.addWidget(self.title)
        head.addStretch(1)
        head.addWidget(self.limits_button)
        side.addLayout(head)
        self.summary = QtWidgets.QLabel(self)
        self.summary.setObjectName("recommendation")
        self.summary.setWordWrap(True)
        self.summary.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.summary.setAlignment(QtCore.Qt.AlignmentFlag.AlignLeft | QtCore.Qt.AlignmentFlag.AlignTop)
        self.summary.setSizePolicy(QtWidgets.QSizePolicy.Policy.Ignored, QtWidgets.QSizePolicy.Policy.Preferred)
        side.addWidget(self.summary, 1)

        self.max_rows = MAX_ROWS
        self.table = QtWidgets.QTableWidget(0, len(COLUMNS), self)
        self.table.setObjectName("comparisonGrid")
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        # No selection highlight (it would hide the verdict colours): the selected candidate's row
        # is marked with ▸ and a bold id instead; a click selects the candidate.
        self.table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.table.setFocusPolicy(QtCore.Qt.FocusPolicy.NoFocus)
        self.table.verticalHeader().hide()
        self.table.setShowGrid(False)
        self.table.setAlternatingRowColors(False)
        self.table.setWordWrap(False)
        self.table.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAsNeeded)
        self.table.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAsNeeded)
        self.table.setSizePolicy(QtWidgets.QSizePolicy.Policy.Fixed, QtWidgets.QSizePolicy.Policy.Fixed)
        hh = self.table.horizontalHeader()
        hh.setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.Fixed)  # sized by _fit_size
        hh.setStretchLastSection(False)
        hh.setHighlightSections(False)
        for i, (text, tip) in enumerate(COLUMNS):
            item = QtWidgets.QTableWidgetItem(text)
            item.setToolTip(tip)
            self.table.setHorizontalHeaderItem(i, item)
        self.table.verticalHeader().setDefaultSectionSize(self.table.fontMetrics().height() + 8)
        self.table.cellClicked.connect(self._on_clicked)
        lay.addWidget(self.table, 0, QtCore.Qt.AlignmentFlag.AlignTop)
        lay.addLayout(side, 1)

        state.analyses_changed.connect(self.refresh)
        state.current_changed.connect(self._select_current)
        self.refresh()

    # -- state → view -------------------------------------------------------------------
    def refresh(self) -> None:
        """Show the comparison of the state's present session."""
        comp = self.comparison = comparison_of(self.state.document)
        self._show_summary(comp)
        self.table.blockSignals(True)
        changed = self.table.rowCount() != len(comp.rows)
        self.table.setRowCount(len(comp.rows))
        for i, row in enumerate(comp.rows):
            changed |= self._fill_row(i, row)
        self.table.blockSignals(False)
        if changed:
            self._select_current(self.state.current_id)

    def _show_summary(self, comp: SessionComparison) -> None:
        if comp.recommended is not None:
            colour, lead = GOOD, f"{RECOMMENDED_MARK} Recommended: "
        else:
            colour, lead = BAD, f"{VERDICT_MARKS[NOT_BUILDABLE][0]} Nothing to recommend: "
        reason = comp.reason.replace("&", "&amp;").replace("<", "&lt;")
        with_what = "ideal op-amp" if comp.figures_with is None else f"figures with the {format_value(comp.figures_with, 'Hz')} op-amp"
        text = f'<span style="color:{colour}; font-weight:600">{lead}</span>{reason} <span style="color:{MUTED}">({with_what})</span>'
        if comp.problem:
            text += f'<br/><span style="color:{WARN}">⚠ {comp.problem}</span>'
        if text != self.summary.text():  # unchanged: no relayout
            self.summary.setText(text)
            self.summary.setToolTip(comp.reason)

    def _item(self, text: str, *, tip: str = "", colour: str | None = None, bold: bool = False, right: bool = True) -> QtWidgets.QTableWidgetItem:
        item = QtWidgets.QTableWidgetItem(text)
        align = QtCore.Qt.AlignmentFlag.AlignRight if right else QtCore.Qt.AlignmentFlag.AlignLeft
        item.setTextAlignment(align | QtCore.Qt.AlignmentFlag.AlignVCenter)
        if tip:
            item.setToolTip(tip)
        if colour:
            item.setForeground(QtGui.QBrush(QtGui.QColor(colour)))
        if bold:
            f = item.font()
            f.setBold(True)
            item.setFont(f)
        return item

    def _fill_row(self, i: int, row: CandidateJudgement) -> bool:
        """Show ``row`` in table row ``i``; True when a cell changed."""
        shown = getattr(self, "_shown_rows", None)
        if shown is None:
            shown = self._shown_rows = {}
        key = (row.id, self.state.style(row.id), row.id == self.state.current_id)
        try:
            same = shown.get(i, (None, None))[0] == key and bool(shown[i][1] == row) and self.table.item(i, 0) is not None
        except (TypeError, ValueError):  # a row that cannot be compared counts as changed
            same = False
        if same:
            return False  # the row judged as it was shown (an edit of another candidate)
        shown[i] = (key, row)
        v = row.verdict
        reasons = "\n".join(f"• {r.text}" for r in v.reasons) if v is not None else ""
        tip = f"{row.id}: {v.verdict}" + (f"\n{reasons}" if reasons else "") if v is not None else f"{row.id}: switched off, not judged"
        rank = "" if row.rank is None else (f"{RECOMMENDED_MARK}{row.rank}" if row.recommended else str(row.rank))
        cells = [
            self._item(rank, tip=tip, bold=row.recommended, colour=GOOD if row.recommended else None),
            self._item(row.id, tip=tip, bold=row.recommended, right=False, colour=self.state.style(row.id).colour),
        ]
        if v is None:
            cells.append(self._item("off (not judged)", tip=tip, colour=MUTED, right=False))
            cells += [self._item("—", colour=MUTED) for _ in range(5)]
            cells += [self._item(_ratio(row.r_spread), colour=MUTED), self._item(_ratio(row.c_spread), colour=MUTED)]
        else:
            sym, colour, ground = VERDICT_LOOK[v.verdict]
            vi = self._item(verdict_text(v.verdict), tip=tip, colour=colour, bold=True, right=False)
            vi.setBackground(QtGui.QBrush(QtGui.QColor(ground)))
            cells.append(vi)
            for key, digits in (("f0_pct", 2), ("q_pct", 2), ("gain_db", 2)):
                if row.errors is None:
                    cells.append(self._item("—", colour=MUTED))
                else:
                    ok = row.errors_ok[key]
                    cells.append(self._item(_signed(row.errors[key], digits), colour=INK if ok else BAD, bold=not ok,
                                            tip="within the design tolerance" if ok else "beyond the design tolerance"))
            gbw = v.required_gbw_hz
            cells.append(self._item(format_value(gbw, "Hz", digits=3) if gbw is not None else "none", colour=_flag(v, "gbw")))
            y = v.yield_fraction
            how = "" if y is None else ("Monte Carlo" if v.yield_mc is not None else "first-order estimate")
            cells.append(self._item("—" if y is None else f"{100 * y:.1f} %", colour=_flag(v, "yield"), tip=how))
            cells.append(self._item(_ratio(row.r_spread), colour=_flag(v, "r_spread")))
            cells.append(self._item(_ratio(row.c_spread), colour=_flag(v, "c_spread")))
        cells.append(self._item(str(row.part_count)))
        cells.append(self._item("yes" if row.needs_inductor else "no", right=False))
        changed = False
        for c, item in enumerate(cells):
            item.setData(QtCore.Qt.ItemDataRole.UserRole, row.id)
            if c == 1 and row.id == self.state.current_id:
                item.setText("▸ " + row.id)  # as the selection mark shows it
            old = self.table.item(i, c)
            if old is not None and _looks_alike(old, item, bold_too=c != 1):
                continue  # the cell shows the same: leave it (no relayout, no repaint)
            changed = True
            self.table.setItem(i, c, item)
        return changed

    def _fit_size(self) -> None:
        """As wide as its columns and as tall as its rows (up to MAX_ROWS; more scroll)."""
        hh = self.table.horizontalHeader()
        self.table.resizeColumnsToContents()
        # The id column holds "▸ id" in bold for any row, so selecting another one moves nothing.
        bold = QtGui.QFont(self.table.font())
        bold.setBold(True)
        fm = QtGui.QFontMetrics(bold)
        ids = [self.row_id(i) for i in range(self.table.rowCount())]
        widest = max([fm.horizontalAdvance("▸ " + i) for i in ids] + [hh.sectionSize(1) - 16])
        self.table.setColumnWidth(1, widest + 16)
        rows = min(self.table.rowCount(), self.max_rows)
        frame = 2 * self.table.frameWidth()
        h = hh.sizeHint().height() + rows * self.table.verticalHeader().defaultSectionSize() + frame
        w = sum(hh.sectionSize(c) for c in range(hh.count())) + frame
        if self.table.rowCount() > self.max_rows:
            w += self.table.verticalScrollBar().sizeHint().width()
        self.table.setFixedSize(w, h)

    def set_max_rows(self, rows: int) -> None:
        """Show at most ``rows`` rows without scrolling (the window lowers it on a short screen,
        so the board and the plots below keep their height)."""
        rows = max(1, min(int(rows), MAX_ROWS))
        if rows != self.max_rows:
            self.max_rows = rows
            self._fit_size()

    def _select_current(self, cid: str) -> None:
        """Mark the selected candidate's row: ▸ before its id, in bold."""
        for i in range(self.table.rowCount()):
            item = self.table.item(i, 1)
            rid = self.row_id(i)
            item.setText(("▸ " if rid == cid else "") + rid)
            f = item.font()
            f.setBold(rid == cid or (self.comparison is not None and self.comparison.recommended == rid))
            item.setFont(f)
        self._fit_size()

    # -- reading (tests and the window) ----------------------------------------------------
    def row_id(self, i: int) -> str:
        item = self.table.item(i, 1)
        return item.data(QtCore.Qt.ItemDataRole.UserRole) if item is not None else ""

    def cell_text(self, i: int, column: str) -> str:
        c = [h for h, _ in COLUMNS].index(column)
        item = self.table.item(i, c)
        return item.text() if item is not None else ""

    # -- user input ---------------------------------------------------------------------
    def _on_clicked(self, row: int, _column: int) -> None:
        cid = self.row_id(row)
        if cid:
            self.state.set_current(cid)
