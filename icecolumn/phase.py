r"""Phase relations of sea ice as a mushy layer: liquidus, enthalpy and its inverse.

All functions here are pure.  The ``*_scalar`` functions are compiled with numba and
are what the column kernel calls; the public names without the suffix are vectorised
numpy wrappers of the same code, so tests exercise exactly what the solver uses.

Liquidus
--------
Brine in the pores of sea ice is at its freezing point (local thermal equilibrium).
We write the liquidus as brine salinity against temperature with a rational function
of the undercooling :math:`x = -T` [K]:

.. math:: S_{br}(T) = \frac{x(\alpha + \beta x)}{1 + \gamma x + \delta x^2}

The four coefficients were fitted by least squares (this project, see
``scripts/fit_liquidus.py``) to two data sets at once:

* the TEOS-10 freezing temperature of air-free sea water, ``gsw.t_freezing(SA, 0, 0)``
  for 0-40 g/kg (IOC, SCOR & IAPSO 2010, the international thermodynamic equation of
  seawater); the fit lies within 0.03 K of it;
* the cubic fit to the phase-equilibrium table of Assur (1958) for standard sea ice,
  :math:`S_{br} = -1.20 - 21.8T - 0.919T^2 - 0.0178T^3` (coefficients from memory,
  as quoted in the secondary literature), from -4 to -20 degC; the fit lies within
  2.5 % of it.

The two sources differ by about 3 g/kg between -2 and -8 degC (different data).
**Cold branch:** the rational form is monotonic for all ``x >= 0`` and saturates: it
tends to :math:`\beta/\delta \approx 323` g/kg as :math:`T \to -\infty` and reaches
275 g/kg at -60 degC.  The Assur cubic itself turns upward below about -25 degC
(540 g/kg at -40 degC), which is absurd; we do not model salt precipitation (for
example hydrohalite below -22.9 degC), so below about -23 degC the liquidus is a
bounded, smooth extrapolation, not data.  The inverse (temperature from brine
salinity) is closed form (a quadratic in ``x``).

Enthalpy
--------
Equal densities of ice and brine (``rho``); reference state liquid at 0 degC:

.. math:: H = \rho\,[(\phi c_l + (1-\phi) c_s) T - (1-\phi) L]   \quad [\mathrm{J\,m^{-3}}]

with ``S = phi S_br`` in the mush.  The inverse (H, S) -> (T, phi, S_br) is a
safeguarded Newton iteration on T (bracketed, with bisection fall-back); a fresh
(S = 0) cell and a fully liquid cell are closed form.
"""
from __future__ import annotations

import numpy as np
from ._jit import elementwise, jit

from .constants import BRINE_SPECIFIC_HEAT, ICE_DENSITY, ICE_SPECIFIC_HEAT, LATENT_HEAT

#: Coefficients of the rational liquidus (fitted by this project; see module docstring).
LIQUIDUS_ALPHA = 18.4498  # g kg-1 K-1
LIQUIDUS_BETA = 3.23811  # g kg-1 K-2
LIQUIDUS_GAMMA = 0.154476  # K-1
LIQUIDUS_DELTA = 0.0100260  # K-2
#: Upper bound of brine salinity on the liquidus (T -> -inf). [g kg-1]
BRINE_SALINITY_LIMIT = LIQUIDUS_BETA / LIQUIDUS_DELTA



#: Bulk salinities at or below this [g/kg] are treated as fresh ice by the enthalpy inversion
#: (no physical meaning; smaller values only arise from underflow and make S / S_br(T) 0/0).
FRESH_SALINITY = 1e-30

@jit
def brine_salinity_scalar(temperature):
    """Brine salinity on the liquidus [g kg-1] at ``temperature`` [degC]; 0 for T >= 0."""
    x = -temperature
    if x <= 0.0:
        return 0.0
    return x * (LIQUIDUS_ALPHA + LIQUIDUS_BETA * x) / (1.0 + x * (LIQUIDUS_GAMMA + LIQUIDUS_DELTA * x))


@jit
def brine_salinity_derivative_scalar(temperature):
    """d S_br / d T [g kg-1 K-1] (negative: colder brine is saltier)."""
    x = -temperature
    if x <= 0.0:
        return -LIQUIDUS_ALPHA
    num = x * (LIQUIDUS_ALPHA + LIQUIDUS_BETA * x)
    den = 1.0 + x * (LIQUIDUS_GAMMA + LIQUIDUS_DELTA * x)
    dnum = LIQUIDUS_ALPHA + 2.0 * LIQUIDUS_BETA * x
    dden = LIQUIDUS_GAMMA + 2.0 * LIQUIDUS_DELTA * x
    return -(dnum * den - num * dden) / (den * den)


