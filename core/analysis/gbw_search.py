"""The required GBW: the smallest gain-bandwidth of a single-pole op-amp (the same on every
amplifier) for which a candidate's figures stay within tolerance, searched on a GBW ladder.

(The error chart over a GBW ladder that the window draws is :mod:`bandsmith.analysis.gbw_sweep`.)
"""

from __future__ import annotations

import itertools
import math
from typing import Sequence

import numpy as np

from bandsmith.analysis.figures import Figures, measure, measure_near
from bandsmith.analysis.tolerances import Tolerances, tolerances_each, within_tolerances
from bandsmith.analysis.transfer import nominal_system, transfer_function
from bandsmith.common.grids import geometric
from bandsmith.common.limits import DEFAULT_A0
from bandsmith.solver.netlist import Netlist
from bandsmith.solver.rational import AmpFamily, OpAmpFamily, Rational, family_sums, family_weights, largest_in_rows, rational_and_family

__all__ = ["required_gbw", "search_gbw_many", "with_gbw"]


_LADDER_DECADES = (-1.0, 9.0)
_LADDER_POINTS = 61
_FINE_POINTS = 48


_UNIT_LADDER = np.logspace(*_LADDER_DECADES, _LADDER_POINTS)


def _ladder(f_hz: float) -> np.ndarray:
    """The coarse GBW ladder (Hz): f/10 to f·10⁹."""
    return f_hz * _UNIT_LADDER


def with_gbw(netlist: Netlist, family: OpAmpFamily | AmpFamily | None, w_ref: float, gbw: np.ndarray, a0: float) -> Rational:
    """Transfer functions with single-pole op-amps of these GBWs (Hz): through the op-amp family
    when there is one, else a batched solve."""
    if family is not None:
        return family.at(gbw, a0)
    return transfer_function(netlist, gbw_hz=gbw, a0=np.full(gbw.shape, a0), w_ref=w_ref)


def _spread(tolerances: Tolerances) -> float:
    """How far from the ideal figures a ladder's member is sought: about twice the tolerances
    (a member farther off fails whatever its exact figures are)."""
    return 2.0 * (tolerances.f0 + tolerances.q) + 0.02


def _near_figures(h: Rational, ideal: Figures, tolerances: Tolerances, phase_rows: Sequence[int] = ()) -> Figures:
    """Figures sought near the ideal ones (:func:`bandsmith.analysis.figures.measure_near`),
    within :func:`_spread` of them; the centre phase of ``phase_rows`` only (the search holds
    the ladders' members to the tolerances, which do not read it: a probe's is kept)."""
    return measure_near(h, ideal, spread=_spread(tolerances), phase_rows=phase_rows)


