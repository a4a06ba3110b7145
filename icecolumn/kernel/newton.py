r"""Newton solve of one implicit stage, ``y - a_dt f(y) = base``, with the basal velocity as an unknown.

The Jacobian is block-tridiagonal (2x2 blocks for enthalpy and salt of each layer,
:func:`.tendency.jacobian`) bordered by two columns (thickness :func:`.tendency.dh_column` and
basal velocity :func:`.tendency.dr_column`) and two rows (the thickness equation and the basal
heat balance :func:`.base.basal_velocity`); it is solved in O(N) by the block Thomas algorithm
(:func:`.linalg.block_solve` for three right-hand sides) and a 2x2 Schur complement.
"""
from __future__ import annotations

from .._jit import jit
from .base import basal_velocity, basal_velocity_of_state
from .linalg import block_solve
from .tendency import dh_column, dr_column, error_norm, jacobian, rhs

#: Newton converges when the scaled norm of its update is below this (in units of the tolerance).
NEWTON_TOLERANCE = 0.02


@jit
def stage_solve(y, base, a_dt, n, par, fv, fw, f, ws, maxit, a_in, af):
    """Solve y - a_dt f(y) = base for the stage value y (in place). Returns (ok, iterations)."""
    ncell = 2 * n
    rhsv = ws.rhs
    ftmp = ws.ftmp
    col_r = ws.col_r
    r = basal_velocity_of_state(y, n, par, fw)
    prev = 1e300
    for it in range(maxit):
        h = y[2 * n]
        if not (h > 0.0):
            return False, it
        _ts, df0, amelt, g0 = rhs(y, r, n, par, fv, fw, f, ws, True, a_in, af, True)
        atop = amelt - af
        # residuals (negated, as Newton rhs)
        for i in range(ncell):
            rhsv[0, i] = -(y[i] - base[i] - a_dt * f[i])
        res_h = -(y[2 * n] - base[2 * n] - a_dt * (r - atop))
        hd, dhd_de, dhd_dm, dhd_de1, dhd_dm1, dhd_dh = basal_velocity(
            y, n, par, fw, ws.temp[n - 1], ws.temp[n - 2], ws.kc[n - 1], ws.dtde[n - 1], ws.dtdm[n - 1],
            ws.dtde[n - 2], ws.dtdm[n - 2])
        res_r = -(r - hd)
        # border column for h: analytic d f / d h at fixed contents and r (conduction,
        # advection and melt terms through the layer thickness h/n; the small dependence of
        # conductivity and drainage on h is left out, as for the cell blocks)
        dh_column(y, r, atop, amelt, n, par, g0, ws, df0, ftmp)
        for i in range(ncell):
            rhsv[1, i] = -a_dt * ftmp[i]  # B column (h)
        dr_column(y, r, atop, n, par, ws, col_r)
        for i in range(ncell):
            rhsv[2, i] = -a_dt * col_r[i]  # B column (r)
        jacobian(y, r, atop, amelt, n, df0, a_dt, par, ws)
        block_solve(n, ws.lo, ws.di, ws.up, rhsv, 3, ws.work_m, ws.work_g)
        # Schur complement: unknowns (dh, dr); rows h: dh - a_dt dr = res_h
        # row r: -sum_i dhd_di dx_i - dhd_dh dh + dr = res_r over the two bottom layers' contents,
        # with dx = X1 - X2h dh - X2r dr from the block solve
        s00 = 1.0
        s01 = -a_dt
        s10 = -dhd_dh
        s11 = 1.0
        b0 = res_h
        b1 = res_r
        for idx, dd in ((n - 1, dhd_de), (2 * n - 1, dhd_dm), (n - 2, dhd_de1), (2 * n - 2, dhd_dm1)):
            s10 += dd * rhsv[1, idx]
            s11 += dd * rhsv[2, idx]
            b1 += dd * rhsv[0, idx]
        det = s00 * s11 - s01 * s10
        ddh = (b0 * s11 - s01 * b1) / det
        ddr = (s00 * b1 - s10 * b0) / det
        for i in range(ncell):
            ftmp[i] = rhsv[0, i] - rhsv[1, i] * ddh - rhsv[2, i] * ddr
        ftmp[2 * n] = ddh
        nrm = error_norm(ftmp, y, n, par)
        for i in range(ncell):
            y[i] += ftmp[i]
        y[2 * n] += ddh
        r += ddr
        if not (nrm == nrm):
            return False, it + 1
        if nrm < NEWTON_TOLERANCE:
            return True, it + 1
        if it >= 2 and nrm > 0.9 * prev:
            return False, it + 1
        prev = nrm
    return False, maxit
