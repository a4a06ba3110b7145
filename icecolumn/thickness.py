r"""Ice thickness from a mushy column: where the ice ends when its base is a porous mush.

The column model tracks the ice-ocean interface, the depth at which the mush reaches the ocean
freezing point and a liquid fraction of 1.  Above it lies a porous bottom (the skeletal layer and,
without gravity drainage, a long tail of nearly liquid mush) that a drill or a hot-wire gauge
goes through and that cores lose.  Two thicknesses are derived here from the layer profiles, both
independent of exactly where the tracked interface sits inside nearly liquid mush, so that they
converge as the layers are refined:

``ice_thickness`` (:func:`thicknesses`, first)
    :math:`\int_0^{h} w(\phi)\,dz` with :math:`w = 1` where the liquid fraction
    :math:`\phi \le \phi_s` and :math:`w = (1 - \phi)/(1 - \phi_s)` above: ice that is mostly
    solid counts fully, slush by its solid fraction (``phi_s = 0.5`` by default: the base is put
    where the ice becomes more brine than ice; a model choice, common practice has no single
    value).  For fresh ice it is the tracked interface depth.
``load_bearing_thickness`` (:func:`thicknesses`, second)
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

from ._jit import jit
from .phase import brine_salinity_scalar, liquidus_temperature_scalar

#: Liquid fraction above which ice counts by its solid fraction in ``ice_thickness``. [1]
SLUSH_LIQUID_FRACTION = 0.5
#: Liquid fraction up to which ice counts in ``load_bearing_thickness``. [1]
LOAD_BEARING_LIQUID_FRACTION = 0.2
_BOTTOM_SAMPLES = 16


@jit
def _slush_antiderivative(phi, c):
    """G(phi) = int_0^phi w(x) dx for w = 1 (x <= c), (1 - x)/(1 - c) (x > c)."""
    over = max(phi - c, 0.0)
    return min(phi, c) + (over - 0.5 * over * (over + 2.0 * c)) / (1.0 - c)


@jit
def _slush_weight(p, c):
    """w(phi): 1 up to ``c``, the solid fraction relative to ``1 - c`` above."""
    return 1.0 if p <= c else (1.0 - p) / (1.0 - c)


@jit
def _segment_slush(a, b, length, c):
    """Integral of w(phi) over a segment of ``length`` where phi goes linearly from a to b."""
    d = b - a
    if abs(d) > 1e-12:
        return length * (_slush_antiderivative(b, c) - _slush_antiderivative(a, c)) / d
    return length * _slush_weight(0.5 * (a + b), c)


@jit
def _segment_below(a, b, length, t):
    """Length of a segment (phi linear from a to b) where phi <= t."""
    lo, hi = min(a, b), max(a, b)
    if hi - lo > 1e-12:
        return length * min(max((t - lo) / (hi - lo), 0.0), 1.0)
    return length if lo <= t else 0.0


@jit
def _bottom_liquid_fraction(t_bottom, s_bottom, t_freeze, s_ocean, x):
    """Liquid fraction at ``x`` (0: bottom layer centre, 1: interface) of the bottom half layer,
    where temperature and bulk salinity go linearly to the ocean's freezing point and salinity."""
    t = t_bottom + (t_freeze - t_bottom) * x
    s = s_bottom + (s_ocean - s_bottom) * x
    sbr = brine_salinity_scalar(t)
    p = s / sbr if sbr > 0.0 else (1.0 if s > 0.0 else 0.0)
    return min(max(p, 0.0), 1.0)