def search_gbw_many(
    items: Sequence[tuple[Netlist, Figures, OpAmpFamily | AmpFamily | None, float, float | None]], *, a0: float,
    tolerances: Tolerances | Sequence[Tolerances],
) -> list[tuple[tuple[float | None, str | None], tuple[Rational, Figures] | None]]:
    """The required-GBW search of several candidates ``(netlist, ideal figures, op-amp family or
    None, w_ref, probe)``: a coarse ladder for each, all measured in one batch (each member near
    its own candidate's ideal figures), then a fine ladder in a candidate's last failing step
    where its coarse one cannot be interpolated. ``tolerances``: one for all, or one per
    candidate (a chain's stages are held to their own): each member is sought near, and held
    to, its own candidate's, with the same numbers as a search of that candidate alone.

    The answer depends only on the members from the last failing one's predecessor up, and on
    whether every member passes (:func:`_conclude_many`): the first round measures each ladder
    from :func:`_first_measured` up, and only a candidate whose measured members leave the
    answer open (:func:`_settled`) has its whole ladder measured, in a second round. A member's
    figures are the same in any batch (each is measured on its own), so every answer is the one
    of its whole ladder measured at once.

    Returns, per candidate, ``((gbw_hz or None, reason or None), probe)``: with a ``probe`` (a
    GBW in Hz, same ``a0``) riding along in the first round, its transfer function and figures
    (NaN figures where they are not near the ideal ones: the caller measures them exactly).
    """
    out: list = [((None, "the circuit has no band-pass peak with an ideal op-amp"), None)] * len(items)
    each = tolerances_each(tolerances, len(items))
    live = []  # (candidate, its coarse ladder, its ideal figures as scalars, its first member measured)
    for i, (_, ideal, _, _, _) in enumerate(items):
        ref = ideal.item()
        if math.isfinite(ref.f0_hz) and math.isfinite(ref.q):
            live.append((i, _ladder(ref.f0_hz), ref, _first_measured(ref)))
    if not live:
        return out
    live.sort(key=lambda entry: _batch_key(items[entry[0]][2]))  # (stable: in order within a kind)
    h, fig, ok, starts = _measured(items, live, each, a0, probes=True)
    ok_list = ok.tolist()
    settled, again, probe_rows = [], [], {}
    for (i, ladder, ref, first), start in zip(live, starts):
        size = ladder.size - first
        if items[i][4] is not None:  # the probe, after the ladder's members
            probe_rows[i] = start + size
        if _settled(ok_list[start : start + size], first):
            settled.append((i, (items[i], ref, ladder, start, first, each[i])))
        else:
            again.append((i, ladder, ref, 0))
    rows = list(probe_rows.values())
    if len(rows) > 1:  # (gathered at once)
        probes = dict(zip(probe_rows, zip(h.items(rows), fig.members(rows))))
    else:
        probes = {i: (h.item(r), fig.take(slice(r, r + 1))) for i, r in probe_rows.items()}
    found = dict(zip([i for i, _ in settled], _conclude_many([case for _, case in settled], fig, ok, a0=a0)))
    if again:  # the whole ladders of those the first round left open
        _, fig, ok, starts = _measured(items, again, each, a0, probes=False)
        cases = [(items[i], ref, ladder, start, 0, each[i]) for (i, ladder, ref, _), start in zip(again, starts)]
        found.update(zip([i for i, _, _, _ in again], _conclude_many(cases, fig, ok, a0=a0)))
    for i, _, _, _ in live:
        out[i] = (found[i], probes.get(i))
    return out


# The first round measures a coarse ladder from this many steps below the rule of thumb's GBW
# (100·|centre gain|·f0) up: over 60 seeded random compares (385 searches: f0 50 Hz–200 kHz,
# Q 0.5–60, gain 0.3–30, four series and op-amps) the last failing member lay from 11 steps
# below that GBW's step to 10 above, so the first round settles nearly every search; one it does
# not is measured whole, to the same answer.
_BELOW_RULE = 12
_STEPS_PER_DECADE = (_LADDER_POINTS - 1) / (_LADDER_DECADES[1] - _LADDER_DECADES[0])


def _first_measured(ref: Figures) -> int:
    """The first member of a candidate's coarse ladder (:func:`_ladder`, ``f0·10^(−1 + k/6)``) that
    the first round measures: :data:`_BELOW_RULE` steps below the rule of thumb's GBW, at least
    the first and at most the fourth from the top (0 where the centre gain is not a number above
    zero)."""
    rule = 100.0 * abs(ref.gain_center)  # the rule of thumb's GBW over f0
    if not (math.isfinite(rule) and rule > 0.0):
        return 0
    step = math.floor((math.log10(rule) - _LADDER_DECADES[0]) * _STEPS_PER_DECADE)
    return max(0, min(step - _BELOW_RULE, _LADDER_POINTS - 4))


def _settled(passed: list[bool], first: int) -> bool:
    """True when a coarse ladder's members from ``first`` up, passing or not (``passed``), decide
    its search (:func:`_conclude_many`): the top one fails (no GBW is enough), or the last one to
    fail has a measured predecessor (the cubic's four points), or the whole ladder was measured."""
    if not passed[-1] or first == 0:
        return True
    last_fail = len(passed) - 1 - passed[::-1].index(False) if False in passed else -1
    return last_fail >= 1


