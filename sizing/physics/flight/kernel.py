"""The compiled flight loop: phases, adaptive steps, kinks, events, max-q, history and burnouts.

`run_flight` integrates one flight described by the flat arrays of
`sizing.physics.flight.layout` (filled by `sizing.physics.flight.setup`) with
the embedded Dormand-Prince 5(4) pair (`integrator`), cutting the flight into
phases at every time where the right-hand side is not smooth (ignition,
burnout, staging, thrust-curve knots, steering switches). State-dependent kinks
and events are handled by `events`. Max-q is refined between samples by
Brent's bounded search on the continuous extension (R. P. Brent, Algorithms
for Minimization without Derivatives, 1973, Ch. 5; the FMIN routine of
Forsythe, Malcolm & Moler, Computer Methods for Mathematical Computations,
1977, Sec. 8.2, as in ``scipy.optimize.fminbound``).

`run_many` flies a batch of flights packed end to end (studies, dispersions)
without returning to Python between them.
"""

from __future__ import annotations

import math

import numpy as np

from sizing.physics._jit import njit
from sizing.physics.flight.equations import air, altitude_up, derivatives, velocities
from sizing.physics.flight.events import (
    EV_APOGEE, EV_IMPACT, EV_NONE, EV_RAIL, event_value, illinois, kink_fraction, predict_kink, radial_speed,
)
from sizing.physics.flight.integrator import dense, dp_step, step_factor
from sizing.physics.flight.layout import (
    B_SIZE, B_STAGE, B_T, B_Y, D_ACC, D_ALPHA, D_ALT, D_DRAG, D_MACH, D_Q, D_THRUST, D_VREL, END_APOGEE, END_BURNOUT,
    END_IMPACT, END_TIME_LIMIT, ENV_DRAG, ENV_RAIL_LEN, ENV_SITE_ALT, H_SIZE, MODE_LINEAR_TANGENT,
    MODE_PITCH_RATE, N_DIAG, N_MOTION, N_STATE, OPT_DETECT_IMPACT, OPT_H_FIRST, OPT_MAX_STEP, OPT_MAX_TIME,
    OPT_N_MARKS, OPT_N_STAGES, OPT_POS_SCALE, OPT_RECORD, OPT_REPLAY, OPT_RTOL, OPT_STOP, OPT_VEL_SCALE, OPT_VERTICAL, OUT_APOGEE,
    OUT_APOGEE_T, OUT_END, OUT_HAS_BUDGET, OUT_IMPACT_T, OUT_MAX_ACC, OUT_MAXQ, OUT_MAXQ_ALT, OUT_MAXQ_T,
    OUT_N_BURNOUTS, OUT_N_HIST, OUT_N_REJECTED, OUT_N_RHS, OUT_N_STEPREC, OUT_N_STEPS, OUT_RAIL_T, OUT_RAIL_V, OUT_SIZE, OUT_T,
    OUT_WENT_BELOW, PH_BURNING, PH_BURNOUT_OF, PH_DRAG_LEN, PH_DRAG_OFF, PH_EXIT_AREA, PH_MASS_AFTER, PH_MODE,
    PH_MARK, PH_STAGE, PH_STEP_N, PH_STEP_OFF, PH_T0, PH_T1, ST_T_START, ST_TAN0, ST_TH0, ST_TH0_GIVEN, STOP_APOGEE, STOP_BURNOUT,
)
from sizing.physics.flight.layout import STEP_RECORD_CAP
from sizing.physics.flight.tableau import N_STAGES

__all__ = ["run_flight", "run_many"]

# loop state ``ws`` (kernel-private)
W_T, W_H_NEXT, W_LIFTED, W_ON_RAIL, W_JUST, W_STAGE, W_K1, W_DONE, W_N_TRACK, W_N_Q, W_N_STORED, W_PHASE = range(12)
W_REPLAY_J = 12  # next replayed step of the phase
W_SIZE = 13


