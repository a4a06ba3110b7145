r"""Surface energy balance of snow or bare ice (pure functions, SI units).

Fluxes are positive toward the surface.  The balance (e.g. Maykut & Untersteiner 1971,
JGR 76, 1550; form standard, from memory)

.. math:: (1-\alpha)(1-i_0) F_{sw} + \varepsilon F_{lw}^{\downarrow} - \varepsilon\sigma T_s^4
          + F_{sens} + F_{lat} + F_{cond} = 0

with bulk turbulent fluxes :math:`F_{sens} = \rho_a c_{pa} C_H U (T_a - T_s)` and
:math:`F_{lat} = \rho_a L_s C_E U (q_a - q_s)`.  Incoming longwave, when not measured,
from air temperature and cloud fraction after Koenig-Langlo & Augstein (1994, Meteorol. Z.
3, 343): :math:`F_{lw}^{\downarrow} = (0.765 + 0.22 N^3)\sigma T_a^4` (from memory; the
best of five schemes over sea ice in polar night in Makshtas et al. 1999).  The surface
temperature solves the balance; above the melting point it is held there and the excess is
melt energy, which melts the snow and then the ice surface (:mod:`icecolumn.kernel.top`).  The fraction ``i0`` of the
absorbed shortwave penetrates and is deposited in the top ice layer.

Constants (from memory unless stated): sigma = 5.670374e-8 W m-2 K-4 (CODATA), air density
1.3 kg m-3, c_pa = 1004 J kg-1 K-1, L_s = 2.834e6 J kg-1, emissivity 0.98, C_H = C_E =
1.3e-3 (consistent with the neutral drag coefficients 1.0-1.5e-3 over sea ice of Launiainen et
al. 2001, Annals Glaciol. 33), surface pressure 1013.25 hPa.  Albedos: dry snow 0.85 and
bare ice 0.65 (Perovich et al. 2002, JGR 107(C10): dry snow 0.8-0.9, bare white ice 0.65),
melting surface 0.40 (their late-July line average); penetrating fraction 0 under snow and
0.17 for bare ice (from memory).

Open water (:func:`net_water_flux_scalar`): the same bulk forms with vapour pressure over
water and the latent heat of vaporisation 2.501e6 J kg-1, emissivity 0.97 and albedo 0.06
(open-ocean albedo 0.06-0.07, Pegau & Paulson 2001, Annals Glaciol. 33; from memory); all
absorbed shortwave stays in the water.
"""
from __future__ import annotations

import numpy as np
from ._jit import jit

STEFAN_BOLTZMANN = 5.670374e-8  # W m-2 K-4
KELVIN = 273.15  # K
AIR_DENSITY = 1.3  # kg m-3
AIR_SPECIFIC_HEAT = 1004.0  # J kg-1 K-1
SUBLIMATION_HEAT = 2.834e6  # J kg-1
EMISSIVITY = 0.98  # 1
TRANSFER_COEFFICIENT = 1.3e-3  # 1 (C_H = C_E)
SURFACE_PRESSURE = 1013.25  # hPa
ALBEDO_SNOW = 0.85
ALBEDO_ICE = 0.65
ALBEDO_MELT = 0.40
PENETRATION_ICE = 0.17
#: Snow at least this thick covers the ice (snow albedo, no penetrating shortwave); thinner snow
#: hands the surface over to the ice smoothly (model choice, no source). [m]
SNOW_COVER_THICKNESS = 0.01
ALBEDO_WATER = 0.06
EMISSIVITY_WATER = 0.97
VAPORISATION_HEAT = 2.501e6  # J kg-1


@jit
def saturation_vapour_pressure_scalar(temperature, over_ice):
    """Saturation vapour pressure [hPa] at ``temperature`` [degC] over water or ice.

    Magnus form with the coefficients of Alduchov & Eskridge (1996, J. Appl. Meteor. 35,
    601; from memory): water 6.1094 exp(17.625 T / (T + 243.04)), ice 6.1121
    exp(22.587 T / (T + 273.86)).
    """
    if over_ice:
        return 6.1121 * np.exp(22.587 * temperature / (temperature + 273.86))
    return 6.1094 * np.exp(17.625 * temperature / (temperature + 243.04))


@jit
def saturation_vapour_pressure_derivative_scalar(temperature, over_ice):
    """d e_s / d T [hPa K-1] of :func:`saturation_vapour_pressure_scalar` (analytic)."""
    if over_ice:
        b = 273.86
        return saturation_vapour_pressure_scalar(temperature, True) * 22.587 * b / ((temperature + b) ** 2)
    b = 243.04
    return saturation_vapour_pressure_scalar(temperature, False) * 17.625 * b / ((temperature + b) ** 2)


