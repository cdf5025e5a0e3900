"""One BLAS thread for the process: Bandsmith's matrices are small, and a threaded BLAS only adds a
hand-off.

Every matrix product and solve here is tiny (a few rows, or a batch of trials times a handful of
coefficients), so OpenBLAS's worker threads do nothing useful; waking them costs more than the
product, and on a machine whose cores are busy a 1200×4 complex product measured 5–60 ms with
the default threads against 5 µs with one (numpy 2 with scipy-openblas 0.3.31, 2 cores). With
one thread each output element is the same dot product, so results do not change.

:func:`one_blas_thread` sets ``OPENBLAS_NUM_THREADS=1`` (and MKL's) when numpy is not imported
yet, and otherwise also asks the OpenBLAS libraries already loaded (found in ``/proc/self/maps``) through their
``*_set_num_threads`` entry points (and sets the variables for those loaded later, such as
scipy's). A thread count the user set in the environment is kept.
"""

from __future__ import annotations

import ctypes
import os
import sys

__all__ = ["one_blas_thread"]

_VARS = ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "OMP_NUM_THREADS")
_SETTERS = (
    "scipy_openblas_set_num_threads64_",
    "scipy_openblas_set_num_threads",
    "openblas_set_num_threads64_",
    "openblas_set_num_threads",
)


def _loaded_openblas() -> list[str]:
    try:
        with open("/proc/self/maps", encoding="utf-8", errors="replace") as fh:
            paths = {line.split(None, 5)[-1].strip() for line in fh if "openblas" in line.lower()}
    except OSError:  # not Linux: leave the library's own choice
        return []
    return sorted(p for p in paths if p.startswith("/") and ".so" in p)


def one_blas_thread() -> None:
    """Run BLAS on one thread unless the environment already says how many."""
    if any(os.environ.get(v) for v in _VARS):
        return
    os.environ["OPENBLAS_NUM_THREADS"] = "1"  # read by each BLAS library as it loads
    os.environ["MKL_NUM_THREADS"] = "1"
    if "numpy" not in sys.modules:
        return
    for path in _loaded_openblas():
        try:
            lib = ctypes.CDLL(path)
        except OSError:
            continue
        for name in _SETTERS:
            setter = getattr(lib, name, None)
            if setter is not None:
                setter(ctypes.c_int(1))
                break
