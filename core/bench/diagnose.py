"""Which parts explain a measurement: fit a candidate's part values to a measured response.

Model and residual
------------------
The model is the candidate's transfer function (:func:`bandsmith.analysis.analyzer.transfer_function`, the
op-amp model given, ideal by default) at the measured frequencies. The parameters are the
natural logarithms of each fitted part's value over its design value, each bounded to
``[ln(1 − P), ln(1 + P)]`` for its range ``P`` (default: three times the usual tolerance of its
kind, R 1 %, C 5 %, L 10 %). The residual at each point is

- with phase, the complex log-ratio ``ln(H_model/H_measured)``: its real part is the magnitude
  error, its imaginary part the phase error (wrapped, so the phase reference of the file does not
  matter modulo 360°); both are written in dB (the phase in radians times 20/ln 10), so that
  1 dB of magnitude weighs as much as 6.6° of phase, the weights of the complex logarithm;
- without phase, the magnitude error in dB.

Fits
----
- Every fitted part together: :func:`scipy.optimize.least_squares` (``trf``, bounded), with the
  Jacobian by finite differences of all parts in one batched evaluation. A faint pull towards the
  design values (0.01 dB of residual per tolerance moved) decides the directions the data cannot
  see — several parts of a second-order band-pass are not separately identifiable, since its
  response has only three free figures — and costs nothing measurable elsewhere.
- Each part alone, and each pair of parts: every such fit at once, by a vectorised bounded
  Gauss–Newton (Levenberg–Marquardt damping) over a batch of sub-problems; one-part fits start from
  the best point of a scan across their range.

"Explains it": a fit with fewer parts explains the deviation when its sum of squares exceeds the
all-parts fit's by no more than the 99.9 % point of χ² (with as many degrees of freedom as
parameters dropped) times the scatter estimated from the all-parts fit; the same test against
the design values says whether there is anything to explain at all.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from bandsmith.common.jsonutil import finite_or_none
from bandsmith.analysis.analyzer import transfer_function
from bandsmith.design.candidate import Candidate
from bandsmith.common.errors import InputError
from bandsmith.analysis.figures import measure
from bandsmith.bench.measured import Measurement
from bandsmith.solver.mna import IDEAL, OpAmpModel
from bandsmith.bench.diagnose_fit import EDGE, Fits, ResidualModel, fit_everything, mag_rms, se_pct
from bandsmith.bench.diagnose_words import verdict_words
from bandsmith.bench.readoff import ReadOff, read_off_measurement
from bandsmith.spread.tolerance import DEFAULT_TOLERANCES  # the same part tolerances as the spread

__all__ = [
    "DEFAULT_TOLERANCES",
    "RANGE_FACTOR",
    "PartFit",
    "Diagnosis",
    "default_ranges",
    "diagnose",
]

RANGE_FACTOR = 3.0


@dataclass(frozen=True, slots=True)
class PartFit:
    """One part fitted alone (the others at their design values), or one part of a pair fit.

    ``explained`` is the share of the deviation from the design (sum of squares) this part
    removes, relative to what every part together removes: 1 explains all of it.
    ``change_se_pct`` is the standard error of ``change_pct`` from the scatter left by the
    all-parts fit (linearised).
    """

    part: str
    value: float
    change_pct: float
    residual_db_rms: float
    explained: float
    at_bound: bool
    change_se_pct: float = math.nan

    def to_json(self) -> dict:
        return {
            "part": self.part, "value": float(self.value), "change_pct": float(self.change_pct),
            "change_se_pct": finite_or_none(self.change_se_pct),
            "residual_db_rms": float(self.residual_db_rms), "explained_pct": float(100.0 * self.explained),
            "at_bound": bool(self.at_bound),
        }


@dataclass(frozen=True, slots=True)
class Diagnosis:
    """The fit of a candidate to a measurement and what it says.

    Attributes
    ----------
    topology_id : str
    mode : str
        ``"complex"`` (magnitude and phase) or ``"magnitude"``.
    measured : ReadOff
        f0, Q and centre gain read off the measurement.
    nominal : mapping
        Every part's design value.
    parts : tuple of str
        The parts fitted.
    ranges : mapping
        Each fitted part's allowed relative range (fraction).
    fitted : mapping
        Fitted values of the fitted parts (all together).
    change_pct : mapping
        Their change from the design, in %.
    at_bound : tuple of str
        Parts that ended at the edge of their range.
    residual_db_rms, residual_phase_deg_rms : float
        What the all-parts fit leaves (magnitude in dB rms; phase in degrees rms, NaN without phase).
    nominal_residual_db_rms, nominal_residual_phase_deg_rms : float
        The deviation of the design itself from the measurement.
    alone : tuple of PartFit
        One-part fits, best first.
    pair : tuple of PartFit or None
        The best two-part fit (each entry its part's value in that fit).
    confounded : tuple of tuple of str
        Groups of fitted parts the measurement cannot tell apart.
    verdict : str
        ``matches``, ``one-part``, ``mostly-one-part``, ``two-parts`` or ``several``.
    summary : str
        The diagnosis in plain words.
    explanation : mapping
        The change (%) of each part in the fewest-parts explanation the verdict names (empty for
        ``matches``; the all-parts fit for ``several``).
    notes : tuple of str
    design_figures, fitted_figures : dict
        FIGURES (README, ``bandsmith analyze``) of the model with the design and with the fitted values.
    """

    topology_id: str
    mode: str
    measured: ReadOff
    nominal: Mapping[str, float]
    parts: tuple[str, ...]
    ranges: Mapping[str, float]
    fitted: Mapping[str, float]
    change_pct: Mapping[str, float]
    at_bound: tuple[str, ...]
    residual_db_rms: float
    residual_phase_deg_rms: float
    nominal_residual_db_rms: float
    nominal_residual_phase_deg_rms: float
    alone: tuple[PartFit, ...]
    pair: tuple[PartFit, PartFit] | None
    confounded: tuple[tuple[str, ...], ...]
    verdict: str
    summary: str
    explanation: Mapping[str, float] = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    design_figures: dict = field(default_factory=dict)
    fitted_figures: dict = field(default_factory=dict)

    @property
    def fitted_values(self) -> dict[str, float]:
        """Every part: the fitted value where fitted, else the design value."""
        out = dict(self.nominal)
        out.update(self.fitted)
        return out

    def to_json(self) -> dict:
        """The README's FIT object (see ``bandsmith fit``)."""

        f = finite_or_none

        return {
            "topology": self.topology_id,
            "mode": self.mode,
            "measured": self.measured.to_json(),
            "nominal": {k: float(v) for k, v in self.nominal.items()},
            "parts": list(self.parts),
            "range_pct": {k: round(100.0 * float(v), 9) for k, v in self.ranges.items()},
            "fitted": {k: float(v) for k, v in self.fitted.items()},
            "change_pct": {k: float(v) for k, v in self.change_pct.items()},
            "at_bound": list(self.at_bound),
            "alone": [a.to_json() for a in self.alone],
            "pair": None if self.pair is None else [a.to_json() for a in self.pair],
            "confounded": [list(g) for g in self.confounded],
            "residual_db_rms": f(self.residual_db_rms),
            "residual_phase_deg_rms": f(self.residual_phase_deg_rms),
            "nominal_residual_db_rms": f(self.nominal_residual_db_rms),
            "nominal_residual_phase_deg_rms": f(self.nominal_residual_phase_deg_rms),
            "verdict": self.verdict,
            "summary": self.summary,
            "explanation_pct": {k: float(v) for k, v in self.explanation.items()},
            "notes": list(self.notes),
            "design_figures": self.design_figures,
            "fitted_figures": self.fitted_figures,
        }


def default_ranges(
    candidate: Candidate, parts: tuple[str, ...], tolerances: Mapping[str, float] | None = None
) -> dict[str, float]:
    """Each part's range: ``RANGE_FACTOR`` × the tolerance of its kind (R 1 %, C 5 %, L 10 %)."""
    tol = dict(DEFAULT_TOLERANCES)
    tol.update(tolerances or {})
    topo = candidate.topology
    return {r: min(RANGE_FACTOR * tol[topo.component(r).kind], 0.95) for r in parts}


def diagnose(
    candidate: Candidate,
    measurement: Measurement,
    *,
    parts: tuple[str, ...] | list[str] | None = None,
    ranges: float | Mapping[str, float] | None = None,
    tolerances: Mapping[str, float] | None = None,
    opamp: OpAmpModel | None = None,
    use_phase: bool = True,
) -> Diagnosis:
    """Fit a candidate's part values to a measurement and rank the parts that explain it.

    Parameters
    ----------
    candidate : Candidate
        The design the board was built from.
    measurement : Measurement
        The measured response.
    parts : sequence of str, optional
        Parts to fit; by default every part whose value is above zero.
    ranges : float or mapping, optional
        Allowed relative change (fraction, below 1), for all parts or by reference; by default
        ``RANGE_FACTOR`` × the tolerance of each part's kind.
    tolerances : mapping, optional
        Tolerance by kind (``{"R": 0.01, "C": 0.05, "L": 0.1}``) for the default ranges.
    opamp : OpAmpModel, optional
        The op-amp model; ideal by default.
    use_phase : bool
        Fit the complex response where the measurement has phase (default), else magnitude only.
    """
    topo = candidate.topology
    values = dict(candidate.values)
    notes: list[str] = []
    parts = _fitted_parts(topo, values, parts, notes)
    if measurement.points < len(parts) + 2:
        raise InputError("measured", f"{measurement.points} points are too few to fit {len(parts)} parts")
    tol = _kind_tolerances(tolerances)
    rng = _part_ranges(candidate, parts, tol, ranges)
    op = opamp if opamp is not None else IDEAL
    model = _choose_model(candidate, measurement, parts, op, use_phase, notes)
    fits = fit_everything(model, rng, np.array([math.log1p(tol[topo.component(p).kind]) for p in parts]))
    alone, best_pair = _part_fits(model, fits, values)
    words = verdict_words(model, fits, alone, best_pair)
    if measurement.points < 20:
        notes.append(f"only {measurement.points} points: the fit is only as good as the sweep is dense")

    h_design = transfer_function(candidate.netlist, op, w_ref=model.w_ref)
    h_fit = transfer_function(candidate.netlist, op, overrides={p: np.array([words.fitted[p]]) for p in parts}, w_ref=model.w_ref)
    return Diagnosis(
        topology_id=topo.id,
        mode=model.mode,
        measured=read_off_measurement(measurement),
        nominal=values,
        parts=parts,
        ranges=rng,
        fitted=words.fitted,
        change_pct=words.change,
        at_bound=words.at_bound,
        residual_db_rms=words.res_db,
        residual_phase_deg_rms=words.res_ph,
        nominal_residual_db_rms=words.nom_db,
        nominal_residual_phase_deg_rms=words.nom_ph,
        alone=tuple(alone),
        pair=best_pair,
        confounded=fits.groups,
        verdict=words.verdict,
        summary=" ".join(words.sentences),
        explanation=words.explanation,
        notes=tuple(notes),
        design_figures=measure(h_design).to_json(),
        fitted_figures=measure(h_fit).to_json(),
    )


def _fitted_parts(topo, values: dict, parts, notes: list[str]) -> tuple[str, ...]:
    """The parts to fit: those named (checked), or every part above zero (a note names the rest)."""
    if parts is None:
        parts = tuple(r for r in topo.refs if values.get(r, 0.0) > 0)
        zero = [r for r in topo.refs if values.get(r, 0.0) <= 0]
        if zero:
            notes.append(f"{', '.join(zero)} {'is' if len(zero) == 1 else 'are'} zero in the design and not fitted")
        return parts
    parts = tuple(dict.fromkeys(p.strip() for p in parts if p.strip()))
    if not parts:
        raise InputError("parts", "no part named; give references such as C1,R2")
    for p in parts:
        if p not in topo.refs:
            raise InputError("parts", f"{p!r} is not a part of {topo.id}; its parts are {', '.join(topo.refs)}")
        if values.get(p, 0.0) <= 0:
            raise InputError("parts", f"{p} is zero in the design; a part at zero cannot be fitted as a relative change")
    return parts


def _kind_tolerances(tolerances: Mapping[str, float] | None) -> dict[str, float]:
    """The tolerance of each part kind: the defaults, with the given ones checked and put in."""
    tol = dict(DEFAULT_TOLERANCES)
    for k, v in (tolerances or {}).items():
        if k not in tol:
            raise InputError("tol", f"{k!r} is not a part kind; use R, C or L")
        if not (math.isfinite(v) and v > 0):
            raise InputError(f"tol {k}", "must be above zero")
        tol[k] = float(v)
    return tol


def _part_ranges(candidate: Candidate, parts: tuple[str, ...], tol: dict[str, float], ranges) -> dict[str, float]:
    """Each fitted part's allowed relative change: one for all, by reference, or the defaults."""
    if ranges is None:
        rng = default_ranges(candidate, parts, tol)
    elif isinstance(ranges, Mapping):
        rng = default_ranges(candidate, parts, tol)
        for k, v in ranges.items():
            if k not in parts:
                raise InputError("range", f"{k!r} is not one of the fitted parts ({', '.join(parts)})")
            rng[k] = float(v)
    else:
        rng = {p: float(ranges) for p in parts}
    for k, v in rng.items():
        if not (math.isfinite(v) and 0 < v < 1):
            raise InputError("range", f"must be above 0 % and below 100 %, got {100 * v:g} % for {k}")
    return rng


def _choose_model(candidate, measurement, parts, op, use_phase: bool, notes: list[str]) -> ResidualModel:
    """The residual model: complex where the measurement has phase close to the design's, else
    magnitude only (a note says why when the phase is set aside)."""
    mode = "complex" if (use_phase and measurement.has_phase) else "magnitude"
    model = ResidualModel(candidate, measurement, parts, op, mode)
    if mode == "complex":
        _, ph0 = model.split(model.h(np.zeros((1, len(parts)))))
        off = float(np.degrees(np.median(ph0)))
        if abs(off) > 90.0:
            notes.append(
                f"the measured phase is about {off:+.0f}° away from the design's (an instrument's phase reference or "
                f"an inverted connection?): fitted on the magnitude only"
            )
            model = ResidualModel(candidate, measurement, parts, op, "magnitude")
    return model


def _part_fits(model: ResidualModel, fits: Fits, values: Mapping[str, float]) -> tuple[list[PartFit], tuple[PartFit, ...] | None]:
    """The one-part fits, best first, and the best two-part fit."""
    parts, lo, hi = model.parts, fits.lo, fits.hi
    n = len(parts)
    x1, S1, A1 = fits.x1, fits.S1, fits.A1
    deviation = max(fits.S0 - fits.Sf, 1e-300)
    X1 = np.zeros((n, n))
    X1[np.arange(n), np.arange(n)] = x1[:, 0]
    rms1 = mag_rms(model, X1)
    alone = [
        PartFit(
            part=parts[j],
            value=float(values[parts[j]] * math.exp(x1[j, 0])),
            change_pct=float(100.0 * math.expm1(x1[j, 0])),
            residual_db_rms=float(rms1[j]),
            explained=float(np.clip((fits.S0 - S1[j]) / deviation, 0.0, 1.0)),
            at_bound=bool(x1[j, 0] <= lo[j] + EDGE or x1[j, 0] >= hi[j] - EDGE),
            change_se_pct=se_pct(x1[j], A1[j], fits.sigma2)[0],
        )
        for j in range(n)
    ]
    order = np.argsort(S1, kind="stable")
    alone = [alone[j] for j in order]

    best_pair = None
    if fits.pairs.size:
        pairs, x2, S2 = fits.pairs, fits.x2, fits.S2
        k = int(np.argmin(S2))
        Xp = np.zeros((1, n))
        Xp[0, pairs[k]] = x2[k]
        prms = float(mag_rms(model, Xp)[0])
        se2 = se_pct(x2[k], fits.A2[k], fits.sigma2)
        best_pair = tuple(
            PartFit(
                part=parts[j], value=float(values[parts[j]] * math.exp(x2[k, c])), change_pct=float(100.0 * math.expm1(x2[k, c])),
                residual_db_rms=prms, explained=float(np.clip((fits.S0 - S2[k]) / deviation, 0.0, 1.0)),
                at_bound=bool(x2[k, c] <= lo[j] + EDGE or x2[k, c] >= hi[j] - EDGE),
                change_se_pct=se2[c],
            )
            for c, j in enumerate(pairs[k])
        )
    return alone, best_pair


