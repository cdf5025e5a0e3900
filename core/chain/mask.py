"""A target as a mask: pass-band edges with the loss allowed there, and rejection at named frequencies.

An engineer's specification reads "pass 950–1 050 Hz within 1 dB, reject 1 200 Hz by 30 dB".
This module turns it into the least prototype order of each response family that meets it, and
checks the mask on a built chain's response.

Definitions
-----------
- A rejection point ``(f, A)`` asks the response at ``f`` to lie at least ``A`` dB below the gain
  at the geometric centre ``√(f_low·f_high)`` of the pass band (the chain's ``gain`` is set there).
- The pass band's loss is measured against the largest gain within the pass band. Butterworth and
  Bessel chains have their −3.01 dB points at the band edges unless a smaller ``pass_loss_db`` is
  given (Butterworth only): the −3 dB band is then widened so that the edges lie exactly ``L`` dB
  down, ``BW₃ = BW_p / Ω_p`` with ``Ω_p = (10^(L/10) − 1)^(1/(2N))`` (the Butterworth magnitude
  ``1/(1 + Ω^(2N))``, any filter handbook, e.g. Williams & Taylor, *Electronic Filter Design
  Handbook*, 4th ed., ch. 2). For Chebyshev the loss allowed is the ripple.
- The least order is found on scipy.signal's ideal band-pass of the family (the reference the
  chain is built to, :func:`bandsmith.chain.chain_measure.reference_zpk`), trying N = 1 … 8: for
  Butterworth it is the order ``scipy.signal.buttord`` gives, for Chebyshev the one
  ``scipy.signal.cheb1ord`` gives when the attenuation is counted from the peak (an even-order
  Chebyshev has its centre at a ripple trough, ``R`` dB below the peak).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Sequence

import numpy as np

from bandsmith.chain.bandpass import band_from
from bandsmith.chain.chain_settings import ChainSettings
from bandsmith.chain.prototypes import MAX_ORDER, MIN_ORDER, RESPONSES
from bandsmith.common.errors import InputError
from bandsmith.common.values import parse_value

__all__ = [
    "MaskPoint",
    "Mask",
    "parse_reject",
    "mask_of",
    "settings_for_order",
    "ideal_attenuation_db",
    "least_order",
    "orders_by_family",
    "MaskCheck",
    "check_mask",
]

# Margins this small (dB) count as met: the rounding of a mask drawn exactly on the response.
MET_SLACK_DB = 1e-9
# The pass-band edges lie on the ideal response's allowed loss by construction (a Chebyshev's
# ripple-band edge, a Butterworth's L dB point), so a built chain can only come near them: they
# count as met within this (common practice, no source).
PASS_EDGE_SLACK_DB = 0.05
MAX_REJECT_DB = 300.0


@dataclass(frozen=True, slots=True)
class MaskPoint:
    """Attenuation of at least ``required_db`` (dB, > 0) at ``f_hz`` (Hz) below the centre gain."""

    f_hz: float
    required_db: float

    def __post_init__(self):
        if not (math.isfinite(self.f_hz) and self.f_hz > 0):
            raise InputError("reject", f"the frequency must be above zero, got {self.f_hz!r}")
        if not (math.isfinite(self.required_db) and 0 < self.required_db <= MAX_REJECT_DB):
            raise InputError("reject", f"the attenuation must be above 0 and at most {MAX_REJECT_DB:g} dB, got {self.required_db!r}")


@dataclass(frozen=True, slots=True)
class Mask:
    """Rejection points, and the loss allowed at the pass-band edges (None: the family's own edge)."""

    points: tuple[MaskPoint, ...]
    pass_loss_db: float | None = None

    def __post_init__(self):
        object.__setattr__(self, "points", tuple(sorted(self.points, key=lambda p: p.f_hz)))
        if self.pass_loss_db is not None and not (math.isfinite(self.pass_loss_db) and 0 < self.pass_loss_db <= 3.0103):
            raise InputError("pass-loss-db", f"must be above 0 and at most 3.01 dB, got {self.pass_loss_db!r}")


def parse_reject(text: str) -> MaskPoint:
    """``"F=DB"`` (F in any value notation, e.g. ``1k2``, ``50Hz``; DB in dB) as a mask point."""
    if not isinstance(text, str) or text.count("=") != 1:
        raise InputError("reject", f"{text!r} is not F=DB; write e.g. 1k2=30 (30 dB down at 1.2 kHz)")
    f_text, db_text = (t.strip() for t in text.split("="))
    f = parse_value(f_text, field="reject", unit="Hz")
    db = parse_value(db_text.removesuffix("dB").strip(), field="reject")
    return MaskPoint(f, db)


def mask_of(reject: Sequence[str | MaskPoint | tuple] | None, pass_loss_db=None) -> Mask | None:
    """A mask from typed rejection points (``"F=DB"``, ``(f, dB)`` or :class:`MaskPoint`); None for none."""
    if not reject:
        if pass_loss_db is not None:
            raise InputError("pass-loss-db", "needs at least one --reject point to make a mask")
        return None
    pts = []
    for r in reject:
        if isinstance(r, MaskPoint):
            pts.append(r)
        elif isinstance(r, str):
            pts.append(parse_reject(r))
        else:
            f, db = r
            pts.append(MaskPoint(float(f), float(db)))
    loss = None if pass_loss_db is None else parse_value(pass_loss_db, field="pass-loss-db")
    return Mask(tuple(pts), loss)


def settings_for_order(settings: ChainSettings, order: int, mask: Mask | None) -> ChainSettings:
    """``settings`` at another order, the −3 dB band widened for a Butterworth pass loss (module notes).

    ``settings``' band is the pass band the mask names.
    """
    s = replace(settings, order=order)
    if mask is None or mask.pass_loss_db is None:
        return s
    if settings.response == "chebyshev":
        return replace(s, ripple_db=mask.pass_loss_db)
    if settings.response != "butterworth":
        raise InputError("pass-loss-db", "a pass-band loss other than 3.01 dB is for butterworth (chebyshev: its ripple)")
    omega_p = (10 ** (mask.pass_loss_db / 10) - 1) ** (1 / (2 * order))
    band = band_from(f0_hz=settings.band.f0_hz, bw_hz=settings.band.bw_hz / omega_p)
    return replace(s, f_low_hz=band.f_low_hz, f_high_hz=band.f_high_hz)


def _att_db(h_centre: complex, h: np.ndarray) -> np.ndarray:
    return 20.0 * np.log10(abs(h_centre) / np.maximum(np.abs(h), 1e-300))


def ideal_attenuation_db(settings: ChainSettings, f_hz) -> np.ndarray:
    """Attenuation (dB) below the centre gain of the family's ideal band-pass at ``f_hz`` (Hz)."""
    import scipy.signal

    from bandsmith.chain.chain_measure import reference_zpk

    z, p, k = reference_zpk(settings)
    f = np.atleast_1d(np.asarray(f_hz, dtype=float))
    w = 2 * math.pi * np.append(f, settings.band.f0_hz)
    _, h = scipy.signal.freqs_zpk(z, p, k, worN=w)
    return _att_db(h[-1], h[:-1])


def least_order(settings: ChainSettings, mask: Mask) -> tuple[int | None, dict[int, np.ndarray]]:
    """The least order 1 … 8 whose ideal band-pass meets every rejection point, or None.

    Returns the order and the attenuation (dB) at the mask points for each order tried.
    """
    f = np.array([p.f_hz for p in mask.points])
    need = np.array([p.required_db for p in mask.points])
    tried = {}
    for n in range(MIN_ORDER, MAX_ORDER + 1):
        att = ideal_attenuation_db(settings_for_order(settings, n, mask), f)
        tried[n] = att
        if np.all(att - need >= -MET_SLACK_DB):
            return n, tried
    return None, tried


def orders_by_family(settings: ChainSettings, mask: Mask) -> dict[str, int | None]:
    """The least order of every response family for the same pass band and mask (None: none ≤ 8)."""
    out = {}
    for fam in RESPONSES:
        if mask.pass_loss_db is not None and fam == "bessel":
            continue  # its edges are at 3.01 dB: a smaller loss is not a Bessel mask
        ripple = settings.ripple_db if fam == "chebyshev" and settings.response == "chebyshev" else None
        s = ChainSettings(fam, 1, settings.f_low_hz, settings.f_high_hz, gain=settings.gain, ripple_db=ripple, circuit=settings.circuit, series=settings.series)
        out[fam] = least_order(s, mask)[0]
    return out


@dataclass(frozen=True, slots=True)
class MaskCheck:
    """The mask checked on a built chain.

    Attributes
    ----------
    points : tuple of dict
        ``{f_hz, required_db, achieved_db, margin_db}`` per rejection point (margin = achieved −
        required; ≥ 0 where met).
    pass_band : tuple of dict
        ``{f_hz, allowed_db, loss_db, margin_db}`` at the two pass-band edges, the loss measured
        from the largest gain within the pass band.
    met : bool
        Every rejection margin ≥ 0 and every pass-band edge within ``PASS_EDGE_SLACK_DB``.
    on : str
        ``"op-amp"`` when measured with the finite op-amp, ``"ideal op-amp"`` otherwise.
    """

    points: tuple[dict, ...]
    pass_band: tuple[dict, ...]
    met: bool
    on: str

    def to_json(self) -> dict:
        return {"mask": [dict(p) for p in self.points], "pass_band": [dict(p) for p in self.pass_band], "mask_met": self.met, "mask_on": self.on}


def check_mask(response_fn, pass_low_hz: float, pass_high_hz: float, allowed_loss_db: float, mask: Mask, *, on: str = "ideal op-amp") -> MaskCheck:
    """Margins of a response (``response_fn(f_hz) → complex``) at every mask point and pass-band edge."""
    f0 = math.sqrt(pass_low_hz * pass_high_hz)
    f = np.array([p.f_hz for p in mask.points])
    band = np.geomspace(pass_low_hz, pass_high_hz, 2001)
    h = response_fn(np.concatenate([[f0], f, [pass_low_hz, pass_high_hz], band]))
    hc, hp, he, hb = h[0], h[1 : 1 + f.size], h[1 + f.size : 3 + f.size], h[3 + f.size :]
    att = _att_db(hc, hp)
    pts = tuple(
        {"f_hz": float(p.f_hz), "required_db": float(p.required_db), "achieved_db": float(a), "margin_db": float(a - p.required_db)}
        for p, a in zip(mask.points, att)
    )
    loss = _att_db(np.max(np.abs(hb)), he)
    edges = tuple(
        {"f_hz": float(fe), "allowed_db": float(allowed_loss_db), "loss_db": float(l), "margin_db": float(allowed_loss_db - l)}
        for fe, l in zip((pass_low_hz, pass_high_hz), loss)
    )
    met = all(p["margin_db"] >= -MET_SLACK_DB for p in pts) and all(e["margin_db"] >= -PASS_EDGE_SLACK_DB for e in edges)
    return MaskCheck(pts, edges, met, on)
