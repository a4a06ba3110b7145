"""Slab ocean mixed layer under the ice (``[ocean] mixed_layer_depth > 0``).

The state carries the slab's enthalpy, mass and salt (slots ``ML_E``, ``ML_W``, ``ML_S``).  Under
ice its tendencies are minus the ice's exchange terms plus the deep heat flux (the forcing's or
configured ocean heat flux), so ice + slab close exactly; the heat into the ice base is the
exchange flux of :func:`icecolumn.ocean.exchange_heat_flux_scalar` and the ocean salinity the ice
sees is the slab's, both held over a step.  The salinity relaxes to ``[ocean] salinity`` over
``[ocean] salinity_restoring_time``.
"""
from __future__ import annotations

from .._jit import jit
from ..ocean import exchange_heat_flux_scalar, mixed_layer_temperature_salinity_scalar
from ..phase import liquidus_temperature_scalar
from .layout import B, F, P


@jit
def mixed_layer_state(y, n, par):
    """Temperature [degC], salinity [g/kg] and freezing temperature [degC] of the mixed layer."""
    nb = 2 * n + 1
    t, s = mixed_layer_temperature_salinity_scalar(y[nb + B.ML_E], y[nb + B.ML_W], y[nb + B.ML_S], par[P.CL])
    return t, s, liquidus_temperature_scalar(s)


@jit
def heat_to_ice(y, n, par):
    """Heat flux from the mixed layer into the ice base [W m-2] (held over a step)."""
    tw, _s, tf = mixed_layer_state(y, n, par)
    return exchange_heat_flux_scalar(tw - tf, par[P.CL])


@jit
def restoring(y, n, par):
    """Salt flux from the deep ocean restoring the mixed-layer salinity to P.SREF [kg m-2 s-1]."""
    tau = par[P.MLTAU]
    if tau <= 0.0:
        return 0.0
    nb = 2 * n + 1
    return (y[nb + B.ML_W] * par[P.SREF] / 1000.0 - y[nb + B.ML_S]) / tau


@jit
def add_mixed_layer(f, y, n, par, fv, r, anet, af, sm, s_top, snowmelt):
    """Tendencies of the mixed layer under ice: exactly what the ice's boundary terms take from
    or give to the ocean, plus the deep heat flux and the salinity restoring."""
    nb = 2 * n + 1
    rho = par[P.RHO]
    deep = fv[F.QOCEAN]
    f[nb + B.E_ML_DEEP] = deep
    f[nb + B.ML_E] = (deep - f[nb + B.E_OCEAN] - f[nb + B.E_WATER] - f[nb + B.E_DRAIN] - f[nb + B.E_FLUSH]
                      - f[nb + B.E_FLOOD_WATER])
    f[nb + B.ML_W] = rho * (anet - r) + par[P.RHOSNOW] * af + snowmelt
    salt_in = -sm + s_top + f[nb + B.S_DRAIN] + f[nb + B.S_FLUSH]
    if af > 0.0:
        salt_in -= af * (rho - par[P.RHOSNOW]) * par[P.SW] / 1000.0
    f[nb + B.ML_S] = salt_in + restoring(y, n, par)
    f[nb + B.S_ML_DEEP] = restoring(y, n, par)