class _Buffers:
    """Documentation only: the work arrays passed between the kernel's functions.

    K, Kc (7 x N_STATE): stages of the step and of a cut trial; y1, yc, ye, ytmp (N_STATE):
    step end, cut-step end, event state, scratch; diag (N_DIAG): at the last recorded
    state; diag1, diagc (N_DIAG): at the step end, at the cut-step end; track (3 x 3):
    last (t, altitude, Mach) samples; qs (3 x 3): last (t, q, step slot) samples;
    stp_t0, stp_h, stp_ph (2), stp_y0 (2 x N_STATE), stp_K (2 x 7 x N_STATE): the last two
    accepted steps for the max-q search.
    """


@njit
def _grow(hist, n):
    if n < hist.shape[0]:
        return hist
    new = np.empty((2 * hist.shape[0], H_SIZE))
    new[:n] = hist[:n]
    return new


@njit
def _q_at(tt, stp_t0, stp_h, stp_y0, stp_K, slot, par, buf):
    """Dynamic pressure [Pa] at time tt on the continuous extension of a stored step."""
    dense(stp_y0[slot], stp_h[slot], stp_K[slot], (tt - stp_t0[slot]) / stp_h[slot], buf, N_MOTION)
    alt, up = altitude_up(buf, par)
    _, va = velocities(buf, alt, up, par)
    rho = air(alt, par)[1]
    return 0.5 * rho * (va[0] * va[0] + va[1] * va[1] + va[2] * va[2])


@njit
def _brent_max_q(a, b, tb, s_lo, s_hi, stp_t0, stp_h, stp_y0, stp_K, par, buf):
    """Time of the largest q in [a, b] (Brent's bounded method, as scipy.optimize.fminbound, xatol 1e-6 t)."""
    xatol = 1e-6 * max(1.0, b)
    sqrt_eps = math.sqrt(2.2e-16)
    golden = 0.5 * (3.0 - math.sqrt(5.0))
    fulc = a + golden * (b - a)
    nfc, xf = fulc, fulc
    rat = e = 0.0
    fx = -_q_at(xf, stp_t0, stp_h, stp_y0, stp_K, s_lo if xf <= tb else s_hi, par, buf)
    ffulc = fnfc = fx
    xm = 0.5 * (a + b)
    tol1 = sqrt_eps * abs(xf) + xatol / 3.0
    tol2 = 2.0 * tol1
    for _ in range(500):
        if abs(xf - xm) <= tol2 - 0.5 * (b - a):
            break
        use_golden = True
        if abs(e) > tol1:  # parabolic step
            use_golden = False
            r = (xf - nfc) * (fx - ffulc)
            q = (xf - fulc) * (fx - fnfc)
            p = (xf - fulc) * q - (xf - nfc) * r
            q = 2.0 * (q - r)
            if q > 0.0:
                p = -p
            q = abs(q)
            r = e
            e = rat
            if abs(p) < abs(0.5 * q * r) and q * (a - xf) < p < q * (b - xf):
                rat = p / q
                x = xf + rat
                if (x - a) < tol2 or (b - x) < tol2:
                    rat = tol1 if xm - xf >= 0.0 else -tol1
            else:
                use_golden = True
        if use_golden:
            e = (a - xf) if xf >= xm else (b - xf)
            rat = golden * e
        step = max(abs(rat), tol1)
        x = xf + (step if rat >= 0.0 else -step)
        fu = -_q_at(x, stp_t0, stp_h, stp_y0, stp_K, s_lo if x <= tb else s_hi, par, buf)
        if fu <= fx:
            if x >= xf:
                a = xf
            else:
                b = xf
            fulc, ffulc = nfc, fnfc
            nfc, fnfc = xf, fx
            xf, fx = x, fu
        else:
            if x < xf:
                a = x
            else:
                b = x
            if fu <= fnfc or nfc == xf:
                fulc, ffulc = nfc, fnfc
                nfc, fnfc = x, fu
            elif fu <= ffulc or fulc == xf or fulc == nfc:
                fulc, ffulc = x, fu
        xm = 0.5 * (a + b)
        tol1 = sqrt_eps * abs(xf) + xatol / 3.0
        tol2 = 2.0 * tol1
    return xf


