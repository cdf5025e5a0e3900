"""bandsmith.analysis.gbw_sweep: errors of the figures over a GBW ladder."""

import math

import numpy as np
import scipy.signal
from numpy.testing import assert_allclose

from bandsmith.analysis.analyzer import Tolerances, ideal_figures, required_gbw, transfer_function
from bandsmith.design.candidate import Candidate
from bandsmith.circuits import get_topology
from bandsmith.analysis.gbw_sweep import gbw_error_sweep, gbw_ladder
from bandsmith.solver.mna import OpAmpModel


def _mfb():
    return Candidate("mfb", get_topology("mfb").example).netlist


def test_ladder_widens_to_given_values():
    g = gbw_ladder(1e3, lo_hz=100.0, hi_hz=1e10, n=11)
    assert_allclose([g[0], g[-1]], [100.0, 1e10])
    g = gbw_ladder(1e3, n=5)
    assert_allclose([g[0], g[-1]], [3e3, 1e9])  # defaults: 3·f0 to 1e6·f0
    assert np.all(np.diff(g) > 0)


def test_worst_error_crosses_one_at_the_required_gbw():
    nl = _mfb()
    ideal = ideal_figures(nl)
    need, reason = required_gbw(nl, ideal)
    assert reason is None
    s = gbw_error_sweep(nl, ideal, np.array([need / 1.05, need * 1.05]))
    # required_gbw is the smallest GBW within tolerance (to 1 %): just below it the worst
    # normalised error exceeds 1, just above it it does not.
    assert s.worst[0] > 1.0
    assert s.worst[1] <= 1.0


def test_f0_error_matches_scipy_on_the_same_circuit():
    # The peak frequency of the finite-op-amp response, found independently on a dense
    # scipy.signal.freqs sweep (scipy.signal as the reference library), agrees with the sweep's f0.
    nl = _mfb()
    ideal = ideal_figures(nl)
    gbw = 2e5
    s = gbw_error_sweep(nl, ideal, np.array([gbw]))
    b, a = transfer_function(nl, OpAmpModel(gbw, 1e5)).to_s(0)
    f = np.geomspace(1e3, 4e3, 200001)
    _, h = scipy.signal.freqs(b, a, worN=2 * math.pi * f)
    f_peak = f[np.argmax(np.abs(h))]
    assert_allclose(s.f0_error[0], f_peak / ideal.item().f0_hz - 1.0, atol=2e-5)  # grid step 7e-6 relative


def test_normalised_by_the_tolerances():
    nl = _mfb()
    ideal = ideal_figures(nl)
    g = np.array([1e5])
    tight = gbw_error_sweep(nl, ideal, g, tolerances=Tolerances(f0=0.001, q=0.005, gain_db=0.05))
    loose = gbw_error_sweep(nl, ideal, g)
    assert_allclose(tight.worst, 10.0 * loose.worst, rtol=1e-9)
    assert_allclose(tight.f0_error, loose.f0_error)


def test_the_narrow_peak_of_a_loop_near_oscillation_is_measured():
    # A state-variable loop's Q rises steeply as the GBW falls (to thousands a few decades above
    # f0): the sweep measures that narrow peak, checked on a dense scipy.signal.freqs sweep
    # (scipy.signal as the reference library) around it.
    from bandsmith.analysis.analyzer import analyze

    topo = get_topology("state-variable")
    an = analyze(topo.build(dict(topo.example)))
    ref = an.ideal.item()
    ladder = gbw_ladder(ref.f0_hz, n=61)
    s = gbw_error_sweep(an.netlist, an.ideal, ladder, family=an.family)
    k = int(np.nanargmax(s.q_error))
    q = ref.q * (1.0 + s.q_error[k])
    assert q > 20.0 * ref.q  # a peak far narrower than the ideal one
    f_pk = ref.f0_hz * (1.0 + s.f0_error[k])
    b, a = transfer_function(an.netlist, OpAmpModel(float(ladder[k]), 1e5)).to_s(0)
    f = np.linspace(f_pk * (1.0 - 2.0 / q), f_pk * (1.0 + 2.0 / q), 400001)
    _, h = scipy.signal.freqs(b, a, worN=2 * math.pi * f)
    mag = np.abs(h)
    above = f[mag >= mag.max() / math.sqrt(2.0)]
    assert_allclose(f[np.argmax(mag)], f_pk, rtol=1e-7)
    assert_allclose(f_pk / (above[-1] - above[0]), q, rtol=1e-3)  # grid step 1e-5 of the band
