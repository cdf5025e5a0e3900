"""Standard values for an exact design: a search over the combinations near it (used by :func:`bandsmith.design.designer.design`).

Every part that is neither pinned nor an inductor's winding resistance is offered the standard
values up to ``width`` steps of the series below and above its exact value (by default one step:
the two standard values that bracket it, or — for a value already standard, such as the capacitor
level a design procedure chose — itself and its two neighbours). Inductors are taken from E12
when E24 is asked (:func:`part_series_of`). All combinations are analysed in one batch (through
the circuit's coefficient expansion, :mod:`bandsmith.solver.expansion`, or one batched solve where it does not
apply; measured by :func:`bandsmith.analysis.figures.measure` — in closed form for second-order band-passes, by
exact roots otherwise, or on a grid around the target for very large batches), and the
combination with the least weighted error wins:

    E = √((Δf0/f0 / tol_f0)² + (ΔQ/Q / tol_q)² + (Δgain_dB / tol_gain_db)²),

the errors relative to the target and weighted by the tolerances of the conditions (by default
1 %, 5 % and 0.5 dB). Unstable combinations (a denominator failing Routh's test) are never chosen.
Because rounding every part alone to its nearest standard value is one of the combinations, the
search is never worse than that. The reported errors come from the full analysis of the chosen
parts, not from the search.
"""

from __future__ import annotations

import functools
import itertools
import math
from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from bandsmith.analysis.analyzer import Tolerances, transfer_function
from bandsmith.common.eseries import search_option_lists, search_options
from bandsmith.solver.expansion import SMALL_BATCH, Expansion, ExpansionUnavailable, unit_expansion, unit_expansion_values
from bandsmith.analysis.figures import Figures, biquad_peak_figures, measure, measure_many
from bandsmith.circuits.synthesis import Spec, search_grid
from bandsmith.solver.rational import Rational
from bandsmith.solver.stability import hurwitz_stable
from bandsmith.circuits.topology import Topology

__all__ = ["Choice", "errors_of", "errors_of_one", "figure_misses", "weighted_error", "choose_standard", "choose_standard_many", "choose_standard_groups", "part_series_of"]


# Batches up to this size are measured by exact roots (global, and cheaper there), larger on a grid.
_ROOTS_UP_TO = 4096


@dataclass(frozen=True, slots=True)
class Choice:
    """The outcome of a standard-value search.

    ``values`` are the chosen parts (None when no combination is stable); ``weighted`` and
    ``weighted_rounded`` are the weighted errors (see the module notes) of the chosen
    combination and of every part rounded alone, as measured in the search.
    """

    values: dict[str, float] | None
    combinations: int
    weighted: float
    weighted_rounded: float


def errors_of(fig: Figures, spec: Spec, i: int = 0) -> dict[str, float]:
    """``f0_pct``, ``q_pct``, ``gain_db`` of member ``i`` of ``fig`` against the target."""
    return errors_of_one(fig.item(i), spec)


def errors_of_one(one: Figures, spec: Spec) -> dict[str, float]:
    """:func:`errors_of` of figures already taken as scalars (:meth:`Figures.item`)."""
    return {
        "f0_pct": 100.0 * (one.f0_hz / spec.f0_hz - 1.0),
        "q_pct": 100.0 * (one.q / spec.q - 1.0),
        "gain_db": one.gain_center_db - 20.0 * math.log10(spec.gain),
    }


def figure_misses(errors: Mapping[str, float], tolerances: Tolerances) -> list[tuple[str, float, float, str]]:
    """The figures of an ``errors`` dict (:func:`errors_of`) outside the design tolerances, as
    ``(key, error, limit, unit)``: f0 and Q in %, the gain in dB; an undefined error is a miss."""
    out = []
    for key, limit, unit in (("f0_pct", 100.0 * tolerances.f0, "%"), ("q_pct", 100.0 * tolerances.q, "%"),
                             ("gain_db", tolerances.gain_db, "dB")):
        value = errors[key]
        if not math.isfinite(value) or abs(value) > limit:
            out.append((key, value, limit, unit))
    return out


def weighted_error(errors: Mapping[str, float], tolerances: Tolerances = Tolerances()) -> float:
    """The search's weighted error of an ``errors`` dict (see the module notes); inf if undefined."""
    e = math.sqrt(
        (errors["f0_pct"] / 100.0 / tolerances.f0) ** 2
        + (errors["q_pct"] / 100.0 / tolerances.q) ** 2
        + (errors["gain_db"] / tolerances.gain_db) ** 2
    )
    return e if math.isfinite(e) else math.inf


def _weighted_batch(fig: Figures, spec: Spec, tol: Tolerances) -> np.ndarray:
    """The weighted error (module notes) of every member of ``fig`` against ``spec``; inf where undefined."""
    return _weighted_rows(fig.f0_hz, fig.q, fig.gain_center_db, spec.f0_hz, spec.q, 20.0 * math.log10(spec.gain),
                          tol.f0, tol.q, tol.gain_db)


