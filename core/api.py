"""The public Python API: one function per job, keyword-only options, frozen results.

Every function here sits on top of the core layers (it may import any of them; none of them
imports this module). Each returns a frozen result whose ``to_json()`` is exactly the object the
matching ``bandsmith`` command prints with ``--json``; the command line is a thin layer over these
functions. Values may be numbers in SI units or text such as ``"4k7"`` or ``"12 kHz"``
(:func:`parse_value`). Bad input raises :class:`~bandsmith.common.errors.InputError` naming the
field and the reason.

The heavy layers are imported inside the functions, so ``import bandsmith`` stays light.

The module is long because it is the whole public surface in one place: one short function and
one small frozen result per job, each with its numpydoc units, in the order of the README's
table. The work itself is in the layers below.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any, Iterator, Mapping, Sequence

from bandsmith.common.errors import InputError
from bandsmith.common.limits import DEFAULT_A0, one_line

if TYPE_CHECKING:  # pragma: no cover - annotations only
    from bandsmith.analysis.analyzer import Analysis, Tolerances
    from bandsmith.analysis.burst import BurstResult
    from bandsmith.analysis.noise import NoiseResult
    from bandsmith.bench.diagnose import Diagnosis
    from bandsmith.bench.fitcheck import FitReport
    from bandsmith.bench.measured import Measurement
    from bandsmith.bench.shelf import OpAmp
    from bandsmith.board.bias import BiasedCircuit
    from bandsmith.board.trim import TrimPlan
    from bandsmith.chain.cascade import Cascade
    from bandsmith.circuits.synthesis import Spec
    from bandsmith.circuits.topology import Topology
    from bandsmith.design.candidate import Candidate, Conditions
    from bandsmith.design.designer import DesignResult
    from bandsmith.files.session import Session
    from bandsmith.verdict import Comparison, VerdictLimits
    from bandsmith.solver.mna import OpAmpModel
    from bandsmith.solver.netlist import Netlist
    from bandsmith.spread.tolerance import Spread, SpreadSettings

# The public names are listed with the package (bandsmith/__init__.py), which loads this module
# only when one of them is first used.
from bandsmith import __all__  # noqa: E402,F401

Value = float | str


# --------------------------------------------------------------------------------------------
# Values


def parse_value(text: str | float, *, field: str = "value") -> float:
    """A number from text with an SI prefix, an RKM code or a unit.

    Parameters
    ----------
    text : str or float
        ``"4k7"``, ``"2.2n"``, ``"12 kHz"``, ``"1e3"`` or a number (returned as a float).
    field : str
        The name given in the error message when the text is not a number.

    Returns
    -------
    float
        The value in SI units (ohm, farad, henry, hertz, volt …, without the unit).

    Raises
    ------
    InputError
        When the text is not a finite number.
    """
    from bandsmith.common.values import parse_value as _parse

    return _parse(text, field=field)


def format_value(x: float | None, unit: str = "", *, digits: int = 4) -> str:
    """A number with an SI prefix and its unit, e.g. ``4.7 kΩ`` or ``12 kHz``.

    Parameters
    ----------
    x : float or None
        The value in SI units (None gives ``"—"``).
    unit : str
        The unit symbol written after the prefix (``"Hz"``, ``"Ω"``, ``"F"``, ``"V"`` …).
    digits : int
        Significant digits.

    Returns
    -------
    str
        The value as shown on screen and in reports.
    """
    from bandsmith.common.values import format_value as _format

    return _format(x, unit, digits=digits)


def _positive(v: Value, field: str) -> float:
    from bandsmith.common.values import parse_positive

    return parse_positive(v, field=field)


def _optional_positive(v: Value | None, field: str) -> float | None:
    return None if v is None else _positive(v, field)


def _fraction(v: Value, field: str) -> float:
    from bandsmith.common.values import parse_fraction

    return parse_fraction(v, field=field)


def _positive_fraction(v: Value, field: str) -> float:
    f = _fraction(v, field)
    if f <= 0:
        raise InputError(field, "must be greater than zero")
    return f


def _topology(circuit: str) -> "Topology":
    from bandsmith.circuits import get_topology

    return get_topology(circuit)


def split_assignments(tokens: Sequence[str], *, what: str = "part", field: str | None = None, form: str = "") -> dict[str, str]:
    """``["R1=4k7", "C=10n"]`` → ``{"R1": "4k7", "C": "10n"}``; a malformed or repeated token is bad input.

    The error names the token (``what`` as REF=VALUE) or, with ``field`` (an option such as
    ``tol``), that option and the ``form`` it takes ("KIND=P (R=1%, C=5%)", say).
    """
    out: dict[str, str] = {}
    for tok in tokens:
        ref, sep, text = tok.partition("=")
        ref = ref.strip()
        if not sep or not ref:
            if field is not None:
                raise InputError(field, f"{tok!r} is not {form}")
            raise InputError(tok, f"expected {what} as REF=VALUE, e.g. R1=4k7")
        if ref in out:
            raise InputError(field or ref, f"{ref} given twice" if field else "given twice")
        out[ref] = text.strip()
    return out


def _assignments(parts: "Mapping[str, Value] | Sequence[str] | None", *, what: str = "part") -> dict:
    """Part values as a mapping, or as ``REF=VALUE`` texts (as typed on the command line)."""
    if parts is None:
        return {}
    if isinstance(parts, Mapping):
        return dict(parts)
    if isinstance(parts, str):
        parts = parts.split()
    return split_assignments(list(parts), what=what)


def candidate_of(circuit: str, parts: "Mapping[str, Value] | Sequence[str]") -> "Candidate":
    """The candidate of a circuit id and its part values (``{"R1": "4k7", "C1": 10e-9}``)."""
    from bandsmith.design.candidate import Candidate, parse_parts

    values = _assignments(parts)
    topo = _topology(circuit)
    return Candidate(topo.id, parse_parts(topo, values))


def tolerances_of(tol_f0: Value | None, tol_q: Value | None, tol_gain_db: Value | None) -> "Tolerances":
    from bandsmith.analysis.analyzer import Tolerances

    d = Tolerances()
    if tol_f0 is None and tol_q is None and tol_gain_db is None:
        return d
    return Tolerances(
        f0=_positive_fraction(tol_f0, "tol-f0") if tol_f0 is not None else d.f0,
        q=_positive_fraction(tol_q, "tol-q") if tol_q is not None else d.q,
        gain_db=_positive(tol_gain_db, "tol-gain-db") if tol_gain_db is not None else d.gain_db,
    )


def conditions_of(gbw_hz=None, a0=DEFAULT_A0, vin_v=1.0, rload_ohm=None, tol_f0=None, tol_q=None, tol_gain_db=None, rsource_ohm=None, cload_f=None) -> "Conditions":
    """The op-amp and drive options (as :func:`design_circuit` takes them) read into ``Conditions``."""
    from bandsmith.design.candidate import Conditions

    return Conditions(
        gbw_hz=_optional_positive(gbw_hz, "gbw"),
        a0=_positive(a0, "a0"),
        vin_v=_positive(vin_v, "vin"),
        rload_ohm=_optional_positive(rload_ohm, "rload"),
        tolerances=tolerances_of(tol_f0, tol_q, tol_gain_db),
        rsource_ohm=_optional_positive(rsource_ohm, "rsource"),
        cload_f=_optional_positive(cload_f, "cload"),
    )


def _with_source(netlist: "Netlist", rsource_ohm: Value | None) -> "Netlist":
    """The netlist driven through a series source resistance ``rsource_ohm`` (ohm), if given."""
    from bandsmith.design.source import with_source
    from bandsmith.common.limits import check_part_value

    rs = _optional_positive(rsource_ohm, "rsource")
    if rs is not None:
        check_part_value("rsource", "R", rs)
    return with_source(netlist, rs)


def _driven_candidate(circuit: str, parts: "Mapping[str, Value] | Sequence[str]", rsource_ohm: Value | None) -> "tuple[Candidate, Netlist]":
    """A candidate and its netlist driven through the source resistance ``rsource_ohm`` (ohm), if given."""
    cand = candidate_of(circuit, parts)
    return cand, _with_source(cand.netlist, rsource_ohm)


def _opamp(gbw_hz: Value | None, a0: Value) -> "OpAmpModel":
    from bandsmith.solver.mna import IDEAL, OpAmpModel

    a0 = _positive(a0, "a0")
    return IDEAL if gbw_hz is None else OpAmpModel(_positive(gbw_hz, "gbw"), a0)


def _series(series: str | None) -> str:
    from bandsmith.common.eseries import SERIES_NAMES

    text = (series or "E24").strip()
    if text.lower() == "exact":
        return "exact"
    name = text.upper()
    if name not in SERIES_NAMES:
        raise InputError("series", f"{text!r} is not a series; choose one of {', '.join(SERIES_NAMES)} or exact")
    return name


def _spec(f0_hz: Value, q: Value | None, bw_hz: Value | None, gain: Value) -> "Spec":
    from bandsmith.circuits.synthesis import Spec

    if q is None and bw_hz is None:
        raise InputError("q", "missing; give q or bw_hz")
    if q is not None and bw_hz is not None:
        raise InputError("q", "give q or bw_hz, not both")
    f0 = _positive(f0_hz, "f0")
    g = _positive(gain, "gain")
    if bw_hz is not None:
        return Spec.from_bandwidth(f0, _positive(bw_hz, "bw"), g)
    return Spec(f0_hz=f0, q=_positive(q, "q"), gain=g)


def _values_json(candidate: "Candidate") -> dict[str, float]:
    return {k: float(v) for k, v in candidate.values.items()}


def _candidate_json(candidate: "Candidate", rest: Mapping[str, Any]) -> dict:
    """A result's JSON led by the candidate it is of: ``topology``, ``components``, then ``rest``."""
    return {"topology": candidate.topology_id, "components": _values_json(candidate), **rest}


