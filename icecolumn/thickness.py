r"""Ice thickness from a mushy column: where the ice ends when its base is a porous mush.

The column model tracks the ice-ocean interface, the depth at which the mush reaches the ocean
freezing point and a liquid fraction of 1.  Above it lies a porous bottom (the skeletal layer and,
without gravity drainage, a long tail of nearly liquid mush) that a drill or a hot-wire gauge
goes through and that cores lose.  Two thicknesses are derived here from the layer profiles, both
independent of exactly where the tracked interface sits inside nearly liquid mush, so that they
converge as the layers are refined:

``ice_thickness`` (:func:`slush_discounted_thickness`)
    :math:`\int_0^{h} w(\phi)\,dz` with :math:`w = 1` where the liquid fraction
    :math:`\phi \le \phi_s` and :math:`w = (1 - \phi)/(1 - \phi_s)` above: ice that is mostly
    solid counts fully, slush by its solid fraction (``phi_s = 0.5`` by default: the base is put
    where the ice becomes more brine than ice; a model choice, common practice has no single
    value).  For fresh ice it is the tracked interface depth.
``load_bearing_thickness`` (:func:`load_bearing_thickness`)
    The total thickness of ice whose liquid fraction is at most :math:`\phi_b` (0.2 by default):
    the flexural strength of sea ice falls steeply with its brine volume, to about a sixth of its
    cold-ice value at a brine volume of 0.2 (Timco & O'Brien 1994, Cold Reg. Sci. Technol. 22,
    285; their fit :math:`\sigma_f = 1.76 \exp(-5.88\sqrt{\nu_b})` MPa, from memory).

Profile between layer centres: the liquid fraction is interpolated linearly; above the top
layer's centre it is the top layer's; between the bottom layer's centre and the interface the
temperature and bulk salinity go linearly to the ocean freezing point and the ocean salinity
(salinity is continuous across the growing interface: Notz & Worster 2009, JGR 114, C05006), and
the liquid fraction is :math:`S/S_{br}(T)` (:func:`icecolumn.phase.brine_salinity`).
"""
from __future__ import annotations

import numpy as np

from .phase import brine_salinity, liquidus_temperature

#: Liquid fraction above which ice counts by its solid fraction in ``ice_thickness``. [1]
SLUSH_LIQUID_FRACTION = 0.5
#: Liquid fraction up to which ice counts in ``load_bearing_thickness``. [1]
LOAD_BEARING_LIQUID_FRACTION = 0.2
_BOTTOM_SAMPLES = 16


def _slush_antiderivative(phi, c):
    """G(phi) = int_0^phi w(x) dx for w = 1 (x <= c), (1 - x)/(1 - c) (x > c)."""
    over = np.maximum(phi - c, 0.0)
    return np.minimum(phi, c) + (over - 0.5 * over * (over + 2.0 * c)) / (1.0 - c)


def _segment_slush(a, b, length, c):
    """Integral of w(phi) over a segment where phi goes linearly from a to b."""
    d = b - a
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = (_slush_antiderivative(b, c) - _slush_antiderivative(a, c)) / d
    mid = 0.5 * (a + b)
    flat = np.where(mid <= c, 1.0, (1.0 - mid) / (1.0 - c))
    return length * np.where(np.abs(d) > 1e-12, mean, flat)


def _segment_below(a, b, length, t):
    """Length of a segment (phi linear from a to b) where phi <= t."""
    lo, hi = np.minimum(a, b), np.maximum(a, b)
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.clip((t - lo) / (hi - lo), 0.0, 1.0)
    return length * np.where(hi - lo > 1e-12, frac, (lo <= t).astype(float))


def _bottom_profile(temperature, bulk_salinity, ocean_salinity):
    """Liquid fraction at sample points of the bottom half layer (last axis: samples, centre ->
    interface, midpoints of equal sub-intervals)."""
    s_w = np.asarray(ocean_salinity, dtype=float)[..., None]
    t_f = liquidus_temperature(s_w)
    x = (np.arange(_BOTTOM_SAMPLES) + 0.5) / _BOTTOM_SAMPLES
    t = temperature[..., -1:] + (t_f - temperature[..., -1:]) * x
    s = bulk_salinity[..., -1:] + (s_w - bulk_salinity[..., -1:]) * x
    sbr = brine_salinity(t)
    with np.errstate(invalid="ignore", divide="ignore"):
        p = np.where(sbr > 0.0, s / np.where(sbr > 0.0, sbr, 1.0), np.where(s > 0.0, 1.0, 0.0))
    return np.clip(p, 0.0, 1.0)


def _thicknesses(phi, temperature, bulk_salinity, interface_depth, ocean_salinity, segment, bottom_weight):
    phi = np.asarray(phi, dtype=float)
    h = np.asarray(interface_depth, dtype=float)
    n = phi.shape[-1]
    dz = np.where(h > 0, h, 0.0)[..., None] / n
    total = 0.5 * dz[..., 0] * bottom_weight(phi[..., :1])[..., 0]  # top half of the top layer
    total = total + segment(phi[..., :-1], phi[..., 1:], dz).sum(-1)
    pb = _bottom_profile(np.asarray(temperature, dtype=float), np.asarray(bulk_salinity, dtype=float), ocean_salinity)
    total = total + 0.5 * dz[..., 0] * bottom_weight(pb).mean(-1)
    ice = h > 0
    return np.where(ice, np.nan_to_num(total), 0.0)


def slush_discounted_thickness(liquid_fraction, temperature, bulk_salinity, interface_depth, ocean_salinity,
                               slush_liquid_fraction=SLUSH_LIQUID_FRACTION):
    """Ice thickness with the porous bottom counted by its solid fraction.

    Parameters
    ----------
    liquid_fraction, temperature, bulk_salinity : array_like, shape (..., layers)
        Layer profiles, top first. [1], [degC], [g kg-1]
    interface_depth : array_like, shape (...)
        Depth of the tracked ice-ocean interface (0: open water). [m]
    ocean_salinity : array_like, shape (...)
        Salinity of the water at the interface. [g kg-1]
    slush_liquid_fraction : float
        ``phi_s``: ice with a larger liquid fraction counts by ``(1 - phi)/(1 - phi_s)``. [1]

    Returns
    -------
    ndarray, shape (...)
        Thickness. [m]
    """
    c = float(slush_liquid_fraction)

    def weight(p):
        return np.where(p <= c, 1.0, (1.0 - p) / (1.0 - c))

    return _thicknesses(liquid_fraction, temperature, bulk_salinity, interface_depth, ocean_salinity,
                        lambda a, b, dz: _segment_slush(a, b, dz, c), weight)


def load_bearing_thickness(liquid_fraction, temperature, bulk_salinity, interface_depth, ocean_salinity,
                           load_bearing_liquid_fraction=LOAD_BEARING_LIQUID_FRACTION):
    """Total thickness of ice whose liquid fraction is at most ``load_bearing_liquid_fraction``.

    Parameters as :func:`slush_discounted_thickness`; ``load_bearing_liquid_fraction`` [1].

    Returns
    -------
    ndarray, shape (...)
        Thickness. [m]
    """
    t = float(load_bearing_liquid_fraction)
    return _thicknesses(liquid_fraction, temperature, bulk_salinity, interface_depth, ocean_salinity,
                        lambda a, b, dz: _segment_below(a, b, dz, t), lambda p: (p <= t).astype(float))
