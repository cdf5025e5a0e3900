"""Real inductors: the winding's Q, what it does to the circuit's Q, and when a design asks too much.

An inductor's winding has a series resistance ``RL``; its quality factor at a frequency ``f`` is
``Q_L = 2π·f·L/RL``. In a parallel tank, near resonance the series ``RL`` acts as a parallel
resistance ``R_p = RL·(1 + Q_L²) ≈ Q_L·ω0·L`` across the tank, so the circuit's Q drops from its
lossless value ``Q_d`` to about

    1/Q ≈ 1/Q_d + 1/Q_L                                   (first order, Q_L ≫ 1),

and keeping the drop within a fraction ``x`` needs ``Q_L ≥ Q_d·(1 − x)/x`` (19·Q_d for 5 %).
:func:`winding_effect` does not rely on this approximation: it measures the circuit's figures with
and without the winding resistance.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from bandsmith.common.jsonutil import finite_or_none
from bandsmith.analysis.analyzer import transfer_function
from bandsmith.common.errors import InputError
from bandsmith.analysis.figures import Figures, measure
from bandsmith.solver.mna import IDEAL, OpAmpModel
from bandsmith.solver.netlist import Netlist
from bandsmith.solver.rational import nominal_w_ref

__all__ = [
    "ORDINARY_INDUCTOR_Q",
    "WindingEffect",
    "inductor_q",
    "q_with_winding",
    "inductor_q_needed",
    "inductor_q_warning",
    "winding_effect",
]

#: Highest inductor Q ordinary small leaded or SMD inductors reach (common practice, no source).
ORDINARY_INDUCTOR_Q = 200.0


def inductor_q(l_h: float, rl_ohm: float, f_hz: float) -> float:
    """Quality factor ``2π·f·L/RL`` of an inductor with winding resistance ``RL`` (inf for RL = 0).

    Parameters
    ----------
    l_h : float
        Inductance in henry (> 0).
    rl_ohm : float
        Winding (series) resistance in ohm (>= 0).
    f_hz : float
        Frequency in Hz (> 0), usually the circuit's f0.
    """
    for name, v, low in (("L", l_h, 0.0), ("f", f_hz, 0.0)):
        if not (math.isfinite(v) and v > low):
            raise InputError(name, f"must be a finite number above zero, got {v!r}")
    if not (math.isfinite(rl_ohm) and rl_ohm >= 0):
        raise InputError("RL", f"must be a finite number of zero or more, got {rl_ohm!r}")
    return math.inf if rl_ohm == 0 else 2.0 * math.pi * f_hz * l_h / rl_ohm


def q_with_winding(q_design: float, q_inductor: float) -> float:
    """Circuit Q of a parallel tank of lossless Q ``q_design`` with an inductor of Q ``q_inductor``.

    First order: ``1/(1/Q_d + 1/Q_L)``; see the module notes.
    """
    if not (q_design > 0 and q_inductor > 0):
        raise InputError("q", "both Q values must be above zero")
    return 1.0 / (1.0 / q_design + 1.0 / q_inductor)


def inductor_q_needed(q_circuit: float, *, max_q_loss: float = 0.05) -> float:
    """Smallest inductor Q that lowers a tank's Q by no more than ``max_q_loss`` (a fraction).

    ``Q_L = Q·(1 − x)/x`` from the first-order relation of the module notes.
    """
    if not (math.isfinite(q_circuit) and q_circuit > 0):
        raise InputError("q", f"must be a finite number above zero, got {q_circuit!r}")
    if not (0 < max_q_loss < 1):
        raise InputError("max-q-loss", f"must be a fraction between 0 and 1, got {max_q_loss!r}")
    return q_circuit * (1.0 - max_q_loss) / max_q_loss


def inductor_q_warning(q_needed: float, *, limit: float = ORDINARY_INDUCTOR_Q) -> str | None:
    """A design warning when the inductor Q needed is beyond ordinary parts, else None.

    ``limit`` defaults to :data:`ORDINARY_INDUCTOR_Q` (200, common practice, no source).
    """
    if not math.isfinite(q_needed) or q_needed > limit:
        shown = "an unbounded" if not math.isfinite(q_needed) else f"a Q of {q_needed:.3g}"
        return (
            f"the inductor needs {shown} at f0, beyond the Q of about {limit:g} that ordinary small "
            "leaded or SMD inductors reach; consider a larger or ferrite-cored part with a measured Q, "
            "a lower Q target, or a circuit without an inductor"
        )
    return None


@dataclass(frozen=True, slots=True)
class WindingEffect:
    """What one inductor's winding resistance does to the circuit.

    Attributes
    ----------
    ref, series_ref : str
        The inductor's reference and its winding resistance's (``L``, ``RL``).
    l_h, rl_ohm : float
        Inductance (H) and winding resistance (ohm).
    inductor_q : float
        ``2π·f0·L/RL`` at the circuit's f0 with the winding (inf for RL = 0).
    f0_hz, q, gain_center_db : float
        The circuit's figures with the winding resistance.
    f0_lossless_hz, q_lossless, gain_center_db_lossless : float
        The same with this winding resistance set to zero.
    """

    ref: str
    series_ref: str
    l_h: float
    rl_ohm: float
    inductor_q: float
    f0_hz: float
    q: float
    gain_center_db: float
    f0_lossless_hz: float
    q_lossless: float
    gain_center_db_lossless: float

    @property
    def q_drop(self) -> float:
        """Fraction by which the winding lowers the circuit's Q (``1 − Q/Q_lossless``)."""
        return 1.0 - self.q / self.q_lossless

    def to_json(self) -> dict:
        f = finite_or_none

        return {
            "ref": self.ref,
            "series_ref": self.series_ref,
            "l_h": float(self.l_h),
            "rl_ohm": float(self.rl_ohm),
            "inductor_q": f(self.inductor_q),
            "f0_hz": f(self.f0_hz),
            "q": f(self.q),
            "gain_center_db": f(self.gain_center_db),
            "f0_lossless_hz": f(self.f0_lossless_hz),
            "q_lossless": f(self.q_lossless),
            "gain_center_db_lossless": f(self.gain_center_db_lossless),
            "q_drop_pct": f(100.0 * self.q_drop),
        }