def _weighted_rows(f0, q, gain_db, f0_target, q_target, gain_db_target, tol_f0, tol_q, tol_gain_db, stable=None) -> np.ndarray:
    """:func:`_weighted_batch` from the figures' arrays, the targets and the tolerances each a
    scalar or one per member (the same operations member by member either way), inf also where
    ``stable`` (if given) is False. Each sum's terms made in place, in the order written in the
    module notes (``x ** 2`` of an array is numpy's square)."""
    with np.errstate(invalid="ignore", divide="ignore"):
        e = np.divide(f0, f0_target)
        e -= 1.0
        e /= tol_f0
        np.square(e, out=e)
        term = np.divide(q, q_target)
        term -= 1.0
        term /= tol_q
        np.square(term, out=term)
        e += term
        np.subtract(gain_db, gain_db_target, out=term)
        term /= tol_gain_db
        np.square(term, out=term)
        e += term
        np.sqrt(e, out=e)
    ok = np.isfinite(e)
    if stable is not None:
        ok &= stable
    return np.where(ok, e, np.inf)


def part_series_of(kind: str, series: str) -> str:
    """The series a part of this kind is chosen from: inductors from E12 when E24 is asked.

    Inductors are seldom stocked in E24 values (common practice, no source); E12 is a subset of
    E24, so the chosen values still lie in the series asked for.
    """
    return "E12" if kind == "L" and series == "E24" else series


def _options(x: np.ndarray, series: str, width: int) -> list[np.ndarray]:
    """For each value, the standard values up to ``width`` steps of the series below and above it
    (:func:`bandsmith.common.eseries.search_options`)."""
    return search_options(x, series, width)[0]


def _combinations(netlist, over: Mapping[str, np.ndarray], w_ref: float):
    """Transfer functions of every combination (part values by reference, arrays of one length).

    Through the netlist's coefficient expansion (:mod:`bandsmith.solver.expansion`, built once per circuit)
    when it applies, else one batched solve.
    """
    try:
        exp, variables = unit_expansion(netlist)
    except ExpansionUnavailable:
        return transfer_function(netlist, overrides=over, w_ref=w_ref)
    size = len(next(iter(over.values())))
    ratios = np.empty((size, len(exp.variables)))
    for j, (v, unit) in enumerate(zip(variables, exp.variables)):
        ratios[:, j] = (over[v.name] if v.name in over else v.value) / unit.value
    return exp.rational(ratios, w_ref=w_ref)


@functools.lru_cache(maxsize=64)
def _log_plan(exp, free: tuple[str, ...], sizes: tuple[int, ...]) -> tuple[np.ndarray, tuple[int, ...], np.ndarray, tuple[np.ndarray, np.ndarray]]:
    """What :func:`_combination_searches` needs of an expansion ``exp`` (a kept unit expansion, one
    per circuit structure) for these free parts and option counts, made once: the unit value of
    each of a search's entries (a free part's options and nearest value over its variable's
    unit, then each held variable's unit), the held variables' columns, :func:`_log_gather`'s
    positions and :func:`_monomial_rows`' rows and picks. Read-only."""
    at = {r: k for k, r in enumerate(free)}
    units = [u.value for u in exp.variables]
    held = tuple(j for j, u in enumerate(exp.variables) if u.name not in at)
    per_entry = np.concatenate([np.repeat([units[exp.column[r]] for r in free], [n + 1 for n in sizes]), [units[j] for j in held]])
    per_entry.setflags(write=False)
    rows = tuple(at.get(u.name, -1) for u in exp.variables)
    return per_entry, held, _log_gather(sizes, rows), _monomial_rows(sizes, rows, exp.monomial_supports())


@functools.lru_cache(maxsize=64)
def _log_gather(sizes: tuple[int, ...], rows: tuple[int, ...]) -> np.ndarray:
    """``(combinations, variables)`` positions in :func:`_combination_searches`' logs, row by row
    the log ratios of one combination (the member that rounds every part alone last): variable
    ``j`` is free part ``rows[j]`` (its row of :func:`_flat_combination_index`) or, where
    ``rows[j]`` is −1, held at its own value (one entry after the options, in the variables'
    order). Read-only."""
    return _positions(_combination_index(sizes), sizes, rows)


def _positions(index: np.ndarray, sizes: tuple[int, ...], rows: tuple[int, ...]) -> np.ndarray:
    """:func:`_log_gather` of the members whose entries (one column per member, one row per
    free part, as :func:`_combination_index`'s) ``index`` gives: the positions of their log
    ratios in a search's row of logs, ``(members, variables)``, read-only."""
    starts = np.cumsum((0,) + tuple(n + 1 for n in sizes[:-1]))
    n_flat = sum(sizes) + len(sizes)
    out = np.empty((index.shape[1], len(rows)), dtype=np.intp)
    held = 0
    for j, r in enumerate(rows):
        if r >= 0:
            np.add(index[r], starts[r], out=out[:, j])
        else:
            out[:, j] = n_flat + held
            held += 1
    out.setflags(write=False)
    return out


