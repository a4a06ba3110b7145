"""Layout of the kernel's arrays, generated from name tuples.

Three flat float64 arrays cross the boundary between Python and the compiled kernel:

* the **state vector** of one member, ``[e_1..e_N, m_1..m_N, h, slots...]``: layer enthalpy
  contents ``e`` [J m-2], layer salt contents ``m`` [kg m-2], the thickness ``h`` [m] and the
  :data:`SLOTS` (cumulative budget terms and a few non-cumulative state slots);
* the **parameter row** of one member, :data:`PARAMETERS` (built from the configuration by
  :func:`icecolumn.kernel.params.parameter_row`);
* the **forcing rows** of one member, :data:`FORCING` (NaN where the member has none).

Inside compiled code the index of a slot, parameter or forcing row is an attribute of the
namedtuples :data:`B`, :data:`P` and :data:`F` (``y[2 * n + 1 + B.E_SURF]``, ``par[P.RHO]``,
``fv[F.AIR]``); numba folds them to constants.  Python code never does index arithmetic on a
state vector: it uses :class:`StateView` (``view(ys, n).thickness``, ``.slot("energy_surface")``).

Integer codes of the kernel's choices (surface scheme, drainage scheme) are defined here once and
used by both sides; the codes of the permeability law and the conductivity model belong to the
physics functions that take them.
"""
from __future__ import annotations

from collections import namedtuple

import numpy as np

# ------------------------------------------------------------------------------------------- state
#: Non-layer slots of the state vector, in order: (short name, output name, units, meaning).
#: The short name is the attribute of :data:`B`; the output name is used by :class:`StateView`.
SLOTS = (
    ("E_SURF", "energy_surface", "J m-2", "energy through the upper surface (conduction into the ice), cumulative"),
    ("E_OCEAN", "energy_ocean", "J m-2", "ocean heat flux into the ice base, cumulative"),
    ("E_WATER", "energy_water", "J m-2",
     "enthalpy carried by sea water taken up (growth) or leaving (melt) at the base, cumulative"),
    ("S_ENTRAIN", "salt_entrained", "kg m-2", "salt in all sea water taken up, cumulative"),
    ("S_MELT", "salt_melt", "kg m-2", "salt released to the ocean by basal melt (and melt-out), cumulative"),
    ("S_DRAIN", "salt_drainage", "kg m-2",
     "salt released by gravity drainage and by the snow-ice brine exchange (brine out minus sea water in), "
     "cumulative"),
    ("E_DRAIN", "energy_drainage", "J m-2",
     "enthalpy carried by the drainage and snow-ice exchanges (sea water in minus brine out), cumulative"),
    ("S_SIDRAIN", "salt_snow_ice_drainage", "kg m-2",
     "the part of salt_drainage released from snow-ice by its brine exchange (a diagnostic, already in "
     "salt_drainage; never add it again), cumulative"),
    ("V_DRAIN", "brine_volume_drained", "m", "volume of brine drained to the ocean through channels, cumulative"),
    ("S_SURFMELT", "salt_surface_melt", "kg m-2", "salt carried off by surface melt water, cumulative"),
    ("H_SURFMELT", "surface_melt", "m", "ice melted at the surface, cumulative"),
    ("H_GROW", "congelation_growth", "m", "congelation growth at the base, cumulative"),
    ("H_BMELT", "basal_melt", "m", "ice melted at the base, cumulative"),
    ("SNOW", "snow_thickness", "m", "prognostic snow thickness (state, not cumulative)"),
    ("S_FLUSH", "salt_flushing", "kg m-2", "salt flushed out of the ice base by percolating melt water, cumulative"),
    ("E_FLUSH", "energy_flushing", "J m-2",
     "enthalpy carried by the flushing flow (melt water in at 0 degC minus brine out), cumulative"),
    ("E_FLOOD_SNOW", "energy_flooding_snow", "J m-2", "enthalpy of the snow turned into snow-ice, cumulative"),
    ("E_FLOOD_WATER", "energy_flooding_water", "J m-2", "enthalpy of the sea water that flooded it, cumulative"),
    ("H_SNOWICE", "snow_ice_growth", "m", "snow-ice formed, cumulative"),
    ("FRAZIL", "frazil_heat", "J m-2",
     "heat lost by open water at its freezing point not yet formed into ice (state, <= 0)"),
    ("E_MELTOUT", "energy_melt_out", "J m-2", "minus the enthalpy of the last ice given to the ocean at melt-out, cumulative"),
    ("ML_E", "mixed_layer_enthalpy", "J m-2", "enthalpy of the mixed layer, reference liquid at 0 degC (state)"),
    ("ML_W", "mixed_layer_mass", "kg m-2", "mass of the mixed layer (state)"),
    ("ML_S", "mixed_layer_salt", "kg m-2", "salt in the mixed layer (state)"),
    ("E_ML_SURF", "energy_mixed_layer_surface", "J m-2", "heat into the open-water surface of the mixed layer, cumulative"),
    ("E_ML_DEEP", "energy_mixed_layer_deep", "J m-2",
     "heat from the deep ocean into the mixed layer (or into freezing open water), cumulative"),
    ("SNOWFALL", "snowfall", "kg m-2", "snowfall that reached the snow or the mixed layer, cumulative"),
    ("S_ML_DEEP", "salt_mixed_layer_deep", "kg m-2",
     "salt from the deep ocean restoring the mixed-layer salinity, cumulative"),
    ("DT", "proposed_step", "s", "the step size the integrator proposes next (solver state; 0: [solver] initial_step)"),
)