@njit
def _history_row(hist, n, t, y, diag, stage):
    row = hist[n]
    row[0] = t
    for j in range(N_MOTION):
        row[1 + j] = y[j]
    row[8] = diag[D_ALT]
    row[9] = diag[D_VREL]
    row[10] = diag[D_MACH]
    row[11] = diag[D_Q]
    row[12] = diag[D_ACC]
    row[13] = diag[D_THRUST]
    row[14] = diag[D_DRAG]
    row[15] = stage
    row[16] = diag[D_ALPHA]


@njit
def _refine_max_q(ws, out, qs, stp_t0, stp_h, stp_y0, stp_K, stp_ph, phases, par, hist, opt):
    """Largest q between the last three samples; updates max-q and adds a history row."""
    s_lo, s_hi = int(qs[1, 2]), int(qs[2, 2])
    ta, tb, tc = qs[0, 0], qs[1, 0], qs[2, 0]
    buf = np.empty(N_STATE)
    tq = _brent_max_q(ta, tc, tb, s_lo, s_hi, stp_t0, stp_h, stp_y0, stp_K, par, buf)
    slot = s_lo if tq <= tb else s_hi
    dense(stp_y0[slot], stp_h[slot], stp_K[slot], (tq - stp_t0[slot]) / stp_h[slot], buf, N_STATE)
    dq = np.empty(N_STATE)
    dg = np.empty(N_DIAG)
    ph = phases[int(stp_ph[slot])]
    derivatives(tq, buf, dq, dg, par, ph, False)
    if dg[D_Q] > out[OUT_MAXQ]:
        out[OUT_MAXQ], out[OUT_MAXQ_T], out[OUT_MAXQ_ALT] = dg[D_Q], tq, dg[D_ALT]
        if opt[OPT_RECORD] > 0.0:
            n = int(out[OUT_N_HIST])
            hist = _grow(hist, n)
            _history_row(hist, n, tq, buf, dg, ph[PH_STAGE])
            out[OUT_N_HIST] = n + 1
    return hist


@njit
def _push3(rows, n, a, b, c):
    """Append (a, b, c) to a window of the last three rows holding n rows; return the row index used."""
    if n == 3:
        for i in range(2):
            for j in range(3):
                rows[i, j] = rows[i + 1, j]
        n = 2
    rows[n, 0], rows[n, 1], rows[n, 2] = a, b, c
    return n


@njit
def _record(ws, out, t, y, diag, slot, track, qs, stp_t0, stp_h, stp_y0, stp_K, stp_ph, phases, par, hist, opt):
    """Book a state: kink track, max-q, max acceleration, below-ground flag, history, q samples."""
    ws[W_N_TRACK] = _push3(track, int(ws[W_N_TRACK]), t, diag[D_ALT], diag[D_MACH]) + 1
    if diag[D_ALT] < par[ENV_SITE_ALT] - 1.0:
        out[OUT_WENT_BELOW] = 1.0
    q = diag[D_Q]
    new_max = q > out[OUT_MAXQ]
    if new_max:
        out[OUT_MAXQ], out[OUT_MAXQ_T], out[OUT_MAXQ_ALT] = q, t, diag[D_ALT]
    out[OUT_MAX_ACC] = max(out[OUT_MAX_ACC], diag[D_ACC])
    if opt[OPT_RECORD] > 0.0:
        k = int(out[OUT_N_HIST])
        hist = _grow(hist, k)
        _history_row(hist, k, t, y, diag, ws[W_STAGE])
        out[OUT_N_HIST] = k + 1
    nq = _push3(qs, int(ws[W_N_Q]), t, q, slot)
    ws[W_N_Q] = nq + 1
    if (not new_max and nq == 2 and qs[1, 1] == out[OUT_MAXQ] > 0.0 and qs[0, 1] < qs[1, 1]
            and qs[1, 2] >= 0.0 and slot >= 0.0):
        hist = _refine_max_q(ws, out, qs, stp_t0, stp_h, stp_y0, stp_K, stp_ph, phases, par, hist, opt)
    return hist


