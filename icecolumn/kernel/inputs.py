"""Forcing of one member at a time: linear interpolation of the forcing rows and their defaults."""
from __future__ import annotations

import numpy as np

from .._jit import jit
from ..ocean import exchange_heat_flux_scalar
from ..phase import liquidus_temperature_scalar
from ..surface import air_specific_humidity_scalar, longwave_down_scalar
from .layout import NFORCING, F, P

#: Cloud fraction used for the incoming longwave when the forcing has neither longwave_down nor
#: cloud_fraction (a mid value; common practice, no source). [1]
DEFAULT_CLOUD_FRACTION = 0.5


@jit
def interp(ft, fv, t, i0):
    """Linear interpolation of (ft, fv) at t; i0 is a search hint. Returns (value, index)."""
    n = ft.size
    i = i0
    if i < 0:
        i = 0
    if i > n - 2:
        i = n - 2
    while i > 0 and ft[i] > t:
        i -= 1
    while i < n - 2 and ft[i + 1] <= t:
        i += 1
    t0 = ft[i]
    t1 = ft[i + 1]
    a = (t - t0) / (t1 - t0)
    if a < 0.0:
        a = 0.0
    if a > 1.0:
        a = 1.0
    return fv[i] + a * (fv[i + 1] - fv[i]), i


#: Forcing rows that are rates (fluxes): they enter a step as their mean over the step, the exact
#: integral of their piecewise-linear interpolant divided by the step, so that a run delivers the
#: forcing's energy and snow whatever its step and output interval.
RATE_ROWS = (F.SW, F.LW, F.QOCEAN, F.SNOWFALL, F.SENS, F.LAT)


@jit
def _value_at(ft, fv, t, i):
    """Interpolant on segment i at t (clamped to the segment, so to the data's span at its ends)."""
    t0 = ft[i]
    t1 = ft[i + 1]
    a = (t - t0) / (t1 - t0)
    if a < 0.0:
        a = 0.0
    if a > 1.0:
        a = 1.0
    return fv[i] + a * (fv[i + 1] - fv[i])


@jit
def interval_mean(ft, fv, t1, t2, i0):
    """Mean of the piecewise-linear interpolant of (ft, fv) over [t1, t2] (constant beyond the
    data's ends, as :func:`interp`); ``i0`` is a search hint."""
    _v, i = interp(ft, fv, t1, i0)
    n = ft.size
    acc = 0.0
    a = t1
    # the part before the first knot (constant extrapolation)
    if a < ft[0]:
        b = t2 if t2 < ft[0] else ft[0]
        acc += fv[0] * (b - a)
        a = b
    while a < t2:
        if a >= ft[n - 1]:
            acc += fv[n - 1] * (t2 - a)
            break
        while i < n - 2 and ft[i + 1] <= a:
            i += 1
        b = ft[i + 1] if ft[i + 1] < t2 else t2
        acc += 0.5 * (_value_at(ft, fv, a, i) + _value_at(ft, fv, b, i)) * (b - a)
        a = b
    return acc / (t2 - t1)


@jit
def hold_rates_over_step(ft, forc, t1, t2, i0, fv1, fv2, fv3):
    """Replace the rate rows a member has (:data:`RATE_ROWS`) by their mean over the step [t1, t2]
    in the forcing of its stages ``fv1``, ``fv2``, ``fv3`` (the same array may be given twice)."""
    for v in RATE_ROWS:
        if forc[v, 0] != forc[v, 0]:
            continue  # absent: the stage values (defaults) stay
        m = interval_mean(ft, forc[v], t1, t2, i0)
        fv1[v] = m
        fv2[v] = m
        fv3[v] = m


@jit
def forcing_at(ft, forc, t, i0, par, out):
    """All forcing rows at time t into ``out``; returns the search hint for the next call.

    The ocean heat flux defaults to the ``[ocean] heat_flux`` parameter; without a mixed layer
    and with an ``ocean_temperature`` forcing it is the turbulent flux of
    :func:`icecolumn.ocean.exchange_heat_flux_scalar` of the water's excess over its freezing
    point instead.
    """
    i = i0
    for v in range(NFORCING):
        if forc[v, 0] != forc[v, 0]:  # variable absent for this member (whole row NaN)
            out[v] = np.nan
            continue
        out[v], i = interp(ft, forc[v], t, i0)
    if out[F.QOCEAN] != out[F.QOCEAN]:
        to = out[F.TOCEAN]
        if to == to and par[P.MLD] <= 0.0:
            dtw = to - liquidus_temperature_scalar(par[P.SW])
            out[F.QOCEAN] = exchange_heat_flux_scalar(dtw if dtw > 0.0 else 0.0, par[P.CL])
        else:
            out[F.QOCEAN] = par[P.FW]
    return i


@jit
def atmosphere(fv, par):
    """Shortwave and longwave down [W m-2], wind [m s-1] and specific humidity of the air
    [kg kg-1] of the forcing, with the defaults of the energy balance where the forcing has none:
    no shortwave, longwave from air temperature and cloud fraction (DEFAULT_CLOUD_FRACTION if
    absent), wind P.WIND, air saturated over ice below 0 degC
    (:func:`icecolumn.surface.air_specific_humidity_scalar`)."""
    sw = fv[F.SW]
    if sw != sw:
        sw = 0.0
    lw = fv[F.LW]
    if lw != lw:
        cloud = fv[F.CLOUD]
        lw = longwave_down_scalar(fv[F.AIR], cloud if cloud == cloud else DEFAULT_CLOUD_FRACTION)
    wind = fv[F.WIND]
    if wind != wind:
        wind = par[P.WIND]
    return sw, lw, wind, air_specific_humidity_scalar(fv[F.AIR], fv[F.RH])
