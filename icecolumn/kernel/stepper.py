r"""TR-BDF2 time stepping of one member, with per-member step control.

TR-BDF2 (Bank et al. 1985; Hosea & Shampine 1996, Appl. Numer. Math. 20, 21-37) as a stiffly
accurate, L-stable ESDIRK method with an embedded first-order error estimate.  Each member has
its own step and error norm, so its result never depends on the batch it is in.  The stepper
uses three things of the problem: the stage rates (:func:`.tendency.stage_rates`), the implicit
stage solve (:func:`.newton.stage_solve`) and the error norm (:func:`.tendency.error_norm`).
Each accepted step is the explicit flux-form combination of the converged stages, which keeps
the linear invariants (energy, salt, mass budgets) exact whatever the Newton tolerance.

Around a step the cover's events act (:mod:`.openwater`): open water is stepped as a 0-d budget
until new ice forms; ice that melts below ``H_OUT`` melts out.  Quantities held over a step: the
surface melt rate and the snow-ice formation rate (taken at the step's start), the mixed layer's
salinity (seen by the ice) and its heat flux into the ice.  The proposed step size is kept in
the state (slot ``DT``).

Records.  By default (``[solver] output_times = interpolated``) steps run across output times
and a record inside a step is the cubic Hermite interpolant of the step's end states and rates
(Hosea & Shampine 1996 give TR-BDF2 this dense output); it is linear in the states and rates, so
every linear budget (energy, salt, mass and their cumulative terms) closes at a record exactly as
it does at a step's end, and its error, O(dt^4), is below the step's own.  Only the run's end
ends a step.  With ``step_ends`` every output time ends a step and the first guesses of the
enthalpy inversion are reset there, so a record is the integrator's whole memory and a restart
from any output time is bitwise the run done in one go.
"""
from __future__ import annotations

import numpy as np

from .._jit import jit
from .inputs import forcing_at, hold_rates_over_step
from .layout import B, F, P, STATUS_OK, STATUS_UNDERFLOW
from .mixedlayer import heat_to_ice, mixed_layer_state
from .newton import stage_solve
from .openwater import H_OUT, OPEN_WATER_STEP, form_new_ice, melt_out, new_ice_heat, open_water_step
from .snowice import flooding_rate
from .record import record_row
from .tendency import error_norm, stage_rates

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

#: Largest factor by which an accepted step may grow the next one.
GROWTH_MAX = 2.0
#: Newton iterations allowed per stage.
NEWTON_MAXIT = 10
#: Smallest step [s]; below it the member fails (STATUS_UNDERFLOW).
DT_MIN = 1e-4


@jit
def _hermite(y0, f0, y1, f1, dt, theta, out):
    """Cubic Hermite interpolant at ``theta`` in [0, 1] of a step of length ``dt`` from state
    ``y0`` (rates ``f0``) to ``y1`` (rates ``f1``), into ``out``."""
    t2 = theta * theta
    t3 = t2 * theta
    h00 = 2.0 * t3 - 3.0 * t2 + 1.0
    h01 = 1.0 - h00
    h10 = (t3 - 2.0 * t2 + theta) * dt
    h11 = (t3 - t2) * dt
    for i in range(y0.size):
        out[i] = h00 * y0[i] + h01 * y1[i] + h10 * f0[i] + h11 * f1[i]