# --------------------------------------------------------------------------------------------
# Circuits


@dataclass(frozen=True)
class CircuitList:
    """The circuits Bandsmith knows (``bandsmith topologies``).

    Attributes
    ----------
    topologies : tuple of Topology
        Every circuit: its id, title, parts (kind, role, an example value in ohm, farad or
        henry) and whether it inverts.
    """

    topologies: tuple

    def __iter__(self) -> Iterator["Topology"]:
        return iter(self.topologies)

    def __len__(self) -> int:
        return len(self.topologies)

    @property
    def ids(self) -> tuple[str, ...]:
        """The circuit ids, in listing order."""
        return tuple(t.id for t in self.topologies)

    def to_json(self) -> dict:
        """The ``bandsmith topologies --json`` object."""
        return {"topologies": [t.to_json() for t in self.topologies]}


def list_circuits() -> CircuitList:
    """The band-pass circuits Bandsmith can design and analyse.

    Returns
    -------
    CircuitList
        Iterable over the circuits; ``.ids`` gives the ids that :func:`design_circuit` and
        :func:`analyze` take; ``to_json()`` is the ``topologies --json`` object.
    """
    from bandsmith.circuits import all_topologies

    return CircuitList(tuple(all_topologies()))


# --------------------------------------------------------------------------------------------
# Design and compare


@dataclass(frozen=True)
class DesignReport:
    """One circuit designed for a target (``bandsmith design``).

    Attributes
    ----------
    result : DesignResult
        The core's result: ``exact`` and ``chosen`` part values (ohm, farad, henry), ``ideal``
        figures, ``errors`` (f0 and Q in %, gain in dB), ``analysis``, notes and warnings.
    conditions : Conditions
        The op-amp (GBW in Hz, A0 in V/V), input peak (V) and load (ohm) it was analysed under.
    """

    result: "DesignResult"
    conditions: "Conditions"

    @property
    def feasible(self) -> bool:
        """Whether the circuit can meet the target."""
        return self.result.feasible

    @property
    def chosen(self) -> Mapping[str, float]:
        """The chosen standard values by reference (ohm, farad, henry), read-only."""
        from types import MappingProxyType

        return MappingProxyType(self.result.chosen)

    def to_session(self, *, notes: str = "") -> "Session":
        """A session holding this design (save it with :func:`save_session`)."""
        from bandsmith.files.design_session import design_session

        r = self.result
        return design_session(r.spec, [r], series=r.series, conditions=self.conditions, notes=notes)

    def to_json(self) -> dict:
        """The ``bandsmith design --json`` object."""
        from bandsmith.design.designer import design_json

        return design_json(self.result)


def design_circuit(
    circuit: str,
    *,
    f0_hz: Value,
    q: Value | None = None,
    bw_hz: Value | None = None,
    gain: Value,
    series: str = "E24",
    fix: "Mapping[str, Value] | Sequence[str] | None" = None,
    gbw_hz: Value | None = None,
    a0: Value = DEFAULT_A0,
    vin_v: Value = 1.0,
    rload_ohm: Value | None = None,
    tol_f0: Value | None = None,
    tol_q: Value | None = None,
    tol_gain_db: Value | None = None,
    rsource_ohm: Value | None = None,
    cload_f: Value | None = None,
) -> DesignReport:
    """Part values of one circuit for a target centre frequency, Q (or bandwidth) and gain.

    Parameters
    ----------
    circuit : str
        Circuit id (see :func:`list_circuits`), e.g. ``"mfb"``.
    f0_hz : float or str
        Centre frequency (Hz).
    q : float or str, optional
        Quality factor f0 / bandwidth (dimensionless); give ``q`` or ``bw_hz``.
    bw_hz : float or str, optional
        −3 dB bandwidth (Hz), instead of ``q``.
    gain : float or str
        Magnitude of the centre gain (V/V); its sign follows the circuit.
    series : str
        Standard series of the parts: ``"E6"`` … ``"E192"`` or ``"exact"``.
    fix : mapping or sequence of str, optional
        Parts pinned to a value (ohm, farad, henry), e.g. ``{"C1": "10n"}`` or ``["C1=10n"]``.
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz); None analyses with an ideal op-amp only.
    a0 : float or str
        Op-amp open-loop DC gain (V/V).
    vin_v : float or str
        Input peak amplitude (V) for the slew rate and output current.
    rload_ohm : float or str, optional
        Load from the output to ground (ohm).
    tol_f0, tol_q : float or str, optional
        How far f0 and Q may stray with the finite op-amp (fractions, 0.01 = 1 %; defaults
        1 % and 5 %), for the required GBW.
    tol_gain_db : float or str, optional
        Allowed centre-gain change (dB; default 0.5) for the required GBW.
    rsource_ohm : float or str, optional
        Source resistance in series with the input (ohm), an element of the netlist.
    cload_f : float or str, optional
        Load capacitance from the output to ground (F), beside ``rload_ohm`` (a converter's input):
        counted in the output current at f0.

    Returns
    -------
    DesignReport
        ``to_json()`` is the ``design --json`` object; ``to_session()`` a session with it.
    """
    from bandsmith.design.designer import design as _design

    spec = _spec(f0_hz, q, bw_hz, gain)
    series = _series(series)
    conditions = conditions_of(gbw_hz, a0, vin_v, rload_ohm, tol_f0, tol_q, tol_gain_db, rsource_ohm, cload_f)
    topo = _topology(circuit)
    fixed = _assignments(fix)
    result = _design(topo.id, spec, series=series, fixed=fixed, conditions=conditions)
    return DesignReport(result, conditions)


@dataclass(frozen=True)
class ComparisonReport:
    """Every circuit designed for one target, judged and ranked (``bandsmith compare``).

    Attributes
    ----------
    comparison : Comparison
        The designs (one per circuit, in listing order), their verdicts, ranking and the limits
        they were judged against (:mod:`bandsmith.verdict`).
    series : str
        The parts' standard series.
    conditions : Conditions
        The op-amp (GBW in Hz), input peak (V) and load (ohm).
    """

    comparison: "Comparison"
    series: str
    conditions: "Conditions"

    @property
    def spec(self) -> "Spec":
        """The target: f0 (Hz), Q and centre-gain magnitude (V/V)."""
        return self.comparison.spec

    @property
    def results(self) -> tuple:
        """One DesignResult per circuit, in listing order."""
        return self.comparison.results

    @property
    def recommended(self) -> str | None:
        """The id of the candidate to build, or None when none is buildable."""
        return self.comparison.recommended

    def to_session(self, *, notes: str = "") -> "Session":
        """A session holding every design as a candidate."""
        from bandsmith.files.design_session import design_session

        return design_session(self.spec, self.results, series=self.series, conditions=self.conditions, notes=notes)

    def to_json(self) -> dict:
        """The ``bandsmith compare --json`` object."""
        from bandsmith.verdict import comparison_json

        return comparison_json(self.comparison)


