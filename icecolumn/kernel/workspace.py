"""Scratch arrays of one member's integration, in one named tuple (allocated once per member and run)."""
from __future__ import annotations

from collections import namedtuple

import numpy as np

from .._jit import jit
from .layout import NFORCING

#: Fields of the workspace: per-layer intensive state (``temp``, ``phi``, ``sbr``, ``kc``) and
#: temperature derivatives (``dtde``, ``dtdm``); drainage (``wflux`` per interface, ``qsink``,
#: ``ra`` per layer); upwind weights of the grid advection per interface (``beta``); face scratch ``sc`` (9, n + 1); Jacobian blocks (``lo``, ``di``, ``up``,
#: ``work_m``, ``work_g``: (n, 4)), Newton right-hand sides ``rhs`` (3, 2n), border column
#: ``col_r`` (2n); stage vectors of the state's length (``f1``, ``f2``, ``f3``, ``y2``, ``y3``,
#: ``base``, ``ytmp``, ``ftmp``, ``err``, ``y0`` the state at the step's start, ``yrec`` a record
#: interpolated within a step); forcing at the three stage times (``fv1``..``fv3``).
Workspace = namedtuple("Workspace", [
    "temp", "phi", "sbr", "dtde", "dtdm", "kc", "wflux", "qsink", "ra", "beta", "sc",
    "lo", "di", "up", "work_m", "work_g", "rhs", "col_r",
    "f1", "f2", "f3", "y2", "y3", "base", "ytmp", "ftmp", "err", "y0", "yrec",
    "fv1", "fv2", "fv3"])


@jit
def new_workspace(n, ny):
    """Workspace for ``n`` layers and a state of length ``ny``; no first guess for the
    enthalpy inversion (``temp`` NaN)."""
    ncell = 2 * n
    ws = Workspace(np.empty(n), np.empty(n), np.empty(n), np.empty(n), np.empty(n), np.empty(n),
                   np.empty(n + 1), np.empty(n), np.empty(n), np.full(n + 1, 0.5), np.empty((9, n + 1)),
                   np.empty((n, 4)), np.empty((n, 4)), np.empty((n, 4)), np.empty((n, 4)), np.empty((n, 4)),
                   np.empty((3, ncell)), np.empty(ncell),
                   np.empty(ny), np.empty(ny), np.empty(ny), np.empty(ny), np.empty(ny), np.empty(ny),
                   np.empty(ny), np.empty(ny), np.empty(ny), np.empty(ny), np.empty(ny),
                   np.empty(NFORCING), np.empty(NFORCING), np.empty(NFORCING))
    reset_workspace(ws)
    return ws


@jit
def reset_workspace(ws):
    """Forget what earlier calls left in ``ws``: no first guess for the enthalpy inversion
    (``temp`` NaN), central advection weights, no held temperature derivative; an interval then
    depends on the state only, so a restart or a different batch gives the same numbers."""
    ws.temp[:] = np.nan
    ws.beta[:] = 0.5
    ws.sc[0, :] = np.nan
