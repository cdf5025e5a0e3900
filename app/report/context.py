"""What a report is made from: every candidate analysed under the session's conditions, and the plots.

:func:`make_context` analyses each candidate through the core (:meth:`bandsmith.design.candidate.Candidate.analyze`)
and, when asked, renders the response plots (:mod:`bandsmith.app.plots`); the section builders
only read the :class:`ReportContext` it returns. A candidate the core cannot analyse is kept with
the reason, never raised.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from datetime import datetime
from typing import Callable, Mapping, Sequence

from bandsmith.analysis.analyzer import Analysis
from bandsmith.common.errors import InputError
from bandsmith.design.candidate import Candidate, Conditions
from bandsmith.files.session import CandidateEntry, Session

__all__ = ["CandidateReport", "ReportContext", "SectionBuilder", "make_context"]


@dataclass(frozen=True, slots=True)
class CandidateReport:
    """One candidate of the session as the report shows it.

    ``index`` is its position in the session (it picks the candidate's colour, as in the window);
    ``analysis`` is None and ``error`` says why when the core could not analyse it.
    """

    entry: CandidateEntry
    index: int
    conditions: Conditions
    analysis: Analysis | None
    error: str | None = None

    @property
    def label(self) -> str:
        return self.entry.id

    @property
    def stable(self) -> bool:
        """Whether the response drawn (with the session's op-amp, else ideal) is stable."""
        a = self.analysis
        if a is None:
            return False
        flag = a.stable_actual if a.h_actual is not None else a.stable_ideal
        return flag is not False

    @property
    def plotted(self) -> bool:
        """Switched on, analysed and stable: drawn in the plots (an unstable response grows
        without bound and would flatten every other curve)."""
        return self.entry.enabled and self.analysis is not None and self.stable


@dataclass(frozen=True, slots=True)
class ReportContext:
    """Everything the section builders read.

    Parameters
    ----------
    session : Session
        The design.
    candidates : tuple of CandidateReport
        Every candidate, in session order.
    created : datetime
        When the report was made (shown on it).
    images : mapping
        PNG bytes of the plots by plot key (empty for a report without images).
    image_width : int
        Width (CSS pixels) the plots are shown at.
    source : str, optional
        The session file's name, shown on the report.
    """

    session: Session
    candidates: tuple[CandidateReport, ...]
    created: datetime
    images: Mapping[str, bytes] = field(default_factory=dict)
    image_width: int = 900
    source: str | None = None

    @property
    def active(self) -> tuple[CandidateReport, ...]:
        """The candidates drawn in the plots (see :attr:`CandidateReport.plotted`)."""
        return tuple(c for c in self.candidates if c.plotted)


SectionBuilder = Callable[[ReportContext], str]


def _analyse(session: Session) -> tuple[CandidateReport, ...]:
    out = []
    for i, entry in enumerate(session.candidates):
        cond = session.conditions_for(entry)
        try:
            analysis = Candidate(entry.topology_id, entry.values).analyze(cond)
            out.append(CandidateReport(entry, i, cond, analysis))
        except InputError as exc:
            out.append(CandidateReport(entry, i, cond, None, f"cannot be analysed: {exc}"))
        except Exception as exc:  # a design the core cannot handle: said in the report, never a crash
            out.append(CandidateReport(entry, i, cond, None, f"cannot be analysed ({type(exc).__name__}: {exc})"))
    return tuple(out)


def _plot_images(session: Session, candidates: Sequence[CandidateReport], *, width: int, height: int) -> dict[str, bytes]:
    from bandsmith.app.plots.curves import plot_inputs, response_plots
    from bandsmith.app.plots.render import ensure_qt_app, render_plots_png

    active = [c for c in candidates if c.plotted]
    if not active:
        return {}
    ensure_qt_app()
    inputs = plot_inputs([(c.label, c.index, c.analysis) for c in active])
    t = session.target
    plots = response_plots(inputs, target_f0_hz=t.f0_hz, target_gain_db=20.0 * math.log10(t.gain))
    return render_plots_png(plots, width=width, height=height)


def make_context(
    session: Session,
    *,
    images: bool = True,
    created: datetime | None = None,
    source: str | None = None,
    image_width: int = 900,
    image_aspect: float = 0.42,
) -> ReportContext:
    """Analyse every candidate (and render the plots when ``images``) for the section builders.

    The plots are ``image_width`` CSS pixels wide and ``image_aspect`` times that high.
    """
    cands = _analyse(session)
    imgs = _plot_images(session, cands, width=image_width, height=round(image_width * image_aspect)) if images else {}
    return ReportContext(
        session=session,
        candidates=cands,
        created=created if created is not None else datetime.now().astimezone(),
        images=imgs,
        image_width=image_width,
        source=source,
    )
