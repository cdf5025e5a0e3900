"""The band-pass circuits Bandsmith knows, one module each.

Every module in this package that defines ``TOPOLOGY`` is registered: adding a circuit is adding
a module, nothing else.
"""

from __future__ import annotations

import importlib
import pkgutil

from bandsmith.common.errors import InputError
from bandsmith.circuits.topology import Topology

__all__ = ["all_topologies", "get_topology", "topology_ids"]

_REGISTRY: dict[str, Topology] | None = None


def _load() -> dict[str, Topology]:
    global _REGISTRY
    if _REGISTRY is None:
        found = []
        for info in pkgutil.iter_modules(__path__):
            mod = importlib.import_module(f"{__name__}.{info.name}")
            topo = getattr(mod, "TOPOLOGY", None)
            if isinstance(topo, Topology):
                found.append(topo)
        found.sort(key=lambda t: (t.order, t.id))
        _REGISTRY = {t.id: t for t in found}
    return _REGISTRY


def all_topologies() -> tuple[Topology, ...]:
    """Every registered circuit, in listing order."""
    return tuple(_load().values())


def topology_ids() -> tuple[str, ...]:
    return tuple(_load())


def get_topology(topology_id: str) -> Topology:
    """The circuit with this id; an InputError naming the valid ids otherwise."""
    reg = _load()
    if topology_id not in reg:
        raise InputError("topology", f"{topology_id!r} is not a known circuit; choose one of {', '.join(reg)}")
    return reg[topology_id]