@jit
def integrate_member(y, tc, tsec, j, jlast, tland, n, par_in, ft, forc, counters, ws, wsd, fv, rows):
    """Advance one member's integrator from its state ``y`` at ``tc`` [s] (in place) until the
    output times ``tsec[j] .. tsec[jlast]`` are recorded into ``rows`` (see
    :func:`.record.record_row`); a record inside a step is interpolated, and only ``tland`` ends a
    step (the run's end; each output time with ``[solver] output_times = step_ends``).

    Returns ``(status, t, j)``: the status code, the time of the integrator's state ``y`` (past
    ``tsec[jlast]`` when the last step ran across it) and the first output index not recorded
    (records made beyond ``jlast`` by that step count as made).  ``counters`` accumulates
    accepted steps [0], rejected steps [1], Newton iterations [2] (all stages, rejected steps
    included) and implicit stage solves [3] (the same stages; a diagnostic only, so [2] / [3] is
    the mean Newton iterations per stage); ``ws`` is the integrator's workspace
    (:func:`.workspace.new_workspace`, whose ``temp`` holds the first guesses of the enthalpy
    inversion), ``wsd`` one for the records' diagnostics and ``fv`` forcing scratch.
    """
    ny = y.size
    nb = 2 * n + 1
    nrec = tsec.size
    if jlast >= nrec:
        jlast = nrec - 1
    par = par_in.copy()  # the ocean salinity follows the mixed layer, step by step
    mixed = par[P.MLD] > 0.0
    f1 = ws.f1
    f2 = ws.f2
    f3 = ws.f3
    y2 = ws.y2
    y3 = ws.y3
    y0 = ws.y0
    base = ws.base
    fv1 = ws.fv1
    fv2 = ws.fv2
    fv3 = ws.fv3
    t = tc
    dt = y[nb + B.DT] if y[nb + B.DT] > 0.0 else par[P.INITDT]
    maxdt = par[P.MAXDT]
    idx = np.int64(0)  # not the literal 0: one compiled signature for the callees
    proposed = dt
    while j <= jlast:
        tout = tsec[j]
        if mixed:
            _tw, s_ml, _tf = mixed_layer_state(y, n, par)
            par[P.SW] = s_ml
        if not (y[2 * n] > 0.0):
            # open water: a 0-d budget, stepped to the next output time
            dto = OPEN_WATER_STEP if OPEN_WATER_STEP < maxdt else maxdt
            last = t + dto >= tout - 1e-9 * (1.0 + abs(tout))
            if last:
                dto = tout - t
            idx = open_water_step(y, t, dto, n, par, ft, forc, idx, fv1, f1, f2, ws.ytmp)
            counters[0] += 1
            t = tout if last else t + dto
            if y[nb + B.FRAZIL] <= -new_ice_heat(par):
                form_new_ice(y, n, par)
                ws.temp[:] = np.nan
                dt = par[P.INITDT]
                proposed = dt
            if last:
                y[nb + B.DT] = dt if y[2 * n] > 0.0 else 0.0
                record_row(y, j, n, par_in, ft, forc, tout, wsd, fv, rows)
                j += 1
            continue
        if dt > maxdt:
            dt = maxdt
        last = False
        proposed = dt
        if t + dt >= tland - 1e-9 * (1.0 + abs(tland)):
            dt = tland - t
            last = True
        if dt < DT_MIN:
            return STATUS_UNDERFLOW, t, j
        # forcing at the three stage times
        idx = forcing_at(ft, forc, t, idx, par, fv1)
        i2 = forcing_at(ft, forc, t + _GAMMA * dt, idx, par, fv2)
        forcing_at(ft, forc, t + dt, i2, par, fv3)
        hold_rates_over_step(ft, forc, t, t + dt, idx, fv1, fv2, fv3)
        if mixed:
            # heat from the mixed layer to the ice base, held over the step
            fw1 = heat_to_ice(y, n, par)
            fw2 = fw1
            fw3 = fw1
        else:
            fw1 = fv1[F.QOCEAN]
            fw2 = fv2[F.QOCEAN]
            fw3 = fv3[F.QOCEAN]
        af = flooding_rate(y, n, par, fv1, dt)
        # stage 1 (explicit): the surface melt rate of the step's start is kept for its stages
        a_in = stage_rates(y, n, par, fv1, fw1, f1, ws, -1.0, af)
        # stage 2
        for i in range(ny):
            base[i] = y[i] + dt * _D * f1[i]
            y2[i] = y[i] + dt * _GAMMA * f1[i]
        if not (y2[2 * n] > 0.5 * y[2 * n]):
            y2[2 * n] = y[2 * n]
        ok, nit = stage_solve(y2, base, _D * dt, n, par, fv2, fw2, f2, ws, NEWTON_MAXIT, a_in, af)
        counters[2] += nit
        counters[3] += 1
        if ok:
            stage_rates(y2, n, par, fv2, fw2, f2, ws, a_in, af)
            for i in range(ny):
                base[i] = y[i] + dt * (_W * f1[i] + _W * f2[i])
                y3[i] = y2[i] + (1.0 - _GAMMA) / _GAMMA * (y2[i] - y[i])
            if not (y3[2 * n] > 0.5 * y[2 * n]):
                y3[2 * n] = y2[2 * n]
            ok, nit = stage_solve(y3, base, _D * dt, n, par, fv3, fw3, f3, ws, NEWTON_MAXIT, a_in, af)
            counters[2] += nit
            counters[3] += 1
        if not ok:
            dt *= 0.25
            counters[1] += 1
            continue
        stage_rates(y3, n, par, fv3, fw3, f3, ws, a_in, af)
        err = ws.err
        for i in range(ny):
            err[i] = dt * (_E1 * f1[i] + _E2 * f2[i] + _E3 * f3[i])
        en = error_norm(err, y, n, par)
        if not (en == en):
            en = 1e10
        if en > 1.0:
            fac = 0.9 * en ** (-1.0 / 3.0)
            if fac < 0.2:
                fac = 0.2
            dt *= fac
            counters[1] += 1
            continue
        # accept: explicit flux-form update from the converged stages (conservative)
        for i in range(ny):
            y0[i] = y[i]
            y[i] = y[i] + dt * (_B1 * f1[i] + _B2 * f2[i] + _B3 * f3[i])
        counters[0] += 1
        tnew = tland if last else t + dt
        # records the step ran across (before any melt-out at its end)
        while j < nrec and tsec[j] < tnew:
            _hermite(y0, f1, y, f3, dt, (tsec[j] - t) / dt, ws.yrec)
            ws.yrec[nb + B.DT] = dt
            record_row(ws.yrec, j, n, par_in, ft, forc, tsec[j], wsd, fv, rows)
            j += 1
        t = tnew
        if y[2 * n] < H_OUT and f3[2 * n] < 0.0:
            melt_out(y, n, par)
            ws.temp[:] = np.nan
            dt = par[P.INITDT]
            proposed = dt
        else:
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
                dt = proposed  # a step shortened to end on tland does not shrink the next one
        # the step size is part of the state, so a run continued from its output (restart) goes on
        # exactly as the run done in one go
        y[nb + B.DT] = dt if y[2 * n] > 0.0 else 0.0
        if j < nrec and tsec[j] <= t:
            record_row(y, j, n, par_in, ft, forc, tsec[j], wsd, fv, rows)
            j += 1
    return STATUS_OK, t, j
