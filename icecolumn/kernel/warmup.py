"""Compile every kernel entry point once, for the argument types a run uses (no run happens).

``python -m icecolumn.kernel.warmup`` fills the on-disk cache of compiled code (see
:mod:`icecolumn._jit`); the package build calls it, so that an installed package starts its
first run from the cache.  Only numpy and numba are needed.
"""
from __future__ import annotations

import time

import numpy as np

from .driver import new_records, record, run
from .layout import NFORCING, NPAR, state_size


def compile_kernel(batch: bool = True) -> float:
    """Compile the serial kernel, the recording of a time and (``batch``) the threaded kernel
    with the array types of :func:`icecolumn.model.simulate`; returns the seconds it took.  The
    members are marked failed, so nothing is integrated."""
    from .. import phase, properties, thickness

    t0 = time.perf_counter()
    n = 3
    ny = state_size(n)
    ft = np.array([0.0, 3600.0])
    for members, parallel in ((1, False), (2, True)):
        if parallel and not batch:
            continue
        ys = np.zeros((members, ny))
        pars = np.ascontiguousarray(np.zeros((members, NPAR)))
        forc = np.full((members, NFORCING, ft.size), np.nan)
        rec = new_records(members, ft.size, n, ny)
        rec.status[:] = -1  # skip every member
        run(ys, ft, 0, 1, n, pars, ft, forc, rec, parallel)
        if not parallel:
            record(ys, ft, 0, n, pars, ft, forc, rec)
    # the numpy wrappers the model's set-up and output use
    phase.brine_salinity(np.array([-5.0]))
    phase.liquidus_temperature(np.array([34.0]))
    properties.conductivity(np.array([-5.0]), np.array([0.1]), np.array([4.0]))  # growth-law check, buoy budget
    thickness.thicknesses(np.zeros((1, 2, n)), np.zeros((1, 2, n)), np.zeros((1, 2, n)), np.ones((1, 2)),
                          np.zeros((1, 2)), np.full((1, 1), 0.5), np.full((1, 1), 0.2))
    return time.perf_counter() - t0


if __name__ == "__main__":  # pragma: no cover - the build and maintainers call it
    print(f"icecolumn kernel compiled in {compile_kernel():.1f} s")
