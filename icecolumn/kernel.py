r"""Method-of-lines column kernel: finite-volume right-hand side and implicit stepper.

Grid
----
``N`` layers of equal thickness :math:`\Delta = h/N` span the ice from the surface
(depth 0) to the ice-ocean interface (depth ``h``); interfaces ``j = 0..N`` sit at
depth :math:`j\Delta`.  The grid follows the ice: when the base moves at
:math:`\dot h`, interface ``j`` moves down at :math:`w_j = (j/N)\dot h` relative to
the ice, so content is exchanged between neighbouring layers by upwind advection in
the grid frame (a moving-grid finite-volume scheme).

Prognostic variables (per member)
---------------------------------
``e_k = Delta H_k`` [J m-2] enthalpy content and ``m_k = Delta rho S_k / 1000`` [kg m-2]
salt content of each layer, and the thickness ``h`` [m].  Cumulative budget terms are
extra components of the same ODE system, built from the same face fluxes:

======  ==========================================================================
index   budget component (all cumulative since the start of the run)
======  ==========================================================================
0       energy through the upper surface (conduction into the ice) [J m-2]
1       ocean heat flux into the ice base [J m-2]
2       enthalpy carried by sea water taken up (growth) or leaving (melt) [J m-2]
3       salt in all sea water taken up (``salt_entrained``) [kg m-2]
4       salt released to the ocean by basal melt [kg m-2]
5       salt released to the ocean by gravity drainage (net: brine out minus
        sea water in) [kg m-2]
6       enthalpy carried by the drainage exchange (sea water in minus brine out) [J m-2]
7       volume of brine drained to the ocean through channels [m]
8       salt carried off by surface melt water [kg m-2]
9       ice melted at the surface [m]
10      congelation growth at the base [m]
11      ice melted at the base [m]
12      snow thickness [m] (prognostic state, not a budget term)
13      salt flushed out of the ice base by percolating melt water [kg m-2]
14      enthalpy carried by the flushing flow (melt water in at 0 degC minus brine out) [J m-2]
15      enthalpy of the snow turned into snow-ice by flooding [J m-2]
16      enthalpy of the sea water that flooded it [J m-2]
17      snow-ice formed [m]
18      heat lost by open water at its freezing point not yet formed into ice (state) [J m-2]
19      minus the enthalpy of the last ice given to the ocean at melt-out [J m-2]
20-22   mixed layer enthalpy [J m-2], mass [kg m-2], salt [kg m-2] (state; 0 without one)
23      heat into the open-water surface of the mixed layer [J m-2]
24      heat from the deep ocean into the mixed layer [J m-2]
25      snowfall that reached the snow or the mixed layer [kg m-2]
26      salt from the deep ocean restoring the mixed-layer salinity [kg m-2]
27      the step size proposed for the next step (solver state, not a budget) [s]
======  ==========================================================================

Face fluxes (positive downward)
-------------------------------
* surface: conduction :math:`F_0` from the surface scheme (prescribed surface
  temperature or linearised heat transfer with air), through an optional snow slab;
* interior: :math:`F_j = k_{j-1/2}(T_{j-1} - T_j)/\Delta` with the harmonic mean of
  the neighbouring conductivities;
* base: :math:`-F_w - \dot h H_w` for energy (ocean heat flux plus the enthalpy of the
  water crossing the interface, ``H_w = rho c_l T_f``) and :math:`-\dot h\,\rho S_w/1000`
  (growth) or :math:`-\dot h\, m_N/\Delta` (melt) for salt;
* advection across moving interfaces: :math:`-w_j q_{\mathrm{up}}` with ``q`` the
  content per volume of the upwind layer.

Because every layer's tendency is a difference of face fluxes and the budget
components integrate the boundary fluxes with the same stage weights, the discrete
energy and salt budgets close to round-off whatever the Newton tolerance: the final
update of each step is evaluated explicitly from the converged stage values.

Basal growth
------------
The interface is at the ocean freezing temperature ``T_f(S_w)``.  Its velocity is the
interface heat balance
:math:`\dot h\,(H_w - H_N) = F_c - F_w` with :math:`F_c = k_N (T_f - T_N)/(\Delta/2)`,
the conductive flux leaving the interface into the bottom layer.  New ice enters at
ocean salinity (its liquid fraction tends to 1 at the interface; Notz & Worster 2009,
JGR 114, C05006: salinity is continuous across the growing interface, no segregation);
all desalination is then done by the drainage fluxes.  With this choice the bottom layer
evolves as a layer conducting :math:`F_c` through its lower face.  The enthalpy jump is
bounded below by ``0.02 rho L`` so the rate stays finite if the bottom layer is almost
liquid.  Melting is throttled smoothly to zero at 5 mm; an accepted step that leaves melting
ice thinner than 1 cm melts it out completely (:func:`_melt_out`), and open water (h = 0) is
stepped by :func:`_open_water_step` until it has lost the heat to form new ice
(:func:`_form_new_ice`).  Snow-ice forms at the top while the freeboard is negative
(:func:`_flooding_rate`).

Time stepping
-------------
TR-BDF2 (Bank et al. 1985; Hosea & Shampine 1996, Appl. Numer. Math. 20, 21-37) as a
stiffly accurate, L-stable ESDIRK method with an embedded first-order error estimate,
per-member step control (each member has its own step and error norm, so its result
never depends on the batch it is in).  Each implicit stage is solved by Newton's method
with the basal velocity as an extra algebraic unknown: the Jacobian is block-tridiagonal
(2x2 blocks for enthalpy and salt of each layer) bordered by two columns (thickness and
basal velocity) and two rows; it is solved in O(N) by the block Thomas algorithm and a
2x2 Schur complement.  The temperature derivatives come from the exact enthalpy inverse;
the small dependence of conductivity on the state is left out (a quasi-Newton method).
The proposed step size is kept in the state vector (``B_DT``) and the first guesses of the
enthalpy inversion are reset at every output time, so the state written to the output file
is the integrator's whole memory (restart is bitwise).
"""
from __future__ import annotations

import numpy as np
from numba import njit, prange

from .constants import GRAVITY, SEAWATER_DENSITY
from .phase import brine_salinity_derivative_scalar, invert_enthalpy_guess_scalar, invert_enthalpy_scalar, \
    liquidus_temperature_scalar
from .properties import conductivity_scalar
from .surface import PENETRATION_ICE, albedo_scalar, longwave_down_scalar, net_surface_flux_scalar, \
    net_water_flux_scalar

# ---------------------------------------------------------------------------------------
# parameter vector layout (one row per member)
P_RHO = 0
P_CS = 1
P_CL = 2
P_L = 3
P_KMODEL = 4
P_KICE = 5
P_SW = 6
P_FW = 7
P_HTC = 8
P_KSNOW = 9
P_HSNOW = 10
P_SURF = 11  # 0 linear, 1 prescribed surface temperature
P_RTOL = 12
P_MAXDT = 13
P_INITDT = 14
P_DRAIN = 15  # drainage scheme code (0 none)
P_TMELT = 16  # surface melting point [degC]
# gravity drainage (see icecolumn.drainage)
P_DALPHA = 17  # flux coefficient (scheme units)
P_DRAC = 18  # critical Rayleigh number [1]
P_DPHIC = 19  # percolation threshold [1]
P_DPERM = 20  # permeability law code
P_DAVG = 21  # 0 minimum, 1 harmonic mean permeability to the base
P_DKAPPA = 22  # thermal diffusivity of brine [m2 s-1]
P_DMU = 23  # dynamic viscosity of brine [kg m-1 s-1]
P_DRAMP = 24  # smoothing width of the onset (Ra - Ra_c)+ [1]
P_DPHIW = 25  # smoothing width of the percolation threshold [1]
P_DBETA = 26  # brine density slope d rho / d S_br [kg m-3 (g/kg)-1]
P_WIND = 27  # wind speed when the forcing has none [m s-1]
P_RHOSNOW = 28  # snow density [kg m-3]
P_FLUSH = 29  # fraction of surface melt water flushing down through permeable ice [1]
P_MLD = 30  # depth of the slab ocean mixed layer [m] (0: none, water at its freezing point)
P_H0 = 31  # thickness of new ice formed in open water [m]
P_FLOODTAU = 32  # relaxation time of flooding to zero freeboard [s] (0: no flooding)
P_MLTAU = 33  # restoring time of the mixed-layer salinity to the ocean salinity [s] (0: none)
P_SREF = 34  # ocean salinity the mixed layer is restored to [g/kg]
NPAR = 36

