"""Compile every kernel entry point once, for the argument types a run uses (no run happens).

``python -m icecolumn.kernel.warmup`` fills the on-disk cache of compiled code (see
:mod:`icecolumn._jit`); the package build calls it, so that an installed package starts its
first run from the cache.  Only numpy and numba are needed.
"""
from __future__ import annotations

import time

import numpy as np

from .driver import advance, advance_parallel, diagnose
from .layout import NFORCING, NPAR, state_size


def compile_kernel(batch: bool = True) -> float:
    """Compile the serial kernel, the diagnostics and (``batch``) the threaded kernel with the
    array types of :func:`icecolumn.model.simulate`; returns the seconds it took.  The calls
    advance over an empty interval, so nothing is integrated."""
    from .. import phase

    t0 = time.perf_counter()
    n = 3
    ny = state_size(n)
    ft = np.array([0.0, 3600.0])
    for members, step in ((1, advance), (2, advance_parallel)):
        if members == 2 and not batch:
            continue
        ys = np.zeros((members, ny))
        pars = np.ascontiguousarray(np.zeros((members, NPAR)))
        forc = np.full((members, NFORCING, ft.size), np.nan)
        status = np.zeros(members, np.int64)
        counters = np.zeros((members, 3), np.int64)
        step(ys, 0.0, 0.0, n, pars, ft, forc, status, counters)
        if members == 1:
            prof = [np.empty((members, n)) for _ in range(6)]
            scalars = [np.empty(members) for _ in range(5)]
            diagnose(ys, n, pars, ft, forc, 0.0, prof[0], prof[1], prof[2], prof[3], prof[4], scalars[0],
                     scalars[1], prof[5], scalars[2], scalars[3], scalars[4])
    # the numpy wrappers the model's set-up and output use
    phase.brine_salinity(np.array([-5.0]))
    phase.liquidus_temperature(np.array([34.0]))
    return time.perf_counter() - t0


if __name__ == "__main__":  # pragma: no cover - the build and maintainers call it
    print(f"icecolumn kernel compiled in {compile_kernel():.1f} s")
