"""One column of the candidates board: a candidate's verdict (:mod:`bandsmith.app.window.widgets.candidate_verdict`),
switches, parts, figures, amplifier needs, the verdicts of the shelf's op-amps
(:mod:`bandsmith.app.window.widgets.verdict_strip`), and why the candidate got its verdict (reasons,
design notes, and the sensitivities while it is the selected candidate).

The column follows its candidate by id: it reads the entry from each new session and the result
from the state after each analysis, and writes to the state only when the user edits something.
"""

from __future__ import annotations


from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.common.units import part_unit
from bandsmith.circuits import get_topology
from bandsmith.common.eseries import SERIES_NAMES
from bandsmith.files.session import CandidateEntry, Session
from bandsmith.common.values import format_value, parse_nonnegative, parse_positive

from bandsmith.app.document.results import CandidateResult, target_errors
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.theme import BAD, GOOD, MUTED, WARN, CandidateStyle, error_label, section_title
from bandsmith.app.window.widgets.candidate_verdict import VerdictBadge, VerdictDetails, set_pinned_text
from bandsmith.app.window.widgets.value_field import ValueField
from bandsmith.app.window.widgets.verdict_strip import VerdictStrip

__all__ = ["CandidateColumn", "style_swatch"]

_COLUMN_WIDTH = 248
_KIND_WORD = {"R": "resistance, in ohm (Ω)", "C": "capacitance, in farad (F)", "L": "inductance, in henry (H)"}
_KIND_EXAMPLE = {"R": "4k7, 4.7k, 4700, 4.7e3", "C": "10n, 10nF, 0.01u, 1e-8", "L": "10m, 10mH, 0.01"}