@functools.lru_cache(maxsize=64)
def _monomial_rows(sizes: tuple[int, ...], rows: tuple[int, ...], supports: tuple[tuple[int, ...], ...]) -> tuple[np.ndarray, np.ndarray]:
    """The few rows of log ratios from which every combination's monomials are taken, and where
    each is taken from (:meth:`~bandsmith.solver.expansion.Expansion.dense_log_finite_picked_into`):
    monomial ``m`` reads only the variables ``supports[m]`` (the others' exponents are zero), so
    its value at a combination is its value at any row with that combination's entries on the
    free parts among them (``rows`` as :func:`_log_gather` takes them); each such row here has
    the first option (entry 0) on every other free part (or, where those rows would be no fewer
    than the combinations, each combination's own). Returns the distinct rows' positions
    (:func:`_positions`, ``(R, variables)``) and ``(combinations, monomials)`` picks into the
    ``(R, monomials)`` monomials of those rows, flat. Read-only.

    A monomial's exponent of the log ratios is ``Σ_j lr_j·e_j`` over every variable; a term with
    ``e_j = 0`` is ±0 for a finite ``lr_j`` and adds nothing (``x + ±0 = x``; a sum of zeros is
    ±0, and ``exp(±0) = 1``), so with the same entries on its support, the same terms in the same
    order make the same sum at any row (the product is taken row by row: tested)."""
    index = _combination_index(sizes)
    n_parts, members = index.shape
    reads = np.zeros((len(supports), n_parts), dtype=bool)  # monomial × free part it reads
    for m, support in enumerate(supports):
        for j in support:
            if rows[j] >= 0:
                reads[m, rows[j]] = True
    # each (monomial, member)'s row: the member's entries where the monomial reads, 0 elsewhere,
    # as one number (the entries' digits in the radices n + 1, the last part's lowest)
    radices = [n + 1 for n in sizes]
    strides = [math.prod(radices[p + 1:]) for p in range(n_parts)]
    distinct = None
    if math.prod(radices) < 2 ** 62:
        codes = (reads.astype(np.int64) * strides) @ index.astype(np.int64)  # (monomials, members)
        unique, inverse = np.unique(codes.reshape(-1), return_inverse=True)
        if unique.size < members:
            distinct = (unique[None, :] // np.array(strides, dtype=np.int64)[:, None]) % np.array(radices, dtype=np.int64)[:, None]
    if distinct is None:  # (no fewer rows than the combinations': each its own)
        distinct, inverse = index, np.tile(np.arange(members), len(supports))
    picks = inverse.reshape(len(supports), members).T * len(supports) + np.arange(len(supports))
    picks = np.ascontiguousarray(picks, dtype=np.intp)
    picks.setflags(write=False)
    return _positions(distinct, sizes, rows), picks


@functools.lru_cache(maxsize=64)
def _combination_index(sizes: tuple[int, ...]) -> np.ndarray:
    """Index rows ``(len(sizes), N + 1)`` that enumerate every combination of options of these
    counts (the last part fastest, as ``np.meshgrid(..., indexing="ij")``), then one more column
    that points each part at the entry after its options (the nearest value)."""
    grid = np.indices(sizes).reshape(len(sizes), -1)
    index = np.concatenate([grid, np.array(sizes)[:, None]], axis=1)
    index.setflags(write=False)
    return index


@functools.lru_cache(maxsize=64)
def _flat_combination_index(sizes: tuple[int, ...]) -> np.ndarray:
    """:func:`_combination_index` into one flat array holding each part's options and then its
    nearest value, part after part: every combination's values are one fancy index of it."""
    starts = np.cumsum((0,) + tuple(n + 1 for n in sizes[:-1]))
    index = _combination_index(sizes) + starts[:, None]
    index.setflags(write=False)
    return index


def choose_standard(
    topology: Topology,
    exact: Mapping[str, float],
    spec: Spec,
    series: str,
    *,
    keep: tuple[str, ...] = (),
    tolerances: Tolerances = Tolerances(),
    width: int = 1,
) -> Choice:
    """Choose standard values for the parts not in ``keep`` by a batched combination search.

    See the module notes. Optional parts (the winding resistance) are never changed.
    """
    return choose_standard_many([(topology, exact, spec, series, keep, tolerances, width)])[0]


def choose_standard_many(items: Sequence[tuple]) -> list[Choice]:
    """:func:`choose_standard` of several circuits at once, each item ``(topology, exact, spec,
    series, keep, tolerances, width)``: every circuit builds its own combinations and chooses its
    own parts. Where every combination of every circuit is a second-order band-pass (an ideal
    op-amp's, the lossless tank's) and none has more than a few thousand, their costs come from
    the closed form in one batch (:func:`_peak_costs`); else the combinations are measured
    (:func:`bandsmith.analysis.figures.measure_many`, by exact roots, or on a grid for the
    largest) and costed in batches of one width. The costs are the same either way (the closed
    form is what measure_many takes member by member for such a batch), but for a search with a
    combination that has no peak (a zero ``a1``: never stable, so never chosen), whose other
    combinations measure_many would take through polynomial roots, a few units in the last place
    apart."""
    return choose_standard_groups([items])[0]


def choose_standard_groups(groups: Sequence[Sequence[tuple]], *, checked: bool = False) -> list[list[Choice]]:
    """:func:`choose_standard_many` of each group of items (a chain's stages, each with its
    circuits), the same choices: where the closed form serves every group that
    choose_standard_many would cost by it, their costs come from one closed-form batch over all
    of them. The closed form's operations are element by element (each member's costs the same
    numbers in any batch), and a joined batch takes it only where each group alone would (every
    member of the joined batch a second-order band-pass); else each group is costed as alone.
    ``checked``: every item's exact values are :meth:`Topology.values_from`'s already (a
    design's), so they are taken as they are instead of validated again."""
    with np.errstate(all="ignore"):  # far-off combinations may overflow; they are simply not chosen
        found = _combination_searches([item for items in groups for item in items], checked=checked,
                                      groups=[g for g, items in enumerate(groups) for _ in items])
        every = iter(found)
        made = [[next(every) for _ in items] for items in groups]
        lives = [[i for i, m in enumerate(ms) if isinstance(m, _Search)] for ms in made]
        peaked = [g for g, (ms, live) in enumerate(zip(made, lives))
                  if live and all(ms[i].batch <= _ROOTS_UP_TO for i in live)]
        if len(peaked) > 1:
            joined = [made[g][i] for g in peaked for i in lives[g]]
            peaks = _peak_costs(joined)
            if peaks is not None:  # every combination of every such group a second-order band-pass
                costs = iter(peaks)
                for g in peaked:
                    for i in lives[g]:
                        made[g][i] = made[g][i].choice(next(costs))
                peaked = []
        for g, (ms, live) in enumerate(zip(made, lives)):
            if live and isinstance(ms[live[0]], _Search):  # (not yet chosen above)
                _choose_searches(ms, live, g in peaked)
    if any(isinstance(m, _Same) for m in found):  # each the choice of the search it repeats
        place = [(g, i) for g, items in enumerate(groups) for i in range(len(items))]
        for k, m in enumerate(found):
            if isinstance(m, _Same):
                g, i = place[k]
                og, oi = place[m.of]
                made[g][i] = m.choice(made[og][oi])
    return made


def _choose_searches(made: list, live: list[int], by_peaks: bool) -> None:
    """The searches ``live`` of ``made`` replaced by their choices (:func:`choose_standard_many`'s
    rule: by the closed form where ``by_peaks`` (each small enough for exact roots) and every
    combination is a second-order band-pass, else measured). Floating-point warnings are the
    caller's to silence."""
    if by_peaks:
        peaks = _peak_costs([made[i] for i in live])
        if peaks is not None:  # every combination a second-order band-pass: the closed form
            for i, cost in zip(live, peaks):
                made[i] = made[i].choice(cost)
            return
    by_roots = [i for i in live if made[i].batch <= _ROOTS_UP_TO]
    # exact polynomial roots up to a few thousand members; a grid around the target beyond
    figs = dict(zip(by_roots, measure_many([made[i].h for i in by_roots])))
    figs.update((i, measure(made[i].h, grid=search_grid(made[i].spec.q))) for i in live if i not in figs)
    for group in _same_width(made, live):
        costs = _costs([made[i] for i in group], [figs[i] for i in group])
        for i, cost in zip(group, costs):
            made[i] = made[i].choice(cost)


def _peak_costs(searches: list[_Search]) -> list[np.ndarray] | None:
    """Each search's costs (:func:`_costs`) where every combination of every search is a
    second-order band-pass (an ideal op-amp's circuit, the lossless tank): f0, Q and the gain of
    all of them at once in closed form (:func:`bandsmith.analysis.figures.biquad_peak_figures`,
    the numbers of :func:`~bandsmith.analysis.figures.measure_many`'s closed form without the band
    edges and the phase; a combination with no peak is not stable and costs inf either way); None
    where a combination is of another shape."""
    h, order = (searches[0].h, [0]) if len(searches) == 1 else _joined_rows(searches)
    # (Routh–Hurwitz first: its working arrays are let go before the closed form makes its own,
    # and over a chain's tens of thousands of combinations fresh memory costs more than either)
    stable = hurwitz_stable(h.den)
    peaks = biquad_peak_figures(h)
    if peaks is None:
        return None
    out = [None] * len(searches)
    for i, cost in zip(order, _joined_costs([searches[i] for i in order], *peaks, h.den, stable)):
        out[i] = cost
    return out


def _in_p_columns(c: np.ndarray, ks: list[float], sizes: list[int]) -> np.ndarray:
    """Joined dense coefficients ``c`` (highest power first) in a new column-major array, each
    search's members (``sizes`` of them, in turn) taken to ``p = s/w_ref`` by its ``k`` of
    ``ks``: column ``j`` times ``k`` to the power ``n − 1 − j``, those powers
    ``k ** arange(n − 1, −1, −1.0)`` as :meth:`~bandsmith.solver.expansion.Expansion.rational`
    makes them (once per distinct ``k``), each column's products written into its place; a copy
    where every ``k`` is 1 (no change of variable)."""
    out = np.empty(c.shape, order="F")
    distinct = list(dict.fromkeys(ks))
    n = c.shape[1]
    if distinct == [1.0]:
        out[...] = c
        return out
    powers = [k ** np.arange(n - 1, -1, -1.0) for k in distinct]
    if len(distinct) == 1:
        for j in range(n):
            np.multiply(c[:, j], powers[0][j], out=out[:, j])
        return out
    at = {k: i for i, k in enumerate(distinct)}
    # (n, members): row j every member's power of its k, each search's repeated over its members
    repeated = np.repeat(np.array(powers)[[at[k] for k in ks]].T, sizes, axis=1)
    for j in range(n):
        np.multiply(c[:, j], repeated[j], out=out[:, j])
    return out


def _joined_rows(searches: list[_Search]) -> tuple[Rational, list[int]]:
    """The searches' transfer functions in one batch, and the searches' positions in the order
    of its rows: the batch they were made in (its rows from the first of them on, a view) where
    together they are consecutive rows of it, in any order, else :meth:`Rational.joined` of them
    in their order (the same numbers either way: no padding is needed among transfer functions
    of one width)."""
    joined = searches[0].rows[0]
    if all(m.rows[0] is joined for m in searches):
        order = sorted(range(len(searches)), key=lambda i: searches[i].rows[1])
        start = at = searches[order[0]].rows[1]
        for i in order:
            if searches[i].rows[1] != at:
                break
            at = searches[i].rows[2]
        else:
            return (joined if start == 0 and at == joined.batch else joined.take(slice(start, at))), order
    return Rational.joined([m.h for m in searches]), list(range(len(searches)))


def _same_width(made: list, live: list[int]) -> list[list[int]]:
    """The searches of ``live`` in groups whose denominators have one width (all of them, as a
    rule: the combinations of an ideal op-amp's circuit are second order)."""
    groups: dict[int, list[int]] = {}
    for i in live:
        groups.setdefault(made[i].h.den.shape[1], []).append(i)
    return list(groups.values())


def _costs(searches: list[_Search], figs: list[Figures]) -> list[np.ndarray]:
    """Each search's costs from its figures (:func:`_joined_costs`; denominators of one width)."""

    def joined(name: str) -> np.ndarray:
        return np.concatenate([getattr(f, name) for f in figs])

    return _joined_costs(searches, joined("f0_hz"), joined("q"), joined("gain_center_db"), np.concatenate([m.h.den for m in searches]))


def _joined_costs(searches: list[_Search], f0, q, gain_db, den, stable: np.ndarray | None = None) -> list[np.ndarray]:
    """Each search's costs: its weighted errors where the combination is stable (Routh–Hurwitz on
    ``den``) and measured (f0, Q and the gain finite: :func:`~bandsmith.analysis.figures.defined`), inf elsewhere;
    the figures and denominators of every search joined, each search's targets and tolerances
    repeated over its members (the same operations, member by member, as each search alone);
    ``stable``: Routh–Hurwitz on ``den`` where already made."""
    sizes = [m.batch for m in searches]
    # each search's targets and tolerances, (f0, Q, gain in dB, tol f0, tol Q, tol gain): one
    # number where every search has the same (a compare, a chain's stage), broadcast over the
    # members as its repetition would be, element by element
    rows = {(m.spec, m.tolerances): None for m in searches}
    if len(rows) == 1:
        (spec, tol), = rows
        each = [spec.f0_hz, spec.q, 20.0 * math.log10(spec.gain), tol.f0, tol.q, tol.gain_db]
    else:
        columns = zip(*[(m.spec.f0_hz, m.spec.q, 20.0 * math.log10(m.spec.gain), m.tolerances.f0, m.tolerances.q, m.tolerances.gain_db)
                        for m in searches])
        each = [c[0] if all(v == c[0] for v in c) else np.repeat(c, sizes) for c in columns]
    # (where f0, Q or the gain is not finite, :func:`~bandsmith.analysis.figures.defined`, the
    # weighted error is not finite either, so already inf: the figures need no test of their own)
    cost = _weighted_rows(f0, q, gain_db, *each, hurwitz_stable(den) if stable is None else stable)
    ends = list(itertools.accumulate(sizes))
    return [cost[end - size:end] for size, end in zip(sizes, ends)]


@dataclass(frozen=True, slots=True)
class _Search:
    """One circuit's combinations (the flat options ``flat`` of the ``free`` parts taken by
    ``index``, parts × combinations, :func:`_flat_combination_index`; the last member every part
    rounded alone) and their transfer functions, waiting for their cost: the rows ``start`` to
    ``stop`` of the batch ``rows = (batch, start, stop)`` (a batch of several searches, or its
    own), taken out only where asked for (:attr:`h`)."""

    values: dict[str, float]
    free: list[str]
    flat: np.ndarray
    index: np.ndarray
    rows: tuple[Rational, int, int]
    spec: Spec
    tolerances: Tolerances

    @property
    def h(self) -> Rational:
        """The transfer functions of its combinations (a view of its rows)."""
        batch, start, stop = self.rows
        return batch if start == 0 and stop == batch.batch else batch.take(slice(start, stop))

    @property
    def batch(self) -> int:
        """How many members it has: every combination and the one rounding every part alone."""
        return self.rows[2] - self.rows[1]

    def choice(self, cost: np.ndarray) -> Choice:
        """The combination of least cost (the last member, every part rounded alone, only compared)."""
        i = int(cost[:-1].argmin())
        best = float(cost[i])
        chosen = dict(self.values)
        chosen.update(zip(self.free, self.flat[self.index[:, i]].tolist()))
        return Choice(
            values=chosen if math.isfinite(best) else None,
            combinations=int(cost.size - 1),
            weighted=best,
            weighted_rounded=float(cost[-1]),
        )


@dataclass(frozen=True, slots=True)
class _Same:
    """A search whose every input is that of search ``of`` (its place among the items of
    :func:`_combination_searches`): its choice is that search's, with its own ``values``."""

    of: int
    values: dict[str, float]
    free: tuple[str, ...]

    def choice(self, same: Choice) -> Choice:
        """Its choice, given that of the search it repeats: the same free parts' values (the
        same combination), its other parts its own, the same numbers."""
        if same.values is None:
            return same
        chosen = dict(self.values)
        chosen.update((ref, same.values[ref]) for ref in self.free)
        return Choice(chosen, same.combinations, same.weighted, same.weighted_rounded)


# each kept expansion's canonical one: the first seen that gives the same products (_canonical)
_CANONICAL: dict[Expansion, Expansion] = {}


def _canonical(exp: Expansion) -> Expansion:
    """The first kept expansion met whose products are ``exp``'s, number for number
    (:meth:`~bandsmith.solver.expansion.Expansion.same_products`; ``exp`` itself if none): worked
    out once per circuit structure, so that searches on circuits whose ideal transfer functions
    are one function of their parts share a stack."""
    known = _CANONICAL.get(exp)
    if known is None:
        known = next((c for c in dict.fromkeys(_CANONICAL.values()) if c.same_products(exp)), exp)
        _CANONICAL[exp] = known
    return known


def _combination_searches(items: Sequence[tuple], *, checked: bool = False, groups: Sequence[int] | None = None) -> list:
    """Each circuit's combinations of standard values and their transfer functions
    (:class:`_Search`), or its :class:`Choice` at once when no part is free, of each item
    ``(topology, exact, spec, series, keep, tolerances, width)``. Floating-point warnings are the
    caller's to silence (:func:`choose_standard_many` does: a far-off combination may overflow,
    a log of zero is -inf: such combinations are simply not chosen).

    Through the circuit's kept expansion, the natural logs of the combinations' ratios go to
    :meth:`bandsmith.solver.expansion.Expansion.dense_log` as one gather: ``log(x/u)`` is taken
    once per offered value (a few dozen) instead of once per combination and part; numpy's log
    maps each number alone, so a value has the same log wherever it sits in an array (one call
    takes every search's). The searches that share a kept expansion (or one of the same
    products, :func:`_canonical`), free parts and option counts (a chain's stages on one
    circuit) are made in one stacked batch (dense_log takes a stack's products one batch at a
    time, each batch's numbers as alone), from one gather of their rows of logs; where every
    offered value's log is finite, so is every row, and
    :meth:`~bandsmith.solver.expansion.Expansion.dense_log_finite_picked_into` looks for no
    other. The
    coefficients of every search are then taken to ``p = s/w_ref`` and scaled in one joined batch
    (:func:`_scaled_searches`): the transfer functions
    :meth:`~bandsmith.solver.expansion.Expansion.rational` gives each search's values alone (it
    takes their logs first), bit for bit, which are :func:`_combinations`'. Where the expansion does not
    apply, or a batch is past its small-batch products, :func:`_combinations`. ``checked`` as
    :func:`choose_standard_groups` takes it.

    ``groups`` (one number per item: :func:`choose_standard_groups`' groups) lets a search whose
    every input is that of an earlier one in its group be made once: the same canonical
    expansion (:func:`_canonical`), the same values of its variables (so of its free parts),
    free parts, pins, series, width, target and tolerances give the same offered values,
    combinations, transfer functions and costs, so the same choice (a compare's Tow–Thomas and
    Åkerberg–Mossberg, one function of the same parts with an ideal op-amp, designed alike).
    Such an item gets a :class:`_Same` pointing at that search, whose choice the caller takes
    with the item's own values."""
    out: list = [None] * len(items)
    stacks: dict[tuple, list[tuple[int, _Setup, list[float]]]] = {}
    seen: dict[tuple, tuple] = {}  # (group, canonical expansion, own values, …) -> the first such search
    for k, (topology, exact, spec, series, keep, tolerances, width) in enumerate(items):
        values = exact if checked else topology.values_from(exact)
        exp, own = _search_expansion(topology, values)
        if groups is not None and exp is not None:  # (the same inputs as an earlier search of its group: made once)
            free = _free_parts(topology.part_kinds, keep, series)[0]
            earlier = seen.setdefault((groups[k], _canonical(exp), tuple(own), free, keep, series, width), (k, spec, tolerances))
            if earlier[0] != k and earlier[1] == spec and earlier[2] == tolerances:
                out[k] = _Same(earlier[0], values, free)
                continue
        made = _search_setup(topology, values, spec, series, keep, tolerances, width, checked=True)
        if isinstance(made, Choice):
            out[k] = made
            continue
        index = _flat_combination_index(made.sizes)
        if exp is None or index.shape[1] > SMALL_BATCH:
            h = _combinations(made.topology.build(made.values), dict(zip(made.free, made.flat[index])), made.spec.w0)
            out[k] = made.search(h)
            continue
        stacks.setdefault((_canonical(exp), made.free, made.sizes), []).append((k, made, own))
    if not stacks:
        return out
    # The ratios of every search's entries (its flat entries, then its held variables' own values,
    # each over its unit) in one division and their logs in one call, stack after stack (numpy's
    # division and log map each number alone: the numbers of each search's own); where every
    # offered value's log is finite, so is every combination's row (none looked for).
    plans = {key: _log_plan(*key) for key in stacks}
    entries = np.concatenate([part for key, group in stacks.items() for _, made, own in group
                              for part in (made.flat, [own[j] for j in plans[key][1]])])
    logs = np.log(entries / np.concatenate([plans[key][0] for key, group in stacks.items() for _ in group]))
    finite = np.isfinite(logs)
    every_finite = bool(finite.all())
    by_widths: dict[tuple[int, int], list[tuple[Expansion, list, np.ndarray, tuple, bool]]] = {}
    start = 0
    for key, group in stacks.items():
        exp, plan = key[0], plans[key]
        stop = start + len(group) * plan[0].size
        by_widths.setdefault(exp.dense_widths, []).append(
            (exp, group, logs[start:stop], plan, every_finite or bool(finite[start:stop].all())))
        start = stop
    for widths, blocks in by_widths.items():
        _scaled_searches(blocks, widths, out)
    return out


def _scaled_searches(blocks: list[tuple[Expansion, list, np.ndarray, tuple, bool]], widths: tuple[int, int], out: list) -> None:
    """The searches of ``blocks`` made into :class:`_Search` es, placed in ``out``. Each block is
    ``(exp, group, logs, plan, finite)``: a stack's searches (``group``, as ``(k, setup,
    own)`` with ``k`` the place in ``out`` and ``own`` the variables' own values), the logs of
    their entries (one row per search of the stack, :func:`_log_plan`'s entries), its
    :func:`_log_plan` (the positions that gather each combination's log ratios from a row, and
    the few rows its monomials are picked from) and whether every log is finite; every block's dense coefficients of the ``widths`` given (numerator,
    denominator). Their transfer functions are those
    :meth:`~bandsmith.solver.expansion.Expansion.rational` gives each search's values alone, bit
    for bit, from one set of array calls for all the blocks (a compare's seven circuits).

    Block by block, the combinations' dense coefficients in the expansion's ``p`` are made,
    :meth:`~bandsmith.solver.expansion.Expansion.dense_log`'s: where every log is finite, from
    the monomials of the few rows :func:`_monomial_rows` gathers (a tenth of the exponentials),
    picked for every combination and their products written straight into the joined batch's
    rows (:meth:`~bandsmith.solver.expansion.Expansion.dense_log_finite_picked_into`), else from
    every combination's log ratios gathered; one search's by numpy's take, a stack's rows of
    logs each taken by the one gather along the axis (the same numbers as a fancy index of
    offset positions, at half the cost), each block's gathered logs let go before the next is
    made. Each further step is
    :meth:`~bandsmith.solver.expansion.Expansion.rational`'s, member by member: the change of variable to ``p = s/w_ref`` multiplies the
    coefficients of a search by the powers of its own ``k = w_ref/w_e`` (the same ``k **
    arange`` of the same two numbers, made once per distinct ``k``; a product by 1 where the
    expansion's ``w_e`` is kept, which is exact), and each member is divided by its largest
    denominator coefficient in size (a maximum rounds nothing; the same quotients). Those steps
    go column by column (numpy loops slowly along rows of two or three coefficients, a tenth of
    the speed), in place in column-major arrays, whose columns the closed form then reads whole.
    Over a chain's tens of thousands of combinations, memory taken afresh from the system costs
    more than the arithmetic (its first use), so no array is made that is not needed and each
    is let go as soon as it is used. The searches' transfer functions are rows of the joined
    batch, which :func:`_peak_costs` takes whole where it costs these searches together."""
    rows = [len(group) * plan[2].shape[0] for _, group, _, plan, _ in blocks]
    total = sum(rows)
    num = np.empty((total, widths[0]))
    den = np.empty((total, widths[1]))
    start = 0
    for (exp, group, logs, (_, _, gather, (few, picks)), finite), size in zip(blocks, rows):
        num_rows, den_rows = num[start:start + size], den[start:start + size]
        if finite:
            if len(group) == 1:
                gathered = logs.take(few)
            else:  # (a stack: its batches' rows in turn)
                gathered = logs.reshape(len(group), -1).take(few, axis=1)
                num_rows, den_rows = num_rows.reshape(len(group), -1, widths[0]), den_rows.reshape(len(group), -1, widths[1])
            exp.dense_log_finite_picked_into(gathered, picks, num_rows, den_rows)
        else:
            gathered = logs.take(gather) if len(group) == 1 else logs.reshape(len(group), -1).take(gather, axis=1)
            block_num, block_den = exp.dense_log(gathered)
            num_rows[...] = block_num.reshape(size, widths[0])
            den_rows[...] = block_den.reshape(size, widths[1])
        del gathered, num_rows, den_rows
        start += size
    searches, sizes, ks, w0s = [], [], [], []  # (each search's place and set-up, members, k, w0)
    for exp, group, *_ in blocks:
        for k, made, _ in group:
            w0 = made.spec.w0
            searches.append((k, made))
            sizes.append(made.combinations)
            ks.append(1.0 if w0 == exp.w_ref else w0 / exp.w_ref)
            w0s.append(w0)
    den_p = _in_p_columns(den, ks, sizes)
    del den  # (its memory free for the numerator's columns)
    num_p = _in_p_columns(num, ks, sizes)
    del num
    # column by column (numpy loops slowly along rows of two or three), in place: the rows'
    # largest coefficient in size, then every coefficient over it
    scale = np.abs(den_p[:, 0])
    absolute = np.empty_like(scale)
    for j in range(1, den_p.shape[1]):
        np.maximum(scale, np.abs(den_p[:, j], out=absolute), out=scale)
    with np.errstate(invalid="ignore", divide="ignore"):
        for c in (num_p, den_p):
            for j in range(c.shape[1]):
                np.divide(c[:, j], scale, out=c[:, j])
    w_ref = np.full(total, float(w0s[0])) if len(set(w0s)) == 1 else np.repeat(np.array(w0s, dtype=float), sizes)
    joined = Rational(num_p, den_p, w_ref)
    start = 0
    for (k, made), size in zip(searches, sizes):
        out[k] = made.search(joined, start)
        start += size


# per circuit build and optional parts at zero: its kept unit expansion and its variables' names,
# or None where the expansion does not apply (_search_expansion)
_STRUCTURES: dict[tuple, tuple | None] = {}


def _search_expansion(topology: Topology, values: Mapping[str, float]) -> tuple[Expansion | None, list[float] | None]:
    """:func:`bandsmith.solver.expansion.unit_expansion_values` of the circuit's netlist
    ``topology.build(values)`` (``values`` complete, as :meth:`Topology.values_from` gives them):
    its kept unit expansion and its variables' own values, or ``(None, None)`` where the
    expansion does not apply.

    Made once per circuit and set of optional parts at zero, the netlist's structure: a circuit's
    build places every part at its own node and reference, its value the element's (an inductor's
    winding resistance its series resistance, a variable only when above zero); so the expansion
    and its variables' names are those of the first such netlist, and each variable's own value
    is the part's (checked on that first netlist: where a variable's value is not the part of
    its name, every netlist is built and looked up as before)."""
    key = (topology.build, tuple(ref for ref, _, required in topology.part_kinds if not required and values[ref] == 0.0))
    known = _STRUCTURES.get(key, False)
    if known is False:
        try:
            exp, own = unit_expansion_values(topology.build(values))
        except ExpansionUnavailable:
            _STRUCTURES[key] = None
            return None, None
        names = tuple(u.name for u in exp.variables)
        by_name = all(name in values and values[name] == v for name, v in zip(names, own))
        _STRUCTURES[key] = (exp, names) if by_name else ("build",)
        return exp, own
    if known is None:
        return None, None
    if len(known) == 1:  # (a circuit whose variables are not its parts: its netlist looked up)
        try:
            return unit_expansion_values(topology.build(values))
        except ExpansionUnavailable:
            return None, None
    exp, names = known
    return exp, [values[name] for name in names]


@dataclass(frozen=True, slots=True)
class _Setup:
    """A search up to its transfer functions (:func:`_search_setup`): each free part's options and
    then its nearest value, part after part, in ``flat``; ``sizes`` the option counts."""

    topology: Topology
    values: dict[str, float]
    free: tuple[str, ...]
    flat: np.ndarray
    sizes: tuple[int, ...]
    spec: Spec
    tolerances: Tolerances

    @property
    def combinations(self) -> int:
        """How many members its search has: every combination and the one rounding every part alone."""
        return math.prod(self.sizes) + 1

    def search(self, h: Rational, start: int = 0) -> _Search:
        """The search whose combinations' transfer functions are the rows of ``h`` from ``start``
        on (all of them by default)."""
        index = _flat_combination_index(self.sizes)
        return _Search(self.values, list(self.free), self.flat, index, (h, start, start + index.shape[1]), self.spec,
                       self.tolerances)


def _search_setup(topology: Topology, exact: Mapping[str, float], spec: Spec, series: str, keep: tuple[str, ...],
                  tolerances: Tolerances, width: int, *, checked: bool = False) -> Choice | _Setup:
    """A search up to its transfer functions (:class:`_Setup`), or the :class:`Choice` at once
    when no part is free; ``exact`` taken as it is where ``checked`` (:meth:`Topology.values_from`'s
    already), else validated and completed by it."""
    values = exact if checked else topology.values_from(exact)
    free, groups = _free_parts(topology.part_kinds, keep, series)
    if not free:
        h = transfer_function(topology.build(values), w_ref=spec.w0)
        cost = float(np.where(hurwitz_stable(h.den), _weighted_batch(measure(h), spec, tolerances), np.inf)[0])
        return Choice(values if math.isfinite(cost) else None, 1, cost, cost)
    if len(groups) == 1:  # (every part from one series, as a rule: the parts in their order)
        options, rounded = search_option_lists([values[ref] for ref in free], groups[0][0], width, checked=True)
    else:
        options = [None] * len(free)
        rounded = [None] * len(free)
        for ps, idx in groups:
            opts, near = search_option_lists([values[free[i]] for i in idx], ps, width, checked=True)
            for i, o, v in zip(idx, opts, near):
                options[i], rounded[i] = o, v
    # Every combination of the options, and last the member that rounds every part alone to its
    # nearest standard value, for comparison: each part's options with its nearest value after
    # them, in one flat array taken by a combination index.
    sizes = tuple(map(len, options))
    flat = np.array([v for o, near in zip(options, rounded) for v in (*o, near)])
    return _Setup(topology, values, free, flat, sizes, spec, tolerances)


@functools.lru_cache(maxsize=256)
def _free_parts(part_kinds: tuple[tuple[str, str, bool], ...], keep: tuple[str, ...], series: str) -> tuple[tuple[str, ...], tuple[tuple[str, tuple[int, ...]], ...]]:
    """A circuit's parts a search chooses (of its ``(ref, kind, required)``, every required part
    not in ``keep``, in the circuit's order) and, per series they are chosen from
    (:func:`part_series_of`), their positions among them: worked out once per circuit, pins and
    series."""
    free = [(ref, kind) for ref, kind, required in part_kinds if required and ref not in keep]
    part_series = [part_series_of(kind, series) for _, kind in free]
    groups = tuple((ps, tuple(i for i, p in enumerate(part_series) if p == ps)) for ps in dict.fromkeys(part_series))
    return tuple(ref for ref, _ in free), groups
