"""Full analysis of one candidate: figures, amplifier needs and sensitivities.

Everything works from the netlist, so it holds for any circuit module.

:func:`analyze` shares one batched first pass (the nominal circuit, its part perturbations and
the op-amp family of its denominator, :class:`~bandsmith.solver.rational.OpAmpFamily` or
:class:`~bandsmith.solver.rational.AmpFamily`) between the figures, the sensitivities and the
required-GBW search, and the record that carries it between them (``_FirstPass``) is private to
this module. Generic pieces live elsewhere, and this module's names for them stay: the figures
in :mod:`bandsmith.analysis.figures`, the transfer function in :mod:`bandsmith.analysis.transfer`,
the tolerances in :mod:`bandsmith.analysis.tolerances`, the required-GBW search in
:mod:`bandsmith.analysis.gbw_search`, the central differences in :mod:`bandsmith.analysis.sensitivity`.
"""

from __future__ import annotations

import functools
import itertools
import math
from dataclasses import dataclass, field, replace
from typing import Mapping, NamedTuple, Sequence

import numpy as np

from bandsmith.common.limits import DEFAULT_A0
from bandsmith.common.jsonutil import finite_or_none
from bandsmith.common.units import to_ma, to_v_per_us
from bandsmith.common.errors import InputError
from bandsmith.analysis.sensitivity import SENS_STEP, log_slopes
from bandsmith.analysis.figures import Figures, measure_from, nominal_and_peaks_many
from bandsmith.analysis.gbw_search import required_gbw, search_gbw_many, with_gbw
from bandsmith.analysis.tolerances import Tolerances, tolerances_each, within_tolerances
from bandsmith.analysis.transfer import ideal_figures, nominal_system, several_amp_families, transfer_function
from bandsmith.solver.mna import IDEAL, OpAmpModel, build_system, solve_at, solve_at_many
from bandsmith.solver.netlist import Element, Netlist
from bandsmith.solver.expansion import UNIT_OPAMP, Expansion, ExpansionUnavailable, unit_expansion_values
from bandsmith.solver.rational import AmpFamily, OpAmpFamily, Rational, _lead_trim, exponents_down, first_kept, largest_in_rows, lead_trimmed, node_coefficients, rational_and_family, reference_w
from bandsmith.solver.stability import routh_stable
from bandsmith.analysis.timeresponse import StepResponse, max_step_slope, max_step_slopes_of, step_response

__all__ = [
    "Tolerances",
    "Requirements",
    "Analysis",
    "Response",
    "transfer_function",
    "ideal_figures",
    "required_gbw",
    "requirements",
    "requirements_many",
    "opamp_output_current",
    "opamp_output_currents",
    "AmplifierNeeds",
    "amplifier_needs",
    "sensitivities",
    "analyze",
    "analyze_many",
    "sweep",
    "within_tolerances",
    "is_stable",
]



@dataclass(frozen=True, slots=True)
class AmplifierNeeds:
    """What one amplifier of a circuit asks of its op-amp, in SI units.

    ``vout_peak_v`` is the peak of its output at f0 for the input's peak amplitude (V); the slew
    rates (V/s) as :class:`Requirements` defines them, at this amplifier's output; ``iout_peak_a``
    the peak current its output delivers at f0 (A). The JSON shows V/µs and mA.
    """

    ref: str
    node: str
    vout_peak_v: float
    slew_sine_v_per_s: float
    slew_step_v_per_s: float
    iout_peak_a: float

    def to_json(self) -> dict:
        f = finite_or_none
        return {
            "ref": self.ref,
            "node": self.node,
            "vout_peak_v": f(self.vout_peak_v),
            "slew_sine_v_per_us": f(to_v_per_us(self.slew_sine_v_per_s)),
            "slew_step_v_per_us": f(to_v_per_us(self.slew_step_v_per_s)),
            "iout_peak_ma": f(to_ma(self.iout_peak_a)),
        }


@dataclass(frozen=True, slots=True)
class Requirements:
    """What the circuit asks of its op-amps (the README's REQUIREMENTS).

    Stored in SI (V/s, A); the data-sheet units (V/µs, mA) are the properties below and the JSON.
    With several amplifiers ``amplifiers`` lists each one's needs and ``vout_peak_v``, the slew
    rates and the output current hold the worst of them; ``gbw_hz`` is the one GBW every amplifier
    of the circuit needs (the same op-amp model on all of them).
    """

    gbw_hz: float | None
    gbw_reason: str | None
    tolerances: Tolerances
    a0: float
    vin_v: float
    vout_peak_v: float
    slew_sine_v_per_s: float
    slew_step_v_per_s: float
    iout_peak_a: float
    gbw_rule_of_thumb_hz: float
    amplifiers: tuple[AmplifierNeeds, ...] = ()

    @property
    def slew_sine_v_per_us(self) -> float:
        """Slew rate for a sine at f0, in V/µs (for display)."""
        return to_v_per_us(self.slew_sine_v_per_s)

    @property
    def slew_step_v_per_us(self) -> float:
        """Slew rate for an input step, in V/µs (for display)."""
        return to_v_per_us(self.slew_step_v_per_s)

    @property
    def iout_peak_ma(self) -> float:
        """Peak output current at f0, in mA (for display)."""
        return to_ma(self.iout_peak_a)

    def to_json(self) -> dict:
        f = finite_or_none

        return {
            "gbw_hz": f(self.gbw_hz),
            "gbw_reason": self.gbw_reason,
            "tol_f0": float(self.tolerances.f0),
            "tol_q": float(self.tolerances.q),
            "tol_gain_db": float(self.tolerances.gain_db),
            "a0": float(self.a0),
            "vin_v": float(self.vin_v),
            "vout_peak_v": f(self.vout_peak_v),
            "slew_sine_v_per_us": f(to_v_per_us(self.slew_sine_v_per_s)),
            "slew_step_v_per_us": f(to_v_per_us(self.slew_step_v_per_s)),
            "iout_peak_ma": f(to_ma(self.iout_peak_a)),
            "gbw_rule_of_thumb_hz": f(self.gbw_rule_of_thumb_hz),
            "amplifiers": [a.to_json() for a in self.amplifiers],
        }


