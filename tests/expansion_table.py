"""Writes the shipped table of coefficient-expansion fits (``bandsmith/resources/expansions.json``).

Run ``python tests/expansion_table.py`` after changing a circuit's netlist or the expansion's fit
(``tests/test_expansion_table.py`` regenerates the table and fails on an entry that differs or that
no circuit has now), and after adding a circuit to ship its fits too (optional: structures not in
the table are fitted at first use as before, so a missing entry costs time, not correctness).

The structures: every circuit's example (the tank also with a winding resistance), each with and
without a source resistance in series with its input (the chain's first stage, ``--rsource``),
each with the ideal op-amp (the standard-value search, the analysis of several op-amps) and with
a single-pole one (the analysis of one op-amp, tolerance runs with a finite op-amp).
"""

from __future__ import annotations

import sys


def structures():
    """``(label, netlist, opamp)`` of every structure the table holds."""
    from bandsmith.circuits import all_topologies
    from bandsmith.design.source import with_source
    from bandsmith.solver.mna import IDEAL, OpAmpModel

    finite = OpAmpModel(gbw_hz=1e6, a0=1e5)
    for topo in all_topologies():
        variants = [("", dict(topo.example))]
        if any(not c.required and c.kind == "R" and c.ref in topo.example for c in topo.components):
            for c in topo.components:
                if not c.required and c.kind == "R" and not topo.example.get(c.ref):
                    variants.append((f" {c.ref}>0", dict(topo.example) | {c.ref: 15.0}))
        for label, values in variants:
            net = topo.build(topo.values_from(values))
            for src_label, rs in (("", None), (" rsource", 50.0)):
                driven = with_source(net, rs)
                for amp_label, amp in (("ideal", IDEAL), ("finite", finite)):
                    yield f"{topo.id}{label}{src_label} {amp_label}", driven, amp


def table_entries() -> dict[str, str]:
    from bandsmith.solver.expansion import table_entry

    out = {}
    for _, net, amp in structures():
        name, entry = table_entry(net, amp)
        out[name] = entry
    return out


def main() -> None:
    from bandsmith.solver.expansion import table_path, table_text

    text = table_text(table_entries())
    table_path().write_bytes(text.encode("utf-8"))  # "\n" line ends on every system: the reader compares bytes
    print(f"wrote {table_path()} ({len(text)} bytes)")


if __name__ == "__main__":
    sys.exit(main())
