"""Material properties of sea ice, brine and snow (pure functions, SI units).

Every function has a numba-compiled scalar form (``*_scalar``) used by the column
kernel; the public names are numpy wrappers of the same code.
"""
from __future__ import annotations

import numpy as np
from ._jit import elementwise, jit

#: Conductivity model names accepted in ``[properties] conductivity_model``.
CONDUCTIVITY_MODELS = {"constant": 0, "parallel_yen1991": 1, "untersteiner1964": 2, "pringle2007": 3}

#: Salinity coefficient of the Untersteiner (1964) bulk conductivity. [W m-1 (g/kg)-1]
UNTERSTEINER_BETA = 0.13  # widely quoted value, from memory (0.1172 is also quoted)
#: Coefficients of the Pringle et al. (2007) bubbly-brine conductivity (from memory):
#: k = 2.11 - 0.011 T + 0.09 S / T [W m-1 K-1] with T in degC and S in g/kg.
PRINGLE_A = 2.11  # W m-1 K-1
PRINGLE_B = -0.011  # W m-1 K-2
PRINGLE_C = 0.09  # W m-1 (g/kg)-1


@jit
def pure_ice_conductivity_scalar(temperature):
    """Pure-ice conductivity of Yen et al. (1991) [W m-1 K-1] at ``temperature`` [degC].

    k_i = 1.16 (1.91 - 8.66e-3 T + 2.97e-5 T^2), as given by Eicken (2003, in Thomas &
    Dieckmann, *Sea Ice*, p. 55); 2.216 at 0 degC and 2.320 at -10 degC.
    """
    t = temperature if temperature < 0.0 else 0.0
    return 1.16 * (1.91 - 8.66e-3 * t + 2.97e-5 * t * t)


@jit
def brine_conductivity_scalar(temperature):
    """Brine conductivity of Yen et al. (1991) [W m-1 K-1] at ``temperature`` [degC].

    k_b = 0.4184 (1.25 + 0.030 T + 0.00014 T^2) (Eicken 2003, p. 55); 0.523 at 0 degC.
    """
    t = temperature if temperature < 0.0 else 0.0
    return 0.4184 * (1.25 + 0.030 * t + 0.00014 * t * t)


@jit
def conductivity_scalar(model, temperature, liquid_fraction, bulk_salinity, constant_value):
    """Bulk thermal conductivity of sea ice [W m-1 K-1].

    Parameters
    ----------
    model : int
        0 ``constant`` (``constant_value``); 1 ``parallel_yen1991``: the liquid-fraction
        weighted (parallel) mixture phi k_b + (1 - phi) k_i of the Yen et al. (1991) brine and
        pure-ice conductivities (the mixing used for mushy layers, e.g. Feltham et al. 2006,
        GRL 33, L14501); 2 ``untersteiner1964``: k = k_i + beta S / T with k_i =
        ``constant_value`` and beta = 0.13 W m-1 per g/kg (Untersteiner 1964, as used by
        Maykut & Untersteiner 1971; beta from memory), bounded below by the brine
        conductivity near the melting point where the formula is singular; 3 ``pringle2007``:
        the bubbly-brine model of Pringle, Eicken, Trodahl & Backstrom (2007, JGR 112, C04017)
        k = (rho/rho_i)(2.11 - 0.011 T + 0.09 S / T), with rho = rho_i under the model's equal
        densities (coefficients from memory), bounded below by the brine conductivity; it
        agrees with conductivities measured on first-year cores, 2.09-2.14 +- 0.11 W m-1 K-1
        (Pringle, Trodahl & Haskell 2006, JGR 111, C05020) and in situ below 0.5 m, 2.26-2.29
        (Pringle 2004, PhD thesis, Victoria University of Wellington), where the Untersteiner
        form is 10-20 % lower.
    temperature : float
        [degC]
    liquid_fraction : float
        [1]
    bulk_salinity : float
        [g kg-1]
    constant_value : float
        Conductivity of the constant model, or pure-ice value of model 2. [W m-1 K-1]
    """
    if model == 0:
        return constant_value
    if model == 1:
        phi = liquid_fraction
        return phi * brine_conductivity_scalar(temperature) + (1.0 - phi) * pure_ice_conductivity_scalar(temperature)
    t = temperature if temperature < 0.0 else 0.0
    if bulk_salinity <= 0.0:  # fresh ice: no brine term
        return constant_value if model == 2 else PRINGLE_A + PRINGLE_B * t
    kb = brine_conductivity_scalar(temperature)
    if temperature >= -1e-6:
        return kb
    if model == 2:
        k = constant_value + UNTERSTEINER_BETA * bulk_salinity / temperature
    else:
        k = PRINGLE_A + PRINGLE_B * temperature + PRINGLE_C * bulk_salinity / temperature
    return k if k > kb else kb


def conductivity(temperature, liquid_fraction, bulk_salinity=0.0, model="parallel_yen1991",
                 constant_value=2.03):
    """Bulk thermal conductivity of sea ice.

    Parameters
    ----------
    temperature : array_like
        [degC]
    liquid_fraction : array_like
        [1]
    bulk_salinity : array_like
        [g kg-1]
    model : str
        One of ``CONDUCTIVITY_MODELS``.
    constant_value : float
        [W m-1 K-1]

    Returns
    -------
    ndarray
        [W m-1 K-1]
    """
    code = CONDUCTIVITY_MODELS[model]
    return elementwise(_conductivity_array, temperature, liquid_fraction, bulk_salinity,
                       leading=(np.int64(code), float(constant_value)))


@jit
def _conductivity_array(model, constant_value, temperature, liquid_fraction, bulk_salinity, out):
    """:func:`conductivity_scalar` of every element of the 1-D arrays into ``out``."""
    for i in range(temperature.size):
        out[i] = conductivity_scalar(model, temperature[i], liquid_fraction[i], bulk_salinity[i], constant_value)


def pure_ice_conductivity(temperature):
    """Pure-ice conductivity, Yen et al. (1991). [W m-1 K-1] from temperature [degC]."""
    return np.vectorize(pure_ice_conductivity_scalar, otypes=[float])(temperature)


def brine_conductivity(temperature):
    """Brine conductivity, Yen et al. (1991). [W m-1 K-1] from temperature [degC]."""
    return np.vectorize(brine_conductivity_scalar, otypes=[float])(temperature)


def snow_conductivity_sturm1997(density):
    """Effective thermal conductivity of seasonal snow, Sturm et al. (1997).

    Parameters
    ----------
    density : array_like
        Snow density. [kg m-3]

    Returns
    -------
    ndarray
        Conductivity. [W m-1 K-1]

    Notes
    -----
    Quadratic regression on 488 measurements, rho in g cm-3:
    k = 0.138 - 1.01 rho + 3.233 rho^2 for 0.156 <= rho <= 0.6, and k = 0.023 + 0.234 rho below
    (Sturm, Holmgren, Koenig & Morris 1997, J. Glaciol. 43(143), 26-41; coefficients from memory).
    """
    r = np.asarray(density, dtype=float) / 1000.0
    return np.where(r < 0.156, 0.023 + 0.234 * r, 0.138 - 1.01 * r + 3.233 * r * r)


def snow_conductivity_of(model: str, constant: float, density: float) -> float:
    """Snow conductivity [W m-1 K-1] of a ``[snow]`` choice: ``constant`` [W m-1 K-1], or
    ``sturm1997`` from ``density`` [kg m-3] (:func:`snow_conductivity_sturm1997`)."""
    if model == "sturm1997":
        return float(snow_conductivity_sturm1997(density))
    return float(constant)
