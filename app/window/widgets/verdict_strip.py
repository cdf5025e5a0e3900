"""The verdict strip of a candidate column: every shelf model's verdict at a glance, and the chosen one.

One line per model: the verdict's symbol and word on its tint ("✓ fits", "◐ marginal",
"✗ does not fit": it reads without colour), then the model's name, wrapping onto a second line
when the column is too narrow (the tooltip adds the reasons and margins).
Clicking a line (or Space/Enter on it) chooses that model for the candidate: its response is drawn
on the plots and the strip shows its headroom underneath — the node that limits first and the
largest input; clicking the chosen line again un-chooses it.

The strip only reads the state's :class:`~bandsmith.app.window.verdicts.VerdictBook`; it hides itself while
the shelf has no models or the candidate is switched off.
"""

from __future__ import annotations

import math
from html import escape

from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.bench.fitcheck import DOES_NOT_FIT, FITS, MARGINAL
from bandsmith.common.values import format_value

from bandsmith.app.plots.status import FIT_MARKS
from bandsmith.app.window.theme import BAD, GOOD, MUTED, section_title
from bandsmith.app.window.verdicts import VerdictBook, verdict_tooltip

__all__ = ["VerdictStrip", "VerdictRow", "VERDICT_LOOK"]

# Verdict → (symbol, text colour (:data:`~bandsmith.app.plots.status.FIT_MARKS`), tint); the word is always shown beside the colour.
VERDICT_LOOK = {
    FITS: (*FIT_MARKS[FITS], "#e3f2e7"),
    MARGINAL: (*FIT_MARKS[MARGINAL], "#fbefd9"),
    DOES_NOT_FIT: (*FIT_MARKS[DOES_NOT_FIT], "#f8e0e0"),
}
_PENDING = ("…", "#5f6368", "#eeeeea")


