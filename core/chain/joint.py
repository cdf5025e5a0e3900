"""Parts chosen for the whole chain: the stages' standard values searched together.

Each stage's parts are first chosen alone (:func:`bandsmith.design.standard.choose_standard`: the
combination of bracketing standard values nearest the stage's own f0, Q and gain). A stage's small
errors add up along a chain, but errors of different stages can also cancel: a stage a little high
in f0 next to one a little low. This module searches the same neighbouring standard values of all
stages together for the least deviation of the whole chain from its ideal response.

Method (common practice, no source: coordinate descent on a separable sum)
--------------------------------------------------------------------------
- For every stage, every combination of its parts' bracketing standard values is analysed in one
  batch (the same options the stage's own search used); the ``KEEP`` best by the stage's own
  weighted error are kept, with the stage-alone choice always among them.
- The chain's log-magnitude is the sum of its stages' (op-amp outputs drive the next stage), so
  on a frequency grid each option is a row ``20·log10|H_k,j(f)|`` and a chain is a choice of one
  row per stage. The objective is the largest |dB difference| from the ideal response over the
  pass band and, with a mask, the largest shortfall at a rejection point (attenuation measured
  from the centre gain), whichever is larger.
- Starting from the stage-alone choice, each stage in turn takes the option that minimises the
  objective with the others held (all its options evaluated at once); sweeps repeat until no
  stage changes (at most ``MAX_SWEEPS``). The result is never worse than the start.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from bandsmith.chain.cascade import Cascade, chain_cascade
from bandsmith.common.eseries import search_options
from bandsmith.design.candidate import Conditions

__all__ = ["KEEP", "MAX_SWEEPS", "JointChoice", "stage_options", "choose_jointly", "joint_json", "design_jointly", "best_single_trim"]

KEEP = 64
MAX_SWEEPS = 8
GRID_POINTS = 401


@dataclass(frozen=True, slots=True)
class JointChoice:
    """The outcome of the joint search.

    Attributes
    ----------
    values : tuple of dict
        The chosen parts of every stage (SI units).
    alone_db, joint_db : float
        The objective (dB, module notes) with each stage's parts chosen alone and together.
    options : tuple of int
        How many part sets each stage offered.
    sweeps : int
    seconds : float
        Wall time of the search.
    """

    values: tuple[dict, ...]
    alone_db: float
    joint_db: float
    options: tuple[int, ...]
    sweeps: int
    seconds: float

    @property
    def improvement_db(self) -> float:
        return self.alone_db - self.joint_db


def stage_options(stage, f_hz: np.ndarray, keep: int = KEEP) -> tuple[list[dict], np.ndarray]:
    """A built stage's part sets near its exact design and their log-magnitude on ``f_hz``.

    Returns the part sets (the stage-alone choice first) and ``(K, F)`` dB rows.
    """
    from bandsmith.design.standard import _combination_index, _combinations, _weighted_batch, part_series_of
    from bandsmith.analysis.figures import measure
    from bandsmith.solver.stability import hurwitz_stable

    res = stage.result
    topo = res.topology
    chosen = dict(res.chosen)
    first = 20.0 * np.log10(np.abs(stage.h_ideal.at_f(f_hz)[0]))
    series = res.series
    if series == "exact" or res.exact is None:
        return [chosen], first[None, :]
    exact = topo.values_from(dict(res.exact))
    free = [c.ref for c in topo.components if c.required and chosen.get(c.ref) != exact.get(c.ref)]
    free = [r for r in free if r in exact]
    if not free:
        return [chosen], first[None, :]
    options = []
    for r in free:
        ps = part_series_of(topo.component(r).kind, series)
        options.append(search_options(np.array([exact[r]]), ps, 1)[0][0])
    index = _combination_index(tuple(o.size for o in options))[:, :-1]
    over = {r: o[k] for r, o, k in zip(free, options, index)}
    from bandsmith.design.source import with_source

    netlist = with_source(topo.build(exact), res.conditions.rsource_ohm)  # the first stage sees the source
    with np.errstate(all="ignore"):
        h = _combinations(netlist, over, res.spec.w0)
        fig = measure(h)
        cost = np.where(hurwitz_stable(h.den) & fig.valid, _weighted_batch(fig, res.spec, res.conditions.tolerances), np.inf)
        order = np.argsort(cost)[:keep]
        order = order[np.isfinite(cost[order])]
        mag = 20.0 * np.log10(np.abs(h.at_f(f_hz)[order]))
    sets = [chosen]
    for i in order:
        v = dict(chosen)
        v.update({r: float(over[r][i]) for r in free})
        sets.append(v)
    rows = np.vstack([first[None, :], mag])
    ok = np.all(np.isfinite(rows), axis=1)
    ok[0] = True
    return [s for s, k in zip(sets, ok) if k], rows[ok]


@dataclass(frozen=True, slots=True)
class _Grid:
    """Where the objective is measured: ``f`` (Hz) is the pass band (:data:`GRID_POINTS`,
    log-spaced), its centre, then the mask's rejection points; ``need`` the attenuation each of
    those must reach (dB) and ``ref_db`` the chain's ideal response at ``f`` (dB)."""

    f: np.ndarray
    need: np.ndarray
    ref_db: np.ndarray

    def objective(self, total: np.ndarray) -> np.ndarray:
        """Objective (dB) of chains given as ``(..., F)`` dB rows on this grid (module notes)."""
        band, centre = slice(0, GRID_POINTS), GRID_POINTS
        dev = np.max(np.abs(total[..., band] - self.ref_db[band]), axis=-1)
        if self.need.size == 0:
            return dev
        att = total[..., centre, None] - total[..., GRID_POINTS + 1:]
        short = np.max(np.maximum(self.need - att, 0.0), axis=-1)
        return np.maximum(dev, short)


