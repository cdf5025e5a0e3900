"""What a chain of second-order stages is asked to be, and a chain as a session keeps it.

:class:`ChainSettings` (response family, order, band, gain, circuit, series) and the saved
:class:`Chain` with its :class:`ChainStage` entries; building them is :mod:`bandsmith.chain.cascade`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping

from bandsmith.chain.bandpass import Band, band_from
from bandsmith.design.candidate import Candidate
from bandsmith.circuits import get_topology, topology_ids
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import SERIES_NAMES
from bandsmith.common.limits import check_id
from bandsmith.chain.prototypes import Prototype, check_order, check_response, check_ripple, prototype

__all__ = ["AUTO", "ChainSettings", "ChainStage", "Chain", "circuit_choices", "StageHold", "STAGE_HOLD", "HOLD_SOURCES"]

HALF_POWER_DB = 10.0 * math.log10(0.5)



AUTO = "auto"
_SERIES_CHOICES = SERIES_NAMES + ("exact",)


def _positive(name: str, v) -> float:
    if isinstance(v, bool):
        raise InputError(name, f"must be a finite number above zero, got {v!r}")
    try:
        x = float(v)
    except (TypeError, ValueError):
        raise InputError(name, f"must be a finite number above zero, got {v!r}") from None
    if not (math.isfinite(x) and x > 0):
        raise InputError(name, f"must be a finite number above zero, got {v!r}")
    return x


#: Where each limit of :class:`StageHold` comes from.
HOLD_SOURCES = {
    "f0_share": "common practice, no source (a stage's centre must stay well inside its own bandwidth; "
    "measured here: an order-6 Butterworth with this share moved 0.5 dB in the band, with f0 at 1 % it moved 4.6 dB)",
    "q_tol": "common practice, no source",
    "gain_db": "the design tolerance given (Tolerances.gain_db, 0.5 dB by default); common practice, no source",
    "gross_f0_share": "derived: a stage whose f0 is off by half its bandwidth peaks at the edge of its own band",
    "gross_q_pct": "common practice, no source",
    "gross_gain_db": "common practice, no source",
    "band_dev_marginal_db": "common practice, no source (the chain's long-standing warning level)",
    "band_dev_max_db": "common practice, no source",
}


@dataclass(frozen=True, slots=True)
class StageHold:
    """What a chain holds each stage to, and when a stage or the chain is missed grossly.

    Every limit's source is in :data:`HOLD_SOURCES`.

    Parameters
    ----------
    f0_share : float
        A stage of quality factor Q is held to f0 within ``f0_share/Q`` (a share of its own
        bandwidth f0/Q; 0.05 = 5 % of its bandwidth), or the given f0 tolerance where tighter.
    q_tol : float
        Q within this fraction (0.05 = 5 %), or the given Q tolerance where tighter.
    gain_db : float or None
        The stage's gain within this many dB; None = the gain tolerance given (0.5 dB by default).
    gross_f0_share : float
        Chosen parts that put a stage's f0 off by more than this share of its bandwidth
        (0.5 = half) leave the stage unbuilt: "missing grossly".
    gross_q_pct : float
        The same for Q off by more than this many per cent (25 %).
    gross_gain_db : float
        The same for the stage's gain off by more than this many dB (3 dB).
    band_dev_marginal_db, band_dev_max_db : float
        The built chain (ideal op-amp) against its ideal family response within the pass band:
        above the first the chain is at best ``marginal`` (and warned), above the second
        ``not buildable``.
    """

    f0_share: float = 0.05
    q_tol: float = 0.05
    gain_db: float | None = None
    gross_f0_share: float = 0.5
    gross_q_pct: float = 25.0
    gross_gain_db: float = 3.0
    band_dev_marginal_db: float = 1.0
    band_dev_max_db: float = 3.0


#: The limits every chain uses.
STAGE_HOLD = StageHold()


def circuit_choices() -> tuple[str, ...]:
    """``auto`` and every circuit id."""
    return (AUTO,) + topology_ids()


@dataclass(frozen=True, slots=True)
class ChainSettings:
    """What a chain is asked to be.

    Parameters
    ----------
    response : str
        ``butterworth``, ``chebyshev`` or ``bessel``.
    order : int
        Prototype order N (1 … 8); the band-pass has N stages.
    f_low_hz, f_high_hz : float
        Band edges (Hz): −3 dB points, or the ripple-band edges for Chebyshev.
    gain : float
        Magnitude at the geometric centre (V/V).
    ripple_db : float, optional
        Chebyshev ripple (dB), 0.5 by default; None for the others.
    circuit : str
        ``auto`` or a circuit id used for every stage.
    series : str
        Series the parts come from (``E6`` … ``E192``) or ``exact``.
    """

    response: str
    order: int
    f_low_hz: float
    f_high_hz: float
    gain: float = 1.0
    ripple_db: float | None = None
    circuit: str = AUTO
    series: str = "E24"

    def __post_init__(self):
        response = check_response(self.response)
        object.__setattr__(self, "response", response)
        object.__setattr__(self, "order", check_order(self.order))
        object.__setattr__(self, "ripple_db", check_ripple(response, self.ripple_db))
        band = band_from(f_low_hz=self.f_low_hz, f_high_hz=self.f_high_hz)
        object.__setattr__(self, "f_low_hz", band.f_low_hz)
        object.__setattr__(self, "f_high_hz", band.f_high_hz)
        object.__setattr__(self, "gain", _positive("gain", self.gain))
        if self.circuit not in circuit_choices():
            raise InputError("circuit", f"{self.circuit!r} is not a circuit; choose one of {', '.join(circuit_choices())}")
        if self.series not in _SERIES_CHOICES:
            raise InputError("series", f"{self.series!r} is not a series; choose one of {', '.join(_SERIES_CHOICES)}")

    @classmethod
    def from_request(cls, response: str, order, *, f0_hz=None, bw_hz=None, f_low_hz=None, f_high_hz=None, ripple_db=None, gain=1.0, circuit=AUTO, series="E24") -> "ChainSettings":
        """Settings from a centre and bandwidth or from the edges (see :func:`bandsmith.chain.bandpass.band_from`)."""
        response = check_response(response)
        order = check_order(order)
        band = band_from(f0_hz=f0_hz, bw_hz=bw_hz, f_low_hz=f_low_hz, f_high_hz=f_high_hz)
        return cls(response, order, band.f_low_hz, band.f_high_hz, gain=gain, ripple_db=ripple_db, circuit=circuit, series=series)

    @property
    def band(self) -> Band:
        return Band(self.f_low_hz, self.f_high_hz)

    def prototype(self) -> Prototype:
        return prototype(self.response, self.order, ripple_db=self.ripple_db)

    @property
    def edge_level_db(self) -> float:
        """Level of the band edges below the peak (dB): −3.01, or −R for Chebyshev."""
        return -self.ripple_db if self.response == "chebyshev" else HALF_POWER_DB

    def to_json(self) -> dict:
        band = self.band
        return {
            "response": self.response,
            "order": self.order,
            "f0_hz": band.f0_hz,
            "bw_hz": band.bw_hz,
            "q": band.q_bp,
            "f_low_hz": self.f_low_hz,
            "f_high_hz": self.f_high_hz,
            "gain": self.gain,
            "ripple_db": self.ripple_db,
            "circuit": self.circuit,
            "series": self.series,
        }

    @classmethod
    def from_json(cls, obj: Mapping[str, Any]) -> "ChainSettings":
        """Read :meth:`to_json`'s object (``f0_hz``, ``bw_hz`` and ``q`` are derived and ignored)."""
        if not isinstance(obj, Mapping):
            raise InputError("settings", f"must be an object, got {type(obj).__name__}")
        for key in ("response", "order", "f_low_hz", "f_high_hz"):
            if key not in obj:
                raise InputError(key, "missing from the chain settings")
        return cls(
            response=obj["response"],
            order=obj["order"],
            f_low_hz=_positive("f_low_hz", obj["f_low_hz"]),
            f_high_hz=_positive("f_high_hz", obj["f_high_hz"]),
            gain=obj.get("gain", 1.0),
            ripple_db=obj.get("ripple_db"),
            circuit=obj.get("circuit", AUTO),
            series=obj.get("series", "E24"),
        )


