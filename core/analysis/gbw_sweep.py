"""Response error of a candidate versus the op-amp's gain-bandwidth, over a GBW ladder.

For each GBW of the ladder the single-pole op-amp model gives a transfer function (the op-amp
family of the circuit, else one batched solve for the whole ladder); its figures are measured and
compared with the ideal-op-amp figures of the same circuit (found from them,
:func:`bandsmith.analysis.figures.measure_from`: a search on a grid would miss the narrow peak of
a loop near oscillation, a state-variable's Q in the thousands). Each error is normalised by its tolerance, so 1.0 means "at the limit", and
the worst of the three is the one a designer reads: the smallest GBW where the worst normalised
error stays below 1 is the required GBW of :func:`bandsmith.analysis.analyzer.required_gbw`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bandsmith.analysis.tolerances import Tolerances
from bandsmith.common.grids import geometric
from bandsmith.analysis.gbw_search import with_gbw
from bandsmith.analysis.transfer import nominal_system
from bandsmith.common.limits import DEFAULT_A0
from bandsmith.analysis.figures import Figures, measure_from
from bandsmith.solver.netlist import Netlist
from bandsmith.solver.rational import AmpFamily, OpAmpFamily, rational_and_family

__all__ = ["GbwSweep", "gbw_ladder", "gbw_error_sweep"]



@dataclass(frozen=True, slots=True)
class GbwSweep:
    """Errors of the figures with a single-pole op-amp, over a ladder of GBW values.

    Attributes
    ----------
    gbw_hz : ndarray, shape (N,)
        The ladder (Hz), ascending.
    f0_error : ndarray
        Relative error of f0 (0.01 = +1 %); NaN where the response has no band-pass peak.
    q_error : ndarray
        Relative error of Q.
    gain_error_db : ndarray
        Error of the centre gain (dB).
    worst : ndarray
        Largest of ``|f0_error|/tol.f0``, ``|q_error|/tol.q``, ``|gain_error_db|/tol.gain_db``
        (dimensionless, 1 = at tolerance); ``inf`` where the figures are undefined.
    """

    gbw_hz: np.ndarray
    f0_error: np.ndarray
    q_error: np.ndarray
    gain_error_db: np.ndarray
    worst: np.ndarray


def gbw_ladder(f0_hz: float, *, lo_hz: float | None = None, hi_hz: float | None = None, n: int = 61) -> np.ndarray:
    """A logarithmic GBW ladder (Hz) for a circuit tuned near ``f0_hz``.

    By default from ``3·f0`` to ``10⁶·f0``; ``lo_hz`` / ``hi_hz`` widen it (never narrow it) so that
    given GBW values (an op-amp's, a required one) fall inside.
    """
    if not (math.isfinite(f0_hz) and f0_hz > 0):
        raise ValueError(f"f0_hz must be a finite number above zero, got {f0_hz!r}")
    lo = 3.0 * f0_hz
    hi = 1e6 * f0_hz
    if lo_hz is not None and math.isfinite(lo_hz) and lo_hz > 0:
        lo = min(lo, lo_hz)
    if hi_hz is not None and math.isfinite(hi_hz) and hi_hz > 0:
        hi = max(hi, hi_hz)
    return geometric(lo, hi, n)


def gbw_error_sweep(
    netlist: Netlist,
    ideal: Figures,
    gbw_hz: np.ndarray,
    *,
    a0: float = DEFAULT_A0,
    tolerances: Tolerances = Tolerances(),
    family: OpAmpFamily | AmpFamily | None = None,
) -> GbwSweep:
    """Errors of a candidate's figures with a single-pole op-amp of each GBW in ``gbw_hz``.

    Parameters
    ----------
    netlist : Netlist
        The circuit.
    ideal : Figures
        Its figures with an ideal op-amp (batch of one), the reference of the errors.
    gbw_hz : ndarray
        GBW values (Hz), e.g. from :func:`gbw_ladder`.
    a0 : float
        Open-loop gain (V/V) of the op-amp model.
    tolerances : Tolerances
        The limits each error is normalised by.
    family : OpAmpFamily or AmpFamily, optional
        The circuit's op-amp family when the caller has it (:attr:`bandsmith.analysis.analyzer.Analysis.family`);
        else a one-op-amp circuit's is built here, and a circuit with several op-amps goes through
        :func:`bandsmith.analysis.transfer.transfer_function`.
    """
    g = np.asarray(gbw_hz, dtype=float).reshape(-1)
    ref = ideal.item()
    n = g.size
    if not (math.isfinite(ref.f0_hz) and math.isfinite(ref.q)) or n == 0:
        nan = np.full(n, np.nan)
        return GbwSweep(g, nan, nan.copy(), nan.copy(), np.full(n, np.inf))
    w_ref = 2.0 * math.pi * ref.f0_hz
    if family is None and len(netlist.opamps) == 1:  # the one-op-amp family serves every GBW (several: transfer_function's)
        family = rational_and_family(nominal_system(netlist), w_ref)[1]
    h = with_gbw(netlist, family, w_ref, g, float(a0))
    fig = measure_from(h, ideal, phase=False)
    with np.errstate(invalid="ignore", divide="ignore"):
        f0_err = fig.f0_hz / ref.f0_hz - 1.0
        q_err = fig.q / ref.q - 1.0
        gain_err = fig.gain_center_db - ref.gain_center_db
        # the largest of the three, pairwise (NaN propagating, as a reduce over them would)
        worst = np.maximum(np.maximum(np.abs(f0_err) / tolerances.f0, np.abs(q_err) / tolerances.q), np.abs(gain_err) / tolerances.gain_db)
        # a member counts where its figures are defined and its gain has the ideal's sign: its
        # worst error is finite exactly where f0, Q and the gain in dB are (NaN and infinity carry
        # through the errors), and the product with the ideal's sign is above zero exactly where
        # the signs agree (a zero, NaN or flipped gain is not)
        counts = np.isfinite(worst) & (fig.gain_center * math.copysign(1.0, ref.gain_center) > 0.0) if ref.gain_center != 0.0 else False
    worst = np.where(counts, worst, np.inf)
    return GbwSweep(gbw_hz=g, f0_error=f0_err, q_error=q_err, gain_error_db=gain_err, worst=worst)
