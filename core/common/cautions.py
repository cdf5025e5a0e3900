"""The cautions Bandsmith shows beside its results (About dialog, report, exports).

One wording for every place that shows them, as plain text and as HTML. The three points are
those the README states ("Cautions"); the words are ours.
"""

from __future__ import annotations

from dataclasses import dataclass
from html import escape

__all__ = ["Caution", "CAUTIONS", "CAUTIONS_TITLE", "cautions_text", "cautions_html", "cautions_comment"]


@dataclass(frozen=True, slots=True)
class Caution:
    """One caution: a short heading and the sentence that explains it."""

    key: str
    heading: str
    text: str


CAUTIONS_TITLE = "Cautions"

CAUTIONS: tuple[Caution, ...] = (
    Caution(
        "design-aid",
        "A design aid, not a sign-off",
        "Every figure here comes from a circuit model with idealised parts. Build a prototype and "
        "measure it before the design goes into production.",
    ),
    Caution(
        "opamp-limits",
        "Op-amp limits are yours to check",
        "Bandsmith does not know your supply rails. Check the op-amp's supply limits, its input "
        "common-mode range and its output swing against the datasheet for the signal levels you expect.",
    ),
    Caution(
        "mains",
        "Mains and high voltage",
        "If a circuit is powered from the mains or handles high voltages, local electrical codes and "
        "licensed practice apply to its design, build and testing.",
    ),
)


def cautions_text(*, title: bool = True) -> str:
    """The cautions as plain text: an optional title line, then one paragraph per caution."""
    lines = [CAUTIONS_TITLE, ""] if title else []
    for c in CAUTIONS:
        lines.append(f"- {c.heading}: {c.text}")
    return "\n".join(lines)


def cautions_html(*, heading_level: int = 2, title: bool = True) -> str:
    """The cautions as an HTML fragment (a heading and a list), safe to embed in any page.

    Parameters
    ----------
    heading_level : int
        Level of the title heading (``<h2>`` by default).
    title : bool
        Whether to start with the title heading.
    """
    if not 1 <= heading_level <= 6:
        raise ValueError(f"heading_level must be 1 to 6, got {heading_level}")
    out = []
    if title:
        out.append(f'<h{heading_level} class="cautions-title">{escape(CAUTIONS_TITLE)}</h{heading_level}>')
    out.append('<ul class="cautions">')
    for c in CAUTIONS:
        out.append(f'<li id="caution-{c.key}"><b>{escape(c.heading)}.</b> {escape(c.text)}</li>')
    out.append("</ul>")
    return "\n".join(out)


def cautions_comment(prefix: str = "* ") -> str:
    """The cautions as comment lines for a text export (a SPICE netlist uses ``"* "``)."""
    return "\n".join(f"{prefix}{c.heading}: {c.text}" for c in CAUTIONS)