#: Slot indices (``B.E_SURF`` ...), relative to the first slot ``2 n + 1``.
B = namedtuple("SlotIndex", [s[0] for s in SLOTS])(*range(len(SLOTS)))
#: Number of slots.
NSLOT = len(SLOTS)
#: Output name -> slot index.
SLOT_INDEX = {s[1]: i for i, s in enumerate(SLOTS)}

# --------------------------------------------------------------------------------------- parameters
#: Parameter row of one member: (short name, units, meaning).
PARAMETERS = (
    ("RHO", "kg m-3", "density of ice and brine (equal-density convention)"),
    ("CS", "J kg-1 K-1", "specific heat of pure ice"),
    ("CL", "J kg-1 K-1", "specific heat of brine"),
    ("L", "J kg-1", "latent heat of fusion"),
    ("KMODEL", "code", "conductivity model (icecolumn.properties.CONDUCTIVITY_MODELS)"),
    ("KICE", "W m-1 K-1", "conductivity of the constant model, or pure-ice value of untersteiner1964"),
    ("SW", "g kg-1", "ocean salinity seen by the ice (the mixed layer's when there is one)"),
    ("FW", "W m-2", "ocean heat flux used when the forcing has none"),
    ("HTC", "W m-2 K-1", "linear air-to-surface heat transfer coefficient"),
    ("KSNOW", "W m-1 K-1", "snow conductivity"),
    ("SURF", "code", "surface scheme (SURFACE_CODES)"),
    ("RTOL", "1", "relative tolerance of the time integration"),
    ("MAXDT", "s", "longest time step"),
    ("INITDT", "s", "first time step"),
    ("STEPENDS", "code", "1: every output time ends a step ([solver] output_times = step_ends); 0: records interpolated"),
    ("DRAIN", "code", "drainage scheme (DRAINAGE_CODES; 0 none)"),
    ("TMELT", "degC", "melting point of the upper surface"),
    ("DALPHA", "scheme units", "drainage flux coefficient"),
    ("DRAC", "1", "critical mush Rayleigh number"),
    ("DPHIC", "1", "percolation threshold (liquid fraction)"),
    ("DPERM", "code", "permeability law (icecolumn.drainage.PERMEABILITY_LAWS)"),
    ("DAVG", "code", "permeability to the base: 0 minimum, 1 harmonic mean"),
    ("DKAPPA", "m2 s-1", "thermal diffusivity of brine"),
    ("DMU", "kg m-1 s-1", "dynamic viscosity of brine"),
    ("DRAMP", "1", "smoothing width of the onset (Ra - Ra_c)+"),
    ("DPHIW", "1", "smoothing width of the percolation threshold"),
    ("DBETA", "kg m-3 (g/kg)-1", "brine density slope d rho / d S_br"),
    ("WIND", "m s-1", "wind speed when the forcing has none"),
    ("RHOSNOW", "kg m-3", "snow density"),
    ("FLUSH", "1", "fraction of surface melt water flushing down through permeable ice"),
    ("MLD", "m", "depth of the slab ocean mixed layer (0: none)"),
    ("H0", "m", "thickness of new ice formed in open water"),
    ("FLOODTAU", "s", "relaxation time of flooding to zero freeboard (0: no flooding)"),
    ("SITAU", "s", "e-folding time of the brine exchange of snow-ice with the ocean (0: none)"),
    ("MLTAU", "s", "restoring time of the mixed-layer salinity (0: none)"),
    ("SREF", "g kg-1", "ocean salinity the mixed layer is restored to"),
    ("ALB_SNOW", "1", "albedo of dry snow"),
    ("ALB_SNOW_MELT", "1", "albedo of melting snow"),
    ("ALB_ICE", "1", "albedo of cold bare ice"),
    ("ALB_ICE_MELT", "1", "albedo of melting bare ice"),
    ("POND", "1", "melt-pond fraction of melting bare ice"),
    ("ALB_POND", "1", "albedo of melt ponds"),
    ("Z0", "m", "roughness length"),
    ("ZWIND", "m", "height of the wind"),
    ("ZAIR", "m", "height of the air temperature and humidity"),
    ("STAB", "code", "stability correction (icecolumn.surface.STABILITY_CODES)"),
)
#: Parameter indices (``P.RHO`` ...).
P = namedtuple("ParameterIndex", [p[0] for p in PARAMETERS])(*range(len(PARAMETERS)))
#: Length of a parameter row.
NPAR = len(PARAMETERS)