@jit
def _column_thicknesses(phi, temperature, bulk_salinity, interface_depth, ocean_salinity, slush, bearing,
                        out_ice, out_bearing):
    """Both thicknesses of columns ``k`` (rows of the 2-D profiles ``(columns, layers)``) into
    ``out_ice`` and ``out_bearing``: the top half layer at the top layer's liquid fraction,
    centre-to-centre segments with linear phi, the bottom half layer by midpoint samples."""
    n = phi.shape[1]
    for k in range(phi.shape[0]):
        h = interface_depth[k]
        if not h > 0.0:
            out_ice[k] = 0.0
            out_bearing[k] = 0.0
            continue
        c, tb, dz = slush[k], bearing[k], h / n
        p0 = phi[k, 0]
        a = 0.5 * dz * _slush_weight(p0, c)
        b = 0.5 * dz * (1.0 if p0 <= tb else 0.0)
        for j in range(n - 1):
            a += _segment_slush(phi[k, j], phi[k, j + 1], dz, c)
            b += _segment_below(phi[k, j], phi[k, j + 1], dz, tb)
        t_freeze = liquidus_temperature_scalar(ocean_salinity[k])
        wa = 0.0
        wb = 0.0
        for q in range(_BOTTOM_SAMPLES):
            p = _bottom_liquid_fraction(temperature[k, n - 1], bulk_salinity[k, n - 1], t_freeze, ocean_salinity[k],
                                        (q + 0.5) / _BOTTOM_SAMPLES)
            wa += _slush_weight(p, c)
            wb += 1.0 if p <= tb else 0.0
        a += 0.5 * dz * wa / _BOTTOM_SAMPLES
        b += 0.5 * dz * wb / _BOTTOM_SAMPLES
        out_ice[k] = a if a == a else 0.0  # NaN (unset profiles) counts nothing
        out_bearing[k] = b if b == b else 0.0


def thicknesses(liquid_fraction, temperature, bulk_salinity, interface_depth, ocean_salinity,
                slush_liquid_fraction=SLUSH_LIQUID_FRACTION,
                load_bearing_liquid_fraction=LOAD_BEARING_LIQUID_FRACTION):
    """Ice thickness (the porous bottom counted by its solid fraction) and load-bearing thickness.

    Parameters
    ----------
    liquid_fraction, temperature, bulk_salinity : array_like, shape (..., layers)
        Layer profiles, top first. [1], [degC], [g kg-1]
    interface_depth : array_like, shape (...)
        Depth of the tracked ice-ocean interface (0: open water). [m]
    ocean_salinity : array_like, broadcast against ``interface_depth``
        Salinity of the water at the interface. [g kg-1]
    slush_liquid_fraction : array_like, broadcast against ``interface_depth``
        ``phi_s``: ice with a larger liquid fraction counts by ``(1 - phi)/(1 - phi_s)``. [1]
    load_bearing_liquid_fraction : array_like, broadcast against ``interface_depth``
        ``phi_b``: the load-bearing thickness counts ice with a liquid fraction up to this. [1]

    Returns
    -------
    (ndarray, ndarray), each of the shape of ``interface_depth``
        ``ice_thickness`` and ``load_bearing_thickness``. [m]
    """
    h = np.asarray(interface_depth, dtype=np.float64)
    profiles = [np.asarray(x, dtype=np.float64) for x in (liquid_fraction, temperature, bulk_salinity)]
    n = profiles[0].shape[-1]
    shape = np.broadcast_shapes(h.shape, *(x.shape[:-1] for x in profiles))
    flat = [_rows(x, shape + (n,)).reshape(-1, n) for x in profiles]
    per_column = [_rows(x, shape).reshape(-1)
                  for x in (h, ocean_salinity, slush_liquid_fraction, load_bearing_liquid_fraction)]
    out_ice = np.empty(shape)
    out_bearing = np.empty(shape)
    _column_thicknesses(*flat, *per_column, out_ice.reshape(-1), out_bearing.reshape(-1))
    return out_ice, out_bearing


def _rows(x, shape) -> np.ndarray:
    """``x`` as a C-contiguous float64 array of ``shape`` (broadcast and copied only if needed)."""
    x = np.asarray(x, dtype=np.float64)
    if x.shape != shape:
        x = np.broadcast_to(x, shape)
    return np.ascontiguousarray(x)
