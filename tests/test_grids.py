"""The geometric grid against numpy.geomspace, bit for bit."""

import numpy as np
import pytest

from bandsmith.common.grids import geometric


@pytest.mark.parametrize("seed", range(4))
def test_geometric_is_numpys_geomspace_bit_for_bit(seed):
    # numpy.geomspace is the reference (numpy's own implementation of the same grid)
    rng = np.random.default_rng(seed)
    for _ in range(500):
        lo = 10 ** rng.uniform(-12, 9)
        hi = lo * 10 ** rng.uniform(1e-3, 12)
        n = int(rng.integers(0, 300))
        want = np.geomspace(lo, hi, n)
        got = geometric(lo, hi, n)
        assert got.dtype == want.dtype and got.shape == want.shape
        assert np.array_equal(got, want)
