"""Designing the channels of a bank together: one circuit, shared capacitors, uniform gain.

Every channel gets the same centre-gain magnitude and, by default, the same circuit: the
best-ranked buildable circuit (:mod:`bandsmith.verdict`) for the hardest channel, the one with the
largest ``f0·Q`` (what a channel asks of its op-amp grows with it). ``per-channel`` lets the
verdicts choose for each channel instead.

Fewest distinct values (common practice, no source): within one circuit every capacitor of every
channel takes one value per decade of centre frequency, ``C_k = C_a·10^(−k)``, where ``C_a`` is
the capacitor the circuit's own design procedure picks for the middle channel (rounded to E6)
and ``k`` is the channel's decade counted from it (``round(log10(f0/f0_middle))``); the
resistors tune each channel. Scaling every capacitor by ``10^(−k)`` scales f0 by ``10^k`` and
leaves Q and the gain alone, so two channels whose centres differ by a whole number of decades
(third-octave bands ``x`` and ``x + 10``, say) take the very same resistors: such a channel is
designed once and the others reuse its resistors. Designing every channel alone (each with its
own impedance level) is done too, to report what the sharing saves.

Uniform gain: where a shared channel's centre gain misses its target by more than 0.05 dB, its
standard values are searched again, two values either side of every exact resistor, with the
centre gain weighted as if held to 0.1 dB (the weighting of
:func:`bandsmith.design.standard.choose_standard`), and the nearer of the two is kept, so that
the gains of the channels agree more closely than the default weighting of 0.5 dB leaves them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Mapping, Sequence

import numpy as np

from bandsmith.analysis.analyzer import Analysis
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import SERIES_NAMES, nearest
from bandsmith.design.candidate import Candidate, Conditions
from bandsmith.design.designer import DesignResult, Spec, design
from bandsmith.verdict import compare_verdicts

__all__ = ["AUTO", "PER_CHANNEL", "Channel", "Bank", "design_bank", "capacitor_refs"]

AUTO = "auto"
PER_CHANNEL = "per-channel"
#: Most channels in one bank (a 1/24-octave bank over the audio band has 241).
MAX_CHANNELS = 400
#: Capacitor values are shared from this series (the commonly stocked one; common practice).
CAP_SERIES = "E6"
#: The centre-gain tolerance (dB) the shared channels' standard-value search weighs the gain by.
GAIN_WEIGHT_DB = 0.1
#: Standard values offered each side of every exact resistor in that search.
SEARCH_WIDTH = 2


@dataclass(frozen=True, slots=True)
class Channel:
    """One channel of a bank.

    Attributes
    ----------
    index : int
        Position in the bank, from the lowest centre.
    target_f0_hz, q, gain : float
        The channel's target: centre (Hz), Q and centre-gain magnitude (V/V).
    label_hz : float or None
        The standard's nominal label (Hz) for rule-based centres, else None.
    circuit : str
    chosen : dict
        The parts (SI units).
    analysis : Analysis
        Analysis of the chosen parts.
    shared : bool
        Whether its capacitors are the bank's shared values.
    reused_from : int or None
        The channel whose resistors it reuses (a whole number of decades away), else None.
    notes : tuple of str
    """

    index: int
    target_f0_hz: float
    q: float
    gain: float
    label_hz: float | None
    circuit: str
    chosen: Mapping[str, float]
    analysis: Analysis
    shared: bool
    reused_from: int | None = None
    notes: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class Bank:
    """A designed bank.

    Attributes
    ----------
    channels : tuple of Channel
    series : str
    circuit_mode : str
        ``auto``, ``per-channel`` or the circuit id asked for.
    circuit_reason : str
        Why the circuit(s) were chosen.
    alone : tuple of dict
        Each channel's parts when designed alone (its own impedance level), for comparison.
    alone_circuits : tuple of str
    rule : dict
        How the centres were set (``{"kind": "fraction", "b": …}`` or ``{"kind": "list"}``).
    conditions : Conditions
    """

    channels: tuple[Channel, ...]
    series: str
    circuit_mode: str
    circuit_reason: str
    alone: tuple[Mapping[str, float], ...]
    alone_circuits: tuple[str, ...]
    rule: Mapping = field(default_factory=dict)
    conditions: Conditions = field(default_factory=Conditions)


def capacitor_refs(circuit: str) -> tuple[str, ...]:
    """References of a circuit's required capacitors."""
    return tuple(c.ref for c in get_topology(circuit).components if c.kind == "C" and c.required)


