"""Peer (b): method of lines on ``scipy.integrate.solve_ivp`` (BDF with ``jac_sparsity``; LSODA
as an option), for P1 and P2.

P1: front fixing (Landau transform)
-----------------------------------
``xi = z / s(t)`` maps the ice ``0 <= z <= s`` onto ``[0, 1]``; nodes ``xi_i = i / M``
(``i = 0..M``, ``M`` intervals) with ``T_0 = T_s`` and ``T_M = 0`` (the melting point) fixed.
The unknowns are ``T_1 .. T_{M-1}`` and ``s``:

    dT_i/dt = kappa / s^2 T_xixi + xi_i (ds/dt / s) T_xi,
    rho L ds/dt = (k / s) T_xi(1)        (Stefan condition, no ocean heat flux),

with second-order central differences inside and the second-order one-sided difference
``(3 T_M - 4 T_{M-1} + T_{M-2}) / (2 dxi)`` at the front (Crank 1984, Free and Moving Boundary
Problems, ch. 6, for the transform; the discretisation is the textbook one).  The Jacobian
pattern given to BDF: tridiagonal in T, plus the columns of ``s``, ``T_{M-1}`` and ``T_{M-2}``
(they enter every row through ds/dt), plus the row of ``s``.  LSODA has no sparsity option in
scipy and uses its dense finite-difference Jacobian (at most ~100 unknowns here).  Starts from the
exact erf profile at 1 day at the nodes.

P2: fixed-grid enthalpy (MOL form)
----------------------------------
The front-fixing transform does not suit P2: with a linear liquidus and no salt transport the
liquid fraction tends to 1 only asymptotically with depth, so there is no sharp front with a
Stefan condition to fix.  P2 therefore uses the same fixed-grid finite-volume enthalpy
formulation as the explicit peer (``explicit_enthalpy.py``: ``N`` cells over ``Mushy.depth``,
closed-form ``(H, S) -> (T, phi)`` on the linear liquidus, harmonic-mean face conductivities,
Dirichlet surface half a cell above the top centre, insulated bottom) integrated in time by
``solve_ivp``.  The bulk salinity of each fixed cell is constant (no drainage, no diffusion, no
segregation), so the salt equations are ``dS/dt = 0`` and are not carried.  Jacobian pattern:
tridiagonal (``jac_sparsity`` for BDF; ``lband = uband = 1`` for LSODA).  The right-hand side is
continuous but has a kink where a cell leaves the liquid; BDF copes with smaller steps there.

Tolerances: ``rtol`` as given, ``atol = rtol * (1 K for temperatures, 0.01 m for s)`` (P1) and
``atol = rtol * rho c_s * 1 K`` for the enthalpies (P2).  Outputs through ``t_eval`` (the
integrator's own interpolant).  Constants: ``problems.materials()`` (see ``problems.py``).
"""
from __future__ import annotations

import numpy as np
from scipy.integrate import solve_ivp
from scipy.sparse import lil_matrix

try:
    from explicit_enthalpy import p2_initial_enthalpy
    from problems import DAY, Mushy, Neumann, invert_linear_liquidus
except ImportError:  # pragma: no cover - imported as a package
    from .explicit_enthalpy import p2_initial_enthalpy
    from .problems import DAY, Mushy, Neumann, invert_linear_liquidus

METHODS = ("BDF", "LSODA")


def p1_sparsity(m: int):
    """Jacobian pattern of the front-fixing system with ``m`` intervals (``m - 1`` temperatures + s)."""
    nt = m - 1
    pat = lil_matrix((nt + 1, nt + 1), dtype=np.int8)
    for i in range(nt):
        for j in (i - 1, i, i + 1):
            if 0 <= j < nt:
                pat[i, j] = 1
    pat[:, nt] = 1  # s enters every row
    for j in (nt - 1, nt - 2):  # ds/dt enters every row through the advection term
        if j >= 0:
            pat[:, j] = 1
    return pat.tocsr()