@dataclass(frozen=True, slots=True)
class Response:
    """A frequency response: frequencies in Hz and complex ``H`` (V/V), shape ``(F,)``."""

    f_hz: np.ndarray
    h: np.ndarray
    group_delay_s: np.ndarray

    @property
    def magnitude_db(self) -> np.ndarray:
        return 20.0 * np.log10(np.abs(self.h))

    @property
    def phase_deg(self) -> np.ndarray:
        """Phase in degrees, unwrapped so that it is continuous over the sweep."""
        return np.degrees(np.unwrap(np.angle(self.h)))


class Drive(NamedTuple):
    """What an analysis's amplifier needs are worked out under (:func:`requirements`)."""

    vin_v: float
    a0: float
    rload_ohm: float | None
    tolerances: Tolerances


@dataclass(frozen=True, slots=True)
class Analysis:
    """One candidate, fully analysed.

    ``required_gbw`` is the required GBW (Hz, None where none serves) and the reason when none
    does; the amplifiers' needs (:attr:`requirements`) are worked out when first asked for, under
    ``drive``: a chain lists circuits it never looks at that closely.
    """

    netlist: Netlist
    ideal: Figures
    actual: Figures | None
    opamp: OpAmpModel
    required_gbw: tuple[float | None, str | None]
    sensitivity: Mapping[str, Mapping[str, float]]
    h_ideal: Rational
    h_actual: Rational | None
    drive: Drive = field(repr=False, compare=False)
    # the transfer function's dependence on a common single-pole op-amp (None without op-amps or
    # where no family applies): it gives the figures at any GBW without a solve (gbw_error_sweep)
    family: OpAmpFamily | AmpFamily | None = field(default=None, repr=False, compare=False)
    _step: StepResponse | None = field(default=None, repr=False, compare=False)
    # stable_ideal and stable_actual, found when first asked for (the verdict and the JSON ask thrice)
    _stable_ideal: bool | None = field(default=None, repr=False, compare=False)
    _stable_actual: bool | None = field(default=None, repr=False, compare=False)
    _requirements: Requirements | None = field(default=None, repr=False, compare=False)

    @property
    def requirements(self) -> Requirements:
        """What the circuit asks of its op-amps (:func:`requirements`; computed when first asked for)."""
        if self._requirements is None:
            requirements_many((self,))
        return self._requirements

    def with_requirements(self, req: Requirements) -> Analysis:
        """The same analysis with these requirements (an output current into a known load, say)."""
        return replace(self, _requirements=req)

    def with_vin(self, vin_v: float) -> Analysis:
        """The same analysis driven at another input amplitude (V peak): its requirements, which
        depend on it, are worked out afresh when asked for (the rest does not depend on it). Not
        for an analysis whose requirements were set with a capacitive load's current
        (:meth:`with_requirements`): that is worked out for the amplitude it was made with."""
        if vin_v == self.drive.vin_v:
            return self
        return replace(self, drive=self.drive._replace(vin_v=vin_v), _requirements=None)

    @property
    def step(self) -> StepResponse:
        """The ideal-op-amp unit-step response (computed when first asked for)."""
        if self._step is None:
            object.__setattr__(self, "_step", step_response(self.h_ideal))
        return self._step

    @property
    def stable_ideal(self) -> bool:
        """True when every pole with the ideal op-amp lies in the left half-plane."""
        if self._stable_ideal is None:
            object.__setattr__(self, "_stable_ideal", is_stable(self.h_ideal))
        return self._stable_ideal

    @property
    def stable_actual(self) -> bool | None:
        """The same with the actual op-amp; None without one."""
        if self.h_actual is None:
            return None
        if self._stable_actual is None:
            object.__setattr__(self, "_stable_actual", is_stable(self.h_actual))
        return self._stable_actual

    @property
    def warnings(self) -> tuple[str, ...]:
        """Plain-words warnings about the analysis itself (an unstable circuit, say)."""
        out = []
        if not self.stable_ideal:
            out.append(
                "unstable even with an ideal op-amp (a pole in the right half-plane): it oscillates, "
                "and the figures describe a frequency response that cannot be observed"
            )
        elif self.stable_actual is False:
            out.append(f"unstable with the {self.opamp.gbw_hz:.3g} Hz op-amp: it oscillates on the bench")
        return tuple(out)

    def to_json(self) -> dict:
        return {
            "stability": {"ideal": self.stable_ideal, "actual": self.stable_actual},
            "warnings": list(self.warnings),
            "netlist": self.netlist.to_json(),
            "ideal": self.ideal.to_json(),
            "actual": self.actual.to_json() if self.actual is not None else None,
            "opamp": self.opamp.to_json(),
            "requirements": self.requirements.to_json(),
            "sensitivity": {k: {ref: float(x) for ref, x in v.items()} for k, v in self.sensitivity.items()},
        }