NBUDGET = 28
B_E_SURF = 0
B_E_OCEAN = 1
B_E_WATER = 2
B_S_ENTRAIN = 3
B_S_MELT = 4
B_S_DRAIN = 5
B_E_DRAIN = 6
B_V_DRAIN = 7
B_S_SURFMELT = 8
B_H_SURFMELT = 9
B_H_GROW = 10
B_H_BMELT = 11
B_SNOW = 12  # not cumulative: the prognostic snow thickness [m]
B_S_FLUSH = 13
B_E_FLUSH = 14
B_E_FLOOD_SNOW = 15  # enthalpy of the snow turned into snow-ice [J m-2]
B_E_FLOOD_WATER = 16  # enthalpy of the sea water that flooded it [J m-2]
B_H_SNOWICE = 17  # snow-ice formed [m]
B_FRAZIL = 18  # not cumulative: heat taken from open water at its freezing point, not yet new ice [J m-2]
B_E_MELTOUT = 19  # minus the enthalpy of the last ice given to the ocean at melt-out [J m-2]
B_ML_E = 20  # not cumulative: enthalpy of the mixed layer (reference liquid at 0 degC) [J m-2]
B_ML_W = 21  # not cumulative: mass of the mixed layer [kg m-2]
B_ML_S = 22  # not cumulative: salt in the mixed layer [kg m-2]
B_E_ML_SURF = 23  # heat into the open-water surface of the mixed layer [J m-2]
B_E_ML_DEEP = 24  # heat from the deep ocean into the mixed layer (or into freezing open water) [J m-2]
B_SNOWFALL = 25  # snowfall that reached the snow or the mixed layer [kg m-2]
B_S_ML_DEEP = 26  # salt exchanged with the deep ocean by restoring the mixed-layer salinity [kg m-2]
B_DT = 27  # not a budget: the step size the integrator proposes next [s] (0: [solver] initial_step)

SURFACE_SCHEMES = {"linear": 0, "prescribed": 1, "energy_balance": 2}

# forcing variables (rows of the per-member forcing array; NaN where a member has none)
F_AIR = 0  # air temperature [degC]
F_TSURF = 1  # prescribed surface temperature [degC]
F_QOCEAN = 2  # ocean heat flux [W m-2]
F_SW = 3  # shortwave down [W m-2]
F_LW = 4  # longwave down [W m-2]
F_CLOUD = 5  # cloud fraction [1]
F_WIND = 6  # wind speed [m s-1]
F_RH = 7  # relative humidity (water) [%]
F_SNOWDEPTH = 8  # measured snow depth [m]
F_SNOWFALL = 9  # snowfall [kg m-2 s-1 water equivalent]
F_TOCEAN = 10  # ocean temperature under the ice / in open water [degC]
NFORCING = 11
FORCING_NAMES = ("air_temperature", "surface_temperature", "ocean_heat_flux", "shortwave_down",
                 "longwave_down", "cloud_fraction", "wind_speed", "relative_humidity", "snow_thickness", "snowfall",
                 "ocean_temperature")

# TR-BDF2 coefficients
_GAMMA = 2.0 - np.sqrt(2.0)
_D = _GAMMA / 2.0
_W = np.sqrt(2.0) / 4.0
_B1 = _W
_B2 = _W
_B3 = _D
_E1 = _W - (1.0 - _W) / 3.0
_E2 = _W - (3.0 * _W + 1.0) / 3.0
_E3 = _D - _D / 3.0

H_MIN = 0.005  # m, melting is throttled to zero at this thickness
GROWTH_MAX = 2.0  # largest factor by which an accepted step may grow the next one
H_OUT = 0.01  # m, melting ice thinner than this melts out completely (open water)
#: Heat transfer velocity between the mixed layer and the ice base, c_h u_* with the Stanton
#: number c_h = 0.006 (McPhee 1992, JGR 97, 5365; from memory) and a friction velocity of
#: 0.01 m s-1 (common practice, no source) [m s-1].
ML_EXCHANGE_VELOCITY = 0.006 * 0.01
#: Open water warmer than its freezing point by less than this [K] counts as at freezing when an
#: ``ocean_temperature`` forcing decides refreeze (instrument resolution; common practice, no source).
FREEZING_TOLERANCE = 0.02
#: Solid fraction of the new ice formed in open water (model choice, no source): the new layer
#: enters with the ocean's salinity and half of its pore-free latent heat removed.
NEW_ICE_SOLID_FRACTION = 0.5
#: Longest time step in open water [s] (explicit Heun steps of a 0-d budget).
OPEN_WATER_STEP = 3600.0
DENOM_MIN = 0.02  # fraction of rho L bounding the basal enthalpy jump


def state_size(n):
    """Length of one member's state vector for ``n`` layers."""
    return 2 * n + 1 + NBUDGET


@njit(cache=True)
def _interp(ft, fv, t, i0):
    """Linear interpolation of (ft, fv) at t; i0 is a search hint. Returns (value, index)."""
    n = ft.size
    i = i0
    if i < 0:
        i = 0
    if i > n - 2:
        i = n - 2
    while i > 0 and ft[i] > t:
        i -= 1
    while i < n - 2 and ft[i + 1] <= t:
        i += 1
    t0 = ft[i]
    t1 = ft[i + 1]
    a = (t - t0) / (t1 - t0)
    if a < 0.0:
        a = 0.0
    if a > 1.0:
        a = 1.0
    return fv[i] + a * (fv[i + 1] - fv[i]), i


@njit(cache=True)
def _cells(y, n, par, temp, phi, sbr, dtde, dtdm, kc):
    """Intensive state of each layer and the temperature derivatives w.r.t. contents."""
    rho = par[P_RHO]
    cs = par[P_CS]
    cl = par[P_CL]
    lat = par[P_L]
    model = int(par[P_KMODEL])
    kice = par[P_KICE]
    h = y[2 * n]
    dz = h / n
    for k in range(n):
        hv = y[k] / dz
        s = 1000.0 * y[n + k] / (rho * dz)
        # the layer's previous temperature (NaN at the start of an output interval) is the guess
        t, p, b, dth, dts = invert_enthalpy_guess_scalar(hv, s, rho, cs, cl, lat, temp[k])
        temp[k] = t
        phi[k] = p
        sbr[k] = b
        dtde[k] = dth / dz
        dtdm[k] = dts * 1000.0 / (rho * dz)
        kc[k] = conductivity_scalar(model, t, p, s, kice)


@njit(cache=True)
def _snow_depth(fv, y, n):
    """Snow thickness [m]: measured depth from the forcing, else the prognostic snow."""
    d = fv[F_SNOWDEPTH]
    if d == d:
        return d
    d = y[2 * n + 1 + B_SNOW]
    return d if d > 0.0 else 0.0


@njit(cache=True)
def _atmosphere(fv, par):
    """Shortwave and longwave down [W m-2], wind [m s-1] and relative humidity [%] of the
    forcing, with the defaults of the energy balance where the forcing has none: no shortwave,
    longwave from air temperature and cloud fraction (0.5 if absent), wind P_WIND, 90 %."""
    sw = fv[F_SW]
    if sw != sw:
        sw = 0.0
    lw = fv[F_LW]
    if lw != lw:
        cloud = fv[F_CLOUD]
        lw = longwave_down_scalar(fv[F_AIR], cloud if cloud == cloud else 0.5)
    wind = fv[F_WIND]
    if wind != wind:
        wind = par[P_WIND]
    rh = fv[F_RH]
    if rh != rh:
        rh = 90.0
    return sw, lw, wind, rh


@njit(cache=True)
def _surface(t0, k0, dz, fv, par, hs):
    """Downward flux into the top layer, its derivative w.r.t. T0, the surface temperature
    and the melt energy flux the capped surface could not take [W m-2].

    The flux includes the shortwave that penetrates the surface (energy balance scheme).
    """
    rs = hs / par[P_KSNOW] if hs > 0.0 else 0.0
    rc = 0.5 * dz / k0 + rs  # resistance surface -> top-layer centre
    tm = par[P_TMELT]
    scheme = int(par[P_SURF])
    ta = fv[F_AIR]
    if scheme == 1:
        tsp = fv[F_TSURF]
        ts = tsp if tsp < tm else tm
        return (ts - t0) / rc, -1.0 / rc, ts, 0.0
    if scheme == 0:
        hc = par[P_HTC]
        rt = 1.0 / hc + rc
        f = (ta - t0) / rt
        ts = ta - f / hc
        if ts > tm:
            f_air = hc * (ta - tm)
            f = (tm - t0) / rc
            return f, -1.0 / rc, tm, f_air - f
        return f, -1.0 / rt, ts, 0.0
    # energy balance: solve F_net(T_s) = (T_s - T0) / rc for T_s
    sw, lw, wind, rh = _atmosphere(fv, par)
    i0 = 0.0 if hs >= 0.01 else PENETRATION_ICE
    ts = t0 if t0 < tm else tm
    alb = albedo_scalar(hs, ts, tm)
    for _ in range(30):
        fn, dfn = net_surface_flux_scalar(ts, ta, sw, lw, wind, rh, alb, i0)
        res = fn - (ts - t0) / rc
        dres = dfn - 1.0 / rc
        step = -res / dres
        if step > 20.0:
            step = 20.0
        if step < -20.0:
            step = -20.0
        ts += step
        if abs(step) < 1e-10:
            break
    pen = i0 * (1.0 - alb) * sw
    if ts >= tm:
        alb = albedo_scalar(hs, tm, tm)
        pen = i0 * (1.0 - alb) * sw
        fn, _ = net_surface_flux_scalar(tm, ta, sw, lw, wind, rh, alb, i0)
        f = (tm - t0) / rc
        return f + pen, -1.0 / rc, tm, fn - f
    _, dfn = net_surface_flux_scalar(ts, ta, sw, lw, wind, rh, alb, i0)
    dts = (-1.0 / rc) / (dfn - 1.0 / rc)  # d T_s / d T0 (implicit function)
    return (ts - t0) / rc + pen, (dts - 1.0) / rc, ts, 0.0


