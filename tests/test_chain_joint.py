"""Parts chosen for the whole chain: the in-band deviation from scipy.signal's ideal band-pass."""

import numpy as np
import pytest

from bandsmith import api
from bandsmith.chain.cascade import ChainSettings, design_cascade
from bandsmith.chain.joint import choose_jointly
from bandpass_reference import reference_db

# (family, order, f0, bw): our own table of chains
CHAINS = [
    ("butterworth", 6, 10e3, 2e3), ("chebyshev", 4, 10e3, 2e3), ("butterworth", 4, 1e3, 100.0),
    ("bessel", 4, 5e3, 2e3), ("chebyshev", 6, 2e3, 400.0), ("butterworth", 8, 50e3, 20e3),
]


def _ideal_db(response, order, fl, fh, f):
    # scipy.signal.iirfilter / bessel, analog band-pass, scaled to 0 dB at the geometric centre
    return reference_db(response, order, fl, fh, f, ripple_db=0.5)


def _built_dev_db(cascade):
    s = cascade.settings
    f = np.geomspace(s.f_low_hz, s.f_high_hz, 3001)
    h = np.prod([st.result.analysis.h_ideal.at_f(f)[0] for st in cascade.stages], axis=0)
    return float(np.max(np.abs(20 * np.log10(np.abs(h) / s.gain) - _ideal_db(s.response, s.order, s.f_low_hz, s.f_high_hz, f))))


@pytest.mark.parametrize("response,order,f0,bw", CHAINS)
def test_joint_is_never_worse_and_reports_its_improvement(response, order, f0, bw):
    s = ChainSettings.from_request(response, order, f0_hz=f0, bw_hz=bw, series="E24")
    alone = design_cascade(s)
    joint, info = choose_jointly(alone)
    a, j = _built_dev_db(alone), _built_dev_db(joint)
    assert j <= a + 1e-3
    assert info.seconds < 3.0  # bounded: a few hundred ms measured at order 8 on an idle machine
    print(f"{response} {order} {f0:g}/{bw:g}: alone {a:.3f} dB, joint {j:.3f} dB")


def test_e24_butterworth_6_at_10k_2k_within_1_db():
    out = api.cascade(response="butterworth", order=6, f0_hz=10e3, bw_hz=2e3, series="E24")
    assert _built_dev_db(out.result) <= 1.0
    js = out.to_json()["joint"]
    assert js["passband_dev_joint_db"] <= js["passband_dev_alone_db"]
    assert js["improvement_db"] == pytest.approx(js["passband_dev_alone_db"] - js["passband_dev_joint_db"])


def test_parts_alone_keeps_the_per_stage_choice():
    s = dict(response="chebyshev", order=4, f0_hz=10e3, bw_hz=2e3)
    alone = api.cascade(**s, joint=False)
    assert alone.to_json()["joint"] is None
    assert [st.chosen for st in alone.result.stages] == [st.chosen for st in design_cascade(ChainSettings.from_request("chebyshev", 4, f0_hz=10e3, bw_hz=2e3)).stages]


def test_mask_weighs_the_search():
    # a rejection point just met by the ideal response: the joint parts keep it met where they can
    out = api.cascade(response="butterworth", order="auto", f_low_hz=950, f_high_hz=1050, reject=["1k2=30", "800=30"]).to_json()
    assert out["joint"] is not None
    assert all(p["margin_db"] >= 0 for p in out["mask"])


def test_joint_with_a_source_resistance_sees_it():
    # the first stage's options are analysed driven through the source, like its chosen parts
    for rs in (None, 2e3):
        j = api.cascade(response="butterworth", order=4, f0_hz=1e3, bw_hz=200, rsource_ohm=rs).to_json()["joint"]
        assert j["passband_dev_joint_db"] <= j["passband_dev_alone_db"] + 1e-9
        assert j["passband_dev_joint_db"] <= j["objective_alone_db"] + 0.05
