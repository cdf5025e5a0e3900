"""The session the window opens with when no file is given, and the one File ▸ New starts from.

The demo is ``resources/demo_session.bandsmith.json``. Should that file be missing (a broken
install), a small built-in session takes its place so the window still opens.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

from bandsmith.circuits import get_topology
from bandsmith.files.session import CandidateEntry, OpAmpSpec, Session, Target, load_session

__all__ = ["DEMO_NAME", "demo_path", "demo_session", "blank_session"]

DEMO_NAME = "demo_session.bandsmith.json"


def demo_path() -> Path | None:
    """Where the shipped demo session is, or None when it is not installed."""
    try:
        p = Path(str(resources.files("bandsmith.resources") / DEMO_NAME))
    except TypeError:
        return None
    return p if p.is_file() else None


def demo_session() -> Session:
    """The shipped demo session (read only: the window never saves over it)."""
    p = demo_path()
    if p is not None:
        return load_session(p)
    return _built_in()


def blank_session() -> Session:
    """File ▸ New: the demo's target and op-amp, one multiple-feedback candidate to start from."""
    demo = demo_session()
    mfb = get_topology("mfb")
    entry = CandidateEntry(id="mfb", topology_id="mfb", values=dict(mfb.example), snap=None)
    return Session(target=demo.target, candidates=(entry,), opamp=demo.opamp, tolerances=demo.tolerances)


def _built_in() -> Session:
    # A 2 kHz tone detector (our own scenario): every circuit's example, its capacitors (and the
    # tank's inductor) scaled so that it is tuned near 2 kHz.
    def scaled(topology_id: str, f_example_hz: float, refs: tuple[str, ...]) -> dict:
        v = dict(get_topology(topology_id).example)
        k = f_example_hz / 2000.0
        for r in refs:
            v[r] *= k
        return v

    cands = (
        CandidateEntry("mfb", "mfb", dict(get_topology("mfb").example), snap="E24"),
        CandidateEntry("sallen-key", "sallen-key", scaled("sallen-key", 496.9, ("C1", "C2"))),
        CandidateEntry("rlc-tank", "rlc-tank", scaled("rlc-tank", 10730.0, ("L", "C"))),
    )
    return Session(
        target=Target(f0_hz=2000.0, q=5.0, gain=4.0, vin_v=0.5, series="E24"),
        candidates=cands,
        opamp=OpAmpSpec(gbw_hz=1e6, a0=1e5),
        notes="Built-in demo: a 2 kHz tone detector.",
    )
