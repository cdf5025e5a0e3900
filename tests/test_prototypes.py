"""Low-pass prototypes against scipy.signal and a table of pole frequencies and Qs."""

import math

import numpy as np
import pytest
import scipy.signal
from numpy.testing import assert_allclose

from bandsmith.common.errors import InputError
from bandsmith.chain.prototypes import DEFAULT_RIPPLE_DB, RESPONSES, check_order, prototype

# Pole frequency ωp / Q per section, "r" a real pole at that frequency; normalised as scipy does
# (buttap −3 dB at 1 rad/s; cheb1ap ripple-band edge at 1; besselap norm='mag' −3 dB at 1).
# Source: a table derived with scipy.signal 1.17 (buttap, cheb1ap, besselap(norm='mag')) (derived, not a published handbook table), four decimals.
# Rows: N -> (real pole ωp or None, [(ωp, Q), …] by ascending Q).
TABLE = {
    "butterworth": {
        2: (None, [(1.0, 0.7071)]),
        3: (1.0, [(1.0, 1.0000)]),
        4: (None, [(1.0, 0.5412), (1.0, 1.3066)]),
        5: (1.0, [(1.0, 0.6180), (1.0, 1.6180)]),
        6: (None, [(1.0, 0.5176), (1.0, 0.7071), (1.0, 1.9319)]),
    },
    ("chebyshev", 0.5): {
        2: (None, [(1.2313, 0.8637)]),
        3: (0.6265, [(1.0689, 1.7062)]),
        4: (None, [(0.5970, 0.7051), (1.0313, 2.9406)]),
        5: (0.3623, [(0.6905, 1.1778), (1.0177, 4.5450)]),
        6: (None, [(0.3962, 0.6836), (0.7681, 1.8104), (1.0114, 6.5128)]),
    },
    ("chebyshev", 1.0): {
        2: (None, [(1.0500, 0.9565)]),
        3: (0.4942, [(0.9971, 2.0177)]),
        4: (None, [(0.5286, 0.7845), (0.9932, 3.5590)]),
        5: (0.2895, [(0.6552, 1.3988), (0.9941, 5.5564)]),
        6: (None, [(0.3531, 0.7609), (0.7468, 2.1980), (0.9954, 8.0037)]),
    },
    "bessel": {
        2: (None, [(1.2720, 0.5774)]),
        3: (1.3227, [(1.4476, 0.6910)]),
        4: (None, [(1.4302, 0.5219), (1.6034, 0.8055)]),
        5: (1.5023, [(1.5563, 0.5635), (1.7554, 0.9165)]),
        6: (None, [(1.6039, 0.5103), (1.6892, 0.6112), (1.9047, 1.0233)]),
    },
}
CASES = [(key, n) for key, rows in TABLE.items() for n in rows]


def _make(key, n):
    if isinstance(key, tuple):
        return prototype(key[0], n, ripple_db=key[1])
    return prototype(key, n)


@pytest.mark.parametrize("key,n", CASES, ids=[f"{k if isinstance(k, str) else k[0] + str(k[1])}-{n}" for k, n in CASES])
def test_pole_table(key, n):
    # Source: the table above [derived with scipy.signal 1.17], rounded to 4 decimals.
    real, pairs = TABLE[key][n]
    proto = _make(key, n)
    secs = proto.sections
    got_real = [s.w_p for s in secs if s.real]
    got_pairs = [(s.w_p, s.q) for s in secs if not s.real]
    assert len(got_real) == (0 if real is None else 1)
    if real is not None:
        assert_allclose(got_real[0], real, atol=6e-5)
    assert len(got_pairs) == len(pairs)
    assert_allclose(np.array(got_pairs), np.array(pairs), atol=6e-5)


