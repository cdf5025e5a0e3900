"""A chain designed to a mask: the least order meeting it, built, and the mask checked on the build.

See :mod:`bandsmith.chain.mask` for the mask and the order search; the chain is built by
:func:`bandsmith.chain.cascade.design_cascade` with the chosen parts and op-amp, and every mask point's
margin is measured on the built chain's response (with the finite op-amp when one is given).
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any, Sequence

import numpy as np

from bandsmith.chain.cascade import Cascade, design_cascade
from bandsmith.chain.chain_settings import HALF_POWER_DB, ChainSettings
from bandsmith.chain.mask import MET_SLACK_DB, PASS_EDGE_SLACK_DB, Mask, check_mask, least_order, mask_of, orders_by_family, settings_for_order
from bandsmith.chain.prototypes import MAX_ORDER
from bandsmith.common.errors import InputError
from bandsmith.design.candidate import Conditions

__all__ = ["design_to_mask", "allowed_pass_loss_db"]


def allowed_pass_loss_db(settings: ChainSettings, mask: Mask) -> float:
    """The loss allowed at the pass-band edges (dB): the mask's, the ripple, or 3.01 dB."""
    if mask.pass_loss_db is not None:
        return mask.pass_loss_db
    return settings.ripple_db if settings.response == "chebyshev" else -HALF_POWER_DB


def _no_order(settings: ChainSettings, mask: Mask, tried: dict, fams: dict) -> str:
    att = tried[MAX_ORDER]
    worst = int(np.argmin(att - np.array([p.required_db for p in mask.points])))
    p = mask.points[worst]
    others = [f"{fam} at order {n}" for fam, n in fams.items() if n is not None and fam != settings.response]
    hint = f"; {' or '.join(others)} meets it" if others else "; widen the pass band, move the rejection points away or ask for less"
    return (
        f"no {settings.response} order up to {MAX_ORDER} meets the mask: at order {MAX_ORDER} {p.f_hz:.6g} Hz is "
        f"{att[worst]:.4g} dB down, {p.required_db:.4g} dB required{hint}"
    )


def design_to_mask(
    settings: ChainSettings,
    reject: Sequence[Any] | None,
    pass_loss_db=None,
    *,
    conditions: Conditions = Conditions(),
    auto: bool = True,
    joint: bool = True,
) -> tuple[Cascade, dict]:
    """Design a chain to a mask.

    Parameters
    ----------
    settings : ChainSettings
        Family, pass band (the band edges are the mask's pass-band edges), gain, circuit, series;
        its order is used when ``auto`` is False.
    reject : sequence
        Rejection points (``"F=DB"`` text, ``(f_hz, dB)`` or :class:`~bandsmith.chain.mask.MaskPoint`).
    pass_loss_db : float or str, optional
        Loss allowed at the pass-band edges (dB; Butterworth below 3.01, Chebyshev: its ripple).
    conditions : Conditions
        Op-amp, drive, load, source.
    auto : bool
        Choose the least order meeting the mask (True) or check the mask at ``settings.order``.
    joint : bool
        Choose the parts of all stages together, weighted by the mask (:mod:`bandsmith.chain.joint`).

    Returns
    -------
    Cascade, dict
        The built chain and the JSON keys ``mask`` (``{f_hz, required_db, achieved_db,
        margin_db}`` per point, on the built response), ``pass_band``, ``mask_met``, ``mask_on``,
        ``order_auto``, ``orders_by_family`` and ``mask_ideal`` (the margins of the ideal response).

    Raises
    ------
    InputError
        ``order`` when ``auto`` has no rejection point; ``reject`` when no order up to 8 meets it.
    """
    mask = mask_of(reject, pass_loss_db)
    if mask is None:
        raise InputError("order", "auto needs at least one --reject F=DB point (the attenuation the order must reach)")
    fams = orders_by_family(settings, mask)
    if auto:
        n, tried = least_order(settings, mask)
        if n is None:
            raise InputError("reject", _no_order(settings, mask, tried, fams))
    else:
        n = settings.order
    built_settings = settings_for_order(settings, n, mask)
    result, joint_key = _build(built_settings, conditions, mask, joint)
    allowed = allowed_pass_loss_db(built_settings, mask)
    ideal = check_mask(result.reference_response, settings.f_low_hz, settings.f_high_hz, allowed, mask, on="ideal response")
    if result.feasible:
        actual = conditions.opamp is not None
        check = check_mask(lambda f: result.response(f, actual=actual), settings.f_low_hz, settings.f_high_hz, allowed, mask,
                           on="op-amp" if actual else "ideal op-amp")
    else:
        check = ideal
    out = check.to_json()
    if not result.feasible:  # nothing built meets anything: the margins shown are the ideal response's
        out["mask_met"] = False
    out["order_auto"] = bool(auto)
    out["orders_by_family"] = fams
    out["mask_ideal"] = ideal.to_json()["mask"]
    out["mask_pass_band_hz"] = [settings.f_low_hz, settings.f_high_hz]
    notes = []
    if not out["mask_met"]:
        bad = [p for p in check.points if p["margin_db"] < -MET_SLACK_DB] + [e for e in check.pass_band if e["margin_db"] < -PASS_EDGE_SLACK_DB]
        if not result.feasible:
            notes.append("the chain cannot be built, so the mask is shown on the ideal response")
        elif ideal.met:
            notes.append(
                f"the ideal order-{n} response meets the mask but the built chain misses {len(bad)} of its points "
                "(part values or the op-amp); a finer series, trimming, a faster op-amp or one order more helps"
            )
        else:
            notes.append(f"order {n} does not meet the mask even with ideal parts")
    if not check.met and result.feasible and ideal.met:
        finer = _finer_series(built_settings, conditions, mask, allowed, joint)
        out["mask_finer_series"] = finer
        if finer:
            notes.append(f"the {finer} series meets the mask with the same order")
        else:
            notes.append("no finer series up to E192 meets it either: trim a part or take one order more")
        from bandsmith.chain.joint import best_single_trim

        trim = best_single_trim(result, mask)
        out["mask_trim"] = trim
        if trim is not None and trim["objective_db"] < trim["objective_now_db"]:
            notes.append(
                f"trimming stage {trim['stage']}'s {trim['part']} from {trim['from']:.5g} to {trim['to']:.5g} brings the chain "
                f"within {trim['objective_db']:.3g} dB of its ideal response (now {trim['objective_now_db']:.3g} dB)"
            )
    out["mask_notes"] = notes
    out.update(joint_key)
    return result, out


def _build(settings: ChainSettings, conditions: Conditions, mask: Mask, joint: bool) -> tuple[Cascade, dict]:
    if not joint:
        return design_cascade(settings, conditions=conditions), {"joint": None}
    from bandsmith.chain.joint import design_jointly

    return design_jointly(settings, conditions=conditions, mask=mask)


_FINER = ("E6", "E12", "E24", "E48", "E96", "E192")


def _finer_series(settings: ChainSettings, conditions: Conditions, mask: Mask, allowed: float, joint: bool) -> str | None:
    """The first series finer than the chain's whose built chain meets the mask, or None."""
    if settings.series not in _FINER:
        return None
    actual = conditions.opamp is not None
    for series in _FINER[_FINER.index(settings.series) + 1 :]:
        result, _ = _build(replace(settings, series=series), conditions, mask, joint)
        if not result.feasible:
            continue
        check = check_mask(lambda f: result.response(f, actual=actual), settings.f_low_hz, settings.f_high_hz, allowed, mask)
        if check.met:
            return series
    return None
