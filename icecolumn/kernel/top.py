r"""Upper boundary: conduction from the surface scheme through the snow, surface melt, snow mass.

Face 0 of the column takes the conductive flux ``F_0`` of the surface scheme (prescribed
surface temperature, linear air-to-surface transfer, or the energy balance of
:mod:`icecolumn.surface`) through an optional snow slab of conductivity ``k_s`` and the top of
the ice.  The gradient at the top of the ice is the one-sided second-order closure for cell
averages, exact for a quadratic profile (common practice, no source):

.. math:: \partial_z T|_0 = (-6 T_b + 7 \bar T_1 - \bar T_2)/(2\Delta), \qquad
          F_0 = k_1 \partial_z T = (T_b - T_e)/(\Delta/(3 k_1)), \quad T_e = (7\bar T_1 - \bar T_2)/6,

so the ice side is a resistance ``Delta/(3 k_1)`` from the face to the extrapolated temperature
``T_e``, in series with the snow ``h_s/k_s``.  A surface held at its melting point melts: the melt energy goes to the
snow first (handed smoothly to the ice while the last :data:`~icecolumn.surface.SNOW_COVER_THICKNESS`
of snow melts), then moves the top interface down at ``a = melt energy / (H_water - H_1)`` with
melt water at 0 degC (H = 0) carrying the top layer's salt away.
"""
from __future__ import annotations

from .._jit import jit
from ..surface import PENETRATION_ICE, SNOW_COVER_THICKNESS, albedo_scalar, net_surface_flux_scalar, \
    transfer_coefficient_iterate
from .inputs import atmosphere
from .layout import B, F, P

#: Smallest enthalpy jump at a moving boundary, as a fraction of rho L (keeps the interface
#: velocity finite when the boundary layer is almost liquid; numerical safeguard). [1]
DENOM_MIN = 0.02
#: Thickness at which melting is throttled to zero [m] (numerical safeguard).
H_MIN = 0.005


@jit
def snow_depth(fv, y, n):
    """Snow thickness [m]: the measured depth of the forcing, else the prognostic snow."""
    d = fv[F.SNOWDEPTH]
    if d == d:
        return d
    d = y[2 * n + 1 + B.SNOW]
    return d if d > 0.0 else 0.0


@jit
def top_effective_temperature(t0, t1, tm):
    """Temperature [degC] the second-order top closure conducts to: (7 T_1 - T_2)/6 of the two top
    layers, at most the surface melting point ``tm`` (the extrapolation of a strongly curved
    profile must not put the top of the ice above its melting point)."""
    te = (7.0 * t0 - t1) / 6.0
    return te if te < tm else tm


@jit
def _closure_weights(t0, t1, tm):
    """d T_e / d T_1 and d T_e / d T_2 of :func:`top_effective_temperature` (0 where capped)."""
    if (7.0 * t0 - t1) / 6.0 < tm:
        return 7.0 / 6.0, -1.0 / 6.0
    return 0.0, 0.0


