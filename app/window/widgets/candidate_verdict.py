"""A candidate column's verdict: a one-line badge under its title, and the details further down.

:class:`VerdictBadge` shows the verdict (symbol and colour of :data:`~bandsmith.app.window.widgets.comparison_table.VERDICT_LOOK`)
and the rank, ★ for the recommended candidate. :class:`VerdictDetails` lists the reasons (each with
its number, from :mod:`bandsmith.verdict`), the design notes of the circuit's design procedure for
the target, and — for the current candidate only — a small table of the normalised sensitivities
S(f0), S(Q) and S(gain) of every part (:attr:`bandsmith.analysis.analyzer.Analysis.sensitivity`,
``S = ∂ln y / ∂ln x``). Both read :func:`bandsmith.app.document.comparison.comparison_of`.
"""

from __future__ import annotations

import math
from html import escape

from PySide6 import QtCore, QtWidgets

from bandsmith.app.document.comparison import comparison_of
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.theme import INK, MUTED, section_title
from bandsmith.app.window.widgets.comparison_table import RECOMMENDED_MARK, VERDICT_LOOK

__all__ = ["VerdictBadge", "VerdictDetails", "SENSITIVITY_COLUMNS"]

#: Header and sensitivity key of each column of the sensitivity table.
SENSITIVITY_COLUMNS = (("part", None), ("S(f0)", "f0"), ("S(Q)", "q"), ("S(gain)", "gain"))
# |S| at or above this is shown in bold: a 1 % part moves the figure by 1 % or more.
_STRONG = 1.0


def _same(row, shown) -> bool:
    """Whether comparison row ``row`` shows as ``shown`` did (both judged the same way); a row
    that cannot be compared counts as changed."""
    if row is None or shown is None:
        return False
    try:
        return bool(row == shown)
    except (TypeError, ValueError):
        return False


