"""The engine of the tolerance spread: figures of batches of part values, and the seeded draws.

How a batch is evaluated (the coefficient expansion or the solver, the closed form of a
second-order band-pass, closed-form roots or Newton's method from each trial's estimate, the
tracked search grid of the solver's batches) is described in :mod:`bandsmith.spread.tolerance`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

import numpy as np

from bandsmith.analysis.analyzer import transfer_function
from bandsmith.common.errors import InputError
from bandsmith.solver.expansion import Expansion, ExpansionUnavailable, Variable, circuit_variables
from bandsmith.solver.expansion import SMALL_BATCH as _EXPANSION_SMALL_BATCH
from bandsmith.analysis.sensitivity import log_slopes, perturbed_ratios
from bandsmith.analysis.figures import Figures, biquad_figures, exact_in_closed_form, measure
from bandsmith.solver.mna import OpAmpModel
from bandsmith.solver.netlist import Netlist
from bandsmith.solver.rational import Rational, nominal_w_ref
from bandsmith.solver.stability import hurwitz_stable
from bandsmith.spread.spread_settings import CHUNK, KINDS, SpreadSettings
from bandsmith.spread import trialfigures as tf

__all__ = ["Evaluator", "PreparedSpread", "part_tolerances", "setup_spread", "prepare_spread", "nominal_figures", "draws", "evaluator_columns", "drawn_values", "solver_values"]


_GRID_POINTS = 49  # points of the search grid each trial is measured on
_WIDE_CHUNK = 256  # members measured together by the global search


def _measure_wide(h: Rational) -> Figures:
    """:func:`measure` with its default (global) search, a few hundred members at a time."""
    parts = []
    for start in range(0, h.batch, _WIDE_CHUNK):
        sl = slice(start, start + _WIDE_CHUNK)
        parts.append(measure(h.take(sl)))
    return Figures(**{f.name: np.concatenate([getattr(p, f.name) for p in parts]) for f in fields(Figures) if f.init})


class Evaluator:
    """Figures of batches of part values (ratios to nominal), by expansion or by the solver."""

    def __init__(self, netlist: Netlist, opamp: OpAmpModel, w_ref: float, nominal: Figures, engine: str = "auto"):
        if engine not in ("auto", "expansion", "solver"):
            raise ValueError(f"unknown engine {engine!r}")
        self.netlist = netlist
        self.opamp = opamp
        self.w_ref = w_ref
        self.nominal = nominal.item()
        self.variables: tuple[Variable, ...] = circuit_variables(netlist, opamp)
        self.expansion: Expansion | None = None
        if engine != "solver":
            try:
                self.expansion = Expansion(netlist, opamp, w_ref=w_ref)
            except ExpansionUnavailable:
                if engine == "expansion":
                    raise
        self.method = "expansion" if self.expansion is not None else "solver"
        self._sens: dict[str, np.ndarray] | None = None

    def rational(self, ratios: np.ndarray) -> Rational:
        ratios = np.ascontiguousarray(ratios)  # row order for the products of small batches
        if self.expansion is not None:
            return self.expansion.rational(ratios)
        overrides, gbw, a0 = solver_values(self.variables, ratios)
        h = transfer_function(self.netlist, self.opamp, overrides=overrides, gbw_hz=gbw, a0=a0, w_ref=self.w_ref)
        bad = ~np.all(np.isfinite(ratios) & (ratios > 0), axis=1)
        if bad.any():
            num, den = h.num.copy(), h.den.copy()
            num[bad] = np.nan
            den[bad] = np.nan
            h = Rational(num, den, h.w_ref)
        return h

    def figures(self, ratios: np.ndarray, *, tracked: bool = True) -> tuple[Figures, np.ndarray]:
        """Figures and stability of each row of ``ratios`` (shape ``(B, len(variables))``)."""
        if ratios.shape[0] <= _EXPANSION_SMALL_BATCH:
            ratios = np.ascontiguousarray(ratios)  # row order for the products of small batches
        if self.expansion is not None and self.expansion.pure_bandpass:
            num, den = self.expansion.coefficients(ratios)  # b1; a0, a1, a2 (lowest power first)
            return biquad_figures(num[0], den[2], den[1], den[0], self.w_ref)
        if tracked and self.expansion is not None and ratios.shape[0] >= tf.CLOSED_FORM_FROM:
            out = self._figures_rows(ratios)
            if out is not None:
                return out
        h = self.rational(ratios)
        stable = hurwitz_stable(h.den)
        if tracked and exact_in_closed_form(h):
            fig = measure(h)  # exact roots in closed form: cheaper than the tracked grid, and global
        else:
            fig = self._measure_tracked(h, ratios) if tracked else _measure_wide(h)
        return fig, stable & fig.valid

    def _figures_rows(self, ratios: np.ndarray) -> tuple[Figures, np.ndarray] | None:
        """:meth:`figures` (tracked) of a large batch worked on one array per coefficient
        (:mod:`bandsmith.spread.trialfigures`): the closed-form roots where :func:`measure` takes
        them, else Newton's method from each member's first-order estimate in place of the
        tracked grid; None for a batch that reduces to a pure second-order band-pass."""
        ex = self.expansion
        num_c, den_c = self.expansion.coefficients(ratios)
        num, den = tf.scaled_rows(num_c, den_c, ex.num_powers, ex.den_powers)
        m, n = len(num), len(den)
        if n == 3 and m in (2, 3) and not (num[-1] != 0).any() and (m == 2 or not (num[0] != 0).any()):
            return None  # measure() would take the closed form of a band-pass biquad
        b = ratios.shape[0]
        w = np.full(b, self.w_ref)
        stable = tf.hurwitz_rows(den)
        pu = tf.sq_mag_rows(num)
        qu = tf.sq_mag_rows(den)
        slope = tf.slope_rows(pu, qu)
        if m + n - 2 in (3, 4) and max(m, n) in (3, 4):  # exact_in_closed_form
            fig = tf.figures_rows(num, den, w, *tf.by_roots_rows(pu, qu, slope))
            return fig, stable & fig.valid
        f0_est, q_est, centre, half, ok_est = self._estimates(ratios)
        with np.errstate(invalid="ignore", over="ignore"):
            edges = (centre * np.exp(-half)) ** 2, (centre * np.exp(half)) ** 2
        live = tf.finite_rows(den)
        u_pk, u_low, u_high, _ = tf.tracked_points(pu, qu, slope, centre * centre, q_est, edges, live)
        fig = tf.figures_rows(num, den, w, u_pk, u_low, u_high)
        with np.errstate(invalid="ignore", divide="ignore"):
            off = np.abs(np.log(fig.f0_hz / f0_est)) > 0.5 * half
            off |= np.abs(np.log(fig.q / q_est)) > math.log(2.0)
        idx = np.flatnonzero((~fig.valid | off | ~ok_est) & live)
        if idx.size:
            wide = _measure_wide(Rational(np.stack(num, axis=1)[idx], np.stack(den, axis=1)[idx], w[idx]))
            fig = fig.put(idx, wide)
        return fig, stable & fig.valid

    def _estimates(self, ratios: np.ndarray):
        """First-order f0 and Q of each member (from the sensitivities); the centre (``ω/w_ref``)
        and log half-width (three estimated half-bandwidths) of its search span, 1 where the
        estimate is not finite; and a mask of the members whose estimate is."""
        sens = self.sensitivities()
        nom = self.nominal
        b = ratios.shape[0]
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            ln_f0 = np.full(b, math.log(nom.f0_hz))
            ln_q = np.full(b, math.log(nom.q))
            for j in range(ratios.shape[1]):
                if sens["f0"][j] or sens["q"][j]:
                    lr = np.log(ratios[:, j])
                    ln_f0 += sens["f0"][j] * lr
                    ln_q += sens["q"][j] * lr
            q_est = np.clip(np.exp(ln_q), 0.05, 1e4)
            f0_est = np.exp(ln_f0)
            half = 3.0 * np.arcsinh(1.0 / (2.0 * q_est)) + 0.01
            centre = f0_est * (2.0 * math.pi) / self.w_ref
        ok_est = np.isfinite(centre) & np.isfinite(half)
        return f0_est, q_est, np.where(ok_est, centre, 1.0), np.where(ok_est, half, 1.0), ok_est

    def sensitivities(self) -> dict[str, np.ndarray]:
        """``∂ln y/∂ln x`` of f0, Q and |gain| to every variable (central differences, step 1e-4)."""
        if self._sens is None:
            fig, _ = self.figures(perturbed_ratios(len(self.variables)), tracked=False)
            out = {}
            for key, y in (("f0", fig.f0_hz), ("q", fig.q), ("gain", np.abs(fig.gain_center))):
                with np.errstate(invalid="ignore", divide="ignore"):
                    s = log_slopes(y)
                out[key] = np.where(np.isfinite(s), s, 0.0)
            self._sens = out
        return self._sens

    def _measure_tracked(self, h: Rational, ratios: np.ndarray) -> Figures:
        """Measure each member on a grid of its own around its first-order f0 and bandwidth."""
        f0_est, q_est, centre, half, ok_est = self._estimates(ratios)
        with np.errstate(invalid="ignore", divide="ignore"):
            t = np.linspace(-1.0, 1.0, _GRID_POINTS)
            grid = centre[:, None] * np.exp(half[:, None] * t[None, :])
            fig = measure(h, grid=grid)
            off = np.abs(np.log(fig.f0_hz / f0_est)) > 0.5 * half
            off |= np.abs(np.log(fig.q / q_est)) > math.log(2.0)
            redo = (~fig.valid | off | ~ok_est) & np.all(np.isfinite(h.den), axis=1)
        idx = np.flatnonzero(redo)
        if idx.size:
            wide = _measure_wide(h.take(idx))
            fig = fig.put(idx, wide)
        return fig


def solver_values(variables, ratios: np.ndarray) -> tuple[dict[str, np.ndarray], np.ndarray | None, np.ndarray | None]:
    """Ratios to nominal (one column per variable) → what the MNA solver takes: part values by
    reference (SI units), the op-amp's GBW (Hz) and A0 (None where they are not variables)."""
    overrides, gbw, a0 = {}, None, None
    for j, v in enumerate(variables):
        col = v.value * ratios[:, j]
        if v.kind == "gbw":
            gbw = col
        elif v.kind == "a0":
            a0 = col
        else:
            overrides[v.name] = col
    return overrides, gbw, a0


