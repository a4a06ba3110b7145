"""The ocean under the ice: slab mixed layer and ice-ocean heat exchange (pure functions, SI units).

The mixed layer is a well-mixed slab of sea water whose enthalpy (reference liquid at 0 degC,
specific heat ``c_l``), mass and salt are prognostic; its temperature and salinity follow from
them.  Heat passes from the slab to the ice base by a bulk turbulent exchange
:math:`F = \\rho_w c_l\\, c_h u_* (T_{ml} - T_f)` with the Stanton number ``c_h = 0.006``
(McPhee 1992, JGR 97, 5365; from memory) and a friction velocity of 0.01 m s-1 (common practice,
no source).
"""
from __future__ import annotations

import numpy as np

from ._jit import jit
from .constants import SEAWATER_DENSITY

#: Heat transfer velocity between the mixed layer (or the ocean below) and the ice base,
#: ``c_h u_*`` with ``c_h = 0.006`` (McPhee 1992, JGR 97, 5365; from memory) and
#: ``u_* = 0.01`` m s-1 (common practice, no source). [m s-1]
ML_EXCHANGE_VELOCITY = 0.006 * 0.01


@jit
def exchange_heat_flux_scalar(water_minus_freezing, specific_heat):
    """Turbulent heat flux from the water to the ice base [W m-2].

    Parameters
    ----------
    water_minus_freezing : float
        Water temperature minus its freezing temperature. [K]
    specific_heat : float
        Specific heat of sea water. [J kg-1 K-1]

    Notes
    -----
    :math:`F = \\rho_w c_l c_h u_* (T - T_f)` (McPhee 1992, JGR 97, 5365; from memory).
    """
    return SEAWATER_DENSITY * specific_heat * ML_EXCHANGE_VELOCITY * water_minus_freezing


@jit
def mixed_layer_temperature_salinity_scalar(enthalpy, mass, salt, specific_heat):
    """Temperature [degC] and salinity [g kg-1] of a slab of sea water.

    Parameters
    ----------
    enthalpy : float
        Enthalpy per unit area, reference liquid at 0 degC. [J m-2]
    mass : float
        Mass per unit area. [kg m-2]
    salt : float
        Salt per unit area. [kg m-2]
    specific_heat : float
        [J kg-1 K-1]
    """
    return enthalpy / (specific_heat * mass), 1000.0 * salt / mass


def mixed_layer_temperature_salinity(enthalpy, mass, salt, specific_heat):
    """Temperature [degC] and salinity [g kg-1] of mixed-layer slabs (NaN where the mass is 0).

    Array form of :func:`mixed_layer_temperature_salinity_scalar`; arguments broadcast
    ([J m-2], [kg m-2], [kg m-2], [J kg-1 K-1]).
    """
    e, w, s, c = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (enthalpy, mass, salt, specific_heat)))
    ok = w > 0
    t = np.full(w.shape, np.nan)
    sal = np.full(w.shape, np.nan)
    t[ok] = e[ok] / (c[ok] * w[ok])
    sal[ok] = 1000.0 * s[ok] / w[ok]
    return t, sal
