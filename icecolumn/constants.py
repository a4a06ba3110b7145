"""Physical constants and default material properties.

========================  ======  ============  ==========  ============================================
name                      symbol  value         units       source
========================  ======  ============  ==========  ============================================
ICE_DENSITY               rho     917.0         kg m-3      rounded; gsw.rho_ice(0, 0) = 916.72 (TEOS-10)
ICE_SPECIFIC_HEAT         c_s     2100.0        J kg-1 K-1  rounded; gsw.cp_ice(0, 0) = 2096.7 (TEOS-10)
BRINE_SPECIFIC_HEAT       c_l     3990.0        J kg-1 K-1  seawater at freezing, SA=35: 3987.6 (gsw)
LATENT_HEAT               L       334000.0      J kg-1      rounded literature value (Britannica, Ashton)
ICE_CONDUCTIVITY          k_i     2.03          W m-1 K-1   classic constant (Maykut & Untersteiner 1971)
SNOW_CONDUCTIVITY         k_s     0.31          W m-1 K-1   classic constant (Maykut & Untersteiner 1971,
                                                            from memory)
OCEAN_SALINITY            S_w     34.0          g kg-1      common practice, no source
GRAVITY                   g       9.81          m s-2       standard
========================  ======  ============  ==========  ============================================

Conventions (stated once here and in DEVELOPERS.md):

* Prognostic equations use **equal densities** of ice and brine (``rho`` =
  ``ICE_DENSITY``); the liquid fraction ``phi`` is therefore both a volume and a
  mass fraction.  Conversions to a true brine *volume* fraction exist only in
  diagnostics and tests.
* Bulk salinity ``S`` [g kg-1] and brine salinity ``S_br`` satisfy ``S = phi S_br``.
* Enthalpy per unit volume, reference state **liquid (brine or fresh water) at
  0 degC** (H = 0): ``H = rho [(phi c_l + (1 - phi) c_s) T - (1 - phi) L]``.  Sea
  water at its freezing point thus has a small negative enthalpy
  ``rho c_l T_f`` (about -7 MJ m-3, against rho L = 306 MJ m-3).
* Temperatures inside the physics are in degC (the liquidus is written in degC).
"""

ICE_DENSITY = 917.0  # kg m-3
ICE_SPECIFIC_HEAT = 2100.0  # J kg-1 K-1
BRINE_SPECIFIC_HEAT = 3990.0  # J kg-1 K-1
LATENT_HEAT = 334000.0  # J kg-1
ICE_CONDUCTIVITY = 2.03  # W m-1 K-1
SNOW_CONDUCTIVITY = 0.31  # W m-1 K-1
OCEAN_SALINITY = 34.0  # g kg-1
GRAVITY = 9.81  # m s-2
#: Sea water near its freezing point (gsw: rho(SA=35, CT=-1.9, p=0) = 1028.05 kg m-3), used for
#: hydrostatic balance (draft, freeboard, flooding) and the mass of the ocean mixed layer.
SEAWATER_DENSITY = 1028.0  # kg m-3
SECONDS_PER_DAY = 86400.0  # s