@njit(cache=True)
def _hdot_derivatives(y, n, par, fw, tb, kb, dtde_b, dtdm_b):
    """Basal velocity [m s-1] from the interface heat balance dh/dt (H_w - H_N) = F_c - F_w
    (bottom layer's temperature ``tb`` and conductivity ``kb``; the enthalpy jump bounded below
    by DENOM_MIN rho L; melting throttled to zero at H_MIN) and its derivatives w.r.t. the
    bottom layer's enthalpy and salt contents and the thickness at fixed contents (the
    conductivity's own dependence is left out, as in the cell blocks)."""
    rho = par[P_RHO]
    h = y[2 * n]
    ih = 1.0 / h
    idz = n * ih
    eb = y[n - 1]
    tf = liquidus_temperature_scalar(par[P_SW])
    hw = rho * par[P_CL] * tf
    g = 2.0 * kb * idz
    fc = g * (tf - tb)
    hb = eb * idz
    den = hw - hb
    dmin = DENOM_MIN * rho * par[P_L]
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


@njit(cache=True)
def _hdot_of_state(y, n, par, fw):
    """Basal velocity evaluated from the state vector (bottom layer only)."""
    rho = par[P_RHO]
    h = y[2 * n]
    dz = h / n
    k = n - 1
    hv = y[k] / dz
    s = 1000.0 * y[n + k] / (rho * dz)
    t, p, b, dth, dts = invert_enthalpy_scalar(hv, s, rho, par[P_CS], par[P_CL], par[P_L])
    kb = conductivity_scalar(int(par[P_KMODEL]), t, p, s, par[P_KICE])
    return _hdot_derivatives(y, n, par, fw, t, kb, dth / dz, dts * 1000.0 / (rho * dz))[0]


@njit(cache=True)
def _ramp(x, eps):
    """C1 ramp: 0 for x <= 0, x^2/(2 eps) up to eps, then x - eps/2 (smoothed (x)+)."""
    if x <= 0.0:
        return 0.0
    if x < eps:
        return 0.5 * x * x / eps
    return x - 0.5 * eps


@njit(cache=True)
def permeability_scalar(law, phi, phic, phiw):
    """Permeability [m2] of sea ice at liquid fraction ``phi`` [1].

    law 0: Freitag (1999, PhD thesis, Bremen) 1e-17 (1e3 phi)^3.1 (from memory);
    law 1: Golden et al. (2007, GRL 34, L16501) 3e-8 phi^3 (fit from memory).
    Both are multiplied by a C1 step from 0 at the percolation threshold ``phic`` to 1
    at ``phic + phiw`` (impermeable below the threshold).
    """
    if phi <= phic:
        return 0.0
    x = (phi - phic) / phiw
    step = 1.0 if x >= 1.0 else x * x * (3.0 - 2.0 * x)
    if law == 0:
        base = 1e-17 * (1e3 * phi) ** 3.1
    else:
        base = 3e-8 * phi * phi * phi
    return base * step


@njit(cache=True)
def _drainage(y, n, par, temp, phi, sbr, wflux, qsink, ra):
    """Brine exchange of the gravity-drainage scheme.

    Fills ``ra`` (local mush Rayleigh number of each layer), ``qsink`` (volume flux of
    brine leaving each layer through channels to the ocean [m s-1]) and ``wflux``
    (upward return flow through interface j, j = 0..n, [m s-1]; wflux[n] enters from
    the ocean and equals the total drained volume flux).
    """
    code = int(par[P_DRAIN])
    h = y[2 * n]
    dz = h / n
    for j in range(n + 1):
        wflux[j] = 0.0
    for k in range(n):
        qsink[k] = 0.0
        ra[k] = 0.0
    if code == 0:
        return
    law = int(par[P_DPERM])
    avg = int(par[P_DAVG])
    phic = par[P_DPHIC]
    phiw = par[P_DPHIW]
    sw = par[P_SW]
    coef = GRAVITY * par[P_DBETA] / (par[P_DKAPPA] * par[P_DMU])
    # effective permeability between each layer and the base, from the bottom up
    pmin = 1e300
    inv_sum = 0.0
    zero = False
    for k in range(n - 1, -1, -1):
        pk = permeability_scalar(law, phi[k], phic, phiw)
        if pk <= 0.0:
            zero = True
        if avg == 0:
            if pk < pmin:
                pmin = pk
            pe = pmin
        else:
            if not zero:
                inv_sum += 1.0 / pk
            pe = 0.0 if zero else (n - k) / inv_sum
        height = h - (k + 0.5) * dz
        ra[k] = coef * (sbr[k] - sw) * pe * height
    alpha = par[P_DALPHA]
    rac = par[P_DRAC]
    eps = par[P_DRAMP]
    if code == 1:
        # Griewank & Notz (2013): brine mass flux alpha (Ra - Ra_c)+ dz from each layer
        acc = 0.0
        for k in range(n):
            q = alpha * _ramp(ra[k] - rac, eps) * dz / par[P_RHO]
            qsink[k] = q
            acc += q
            wflux[k + 1] = acc
    else:
        # Rees Jones & Worster (2014) form: upwelling velocity alpha (kappa / h) (Ra - Ra_c)+
        # through the base of each layer, made monotonic downward (running maximum)
        scale = alpha * par[P_DKAPPA] / h
        wmax = 0.0
        for k in range(n):
            wk = scale * _ramp(ra[k] - rac, eps)
            if wk > wmax:
                wmax = wk
            wflux[k + 1] = wmax
            qsink[k] = wflux[k + 1] - wflux[k]


@njit(cache=True)
def _surface_melt_rate(y, n, par, melt_energy):
    """Surface melt velocity [m s-1] from the melt energy flux [W m-2] of a surface held at
    its melting point: the top interface balance a (H_water - H_1) = melt energy, with melt
    water at 0 degC (H_water = 0).  Throttled to zero at the minimum thickness."""
    if melt_energy <= 0.0:
        return 0.0
    h = y[2 * n]
    dz = h / n
    jump = -y[0] / dz
    jmin = DENOM_MIN * par[P_RHO] * par[P_L]
    if jump < jmin:
        jump = jmin
    a = melt_energy / jump
    x = (h - H_MIN) / H_MIN
    if x < 0.0:
        x = 0.0
    if x > 1.0:
        x = 1.0
    return a * x


@njit(cache=True)
def _divergence(fe, fm, n, out, accumulate):
    """Layer tendencies from downward fluxes through the interior faces 1..n-1 (``fe`` enthalpy,
    ``fm`` salt; faces 0 and n are set to 0 here, the boundaries are added by the caller):
    out[k] (+)= fe[k] - fe[k+1], out[n+k] (+)= fm[k] - fm[k+1]."""
    fe[0] = 0.0
    fm[0] = 0.0
    fe[n] = 0.0
    fm[n] = 0.0
    if accumulate:
        for k in range(n):
            out[k] += fe[k] - fe[k + 1]
            out[n + k] += fm[k] - fm[k + 1]
    else:
        for k in range(n):
            out[k] = fe[k] - fe[k + 1]
            out[n + k] = fm[k] - fm[k + 1]


@njit(cache=True)
def _face_velocity(a, r, j, n):
    """Downward velocity of interface j relative to the ice [m s-1]: (1 - j/n) a + (j/n) r.
    Every user (fluxes and Jacobian) takes the upwind side from this one expression."""
    return a + (r - a) * (j * (1.0 / n))


@njit(cache=True)
def _flushing(n, par, a, temp, phi, sbr, f):
    """Flushing: a fraction of the surface melt water percolates down through the ice when
    every layer is permeable, displacing brine volume for volume (upwind, from above); fresh
    melt water (0 degC, H = 0, S = 0) enters at the top and brine leaves at the base.

    The structure follows the flushing parameterisations that route a fraction of surface
    melt through permeable ice (e.g. Vancoppenolle et al. 2007, JGR 112; from memory); the
    fraction is this project's setting ([drainage] flushing_fraction).
    """
    phimin = 1.0
    for k in range(n):
        if phi[k] < phimin:
            phimin = phi[k]
    x = (phimin - par[P_DPHIC]) / par[P_DPHIW]
    if x <= 0.0:
        return
    gate = 1.0 if x >= 1.0 else x * x * (3.0 - 2.0 * x)
    w = par[P_FLUSH] * a * gate  # downward volume flux [m s-1]
    rho = par[P_RHO]
    cw = rho / 1000.0
    rcl = rho * par[P_CL]
    for j in range(1, n):
        us = w * cw * sbr[j - 1]
        ue = w * rcl * temp[j - 1]
        f[n + j - 1] -= us
        f[n + j] += us
        f[j - 1] -= ue
        f[j] += ue
    s_out = w * cw * sbr[n - 1]
    e_out = w * rcl * temp[n - 1]
    f[2 * n - 1] -= s_out
    f[n - 1] -= e_out
    nb = 2 * n + 1
    f[nb + B_S_FLUSH] = s_out
    f[nb + B_E_FLUSH] = -e_out