@jit
def liquidus_temperature_scalar(brine_salinity):
    """Freezing temperature [degC] of brine of salinity ``brine_salinity`` [g kg-1].

    Closed-form inverse of :func:`brine_salinity_scalar`; salinities at or above the
    saturation limit return -inf is avoided by clipping to 0.999 of the limit.
    """
    s = brine_salinity
    if s <= 0.0:
        return 0.0
    smax = 0.999 * BRINE_SALINITY_LIMIT
    if s > smax:
        s = smax
    a = s * LIQUIDUS_DELTA - LIQUIDUS_BETA
    b = s * LIQUIDUS_GAMMA - LIQUIDUS_ALPHA
    c = s
    # a x^2 + b x + c = 0 with a < 0, c > 0: the positive root, written stably.
    x = 2.0 * c / (-b + np.sqrt(b * b - 4.0 * a * c))
    return -x


@jit
def _mush_enthalpy(t, s, rho, c_s, c_l, latent):
    """Enthalpy of mush at temperature t with bulk salinity s, and dH/dT, dH/dS."""
    sbr = brine_salinity_scalar(t)
    dsbr = brine_salinity_derivative_scalar(t)
    phi = s / sbr
    dphi_dt = -s * dsbr / (sbr * sbr)
    a = (c_l - c_s) * t + latent
    h = rho * (c_s * t - latent + phi * a)
    dh_dt = rho * (c_s + phi * (c_l - c_s) + dphi_dt * a)
    dh_ds = rho * a / sbr
    return h, dh_dt, dh_ds


@jit
def linear_liquidus_temperature_guess(enthalpy, bulk_salinity, rho, c_s, c_l, latent):
    """Temperature [degC] of mush of enthalpy [J m-3] and bulk salinity [g kg-1] on the linear
    liquidus T = -S_br / LIQUIDUS_ALPHA (the tangent of the rational liquidus at 0 degC): the
    negative root of c_s T^2 - (L + G S (c_l - c_s) + H/rho) T - G S L = 0, G = 1/alpha (closed form;
    the first guess of the inversion)."""
    g = 1.0 / LIQUIDUS_ALPHA
    b = latent + g * bulk_salinity * (c_l - c_s) + enthalpy / rho
    return (b - np.sqrt(b * b + 4.0 * c_s * g * bulk_salinity * latent)) / (2.0 * c_s)


@jit
def invert_enthalpy_scalar(enthalpy, bulk_salinity, rho, c_s, c_l, latent):
    """Temperature, liquid fraction and brine salinity from enthalpy and bulk salinity.

    Same as :func:`invert_enthalpy_guess_scalar` without a first guess; see there.
    """
    return invert_enthalpy_guess_scalar(enthalpy, bulk_salinity, rho, c_s, c_l, latent, np.nan)


