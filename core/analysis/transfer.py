"""The exact transfer function of a netlist, for any op-amp model and batch of part values."""

from __future__ import annotations

import functools
from typing import Mapping, Sequence

import numpy as np

from bandsmith.analysis.figures import Figures, measure
from bandsmith.solver.mna import IDEAL, OpAmpModel, build_system
from bandsmith.solver.netlist import Netlist
from bandsmith.solver.expansion import UNIT_OPAMP, ExpansionUnavailable, unit_expansion_values
from bandsmith.solver.rational import AmpFamily, Rational, amp_family, exponents_down, nominal_w_ref, rational_from_system

__all__ = ["ideal_figures", "nominal_system", "several_amp_families", "several_amp_family", "transfer_function"]


@functools.lru_cache(maxsize=32)
def nominal_system(netlist: Netlist):
    """``build_system(netlist)`` (ideal op-amps, the netlist's own values), kept for the few
    netlists last asked for: one analysis builds it for the op-amp family, the amplifiers' needs
    and the GBW sweep. Read-only arrays."""
    system = build_system(netlist)
    system.G.setflags(write=False)
    system.C.setflags(write=False)
    return system


def transfer_function(
    netlist: Netlist,
    opamp: OpAmpModel = IDEAL,
    *,
    overrides: Mapping[str, np.ndarray | float] | None = None,
    gbw_hz: np.ndarray | None = None,
    a0: np.ndarray | float | None = None,
    w_ref: float | None = None,
) -> Rational:
    """Exact rational transfer function of a netlist (batched where overrides are arrays).

    ``w_ref`` (rad/s) normalises the coefficients; by default the natural frequency of the netlist
    with an ideal op-amp, which keeps a finite op-amp's figures near ``ω/w_ref = 1``.
    """
    if overrides is None and len(netlist.opamps) > 1 and (gbw_hz is not None or not opamp.ideal):
        # only the op-amp varies: the family of the ideal circuit serves every GBW at once
        if w_ref is None:
            w_ref = nominal_w_ref(netlist)
        family = several_amp_family(netlist, w_ref)
        if family is not None:
            gbw = np.atleast_1d(np.asarray(gbw_hz if gbw_hz is not None else opamp.gbw_hz, dtype=float))
            gain0 = np.asarray(a0 if a0 is not None else opamp.a0, dtype=float)
            size = max(gbw.size, gain0.size)
            return family.at(np.broadcast_to(gbw, (size,)), np.broadcast_to(gain0, (size,)))
    if w_ref is None:
        w_ref = nominal_w_ref(netlist)
    system = build_system(netlist, opamp, overrides=overrides, gbw_hz=gbw_hz, a0=a0)
    return rational_from_system(system, w_ref)


def several_amp_family(netlist: Netlist, w_ref: float, source: tuple | None = None) -> AmpFamily | None:
    """The :class:`~bandsmith.solver.rational.AmpFamily` of a netlist with several op-amps (its
    own values), in ``p = s/w_ref`` (rad/s); None with fewer than two. ``source``, where the
    caller has them: the kept expansion with the op-amps' stamps of its structure and the log
    ratios of its values over it (what :func:`_opamp_expansion` looks up).

    From the expansion with the op-amps' stamps
    (:meth:`bandsmith.solver.expansion.Expansion.opamp_terms`: one product over its monomials), or
    from the nominal circuit's sampled pencil (:func:`~bandsmith.solver.rational.amp_family`) where
    that expansion is unavailable or not fitted yet (a fit of several op-amps' stamps takes up to
    a second). Both agree with a direct solve to about 1e-12 (tests/test_expansion.py)."""
    if len(netlist.opamps) < 2:
        return None
    exp, log_ratios = source or _opamp_expansion(netlist)
    return _family(netlist, exp, log_ratios, w_ref)


