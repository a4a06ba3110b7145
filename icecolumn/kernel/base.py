r"""Lower boundary: the ice-ocean interface at the ocean freezing point.

The interface is at the ocean freezing temperature ``T_f(S_w)``.  Its velocity follows from the
interface heat balance (the Stefan condition)

.. math:: \dot h\,(H_w - H_i) = F_c - F_w, \qquad F_c = 3 k_N (T_f - T_e)/\Delta, \quad
          T_e = (7 \bar T_N - \bar T_{N-1})/6

with the one-sided second-order closure for the conductive flux at the interface (exact for a
quadratic profile of cell averages; common practice, no source), ``H_w = rho c_l T_f`` the sea
water's enthalpy and ``H_i`` the enthalpy of the ice at the interface: the bottom layer's bulk
salinity ``S_N`` at the freezing temperature, liquid fraction ``phi_i = S_N / S_w``, so that
:math:`H_w - H_i = \rho (1 - \phi_i)(L + (c_l - c_s) T_f)` (``rho L`` for fresh ice).  New ice
enters at ocean salinity (its liquid fraction tends to 1 at the interface; Notz & Worster 2009,
JGR 114, C05006: salinity is continuous across the growing interface, no segregation); all
desalination is then done by the drainage fluxes.  When the bottom mush is almost as salty as the
ocean (no drainage) the jump vanishes, as it does in the continuum, and the interface moves to
where the conductive flux meets the ocean heat flux; the jump is bounded below by
``DENOM_MIN rho L``, which sets how fast it gets there.  The bottom layer gains the ocean heat
flux and the enthalpy and salt of the water crossing the interface (growth) or loses its own
(melt).  Melting is throttled smoothly to zero at ``H_MIN``.
"""
from __future__ import annotations

from .._jit import jit
from ..phase import invert_enthalpy_scalar, liquidus_temperature_scalar
from ..properties import conductivity_scalar
from .layout import B, P
from .top import DENOM_MIN, H_MIN


@jit
def basal_velocity(y, n, par, fw, tb, tb1, kb, dtde_b, dtdm_b, dtde_b1, dtdm_b1):
    """Basal velocity [m s-1] from the interface heat balance, and its derivatives w.r.t. the
    enthalpy and salt contents of the bottom layer and of the layer above it, and w.r.t. the
    thickness at fixed contents.

    ``fw`` ocean heat flux [W m-2]; ``tb``, ``tb1`` the temperatures of the bottom layer and the
    one above, ``kb`` the bottom layer's conductivity; ``dtde_*``, ``dtdm_*`` their temperature
    derivatives w.r.t. their contents (the conductivity's own dependence is left out, as in the
    cell blocks).  Returns ``(r, dr_de_b, dr_dm_b, dr_de_b1, dr_dm_b1, dr_dh)``.
    """
    rho = par[P.RHO]
    h = y[2 * n]
    ih = 1.0 / h
    idz = n * ih
    sw = par[P.SW]
    tf = liquidus_temperature_scalar(sw)
    g = 3.0 * kb * idz
    fc = g * (tf - (7.0 * tb - tb1) / 6.0)
    # the ice at the interface: the bottom layer's bulk salinity at the freezing point
    mb = y[2 * n - 1]
    lat = rho * (par[P.L] + (par[P.CL] - par[P.CS]) * tf)
    dphi_dm = 0.0
    if sw > 0.0:
        phi_i = 1000.0 * mb * idz / (rho * sw)
        dphi_dm = 1000.0 * idz / (rho * sw)
        if phi_i >= 1.0:
            phi_i = 1.0
            dphi_dm = 0.0
        elif phi_i < 0.0:
            phi_i = 0.0
            dphi_dm = 0.0
    else:
        phi_i = 0.0
    den = (1.0 - phi_i) * lat
    dmin = DENOM_MIN * rho * par[P.L]
    if den < dmin:
        den = dmin
        dphi_dm = 0.0
    r0 = (fc - fw) / den
    dtdh_b = -(dtde_b * y[n - 1] + dtdm_b * mb) * ih
    dtdh_b1 = -(dtde_b1 * y[n - 2] + dtdm_b1 * y[2 * n - 2]) * ih
    c7 = g * (7.0 / 6.0)
    c1 = g / 6.0
    # d den / d m_b = -lat dphi/dm; d den / d h = lat phi_i / h (phi_i ~ 1/h at fixed salt)
    dden_dm = -lat * dphi_dm
    dden_dh = lat * dphi_dm * mb * ih
    dr_de = -c7 * dtde_b / den
    dr_dm = (-c7 * dtdm_b - r0 * dden_dm) / den
    dr_de1 = c1 * dtde_b1 / den
    dr_dm1 = c1 * dtdm_b1 / den
    dr_dh = (-fc * ih - c7 * dtdh_b + c1 * dtdh_b1 - r0 * dden_dh) / den
    if r0 < 0.0:
        x = (h - H_MIN) / H_MIN
        if x <= 0.0:
            return 0.0, 0.0, 0.0, 0.0, 0.0, 0.0
        if x < 1.0:
            return r0 * x, dr_de * x, dr_dm * x, dr_de1 * x, dr_dm1 * x, dr_dh * x + r0 / H_MIN
    return r0, dr_de, dr_dm, dr_de1, dr_dm1, dr_dh


@jit
def basal_velocity_of_state(y, n, par, fw):
    """Basal velocity [m s-1] evaluated from the state vector (the two bottom layers)."""
    rho = par[P.RHO]
    h = y[2 * n]
    dz = h / n
    cs = par[P.CS]
    cl = par[P.CL]
    lat = par[P.L]
    hv = y[n - 1] / dz
    s = 1000.0 * y[2 * n - 1] / (rho * dz)
    t, p, _b, dth, dts = invert_enthalpy_scalar(hv, s, rho, cs, cl, lat)
    kb = conductivity_scalar(int(par[P.KMODEL]), t, p, s, par[P.KICE])
    hv1 = y[n - 2] / dz
    s1 = 1000.0 * y[2 * n - 2] / (rho * dz)
    t1, _p1, _b1, dth1, dts1 = invert_enthalpy_scalar(hv1, s1, rho, cs, cl, lat)
    return basal_velocity(y, n, par, fw, t, t1, kb, dth / dz, dts * 1000.0 / (rho * dz), dth1 / dz,
                          dts1 * 1000.0 / (rho * dz))[0]


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