def compare(
    *,
    f0_hz: Value,
    q: Value | None = None,
    bw_hz: Value | None = None,
    gain: Value,
    series: str = "E24",
    gbw_hz: Value | None = None,
    a0: Value = DEFAULT_A0,
    vin_v: Value = 1.0,
    rload_ohm: Value | None = None,
    tol_f0: Value | None = None,
    tol_q: Value | None = None,
    tol_gain_db: Value | None = None,
    rsource_ohm: Value | None = None,
    cload_f: Value | None = None,
    limits: "VerdictLimits | None" = None,
) -> ComparisonReport:
    """Design every circuit for one target, judge each and rank them.

    Parameters
    ----------
    f0_hz : float or str
        Centre frequency (Hz).
    q : float or str, optional
        Quality factor (dimensionless); give ``q`` or ``bw_hz``.
    bw_hz : float or str, optional
        −3 dB bandwidth (Hz), instead of ``q``.
    gain : float or str
        Magnitude of the centre gain (V/V).
    series : str
        ``"E6"`` … ``"E192"`` or ``"exact"``.
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz); None is an ideal op-amp.
    a0 : float or str
        Op-amp open-loop DC gain (V/V).
    vin_v : float or str
        Input peak amplitude (V).
    rload_ohm : float or str, optional
        Load from the output to ground (ohm).
    tol_f0, tol_q : float or str, optional
        Allowed f0 and Q change with the finite op-amp (fractions) for the required GBW.
    tol_gain_db : float or str, optional
        Allowed centre-gain change (dB) for the required GBW.
    rsource_ohm : float or str, optional
        Source resistance in series with the input (ohm), an element of the netlist.
    cload_f : float or str, optional
        Load capacitance from the output to ground (F), beside ``rload_ohm`` (a converter's input):
        counted in the output current at f0.
    limits : VerdictLimits, optional
        The limits the verdicts judge against (:class:`bandsmith.verdict.VerdictLimits`);
        None takes its defaults.

    Returns
    -------
    ComparisonReport
        ``to_json()`` is the ``compare --json`` object, verdicts and recommendation included.
    """
    from bandsmith.verdict import compare_verdicts

    spec = _spec(f0_hz, q, bw_hz, gain)
    series = _series(series)
    conditions = conditions_of(gbw_hz, a0, vin_v, rload_ohm, tol_f0, tol_q, tol_gain_db, rsource_ohm, cload_f)
    # without limits, compare_verdicts' default VerdictLimits() (frozen): none built per call
    given = {} if limits is None else {"limits": limits}
    comparison = compare_verdicts(spec, series=series, conditions=conditions, **given)
    return ComparisonReport(comparison, series, conditions)


# --------------------------------------------------------------------------------------------
# Analysis of given parts


@dataclass(frozen=True)
class AnalysisReport:
    """Figures, amplifier needs and sensitivities of one candidate (``bandsmith analyze``).

    Attributes
    ----------
    candidate : Candidate
        Circuit id and part values (ohm, farad, henry).
    analysis : Analysis
        Ideal and finite-op-amp figures (f0 in Hz, Q, gain), requirements (GBW in Hz, slew in
        V/s, output current in A) and sensitivities.
    id : str, optional
        The candidate's id when it came from a session.
    enabled : bool, optional
        Whether that candidate is switched on in the session.
    """

    candidate: "Candidate"
    analysis: "Analysis"
    id: str | None = None
    enabled: bool | None = None

    def to_json(self) -> dict:
        """The ``bandsmith analyze --json`` object (with ``id`` and ``enabled`` from a session)."""
        from bandsmith.design.candidate import analysis_json

        out = analysis_json(self.candidate, self.analysis)
        if self.id is not None:
            out = dict(out, id=self.id, enabled=self.enabled)
        return out


def analyze(
    circuit: str,
    parts: "Mapping[str, Value] | Sequence[str]",
    *,
    gbw_hz: Value | None = None,
    a0: Value = DEFAULT_A0,
    vin_v: Value = 1.0,
    rload_ohm: Value | None = None,
    tol_f0: Value | None = None,
    tol_q: Value | None = None,
    tol_gain_db: Value | None = None,
    rsource_ohm: Value | None = None,
    cload_f: Value | None = None,
) -> AnalysisReport:
    """Analyse one candidate: figures, amplifier needs and sensitivities.

    Parameters
    ----------
    circuit : str
        Circuit id (see :func:`list_circuits`).
    parts : mapping or sequence of str
        Part values by reference (ohm, farad, henry), e.g. ``{"R1": "16k", "C1": 2.2e-9}``, or as
        ``REF=VALUE`` texts, e.g. ``["R1=16k", "C1=2.2n"]``.
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz); None is an ideal op-amp.
    a0 : float or str
        Op-amp open-loop DC gain (V/V).
    vin_v : float or str
        Input peak amplitude (V).
    rload_ohm : float or str, optional
        Load from the output to ground (ohm).
    tol_f0, tol_q : float or str, optional
        Allowed f0 and Q change with the finite op-amp (fractions) for the required GBW.
    tol_gain_db : float or str, optional
        Allowed centre-gain change (dB) for the required GBW.
    rsource_ohm : float or str, optional
        Source resistance in series with the input (ohm), an element of the netlist.
    cload_f : float or str, optional
        Load capacitance from the output to ground (F), beside ``rload_ohm`` (a converter's input):
        counted in the output current at f0.

    Returns
    -------
    AnalysisReport
        ``to_json()`` is the ``analyze --json`` object.
    """
    conditions = conditions_of(gbw_hz, a0, vin_v, rload_ohm, tol_f0, tol_q, tol_gain_db, rsource_ohm, cload_f)
    cand = candidate_of(circuit, parts)
    return AnalysisReport(cand, cand.analyze(conditions))


@dataclass(frozen=True)
class SessionAnalysisReport:
    """Every candidate of a session analysed (``bandsmith analyze --session``).

    Attributes
    ----------
    candidates : tuple of AnalysisReport
        One report per candidate, in the session's order, each with its ``id`` and ``enabled``.
    """

    candidates: tuple

    def __iter__(self) -> Iterator[AnalysisReport]:
        return iter(self.candidates)

    def to_json(self) -> dict:
        """The ``bandsmith analyze --session FILE --json`` object."""
        return {"candidates": [c.to_json() for c in self.candidates]}


def analyze_session(
    session: "Session | str | os.PathLike",
    *,
    gbw_hz: Value | None = None,
    a0: Value | None = None,
    vin_v: Value | None = None,
    rload_ohm: Value | None = None,
    tol_f0: Value | None = None,
    tol_q: Value | None = None,
    tol_gain_db: Value | None = None,
    rsource_ohm: Value | None = None,
    cload_f: Value | None = None,
) -> SessionAnalysisReport:
    """Analyse every candidate of a session under its own op-amp and drive, or the ones given.

    Parameters
    ----------
    session : Session or path
        A session (:func:`open_session`) or the path of a session file.
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz) instead of the session's.
    a0 : float or str, optional
        Op-amp open-loop DC gain (V/V) instead of the session's.
    vin_v : float or str, optional
        Input peak amplitude (V) instead of the session's.
    rload_ohm : float or str, optional
        Load from the output to ground (ohm) instead of the session's.
    tol_f0, tol_q : float or str, optional
        Allowed f0 and Q change (fractions) for the required GBW; giving any of the three
        tolerances replaces the session's (the others take their defaults).
    tol_gain_db : float or str, optional
        Allowed centre-gain change (dB) for the required GBW.
    rsource_ohm : float or str, optional
        Source resistance in series with the input (ohm), an element of the netlist.
    cload_f : float or str, optional
        Load capacitance from the output to ground (F), beside ``rload_ohm`` (a converter's input):
        counted in the output current at f0.

    Returns
    -------
    SessionAnalysisReport
        ``to_json()`` is the ``analyze --session FILE --json`` object.
    """
    if not hasattr(session, "candidates"):
        session = open_session(session)
    given = conditions_of(gbw_hz, a0 if a0 is not None else DEFAULT_A0, vin_v if vin_v is not None else 1.0,
                        rload_ohm, tol_f0, tol_q, tol_gain_db, rsource_ohm, cload_f)
    changes: dict[str, Any] = {}
    for name, option in (("gbw_hz", gbw_hz), ("a0", a0), ("vin_v", vin_v), ("rload_ohm", rload_ohm), ("rsource_ohm", rsource_ohm),
                         ("cload_f", cload_f)):
        if option is not None:
            changes[name] = getattr(given, name)
    if any(t is not None for t in (tol_f0, tol_q, tol_gain_db)):
        changes["tolerances"] = given.tolerances
    reports = []
    for entry in session.candidates:
        base = session.conditions_for(entry)
        conditions = replace(base, **changes) if changes else base
        cand = candidate_of(entry.topology_id, dict(entry.values))
        reports.append(AnalysisReport(cand, cand.analyze(conditions), id=entry.id, enabled=entry.enabled))
    return SessionAnalysisReport(tuple(reports))


@dataclass(frozen=True)
class SweepReport:
    """The frequency response of one candidate (``bandsmith sweep``).

    Attributes
    ----------
    f_hz : numpy.ndarray
        Frequencies (Hz), log-spaced. The four arrays are read-only.
    magnitude_db : numpy.ndarray
        Gain (dB).
    phase_deg : numpy.ndarray
        Phase (degrees), unwrapped.
    group_delay_s : numpy.ndarray
        Group delay (s).
    """

    f_hz: Any
    magnitude_db: Any
    phase_deg: Any
    group_delay_s: Any

    COLUMNS = ("frequency_hz", "magnitude_db", "phase_deg", "group_delay_s")  # bandsmith.files.exports.RESPONSE_HEADER

    def rows(self) -> list[list[float]]:
        """Rows of (frequency Hz, magnitude dB, phase deg, group delay s)."""
        import numpy as np

        return np.column_stack([self.f_hz, self.magnitude_db, self.phase_deg, self.group_delay_s]).tolist()

    def to_json(self) -> dict:
        """The columns as lists, keyed as the header of ``sweep --csv``."""
        return {name: [float(v) for v in col] for name, col in zip(self.COLUMNS, (self.f_hz, self.magnitude_db, self.phase_deg, self.group_delay_s))}


