"""Hydrostatic balance of floating ice with snow: draft, freeboard, flooding (pure functions, SI).

Archimedes' principle for a floating slab of ice of thickness ``h`` and density ``rho_i`` under
snow of thickness ``h_s`` and density ``rho_s`` in sea water of density ``rho_w`` (common
practice, no source): the draft is :math:`d = (\\rho_i h + \\rho_s h_s)/\\rho_w` and the freeboard
:math:`f = h - d`.  A negative freeboard floods the base of the snow; turning snow of thickness
``x`` into snow-ice (its pores filled with sea water, mass :math:`(\\rho_i - \\rho_s) x` added)
raises the freeboard by :math:`x (1 - (\\rho_i - \\rho_s)/\\rho_w)`, so the thickness that
restores zero freeboard is :math:`x = -f \\rho_w / (\\rho_w - \\rho_i + \\rho_s)` (the hydrostatic
snow-ice argument of Leppaeranta 1983, Geophysica 19; from memory; written for the model's equal
ice and brine densities).
"""
from __future__ import annotations

import numpy as np

from ._jit import jit
from .constants import SEAWATER_DENSITY


@jit
def draft_scalar(ice_thickness, snow_thickness, ice_density, snow_density):
    """Hydrostatic draft [m] of ice [m] under snow [m]; densities [kg m-3]."""
    return (ice_density * ice_thickness + snow_density * snow_thickness) / SEAWATER_DENSITY


@jit
def freeboard_scalar(ice_thickness, snow_thickness, ice_density, snow_density):
    """Hydrostatic freeboard [m] of ice [m] under snow [m]; densities [kg m-3]."""
    return ice_thickness - draft_scalar(ice_thickness, snow_thickness, ice_density, snow_density)


@jit
def flooding_thickness_scalar(freeboard, ice_density, snow_density):
    """Snow thickness [m] that turns into snow-ice to restore zero freeboard from ``freeboard`` < 0 [m]."""
    rho_w = SEAWATER_DENSITY
    return -freeboard * rho_w / (rho_w - ice_density + snow_density)


def draft(ice_thickness, snow_thickness, ice_density, snow_density):
    """Hydrostatic draft [m] (depth of the ice base below the water line).

    Parameters
    ----------
    ice_thickness, snow_thickness : array_like
        [m]
    ice_density, snow_density : array_like
        [kg m-3]
    """
    # the compiled formula's Python original is plain arithmetic, so it takes numpy arrays whole
    return np.asarray(draft_scalar.py_func(*(np.asarray(x, dtype=float) for x in
                                             (ice_thickness, snow_thickness, ice_density, snow_density))))
