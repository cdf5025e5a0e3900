"""The line under a pane's candidate chooser that says what the inductors' windings do to the circuit.

:func:`winding_text` words it (from :func:`bandsmith.analysis.inductor.winding_effect`);
:class:`WindingLine` shows it, hidden while there is nothing to say. The spread and noise panes
share them.
"""

from __future__ import annotations

import math

from PySide6 import QtWidgets

from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value
from bandsmith.solver.mna import OpAmpModel
from bandsmith.solver.netlist import Netlist

__all__ = ["WindingLine", "winding_text"]


def winding_text(netlist: Netlist, opamp: OpAmpModel) -> str:
    """One line per inductor: its Q at f0 (ωL/RL) and how much its winding lowers the circuit's Q
    (:func:`bandsmith.analysis.inductor.winding_effect`); "" for a circuit without an inductor."""
    from bandsmith.analysis.inductor import winding_effect

    try:
        effects = winding_effect(netlist, opamp=opamp)
    except InputError:
        return ""
    lines = []
    for w in effects:
        if w.rl_ohm <= 0:
            lines.append(f"Inductor {w.ref}: lossless ({w.series_ref} = 0); give its winding resistance to see what it costs.")
        elif math.isfinite(w.inductor_q) and math.isfinite(w.q_lossless):
            lines.append(
                f"Inductor {w.ref}: Q at f0 = {w.inductor_q:.3g} (ωL/{w.series_ref}, {w.series_ref} = {format_value(w.rl_ohm, 'Ω', digits=3)}); "
                f"its winding lowers the circuit's Q from {w.q_lossless:.4g} to {w.q:.4g} ({-100.0 * w.q_drop:+.2f} %)."
            )
    return " ".join(lines)


class WindingLine(QtWidgets.QLabel):
    """The line under a pane's candidate chooser that says what the inductor's winding does
    (:func:`winding_text`); hidden while there is nothing to say."""

    def __init__(self, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("windingLine")
        self.setWordWrap(True)
        self.hide()

    def show_text(self, text: str) -> None:
        """Show ``text``, or hide the line for an empty one."""
        self.setText(text)
        self.setVisible(bool(text))
