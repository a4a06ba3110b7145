"""Entry points of the compiled kernel: run a batch of members over output times, recording each.

:func:`run_serial` and :func:`run_parallel` (members over threads) advance every member over the
output times ``tsec[i0] .. tsec[i1]`` and record, at each, the state and the diagnostics of
:func:`diagnose_member`; :func:`record_initial` records the first time.  Each member is integrated
by the same serial code on its own rows, so its numbers are the same whichever entry point and
batch ran it.
"""
from __future__ import annotations

from collections import namedtuple

import numpy as np
from numba import prange

from .._jit import jit
from ..phase import liquidus_temperature_scalar
from .base import basal_velocity_of_state
from .gravity_drainage import brine_exchange
from .inputs import forcing_at
from .layout import F, NFORCING, P
from .mixedlayer import heat_to_ice, mixed_layer_state
from .stepper import step_member
from .tendency import intensive_state
from .top import snow_depth, surface_flux, top_effective_temperature
from .workspace import new_workspace


@jit
def diagnose_member(y, n, par_in, ft, forc, t, ws, fv, temp, phi, sbr, sal, ra):
    """Layer temperature, liquid fraction, brine and bulk salinity and Rayleigh number of one member
    at t into the rows ``temp`` .. ``ra``; returns the surface temperature [degC], the melt energy
    flux at the surface [W m-2] and the snow thickness [m]."""
    par = par_in.copy()
    if par[P.MLD] > 0.0:
        tw, s_ml, _tf = mixed_layer_state(y, n, par)
        par[P.SW] = s_ml
    else:
        tw = liquidus_temperature_scalar(par[P.SW])
    h = y[2 * n]
    forcing_at(ft, forc, t, 0, par, fv)
    if not (h > 0.0):  # open water: no profiles
        for k in range(n):
            temp[k] = np.nan
            phi[k] = np.nan
            sbr[k] = np.nan
            sal[k] = np.nan
            ra[k] = np.nan
        to = fv[F.TOCEAN]
        return (to if (to == to and par[P.MLD] <= 0.0) else tw), 0.0, 0.0
    ws.temp[:] = np.nan  # diagnostics never depend on earlier calls
    intensive_state(y, n, par, ws)
    dz = h / n
    for k in range(n):
        temp[k] = ws.temp[k]
        phi[k] = ws.phi[k]
        sbr[k] = ws.sbr[k]
        sal[k] = 1000.0 * y[n + k] / (par[P.RHO] * dz)
    hs = snow_depth(fv, y, n)
    _f, _d, ts, mx, _pen = surface_flux(top_effective_temperature(ws.temp[0], ws.temp[1], par[P.TMELT]),
                                          ws.kc[0], dz, fv, par, hs)
    brine_exchange(y, n, par, ws.phi, ws.sbr, ws.wflux, ws.qsink, ws.ra)
    for k in range(n):
        ra[k] = ws.ra[k]
    return ts, mx, hs


@jit
def _run_member(y, tsec, i0, i1, n, par, ft, forc, counters, state, temp, phi, sbr, sal, ra, tsurf, melt, snow):
    """One member over output times i0 -> i1, recording i0 + 1 .. i1. Returns (status, index of a
    failed interval or -1)."""
    ws = new_workspace(n, y.size)
    fv = np.empty(NFORCING)
    for it in range(i0 + 1, i1 + 1):
        st = step_member(y, tsec[it - 1], tsec[it], n, par, ft, forc, counters, ws)
        if st != 0:
            return st, it
        state[it, :] = y
        tsurf[it], melt[it], snow[it] = diagnose_member(y, n, par, ft, forc, tsec[it], ws, fv, temp[it], phi[it],
                                                        sbr[it], sal[it], ra[it])
    return 0, -1


@jit
def run_serial(ys, tsec, i0, i1, n, pars, ft, forc, status, fail, counters, state, temp, phi, sbr, sal, ra, tsurf,
               melt, snow):
    """Advance every member (rows of ``ys``, in place) over output times ``tsec[i0] .. tsec[i1]``
    [s since the model epoch], recording each time after ``i0``.

    Parameters
    ----------
    ys : (members, state) float64;  pars : (members, NPAR);  ft : (ntimes,) forcing times [s];
    forc : (members, NFORCING, ntimes) forcing (``F`` rows; NaN where absent);
    status, fail : (members,) int64 out (``layout.STATUS_*`` and the failed output index);
    counters : (members, 4) int64 accumulated;  state : (members, times, state);
    temp, phi, sbr, sal, ra : (members, times, layers);  tsurf, melt, snow : (members, times).
    """
    for m in range(ys.shape[0]):
        if status[m] != 0:
            continue
        status[m], fail[m] = _run_member(ys[m], tsec, i0, i1, n, pars[m], ft, forc[m], counters[m], state[m], temp[m],
                                         phi[m], sbr[m], sal[m], ra[m], tsurf[m], melt[m], snow[m])