@njit(cache=True)
def _snow_ice_content(par):
    """Enthalpy [J m-3] and salt [kg m-3] of snow-ice: snow (density rho_s, taken at the sea
    water freezing point) whose pores are filled with sea water, liquid fraction 1 - rho_s/rho.

    Returns (H, salt, H of the snow part, H of the sea water part)."""
    rho = par[P_RHO]
    rs = par[P_RHOSNOW]
    tf = liquidus_temperature_scalar(par[P_SW])
    h_snow = rs * (par[P_CS] * tf - par[P_L])
    h_water = (rho - rs) * par[P_CL] * tf
    return h_snow + h_water, (rho - rs) * par[P_SW] / 1000.0, h_snow, h_water


@njit(cache=True)
def _rhs(y, r, n, par, fv, fw, f, temp, phi, sbr, dtde, dtdm, kc, want_cells, wflux, qsink, ra, a_in, af, sc):
    """Right-hand side for cells (f[0:2n]), thickness (f[2n]) and budgets.

    ``r`` is the basal velocity used by the advective fluxes; ``a_in`` >= 0 is the surface
    melt rate to use (the implicit stages take the rate of the step's start, which keeps the
    Newton system smooth; conservation is unaffected), a negative value computes it here.
    ``af`` >= 0 is the rate of snow-ice formation at the top [m s-1] (also held over a step).
    The top of the ice moves down at ``a - af``.  If ``want_cells`` the intensive arrays are
    (re)computed first.  ``fw`` is the heat flux into the ice base; with a mixed layer the
    forcing's ocean heat flux ``fv[F_QOCEAN]`` enters the mixed layer from below instead.
    ``sc`` is scratch space (rows 1 and 2 hold the downward face fluxes of enthalpy and salt).
    Returns the surface temperature, the derivative of the surface flux w.r.t. the top
    temperature and the surface melt rate.
    """
    if want_cells:
        _cells(y, n, par, temp, phi, sbr, dtde, dtdm, kc)
    rho = par[P_RHO]
    h = y[2 * n]
    dz = h / n
    idz = n / h
    tf = liquidus_temperature_scalar(par[P_SW])
    hw = rho * par[P_CL] * tf
    mw = rho * par[P_SW] / 1000.0
    hs = _snow_depth(fv, y, n)
    f0, df0, ts, melt = _surface(temp[0], kc[0], dz, fv, par, hs)
    # melt energy goes to the snow first (smoothly handed to the ice as the last cm melts)
    fsnow = hs / 0.01 if hs < 0.01 else 1.0
    a = _surface_melt_rate(y, n, par, (1.0 - fsnow) * melt) if a_in < 0.0 else a_in
    anet = a - af
    used = a * (-y[0] / dz)  # melt energy used: melts ice into water at 0 degC (H = 0)
    for i in range(2 * n + 1 + NBUDGET):
        f[i] = 0.0
    # face 0 (surface): conduction + melt energy in; melt water (H = 0) and its salt out;
    # snow-ice (flooded snow) in
    f[0] += f0 + used
    s_top = a * y[n] / dz
    f[n] -= s_top
    nb = 2 * n + 1
    if af > 0.0:
        hsi, msi, hsnow, hwater = _snow_ice_content(par)
        f[0] += af * hsi
        f[n] += af * msi
        f[nb + B_E_FLOOD_SNOW] = af * hsnow
        f[nb + B_E_FLOOD_WATER] = af * hwater
        f[nb + B_S_ENTRAIN] += af * msi
        f[nb + B_H_SNOWICE] = af
    # interior faces; face j moves down at (1 - j/n) anet + (j/n) r relative to the ice.
    # Downward face fluxes first (fe, fm), then each layer takes the difference of its two faces.
    fe = sc[1]
    fm = sc[2]
    for j in range(1, n):
        k0 = kc[j - 1]
        k1 = kc[j]
        w = _face_velocity(anet, r, j, n) * idz
        up = j if w > 0.0 else j - 1
        fe[j] = 2.0 * k0 * k1 / (k0 + k1) * (temp[j - 1] - temp[j]) * idz - w * y[up]
        fm[j] = -w * y[n + up]
    drain = int(par[P_DRAIN]) != 0
    rcl = rho * par[P_CL]
    cw = rho / 1000.0
    if drain:
        # gravity drainage: upward return flow through the interior faces carries the brine of
        # the layer below (its enthalpy at the layer's temperature)
        _drainage(y, n, par, temp, phi, sbr, wflux, qsink, ra)
        for j in range(1, n):
            fm[j] -= wflux[j] * cw * sbr[j]
            fe[j] -= wflux[j] * rcl * temp[j]
    _divergence(fe, fm, n, f, True)
    # base (face n)
    if r > 0.0:
        sm = r * mw
    else:
        sm = r * y[2 * n - 1] / dz
    f[n - 1] += fw + r * hw
    f[2 * n - 1] += sm
    f[2 * n] = r - anet
    f[nb + B_E_SURF] = f0 + used
    f[nb + B_S_SURFMELT] = s_top
    f[nb + B_H_SURFMELT] = a
    snowmelt = 0.0  # snow melt water [kg m-2 s-1]
    if fv[F_SNOWDEPTH] != fv[F_SNOWDEPTH]:  # prognostic snow: snowfall minus snow melt and flooding
        sf = fv[F_SNOWFALL]
        sf = sf if sf == sf else 0.0
        snowmelt = fsnow * melt / par[P_L]
        f[nb + B_SNOW] = (sf - snowmelt) / par[P_RHOSNOW] - af
        f[nb + B_SNOWFALL] = sf
    if r > 0.0:
        f[nb + B_H_GROW] = r
    else:
        f[nb + B_H_BMELT] = -r
    f[nb + B_E_OCEAN] = fw
    f[nb + B_E_WATER] = r * hw
    if sm > 0.0:
        f[nb + B_S_ENTRAIN] += sm
    else:
        f[nb + B_S_MELT] = -sm
    if drain:
        win = wflux[n]
        f[2 * n - 1] += win * mw
        f[n - 1] += win * rcl * tf
        sout = 0.0
        eout = 0.0
        for k in range(n):
            qs = qsink[k] * cw * sbr[k]
            qe = qsink[k] * rcl * temp[k]
            f[n + k] -= qs
            f[k] -= qe
            sout += qs
            eout += qe
        f[nb + B_S_DRAIN] = sout - win * mw
        f[nb + B_E_DRAIN] = win * rcl * tf - eout
        f[nb + B_V_DRAIN] = win
    if par[P_FLUSH] > 0.0 and a > 0.0:
        _flushing(n, par, a, temp, phi, sbr, f)
    if par[P_MLD] > 0.0:
        # the mixed layer gives the ice exactly what the ice's boundary terms take from the ocean
        deep = fv[F_QOCEAN]
        f[nb + B_E_ML_DEEP] = deep
        f[nb + B_ML_E] = (deep - f[nb + B_E_OCEAN] - f[nb + B_E_WATER] - f[nb + B_E_DRAIN] - f[nb + B_E_FLUSH]
                          - f[nb + B_E_FLOOD_WATER])
        f[nb + B_ML_W] = rho * (anet - r) + par[P_RHOSNOW] * af + snowmelt
        salt_in = -sm + s_top + f[nb + B_S_DRAIN] + f[nb + B_S_FLUSH]
        if af > 0.0:
            salt_in -= af * (rho - par[P_RHOSNOW]) * par[P_SW] / 1000.0
        f[nb + B_ML_S] = salt_in + _restoring(y, n, par)
        f[nb + B_S_ML_DEEP] = _restoring(y, n, par)
    return ts, df0, a


@njit(cache=True)
def _dr_column(y, r, a, n, par, col, sc):
    """d f_cells / d r (the rhs is piecewise linear in r); ``a`` is the net downward velocity of
    the top (surface melt minus snow-ice formation); ``sc`` rows 3 and 4 are scratch."""
    rho = par[P_RHO]
    h = y[2 * n]
    idz = n / h
    tf = liquidus_temperature_scalar(par[P_SW])
    hw = rho * par[P_CL] * tf
    mw = rho * par[P_SW] / 1000.0
    ge = sc[3]
    gm = sc[4]
    for j in range(1, n):
        c = (j * (1.0 / n)) * idz  # d w / d r, times 1/dz
        up = j if _face_velocity(a, r, j, n) * idz > 0.0 else j - 1
        ge[j] = -c * y[up]
        gm[j] = -c * y[n + up]
    _divergence(ge, gm, n, col, False)
    col[n - 1] += hw
    if r > 0.0:
        col[2 * n - 1] += mw
    else:
        col[2 * n - 1] += y[2 * n - 1] * idz


