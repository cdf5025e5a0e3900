"""The SPICE export of a single-supply build: read back here and solved at DC by our own modified
nodal analysis (capacitors open, op-amp a voltage-controlled source of gain 1e9 as the export's
macro-model says), it gives the node voltages of the bias solve (Ho, Ruehli and Brennan, "The
modified nodal approach to network analysis", IEEE Trans. CAS-22, 1975)."""

from __future__ import annotations

import numpy as np
import pytest

from bandsmith import api
from bandsmith.app.cli import main as cli_main
from bandsmith.board.spice import biased_spice

MFB = {"R1": 10e3, "R2": 866.0, "R3": 82e3, "C1": 10e-9, "C2": 10e-9}


def _dc_from_spice(text: str) -> dict:
    res, vsrc, amps = [], [], []
    inside = False
    for line in text.splitlines():
        if line.startswith(".subckt"):
            inside = True
        if inside or not line or line[0] in "*.":
            inside = inside and not line.startswith(".ends")
            continue
        f = line.split()
        if f[0][0] == "R":
            res.append((f[1], f[2], float(f[3])))
        elif f[0][0] == "V":
            vsrc.append((f[1], f[2], float(f[4])))
        elif f[0][0] == "X":
            amps.append((f[1], f[2], f[3]))
    nodes = sorted({n for r in res for n in r[:2]} | {n for v in vsrc for n in v[:2]} | {n for a in amps for n in a} - {"0"})
    nodes = [n for n in nodes if n != "0"]
    ix = {n: i for i, n in enumerate(nodes)}
    size = len(nodes) + len(vsrc) + len(amps)
    a, b = np.zeros((size, size)), np.zeros(size)
    for n1, n2, r in res:
        for p, q in ((n1, n2), (n2, n1)):
            if p in ix:
                a[ix[p], ix[p]] += 1 / r
                if q in ix:
                    a[ix[p], ix[q]] -= 1 / r
    for k, (p, q, v) in enumerate(vsrc + [(o, "0", 0.0) for _, _, o in amps]):
        col = len(nodes) + k
        for n, sgn in ((p, 1), (q, -1)):
            if n in ix:
                a[ix[n], col] += sgn
                a[col, ix[n]] += sgn
        b[col] = v
    for k, (plus, minus, out) in enumerate(amps):  # V(out) − 1e9·(V+ − V−) = 0
        row = len(nodes) + len(vsrc) + k
        for n, g in ((plus, -1e9), (minus, 1e9)):
            if n in ix:
                a[row, ix[n]] += g
    x = np.linalg.solve(a, b)
    return {n: x[i] for n, i in ix.items()}


@pytest.mark.parametrize("reference", ["divider", "buffered"])
def test_spice_export_reproduces_the_dc_solve(reference):
    b = api.bias("mfb", MFB, supply_v=9, reference=reference)
    dc = _dc_from_spice(biased_spice(b))
    for node in ("a", "m", "out", "ref", "in"):
        assert dc[node] == pytest.approx(b.node_dc_v[node], abs=1e-6), node


def test_command_writes_the_file(tmp_path, capsys):
    out = tmp_path / "build.cir"
    code = cli_main(["bias", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", "--supply", "9", "--spice", str(out)])
    capsys.readouterr()
    assert code == 0 and out.read_text().rstrip().endswith(".end")
    assert "VSUP vs 0 DC 9" in out.read_text() and "CIN src in" in out.read_text()