def sweep(
    circuit: str,
    parts: "Mapping[str, Value] | Sequence[str]",
    *,
    f_from_hz: Value = 10.0,
    f_to_hz: Value = 10e6,
    points: int | str = 1000,
    gbw_hz: Value | None = None,
    a0: Value = DEFAULT_A0,
) -> SweepReport:
    """The frequency response of one candidate at log-spaced frequencies.

    Parameters
    ----------
    circuit : str
        Circuit id.
    parts : mapping or sequence of str
        Part values by reference (ohm, farad, henry).
    f_from_hz, f_to_hz : float or str
        First and last frequency (Hz), ``f_from_hz < f_to_hz``.
    points : int
        Number of log-spaced points, 2 to 1 000 000.
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz); None is an ideal op-amp.
    a0 : float or str
        Op-amp open-loop DC gain (V/V).

    Returns
    -------
    SweepReport
        Arrays of frequency (Hz), magnitude (dB), phase (deg) and group delay (s).
    """
    import numpy as np

    from bandsmith.analysis.analyzer import sweep as _sweep, transfer_function
    from bandsmith.solver.mna import IDEAL

    conditions = conditions_of(gbw_hz, a0)
    f1, f2 = _positive(f_from_hz, "from"), _positive(f_to_hz, "to")
    if f2 <= f1:
        raise InputError("to", f"must be above --from ({f1:g} Hz)")
    if isinstance(points, str):
        try:
            points = int(points)
        except ValueError:
            raise InputError("points", f"{points!r} is not a whole number") from None
    if isinstance(points, bool) or not isinstance(points, int) or not 2 <= points <= 1_000_000:
        raise InputError("points", "must be from 2 to 1000000")
    cand = candidate_of(circuit, parts)
    h = transfer_function(cand.netlist, conditions.opamp or IDEAL)
    r = _sweep(h, np.geomspace(f1, f2, points))
    columns = [np.array(c, dtype=float) for c in (r.f_hz, r.magnitude_db, r.phase_deg, r.group_delay_s)]
    for c in columns:
        c.flags.writeable = False
    return SweepReport(*columns)


# --------------------------------------------------------------------------------------------
# Tolerance spread and noise


@dataclass(frozen=True)
class ToleranceReport:
    """Monte Carlo spread, yield and worst case of one candidate (``bandsmith tolerance``).

    Attributes
    ----------
    candidate : Candidate
        Circuit id and nominal part values (ohm, farad, henry).
    spread : Spread
        Statistics of f0 (Hz), Q and centre gain (dB), the yield (fraction) and the worst-case
        corners.
    """

    candidate: "Candidate"
    spread: "Spread"

    @property
    def yield_fraction(self) -> float:
        """Share of the trials within the yield window (0 to 1)."""
        return float(self.to_json()["yield"])

    def to_json(self) -> dict:
        """The ``bandsmith tolerance --json`` object."""
        return _candidate_json(self.candidate, self.spread.to_json())


def _whole(v: int | str, field: str, *, low: int) -> int:
    import re

    if isinstance(v, bool) or not isinstance(v, (int, str)):
        raise InputError(field, f"must be a whole number, got {v!r}")
    if isinstance(v, str):
        if not re.fullmatch(r"\s*[+-]?[0-9][0-9_]*\s*", v):
            raise InputError(field, f'"{one_line(v)}" is not a whole number')
        digits = v.strip().replace("_", "").lstrip("+-").lstrip("0")
        if len(digits) > 30:  # far beyond any seed or trial count; int() refuses past 4300 digits anyway
            raise InputError(field, f"{len(digits)} digits is too long; give a whole number of at most 30 digits")
        v = int(v.replace("_", ""))
    if v < low:
        raise InputError(field, f"must be {'a positive' if low else 'a'} whole number{'' if low else ' of 0 or more'}, got {v}")
    return v


def _spread_settings(tolerances, dist, trials, seed, gbw_tol, window_f0, window_q, window_gain_db) -> "SpreadSettings":
    from bandsmith.spread.tolerance import MAX_TRIALS, SpreadSettings

    kw: dict[str, Any] = {"tolerances": {k: _fraction(v, f"tol {k}") for k, v in dict(tolerances or {}).items()}, "dist": dist}
    if trials is not None:
        n = _whole(trials, "trials", low=1)
        if n > MAX_TRIALS:
            raise InputError("trials", f"at most {MAX_TRIALS}, got {n}")
        kw["trials"] = n
    if seed is not None:
        kw["seed"] = _whole(seed, "seed", low=0)
    if gbw_tol is not None:
        kw["gbw_tol"] = _fraction(gbw_tol, "gbw-tol")
    if window_f0 is not None:
        kw["window_f0"] = _positive_fraction(window_f0, "window-f0")
    if window_q is not None:
        kw["window_q"] = _positive_fraction(window_q, "window-q")
    if window_gain_db is not None:
        kw["window_gain_db"] = _positive(window_gain_db, "window-gain-db")
    return SpreadSettings(**kw)


def tolerance(
    circuit: str,
    parts: "Mapping[str, Value] | Sequence[str]",
    *,
    tolerances: Mapping[str, Value] | None = None,
    dist: str = "uniform",
    trials: int | str | None = None,
    seed: int | str | None = None,
    gbw_hz: Value | None = None,
    a0: Value = DEFAULT_A0,
    gbw_tol: Value | None = None,
    window_f0: Value | None = None,
    window_q: Value | None = None,
    window_gain_db: Value | None = None,
    rsource_ohm: Value | None = None,
) -> ToleranceReport:
    """Monte Carlo tolerance spread, yield and worst case of one candidate.

    Parameters
    ----------
    circuit : str
        Circuit id.
    parts : mapping or sequence of str
        Nominal part values by reference (ohm, farad, henry).
    tolerances : mapping, optional
        Tolerance by kind (``"R"``, ``"C"``, ``"L"``) or by reference (``"C2"``), as fractions
        or text (``"1%"``); kinds not given keep R 1 %, C 5 %, L 10 %.
    dist : {"uniform", "normal"}
        ``uniform``: value·(1 + U(−p, p)); ``normal``: value·(1 + N(0, p/3)).
    trials : int, optional
        Number of trials (default 10 000).
    seed : int, optional
        Seed of the random generator (default 1); the same seed gives the same numbers.
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz); None is an ideal op-amp.
    a0 : float or str
        Op-amp open-loop DC gain (V/V).
    gbw_tol : float or str, optional
        Spread of the GBW (fraction; needs ``gbw_hz``).
    window_f0, window_q : float or str, optional
        Yield window around nominal f0 and Q (fractions; defaults ±5 % and ±10 %).
    window_gain_db : float or str, optional
        Yield window for the centre gain (dB; default ±1).
    rsource_ohm : float or str, optional
        Source resistance in series with the input (ohm), an element of the netlist (spread with the resistors' tolerance).

    Returns
    -------
    ToleranceReport
        ``to_json()`` is the ``tolerance --json`` object.
    """
    from bandsmith.spread.tolerance import run_spread

    settings = _spread_settings(tolerances, dist, trials, seed, gbw_tol, window_f0, window_q, window_gain_db)
    opamp = _opamp(gbw_hz, a0)
    if settings.gbw_tol > 0 and opamp.ideal:
        raise InputError("gbw-tol", "needs --gbw: an ideal op-amp has no GBW to spread")
    cand, net = _driven_candidate(circuit, parts, rsource_ohm)
    return ToleranceReport(cand, run_spread(net, settings, opamp=opamp))


@dataclass(frozen=True)
class NoiseReport:
    """Output noise of one candidate (``bandsmith noise``).

    Attributes
    ----------
    candidate : Candidate
        Circuit id and part values (ohm, farad, henry).
    result : NoiseResult
        Density per source (V/√Hz), integrated noise (V rms) over the band (Hz) and the SNR (dB).
    """

    candidate: "Candidate"
    result: "NoiseResult"

    def to_json(self) -> dict:
        """The ``bandsmith noise --json`` object."""
        return _candidate_json(self.candidate, self.result.to_json())