def is_stable(h: Rational, i: int = 0) -> bool:
    """True when every pole of member ``i`` has a negative real part (to 1e-9 of its size).

    A second-order denominator ``a2·p² + a1·p + a0`` has its poles in closed form (a complex
    pair's real part ``−a1/(2·a2)`` and size ``√(a0/a2)``; real poles by the cancellation-free
    quadratic formula), the same test without an eigenvalue call. Any other is first tried by
    Routh–Hurwitz (:func:`bandsmith.solver.stability.routh_stable`), which settles it only where
    every entry of the first column is positive and none came out of a near-cancellation (a pair
    of poles close to the axis, where rounding in the array could hide a pole just beyond it);
    everywhere else the poles of :meth:`~bandsmith.solver.rational.Rational.poles` decide, to the
    same 1e-9."""
    den = lead_trimmed(h.den[i].tolist())
    if len(den) == 3 and den[2] != 0:
        a2, a1, a0 = den
        disc = a1 * a1 - 4.0 * a2 * a0
        if disc < 0:
            return -a1 / (2.0 * a2) < 1e-9 * math.sqrt(a0 / a2)
        q = -0.5 * (a1 + math.copysign(math.sqrt(disc), a1))
        return q != 0 and q / a2 < 0 and a0 / q < 0  # both real poles negative (a zero pole is not)
    if len(den) > 3 and routh_stable(den):
        return True
    p = h.poles(i)
    return bool(np.all(p.real < 1e-9 * np.abs(p))) if p.size else True


def opamp_output_current(
    netlist: Netlist, f_hz: float, *, rload_ohm: float | None = None, load: Netlist | None = None
) -> float:
    """Peak op-amp output current (A) per volt of input at ``f_hz``, ideal op-amps.

    The largest over the netlist's op-amps of the current each delivers into the circuit, into
    an optional load resistor ``rload_ohm`` (ohm) from the output to ground and into an optional
    circuit ``load`` whose input is driven by the output (the next stage of a chain).

    Where an op-amp drives the output node, the load is taken by superposition: an ideal
    op-amp's output is a voltage source, so the load changes no voltage of the circuit and
    draws, at the output's voltage ``V_out``, ``V_out`` times the current its own input draws
    from a 1 V source (the load solved alone); that current adds to the driving op-amp's and
    every other op-amp's stays as it is (derived; the same currents as one solve of the joined
    circuits to rounding, tested). Two small solves cost less than joining the netlists and
    solving the whole. A passive output node is solved joined to its load.
    """
    own, solved, s, driver = _output_current_system(netlist, f_hz, rload_ohm, load)
    x, layout = solve_at(solved, s)
    x_load, load_layout = solve_at(load, s) if driver is not None else (None, None)  # its input's current per volt
    return _largest_output_current(own, solved, x, layout, driver, x_load, load_layout)


def opamp_output_currents(cases: Sequence[tuple[Netlist, float, Netlist | None]]) -> list[float]:
    """:func:`opamp_output_current` of several ``(netlist, f_hz, load)`` (no load resistor; a
    chain's stages, each loaded by the next), each the number it gives alone: all their solves in
    one :func:`bandsmith.solver.mna.solve_at_many` (the same numbers as :func:`solve_at`)."""
    made = [_output_current_system(netlist, f_hz, None, load) for netlist, f_hz, load in cases]
    systems = [(solved, s) for _, solved, s, _ in made]
    systems += [(load, s) for (_, _, s, driver), (_, _, load) in zip(made, cases) if driver is not None]
    found = iter(solve_at_many(systems))
    own = [next(found) for _ in made]
    return [_largest_output_current(refs, solved, x, layout, driver, *(next(found) if driver is not None else (None, None)))
            for (refs, solved, _, driver), (x, layout) in zip(made, own)]


def _output_current_system(netlist: Netlist, f_hz: float, rload_ohm: float | None, load: Netlist | None):
    """What :func:`opamp_output_current` solves: ``(own, solved, s, driver)``, the netlist's own
    op-amps, the netlist solved (with the load resistor, and joined to a load that no op-amp of
    its output node drives), ``s`` (rad/s) and the op-amp driving the output where a load is
    taken by superposition (else None)."""
    own = [e.ref for e in netlist.opamps]
    if rload_ohm is not None:
        netlist = netlist.with_element(Element("RLOAD", "R", (netlist.output, netlist.ground), rload_ohm))
    driver = None if load is None else next((e.ref for e in netlist.opamps if e.nodes[2] == netlist.output), None)
    if load is not None and driver is None:
        netlist = netlist.driving(load)
    return own, netlist, 2j * math.pi * f_hz, driver


def _largest_output_current(own: list[str], solved: Netlist, x: np.ndarray, layout, driver: str | None, x_load, load_layout) -> float:
    """:func:`opamp_output_current` from the solution ``x`` of the netlist
    :func:`_output_current_system` gives and, with a ``driver``, the load's own solution (its
    source's unknown: the current its input draws per volt)."""
    currents = [x[layout.opamp_row[r]] for r in own]
    if driver is not None:
        k = own.index(driver)
        currents[k] = currents[k] + x[layout.node_index[solved.output]] * x_load[load_layout.source_row]
    return float(max(abs(c) for c in currents)) if own else 0.0