def _measured(items, live, each, a0: float, *, probes: bool) -> tuple[Rational, Figures, np.ndarray, list[int]]:
    """The coarse ladders of ``live`` candidates ``(i, ladder, ref, first)`` of ``items``, each from
    its member ``first`` (and with ``probes``, its probe after them), made and measured in one
    batch: ``(h, figures, within tolerances, each candidate's first row)``."""
    gbws = []
    for i, ladder, _, first in live:
        rungs = ladder[first:] if first else ladder
        probe = items[i][4] if probes else None
        gbws.append(rungs if probe is None else np.concatenate((rungs, [probe])))
    h = _ladders([items[i][:4] for i, _, _, _ in live], gbws, a0)
    sizes = [g.size for g in gbws]
    # one member's figures for all, or each candidate's (as scalars) repeated over its members
    ref = items[live[0][0]][1] if len(live) == 1 else Figures.repeated([one for _, _, one, _ in live], sizes)
    tols = [each[i] for i, _, _, _ in live]
    starts = list(itertools.accumulate(sizes[:-1], initial=0))
    phase_rows = [start + size - 1 for (i, _, _, _), start, size in zip(live, starts, sizes) if probes and items[i][4] is not None]
    if all(t is tols[0] or t == tols[0] for t in tols):  # one for all
        fig = _near_figures(h, ref, tols[0], phase_rows)
        ok = within_tolerances(fig, ref, tols[0])  # every member against its own candidate's figures
    else:  # each member sought near, and held to, its own candidate's
        fig = measure_near(h, ref, spread=np.repeat([_spread(t) for t in tols], sizes), phase_rows=phase_rows)
        ok = within_tolerances(fig, ref, tols, sizes)
    return h, fig, ok, starts


def _batch_key(family: OpAmpFamily | AmpFamily | None) -> tuple:
    """Where a candidate's ladder goes in a batch (:func:`search_gbw_many` orders its candidates
    by it; a member's figures are the same in any batch): the one-op-amp families first, then the
    several-op-amp ones by their terms' sizes (so that those whose shifted terms have one shape
    lie together: :func:`_ladders` weighs them as one stack), the rest last."""
    if isinstance(family, OpAmpFamily):
        return (0,)
    if isinstance(family, AmpFamily):
        return (1, _terms_shape(family))
    return (2,)


def _terms_shape(family: AmpFamily) -> tuple:
    """The sizes of a several-op-amp family's terms (which set its shifted terms' shapes)."""
    return tuple(t.size for t in family.num_terms), tuple(t.size for t in family.den_terms)


