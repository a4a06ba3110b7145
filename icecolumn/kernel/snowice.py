"""Snow-ice: flooding of the snow base while the hydrostatic freeboard is negative.

The top of the ice moves up at the flooding rate ``af`` (held over a step); the new top material
is snow at the sea-water freezing point with sea water in its pores (liquid fraction
``1 - rho_s/rho``, bulk salinity ``(1 - rho_s/rho) S_w``).  Its enthalpy enters the energy
budget, its salt ``salt_entrained``.  The hydrostatics are in :mod:`icecolumn.buoyancy`.
"""
from __future__ import annotations

from .._jit import jit
from ..buoyancy import flooding_thickness_scalar, freeboard_scalar
from ..phase import liquidus_temperature_scalar
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