@njit
def _accepted_step(ws, out, t, t1, y, y1, yc, ytmp, K, Kc, diag, diag1, diagc, track, ph, par, opt):
    """Take one accepted adaptive step from (t, y); return its length (K, y1, diag1 hold it)."""
    rtol, pos_s, vel_s = opt[OPT_RTOL], opt[OPT_POS_SCALE], opt[OPT_VEL_SCALE]
    on_rail = ws[W_ON_RAIL] > 0.0
    off, nd = int(ph[PH_DRAG_OFF]), int(ph[PH_DRAG_LEN])
    use_mach = par[ENV_DRAG] > 0.0 and diag[D_VREL] > 0.0
    burning = ph[PH_BURNING] > 0.0
    while True:
        remaining = t1 - t
        h = min(ws[W_H_NEXT], opt[OPT_MAX_STEP])
        if remaining <= 1.05 * h:
            h = remaining
        h_uncut = 0.0
        hp = predict_kink(track, int(ws[W_N_TRACK]), t, h, par, off, nd, use_mach)
        if 0.0 < hp < h:
            h_uncut = h
            h = hp
        err = dp_step(t, y, h, K, y1, ytmp, diag1, ws[W_K1] > 0.0, par, ph, on_rail, rtol, pos_s, vel_s)
        ws[W_K1] = 1.0
        out[OUT_N_RHS] += N_STAGES - 1
        if not math.isfinite(err):
            # a trial step so long that a stage state left the models' domain: reject it
            if h < 1e-9 * max(1.0, t):
                raise ValueError("flight integration failed: step size underflow")
            ws[W_H_NEXT] = 0.2 * h
            out[OUT_N_REJECTED] += 1
            continue
        xk = kink_fraction(diag, diag1, y, h, K, par, off, nd, burning, ph[PH_EXIT_AREA], rtol, vel_s)
        # a kink in the first or last percent of a step leaves a sliver: keep the step
        if 1e-2 < xk < 0.99:
            hk = xk * h
            Kc[0] = K[0]
            errk = dp_step(t, y, hk, Kc, yc, ytmp, diagc, True, par, ph, on_rail, rtol, pos_s, vel_s)
            out[OUT_N_RHS] += N_STAGES - 1
            if errk <= 1.0:
                # the step after the kink starts from the size the uncut trial asked for
                ws[W_H_NEXT] = max(ws[W_H_NEXT], h * min(5.0, max(0.2, 0.9 * max(err, 1e-10) ** -0.2)))
                K[:] = Kc
                y1[:] = yc
                diag1[:] = diagc
                err, h = errk, hk
                if not math.isinf(remaining):
                    remaining = h
        if err > 1.0:
            ws[W_H_NEXT] = h * max(0.2, 0.9 * err ** -0.2)
            out[OUT_N_REJECTED] += 1
            continue
        fac = step_factor(err)
        if h < remaining or h * fac > ws[W_H_NEXT]:
            ws[W_H_NEXT] = h * fac
        # a step shortened to end on a predicted kink says nothing about the size beyond it
        if h_uncut > ws[W_H_NEXT]:
            ws[W_H_NEXT] = h_uncut
        out[OUT_N_STEPS] += 1
        return h