class VerdictBadge(QtWidgets.QLabel):
    """The verdict of candidate ``candidate_id`` on one line (fixed height, so columns line up)."""

    def __init__(self, state: WorkbenchState, candidate_id: str, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("verdictBadge")
        self.state = state
        self.candidate_id = candidate_id
        self.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.setFixedHeight(self.fontMetrics().height() + 8)
        state.analyses_changed.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        row = comparison_of(self.state.document).row(self.candidate_id)
        if _same(row, getattr(self, "_shown_row", None)):
            return
        self._shown_row = row
        if row is None or row.verdict is None:
            self.setText(f'<span style="color:{MUTED}">not judged (switched off)</span>')
            self.setStyleSheet("")
            self.setToolTip("")
            return
        sym, colour, ground = VERDICT_LOOK[row.verdict.verdict]
        # The recommended candidate is rank 1: its badge says "recommended" instead of the rank.
        tail = (f'<b style="color:{INK}"> · {RECOMMENDED_MARK} recommended</b>' if row.recommended
                else f'<span style="color:{MUTED}"> · rank {row.rank}</span>')
        self.setText(f'<b style="color:{colour}">{sym} {row.verdict.verdict}</b>{tail}')
        sheet = f"QLabel#verdictBadge {{ background: {ground}; border-radius: 3px; padding: 1px 4px; }}"
        if sheet != self.styleSheet():  # a new style sheet re-polishes the widget: only on a change
            self.setStyleSheet(sheet)
        self.setToolTip("\n".join(f"• {r.text}" for r in row.verdict.reasons) or "No limit crossed.")

    @property
    def verdict(self) -> str:
        row = comparison_of(self.state.document).row(self.candidate_id)
        return "" if row is None or row.verdict is None else row.verdict.verdict


def set_pinned_text(label: QtWidgets.QLabel, html: str) -> None:
    """Set a label's text, its size pinned to what the text needs at its width.

    Qt lays out again every parent of a widget whose size is not fixed each time its text
    changes (the column, the board, the scroll area: the whole board repainted); pinned, a new
    text of the same size (a part edit changes the numbers, rarely the lines) costs no layout, and
    a new size re-pins it, which does lay them out. The height is what a word-wrapped or rich-text
    label needs at its width, else its size hint's. Columns have a fixed width, so the width holds.
    """
    if label.text() == html:
        return
    label.setText(html)
    w = label.width()
    if label.isVisible() and w > 0:
        h = label.heightForWidth(w)
        label.setFixedSize(w, h if h >= 0 else label.sizeHint().height())


class VerdictDetails(QtWidgets.QWidget):
    """Reasons, design notes and (current candidate only) the sensitivity table."""

    def __init__(self, state: WorkbenchState, candidate_id: str, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("verdictDetails")
        self.state = state
        self.candidate_id = candidate_id
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(2)
        title = section_title(self, "Why this verdict")
        lay.addWidget(title)
        self.reasons = self._text("verdictReasons")
        lay.addWidget(self.reasons)
        notes_title = section_title(self, "Design notes")
        lay.addWidget(notes_title)
        self.notes = self._text("designNotes")
        self.notes.setStyleSheet(f"color: {MUTED};")
        lay.addWidget(self.notes)
        self.sens_title = section_title(self, "Sensitivities")
        self.sens_title.setToolTip("Sensitivities of the selected candidate, S = ∂ln(figure)/∂ln(part): a part 1 % high moves the figure by about S %. Bold: |S| ≥ 1.")
        lay.addWidget(self.sens_title)
        self.sensitivities = QtWidgets.QTableWidget(0, len(SENSITIVITY_COLUMNS), self)
        self.sensitivities.setObjectName("sensitivities")
        self.sensitivities.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.sensitivities.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.sensitivities.setFocusPolicy(QtCore.Qt.FocusPolicy.NoFocus)
        self.sensitivities.verticalHeader().hide()
        self.sensitivities.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.sensitivities.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.sensitivities.setHorizontalHeaderLabels([h for h, _ in SENSITIVITY_COLUMNS])
        self.sensitivities.horizontalHeader().setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.Stretch)
        self.sensitivities.verticalHeader().setDefaultSectionSize(self.fontMetrics().height() + 4)
        self.sensitivities.setToolTip(self.sens_title.toolTip())
        lay.addWidget(self.sensitivities)
        state.analyses_changed.connect(self.refresh)
        state.current_changed.connect(lambda _cid: self._show_sensitivities())
        self.refresh()

    def _text(self, name: str) -> QtWidgets.QLabel:
        label = QtWidgets.QLabel(self)
        label.setObjectName(name)
        label.setWordWrap(True)
        label.setTextFormat(QtCore.Qt.TextFormat.RichText)
        label.setAlignment(QtCore.Qt.AlignmentFlag.AlignLeft | QtCore.Qt.AlignmentFlag.AlignTop)
        return label

    def refresh(self) -> None:
        row = comparison_of(self.state.document).row(self.candidate_id)
        if _same(row, getattr(self, "_shown_row", None)):
            self._show_sensitivities()
            return
        self._shown_row = row
        if row is None or row.verdict is None:
            set_pinned_text(self.reasons, f'<span style="color:{MUTED}">switched off: not judged</span>')
        elif not row.verdict.reasons:
            set_pinned_text(self.reasons, f'<span style="color:{MUTED}">no limit crossed</span>')
        else:
            items = []
            for r in row.verdict.reasons:
                sym, colour, _ = VERDICT_LOOK[r.weight]
                items.append(f'<span style="color:{colour}">{sym}</span> {escape(r.text)}')
            set_pinned_text(self.reasons, "<br/>".join(items))
        notes = row.notes if row is not None else ()
        set_pinned_text(self.notes, "<br/>".join(f"· {escape(n)}" for n in notes) if notes else f'<span style="color:{MUTED}">none</span>')
        self._show_sensitivities()

    def _show_sensitivities(self) -> None:
        current = self.state.current_id == self.candidate_id
        res = self.state.result(self.candidate_id)
        sens = res.analysis.sensitivity if current and res is not None and res.ok else None
        shown = getattr(self, "_shown_sens", None)
        if shown is not None and shown[0] is sens:
            return  # the same table (or none) as shown
        self._shown_sens = (sens,)
        self.sens_title.setVisible(sens is not None)
        self.sensitivities.setVisible(sens is not None)
        if sens is None:
            return
        refs = list(sens.get("f0", {}))
        t = self.sensitivities
        t.setRowCount(len(refs))
        for i, ref in enumerate(refs):
            t.setItem(i, 0, QtWidgets.QTableWidgetItem(ref))
            for c, (_, key) in enumerate(SENSITIVITY_COLUMNS[1:], start=1):
                s = float(sens.get(key, {}).get(ref, math.nan))
                if not math.isfinite(s):
                    text = "—"
                elif abs(s) < 0.005:  # rounds to zero: no sign
                    text = "0.00"
                else:
                    text = f"{s:+.2f}".replace("-", "−")
                item = QtWidgets.QTableWidgetItem(text)
                item.setTextAlignment(QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
                if math.isfinite(s) and abs(s) >= _STRONG:
                    f = item.font()
                    f.setBold(True)
                    item.setFont(f)
                t.setItem(i, c, item)
        h = t.horizontalHeader().sizeHint().height() + len(refs) * t.verticalHeader().defaultSectionSize() + 2 * t.frameWidth()
        t.setFixedHeight(h)