def _best(spec: Spec, series: str, conditions: Conditions) -> tuple[DesignResult, str]:
    """The design of the best-ranked feasible circuit for ``spec`` and why."""
    comp = compare_verdicts(spec, series=series, conditions=conditions)
    for res, verdict, _rank in comp.ranked():
        if comp.recommended is not None:
            return res, comp.ranking.reason  # ranked first: the recommended one
        if res.feasible:
            return res, f"no circuit is buildable for it ({comp.ranking.reason}); {res.topology_id} is the best-ranked that can be designed"
    raise InputError("circuit", f"no circuit can be designed for a channel at {spec.f0_hz:.6g} Hz, Q {spec.q:.4g}, gain {spec.gain:.4g}")


def _circuits(specs: Sequence[Spec], circuit: str, series: str, conditions: Conditions) -> tuple[list[str], str, dict[int, DesignResult]]:
    """Each channel's circuit, why, and the channels' designs the choice already made (by index)."""
    if circuit == AUTO:
        worst = max(range(len(specs)), key=lambda i: specs[i].f0_hz * specs[i].q)
        res, why = _best(specs[worst], series, conditions)
        return [res.topology_id] * len(specs), f"chosen by the verdicts for the hardest channel ({specs[worst].f0_hz:.6g} Hz): {why}", {worst: res}
    if circuit == PER_CHANNEL:
        made = {i: _best(s, series, conditions)[0] for i, s in enumerate(specs)}
        return [made[i].topology_id for i in range(len(specs))], "chosen by the verdicts for each channel", made
    topo = get_topology(circuit)  # InputError for an unknown id
    if topo.synthesize is None:
        raise InputError("circuit", f"{topo.id} has no design procedure; choose another circuit")
    return [topo.id] * len(specs), "given", {}


def _feasible_or_raise(res: DesignResult, i: int) -> DesignResult:
    if not res.feasible:
        raise InputError("circuit", f"{res.topology_id} cannot build channel {i + 1} ({res.spec.f0_hz:.6g} Hz): {res.reason}")
    return res