@njit
def _replay_step(ws, out, t, y, y1, ytmp, K, diag1, ph, par, opt):
    """Take the next recorded step of the phase (no error control); return its length."""
    j = int(ws[W_REPLAY_J])
    n = int(ph[PH_STEP_N])
    t0, t1 = ph[PH_T0], ph[PH_T1]
    t_new = t1 if j >= n - 1 else t0 + par[int(ph[PH_STEP_OFF]) + j] * (t1 - t0)
    h = t_new - t
    dp_step(t, y, h, K, y1, ytmp, diag1, ws[W_K1] > 0.0, par, ph, ws[W_ON_RAIL] > 0.0, opt[OPT_RTOL],
            opt[OPT_POS_SCALE], opt[OPT_VEL_SCALE])
    ws[W_K1] = 1.0
    ws[W_REPLAY_J] = j + 1
    out[OUT_N_RHS] += N_STAGES - 1
    out[OUT_N_STEPS] += 1
    return h


@njit
def _record_step(out, steps, k, t_end, ph):
    """Append (phase, step-end fraction of the phase) to the step record, while there is room."""
    n = int(out[OUT_N_STEPREC])
    if n < 0:
        return
    if n >= steps.shape[0] or not math.isfinite(ph[PH_T1]):
        out[OUT_N_STEPREC] = -1.0
        return
    steps[n, 0] = k
    steps[n, 1] = (t_end - ph[PH_T0]) / (ph[PH_T1] - ph[PH_T0])
    out[OUT_N_STEPREC] = n + 1


@njit
def _integrate_to_event(kind, target, c, t, y, h, K, Kt, ye, ytmp, diag, ph, par, on_rail, opt):
    """Integrate from (t, y) to the located event (fraction c of the step) and polish by secant steps."""
    rtol, pos_s, vel_s = opt[OPT_RTOL], opt[OPT_POS_SCALE], opt[OPT_VEL_SCALE]
    tau = c * h
    Kt[0] = K[0]
    dp_step(t, y, tau, Kt, ye, ytmp, diag, True, par, ph,
            on_rail, rtol, pos_s, vel_s)
    fc = event_value(kind, ye, par) - target
    tol = 1e-10 * (1.0 + abs(target))
    if abs(fc) > tol:
        d = 1e-6
        b1 = np.empty(N_MOTION)
        dense(y, h, K, c + d, b1, N_MOTION)
        f_hi = event_value(kind, b1, par)
        dense(y, h, K, c, b1, N_MOTION)
        slope = (f_hi - event_value(kind, b1, par)) / (d * h)
        for _ in range(4):
            if slope == 0.0:
                break
            tau = min(max(tau - fc / slope, 0.0), h)
            dp_step(t, y, tau, Kt, ye, ytmp, diag, True, par, ph, on_rail, rtol, pos_s, vel_s)
            fc = event_value(kind, ye, par) - target
            if abs(fc) <= tol:
                break
    return tau


@njit
def _find_event(ws, y, y1, h, K, par, opt):
    """(kind, fraction of the step, target) of the first event in the step, or (EV_NONE, 2, 0)."""
    best, c_best, tgt_best = EV_NONE, 2.0, 0.0
    just = int(ws[W_JUST])
    rail_len = par[ENV_RAIL_LEN]
    if ws[W_ON_RAIL] > 0.0 and rail_len > 0.0 and just != EV_RAIL:
        f1 = event_value(EV_RAIL, y1, par) - rail_len
        if f1 >= 0.0:
            f0 = event_value(EV_RAIL, y, par) - rail_len
            c = illinois(EV_RAIL, rail_len, y, h, K, f0, f1, par, 1e-10, 1e-12 * (1.0 + rail_len))
            best, c_best, tgt_best = EV_RAIL, c, rail_len
    lifted = ws[W_LIFTED] > 0.0
    if opt[OPT_VERTICAL] > 0.0 and lifted and just != EV_APOGEE:
        v0, v1 = radial_speed(y, par), radial_speed(y1, par)
        if v0 > 0.0 >= v1:
            c = illinois(EV_APOGEE, 0.0, y, h, K, v0, v1, par, 1e-10, 1e-12)
            if c < c_best:
                best, c_best, tgt_best = EV_APOGEE, c, 0.0
    ground = par[ENV_SITE_ALT]
    if opt[OPT_DETECT_IMPACT] > 0.0 and lifted and just != EV_IMPACT:
        a0, a1 = altitude_up(y, par)[0], altitude_up(y1, par)[0]
        if a1 < ground <= a0 and radial_speed(y1, par) < 0.0:
            c = illinois(EV_IMPACT, ground, y, h, K, a0 - ground, a1 - ground, par, 1e-10,
                         1e-12 * (1.0 + abs(ground)))
            if c < c_best:
                best, c_best, tgt_best = EV_IMPACT, c, ground
    return best, c_best, tgt_best


