"""The one-frequency solve against the batched pencil (both stamp the same netlist)."""

import numpy as np
import pytest

from bandsmith.circuits import all_topologies
from bandsmith.solver.mna import build_system, solve_at


@pytest.mark.parametrize("topo", all_topologies(), ids=lambda t: t.id)
def test_solve_at_matches_the_batched_solve(topo):
    netlist = topo.build(topo.example)
    for s in (2j * np.pi * 1e3, 3e4 + 2e5j):
        x, layout = solve_at(netlist, s)
        ref = build_system(netlist).solve(np.array([s]))[0, 0]
        assert layout.size == ref.size
        np.testing.assert_allclose(x, ref, rtol=1e-12, atol=1e-15 * np.abs(ref).max())


def test_solve_at_many_is_solve_at_of_each_bit_for_bit():
    # The stacked solves (numpy.linalg.solve, LAPACK gesv per matrix) against one solve_at per
    # system: every circuit, alone and driving another, on the imaginary axis and off it.
    from bandsmith.solver.mna import solve_at_many

    nets = [t.build(t.example) for t in all_topologies()]
    nets += [a.driving(b) for a, b in zip(nets, nets[1:] + nets[:1])]
    systems = [(nl, s) for nl in nets for s in (2j * np.pi * 317.0, 2j * np.pi * 4.1e4, 3e4 + 2e5j)]
    systems = systems[1::2] + systems[::2]  # sizes interleaved
    for (nl, s), (x, layout) in zip(systems, solve_at_many(systems)):
        want, want_layout = solve_at(nl, s)
        assert layout == want_layout
        assert np.array_equal(x, want)


def test_solve_complex_is_numpy_linalg_solve_bit_for_bit():
    # Reference: numpy.linalg.solve (numpy's documented routine; solve_complex calls its gufunc
    # without the argument checks): random complex stacks, one and several right-hand sides,
    # broadcast and 1-D, the same numbers; a singular matrix raises LinAlgError as it does.
    from bandsmith.solver.mna import solve_complex

    rng = np.random.default_rng(7)
    for n in (1, 3, 6, 11):
        a = rng.normal(size=(4, n, n)) + 1j * rng.normal(size=(4, n, n))
        for b in (rng.normal(size=(1, n, 1)) + 0j, rng.normal(size=(4, n, 2)) + 1j * rng.normal(size=(4, n, 2))):
            assert np.array_equal(solve_complex(a, b), np.linalg.solve(a, b))
        b1 = rng.normal(size=n) + 1j * rng.normal(size=n)
        assert np.array_equal(solve_complex(a[0], b1), np.linalg.solve(a[0], b1))
    singular = np.zeros((2, 3, 3), dtype=complex)
    with pytest.raises(np.linalg.LinAlgError):
        solve_complex(singular, np.ones((1, 3, 1), dtype=complex))
    with pytest.raises(np.linalg.LinAlgError):
        np.linalg.solve(singular, np.ones((1, 3, 1), dtype=complex))


def test_first_kept_is_the_first_nonzero_entry():
    # Reference: numpy.flatnonzero (a NaN is nonzero there too), the last index where every entry
    # is zero (lead_trimmed keeps one coefficient); random rows with zeros, NaN and signed zeros.
    from bandsmith.solver.rational import first_kept, lead_trimmed

    rng = np.random.default_rng(11)
    for _ in range(500):
        n = int(rng.integers(1, 8))
        row = [float(rng.choice([0.0, -0.0, np.nan, rng.normal()])) for _ in range(n)]
        nz = np.flatnonzero(np.array(row))
        want = int(nz[0]) if nz.size else n - 1
        assert first_kept(row) == want
        assert len(lead_trimmed(row)) == n - want
