"""The results of a tolerance spread run, as the spread pane shows them: the yield in large type and
what it counts, the histograms of f0, Q and centre gain, the statistics of the trials and the
worst-case corners of the tolerance box.

:class:`SpreadResults` only draws a finished :class:`~bandsmith.app.window.panes.spread_pane.SpreadRun`
(every number is the core's :class:`bandsmith.spread.tolerance.Spread`); the pane runs it.
"""

from __future__ import annotations

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.spread.tolerance import Spread

from bandsmith.app.plots.histogram import HISTOGRAM_FIGURES, FigureHistogram, window_of
from bandsmith.app.plots.spread_text import count_text, figure_text
from bandsmith.app.window.theme import BAD, MUTED, headline, note_label, section_title

__all__ = ["SpreadResults", "DIST_TEXT", "count_text", "percent_text", "table_item", "fit_height"]

#: How each distribution is named on screen.
DIST_TEXT = {"uniform": "uniform, ±p", "normal": "normal, p = 3σ"}
#: Trials the magnitude envelope is taken over (the first ones of the run).
ENVELOPE_TRIALS = 2000


def percent_text(x: float) -> str:
    return f"{100.0 * x:.4g} %"


def _table(rows: int, cols: int, parent, name: str) -> QtWidgets.QTableWidget:
    t = QtWidgets.QTableWidget(rows, cols, parent)
    t.setObjectName(name)
    t.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
    t.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
    t.verticalHeader().setDefaultSectionSize(22)
    t.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAsNeeded)
    t.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
    return t


def fit_height(t: QtWidgets.QTableWidget) -> None:
    """Make a table exactly as tall as its rows (no vertical scrolling)."""
    h = t.horizontalHeader().height() if t.horizontalHeader().isVisible() else 0
    h += sum(t.rowHeight(r) for r in range(t.rowCount())) + 2 * t.frameWidth()
    if t.horizontalScrollBar().isVisible():
        h += t.horizontalScrollBar().height()
    t.setFixedHeight(h + 2)