@njit(cache=True)
def _brine_content_derivatives(phi, temp, dtde, dtdm, dz, cw):
    """d(rho S_br / 1000)/d(e, m) of one layer: through the liquidus in mush, S_br = S if liquid."""
    if phi >= 1.0:
        return 0.0, 1.0 / dz
    g = cw * brine_salinity_derivative_scalar(temp)
    return g * dtde, g * dtdm


@njit(cache=True)
def _blocks(y, r, a, amelt, n, df0, dtde, dtdm, kc, temp, a_dt, lo, di, up, par, phi, sbr, wflux):
    """Blocks of A = I - a dt d f_cells / d cells (2x2 per layer: [e, m]); ``a`` is the net
    downward velocity of the top, ``amelt`` its surface-melt part.

    Drainage enters with its local part only: the exchange of each layer with the layer
    below at the current return flow (the dependence of the flow itself on the state,
    through the Rayleigh number of every layer above, is left out).
    """
    h = y[2 * n]
    dz = h / n
    for k in range(n):
        for p in range(4):
            lo[k, p] = 0.0
            di[k, p] = 0.0
            up[k, p] = 0.0
    # surface flux into layer 0: d f_e0 / d(e0, m0) += df0 * dT0/d(.)
    di[0, 0] += df0 * dtde[0]
    di[0, 1] += df0 * dtdm[0]
    idz = n / h
    for j in range(1, n):
        kf = 2.0 * kc[j - 1] * kc[j] / (kc[j - 1] + kc[j])
        g = kf * idz
        # F_j = g (T_{j-1} - T_j); f_e[j-1] -= F_j ; f_e[j] += F_j
        # derivatives w.r.t. layer j-1 (e, m)
        a0 = g * dtde[j - 1]
        a1 = g * dtdm[j - 1]
        b0 = -g * dtde[j]
        b1 = -g * dtdm[j]
        di[j - 1, 0] -= a0
        di[j - 1, 1] -= a1
        up[j - 1, 0] -= b0
        up[j - 1, 1] -= b1
        lo[j, 0] += a0
        lo[j, 1] += a1
        di[j, 0] += b0
        di[j, 1] += b1
        # advection: flux into j-1 from upwind layer
        w = _face_velocity(a, r, j, n) * idz
        if w > 0.0:
            c = -w  # d(ae)/d(e_j)
            up[j - 1, 0] -= c
            up[j - 1, 3] -= c
            di[j, 0] += c
            di[j, 3] += c
        else:
            c = -w  # d(ae)/d(e_{j-1})
            di[j - 1, 0] -= c
            di[j - 1, 3] -= c
            lo[j, 0] += c
            lo[j, 3] += c
    if r <= 0.0:
        di[n - 1, 3] += r / dz
    di[0, 3] -= amelt / dz  # salt leaving with surface melt water
    if int(par[P_DRAIN]) != 0:
        rho = par[P_RHO]
        rcl = rho * par[P_CL]
        cw = rho / 1000.0
        for j in range(n):
            wj = wflux[j + 1]  # total outflow of layer j (to the layer above and to channels)
            if wj <= 0.0:
                continue
            # d c / d(e, m) of layer j and of the layer below
            cse, csm = _brine_content_derivatives(phi[j], temp[j], dtde[j], dtdm[j], dz, cw)
            di[j, 2] -= wj * cse
            di[j, 3] -= wj * csm
            di[j, 0] -= wj * rcl * dtde[j]
            di[j, 1] -= wj * rcl * dtdm[j]
            if j + 1 < n:
                jb = j + 1
                bse, bsm = _brine_content_derivatives(phi[jb], temp[jb], dtde[jb], dtdm[jb], dz, cw)
                up[j, 2] += wj * bse
                up[j, 3] += wj * bsm
                up[j, 0] += wj * rcl * dtde[jb]
                up[j, 1] += wj * rcl * dtdm[jb]
    # A = I - a dt J
    for k in range(n):
        for p in range(4):
            lo[k, p] = -a_dt * lo[k, p]
            di[k, p] = -a_dt * di[k, p]
            up[k, p] = -a_dt * up[k, p]
        di[k, 0] += 1.0
        di[k, 3] += 1.0


@njit(cache=True)
def _block_solve(n, lo, di, up, rhs, nrhs, work_m, work_g):
    """Solve the block-tridiagonal system in place for ``nrhs`` right-hand sides.

    rhs has shape (nrhs, 2n) with layer k occupying entries (k, n + k).
    """
    # forward sweep
    for k in range(n):
        m00 = di[k, 0]
        m01 = di[k, 1]
        m10 = di[k, 2]
        m11 = di[k, 3]
        if k > 0:
            # M = D_k - L_k G_{k-1}
            l00 = lo[k, 0]
            l01 = lo[k, 1]
            l10 = lo[k, 2]
            l11 = lo[k, 3]
            g00 = work_g[k - 1, 0]
            g01 = work_g[k - 1, 1]
            g10 = work_g[k - 1, 2]
            g11 = work_g[k - 1, 3]
            m00 -= l00 * g00 + l01 * g10
            m01 -= l00 * g01 + l01 * g11
            m10 -= l10 * g00 + l11 * g10
            m11 -= l10 * g01 + l11 * g11
            for q in range(nrhs):
                p0 = rhs[q, k - 1]
                p1 = rhs[q, n + k - 1]
                rhs[q, k] -= l00 * p0 + l01 * p1
                rhs[q, n + k] -= l10 * p0 + l11 * p1
        idet = 1.0 / (m00 * m11 - m01 * m10)
        i00 = m11 * idet
        i01 = -m01 * idet
        i10 = -m10 * idet
        i11 = m00 * idet
        work_m[k, 0] = i00
        work_m[k, 1] = i01
        work_m[k, 2] = i10
        work_m[k, 3] = i11
        # G_k = M^-1 U_k
        u00 = up[k, 0]
        u01 = up[k, 1]
        u10 = up[k, 2]
        u11 = up[k, 3]
        work_g[k, 0] = i00 * u00 + i01 * u10
        work_g[k, 1] = i00 * u01 + i01 * u11
        work_g[k, 2] = i10 * u00 + i11 * u10
        work_g[k, 3] = i10 * u01 + i11 * u11
        for q in range(nrhs):
            p0 = rhs[q, k]
            p1 = rhs[q, n + k]
            rhs[q, k] = i00 * p0 + i01 * p1
            rhs[q, n + k] = i10 * p0 + i11 * p1
    # back substitution
    for k in range(n - 2, -1, -1):
        g00 = work_g[k, 0]
        g01 = work_g[k, 1]
        g10 = work_g[k, 2]
        g11 = work_g[k, 3]
        for q in range(nrhs):
            x0 = rhs[q, k + 1]
            x1 = rhs[q, n + k + 1]
            rhs[q, k] -= g00 * x0 + g01 * x1
            rhs[q, n + k] -= g10 * x0 + g11 * x1


@njit(cache=True)
def _err_norm(vec, y, n, par, ny):
    """RMS norm of a change of (cells, h) in units of the tolerance."""
    rho = par[P_RHO]
    rtol = par[P_RTOL]
    h = y[2 * n]
    dz = h / n
    se = rtol * rho * par[P_L] * dz
    sm = rtol * rho * (par[P_SW] + 1.0) / 1000.0 * dz
    sh = rtol * (h if h > 0.01 else 0.01)
    acc = 0.0
    for k in range(n):
        a = vec[k] / se
        b = vec[n + k] / sm
        acc += a * a + b * b
    c = vec[2 * n] / sh
    acc += c * c
    return np.sqrt(acc / (2 * n + 1))