def _figures(netlist: Netlist, opamp: OpAmpModel, w_ref: float) -> Figures:
    return measure(transfer_function(netlist, opamp, w_ref=w_ref)).item()


def winding_effect(netlist: Netlist, *, opamp: OpAmpModel = IDEAL) -> tuple[WindingEffect, ...]:
    """For each inductor of a circuit: its Q at f0 and the circuit's figures with and without its RL.

    Parameters
    ----------
    netlist : Netlist
        The circuit, its inductors carrying their winding resistance.
    opamp : OpAmpModel
        The op-amp for both sets of figures.
    """
    w_ref = nominal_w_ref(netlist)
    real = _figures(netlist, opamp, w_ref)
    out = []
    for k, e in enumerate(netlist.elements):
        if e.kind != "L":
            continue
        elements = list(netlist.elements)
        elements[k] = replace(e, series_resistance=0.0)
        lossless = _figures(Netlist(tuple(elements), netlist.ground, netlist.input, netlist.output), opamp, w_ref)
        q_l = inductor_q(e.value, e.series_resistance, real.f0_hz) if math.isfinite(real.f0_hz) else math.nan
        out.append(
            WindingEffect(
                ref=e.ref,
                series_ref=e.series_ref or e.ref + ".rs",
                l_h=float(e.value),
                rl_ohm=float(e.series_resistance),
                inductor_q=q_l,
                f0_hz=real.f0_hz,
                q=real.q,
                gain_center_db=real.gain_center_db,
                f0_lossless_hz=lossless.f0_hz,
                q_lossless=lossless.q,
                gain_center_db_lossless=lossless.gain_center_db,
            )
        )
    return tuple(out)