def table_item(text: str, *, bold: bool = False, colour: str | None = None, tip: str = "", align_right: bool = True) -> QtWidgets.QTableWidgetItem:
    it = QtWidgets.QTableWidgetItem(text)
    if align_right:
        it.setTextAlignment(QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
    if bold:
        f = it.font()
        f.setBold(True)
        it.setFont(f)
    if colour:
        it.setForeground(QtGui.QColor(colour))
    if tip:
        it.setToolTip(tip)
    return it


class SpreadResults(QtWidgets.QWidget):
    """The yield, the histograms (with the envelope switch ``show_envelope``) and the two tables."""

    def __init__(self, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        body = self
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(6)
        yrow = QtWidgets.QHBoxLayout()
        ycol, self.yield_label = headline(body, "Yield", "yieldLabel", 30)
        yrow.addLayout(ycol)
        self.yield_text = QtWidgets.QLabel(body)
        self.yield_text.setObjectName("yieldText")
        self.yield_text.setWordWrap(True)
        self.yield_text.setTextFormat(QtCore.Qt.TextFormat.RichText)
        yrow.addWidget(self.yield_text, 1)
        lay.addLayout(yrow)
        self.hist_grid = QtWidgets.QGridLayout()
        self.hist_grid.setSpacing(6)
        lay.addLayout(self.hist_grid)
        self.histograms = {key: FigureHistogram(key, title, unit, body) for key, title, unit in HISTOGRAM_FIGURES}
        self._hist_columns = 0
        self._reflow_histograms(3)
        key_line = note_label(body, "histogramKey", "Shaded green: the yield window. Solid line: nominal. Red dotted: the worst-case corners.")
        lay.addWidget(key_line)
        env_row = QtWidgets.QHBoxLayout()
        self.show_envelope = QtWidgets.QCheckBox("Shade the p5–p95 band on the Magnitude plot", body)
        self.show_envelope.setObjectName("showEnvelope")
        self.show_envelope.setChecked(True)
        self.show_envelope.setToolTip(f"The 5th to 95th percentile of the magnitude over the first {ENVELOPE_TRIALS} trials, on the Responses tab.")
        env_row.addWidget(self.show_envelope)
        env_row.addStretch(1)
        lay.addLayout(env_row)
        self._build_tables(lay)
        for tbl in (self.stats, self.corners):
            fit_height(tbl)

    def _build_tables(self, lay: QtWidgets.QVBoxLayout) -> None:
        """The statistics of the trials beside the worst-case corners."""
        body = self
        self.tables_row = QtWidgets.QBoxLayout(QtWidgets.QBoxLayout.Direction.LeftToRight)
        self.tables_row.setSpacing(12)
        lay.addLayout(self.tables_row)
        scol = QtWidgets.QVBoxLayout()
        t = section_title(body, "Statistics of the trials")
        scol.addWidget(t)
        self._stat_rows = ("nominal", "mean", "std", "min", "p5", "p50", "p95", "max", "worst low", "worst high")
        self.stats = _table(len(self._stat_rows), 3, body, "spreadStats")
        self.stats.setHorizontalHeaderLabels([title for _k, title, _u in HISTOGRAM_FIGURES])
        self.stats.setVerticalHeaderLabels(["nominal", "mean", "std. dev.", "min", "p5", "median", "p95", "max", "worst case low", "worst case high"])
        self.stats.horizontalHeader().setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.Stretch)
        scol.addWidget(self.stats)
        scol.addStretch(1)
        self.tables_row.addLayout(scol, 1)
        wcol = QtWidgets.QVBoxLayout()
        self.worst_title = section_title(body, "Worst case: the corners of the tolerance box", wrap=True)
        wcol.addWidget(self.worst_title)
        self.corners = _table(0, 6, body, "worstCorners")
        self.corners.setHorizontalHeaderLabels(["f0 low", "f0 high", "Q low", "Q high", "gain low", "gain high"])
        self.corners.horizontalHeader().setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.Stretch)
        self.corners.setToolTip("Each column is one corner: the deviation of every part (and the GBW) that gives that extreme.")
        wcol.addWidget(self.corners)
        self.worst_note = note_label(body, "worstNote")
        wcol.addWidget(self.worst_note)
        wcol.addStretch(1)
        self.tables_row.addLayout(wcol, 1)

    def clear(self, cid: str | None, trials: int) -> None:
        """No run to show: say how to make one (``trials`` is what Run would draw)."""
        self.yield_label.setText("—")
        n = count_text(trials)
        self.yield_text.setText(f"Press <b>Run</b> to draw {n} trials of <b>{cid}</b>." if cid else "No active candidate.")
        for h in self.histograms.values():
            h.clear_data()
            h.setVisible(False)  # no empty frames (with a meaningless 0–1 axis) before a run
        self.stats.clearContents()
        self.corners.setRowCount(0)
        fit_height(self.corners)
        self.worst_note.setText("")

    def show_run(self, run, colour: str) -> None:
        """Show a finished run, its histograms in ``colour`` (the candidate's)."""
        sp = run.spread
        s = sp.settings
        for h in self.histograms.values():
            h.setVisible(True)
        self.yield_label.setText(f"{100.0 * sp.yield_fraction:.1f} %")
        passed = int(np.count_nonzero(sp.passed))
        failed = sp.failed_trials
        lines = [
            f"<b>{count_text(passed)}</b> of {count_text(s.trials)} trials within the window: f0 ±{percent_text(s.window_f0)}, "
            f"Q ±{percent_text(s.window_q)}, gain ±{s.window_gain_db:g} dB of nominal."
        ]
        if failed:
            lines.append(f"<span style='color:{BAD}'>{count_text(failed)} trials unstable or without a band-pass peak (counted as failing).</span>")
        lines += [f"<span style='color:{MUTED}'>{n}.</span>" for n in run.notes]
        self.yield_text.setText("<br>".join(lines))
        nom = sp.nominal.item()
        for key, _title, _unit in HISTOGRAM_FIGURES:
            x = getattr(sp, key)[sp.measured]
            n0 = float(getattr(nom, key))
            self.histograms[key].show_data(x, n0, window_of(s, key, n0), getattr(sp.worst, key), colour)
        self._fill_stats(sp)
        self._fill_corners(sp)

    def _fill_stats(self, sp: Spread) -> None:
        nom = sp.nominal.item()
        for j, (key, _title, _unit) in enumerate(HISTOGRAM_FIGURES):
            st = sp.stats(key)
            lo, hi = getattr(sp.worst, key)
            vals = [float(getattr(nom, key)), st["mean"], st["std"], st["min"], st["p5"], st["p50"], st["p95"], st["max"], lo, hi]
            for i, v in enumerate(vals):
                text = figure_text(key, v, deviation=self._stat_rows[i] == "std")
                self.stats.setItem(i, j, table_item(text, bold=self._stat_rows[i].startswith("worst"), colour=BAD if self._stat_rows[i].startswith("worst") else None))

    def _fill_corners(self, sp: Spread) -> None:
        wc = sp.worst
        self.worst_title.setText(
            f"Worst case: {wc.method}" + (f" ({wc.corner_count})" if wc.corner_count else "") + " of the tolerance box"
        )
        names = []
        for key in ("f0_hz", "q", "gain_center_db"):
            for corner in wc.corners.get(key, ({}, {})):
                for n in corner:
                    if n not in names:
                        names.append(n)
        self.corners.setRowCount(len(names))
        self.corners.setVerticalHeaderLabels(["GBW" if n == "gbw" else n for n in names])
        col = 0
        for key in ("f0_hz", "q", "gain_center_db"):
            lo_hi = wc.corners.get(key, ({}, {}))
            ext = getattr(wc, key)
            for side in (0, 1):
                corner = lo_hi[side]
                head = self.corners.horizontalHeaderItem(col)
                head.setToolTip(f"{'lowest' if side == 0 else 'highest'} {key.split('_')[0]}: {figure_text(key, ext[side])}")
                for r, n in enumerate(names):
                    d = corner.get(n)
                    text = "" if d is None else (f"+{percent_text(d)}" if d > 0 else f"−{percent_text(-d)}")
                    self.corners.setItem(r, col, table_item(text, colour=BAD if d is not None and d < 0 else None))
                col += 1
        note = "Each column is one corner: the deviation of every part that gives that extreme (the extremes are the statistics' worst-case rows)."
        if wc.unstable_corners:
            note += f" {wc.unstable_corners} corner{'s are' if wc.unstable_corners > 1 else ' is'} unstable or without a peak."
        self.worst_note.setText(note)
        fit_height(self.corners)

    def _reflow_histograms(self, columns: int) -> None:
        if columns == self._hist_columns:
            return
        self._hist_columns = columns
        for h in self.histograms.values():
            self.hist_grid.removeWidget(h)
        for i, h in enumerate(self.histograms.values()):
            self.hist_grid.addWidget(h, i // columns, i % columns)
        for c in range(3):
            self.hist_grid.setColumnStretch(c, 1 if c < columns else 0)

    def reflow(self, width: int) -> None:
        """Lay the histograms and the tables out for a pane ``width`` pixels wide."""
        self._reflow_histograms(3 if width >= 760 else 2)
        wide = width >= 860
        self.tables_row.setDirection(QtWidgets.QBoxLayout.Direction.LeftToRight if wide else QtWidgets.QBoxLayout.Direction.TopToBottom)
        QtCore.QTimer.singleShot(0, lambda: [fit_height(t) for t in (self.stats, self.corners)])