@dataclass(frozen=True, slots=True)
class ChainStage:
    """One stage of a saved chain: its section target and the circuit with its parts.

    ``candidate_id`` names the session candidate holding the same parts (or None).
    """

    index: int
    f0_hz: float
    q: float
    gain: float
    topology_id: str
    values: Mapping[str, float]
    candidate_id: str | None = None

    def __post_init__(self):
        if isinstance(self.index, bool) or not isinstance(self.index, int) or self.index < 1:
            raise InputError("index", f"a stage index must be a whole number from 1, got {self.index!r}")
        for name in ("f0_hz", "q", "gain"):
            object.__setattr__(self, name, _positive(name, getattr(self, name)))
        object.__setattr__(self, "values", get_topology(self.topology_id).values_from(dict(self.values)))

    def to_json(self) -> dict:
        return {
            "index": self.index,
            "f0_hz": self.f0_hz,
            "q": self.q,
            "gain": self.gain,
            "circuit": self.topology_id,
            "values": {k: float(v) for k, v in self.values.items()},
            "candidate": self.candidate_id,
        }

    @classmethod
    def from_json(cls, obj: Mapping[str, Any]) -> "ChainStage":
        if not isinstance(obj, Mapping):
            raise InputError("stages", f"a stage must be an object, got {type(obj).__name__}")
        for key in ("index", "f0_hz", "q", "gain", "circuit", "values"):
            if key not in obj:
                raise InputError(key, "missing from a chain stage")
        if not isinstance(obj["values"], Mapping):
            raise InputError("values", "must be an object of part values")
        return cls(obj["index"], obj["f0_hz"], obj["q"], obj["gain"], obj["circuit"], dict(obj["values"]), obj.get("candidate"))


