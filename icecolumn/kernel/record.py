"""What a member's record at an output time holds: its state and the diagnostics computed from it.

Both are functions of the recorded state alone (the enthalpy inversion starts without a first
guess, in a workspace of its own), so a record never depends on the integrator's history.
"""
from __future__ import annotations

import numpy as np

from .._jit import jit
from ..phase import liquidus_temperature_scalar
from .gravity_drainage import brine_exchange
from .inputs import forcing_at
from .layout import F, P
from .mixedlayer import mixed_layer_state
from .tendency import intensive_state
from .top import snow_depth, surface_flux, top_effective_temperature


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
    forcing_at(ft, forc, t, np.int64(0), par, fv)
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
def record_row(y, j, n, par, ft, forc, t, wsd, fv, rows):
    """Record the state ``y`` at time t [s] as output index ``j`` of one member's rows
    ``rows = (state, temp, phi, sbr, sal, ra, tsurf, melt, snow)``; ``wsd`` is a workspace used
    for the diagnostics only."""
    rows[0][j, :] = y
    rows[6][j], rows[7][j], rows[8][j] = diagnose_member(y, n, par, ft, forc, t, wsd, fv, rows[1][j], rows[2][j],
                                                         rows[3][j], rows[4][j], rows[5][j])
