"""The two test problems every peer (and icecolumn) solves, their exact or reference answers and
the error measure.  SI units throughout; temperatures in degC.

Material constants come from ``icecolumn.default_config().properties`` so that icecolumn and the
peers solve the same problem.  With the configuration of this version they are

============================  ========  =============  =================================================
quantity                      symbol    value          where from
============================  ========  =============  =================================================
density (ice = water/brine)   rho       917 kg m-3     ``properties.ice_density``
specific heat of ice          c_s       2100 J/kg/K    ``properties.ice_specific_heat``
specific heat of water/brine  c_l       3990 J/kg/K    ``properties.brine_specific_heat``
latent heat of fusion         L         334000 J/kg    ``properties.latent_heat``
ice conductivity              k_s       2.03 W/m/K     ``properties.ice_conductivity``
brine conductivity (P2 only)  k_l       0.523 W/m/K    Yen et al. (1991) brine conductivity at 0 degC,
                                                       0.4184 * 1.25, as given by Eicken (2003, in
                                                       Thomas & Dieckmann, Sea Ice, p. 55); icecolumn has
                                                       no such setting, the value is fixed here
liquidus slope (P2 only)      Gamma     0.054 K/(g/kg) linear liquidus T_L = -Gamma S_br, the value
                                                       standard in the mushy-layer literature (from
                                                       memory)
============================  ========  =============  =================================================

P1, fresh-water one-phase Neumann (Stefan) problem
--------------------------------------------------
Water at its melting point 0 degC below ice whose surface is held at ``T_s = -10`` degC;
constant conductivity k_s, no ocean heat flux.  Exact solution (Carslaw & Jaeger 1959,
Conduction of Heat in Solids, pp. 287-288, as quoted by Crank 1984, Free and Moving Boundary
Problems, p. 103):

    h(t) = 2 lambda sqrt(kappa t),   lambda exp(lambda^2) erf(lambda) = St / sqrt(pi),
    St = c_s (0 - T_s) / L,  kappa = k_s / (rho c_s),
    T(z, t) = T_s (1 - erf(z / (2 sqrt(kappa t))) / erf(lambda))   for z < h(t).

Every code starts from the exact state at ``t0 = 1 day`` after the similarity origin (thickness
h(1 day) = 0.1059 m with its erf temperature profile) and runs 60 days, to ``t = 61 days``.
**Error** = maximum over the 31 daily times ``t = 31, 32, ..., 61 days`` of ``|h / h_exact - 1|``
(the second half of the run, as in issue 16).

P2, salty mushy layer with a linear liquidus, no drainage
---------------------------------------------------------
Sea water of bulk salinity ``S_w = 34`` g/kg at its (linear-liquidus) freezing point
``T_f = -Gamma S_w = -1.836`` degC below the ice; surface held at ``-20`` degC; no ocean heat
flux; equal ice and brine densities; no salt transport of any kind (no drainage, no diffusion,
no segregation), so the bulk salinity of every material point stays 34 g/kg.  Enthalpy (reference
liquid at 0 degC, as in icecolumn):

    H = rho [(phi c_l + (1 - phi) c_s) T - (1 - phi) L],   S = phi S_br,   T = -Gamma S_br (mush),

conductivity ``k = phi k_l + (1 - phi) k_s`` (parallel mixing, constant k_s, k_l).  Start: a
0.15 m layer with a linear temperature profile from -20 degC at the surface to ``T_f`` at 0.15 m,
bulk salinity 34 g/kg (so its liquid fraction is ``phi = T_f / T``, 0.092 at the surface, 1 at
the base); sea water at ``T_f`` below.  Run 60 days.

**Thickness** compared: the *solid-equivalent thickness* ``h_s = integral (1 - phi) dz`` over the
whole column.  Reason: with no drainage the liquid fraction of the mush reaches 1 only
asymptotically with depth (the ocean-freezing isotherm sits at the end of a diffusive tail, and
a tracked interface does not converge with layers, issue 16), while ``h_s`` is the latent-heat
content of the column divided by ``rho L``, an integral that every code defines the same way
(fixed cells, moving layers or any grid) and that converges.  **Error** = maximum over the 31
daily times ``t = 30, 31, ..., 60 days`` after the start of ``|h_s / h_s,ref - 1|``; the
reference is a converged high-resolution run of a peer (see ``compare.py``).
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.optimize import brentq
from scipy.special import erf

DAY = 86400.0  # s

#: Brine conductivity used for P2: Yen et al. (1991) at 0 degC, 0.4184 * 1.25 W m-1 K-1
#: (Eicken 2003, in Thomas & Dieckmann, Sea Ice, p. 55).
BRINE_CONDUCTIVITY = 0.4184 * 1.25
#: Slope of the linear liquidus of P2 [K per g/kg], standard in the mushy-layer literature (from memory).
LIQUIDUS_SLOPE = 0.054


@dataclass(frozen=True)
class Materials:
    """Material constants shared by all codes (SI units)."""

    rho: float  # kg m-3
    c_s: float  # J kg-1 K-1
    c_l: float  # J kg-1 K-1
    latent: float  # J kg-1
    k_s: float  # W m-1 K-1
    k_l: float  # W m-1 K-1


@lru_cache(maxsize=1)
def materials() -> Materials:
    """The material constants of icecolumn's default configuration (plus k_l, see module docstring)."""
    import icecolumn as ic

    pr = ic.default_config().properties
    return Materials(rho=pr.ice_density, c_s=pr.ice_specific_heat, c_l=pr.brine_specific_heat,
                     latent=pr.latent_heat, k_s=pr.ice_conductivity, k_l=BRINE_CONDUCTIVITY)