@njit
def _store_step(ws, t, y, h, K, stp_t0, stp_h, stp_y0, stp_K, stp_ph):
    slot = int(ws[W_N_STORED]) % 2
    stp_t0[slot], stp_h[slot], stp_ph[slot] = t, h, ws[W_PHASE]
    stp_y0[slot] = y
    stp_K[slot] = K
    ws[W_N_STORED] += 1
    return float(slot)


@njit
def _start_phase(ws, ph, y, par):
    """Phase set-up: stage, and the pitch programme's start from the inertial flight-path angle."""
    ws[W_STAGE] = ph[PH_STAGE]
    ws[W_K1] = 0.0
    mode = int(ph[PH_MODE])
    if ((mode == MODE_LINEAR_TANGENT or mode == MODE_PITCH_RATE) and abs(ws[W_T] - par[ST_T_START]) < 1e-9
            and par[ST_TH0_GIVEN] == 0.0):
        r = math.sqrt(y[0] * y[0] + y[1] * y[1] + y[2] * y[2])
        v = math.sqrt(y[3] * y[3] + y[4] * y[4] + y[5] * y[5])
        par[ST_TH0] = math.asin(max(-1.0, min(1.0, (y[0] * y[3] + y[1] * y[4] + y[2] * y[5]) / (r * v))))
        par[ST_TAN0] = math.tan(par[ST_TH0])


@njit
def _handle_event(kind, ws, out, t, diag, final_coast, opt):
    """Book an event; return True when it ends the flight."""
    if kind == EV_RAIL:
        out[OUT_RAIL_T], out[OUT_RAIL_V] = t, diag[D_VREL]
        ws[W_ON_RAIL] = 0.0
        ws[W_K1] = 0.0
    elif kind == EV_APOGEE:
        if diag[D_ALT] > out[OUT_APOGEE]:
            out[OUT_APOGEE], out[OUT_APOGEE_T] = diag[D_ALT], t
        if opt[OPT_STOP] == STOP_APOGEE and final_coast:
            out[OUT_END] = END_APOGEE
            return True
    elif kind == EV_IMPACT:
        out[OUT_IMPACT_T] = t
        out[OUT_END] = END_IMPACT
        return True
    return False


