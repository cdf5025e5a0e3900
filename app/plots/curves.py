"""Curve data for the response plots, built from core results (numpy only, no Qt).

Each plot is a :class:`PlotData`: axis titles with their units and one :class:`Curve` per
candidate. The window's plot grid and the report's offscreen images draw the same data, so a
curve built here looks the same in both. Drawing (colours, pens) happens elsewhere; a curve only
carries its candidate's index, from which the drawing picks the candidate's style.

Plots built here (``PlotData.key``):

- ``magnitude``: 20·log10|H| (dB) against frequency (Hz, log axis);
- ``phase``: the angle of H (degrees, unwrapped along the sweep) against frequency;
- ``group_delay``: −dφ/dω (s) against frequency;
- ``step``: the unit-step response (V/V) against time (s).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from bandsmith.analysis.analyzer import Analysis, sweep
from bandsmith.solver.rational import Rational
from bandsmith.analysis.timeresponse import default_time_grid, step_response

__all__ = [
    "Curve",
    "Guide",
    "PlotData",
    "PlotInput",
    "PLOT_KEYS",
    "frequency_grid",
    "time_grid",
    "response_plots",
    "plot_inputs",
]

PLOT_KEYS = ("magnitude", "phase", "group_delay", "step")


@dataclass(frozen=True, slots=True)
class Curve:
    """One candidate's curve: legend label, the candidate's index (for its style) and x/y data."""

    label: str
    index: int
    x: np.ndarray
    y: np.ndarray


@dataclass(frozen=True, slots=True)
class Guide:
    """A dashed guide line: ``axis`` "x" (vertical, at an x value) or "y" (horizontal), a label."""

    axis: str
    value: float
    label: str = ""


@dataclass(frozen=True, slots=True)
class PlotData:
    """One plot: what it shows, its axes (label, SI unit) and its curves.

    ``x_unit``/``y_unit`` are SI base units ("Hz", "s", "dB", "°", "V/V"); a drawing may add a
    prefix (ms, kHz) for display. ``log_x`` is True for a logarithmic frequency axis.
    """

    key: str
    title: str
    x_label: str
    x_unit: str
    y_label: str
    y_unit: str
    log_x: bool
    curves: tuple[Curve, ...]
    guides: tuple[Guide, ...] = ()


@dataclass(frozen=True, slots=True)
class PlotInput:
    """One candidate as plotted: label, index (style) and the transfer function drawn."""

    label: str
    index: int
    h: Rational


def frequency_grid(f0_hz: Sequence[float], *, decades: float = 2.0, points: int = 1001) -> np.ndarray:
    """Log-spaced frequencies (Hz) from ``decades`` below the lowest to above the highest f0.

    Non-finite or non-positive entries of ``f0_hz`` are ignored; with none left, 10 Hz to 100 kHz.
    """
    f = np.asarray([x for x in f0_hz if x is not None and math.isfinite(x) and x > 0], dtype=float)
    if f.size == 0:
        return np.geomspace(10.0, 1e5, points)
    return np.geomspace(f.min() * 10.0 ** -decades, f.max() * 10.0 ** decades, points)


def time_grid(hs: Sequence[Rational], *, points: int = 1000) -> np.ndarray:
    """One time grid (s) long enough for every transfer function's step response to settle."""
    ends = [default_time_grid(h.poles(0), n=2)[-1] for h in hs]
    ends = [e for e in ends if math.isfinite(e) and e > 0]
    return np.linspace(0.0, max(ends) if ends else 1.0, points)


def plot_inputs(items: Sequence[tuple[str, int, Analysis]], *, finite_opamp: bool = True) -> list[PlotInput]:
    """What to draw for analysed candidates ``(label, index, analysis)``.

    With ``finite_opamp`` the response with the finite op-amp is drawn where the analysis has one
    (the session's op-amp), otherwise the ideal-op-amp response.
    """
    out = []
    for label, index, a in items:
        h = a.h_actual if (finite_opamp and a.h_actual is not None) else a.h_ideal
        out.append(PlotInput(label, index, h))
    return out


def response_plots(
    inputs: Sequence[PlotInput],
    *,
    f_hz: np.ndarray | None = None,
    t_s: np.ndarray | None = None,
    f0_hz: Sequence[float] = (),
    target_f0_hz: float | None = None,
    target_gain_db: float | None = None,
) -> tuple[PlotData, ...]:
    """Magnitude, phase, group delay and step response with every input overlaid.

    Parameters
    ----------
    inputs : sequence of PlotInput
        The candidates, in legend order.
    f_hz : ndarray, optional
        Frequencies (Hz); by default :func:`frequency_grid` around ``f0_hz``.
    t_s : ndarray, optional
        Times (s) of the step response; by default :func:`time_grid` of the inputs.
    f0_hz : sequence of float
        Centre frequencies the default frequency grid is laid around (the target's).
    target_f0_hz, target_gain_db : float, optional
        The target, drawn as guide lines on the magnitude plot.

    Returns
    -------
    tuple of PlotData
        In the order of :data:`PLOT_KEYS`.
    """
    if f_hz is None:
        f_hz = frequency_grid(list(f0_hz) or ([target_f0_hz] if target_f0_hz else []))
    f_hz = np.asarray(f_hz, dtype=float)
    if t_s is None:
        t_s = time_grid([p.h for p in inputs])
    mag, phase, gd, step = [], [], [], []
    for p in inputs:
        r = sweep(p.h, f_hz)
        with np.errstate(divide="ignore"):
            mag.append(Curve(p.label, p.index, f_hz, r.magnitude_db))
        phase.append(Curve(p.label, p.index, f_hz, r.phase_deg))
        gd.append(Curve(p.label, p.index, f_hz, r.group_delay_s))
        s = step_response(p.h, t_s)
        step.append(Curve(p.label, p.index, s.t_s, s.y))
    guides = []
    if target_f0_hz is not None:
        guides.append(Guide("x", float(target_f0_hz), "target f0"))
    if target_gain_db is not None:
        guides.append(Guide("y", float(target_gain_db), "target gain"))
    return (
        PlotData("magnitude", "Magnitude", "Frequency", "Hz", "Gain", "dB", True, tuple(mag), tuple(guides)),
        PlotData("phase", "Phase", "Frequency", "Hz", "Phase", "°", True, tuple(phase)),
        PlotData("group_delay", "Group delay", "Frequency", "Hz", "Delay", "s", True, tuple(gd)),
        PlotData("step", "Unit step response", "Time", "s", "Output", "V/V", False, tuple(step)),
    )