def amplifier_needs(
    netlist: Netlist, f0_hz: float, *, vin_v: float = 1.0, rload_ohm: float | None = None, w_ref: float | None = None,
    h_ideal: Rational | None = None,
) -> tuple[AmplifierNeeds, ...]:
    """Each amplifier's output swing, slew rates and output current (ideal op-amps).

    The exact transfer functions from the input to every op-amp's output node
    (:func:`bandsmith.solver.rational.node_coefficients`, one set of samples: the fewest for the
    netlist's count of capacitors and inductors, which bounds their degree) give the step slew of
    each output (:func:`bandsmith.analysis.timeresponse.max_step_slopes_of`); the circuit solved at f0
    in the same batch gives each output's voltage and current there (with a load, one solve of the
    loaded circuit at f0). ``vin_v`` is the input's peak (V); ``h_ideal``, where the caller has it,
    the circuit's transfer function with ideal op-amps, whose denominator then serves the samples
    (:func:`~bandsmith.solver.rational.node_coefficients`' ``den``).
    """
    if not math.isfinite(f0_hz):
        return tuple(AmplifierNeeds(e.ref, e.nodes[2], math.nan, math.nan, math.nan, math.nan) for e in netlist.opamps)
    s0 = 2j * math.pi * f0_hz
    system = nominal_system(netlist)
    if w_ref is None:
        w_ref = 2.0 * math.pi * f0_hz
    amps = netlist.opamps
    nodes = [system.layout.node_index[e.nodes[2]] for e in amps]
    den = None if h_ideal is None else (h_ideal.den[0].tolist(), float(h_ideal.w_ref[0]))
    kinds = [e.kind for e in netlist.elements]
    degree = kinds.count("C") + kinds.count("L")  # the rank of C at most
    if rload_ohm is None:  # the outputs' voltages and currents at f0 solved with the same samples
        nums, den_c, x0 = node_coefficients(system, nodes, w_ref, at=s0, den=den, degree=degree)
        at_f0 = np.abs(x0[nodes + [system.layout.opamp_row[e.ref] for e in amps]]).tolist()
        volts, amperes = at_f0[: len(amps)], at_f0[len(amps) :]
    else:
        loaded = netlist.with_element(Element("RLOAD", "R", (netlist.output, netlist.ground), rload_ohm))
        x, layout = solve_at(loaded, s0)
        volts = [abs(x[layout.node_index[e.nodes[2]]]) for e in amps]
        amperes = [abs(x[layout.opamp_row[e.ref]]) for e in amps]
        nums, den_c, _ = node_coefficients(system, nodes, w_ref, den=den, degree=degree)
    slopes = max_step_slopes_of(nums, den_c, w_ref)  # one denominator: the poles and exponentials shared
    w0 = 2.0 * math.pi * f0_hz
    # (ref, node, output peak, sine slew, step slew, output current; positional: a quarter quicker)
    return tuple(AmplifierNeeds(e.ref, e.nodes[2], v * vin_v, w0 * (v * vin_v), slope * vin_v, i_out * vin_v)
                 for e, v, i_out, slope in zip(amps, volts, amperes, slopes))


def requirements(
    netlist: Netlist,
    ideal: Figures,
    step_slope_per_s: float,
    *,
    vin_v: float = 1.0,
    a0: float = DEFAULT_A0,
    rload_ohm: float | None = None,
    tolerances: Tolerances = Tolerances(),
    gbw_search: tuple[float | None, str | None] | None = None,
    h_ideal: Rational | None = None,
) -> Requirements:
    """The op-amp needs of a candidate (see the README's "Definitions").

    Slew for a sine of peak ``vin_v`` at f0: ``2π·f0·|gain|·vin``; for a step of height ``vin_v``:
    the largest ``|dv_out/dt|`` of the step response (``step_slope_per_s``: its largest ``|slope|``
    in 1/s per volt, :func:`bandsmith.analysis.timeresponse.max_step_slope`); output current: the
    peak current the op-amp output delivers at f0 into the circuit and the optional load.
    ``gbw_search`` is a finished :func:`required_gbw`, and ``h_ideal`` the transfer function with
    ideal op-amps (:func:`amplifier_needs`), when the caller has them.
    """
    if gbw_search is None:
        gbw_search = required_gbw(netlist, ideal, a0=a0, tolerances=tolerances)
    return _requirements(netlist, ideal.scalars(_F0_AND_GAIN), step_slope_per_s, Drive(vin_v, a0, rload_ohm, tolerances), gbw_search, h_ideal)


_F0_AND_GAIN = ("f0_hz", "gain_center")  # what the requirements read of the ideal figures


def requirements_many(analyses: Sequence[Analysis]) -> list[Requirements]:
    """:attr:`Analysis.requirements` of several analyses (a compare's candidates), each the one it
    gives alone, and kept on each (an analysis that has them already keeps its own).

    The output currents of the circuits with one op-amp (or none) are solved together, in one
    :func:`bandsmith.solver.mna.solve_at_many` (the numbers :func:`bandsmith.solver.mna.solve_at`
    gives each alone, tested; systems of one size in one stacked solve), where there are two or
    more (one alone is solved by :func:`opamp_output_current`, as ever). A circuit with several
    op-amps takes :func:`amplifier_needs` alone: stacking the samples of two circuits of one size
    (a compare's Tow–Thomas and Åkerberg–Mossberg) in one solve kept their numbers but saved
    under 10 µs of some 160 µs for four circuits, and cost a lone circuit more.
    """
    todo = [a for a in analyses if a._requirements is None]
    made = [a.ideal.scalars(_F0_AND_GAIN) for a in todo]
    ones = [k for k, (a, (f0, _)) in enumerate(zip(todo, made)) if len(a.netlist.opamps) <= 1 and math.isfinite(f0)]
    currents: dict[int, float] = {}  # position in todo -> its output current per volt, solved together
    if len(ones) > 1:  # (a lone one: solve_at itself, as ever; a plan for solve_at_many costs a first use more)
        systems = [_output_current_system(todo[k].netlist, made[k][0], todo[k].drive.rload_ohm, None) for k in ones]
        for k, (own, solved, _, _), (x, layout) in zip(ones, systems, solve_at_many([(solved, s) for _, solved, s, _ in systems])):
            currents[k] = _largest_output_current(own, solved, x, layout, None, None, None)
    for k, (a, f0_gain) in enumerate(zip(todo, made)):
        req = _requirements(a.netlist, f0_gain, max_step_slope(a.h_ideal), a.drive, a.required_gbw, a.h_ideal, currents.get(k))
        object.__setattr__(a, "_requirements", req)
    return [a._requirements for a in analyses]