@njit
def _fly_phase(k, ws, out, y, hist, phases, par, opt, bufs, rec, steps):
    """Integrate phase k from the current state to its end or to an event that ends the flight."""
    K, Kc, Kt, y1, yc, ye, ytmp, diag, diag1, diagc = bufs
    track, qs, stp_t0, stp_h, stp_y0, stp_K, stp_ph = rec
    ph = phases[k]
    replay = opt[OPT_REPLAY] > 0.0 and ph[PH_STEP_N] > 0.0
    ws[W_REPLAY_J] = 0.0
    t1 = ph[PH_T1]
    t1_stop = t1 - 1e-12 * max(1.0, t1) if math.isfinite(t1) else math.inf
    final_coast = k == phases.shape[0] - 1 and not math.isfinite(t1)
    while ws[W_T] < t1_stop:
        t = ws[W_T]
        if t > opt[OPT_MAX_TIME]:
            ws[W_DONE] = 1.0
            return hist
        if replay:
            h = _replay_step(ws, out, t, y, y1, ytmp, K, diag1, ph, par, opt)
        else:
            h = _accepted_step(ws, out, t, t1, y, y1, yc, ytmp, K, Kc, diag, diag1, diagc, track, ph, par, opt)
        slot = _store_step(ws, t, y, h, K, stp_t0, stp_h, stp_y0, stp_K, stp_ph)
        if (y1[3] - y[3]) ** 2 + (y1[4] - y[4]) ** 2 + (y1[5] - y[5]) ** 2 > 0.0:
            ws[W_LIFTED] = 1.0
        kind, c, target = EV_NONE, 2.0, 0.0
        if ws[W_LIFTED] > 0.0 or ws[W_ON_RAIL] > 0.0:
            kind, c, target = _find_event(ws, y, y1, h, K, par, opt)
        ws[W_JUST] = EV_NONE
        if kind != EV_NONE:
            out[OUT_N_STEPREC] = -1.0  # a flight cut by an event cannot be replayed step for step
            on_rail = ws[W_ON_RAIL] > 0.0
            tau = _integrate_to_event(kind, target, c, t, y, h, K, Kc, ye, ytmp, diag, ph, par, on_rail, opt)
            ws[W_T] = t + tau
            y[:] = ye
            derivatives(ws[W_T], y, K[0], diag, par, ph,
                        on_rail)
            ws[W_K1] = 1.0
            hist = _record(ws, out, ws[W_T], y, diag, -1.0, track, qs, stp_t0, stp_h, stp_y0, stp_K, stp_ph,
                           phases, par, hist, opt)
            if _handle_event(kind, ws, out, ws[W_T], diag, final_coast, opt):
                ws[W_DONE] = 1.0
                return hist
            ws[W_JUST] = kind
            continue
        _record_step(out, steps, k, t + h, ph)
        ws[W_T] = t + h
        y[:] = y1
        K[0] = K[N_STAGES - 1]
        diag[:] = diag1
        if ws[W_ON_RAIL] > 0.0 and par[ENV_RAIL_LEN] == 0.0 and ws[W_LIFTED] > 0.0:
            ws[W_ON_RAIL] = 0.0
            out[OUT_RAIL_T] = ws[W_T]
            derivatives(ws[W_T], y, K[0], diag, par, ph,
                        False)
            slot = -1.0
        hist = _record(ws, out, ws[W_T], y, diag, slot, track, qs, stp_t0, stp_h, stp_y0, stp_K, stp_ph, phases,
                       par, hist, opt)
    return hist


