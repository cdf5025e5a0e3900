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
