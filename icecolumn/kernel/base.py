r"""Lower boundary: the ice-ocean interface at the ocean freezing point.

The interface is at the ocean freezing temperature ``T_f(S_w)``.  Its velocity follows from the
interface heat balance

.. math:: \dot h\,(H_w - H_N) = F_c - F_w, \qquad F_c = k_N (T_f - T_N)/(\Delta/2)

(``H_w = rho c_l T_f`` the sea water's enthalpy, ``H_N`` the bottom layer's).  New ice enters at
ocean salinity (its liquid fraction tends to 1 at the interface; Notz & Worster 2009, JGR 114,
C05006: salinity is continuous across the growing interface, no segregation); all desalination
is then done by the drainage fluxes.  The bottom layer gains the ocean heat flux and the enthalpy
and salt of the water crossing the interface (growth) or loses its own (melt).  The enthalpy jump
is bounded below by ``DENOM_MIN rho L`` and melting is throttled smoothly to zero at ``H_MIN``.
"""
from __future__ import annotations

from .._jit import jit
from ..phase import invert_enthalpy_scalar, liquidus_temperature_scalar
from ..properties import conductivity_scalar
from .layout import B, P
from .top import DENOM_MIN, H_MIN


@jit
def basal_velocity(y, n, par, fw, tb, kb, dtde_b, dtdm_b):
    """Basal velocity [m s-1] from the interface heat balance and its derivatives w.r.t. the
    bottom layer's enthalpy and salt contents and the thickness at fixed contents.

    ``fw`` ocean heat flux [W m-2]; ``tb``, ``kb`` the bottom layer's temperature and
    conductivity; ``dtde_b``, ``dtdm_b`` its temperature derivatives w.r.t. its contents (the
    conductivity's own dependence is left out, as in the cell blocks).
    """
    rho = par[P.RHO]
    h = y[2 * n]
    ih = 1.0 / h
    idz = n * ih
    eb = y[n - 1]
    tf = liquidus_temperature_scalar(par[P.SW])
    hw = rho * par[P.CL] * tf
    g = 2.0 * kb * idz
    fc = g * (tf - tb)
    hb = eb * idz
    den = hw - hb
    dmin = DENOM_MIN * rho * par[P.L]
    clamped = den < dmin
    if clamped:
        den = dmin
    r0 = (fc - fw) / den
    dtdh_b = -(dtde_b * eb + dtdm_b * y[2 * n - 1]) * ih
    dfc_de = -g * dtde_b
    dfc_dm = -g * dtdm_b
    dfc_dh = -fc * ih - g * dtdh_b
    dden_de = 0.0 if clamped else -idz
    dden_dh = 0.0 if clamped else hb * ih
    dr_de = (dfc_de - r0 * dden_de) / den
    dr_dm = dfc_dm / den
    dr_dh = (dfc_dh - r0 * dden_dh) / den
    if r0 < 0.0:
        x = (h - H_MIN) / H_MIN
        if x <= 0.0:
            return 0.0, 0.0, 0.0, 0.0
        if x >= 1.0:
            return r0, dr_de, dr_dm, dr_dh
        return r0 * x, dr_de * x, dr_dm * x, dr_dh * x + r0 / H_MIN
    return r0, dr_de, dr_dm, dr_dh


@jit
def basal_velocity_of_state(y, n, par, fw):
    """Basal velocity [m s-1] evaluated from the state vector (bottom layer only)."""
    rho = par[P.RHO]
    h = y[2 * n]
    dz = h / n
    k = n - 1
    hv = y[k] / dz
    s = 1000.0 * y[n + k] / (rho * dz)
    t, p, b, dth, dts = invert_enthalpy_scalar(hv, s, rho, par[P.CS], par[P.CL], par[P.L])
    kb = conductivity_scalar(int(par[P.KMODEL]), t, p, s, par[P.KICE])
    return basal_velocity(y, n, par, fw, t, kb, dth / dz, dts * 1000.0 / (rho * dz))[0]


@jit
def add_base_fluxes(f, y, r, n, par, fw):
    """Face n: ocean heat flux and the enthalpy and salt of the water crossing the interface.
    Returns the salt flux into the bottom layer [kg m-2 s-1] (growth > 0, melt < 0)."""
    rho = par[P.RHO]
    dz = y[2 * n] / n
    hw = rho * par[P.CL] * liquidus_temperature_scalar(par[P.SW])
    if r > 0.0:
        sm = r * (rho * par[P.SW] / 1000.0)
    else:
        sm = r * y[2 * n - 1] / dz
    f[n - 1] += fw + r * hw
    f[2 * n - 1] += sm
    return sm


@jit
def add_base_budgets(f, n, par, r, fw, sm):
    """Budget slots of the lower boundary."""
    nb = 2 * n + 1
    hw = par[P.RHO] * par[P.CL] * liquidus_temperature_scalar(par[P.SW])
    if r > 0.0:
        f[nb + B.H_GROW] = r
    else:
        f[nb + B.H_BMELT] = -r
    f[nb + B.E_OCEAN] = fw
    f[nb + B.E_WATER] = r * hw
    if sm > 0.0:
        f[nb + B.S_ENTRAIN] += sm
    else:
        f[nb + B.S_MELT] = -sm


@jit
def add_base_dr_column(col, y, r, n, par):
    """d f / d r of the lower boundary (the water's enthalpy and salt crossing the interface)."""
    rho = par[P.RHO]
    idz = n / y[2 * n]
    col[n - 1] += rho * par[P.CL] * liquidus_temperature_scalar(par[P.SW])
    if r > 0.0:
        col[2 * n - 1] += rho * par[P.SW] / 1000.0
    else:
        col[2 * n - 1] += y[2 * n - 1] * idz


@jit
def base_blocks(di, r, n, dz):
    """Jacobian of the bottom layer's salt leaving with melting ice."""
    if r <= 0.0:
        di[n - 1, 3] += r / dz


@jit
def add_base_dh_column(col, y, r, n):
    """d f / d h of the lower boundary at fixed contents (melt salt through the layer thickness)."""
    ih = 1.0 / y[2 * n]
    idz = n * ih
    if r <= 0.0:
        col[2 * n - 1] -= r * y[2 * n - 1] * idz * ih
