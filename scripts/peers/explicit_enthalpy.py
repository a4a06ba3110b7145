"""Peer (a): explicit fixed-grid enthalpy method in numpy, for P1 and P2.

What a user would write instead of icecolumn: ``N`` fixed cells of width ``dz = D / N`` from the
surface (depth 0) down to a depth ``D`` below the deepest ice; the prognostic variable is the
enthalpy per volume of each cell (reference liquid at 0 degC, the convention of icecolumn and of
``problems.py``), the temperature follows from it in closed form, and forward Euler advances

    dE_i/dt = (F_{i-1/2} - F_{i+1/2}) / dz,   F = k (T_upper - T_lower) / distance (downward).

The surface face uses the prescribed surface temperature half a cell above the top cell centre;
the bottom face is insulated (the water there stays at its freezing point during the run; P2 checks
this).  Interior faces use the harmonic mean of the two cell conductivities (P2; P1 has a constant
conductivity).  Thickness = solid-equivalent thickness ``sum((1 - phi_i) dz)`` (the cells' solid
fraction): for fresh ice with one partly frozen cell this is the front position of the enthalpy
method.  The time step is the explicit stability limit with a safety factor,

    dt = safety * rho c_min dz^2 / (2 k_max)

(the Gershgorin bound of the forward-Euler operator, the surface half-cell included: its row sum is
4 k / (rho c dz^2) like an interior row), shortened so that every day ends on a step.  Vectorised
over cells (no Python loop over cells); the Python loop runs over time steps only.

Constants: ``problems.materials()`` (icecolumn's default configuration: rho = 917 kg m-3,
c_s = 2100 and c_l = 3990 J kg-1 K-1, L = 334000 J kg-1, k_s = 2.03 W m-1 K-1; P2 also
k_l = 0.523 W m-1 K-1 and Gamma = 0.054 K per g/kg).
"""
from __future__ import annotations

import math

import numpy as np
from scipy.special import roots_legendre

try:  # imported as scripts/peers/*.py with that directory on sys.path
    from problems import DAY, Mushy, Neumann, invert_linear_liquidus, mush_enthalpy
except ImportError:  # pragma: no cover - imported as a package
    from .problems import DAY, Mushy, Neumann, invert_linear_liquidus, mush_enthalpy

#: Depth of the P1 domain [m]; the exact thickness at 61 days is 0.827 m.
P1_DEPTH = 0.9


def _steps_per_day(dt_max: float) -> int:
    return max(1, math.ceil(DAY / dt_max - 1e-9))


def p1_initial_enthalpy(prob: Neumann, n: int, depth: float = P1_DEPTH) -> np.ndarray:
    """Cell averages [J m-3] of the exact enthalpy at ``prob.t_start`` (erf profile, front cell
    partly frozen)."""
    m = prob.mat
    dz = depth / n
    z0 = np.arange(n) * dz
    z1 = z0 + dz
    h0 = float(prob.thickness(prob.t_start))
    top = np.minimum(z0, h0)
    bot = np.minimum(z1, h0)
    frac = (bot - top) / dz  # ice fraction of each cell
    tmean = prob.cell_mean_temperature(top, bot, prob.t_start)
    return np.where(frac > 0, frac * m.rho * (m.c_s * tmean - m.latent), 0.0)


