"""Block-tridiagonal solve (2x2 blocks) for several right-hand sides, by the block Thomas algorithm."""
from __future__ import annotations

from .._jit import jit


@jit
def block_solve(n, lo, di, up, rhs, nrhs, work_m, work_g):
    """Solve the block-tridiagonal system in place for ``nrhs`` right-hand sides.

    ``lo``, ``di``, ``up`` (n, 4) hold the sub-, main and super-diagonal 2x2 blocks row-major;
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
