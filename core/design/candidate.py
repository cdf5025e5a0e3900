"""A candidate design: a circuit, its part values and the conditions it is analysed under.

This is the unit the command line, sessions and the window share: typed text in, a validated
candidate, an :class:`~bandsmith.analysis.analyzer.Analysis` out, and the README's JSON for it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Mapping, Sequence

from bandsmith.analysis.analyzer import DEFAULT_A0, Analysis, Tolerances, analyze, analyze_many
from bandsmith.analysis.figures import defined
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.solver.mna import OpAmpModel
from bandsmith.solver.netlist import Netlist
from bandsmith.circuits.topology import Topology
from bandsmith.common.units import PART_UNITS
from bandsmith.common.values import parse_value
from bandsmith.common.limits import VIN_RANGE_V, check_part_value, check_range
from bandsmith.design.source import with_source  # at import: the first analysis of a process should not load it

__all__ = ["Conditions", "Candidate", "analyze_candidates", "batch_conditions", "parse_parts", "analysis_json"]


@dataclass(frozen=True, slots=True)
class Conditions:
    """What a candidate is analysed under.

    Parameters
    ----------
    gbw_hz : float, optional
        The op-amp's gain-bandwidth in Hz; None analyses with an ideal op-amp only.
    a0 : float
        Open-loop gain (V/V) of the single-pole model and of the required-GBW search.
    vin_v : float
        Peak input amplitude (V).
    rload_ohm : float, optional
        A load from the output to ground (ohm).
    rsource_ohm : float, optional
        A source resistance in series with the input (ohm): the element ``RSOURCE`` of the
        netlist every analysis sees (:mod:`bandsmith.design.source`).
    cload_f : float, optional
        A load capacitance from the output to ground (F), beside ``rload_ohm``: a converter's
        input. Op-amp outputs drive it, so the response is unchanged; the output current at f0
        includes it.
    tolerances : Tolerances
        Limits of the required-GBW search.
    """

    gbw_hz: float | None = None
    a0: float = DEFAULT_A0
    vin_v: float = 1.0
    rload_ohm: float | None = None
    tolerances: Tolerances = field(default_factory=Tolerances)
    rsource_ohm: float | None = None
    cload_f: float | None = None

    def __post_init__(self):
        checks = (("gbw", self.gbw_hz, True), ("a0", self.a0, False), ("vin", self.vin_v, False), ("rload", self.rload_ohm, True),
                  ("rsource", self.rsource_ohm, True), ("cload", self.cload_f, True))
        for name, v, optional in checks:
            if v is None and optional:
                continue
            if v is None or not math.isfinite(v) or v <= 0:
                raise InputError(name, f"must be a finite number above zero, got {v!r}")
        check_range("vin", float(self.vin_v), *VIN_RANGE_V, "V")
        if self.rload_ohm is not None:
            check_part_value("rload", "R", float(self.rload_ohm))
        if self.rsource_ohm is not None:
            check_part_value("rsource", "R", float(self.rsource_ohm))
        if self.cload_f is not None:
            check_part_value("cload", "C", float(self.cload_f))

    @property
    def opamp(self) -> OpAmpModel | None:
        return None if self.gbw_hz is None else OpAmpModel(self.gbw_hz, self.a0)


@dataclass(frozen=True, slots=True)
class Candidate:
    """A circuit with validated part values (SI units; optional parts filled in)."""

    topology_id: str
    values: Mapping[str, float]

    def __post_init__(self):
        object.__setattr__(self, "values", self.topology.values_from(dict(self.values)))

    @property
    def topology(self) -> Topology:
        return get_topology(self.topology_id)

    @property
    def netlist(self) -> Netlist:
        return self.topology.build(self.values)

    def driven_netlist(self, conditions: Conditions = Conditions()) -> Netlist:
        """The netlist as driven under ``conditions``: with the source resistance in series, if any."""
        return with_source(self.netlist, conditions.rsource_ohm)

    def analyze(self, conditions: Conditions = Conditions()) -> Analysis:
        """Analyse under ``conditions``.

        Raises
        ------
        InputError
            (field ``parts``) when the values give no band-pass response whose ideal figures and
            sensitivities can be measured (a response flat or sharp beyond floating-point reach).
        """
        result = analyze(self.driven_netlist(conditions), parts=self.values, **_analysis_options(conditions))
        return self._checked(result, conditions)

    def _checked(self, result: Analysis, conditions: Conditions) -> Analysis:
        """The analysis, with a capacitive load's current, once its figures are known measurable."""
        sens = [x for by_ref in result.sensitivity.values() for x in by_ref.values()]
        ideal = result.ideal.item()
        if not (defined(ideal.f0_hz, ideal.q, ideal.gain_center_db)
                and math.isfinite(ideal.f_low_hz) and math.isfinite(ideal.f_high_hz) and all(map(math.isfinite, sens))):
            raise InputError(
                "parts",
                f"these {self.topology_id} values give no band-pass peak that can be measured "
                "(the response is far too flat or too sharp); check the values and their units",
            )
        if conditions.cload_f is not None:
            result = _with_capacitive_load(result, conditions)
        return result