@jit
def invert_enthalpy_guess_scalar(enthalpy, bulk_salinity, rho, c_s, c_l, latent, guess):
    """Temperature, liquid fraction and brine salinity from enthalpy and bulk salinity.

    ``guess`` [degC] is a first estimate of the temperature of a mushy cell (NaN: none).
    It only changes how fast the iteration converges, not the root it converges to
    (the residual tolerance is 1e-14 rho L).

    Parameters
    ----------
    enthalpy : float
        Enthalpy per unit volume, reference liquid at 0 degC. [J m-3]
    bulk_salinity : float
        Bulk salinity. [g kg-1]
    rho, c_s, c_l, latent : float
        Density [kg m-3], ice and brine specific heats [J kg-1 K-1], latent heat [J kg-1].

    Returns
    -------
    temperature [degC], liquid_fraction [1], brine_salinity [g kg-1],
    dT_dH [K m3 J-1], dT_dS [K kg g-1]
        The last two are the partial derivatives of the temperature, used by the
        Newton solver of the column model.
    """
    h = enthalpy
    s = bulk_salinity
    if s <= FRESH_SALINITY:
        # fresh ice / water: closed form (also below FRESH_SALINITY, where the brine salinity
        # S / phi of a mushy cell at T -> 0 underflows)
        if h <= -rho * latent:
            return (h / rho + latent) / c_s, 0.0, 0.0, 1.0 / (rho * c_s), 0.0
        if h < 0.0:
            return 0.0, 1.0 + h / (rho * latent), 0.0, 0.0, 0.0
        return h / (rho * c_l), 1.0, 0.0, 1.0 / (rho * c_l), 0.0
    t_liq = liquidus_temperature_scalar(s)
    h_liq = rho * c_l * t_liq
    if h >= h_liq:
        # fully liquid: brine salinity equals bulk salinity
        return h / (rho * c_l), 1.0, s, 1.0 / (rho * c_l), 0.0
    # mush: g(T) = H_mush(T, S) - h is increasing in T; root below t_hi
    t_fresh = (h / rho + latent) / c_s  # the root is never warmer than fresh ice of equal H
    t_hi = t_liq if t_liq < t_fresh else t_fresh
    if guess != guess:
        guess = linear_liquidus_temperature_guess(h, s, rho, c_s, c_l, latent)
        if not guess < t_hi:
            guess = t_hi - 1e-9 * (1.0 + abs(t_hi))
    if guess < t_hi and guess > t_hi - 200.0:
        # warm start: the lower end of the bracket is found by the iteration itself
        # (a residual <= 0 sets it); Newton steps from above move down and are accepted
        t_lo = -1e300
        t = guess
    else:
        t_lo = t_hi - 1.0
        for _ in range(60):
            g_lo, _, _ = _mush_enthalpy(t_lo, s, rho, c_s, c_l, latent)
            if g_lo <= h:
                break
            t_lo = t_hi - 2.0 * (t_hi - t_lo)
        # Newton from the warm end of the bracket, bisection fall-back
        t = t_hi - 1e-9 * (1.0 + abs(t_hi))
        if t <= t_lo:
            t = 0.5 * (t_lo + t_hi)
    scale = rho * latent
    dh_dt = 1.0
    dh_ds = 0.0
    for _ in range(100):
        g, dh_dt, dh_ds = _mush_enthalpy(t, s, rho, c_s, c_l, latent)
        r = g - h
        if r > 0.0:
            t_hi = t
        else:
            t_lo = t
        if abs(r) <= 1e-14 * scale:
            break
        t_new = t - r / dh_dt
        if not (t_lo < t_new < t_hi):
            if t_lo > -1e299:
                t_new = 0.5 * (t_lo + t_hi)
            else:  # no lower bound yet: step down from the upper bound
                t_new = t_hi - 2.0 * (t_hi - t) - 1.0
        if abs(t_new - t) <= 1e-15 * (1.0 + abs(t)):
            t = t_new
            g, dh_dt, dh_ds = _mush_enthalpy(t, s, rho, c_s, c_l, latent)
            break
        t = t_new
    sbr = brine_salinity_scalar(t)
    phi = s / sbr
    if phi > 1.0:
        phi = 1.0
    return t, phi, sbr, 1.0 / dh_dt, -dh_ds / dh_dt


@jit
def _invert_array(h, s, rho, c_s, c_l, latent, t, phi, sbr):
    for i in range(h.size):
        t[i], phi[i], sbr[i], _, _ = invert_enthalpy_scalar(h[i], s[i], rho, c_s, c_l, latent)


@jit
def _brine_salinity_array(t, out):
    for i in range(t.size):
        out[i] = brine_salinity_scalar(t[i])


@jit
def _liquidus_temperature_array(s, out):
    for i in range(s.size):
        out[i] = liquidus_temperature_scalar(s[i])


# ----------------------------------------------------------------------------------------
# public vectorised wrappers


def brine_salinity(temperature):
    """Brine salinity on the liquidus.

    Parameters
    ----------
    temperature : array_like
        Temperature. [degC]

    Returns
    -------
    ndarray
        Brine salinity (0 at and above 0 degC). [g kg-1]
    """
    return elementwise(_brine_salinity_array, temperature)


def liquidus_temperature(brine_salinity):
    """Freezing temperature of brine (the liquidus).

    Parameters
    ----------
    brine_salinity : array_like
        Salinity of the brine (Absolute Salinity). [g kg-1]

    Returns
    -------
    ndarray
        Freezing temperature. [degC]
    """
    return elementwise(_liquidus_temperature_array, brine_salinity)