def design_bank(
    centres_hz: Sequence[float],
    q: Sequence[float] | float,
    gain: float,
    *,
    circuit: str = AUTO,
    series: str = "E24",
    labels_hz: Sequence[float] | None = None,
    rule: Mapping | None = None,
    conditions: Conditions = Conditions(),
) -> Bank:
    """Design every channel of a bank (see the module notes).

    Parameters
    ----------
    centres_hz : sequence of float
        Channel centres (Hz), ascending.
    q : float or sequence of float
        Q of every channel, or one per channel.
    gain : float
        Centre-gain magnitude of every channel (V/V).
    circuit : str
        ``auto``, ``per-channel`` or a circuit id.
    series : str
        ``E3`` … ``E192`` or ``exact``.
    labels_hz : sequence of float, optional
        Nominal labels of the centres.
    rule : mapping, optional
        How the centres were set (kept in the result).
    conditions : Conditions
        Op-amp and tolerances for the analyses and verdicts.

    Returns
    -------
    Bank

    Raises
    ------
    InputError
        An unknown circuit or series, or a channel no circuit can build.
    """
    if series not in SERIES_NAMES + ("exact",):
        raise InputError("series", f"{series!r} is not a series; choose one of {', '.join(SERIES_NAMES)} or exact")
    f = np.asarray(centres_hz, dtype=float)
    if not 1 <= f.size <= MAX_CHANNELS:
        raise InputError("centres", f"a bank has 1 to {MAX_CHANNELS} channels, this one would have {f.size}")
    qs = np.broadcast_to(np.asarray(q, dtype=float), f.shape)
    specs = [Spec(float(fi), float(qi), float(gain)) for fi, qi in zip(f, qs)]
    circuits, why, made = _circuits(specs, circuit, series, conditions)
    alone = [_feasible_or_raise(made.get(i) or design(c, s, series=series, conditions=conditions), i) for i, (c, s) in enumerate(zip(circuits, specs))]

    # The standard-value search weighs the centre gain as if held to GAIN_WEIGHT_DB (uniform gain
    # across the bank); the analyses keep the caller's conditions.
    tol = conditions.tolerances
    even_gain = replace(conditions, tolerances=replace(tol, gain_db=min(tol.gain_db, GAIN_WEIGHT_DB)))
    chosen: list = [None] * len(specs)
    analyses: list = [None] * len(specs)
    shared = [False] * len(specs)
    reused: list = [None] * len(specs)
    notes: list = [()] * len(specs)
    for cid in dict.fromkeys(circuits):
        members = [i for i, c in enumerate(circuits) if c == cid]
        refs = capacitor_refs(cid)
        anchor = members[len(members) // 2]
        c_alone = [alone[anchor].chosen[r] for r in refs]
        c_a = math.exp(float(np.mean(np.log(c_alone)))) if c_alone else None
        if c_a is not None and series != "exact":
            c_a = nearest(c_a, CAP_SERIES)
        done: dict = {}
        for i in members:
            if c_a is None:  # nothing to share
                chosen[i], analyses[i] = dict(alone[i].chosen), alone[i].analysis
                continue
            k = math.floor(round(math.log10(f[i] / f[anchor]), 9) + 0.5)  # half-decades round up, consistently
            c_i = float(f"{c_a * 10.0 ** (-k):.6g}")
            key = (round(math.log10(f[i]) - k, 9), round(float(qs[i]), 9))
            if key in done:
                j, _ = done[key]
                vals = {r: (c_i if r in refs else v) for r, v in chosen[j].items()}
                chosen[i], shared[i], reused[i] = vals, True, j
                analyses[i] = Candidate(cid, vals).analyze(conditions)
                continue
            pins = {r: c_i for r in refs}
            res = design(cid, specs[i], series=series, fixed=pins, conditions=conditions)
            if not res.feasible or abs(res.errors["gain_db"]) > GAIN_WEIGHT_DB / 2:
                again = design(cid, specs[i], series=series, fixed=pins, conditions=even_gain, width=SEARCH_WIDTH)
                if again.feasible and (not res.feasible or abs(again.errors["gain_db"]) < abs(res.errors["gain_db"])):
                    res = again
            if res.feasible:
                chosen[i], shared[i] = dict(res.chosen), True
                analyses[i] = Candidate(cid, chosen[i]).analyze(conditions)
                done[key] = (i, k)
            else:
                chosen[i], analyses[i] = dict(alone[i].chosen), alone[i].analysis
                notes[i] = (f"capacitors not shared: with {c_i:.3g} F {res.reason}; designed alone",)
    channels = tuple(
        Channel(
            index=i,
            target_f0_hz=float(f[i]),
            q=float(qs[i]),
            gain=float(gain),
            label_hz=None if labels_hz is None else float(labels_hz[i]),
            circuit=circuits[i],
            chosen=chosen[i],
            analysis=analyses[i],
            shared=shared[i],
            reused_from=reused[i],
            notes=notes[i],
        )
        for i in range(len(specs))
    )
    return Bank(
        channels=channels,
        series=series,
        circuit_mode=circuit,
        circuit_reason=why,
        alone=tuple(dict(a.chosen) for a in alone),
        alone_circuits=tuple(circuits),
        rule=dict(rule or {}),
        conditions=conditions,
    )