@njit(cache=True)
def _dh_column(y, r, a, amelt, n, par, f, temp, dtde, dtdm, kc, df0, sc, col):
    """d f_cells / d h at fixed layer contents, basal velocity ``r``, net top velocity ``a`` and
    surface melt rate ``amelt`` (the snow-ice source does not depend on h).  ``sc`` is scratch
    (row 0: dT/dh of each layer; rows 3 and 4: the face terms)."""
    h = y[2 * n]
    ih = 1.0 / h
    idz = n * ih
    dtdh = sc[0]
    for k in range(n):
        dtdh[k] = -(dtde[k] * y[k] + dtdm[k] * y[n + k]) * ih  # intensive state thins with h
    ge = sc[3]
    gm = sc[4]
    for j in range(1, n):
        k0 = kc[j - 1]
        k1 = kc[j]
        kf = 2.0 * k0 * k1 / (k0 + k1)
        fc = kf * (temp[j - 1] - temp[j]) * idz
        w = _face_velocity(a, r, j, n) * idz
        up = j if w > 0.0 else j - 1
        # d/dh of the downward face fluxes (conduction through h/n, advection -w q_up with
        # w and q_up both scaling with 1/h)
        ge[j] = -fc * ih + kf * idz * (dtdh[j - 1] - dtdh[j]) + w * y[up] * ih
        gm[j] = w * y[n + up] * ih
    _divergence(ge, gm, n, col, False)
    used = amelt * (-y[0] * idz)
    f0 = f[2 * n + 1 + B_E_SURF] - used
    col[0] += df0 * dtdh[0] + f0 * df0 / (2.0 * kc[0] * n) - used * ih
    col[n] += amelt * y[n] * idz * ih
    if r <= 0.0:
        col[2 * n - 1] -= r * y[2 * n - 1] * idz * ih


@njit(cache=True)
def _newton_stage(y, base, a_dt, n, par, fv, fw, f, temp, phi, sbr, dtde, dtdm, kc,
                  lo, di, up, rhs, work_m, work_g, ftmp, col_r, maxit, wflux, qsink, ra, sc, a_in, af):
    """Solve y - a_dt f(y) = base for the stage value y (in place). Returns (ok, r, iterations).

    ``sc`` (9, n + 1) is scratch space for the face fluxes of the right-hand side and the
    border columns of the Jacobian.
    """
    ncell = 2 * n
    r = _hdot_of_state(y, n, par, fw)
    prev = 1e300
    for it in range(maxit):
        h = y[2 * n]
        if not (h > 0.0):
            return False, r, it
        _ts, df0, amelt = _rhs(y, r, n, par, fv, fw, f, temp, phi, sbr, dtde, dtdm, kc, True, wflux, qsink, ra,
                               a_in, af, sc)
        atop = amelt - af
        # residuals (negated, as Newton rhs)
        for i in range(ncell):
            rhs[0, i] = -(y[i] - base[i] - a_dt * f[i])
        res_h = -(y[2 * n] - base[2 * n] - a_dt * (r - atop))
        hd, dhd_de, dhd_dm, dhd_dh = _hdot_derivatives(y, n, par, fw, temp[n - 1], kc[n - 1], dtde[n - 1],
                                                       dtdm[n - 1])
        res_r = -(r - hd)
        # border column for h: analytic d f / d h at fixed contents and r (conduction,
        # advection and melt terms through the layer thickness h/n; the small dependence of
        # conductivity and drainage on h is left out, as for the cell blocks)
        _dh_column(y, r, atop, amelt, n, par, f, temp, dtde, dtdm, kc, df0, sc, ftmp)
        for i in range(ncell):
            rhs[1, i] = -a_dt * ftmp[i]  # B column (h)
        _dr_column(y, r, atop, n, par, col_r, sc)
        for i in range(ncell):
            rhs[2, i] = -a_dt * col_r[i]  # B column (r)
        _blocks(y, r, atop, amelt, n, df0, dtde, dtdm, kc, temp, a_dt, lo, di, up, par, phi, sbr, wflux)
        _block_solve(n, lo, di, up, rhs, 3, work_m, work_g)
        # Schur complement: unknowns (dh, dr); rows h: dh - a_dt dr = res_h
        # row r: -dhd_de dx_e_b - dhd_dm dx_m_b - dhd_dh dh + dr = res_r
        # with dx = X1 - X2 [dh, dr]
        x1e = rhs[0, n - 1]
        x1m = rhs[0, 2 * n - 1]
        x2he = rhs[1, n - 1]
        x2hm = rhs[1, 2 * n - 1]
        x2re = rhs[2, n - 1]
        x2rm = rhs[2, 2 * n - 1]
        s00 = 1.0
        s01 = -a_dt
        s10 = -dhd_dh + dhd_de * x2he + dhd_dm * x2hm
        s11 = 1.0 + dhd_de * x2re + dhd_dm * x2rm
        g0 = res_h
        g1 = res_r + dhd_de * x1e + dhd_dm * x1m
        det = s00 * s11 - s01 * s10
        ddh = (g0 * s11 - s01 * g1) / det
        ddr = (s00 * g1 - s10 * g0) / det
        for i in range(ncell):
            ftmp[i] = rhs[0, i] - rhs[1, i] * ddh - rhs[2, i] * ddr
        ftmp[2 * n] = ddh
        nrm = _err_norm(ftmp, y, n, par, 2 * n + 1)
        for i in range(ncell):
            y[i] += ftmp[i]
        y[2 * n] += ddh
        r += ddr
        if not (nrm == nrm):
            return False, r, it + 1
        if nrm < 0.02:
            return True, r, it + 1
        if it >= 2 and nrm > 0.9 * prev:
            return False, r, it + 1
        prev = nrm
    return False, r, maxit


@njit(cache=True)
def _forcing_at(ft, forc, t, i0, par, out):
    """All forcing variables at time t into ``out``.

    The ocean heat flux defaults to the ``[ocean] heat_flux`` parameter; without a mixed layer
    and with an ``ocean_temperature`` forcing it is the turbulent flux
    rho_w c_l (c_h u_*) max(T_o - T_f, 0) instead.
    """
    i = i0
    for v in range(NFORCING):
        if forc[v, 0] != forc[v, 0]:  # variable absent for this member (whole row NaN)
            out[v] = np.nan
            continue
        out[v], i = _interp(ft, forc[v], t, i0)
    if out[F_QOCEAN] != out[F_QOCEAN]:
        to = out[F_TOCEAN]
        if to == to and par[P_MLD] <= 0.0:
            dtw = to - liquidus_temperature_scalar(par[P_SW])
            out[F_QOCEAN] = SEAWATER_DENSITY * par[P_CL] * ML_EXCHANGE_VELOCITY * (dtw if dtw > 0.0 else 0.0)
        else:
            out[F_QOCEAN] = par[P_FW]
    return i


@njit(cache=True)
def mixed_layer_state(y, n, par):
    """Temperature [degC], salinity [g/kg] and freezing temperature [degC] of the mixed layer."""
    nb = 2 * n + 1
    w = y[nb + B_ML_W]
    s = 1000.0 * y[nb + B_ML_S] / w
    return y[nb + B_ML_E] / (par[P_CL] * w), s, liquidus_temperature_scalar(s)


@njit(cache=True)
def _restoring(y, n, par):
    """Salt flux from the deep ocean restoring the mixed-layer salinity to P_SREF [kg m-2 s-1]."""
    tau = par[P_MLTAU]
    if tau <= 0.0:
        return 0.0
    nb = 2 * n + 1
    return (y[nb + B_ML_W] * par[P_SREF] / 1000.0 - y[nb + B_ML_S]) / tau


@njit(cache=True)
def _freeboard(y, n, par, hs):
    """Hydrostatic freeboard [m] of ice with snow depth ``hs`` (model ice density)."""
    h = y[2 * n]
    return h - (par[P_RHO] * h + par[P_RHOSNOW] * hs) / SEAWATER_DENSITY


@njit(cache=True)
def _flooding_rate(y, n, par, fv, dt):
    """Rate of snow-ice formation [m s-1] held over a step of length ``dt``.

    Converting snow of thickness d into snow-ice (its pores filled with sea water, mass
    (rho - rho_s) d added) raises the freeboard by d (1 - (rho - rho_s)/rho_w); the thickness
    that restores zero freeboard is therefore d = -f rho_w / (rho_w - rho + rho_s) (the
    hydrostatic snow-ice argument of Leppaeranta 1983, Geophysica 19; written for the model's
    equal ice and brine densities).  It forms over ``[snow] flooding_timescale``, and never
    more than d within one step.
    """
    tau = par[P_FLOODTAU]
    if tau <= 0.0:
        return 0.0
    hs = _snow_depth(fv, y, n)
    if hs <= 0.0:
        return 0.0
    fb = _freeboard(y, n, par, hs)
    if fb >= 0.0:
        return 0.0
    rho_w = SEAWATER_DENSITY
    d = -fb * rho_w / (rho_w - par[P_RHO] + par[P_RHOSNOW])
    rate = d / tau
    if rate * dt > d:
        rate = d / dt
    return rate


@njit(cache=True)
def _melt_out(y, n, par):
    """The last ice (thinner than H_OUT and melting) goes to the ocean: its enthalpy, salt,
    mass and any snow on it; the column becomes open water (h = 0)."""
    nb = 2 * n + 1
    e = 0.0
    m = 0.0
    for k in range(n):
        e += y[k]
        m += y[n + k]
        y[k] = 0.0
        y[n + k] = 0.0
    h = y[2 * n]
    hs = y[nb + B_SNOW]  # (may be a round-off below 0: moved as it is, so mass stays exact)
    y[nb + B_E_MELTOUT] -= e
    y[nb + B_S_MELT] += m
    y[nb + B_H_BMELT] += h
    if par[P_MLD] > 0.0:
        y[nb + B_ML_E] += e
        y[nb + B_ML_S] += m
        y[nb + B_ML_W] += par[P_RHO] * h + par[P_RHOSNOW] * hs
    y[nb + B_SNOW] = 0.0
    y[2 * n] = 0.0