def _requirements(
    netlist: Netlist, f0_gain: Sequence[float], step_slope_per_s: float, drive: Drive,
    gbw_search: tuple[float | None, str | None], h_ideal: Rational | None, current: float | None = None,
) -> Requirements:
    """:func:`requirements` from the netlist, the reference f0 (Hz) and centre gain, the drive and a finished required-GBW search; ``current`` the output current
    (A per volt of input) of a circuit with one op-amp or none where already solved
    (:func:`requirements_many`), else solved here."""
    f0_hz, gain = f0_gain
    vin_v, rload_ohm = drive.vin_v, drive.rload_ohm
    gbw, reason = gbw_search
    gain = abs(gain)
    # Common practice, no source: open-loop gain at f0 some 40 dB above the peak gain.
    rule = 100.0 * gain * f0_hz if math.isfinite(gain) else math.nan
    vout = gain * vin_v
    slew_sine = 2.0 * math.pi * f0_hz * gain * vin_v
    slew_step = step_slope_per_s * vin_v
    opamps = netlist.opamps
    if len(opamps) > 1:
        amps = amplifier_needs(netlist, f0_hz, vin_v=vin_v, rload_ohm=rload_ohm, h_ideal=h_ideal)
        # the worst amplifier (the output's own figures are among them)
        vout = max([vout] + [a.vout_peak_v for a in amps])
        slew_sine = max([slew_sine] + [a.slew_sine_v_per_s for a in amps])
        slew_step = max([slew_step] + [a.slew_step_v_per_s for a in amps])
        iout = max([a.iout_peak_a for a in amps])
    else:
        if current is None and math.isfinite(f0_hz):
            current = opamp_output_current(netlist, f0_hz, rload_ohm=rload_ohm)
        iout = current * vin_v if math.isfinite(f0_hz) else math.nan
        amps = tuple(AmplifierNeeds(e.ref, e.nodes[2], vout, slew_sine, slew_step, iout) for e in opamps)
    # (gbw_hz, gbw_reason, tolerances, a0, vin_v, vout_peak_v, slew_sine_v_per_s, slew_step_v_per_s,
    # iout_peak_a, gbw_rule_of_thumb_hz, amplifiers; positional: quicker than by keyword)
    return Requirements(gbw, reason, drive.tolerances, drive.a0, vin_v, vout, slew_sine, slew_step, iout, rule, amps)


@dataclass(frozen=True, slots=True)
class _FirstPass:
    w_ref: float
    h_ideal: Rational
    ideal: Figures
    sensitivity: dict[str, dict[str, float]]
    family: OpAmpFamily | AmpFamily | None


@functools.lru_cache(maxsize=64)
def _absent_mask(rows: int, n_var: int, gbw: int, a0: int) -> np.ndarray:
    """Absent stamps of the first pass: 1/ωt in every member but the last, 1/A0 in all."""
    absent = np.zeros((rows, n_var), dtype=bool)
    absent[:-1, gbw] = True  # the ideal op-amp: 1/ωt = 1/A0 = 0
    absent[:, a0] = True
    absent.setflags(write=False)
    return absent


@functools.lru_cache(maxsize=64)
def _sensitivity_steps(rows: int, n_var: int, cols: tuple[int, ...]) -> np.ndarray:
    """The first pass's steps in the logs of the ratios, ``(rows, n_var)``: member ``1 + 2j`` has
    column ``cols[j]`` up by :data:`SENS_STEP`, member ``2 + 2j`` down by it, the rest zero (adding
    zero leaves a log exactly as it is). Read-only."""
    steps = np.zeros((rows, n_var))
    for j, c in enumerate(cols):
        steps[1 + 2 * j, c] = SENS_STEP
        steps[2 + 2 * j, c] = -SENS_STEP
    steps.setflags(write=False)
    return steps


class _Expanded(NamedTuple):
    """A candidate's first pass from its coefficient expansion, set up (:func:`_expansion_setup`):
    its netlist, what its ideal members are taken through (the kept expansion of its structure,
    or with several op-amps that expansion's ideal part, :meth:`Expansion.ideal_part`), the
    natural logs of its members' ratios ``(rows, n_var)`` (member 0 the nominal circuit, members
    ``1 + 2j``/``2 + 2j`` part ``j`` up/down by the sensitivity step and, with one op-amp, a last
    member with ``1/ωt = 1``), the stamps absent from each member (one op-amp) or None, the number
    of ideal members, and with several op-amps the expansion with their stamps whose
    :meth:`~Expansion.opamp_terms` of member 0 give the op-amp family (None: looked up by the
    family's maker)."""

    netlist: Netlist
    exp: Expansion
    log_ratios: np.ndarray
    absent: np.ndarray | None
    n_ideal: int
    opamp_exp: Expansion | None = None