@jit
def surface_flux(t0, k0, dz, fv, par, hs):
    """Downward flux into the top layer, its derivative w.r.t. T0, the surface temperature, the
    melt energy flux the capped surface could not take, and the penetrating shortwave [W m-2].

    The flux includes the shortwave that penetrates the surface (energy balance scheme); the
    rest of it is conduction from the surface to ``t0``, the effective temperature of the
    second-order closure (:func:`top_effective_temperature`), and ``df`` is the derivative w.r.t.
    ``t0``.
    """
    rs = hs / par[P.KSNOW] if hs > 0.0 else 0.0
    rc = dz / (3.0 * k0) + rs  # resistance surface -> effective temperature of the top closure
    tm = par[P.TMELT]
    scheme = int(par[P.SURF])
    ta = fv[F.AIR]
    if scheme == 1:
        tsp = fv[F.TSURF]
        ts = tsp if tsp < tm else tm
        return (ts - t0) / rc, -1.0 / rc, ts, 0.0, 0.0
    if scheme == 0:
        hc = par[P.HTC]
        rt = 1.0 / hc + rc
        f = (ta - t0) / rt
        ts = ta - f / hc
        if ts > tm:
            f_air = hc * (ta - tm)
            f = (tm - t0) / rc
            return f, -1.0 / rc, tm, f_air - f, 0.0
        return f, -1.0 / rt, ts, 0.0, 0.0
    # energy balance: solve F_net(T_s) = (T_s - T0) / rc for T_s
    sw, lw, wind, qa = atmosphere(fv, par)
    sens = fv[F.SENS]
    lat = fv[F.LAT]
    measured = fv[F.ALBEDO]
    i0 = 0.0 if hs >= SNOW_COVER_THICKNESS else PENETRATION_ICE
    ts = t0 if t0 < tm else tm
    z0 = par[P.Z0]
    zw = par[P.ZWIND]
    za = par[P.ZAIR]
    stab = int(par[P.STAB])
    inv_l = 0.0
    alb = measured if measured == measured else surface_albedo(hs, ts, tm, par)
    ch = 0.0
    dch = 0.0
    for _ in range(30):
        ch, dch, inv_l = transfer_coefficient_iterate(ts, ta, wind, z0, zw, za, stab, inv_l)
        fn, dfn = net_surface_flux_scalar(ts, ta, sw, lw, wind, qa, alb, i0, ch, sens, lat, dch)
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
        alb = measured if measured == measured else surface_albedo(hs, tm, tm, par)
        pen = i0 * (1.0 - alb) * sw
        ch, dch, inv_l = transfer_coefficient_iterate(tm, ta, wind, z0, zw, za, stab, inv_l)
        fn, _ = net_surface_flux_scalar(tm, ta, sw, lw, wind, qa, alb, i0, ch, sens, lat, dch)
        f = (tm - t0) / rc
        return f + pen, -1.0 / rc, tm, fn - f, pen
    ch, dch, inv_l = transfer_coefficient_iterate(ts, ta, wind, z0, zw, za, stab, inv_l)
    _, dfn = net_surface_flux_scalar(ts, ta, sw, lw, wind, qa, alb, i0, ch, sens, lat, dch)
    dts = (-1.0 / rc) / (dfn - 1.0 / rc)  # d T_s / d T0 (implicit function)
    return (ts - t0) / rc + pen, (dts - 1.0) / rc, ts, 0.0, pen


@jit
def surface_albedo(hs, ts, tm, par):
    """Albedo [1] of the surface with snow ``hs`` [m] at ``ts`` [degC] (melting point ``tm``), from
    the four albedos of the parameter row."""
    return albedo_scalar(hs, ts, tm, par[P.ALB_SNOW], par[P.ALB_SNOW_MELT], par[P.ALB_ICE], par[P.ALB_ICE_MELT],
                         par[P.POND], par[P.ALB_POND])


@jit
def surface_melt_rate(y, n, par, melt_energy):
    """Surface melt velocity [m s-1] from the melt energy flux [W m-2] of a surface held at its
    melting point: the top interface balance a (H_water - H_1) = melt energy, with melt water at
    0 degC (H_water = 0).  Throttled to zero at the minimum thickness."""
    if melt_energy <= 0.0:
        return 0.0
    h = y[2 * n]
    dz = h / n
    jump = -y[0] / dz
    jmin = DENOM_MIN * par[P.RHO] * par[P.L]
    if jump < jmin:
        jump = jmin
    a = melt_energy / jump
    x = (h - H_MIN) / H_MIN
    if x < 0.0:
        x = 0.0
    if x > 1.0:
        x = 1.0
    return a * x