def analyze_candidates(
    candidates: Sequence[Candidate], conditions: Conditions | Sequence[Conditions] = Conditions()
) -> list[Analysis | InputError]:
    """:meth:`Candidate.analyze` of several candidates, their first passes and required-GBW
    ladders measured in one batch (:func:`bandsmith.analysis.analyzer.analyze_many`).

    ``conditions``: one set for all, or one per candidate, which may differ in their tolerances
    and source resistance only (a chain's stages: each held to its own tolerances, the first
    driven through the source); each candidate's analysis is the one it has under its own.

    Returns
    -------
    list
        Per candidate its analysis, or the :class:`InputError` it raises alone (no measurable peak).
    """
    each = [conditions] * len(candidates) if isinstance(conditions, Conditions) else list(conditions)
    options = _analysis_options(each[0] if each else Conditions())
    if not isinstance(conditions, Conditions):
        shared = batch_conditions(each[0])
        if any(batch_conditions(c) != shared for c in {id(c): c for c in each[1:]}.values()):  # each distinct object once
            raise ValueError("candidates analysed together may differ in their tolerances and source resistance only")
        options["tolerances"] = [c.tolerances for c in each]
    results = analyze_many([c.driven_netlist(k) for c, k in zip(candidates, each)], parts=[c.values for c in candidates], **options)
    out: list[Analysis | InputError] = []
    for cand, result, k in zip(candidates, results, each):
        try:
            out.append(cand._checked(result, k))
        except InputError as exc:
            out.append(exc)
    return out


def batch_conditions(conditions: Conditions) -> Conditions:
    """The conditions but their tolerances and source resistance: what candidates analysed in one
    batch share (:func:`analyze_candidates`)."""
    return replace(conditions, tolerances=Tolerances(), rsource_ohm=None)


def _analysis_options(conditions: Conditions) -> dict:
    """What :func:`bandsmith.analysis.analyzer.analyze` takes from the conditions."""
    return {"opamp": conditions.opamp, "vin_v": conditions.vin_v, "a0": conditions.a0, "rload_ohm": conditions.rload_ohm,
            "tolerances": conditions.tolerances}


def _with_capacitive_load(result: Analysis, conditions: Conditions) -> Analysis:
    """The analysis with the output current at f0 into the load R ∥ C as well (R optional)."""
    from bandsmith.solver.mna import solve_at
    from bandsmith.solver.netlist import Element

    f0 = result.ideal.item().f0_hz
    if not math.isfinite(f0):
        return result
    elements = [Element("CLOAD", "C", ("in", "0"), float(conditions.cload_f))]
    if conditions.rload_ohm is not None:
        elements.append(Element("RLOAD", "R", ("in", "0"), float(conditions.rload_ohm)))
    load = Netlist(tuple(elements), "0", "in", "in")
    x, layout = solve_at(result.netlist.driving(load, tag="load:"), 2j * math.pi * f0)
    each = {e.ref: abs(x[layout.opamp_row[e.ref]]) * conditions.vin_v for e in result.netlist.opamps}
    req = result.requirements
    rows = tuple(replace(a, iout_peak_a=float(each.get(a.ref, a.iout_peak_a))) for a in req.amplifiers)
    worst = max(each.values()) if each else req.iout_peak_a
    return result.with_requirements(replace(req, iout_peak_a=float(worst), amplifiers=rows))


def parse_parts(topology: Topology, assignments: Mapping[str, str | float]) -> dict[str, float]:
    """Read typed part values (any notation of :mod:`bandsmith.common.values`) for a circuit.

    Unknown references, missing required parts and values that are not numbers raise
    :class:`InputError` naming the part.
    """
    out = {}
    for ref, text in assignments.items():
        topology.component(ref)
        out[ref] = parse_value(text, field=ref, unit=PART_UNITS.get(topology.component(ref).kind))
    return topology.values_from(out)


def analysis_json(candidate: Candidate, analysis: Analysis) -> dict:
    """The README's ANALYZE object."""
    body = analysis.to_json()
    return {
        "topology": candidate.topology_id,
        "components": {k: float(v) for k, v in candidate.values.items()},
        **body,
    }