def _ladders(items, gbws: list[np.ndarray], a0: float) -> Rational:
    """:func:`with_gbw` of several candidates ``(netlist, ideal figures, family, w_ref)`` at their
    GBW ladders (Hz), joined into one batch (:meth:`Rational.joined`'s: each polynomial padded
    with leading zeros to the longest): the members of one-op-amp families made together, the
    op-amp weights (:func:`~bandsmith.solver.rational.family_weights`) of every several-op-amp
    family in one call, and those families' sums by runs of one shape
    (:func:`~bandsmith.solver.rational.family_sums`; :func:`_batch_key` orders candidates so).

    An :class:`OpAmpFamily` member is ``D = D0 − α·M − β·M·p`` (``α = 1/A0``, ``β = w_ref/ωt``)
    over the numerator ``N``, both scaled by ``D``'s largest coefficient: the same operations on
    every family's rows, so the families' ``D0``, ``M``, ``M·p`` and ``N``, each padded with
    leading zeros to the longest, are repeated over their ladders and taken in one batch (a
    padded zero stays zero, and leaves each member's largest coefficient as it is).

    The weights' pairs ``(j, i)`` come in the order of ``j``, so the weights of a family of
    ``m`` op-amps are the first columns of those of the most op-amps (the same products). Every
    family's rows are written unscaled into the joined batch and scaled there in one pass: each
    row over its denominator's largest coefficient in size (the padding's zeros leave it as it
    is), a several-op-amp row whose denominator is zero throughout over 1 (as
    :meth:`AmpFamily.weighted` scales it), a one-op-amp row over its zero (as
    :meth:`OpAmpFamily.at` does). Candidates without a family are solved as they are
    (:func:`with_gbw`) and written in after."""
    if len(items) == 1:  # (one candidate: its own, nothing to join)
        netlist, _, family, w_ref = items[0]
        return with_gbw(netlist, family, w_ref, gbws[0], a0)
    sizes = [g.size for g in gbws]
    starts = list(itertools.accumulate(sizes, initial=0))
    blocks = []  # (first row, numerators, denominators): a family's members, not yet scaled
    singles = [k for k, it in enumerate(items) if isinstance(it[2], OpAmpFamily)]
    if singles:
        fams = [items[k][2] for k in singles]
        counts = [sizes[k] for k in singles]
        n = max(f.width for f in fams)
        width = max(f.num.size for f in fams)
        d0, m, mp, num = (np.zeros((len(fams), w)) for w in (n, n, n, width))
        for r, f in enumerate(fams):
            f.rows_into(d0[r], m[r], mp[r])
            num[r, width - f.num.size :] = f.num
        alpha = 1.0 / np.asarray(a0, dtype=float)
        beta = np.repeat([f.w_ref for f in fams], counts) / (2.0 * np.pi * np.concatenate([gbws[k] for k in singles]))
        # (D0 − α·M is the same for every member of a family: taken once per family, then repeated)
        den = np.repeat(d0 - alpha * m, counts, axis=0) - beta[:, None] * np.repeat(mp, counts, axis=0)
        num = np.repeat(num, counts, axis=0)
        if singles[-1] - singles[0] == len(singles) - 1:  # their rows one run (as _batch_key orders them)
            blocks.append((starts[singles[0]], num, den))
        else:
            for k, row in zip(singles, itertools.accumulate(counts[:-1], initial=0)):
                blocks.append((starts[k], num[row : row + sizes[k]], den[row : row + sizes[k]]))
    amps = [k for k, it in enumerate(items) if isinstance(it[2], AmpFamily)]
    if amps:
        alpha = (1.0 / np.asarray(a0, dtype=float)).reshape(1)
        beta = np.concatenate([items[k][2].w_ref / (2.0 * np.pi * gbws[k]) for k in amps])
        weights = family_weights(alpha, beta, max(len(items[k][2].den_terms) for k in amps) - 1)
        rows = dict(zip(amps, itertools.accumulate([sizes[k] for k in amps[:-1]], initial=0)))
        for _, run in itertools.groupby(amps, key=lambda k: _terms_shape(items[k][2])):
            run = list(run)
            fams = [items[k][2] for k in run]
            pairs = len(fams[0].den_terms) * (len(fams[0].den_terms) + 1) // 2  # (j, i) for 0 ≤ i ≤ j ≤ m
            sums = family_sums(fams, [weights[rows[k] : rows[k] + sizes[k], :pairs] for k in run])
            blocks.extend((starts[k], num, den) for k, (num, den) in zip(run, sums))
    alone = [(starts[k], with_gbw(netlist, family, w_ref, gbws[k], a0))
             for k, (netlist, _, family, w_ref) in enumerate(items) if not isinstance(family, (OpAmpFamily, AmpFamily))]
    if not blocks:
        return alone[0][1] if len(alone) == 1 else Rational.joined([h for _, h in alone])
    parts = blocks + [(start, h.num, h.den) for start, h in alone]
    num = np.zeros((starts[-1], max(p[1].shape[1] for p in parts)))
    den = np.zeros((starts[-1], max(p[2].shape[1] for p in parts)))
    for start, n_rows, d_rows in blocks:
        num[start : start + n_rows.shape[0], num.shape[1] - n_rows.shape[1] :] = n_rows
        den[start : start + d_rows.shape[0], den.shape[1] - d_rows.shape[1] :] = d_rows
    scale = largest_in_rows(den)
    zero = scale == 0
    if zero.any():
        for k in singles:  # (a one-op-amp row divides by its zero)
            zero[starts[k] : starts[k + 1]] = False
        scale[zero] = 1.0
    num /= scale
    den /= scale
    w_ref = np.repeat([it[2].w_ref if isinstance(it[2], (OpAmpFamily, AmpFamily)) else 0.0 for it in items], sizes)
    for start, h in alone:  # already scaled (their rows are zeros here)
        num[start : start + h.batch, num.shape[1] - h.num.shape[1] :] = h.num
        den[start : start + h.batch, den.shape[1] - h.den.shape[1] :] = h.den
        w_ref[start : start + h.batch] = h.w_ref
    return Rational(num, den, w_ref)