def noise(
    circuit: str,
    parts: "Mapping[str, Value] | Sequence[str]",
    *,
    en_v_per_rthz: Value | None = None,
    in_a_per_rthz: Value | None = None,
    temperature_k: Value | None = None,
    band_hz: tuple[Value, Value] | None = None,
    gbw_hz: Value | None = None,
    a0: Value = DEFAULT_A0,
    vin_v: Value = 1.0,
    rsource_ohm: Value | None = None,
) -> NoiseReport:
    """Output noise per source, integrated over a band, and the signal-to-noise ratio.

    Parameters
    ----------
    circuit : str
        Circuit id.
    parts : mapping or sequence of str
        Part values by reference (ohm, farad, henry).
    en_v_per_rthz : float or str, optional
        Op-amp voltage noise density (V/√Hz; default 10 nV/√Hz).
    in_a_per_rthz : float or str, optional
        Op-amp current noise density at each input (A/√Hz; default 1 pA/√Hz).
    temperature_k : float or str, optional
        Temperature of the resistors (K; default 300).
    band_hz : (float, float), optional
        Integration band (Hz); default f0/10 to 10·f0.
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz); None is an ideal op-amp.
    a0 : float or str
        Op-amp open-loop DC gain (V/V).
    vin_v : float or str
        Input sine peak (V) for the SNR.
    rsource_ohm : float or str, optional
        Source resistance in series with the input (ohm), an element of the netlist (its own thermal noise counted).

    Returns
    -------
    NoiseReport
        ``to_json()`` is the ``noise --json`` object.
    """
    from bandsmith.analysis.noise import NoiseSettings, output_noise
    from bandsmith.common.values import parse_nonnegative

    kw: dict[str, Any] = {}
    if en_v_per_rthz is not None:
        kw["en_v_per_rthz"] = parse_nonnegative(en_v_per_rthz, field="en")
    if in_a_per_rthz is not None:
        kw["in_a_per_rthz"] = parse_nonnegative(in_a_per_rthz, field="in")
    if temperature_k is not None:
        kw["temperature_k"] = _positive(temperature_k, "temp")
    if band_hz is not None:
        kw["band_hz"] = (_positive(band_hz[0], "band"), _positive(band_hz[1], "band"))
    settings = NoiseSettings(**kw)
    opamp = _opamp(gbw_hz, a0)
    vin = _positive(vin_v, "vin")
    cand, net = _driven_candidate(circuit, parts, rsource_ohm)
    return NoiseReport(cand, output_noise(net, settings, opamp=opamp, vin_v=vin))


# --------------------------------------------------------------------------------------------
# Cascade


@dataclass(frozen=True)
class CascadeReport:
    """A higher-order band-pass built as a chain of second-order stages (``bandsmith cascade``).

    Attributes
    ----------
    result : Cascade
        The stages (circuit, f0 in Hz, Q, gain, parts), the whole chain's band edges (Hz) and
        gains (dB), and the GBW (Hz) the most demanding stage needs.
    mask : dict or None
        Extra JSON keys: with rejection points the mask checked on the built chain (``mask``:
        ``{f_hz, required_db, achieved_db, margin_db}`` per point, dB), and ``joint`` (the
        in-band deviation in dB with parts chosen per stage and for the whole chain).
    """

    result: "Cascade"
    mask: "Mapping[str, Any] | None" = None

    @property
    def feasible(self) -> bool:
        """Whether every stage could be built."""
        return self.result.feasible

    def to_session(self, *, notes: str = "") -> "Session":
        """A session with the stages as candidates and the chain kept in it."""
        from bandsmith.chain.cascade import cascade_session

        return cascade_session(self.result, notes=notes)

    def to_json(self) -> dict:
        """The ``bandsmith cascade --json`` object."""
        from bandsmith.chain.cascade import cascade_json

        out = cascade_json(self.result)
        if self.mask is not None:
            out.update(self.mask)
        return out


def cascade(
    *,
    response: str,
    order: int,
    f0_hz: Value | None = None,
    bw_hz: Value | None = None,
    f_low_hz: Value | None = None,
    f_high_hz: Value | None = None,
    ripple_db: Value | None = None,
    gain: Value = 1.0,
    circuit: str = "auto",
    series: str = "E24",
    gbw_hz: Value | None = None,
    a0: Value = DEFAULT_A0,
    vin_v: Value = 1.0,
    rload_ohm: Value | None = None,
    tol_f0: Value | None = None,
    tol_q: Value | None = None,
    tol_gain_db: Value | None = None,
    rsource_ohm: Value | None = None,
    cload_f: Value | None = None,
    reject: "Sequence[str] | None" = None,
    pass_loss_db: Value | None = None,
    joint: bool = True,
) -> CascadeReport:
    """Design a higher-order band-pass as a chain of second-order stages.

    Parameters
    ----------
    response : str
        Prototype family, e.g. ``"butterworth"`` or ``"chebyshev"``.
    order : int or str
        Prototype order, 1 to 8 (the band-pass has that many stages), or ``"auto"``: the least
        order meeting the ``reject`` points.
    f0_hz, bw_hz : float or str, optional
        Geometric centre (Hz) and bandwidth f_high − f_low (Hz); or give the edges.
    f_low_hz, f_high_hz : float or str, optional
        Band edges (Hz): −3 dB, or the ripple-band edges for Chebyshev.
    ripple_db : float or str, optional
        Chebyshev passband ripple (dB; default 0.5).
    gain : float or str
        Gain magnitude at the geometric centre (V/V).
    circuit : str
        ``"auto"`` (least GBW with sane parts, per stage) or one circuit id for every stage.
    series : str
        ``"E6"`` … ``"E192"`` or ``"exact"``.
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz); None is an ideal op-amp.
    a0 : float or str
        Op-amp open-loop DC gain (V/V).
    vin_v : float or str
        Input peak amplitude (V).
    rload_ohm : float or str, optional
        Load from the output to ground (ohm).
    tol_f0, tol_q : float or str, optional
        Allowed f0 and Q change (fractions) for each stage's required GBW.
    tol_gain_db : float or str, optional
        Allowed centre-gain change (dB) for each stage's required GBW.
    rsource_ohm : float or str, optional
        Source resistance in series with the chain's input (ohm), an element of the first stage's netlist.
    cload_f : float or str, optional
        Load capacitance from the output to ground on the last stage (F), beside ``rload_ohm`` (a converter's input):
        counted in the output current at f0.
    reject : sequence of str, optional
        Rejection points ``"F=DB"``: at least DB dB below the centre gain at frequency F (Hz, any
        value notation). With ``order="auto"`` the least order meeting them is chosen.
    pass_loss_db : float or str, optional
        Loss allowed at the pass-band edges with a mask (dB; Butterworth below 3.01, Chebyshev its ripple).
    joint : bool
        Choose the standard values of all stages together for the least in-band deviation of the
        whole chain (True, the default) or each stage's alone; JSON ``joint`` gives the improvement (dB).

    Returns
    -------
    CascadeReport
        ``to_json()`` is the ``cascade --json`` object; ``to_session()`` a session with the chain.
    """
    from bandsmith.chain.cascade import ChainSettings, circuit_choices, design_cascade
    from bandsmith.chain.prototypes import RESPONSES

    if response is None:
        raise InputError("response", f"missing; choose one of {', '.join(RESPONSES)}")
    if order is None:
        raise InputError("order", "missing; give an integer from 1 to 8, or auto with --reject points")
    if circuit not in circuit_choices():
        raise InputError("circuit", f"{circuit!r} is not a circuit; choose one of {', '.join(circuit_choices())}")
    auto = isinstance(order, str) and order.strip().lower() == "auto"
    settings = ChainSettings.from_request(
        response,
        1 if auto else order,
        f0_hz=_optional_positive(f0_hz, "f0"),
        bw_hz=_optional_positive(bw_hz, "bw"),
        f_low_hz=_optional_positive(f_low_hz, "f-low"),
        f_high_hz=_optional_positive(f_high_hz, "f-high"),
        ripple_db=_optional_positive(ripple_db, "ripple-db"),
        gain=_positive(gain, "gain"),
        circuit=circuit,
        series=series,
    )
    conditions = conditions_of(gbw_hz, a0, vin_v, rload_ohm, tol_f0, tol_q, tol_gain_db, rsource_ohm, cload_f)
    if auto or reject:
        from bandsmith.chain.mask_design import design_to_mask

        result, mask_json = design_to_mask(settings, reject, pass_loss_db, conditions=conditions, auto=auto, joint=bool(joint))
        return CascadeReport(result, mask_json)
    if joint:
        from bandsmith.chain.joint import design_jointly

        return CascadeReport(*design_jointly(settings, conditions=conditions))
    return CascadeReport(design_cascade(settings, conditions=conditions), {"joint": None})


# --------------------------------------------------------------------------------------------
# The bench: fit to a measurement, op-amp check


@dataclass(frozen=True)
class MeasurementFitReport:
    """Which parts explain a measured response of a built candidate (``bandsmith fit``).

    Attributes
    ----------
    candidate : Candidate
        The design's circuit and part values (ohm, farad, henry).
    measurement : Measurement
        The measured response: frequencies (Hz), magnitude (dB) and, if given, phase (rad).
    diagnosis : Diagnosis
        Fitted part values, their change (%), the residual (dB rms) and each part alone.
    opamp : OpAmpModel, optional
        The op-amp model of the fit (GBW in Hz), None for an ideal one.
    """

    candidate: "Candidate"
    measurement: "Measurement"
    diagnosis: "Diagnosis"
    opamp: "OpAmpModel | None" = None

    @property
    def fitted(self) -> Mapping[str, float]:
        """The fitted part values by reference (ohm, farad, henry), read-only."""
        from types import MappingProxyType

        return MappingProxyType(dict(self.diagnosis.to_json()["fitted"]))

    def to_json(self) -> dict:
        """The ``bandsmith fit --json`` object."""
        m = self.measurement
        out = self.diagnosis.to_json()
        out["measured"].update({"source": m.source, "sha256": m.sha256, "has_phase": m.has_phase, "file_notes": list(m.notes)})
        out["components"] = _values_json(self.candidate)
        out["opamp"] = None if self.opamp is None else self.opamp.to_json()
        return out