@dataclass(frozen=True, slots=True)
class Chain:
    """A built chain as a session keeps it (under ``extras["chains"]``): settings and stages."""

    id: str
    settings: ChainSettings
    stages: tuple[ChainStage, ...]
    notes: str = ""

    def __post_init__(self):
        check_id("id", self.id, "a chain id")
        stages = tuple(self.stages)
        if [s.index for s in stages] != list(range(1, len(stages) + 1)):
            raise InputError("stages", "stage indices must run 1, 2, 3, … in order")
        if len(stages) != self.settings.order:
            raise InputError("stages", f"an order-{self.settings.order} chain has {self.settings.order} stages, not {len(stages)}")
        object.__setattr__(self, "stages", stages)

    def to_json(self) -> dict:
        return {"id": self.id, "settings": self.settings.to_json(), "stages": [s.to_json() for s in self.stages], "notes": self.notes}

    @classmethod
    def from_json(cls, obj: Mapping[str, Any]) -> "Chain":
        """Read :meth:`to_json`'s object; InputError naming the field for anything wrong."""
        if not isinstance(obj, Mapping):
            raise InputError("chains", f"a chain must be an object, got {type(obj).__name__}")
        if "settings" not in obj or "stages" not in obj:
            raise InputError("chains", "a chain needs its settings and stages")
        stages = obj["stages"]
        if not isinstance(stages, list):
            raise InputError("stages", "must be a list")
        notes = obj.get("notes", "")
        if not isinstance(notes, str):
            raise InputError("notes", "must be text")
        return cls(obj.get("id", "chain-1"), ChainSettings.from_json(obj["settings"]), tuple(ChainStage.from_json(s) for s in stages), notes)

    def candidates(self) -> tuple[Candidate, ...]:
        """The stages as validated candidates (signal order)."""
        return tuple(Candidate(s.topology_id, s.values) for s in self.stages)