# Lagrange basis of the ladder points j−1, j, j+1, j+2 (uniform in log GBW) at sub-steps
# t ∈ [0, 1] of the step from j to j+1: shape (T, 4).
_SUB = np.linspace(0.0, 1.0, 257)
_BASIS = np.stack(
    [
        -_SUB * (_SUB - 1.0) * (_SUB - 2.0) / 6.0,
        (_SUB + 1.0) * (_SUB - 1.0) * (_SUB - 2.0) / 2.0,
        -(_SUB + 1.0) * _SUB * (_SUB - 2.0) / 2.0,
        (_SUB + 1.0) * _SUB * (_SUB - 1.0) / 6.0,
    ],
    axis=1,
)
_BASIS_ROWS = np.ascontiguousarray(_BASIS.T)  # (4, T): each basis polynomial over the sub-steps
# The reported GBW lies this fraction above the interpolated crossing (the interpolation error
# of a cubic over a ladder step is below 0.1 % in GBW for these smooth errors).
_CROSSING_MARGIN = 0.005


def _crossings(fig: Figures, cases: Sequence[tuple[Figures, np.ndarray, int, int, Tolerances]]) -> list[float | None]:
    """The required GBW (Hz) of each case ``(ref, ladder, start, j, tolerances)`` inside its ladder step from
    ``j`` (failing) to ``j + 1`` (passing): each figure's error is interpolated by the cubic
    through the ladder points ``j − 1 … j + 2`` (uniform in log GBW), and the last sub-step where
    the worst error exceeds its tolerance is found; the result is :data:`_CROSSING_MARGIN` above
    it. None where the four points are not all measured (a point too far off) or the
    interpolation disagrees with the measured pass and fail at ``j`` and ``j + 1``: the caller
    then measures a fine ladder. A case's ladder is members ``start …`` of ``fig`` (the batch the
    ladders of several candidates are measured in, not taken apart).

    The errors over the tolerances at the cases' four points come as arrays for many cases
    (:func:`_errors_at_once`), in plain numbers for one or two (:func:`_case_errors`): the same
    numbers; the cubics of the cases kept are evaluated in one batch, the basis' four terms added
    in order (the same numbers for a case whatever the batch)."""
    out: list[float | None] = [None] * len(cases)
    inner = [n for n, (_, ladder, _, j, _) in enumerate(cases) if 1 <= j and j + 2 < ladder.size]
    if not inner:
        return out
    if len(inner) <= _ONE_BY_ONE:
        err, kept = _case_errors(fig, [cases[n] for n in inner])
    else:
        err, kept = _errors_at_once(fig, [cases[n] for n in inner])
    if not kept:
        return out
    # (C, 3, T): each figure's cubic over the sub-steps, the basis' four terms added in order
    # (einsum's own loop, the same numbers as the terms added one by one: tested)
    e = np.abs(np.einsum("cfj,jt->cft", err, _BASIS_ROWS, optimize=False))
    worst = e.max(axis=1)  # (C, T): the worst of the three
    last = (_SUB.size - np.argmax(worst[:, ::-1] > 1.0, axis=1)).tolist()  # the sub-step after the last one over
    for c, k in zip(kept, last):
        n = inner[c]
        ladder, j = cases[n][1], cases[n][3]
        step = math.log(ladder[j + 1] / ladder[j])
        out[n] = float(ladder[j] * math.exp(_SUB[k] * step) * (1.0 + _CROSSING_MARGIN))
    return out