def _kind(v: Variable) -> str:
    return "R" if v.kind in ("R", "RS") else v.kind


def part_tolerances(netlist: Netlist, settings: SpreadSettings) -> dict[str, float]:
    """The tolerance (fraction) of every part with a value above zero, by reference.

    A part's own entry wins over its kind's; an inductor's winding resistance is a resistor.

    Raises
    ------
    InputError
        For a tolerance key that is neither a kind (R, C, L) nor a part of the circuit.
    """
    parts = [v for v in circuit_variables(netlist) if v.kind not in ("gbw", "a0")]
    refs = {v.name for v in parts} | {e.ref for e in netlist.passives} | {e.series_ref for e in netlist.passives if e.series_ref}
    for key in settings.tolerances:
        if key not in KINDS and key not in refs:
            names = ", ".join(sorted(refs))
            raise InputError("tol", f"{key!r} is neither a kind (R, C, L) nor a part of this circuit ({names})")
    return {v.name: float(settings.tolerances.get(v.name, settings.tolerances[_kind(v)])) for v in parts}


def nominal_figures(netlist: Netlist, opamp: OpAmpModel, w_ref: float) -> Figures:
    fig = measure(transfer_function(netlist, opamp, w_ref=w_ref))
    if not bool(fig.valid[0]):
        raise InputError("circuit", "the nominal circuit has no band-pass peak; there is nothing to spread")
    return fig