# ------------------------------------------------------------------------------------------ forcing
#: Forcing rows of one member: (short name, forcing variable name, units).
FORCING = (
    ("AIR", "air_temperature", "degC"),
    ("TSURF", "surface_temperature", "degC"),
    ("QOCEAN", "ocean_heat_flux", "W m-2"),
    ("SW", "shortwave_down", "W m-2"),
    ("LW", "longwave_down", "W m-2"),
    ("CLOUD", "cloud_fraction", "1"),
    ("WIND", "wind_speed", "m s-1"),
    ("RH", "relative_humidity", "%"),
    ("SNOWDEPTH", "snow_thickness", "m"),
    ("SNOWFALL", "snowfall", "kg m-2 s-1"),
    ("TOCEAN", "ocean_temperature", "degC"),
    ("ALBEDO", "albedo", "1"),
    ("SENS", "sensible_heat_flux", "W m-2"),
    ("LAT", "latent_heat_flux", "W m-2"),
)
#: Forcing row indices (``F.AIR`` ...).
F = namedtuple("ForcingIndex", [f[0] for f in FORCING])(*range(len(FORCING)))
#: Number of forcing rows.
NFORCING = len(FORCING)
#: Forcing variable names in row order.
FORCING_NAMES = tuple(f[1] for f in FORCING)

# ------------------------------------------------------------------------------------ integer codes
#: ``[surface] scheme`` (after ``auto`` is resolved) -> code.
SURFACE_CODES = {"linear": 0, "prescribed": 1, "energy_balance": 2}
#: ``[drainage] scheme`` -> code.
DRAINAGE_CODES = {"none": 0, "griewank_notz2013": 1, "rees_jones_worster2014": 2}
# (the permeability-law and conductivity-model codes belong to the physics functions that take
# them: icecolumn.drainage.PERMEABILITY_LAWS, icecolumn.properties.CONDUCTIVITY_MODELS)

#: Status codes returned by the stepper for each member, and their messages.
STATUS_OK = 0
STATUS_UNDERFLOW = 1
STATUS_MESSAGES = {
    STATUS_OK: "ok",
    STATUS_UNDERFLOW: "step size underflow (the Newton iteration or the error control failed at steps below 1e-4 s)",
}


def state_size(n: int) -> int:
    """Length of one member's state vector for ``n`` layers."""
    return 2 * n + 1 + NSLOT


class StateView:
    """Named views of state vectors with the state on the last axis (any leading axes).

    Parameters
    ----------
    y : ndarray, shape (..., state_size(n))
        One or more state vectors (views share memory with ``y``).
    n : int
        Number of layers.
    """

    def __init__(self, y: np.ndarray, n: int):
        if y.shape[-1] != state_size(n):
            raise ValueError(f"state vectors of length {y.shape[-1]} do not fit {n} layers ({state_size(n)})")
        self.y = y
        self.n = n

    @property
    def enthalpy_content(self) -> np.ndarray:
        """Layer enthalpy contents, top first. [J m-2]"""
        return self.y[..., :self.n]

    @property
    def salt_content(self) -> np.ndarray:
        """Layer salt contents, top first. [kg m-2]"""
        return self.y[..., self.n:2 * self.n]

    @property
    def thickness(self) -> np.ndarray:
        """Ice thickness (a view of shape ``y.shape[:-1]``). [m]"""
        return self.y[..., 2 * self.n]

    @property
    def slots(self) -> np.ndarray:
        """All non-layer slots, in :data:`SLOTS` order."""
        return self.y[..., 2 * self.n + 1:]

    def slot(self, name: str) -> np.ndarray:
        """One slot by its output name (e.g. ``"energy_surface"``), as a view."""
        return self.y[..., 2 * self.n + 1 + SLOT_INDEX[name]]

    def set_slot(self, name: str, value) -> None:
        """Assign one slot by its output name."""
        self.y[..., 2 * self.n + 1 + SLOT_INDEX[name]] = value


def view(y: np.ndarray, n: int) -> StateView:
    """:class:`StateView` of ``y`` for ``n`` layers."""
    return StateView(y, n)
