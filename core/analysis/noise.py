"""Output noise of a circuit: resistor thermal noise and the op-amp's voltage and current noise.

Sources
-------
- every resistor: a thermal (Johnson–Nyquist) noise current of density ``√(4kT/R)`` A/√Hz in
  parallel with it (equivalently a voltage ``√(4kTR)`` V/√Hz in series);
- an inductor's winding resistance ``RL``: a noise voltage ``√(4kT·RL)`` in series with the winding;
- each op-amp: a voltage noise ``en`` (V/√Hz) in series with its non-inverting input, and a
  current noise ``in`` (A/√Hz) from each input to ground (``in+``, ``in-``), uncorrelated.

``k`` is the Boltzmann constant, exactly 1.380649e-23 J/K (SI Brochure, 9th ed., 2019; carried
by :data:`scipy.constants.k`). The densities are white (no 1/f corner).

Method
------
One adjoint solve per frequency gives every source's transfer at once: with
``(G + sC)^T y = e_out``, the output per unit excitation of MNA row ``k`` is ``y[k]``. A current
source from node ``b`` into node ``a`` is the excitation ``e_a − e_b``, so its transfer is
``y[a] − y[b]`` (V/A); a voltage source in series with an inductor is an excitation of the
inductor's branch row, transfer ``y[row]``; ``en`` in series with the + input excites the op-amp's
row (``V+ − V− − V_out/A = −en``), transfer ``−y[row]``. Signs do not matter: the uncorrelated
sources add as powers, ``S_out(f) = Σ |T_i(f)|²·S_i``.

The integrated noise is ``√∫ S_out df`` over the band (default f0/10 to 10·f0), by the trapezoid
rule on a logarithmic grid fine enough for the band's Q (at least 100·Q points per decade), and
the signal-to-noise ratio is that of a sine of peak ``vin`` at f0: ``|gain|·vin/√2`` rms over the
integrated noise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from bandsmith.common.jsonutil import finite_or_none
from bandsmith.analysis.analyzer import transfer_function
from bandsmith.common.errors import InputError
from bandsmith.common.limits import NOISE_DENSITY_MAX, VIN_RANGE_V, check_range
from bandsmith.analysis.figures import measure
from bandsmith.solver.mna import IDEAL, OpAmpModel, build_system
from bandsmith.solver.netlist import Netlist
from bandsmith.solver.rational import nominal_w_ref

__all__ = [
    "BOLTZMANN_J_PER_K",
    "NoiseSettings",
    "NoiseSource",
    "NoiseResult",
    "johnson_density",
    "noise_sources",
    "noise_transfers",
    "output_noise",
]

#: Boltzmann constant in J/K, exact in the SI since 2019.
BOLTZMANN_J_PER_K: float = 1.380649e-23  # J/K, exact since the 2019 SI (scipy.constants.k, checked in tests)

_FREQ_CHUNK = 8192
_MAX_POINTS = 400_000


def johnson_density(r_ohm: float | np.ndarray, temperature_k: float) -> float | np.ndarray:
    """Thermal noise voltage density ``√(4kTR)`` of a resistance, in V/√Hz.

    Parameters
    ----------
    r_ohm : float or ndarray
        Resistance in ohm (zero or more).
    temperature_k : float
        Absolute temperature in kelvin.
    """
    return np.sqrt(4.0 * BOLTZMANN_J_PER_K * temperature_k * np.asarray(r_ohm, dtype=float))


def _number(value: Any, name: str, *, positive: bool) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)):
        raise InputError(name, f"{value!r} is not a number")
    v = float(value)
    if not math.isfinite(v) or v < 0 or (positive and v == 0):
        raise InputError(name, f"must be a finite number {'above zero' if positive else 'of zero or more'}, got {v!r}")
    return v


@dataclass(frozen=True, slots=True)
class NoiseSettings:
    """What a noise analysis assumes (stored by the window under ``extras["noise"]``).

    Parameters
    ----------
    en_v_per_rthz : float
        Op-amp input voltage noise density (V/√Hz), zero or more. The default, 10 nV/√Hz, is a
        placeholder for a general-purpose part (from memory): give the datasheet's figure.
    in_a_per_rthz : float
        Op-amp input current noise density (A/√Hz) at each input, zero or more. Default 1 pA/√Hz,
        a placeholder as above. ``en = in = 0`` is a noiseless op-amp.
    temperature_k : float
        Temperature of the resistors (K), above zero.
    band_hz : tuple of float, optional
        ``(f1, f2)`` of the integration, ``0 < f1 < f2``; None is f0/10 to 10·f0.
    """

    en_v_per_rthz: float = 10e-9
    in_a_per_rthz: float = 1e-12
    temperature_k: float = 300.0
    band_hz: tuple[float, float] | None = None

    def __post_init__(self):
        object.__setattr__(self, "en_v_per_rthz", _number(self.en_v_per_rthz, "en", positive=False))
        object.__setattr__(self, "in_a_per_rthz", _number(self.in_a_per_rthz, "in", positive=False))
        for name, field in (("en_v_per_rthz", "en"), ("in_a_per_rthz", "in")):
            if getattr(self, name) > NOISE_DENSITY_MAX:
                raise InputError(field, f"{getattr(self, name):.3g} is outside the range the analysis can resolve, 0 to {NOISE_DENSITY_MAX:g} per √Hz")
        object.__setattr__(self, "temperature_k", _number(self.temperature_k, "temp", positive=True))
        if self.band_hz is not None:
            if isinstance(self.band_hz, (str, bytes)) or len(self.band_hz) != 2:
                raise InputError("band", "give two frequencies, F1 and F2")
            f1 = _number(self.band_hz[0], "band", positive=True)
            f2 = _number(self.band_hz[1], "band", positive=True)
            if not f2 > f1:
                raise InputError("band", f"the upper frequency ({f2:g} Hz) must be above the lower ({f1:g} Hz)")
            object.__setattr__(self, "band_hz", (f1, f2))

    def to_json(self) -> dict:
        """A plain JSON object (the session's ``extras["noise"]``)."""
        return {
            "en_v_per_rthz": float(self.en_v_per_rthz),
            "in_a_per_rthz": float(self.in_a_per_rthz),
            "temperature_k": float(self.temperature_k),
            "band_hz": None if self.band_hz is None else [float(f) for f in self.band_hz],
        }

    @classmethod
    def from_json(cls, obj: Any) -> "NoiseSettings":
        """Read :meth:`to_json`'s object back; missing keys take their defaults.

        Raises
        ------
        InputError
            For an unknown key or a value of the wrong type or range.
        """
        if not isinstance(obj, Mapping):
            raise InputError("noise", "the noise settings must be a JSON object")
        known = {"en_v_per_rthz", "in_a_per_rthz", "temperature_k", "band_hz"}
        extra = set(obj) - known
        if extra:
            raise InputError("noise", f"unknown setting {sorted(extra)[0]!r}")
        kw = {k: obj[k] for k in known if k in obj}
        if kw.get("band_hz") is not None:
            band = kw["band_hz"]
            if not isinstance(band, (list, tuple)):
                raise InputError("band", "must be a list of two frequencies")
            kw["band_hz"] = tuple(band)
        return cls(**kw)


@dataclass(frozen=True, slots=True)
class NoiseSource:
    """One uncorrelated noise source.

    Attributes
    ----------
    name : str
        A resistor's reference (``R1``, ``RL``), or ``en``, ``in+``, ``in-`` (prefixed ``U2.``
        when a circuit has more than one op-amp).
    kind : str
        ``"resistor"`` (a current in parallel), ``"winding"`` (a voltage in series with an
        inductor), ``"en"`` (a voltage at the + input) or ``"in"`` (a current into an input).
    density : float
        In V/√Hz for voltage sources, A/√Hz for current sources.
    """

    name: str
    kind: str
    density: float

    @property
    def unit(self) -> str:
        return "A" if self.kind in ("resistor", "in") else "V"


def noise_sources(netlist: Netlist, settings: NoiseSettings = NoiseSettings()) -> tuple[NoiseSource, ...]:
    """Every noise source of a circuit, resistors in netlist order, then the op-amps'."""
    t = settings.temperature_k
    out = []
    for e in netlist.passives:
        if e.kind == "R":
            out.append(NoiseSource(e.ref, "resistor", float(math.sqrt(4.0 * BOLTZMANN_J_PER_K * t / e.value))))
        elif e.kind == "L" and e.series_resistance > 0:
            out.append(NoiseSource(e.series_ref or e.ref + ".rs", "winding", float(johnson_density(e.series_resistance, t))))
    many = len(netlist.opamps) > 1
    for u in netlist.opamps:
        pre = f"{u.ref}." if many else ""
        out.append(NoiseSource(pre + "en", "en", settings.en_v_per_rthz))
        out.append(NoiseSource(pre + "in+", "in", settings.in_a_per_rthz))
        out.append(NoiseSource(pre + "in-", "in", settings.in_a_per_rthz))
    return tuple(out)


def noise_transfers(netlist: Netlist, f_hz: np.ndarray, *, opamp: OpAmpModel = IDEAL) -> dict[str, np.ndarray]:
    """Transfer from each noise source to the output, complex, shape ``(F,)``.

    V/A for a resistor's noise current and an op-amp input current, V/V for a winding's noise
    voltage and ``en``. Names as :func:`noise_sources` gives them.
    """
    f = np.atleast_1d(np.asarray(f_hz, dtype=float))
    system = build_system(netlist, opamp)
    lay = system.layout
    idx = lay.node_index
    gnd = netlist.ground
    ys = [system.solve_adjoint(2j * math.pi * f[i : i + _FREQ_CHUNK])[0] for i in range(0, f.size, _FREQ_CHUNK)]
    y = np.concatenate(ys, axis=0) if ys else np.zeros((0, lay.size), complex)
    zero = np.zeros(f.size, dtype=complex)

    def node(n):
        return zero if n == gnd else y[:, idx[n]]

    out: dict[str, np.ndarray] = {}
    for e in netlist.passives:
        if e.kind == "R":
            a, b = e.nodes
            out[e.ref] = node(a) - node(b)
        elif e.kind == "L" and e.series_resistance > 0:
            out[e.series_ref or e.ref + ".rs"] = y[:, lay.inductor_row[e.ref]].copy()
    many = len(netlist.opamps) > 1
    for u in netlist.opamps:
        pre = f"{u.ref}." if many else ""
        plus, minus, _ = u.nodes
        out[pre + "en"] = -y[:, lay.opamp_row[u.ref]]
        out[pre + "in+"] = node(plus).copy()
        out[pre + "in-"] = node(minus).copy()
    return out


@dataclass(frozen=True, slots=True)
class NoiseResult:
    """Output noise of a circuit.

    Attributes
    ----------
    settings : NoiseSettings
    opamp : OpAmpModel
    f0_hz, gain_center : float
        The circuit's measured f0 and signed centre gain (same op-amp model).
    vin_v : float
        Peak input amplitude of the signal the SNR refers to.
    band_hz : tuple of float
        Integration band.
    sources : tuple of NoiseSource
    f_hz : ndarray
        The integration grid (Hz), shape ``(F,)``.
    density_v_rthz : ndarray
        Total output noise density on the grid (V/√Hz).
    source_density_v_rthz : mapping
        Output density of each source on the grid (V/√Hz).
    at_f0_v_rthz : mapping
        Output density of each source at f0 (V/√Hz).
    integrated_v_rms : mapping
        Each source's output noise integrated over the band (V rms).
    total_at_f0_v_rthz, total_v_rms : float
        The sums (as powers).
    signal_v_rms : float
        ``|gain|·vin/√2``.
    snr_db : float
        ``20·log10(signal/noise)``; infinite for a noiseless circuit.
    """

    settings: NoiseSettings
    opamp: OpAmpModel
    f0_hz: float
    gain_center: float
    vin_v: float
    band_hz: tuple[float, float]
    sources: tuple[NoiseSource, ...]
    f_hz: np.ndarray
    density_v_rthz: np.ndarray
    source_density_v_rthz: Mapping[str, np.ndarray]
    at_f0_v_rthz: Mapping[str, float]
    integrated_v_rms: Mapping[str, float]
    total_at_f0_v_rthz: float
    total_v_rms: float
    signal_v_rms: float
    snr_db: float

    def to_json(self) -> dict:
        """The README's noise object (``bandsmith noise``), with a few keys more."""

        f = finite_or_none

        return {
            "temperature_k": float(self.settings.temperature_k),
            "band_hz": [float(self.band_hz[0]), float(self.band_hz[1])],
            "density_at_f0_nv_rthz": self.total_at_f0_v_rthz * 1e9,
            "integrated_uv_rms": self.total_v_rms * 1e6,
            "snr_db": f(self.snr_db),
            "contributions": {
                s.name: {
                    "density_at_f0_nv_rthz": self.at_f0_v_rthz[s.name] * 1e9,
                    "integrated_uv_rms": self.integrated_v_rms[s.name] * 1e6,
                }
                for s in self.sources
            },
            "f0_hz": float(self.f0_hz),
            "gain_center": float(self.gain_center),
            "vin_v": float(self.vin_v),
            "signal_uv_rms": self.signal_v_rms * 1e6,
            "input_referred_at_f0_nv_rthz": f(self.total_at_f0_v_rthz / abs(self.gain_center) * 1e9) if self.gain_center else None,
            "en_v_per_rthz": float(self.settings.en_v_per_rthz),
            "in_a_per_rthz": float(self.settings.in_a_per_rthz),
            "opamp": self.opamp.to_json(),
        }


def _grid(band: tuple[float, float], q: float) -> np.ndarray:
    decades = math.log10(band[1] / band[0])
    per_decade = max(500.0, 100.0 * (q if math.isfinite(q) else 1.0))
    n = int(min(_MAX_POINTS, max(2001, math.ceil(decades * per_decade) + 1)))
    return np.geomspace(band[0], band[1], n)


def output_noise(
    netlist: Netlist,
    settings: NoiseSettings = NoiseSettings(),
    *,
    opamp: OpAmpModel = IDEAL,
    vin_v: float = 1.0,
) -> NoiseResult:
    """Output noise density, integrated noise, each source's share and the SNR of a circuit.

    Parameters
    ----------
    netlist : Netlist
        The circuit.
    settings : NoiseSettings
        Op-amp noise densities, temperature and integration band.
    opamp : OpAmpModel
        Ideal (the default) or single-pole; it shapes every transfer.
    vin_v : float
        Peak amplitude (V) of the input sine at f0 the SNR refers to.

    Raises
    ------
    InputError
        For a non-positive ``vin_v``, or a circuit without a band-pass peak when no band is given.
    """
    if not (isinstance(vin_v, (int, float)) and math.isfinite(vin_v) and vin_v > 0):
        raise InputError("vin", f"must be a finite number above zero, got {vin_v!r}")
    check_range("vin", float(vin_v), *VIN_RANGE_V, "V")
    w_ref = nominal_w_ref(netlist)
    fig = measure(transfer_function(netlist, opamp, w_ref=w_ref)).item()
    if not (math.isfinite(fig.f0_hz) and math.isfinite(fig.gain_center)):
        raise InputError("circuit", "the circuit has no band-pass peak, so there is no f0 to measure the noise at")
    band = settings.band_hz if settings.band_hz is not None else (fig.f0_hz / 10.0, fig.f0_hz * 10.0)
    f = _grid(band, fig.q)
    sources = noise_sources(netlist, settings)
    grid_t = noise_transfers(netlist, np.append(f, fig.f0_hz), opamp=opamp)
    dens, at_f0, integ = {}, {}, {}
    total_p = np.zeros(f.size)
    total_f0 = 0.0
    for s in sources:
        p = np.abs(grid_t[s.name]) ** 2 * s.density**2  # V²/Hz
        dens[s.name] = np.sqrt(p[:-1])
        at_f0[s.name] = float(math.sqrt(p[-1]))
        integ[s.name] = float(math.sqrt(np.trapezoid(p[:-1], f)))
        total_p += p[:-1]
        total_f0 += p[-1]
    total_rms = float(math.sqrt(np.trapezoid(total_p, f)))
    signal = abs(fig.gain_center) * vin_v / math.sqrt(2.0)
    snr = 20.0 * math.log10(signal / total_rms) if total_rms > 0 else math.inf
    return NoiseResult(
        settings=settings,
        opamp=opamp,
        f0_hz=float(fig.f0_hz),
        gain_center=float(fig.gain_center),
        vin_v=float(vin_v),
        band_hz=(float(band[0]), float(band[1])),
        sources=sources,
        f_hz=f,
        density_v_rthz=np.sqrt(total_p),
        source_density_v_rthz=MappingProxyType(dens),
        at_f0_v_rthz=MappingProxyType(at_f0),
        integrated_v_rms=MappingProxyType(integ),
        total_at_f0_v_rthz=float(math.sqrt(total_f0)),
        total_v_rms=total_rms,
        signal_v_rms=float(signal),
        snr_db=float(snr),
    )
