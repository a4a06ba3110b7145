"""Entry points of the compiled kernel: run a batch of members over output times, recording each.

:func:`run_serial` and :func:`run_parallel` (members over threads) advance every member over the
output times ``tsec[i0] .. tsec[i1]`` and record, at each, the state and the diagnostics of
:func:`.record.diagnose_member` (through :func:`.record.record_row`); :func:`record_initial`
records the first time.  Each member is integrated by the same serial code on its own rows, so
its numbers are the same whichever entry point and batch ran it.
"""
from __future__ import annotations

from collections import namedtuple

import numpy as np
from numba import prange

from .._jit import jit
from .base import basal_velocity_of_state
from .inputs import forcing_at
from .layout import F, NFORCING, P
from .mixedlayer import heat_to_ice
from .record import record_row
from .stepper import integrate_member
from .workspace import new_workspace, reset_workspace


@jit
def _run_member(y, tsec, i0, i1, n, par, ft, forc, counters, carry_t, carry_j, guess, rows):
    """One member over output times i0 -> i1, recording i0 + 1 .. i1 (and any later time the last
    step ran across). Returns (status, index of a failed interval or -1).

    Interpolated records: the integrator goes on from where the previous call left it, its time
    ``carry_t[0]``, next output index ``carry_j[0]`` (-1: start at ``tsec[i0]``) and first guesses
    ``guess`` of the enthalpy inversion, so a run cut into pieces (for a progress bar) takes the
    same steps as the run done in one call.  Step ends (``[solver] output_times = step_ends``):
    each output interval starts afresh from the recorded state (bitwise restart).
    """
    ws = new_workspace(n, y.size)
    wsd = new_workspace(n, y.size)
    fv = np.empty(NFORCING)
    if par[P.STEPENDS] > 0.0:
        for it in range(i0 + 1, i1 + 1):
            reset_workspace(ws)  # the interval depends on the recorded state only
            st, _t, _j = integrate_member(y, tsec[it - 1], tsec, it, it, tsec[it], n, par, ft, forc, counters, ws,
                                          wsd, fv, rows)
            if st != 0:
                return st, it
        return 0, -1
    if carry_j[0] < 0:
        t = tsec[i0]
        j = i0 + 1
    else:
        t = carry_t[0]
        j = carry_j[0]
        ws.temp[:] = guess
    st, t, j = integrate_member(y, t, tsec, j, i1, tsec[tsec.size - 1], n, par, ft, forc, counters, ws, wsd, fv,
                                rows)
    carry_t[0] = t
    carry_j[0] = j
    guess[:] = ws.temp
    if st != 0:
        return st, j
    return 0, -1


@jit
def run_serial(ys, tsec, i0, i1, n, pars, ft, forc, status, fail, counters, carry_t, carry_j, guess, state, temp,
               phi, sbr, sal, ra, tsurf, melt, snow):
    """Advance every member (rows of ``ys``, in place) over output times ``tsec[i0] .. tsec[i1]``
    [s since the model epoch], recording each time after ``i0``.

    Parameters
    ----------
    ys : (members, state) float64, the integrator's states;  pars : (members, NPAR);
    ft : (ntimes,) forcing times [s];
    forc : (members, NFORCING, ntimes) forcing (``F`` rows; NaN where absent);
    status, fail : (members,) int64 out (``layout.STATUS_*`` and the failed output index);
    counters : (members, 4) int64 accumulated;
    carry_t (members,) float64, carry_j (members,) int64 (-1 before the first call), guess
    (members, layers): where each member's integrator stands between calls;
    state : (members, times, state);
    temp, phi, sbr, sal, ra : (members, times, layers);  tsurf, melt, snow : (members, times).
    """
    for m in range(ys.shape[0]):
        if status[m] != 0:
            continue
        status[m], fail[m] = _run_member(ys[m], tsec, i0, i1, n, pars[m], ft, forc[m], counters[m],
                                         carry_t[m:m + 1], carry_j[m:m + 1], guess[m],
                                         (state[m], temp[m], phi[m], sbr[m], sal[m], ra[m], tsurf[m], melt[m],
                                          snow[m]))


@jit(parallel=True)
def run_parallel(ys, tsec, i0, i1, n, pars, ft, forc, status, fail, counters, carry_t, carry_j, guess, state, temp,
                 phi, sbr, sal, ra, tsurf, melt, snow):
    """:func:`run_serial` with the members spread over threads (numba prange): each member runs its
    whole period on one thread, so its numbers are those of :func:`run_serial`."""
    for m in prange(ys.shape[0]):
        if status[m] == 0:
            status[m], fail[m] = _run_member(ys[m], tsec, i0, i1, n, pars[m], ft, forc[m], counters[m],
                                             carry_t[m:m + 1], carry_j[m:m + 1], guess[m],
                                             (state[m], temp[m], phi[m], sbr[m], sal[m], ra[m], tsurf[m], melt[m],
                                              snow[m]))


@jit
def record_initial(ys, tsec, it, n, pars, ft, forc, state, temp, phi, sbr, sal, ra, tsurf, melt, snow):
    """Record the state and diagnostics of every member at output index ``it``."""
    ws = new_workspace(n, ys.shape[1])
    fv = np.empty(NFORCING)
    for m in range(ys.shape[0]):
        record_row(ys[m], it, n, pars[m], ft, forc[m], tsec[it], ws, fv,
                   (state[m], temp[m], phi[m], sbr[m], sal[m], ra[m], tsurf[m], melt[m], snow[m]))


@jit
def basal_velocity_at(ys, n, pars, ft, forc, t, out):
    """Basal velocity [m s-1] of every member at t into ``out`` (a diagnostic for tests)."""
    fv = np.empty(NFORCING)
    for m in range(ys.shape[0]):
        par = pars[m]
        forcing_at(ft, forc[m], t, np.int64(0), par, fv)
        fw = heat_to_ice(ys[m], n, par) if par[P.MLD] > 0.0 else fv[F.QOCEAN]
        out[m] = basal_velocity_of_state(ys[m], n, par, fw) if ys[m, 2 * n] > 0.0 else 0.0


#: What a run records, member by member: ``status``/``fail`` (members,) int64 (status code and the
#: failed output index, -1 if none), ``counters`` (members, 4) accepted/rejected steps, Newton
#: iterations and implicit stage solves, ``state`` (members, times, state), layer profiles
#: ``temp`` [degC], ``phi`` [1], ``sbr`` and ``sal`` [g kg-1], ``ra`` [1] (members, times, layers),
#: and ``tsurf`` [degC],
#: ``melt`` [W m-2], ``snow`` [m] (members, times).
Records = namedtuple("Records", ["status", "fail", "counters", "carry_t", "carry_j", "guess", "state", "temp", "phi",
                                 "sbr", "sal", "ra", "tsurf", "melt", "snow"])


def new_records(members: int, times: int, n: int, state_length: int) -> Records:
    """Empty :data:`Records` of a run (status 0, counters 0)."""
    prof = (members, times, n)
    return Records(np.zeros(members, np.int64), np.full(members, -1, np.int64), np.zeros((members, 4), np.int64),
                   np.zeros(members), np.full(members, -1, np.int64), np.full((members, n), np.nan),
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
    kernel(ys, tsec, i0, i1, n, pars, ft, forc, rec.status, rec.fail, rec.counters, rec.carry_t, rec.carry_j,
           rec.guess, rec.state, rec.temp, rec.phi, rec.sbr, rec.sal, rec.ra, rec.tsurf, rec.melt, rec.snow)
