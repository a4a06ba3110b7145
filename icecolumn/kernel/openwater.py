"""Events of the ice cover: complete melt-out, open water, and new ice.

An accepted step that leaves melting ice thinner than :data:`H_OUT` hands the remaining
enthalpy, salt, mass and snow to the ocean (:func:`melt_out`) and sets ``h = 0``.  With ``h = 0``
the stepper takes explicit Heun steps of a 0-d budget (:func:`open_water_step`): heat lost by
water at its freezing point collects in the ``FRAZIL`` slot (it melts back first if the water
gains heat); once it equals :func:`new_ice_heat`, a layer of ``[ocean] new_ice_thickness`` forms
(:func:`form_new_ice`).
"""
from __future__ import annotations

from .._jit import jit
from ..phase import liquidus_temperature_scalar
from ..surface import net_water_flux_scalar, transfer_coefficient_scalar
from .inputs import atmosphere, forcing_at, hold_rates_over_step
from .layout import B, F, P
from .mixedlayer import mixed_layer_state, restoring

#: Melting ice thinner than this melts out completely (open water). [m]
H_OUT = 0.01
#: Open water warmer than its freezing point by less than this [K] counts as at freezing when an
#: ``ocean_temperature`` forcing decides refreeze (instrument resolution; common practice, no source).
FREEZING_TOLERANCE = 0.02
#: Solid fraction of the new ice formed in open water (model choice, no source): the new layer
#: enters with the ocean's salinity and half of its pore-free latent heat removed.
NEW_ICE_SOLID_FRACTION = 0.5
#: Longest time step in open water [s] (explicit Heun steps of a 0-d budget).
OPEN_WATER_STEP = 3600.0


@jit
def melt_out(y, n, par):
    """The last ice (thinner than H_OUT and melting) goes to the ocean: its enthalpy, salt,
    mass and any snow on it; the column becomes open water (h = 0)."""
    nb = 2 * n + 1
    e = 0.0
    m = 0.0
    for k in range(n):
        e += y[k]
        m += y[n + k]
        y[k] = 0.0
        y[n + k] = 0.0
    h = y[2 * n]
    hs = y[nb + B.SNOW]  # (may be a round-off below 0: moved as it is, so mass stays exact)
    y[nb + B.E_MELTOUT] -= e
    y[nb + B.S_MELT] += m
    y[nb + B.H_BMELT] += h
    if par[P.MLD] > 0.0:
        y[nb + B.ML_E] += e
        y[nb + B.ML_S] += m
        y[nb + B.ML_W] += par[P.RHO] * h + par[P.RHOSNOW] * hs
    y[nb + B.SNOW] = 0.0
    y[2 * n] = 0.0


@jit
def new_ice_heat(par):
    """Heat [J m-2] open water at its freezing point must lose to form the new ice layer of
    thickness ``P.H0``: h0 (H_water - H_new), H_new the enthalpy of ice of the ocean's salinity
    with the solid fraction NEW_ICE_SOLID_FRACTION (brine salinity S_w / (1 - solid fraction))."""
    rho = par[P.RHO]
    sw = par[P.SW]
    tf = liquidus_temperature_scalar(sw)
    x = NEW_ICE_SOLID_FRACTION
    tb = liquidus_temperature_scalar(sw / (1.0 - x))
    h_new = rho * (((1.0 - x) * par[P.CL] + x * par[P.CS]) * tb - x * par[P.L])
    return par[P.H0] * (rho * par[P.CL] * tf - h_new)


@jit
def form_new_ice(y, n, par):
    """Open water that has lost the heat of :func:`new_ice_heat` freezes: a layer of P.H0 of
    sea water (its enthalpy and salt taken from the ocean) minus the heat already lost."""
    nb = 2 * n + 1
    rho = par[P.RHO]
    h0 = par[P.H0]
    tf = liquidus_temperature_scalar(par[P.SW])
    ew = rho * par[P.CL] * tf * h0
    mwt = rho * par[P.SW] / 1000.0 * h0
    e_new = ew + y[nb + B.FRAZIL]
    for k in range(n):
        y[k] = e_new / n
        y[n + k] = mwt / n
    y[2 * n] = h0
    y[nb + B.FRAZIL] = 0.0
    y[nb + B.E_WATER] += ew
    y[nb + B.S_ENTRAIN] += mwt
    y[nb + B.H_GROW] += h0
    if par[P.MLD] > 0.0:
        y[nb + B.ML_E] -= ew
        y[nb + B.ML_W] -= rho * h0
        y[nb + B.ML_S] -= mwt