# ----------------------------------------------------------------------------------------- P1
@dataclass(frozen=True)
class Neumann:
    """P1: the one-phase Neumann problem and its exact solution."""

    surface_temperature: float = -10.0  # degC
    t_start: float = 1.0 * DAY  # s after the similarity origin
    t_end: float = 61.0 * DAY  # s
    eval_days: tuple = tuple(range(31, 62))  # days after the similarity origin

    @property
    def mat(self) -> Materials:
        return materials()

    @property
    def kappa(self) -> float:
        m = self.mat
        return m.k_s / (m.rho * m.c_s)

    @property
    def stefan(self) -> float:
        m = self.mat
        return m.c_s * (0.0 - self.surface_temperature) / m.latent

    @property
    def lam(self) -> float:
        st = self.stefan
        return brentq(lambda x: x * np.exp(x * x) * erf(x) - st / np.sqrt(np.pi), 1e-8, 3.0, xtol=1e-15)

    def thickness(self, t):
        """Exact thickness [m] at ``t`` [s after the similarity origin]."""
        return 2.0 * self.lam * np.sqrt(self.kappa * np.asarray(t, dtype=float))

    def temperature(self, z, t):
        """Exact temperature [degC] at depth ``z`` [m] (0 below the ice)."""
        z = np.asarray(z, dtype=float)
        eta = z / (2.0 * np.sqrt(self.kappa * t))
        temp = self.surface_temperature * (1.0 - erf(eta) / erf(self.lam))
        return np.where(z < self.thickness(t), temp, 0.0)

    def cell_mean_temperature(self, z0, z1, t):
        """Mean of the exact ice temperature over ``[z0, z1]`` (both inside the ice) [degC].

        Uses int erf(a z) dz = z erf(a z) + exp(-a^2 z^2) / (a sqrt(pi)).
        """
        a = 1.0 / (2.0 * np.sqrt(self.kappa * t))

        def prim(z):
            return z * erf(a * z) + np.exp(-(a * z) ** 2) / (a * np.sqrt(np.pi))

        z0 = np.asarray(z0, dtype=float)
        z1 = np.asarray(z1, dtype=float)
        width = np.where(z1 > z0, z1 - z0, 1.0)
        mean_erf = (prim(z1) - prim(z0)) / width
        return self.surface_temperature * (1.0 - mean_erf / erf(self.lam))

    @property
    def eval_times(self) -> np.ndarray:
        """Times [s after the similarity origin] at which the error is measured."""
        return np.asarray(self.eval_days, dtype=float) * DAY

    def error(self, h) -> float:
        """Max relative thickness error over :attr:`eval_times` for ``h`` at those times."""
        h = np.asarray(h, dtype=float)
        return float(np.max(np.abs(h / self.thickness(self.eval_times) - 1.0)))