def enthalpy(temperature, liquid_fraction, density=ICE_DENSITY, ice_specific_heat=ICE_SPECIFIC_HEAT,
             brine_specific_heat=BRINE_SPECIFIC_HEAT, latent_heat=LATENT_HEAT):
    """Mushy-layer enthalpy per unit volume (reference: liquid at 0 degC).

    Parameters
    ----------
    temperature : array_like
        Temperature. [degC]
    liquid_fraction : array_like
        Liquid (brine) fraction; volume = mass fraction under equal densities. [1]
    density : float
        Density of ice and brine (equal-density convention). [kg m-3]
    ice_specific_heat, brine_specific_heat : float
        Specific heats. [J kg-1 K-1]
    latent_heat : float
        Latent heat of fusion. [J kg-1]

    Returns
    -------
    ndarray
        Enthalpy. [J m-3]
    """
    t = np.asarray(temperature, dtype=float)
    phi = np.asarray(liquid_fraction, dtype=float)
    return density * ((phi * brine_specific_heat + (1 - phi) * ice_specific_heat) * t - (1 - phi) * latent_heat)


def invert_enthalpy(enthalpy, bulk_salinity, density=ICE_DENSITY, ice_specific_heat=ICE_SPECIFIC_HEAT,
                    brine_specific_heat=BRINE_SPECIFIC_HEAT, latent_heat=LATENT_HEAT):
    """State from enthalpy and bulk salinity.

    Parameters
    ----------
    enthalpy : array_like
        Enthalpy per unit volume. [J m-3]
    bulk_salinity : array_like
        Bulk salinity. [g kg-1]

    Returns
    -------
    temperature [degC], liquid_fraction [1], brine_salinity [g kg-1] : ndarray
    """
    h, s = np.broadcast_arrays(np.asarray(enthalpy, dtype=float), np.asarray(bulk_salinity, dtype=float))
    shape = h.shape
    hf = np.ascontiguousarray(h).ravel()
    sf = np.ascontiguousarray(s).ravel()
    t = np.empty_like(hf)
    phi = np.empty_like(hf)
    sbr = np.empty_like(hf)
    _invert_array(hf, sf, float(density), float(ice_specific_heat), float(brine_specific_heat),
                  float(latent_heat), t, phi, sbr)
    return t.reshape(shape), phi.reshape(shape), sbr.reshape(shape)


def state_enthalpy(temperature, bulk_salinity, density=ICE_DENSITY, ice_specific_heat=ICE_SPECIFIC_HEAT,
                   brine_specific_heat=BRINE_SPECIFIC_HEAT, latent_heat=LATENT_HEAT):
    """Enthalpy of sea ice at equilibrium at ``temperature`` with ``bulk_salinity``.

    The liquid fraction is ``S / S_br(T)`` (capped at 1; a fresh cell at T < 0 is solid).

    Returns
    -------
    enthalpy [J m-3], liquid_fraction [1]
    """
    t = np.asarray(temperature, dtype=float)
    s = np.asarray(bulk_salinity, dtype=float)
    sbr = brine_salinity(t)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        phi = np.where(sbr > 0, s / np.where(sbr > 0, sbr, 1.0), 1.0)
    phi = np.where((s <= 0) & (t < 0), 0.0, phi)
    phi = np.clip(phi, 0.0, 1.0)
    return enthalpy(t, phi, density, ice_specific_heat, brine_specific_heat, latent_heat), phi


def brine_volume_fraction(liquid_fraction, brine_salinity, ice_density=ICE_DENSITY):
    """True brine volume fraction from the model's liquid (mass) fraction (diagnostic only).

    The model uses equal ice and brine densities, so its liquid fraction is a mass
    fraction.  With real densities the brine volume fraction is

    .. math:: v_b = \\frac{\\phi/\\rho_{br}}{\\phi/\\rho_{br} + (1-\\phi)/\\rho_i},
       \\quad \\rho_{br} = 1000 + 0.8 S_{br}

    (linear brine density, from memory; the slope agrees with TEOS-10, 0.81 kg m-3 per g/kg
    near the freezing point).

    Parameters
    ----------
    liquid_fraction : array_like
        Model liquid fraction (mass fraction). [1]
    brine_salinity : array_like
        [g kg-1]
    ice_density : float
        Density of pure ice. [kg m-3]

    Returns
    -------
    ndarray
        Brine volume fraction. [1]
    """
    phi = np.asarray(liquid_fraction, dtype=float)
    rho_br = 1000.0 + 0.8 * np.asarray(brine_salinity, dtype=float)
    vb = phi / rho_br
    return vb / (vb + (1.0 - phi) / ice_density)
