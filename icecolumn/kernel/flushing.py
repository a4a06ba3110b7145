"""Flushing: surface melt water percolating down through permeable ice displaces brine.

A fraction of the surface melt water percolates down through the ice when every layer is
permeable, displacing brine volume for volume (upwind, from above); fresh melt water (0 degC,
H = 0, S = 0) enters at the top and brine leaves at the base.  The structure follows the flushing
parameterisations that route a fraction of surface melt through permeable ice (e.g.
Vancoppenolle et al. 2007, JGR 112; from memory); the fraction is this project's setting
(``[drainage] flushing_fraction``).
"""
from __future__ import annotations

from .._jit import jit
from ..drainage import percolation_gate_scalar
from .layout import B, P


@jit
def add_flushing(n, par, a, temp, phi, sbr, f):
    """Flushing fluxes of surface melt rate ``a`` [m s-1] into ``f`` (layers and budget slots)."""
    phimin = 1.0
    for k in range(n):
        if phi[k] < phimin:
            phimin = phi[k]
    gate = percolation_gate_scalar(phimin, par[P.DPHIC], par[P.DPHIW])
    if gate <= 0.0:
        return
    w = par[P.FLUSH] * a * gate  # downward volume flux [m s-1]
    rho = par[P.RHO]
    cw = rho / 1000.0
    rcl = rho * par[P.CL]
    for j in range(1, n):
        us = w * cw * sbr[j - 1]
        ue = w * rcl * temp[j - 1]
        f[n + j - 1] -= us
        f[n + j] += us
        f[j - 1] -= ue
        f[j] += ue
    s_out = w * cw * sbr[n - 1]
    e_out = w * rcl * temp[n - 1]
    f[2 * n - 1] -= s_out
    f[n - 1] -= e_out
    nb = 2 * n + 1
    f[nb + B.S_FLUSH] = s_out
    f[nb + B.E_FLUSH] = -e_out
