"""Status colours and verdict marks, on screen, in the plots and in the report: plain Python, so
that the report's text and the window share them without loading Qt.

Each flag also carries a symbol, so it does not rely on colour (greyscale print, colour vision).
"""

from __future__ import annotations

from bandsmith.bench.fitcheck import DOES_NOT_FIT, FITS, MARGINAL as FIT_MARGINAL
from bandsmith.verdict import BUILDABLE, MARGINAL, NOT_BUILDABLE

__all__ = ["INK", "MUTED", "GOOD", "WARN", "BAD", "VERDICT_MARKS", "FIT_MARKS"]

# Text: body ink and the muted grey of captions and notes; then the status colours of flags.
INK = "#202124"
MUTED = "#5f6368"
GOOD = "#1d7a3a"
WARN = "#a35f00"
BAD = "#b0191e"

#: The symbol and status colour of a candidate's verdict.
VERDICT_MARKS = {BUILDABLE: ("●", GOOD), MARGINAL: ("◐", WARN), NOT_BUILDABLE: ("✕", BAD)}
#: The same for an op-amp model's fit to a candidate.
FIT_MARKS = {FITS: ("✓", GOOD), FIT_MARGINAL: ("◐", WARN), DOES_NOT_FIT: ("✗", BAD)}
