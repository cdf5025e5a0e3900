"""The burst plot draws what the core computed: the output and its envelope of both signs."""

import numpy as np

from bandsmith import api
from bandsmith.app.plots.burst_plot import BurstPlot


def test_plot_shows_output_and_envelope(qtbot):
    rep = api.burst("mfb", ["R1=16k", "R2=1.1k", "R3=150k", "C1=2.4n", "C2=2.2n"], freq_hz="12k", cycles=40)
    w = BurstPlot()
    qtbot.addWidget(w)
    w.show_burst(rep.result)
    t, y = w.output_curve.getData()
    _, env = w.envelope_curve.getData()
    _, low = w.envelope_low_curve.getData()
    j = rep.to_json()["waveform"]
    assert np.allclose(t, j["t_s"]) and np.allclose(y, j["y"]) and np.allclose(env, j["envelope"]) and np.allclose(low, -env)
    # |y| never above its envelope (y is the imaginary part of the analytic output)
    assert np.all(np.abs(y) <= env + 1e-9)
    assert w.burst_end_line.isVisible() and w.burst_end_line.value() == rep.result.duration_s
    w.show_burst(None)
    assert w.output_curve.getData()[0] is None or len(w.output_curve.getData()[0]) == 0