def style_swatch(style: CandidateStyle, width: int = 34, height: int = 14) -> QtGui.QPixmap:
    """A small picture of a candidate's line (colour and dash pattern) for labels and legends."""
    pm = QtGui.QPixmap(width, height)
    pm.fill(QtCore.Qt.GlobalColor.transparent)
    p = QtGui.QPainter(pm)
    p.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing)
    pen = QtGui.QPen(QtGui.QColor(style.colour), 3.0, style.pen_style)
    p.setPen(pen)
    p.drawLine(2, height // 2, width - 2, height // 2)
    p.end()
    return pm


def _flagged(text: str, ok: bool) -> str:
    colour = GOOD if ok else WARN
    mark = "✓" if ok else "⚠"
    return f'<span style="color:{colour}">{mark} {text}</span>'


class CandidateColumn(QtWidgets.QFrame):
    """The board's column for candidate ``candidate_id``."""

    def __init__(self, state: WorkbenchState, candidate_id: str, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("candidateColumn")
        self.state = state
        self.candidate_id = candidate_id
        entry = state.session.candidate(candidate_id)
        self.topology = get_topology(entry.topology_id)
        self.setFixedWidth(_COLUMN_WIDTH)
        self.setSizePolicy(QtWidgets.QSizePolicy.Policy.Fixed, QtWidgets.QSizePolicy.Policy.Preferred)

        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(8, 6, 8, 8)
        lay.setSpacing(4)

        self._build_header(lay)  # line sample, id, circuit
        self.verdict_badge = VerdictBadge(state, candidate_id, self)  # the candidate's verdict and rank
        # Fixed in both directions: a rank that changes (another candidate edited) repaints the
        # badge without laying out this column again.
        self.verdict_badge.setFixedWidth(_COLUMN_WIDTH - 16 - 4)
        lay.addWidget(self.verdict_badge)
        self._build_switches(lay)  # on/off and pin on the first row, variant actions on the second
        self._build_snap_row(lay)
        self._build_part_fields(lay)
        self._build_figures(lay)
        self._build_needs(lay)

        # Every shelf op-amp's verdict; choosing one draws it on the plots (app/window/verdict_strip.py).
        self.verdict_strip = VerdictStrip(state, candidate_id, self)
        lay.addWidget(self.verdict_strip)
        self.problem = error_label(self)
        lay.addWidget(self.problem)
        # Why the candidate got its verdict: reasons, design notes, sensitivities (selected only).
        self.verdict_details = VerdictDetails(state, candidate_id, self)
        lay.addWidget(self.verdict_details)
        lay.addStretch(1)

        self.active.clicked.connect(lambda checked: self.state.set_enabled(self.candidate_id, checked))
        self.pin.clicked.connect(lambda checked: self.state.set_pinned(self.candidate_id, checked))
        self.dup.clicked.connect(lambda: self.state.duplicate(self.candidate_id))
        self.remove_btn.clicked.connect(lambda: self.state.remove(self.candidate_id))
        self.redo_design.clicked.connect(lambda: self.state.redesign(self.candidate_id))
        self.snap.activated.connect(self._on_snap_activated)
        state.session_changed.connect(self._on_session_changed)
        state.analyses_changed.connect(self._on_analyses_changed)
        state.current_changed.connect(self._on_current_changed)
        self._on_session_changed(state.session)
        self._on_analyses_changed()
        self._on_current_changed(state.current_id)

    def _build_header(self, lay: QtWidgets.QVBoxLayout) -> None:
        """The line sample, the candidate's id and its circuit's short name (two lines high)."""
        head = QtWidgets.QHBoxLayout()
        self.swatch = QtWidgets.QLabel(self)
        self.swatch.setObjectName("swatch")
        # the size of style_swatch's pixmap, fixed: a new pixmap (every refill) lays nothing out again
        self.swatch.setFixedSize(style_swatch(self.state.style(self.candidate_id)).size())
        self.title = QtWidgets.QLabel(self)
        self.title.setObjectName("candidateTitle")
        head.addWidget(self.swatch)
        head.addWidget(self.title, 1)
        lay.addLayout(head)
        self.circuit = QtWidgets.QLabel(self._short_title(), self)
        self.circuit.setToolTip(f"{self.topology.title}\n{self.topology.notes}")
        self.circuit.setStyleSheet(f"color: {MUTED};")
        self.circuit.setWordWrap(True)
        # Two lines for every circuit name, so the rows of all columns line up side by side.
        self.circuit.setFixedHeight(2 * self.circuit.fontMetrics().lineSpacing() + 2)
        self.circuit.setAlignment(QtCore.Qt.AlignmentFlag.AlignLeft | QtCore.Qt.AlignmentFlag.AlignTop)
        lay.addWidget(self.circuit)

    def _build_switches(self, lay: QtWidgets.QVBoxLayout) -> None:
        """Active, Pin and Remove on one row; Duplicate and Redesign on the next."""
        row = QtWidgets.QHBoxLayout()
        row.setSpacing(3)
        self.active = QtWidgets.QCheckBox("Active", self)
        self.active.setObjectName("active")
        self.active.setToolTip("Switch this candidate on or off (off: kept in the session, not analysed or plotted).")
        self.pin = self._tool("Pin", "pin", "Pin: a new target does not redesign this candidate.", checkable=True)
        self.remove_btn = self._tool("Remove", "remove", "Remove this candidate from the session (Undo brings it back).")
        row.addWidget(self.active)
        row.addWidget(self.pin)
        row.addStretch(1)
        row.addWidget(self.remove_btn)
        lay.addLayout(row)
        row2 = QtWidgets.QHBoxLayout()
        row2.setSpacing(3)
        self.dup = self._tool("Duplicate", "duplicate", "Duplicate this candidate to try a variant.")
        self.redo_design = self._tool("Redesign", "redesign", "Choose new parts for the target (parts marked 'keep' stay).")
        row2.addWidget(self.dup)
        row2.addWidget(self.redo_design)
        row2.addStretch(1)
        lay.addLayout(row2)

    def _build_snap_row(self, lay: QtWidgets.QVBoxLayout) -> None:
        """The Parts title and the series the parts are snapped to."""
        snap_row = QtWidgets.QHBoxLayout()
        lab = section_title(self, "Parts")
        snap_row.addWidget(lab)
        snap_row.addStretch(1)
        self.snap = QtWidgets.QComboBox(self)
        self.snap.setObjectName("snap")
        self.snap.addItem("exact", None)
        for name in SERIES_NAMES:
            self.snap.addItem(f"snap {name}", name)
        self.snap.setToolTip("Snap every part to a standard series (IEC 60063), or keep exact values.")
        snap_row.addWidget(self.snap)
        lay.addLayout(snap_row)

    def _build_part_fields(self, lay: QtWidgets.QVBoxLayout) -> None:
        """One row per part: its reference, its value field and its keep box (edits go to the state)."""
        grid = QtWidgets.QGridLayout()
        grid.setHorizontalSpacing(4)
        grid.setVerticalSpacing(2)
        self.fields: dict[str, ValueField] = {}
        self.keeps: dict[str, QtWidgets.QCheckBox] = {}
        for i, comp in enumerate(self.topology.components):
            name = QtWidgets.QLabel(comp.ref, self)
            name.setToolTip(comp.role)
            parse = (lambda t, r=comp.ref: parse_positive(t, field=r)) if comp.required else (lambda t, r=comp.ref: parse_nonnegative(t, field=r))
            f = ValueField(
                comp.ref,
                part_unit(comp.kind),
                parse=parse,
                tooltip=f"{comp.ref}: {comp.role}.\n{_KIND_WORD.get(comp.kind, '')}; type e.g. {_KIND_EXAMPLE.get(comp.kind, '')}.",
                parent=self,
            )
            keep = QtWidgets.QCheckBox("keep", self)
            keep.setObjectName(f"keep_{comp.ref}")
            keep.setToolTip(f"Keep {comp.ref} as it is when this candidate is redesigned.")
            grid.addWidget(name, i, 0, QtCore.Qt.AlignmentFlag.AlignTop | QtCore.Qt.AlignmentFlag.AlignLeft)
            grid.addWidget(f, i, 1)
            grid.addWidget(keep, i, 2, QtCore.Qt.AlignmentFlag.AlignTop)
            grid.setRowMinimumHeight(i, 24)
            f.committed.connect(lambda v, r=comp.ref: self.state.set_part(self.candidate_id, r, v))
            keep.clicked.connect(lambda checked, r=comp.ref: self.state.set_fixed(self.candidate_id, r, checked))
            self.fields[comp.ref] = f
            self.keeps[comp.ref] = keep
        grid.setColumnStretch(1, 1)
        lay.addLayout(grid)

    def _build_figures(self, lay: QtWidgets.QVBoxLayout) -> None:
        """The achieved figures against the target."""
        self.figures_title = section_title(self, "Achieved")
        lay.addWidget(self.figures_title)
        self.figures = QtWidgets.QLabel(self)
        self.figures.setObjectName("figures")
        self.figures.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.figures.setToolTip("Figures measured on the computed response with the session's op-amp; errors against the target, ✓ within tolerance.")
        lay.addWidget(self.figures)

    def _build_needs(self, lay: QtWidgets.QVBoxLayout) -> None:
        """What the op-amp must offer: GBW in large type, then slew rate, current and output swing."""
        needs_title = section_title(self, "Amplifier needs")
        lay.addWidget(needs_title)
        self.need_gbw = QtWidgets.QLabel(self)
        self.need_gbw.setObjectName("needBig")
        self.need_gbw.setToolTip("Smallest op-amp gain-bandwidth (Hz) that keeps f0, Q and gain within tolerance of the ideal design.")
        self.need_flag = QtWidgets.QLabel(self)
        self.need_flag.setWordWrap(True)
        self.needs = QtWidgets.QLabel(self)
        self.needs.setObjectName("needs")
        self.needs.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.needs.setToolTip(
            "Slew rate (V/µs) for a sine of the input level at f0 and for an input step of that height; "
            "peak output current (mA) the op-amp delivers at f0; peak output voltage (V)."
        )
        lay.addWidget(self.need_gbw)
        lay.addWidget(self.need_flag)
        lay.addWidget(self.needs)

    def _tool(self, text: str, name: str, tip: str, *, checkable: bool = False) -> QtWidgets.QToolButton:
        b = QtWidgets.QToolButton(self)
        b.setText(text)
        b.setObjectName(name)
        b.setToolTip(tip)
        b.setCheckable(checkable)
        b.setAutoRaise(False)
        return b

    def _short_title(self) -> str:
        return self.topology.title.split(" (")[0]

    # -- user input ---------------------------------------------------------------------
    def mousePressEvent(self, event) -> None:  # noqa: N802 - Qt's name
        self.state.set_current(self.candidate_id)
        super().mousePressEvent(event)

    def _on_snap_activated(self, index: int) -> None:
        self.state.set_snap(self.candidate_id, self.snap.itemData(index))

    # -- state → view -------------------------------------------------------------------
    def _entry(self, session: Session) -> CandidateEntry | None:
        for c in session.candidates:
            if c.id == self.candidate_id:
                return c
        return None

    def _on_session_changed(self, session: Session) -> None:
        entry = self._entry(session)
        if entry is None:  # about to be removed by the board
            return
        # Another candidate was edited: this column's fields are as they were (a part edit then
        # refills one column, not all of them).
        key = (entry, self.state.style(self.candidate_id))
        if key == getattr(self, "_shown_entry", None):
            return
        self._shown_entry = key
        self.swatch.setPixmap(style_swatch(self.state.style(self.candidate_id)))
        self.title.setText(entry.id)
        self.active.setChecked(entry.enabled)
        self.pin.setChecked(entry.pinned)
        self.snap.setCurrentIndex(max(0, self.snap.findData(entry.snap)))
        for ref, f in self.fields.items():
            f.set_value(entry.values[ref])
            tip = f.edit.toolTip().split("\nNow: ")[0] + f"\nNow: {entry.values[ref]:.6g} {f.unit}"
            if tip != f.edit.toolTip():
                f.edit.setToolTip(tip)
            if self.keeps[ref].isChecked() != (ref in entry.fixed):
                self.keeps[ref].setChecked(ref in entry.fixed)
        if self.property("enabledCandidate") != entry.enabled:  # re-polish (restyle) only on a change
            self.setProperty("enabledCandidate", entry.enabled)
            self._repolish()

    def _on_current_changed(self, candidate_id: str) -> None:
        if self.property("current") != (candidate_id == self.candidate_id):
            self.setProperty("current", candidate_id == self.candidate_id)
            self._repolish()

    def _repolish(self) -> None:
        self.style().unpolish(self)
        self.style().polish(self)

    def _on_analyses_changed(self) -> None:
        session = self.state.session
        entry = self._entry(session)
        if entry is None:
            return
        res = self.state.result(self.candidate_id)
        # The same result under the same conditions: nothing to redraw (identity: results hold arrays).
        key = (entry.enabled, session.target, session.opamp, session.tolerances)
        last = getattr(self, "_shown_result", None)
        if last is not None and last[0] is res and last[1] == key:
            return
        self._shown_result = (res, key)
        self.problem.hide()
        if not entry.enabled or res is None:
            self.figures_title.setText("Achieved")
            set_pinned_text(self.figures, f'<span style="color:{MUTED}">switched off: not analysed</span>')
            set_pinned_text(self.need_gbw, "—")
            set_pinned_text(self.need_flag, "")
            set_pinned_text(self.needs, "")
            return
        if not res.ok:
            set_pinned_text(self.figures, "")
            set_pinned_text(self.need_gbw, "—")
            set_pinned_text(self.need_flag, "")
            set_pinned_text(self.needs, "")
            self.problem.setText(res.error)
            self.problem.show()
            return
        self._show_figures(res, session)
        self._show_needs(res, session)

    def _show_figures(self, res: CandidateResult, session: Session) -> None:
        fig = res.figures
        gbw = session.opamp.gbw_hz
        self.figures_title.setText(f"Achieved ({'op-amp ' + format_value(gbw, 'Hz', digits=3) if gbw else 'ideal op-amp'})")
        err = target_errors(fig, session.target, session.tolerances)
        rows = [
            ("f0", format_value(fig.f0_hz, "Hz"), _flagged(f"{err.f0_pct:+.2f} %", err.f0_ok)),
            ("Q", f"{fig.q:.3g}", _flagged(f"{err.q_pct:+.1f} %", err.q_ok)),
            ("BW", format_value(fig.bw_hz, "Hz", digits=3), ""),
            ("gain", f"{fig.gain_center:+.3g} V/V", _flagged(f"{err.gain_db:+.2f} dB", err.gain_ok)),
        ]
        html = "<table cellspacing=0 cellpadding=1>" + "".join(
            f"<tr><td>{a}&nbsp;</td><td align=right>{b}&nbsp;&nbsp;</td><td>{c}</td></tr>" for a, b, c in rows
        ) + "</table>"
        set_pinned_text(self.figures, html)

    def _show_needs(self, res: CandidateResult, session: Session) -> None:
        req = res.analysis.requirements
        have = session.opamp.gbw_hz
        if req.gbw_hz is None:
            big, big_sheet = "GBW: no op-amp is enough", f"color: {BAD};"
            flag, flag_name, flag_sheet = req.gbw_reason or "", "needFlagBad", ""
        else:
            big, big_sheet = f"GBW ≥ {format_value(req.gbw_hz, 'Hz', digits=3)}", ""
            if have is None:
                flag, flag_name, flag_sheet = "ideal op-amp assumed: type its GBW above", "needFlagOk", f"color: {MUTED};"
            elif have < req.gbw_hz:
                flag, flag_name, flag_sheet = f"✗ op-amp {format_value(have, 'Hz', digits=3)} is below the need", "needFlagBad", ""
            else:
                flag, flag_name, flag_sheet = f"✓ op-amp {format_value(have, 'Hz', digits=3)}: {have / req.gbw_hz:.3g}× the need", "needFlagOk", ""
        # style first (a new style sheet or name re-polishes), then the text, pinned at its size
        if self.need_gbw.styleSheet() != big_sheet:
            self.need_gbw.setStyleSheet(big_sheet)
        set_pinned_text(self.need_gbw, big)
        if self.need_flag.objectName() != flag_name or self.need_flag.styleSheet() != flag_sheet:
            self.need_flag.setObjectName(flag_name)
            self.need_flag.setStyleSheet(flag_sheet)
            self.need_flag.style().unpolish(self.need_flag)
            self.need_flag.style().polish(self.need_flag)
            self.need_flag.setText("")  # its size is worked out again with the new style
        set_pinned_text(self.need_flag, flag)
        rows = [
            ("slew, sine at f0", f"{req.slew_sine_v_per_us:.3g} V/µs"),
            ("slew, input step", f"{req.slew_step_v_per_us:.3g} V/µs"),
            ("output current", f"{req.iout_peak_ma:.3g} mA peak"),
            ("output swing", f"{req.vout_peak_v:.3g} V peak"),
        ]
        set_pinned_text(
            self.needs,
            "<table cellspacing=0 cellpadding=1>"
            + "".join(f"<tr><td>{a}&nbsp;&nbsp;</td><td align=right><b>{b}</b></td></tr>" for a, b in rows)
            + "</table>",
        )

    @property
    def need_flag_is_bad(self) -> bool:
        return self.need_flag.objectName() == "needFlagBad"
