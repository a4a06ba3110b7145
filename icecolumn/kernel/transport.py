r"""Transport inside the column: conduction between layers and the motion of the grid.

``N`` layers of equal thickness :math:`\Delta = h/N`; interface ``j`` (``j = 0..N``, 0 at the
surface) moves down relative to the ice at :math:`w_j = (1 - j/N) a + (j/N) \dot h` (``a`` the
net downward velocity of the top: surface melt minus snow-ice formation, :math:`\dot h` the basal
velocity).  Downward face fluxes of enthalpy and salt through the interior faces:

.. math:: F^e_j = k_{j-1/2} (T_{j-1} - T_j)/\Delta - w_j e_{up}/\Delta, \qquad
          F^m_j = - w_j m_{up}/\Delta

with the harmonic mean conductivity and the upwind layer ``up`` (``j`` if ``w_j > 0`` else
``j - 1``).  Each layer's tendency is the difference of its two face fluxes
(:func:`divergence`), so the column content changes only by the boundary fluxes.
"""
from __future__ import annotations

from .._jit import jit


@jit
def face_velocity(a, r, j, n):
    """Downward velocity of interface j relative to the ice [m s-1]: (1 - j/n) a + (j/n) r.
    Every user (fluxes and Jacobian) takes the upwind side from this one expression."""
    return a + (r - a) * (j * (1.0 / n))


@jit
def interior_face_fluxes(y, r, anet, n, kc, temp, fe, fm):
    """Downward conduction and advection fluxes through the interior faces 1..n-1 into ``fe``
    (enthalpy [W m-2]) and ``fm`` (salt [kg m-2 s-1])."""
    idz = n / y[2 * n]
    for j in range(1, n):
        k0 = kc[j - 1]
        k1 = kc[j]
        w = face_velocity(anet, r, j, n) * idz
        up = j if w > 0.0 else j - 1
        fe[j] = 2.0 * k0 * k1 / (k0 + k1) * (temp[j - 1] - temp[j]) * idz - w * y[up]
        fm[j] = -w * y[n + up]


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
def transport_blocks(y, r, a, n, dtde, dtdm, kc, lo, di, up):
    """Jacobian blocks of conduction and grid advection (2x2 per layer: [e, m]); ``a`` is the
    net downward velocity of the top.  The conductivity's own dependence on the state is left
    out (a quasi-Newton method)."""
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
        # advection: flux into j-1 from upwind layer
        w = face_velocity(a, r, j, n) * idz
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


@jit
def transport_dh_faces(y, r, a, n, temp, dtdh, kc, ge, gm):
    """d/dh of the interior face fluxes at fixed contents and velocities (conduction through
    h/n, advection -w q_up with w and q_up both scaling with 1/h) into ``ge``, ``gm``."""
    h = y[2 * n]
    ih = 1.0 / h
    idz = n * ih
    for j in range(1, n):
        k0 = kc[j - 1]
        k1 = kc[j]
        kf = 2.0 * k0 * k1 / (k0 + k1)
        fc = kf * (temp[j - 1] - temp[j]) * idz
        w = face_velocity(a, r, j, n) * idz
        up = j if w > 0.0 else j - 1
        ge[j] = -fc * ih + kf * idz * (dtdh[j - 1] - dtdh[j]) + w * y[up] * ih
        gm[j] = w * y[n + up] * ih


@jit
def transport_dr_faces(y, r, a, n, ge, gm):
    """d/dr (basal velocity) of the interior face fluxes (the fluxes are piecewise linear in r)."""
    idz = n / y[2 * n]
    for j in range(1, n):
        c = (j * (1.0 / n)) * idz  # d w / d r, times 1/dz
        up = j if face_velocity(a, r, j, n) * idz > 0.0 else j - 1
        ge[j] = -c * y[up]
        gm[j] = -c * y[n + up]