def several_amp_families(netlists: Sequence[Netlist], w_refs: Sequence[float], sources: Sequence[tuple | None] | None = None) -> list[AmpFamily | None]:
    """:func:`several_amp_family` of several netlists (``w_refs`` in rad/s, one each; ``sources``
    one each as it takes them, or None): those of one structure (a chain's stages on one
    circuit) from their expansion in one batch
    (:meth:`~bandsmith.solver.expansion.Expansion.opamp_terms` of a stack), each the family it
    has alone, bit for bit (tested); the others one by one."""
    out: list = [None] * len(netlists)
    groups: dict[int, tuple] = {}
    for k, netlist in enumerate(netlists):
        if len(netlist.opamps) < 2:
            continue
        exp, log_ratios = (sources[k] if sources is not None else None) or _opamp_expansion(netlist)
        if exp is None:
            out[k] = _family(netlist, None, None, float(w_refs[k]))
        else:
            groups.setdefault(id(exp), (exp, []))[1].append((k, log_ratios))
    alone = []  # (k, its terms): the members alone in their structure, scaled together below
    for exp, members in groups.values():
        if len(members) == 1:
            k, log_ratios = members[0]
            terms = exp.opamp_terms(log_ratios)
            if terms is None:
                out[k] = _family(netlists[k], None, None, float(w_refs[k]))
            else:
                alone.append((k, terms))
            continue
        terms = exp.opamp_terms(np.stack([lr for _, lr in members]))
        if terms is None:  # no op-amp terms: each from its sampled pencil
            for k, _ in members:
                out[k] = _family(netlists[k], None, None, float(w_refs[k]))
            continue
        w = [float(w_refs[k]) for k, _ in members]
        num, den = _scaled_terms(*terms, np.array(w)[:, None])
        for (k, _), n, d, w_ref in zip(members, num, den, w):
            out[k] = AmpFamily(tuple(n), tuple(d), w_ref)
    if len(alone) == 1:
        (k, terms), = alone
        num, den = _scaled_terms(*terms, float(w_refs[k]))
        out[k] = AmpFamily(tuple(num), tuple(den), float(w_refs[k]))
    elif alone:
        for (k, _), (num, den) in zip(alone, _scaled_apart([terms for _, terms in alone], [float(w_refs[k]) for k, _ in alone])):
            out[k] = AmpFamily(tuple(num), tuple(den), float(w_refs[k]))
    return out


def _scaled_apart(terms: Sequence[tuple[np.ndarray, np.ndarray]], w_refs: Sequence[float]) -> list[tuple[np.ndarray, np.ndarray]]:
    """:func:`_scaled_terms` of several families' terms of different shapes (circuits of several
    structures: a compare's), in one batch: each family's ``(m + 1, k)`` terms padded with zero rows
    below and zero columns in front to one ``(G, m + 1, k)`` stack (a padded zero stays zero, and
    leaves each family's largest coefficient of ``D_0`` as it is), scaled, and taken back as views
    of its own shape: the numbers it gets alone."""
    rows = max(n.shape[0] for n, _ in terms)
    kn, kd = max(n.shape[1] for n, _ in terms), max(d.shape[1] for _, d in terms)
    num, den = np.zeros((len(terms), rows, kn)), np.zeros((len(terms), rows, kd))
    for g, (n, d) in enumerate(terms):
        num[g, : n.shape[0], kn - n.shape[1] :] = n
        den[g, : d.shape[0], kd - d.shape[1] :] = d
    num, den = _scaled_terms(num, den, np.array(w_refs)[:, None])
    return [(num[g, : n.shape[0], kn - n.shape[1] :], den[g, : d.shape[0], kd - d.shape[1] :]) for g, (n, d) in enumerate(terms)]


def _opamp_expansion(netlist: Netlist):
    """The kept unit expansion with the op-amps' stamps of a netlist's structure and the logs of
    its own values over it, ``(exp, log_ratios)``; ``(None, None)`` where it is unavailable or
    not fitted yet (:func:`several_amp_family`)."""
    try:
        exp, own = unit_expansion_values(netlist, UNIT_OPAMP, fit=False)
    except ExpansionUnavailable:
        return None, None
    return exp, exp.log_ratios_of(own)


def _family(netlist: Netlist, exp, log_ratios, w_ref: float) -> AmpFamily:
    """One netlist's family (:func:`several_amp_family`) from its expansion and log ratios
    (:func:`_opamp_expansion`), or from its sampled pencil where they do not serve."""
    terms = None if exp is None else exp.opamp_terms(log_ratios)
    if terms is None:
        return amp_family(nominal_system(netlist), w_ref)
    num, den = _scaled_terms(*terms, w_ref)
    return AmpFamily(tuple(num), tuple(den), w_ref)


def _scaled_terms(num: np.ndarray, den: np.ndarray, w_ref) -> tuple[np.ndarray, np.ndarray]:
    """The unit expansion's op-amp terms (``(m + 1, k)`` each, row j the term of x^j, or a stack
    ``(G, m + 1, k)`` with ``w_ref`` ``(G, 1)``) in ``p = s/w_ref``: the unit expansion's s is
    p·w_ref, so c·s^k = c·w_ref^k·p^k, each member scaled by its D_0's largest coefficient."""
    to_num, to_den = (w_ref ** exponents_down(t.shape[-1]) for t in (num, den))
    scale = np.abs(den[..., :1, :] * to_den[..., None, :]).max(axis=-1, keepdims=True)
    return num * to_num[..., None, :] / scale, den * to_den[..., None, :] / scale


def ideal_figures(netlist: Netlist) -> Figures:
    """Figures with an ideal op-amp (batch of one)."""
    return measure(transfer_function(netlist))