@jit(parallel=True)
def run_parallel(ys, tsec, i0, i1, n, pars, ft, forc, status, fail, counters, state, temp, phi, sbr, sal, ra, tsurf,
                 melt, snow):
    """:func:`run_serial` with the members spread over threads (numba prange): each member runs its
    whole period on one thread, so its numbers are those of :func:`run_serial`."""
    for m in prange(ys.shape[0]):
        if status[m] == 0:
            status[m], fail[m] = _run_member(ys[m], tsec, i0, i1, n, pars[m], ft, forc[m], counters[m], state[m],
                                             temp[m], phi[m], sbr[m], sal[m], ra[m], tsurf[m], melt[m], snow[m])


@jit
def record_initial(ys, tsec, it, n, pars, ft, forc, state, temp, phi, sbr, sal, ra, tsurf, melt, snow):
    """Record the state and diagnostics of every member at output index ``it``."""
    ws = new_workspace(n, ys.shape[1])
    fv = np.empty(NFORCING)
    for m in range(ys.shape[0]):
        state[m, it, :] = ys[m]
        tsurf[m, it], melt[m, it], snow[m, it] = diagnose_member(
            ys[m], n, pars[m], ft, forc[m], tsec[it], ws, fv, temp[m, it], phi[m, it], sbr[m, it], sal[m, it],
            ra[m, it])


@jit
def basal_velocity_at(ys, n, pars, ft, forc, t, out):
    """Basal velocity [m s-1] of every member at t into ``out`` (a diagnostic for tests)."""
    fv = np.empty(NFORCING)
    for m in range(ys.shape[0]):
        par = pars[m]
        forcing_at(ft, forc[m], t, 0, par, fv)
        fw = heat_to_ice(ys[m], n, par) if par[P.MLD] > 0.0 else fv[F.QOCEAN]
        out[m] = basal_velocity_of_state(ys[m], n, par, fw) if ys[m, 2 * n] > 0.0 else 0.0


#: What a run records, member by member: ``status``/``fail`` (members,) int64 (status code and the
#: failed output index, -1 if none), ``counters`` (members, 4) accepted/rejected steps, Newton
#: iterations and implicit stage solves, ``state`` (members, times, state), layer profiles
#: ``temp`` [degC], ``phi`` [1], ``sbr`` and ``sal`` [g kg-1], ``ra`` [1] (members, times, layers),
#: and ``tsurf`` [degC],
#: ``melt`` [W m-2], ``snow`` [m] (members, times).
Records = namedtuple("Records", ["status", "fail", "counters", "state", "temp", "phi", "sbr", "sal", "ra",
                                 "tsurf", "melt", "snow"])


def new_records(members: int, times: int, n: int, state_length: int) -> Records:
    """Empty :data:`Records` of a run (status 0, counters 0)."""
    prof = (members, times, n)
    return Records(np.zeros(members, np.int64), np.full(members, -1, np.int64), np.zeros((members, 4), np.int64),
                   np.empty((members, times, state_length)), np.empty(prof), np.empty(prof), np.empty(prof),
                   np.empty(prof), np.empty(prof), np.empty((members, times)), np.empty((members, times)),
                   np.empty((members, times)))


def record(ys, tsec, it, n, pars, ft, forc, rec: Records) -> None:
    """Record every member at output index ``it`` (:func:`record_initial`)."""
    record_initial(ys, tsec, it, n, pars, ft, forc, rec.state, rec.temp, rec.phi, rec.sbr, rec.sal, rec.ra,
                   rec.tsurf, rec.melt, rec.snow)


def run(ys, tsec, i0, i1, n, pars, ft, forc, rec: Records, parallel: bool) -> None:
    """Advance every member over output times ``tsec[i0] .. tsec[i1]`` into ``rec``, on threads
    (:func:`run_parallel`) or not (:func:`run_serial`); a member whose status is set stays put."""
    kernel = run_parallel if parallel else run_serial
    kernel(ys, tsec, i0, i1, n, pars, ft, forc, rec.status, rec.fail, rec.counters, rec.state, rec.temp, rec.phi,
           rec.sbr, rec.sal, rec.ra, rec.tsurf, rec.melt, rec.snow)
