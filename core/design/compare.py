"""Every circuit designed for one target, side by side (the README's ``bandsmith compare``)."""

from __future__ import annotations

from typing import Sequence

from bandsmith.design.candidate import Conditions
from bandsmith.circuits import all_topologies, get_topology
from bandsmith.design.designer import DesignResult, Spec, design_json, design_many, needs_inductor
from bandsmith.circuits.topology import Topology

__all__ = ["compare", "compare_json", "part_count", "needs_inductor", "candidate_json"]


def part_count(topology: Topology) -> int:
    """Parts to buy: resistors, capacitors, inductors and op-amps (a winding resistance is not one)."""
    known = _COUNTS.get(id(topology))
    if known is None:
        comps = sum(1 for c in topology.components if c.required)
        opamps = len(topology.build(topology.values_from(dict(topology.example))).opamps)
        known = _COUNTS[id(topology)] = (topology, comps + opamps)
    return known[1]


# The count of each circuit (op-amps from its example's netlist: the same for any part values),
# worked out once per topology object so that a compare does not build a netlist again for every
# candidate and verdict. Keyed by id (a topology holds a dict, so it is not hashable); the entry
# holds the topology itself, so no other object can take its id while the entry lives.
_COUNTS: dict[int, tuple[Topology, int]] = {}


def compare(spec: Spec, *, series: str = "E24", conditions: Conditions = Conditions(), width: int = 1) -> tuple[DesignResult, ...]:
    """Design every circuit that has a design procedure for ``spec`` (see :func:`bandsmith.design.designer.design`),
    their analyses in one batch (:func:`bandsmith.design.designer.design_many`)."""
    ids = [t.id for t in all_topologies() if t.synthesize is not None]
    return tuple(design_many(ids, spec, series=series, conditions=conditions, width=width))


def candidate_json(result: DesignResult) -> dict:
    """One DESIGN object with ``spread``, ``part_count`` and ``needs_inductor``."""
    topo = get_topology(result.topology_id)
    out = design_json(result)
    out["spread"] = dict(result.part_spread) if result.feasible else None
    out["part_count"] = part_count(topo)
    out["needs_inductor"] = needs_inductor(topo)
    return out


def compare_json(spec: Spec, results: Sequence[DesignResult]) -> dict:
    """The README's compare object: ``{"spec": …, "candidates": [DESIGN + spread, …]}``."""
    series = results[0].series if results else None
    return {"spec": spec.to_json(), "series": series, "candidates": [candidate_json(r) for r in results]}
