"""Bandsmith: active band-pass filter design and analysis, as a Python library.

The public API (see ``__all__``) designs a circuit from a target, compares circuits, analyses
given parts, sweeps, spreads tolerances, computes noise, builds cascades, fits parts to a
measurement, checks op-amps, and opens and saves sessions::

    import bandsmith

    d = bandsmith.design_circuit("mfb", f0_hz="12k", q=6, gain=2)
    print(d.chosen, d.to_json()["errors"])

Every function takes its options by keyword, in SI units (or text such as ``"4k7"``), and returns a
frozen result whose ``to_json()`` is the object the matching ``bandsmith`` command prints with
``--json``. The functions live in :mod:`bandsmith.api`, which imports what each job needs only
when it runs; importing the package or a sub-package (``bandsmith.solver``, say) does not load it. The core is pure Python over numpy and
scipy; it never imports Qt.
"""

from __future__ import annotations

from bandsmith.solver.blas_threads import one_blas_thread

one_blas_thread()  # before numpy loads BLAS, where possible: the core's matrices are all small

# The public API: each name is fetched from bandsmith.api on first use, so that importing the
# package or a sub-package (bandsmith.solver, say) does not load every layer's entry points.
__all__ = [
    "list_circuits",
    "design_circuit",
    "compare",
    "analyze",
    "analyze_session",
    "sweep",
    "tolerance",
    "noise",
    "cascade",
    "fit",
    "check_opamps",
    "open_session",
    "save_session",
    "parse_value",
    "format_value",
    "CircuitList",
    "DesignReport",
    "ComparisonReport",
    "AnalysisReport",
    "SessionAnalysisReport",
    "SweepReport",
    "ToleranceReport",
    "NoiseReport",
    "CascadeReport",
    "MeasurementFitReport",
    "OpAmpCheckReport",
    "InputError",
    "filter_bank",
    "BankReport",
    "bias",
    "trim",
    "burst",
    "burst_cascade",
    "BurstReport",
]


def __getattr__(name: str):
    """Load the public API from :mod:`bandsmith.api` on first use (PEP 562)."""
    if name in __all__:
        from bandsmith import api

        value = getattr(api, name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'bandsmith' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
