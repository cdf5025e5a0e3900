"""The magnitude envelope of a tolerance spread: percentiles of |H| (dB) over its first trials."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bandsmith.common.errors import InputError
from bandsmith.solver.mna import IDEAL, OpAmpModel
from bandsmith.solver.netlist import Netlist
from bandsmith.spread.spread_settings import SpreadSettings
from bandsmith.spread.evaluator import draws, evaluator_columns, prepare_spread

__all__ = ["Envelope", "magnitude_envelope"]


@dataclass(frozen=True, slots=True)
class Envelope:
    """Percentiles of the magnitude over trials: ``magnitude_db[i]`` is percentile ``percentiles[i]``."""

    f_hz: np.ndarray
    percentiles: tuple[float, ...]
    magnitude_db: np.ndarray
    trials: int


def magnitude_envelope(
    netlist: Netlist,
    settings: SpreadSettings,
    f_hz: np.ndarray,
    *,
    opamp: OpAmpModel = IDEAL,
    trials: int = 2000,
    percentiles: tuple[float, ...] = (5.0, 50.0, 95.0),
) -> Envelope:
    """Percentiles of the magnitude (dB) over the first ``trials`` trials of a spread, at ``f_hz``.

    The trials are the same as :func:`run_spread`'s first ones for these settings.
    """
    prep = prepare_spread(netlist, settings, opamp)
    ev, spread = prep.evaluator, prep.spread
    count = min(int(trials), settings.trials)
    if count < 1:
        raise InputError("trials", "the envelope needs at least one trial")
    chunks, got = [], 0
    for _, d in draws(settings, spread, settings.trials):  # every chunk the count reaches into
        chunks.append(d[: count - got])
        got += chunks[-1].shape[0]
        if got >= count:
            break
    drawn = np.concatenate(chunks)
    h = ev.rational(evaluator_columns(ev, drawn))
    f = np.asarray(f_hz, dtype=float)
    mags = np.empty((count, f.size))
    for start in range(0, count, 500):
        sl = slice(start, start + 500)
        with np.errstate(divide="ignore", invalid="ignore"):
            mags[sl] = 20.0 * np.log10(np.abs(h.take(sl).at_f(f)))
    return Envelope(f_hz=f, percentiles=tuple(float(x) for x in percentiles), magnitude_db=np.nanpercentile(mags, percentiles, axis=0), trials=count)
