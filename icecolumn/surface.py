r"""Surface energy balance of snow, bare ice or open water (pure functions, SI units).

Fluxes are positive toward the surface.  The balance (e.g. Maykut & Untersteiner 1971,
JGR 76, 1550; form standard, from memory)

.. math:: (1-\alpha)(1-i_0) F_{sw} + \varepsilon F_{lw}^{\downarrow} - \varepsilon\sigma T_s^4
          + F_{sens} + F_{lat} + F_{cond} = 0

with bulk turbulent fluxes :math:`F_{sens} = \rho_a c_{pa} C_H U (\theta_a - T_s)` and
:math:`F_{lat} = \rho_a L_s C_H U (q_a - q_s)` (``C_E = C_H``).  The transfer coefficient follows
Monin-Obukhov similarity (:func:`transfer_coefficient_scalar`): the neutral value from the
roughness length and the measurement heights, corrected for the stability of the surface layer
with the stable functions fitted to SHEBA winter data by Grachev et al. (2007, Boundary-Layer
Meteorol. 124, 315; recommended over sea ice in winter by Andreas et al. 2010, J. Hydrometeor.
11, 87) and the unstable Businger-Dyer functions integrated by Paulson (1970, J. Appl.
Meteorol. 9, 857); the Obukhov length is found by fixed-point iteration from the bulk
Richardson number.  Air humidity is the forcing's relative humidity (with respect to water, as
hygrometers report it); without one the air is taken as saturated with respect to ice below
0 degC (near-surface air over polar sea ice is always near ice saturation: Andreas et al. 2002,
JGR 107(C8), 8033) and with respect to water above.  The surface humidity is saturation over
ice (over water for open water).  Incoming longwave, when not measured, from air temperature
and cloud fraction after Koenig-Langlo & Augstein (1994, Meteorol. Z. 3, 343):
:math:`F_{lw}^{\downarrow} = (0.765 + 0.22 N^3)\sigma T_a^4` (from memory; the best of five
schemes over sea ice in polar night in Makshtas et al. 1999).  The surface temperature solves
the balance; above the melting point it is held there and the excess is melt energy, which
melts the snow and then the ice surface (:mod:`icecolumn.kernel.top`).  The fraction ``i0`` of
the absorbed shortwave penetrates and is deposited in the top ice layer.

Albedo (:func:`albedo_scalar`; each value is a ``[surface]`` setting, and a measured ``albedo``
forcing column replaces them): dry snow 0.85 (Perovich et al. 2002, JGR 107(C10), 8044: dry
snow 0.8-0.9 in April), melting snow 0.75 (Hanesiak et al. 2001, JGR 106(C1), 1005: moist snow
on landfast first-year ice), cold bare ice 0.65 (Perovich et al. 2002: bare white ice 0.65) and
melting bare ice 0.60 (Xia et al. 2015, Arct. Antarct. Alp. Res. 47(4): bare ice 0.56-0.68 in
summer), with melt ponds of albedo 0.21 on 30 % of melting bare ice (Hanesiak et al. 2001; Divine
et al. 2015, The Cryosphere 9, 255).  Open water 0.06 (Pegau & Paulson 2001, Annals Glaciol. 33: leads 0.06-0.07; from
memory).

Constants (from memory unless stated): sigma = 5.670374e-8 W m-2 K-4 (CODATA), air density
1.3 kg m-3, c_pa = 1004 J kg-1 K-1, L_s = 2.834e6 J kg-1, emissivity 0.98 (snow, ice) and 0.97
(water), von Karman constant 0.4, surface pressure 1013.25 hPa; roughness length 2.3e-4 m
(winter SHEBA, Andreas et al. 2010, checked: abstract), which gives a neutral transfer
coefficient of 1.40e-3 at 10 m, within the 1.0-1.5e-3 of Andreas (1987, Boundary-Layer Meteorol.
38, 159), and 1.65e-3 for a 10 m wind with a 2 m temperature; penetrating fraction 0 under snow and 0.17 for bare
ice (Maykut & Untersteiner 1971; from memory).
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
SURFACE_PRESSURE = 1013.25  # hPa
VON_KARMAN = 0.4  # 1
GRAVITY_ACCELERATION = 9.81  # m s-2
DRY_ADIABATIC_LAPSE = 0.0098  # K m-1, g / c_pa: potential temperature of air at height z
#: Default albedos [1] (sources in the module docstring).
ALBEDO_DRY_SNOW = 0.85
ALBEDO_MELTING_SNOW = 0.75
ALBEDO_ICE = 0.65
ALBEDO_MELTING_ICE = 0.60
#: Melt ponds on melting bare ice: area fraction [1] and albedo [1] (late-summer thin first-year
#: ice: 29 % pond cover, Divine et al. 2015, The Cryosphere 9, 255; dark ponds on first-year ice
#: 0.21, Hanesiak et al. 2001, JGR 106(C1), 1005; both checked: abstracts).  With them the
#: melting-ice area albedo is 0.48, near the 0.44 area average Divine et al. measured.
POND_FRACTION = 0.3
ALBEDO_POND = 0.21
#: Roughness length of snow-covered sea ice in winter [m] (Andreas et al. 2010; checked: abstract).
ROUGHNESS_LENGTH = 2.3e-4
#: Measurement heights of wind and of air temperature / humidity [m] (common station practice:
#: a 10 m wind mast and a 2 m screen; no source).
WIND_HEIGHT = 10.0
AIR_HEIGHT = 2.0
#: Lowest wind speed used in the bulk fluxes [m s-1]: calm air still exchanges heat by free
#: convection and intermittent turbulence (a numerical floor of this project, no source).
MIN_WIND = 0.5
#: Stability corrections accepted by :func:`transfer_coefficient_scalar`.
STABILITY_CODES = {"neutral": 0, "grachev2007": 1}
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
        return saturation_vapour_pressure_scalar(temperature, np.bool_(True)) * 22.587 * b / ((temperature + b) ** 2)
    b = 243.04
    return saturation_vapour_pressure_scalar(temperature, np.bool_(False)) * 17.625 * b / ((temperature + b) ** 2)


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
def albedo_scalar(snow_thickness, surface_temperature, melting_point, dry_snow, melting_snow, ice, melting_ice,
                  pond_fraction=0.0, pond=0.21):
    """Surface albedo [1]: snow (at least SNOW_COVER_THICKNESS [m] of it) or bare ice, each dry or
    melting (surface at its melting point [degC]); the four albedos [1] are arguments.  Melting bare
    ice carries melt ponds on ``pond_fraction`` [1] of its area, of albedo ``pond`` [1] (a fixed
    area fraction, not a pond model)."""
    melting = surface_temperature >= melting_point - 1e-6
    if snow_thickness >= SNOW_COVER_THICKNESS:
        return melting_snow if melting else dry_snow
    if melting:
        return (1.0 - pond_fraction) * melting_ice + pond_fraction * pond
    return ice


@jit
def psi_stable_grachev2007(zeta):
    """Integrated stability functions (psi_m, psi_h) [1] of the stable surface layer, zeta = z/L >= 0.

    Grachev, Andreas, Fairall, Guest & Persson (2007, Boundary-Layer Meteorol. 124, 315), SHEBA:
    phi_m = 1 + a_m zeta (1 + zeta)^(1/3) / (1 + b_m zeta), a_m = 5, b_m = a_m / 6.5;
    phi_h = 1 + (a_h zeta + b_h zeta^2) / (1 + c_h zeta + zeta^2), a_h = b_h = 5, c_h = 3
    (phi forms from memory; the integrated forms and constants as in codes citing the paper).
    """
    am = 5.0
    bm = am / 6.5
    ah = 5.0
    bh = 5.0
    ch = 3.0
    x = (1.0 + zeta) ** (1.0 / 3.0)
    bbm = ((1.0 - bm) / bm) ** (1.0 / 3.0)
    s3 = np.sqrt(3.0)
    psi_m = (-3.0 * am / bm * (x - 1.0)
             + am * bbm / (2.0 * bm) * (2.0 * np.log((x + bbm) / (1.0 + bbm))
                                        - np.log((x * x - x * bbm + bbm * bbm) / (1.0 - bbm + bbm * bbm))
                                        + 2.0 * s3 * (np.arctan((2.0 * x - bbm) / (s3 * bbm))
                                                      - np.arctan((2.0 - bbm) / (s3 * bbm)))))
    bbh = np.sqrt(ch * ch - 4.0)
    psi_h = (-0.5 * bh * np.log(1.0 + ch * zeta + zeta * zeta)
             + (-ah / bbh + bh * ch / (2.0 * bbh)) * (np.log((2.0 * zeta + ch - bbh) / (2.0 * zeta + ch + bbh))
                                                       - np.log((ch - bbh) / (ch + bbh))))
    return psi_m, psi_h


@jit
def psi_unstable_paulson1970(zeta):
    """Integrated stability functions (psi_m, psi_h) [1] of the unstable surface layer, zeta < 0.

    Paulson (1970, J. Appl. Meteorol. 9, 857), for the Businger-Dyer forms phi_m = (1 - 16 zeta)^-1/4,
    phi_h = (1 - 16 zeta)^-1/2: x = (1 - 16 zeta)^(1/4),
    psi_m = 2 ln((1 + x)/2) + ln((1 + x^2)/2) - 2 atan(x) + pi/2, psi_h = 2 ln((1 + x^2)/2).
    """
    x = (1.0 - 16.0 * zeta) ** 0.25
    psi_m = 2.0 * np.log(0.5 * (1.0 + x)) + np.log(0.5 * (1.0 + x * x)) - 2.0 * np.arctan(x) + 0.5 * np.pi
    psi_h = 2.0 * np.log(0.5 * (1.0 + x * x))
    return psi_m, psi_h


@jit
def dpsi_scalar(zeta):
    """Derivatives (d psi_m / d zeta, d psi_h / d zeta) [1] of :func:`psi_scalar`: (1 - phi)/zeta from
    the definition psi = int_0^zeta (1 - phi(x))/x dx, with the phi forms of Grachev et al. (2007)
    (stable) and Businger-Dyer (unstable) given in :func:`psi_stable_grachev2007` and
    :func:`psi_unstable_paulson1970`; at zeta -> 0 their limits."""
    if zeta >= 0.0:
        if zeta < 1e-8:
            return -5.0, -5.0
        phim = 1.0 + 5.0 * zeta * (1.0 + zeta) ** (1.0 / 3.0) / (1.0 + 5.0 / 6.5 * zeta)
        phih = 1.0 + (5.0 * zeta + 5.0 * zeta * zeta) / (1.0 + 3.0 * zeta + zeta * zeta)
    else:
        if zeta > -1e-8:
            return -4.0, -8.0
        phim = (1.0 - 16.0 * zeta) ** -0.25
        phih = (1.0 - 16.0 * zeta) ** -0.5
    return (1.0 - phim) / zeta, (1.0 - phih) / zeta


@jit
def psi_scalar(zeta):
    """(psi_m, psi_h) [1] at zeta = z/L: Grachev et al. (2007) if stable, Paulson (1970) if unstable."""
    if zeta >= 0.0:
        return psi_stable_grachev2007(zeta)
    return psi_unstable_paulson1970(zeta)


@jit
def transfer_coefficient_scalar(surface_temperature, air_temperature, wind, roughness, wind_height, air_height,
                                stability):
    """Bulk transfer coefficient for heat and moisture C_H = C_E [1] of the surface layer
    (:func:`transfer_coefficient_iterate` from neutral)."""
    return transfer_coefficient_iterate(surface_temperature, air_temperature, wind, roughness, wind_height,
                                        air_height, stability, 0.0)[0]


@jit
def transfer_coefficient_iterate(surface_temperature, air_temperature, wind, roughness, wind_height, air_height,
                                 stability, inv_l):
    """Bulk transfer coefficient for heat and moisture C_H = C_E [1] of the surface layer, its
    derivative with respect to the surface temperature [K-1], and the inverse Obukhov length
    [m-1] it was found with (``inv_l`` is the first guess).

    Parameters
    ----------
    surface_temperature, air_temperature : float
        [degC]; the air temperature is at ``air_height``.
    wind : float
        Wind speed at ``wind_height`` [m s-1] (at least MIN_WIND is used).
    roughness : float
        Roughness length z0 [m], taken for heat and moisture too.
    wind_height, air_height : float
        [m]
    stability : int
        0 neutral, 1 Monin-Obukhov with :func:`psi_scalar` (STABILITY_CODES).
    inv_l : float
        First guess of 1/L [m-1].

    Notes
    -----
    :math:`C_H = \\kappa^2 / (c_m c_h)`, :math:`c_m = \\ln(z_u/z_0) - \\psi_m(z_u/L) + \\psi_m(z_0/L)`,
    :math:`c_h = \\ln(z_t/z_0) - \\psi_h(z_t/L) + \\psi_h(z_0/L)`, with the Obukhov length from
    :math:`1/L = \\kappa g \\theta_* / (u_*^2 \\bar T) = g\\,\\Delta\\theta\\, c_m^2 / (\\bar T c_h U^2)`
    (Monin-Obukhov similarity; common practice), a fixed point found by iteration; the derivative
    follows from the implicit function theorem at the fixed point.
    """
    u = wind if wind > MIN_WIND else MIN_WIND
    lnm = np.log(wind_height / roughness)
    lnh = np.log(air_height / roughness)
    if stability == 0:
        return VON_KARMAN * VON_KARMAN / (lnm * lnh), 0.0, 0.0
    dtheta = air_temperature + DRY_ADIABATIC_LAPSE * air_height - surface_temperature
    tbar = 0.5 * (air_temperature + surface_temperature) + KELVIN
    limit = 10.0 / wind_height  # zeta at the wind height within [-10, 10]
    x = inv_l
    for _ in range(30):
        cm = lnm - psi_scalar(wind_height * x)[0] + psi_scalar(roughness * x)[0]
        ch = lnh - psi_scalar(air_height * x)[1] + psi_scalar(roughness * x)[1]
        new = GRAVITY_ACCELERATION * dtheta * cm * cm / (tbar * ch * u * u)
        if new > limit:
            new = limit
        if new < -limit:
            new = -limit
        done = abs(new - x) <= 1e-12 * (abs(new) + 1e-9)
        x = new
        if done:
            break
    cm = lnm - psi_scalar(wind_height * x)[0] + psi_scalar(roughness * x)[0]
    ch = lnh - psi_scalar(air_height * x)[1] + psi_scalar(roughness * x)[1]
    coef = VON_KARMAN * VON_KARMAN / (cm * ch)
    if abs(x) >= limit:
        return coef, 0.0, x  # clamped: the stability no longer changes with T_s
    dcm = -wind_height * dpsi_scalar(wind_height * x)[0] + roughness * dpsi_scalar(roughness * x)[0]
    dch = -air_height * dpsi_scalar(air_height * x)[1] + roughness * dpsi_scalar(roughness * x)[1]
    g = GRAVITY_ACCELERATION * dtheta * cm * cm / (tbar * ch * u * u)
    dg_dx = g * (2.0 * dcm / cm - dch / ch)
    dg_dts = -GRAVITY_ACCELERATION * cm * cm / (tbar * ch * u * u) - 0.5 * g / tbar
    dx_dts = dg_dts / (1.0 - dg_dx)
    return coef, -coef * (dcm / cm + dch / ch) * dx_dts, x


@jit
def air_specific_humidity_scalar(air_temperature, relative_humidity):
    """Specific humidity of the air [kg kg-1] from its temperature [degC] and relative humidity with
    respect to water [%]; NaN humidity: saturated with respect to ice below 0 degC (Andreas et al.
    2002, JGR 107(C8), 8033: near ice saturation over polar sea ice) and to water above."""
    if relative_humidity != relative_humidity:
        return specific_humidity_scalar(saturation_vapour_pressure_scalar(air_temperature, air_temperature < 0.0))
    return specific_humidity_scalar(relative_humidity / 100.0 * saturation_vapour_pressure_scalar(air_temperature,
                                                                                                   np.bool_(False)))


@jit
def net_surface_flux_scalar(ts, ta, sw, lw, wind, qa, albedo, i0, ch, sensible, latent, dch=0.0):
    """Net atmospheric flux into the surface [W m-2] and its derivative d/dT_s [W m-2 K-1].

    Parameters: surface and air temperature [degC], shortwave and longwave down [W m-2],
    wind speed [m s-1], specific humidity of the air [kg kg-1], albedo [1], penetrating
    fraction [1] (the penetrating part is not in this flux), transfer coefficient C_H [1],
    measured sensible and latent heat fluxes toward the surface [W m-2] that replace the bulk
    formulas (NaN: bulk), and d C_H / d T_s [K-1].
    """
    tk = ts + KELVIN
    eps = EMISSIVITY
    u = wind if wind > MIN_WIND else MIN_WIND
    turb = AIR_DENSITY * ch * u
    es = saturation_vapour_pressure_scalar(ts, np.bool_(True))
    qs = specific_humidity_scalar(es)
    dqs = specific_humidity_derivative_scalar(es) * saturation_vapour_pressure_derivative_scalar(ts, True)
    f = (1.0 - albedo) * (1.0 - i0) * sw + eps * lw - eps * STEFAN_BOLTZMANN * tk ** 4
    df = -4.0 * eps * STEFAN_BOLTZMANN * tk ** 3
    dturb = AIR_DENSITY * dch * u
    if sensible == sensible:
        f += sensible
    else:
        f += turb * AIR_SPECIFIC_HEAT * (ta - ts)
        df += dturb * AIR_SPECIFIC_HEAT * (ta - ts) - turb * AIR_SPECIFIC_HEAT
    if latent == latent:
        f += latent
    else:
        f += turb * SUBLIMATION_HEAT * (qa - qs)
        df += dturb * SUBLIMATION_HEAT * (qa - qs) - turb * SUBLIMATION_HEAT * dqs
    return f, df


@jit
def net_water_flux_scalar(tw, ta, sw, lw, wind, qa, ch, sensible, latent):
    """Net atmospheric flux into an open water surface at ``tw`` [degC] [W m-2] (positive down).

    Parameters as :func:`net_surface_flux_scalar`; albedo 0.06, emissivity 0.97, evaporation
    over water.
    """
    tk = tw + KELVIN
    u = wind if wind > MIN_WIND else MIN_WIND
    turb = AIR_DENSITY * ch * u
    qs = specific_humidity_scalar(saturation_vapour_pressure_scalar(tw, np.bool_(False)))
    fs = sensible if sensible == sensible else turb * AIR_SPECIFIC_HEAT * (ta - tw)
    fl = latent if latent == latent else turb * VAPORISATION_HEAT * (qa - qs)
    return (1.0 - ALBEDO_WATER) * sw + EMISSIVITY_WATER * lw - EMISSIVITY_WATER * STEFAN_BOLTZMANN * tk ** 4 + fs + fl


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


def transfer_coefficient(surface_temperature, air_temperature, wind, roughness=ROUGHNESS_LENGTH,
                         wind_height=WIND_HEIGHT, air_height=AIR_HEIGHT, stability="grachev2007"):
    """Bulk transfer coefficient C_H = C_E [1] (:func:`transfer_coefficient_scalar`).

    Parameters
    ----------
    surface_temperature, air_temperature : array_like
        [degC]
    wind : array_like
        [m s-1]
    roughness, wind_height, air_height : float
        [m]
    stability : str
        One of ``STABILITY_CODES``.
    """
    code = STABILITY_CODES[stability]
    f = np.vectorize(lambda ts, ta, u: transfer_coefficient_scalar(ts, ta, u, roughness, wind_height, air_height,
                                                                   code), otypes=[float])
    return f(surface_temperature, air_temperature, wind)