def setup_spread(netlist: Netlist, settings: SpreadSettings, opamp: OpAmpModel):
    if settings.gbw_tol > 0 and opamp.ideal:
        raise InputError("gbw-tol", "a GBW spread needs a finite op-amp (give its GBW); an ideal op-amp has none")
    tol = part_tolerances(netlist, settings)
    parts = [v for v in circuit_variables(netlist, opamp) if v.kind not in ("gbw", "a0")]
    spread = np.array([tol[v.name] for v in parts] + [settings.gbw_tol])
    return tol, parts, spread


@dataclass(frozen=True, slots=True)
class PreparedSpread:
    """What every spread of a circuit starts from (:func:`prepare_spread`).

    Attributes
    ----------
    tolerances : dict
        The fraction of every part with a value above zero, by reference.
    parts : list of Variable
        The drawn parts, in the order of the drawn columns (the GBW's column follows them).
    spread : ndarray
        The tolerance of each drawn column, the GBW's last (fractions).
    nominal : Figures
        The nominal figures (batch of one), with the op-amp of the trials.
    evaluator : Evaluator
        The figures of batches of part values for this circuit and op-amp.
    """

    tolerances: dict
    parts: list
    spread: np.ndarray
    nominal: Figures
    evaluator: Evaluator


def prepare_spread(netlist: Netlist, settings: SpreadSettings, opamp: OpAmpModel, engine: str = "auto") -> PreparedSpread:
    """The tolerances, drawn columns, nominal figures and evaluator of a spread (:func:`setup_spread`,
    then the nominal circuit measured at its reference frequency).

    Raises
    ------
    InputError
        As :func:`setup_spread`, or for a nominal circuit without a band-pass peak.
    """
    tol, parts, spread = setup_spread(netlist, settings, opamp)
    w_ref = nominal_w_ref(netlist)
    nominal = nominal_figures(netlist, opamp, w_ref)
    return PreparedSpread(tol, parts, spread, nominal, Evaluator(netlist, opamp, w_ref, nominal, engine))


