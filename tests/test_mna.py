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
