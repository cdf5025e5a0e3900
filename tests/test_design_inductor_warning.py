"""The tank's design warns when its inductor would need a Q beyond ordinary parts (bandsmith.design.designer).

First order, a winding of quality factor Q_L across a lossless tank of Q_d gives
1/Q = 1/Q_d + 1/Q_L (the series-to-parallel conversion of any circuit-theory text), so losing at
most 5 % of the Q needs Q_L >= 19·Q. Ordinary small inductors reach a Q of about 200 (common
practice, no source): a target Q above 200/19 ≈ 10.5 should warn, one below should not.
"""

import pytest

from bandsmith.design.designer import Spec, design
from bandsmith.analysis.inductor import ORDINARY_INDUCTOR_Q


def _inductor_warnings(result):
    return [w for w in result.warnings if "the inductor needs" in w]


@pytest.mark.parametrize("q", [11.0, 30.0])
def test_high_q_tank_warns_with_the_q_needed(q):
    r = design("rlc-tank", Spec(5600.0, q, 5.0))
    assert r.feasible
    (w,) = _inductor_warnings(r)
    assert f"a Q of {19 * q:.3g}" in w and f"{ORDINARY_INDUCTOR_Q:g}" in w


def test_modest_q_tank_and_circuits_without_inductor_do_not():
    assert _inductor_warnings(design("rlc-tank", Spec(5600.0, 10.0, 5.0))) == []  # needs 190
    assert _inductor_warnings(design("mfb", Spec(5600.0, 30.0, 5.0))) == []