def _grid(result: Cascade, mask) -> _Grid:
    """The objective's grid for a built chain and an optional mask."""
    s = result.settings
    pts = () if mask is None else mask.points
    f = np.concatenate([np.geomspace(s.f_low_hz, s.f_high_hz, GRID_POINTS), [s.band.f0_hz], [p.f_hz for p in pts]])
    return _Grid(f, np.array([p.required_db for p in pts]), 20.0 * np.log10(np.abs(result.reference_response(f))))


def choose_jointly(result: Cascade, *, mask=None, conditions: Conditions | None = None) -> tuple[Cascade, JointChoice | None]:
    """The chain with every stage's parts chosen together (module notes); None when nothing to search.

    Parameters
    ----------
    result : Cascade
        A built chain (parts chosen per stage).
    mask : Mask, optional
        Rejection points weigh the search (their shortfall counts like the pass-band deviation).
    conditions : Conditions, optional
        For re-measuring the chain (default the chain's own).

    Returns
    -------
    Cascade, JointChoice or None
        The re-measured chain with the joint parts (the input unchanged when the joint search
        finds nothing better) and the search's figures.
    """
    if not result.feasible or result.settings.series == "exact":
        return result, None
    t0 = time.perf_counter()
    g = _grid(result, mask)
    sets, rows = zip(*(stage_options(st, g.f) for st in result.stages))
    pick = [0] * len(rows)
    total = np.sum([r[0] for r in rows], axis=0)
    start = float(g.objective(total))
    sweeps = 0
    for sweeps in range(1, MAX_SWEEPS + 1):
        changed = False
        for k, r in enumerate(rows):
            rest = total - r[pick[k]]
            obj = g.objective(rest[None, :] + r)
            j = int(np.argmin(obj))
            if obj[j] < obj[pick[k]] - 1e-12:
                pick[k], changed = j, True
                total = rest + r[j]
        if not changed:
            break
    joint = float(g.objective(total))
    values = tuple(sets[k][j] for k, j in enumerate(pick))
    info = JointChoice(values, start, joint, tuple(len(r) for r in rows), sweeps, time.perf_counter() - t0)
    if all(j == 0 for j in pick):
        return result, info
    chain = result.chain()
    stages = tuple(type(cs)(cs.index, cs.f0_hz, cs.q, cs.gain, cs.topology_id, v, cs.candidate_id) for cs, v in zip(chain.stages, values))
    chain = type(chain)(chain.id, chain.settings, stages, chain.notes)
    return chain_cascade(chain, conditions=conditions or result.conditions), info


def joint_json(alone: Cascade, joint: Cascade, info: JointChoice | None) -> dict:
    """The ``joint`` JSON key: the chain's in-band deviation (dB) with parts chosen alone and together."""
    if info is None:
        return {"joint": None}
    a, j = alone.passband_max_dev_db, joint.passband_max_dev_db
    return {
        "joint": {
            "passband_dev_alone_db": a,
            "passband_dev_joint_db": j,
            "improvement_db": None if a is None or j is None else a - j,
            "objective_alone_db": info.alone_db,
            "objective_joint_db": info.joint_db,
            "options_per_stage": list(info.options),
            "sweeps": info.sweeps,
        }
    }


def design_jointly(settings, *, conditions: Conditions = Conditions(), mask=None) -> tuple[Cascade, dict]:
    """:func:`~bandsmith.chain.cascade.design_cascade`, then the joint part search; the chain and its ``joint`` key."""
    from bandsmith.chain.cascade import design_cascade

    alone = design_cascade(settings, conditions=conditions)
    joint, info = choose_jointly(alone, mask=mask, conditions=conditions)
    return joint, joint_json(alone, joint, info)


def best_single_trim(result: Cascade, mask=None) -> dict | None:
    """The one part whose trimming (set to its stage's exact value) helps the chain most.

    Every part of every stage is tried at its exact design value, the rest kept, all of a stage's
    parts in one batch; the objective is the joint search's (module notes). Returns ``{stage,
    part, from, to, objective_db, objective_now_db}`` (values in SI units, dB), or None when
    nothing can be trimmed.
    """
    from bandsmith.design.source import with_source
    from bandsmith.design.standard import _combinations

    if not result.feasible or result.settings.series == "exact":
        return None
    g = _grid(result, mask)
    rows = [20.0 * np.log10(np.abs(st.h_ideal.at_f(g.f)[0])) for st in result.stages]
    total = np.sum(rows, axis=0)
    now = float(g.objective(total))
    best = None
    for k, st in enumerate(result.stages):
        res = st.result
        if res.exact is None:
            continue
        exact = res.topology.values_from(dict(res.exact))
        chosen = dict(res.chosen)
        parts = [r for r in chosen if r in exact and chosen[r] > 0 and exact[r] > 0 and chosen[r] != exact[r]]
        if not parts:
            continue
        over = {r: np.where(np.arange(len(parts)) == i, exact[r], chosen[r]) for i, r in enumerate(parts)}
        net = with_source(res.topology.build(chosen), res.conditions.rsource_ohm)
        with np.errstate(all="ignore"):
            h = _combinations(net, over, res.spec.w0)
            mag = 20.0 * np.log10(np.abs(h.at_f(g.f)))
        obj = g.objective(total - rows[k] + mag)
        obj = np.where(np.isfinite(obj), obj, np.inf)
        i = int(np.argmin(obj))
        if best is None or obj[i] < best["objective_db"]:
            best = {"stage": st.index, "part": parts[i], "from": float(chosen[parts[i]]), "to": float(exact[parts[i]]),
                    "objective_db": float(obj[i]), "objective_now_db": now}
    return best
