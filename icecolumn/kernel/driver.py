"""Entry points of the compiled kernel: advance a batch of members, and diagnose their state."""
from __future__ import annotations

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
def advance(ys, t0, t1, n, pars, ft, forc, status, counters):
    """Advance every member (rows of ``ys``) from t0 to t1 [s]; each member on its own.

    Parameters
    ----------
    ys : (members, state) float64, modified in place
    pars : (members, NPAR) float64
    ft : (ntimes,) forcing times [s since the model epoch]
    forc : (members, NFORCING, ntimes) forcing values (``F`` rows; NaN where absent)
    status : (members,) int64 out (``layout.STATUS_*``); counters : (members, 3) int64 accumulated
    """
    for mbr in range(ys.shape[0]):
        if status[mbr] != 0:
            continue
        status[mbr] = step_member(ys[mbr], t0, t1, n, pars[mbr], ft, forc[mbr], counters[mbr])


@jit(parallel=True)
def advance_parallel(ys, t0, t1, n, pars, ft, forc, status, counters):
    """:func:`advance` with the members spread over threads (numba prange).

    Each member is integrated by the same serial code on its own rows, so its numbers are
    bitwise those of :func:`advance`; only the wall time changes.
    """
    for mbr in prange(ys.shape[0]):
        if status[mbr] == 0:
            status[mbr] = step_member(ys[mbr], t0, t1, n, pars[mbr], ft, forc[mbr], counters[mbr])


@jit
def diagnose(ys, n, pars, ft, forc, t, temp, phi, sbr, sal, kc, tsurf, hdot, ra, wbase, melt, snow):
    """Layer temperature, liquid fraction, brine and bulk salinity, conductivity, Rayleigh
    number; surface temperature, basal velocity, drained brine flux, unused melt energy flux
    and snow thickness of every member at t."""
    nm = ys.shape[0]
    ws = new_workspace(n, ys.shape[1])
    fv = np.empty(NFORCING)
    for mbr in range(nm):
        y = ys[mbr]
        par = pars[mbr].copy()
        if par[P.MLD] > 0.0:
            tw, s_ml, _tf = mixed_layer_state(y, n, par)
            par[P.SW] = s_ml
        else:
            tw = liquidus_temperature_scalar(par[P.SW])
        h = y[2 * n]
        forcing_at(ft, forc[mbr], t, 0, par, fv)
        if not (h > 0.0):  # open water: no profiles
            for k in range(n):
                temp[mbr, k] = np.nan
                phi[mbr, k] = np.nan
                sbr[mbr, k] = np.nan
                sal[mbr, k] = np.nan
                kc[mbr, k] = np.nan
                ra[mbr, k] = np.nan
            to = fv[F.TOCEAN]
            tsurf[mbr] = to if (to == to and par[P.MLD] <= 0.0) else tw
            melt[mbr] = 0.0
            snow[mbr] = 0.0
            hdot[mbr] = 0.0
            wbase[mbr] = 0.0
            continue
        ws.temp[:] = np.nan  # diagnostics never depend on earlier calls
        intensive_state(y, n, par, ws)
        dz = h / n
        for k in range(n):
            temp[mbr, k] = ws.temp[k]
            phi[mbr, k] = ws.phi[k]
            sbr[mbr, k] = ws.sbr[k]
            kc[mbr, k] = ws.kc[k]
            sal[mbr, k] = 1000.0 * y[n + k] / (par[P.RHO] * dz)
        hs = snow_depth(fv, y, n)
        _f, _d, ts, mx, _pen = surface_flux(top_effective_temperature(ws.temp[0], ws.temp[1], par[P.TMELT]),
                                              ws.kc[0], dz, fv, par, hs)
        tsurf[mbr] = ts
        melt[mbr] = mx  # melt energy at the surface (snow first, then ice)
        snow[mbr] = hs
        fwb = heat_to_ice(y, n, par) if par[P.MLD] > 0.0 else fv[F.QOCEAN]
        hdot[mbr] = basal_velocity_of_state(y, n, par, fwb)
        brine_exchange(y, n, par, ws.phi, ws.sbr, ws.wflux, ws.qsink, ws.ra)
        for k in range(n):
            ra[mbr, k] = ws.ra[k]
        wbase[mbr] = ws.wflux[n]