def _kind_tolerances(tolerances: "Mapping[str, Value] | Sequence[str] | None") -> dict[str, float]:
    if isinstance(tolerances, Mapping):
        tolerances = [f"{k}={v}" for k, v in tolerances.items()]
    out = {}
    for it in tolerances or ():
        kind, sep, text = it.partition("=")
        kind = kind.strip().upper()
        if not sep or kind not in ("R", "C", "L"):
            raise InputError("tol", f"{it!r}: expected KIND=P with KIND R, C or L, e.g. C=5%")
        v = _fraction(text, f"tol {kind}")
        if not v > 0:
            raise InputError(f"tol {kind}", "must be above zero")
        out[kind] = v
    return out


def fit(
    circuit: str,
    parts: "Mapping[str, Value] | Sequence[str]",
    *,
    measured: "str | os.PathLike | Measurement",
    fit_parts: Sequence[str] | None = None,
    part_range: Value | None = None,
    tolerances: "Mapping[str, Value] | Sequence[str] | None" = None,
    gbw_hz: Value | None = None,
    a0: Value | None = None,
    magnitude_only: bool = False,
) -> MeasurementFitReport:
    """Fit a design's part values to a measured response and rank the parts that explain it.

    Parameters
    ----------
    circuit : str
        Circuit id.
    parts : mapping or sequence of str
        The design's part values by reference (ohm, farad, henry).
    measured : path or Measurement
        A measured response file (CSV or whitespace-separated: frequency, magnitude in dB or
        V/V, optional phase), or one already read.
    fit_parts : sequence of str, optional
        References of the parts to fit (default every part above zero).
    part_range : float or str, optional
        Allowed change of every fitted part (fraction, e.g. ``"20%"``; default 3× its tolerance).
    tolerances : mapping or sequence of str, optional
        Tolerance by kind (``{"C": "5%"}`` or ``["C=5%"]``; fractions) for the default ranges.
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz) of the model; None is an ideal op-amp.
    a0 : float or str, optional
        Op-amp open-loop DC gain (V/V; needs ``gbw_hz``; default 1e5).
    magnitude_only : bool
        Fit the magnitude only, even where the file has phase.

    Returns
    -------
    MeasurementFitReport
        ``to_json()`` is the ``fit --json`` object.
    """
    from bandsmith.bench.diagnose import diagnose
    from bandsmith.bench.measured import MappingNeeded, read_measurement
    from bandsmith.solver.mna import OpAmpModel

    cand = candidate_of(circuit, parts)
    m = measured
    if isinstance(measured, (str, bytes, os.PathLike)):
        try:
            m = read_measurement(measured)
        except MappingNeeded as exc:
            raise InputError("measured", exc.reason) from None
    opamp = None
    if gbw_hz is not None:
        a = _positive(a0, "a0") if a0 is not None else DEFAULT_A0
        opamp = OpAmpModel(_positive(gbw_hz, "gbw"), a)
    elif a0 is not None:
        raise InputError("a0", "only means something with --gbw")
    rng = None if part_range is None else _fraction(part_range, "range")
    names = None if fit_parts is None else list(fit_parts)
    d = diagnose(cand, m, parts=names, ranges=rng, tolerances=_kind_tolerances(tolerances), opamp=opamp, use_phase=not magnitude_only)
    return MeasurementFitReport(cand, m, d, opamp)


@dataclass(frozen=True)
class OpAmpCheckReport:
    """Which op-amps will do for one candidate, and how much signal fits (``bandsmith check``).

    Attributes
    ----------
    candidate : Candidate
        Circuit id and part values (ohm, farad, henry).
    report : FitReport
        One verdict per op-amp with its margins (GBW, slew, output current as ratios; swing in
        V) and the circuit's own headroom (node peaks in V, largest input in V).
    vin_v : float
        Input peak (V).
    supply_v : float
        Symmetric supply ±V (V).
    rload_ohm : float, optional
        Load from the output to ground (ohm).
    """

    candidate: "Candidate"
    report: "FitReport"
    vin_v: float
    supply_v: float
    rload_ohm: float | None = None

    def to_json(self) -> dict:
        """The ``bandsmith check --json`` object."""
        cand, report = self.candidate, self.report
        return {
            "candidate": {
                "topology": cand.topology_id,
                "components": _values_json(cand),
                "netlist": cand.netlist.to_json(),
                "ideal": report.ideal.to_json(),
                "vin_v": float(self.vin_v),
                "supply_v": float(self.supply_v),
                "rload_ohm": None if self.rload_ohm is None else float(self.rload_ohm),
            },
            "verdicts": [v.to_json() for v in report.verdicts],
            "headroom": report.headroom.to_json(),
        }


def check_opamps(
    circuit: str,
    parts: "Mapping[str, Value] | Sequence[str]",
    *,
    amps: "Sequence[OpAmp | str] | None" = None,
    shelf: "Sequence[OpAmp] | None" = None,
    vin_v: Value = 1.0,
    supply_v: Value | None = None,
    rload_ohm: Value | None = None,
    tol_f0: Value | None = None,
    tol_q: Value | None = None,
    tol_gain_db: Value | None = None,
) -> OpAmpCheckReport:
    """Check op-amp models against one candidate: verdicts, margins and headroom.

    Parameters
    ----------
    circuit : str
        Circuit id.
    parts : mapping or sequence of str
        Part values by reference (ohm, farad, henry).
    amps : sequence of OpAmp or str, optional
        The models to check, or their names on ``shelf`` (default every model on ``shelf``).
    shelf : sequence of OpAmp, optional
        Where names are looked up (default the shipped generic archetypes).
    vin_v : float or str
        Input peak amplitude (V).
    supply_v : float or str, optional
        Symmetric supply ±V (V; default 15).
    rload_ohm : float or str, optional
        Load from the output to ground (ohm).
    tol_f0, tol_q : float or str, optional
        Allowed f0 and Q change (fractions) for the required GBW.
    tol_gain_db : float or str, optional
        Allowed centre-gain change (dB) for the required GBW.

    Returns
    -------
    OpAmpCheckReport
        ``to_json()`` is the ``check --json`` object.
    """
    from bandsmith.bench.fitcheck import fit_check
    from bandsmith.bench.headroom import DEFAULT_SUPPLY_V
    from bandsmith.bench.shelf import ARCHETYPES, find_amp

    cand = candidate_of(circuit, parts)
    vin = _positive(vin_v, "vin")
    supply = _positive(supply_v, "supply") if supply_v is not None else DEFAULT_SUPPLY_V
    rload = _optional_positive(rload_ohm, "rload")
    tol = tolerances_of(tol_f0, tol_q, tol_gain_db)
    shelf = tuple(ARCHETYPES if shelf is None else shelf)
    chosen: list = []
    for a in (shelf if amps is None else amps):
        model = find_amp(shelf, a) if isinstance(a, str) else a
        if model not in chosen:
            chosen.append(model)
    if not chosen:
        raise InputError("amp", "the shelf is empty; add an op-amp to it first")
    report = fit_check(cand.netlist, chosen, supply_v=supply, vin_v=vin, rload_ohm=rload, tolerances=tol)
    return OpAmpCheckReport(cand, report, vin, supply, rload)


# --------------------------------------------------------------------------------------------
# Sessions


def open_session(path: str | os.PathLike) -> "Session":
    """Read a session file (``*.bandsmith.json``).

    Parameters
    ----------
    path : str or path-like
        The session file.

    Returns
    -------
    Session
        The target (f0 in Hz, Q, gain), op-amp (GBW in Hz, A0), drive (V, ohm) and candidates
        (part values in ohm, farad, henry); frozen.

    Raises
    ------
    InputError
        When the file is missing, not JSON, or not a valid session (the message says where).
    """
    from bandsmith.files.session import load_session

    return load_session(path)


def save_session(session: "Session", path: str | os.PathLike) -> None:
    """Write a session file atomically (an existing file is replaced only once complete).

    Parameters
    ----------
    session : Session
        From :func:`open_session` or a report's ``to_session()``.
    path : str or path-like
        The file to write (``*.bandsmith.json``).

    Returns
    -------
    None

    Raises
    ------
    InputError
        When the name is empty (field ``save``) or the file cannot be written.
    """
    from bandsmith.files.session import save_session as _save

    if not os.fspath(path).strip():  # an empty name is bad input, not "save nothing"
        raise InputError("save", "give the name of the session file to write")
    _save(session, path)


# --------------------------------------------------------------------------------------------
# Filter banks