@jit
def top_state(y, n, par, fv, temp0, temp1, k0, a_in):
    """Fluxes of the upper boundary.

    Returns ``(f0, df0, ts, melt, fsnow, a, used, pen)``: the flux into the top layer [W m-2]
    and its derivative w.r.t. the closure's effective temperature, the surface temperature [degC], the melt
    energy flux [W m-2], the fraction of it that melts snow, the surface melt rate of the ice
    [m s-1] (``a_in`` if >= 0, the rate held over a step), the melt energy used on the ice and
    the penetrating shortwave included in ``f0`` [W m-2].
    """
    h = y[2 * n]
    dz = h / n
    hs = snow_depth(fv, y, n)
    te = top_effective_temperature(temp0, temp1, par[P.TMELT])
    f0, df0, ts, melt, pen = surface_flux(te, k0, dz, fv, par, hs)
    # melt energy goes to the snow first (smoothly handed to the ice as the last cm melts)
    fsnow = hs / SNOW_COVER_THICKNESS if hs < SNOW_COVER_THICKNESS else 1.0
    a = surface_melt_rate(y, n, par, (1.0 - fsnow) * melt) if a_in < 0.0 else a_in
    used = a * (-y[0] / dz)  # melt energy used: melts ice into water at 0 degC (H = 0)
    return f0, df0, ts, melt, fsnow, a, used, pen


@jit
def add_top_fluxes(f, y, n, f0, used, a):
    """Face 0: conduction and melt energy in, melt water (H = 0) and its salt out. Returns the
    salt flux of the melt water [kg m-2 s-1]."""
    dz = y[2 * n] / n
    f[0] += f0 + used
    s_top = a * y[n] / dz
    f[n] -= s_top
    return s_top


@jit
def add_top_budgets(f, y, n, par, fv, f0, used, s_top, a, af, fsnow, melt):
    """Budget slots of the upper boundary and the prognostic snow (snowfall minus snow melt and
    flooding, ``af`` [m s-1]). Returns the snow melt water flux [kg m-2 s-1]."""
    nb = 2 * n + 1
    f[nb + B.E_SURF] = f0 + used
    f[nb + B.S_SURFMELT] = s_top
    f[nb + B.H_SURFMELT] = a
    snowmelt = 0.0
    if fv[F.SNOWDEPTH] != fv[F.SNOWDEPTH]:  # prognostic snow: snowfall minus snow melt and flooding
        sf = fv[F.SNOWFALL]
        sf = sf if sf == sf else 0.0
        snowmelt = fsnow * melt / par[P.L]
        f[nb + B.SNOW] = (sf - snowmelt) / par[P.RHOSNOW] - af
        f[nb + B.SNOWFALL] = sf
    return snowmelt


@jit
def top_flux_blocks(di, up, df0, dtde, dtdm, temp, tm):
    """Jacobian of the surface conduction w.r.t. the contents of the two top layers (through the
    effective temperature (7 T_1 - T_2)/6)."""
    w0, w1 = _closure_weights(temp[0], temp[1], tm)
    c0 = df0 * w0
    c1 = df0 * w1
    di[0, 0] += c0 * dtde[0]
    di[0, 1] += c0 * dtdm[0]
    up[0, 0] += c1 * dtde[1]
    up[0, 1] += c1 * dtdm[1]


@jit
def top_melt_blocks(di, amelt, dz):
    """Jacobian of surface melt at its held rate: the melt energy used, ``a (-e_0/dz)``, and the
    salt leaving with the melt water, ``a m_0/dz``."""
    di[0, 0] -= amelt / dz
    di[0, 3] -= amelt / dz


@jit
def add_top_dh_column(col, y, n, g0, kc, df0, dtdh, amelt, temp, tm):
    """d f / d h of the upper boundary at fixed contents (conduction ``g0`` [W m-2] through the
    top half layer, melt energy and melt-water salt through the layer thickness)."""
    h = y[2 * n]
    ih = 1.0 / h
    idz = n * ih
    used = amelt * (-y[0] * idz)
    # conduction g0 through rc = dz/(3 k0) + snow to T_e: d g0 / d rc = g0 d g0 / d T_e
    w0, w1 = _closure_weights(temp[0], temp[1], tm)
    col[0] += df0 * (w0 * dtdh[0] + w1 * dtdh[1]) + g0 * df0 / (3.0 * kc[0] * n) - used * ih
    col[n] += amelt * y[n] * idz * ih
