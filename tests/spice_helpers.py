"""A small SPICE reader and solver for the export tests, written here.

SPICE3 syntax: ``*`` comments, the first line a title, R/L/C/V/G/E/X
elements, ``.subckt``/``.ends``, ``.ac``, ``.end``. The solver is a dense modified nodal analysis of
the flattened netlist (V, E and L each add a branch current), independent of the core's.
"""

from __future__ import annotations

import math

import numpy as np


def parse_spice(text: str) -> dict:
    """The title, elements (name → the rest of its line), subcircuits (name → ports and elements),
    the ``.ac`` line and whether ``.end`` came, of a SPICE3 netlist; a name defined twice (SPICE
    names ignore case), a subcircuit defined twice or an unknown control line fails the test."""
    lines = text.splitlines()
    assert lines[0].startswith("*"), "the first line is the title"
    out = {"title": lines[0], "elements": {}, "subckts": {}, "ac": None, "ended": False}
    current = out["elements"]
    for raw in lines[1:]:
        line = raw.strip()
        if not line or line.startswith("*"):
            continue
        tok = line.split()
        head = tok[0].lower()
        if head == ".subckt":
            assert tok[1] not in out["subckts"], f"subcircuit {tok[1]} defined twice"
            current = {}
            out["subckts"][tok[1]] = {"ports": tok[2:], "elements": current}
        elif head == ".ends":
            current = out["elements"]
        elif head == ".ac":
            out["ac"] = (tok[1], int(tok[2]), float(tok[3]), float(tok[4]))
        elif head == ".end":
            out["ended"] = True
        else:
            assert not head.startswith("."), f"unexpected control line {line!r}"
            assert tok[0].upper() not in {k.upper() for k in current}, f"{tok[0]} defined twice"  # SPICE names ignore case
            current[tok[0]] = tok[1:]
    return out


def solve_spice(parsed: dict, f_hz: np.ndarray) -> np.ndarray:
    """V(out)/V(in) by dense nodal analysis (modified: V, E and L add a branch current each)."""
    elems = []
    for name, rest in parsed["elements"].items():
        if name[0].upper() == "X":
            sub = parsed["subckts"][rest[-1]]
            ports = dict(zip(sub["ports"], rest[:-1]))
            for sname, srest in sub["elements"].items():
                k = 2 if sname[0].upper() in "RLC" else 4
                elems.append((sname[0].upper(), [ports.get(n, n if n == "0" else f"{name}.{n}") for n in srest[:k]], srest[k:]))
        else:
            k = 2 if name[0].upper() in "RLCV" else 4
            elems.append((name[0].upper(), rest[:k], rest[k:]))
    nodes = sorted({n for _, ns, _ in elems for n in ns if n != "0"})
    idx = {n: i for i, n in enumerate(nodes)}
    size = len(nodes) + sum(1 for e in elems if e[0] in "VEL")
    s_all = 2j * math.pi * np.asarray(f_hz, dtype=float)
    a = np.zeros((s_all.size, size, size), complex)
    b = np.zeros((s_all.size, size), complex)

    def add(i, j, y):
        if i != "0" and j != "0":
            a[:, idx[i], idx[j]] += y

    row = len(nodes)
    for kind, ns, vals in elems:
        if kind in "RC":
            y = 1.0 / float(vals[0]) if kind == "R" else s_all * float(vals[0])
            for i, j, sign in ((ns[0], ns[0], 1), (ns[1], ns[1], 1), (ns[0], ns[1], -1), (ns[1], ns[0], -1)):
                add(i, j, sign * y)
        elif kind == "G":  # gm·V(c+, c−) leaves n+ and enters n−
            gm = float(vals[0])
            for n, sign in ((ns[0], 1), (ns[1], -1)):
                for c, csign in ((ns[2], 1), (ns[3], -1)):
                    add(n, c, sign * csign * gm)
        else:  # V, E, L: a branch current
            for n, sign in ((ns[0], 1), (ns[1], -1)):
                if n != "0":
                    a[:, idx[n], row] += sign
                    a[:, row, idx[n]] += sign
            if kind == "V":
                b[:, row] = 1.0  # AC 1
            elif kind == "E":
                for c, csign in ((ns[2], 1), (ns[3], -1)):
                    if c != "0":
                        a[:, row, idx[c]] -= csign * float(vals[0])
            else:
                a[:, row, row] -= s_all * float(vals[0])
            row += 1
    x = np.linalg.solve(a, b[..., None])[..., 0]
    return x[:, idx["out"]] / x[:, idx["in"]]