@njit(cache=True)
def new_ice_heat(par):
    """Heat [J m-2] open water at its freezing point must lose to form the new ice layer of
    thickness ``P_H0``: h0 (H_water - H_new), H_new the enthalpy of ice of the ocean's salinity
    with the solid fraction NEW_ICE_SOLID_FRACTION (brine salinity S_w / (1 - solid fraction))."""
    rho = par[P_RHO]
    sw = par[P_SW]
    tf = liquidus_temperature_scalar(sw)
    x = NEW_ICE_SOLID_FRACTION
    tb = liquidus_temperature_scalar(sw / (1.0 - x))
    h_new = rho * (((1.0 - x) * par[P_CL] + x * par[P_CS]) * tb - x * par[P_L])
    return par[P_H0] * (rho * par[P_CL] * tf - h_new)


@njit(cache=True)
def _form_new_ice(y, n, par):
    """Open water that has lost the heat of :func:`new_ice_heat` freezes: a layer of P_H0 of
    sea water (its enthalpy and salt taken from the ocean) minus the heat already lost."""
    nb = 2 * n + 1
    rho = par[P_RHO]
    h0 = par[P_H0]
    tf = liquidus_temperature_scalar(par[P_SW])
    ew = rho * par[P_CL] * tf * h0
    mwt = rho * par[P_SW] / 1000.0 * h0
    e_new = ew + y[nb + B_FRAZIL]
    for k in range(n):
        y[k] = e_new / n
        y[n + k] = mwt / n
    y[2 * n] = h0
    y[nb + B_FRAZIL] = 0.0
    y[nb + B_E_WATER] += ew
    y[nb + B_S_ENTRAIN] += mwt
    y[nb + B_H_GROW] += h0
    if par[P_MLD] > 0.0:
        y[nb + B_ML_E] -= ew
        y[nb + B_ML_W] -= rho * h0
        y[nb + B_ML_S] -= mwt


@njit(cache=True)
def _open_water_rates(y, n, par, fv, g):
    """Tendencies of the budget components over open water (g has the state's length).

    With a mixed layer, its temperature follows the open-water surface flux and the deep ocean
    heat flux until it reaches its freezing point; then (and always without a mixed layer, the
    water being at its freezing point, or at the forcing's ocean_temperature) heat lost at
    the surface collects in B_FRAZIL until it is enough to form new ice.
    """
    nb = 2 * n + 1
    for i in range(g.size):
        g[i] = 0.0
    ta = fv[F_AIR]
    sf = fv[F_SNOWFALL]
    sf = sf if sf == sf else 0.0
    deep = fv[F_QOCEAN]
    if par[P_MLD] > 0.0:
        tw, _s, tf = mixed_layer_state(y, n, par)
    else:
        tf = liquidus_temperature_scalar(par[P_SW])
        tw = tf
    if int(par[P_SURF]) == 2:
        sw, lw, wind, rh = _atmosphere(fv, par)
        fs = net_water_flux_scalar(tw, ta, sw, lw, wind, rh)
    else:
        fs = par[P_HTC] * (ta - tw)
    collecting = y[nb + B_FRAZIL] < 0.0  # frazil not yet new ice: it takes the heat (either sign) first
    if par[P_MLD] > 0.0:
        g[nb + B_ML_W] = sf
        g[nb + B_SNOWFALL] = sf
        g[nb + B_ML_S] = _restoring(y, n, par)
        g[nb + B_S_ML_DEEP] = g[nb + B_ML_S]
        g[nb + B_E_ML_DEEP] = deep
        if collecting or (tw <= tf and fs + deep < 0.0):
            g[nb + B_FRAZIL] = fs + deep
            g[nb + B_E_SURF] = fs
            g[nb + B_E_OCEAN] = deep  # passed on by the mixed layer at its freezing point
        else:
            g[nb + B_ML_E] = fs + deep
            g[nb + B_E_ML_SURF] = fs
        return
    to = fv[F_TOCEAN]
    if not collecting and to == to and to > tf + FREEZING_TOLERANCE:
        return  # the ocean is warmer than its freezing point: nothing freezes
    if collecting or fs + deep < 0.0:
        g[nb + B_FRAZIL] = fs + deep
        g[nb + B_E_SURF] = fs
        g[nb + B_E_OCEAN] = deep


@njit(cache=True)
def _open_water_step(y, t, dt, n, par, ft, forc, idx, fv, g1, g2, ytmp):
    """One explicit Heun step of the open-water budgets; returns the forcing index hint."""
    idx = _forcing_at(ft, forc, t, idx, par, fv)
    _open_water_rates(y, n, par, fv, g1)
    for i in range(y.size):
        ytmp[i] = y[i] + dt * g1[i]
    _forcing_at(ft, forc, t + dt, idx, par, fv)
    _open_water_rates(ytmp, n, par, fv, g2)
    for i in range(y.size):
        y[i] = y[i] + 0.5 * dt * (g1[i] + g2[i])
    nb = 2 * n + 1
    mixed = par[P_MLD] > 0.0
    if mixed:
        tw, _s, tf = mixed_layer_state(y, n, par)
        if tw < tf or y[nb + B_FRAZIL] < 0.0:
            # below its freezing point (the step overshot), or holding frazil, the layer stays at
            # its freezing point (which snowfall and restoring move a little): the difference is
            # frazil formed or melted
            excess = y[nb + B_ML_E] - par[P_CL] * y[nb + B_ML_W] * tf
            y[nb + B_ML_E] -= excess
            y[nb + B_FRAZIL] += excess
            y[nb + B_E_OCEAN] += excess
    if y[nb + B_FRAZIL] > 0.0:  # more than the frazil there was melted: the rest warms the water
        excess = y[nb + B_FRAZIL]
        y[nb + B_FRAZIL] = 0.0
        y[nb + B_E_OCEAN] -= excess
        if mixed:
            y[nb + B_ML_E] += excess
    return idx