def solve_p1(m: int, rtol: float = 1e-6, method: str = "BDF", prob: Neumann | None = None) -> dict:
    """Run P1 with ``m`` intervals; return eval times [s], thickness [m] and solver counters."""
    if m < 2:
        raise ValueError("need at least 2 intervals")
    prob = prob or Neumann()
    mat = prob.mat
    kappa = prob.kappa
    stefan_coef = mat.k_s / (mat.rho * mat.latent)
    ts = prob.surface_temperature
    dxi = 1.0 / m
    xi = np.arange(1, m) * dxi  # interior nodes
    nt = m - 1
    full = np.empty(m + 1)  # node temperatures including the two fixed ends
    full[0] = ts
    full[m] = 0.0
    inv_dxi2 = 1.0 / (dxi * dxi)
    inv_2dxi = 0.5 / dxi
    xi_c = xi * inv_2dxi

    def rhs(t, y):
        s = y[nt]
        full[1:m] = y[:nt]
        sdot = stefan_coef / s * (3.0 * full[m] - 4.0 * full[m - 1] + full[m - 2]) * inv_2dxi
        out = np.empty(nt + 1)
        out[:nt] = (kappa / (s * s) * inv_dxi2) * (full[2:] - 2.0 * full[1:m] + full[:m - 1]) \
            + (sdot / s) * xi_c * (full[2:] - full[:m - 1])
        out[nt] = sdot
        return out

    h0 = float(prob.thickness(prob.t_start))
    y0 = np.empty(nt + 1)
    y0[:nt] = prob.temperature(xi * h0, prob.t_start)
    y0[nt] = h0
    atol = rtol * np.r_[np.ones(nt), 0.01]
    kw = {"jac_sparsity": p1_sparsity(m)} if method == "BDF" else {}
    sol = solve_ivp(rhs, (prob.t_start, prob.t_end), y0, method=method, t_eval=prob.eval_times,
                    rtol=rtol, atol=atol, **kw)
    if not sol.success:
        raise RuntimeError(f"solve_ivp failed: {sol.message}")
    return {"t": sol.t, "h": sol.y[nt], "nfev": int(sol.nfev), "njev": int(sol.njev)}


def p2_sparsity(n: int):
    pat = lil_matrix((n, n), dtype=np.int8)
    for i in range(n):
        for j in (i - 1, i, i + 1):
            if 0 <= j < n:
                pat[i, j] = 1
    return pat.tocsr()


def solve_p2(n: int, rtol: float = 1e-6, method: str = "BDF", prob: Mushy | None = None) -> dict:
    """Run P2 on ``n`` fixed cells; return eval times [s] and solid-equivalent thickness [m]."""
    prob = prob or Mushy()
    mat = prob.mat
    dz = prob.depth / n
    e0, s = p2_initial_enthalpy(prob, n)
    ts = prob.surface_temperature
    dk = mat.k_l - mat.k_s
    gamma = prob.gamma
    inv_dz2 = 1.0 / (dz * dz)

    def rhs(t, e):
        temp, phi = invert_linear_liquidus(e, s, mat, gamma)
        kc = mat.k_s + dk * phi
        flux = np.zeros(n + 1)
        flux[0] = 2.0 * kc[0] * (ts - temp[0])
        flux[1:n] = 2.0 * kc[:-1] * kc[1:] / (kc[:-1] + kc[1:]) * (temp[:-1] - temp[1:])
        return (flux[:-1] - flux[1:]) * inv_dz2

    atol = rtol * mat.rho * mat.c_s * 1.0
    kw = {"jac_sparsity": p2_sparsity(n)} if method == "BDF" else {"lband": 1, "uband": 1}
    sol = solve_ivp(rhs, (0.0, prob.days * DAY), e0, method=method, t_eval=prob.eval_times,
                    rtol=rtol, atol=atol, **kw)
    if not sol.success:
        raise RuntimeError(f"solve_ivp failed: {sol.message}")
    hs = np.empty(sol.t.size)
    for i in range(sol.t.size):
        _, phi = invert_linear_liquidus(sol.y[:, i], s, mat, gamma)
        hs[i] = (1.0 - phi).sum() * dz
    _, phi_end = invert_linear_liquidus(sol.y[:, -1], s, mat, gamma)
    return {"t": sol.t, "h": hs, "nfev": int(sol.nfev), "njev": int(sol.njev),
            "bottom_liquid_fraction": float(phi_end[-1])}
