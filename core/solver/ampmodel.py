"""The MNA pencil with a shelf op-amp: single-pole, or two-pole through one extra internal state.

:func:`bandsmith.solver.mna.build_system` writes each op-amp as the row
``V+ − V− − (1/A0 + s/ω_t)·V_out = 0`` (single pole). For a second open-loop pole at ``ω_p2`` the
open-loop gain is

    A(s) = A0 / ((1 + s·A0/ω_t)·(1 + s/ω_p2)),

which this module writes with one more unknown per op-amp, the internal voltage ``w`` before the
second pole (an RC-like state):

    V+ − V− − (1/A0 + s/ω_t)·w = 0        (the op-amp's own row, now on ``w``)
    w − (1 + s/ω_p2)·V_out = 0            (a new row)

Every entry stays first order in ``s``, so the exact rational transfer function
(:func:`bandsmith.solver.rational.rational_from_system`) and the batched solves work unchanged. Without a second
pole the system is exactly :func:`bandsmith.solver.mna.build_system`'s; :mod:`bandsmith.solver.mna` itself is not changed.
"""

from __future__ import annotations

import math
from typing import Mapping

import numpy as np

from bandsmith.solver.mna import IDEAL, MnaLayout, MnaSystem, OpAmpModel, build_system
from bandsmith.solver.netlist import Netlist
from bandsmith.solver.rational import Rational, rational_from_system, nominal_w_ref

__all__ = ["amp_system", "amp_transfer_function", "open_loop_gain"]


def open_loop_gain(f_hz: np.ndarray, *, gbw_hz: float, a0: float, f_p2_hz: float | None = None) -> np.ndarray:
    """Open-loop gain ``A(j2πf)`` of the one- or two-pole model (complex, V/V)."""
    s = 2j * np.pi * np.asarray(f_hz, dtype=float)
    a = a0 / (1.0 + s * a0 / (2.0 * np.pi * gbw_hz))
    if f_p2_hz is not None:
        a = a / (1.0 + s / (2.0 * np.pi * f_p2_hz))
    return a


def amp_system(
    netlist: Netlist,
    *,
    gbw_hz: float | None,
    a0: float = 1e5,
    f_p2_hz: float | None = None,
    overrides: Mapping[str, np.ndarray | float] | None = None,
) -> MnaSystem:
    """The MNA pencil of ``netlist`` with every op-amp of the given model.

    Parameters
    ----------
    netlist : Netlist
        The circuit.
    gbw_hz : float or None
        Gain-bandwidth (Hz); None is the ideal op-amp (then ``f_p2_hz`` must be None).
    a0 : float
        Open-loop DC gain (V/V).
    f_p2_hz : float, optional
        Second open-loop pole (Hz); None for the single-pole model.
    overrides : mapping, optional
        Part values by reference, as for :func:`bandsmith.solver.mna.build_system`.

    Returns
    -------
    MnaSystem
        With one extra unknown per op-amp (after all of build_system's) when ``f_p2_hz`` is given.
    """
    model = IDEAL if gbw_hz is None else OpAmpModel(float(gbw_hz), float(a0))
    base = build_system(netlist, model, overrides=overrides)
    if f_p2_hz is None:
        return base
    if gbw_hz is None:
        raise ValueError("a second pole needs a finite gain-bandwidth")
    if not (math.isfinite(f_p2_hz) and f_p2_hz > 0):
        raise ValueError(f"second pole {f_p2_hz!r} Hz must be a finite number above zero")
    lay = base.layout
    extra = len(lay.opamp_row)
    n = lay.size
    size = n + extra
    b = base.batch
    G = np.zeros((b, size, size))
    C = np.zeros((b, size, size))
    G[:, :n, :n] = base.G
    C[:, :n, :n] = base.C
    inv_a0 = 1.0 / float(a0)
    inv_wt = 1.0 / (2.0 * math.pi * float(gbw_hz))
    inv_wp2 = 1.0 / (2.0 * math.pi * float(f_p2_hz))
    terms = []
    for k, e in enumerate(netlist.opamps):
        row = lay.opamp_row[e.ref]
        out = lay.node_index[e.nodes[2]]
        w = n + k
        # the op-amp's small terms, as rational.py's expansion in the op-amp terms takes them
        terms.append((row, w, np.full(b, inv_a0), np.full(b, inv_wt)))
        terms.append((w, out, np.zeros(b), np.full(b, inv_wp2)))
        # Move the op-amp row's output terms onto the internal state w.
        G[:, row, out] += inv_a0
        C[:, row, out] += inv_wt
        G[:, row, w] -= inv_a0
        C[:, row, w] -= inv_wt
        # w − (1 + s/ω_p2)·V_out = 0
        G[:, w, w] = 1.0
        G[:, w, out] -= 1.0
        C[:, w, out] -= inv_wp2
    layout = MnaLayout(lay.node_index, lay.source_row, lay.inductor_row, lay.opamp_row, size)
    return MnaSystem(G, C, layout, base.output_index, tuple(terms))


def amp_transfer_function(
    netlist: Netlist,
    *,
    gbw_hz: float | None,
    a0: float = 1e5,
    f_p2_hz: float | None = None,
    w_ref: float | None = None,
) -> Rational:
    """Exact rational transfer function with the given op-amp model (batch of one).

    ``w_ref`` (rad/s) defaults to the ideal-op-amp natural frequency, as in
    :func:`bandsmith.analysis.analyzer.transfer_function`.
    """
    if w_ref is None:
        w_ref = nominal_w_ref(netlist)
    return rational_from_system(amp_system(netlist, gbw_hz=gbw_hz, a0=a0, f_p2_hz=f_p2_hz), w_ref)
