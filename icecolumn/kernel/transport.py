r"""Transport inside the column: conduction between layers and the motion of the grid.

``N`` layers of equal thickness :math:`\Delta = h/N`; interface ``j`` (``j = 0..N``, 0 at the
surface) moves down relative to the ice at :math:`w_j = (1 - j/N) a + (j/N) \dot h` (``a`` the
net downward velocity of the top: surface melt minus snow-ice formation, :math:`\dot h` the basal
velocity).  Downward face fluxes of enthalpy and salt through the interior faces:

.. math:: F^e_j = k_{j-1/2} (T_{j-1} - T_j)/\Delta - w_j \hat e_j/\Delta, \qquad
          F^m_j = - w_j \hat m_j/\Delta, \qquad
          \hat q_j = \beta_j q_{up} + (1 - \beta_j) q_{down}

with the harmonic mean conductivity.  The face contents ``q^`` are a limited blend of the upwind
and the downwind layer (a MUSCL-type reconstruction of the upwind layer's content towards the
face, van Albada's smooth limiter: van Albada, van Leer & Roberts 1982, Astron. Astrophys. 108,
76; from memory): ``beta = 1 - psi(rho)/2``, ``psi(rho) = (rho^2 + rho)/(rho^2 + 1)`` for ``rho > 0``
and 0 otherwise, with ``rho`` the ratio of the salt-content differences upwind of the face and
across it.  It is central (second order) where the salinity profile is smooth and upwind at its
extrema and steps, where central advection of salt (which has no diffusion of its own) would
oscillate.  Enthalpy and salt use the same weights, so that what crosses a face is a mixture of
real layer states (a layer of ice at its freezing point stays there).  Each layer's tendency is
the difference of its two face fluxes (:func:`divergence`), so the column content changes only
by the boundary fluxes.  The weights are held in the Jacobian (they enter it as coefficients).
"""
from __future__ import annotations

from .._jit import jit

#: Salt-content differences below this fraction of the largest salt content are taken as a
#: smooth (e.g. fresh) profile: central weights (numerical safeguard). [1]
SMOOTH_SALT = 1e-12


@jit
def face_velocity(a, r, j, n):
    """Downward velocity of interface j relative to the ice [m s-1]: (1 - j/n) a + (j/n) r.
    Every user (fluxes and Jacobian) takes the upwind side from this one expression."""
    return a + (r - a) * (j * (1.0 / n))


@jit
def upwind_weights(y, r, anet, n, beta):
    """Weight ``beta[j]`` of the upwind layer in the face contents of faces 1..n-1 (the
    downwind layer has ``1 - beta``), from the salt profile; the ghost layers are the top layer
    itself above the surface and sea water (ocean salinity at the base, ``mw`` of content) below."""
    mmax = 0.0
    for k in range(n):
        if y[n + k] > mmax:
            mmax = y[n + k]
    tiny = SMOOTH_SALT * mmax + 1e-300
    for j in range(1, n):
        w = face_velocity(anet, r, j, n)
        if w > 0.0:  # material crosses upward: upwind is layer j, its own upwind layer j + 1
            mu = y[n + j]
            md = y[n + j - 1]
            muu = y[n + j + 1] if j + 1 < n else mu
        else:
            mu = y[n + j - 1]
            md = y[n + j]
            muu = y[n + j - 2] if j >= 2 else mu
        across = md - mu
        behind = mu - muu
        if abs(across) <= tiny and abs(behind) <= tiny:
            beta[j] = 0.5
            continue
        if across * behind <= 0.0:
            beta[j] = 1.0
            continue
        # psi(rho) = (rho^2 + rho)/(rho^2 + 1) with rho = behind/across, written without the ratio
        beta[j] = 1.0 - 0.5 * behind * (behind + across) / (behind * behind + across * across)


@jit
def interior_face_fluxes(y, r, anet, n, kc, temp, beta, fe, fm):
    """Downward conduction and advection fluxes through the interior faces 1..n-1 into ``fe``
    (enthalpy [W m-2]) and ``fm`` (salt [kg m-2 s-1]), with the upwind weights ``beta``."""
    idz = n / y[2 * n]
    for j in range(1, n):
        k0 = kc[j - 1]
        k1 = kc[j]
        w = face_velocity(anet, r, j, n) * idz
        b = beta[j]
        wa = w * (1.0 - b) if w > 0.0 else w * b  # weight of layer j - 1 (above the face)
        wb = w - wa  # weight of layer j (below)
        fe[j] = 2.0 * k0 * k1 / (k0 + k1) * (temp[j - 1] - temp[j]) * idz - wa * y[j - 1] - wb * y[j]
        fm[j] = -wa * y[n + j - 1] - wb * y[n + j]


@jit
def divergence(fe, fm, n, out, accumulate):
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


@jit
def transport_blocks(y, r, a, n, dtde, dtdm, kc, beta, lo, di, up):
    """Jacobian blocks of conduction and grid advection (2x2 per layer: [e, m]); ``a`` is the
    net downward velocity of the top.  The conductivity's own dependence on the state and the
    upwind weights are held (a quasi-Newton method)."""
    h = y[2 * n]
    idz = n / h
    for j in range(1, n):
        kf = 2.0 * kc[j - 1] * kc[j] / (kc[j - 1] + kc[j])
        g = kf * idz
        # F_j = g (T_{j-1} - T_j); f_e[j-1] -= F_j ; f_e[j] += F_j
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
        # advection through face j, -(wa q_{j-1} + wb q_j): out of j-1, into j
        w = face_velocity(a, r, j, n) * idz
        wa = w * (1.0 - beta[j]) if w > 0.0 else w * beta[j]
        wb = w - wa
        di[j - 1, 0] += wa
        di[j - 1, 3] += wa
        up[j - 1, 0] += wb
        up[j - 1, 3] += wb
        lo[j, 0] -= wa
        lo[j, 3] -= wa
        di[j, 0] -= wb
        di[j, 3] -= wb


@jit
def transport_dh_faces(y, r, a, n, temp, dtdh, kc, beta, ge, gm):
    """d/dh of the interior face fluxes at fixed contents, velocities and weights (conduction
    through h/n, advection with w/dz scaling with 1/h) into ``ge``, ``gm``."""
    h = y[2 * n]
    ih = 1.0 / h
    idz = n * ih
    for j in range(1, n):
        k0 = kc[j - 1]
        k1 = kc[j]
        kf = 2.0 * k0 * k1 / (k0 + k1)
        fc = kf * (temp[j - 1] - temp[j]) * idz
        w = face_velocity(a, r, j, n) * idz
        wa = w * (1.0 - beta[j]) if w > 0.0 else w * beta[j]
        wb = w - wa
        ge[j] = -fc * ih + kf * idz * (dtdh[j - 1] - dtdh[j]) + (wa * y[j - 1] + wb * y[j]) * ih
        gm[j] = (wa * y[n + j - 1] + wb * y[n + j]) * ih


@jit
def transport_dr_faces(y, r, a, n, beta, ge, gm):
    """d/dr (basal velocity) of the interior face fluxes at fixed weights (the fluxes are
    piecewise linear in r)."""
    idz = n / y[2 * n]
    for j in range(1, n):
        c = (j * (1.0 / n)) * idz  # d w / d r, times 1/dz
        ca = c * (1.0 - beta[j]) if face_velocity(a, r, j, n) > 0.0 else c * beta[j]
        cb = c - ca
        ge[j] = -ca * y[j - 1] - cb * y[j]
        gm[j] = -ca * y[n + j - 1] - cb * y[n + j]