def test_chebyshev_half_db_order4_handbook_poles():
    # A. B. Williams & F. J. Taylor, Electronic Filter Design Handbook (McGraw-Hill), Chebyshev
    # 0.5 dB, N = 4: poles −0.1753 ± j1.0163 and −0.4233 ± j0.4209 (from memory).
    proto = prototype("chebyshev", 4, ripple_db=0.5)
    upper = sorted((p for p in proto.poles if p.imag > 0), key=lambda p: p.imag)
    assert_allclose([upper[0].real, upper[0].imag], [-0.4233, 0.4209], atol=6e-5)
    assert_allclose([upper[1].real, upper[1].imag], [-0.1753, 1.0163], atol=6e-5)


@pytest.mark.parametrize("n", range(1, 9))
@pytest.mark.parametrize("response", RESPONSES)
def test_matches_scipy_prototypes(response, n):
    # Reference library: scipy.signal buttap / cheb1ap / besselap(norm='mag').
    ref = {
        "butterworth": lambda: scipy.signal.buttap(n),
        "chebyshev": lambda: scipy.signal.cheb1ap(n, DEFAULT_RIPPLE_DB),
        "bessel": lambda: scipy.signal.besselap(n, norm="mag"),
    }[response]()
    proto = prototype(response, n)
    w = np.logspace(-2, 2, 401)
    _, h_ref = scipy.signal.freqs_zpk(ref[0], ref[1], ref[2], worN=w)
    assert_allclose(proto.at_s(1j * w), h_ref, rtol=1e-12, atol=0)
    # Section count: N//2 pairs and one real pole for odd N.
    secs = proto.sections
    assert sum(1 if s.real else 2 for s in secs) == n
    assert sum(s.real for s in secs) == n % 2


@pytest.mark.parametrize("n", range(1, 9))
def test_band_edge_levels(n):
    # Definitions (scipy.signal's normalisation): Butterworth and Bessel(mag) are −3 dB (half
    # power) at 1 rad/s; Chebyshev I is −R dB at the ripple-band edge 1 rad/s.
    for response in ("butterworth", "bessel"):
        assert_allclose(prototype(response, n).edge_level_db, 10 * math.log10(0.5), atol=1e-9)
    for r in (0.1, 0.5, 1.0, 3.0):
        p = prototype("chebyshev", n, ripple_db=r)
        assert_allclose(p.edge_level_db, -r, atol=1e-9)
        # Passband peak 0 dB; the DC value is the trough for even N (Chebyshev I equiripple).
        assert_allclose(p.dc_gain, 1.0 if n % 2 else 10 ** (-r / 20), rtol=1e-12)
        w = np.linspace(0, 1, 20001)
        mag = np.abs(p.at_s(1j * w))
        assert mag.max() <= 1.0 + 1e-9
        assert_allclose(20 * np.log10(mag.min()), -r, atol=1e-6)


def test_butterworth_pole_q_formula():
    # Butterworth pole Qs are 1/(2·sin((2k−1)π/(2N))) (common practice, no source; any filter text).
    for n in range(2, 9):
        want = sorted(1 / (2 * math.sin((2 * k - 1) * math.pi / (2 * n))) for k in range(1, n // 2 + 1))
        got = [s.q for s in prototype("butterworth", n).sections if not s.real]
        assert_allclose(got, want, rtol=1e-12)


@pytest.mark.parametrize("bad", [0, 9, -1, 2.5, "x", "3.0", True, None])
def test_order_must_be_integer_1_to_8(bad):
    with pytest.raises(InputError) as exc:
        prototype("butterworth", bad)
    assert exc.value.field == "order"


def test_order_text_accepted():
    assert check_order("4") == 4
    assert check_order(np.int64(8)) == 8


def test_bad_response_and_ripple():
    with pytest.raises(InputError) as exc:
        prototype("elliptic", 3)
    assert exc.value.field == "response"
    with pytest.raises(InputError) as exc:
        prototype("butterworth", 3, ripple_db=1.0)
    assert exc.value.field == "ripple-db"
    for bad in (0.0, -1.0, 7.0, float("nan")):
        with pytest.raises(InputError) as exc:
            prototype("chebyshev", 3, ripple_db=bad)
        assert exc.value.field == "ripple-db"