def solve_p1(n: int, safety: float = 0.9, prob: Neumann | None = None, depth: float = P1_DEPTH) -> dict:
    """Run P1 on ``n`` cells; return ``{"t": eval times [s], "h": thickness [m], "steps": int}``."""
    prob = prob or Neumann()
    m = prob.mat
    rho, cs, cl, L, k = m.rho, m.c_s, m.c_l, m.latent, m.k_s
    dz = depth / n
    nsub = _steps_per_day(safety * rho * cs * dz * dz / (2.0 * k))
    dt = DAY / nsub
    e = p1_initial_enthalpy(prob, n, depth)
    ts = prob.surface_temperature
    temp = np.empty(n)
    work = np.empty(n)
    flux = np.zeros(n + 1)  # downward face fluxes; flux[n] = 0 (insulated bottom)
    c_top = 2.0 * k / dz
    c_int = k / dz
    a = dt / dz
    inv_rcs = 1.0 / (rho * cs)
    inv_rcl = 1.0 / (rho * cl)
    rl = rho * L
    n_days = int(round((prob.t_end - prob.t_start) / DAY))
    out_t, out_h = [], []
    want = set(int(d) for d in prob.eval_days)
    day0 = int(round(prob.t_start / DAY))
    for day in range(1, n_days + 1):
        for _ in range(nsub):
            # temperature from enthalpy: solid below -rho L, 0 degC while melting, liquid above 0
            np.add(e, rl, out=temp)
            np.minimum(temp, 0.0, out=temp)
            temp *= inv_rcs
            np.maximum(e, 0.0, out=work)
            work *= inv_rcl
            temp += work
            flux[0] = c_top * (ts - temp[0])
            np.subtract(temp[:-1], temp[1:], out=flux[1:n])
            flux[1:n] *= c_int
            np.subtract(flux[:-1], flux[1:], out=work)
            work *= a
            e += work
        if day0 + day in want:
            solid = np.clip(-e / rl, 0.0, 1.0)
            out_t.append((day0 + day) * DAY)
            out_h.append(float(solid.sum() * dz))
    return {"t": np.array(out_t), "h": np.array(out_h), "steps": n_days * nsub, "dt": dt}


def p2_initial_enthalpy(prob: Mushy, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Cell-averaged initial enthalpy [J m-3] (8-point Gauss-Legendre per cell, split at the
    initial ice base) and the bulk salinity of each cell [g/kg]."""
    m = prob.mat
    dz = prob.depth / n
    x, w = roots_legendre(8)
    z0 = np.arange(n) * dz
    z1 = z0 + dz
    e = np.zeros(n)
    for a, b in ((z0, np.minimum(z1, prob.h0)), (np.maximum(z0, prob.h0), z1)):  # above / below h0
        width = np.maximum(b - a, 0.0)
        zq = 0.5 * (a + b)[:, None] + 0.5 * width[:, None] * x[None, :]
        hq, _ = mush_enthalpy(prob.initial_temperature(zq), prob.salinity, m, prob.gamma)
        e += 0.5 * width * (hq * w[None, :]).sum(axis=1)
    e /= dz
    return e, np.full(n, prob.salinity)


def solve_p2(n: int, safety: float = 0.9, prob: Mushy | None = None) -> dict:
    """Run P2 on ``n`` cells over ``prob.depth``; return eval times [s], solid-equivalent
    thickness [m], the number of steps and the liquid fraction of the deepest cell at the end."""
    prob = prob or Mushy()
    m = prob.mat
    rho = m.rho
    dz = prob.depth / n
    nsub = _steps_per_day(safety * rho * min(m.c_s, m.c_l) * dz * dz / (2.0 * max(m.k_s, m.k_l)))
    dt = DAY / nsub
    e, s = p2_initial_enthalpy(prob, n)
    ts = prob.surface_temperature
    flux = np.zeros(n + 1)
    a = dt / dz
    dk = m.k_l - m.k_s
    want = set(int(d) for d in prob.eval_days)
    out_t, out_h = [], []
    n_days = int(round(prob.days))
    phi = None
    for day in range(1, n_days + 1):
        for _ in range(nsub):
            temp, phi = invert_linear_liquidus(e, s, m, prob.gamma)
            kc = m.k_s + dk * phi
            flux[0] = 2.0 * kc[0] * (ts - temp[0]) / dz
            kf = 2.0 * kc[:-1] * kc[1:] / (kc[:-1] + kc[1:])  # harmonic mean at interior faces
            flux[1:n] = kf * (temp[:-1] - temp[1:]) / dz
            e += a * (flux[:-1] - flux[1:])
        if day in want:
            _, phi = invert_linear_liquidus(e, s, m, prob.gamma)
            out_t.append(day * DAY)
            out_h.append(float((1.0 - phi).sum() * dz))
    _, phi = invert_linear_liquidus(e, s, m, prob.gamma)
    return {"t": np.array(out_t), "h": np.array(out_h), "steps": n_days * nsub, "dt": dt,
            "bottom_liquid_fraction": float(phi[-1])}