@dataclass(frozen=True)
class BankReport:
    """A filter bank: many band-pass channels designed together (``bandsmith bank``; :func:`filter_bank`).

    Attributes
    ----------
    result : Bank
        The channels (target centre in Hz, Q, centre gain, circuit, parts in SI units, analysis),
        each channel's parts when designed alone, and how the circuit was chosen.
    response : BankResponse
        Every channel's and the sum's response over a sweep (Hz), the sum's ripple (dB) over the
        covered band and the isolation table (dB).
    """

    result: "Any"
    response: "Any"

    def to_json(self) -> dict:
        """The ``bandsmith bank --json`` object."""
        from bandsmith.bank.bank_json import bank_json

        return bank_json(self.result, self.response)

    def netlist(self, *, gbw_hz: Value | None = None) -> str:
        """One SPICE netlist of every channel (common input ``in``, outputs ``ch<k>_out``)."""
        from bandsmith.bank.bank_json import bank_spice_netlist

        return bank_spice_netlist(self.result, gbw_hz=_optional_positive(gbw_hz, "gbw"))

    def to_session(self, *, notes: str = "") -> "Session":
        """A session keeping the bank under ``extras["banks"]`` (its channels as candidates too)."""
        from bandsmith.bank.bank_session import bank_session

        return bank_session(self.result, notes=notes)

    def parts_csv(self) -> str:
        """The parts list: one row per distinct value with its quantity, then the op-amp packages."""
        from bandsmith.bank.bank_json import bank_parts_csv

        return bank_parts_csv(self.result)


def _need_band_ends(from_hz: Value | None, to_hz: Value | None) -> None:
    """Bad input when the lowest or the highest centre frequency of a bank's rule is missing."""
    for name, v in (("from", from_hz), ("to", to_hz)):
        if v is None:
            raise InputError(name, "missing; give the lowest and highest centre frequencies")


def _centre_list(centres_hz) -> list[float]:
    if isinstance(centres_hz, str):
        items = [t for t in (x.strip() for x in centres_hz.split(",")) if t]
    else:
        items = list(centres_hz)
    return [_positive(v, "centres") for v in items]


def filter_bank(
    *,
    octave_fraction: int | str | None = None,
    from_hz: Value | None = None,
    to_hz: Value | None = None,
    centres_hz: "Sequence[Value] | str | None" = None,
    count: int | str | None = None,
    linear: bool = False,
    q: Value | None = None,
    gain: Value = 1.0,
    circuit: str = "auto",
    series: str = "E24",
    gbw_hz: Value | None = None,
    a0: Value = DEFAULT_A0,
    points: int | str = 400,
) -> BankReport:
    """Design a filter bank: band-pass channels on a rule or a list, designed together.

    Parameters
    ----------
    octave_fraction : int or str, optional
        ``b`` for bands of 1/b octave with the exact base-ten mid-band frequencies of
        IEC 61260-1:2014 (1 = octaves, 3 = third-octaves), with ``from_hz`` and ``to_hz``.
    from_hz, to_hz : float or str, optional
        The lowest and highest centre (Hz); each snaps to the nearest band.
    centres_hz : sequence or str, optional
        Centres typed by the user (Hz), a sequence or comma-separated text, instead of a rule.
    count : int or str, optional
        Instead of ``octave_fraction``: this many centres from ``from_hz`` to ``to_hz``, evenly
        spaced on a log scale (equal ratios).
    linear : bool
        With ``count``: evenly spaced in hertz instead (equal steps).
    q : float or str, optional
        Q of every channel; by default from the band's width, so that neighbours cross at −3 dB.
    gain : float or str
        Centre-gain magnitude of every channel (V/V).
    circuit : str
        ``auto`` (the verdicts' best circuit for the hardest channel), ``per-channel``, or a
        circuit id.
    series : str
        ``E6`` … ``E192`` or ``exact``.
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz); None is an ideal op-amp.
    a0 : float or str
        Op-amp open-loop DC gain (V/V).
    points : int or str
        Points of the response sweep.

    Returns
    -------
    BankReport
        ``to_json()`` is the ``bank --json`` object.
    """
    from bandsmith.bank import centres as C
    from bandsmith.bank.build import AUTO, PER_CHANNEL, design_bank
    from bandsmith.bank.response import bank_response

    rule_given = octave_fraction is not None or from_hz is not None or to_hz is not None or count is not None
    if rule_given and centres_hz is not None:
        raise InputError("centres", "give --centres or --octave-fraction with --from and --to, not both")
    if octave_fraction is not None and count is not None:
        raise InputError("count", "give --octave-fraction or --count, not both")
    labels = None
    if count is not None:
        _need_band_ends(from_hz, to_hz)
        n = _whole(count, "count", low=1)
        if n > 400:
            raise InputError("count", f"a bank has at most 400 channels, got {n}")
        f = C.even_centres(_positive(from_hz, "from"), _positive(to_hz, "to"), n, linear=bool(linear))
        rule = {"kind": "linear" if linear else "log", "count": n}
        q_rule = C.q_for_crossing(f)
    elif centres_hz is not None:
        f = C.listed_centres(_centre_list(centres_hz))
        rule = {"kind": "list"}
        q_rule = C.q_for_crossing(f)
    elif rule_given:
        if octave_fraction is None:
            raise InputError("octave-fraction", "missing; give the b of 1/b-octave bands (1, 2, 3, 6, 12, 24 …)")
        _need_band_ends(from_hz, to_hz)
        b = _whole(octave_fraction, "octave-fraction", low=1)
        x, f, labels = C.fraction_centres(b, _positive(from_hz, "from"), _positive(to_hz, "to"))
        rule = {"kind": "fraction", "b": b, "standard": "IEC 61260-1:2014, base ten", "x": [int(v) for v in x]}
        q_rule = C.band_q(b)
    else:
        raise InputError("centres", "missing; give --centres F,F,… or --octave-fraction B --from F1 --to F2")
    if q is not None:
        q_val = _positive(q, "q")
    elif q_rule is None:
        raise InputError("q", "a single channel has no neighbour to set its Q from; give q")
    else:
        q_val = q_rule
    if circuit not in (AUTO, PER_CHANNEL):
        circuit = _topology(circuit).id
    n_points = _whole(points, "points", low=2)
    if n_points > 100_000:
        raise InputError("points", f"at most 100000 points, got {n_points}")
    conditions = conditions_of(gbw_hz, a0)
    result = design_bank(f, q_val, _positive(gain, "gain"), circuit=circuit, series=_series(series), labels_hz=labels, rule=rule, conditions=conditions)
    return BankReport(result, bank_response(result, points=n_points))


# --------------------------------------------------------------------------------------------
# On the board: single supply and trimming


def bias(
    circuit: str,
    parts: "Mapping[str, Value] | Sequence[str]",
    *,
    supply_v: Value,
    reference: str = "divider",
    divider_ohm: Value = 100e3,
    rload_ohm: Value = 10e3,
    vin_v: Value = 1.0,
    headroom_v: Value = 0.0,
    bias_current_a: Value = 0.0,
    corner_ratio: float = 10.0,
    cp_f: Value | None = None,
    temp_range_c: "tuple[float, float] | None" = None,
    tempco: "Mapping[str, Value] | None" = None,
    rated_v: Value = 50.0,
) -> "BiasedCircuit":
    """A circuit built for one supply: DC node voltages, reference, coupling, swing and response.

    Parameters
    ----------
    circuit : str
        Circuit id.
    parts : mapping or sequence of "REF=VALUE"
        Part values.
    supply_v : float or str
        The single supply in V.
    reference : str
        ``"divider"`` or ``"buffered"``.
    divider_ohm : float or str
        Each divider resistor, in ohm.
    rload_ohm : float or str
        The load behind the output coupling capacitor, in ohm.
    vin_v : float or str
        The input's peak amplitude in V.
    headroom_v : float or str
        How close to a rail the output swings, in V.
    bias_current_a : float or str
        Input bias current into each op-amp pin, in A.
    corner_ratio : float
        The coupling corners sit this many times below the band's lower edge.
    cp_f : float or str, optional
        The inductor's parallel (winding) capacitance in F: gives its self-resonance.
    temp_range_c : (float, float), optional
        Two temperatures in °C: the drift of f0, Q and gain between them.
    tempco : mapping, optional
        Temperature coefficients per K by kind or reference (``{"R": 50e-6}``).
    rated_v : float or str
        A class-2 capacitor's rated voltage in V (for its loss under DC bias).

    Returns
    -------
    BiasedCircuit
        Its ``to_json()`` is what ``bandsmith bias --json`` prints.
    """
    from bandsmith.board.bias import BiasSettings, bias_circuit
    from bandsmith.common.values import parse_nonnegative, parse_value

    cand = candidate_of(circuit, parts)
    settings = BiasSettings(
        supply_v=_positive(supply_v, "supply"), reference=str(reference), divider_ohm=_positive(divider_ohm, "divider"),
        rload_ohm=_positive(rload_ohm, "rload"), vin_v=_positive(vin_v, "vin"),
        headroom_v=parse_nonnegative(headroom_v, field="headroom"),
        bias_current_a=parse_value(bias_current_a, field="ibias"), corner_ratio=float(corner_ratio),
    )
    biased = bias_circuit(cand.netlist, settings)
    from bandsmith.board.physics import board_physics

    physics = board_physics(
        cand.netlist, node_dc_v=biased.node_dc_v, coupling=biased.coupling,
        cp_f=_optional_positive(cp_f, "cp"),
        temp_range_c=_temp_range(temp_range_c),
        tempco=_tempco(tempco),
        rated_v=_positive(rated_v, "rated"),
    )
    return replace(biased, physics=physics)