def _expansion_setup(netlist: Netlist, refs: list[str], n_ideal: int) -> _Expanded | None:
    """The set-up of :func:`_first_pass_expanded` for one candidate, or None where the expansion
    does not apply (no op-amp, or a part the expansion does not carry): the expansion with the
    op-amps' stamps. With one op-amp its stamps are absent from the ideal members, and one more
    member (``1/ωt = 1``) gives the :class:`~bandsmith.solver.rational.OpAmpFamily`. With several,
    the ideal members are taken through its ideal part (:meth:`Expansion.ideal_part`: its
    monomials with no op-amp stamp, as few as the ideal expansion's) and member 0 through its
    :meth:`~Expansion.opamp_terms` gives the :class:`~bandsmith.solver.rational.AmpFamily`: one
    kept expansion, one table entry, serves both. Where that expansion is not fitted yet (not in
    the shipped table: a fit of several op-amps' stamps takes up to a second), the ideal
    expansion serves the members and the family is made as
    :func:`bandsmith.analysis.transfer.several_amp_family` makes it."""
    m = len(netlist.opamps)
    if not m:
        return None
    one = m == 1
    try:
        exp, own = unit_expansion_values(netlist, UNIT_OPAMP, fit=one)
    except ExpansionUnavailable:
        if one:
            return None
        try:
            exp, own = unit_expansion_values(netlist)
        except ExpansionUnavailable:
            return None
    col = exp.column
    if not col.keys() >= set(refs):
        return None
    # unit nominal values: the ratios are the values (an op-amp's are 1: stamps of 1); member
    # 1 + 2j has part j up by the sensitivity step, member 2 + 2j down
    rows = n_ideal + 1 if one else n_ideal
    lr = exp.log_ratios_of(own) + _sensitivity_steps(rows, len(own), tuple(map(col.__getitem__, refs)))
    if one:
        return _Expanded(netlist, exp, lr, _absent_mask(rows, len(own), col["gbw"], col["a0"]), n_ideal)
    ideal = exp.ideal_part()
    return _Expanded(netlist, exp, lr, None, n_ideal) if ideal is None else _Expanded(netlist, ideal, lr, None, n_ideal, exp)


def _first_pass_expanded(setups: Sequence[_Expanded], w_ref: float | None) -> list:
    """The first passes' transfer functions from the candidates' coefficient expansions
    (:mod:`bandsmith.solver.expansion`, built once per circuit) instead of solves: per set-up
    ``(w_ref, h, family)``, or None where the coefficients cannot serve (the caller then solves).

    The candidates of one structure with as many members (the stages of a chain on one circuit)
    are taken through their expansion in one batch, a stack of their members
    (:meth:`~bandsmith.solver.expansion.Expansion.dense_log` of ``(G, members, n_var)``: its
    products one per candidate, so each candidate's coefficients are those it has alone, bit for
    bit; rows stacked into one matrix would not be: a BLAS product may round a row differently
    by its place); every candidate's coefficients are then scaled in one batch
    (:func:`_expanded_rationals`), and the families of those with several op-amps made together
    (:func:`bandsmith.analysis.transfer.several_amp_families`)."""
    blocks: list = [None] * len(setups)
    groups: dict[tuple, list[int]] = {}
    for k, setup in enumerate(setups):
        groups.setdefault((id(setup.exp), setup.log_ratios.shape[0]), []).append(k)
    for ks in groups.values():
        first = setups[ks[0]]
        if len(ks) == 1:
            blocks[ks[0]] = first.exp.dense_log(first.log_ratios, absent=first.absent)
        else:
            lr = np.stack([setups[k].log_ratios for k in ks])
            absent = None if first.absent is None else np.stack([setups[k].absent for k in ks])
            num, den = first.exp.dense_log(lr, absent=absent)
            for k, n, d in zip(ks, num, den):
                blocks[k] = (n, d)
    out = _expanded_rationals(setups, blocks, w_ref)
    several = [k for k, made in enumerate(out) if made is not None and setups[k].absent is None]
    if several:
        families = several_amp_families([setups[k].netlist for k in several], [out[k][0] for k in several],
                                        [_family_source(setups[k]) for k in several])
        for k, family in zip(several, families):
            out[k] = (*out[k][:2], family)
    return out


def _family_source(setup: _Expanded) -> tuple[Expansion, np.ndarray] | None:
    """The expansion with the op-amps' stamps and the log ratios of member 0 over it that give a
    several-op-amp candidate's family, where its set-up holds them (None: looked up)."""
    return None if setup.opamp_exp is None else (setup.opamp_exp, setup.log_ratios[0])


