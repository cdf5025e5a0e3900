"""Single-supply operation of any circuit, built generically from its netlist.

The rule, for every circuit: each part returned to ground (and each op-amp input held at ground)
goes to a mid-supply reference node ``ref``; a coupling capacitor joins the source to the input and
another the output to the load; the reference is a divider from the supply with a bypass capacitor,
or a buffered (ideal) source. A node left with no DC path (reached only through capacitors) gets a
bias resistor to the reference. Then a DC solve (capacitors open, inductors shorted) gives every
node's voltage, and the whole network (coupling and reference included) gives the response.

Closed forms used (an RC section's corner is 1/(2πRC): A. S. Sedra and K. C. Smith,
*Microelectronic Circuits*, the single-time-constant networks; chapter from memory):

- input coupling corner ``1/(2π·R_in·C_in)``, with ``R_in`` the smallest magnitude of the
  circuit's input impedance from DC through the band (op-amps ideal, the reference an AC ground);
  for an input resistor into a virtual ground this is that resistor;
- output coupling corner ``1/(2π·R_load·C_out)`` (the op-amp output is a zero-impedance source);
- the divider's Thevenin resistance ``R_top·R_bot/(R_top + R_bot)`` and its bypass corner
  ``1/(2π·R_th·C_bypass)``; start-up: the reference rises as ``1 − exp(−t/τ)``, τ = R_th·C_bypass,
  within 0.1 % after ``τ·ln 1000 ≈ 6.9 τ``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from bandsmith.analysis.analyzer import ideal_figures, transfer_function
from bandsmith.analysis.figures import Figures
from bandsmith.board.dc import dc_operating_point, floating_nodes
from bandsmith.common.eseries import neighbours
from bandsmith.common.errors import InputError
from bandsmith.solver.netlist import Element, Netlist

__all__ = ["BiasSettings", "Coupling", "BiasedCircuit", "bias_circuit", "REFERENCE_KINDS"]

REFERENCE_KINDS = ("divider", "buffered")
SUPPLY, SOURCE, REF, LOAD = "vs", "src", "ref", "load"
SETTLE_FRACTION = 1e-3
REF_IMPEDANCE_SHARE = 0.01  # the reference's impedance in the band vs the smallest part returned to it  # the reference is "settled" within 0.1 % of its final value


@dataclass(frozen=True, slots=True)
class BiasSettings:
    """How to bias a circuit for one supply.

    Parameters
    ----------
    supply_v : float
        The single supply, in V (the other rail is ground).
    reference : str
        ``"divider"`` (two equal resistors and a bypass capacitor) or ``"buffered"`` (an ideal source).
    divider_ohm : float
        Each of the divider's two resistors, in ohm.
    rload_ohm : float
        The load behind the output coupling capacitor, in ohm.
    vin_v : float
        The input's peak amplitude, in V (for the swing margin).
    headroom_v : float
        How close to each rail the op-amp output can swing, in V (0 = rail to rail).
    bias_current_a : float
        Input bias current into each op-amp input pin, in A.
    corner_ratio : float
        The coupling corners sit this many times below the band's lower -3 dB frequency (≥ 10).
    bypass_ratio : float
        The reference's bypass corner sits at least this many times below the band's lower edge; the
        bypass is also made large enough that the reference's impedance at the band's lower edge is
        under 1 % of the smallest resistor returned to it (common practice, no source).
    """

    supply_v: float
    reference: str = "divider"
    divider_ohm: float = 100e3
    rload_ohm: float = 10e3
    vin_v: float = 1.0
    headroom_v: float = 0.0
    bias_current_a: float = 0.0
    corner_ratio: float = 10.0
    bypass_ratio: float = 100.0

    def __post_init__(self):
        for name in ("supply_v", "divider_ohm", "rload_ohm", "vin_v"):
            v = getattr(self, name)
            if not (math.isfinite(v) and v > 0):
                raise InputError(name.rsplit("_", 1)[0] if name != "supply_v" else "supply", f"must be a finite number above zero, got {v!r}")
        if self.reference not in REFERENCE_KINDS:
            raise InputError("reference", f"{self.reference!r} is not one of {', '.join(REFERENCE_KINDS)}")
        if not (math.isfinite(self.headroom_v) and 0 <= self.headroom_v < self.supply_v / 2):
            raise InputError("headroom", f"must be from 0 to half the supply, got {self.headroom_v!r}")
        if not (math.isfinite(self.bias_current_a) and abs(self.bias_current_a) < 1e-3):
            raise InputError("ibias", f"must be a finite current below 1 mA, got {self.bias_current_a!r}")
        if not (math.isfinite(self.corner_ratio) and self.corner_ratio >= 10):
            raise InputError("corner-ratio", f"must be 10 or more (a decade below the band), got {self.corner_ratio!r}")


@dataclass(frozen=True, slots=True)
class Coupling:
    """A coupling capacitor: reference, value (F), the resistance it works into (ohm) and its corner (Hz)."""

    ref: str
    capacitance_f: float
    resistance_ohm: float
    corner_hz: float
    where: str

    def to_json(self) -> dict:
        return {"ref": self.ref, "where": self.where, "capacitance_f": self.capacitance_f,
                "resistance_ohm": self.resistance_ohm, "corner_hz": self.corner_hz}


@dataclass(frozen=True)
class BiasedCircuit:
    """A circuit built for one supply.

    Attributes
    ----------
    settings : BiasSettings
        What was asked.
    netlist : Netlist
        The AC netlist with the bias network (source ``src``, load ``load``, the supply an AC ground).
    elements : tuple of Element
        Every element for the DC solve (the divider's top resistor to the supply node ``vs``).
    node_dc_v : dict
        Every node's DC voltage (V); the op-amp output is ``out``.
    reference_v : float
        The reference's DC voltage (V).
    reference_impedance_ohm : float
        The reference's DC (Thevenin) impedance in ohm; 0 when buffered.
    reference_impedance_f0_ohm : float
        The reference's impedance magnitude at the circuit's f0, in ohm (the bypass capacitor at work).
    bypass_f : float or None
        The divider's bypass capacitor in F (None when buffered).
    bypass_corner_hz : float or None
        The bypass corner 1/(2π·R_th·C) in Hz.
    settle_s : float
        Time for the reference to reach 0.1 % of its final value after power-up, in s.
    coupling : tuple of Coupling
        The input and output coupling capacitors.
    bias_resistors : tuple of Element
        Resistors added to give a floating node a DC path (empty for most circuits).
    swing_margin_v : float
        The smaller distance from the output's peak to a rail (less the headroom), in V; negative = clipping.
    out_peak_v : float
        The output's AC peak at the largest gain, in V.
    figures : Figures
        The response's figures with the bias network.
    figures_split : Figures
        The same circuit's figures on a split supply (ideal grounds, no coupling).
    notes : tuple of str
        What was added or needs care, in words.
    physics : BoardPhysics or None
        Dielectric advice, self-resonance and drift (:mod:`bandsmith.board.physics`), when asked for.
    """

    settings: BiasSettings
    netlist: Netlist
    elements: tuple
    node_dc_v: dict
    reference_v: float
    reference_impedance_ohm: float
    reference_impedance_f0_ohm: float
    bypass_f: float | None
    bypass_corner_hz: float | None
    settle_s: float
    coupling: tuple
    bias_resistors: tuple
    swing_margin_v: float
    out_peak_v: float
    figures: Figures
    figures_split: Figures
    notes: tuple = field(default=())
    physics: object = None

    def response(self, f_hz: np.ndarray) -> np.ndarray:
        """The complex response from the source to the load at frequencies in Hz."""
        return transfer_function(self.netlist).item(0).at_f(np.asarray(f_hz, dtype=float))[0]

    def to_json(self, *, points: int = 121) -> dict:
        f_lo = min(c.corner_hz for c in self.coupling) / 10.0
        f_hi = float(self.figures_split.f_high_hz) * 10.0
        f = np.geomspace(f_lo, f_hi, points)
        h = self.response(f)
        return {
            "supply_v": self.settings.supply_v,
            "reference": self.settings.reference,
            "reference_v": self.reference_v,
            "reference_impedance_ohm": self.reference_impedance_ohm,
            "reference_impedance_f0_ohm": self.reference_impedance_f0_ohm,
            "divider_ohm": self.settings.divider_ohm if self.settings.reference == "divider" else None,
            "bypass_f": self.bypass_f,
            "bypass_corner_hz": self.bypass_corner_hz,
            "settle_s": self.settle_s,
            "node_dc_v": dict(self.node_dc_v),
            "coupling": [c.to_json() for c in self.coupling],
            "bias_resistors": [{"ref": e.ref, "nodes": list(e.nodes), "value": e.value} for e in self.bias_resistors],
            "rload_ohm": self.settings.rload_ohm,
            "vin_v": self.settings.vin_v,
            "out_peak_v": self.out_peak_v,
            "headroom_v": self.settings.headroom_v,
            "swing_margin_v": self.swing_margin_v,
            "figures": self.figures.to_json(),
            "figures_split_supply": self.figures_split.to_json(),
            "netlist": self.netlist.to_json(),
            "response": {
                "f_hz": [float(x) for x in f],
                "gain_db": [float(x) for x in 20 * np.log10(np.abs(h))],
                "phase_deg": [float(x) for x in np.degrees(np.angle(h))],
            },
            "notes": list(self.notes),
            "physics": self.physics.to_json() if self.physics is not None else None,
        }


def _up(x: float, series: str = "E12") -> float:
    """The series value at or above ``x``."""
    lo, hi = neighbours(x, series)
    return lo if math.isclose(lo, x, rel_tol=1e-9) else hi


def _regrounded(netlist: Netlist) -> tuple[Element, ...]:
    """The circuit's elements with every ground connection moved to the reference node."""
    g = netlist.ground
    return tuple(replace(e, nodes=tuple(REF if n == g else n for n in e.nodes)) for e in netlist.elements)


def _node_capacitance(elements, node: str) -> float:
    return sum(e.value for e in elements if e.kind == "C" and node in e.nodes)


def input_resistance(elements, node: str, f_hz: np.ndarray) -> float:
    """The smallest input impedance magnitude (ohm) seen into ``node`` at DC and over ``f_hz``.

    The reference is an AC ground and op-amps are ideal. The AC part uses a small sense resistor
    ``Rs`` from a test source: with ``H = V(node)/V(source)``, ``Z_in = Rs·H/(1 − H)``. Infinite
    when the node has no resistive path at all.
    """
    elements = tuple(elements)
    test = dc_operating_point(elements, {REF: 0.0, node: 1.0})
    current = sum((1.0 - test[e.nodes[1] if e.nodes[0] == node else e.nodes[0]]) / e.value
                  for e in elements if e.kind == "R" and node in e.nodes)
    r_dc = math.inf if current <= 0 else 1.0 / current
    rs = 1e-3 * min(e.value for e in elements if e.kind == "R")
    ac = tuple(replace(e, nodes=tuple("0" if n == REF else n for n in e.nodes)) for e in elements)
    probe = Netlist(ac + (Element("RSENSE", "R", ("probe", node), rs),), ground="0", input="probe", output=node)
    h = transfer_function(probe).item(0).at_f(np.asarray(f_hz, dtype=float))[0]
    z = np.abs(rs * h / (1.0 - h))
    return float(min(r_dc, np.min(z)))


def bias_circuit(netlist: Netlist, settings: BiasSettings) -> BiasedCircuit:
    """Build ``netlist`` for one supply and solve its DC operating point and response.

    Parameters
    ----------
    netlist : Netlist
        The split-supply circuit (input ``in``, output ``out``, ground ``0``).
    settings : BiasSettings
        Supply, reference kind, load, drive.

    Returns
    -------
    BiasedCircuit
    """
    split = ideal_figures(netlist).item(0)
    if not (math.isfinite(split.f_low_hz) and split.f_low_hz > 0):
        raise InputError("parts", "the circuit has no measurable band (its lower -3 dB frequency is undefined)")
    f_corner = split.f_low_hz / settings.corner_ratio
    notes: list[str] = []
    core = _regrounded(netlist)
    vs, half = settings.supply_v, settings.supply_v / 2.0
    # nodes with no DC path get a bias resistor to the reference (corner a decade below the band)
    added: list[Element] = []
    for k, node in enumerate(n for n in floating_nodes(core, (REF, netlist.input)) if n != netlist.input):
        c = _node_capacitance(core, node)
        r = _up(settings.corner_ratio / (2 * math.pi * split.f_low_hz * c)) if c > 0 else 1e6
        added.append(Element(f"RB{k + 1}", "R", (node, REF), r))
        notes.append(f"node {node!r} has no DC path: bias resistor RB{k + 1} = {r:.3g} ohm to the reference added")
    core = core + tuple(added)
    # input coupling: the DC input resistance from the coupling capacitor's far side
    r_in = input_resistance(core, netlist.input, np.geomspace(f_corner, split.f_high_hz, 301))
    if not math.isfinite(r_in):
        r_in = settings.divider_ohm
        notes.append("the input has no DC path; the input coupling capacitor is sized against the divider resistance")
    c_in = _up(1.0 / (2 * math.pi * r_in * f_corner))
    c_out = _up(1.0 / (2 * math.pi * settings.rload_ohm * f_corner))
    coupling = (
        Coupling("CIN", c_in, r_in, 1.0 / (2 * math.pi * r_in * c_in), "input"),
        Coupling("COUT", c_out, settings.rload_ohm, 1.0 / (2 * math.pi * settings.rload_ohm * c_out), "output"),
    )
    ends = (
        Element("CIN", "C", (SOURCE, netlist.input), c_in),
        Element("COUT", "C", (netlist.output, LOAD), c_out),
        Element("RLOAD", "R", (LOAD, "0"), settings.rload_ohm),
    )
    w0 = 2 * math.pi * split.f0_hz
    if settings.reference == "divider":
        r = settings.divider_ohm
        r_th = r / 2.0
        # the bypass: corner far below the band, and the reference's impedance at the band's lower
        # edge under 1 % of the smallest resistor returned to it (so the response barely moves)
        r_min = min((e.value for e in core if e.kind == "R" and REF in e.nodes), default=math.inf)
        c_byp = _up(max(settings.bypass_ratio / (2 * math.pi * r_th * split.f_low_hz),
                        1.0 / (2 * math.pi * split.f_low_hz * REF_IMPEDANCE_SHARE * r_min)), "E6")
        ref_parts = (
            Element("RTOP", "R", (SUPPLY, REF), r),
            Element("RBOT", "R", (REF, "0"), r),
            Element("CREF", "C", (REF, "0"), c_byp),
        )
        dc_fixed = {"0": 0.0, SUPPLY: vs, SOURCE: 0.0}
        ac_ref = tuple(replace(e, nodes=tuple("0" if n == SUPPLY else n for n in e.nodes)) for e in ref_parts)
        z_f0 = abs(1.0 / (1.0 / r_th + 1j * w0 * c_byp))
        tau = r_th * c_byp
        bypass_corner = 1.0 / (2 * math.pi * tau)
        settle = tau * math.log(1.0 / SETTLE_FRACTION)
    else:
        r_th, c_byp, z_f0, bypass_corner, settle = 0.0, None, 0.0, None, 0.0
        ref_parts, ac_ref = (), ()
        dc_fixed = {"0": 0.0, REF: half, SOURCE: 0.0}
        notes.append("buffered reference: an ideal source (the buffer's own output impedance is neglected)")
    dc_elements = core + ends + ref_parts
    node_v = dc_operating_point(dc_elements, dc_fixed, bias_current_a=settings.bias_current_a)
    if settings.reference == "buffered":
        ac_core = tuple(replace(e, nodes=tuple("0" if n == REF else n for n in e.nodes)) for e in core + ends)
    else:
        ac_core = core + ends + ac_ref
    ac = Netlist(ac_core, ground="0", input=SOURCE, output=LOAD)
    biased = ideal_figures(ac).item(0)
    f = np.geomspace(coupling[0].corner_hz / 10, split.f_high_hz * 100, 2001)
    out_net = Netlist(ac_core, ground="0", input=SOURCE, output=netlist.output)
    peak_gain = float(np.max(np.abs(transfer_function(out_net).item(0).at_f(f)[0])))
    out_pk = peak_gain * settings.vin_v
    moved = {name: float(getattr(biased, attr)) / float(getattr(split, attr)) - 1.0
             for name, attr in (("f0", "f0_hz"), ("Q", "q"), ("gain", "gain_center"))}
    worst = max(moved, key=lambda k: abs(moved[k]))
    if abs(moved[worst]) > 0.01:
        notes.append(f"the bias network moves {worst} by {100 * moved[worst]:+.2g} %; a larger --corner-ratio "
                     "(coupling corners further below the band) brings it back")
    v_out = node_v[netlist.output]
    margin = min(vs - settings.headroom_v - (v_out + out_pk), (v_out - out_pk) - settings.headroom_v)
    if margin < 0:
        notes.append(f"the output clips: its peak {out_pk:.3g} V about {v_out:.3g} V passes a rail by {-margin:.3g} V")
    for e in core:
        if e.kind == "opamp":
            for pin in e.nodes[:2]:
                if not (settings.headroom_v <= node_v[pin] <= vs - settings.headroom_v):
                    notes.append(f"{e.ref}: input {pin!r} sits at {node_v[pin]:.3g} V, outside the common-mode range")
    return BiasedCircuit(
        settings=settings, netlist=ac, elements=dc_elements, node_dc_v=node_v,
        reference_v=node_v[REF] if REF in node_v else half, reference_impedance_ohm=r_th,
        reference_impedance_f0_ohm=z_f0, bypass_f=c_byp, bypass_corner_hz=bypass_corner, settle_s=settle,
        coupling=coupling, bias_resistors=tuple(added), swing_margin_v=margin, out_peak_v=out_pk,
        figures=biased, figures_split=split, notes=tuple(notes),
    )