class VerdictRow(QtWidgets.QFrame):
    """One model's line: the verdict on its tint, then the model's name; click to choose it.

    One rich-text label: the verdict (symbol and word, never split) and the name flow together and
    wrap onto a second line when the column is too narrow, so no name is cut short.
    """

    clicked = QtCore.Signal(str)

    def __init__(self, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("verdictRow")
        self.setFocusPolicy(QtCore.Qt.FocusPolicy.StrongFocus)
        self.setCursor(QtCore.Qt.CursorShape.PointingHandCursor)
        lay = QtWidgets.QHBoxLayout(self)
        lay.setContentsMargins(3, 1, 3, 1)
        lay.setSpacing(0)
        self.label = QtWidgets.QLabel(self)
        self.label.setObjectName("verdictText")
        self.label.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.label.setWordWrap(True)
        self.label.setAttribute(QtCore.Qt.WidgetAttribute.WA_TransparentForMouseEvents, True)
        lay.addWidget(self.label, 1)
        self.amp_name = ""
        self.verdict = ""
        self.badge_text = ""
        self.chosen = False
        self._look: tuple | None = None

    def show_verdict(self, amp_name: str, verdict: str | None, tooltip: str, *, chosen: bool) -> None:
        """Show a model's verdict (None: not computed yet); nothing is redrawn when nothing changed."""
        look = (amp_name, verdict, tooltip, chosen)
        if look == self._look:
            return
        self._look = look
        self.amp_name = amp_name
        self.verdict = verdict or ""
        self.chosen = chosen
        symbol, fg, bg = VERDICT_LOOK.get(verdict, _PENDING) if verdict else _PENDING
        word = verdict or "checking"
        self.badge_text = f"{symbol} {word}"
        badge = escape(self.badge_text).replace(" ", "&nbsp;")
        name = escape(amp_name)
        if chosen:
            name = f"<b>▸&nbsp;{name}</b>"
        self.label.setText(
            f"<span style='color:{fg}; background-color:{bg}; font-weight:600'>&nbsp;{badge}&nbsp;</span>&nbsp; {name}"
        )
        frame = "border: 1.5px solid #202124; border-radius: 4px; background: #f1f3f4;" if chosen else "border: 1.5px solid transparent;"
        self.setStyleSheet(f"QFrame#verdictRow {{ {frame} }}")
        how = "Click to take it off the plots." if chosen else "Click to draw the candidate with this op-amp on the plots."
        self.setToolTip(f"{tooltip}\n\n{how}" if tooltip else how)

    def text(self) -> str:
        """The line as a reader sees it: "✓ fits  generic 1 MHz bipolar"."""
        return f"{self.badge_text}  {self.amp_name}"

    def mousePressEvent(self, event) -> None:  # noqa: N802 - Qt's name
        if event.button() == QtCore.Qt.MouseButton.LeftButton:
            self.clicked.emit(self.amp_name)
            event.accept()
            return
        super().mousePressEvent(event)

    def keyPressEvent(self, event) -> None:  # noqa: N802 - Qt's name
        if event.key() in (QtCore.Qt.Key.Key_Space, QtCore.Qt.Key.Key_Return, QtCore.Qt.Key.Key_Enter):
            self.clicked.emit(self.amp_name)
            return
        super().keyPressEvent(event)


class VerdictStrip(QtWidgets.QWidget):
    """The shelf's verdicts for one candidate, for its column."""

    def __init__(self, state, candidate_id: str, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("verdictStrip")
        self.state = state
        self.candidate_id = candidate_id
        self.book = VerdictBook.of(state)
        self.rows: list[VerdictRow] = []
        self._shown: tuple | None = None

        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(1)
        head = QtWidgets.QHBoxLayout()
        title = section_title(self, "Op-amps on the shelf")
        title.setToolTip("Each shelf model against this candidate at the session's input level and supply.\n"
                         "Click one to draw the candidate with it on the plots and see its headroom.")
        self.status = QtWidgets.QLabel(self)
        self.status.setObjectName("verdictStatus")
        self.status.setStyleSheet(f"color: {MUTED};")
        # As wide as its longest text, always: "updating…" coming and going after each edit then
        # moves nothing (a label of fixed size asks for no relayout of the column).
        fm = self.status.fontMetrics()
        self.status.setFixedSize(max(fm.horizontalAdvance(t) for t in ("checking…", "updating…")) + 4, fm.height())
        head.addWidget(title)
        head.addStretch(1)
        head.addWidget(self.status)
        lay.addLayout(head)
        self._rows_box = QtWidgets.QVBoxLayout()
        self._rows_box.setSpacing(3)  # a wrapped name stays apart from the next model's line
        lay.addLayout(self._rows_box)
        self.headroom = QtWidgets.QLabel(self)
        self.headroom.setObjectName("chosenHeadroom")
        self.headroom.setWordWrap(True)
        self.headroom.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.headroom.hide()
        lay.addWidget(self.headroom)

        self.book.changed.connect(self.refresh)
        self.book.chosen_changed.connect(self._on_chosen_changed)
        state.analyses_changed.connect(self.refresh)
        self.refresh()

    # ------------------------------------------------------------------ reading (tests, reports)
    def row(self, amp_name: str) -> VerdictRow | None:
        key = amp_name.casefold()
        return next((r for r in self.rows if r.amp_name.casefold() == key), None)

    def row_text(self, amp_name: str) -> str:
        r = self.row(amp_name)
        return "" if r is None else r.text()

    # ------------------------------------------------------------------ drawing
    def _on_chosen_changed(self, candidate_id: str, _name: str) -> None:
        if candidate_id == self.candidate_id:
            self.refresh()

    def _entry(self):
        for c in self.state.session.candidates:
            if c.id == self.candidate_id:
                return c
        return None

    def refresh(self) -> None:
        entry = self._entry()
        amps = self.book.amps()
        if entry is None or not entry.enabled or not amps:
            self.hide()
            return
        report = self.book.report(self.candidate_id)
        current = self.book.is_current(self.candidate_id)
        chosen = self.book.chosen(self.candidate_id)
        self._show_status(report, current)
        # After an edit only the status changes until the new verdicts come: leave the rest be.
        last = self._shown
        if last is not None and last[0] is report and last[1:] == (chosen, amps) and self.isVisible():
            return
        self._shown = (report, chosen, amps)
        while len(self.rows) < len(amps):
            r = VerdictRow(self)
            r.clicked.connect(self._on_row_clicked)
            self._rows_box.addWidget(r)
            self.rows.append(r)
        while len(self.rows) > len(amps):
            r = self.rows.pop()
            self._rows_box.removeWidget(r)
            r.deleteLater()
        for r, a in zip(self.rows, amps):
            v = None
            if report is not None:
                try:
                    v = report.verdict(a.name)
                except KeyError:
                    v = None
            is_chosen = chosen is not None and chosen.casefold() == a.name.casefold()
            r.show_verdict(a.name, v.verdict if v is not None else None, verdict_tooltip(v) if v is not None else "", chosen=is_chosen)
        self._show_headroom(chosen, report)
        self.show()

    def _show_status(self, report, current: bool) -> None:
        text = "" if current else "checking…" if report is None else "updating…"
        if text != self.status.text():
            self.status.setText(text)

    def _show_headroom(self, chosen: str | None, report) -> None:
        v = None
        if chosen is not None and report is not None:
            try:
                v = report.verdict(chosen)
            except KeyError:
                v = None
        if v is None:
            self.headroom.hide()
            self.headroom.setText("")
            return
        room = v.headroom
        lines = []
        fig = v.actual.item()
        if math.isfinite(fig.f0_hz):
            lines.append(
                f"<span style='color:{MUTED}'>With it (the pale band on the plots):</span> f0 "
                f"{format_value(fig.f0_hz, 'Hz', digits=4)}, Q {fig.q:.3g}, gain {fig.gain_center_db:+.2f} dB"
            )
        if room.limiting_node is None:
            lines.append("<b>Headroom</b>: no node limits the input.")
        else:
            fits = room.max_vin_v >= room.vin_v
            mark, colour = ("✓", GOOD) if fits else ("✗", BAD)
            lines.append(
                f"<b>Headroom</b>: node <b>{escape(room.limiting_node)}</b> limits first; input up to "
                f"<b>{format_value(room.max_vin_v, 'V', digits=3)}</b> peak "
                f"<span style='color:{colour}'>{mark}</span> (now {format_value(room.vin_v, 'V', digits=3)}, "
                f"supply ±{room.supply_v:g} V)"
            )
        self.headroom.setText("<br>".join(lines))
        self.headroom.setToolTip(
            "\n".join(
                f"{n}: peak {format_value(room.node_peak_v[n], 'V', digits=3)} of ±{format_value(room.limits[n].amplitude_v, 'V', digits=3)}"
                f" ({room.limits[n].what})"
                for n in room.node_peak_v
            )
        )
        self.headroom.show()

    def headroom_text(self) -> str:
        """The chosen model's headroom line as plain text ("" when none is chosen)."""
        if not self.headroom.text():
            return ""
        doc = QtGui.QTextDocument()
        doc.setHtml(self.headroom.text())
        return doc.toPlainText()

    # ------------------------------------------------------------------ choosing
    def _on_row_clicked(self, amp_name: str) -> None:
        self.state.set_current(self.candidate_id)
        if self.book.chosen(self.candidate_id) == amp_name:
            self.book.choose(self.candidate_id, None)
        else:
            self.book.choose(self.candidate_id, amp_name)
