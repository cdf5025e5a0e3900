"""The verdict of :func:`bandsmith.bench.diagnose.diagnose` and the diagnosis in plain words."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from bandsmith.bench.diagnose_fit import EDGE, Fits, ResidualModel, chi2_point, rms

if TYPE_CHECKING:
    from bandsmith.bench.diagnose import PartFit

__all__ = ["Words", "verdict_words"]


_MISFIT_DB = 0.5  # common practice, no source: beyond this the model itself is in doubt


def pct_words(pct: float) -> str:
    a = abs(pct)
    num = f"{a:.0f}" if a >= 9.5 else f"{a:.1f}".rstrip("0").rstrip(".")
    if num == "0":
        num = f"{a:.2f}".rstrip("0").rstrip(".")
    return f"about {num} % {'high' if pct > 0 else 'low'}"


def null_words(group: tuple[str, ...], dirs: list[np.ndarray], parts: tuple[str, ...]) -> str:
    idx = [parts.index(p) for p in group]
    names = " and ".join([", ".join(group[:-1]), group[-1]]) if len(group) > 1 else group[0]
    if len(dirs) == 1:
        v = dirs[0][idx]
        big = np.abs(v) > 1e-3 * np.max(np.abs(v))
        if np.all(big) and np.allclose(np.abs(v), np.abs(v[0]), rtol=0.05):
            up = [p for p, c in zip(group, v) if c > 0]
            down = [p for p, c in zip(group, v) if c < 0]
            if len(up) > len(down):
                up, down = down, up

            def join(xs):
                return " and ".join([", ".join(xs[:-1]), xs[-1]]) if len(xs) > 1 else xs[0]

            return (
                f"{names} are not separately identifiable: raising {join(up)} and lowering {join(down)} by the same "
                f"factor leaves the response unchanged, so the fit over all of them picks the smallest such change"
            )
    return (
        f"{names} are not separately identifiable: the response fixes fewer combinations of them than there are "
        f"parts, so the fit over all of them picks the smallest change that fits"
    )


@dataclass(frozen=True, slots=True)
class Words:
    """The all-parts fit as the diagnosis reports it, the verdict and its sentences."""

    fitted: dict[str, float]
    change: dict[str, float]
    at_bound: tuple[str, ...]
    res_db: float
    res_ph: float
    nom_db: float
    nom_ph: float
    verdict: str
    explanation: dict[str, float]
    sentences: list[str]


def verdict_words(model: ResidualModel, fits: Fits, alone: list[PartFit], best_pair) -> Words:
    """The verdict (module notes, "explains it") and the diagnosis in plain words."""
    parts, xf, lo, hi = model.parts, fits.xf, fits.lo, fits.hi
    n = len(parts)
    values = dict(zip(parts, model.nominal))
    mag_f, ph_f = model.split(model.h(xf[None, :]))
    mag_0, ph_0 = model.split(model.h(np.zeros((1, n))))
    res_db, res_ph = rms(mag_f), (float(np.degrees(rms(ph_f))) if ph_f is not None else math.nan)
    nom_db, nom_ph = rms(mag_0), (float(np.degrees(rms(ph_0))) if ph_0 is not None else math.nan)
    at_bound = tuple(parts[j] for j in range(n) if xf[j] <= lo[j] + EDGE or xf[j] >= hi[j] - EDGE)
    fitted = {p: float(values[p] * math.exp(xf[j])) for j, p in enumerate(parts)}
    change = {p: float(100.0 * math.expm1(xf[j])) for j, p in enumerate(parts)}

    rank, explains = fits.rank, fits.explains
    S1_sorted = fits.S1[np.argsort(fits.S1, kind="stable")]
    scatter = f"{res_db:.2g} dB rms" + (f" and {res_ph:.2g}° rms" if math.isfinite(res_ph) else "")
    sentences: list[str] = []
    if fits.S0 - fits.Sf <= fits.sigma2 * chi2_point(max(rank, 1)):
        verdict = "matches"
        explanation = {}
        sentences.append(
            f"The measurement matches the design within its scatter ({nom_db:.2g} dB rms from the design); "
            f"no part needs to be blamed."
        )
    elif n and explains(S1_sorted[0], rank - 1):
        verdict = "one-part"
        a = alone[0]
        explanation = {a.part: a.change_pct}
        sentences.append(f"{a.part} {pct_words(a.change_pct)} explains it: alone it leaves {a.residual_db_rms:.2g} dB rms, as little as every part free.")
        rivals = [b for b, S in zip(alone[1:], S1_sorted[1:]) if explains(S, rank - 1)]
        if rivals:
            alt = "; ".join(f"{b.part} {pct_words(b.change_pct)}" for b in rivals[:3])
            sentences.append(f"Equally well: {alt} — the measurement cannot tell these apart; check those parts first.")
    elif best_pair is not None and explains(float(fits.S2.min()), rank - 2):
        verdict = "two-parts"
        a, b = best_pair
        explanation = {a.part: a.change_pct, b.part: b.change_pct}
        lead = alone[0]
        sentences.append(
            f"{a.part} {pct_words(a.change_pct)} together with {b.part} {pct_words(b.change_pct)} explain it "
            f"({a.residual_db_rms:.2g} dB rms); no single part does: the best alone, {lead.part} "
            f"{pct_words(lead.change_pct)}, leaves {lead.residual_db_rms:.2g} dB rms."
        )
        S2 = fits.S2
        rivals = [tuple(parts[j] for j in fits.pairs[k]) for k in np.argsort(S2)[1:4] if explains(float(S2[k]), rank - 2)]
        if rivals:
            sentences.append("Other pairs fit as well: " + "; ".join(" with ".join(p) for p in rivals) + ".")
    elif n and alone[0].explained >= 0.8:
        verdict = "mostly-one-part"
        a = alone[0]
        explanation = {a.part: a.change_pct}
        sentences.append(f"{a.part} {pct_words(a.change_pct)} explains most of it ({100 * a.explained:.0f} % of the deviation); the rest needs more parts.")
    else:
        verdict = "several"
        explanation = dict(change)
        moved = sorted(parts, key=lambda p: -abs(change[p]))
        txt = ", ".join(f"{p} {change[p]:+.1f} %" for p in moved[:4])
        sentences.append(f"No one or two parts explain it; with every part free the fit moves {txt} ({scatter}).")
    sentences += caveats(verdict, fits, parts, res_db, at_bound)
    return Words(fitted, change, at_bound, res_db, res_ph, nom_db, nom_ph, verdict, explanation, sentences)


def caveats(verdict: str, fits: Fits, parts: tuple[str, ...], res_db: float, at_bound: tuple[str, ...]) -> list[str]:
    """What qualifies the verdict: parts the data cannot tell apart, a poor model, parts at the edge."""
    out = []
    if verdict != "matches" and fits.groups:
        for g in fits.groups:
            out.append(null_words(g, fits.dirs, parts) + ".")
    if res_db > _MISFIT_DB:
        out.append(
            f"Even with every part free the model leaves {res_db:.2g} dB rms: the board may differ from the design in "
            f"more than part values (the op-amp, a wrong or missing part, wiring, or the measurement set-up)."
        )
    if verdict != "matches" and at_bound:
        out.append(
            f"{', '.join(at_bound)} reached the edge of {'its' if len(at_bound) == 1 else 'their'} allowed range; widen the range if "
            f"{'it' if len(at_bound) == 1 else 'they'} may be further off."
        )
    return out
