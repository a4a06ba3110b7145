r"""Ice mass-balance buoy (thermistor string) analysis: interfaces and the ocean heat flux.

Pure functions on numpy arrays and xarray objects; no file is opened here (readers and
writers are in :mod:`icecolumn.buoy_io`, figures in :mod:`icecolumn.plotting_buoy`).

Coordinates and signs
---------------------
* ``depth`` z [m] is positive **down** from a fixed reference on the string: the ice
  surface (snow-ice interface) at deployment.  The string is frozen into the ice and
  moves with it, so a sensor stays at the same place in the ice; sensors above the
  reference (in snow or air) have z < 0.  Interface positions (snow surface, ice
  surface, ice bottom) are depths in the same coordinate.
* ``F_c`` [W m-2], the conductive heat flux in the lower ice, is positive **upward**
  (from the warm base towards the cold surface): :math:`F_c = k\,\partial T/\partial z`.
* ``F_w`` [W m-2], the ocean heat flux into the ice base, is positive **upward**, as
  ``[ocean] heat_flux`` and the ``ocean_heat_flux`` forcing column of the model.
* ``G`` [W m-2] :math:`= \rho L_{eff}\,dh/dt` is the latent heat released by basal
  growth (negative while the base melts).
* ``F_s`` [W m-2] is the heat *released* by the ice between the flux level and the
  base (positive while that ice cools, i.e. loses enthalpy).

Residual method
---------------
The energy of the slab between the level :math:`z_c` where ``F_c`` is measured and the
ice bottom :math:`z_b` (sea water that freezes onto it counted with the water's
enthalpy :math:`H_w = \rho c_l T_f`) changes only by the flux in at the bottom and out
at the top, so over a window :math:`[t_1, t_2]` of length :math:`\Delta t`

.. math::
   F_w = \overline{F_c} - \rho L_{eff}\frac{\Delta h}{\Delta t} - F_s,\qquad
   \rho L_{eff} = H_w - H_{new},\qquad
   F_s = -\frac{E_2 - E_1 - H_{new}\,\Delta h}{\Delta t},\qquad
   E = \int_{z_c}^{z_b} H(T, S)\,dz

This is the residual method of McPhee & Untersteiner (1982, JGR 87(C3), 2071-2074,
"Using sea ice to measure vertical heat flux in the ocean": FRAM I, less than 2 W m-2 in
spring 1979), used with thermistor strings by Perovich et al. (1997, GRL 24(5), 555-558)
and for the SHEBA year by Perovich & Elder (2002, GRL 29(9), 1344, doi:10.1029/
2001GL014171); the buoy design with thermistors and acoustic sounders is Richter-Menge
et al. (2006, Ann. Glaciol. 44, 205-210; 0.1 K thermistor accuracy, 5 mm sounder
accuracy, from memory).  Titles and abstracts of these papers were checked; volumes,
pages and the details of their methods are from memory.  The form above is written for this project's enthalpy (phase
module, reference liquid at 0 degC): :math:`H_{new}` is the mean enthalpy of the ice
grown (or melted) in the window at the temperatures the sensors read across that layer
and the bottom's bulk salinity, so :math:`\rho L_{eff}` is the enthalpy difference
between sea water at its freezing point and that ice, and ``F_s`` is the enthalpy
change of the ice that was there all window.  The split into ``G`` and ``F_s`` depends
on that choice; their sum, and so ``F_w``, does not.  Not counted: the enthalpy that
brine drainage exchanges across the base (brine out, sea water in; about 0.5 W m-2 in
the model's twin run) and the interior freezing that desalination causes, which a
salinity fixed within a window attributes to the base (exact in steady growth).

Uncertainty
-----------
A Monte Carlo of ``members`` draws with a fixed seed (numpy ``default_rng``).  Each
source is a bound :math:`\pm a` drawn uniformly (standard uncertainty :math:`a/\sqrt 3`):
a calibration offset per sensor (``sensor_accuracy``, the same offset all record), the
interface position at every window boundary (``position_uncertainty``; it stands for all
errors of the position, including those the sensor errors cause in the detection), one
bulk-salinity offset for the record (``salinity_uncertainty``) and one relative
conductivity error (``conductivity_uncertainty``).  Every term is recomputed for every
member; the reported uncertainty is the expanded uncertainty, 2 standard deviations of
the members (coverage about 95 %).  Random sensor noise is not drawn (it averages out
over the profiles of a window).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np
import xarray as xr

from .constants import BRINE_SPECIFIC_HEAT, ICE_DENSITY, ICE_SPECIFIC_HEAT, LATENT_HEAT, OCEAN_SALINITY
from .errors import InputError
from .output import CAUTION
from .phase import liquidus_temperature, state_enthalpy
from .profiles import FIRST_YEAR_SALINITY_SOURCE, first_year_salinity
from .properties import conductivity

__all__ = [
    "CAUTION_FLUX", "BudgetSettings", "SalinityProfile", "WINDOW_FLAGS",
    "ocean_freezing_temperature", "linear_gradient", "band_conductivity", "conductive_flux",
    "column_enthalpy", "effective_latent_heat",
    "detect_ice_bottom", "detect_ice_surface", "clean_series", "fill_ice_surface", "running_median", "position_at",
    "interfaces", "window_bounds", "heat_budget", "record_mean", "synthetic_string",
]

#: The caution printed with every buoy result (followed by the model's own caution).
CAUTION_FLUX = ("A flux estimate is not a measurement: the ocean heat flux is the residual of measured "
                "temperatures and interface positions with assumed salinity and ice properties. " + CAUTION)

#: Window quality flags (CF flag_values / flag_meanings); values other than 0 carry no estimate.
WINDOW_FLAGS = {
    0: "estimate",
    1: "incomplete_window",
    2: "data_gap",
    3: "ice_bottom_unknown",
    4: "too_few_sensors_in_gradient_band",
}

_DAY = 86400.0
_trapz = getattr(np, "trapezoid", None) or np.trapz


@dataclass(frozen=True)
class BudgetSettings:
    """Settings of the residual analysis (SI units).

    Attributes
    ----------
    window : float
        Window length. [s]
    band_bottom, band_top : float
        The linear fit for the temperature gradient uses the sensors between ``band_top``
        and ``band_bottom`` above the ice bottom (excluding the warm porous bottom). [m]
    min_band_sensors : int
        Fewest valid sensors in the band for a gradient. [1]
    ocean_salinity : float
        Salinity of the water under the ice (its freezing point is the bottom criterion). [g kg-1]
    freezing_tolerance : float
        A sensor is in the ice when colder than the freezing point minus this. [K]
    bottom_fit_length : float
        Length of string above the deepest cold sensor whose linear fit is extrapolated
        to the freezing point. [m]
    smoothing : float
        Span of the running median applied to detected interfaces. [s]
    end_span : float
        Interface positions at window boundaries come from a linear fit of the interface
        series within this time of the boundary. [s]
    min_coverage : float
        Fewest profiles in a window as a fraction of a regular record's. [1]
    sensor_accuracy, salinity_uncertainty, conductivity_uncertainty : float
        Bounds of the Monte Carlo draws: per-sensor offset [K], bulk-salinity offset
        [g kg-1], relative conductivity error [1].
    position_uncertainty : float or None
        Bound of the interface position error at each window boundary [m]; None: half the
        median sensor spacing for detected interfaces, 5 mm for measured ones (acoustic
        sounder accuracy of Richter-Menge et al. 2006, from memory).
    members, seed : int
        Monte Carlo members and seed.
    density, ice_specific_heat, brine_specific_heat, latent_heat : float
        The model's properties ([properties]). [kg m-3], [J kg-1 K-1], [J kg-1 K-1], [J kg-1]
    conductivity_model : str
        One of :data:`icecolumn.properties.CONDUCTIVITY_MODELS`.
    constant_conductivity : float
        [properties] ice_conductivity. [W m-1 K-1]
    """

    window: float = 10 * _DAY
    band_bottom: float = 0.10
    band_top: float = 0.40
    min_band_sensors: int = 3
    ocean_salinity: float = OCEAN_SALINITY
    freezing_tolerance: float = 0.1
    bottom_fit_length: float = 0.10
    smoothing: float = _DAY
    end_span: float = _DAY
    min_coverage: float = 0.8
    sensor_accuracy: float = 0.1
    position_uncertainty: float | None = None
    salinity_uncertainty: float = 2.0
    conductivity_uncertainty: float = 0.1
    members: int = 200
    seed: int = 1
    density: float = ICE_DENSITY
    ice_specific_heat: float = ICE_SPECIFIC_HEAT
    brine_specific_heat: float = BRINE_SPECIFIC_HEAT
    latent_heat: float = LATENT_HEAT
    conductivity_model: str = "parallel_yen1991"
    constant_conductivity: float = 2.03

    @classmethod
    def from_config(cls, cfg, **changes) -> "BudgetSettings":
        """Settings with the ocean salinity and ice properties of an icecolumn Config."""
        p = cfg.properties
        base = cls(ocean_salinity=cfg.ocean.salinity, density=p.ice_density, ice_specific_heat=p.ice_specific_heat,
                   brine_specific_heat=p.brine_specific_heat, latent_heat=p.latent_heat,
                   conductivity_model=p.conductivity_model, constant_conductivity=p.ice_conductivity)
        return replace(base, **changes)

    def check(self) -> None:
        """Raise :class:`InputError` for settings that cannot work."""
        if not self.window > 0:
            raise InputError(f"window: {self.window:g} s must be positive")
        if not 0.0 <= self.band_bottom < self.band_top:
            raise InputError(f"gradient band: need 0 <= bottom < top, got {self.band_bottom:g} and {self.band_top:g} m "
                             "above the ice bottom")
        for name in ("sensor_accuracy", "salinity_uncertainty", "conductivity_uncertainty", "freezing_tolerance"):
            v = getattr(self, name)
            if not (np.isfinite(v) and v >= 0):
                raise InputError(f"{name}: {v!r} must be a finite number >= 0")
        if self.position_uncertainty is not None and not (np.isfinite(self.position_uncertainty)
                                                          and self.position_uncertainty >= 0):
            raise InputError(f"position uncertainty: {self.position_uncertainty!r} must be a finite number >= 0")
        if self.members < 2:
            raise InputError(f"members: {self.members} must be at least 2")
        if not 0 < self.min_coverage <= 1:
            raise InputError(f"min_coverage: {self.min_coverage:g} must be in (0, 1]")

    def enthalpy(self, temperature, salinity):
        """Equilibrium enthalpy [J m-3] at temperature [degC] and bulk salinity [g kg-1]."""
        return state_enthalpy(temperature, salinity, self.density, self.ice_specific_heat,
                              self.brine_specific_heat, self.latent_heat)


@dataclass(frozen=True)
class SalinityProfile:
    """Bulk salinity of the ice against depth below the ice surface.

    From an ice core (section mid-depths ``depth`` [m] and ``salinity`` [g kg-1], held
    constant beyond the first and last section), or, with ``depth`` None, the assumed
    uniform depth-mean of cold first-year ice of the window's thickness
    (:func:`icecolumn.profiles.first_year_salinity`, Cox & Weeks 1974).
    """

    depth: np.ndarray | None = None
    salinity: np.ndarray | None = None
    source: str = field(default="assumed")

    def at(self, depth_below_surface, thickness: float) -> np.ndarray:
        """Bulk salinity [g kg-1] at depths below the ice surface [m] in ice of ``thickness`` [m]."""
        d = np.asarray(depth_below_surface, dtype=float)
        if self.depth is None:
            return np.full(d.shape, first_year_salinity(float(thickness)))
        return np.interp(d, self.depth, self.salinity)

    def describe(self) -> str:
        if self.depth is None:
            return f"assumed first-year profile, uniform depth-mean for the window's thickness ({FIRST_YEAR_SALINITY_SOURCE})"
        return f"ice core {self.source} ({len(self.depth)} sections, {self.salinity.min():.1f}-{self.salinity.max():.1f} g/kg)"


# --------------------------------------------------------------------------- small physics


def ocean_freezing_temperature(salinity):
    """Freezing temperature of sea water [degC] at Absolute Salinity [g kg-1].

    The phase module's liquidus (fitted to TEOS-10 within 0.03 K for 0-40 g/kg; see
    :mod:`icecolumn.phase`), so the bottom criterion matches the model's interface.
    """
    return liquidus_temperature(salinity)


def linear_gradient(depth, temperature):
    """Least-squares slope dT/dz [K m-1] of a straight line through (depth [m], temperature [degC]).

    NaN where fewer than two finite points.  ``temperature`` may be 2-D (profiles, sensors).
    """
    z = np.asarray(depth, dtype=float)
    t = np.atleast_2d(np.asarray(temperature, dtype=float))
    ok = np.isfinite(t)
    n = ok.sum(axis=1)
    zz = np.where(ok, z[None, :], 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        zbar = zz.sum(axis=1) / n
        tbar = np.where(ok, t, 0.0).sum(axis=1) / n
        dz = np.where(ok, z[None, :] - zbar[:, None], 0.0)
        dt = np.where(ok, t - tbar[:, None], 0.0)
        g = (dz * dt).sum(axis=1) / (dz * dz).sum(axis=1)
    g = np.where(n >= 2, g, np.nan)
    return g if np.ndim(temperature) > 1 else float(g[0])


def band_conductivity(temperature, salinity, settings: BudgetSettings = BudgetSettings()):
    """Mean bulk conductivity [W m-1 K-1] of the sensors of a band.

    The conductivity of each sensor's ice, at its temperature [degC] and bulk salinity
    [g kg-1] with the liquid fraction of the phase module (``S / S_br(T)``), by the
    model's conductivity law (default the parallel Yen et al. 1991 mixture, see
    :func:`icecolumn.properties.conductivity`), averaged over the finite sensors (for a
    steady profile the mean of k over the temperatures spanned is the Kirchhoff-transform
    conductivity of the band).  ``temperature`` and ``salinity`` broadcast; the mean is
    taken over the last axis.
    """
    t, s = np.broadcast_arrays(np.asarray(temperature, dtype=float), np.asarray(salinity, dtype=float))
    ok = np.isfinite(t)
    tt = np.where(ok, t, -5.0)
    _, phi = settings.enthalpy(tt, s)
    k = conductivity(tt, phi, s, settings.conductivity_model, settings.constant_conductivity)
    with np.errstate(invalid="ignore"):
        return np.where(ok, k, 0.0).sum(axis=-1) / ok.sum(axis=-1)


def conductive_flux(depth, temperature, salinity, settings: BudgetSettings = BudgetSettings()):
    """Upward conductive heat flux :math:`F_c = \\bar k\\,dT/dz` [W m-2] in a band of sensors.

    Parameters
    ----------
    depth : array_like, (n,)
        Sensor depths, positive down. [m]
    temperature : array_like, (..., n)
        Sensor temperatures (NaN: missing). [degC]
    salinity : array_like, (n,)
        Bulk salinity at the sensors. [g kg-1]

    Returns
    -------
    float or ndarray
        ``dT/dz`` from a least-squares line (:func:`linear_gradient`) times the band's mean
        conductivity (:func:`band_conductivity`). Positive when the ice is colder above.
    """
    g = linear_gradient(depth, temperature)
    k = band_conductivity(temperature, salinity, settings)
    return g * k


def effective_latent_heat(temperature, salinity, freezing_temperature, settings: BudgetSettings = BudgetSettings()):
    """Volumetric effective latent heat :math:`\\rho L_{eff} = H_w - H(T, S)` [J m-3].

    The enthalpy difference between sea water at its freezing point ``freezing_temperature``
    [degC] (:math:`H_w = \\rho c_l T_f`, liquid) and sea ice at ``temperature`` [degC] with
    bulk salinity ``salinity`` [g kg-1] (phase module; equal-density convention).  For
    fresh ice at 0 degC it is :math:`\\rho L`; brine left in the pores lowers it.
    """
    hw = settings.density * settings.brine_specific_heat * np.asarray(freezing_temperature, dtype=float)
    h, _ = settings.enthalpy(temperature, salinity)
    return hw - h


def _column_enthalpy_batch(depth, profiles, z_top, z_bottom, freezing_temperature, salinity_grid,
                           settings: BudgetSettings, points: int = 161):
    """:func:`column_enthalpy` for several profiles at once: ``profiles`` (m, n) [degC],
    ``z_top`` and ``z_bottom`` (m,) [m], ``salinity_grid(grid)`` -> bulk salinity on the
    (m, points) grid [g kg-1].  Returns the integrals (m,) [J m-2], the grid and its temperatures."""
    z = np.asarray(depth, dtype=float)
    prof = np.atleast_2d(np.asarray(profiles, dtype=float))
    m = prof.shape[0]
    top = np.broadcast_to(np.asarray(z_top, dtype=float), (m,))
    bot = np.broadcast_to(np.asarray(z_bottom, dtype=float), (m,))
    s = (np.arange(points) + 0.5) / points  # cell centres: the midpoint rule never evaluates H at the interface
    grid = top[:, None] + (bot - top)[:, None] * s[None, :]
    tg = np.empty_like(grid)
    for j in range(m):
        keep = np.isfinite(prof[j]) & (z < bot[j])
        zn = np.append(z[keep], bot[j])
        tn = np.append(prof[j, keep], freezing_temperature)
        tg[j] = np.interp(grid[j], zn, tn)
    h, _ = settings.enthalpy(tg, salinity_grid(grid))
    return h.mean(axis=1) * (bot - top), grid, tg


def column_enthalpy(depth, temperature, z_top, z_bottom, freezing_temperature, salinity,
                    settings: BudgetSettings = BudgetSettings(), points: int = 161):
    """Enthalpy of the ice between ``z_top`` and ``z_bottom`` [J m-2].

    The temperature is piecewise linear through the finite sensors above ``z_bottom`` and
    the freezing point at ``z_bottom`` (the interface); above the first sensor it is held.
    :math:`\\int H(T(z), S(z))\\,dz` (enthalpy of the phase module,
    :func:`icecolumn.phase.state_enthalpy`) by the midpoint rule on ``points`` equal cells
    (exact for a linear integrand; H is never evaluated at the interface itself, where
    fresh ice at its melting point would be ambiguous).

    Parameters
    ----------
    depth : (n,) sensor depths [m]; temperature : (n,) [degC];
    z_top, z_bottom : float [m]; freezing_temperature : float [degC];
    salinity : callable ``S(z)`` [g kg-1] of depth [m] (the analysis's salinity profile).

    Returns
    -------
    float
        [J m-2]
    """
    e, _, _ = _column_enthalpy_batch(depth, np.asarray(temperature, float)[None, :], z_top, z_bottom,
                                     freezing_temperature, salinity, settings, points)
    return float(e[0])


# --------------------------------------------------------------------------- interfaces


def _longest_run(mask: np.ndarray) -> tuple[int, int]:
    """(start, end) inclusive of the longest run of True (the deeper one on a tie); (-1, -1) if none."""
    best = (-1, -1)
    start = None
    for i, m in enumerate(np.append(mask, False)):
        if m and start is None:
            start = i
        elif not m and start is not None:
            if best[0] < 0 or (i - 1 - start) >= (best[1] - best[0]):
                best = (start, i - 1)
            start = None
    return best


def detect_ice_bottom(depth, temperature, freezing_temperature, tolerance: float = 0.1, fit_length: float = 0.1,
                      water_sensors: int = 5, water_window: float = 0.3):
    """Ice bottom [m] of each profile from the freezing point of the water below.

    Method (this project's, after the freezing-point criterion of thermistor-string
    studies such as Perovich et al. 1997 and the comparison of Richter et al. 2023,
    J. Glaciol. 69, 879-898):

    * the water's freezing point: the water under growing ice is at its freezing point
      (common practice, no source), so the median of the ``water_sensors`` deepest valid
      sensors is taken for it when it lies within ``water_window`` [K] of
      ``freezing_temperature`` (the liquidus at the ocean salinity; else that is used).
      This follows a saltier or fresher water and cancels a common sensor offset;
    * the ice is the longest run of consecutive valid sensors colder than that minus
      ``tolerance`` [K]; its deepest sensor ``k`` is in the ice;
    * a straight line through the run's sensors within ``fit_length`` [m] above ``k`` is
      extrapolated to the freezing point (mid-point between ``k`` and the next sensor when
      the line does not warm downward).  A result more than two spacings below the next
      valid sensor is not trusted (NaN: the lower ice is too nearly isothermal).

    NaN also when no sensor is cold, or the run reaches the deepest valid sensor (the
    string does not reach the water).

    Parameters
    ----------
    depth : (n,) [m]; temperature : (nt, n) [degC] (NaN missing);
    freezing_temperature : float or (nt,) [degC]

    Returns
    -------
    ndarray (nt,) [m]
    """
    z = np.asarray(depth, dtype=float)
    temp = np.atleast_2d(np.asarray(temperature, dtype=float))
    tf_all = np.broadcast_to(np.asarray(freezing_temperature, dtype=float), (temp.shape[0],))
    out = np.full(temp.shape[0], np.nan)
    for i in range(temp.shape[0]):
        ok = np.isfinite(temp[i])
        if ok.sum() < max(3, water_sensors + 1):
            continue
        zs, ts = z[ok], temp[i, ok]
        tf = tf_all[i]
        water = float(np.median(ts[-water_sensors:])) if water_sensors > 0 else np.nan
        if np.isfinite(water) and abs(water - tf) <= water_window:
            tf = water
        a, k = _longest_run(ts < tf - tolerance)
        if k < 0 or k == zs.size - 1:
            continue
        sel = np.arange(a, k + 1)
        sel = sel[zs[sel] >= zs[k] - fit_length - 1e-9]
        lo, nxt = zs[k], zs[k + 1]
        zb = 0.5 * (lo + nxt)
        if sel.size >= 2:
            g = linear_gradient(zs[sel], ts[sel])
            if np.isfinite(g) and g > 0:
                zb = max(zs[sel].mean() + (tf - ts[sel].mean()) / g, lo)
        if zb > nxt + 2.0 * (nxt - lo):
            continue
        out[i] = zb
    return out


def _line_crossing(z1, t1, z2, t2):
    """Depth where the least-squares lines through two point sets cross (NaN if parallel)."""
    if z1.size < 2 or z2.size < 2:
        return np.nan
    b1, b2 = linear_gradient(z1, t1), linear_gradient(z2, t2)
    a1, a2 = t1.mean() - b1 * z1.mean(), t2.mean() - b2 * z2.mean()
    if not np.isfinite(b1 - b2) or abs(b1 - b2) < 1e-9:
        return np.nan
    return (a2 - a1) / (b1 - b2)


def _window_slopes(z: np.ndarray, t: np.ndarray, n: int):
    """Least-squares slopes through sensors j-n..j (``above``) and j..j+n (``below``) for every
    sensor j, and the rms residual of the line through j-2n..j (``flatness`` of the part above);
    NaN where the window leaves the string."""
    m = z.size
    above = np.full(m, np.nan)
    below = np.full(m, np.nan)
    rough = np.full(m, np.nan)
    if m > n:
        wz = np.lib.stride_tricks.sliding_window_view(z, n + 1)
        wt = np.lib.stride_tricks.sliding_window_view(t, n + 1)
        dz = wz - wz.mean(axis=1, keepdims=True)
        sl = (dz * (wt - wt.mean(axis=1, keepdims=True))).sum(axis=1) / (dz * dz).sum(axis=1)
        above[n:] = sl
        below[: m - n] = sl
    if m > 2 * n:
        wz = np.lib.stride_tricks.sliding_window_view(z, 2 * n + 1)
        wt = np.lib.stride_tricks.sliding_window_view(t, 2 * n + 1)
        dz = wz - wz.mean(axis=1, keepdims=True)
        dt = wt - wt.mean(axis=1, keepdims=True)
        sl = (dz * dt).sum(axis=1) / (dz * dz).sum(axis=1)
        rough[2 * n:] = np.sqrt(np.mean((dt - sl[:, None] * dz) ** 2, axis=1))
    return above, below, rough


def detect_ice_surface(depth, temperature, ice_bottom, ice_span: float = 0.3, snow_ratio: float = 2.5,
                       air_ratio: float = 0.3, min_gradient: float = 2.0, window: int = 3,
                       line_tolerance: float = 0.3):
    """Ice surface (snow-ice or air-ice interface) and snow surface [m] of each profile.

    Method (this project's, on the heat-flux continuity and conductivity-ratio idea of
    Liao et al. 2019, Int. J. Digit. Earth 12(8), 962-979: snow conducts several times less
    heat than ice, so at the interface the temperature gradient above is several times the
    gradient below, with the same sign).  With ``g_ice`` the median gradient between
    neighbouring valid sensors within ``ice_span`` above the bottom (less 5 cm; it must
    exceed ``min_gradient`` [K m-1], else the ice is too warm for a contrast and the
    result is NaN), and ``a``, ``b`` the least-squares slopes through ``window`` + 1 sensors
    above and below each sensor:

    * snow-ice interface: the sensor where ``a > snow_ratio * b`` with an ice-like slope
      below (``0.3 g_ice < b < 3 g_ice``) and the largest ``a - b``;
    * without such a sensor, an air-ice interface: the deepest sensor below a flat part
      (rms about a line through ``2 window + 1`` sensors under 0.2 K, slope under
      ``air_ratio * g_ice``) with an ice-like slope below;
    * the interface lies where straight lines through the sensors on its two sides cross
      (kept within one spacing of the sensor);
    * snow surface: going up from the ice surface, the last sensor still on a straight line
      (refitted at every step) through the snow sensors below it, within
      ``line_tolerance`` [K]; two successive sensors off the line are in the air, and the
      surface is put half-way to the first of them.  The air just above the snow is not at
      the snow surface's temperature (a surface inversion in winter), which is what makes
      the departure visible.

    Returns
    -------
    ice_surface, snow_surface : ndarray (nt,) [m]
    """
    z = np.asarray(depth, dtype=float)
    temp = np.atleast_2d(np.asarray(temperature, dtype=float))
    zb_all = np.broadcast_to(np.asarray(ice_bottom, dtype=float), (temp.shape[0],))
    n = int(window)
    ice = np.full(temp.shape[0], np.nan)
    snow = np.full(temp.shape[0], np.nan)
    for i in range(temp.shape[0]):
        zb = zb_all[i]
        if not np.isfinite(zb):
            continue
        ok = np.isfinite(temp[i]) & (z < zb - 0.05)
        if ok.sum() < 2 * n + 3:
            continue
        zs, ts = z[ok], temp[i, ok]
        g = np.diff(ts) / np.diff(zs)
        mid = 0.5 * (zs[1:] + zs[:-1])
        lower = mid >= zb - ice_span
        if lower.sum() < 2:
            continue
        g_ice = float(np.median(g[lower]))
        if not g_ice > min_gradient:
            continue
        a, b, rough = _window_slopes(zs, ts, n)
        upper = zs < zb - 0.5 * ice_span
        with np.errstate(invalid="ignore"):
            snowy = upper & (b > 0.3 * g_ice) & (b < 3.0 * g_ice) & (a > snow_ratio * b) & (a > snow_ratio * min_gradient)
        if snowy.any():
            cand = np.flatnonzero(snowy)
            j = int(cand[np.argmax((a - b)[cand])])
            bare = False
        else:
            a2 = np.full(zs.size, np.nan)
            if zs.size > 2 * n:
                a2_, _, _ = _window_slopes(zs, ts, 2 * n)
                a2 = a2_
            with np.errstate(invalid="ignore"):
                airy = (upper & (rough < 0.2) & (np.abs(a2) < air_ratio * g_ice) & (b > 0.5 * g_ice)
                        & (b < 2.0 * g_ice))
            if not airy.any():
                continue
            j = int(np.flatnonzero(airy)[-1])
            bare = True
        if j < 1 or j + 1 >= zs.size:
            continue
        up = np.arange(max(j - n, 0), j)
        dn = np.arange(j + 1, min(j + n + 1, zs.size))
        zc = _line_crossing(zs[dn], ts[dn], zs[up], ts[up])
        ice[i] = zc if np.isfinite(zc) and zs[j - 1] <= zc <= zs[j + 1] else zs[j]
        if bare:
            snow[i] = ice[i]
            continue
        # snow surface: up the snow while the sensors stay on the (refitted) snow line
        first = max(j - 1 - n, 0)
        if j - first < 2:
            continue
        sz, st = list(zs[first:j]), list(ts[first:j])
        k, off, last_on = first, 0, first
        while k > 0 and off < 2:
            k -= 1
            slope, icpt = np.polyfit(sz, st, 1)
            if abs(ts[k] - (icpt + slope * zs[k])) > line_tolerance:
                off += 1
            else:
                off, last_on = 0, k
                sz.append(zs[k])
                st.append(ts[k])
        if off == 2:
            snow[i] = 0.5 * (zs[last_on] + zs[last_on - 1])
    return ice, snow


def clean_series(times, values, span: float, guard_span: float = 5 * _DAY, jump: float = 0.05,
                 min_fraction: float = 0.5):
    """Running median of a detected interface series, without outliers.

    Values farther than ``jump`` [m] from the running median over ``guard_span`` [s] are
    dropped; the result is the running median over ``span`` [s] of the rest, kept only
    where at least ``min_fraction`` of the profiles in the span contributed (NaN
    elsewhere: a few scattered detections are not trusted).
    """
    t = np.asarray(times).astype("datetime64[ns]").astype(np.int64) / 1e9
    v = np.asarray(values, dtype=float).copy()
    guard = running_median(times, v, guard_span)
    with np.errstate(invalid="ignore"):
        v[np.abs(v - guard) > jump] = np.nan
    out = running_median(times, v, span)
    step = float(np.median(np.diff(t))) if t.size > 1 else span
    lo = np.searchsorted(t, t - 0.5 * span, side="left")
    hi = np.searchsorted(t, t + 0.5 * span, side="right")
    finite = np.concatenate([[0], np.cumsum(np.isfinite(v))])
    count = finite[hi] - finite[lo]
    expected = np.maximum(1.0, min(span / step + 1.0, float(t.size)))
    out[count < min_fraction * expected] = np.nan
    return out


def fill_ice_surface(ice_surface, snow_surface):
    """Fill an ice-surface series where the profile gave none (warm ice), and say how.

    Where the detected value is missing the last one is carried forward; where the snow
    surface is deeper than that, the snow has gone and the surface seen from above (the
    upper sounder) is the ice: the ice surface is the snow surface.  Before the first
    detection nothing is filled.  Returns the filled
    series [m] and a flag per time (0 detected, 1 carried forward, 2 from the snow
    surface, 3 unknown).
    """
    zi = np.asarray(ice_surface, dtype=float)
    zs = np.asarray(snow_surface, dtype=float)
    out = zi.copy()
    flag = np.where(np.isfinite(zi), 0, 3).astype(np.int8)
    last = np.nan
    for i in range(zi.size):
        if np.isfinite(zi[i]):
            last = zi[i]
            continue
        if np.isfinite(last):
            out[i], flag[i] = last, 1
        if np.isfinite(out[i]) and np.isfinite(zs[i]) and zs[i] > out[i]:
            out[i], flag[i] = zs[i], 2
            last = zs[i]
    return out, flag


def running_median(times, values, span: float):
    """Running median over ``span`` [s] centred on each time (NaN ignored; NaN where none)."""
    t = (np.asarray(times).astype("datetime64[ns]").astype(np.int64) / 1e9)
    v = np.asarray(values, dtype=float)
    out = np.full(v.shape, np.nan)
    lo = np.searchsorted(t, t - 0.5 * span, side="left")
    hi = np.searchsorted(t, t + 0.5 * span, side="right")
    for i in range(t.size):
        w = v[lo[i]:hi[i]]
        w = w[np.isfinite(w)]
        if w.size:
            out[i] = np.median(w)
    return out


def position_at(times, values, at, span: float, minimum: int = 3):
    """Interface position [m] at the times ``at``: a least-squares line through the finite
    values within ``span`` [s] of each time, evaluated there (NaN with fewer than ``minimum``
    values, or when ``at`` is outside the record)."""
    t = np.asarray(times).astype("datetime64[ns]").astype(np.int64) / 1e9
    a = np.atleast_1d(np.asarray(at).astype("datetime64[ns]")).astype(np.int64) / 1e9
    v = np.asarray(values, dtype=float)
    out = np.full(a.shape, np.nan)
    for i, x in enumerate(a):
        if x < t[0] - 1 or x > t[-1] + 1:
            continue
        sel = (np.abs(t - x) <= span) & np.isfinite(v)
        if sel.sum() < minimum:
            continue
        tt, vv = t[sel] - x, v[sel]
        if np.ptp(tt) == 0:
            out[i] = vv.mean()
            continue
        b = np.polyfit(tt, vv, 1)
        out[i] = b[1]
    return out


def interfaces(record: xr.Dataset, settings: BudgetSettings = BudgetSettings(), detect: bool = False) -> xr.Dataset:
    """Snow surface, ice surface and ice bottom of every profile of a buoy record.

    Measured positions (variables ``snow_surface``, ``ice_surface``, ``ice_bottom`` of the
    record, e.g. acoustic sounders) are used where the record has them, unless ``detect``.
    The others are detected from the temperature profile (:func:`detect_ice_bottom`,
    :func:`detect_ice_surface`, with the measured bottom when there is one) and cleaned
    by :func:`clean_series` (running median over ``settings.smoothing``, outliers
    dropped).  Where the ice surface cannot be detected (warm ice) it is filled by
    :func:`fill_ice_surface` (last value carried forward, or the snow surface once that
    is deeper), and ``ice_surface_fill`` says so; a detected bottom is never filled.
    The detected series are returned too (``*_detected``) for comparison and figures.

    Returns
    -------
    xarray.Dataset
        On ``time``: ``snow_surface``, ``ice_surface``, ``ice_bottom`` [m, positive down]
        (attribute ``source`` "measured" or "detected"), ``*_detected``,
        ``ice_surface_fill``, ``ice_thickness`` and ``snow_thickness`` [m].
    """
    z = record["depth"].values
    temp = record["temperature"].values
    t = record["time"].values
    tf = float(ocean_freezing_temperature(settings.ocean_salinity))

    def measured(name):
        return name in record and not detect and np.isfinite(record[name].values).any()

    zb_raw = detect_ice_bottom(z, temp, tf, settings.freezing_tolerance, settings.bottom_fit_length)
    det = {"ice_bottom": clean_series(t, zb_raw, settings.smoothing)}
    zb_use = np.asarray(record["ice_bottom"].values, float) if measured("ice_bottom") else det["ice_bottom"]
    zi_raw, zs_raw = detect_ice_surface(z, temp, zb_use)
    det["ice_surface"] = clean_series(t, zi_raw, settings.smoothing)
    det["snow_surface"] = clean_series(t, zs_raw, settings.smoothing)
    long = {"ice_bottom": "depth of the ice bottom (ice-ocean interface)",
            "ice_surface": "depth of the ice surface (snow-ice or air-ice interface)",
            "snow_surface": "depth of the snow surface (air-snow interface)"}
    how = {"ice_bottom": "freezing point of the water below (icecolumn.buoy.detect_ice_bottom)",
           "ice_surface": "change of the temperature gradient (icecolumn.buoy.detect_ice_surface)",
           "snow_surface": "departure from the snow's temperature line (icecolumn.buoy.detect_ice_surface)"}
    used = {}
    out = {}
    for name in ("snow_surface", "ice_surface", "ice_bottom"):
        is_measured = measured(name)
        used[name] = np.asarray(record[name].values, float) if is_measured else det[name]
        comment = ("measured positions from the record" if is_measured else
                   f"detected from the temperature profile: {how[name]}; running median over "
                   f"{settings.smoothing / 3600:g} h without outliers (icecolumn.buoy.clean_series)")
        out[name] = [is_measured, comment]
    fill = np.zeros(t.size, np.int8)
    if not out["ice_surface"][0]:
        used["ice_surface"], fill = fill_ice_surface(used["ice_surface"], used["snow_surface"])
        out["ice_surface"][1] += ("; where none was detected (warm ice): the last value carried forward, or the "
                                  "snow surface once it is deeper (see ice_surface_fill)")
    data = {}
    for name in ("snow_surface", "ice_surface", "ice_bottom"):
        data[name] = ("time", used[name], {"units": "m", "long_name": long[name], "positive": "down",
                                           "source": "measured" if out[name][0] else "detected",
                                           "comment": out[name][1]})
        data[f"{name}_detected"] = ("time", det[name], {"units": "m", "long_name": f"{long[name]}, detected",
                                                        "positive": "down", "comment": how[name],
                                                        "source": "detected"})
    data["ice_surface_fill"] = ("time", fill, {"long_name": "how the ice surface was found",
                                               "flag_values": np.array([0, 1, 2, 3], np.int8),
                                               "flag_meanings": "measured_or_detected carried_forward "
                                                                "snow_surface unknown"})
    ds = xr.Dataset(data, coords={"time": record["time"]})
    ds["ice_thickness"] = ("time", ds["ice_bottom"].values - ds["ice_surface"].values,
                           {"units": "m", "long_name": "ice thickness from the interfaces",
                            "standard_name": "sea_ice_thickness"})
    ds["snow_thickness"] = ("time", np.maximum(ds["ice_surface"].values - ds["snow_surface"].values, 0.0),
                            {"units": "m", "long_name": "snow thickness from the interfaces",
                             "standard_name": "surface_snow_thickness"})
    return ds


# --------------------------------------------------------------------------- windows


def window_bounds(times, window: float) -> np.ndarray:
    """Window boundaries: from 00:00 UTC of the first day, every ``window`` [s], up to the
    last boundary at or after the last time (the last window may be incomplete)."""
    t = np.asarray(times).astype("datetime64[ns]")
    start = t[0].astype("datetime64[D]").astype("datetime64[ns]")
    step = np.timedelta64(int(round(window * 1e9)), "ns")
    n = int(np.ceil((t[-1] - start) / step))
    return start + step * np.arange(max(n, 1) + 1)


def _median_step(t_s: np.ndarray) -> float:
    return float(np.median(np.diff(t_s))) if t_s.size > 1 else np.nan


def _uniform(rng, bound, size):
    return rng.uniform(-bound, bound, size) if bound > 0 else np.zeros(size)


def _draws(settings: BudgetSettings, n_sensors: int, n_bounds: int, position_bound: float) -> dict:
    """Monte Carlo perturbations (uniform within the bounds); member 0 is the nominal estimate."""
    rng = np.random.default_rng(settings.seed)
    m = settings.members
    out = {"sensor": _uniform(rng, settings.sensor_accuracy, (m, n_sensors)),
           "position": _uniform(rng, position_bound, (m, n_bounds)),
           "salinity": _uniform(rng, settings.salinity_uncertainty, m),
           "conductivity": _uniform(rng, settings.conductivity_uncertainty, m)}
    return {k: np.concatenate([np.zeros((1,) + v.shape[1:]), v]) for k, v in out.items()}


def _window_conductive_flux(depth_band, temp_band, times, s_band, d_sensor, d_sal, d_k, settings):
    """Window-mean F_c [W m-2] for every member, and the nominal band conductivity per profile.

    ``temp_band`` (profiles, band sensors) [degC]; ``times`` [s]; a sensor offset moves each
    profile's least-squares slope linearly (``slope = sum(w T)``), a salinity offset and the
    conductivity error scale the conductivity (evaluated at the window-mean temperatures).
    """
    ok = np.isfinite(temp_band)
    zbar = np.where(ok, depth_band[None, :], 0.0).sum(axis=1) / ok.sum(axis=1)
    dz = np.where(ok, depth_band[None, :] - zbar[:, None], 0.0)
    wts = dz / (dz * dz).sum(axis=1, keepdims=True)
    slope0 = (wts * np.where(ok, temp_band, 0.0)).sum(axis=1)
    k0 = band_conductivity(temp_band, s_band[None, :], settings)
    cnt = ok.sum(axis=0)
    tmean = np.where(ok, temp_band, 0.0).sum(axis=0) / np.maximum(cnt, 1)
    tmean = np.where(cnt > 0, tmean, tmean[cnt > 0].mean())
    kbar = band_conductivity(tmean[None, :] + d_sensor, np.maximum(s_band[None, :] + d_sal[:, None], 0.0), settings)
    kfac = kbar / kbar[0] * (1.0 + d_k)
    slope = slope0[None, :] + d_sensor @ wts.T
    fc_t = kfac[:, None] * k0[None, :] * slope
    return _trapz(fc_t, times, axis=1) / (times[-1] - times[0]), k0


def _window_enthalpy_terms(depth, p1, p2, z_level, zb1, zb2, dt, tf, salinity_grid, settings):
    """Growth term G, storage F_s [W m-2] and the enthalpy of the ice grown or melted
    H_new [J m-3] for every member (rows of ``p1``, ``p2``: profiles at the window ends with
    the members' sensor offsets; ``zb1``, ``zb2``: the members' bottom positions [m])."""
    hw = settings.density * settings.brine_specific_heat * tf
    e1, _, _ = _column_enthalpy_batch(depth, p1, z_level, zb1, tf, salinity_grid, settings)
    e2, _, _ = _column_enthalpy_batch(depth, p2, z_level, zb2, tf, salinity_grid, settings)
    grows = zb2 >= zb1
    new_prof = np.where(grows[:, None], p2, p1)  # grown ice at the end, melted ice at the start
    new_bot = np.where(grows, zb2, zb1)
    new_top = np.minimum(np.where(grows, zb1, zb2), new_bot - 0.005)
    hl, _, _ = _column_enthalpy_batch(depth, new_prof, new_top, new_bot, tf, salinity_grid, settings, points=41)
    hnew = hl / (new_bot - new_top)
    dh = zb2 - zb1
    return (hw - hnew) * dh / dt, -(e2 - e1 - hnew * dh) / dt, hnew


_TERMS = {
    "ocean_heat_flux": ("W m-2", "ocean heat flux into the ice base (residual method)", "upward_sea_ice_basal_heat_flux",
                        "F_w = F_c - G - F_s, positive upward (from the ocean into the ice)"),
    "conductive_heat_flux": ("W m-2", "conductive heat flux in the lower ice at the flux level", None,
                             "F_c = k dT/dz from a linear fit in the gradient band, positive upward"),
    "growth_heat_flux": ("W m-2", "latent heat released by basal growth", None,
                         "G = rho L_eff dh/dt (negative while the base melts)"),
    "heat_storage_flux": ("W m-2", "heat released by the ice between the flux level and the base", None,
                          "F_s = -(change of the slab's enthalpy not due to the ice grown) / window length; "
                          "positive while the lower ice cools"),
    "basal_growth_rate": ("m s-1", "rate of basal growth (ice bottom moving down)", None,
                          "change of the ice bottom depth between the window boundaries / window length"),
}
_DIAGNOSTICS = {
    "ice_bottom_start": ("m", "depth of the ice bottom at the window start", "down"),
    "ice_bottom_end": ("m", "depth of the ice bottom at the window end", "down"),
    "ice_thickness_end": ("m", "ice thickness at the window end", None),
    "flux_level_depth": ("m", "depth of the level where F_c is estimated (centre of the gradient band)", "down"),
    "gradient_band_top": ("m", "depth of the top of the gradient band", "down"),
    "gradient_band_bottom": ("m", "depth of the bottom of the gradient band", "down"),
    "effective_latent_heat": ("J kg-1", "effective latent heat of the ice grown or melted, (H_w - H_new) / rho", None),
    "band_conductivity": ("W m-1 K-1", "mean bulk conductivity of the gradient band", None),
    "band_salinity": ("g kg-1", "mean bulk salinity assumed in the gradient band", None),
    "bottom_salinity": ("g kg-1", "bulk salinity assumed at the ice bottom", None),
    "coverage": ("1", "profiles with a gradient as a fraction of a regular record's", None),
    "ocean_heat_flux_salinity_sensitivity": ("W m-2 (g kg-1)-1", "change of F_w per g/kg of bulk-salinity error", None),
}


def heat_budget(record: xr.Dataset, iface: xr.Dataset, salinity: SalinityProfile = SalinityProfile(),
                settings: BudgetSettings = BudgetSettings()) -> xr.Dataset:
    """Ocean heat flux and the growth budget per window by the residual method.

    For each window (:func:`window_bounds`): the ice bottom at both boundaries
    (:func:`position_at`); the gradient band ``band_bottom`` .. ``band_top`` above the
    shallowest bottom of the window (and at least 2 cm below the ice surface); F_c from
    every profile of the window, averaged in time (trapezoidal rule); the enthalpy of the
    slab between the band centre and the bottom from the profiles nearest the two
    boundaries; then G, F_s and F_w = F_c - G - F_s (module docstring).  Every member of
    the Monte Carlo repeats this with its perturbed inputs.

    Parameters
    ----------
    record : xarray.Dataset
        Buoy record (:func:`icecolumn.buoy_io.read_buoy`): ``temperature`` (time, depth)
        [degC], coordinate ``depth`` [m].
    iface : xarray.Dataset
        From :func:`interfaces` (``ice_bottom``, ``ice_surface`` [m]).
    salinity : SalinityProfile
        Bulk salinity of the ice (core or assumed), fixed within a window.
    settings : BudgetSettings

    Returns
    -------
    xarray.Dataset
        On ``window`` (window centre, with ``window_bounds``): ``ocean_heat_flux`` (F_w),
        ``conductive_heat_flux`` (F_c), ``growth_heat_flux`` (G), ``heat_storage_flux``
        (F_s) [W m-2] and ``basal_growth_rate`` [m s-1], each with ``*_uncertainty``
        (expanded, 2 sd of the Monte Carlo members); the diagnostics of ``_DIAGNOSTICS``;
        ``ocean_heat_flux_member`` (member, window); ``window_flag``.  Windows with a flag
        other than 0 hold NaN.
    """
    settings.check()
    z = np.asarray(record["depth"].values, float)
    temp = np.asarray(record["temperature"].values, float)
    times = record["time"].values.astype("datetime64[ns]")
    ts = ((times - times[0]) / np.timedelta64(1, "s")).astype(float)
    step = _median_step(ts)
    zb_series = np.asarray(iface["ice_bottom"].values, float)
    zi_series = np.asarray(iface["ice_surface"].values, float)
    tf = float(ocean_freezing_temperature(settings.ocean_salinity))
    pos_bound = settings.position_uncertainty
    if pos_bound is None:
        measured = iface["ice_bottom"].attrs.get("source") == "measured"
        pos_bound = 0.005 if measured else 0.5 * float(np.median(np.diff(z)))
    bounds = window_bounds(times, settings.window)
    bs = ((bounds - times[0]) / np.timedelta64(1, "s")).astype(float)
    zb_b = position_at(times, zb_series, bounds, settings.end_span)
    zi_b = position_at(times, zi_series, bounds, settings.end_span)
    near = np.clip(np.searchsorted(ts, bs), 0, ts.size - 1)  # profile nearest to each boundary
    alt = np.clip(near - 1, 0, ts.size - 1)
    near = np.where(np.abs(ts[alt] - bs) < np.abs(ts[near] - bs), alt, near)
    has_profile = np.abs(ts[near] - bs) <= max(step, 3600.0) + 1.0
    d = _draws(settings, z.size, bounds.size, pos_bound)
    nm, nw = settings.members + 1, bounds.size - 1
    samples = {n: np.full((nm, nw), np.nan) for n in _TERMS}
    diag = {n: np.full(nw, np.nan) for n in _DIAGNOSTICS}
    flag = np.zeros(nw, dtype=np.int8)
    for w in range(nw):
        t1, t2 = bs[w], bs[w + 1]
        if t1 < ts[0] - 1.0 or t2 > ts[-1] + 1.0:
            flag[w] = 1
            continue
        zb1, zb2 = zb_b[w], zb_b[w + 1]
        if not (np.isfinite(zb1) and np.isfinite(zb2)):
            flag[w] = 3
            continue
        inside = (ts >= t1 - 1.0) & (ts <= t2 + 1.0)
        wb = zb_series[inside]
        zb_min = float(np.min(np.concatenate([wb[np.isfinite(wb)], [zb1, zb2]])))
        band_lo, band_hi = zb_min - settings.band_bottom, zb_min - settings.band_top
        surfaces = np.array([zi_b[w], zi_b[w + 1]])
        if np.isfinite(surfaces).any():
            band_hi = max(band_hi, float(np.nanmax(surfaces)) + 0.02)
        in_band = (z >= band_hi - 1e-9) & (z <= band_lo + 1e-9)
        prof = np.flatnonzero(inside)
        tb = temp[np.ix_(prof, np.flatnonzero(in_band))]
        good = np.isfinite(tb).sum(axis=1) >= settings.min_band_sensors
        diag["coverage"][w] = good.sum() / ((t2 - t1) / step + 1.0)
        if in_band.sum() < settings.min_band_sensors:
            flag[w] = 4
            continue
        if not (has_profile[w] and has_profile[w + 1]) or diag["coverage"][w] < settings.min_coverage:
            flag[w] = 2
            continue
        z_level = 0.5 * (band_hi + band_lo)
        surf_ref = float(surfaces.mean()) if np.isfinite(surfaces).all() else 0.0  # salinity depths: below the surface
        h_mid = 0.5 * (zb1 + zb2) - surf_ref
        s_band = salinity.at(z[in_band] - surf_ref, h_mid)
        fc, k0 = _window_conductive_flux(z[in_band], tb[good], ts[prof][good], s_band, d["sensor"][:, in_band],
                                         d["salinity"], d["conductivity"], settings)

        def salinity_grid(grid):
            return np.maximum(salinity.at(grid - surf_ref, h_mid) + d["salinity"][:, None], 0.0)

        growth, storage, hnew = _window_enthalpy_terms(
            z, temp[near[w]][None, :] + d["sensor"], temp[near[w + 1]][None, :] + d["sensor"], z_level,
            zb1 + d["position"][:, w], zb2 + d["position"][:, w + 1], t2 - t1, tf, salinity_grid, settings)
        fw = fc - growth - storage
        samples["conductive_heat_flux"][:, w] = fc
        samples["growth_heat_flux"][:, w] = growth
        samples["heat_storage_flux"][:, w] = storage
        samples["ocean_heat_flux"][:, w] = fw
        samples["basal_growth_rate"][:, w] = (zb2 + d["position"][:, w + 1] - zb1 - d["position"][:, w]) / (t2 - t1)
        ds_ = d["salinity"][1:]
        diag["ocean_heat_flux_salinity_sensitivity"][w] = (np.polyfit(ds_, fw[1:], 1)[0] if np.ptp(ds_) > 0
                                                          else np.nan)
        diag["ice_bottom_start"][w], diag["ice_bottom_end"][w] = zb1, zb2
        diag["ice_thickness_end"][w] = zb2 - zi_b[w + 1]
        diag["flux_level_depth"][w] = z_level
        diag["gradient_band_top"][w], diag["gradient_band_bottom"][w] = band_hi, band_lo
        diag["effective_latent_heat"][w] = (settings.density * settings.brine_specific_heat * tf - hnew[0]) / settings.density
        diag["band_conductivity"][w] = float(np.mean(k0))
        diag["band_salinity"][w] = float(np.mean(s_band))
        diag["bottom_salinity"][w] = float(salinity.at(np.array([zb2 - surf_ref]), h_mid)[0])
    return _budget_dataset(bounds, samples, diag, flag, settings, salinity, tf, pos_bound)


def _budget_dataset(bounds, samples, diag, flag, settings, salinity, tf, pos_bound) -> xr.Dataset:
    m = settings.members
    data = {}
    for name, (units, long_name, std, comment) in _TERMS.items():
        vals = samples[name]
        est = np.where(flag == 0, vals[0], np.nan)
        with np.errstate(invalid="ignore"):
            unc = np.where(flag == 0, 2.0 * np.std(vals[1:], axis=0, ddof=1), np.nan)
        attrs = {"units": units, "long_name": long_name, "cell_methods": "window: mean", "comment": comment,
                 "ancillary_variables": f"{name}_uncertainty window_flag"}
        uattrs = {"units": units, "long_name": f"expanded uncertainty of the {long_name}",
                  "comment": f"2 standard deviations of {m} Monte Carlo members (coverage about 95 %)"}
        if std:
            attrs["standard_name"] = std
            uattrs["standard_name"] = f"{std} standard_error"
            uattrs["comment"] += "; the standard_error variable holds the expanded uncertainty (2 sd)"
        data[name] = ("window", est, attrs)
        data[f"{name}_uncertainty"] = ("window", unc, uattrs)
    for name, (units, long_name, positive) in _DIAGNOSTICS.items():
        attrs = {"units": units, "long_name": long_name}
        if positive:
            attrs["positive"] = positive
        if name == "ice_thickness_end":
            attrs["standard_name"] = "sea_ice_thickness"
        data[name] = ("window", np.where(flag == 0, diag[name], np.nan) if name != "coverage" else diag[name], attrs)
    data["window_flag"] = ("window", flag, {
        "long_name": "quality of the window's estimate", "flag_values": np.array(list(WINDOW_FLAGS), np.int8),
        "flag_meanings": " ".join(WINDOW_FLAGS.values())})
    data["window_bounds"] = (("window", "nv"), np.stack([bounds[:-1], bounds[1:]], axis=1), {})
    data["ocean_heat_flux_member"] = (("member", "window"), np.where(flag == 0, samples["ocean_heat_flux"][1:], np.nan),
                                      {"units": "W m-2", "long_name": "ocean heat flux of each Monte Carlo member",
                                       "comment": "members of the uncertainty analysis (perturbed inputs); the estimate "
                                                  "itself is ocean_heat_flux"})
    centre = bounds[:-1] + (bounds[1:] - bounds[:-1]) // 2
    ds = xr.Dataset(data, coords={"window": ("window", centre, {"standard_name": "time", "bounds": "window_bounds",
                                                                  "long_name": "window centre (UTC)"})})
    ds.attrs.update({
        "budget_window_s": float(settings.window),
        "budget_gradient_band_m": f"{settings.band_bottom:g} to {settings.band_top:g} m above the ice bottom",
        "budget_salinity": salinity.describe(),
        "budget_ocean_freezing_temperature_degC": tf,
        "budget_uncertainty": (f"Monte Carlo, {m} members, numpy default_rng seed {settings.seed}; uniform bounds: sensor "
                               f"offset +/-{settings.sensor_accuracy:g} K per sensor, interface position "
                               f"+/-{pos_bound:g} m per window boundary, bulk salinity +/-"
                               f"{settings.salinity_uncertainty:g} g/kg, conductivity +/-"
                               f"{100 * settings.conductivity_uncertainty:g} %; reported: 2 standard deviations"),
        "budget_position_uncertainty_m": float(pos_bound),
        "budget_method": ("residual method F_w = F_c - rho L_eff dh/dt - F_s (McPhee & Untersteiner 1982; "
                          "Perovich & Elder 2002); see icecolumn.buoy"),
        "caution": CAUTION_FLUX,
    })
    return ds


def record_mean(budget: xr.Dataset) -> tuple[float, float, int]:
    """Mean ocean heat flux over the windows with an estimate [W m-2], its expanded
    uncertainty (2 sd of the Monte Carlo members' means, so that errors shared between
    windows count fully) and the number of windows."""
    ok = budget["window_flag"].values == 0
    if not ok.any():
        return float("nan"), float("nan"), 0
    est = float(np.mean(budget["ocean_heat_flux"].values[ok]))
    means = budget["ocean_heat_flux_member"].values[:, ok].mean(axis=1)
    return est, float(2.0 * np.std(means, ddof=1)), int(ok.sum())


# --------------------------------------------------------------------------- synthetic string


def synthetic_string(run: xr.Dataset, sensor_depth, cfg, deployed=None) -> xr.Dataset:
    """Temperatures a thermistor string would read in a model run (twin tests, demo data).

    The string is frozen into the ice at ``deployed`` (default: the run's first time with
    ice); depth 0 is the ice surface then.  At every output time the ice surface is at
    ``-(snow-ice formed) + (surface melt)`` since deployment.  A sensor in the ice reads
    the layer temperatures interpolated linearly between the layer centres, the ice-top
    temperature (flux continuity between the snow slab and the top half layer, as in the
    model's surface scheme) and the ocean freezing point at the bottom; in the snow, the
    linear profile between the surface temperature and the ice top; in the air, the
    interval-mean air temperature; in the water, the mixed-layer temperature (or the
    freezing point without a mixed layer).

    Parameters
    ----------
    run : xarray.Dataset
        Output of :func:`icecolumn.run` (one member).
    sensor_depth : (n,) [m]
    cfg : icecolumn.Config
        The run's configuration (ocean salinity, snow and ice conductivity).
    deployed : datetime-like, optional
        When the string is frozen in (default: the first output time with ice).

    Returns
    -------
    xarray.Dataset
        ``temperature`` (time, sensor) [degC], coordinate ``depth``; the model's true
        interfaces ``snow_surface``, ``ice_surface``, ``ice_bottom`` [m] (time).
    """
    z = np.asarray(sensor_depth, dtype=float)
    t = run["time"].values
    h = np.asarray(run["ice_thickness"].values, float)
    i0 = 0 if deployed is None else int(np.searchsorted(t, np.datetime64(deployed, "ns")))
    if deployed is None:
        i0 = int(np.flatnonzero(h > 0)[0])
    t = t[i0:]
    sel = slice(i0, None)
    h = h[sel]
    hs = np.asarray(run["snow_thickness"].values, float)[sel]
    ts_surf = np.asarray(run["surface_temperature"].values, float)[sel]
    air = np.asarray(run["air_temperature"].values, float)
    air = np.where(np.isfinite(air), air, np.append(air[1:], air[-1]))[sel]
    lt = np.asarray(run["temperature"].values, float)[sel]
    ls = np.asarray(run["bulk_salinity"].values, float)[sel]
    lp = np.asarray(run["liquid_fraction"].values, float)[sel]
    ld = np.asarray(run["depth"].values, float)[sel]

    def cum(name):
        v = np.asarray(run[name].values, float)[sel] if name in run else np.zeros(t.size)
        return v - v[0]

    top = -cum("snow_ice_growth") + cum("surface_melt")
    if "mixed_layer_freezing_temperature" in run:
        tf = np.asarray(run["mixed_layer_freezing_temperature"].values, float)[sel]
        water = np.asarray(run["mixed_layer_temperature"].values, float)[sel]
    else:
        tf = np.full(t.size, float(liquidus_temperature(cfg.ocean.salinity)))
        water = tf
    ksnow = cfg.snow.conductivity
    out = np.empty((t.size, z.size))
    for i in range(t.size):
        d = z - top[i]
        col = np.where(d > h[i], water[i], air[i])
        if h[i] > 0:
            n = lt.shape[1]
            dz = h[i] / n
            k0 = float(conductivity(lt[i, 0], lp[i, 0], ls[i, 0], cfg.properties.conductivity_model,
                                    cfg.properties.ice_conductivity))
            rc = 0.5 * dz / k0 + (hs[i] / ksnow if hs[i] > 0 else 0.0)
            t_top = lt[i, 0] + (ts_surf[i] - lt[i, 0]) * (0.5 * dz / k0) / rc
            zn = np.concatenate([[0.0], ld[i], [h[i]]])
            tn = np.concatenate([[t_top], lt[i], [tf[i]]])
            in_ice = (d >= 0) & (d <= h[i])
            col = np.where(in_ice, np.interp(d, zn, tn), col)
            if hs[i] > 0:
                in_snow = (d < 0) & (d >= -hs[i])
                col = np.where(in_snow, t_top + (ts_surf[i] - t_top) * (-d / hs[i]), col)
        out[i] = col
    ds = xr.Dataset(
        {"temperature": (("time", "depth"), out, {"units": "degC", "long_name": "sensor temperature"}),
         "snow_surface": ("time", top - hs, {"units": "m", "positive": "down"}),
         "ice_surface": ("time", top, {"units": "m", "positive": "down"}),
         "ice_bottom": ("time", top + h, {"units": "m", "positive": "down"})},
        coords={"time": ("time", t), "depth": ("depth", z, {"units": "m", "positive": "down"})})
    return ds