@njit(cache=True)
def _step_member(y, t0, t1, n, par_in, ft, forc, nsteps_out):
    """Advance one member's state from t0 to t1 in place. Returns a status code.

    0 success; 1 step size underflow (solver failure). nsteps_out[0] counts accepted
    steps, nsteps_out[1] rejected steps, nsteps_out[2] Newton iterations (all stages, rejected
    steps included).
    Open water (h = 0) is stepped by :func:`_open_water_step` until new ice forms; ice that
    melts below H_OUT melts out (:func:`_melt_out`).
    """
    ny = y.size
    ncell = 2 * n
    nb = ncell + 1
    par = par_in.copy()  # the ocean salinity follows the mixed layer, step by step
    mixed = par[P_MLD] > 0.0
    f1 = np.empty(ny)
    f2 = np.empty(ny)
    f3 = np.empty(ny)
    y2 = np.empty(ny)
    y3 = np.empty(ny)
    base = np.empty(ny)
    ytmp = np.empty(ny)
    ftmp = np.empty(ny)
    err = np.empty(ny)
    col_r = np.empty(ncell)
    temp = np.empty(n)
    phi = np.empty(n)
    sbr = np.empty(n)
    dtde = np.empty(n)
    dtdm = np.empty(n)
    kc = np.empty(n)
    lo = np.empty((n, 4))
    di = np.empty((n, 4))
    up = np.empty((n, 4))
    rhs = np.empty((3, ncell))
    work_m = np.empty((n, 4))
    work_g = np.empty((n, 4))
    wflux = np.empty(n + 1)
    qsink = np.empty(n)
    ra = np.empty(n)
    sc = np.empty((9, n + 1))
    temp[:] = np.nan  # no first guess for the enthalpy inversion: restart-safe
    sc[0, :] = np.nan
    fv1 = np.empty(NFORCING)
    fv2 = np.empty(NFORCING)
    fv3 = np.empty(NFORCING)
    t = t0
    dt = y[nb + B_DT] if y[nb + B_DT] > 0.0 else par[P_INITDT]
    maxdt = par[P_MAXDT]
    idx = 0
    proposed = dt
    while t < t1:
        if mixed:
            _tw, s_ml, _tf = mixed_layer_state(y, n, par)
            par[P_SW] = s_ml
        if not (y[2 * n] > 0.0):
            # open water
            dto = OPEN_WATER_STEP if OPEN_WATER_STEP < maxdt else maxdt
            last = t + dto >= t1 - 1e-9 * (1.0 + abs(t1))
            if last:
                dto = t1 - t
            idx = _open_water_step(y, t, dto, n, par, ft, forc, idx, fv1, f1, f2, ytmp)
            nsteps_out[0] += 1
            t = t1 if last else t + dto
            if y[nb + B_FRAZIL] <= -new_ice_heat(par):
                _form_new_ice(y, n, par)
                temp[:] = np.nan
                dt = par[P_INITDT]
                proposed = dt
            continue
        if dt > maxdt:
            dt = maxdt
        last = False
        proposed = dt
        if t + dt >= t1 - 1e-9 * (1.0 + abs(t1)):
            dt = t1 - t
            last = True
        if dt < 1e-4:
            return 1
        # forcing at the three stage times
        idx = _forcing_at(ft, forc, t, idx, par, fv1)
        i2 = _forcing_at(ft, forc, t + _GAMMA * dt, idx, par, fv2)
        _forcing_at(ft, forc, t + dt, i2, par, fv3)
        if mixed:
            # heat from the mixed layer to the ice base, held over the step
            tw, _s, tf = mixed_layer_state(y, n, par)
            fw1 = SEAWATER_DENSITY * par[P_CL] * ML_EXCHANGE_VELOCITY * (tw - tf)
            fw2 = fw1
            fw3 = fw1
        else:
            fw1 = fv1[F_QOCEAN]
            fw2 = fv2[F_QOCEAN]
            fw3 = fv3[F_QOCEAN]
        af = _flooding_rate(y, n, par, fv1, dt)
        # stage 1 (explicit)
        r1 = _hdot_of_state(y, n, par, fw1)
        _ts1, _df1, a_in = _rhs(y, r1, n, par, fv1, fw1, f1, temp, phi, sbr, dtde, dtdm, kc, True, wflux, qsink, ra,
                                -1.0, af, sc)  # surface melt rate of the step's start, kept for its stages
        # stage 2
        for i in range(ny):
            base[i] = y[i] + dt * _D * f1[i]
            y2[i] = y[i] + dt * _GAMMA * f1[i]
        if not (y2[2 * n] > 0.5 * y[2 * n]):
            y2[2 * n] = y[2 * n]
        ok, r2, nit = _newton_stage(y2, base, _D * dt, n, par, fv2, fw2, f2, temp, phi, sbr, dtde,
                               dtdm, kc, lo, di, up, rhs, work_m, work_g, ftmp, col_r, 10,
                               wflux, qsink, ra, sc, a_in, af)
        nsteps_out[2] += nit
        if ok:
            r2 = _hdot_of_state(y2, n, par, fw2)
            _rhs(y2, r2, n, par, fv2, fw2, f2, temp, phi, sbr, dtde, dtdm, kc, True, wflux, qsink, ra, a_in, af, sc)
            for i in range(ny):
                base[i] = y[i] + dt * (_W * f1[i] + _W * f2[i])
                y3[i] = y2[i] + (1.0 - _GAMMA) / _GAMMA * (y2[i] - y[i])
            if not (y3[2 * n] > 0.5 * y[2 * n]):
                y3[2 * n] = y2[2 * n]
            ok, r3, nit = _newton_stage(y3, base, _D * dt, n, par, fv3, fw3, f3, temp, phi, sbr,
                                        dtde, dtdm, kc, lo, di, up, rhs, work_m, work_g, ftmp,
                                        col_r, 10, wflux, qsink, ra, sc, a_in, af)
            nsteps_out[2] += nit
        if not ok:
            dt *= 0.25
            nsteps_out[1] += 1
            continue
        r3 = _hdot_of_state(y3, n, par, fw3)
        _rhs(y3, r3, n, par, fv3, fw3, f3, temp, phi, sbr, dtde, dtdm, kc, True, wflux, qsink, ra, a_in, af, sc)
        for i in range(ny):
            err[i] = dt * (_E1 * f1[i] + _E2 * f2[i] + _E3 * f3[i])
        en = _err_norm(err, y, n, par, 2 * n + 1)
        if not (en == en):
            en = 1e10
        if en > 1.0:
            fac = 0.9 * en ** (-1.0 / 3.0)
            if fac < 0.2:
                fac = 0.2
            dt *= fac
            nsteps_out[1] += 1
            continue
        # accept: explicit flux-form update from the converged stages (conservative)
        for i in range(ny):
            y[i] = y[i] + dt * (_B1 * f1[i] + _B2 * f2[i] + _B3 * f3[i])
        nsteps_out[0] += 1
        t = t1 if last else t + dt
        if y[2 * n] < H_OUT and f3[2 * n] < 0.0:
            _melt_out(y, n, par)
            temp[:] = np.nan
            dt = par[P_INITDT]
            proposed = dt
            continue
        if en < 1e-10:
            fac = GROWTH_MAX
        else:
            fac = 0.9 * en ** (-1.0 / 3.0)
            if fac > GROWTH_MAX:
                fac = GROWTH_MAX
            if fac < 0.2:
                fac = 0.2
        dt *= fac
        if last and dt < proposed:
            dt = proposed  # a step shortened to end on t1 does not shrink the next interval's first step
    # the step size is part of the state, so a run continued from its output (restart) goes on
    # exactly as the run done in one go
    y[nb + B_DT] = dt if y[2 * n] > 0.0 else 0.0
    return 0


@njit(cache=True)
def advance(ys, t0, t1, n, pars, ft, forc, status, counters):
    """Advance every member (rows of ``ys``) from t0 to t1 [s]; each member on its own.

    Parameters
    ----------
    ys : (members, state) float64, modified in place
    pars : (members, NPAR) float64
    ft : (ntimes,) forcing times [s since the model epoch]
    forc : (members, NFORCING, ntimes) forcing values (``F_*`` rows; NaN where absent)
    status : (members,) int64 out; counters : (members, 3) int64 accumulated
    """
    for mbr in range(ys.shape[0]):
        if status[mbr] != 0:
            continue
        status[mbr] = _step_member(ys[mbr], t0, t1, n, pars[mbr], ft, forc[mbr], counters[mbr])


@njit(cache=True, parallel=True)
def advance_parallel(ys, t0, t1, n, pars, ft, forc, status, counters):
    """:func:`advance` with the members spread over threads (numba prange).

    Each member is integrated by the same serial code on its own rows, so its numbers are
    bitwise those of :func:`advance`; only the wall time changes.
    """
    for mbr in prange(ys.shape[0]):
        if status[mbr] == 0:
            status[mbr] = _step_member(ys[mbr], t0, t1, n, pars[mbr], ft, forc[mbr], counters[mbr])


@njit(cache=True)
def diagnose(ys, n, pars, ft, forc, t, temp, phi, sbr, sal, kc, tsurf, hdot, ra, wbase, melt, snow):
    """Layer temperature, liquid fraction, brine and bulk salinity, conductivity, Rayleigh
    number; surface temperature, basal velocity, drained brine flux, unused melt energy flux
    and snow thickness of every member at t."""
    nm = ys.shape[0]
    dtde = np.empty(n)
    dtdm = np.empty(n)
    wflux = np.empty(n + 1)
    qsink = np.empty(n)
    fv = np.empty(NFORCING)
    for mbr in range(nm):
        y = ys[mbr]
        par = pars[mbr].copy()
        if par[P_MLD] > 0.0:
            tw, s_ml, _tf = mixed_layer_state(y, n, par)
            par[P_SW] = s_ml
        else:
            tw = liquidus_temperature_scalar(par[P_SW])
            _tf = tw
        h = y[2 * n]
        _forcing_at(ft, forc[mbr], t, 0, par, fv)
        if not (h > 0.0):  # open water: no profiles
            for k in range(n):
                temp[mbr, k] = np.nan
                phi[mbr, k] = np.nan
                sbr[mbr, k] = np.nan
                sal[mbr, k] = np.nan
                kc[mbr, k] = np.nan
                ra[mbr, k] = np.nan
            to = fv[F_TOCEAN]
            tsurf[mbr] = to if (to == to and par[P_MLD] <= 0.0) else tw
            melt[mbr] = 0.0
            snow[mbr] = 0.0
            hdot[mbr] = 0.0
            wbase[mbr] = 0.0
            continue
        temp[mbr, :] = np.nan  # diagnostics never depend on earlier calls
        _cells(y, n, par, temp[mbr], phi[mbr], sbr[mbr], dtde, dtdm, kc[mbr])
        dz = h / n
        for k in range(n):
            sal[mbr, k] = 1000.0 * y[n + k] / (par[P_RHO] * dz)
        hs = _snow_depth(fv, y, n)
        _f, _d, ts, mx = _surface(temp[mbr, 0], kc[mbr, 0], dz, fv, par, hs)
        tsurf[mbr] = ts
        melt[mbr] = mx  # melt energy at the surface (snow first, then ice)
        snow[mbr] = hs
        if par[P_MLD] > 0.0:
            fwb = SEAWATER_DENSITY * par[P_CL] * ML_EXCHANGE_VELOCITY * (tw - _tf)
        else:
            fwb = fv[F_QOCEAN]
        hdot[mbr] = _hdot_of_state(y, n, par, fwb)
        _drainage(y, n, par, temp[mbr], phi[mbr], sbr[mbr], wflux, qsink, ra[mbr])
        wbase[mbr] = wflux[n]