_FOUR = np.arange(4)  # a case's four ladder points j − 1 … j + 2, from j − 1
# Up to this many cases (a candidate searched alone) their errors are worked in plain numbers.
_ONE_BY_ONE = 2


def _errors_at_once(fig: Figures, cases) -> tuple[np.ndarray, list[int]]:
    """:func:`_crossings`' errors over tolerances at each case's four points, ``(kept cases, 3,
    4)``, and the indices of the cases kept (all four points measured and of the ideal's sign,
    over one at the failing point and within one at the passing point), every case at once:
    the four points' figures gathered from ``fig`` and the errors worked as arrays (the IEEE
    operations of each error worked alone)."""
    rows = np.array([start + j - 1 for _, _, start, j, _ in cases])[:, None] + _FOUR  # (C, 4): each case's points
    # per case: its ideal f0, Q, gain in dB and gain, and its tolerances on the first three, (C, 7)
    refs = np.array([(r.f0_hz, r.q, r.gain_center_db, r.gain_center, t.f0, t.q, t.gain_db) for r, _, _, _, t in cases])
    f0s, qs, dbs, gains = (np.asarray(v)[rows] for v in (fig.f0_hz, fig.q, fig.gain_center_db, fig.gain_center))
    err = np.stack([(f0s / refs[:, 0:1] - 1.0) / refs[:, 4:5], (qs / refs[:, 1:2] - 1.0) / refs[:, 5:6],
                    (dbs - refs[:, 2:3]) / refs[:, 6:7]], axis=1)  # (C, 3, 4)
    size = np.abs(err)
    with np.errstate(invalid="ignore"):
        # the cubic is the failing point's error at the step's start and the passing point's at
        # its end (the basis is exactly 0 or 1 there): the interpolation must agree with both
        good = np.isfinite(err).all(axis=(1, 2)) & (size[:, :, 1].max(axis=1) > 1.0) & (size[:, :, 2].max(axis=1) <= 1.0)
    good &= (np.copysign(1.0, gains) == np.copysign(1.0, refs[:, 3:4])).all(axis=1)
    kept = np.flatnonzero(good).tolist()
    return err[kept], kept


def _case_errors(fig: Figures, cases) -> tuple[np.ndarray, list[int]]:
    """:func:`_errors_at_once` case by case in plain numbers (the same IEEE operations; a few
    cases cost fewer array calls so)."""
    f0s, qs, dbs, gains = (np.asarray(v) for v in (fig.f0_hz, fig.q, fig.gain_center_db, fig.gain_center))
    errs, kept = [], []
    for c, (ref, _, start, j, tol) in enumerate(cases):
        sl = slice(start + j - 1, start + j + 3)
        err = [[(v / ref.f0_hz - 1.0) / tol.f0 for v in f0s[sl].tolist()], [(v / ref.q - 1.0) / tol.q for v in qs[sl].tolist()],
               [(v - ref.gain_center_db) / tol.gain_db for v in dbs[sl].tolist()]]
        # (a finite sum proves every error finite; one that is not is looked at term by term)
        if not math.isfinite(sum(map(sum, err))) and not all(math.isfinite(e) for row in err for e in row):
            continue
        sign = math.copysign(1.0, ref.gain_center)
        if not all(math.copysign(1.0, g) == sign for g in gains[sl].tolist()):
            continue
        if not (max(abs(row[1]) for row in err) > 1.0 and max(abs(row[2]) for row in err) <= 1.0):
            continue
        errs.append(err)
        kept.append(c)
    return np.array(errs).reshape(len(kept), 3, 4), kept