def trim(
    circuit: str,
    parts: "Mapping[str, Value] | Sequence[str]",
    *,
    tolerances: "Mapping[str, Value] | None" = None,
    measured_f0_hz: Value | None = None,
    target_f0_hz: Value | None = None,
    measured: "str | os.PathLike | None" = None,
    trials: int = 0,
    window: Value = 0.005,
    seed: int = 1,
    temp_range_c: "tuple[float, float] | None" = None,
    tempco: "Mapping[str, Value] | None" = None,
) -> "TrimPlan":
    """Which part to make adjustable for f0, Q and gain, the trimmer that covers the spread, and a correction.

    Parameters
    ----------
    circuit : str
        Circuit id.
    parts : mapping or sequence of "REF=VALUE"
        Part values.
    tolerances : mapping, optional
        Tolerance by part kind (``{"R": "1%", "C": "5%", "L": "10%"}``) or by reference.
    measured_f0_hz : float or str, optional
        The built stage's measured f0 in Hz; gives the correction.
    target_f0_hz : float or str, optional
        The f0 to trim to, in Hz (the nominal f0 by default).
    measured : path, optional
        A measured sweep (as :func:`fit` reads it): the parts are fitted to it and the correction
        solved on the fitted circuit.
    trials : int
        Monte Carlo trials of f0 before and after trimming (0: none).
    window : float or str
        The f0 window of that Monte Carlo, a fraction (``"0.5%"``).
    seed : int
        The Monte Carlo's seed.
    temp_range_c : (float, float), optional
        Two temperatures in °C: the trimmed trials are also taken to a temperature in that range.
    tempco : mapping, optional
        ± temperature coefficients per K by kind or reference (defaults R 50e-6, C 30e-6, L 200e-6).

    Returns
    -------
    TrimPlan
        Its ``to_json()`` is what ``bandsmith trim --json`` prints.
    """
    from bandsmith.board.trim import trim_plan, with_monte_carlo

    cand = candidate_of(circuit, parts)
    fitted = dict(fit(circuit, parts, measured=measured).fitted) if measured is not None else None
    tol = {str(k): _positive_fraction(v, f"tol {k}") for k, v in (tolerances or {}).items()}
    plan = trim_plan(
        cand.netlist, tolerances=tol,
        measured_f0_hz=_optional_positive(measured_f0_hz, "measured-f0"),
        target_f0_hz=_optional_positive(target_f0_hz, "target-f0"),
        fitted=fitted,
    )
    if trials:
        return with_monte_carlo(
            cand.netlist, plan, trials=trials, window=_positive_fraction(window, "window"), seed=seed,
            t_range=_temp_range(temp_range_c),
            tempco=_tempco(tempco),
        )
    return plan


def _tempco(tempco: "Mapping[str, Value] | None") -> dict[str, float]:
    """Temperature coefficients per K by kind or reference, read from numbers or text."""
    from bandsmith.common.values import parse_value

    return {str(k): parse_value(t, field=f"tc {k}") for k, t in (tempco or {}).items()}


def _temp_range(t: "Sequence[Value] | None") -> "tuple[float, float] | None":
    from bandsmith.common.values import parse_value

    if t is None:
        return None
    if len(t) != 2:
        raise InputError("temp-range", f"give two temperatures in °C, got {len(t)}")
    lo, hi = sorted(parse_value(x, field="temp-range") for x in t)
    return lo, hi


# --------------------------------------------------------------------------------------------
# Tone bursts


@dataclass(frozen=True)
class BurstReport:
    """The response to a tone burst (``bandsmith burst``).

    Attributes
    ----------
    source : str
        A circuit id, or ``"chain"`` for a whole chain.
    components : dict or None
        The circuit's part values (ohm, farad, henry); None for a chain.
    result : BurstResult
        Times (s), output and envelope (V per volt of input peak), ``envelope_tau_s``,
        ``settle_time_s`` and ``ringdown_time_s`` (s).
    with_opamp : bool
        Whether the finite op-amp was in the response.
    """

    source: str
    components: "Mapping[str, float] | None"
    result: "BurstResult"
    with_opamp: bool = False

    def to_json(self) -> dict:
        """The ``bandsmith burst --json`` object."""
        return {"topology": self.source, "components": None if self.components is None else dict(self.components),
                "with_opamp": self.with_opamp, **self.result.to_json()}


def _burst_timing(freq_hz: Value, cycles: Value | None, duration_s: Value | None) -> tuple[float, float]:
    """The tone (Hz) and how long it is on (s), from ``cycles`` or ``duration_s`` (one of them)."""
    f = _positive(freq_hz, "freq")
    if (cycles is None) == (duration_s is None):
        raise InputError("cycles", "give either the number of cycles or the duration of the burst")
    if cycles is not None:
        return f, _positive(cycles, "cycles") / f
    return f, _positive(duration_s, "duration")


def _within(within: Value | None) -> float:
    if within is None:
        return 0.01
    w = _positive_fraction(within, "within")
    if w >= 1:
        raise InputError("within", f"must be below 100 %, got {within!r}")
    return w


def burst(
    circuit: str,
    parts: "Mapping[str, Value] | Sequence[str]",
    *,
    freq_hz: Value,
    cycles: Value | None = None,
    duration_s: Value | None = None,
    within: Value | None = None,
    gbw_hz: Value | None = None,
    a0: Value = DEFAULT_A0,
    rsource_ohm: Value | None = None,
) -> BurstReport:
    """The response of one candidate to a tone burst: envelope, settling and ring-down.

    Parameters
    ----------
    circuit : str
        Circuit id.
    parts : mapping or sequence of str
        Part values by reference (ohm, farad, henry).
    freq_hz : float or str
        The tone (Hz).
    cycles : float or str, optional
        How many cycles the tone is on (give this or ``duration_s``).
    duration_s : float or str, optional
        How long the tone is on (s).
    within : float or str, optional
        Settling band around the steady amplitude (fraction or percent; default 1 %).
    gbw_hz : float or str, optional
        Op-amp gain-bandwidth (Hz); None is an ideal op-amp.
    a0 : float or str
        Op-amp open-loop DC gain (V/V).
    rsource_ohm : float or str, optional
        Source resistance in series with the input (ohm), an element of the netlist.

    Returns
    -------
    BurstReport
        ``to_json()`` is the ``burst --json`` object (``envelope_tau_s``, ``settle_time_s``,
        ``ringdown_time_s`` in s, and the waveform).
    """
    from bandsmith.analysis.analyzer import transfer_function
    from bandsmith.analysis.burst import burst_response, zpk_of

    f, duration = _burst_timing(freq_hz, cycles, duration_s)
    w = _within(within)
    conditions = conditions_of(gbw_hz, a0, rsource_ohm=rsource_ohm)
    cand = candidate_of(circuit, parts)
    net = cand.driven_netlist(conditions)
    h = transfer_function(net, conditions.opamp) if conditions.opamp is not None else transfer_function(net)
    return BurstReport(cand.topology_id, _values_json(cand), burst_response(zpk_of(h), f, duration, within=w), conditions.opamp is not None)


def burst_cascade(
    report: CascadeReport,
    *,
    freq_hz: Value,
    cycles: Value | None = None,
    duration_s: Value | None = None,
    within: Value | None = None,
    with_opamp: bool = False,
) -> BurstReport:
    """The response of a whole chain (from :func:`cascade`) to a tone burst.

    Parameters
    ----------
    report : CascadeReport
        A built chain.
    freq_hz : float or str
        The tone (Hz).
    cycles : float or str, optional
        How many cycles the tone is on (give this or ``duration_s``).
    duration_s : float or str, optional
        How long the tone is on (s).
    within : float or str, optional
        Settling band around the steady amplitude (fraction or percent; default 1 %).
    with_opamp : bool
        Use the stages' responses with the finite op-amp of the chain's conditions.

    Returns
    -------
    BurstReport
        As :func:`burst`, ``topology`` ``"chain"``.
    """
    from bandsmith.analysis.burst import burst_response, chain_zpk

    res = report.result
    if not res.feasible:
        raise InputError("chain", f"the chain cannot be built: {res.reason}")
    f, duration = _burst_timing(freq_hz, cycles, duration_s)
    use = with_opamp and res.conditions.opamp is not None
    hs = [st.h_actual if use and st.h_actual is not None else st.h_ideal for st in res.stages]
    return BurstReport("chain", None, burst_response(chain_zpk(hs), f, duration, within=_within(within)), use)
