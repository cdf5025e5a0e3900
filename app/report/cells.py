"""The small HTML pieces every report section is written with: tables, signed deviations, GBW and
slew cells, embedded images. Cells are HTML; text is escaped before it goes in.
"""

from __future__ import annotations

import base64
import math
from html import escape
from typing import Sequence

from bandsmith.common.eseries import coarsest_series
from bandsmith.common.values import format_value

__all__ = ["slew_text", "gbw_cell", "sensitivity_text", "signed", "html_table", "smallest_series", "paragraphs", "png_img"]


def slew_text(x: float | None, *, unit: bool = True) -> str:
    """A slew rate in V/µs, the unit op-amp datasheets use (never mV/µs)."""
    if x is None or not math.isfinite(x):
        return "—"
    return f"{x:.3g} V/µs" if unit else f"{x:.3g}"


def gbw_cell(need_hz: float | None, have_hz: float | None) -> str:
    """The required GBW; marked when the session's op-amp falls short of it."""
    if need_hz is None:
        return '<span class="bad">none</span>'
    text = escape(format_value(need_hz, "Hz", digits=3))
    if have_hz is not None and have_hz < need_hz:
        return f'<span class="bad">{text} ▲</span>'
    return text


def sensitivity_text(x: float) -> str:
    """A sensitivity with three decimals and its sign; a rounded zero has no sign."""
    return "0.000" if abs(x) < 5e-4 else f"{x:+.3f}"


def signed(x: float | None, unit: str, decimals: int = 3) -> str:
    """A deviation with its sign and fixed decimals ("+0.507 %", "-0.191 dB"); a rounded zero is "0.000"."""
    if x is None or not math.isfinite(x):
        return "—"
    if abs(x) < 0.5 * 10.0**-decimals:
        return f"{0.0:.{decimals}f} {unit}".strip()
    return f"{x:+.{decimals}f} {unit}".strip()


def html_table(header: Sequence[str] | None, rows: Sequence[Sequence[str]], *, cls: str = "", align: str = "lr") -> str:
    """An HTML table; cells are HTML already (escape text before).

    ``align`` has one letter per column: ``l`` left, ``L`` left and never wrapped, ``r`` right and
    never wrapped (numbers); the last letter repeats.
    """
    head = "<thead><tr>" + "".join(f"<th>{h}</th>" for h in header) + "</tr></thead>\n" if header else ""
    body = []
    for r in rows:
        cells = []
        for j, c in enumerate(r):
            a = align[min(j, len(align) - 1)]
            side = "right" if a == "r" else "left"
            keep = ' style="white-space: nowrap"' if a in "rL" else ""
            cells.append(f'<td align="{side}"{keep}>{c}</td>')
        body.append("<tr>" + "".join(cells) + "</tr>")
    c = f' class="{cls}"' if cls else ""
    return f'<table{c} border="1" cellspacing="0" cellpadding="3">\n{head}' + "\n".join(body) + "\n</table>"


def smallest_series(x: float) -> str:
    """The coarsest series holding a part value, or "exact"."""
    return coarsest_series(x) or "exact"


def paragraphs(text: str) -> str:
    """Text with its line breaks kept (``<br/>``), escaped."""
    return "<br/>".join(escape(line) for line in text.splitlines())


def png_img(png: bytes, width: int, alt: str, ident: str, *, cls: str = "plot") -> str:
    """A PNG embedded as a ``data:`` URI, ``width`` CSS pixels wide, in a paragraph of class ``plot``."""
    uri = "data:image/png;base64," + base64.b64encode(png).decode("ascii")
    return f'<p class="plot"><img src="{uri}" width="{width}" alt="{escape(alt)}" class="{cls}" id="{escape(ident)}"/></p>'