def _conclude_many(
    cases: Sequence[tuple[tuple, Figures, np.ndarray, int, int, Tolerances]], fig: Figures, ok: np.ndarray, *, a0: float,
) -> list[tuple[float | None, str | None]]:
    """The required GBW of each candidate from its coarse ladder, ``(item, ref, ladder, start,
    first, tolerances)``: its search item ``(netlist, ideal, family, w_ref, probe)``, its ideal
    figures ``ref`` (scalars) and its ladder, whose members from ``first`` on are measured as rows
    ``start …`` of ``fig``, ``ok`` where they are within its tolerances (members below ``first``
    only where :func:`_settled` says they cannot change the answer)."""
    out: list = [None] * len(cases)
    crossing = []  # (case, ref, ladder, start, j, tolerances): the last failing step, interpolated below
    ok_list = ok.tolist()
    for n, ((netlist, _, family, w_ref, _), ref, ladder, start, first, tol) in enumerate(cases):
        # the members below ``first``, not measured, count as failing: below the last that fails
        # (:func:`_settled`), they change nothing
        passed = [False] * first + ok_list[start : start + ladder.size - first]
        start -= first  # (member k of the ladder is row start + k: read from k = first on only)
        if not passed[-1]:
            top = measure(with_gbw(netlist, family, w_ref, ladder[-1:], a0)).item()
            out[n] = None, (
                f"no gain-bandwidth is enough with an open-loop gain of {a0:g}: even at {ladder[-1]:.3g} Hz "
                f"f0 is off by {100 * (top.f0_hz / ref.f0_hz - 1):+.3g} %, Q by {100 * (top.q / ref.q - 1):+.3g} % "
                f"and the gain by {top.gain_center_db - ref.gain_center_db:+.3g} dB; a larger A0 is needed"
            )
        elif all(passed):
            out[n] = float(ladder[0]), None
        else:
            crossing.append((n, ref, ladder, start, len(passed) - 1 - passed[::-1].index(False), tol))
    found = _crossings(fig, [c[1:] for c in crossing])
    for (n, ref, ladder, _, j, tol), gbw in zip(crossing, found):
        if gbw is None:  # a fine ladder across the last failing step
            netlist, _, family, w_ref, _ = cases[n][0]
            fine = geometric(float(ladder[j]), float(ladder[j + 1]), _FINE_POINTS)
            passes = within_tolerances(_near_figures(with_gbw(netlist, family, w_ref, fine, a0), ref, tol), ref, tol)
            fails = np.flatnonzero(~passes)
            # the last fine point is the ladder's passing one; if rounding fails it there, keep it anyway
            gbw = float(fine[min(fails[-1] + 1, fine.size - 1)] if fails.size else fine[0])
        out[n] = gbw, None
    return out


def required_gbw(
    netlist: Netlist,
    ideal: Figures,
    *,
    a0: float = DEFAULT_A0,
    tolerances: Tolerances = Tolerances(),
) -> tuple[float | None, str | None]:
    """Smallest single-pole GBW (Hz) from which on every figure stays within tolerance.

    Searched, not estimated: the figures are measured on a ladder of 61 GBW values from f0/10 to
    f0·10⁹ (near the ideal figures, :func:`bandsmith.analysis.figures.measure_near`; those from
    some steps below the rule of thumb's GBW up, the rest only where they can matter:
    :func:`search_gbw_many`); inside the step from the
    last failing to the first passing value each figure's error is interpolated by a cubic through
    four ladder points, and the answer is 0.5 % above the crossing (where the four points are not
    all measurable, 48 values across the step are measured instead, at most 1 % above). Returns
    ``(None, reason)`` when even the largest GBW fails (an open-loop gain ``a0`` too small).
    """
    ref = ideal.item()
    if not (math.isfinite(ref.f0_hz) and math.isfinite(ref.q)):
        return None, "the circuit has no band-pass peak with an ideal op-amp"
    w_ref = 2.0 * math.pi * ref.f0_hz
    family = rational_and_family(nominal_system(netlist), w_ref)[1]
    return search_gbw_many([(netlist, ideal, family, w_ref, None)], a0=a0, tolerances=tolerances)[0][0]