def drawn_values(parts: list[Variable], opamp: OpAmpModel, drawn: np.ndarray) -> dict[str, np.ndarray]:
    """Drawn ratios (one row per trial, the GBW's column last) → values in SI units by part reference,
    and ``"gbw"`` (Hz) for a finite op-amp."""
    out = {v.name: drawn[:, j] * v.value for j, v in enumerate(parts)}
    if not opamp.ideal:
        out["gbw"] = drawn[:, -1] * opamp.gbw_hz
    return out


def draws(settings: SpreadSettings, spread: np.ndarray, total: int):
    """Chunks ``(start, ratios)`` of the trial ratios, one column per part and one for the GBW."""
    rng = np.random.default_rng(settings.seed)
    for start in range(0, total, CHUNK):
        m = min(CHUNK, total - start)
        if settings.dist == "uniform":
            z = rng.uniform(-1.0, 1.0, size=(m, spread.size))
        else:
            z = rng.standard_normal(size=(m, spread.size)) / 3.0
        yield start, 1.0 + z * spread


def evaluator_columns(ev: Evaluator, drawn: np.ndarray) -> np.ndarray:
    """Drawn part/GBW ratios → the evaluator's variables (A0 held at nominal).

    Shape ``(B, len(ev.variables))``, stored column by column (Fortran order): the evaluator
    works on one contiguous array per variable."""
    out = np.empty((len(ev.variables), drawn.shape[0]))
    k = 0
    for j, v in enumerate(ev.variables):
        if v.kind == "a0":
            out[j] = 1.0
        elif v.kind == "gbw":
            out[j] = drawn[:, -1]
        else:
            out[j] = drawn[:, k]
            k += 1
    return out.T
