"""Snow-ice: flooding of the snow base while the hydrostatic freeboard is negative.

The top of the ice moves up at the flooding rate ``af`` (held over a step); the new top material
is snow at the sea-water freezing point with sea water in its pores (liquid fraction
``1 - rho_s/rho``, bulk salinity ``(1 - rho_s/rho) S_w``).  Its enthalpy enters the energy
budget, its salt ``salt_entrained``.  The hydrostatics are in :mod:`icecolumn.buoyancy`.

Snow-ice brine exchange: the snow-ice (the top ``snow_ice_growth - surface_melt`` of the ice, which
grows at the top) stays connected to the ocean through the pathways that flooded it; while it is
permeable its brine is exchanged with sea water at ``q_k = gate(phi_k) phi_k dz_k / tau`` [m s-1]
(brine out at the layer's temperature and brine salinity, the same volume of sea water in at its
freezing point) while the brine is denser than sea water (brine salinity above the ocean's; a
gravity-driven exchange stops when melt water makes the brine lighter), so a layer's salt relaxes as ``dm/dt = -(m/tau)(1 - S_w/S_br)``: nothing while
the slush is at the freezing point, then the brine concentrated by freezing drains, until the
layer falls below the percolation threshold.  (A model of this project; Eicken et al. 1995 and
Jeffries et al. 1997 describe snow-ice desalinating as flooded slush refreezes; from memory.)  The
exchange enters the drainage budget slots (``salt_drainage``, ``energy_drainage``) and the
diagnostic ``salt_snow_ice_drainage``.
"""
from __future__ import annotations

import numpy as np

from .._jit import jit
from ..buoyancy import flooding_thickness_scalar, freeboard_scalar
from ..drainage import percolation_gate_derivative_scalar, percolation_gate_scalar
from ..phase import brine_salinity_derivative_scalar, liquidus_temperature_scalar
from .layout import B, P
from .top import snow_depth


@jit
def snow_ice_content(par):
    """Enthalpy [J m-3] and salt [kg m-3] of snow-ice: snow (density rho_s, taken at the sea
    water freezing point) whose pores are filled with sea water, liquid fraction 1 - rho_s/rho.

    Returns (H, salt, H of the snow part, H of the sea water part)."""
    rho = par[P.RHO]
    rs = par[P.RHOSNOW]
    tf = liquidus_temperature_scalar(par[P.SW])
    h_snow = rs * (par[P.CS] * tf - par[P.L])
    h_water = (rho - rs) * par[P.CL] * tf
    return h_snow + h_water, (rho - rs) * par[P.SW] / 1000.0, h_snow, h_water


@jit
def flooding_rate(y, n, par, fv, dt):
    """Rate of snow-ice formation [m s-1] held over a step of length ``dt`` [s].

    The thickness that restores zero freeboard (:func:`icecolumn.buoyancy.flooding_thickness_scalar`)
    forms over ``[snow] flooding_timescale``, and never more than that within one step.
    """
    tau = par[P.FLOODTAU]
    if tau <= 0.0:
        return 0.0
    hs = snow_depth(fv, y, n)
    if hs <= 0.0:
        return 0.0
    fb = freeboard_scalar(y[2 * n], hs, par[P.RHO], par[P.RHOSNOW])
    if fb >= 0.0:
        return 0.0
    d = flooding_thickness_scalar(fb, par[P.RHO], par[P.RHOSNOW])
    rate = d / tau
    if rate * dt > d:
        rate = d / dt
    return rate


@jit
def add_snow_ice(f, n, par, af):
    """Snow-ice entering at the top at ``af`` [m s-1]: its enthalpy and salt into the top layer,
    and the budget slots."""
    if af > 0.0:
        nb = 2 * n + 1
        hsi, msi, hsnow, hwater = snow_ice_content(par)
        f[0] += af * hsi
        f[n] += af * msi
        f[nb + B.E_FLOOD_SNOW] = af * hsnow
        f[nb + B.E_FLOOD_WATER] = af * hwater
        f[nb + B.S_ENTRAIN] += af * msi
        f[nb + B.H_SNOWICE] = af


@jit
def snow_ice_fraction(y, n, k):
    """Fraction [1] of layer ``k`` (0 at the top) that is snow-ice: the top
    ``snow_ice_growth - surface_melt`` of the ice, never more than the thickness."""
    nb = 2 * n + 1
    h = y[2 * n]
    d = y[nb + B.H_SNOWICE] - y[nb + B.H_SURFMELT]
    if d <= 0.0 or h <= 0.0:
        return 0.0
    dz = h / n
    top = k * dz
    if d >= top + dz:
        return 1.0
    if d <= top:
        return 0.0
    return (d - top) / dz


@jit
def _snow_ice_fraction_dh(y, n, k):
    """d :func:`snow_ice_fraction` / d h [m-1] (layers move with h; the snow-ice depth does not)."""
    nb = 2 * n + 1
    h = y[2 * n]
    d = y[nb + B.H_SNOWICE] - y[nb + B.H_SURFMELT]
    if d <= 0.0 or h <= 0.0:
        return 0.0
    dz = h / n
    top = k * dz
    if d >= top + dz or d <= top:
        return 0.0
    return -d * n / (h * h)