@njit
def run_flight(phases, par, opt, y_init, hist_cap):
    """Fly one flight. Returns (out, y_final, y_budget, burnouts, history, steps).

    phases: PH_* rows; par: the flight's parameter array (copied: the kernel
    writes the steering start into it); opt: OPT_* options; y_init: the
    N_STATE-component state at t = 0. out: OUT_* scalars; y_budget: state at final
    burnout (or the last state); burnouts: one row per stage (B_* layout, nan
    for stages that did not burn out); history: H_* columns, OUT_N_HIST rows
    (unsorted where max-q was refined); steps: (phase index, step-end fraction
    of the phase), OUT_N_STEPREC rows, for replaying the same steps (`OPT_REPLAY`).
    """
    par = par.copy()
    n_st = int(opt[OPT_N_STAGES])
    out = np.zeros(OUT_SIZE)
    for i in (OUT_RAIL_T, OUT_RAIL_V, OUT_APOGEE_T, OUT_IMPACT_T):
        out[i] = math.nan
    out[OUT_END] = END_TIME_LIMIT
    steps = np.empty((STEP_RECORD_CAP, 2))
    y = y_init.copy()
    hist = np.empty((max(hist_cap, 1) if opt[OPT_RECORD] > 0.0 else 1, H_SIZE))
    burn = np.full((n_st + int(opt[OPT_N_MARKS]), B_SIZE), math.nan)
    budget = y.copy()
    ws = np.zeros(W_SIZE)
    ws[W_ON_RAIL] = opt[OPT_VERTICAL]
    ws[W_H_NEXT] = opt[OPT_H_FIRST]
    ws[W_JUST] = EV_NONE
    bufs = (np.zeros((N_STAGES, N_STATE)), np.zeros((N_STAGES, N_STATE)), np.zeros((N_STAGES, N_STATE)),
            np.zeros(N_STATE), np.zeros(N_STATE), np.zeros(N_STATE), np.zeros(N_STATE),
            np.zeros(N_DIAG), np.zeros(N_DIAG), np.zeros(N_DIAG))
    rec = (np.zeros((3, 3)), np.zeros((3, 3)), np.zeros(2), np.ones(2), np.zeros((2, N_STATE)),
           np.zeros((2, N_STAGES, N_STATE)), np.zeros(2))
    out[OUT_APOGEE] = par[ENV_SITE_ALT]
    out[OUT_MAXQ_ALT] = par[ENV_SITE_ALT]
    K, diag = bufs[0], bufs[7]
    derivatives(0.0, y, K[0], diag, par, phases[0], ws[W_ON_RAIL] > 0.0)
    hist = _record(ws, out, 0.0, y, diag, -1.0, rec[0], rec[1], rec[2], rec[3], rec[4], rec[5], rec[6], phases,
                   par, hist, opt)
    for k in range(phases.shape[0]):
        ph = phases[k]
        ws[W_PHASE] = k
        _start_phase(ws, ph, y, par)
        hist = _fly_phase(k, ws, out, y, hist, phases, par, opt, bufs, rec, steps)
        if ws[W_DONE] > 0.0:
            break
        mark = int(ph[PH_MARK])
        if mark >= 0:
            burn[mark, B_T], burn[mark, B_STAGE] = ws[W_T], ph[PH_STAGE]
            burn[mark, B_Y:] = y
        i = int(ph[PH_BURNOUT_OF])
        if i >= 0:
            burn[i, B_T], burn[i, B_STAGE] = ws[W_T], i
            burn[i, B_Y:] = y
            out[OUT_N_BURNOUTS] += 1
            ws[W_K1] = 0.0
            if i == n_st - 1:
                budget[:] = y
                out[OUT_HAS_BUDGET] = 1.0
            y[6] = ph[PH_MASS_AFTER]
            if i == n_st - 1 and opt[OPT_STOP] == STOP_BURNOUT:
                out[OUT_END] = END_BURNOUT
                break
    if out[OUT_HAS_BUDGET] == 0.0:
        budget[:] = y
    out[OUT_T] = ws[W_T]
    return out, y, budget, burn, hist, steps


@njit
def run_many(phase_rows, phase_off, pars, par_off, opts, y_inits):
    """Fly a batch without history: flight j uses phase rows phase_off[j]:phase_off[j+1], the parameter
    array pars[par_off[j]:par_off[j+1]] and row j of opts and y_inits.

    Returns (out [n x OUT_SIZE], y_final [n x N_STATE], y_budget [n x N_STATE], burnouts [n x n_st x B_SIZE]).
    """
    n = phase_off.shape[0] - 1
    n_rows = int(opts[0, OPT_N_STAGES]) + int(opts[0, OPT_N_MARKS])
    outs = np.empty((n, OUT_SIZE))
    yf = np.empty((n, N_STATE))
    yb = np.empty((n, N_STATE))
    burns = np.empty((n, n_rows, B_SIZE))
    for j in range(n):
        o, y, b, bo, _, _ = run_flight(phase_rows[phase_off[j]:phase_off[j + 1]], pars[par_off[j]:par_off[j + 1]],
                                    opts[j], y_inits[j], 1)
        outs[j] = o
        yf[j] = y
        yb[j] = b
        burns[j] = bo
    return outs, yf, yb, burns