# ----------------------------------------------------------------------------------------- P2
@dataclass(frozen=True)
class Mushy:
    """P2: the salty column with a linear liquidus and no salt transport."""

    surface_temperature: float = -20.0  # degC
    salinity: float = 34.0  # g/kg, ocean and initial ice (bulk)
    gamma: float = LIQUIDUS_SLOPE  # K per g/kg
    h0: float = 0.15  # m
    days: float = 60.0
    eval_days: tuple = tuple(range(30, 61))  # days after the start
    depth: float = 2.0  # m, depth of the fixed-grid domain (peers; the mush reaches ~1.5 m); its bottom stays liquid

    @property
    def mat(self) -> Materials:
        return materials()

    @property
    def freezing_temperature(self) -> float:
        return -self.gamma * self.salinity

    def initial_temperature(self, z):
        """Initial temperature [degC] at depth ``z`` [m]: linear in the ice, T_f below."""
        z = np.asarray(z, dtype=float)
        tf = self.freezing_temperature
        ts = self.surface_temperature
        return np.where(z < self.h0, ts + (tf - ts) * z / self.h0, tf)

    @property
    def eval_times(self) -> np.ndarray:
        """Times [s after the start] at which the error is measured."""
        return np.asarray(self.eval_days, dtype=float) * DAY

    def error(self, hs, hs_ref) -> float:
        """Max relative difference of the solid-equivalent thickness from the reference."""
        hs = np.asarray(hs, dtype=float)
        return float(np.max(np.abs(hs / np.asarray(hs_ref, dtype=float) - 1.0)))


# ------------------------------------------------------------------- phase relations of P2 (vectorised)
def mush_enthalpy(temperature, salinity, mat: Materials, gamma: float):
    """Enthalpy [J m-3] of material of bulk salinity ``salinity`` [g/kg] at ``temperature`` [degC]
    in phase equilibrium on the linear liquidus (liquid fraction min(1, Gamma S / -T))."""
    t = np.asarray(temperature, dtype=float)
    s = np.asarray(salinity, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        phi = np.where(t < 0.0, np.minimum(1.0, gamma * s / np.maximum(-t, 1e-300)), 1.0)
    phi = np.where((s <= 0.0) & (t < 0.0), 0.0, phi)
    return mat.rho * ((phi * mat.c_l + (1.0 - phi) * mat.c_s) * t - (1.0 - phi) * mat.latent), phi


def invert_linear_liquidus(h, s, mat: Materials, gamma: float):
    """Temperature [degC] and liquid fraction from enthalpy ``h`` [J m-3] and bulk salinity ``s``.

    Closed form: in the mush T = -Gamma S / phi, and H / rho = (phi c_l + (1 - phi) c_s) T -
    (1 - phi) L becomes L phi^2 - B phi - c_s Gamma S = 0 with
    B = L + (c_l - c_s) Gamma S + H / rho, whose positive root is the liquid fraction.  phi >= 1
    means liquid (T = H / (rho c_l)); S = 0 is fresh ice (phi from H between -rho L and 0).
    Works elementwise on arrays (no loop over cells).
    """
    L, cs, cl, rho = mat.latent, mat.c_s, mat.c_l, mat.rho
    gs = gamma * s
    b = L + (cl - cs) * gs + h / rho
    phi = (b + np.sqrt(b * b + 4.0 * L * cs * gs)) / (2.0 * L)
    liquid = phi >= 1.0
    solid = phi <= 0.0
    with np.errstate(divide="ignore", invalid="ignore"):
        t_mush = -gs / phi
    t_sol = (h / rho + L) / cs
    temp = np.where(liquid, h / (rho * cl), np.where(solid, t_sol, t_mush))
    phi = np.clip(phi, 0.0, 1.0)
    return temp, phi