@jit
def snow_ice_exchange_layer(y, n, k, par, phi, temp, sbr, dtde, dtdm, want_derivatives):
    """Salt and enthalpy [kg m-2 s-1, W m-2] the snow-ice brine exchange removes from layer ``k``,
    and (if ``want_derivatives``) their derivatives with respect to the layer's enthalpy content
    E [J m-2], salt content M [kg m-2] and the thickness h [m] at fixed contents.

    With the brine volume per area ``V = phi dz = M / (c_w S_br)`` (``S = phi S_br``, salt-free
    ice) and the exchange coefficient ``A = w G(phi) / tau`` (``w`` the snow-ice fraction of the
    layer, ``G`` the percolation gate): salt ``A M (1 - S_w / S_br)``, enthalpy
    ``A (rho c_l / c_w) M (T - T_f) / S_br`` (brine out at T, sea water in at its freezing point
    T_f), while ``S_br > S_w`` (zero otherwise).  Returns
    ``(ds, de, ds_E, ds_M, ds_h, de_E, de_M, de_h)``.
    """
    z = 0.0
    tau = par[P.SITAU]
    w = snow_ice_fraction(y, n, k)
    sw = par[P.SW]
    if tau <= 0.0 or w <= 0.0 or sbr[k] <= sw:
        return z, z, z, z, z, z, z, z
    gate = percolation_gate_scalar(phi[k], par[P.DPHIC], par[P.DPHIW])
    if gate <= 0.0:
        return z, z, z, z, z, z, z, z
    rho = par[P.RHO]
    rcl = rho * par[P.CL]
    cw = rho / 1000.0
    tf = liquidus_temperature_scalar(sw)
    h = y[2 * n]
    dz = h / n
    big_m = y[n + k]
    u = sbr[k]
    t = temp[k]
    a = w * gate / tau
    ds = a * big_m * (1.0 - sw / u)
    de = a * (rcl / cw) * big_m * (t - tf) / u
    if not want_derivatives:
        return ds, de, z, z, z, z, z, z
    # temperature derivatives at fixed contents (the intensive state thins as h grows)
    t_e = dtde[k]
    t_m = dtdm[k]
    t_h = -(t_e * y[k] + t_m * big_m) / h
    if phi[k] >= 1.0:  # liquid: S_br = S = M / (c_w dz), gate 1
        u_e, u_m, u_h = 0.0, 1.0 / (cw * dz), -u / h
        p_e, p_m, p_h = 0.0, 0.0, 0.0
    else:  # mush: S_br on the liquidus, phi = M / (c_w dz S_br)
        du = brine_salinity_derivative_scalar(t)
        u_e, u_m, u_h = du * t_e, du * t_m, du * t_h
        p_e = -phi[k] * u_e / u
        p_m = phi[k] * (1.0 / big_m - u_m / u) if big_m > 0.0 else 0.0
        p_h = -phi[k] * (1.0 / h + u_h / u)
    gd = percolation_gate_derivative_scalar(phi[k], par[P.DPHIC], par[P.DPHIW])
    a_e = w * gd * p_e / tau
    a_m = w * gd * p_m / tau
    a_h = (w * gd * p_h + gate * _snow_ice_fraction_dh(y, n, k)) / tau
    s_fac = 1.0 - sw / u
    ds_e = a_e * big_m * s_fac + a * big_m * sw * u_e / (u * u)
    ds_m = a_m * big_m * s_fac + a * (s_fac + big_m * sw * u_m / (u * u))
    ds_h = a_h * big_m * s_fac + a * big_m * sw * u_h / (u * u)
    c = rcl / cw
    pp = big_m * (t - tf) / u
    de_e = c * (a_e * pp + a * big_m * (t_e / u - (t - tf) * u_e / (u * u)))
    de_m = c * (a_m * pp + a * ((t - tf) / u + big_m * (t_m / u - (t - tf) * u_m / (u * u))))
    de_h = c * (a_h * pp + a * big_m * (t_h / u - (t - tf) * u_h / (u * u)))
    return ds, de, ds_e, ds_m, ds_h, de_e, de_m, de_h


@jit
def add_snow_ice_drainage(f, y, n, par, phi, temp, sbr, dtde, dtdm):
    """Brine exchange of snow-ice with the ocean (see the module docstring): layer sinks and budgets."""
    nb = 2 * n + 1
    sout = 0.0
    eout = 0.0
    for k in range(n):
        if snow_ice_fraction(y, n, k) <= 0.0:
            break
        ds, de, _a, _b, _c, _d, _e, _f = snow_ice_exchange_layer(y, n, k, par, phi, temp, sbr, dtde, dtdm,
                                                                 np.bool_(False))
        f[n + k] -= ds
        f[k] -= de
        sout += ds
        eout += de
    f[nb + B.S_DRAIN] += sout
    f[nb + B.E_DRAIN] -= eout
    f[nb + B.S_SIDRAIN] += sout


@jit
def snow_ice_drainage_blocks(y, n, par, phi, temp, sbr, dtde, dtdm, di):
    """Diagonal Jacobian blocks (d f / d cells) of :func:`add_snow_ice_drainage`, exact."""
    for k in range(n):
        if snow_ice_fraction(y, n, k) <= 0.0:
            break
        _s, _e, ds_e, ds_m, _sh, de_e, de_m, _eh = snow_ice_exchange_layer(y, n, k, par, phi, temp, sbr, dtde,
                                                                          dtdm, np.bool_(True))
        di[k, 0] -= de_e
        di[k, 1] -= de_m
        di[k, 2] -= ds_e
        di[k, 3] -= ds_m


@jit
def add_snow_ice_drainage_dh_column(col, y, n, par, phi, temp, sbr, dtde, dtdm):
    """d f / d h at fixed contents of :func:`add_snow_ice_drainage`, exact."""
    for k in range(n):
        if snow_ice_fraction(y, n, k) <= 0.0:
            break
        _s, _e, _se, _sm, ds_h, _ee, _em, de_h = snow_ice_exchange_layer(y, n, k, par, phi, temp, sbr, dtde,
                                                                        dtdm, np.bool_(True))
        col[k] -= de_h
        col[n + k] -= ds_h