@jit
def specific_humidity_derivative_scalar(vapour_pressure):
    """d q / d e [kg kg-1 hPa-1] of :func:`specific_humidity_scalar` (analytic)."""
    d = SURFACE_PRESSURE - 0.378 * vapour_pressure
    return 0.622 * SURFACE_PRESSURE / (d * d)


@jit
def specific_humidity_scalar(vapour_pressure):
    """Specific humidity [kg kg-1] from vapour pressure [hPa] at the standard surface pressure."""
    return 0.622 * vapour_pressure / (SURFACE_PRESSURE - 0.378 * vapour_pressure)


@jit
def longwave_down_scalar(air_temperature, cloud_fraction):
    """Incoming longwave [W m-2], Koenig-Langlo & Augstein (1994), air T [degC], cloud [1]."""
    ta = air_temperature + KELVIN
    return (0.765 + 0.22 * cloud_fraction ** 3) * STEFAN_BOLTZMANN * ta ** 4


@jit
def albedo_scalar(snow_thickness, surface_temperature, melting_point):
    """Surface albedo [1]: snow (>= 1 cm) or bare ice; melting surfaces darker."""
    if surface_temperature >= melting_point - 1e-6:
        return ALBEDO_MELT
    return ALBEDO_SNOW if snow_thickness >= SNOW_COVER_THICKNESS else ALBEDO_ICE


@jit
def net_surface_flux_scalar(ts, ta, sw, lw, wind, rh, albedo, i0):
    """Net atmospheric flux into the surface [W m-2] and its derivative d/dT_s [W m-2 K-1].

    Parameters: surface and air temperature [degC], shortwave and longwave down [W m-2],
    wind speed [m s-1], relative humidity with respect to water [%], albedo [1], penetrating
    fraction [1] (the penetrating part is not in this flux).
    """
    tk = ts + KELVIN
    eps = EMISSIVITY
    turb = AIR_DENSITY * TRANSFER_COEFFICIENT * wind
    ea = rh / 100.0 * saturation_vapour_pressure_scalar(ta, False)
    qa = specific_humidity_scalar(ea)
    es = saturation_vapour_pressure_scalar(ts, True)
    qs = specific_humidity_scalar(es)
    dqs = specific_humidity_derivative_scalar(es) * saturation_vapour_pressure_derivative_scalar(ts, True)
    f = ((1.0 - albedo) * (1.0 - i0) * sw + eps * lw - eps * STEFAN_BOLTZMANN * tk ** 4
         + turb * AIR_SPECIFIC_HEAT * (ta - ts) + turb * SUBLIMATION_HEAT * (qa - qs))
    df = -4.0 * eps * STEFAN_BOLTZMANN * tk ** 3 - turb * AIR_SPECIFIC_HEAT - turb * SUBLIMATION_HEAT * dqs
    return f, df


@jit
def net_water_flux_scalar(tw, ta, sw, lw, wind, rh):
    """Net atmospheric flux into an open water surface at ``tw`` [degC] [W m-2] (positive down).

    Parameters as :func:`net_surface_flux_scalar`; albedo 0.06, emissivity 0.97, evaporation
    over water.
    """
    tk = tw + KELVIN
    turb = AIR_DENSITY * TRANSFER_COEFFICIENT * wind
    qa = specific_humidity_scalar(rh / 100.0 * saturation_vapour_pressure_scalar(ta, False))
    qs = specific_humidity_scalar(saturation_vapour_pressure_scalar(tw, False))
    return ((1.0 - ALBEDO_WATER) * sw + EMISSIVITY_WATER * lw - EMISSIVITY_WATER * STEFAN_BOLTZMANN * tk ** 4
            + turb * AIR_SPECIFIC_HEAT * (ta - tw) + turb * VAPORISATION_HEAT * (qa - qs))


def longwave_down(air_temperature, cloud_fraction):
    """Incoming longwave radiation, Koenig-Langlo & Augstein (1994).

    Parameters
    ----------
    air_temperature : array_like
        [degC]
    cloud_fraction : array_like
        [1]

    Returns
    -------
    ndarray
        [W m-2]
    """
    return np.vectorize(longwave_down_scalar, otypes=[float])(air_temperature, cloud_fraction)


def saturation_vapour_pressure(temperature, over_ice=False):
    """Saturation vapour pressure [hPa] over water or ice at temperature [degC] (Magnus form)."""
    return np.vectorize(lambda t: saturation_vapour_pressure_scalar(t, over_ice), otypes=[float])(temperature)