def _expanded_rationals(setups: Sequence[_Expanded], blocks: Sequence[tuple[np.ndarray, np.ndarray]], w_ref: float | None) -> list:
    """``(w_ref, h, family)`` of each candidate from its members' dense coefficients ``(num, den)``
    in the unit expansion's ``p = s`` (highest power first), or None where they cannot serve (a
    nominal denominator with fewer than two nonzero coefficients, or a coefficient that is not a
    number); the family is the one-op-amp :class:`OpAmpFamily`, None with several op-amps (their
    caller makes those).

    Each candidate's ``w_ref`` (unless given) is the geometric mean of its nominal circuit's finite,
    nonzero poles (:func:`bandsmith.solver.rational.reference_w`), ``(|d_last|/|d_first|)^(1/(last −
    first))`` over its first and last nonzero coefficients. In ``p = s/w_ref`` a coefficient of
    ``s^k`` becomes ``c·w_ref^k``, and each member is scaled by its denominator's largest
    coefficient: the same operations on every row, so the ideal members of all candidates are
    taken in one batch, each block padded with leading zeros to the widest (a padded zero stays
    zero and leaves each row's largest coefficient as it is), then each candidate's rows taken
    back with their leading zero columns dropped: the numbers each gets alone.

    The one-op-amp family ``D = D0 − s·(1/ωt)·M − (1/A0)·M`` takes ``s·M`` from the member after
    the ideal ones (``1/ωt = 1``)."""
    out: list = [None] * len(setups)
    live, widths, w_of = [], [0, 0], []
    for k, (setup, (num, den)) in enumerate(zip(setups, blocks)):
        d0 = den[0].tolist()
        nz = [j for j, v in enumerate(d0) if v != 0.0]  # (a NaN counts, as numpy's nonzero counts it)
        if len(nz) < 2:
            continue
        w = float(w_ref) if w_ref is not None else float((abs(d0[nz[-1]]) / abs(d0[nz[0]])) ** (1.0 / (nz[-1] - nz[0])))
        live.append(k)
        w_of.append(w)
        widths = [max(widths[0], num.shape[1]), max(widths[1], den.shape[1])]
    if not live:
        return out
    counts = [setups[k].n_ideal for k in live]
    wn, wd = widths
    if len(live) == 1:  # one candidate (an analysis alone): its own blocks, no padding
        num_all, den_all = blocks[live[0]][0][: counts[0]], blocks[live[0]][1][: counts[0]]
        w_rows = w_of[0]
    else:
        num_all, den_all = np.zeros((sum(counts), wn)), np.zeros((sum(counts), wd))
        start = 0
        for k, n in zip(live, counts):
            num, den = blocks[k]
            num_all[start : start + n, wn - num.shape[1] :] = num[:n]
            den_all[start : start + n, wd - den.shape[1] :] = den[:n]
            start += n
        w_rows = np.repeat(w_of, counts)[:, None]
    to_p = w_rows ** exponents_down(wd)  # c·s^k = c·w_ref^k·p^k, column by column
    den_p = den_all * to_p
    num_p = num_all * (to_p[..., wd - wn :] if wn <= wd else w_rows ** exponents_down(wn))
    scale = largest_in_rows(den_p)
    num_s, den_s = num_p / scale, den_p / scale
    finite = np.isfinite(den_all).all(axis=1).tolist()
    # each candidate's leading columns zero in all its rows (what _lead_trim drops; a NaN is not zero)
    starts = list(itertools.accumulate(counts[:-1], initial=0))
    if len(live) == 1:
        lead_num, lead_den = ([(c != 0).any(axis=0).tolist()] for c in (num_s, den_s))
    else:
        lead_num, lead_den = (np.logical_or.reduceat(c != 0, starts, axis=0).tolist() for c in (num_s, den_s))
    for k, n, w, start, nz_num, nz_den in zip(live, counts, w_of, starts, lead_num, lead_den):
        rows_k = slice(start, start + n)
        setup, (num, den) = setups[k], blocks[k]
        if not all(finite[rows_k]) or (setup.absent is not None and not all(map(math.isfinite, den[n].tolist()))):
            continue
        h = Rational(num_s[rows_k, first_kept(nz_num) :], den_s[rows_k, first_kept(nz_den) :], np.full(n, w))
        if setup.absent is None:
            out[k] = (w, h, None)
            continue
        # the one-op-amp family: s·M from the member with 1/ωt = 1, in p and scaled as member 0
        m_s = np.zeros(den.shape[1])
        m_s[1:] = (den[0] - den[n])[:-1]
        first = rows_k.start
        s0 = scale[first, 0]
        own_p = (to_p if to_p.ndim == 1 else to_p[first])[wd - den.shape[1] :]
        family = OpAmpFamily(
            _lead_trim(num_s[first : first + 1])[0], _lead_trim(den_s[first : first + 1])[0],
            _lead_trim((m_s * own_p)[None, :] / s0)[0], w,
        )
        out[k] = (w, h, family)
    return out


def _first_pass(netlist: Netlist, parts: Mapping[str, float] | None, w_ref: float | None = None) -> _FirstPass:
    """One batch for the ideal op-amp: the nominal circuit and its 2·P part perturbations (member 0
    is the nominal one), their figures and the sensitivities; with op-amps also the
    :class:`OpAmpFamily` (one) or :class:`~bandsmith.solver.rational.AmpFamily` (several) of the nominal circuit. From the coefficient expansion where it applies,
    else one batched solve. ``w_ref`` defaults to the nominal circuit's
    :func:`~bandsmith.solver.rational.reference_w`."""
    return _first_pass_many([netlist], [parts], w_ref)[0]


def _first_pass_many(
    netlists: Sequence[Netlist], parts: Sequence[Mapping[str, float] | None], w_ref: float | None = None,
) -> list[_FirstPass]:
    """:func:`_first_pass` of several candidates, their figures measured together
    (:func:`bandsmith.analysis.figures.nominal_and_peaks_many`)."""
    made, setups = [], []
    for netlist, own in zip(netlists, parts):
        values = dict(own if own is not None else netlist.values())
        refs = [r for r, v in values.items() if v > 0]
        made.append((netlist, values, refs))
        setups.append(_expansion_setup(netlist, refs, 1 + 2 * len(refs)))
    live = [k for k, setup in enumerate(setups) if setup is not None]
    quick = dict(zip(live, _first_pass_expanded([setups[k] for k in live], w_ref))) if live else {}
    made = [(values, refs, quick.get(k) or _perturbed(netlist, values, refs, w_ref)) for k, (netlist, values, refs) in enumerate(made)]
    measured = nominal_and_peaks_many([h for _, _, (_, h, _) in made])
    # every candidate's slopes in one batch: its perturbed members come in up/down pairs, so
    # their columns joined side by side keep each pair together
    slopes = log_slopes(np.concatenate([peaks[:, 1:] for _, peaks in measured], axis=1)).tolist()
    out, start = [], 0
    for (values, refs, (w, h, family)), (nominal, _) in zip(made, measured):
        stop = start + len(refs)
        if len(refs) == len(values):  # every part above zero: the slopes in the parts' order
            sens = {key: dict(zip(refs, row[start:stop])) for key, row in zip(("f0", "q", "gain"), slopes)}
        else:
            sens = {}
            for key, row in zip(("f0", "q", "gain"), slopes):
                by_ref = dict(zip(refs, row[start:stop]))
                sens[key] = {r: by_ref.get(r, 0.0) for r in values}
        start = stop
        out.append(_FirstPass(float(w), h.item(0), nominal, sens, family))
    return out