@jit
def open_water_rates(y, n, par, fv, g):
    """Tendencies of the state slots over open water (g has the state's length).

    With a mixed layer, its temperature follows the open-water surface flux and the deep ocean
    heat flux until it reaches its freezing point; then (and always without a mixed layer, the
    water being at its freezing point, or at the forcing's ocean_temperature) heat lost at the
    surface collects in the FRAZIL slot until it is enough to form new ice.
    """
    nb = 2 * n + 1
    for i in range(g.size):
        g[i] = 0.0
    ta = fv[F.AIR]
    sf = fv[F.SNOWFALL]
    sf = sf if sf == sf else 0.0
    deep = fv[F.QOCEAN]
    if par[P.MLD] > 0.0:
        tw, _s, tf = mixed_layer_state(y, n, par)
    else:
        tf = liquidus_temperature_scalar(par[P.SW])
        tw = tf
    if int(par[P.SURF]) == 2:
        sw, lw, wind, qa = atmosphere(fv, par)
        ch = transfer_coefficient_scalar(tw, ta, wind, par[P.Z0], par[P.ZWIND], par[P.ZAIR], int(par[P.STAB]))
        fs = net_water_flux_scalar(tw, ta, sw, lw, wind, qa, ch, fv[F.SENS], fv[F.LAT])
    else:
        fs = par[P.HTC] * (ta - tw)
    collecting = y[nb + B.FRAZIL] < 0.0  # frazil not yet new ice: it takes the heat (either sign) first
    if par[P.MLD] > 0.0:
        g[nb + B.ML_W] = sf
        g[nb + B.SNOWFALL] = sf
        g[nb + B.ML_S] = restoring(y, n, par)
        g[nb + B.S_ML_DEEP] = g[nb + B.ML_S]
        g[nb + B.E_ML_DEEP] = deep
        if collecting or (tw <= tf and fs + deep < 0.0):
            g[nb + B.FRAZIL] = fs + deep
            g[nb + B.E_SURF] = fs
            g[nb + B.E_OCEAN] = deep  # passed on by the mixed layer at its freezing point
        else:
            g[nb + B.ML_E] = fs + deep
            g[nb + B.E_ML_SURF] = fs
        return
    to = fv[F.TOCEAN]
    if not collecting and to == to and to > tf + FREEZING_TOLERANCE:
        return  # the ocean is warmer than its freezing point: nothing freezes
    if collecting or fs + deep < 0.0:
        g[nb + B.FRAZIL] = fs + deep
        g[nb + B.E_SURF] = fs
        g[nb + B.E_OCEAN] = deep


@jit
def open_water_step(y, t, dt, n, par, ft, forc, idx, fv, g1, g2, ytmp):
    """One explicit Heun step of the open-water budgets; returns the forcing index hint."""
    idx = forcing_at(ft, forc, t, idx, par, fv)
    hold_rates_over_step(ft, forc, t, t + dt, idx, fv, fv, fv)
    open_water_rates(y, n, par, fv, g1)
    for i in range(y.size):
        ytmp[i] = y[i] + dt * g1[i]
    forcing_at(ft, forc, t + dt, idx, par, fv)
    hold_rates_over_step(ft, forc, t, t + dt, idx, fv, fv, fv)
    open_water_rates(ytmp, n, par, fv, g2)
    for i in range(y.size):
        y[i] = y[i] + 0.5 * dt * (g1[i] + g2[i])
    nb = 2 * n + 1
    mixed = par[P.MLD] > 0.0
    if mixed:
        tw, _s, tf = mixed_layer_state(y, n, par)
        if tw < tf or y[nb + B.FRAZIL] < 0.0:
            # below its freezing point (the step overshot), or holding frazil, the layer stays at
            # its freezing point (which snowfall and restoring move a little): the difference is
            # frazil formed or melted
            excess = y[nb + B.ML_E] - par[P.CL] * y[nb + B.ML_W] * tf
            y[nb + B.ML_E] -= excess
            y[nb + B.FRAZIL] += excess
            y[nb + B.E_OCEAN] += excess
    if y[nb + B.FRAZIL] > 0.0:  # more than the frazil there was melted: the rest warms the water
        excess = y[nb + B.FRAZIL]
        y[nb + B.FRAZIL] = 0.0
        y[nb + B.E_OCEAN] -= excess
        if mixed:
            y[nb + B.ML_E] += excess
    return idx
