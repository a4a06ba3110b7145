"""The kernel's parameter row of one member, built from a :class:`~icecolumn.config.Config`.

This is the only place that maps configuration settings (and the physics modules' defaults) to
parameter indices; physics modules never see kernel indices.
"""
from __future__ import annotations

import numpy as np

from ..constants import SECONDS_PER_DAY
from ..drainage import BRINE_DENSITY_SLOPE, BRINE_THERMAL_DIFFUSIVITY, BRINE_VISCOSITY, PERCOLATION_WIDTH, \
    PERMEABILITY_LAWS, scheme_settings
from ..properties import CONDUCTIVITY_MODELS, snow_conductivity_of
from ..surface import STABILITY_CODES
from .layout import DRAINAGE_CODES, NPAR, SURFACE_CODES, P

#: Wind speed the energy balance uses when the forcing has no wind_speed (a moderate polar wind;
#: common practice, no source). [m s-1]
DEFAULT_WIND_SPEED = 5.0
#: Melting point of the upper surface (fresh ice / snow at atmospheric pressure). [degC]
SURFACE_MELTING_POINT = 0.0


def parameter_row(cfg, surface_scheme: str | None = None) -> np.ndarray:
    """Kernel parameter row (:data:`~icecolumn.kernel.layout.P` indices) for one member.

    Parameters
    ----------
    cfg : Config
        The member's configuration.
    surface_scheme : str, optional
        The resolved surface scheme (``auto`` resolved against the forcing by
        :func:`icecolumn.model.resolve_surface_scheme`); default: the configured one, with
        ``auto`` taken as ``linear``.
    """
    p = np.zeros(NPAR)
    pr = cfg.properties
    p[P.RHO] = pr.ice_density
    p[P.CS] = pr.ice_specific_heat
    p[P.CL] = pr.brine_specific_heat
    p[P.L] = pr.latent_heat
    p[P.KMODEL] = CONDUCTIVITY_MODELS[pr.conductivity_model]
    p[P.KICE] = pr.ice_conductivity
    p[P.SW] = cfg.ocean.salinity
    p[P.FW] = cfg.ocean.heat_flux
    p[P.HTC] = cfg.surface.heat_transfer_coefficient
    p[P.KSNOW] = snow_conductivity_of(cfg.snow.conductivity_model, cfg.snow.conductivity, cfg.snow.density)
    p[P.RHOSNOW] = cfg.snow.density
    scheme = surface_scheme if surface_scheme is not None else cfg.surface.scheme
    p[P.SURF] = SURFACE_CODES.get(scheme, SURFACE_CODES["linear"])
    p[P.RTOL] = cfg.solver.rtol
    p[P.MAXDT] = cfg.solver.max_step_seconds
    p[P.INITDT] = cfg.solver.initial_step_seconds
    p[P.STEPENDS] = 1.0 if cfg.solver.output_times == "step_ends" else 0.0
    p[P.DRAIN] = DRAINAGE_CODES[cfg.drainage.scheme]
    p[P.TMELT] = SURFACE_MELTING_POINT
    p[P.WIND] = DEFAULT_WIND_SPEED
    p[P.MLD] = cfg.ocean.mixed_layer_depth
    p[P.H0] = cfg.ocean.new_ice_thickness
    p[P.MLTAU] = cfg.ocean.salinity_restoring_time * SECONDS_PER_DAY
    p[P.SREF] = cfg.ocean.salinity
    p[P.FLOODTAU] = cfg.snow.flooding_timescale_seconds if cfg.snow.flooding == "hydrostatic" else 0.0
    p[P.SITAU] = cfg.snow.snow_ice_drainage_timescale_seconds if p[P.FLOODTAU] > 0.0 else 0.0
    d = scheme_settings(cfg)
    p[P.DALPHA] = d["flux_coefficient"]
    p[P.DRAC] = d["critical_rayleigh"]
    p[P.DPHIC] = d["percolation_threshold"]
    p[P.DPHIW] = PERCOLATION_WIDTH
    p[P.DPERM] = PERMEABILITY_LAWS[d["permeability"]]
    p[P.DAVG] = d["averaging"]
    p[P.DKAPPA] = BRINE_THERMAL_DIFFUSIVITY
    p[P.DMU] = BRINE_VISCOSITY
    p[P.DRAMP] = d["onset_smoothing"]
    p[P.DBETA] = BRINE_DENSITY_SLOPE
    p[P.FLUSH] = cfg.drainage.flushing_fraction
    sf = cfg.surface
    p[P.ALB_SNOW] = sf.albedo_dry_snow
    p[P.ALB_SNOW_MELT] = sf.albedo_melting_snow
    p[P.ALB_ICE] = sf.albedo_ice
    p[P.ALB_ICE_MELT] = sf.albedo_melting_ice
    p[P.POND] = sf.pond_fraction
    p[P.ALB_POND] = sf.albedo_pond
    p[P.Z0] = sf.roughness_length
    p[P.ZWIND] = sf.wind_height
    p[P.ZAIR] = sf.air_temperature_height
    p[P.STAB] = STABILITY_CODES[sf.stability]
    return p