def _perturbed(netlist: Netlist, values: dict, refs: list[str], w_ref: float | None):
    """``(w_ref, h, family)``: the nominal circuit and its 2·P part perturbations for the ideal
    op-amp by one batched solve (where :func:`_first_pass_expanded` does not serve)."""
    n_ideal = 1 + 2 * len(refs)
    up, down = math.exp(SENS_STEP), math.exp(-SENS_STEP)
    over = {}
    for j, r in enumerate(refs):
        col = np.full(n_ideal, values[r])
        col[1 + 2 * j] *= up
        col[2 + 2 * j] *= down
        over[r] = col
    batch = build_system(netlist, overrides=over or None)
    if w_ref is None:
        w_ref = reference_w(batch)
    h, family = rational_and_family(batch, w_ref)
    return w_ref, h, family


def sensitivities(
    netlist: Netlist, parts: Mapping[str, float] | None = None, *, w_ref: float | None = None
) -> dict[str, dict[str, float]]:
    """Normalised sensitivities ``S = ∂ln y/∂ln x`` of f0, Q and |centre gain| to every part.

    Central differences in ``ln x`` (step 1e-4, error of order 1e-8), all parts in one batch with
    an ideal op-amp (:func:`_first_pass`, which also picks ``w_ref`` when none is given). A part
    at zero (an absent winding resistance) has S = 0.
    """
    return _first_pass(netlist, parts, w_ref).sensitivity


def analyze(
    netlist: Netlist,
    *,
    opamp: OpAmpModel | None = None,
    vin_v: float = 1.0,
    a0: float | None = None,
    rload_ohm: float | None = None,
    tolerances: Tolerances = Tolerances(),
    parts: Mapping[str, float] | None = None,
) -> Analysis:
    """Analyse one candidate.

    Parameters
    ----------
    netlist : Netlist
        The circuit.
    opamp : OpAmpModel, optional
        The op-amp actually used; with it the ``actual`` figures are computed.
    vin_v : float
        Peak input amplitude in volts, for slew and current needs.
    a0 : float, optional
        Open-loop gain for the required-GBW search; ``opamp.a0`` or 1e5 by default.
    rload_ohm : float, optional
        A load from the output to ground, in ohm.
    tolerances : Tolerances
        For the required-GBW search.
    parts : mapping, optional
        The part values by component reference (for sensitivities); the netlist's by default.
    """
    return analyze_many([netlist], opamp=opamp, vin_v=vin_v, a0=a0, rload_ohm=rload_ohm, tolerances=tolerances, parts=[parts])[0]


def analyze_many(
    netlists: Sequence[Netlist],
    *,
    opamp: OpAmpModel | None = None,
    vin_v: float = 1.0,
    a0: float | None = None,
    rload_ohm: float | None = None,
    tolerances: Tolerances | Sequence[Tolerances] = Tolerances(),
    parts: Sequence[Mapping[str, float] | None] | None = None,
) -> list[Analysis]:
    """:func:`analyze` of several candidates under the same conditions (``parts``: one mapping or
    None per netlist; ``tolerances``: one for all, or one per netlist): their first passes'
    second-order members and their required-GBW ladders are measured in one batch each, the
    rest one by one. A compare or a chain's stages analyse several circuits at once."""
    if not (math.isfinite(vin_v) and vin_v > 0):
        raise InputError("vin", f"must be a finite number above zero, got {vin_v!r}")
    if rload_ohm is not None and not (math.isfinite(rload_ohm) and rload_ohm > 0):
        raise InputError("rload", f"must be a finite number above zero, got {rload_ohm!r}")
    if a0 is None:
        a0 = opamp.a0 if opamp is not None else DEFAULT_A0
    finite = opamp is not None and not opamp.ideal
    firsts = _first_pass_many(netlists, parts if parts is not None else [None] * len(netlists))
    searches = search_gbw_many(
        [(n, f.ideal, f.family, f.w_ref, opamp.gbw_hz if finite and opamp.a0 == a0 and f.family is not None else None)
         for n, f in zip(netlists, firsts)],
        a0=a0, tolerances=tolerances,
    )
    each = tolerances_each(tolerances, len(netlists))
    out = []
    for netlist, first, (gbw_search, at_probe), tol in zip(netlists, firsts, searches, each):
        h_actual = actual = None
        if at_probe is not None:
            h_actual, actual = at_probe
        elif finite:
            h_actual = with_gbw(netlist, first.family, first.w_ref, np.array([opamp.gbw_hz]), opamp.a0).item(0)
        if finite and (actual is None or not bool(actual.valid[0])):  # far from the ideal: measured from it
            actual = measure_from(h_actual, first.ideal)
        out.append(Analysis(
            netlist=netlist,
            ideal=first.ideal,
            actual=actual,
            opamp=opamp if opamp is not None else IDEAL,
            required_gbw=gbw_search,
            sensitivity=first.sensitivity,
            h_ideal=first.h_ideal,
            h_actual=h_actual,
            drive=Drive(vin_v, a0, rload_ohm, tol),
            family=first.family,
        ))
    return out


def sweep(h: Rational, f_hz: np.ndarray, *, i: int = 0) -> Response:
    """Frequency response of member ``i`` of a transfer function at frequencies in Hz."""
    f = np.asarray(f_hz, dtype=float)
    response, delay = h.item(i).response_and_delay(f)
    return Response(f_hz=f, h=response[0], group_delay_s=delay[0])
