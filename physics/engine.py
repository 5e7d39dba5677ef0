"""The step loop: one compiled kernel that runs every variant of a batch.

State per variant is explicit scalars inside the kernel; the shared, state-
independent parts of the beat come from physics.beat. Fixed step dt. Modes:

- PLANTED: feet (or knees, or body) stuck to the roof; the whole-body lean is
  an inverted pendulum about the pivot, balanced by a delayed, bounded centre
  of pressure (the ankle strategy) around an anticipatory lean.
- SLIDING: the contact slides on the roof under kinetic friction.
- FLIGHT: a rigid posture under gravity and quadratic drag (RK4).
- DOWN: after a topple the body falls over without control and then lies.
- GONE: fallen off the consist or struck; nothing more is simulated.

Forces: gravity, aerodynamic (cross-flow principle per segment, plus end-on
terms for blunt segments), the pseudo-force -m dV/dt of the car frame, and the
ground reaction. Apparent wind on a part = ambient wind - the part's ground
velocity. References: see DESIGN.md section 3 and the docstrings below.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

from physics import G

PLANTED, SLIDING, FLIGHT, DOWN, GONE = 0, 1, 2, 3, 4
EVENT_KINDS = ("slip", "topple", "lift", "fall", "strike", "line", "hard landing", "recovery step")
EV_SLIP, EV_TOPPLE, EV_LIFT, EV_FALL, EV_STRIKE, EV_LINE, EV_HARD, EV_STEP = range(8)
MARGIN_KEYS = ("grip_ratio_min", "balance_margin_min_m", "lift_ratio_min", "lean_max_deg",
               "apparent_wind_max_ms", "drag_max_n", "landing_margin_min_m", "clearance_min_m", "grip_demand_max")
M_GRIP, M_BAL, M_LIFT, M_LEAN, M_WIND, M_DRAG, M_LAND, M_CLEAR, M_DEMAND = range(9)
EVENT_FIELDS = 6  # time, x car frame, car index, demand, available, x ground frame
REC_FIELDS = ("t", "mode", "pivot_x", "roof_z", "lean", "com_x", "com_z", "speed", "distance", "wind_x",
              "wind_y", "app_x", "app_y", "app_z", "aero_x", "aero_y", "aero_z", "normal", "friction_x",
              "friction_y", "pseudo_x", "weight", "grip_demand", "grip_available", "balance_margin", "xcom",
              "support_lo", "support_hi", "lift_ratio", "lean_required", "action")
R = {name: i for i, name in enumerate(REC_FIELDS)}

# Balance controller gains, as multiples of the pivot-to-com height: centre of
# pressure shift per radian of lean error and per rad/s. Chosen so that a
# standing performer is stable with up to 0.2 s reaction latency (checked in
# tests); human ankle-strategy models use gains of this size (from memory).
KP_FACTOR = 1.6
KD_FACTOR = 0.8
ANTICIPATION_TIME = 0.8   # s, the performer braces for the load felt over about this long (from memory)
TOPPLE_HOLD = 0.1         # s the extrapolated com must stay outside the reach before it is a topple
# Floating-point licences for the hot loops: fused multiply-add, reciprocal and
# reassociation; never "no NaNs" or "no infinities", which the margins rely on.
FAST = {"contract", "arcp", "afn", "reassoc", "nsz"}
TURBULENCE_STEP = 1.0 / 60.0  # s between samples of the turbulence process
LIE_ANGLE = 1.4           # rad: a toppled body is lying on the roof past this lean
LANDING_ABSORB_TIME = 0.2  # s of leg flexion in a landing (from memory; drop-landing studies ~0.1-0.3 s)
MIN_SKID = 0.25           # m a landing can skid without a step (about a foot length, from memory)


@njit(cache=True, inline="always")
def _rng_next(state):
    state = (state + np.uint64(0x9E3779B97F4A7C15)) & np.uint64(0xFFFFFFFFFFFFFFFF)
    z = state
    z = ((z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)) & np.uint64(0xFFFFFFFFFFFFFFFF)
    z = ((z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)) & np.uint64(0xFFFFFFFFFFFFFFFF)
    z = z ^ (z >> np.uint64(31))
    return state, (float(z >> np.uint64(11)) + 0.5) * (1.0 / 9007199254740992.0)


@njit(cache=True)
def _normal(state):
    """Standard normal deviate (Box-Muller) from the splitmix64 stream."""
    state, z, _ = _normal_pair(state)
    return state, z


@njit(cache=True)
def _normal_pair(state):
    """Two independent standard normal deviates (Box-Muller) from the splitmix64 stream."""
    state, u1 = _rng_next(state)
    state, u2 = _rng_next(state)
    r = math.sqrt(-2.0 * math.log(u1))
    return state, r * math.cos(2.0 * math.pi * u2), r * math.sin(2.0 * math.pi * u2)


@njit(cache=True, fastmath=FAST)
def _aero(axes, rows, c, s, wx, wy, wz, q_cross, q_axial, lumped, lumped_q, com_x, com_z, out_seg):
    """Aerodynamic force on a posture rotated by the lean (cos c, sin s) about its pivot.

    w = apparent wind (m/s) taken uniform over the body. Returns total force,
    torque about the pivot, and the torque coefficients (a, b) of the
    unrotated points such that torque(theta) = a cos(theta) + b sin(theta).
    """
    fx_t = 0.0
    fy_t = 0.0
    fz_t = 0.0
    a = 0.0
    b = 0.0
    if lumped:
        speed = math.sqrt(wx * wx + wy * wy + wz * wz)
        fx_t = lumped_q * speed * wx
        fy_t = lumped_q * speed * wy
        fz_t = lumped_q * speed * wz
        a = com_z * fx_t - com_x * fz_t
        b = -com_x * fx_t - com_z * fz_t
        for i in range(out_seg.shape[0]):
            out_seg[i, 0] = 0.0
            out_seg[i, 1] = 0.0
        return fx_t, fy_t, fz_t, a, b
    for i in range(axes.shape[1]):
        # axes[rows, i] = midpoint (x, z) and unit axis (x, z) of the unrotated segment.
        mx = axes[rows, i, 0]
        mz = axes[rows, i, 1]
        ex0 = axes[rows, i, 2]
        ez0 = axes[rows, i, 3]
        ex = ex0 * c + ez0 * s
        ez = -ex0 * s + ez0 * c
        along = wx * ex + wz * ez
        nx = wx - along * ex
        nz = wz - along * ez
        nmag = math.sqrt(nx * nx + wy * wy + nz * nz)
        fx = q_cross[i] * nmag * nx + q_axial[i] * abs(along) * along * ex
        fy = q_cross[i] * nmag * wy
        fz = q_cross[i] * nmag * nz + q_axial[i] * abs(along) * along * ez
        out_seg[i, 0] = fx
        out_seg[i, 1] = fz
        fx_t += fx
        fy_t += fy
        fz_t += fz
        a += mz * fx - mx * fz
        b += -mx * fx - mz * fz
    return fx_t, fy_t, fz_t, a, b


@njit(cache=True)
def _solve_lean(alpha, beta, target):
    """Lean theta (rad) with alpha cos(theta) + beta sin(theta) = target, nearest upright.

    Returns (theta, solvable). Unsolvable loads give the angle of best effort.
    """
    r = math.sqrt(alpha * alpha + beta * beta)
    phi = math.atan2(beta, alpha)
    if r < 1e-12:
        return 0.0, False
    ratio = target / r
    if abs(ratio) > 1.0:
        return phi if ratio > 0 else phi + math.pi, False
    d = math.acos(ratio)
    t1 = _wrap(phi + d)
    t2 = _wrap(phi - d)
    return (t1 if abs(t1) < abs(t2) else t2), True


@njit(cache=True, inline="always")
def _wrap(angle):
    """Angle into (-pi, pi]; inputs here lie within (-2 pi, 2 pi)."""
    if angle > math.pi:
        return angle - 2.0 * math.pi
    if angle <= -math.pi:
        return angle + 2.0 * math.pi
    return angle


@njit(cache=True)
def _car_at(x, car_front, car_rear):
    for i in range(car_front.shape[0]):
        if car_rear[i] - 1e-9 <= x <= car_front[i] + 1e-9:
            return i
    return -1


@njit(cache=True)
def _overhead(ends, rows, c, s, px, pz, rotates, s_dist, t, structures, lines, margins, act, events, b,
              car_front, car_rear, lean_about_pivot):
    """Strike and line checks for every body point; updates clearance margins.

    structures: (n, 3) x_start, span, soffit (ground frame, above rail).
    lines: (n, 4) x_start, x_end, wire height, exclusion. Returns True on a strike.
    """
    struck = False
    for i in range(ends.shape[1]):
        for j in range(2):
            x0 = ends[rows, i, j, 0]
            z0 = ends[rows, i, j, 1]
            if lean_about_pivot == 2 or (lean_about_pivot == 1 and rotates[rows, i]):
                x0, z0 = _rotate(x0, z0, c, s)
            x = px + x0
            z = pz + z0
            xg = x + s_dist
            for k in range(structures.shape[0]):
                if structures[k, 0] <= xg <= structures[k, 0] + structures[k, 1]:
                    gap = structures[k, 2] - z
                    if gap < margins[b, act, M_CLEAR]:
                        margins[b, act, M_CLEAR] = gap
                    if gap < 0.0:
                        _event(events, b, EV_STRIKE, t, x, car_front, car_rear, z, structures[k, 2], xg)
                        struck = True
            for k in range(lines.shape[0]):
                if lines[k, 0] <= xg <= lines[k, 1]:
                    gap = lines[k, 2] - z - lines[k, 3]
                    if gap < margins[b, act, M_CLEAR]:
                        margins[b, act, M_CLEAR] = gap
                    if gap < 0.0:
                        _event(events, b, EV_LINE, t, x, car_front, car_rear, lines[k, 2] - z, lines[k, 3], xg)
    return struck


@njit(cache=True)
def _event(events, b, kind, t, x, car_front, car_rear, demand, available, xg):
    if math.isnan(events[b, kind, 0]):
        events[b, kind, 0] = t
        events[b, kind, 1] = x
        events[b, kind, 2] = _car_at(x, car_front, car_rear)
        events[b, kind, 3] = demand
        events[b, kind, 4] = available
        events[b, kind, 5] = xg


# Per-variant parameter columns.
VARIANT_FIELDS = ("speed_scale", "wind_x", "wind_y", "density", "mass", "drag_scale", "friction_scale",
                  "reaction_time", "turbulence_sigma", "turbulence_seed", "gust_scale", "max_lean",
                  "recovery_step", "start_x", "turbulence_length", "takeoff_scale")
V_ = {name: i for i, name in enumerate(VARIANT_FIELDS)}


@njit(cache=True)
def _flight_accel(axes, row, fc, fs, vx, vz, V, A, ux, uy, q_cross, q_axial, lumped, lumped_q, mass, seg):
    """Acceleration (car frame) of a rigid posture in flight: gravity, drag, pseudo-force."""
    fx, fy, fz, a, b = _aero(axes, row, fc, fs, ux - (V + vx), uy, -vz, q_cross, q_axial, lumped, lumped_q,
                             0.0, 0.0, seg)
    return fx / mass - A, fz / mass - G


@njit(cache=True)
def _lowest_point(ends, row, fc, fs, com_x, com_z):
    """Lowest body point of a rotated posture, relative to its centre of mass."""
    best_z = 1e9
    best_x = 0.0
    for i in range(ends.shape[1]):
        for j in range(2):
            x, z = _rotate(ends[row, i, j, 0] - com_x, ends[row, i, j, 1] - com_z, fc, fs)
            if z < best_z:
                best_z = z
                best_x = x
    return best_x, best_z


@njit(cache=True, fastmath=FAST)
def _run_variant(b, p, inputs, events, margins, record, rec, rec_ends, rec_force):
    (times, speed, accel, dist, gust_x, gust_y, ends, axes, com, inertia, support, contact, rotates, drag_ratio,
     pivot_shift, reset, settling, action, gait_speed, gait_friction, gait_rate, act_code, act_start, act_takeoff,
     act_rows, cars, q_cross_base, q_axial_base, lumped, lumped_cda, structures, lines) = inputs
    dt = times[1] - times[0]
    n = times.shape[0]
    sp = p[0]
    mass = p[4]
    weight = mass * G
    q_cross = 0.5 * p[3] * p[5] * q_cross_base
    q_axial = 0.5 * p[3] * p[5] * q_axial_base
    lumped_q0 = 0.5 * p[3] * p[5] * lumped_cda
    car_front = cars[:, 0]
    car_rear = cars[:, 1]
    roof_h = cars[:, 2]
    lowest_roof = roof_h.min()
    delay = int(round(p[7] / dt))
    buf_err = np.zeros(delay + 1)
    buf_w = np.zeros(delay + 1)
    seg = np.zeros((ends.shape[1], 2))
    state = np.uint64(int(p[9]) * 2654435761 + 12345 + b * 97)
    turb = 0.0
    spare = 0.0
    has_spare = False
    knot_time = 0.0
    knot_prev = 0.0
    knot_next = 0.0
    if p[8] > 0:
        state, z = _normal(state)
        knot_prev = p[8] * z
        state, z = _normal(state)
        knot_next = knot_prev * 0.9 + p[8] * math.sqrt(1.0 - 0.81) * z
        turb = knot_prev
    mode = PLANTED
    x = p[13]
    u = 0.0
    udot = 0.0
    th = 0.0
    om = 0.0
    thdd = 0.0
    ext_lo = 0.0
    ext_hi = 0.0
    step_used = p[12] <= 0.0
    outside = 0.0
    lying = False
    first = True
    fa = 0.0
    fb = 0.0
    ffz = 0.0
    gphase = 0.0
    # flight state
    cx_f = 0.0
    cz_f = 0.0
    vx_f = 0.0
    vz_f = 0.0
    frow = 0
    fc = 1.0
    fs = 0.0
    low_dx = 0.0
    low_dz = 0.0
    fallen = False
    overhead = structures.shape[0] > 0 or lines.shape[0] > 0
    jumped_action = -1
    landed_action = -1
    for k in range(n):
        t = times[k]
        V = speed[k] * sp
        A = accel[k] * sp
        s_d = dist[k] * sp
        act = action[k]
        if p[8] > 0:
            # The Gauss-Markov gust process advances on its own fixed clock and is
            # interpolated, so a finer engine step sees the same air.
            while t >= knot_time + TURBULENCE_STEP:
                knot_time += TURBULENCE_STEP
                rel = abs(V - p[1])
                e = math.exp(-TURBULENCE_STEP * max(rel, 1.0) / p[14])
                if has_spare:
                    z = spare
                    has_spare = False
                else:
                    state, z, spare = _normal_pair(state)
                    has_spare = True
                knot_prev = knot_next
                knot_next = knot_next * e + p[8] * math.sqrt(1.0 - e * e) * z
            w_knot = (t - knot_time) / TURBULENCE_STEP
            turb = knot_prev + (knot_next - knot_prev) * w_knot
        ux = p[1] + gust_x[k] * p[10] + turb
        uy = p[2] + gust_y[k] * p[10]
        row = k
        if landed_action == act and act_code[act] == 2:
            row = act_rows[act, 1]
        elif reset[k] and (mode == PLANTED or mode == SLIDING):
            # The pivot moves within the body (feet to knees) or the performer
            # turns: keep the hip where it was and restart the balance.
            x += pivot_shift[k]
            first = True
        if mode == GONE:
            if record:
                _record_gone(rec, rec_ends, rec_force, k, t, V, s_d, ux, uy, act)
            continue
        if mode == FLIGHT:
            mode, x, u, th, om, cx_f, cz_f, vx_f, vz_f, fallen, landed = _flight_step(
                b, t, dt, V, speed[min(k + 1, n - 1)] * sp, A, ux, uy, cx_f, cz_f, vx_f, vz_f, ends, axes, frow, fc,
                fs, low_dx, low_dz, com, act_rows, act, q_cross, q_axial, lumped, lumped_q0 * drag_ratio[frow],
                mass, seg, cars, lowest_roof, events, margins, p[12], fallen, s_d)
            if landed:
                landed_action = act
                first = True
                ext_lo = 0.0
                ext_hi = 0.0
                udot = 0.0
                thdd = 0.0
            if mode == FLIGHT or mode == GONE:
                if overhead:
                    com_dx, com_dz = _rotate(com[frow, 0], com[frow, 1], fc, fs)
                    _overhead(ends, frow, fc, fs, cx_f - com_dx, cz_f - com_dz, rotates, s_d, t, structures,
                              lines, margins, act, events, b, car_front, car_rear, 2)
                if record:
                    _record_flight(rec, rec_ends, rec_force, k, t, V, s_d, ux, uy, act, ends, frow, fc, fs,
                                   cx_f, cz_f, vx_f, vz_f, com, seg, mode)
                continue
            row = act_rows[act, 1] if landed_action == act else k
        ci = _car_at(x, car_front, car_rear)
        pz = roof_h[ci] if ci >= 0 else roof_h[0]
        c = math.cos(th)
        s = math.sin(th)
        gait_v = gait_speed[k] if mode == PLANTED and not lying else 0.0
        wx = ux - (V + u + gait_v)
        c0x = com[row, 0]
        c0z = com[row, 1]
        kind = 2 if lying else contact[row]
        lq = lumped_q0 * drag_ratio[row]
        fx, fy, fz, a_aero, b_aero = _aero(axes, row, c, s, wx, uy, 0.0, q_cross, q_axial, lumped, lq, c0x, c0z,
                                           seg)
        cx, cz = _rotate(c0x, c0z, c, s)
        pseudo = -mass * (A + udot)
        normal = weight - fz - mass * (thdd * cx + om * om * cz)
        if ci >= 0:
            mu_s = (cars[ci, 3] if kind == 0 else cars[ci, 5]) * p[6]
            mu_k = (cars[ci, 4] if kind == 0 else cars[ci, 6]) * p[6]
        else:
            mu_s = 0.0
            mu_k = 0.0
        alpha = weight * c0x + a_aero + pseudo * c0z
        beta = weight * c0z + b_aero - pseudo * c0x
        if first:
            fa, fb, ffz = alpha, beta, fz
        else:
            w_f = dt / ANTICIPATION_TIME
            fa += (alpha - fa) * w_f
            fb += (beta - fb) * w_f
            ffz += (fz - ffz) * w_f
        nf = max(weight - ffz, 1e-6)
        quarter = 0.25 * (support[row, 1] - support[row, 0])
        pmid = min(max(c0x, support[row, 0] + quarter), support[row, 1] - quarter)
        th_raw, solvable = _solve_lean(fa, fb, pmid * nf)
        lean_required = abs(th_raw) if solvable else 0.5 * math.pi
        th_ref = min(max(th_raw, -p[11]), p[11])
        if first:
            if kind != 2 and mode != DOWN:
                th = th_ref
                c = math.cos(th)
                s = math.sin(th)
            for i in range(delay + 1):
                buf_err[i] = 0.0
                buf_w[i] = 0.0
            first = False
        lo = support[row, 0] - ext_lo
        hi = support[row, 1] + ext_hi
        mos = math.nan
        xcom = math.nan
        if normal <= 0.0 and mode != DOWN:
            _event(events, b, EV_LIFT, t, x, car_front, car_rear, -normal, weight, x + s_d)
            mode, cx_f, cz_f, vx_f, vz_f, frow, fc, fs, low_dx, low_dz = _enter_flight(
                ends, row, th, x, pz, cx, cz, u + gait_v + om * cz, -om * cx, com)
            if record:
                _record_flight(rec, rec_ends, rec_force, k, t, V, s_d, ux, uy, act, ends, frow, fc, fs, cx_f,
                               cz_f, vx_f, vz_f, com, seg, mode)
            continue
        if kind == 2 or (settling[k] and mode == PLANTED):
            # Lying down the lean is fixed; during a deliberate change of
            # posture the performer holds the braced lean with whatever
            # support the move uses (hands, knees): no ankle-strategy dynamics.
            if kind != 2:
                th = th_ref
            om = 0.0
            thdd = 0.0
        else:
            # Delayed feedback on lean error and rate; the centre of pressure
            # cannot leave the support, which bounds the ankle torque.
            slot = k % (delay + 1)
            buf_err[slot] = th - th_ref
            buf_w[slot] = om
            old = (k + 1) % (delay + 1)
            height = max(c0z, 0.05)
            if mode == DOWN:
                cop = hi if th > 0 else lo
            else:
                cop = pmid + KP_FACTOR * height * buf_err[old] + KD_FACTOR * height * buf_w[old]
                cop = min(max(cop, lo), hi)
            torque = weight * cx + a_aero * c + b_aero * s + pseudo * cz - cop * normal
            thdd = torque / (mass * inertia[row])
            om += thdd * dt
            th += om * dt
            omega0 = math.sqrt(G / height)
            xcom = (fa * c + fb * s) / nf + om * cz / omega0
            mos = min(hi - xcom, xcom - lo)
            if mode == PLANTED:
                if mos < 0.0:
                    if not step_used and kind == 0:
                        step_used = True
                        if xcom > hi:
                            ext_hi = p[12]
                        else:
                            ext_lo = p[12]
                        bound = hi if xcom > hi else lo
                        _event(events, b, EV_STEP, t, x, car_front, car_rear, xcom, bound, x + s_d)
                    else:
                        outside += dt
                        if outside >= TOPPLE_HOLD:
                            bound = hi if xcom > hi else lo
                            _event(events, b, EV_TOPPLE, t, x, car_front, car_rear, xcom, bound, x + s_d)
                            mode = DOWN
                else:
                    outside = 0.0
            if mode == DOWN and abs(th) > LIE_ANGLE:
                th = LIE_ANGLE if th > 0 else -LIE_ANGLE
                om = 0.0
                thdd = 0.0
                lying = True
        gphase += 2.0 * math.pi * gait_rate[k] * dt
        f_gait = gait_friction[k] * weight * math.sin(gphase) if mode == PLANTED and not lying else 0.0
        a_cx = thdd * cz - om * om * cx
        # Grip demand is quasi-static, as a coordinator reckons it: the
        # horizontal loads the roof must hold against the weight less lift.
        need_x = -(fx - mass * A + f_gait)
        need_y = -fy
        static_normal = weight - fz
        demand = math.sqrt(need_x * need_x + need_y * need_y) / max(static_normal, 1e-6)
        if mode == PLANTED or (mode == DOWN and lying and u == 0.0):
            if demand > mu_s:
                _event(events, b, EV_SLIP, t, x, car_front, car_rear, demand, mu_s, x + s_d)
                if mode == PLANTED:
                    mode = SLIDING
                u = 1e-9 * (-1.0 if need_x > 0 else 1.0)
            else:
                x += gait_v * dt
                udot = 0.0
        if mode == SLIDING or (mode == DOWN and u != 0.0):
            direction = 1.0 if u > 0 else -1.0
            udot = (fx - mass * A - mu_k * normal * direction) / mass - a_cx
            u_new = u + udot * dt
            if u_new * u <= 0.0:
                u = 0.0
                udot = 0.0
                if mode == SLIDING:
                    mode = PLANTED
            else:
                u = u_new
            x += u * dt
        if _car_at(x, car_front, car_rear) < 0:
            mode, cx_f, cz_f, vx_f, vz_f, frow, fc, fs, low_dx, low_dz = _enter_flight(
                ends, row, th, x, pz, cx, cz, u + gait_v + om * cz, -om * cx, com)
        elif act_code[act] == 2 and jumped_action != act and mode == PLANTED:
            tx = act_takeoff[act, 0]
            direction = 1.0 if act_takeoff[act, 1] >= 0 else -1.0
            ready = (x - tx) * direction >= 0.0 if gait_speed[k] != 0.0 else t >= act_start[act] + 0.3
            if ready:
                jumped_action = act
                arow = act_rows[act, 0]
                mode, cx_f, cz_f, vx_f, vz_f, frow, fc, fs, low_dx, low_dz = _enter_flight(
                    ends, arow, 0.0, x, pz, com[arow, 0], com[arow, 1], act_takeoff[act, 1] * p[15],
                    act_takeoff[act, 2] * p[15], com)
        if settling[k]:
            lean_required = 0.0  # mid-transition postures are not stances anyone holds
        if not (mode == DOWN) and not lying:
            _margins(margins, b, act, mu_s, demand, mos, static_normal / weight, lean_required,
                     math.sqrt(wx * wx + uy * uy), math.sqrt(fx * fx + fy * fy + fz * fz), kind)
        if mode != FLIGHT and overhead:
            if _overhead(ends, row, c, s, x, pz, rotates, s_d, t, structures, lines, margins, act, events, b,
                         car_front, car_rear, 1):
                mode = GONE
        if record:
            _record_planted(rec, rec_ends, rec_force, k, t, mode, x, pz, th, cx, cz, V, s_d, ux, uy, wx, fx, fy, fz,
                            normal, need_x, need_y, -mass * A, weight, demand, mu_s, mos, xcom, lo, hi,
                            lean_required, act, ends, row, rotates, c, s, seg)


@njit(cache=True)
def _enter_flight(ends, row, th, x, pz, cx, cz, vx, vz, com):
    """Freeze the posture of `row`, leaned by th, as a rigid body in flight."""
    fc = math.cos(th)
    fs = math.sin(th)
    low_dx, low_dz = _lowest_point(ends, row, fc, fs, com[row, 0], com[row, 1])
    return FLIGHT, x + cx, pz + cz, vx, vz, row, fc, fs, low_dx, low_dz


@njit(cache=True)
def _rk4(axes, frow, fc, fs, cx, cz, vx, vz, V0, V1, A, ux, uy, q_cross, q_axial, lumped, lq, mass, seg, dt):
    """One classical Runge-Kutta step of the com of a rigid posture in flight (car frame)."""
    Vh = 0.5 * (V0 + V1)
    k1x, k1z = _flight_accel(axes, frow, fc, fs, vx, vz, V0, A, ux, uy, q_cross, q_axial, lumped, lq, mass, seg)
    k2x, k2z = _flight_accel(axes, frow, fc, fs, vx + 0.5 * dt * k1x, vz + 0.5 * dt * k1z, Vh, A, ux, uy, q_cross,
                             q_axial, lumped, lq, mass, seg)
    k3x, k3z = _flight_accel(axes, frow, fc, fs, vx + 0.5 * dt * k2x, vz + 0.5 * dt * k2z, Vh, A, ux, uy, q_cross,
                             q_axial, lumped, lq, mass, seg)
    k4x, k4z = _flight_accel(axes, frow, fc, fs, vx + dt * k3x, vz + dt * k3z, V1, A, ux, uy, q_cross, q_axial,
                             lumped, lq, mass, seg)
    nx = cx + dt * (vx + dt / 6.0 * (k1x + k2x + k3x))
    nz = cz + dt * (vz + dt / 6.0 * (k1z + k2z + k3z))
    nvx = vx + dt / 6.0 * (k1x + 2 * k2x + 2 * k3x + k4x)
    nvz = vz + dt / 6.0 * (k1z + 2 * k2z + 2 * k3z + k4z)
    return nx, nz, nvx, nvz


@njit(cache=True)
def fly(axes, row, fc, fs, x, z, vx, vz, V, ux, uy, q_cross, q_axial, lumped, lq, mass, dt, n):
    """Integrate a rigid posture in flight for n steps at constant consist speed V.

    The same RK4 step the kernel uses; returns (n + 1, 4): x, z, vx, vz in the
    car frame. Used by tests and benchmarks against closed forms and solve_ivp.
    """
    out = np.empty((n + 1, 4))
    seg = np.zeros((axes.shape[1], 2))
    out[0, 0] = x
    out[0, 1] = z
    out[0, 2] = vx
    out[0, 3] = vz
    for k in range(n):
        x, z, vx, vz = _rk4(axes, row, fc, fs, x, z, vx, vz, V, V, 0.0, ux, uy, q_cross, q_axial, lumped, lq, mass,
                            seg, dt)
        out[k + 1, 0] = x
        out[k + 1, 1] = z
        out[k + 1, 2] = vx
        out[k + 1, 3] = vz
    return out


@njit(cache=True)
def _flight_step(b, t, dt, V0, V1, A, ux, uy, cx, cz, vx, vz, ends, axes, frow, fc, fs, low_dx, low_dz, com,
                 act_rows, act, q_cross, q_axial, lumped, lq, mass, seg, cars, lowest_roof, events, margins,
                 step_len, fallen, s_d):
    """One RK4 step of flight, then landing or fall detection.

    Returns (mode, pivot x, u, lean, lean rate, com x, com z, vx, vz, fallen, landed).
    """
    nx, nz, nvx, nvz = _rk4(axes, frow, fc, fs, cx, cz, vx, vz, V0, V1, A, ux, uy, q_cross, q_axial, lumped, lq,
                            mass, seg, dt)
    car_front = cars[:, 0]
    car_rear = cars[:, 1]
    z_old = cz + low_dz
    z_new = nz + low_dz
    x_new = nx + low_dx
    ci = _car_at(x_new, car_front, car_rear)
    if ci >= 0 and not fallen and nvz < 0.0 and z_new <= cars[ci, 2] < z_old + 1e-9:
        frac = (z_old - cars[ci, 2]) / max(z_old - z_new, 1e-12)
        touch_com_x = cx + frac * (nx - cx)
        touch_vx = vx + frac * (nvx - vx)
        land_row = act_rows[act, 1]
        # Put the landed posture's lowest point (the feet) where the feet touched.
        land_low_x, _ = _lowest_point(ends, land_row, 1.0, 0.0, 0.0, 0.0)
        pivot = touch_com_x + low_dx - land_low_x
        margin = min(pivot - cars[ci, 1], cars[ci, 0] - pivot)
        if margin < margins[b, act, M_LAND]:
            margins[b, act, M_LAND] = margin
        # The impact (legs flexing over LANDING_ABSORB_TIME) presses the feet
        # down hard, so static friction takes out up to mu_s (|vz| + g t) of the
        # horizontal speed; what is left must skid out within one recovery step.
        touch_vz = vz + frac * (nvz - vz)
        impact = cars[ci, 3] * (abs(touch_vz) + G * LANDING_ABSORB_TIME)
        residual = max(abs(touch_vx) - impact, 0.0)
        skid = math.sqrt(2.0 * cars[ci, 4] * G * max(step_len, MIN_SKID))
        if residual > skid:
            _event(events, b, EV_HARD, t + frac * dt, pivot, car_front, car_rear, abs(touch_vx), impact + skid,
                   pivot + s_d)
        touch_vx = residual if touch_vx > 0 else -residual
        if _car_at(pivot, car_front, car_rear) < 0:
            _event(events, b, EV_FALL, t + frac * dt, pivot, car_front, car_rear, margin, 0.0, pivot + s_d)
            return GONE, pivot, 0.0, 0.0, 0.0, nx, nz, nvx, nvz, True, False
        if residual > skid:
            return SLIDING, pivot, touch_vx, 0.0, 0.0, nx, nz, nvx, nvz, False, True
        # Absorbed by the legs and a short skid: the contact model starts planted.
        return PLANTED, pivot, 0.0, 0.0, 0.0, nx, nz, nvx, nvz, False, True
    if ci < 0 and not fallen and z_new < lowest_roof:
        _event(events, b, EV_FALL, t, x_new, car_front, car_rear, lowest_roof - z_new, 0.0, x_new + s_d)
        fallen = True
    if z_new <= 0.0:
        return GONE, x_new, 0.0, 0.0, 0.0, nx, nz, nvx, nvz, fallen, False
    return FLIGHT, x_new, 0.0, 0.0, 0.0, nx, nz, nvx, nvz, fallen, False


@njit(cache=True)
def _margins(margins, b, act, mu_s, demand, mos, lift, lean, wind, drag, kind):
    if demand > 1e-12:
        ratio = mu_s / demand
        if ratio < margins[b, act, M_GRIP]:
            margins[b, act, M_GRIP] = ratio
    if demand > margins[b, act, M_DEMAND]:
        margins[b, act, M_DEMAND] = demand
    if kind != 2 and mos == mos and mos < margins[b, act, M_BAL]:
        margins[b, act, M_BAL] = mos
    if lift < margins[b, act, M_LIFT]:
        margins[b, act, M_LIFT] = lift
    if kind != 2 and lean > margins[b, act, M_LEAN]:
        margins[b, act, M_LEAN] = lean
    if wind > margins[b, act, M_WIND]:
        margins[b, act, M_WIND] = wind
    if drag > margins[b, act, M_DRAG]:
        margins[b, act, M_DRAG] = drag


@njit(cache=True, inline="always")
def _rotate(x0, z0, c, s):
    """A body-frame offset leaned by the angle with cosine c and sine s (top toward +x)."""
    return x0 * c + z0 * s, -x0 * s + z0 * c


@njit(cache=True, inline="always")
def _put(rec, k, start, values):
    """Write a run of consecutive REC_FIELDS columns (see R for the order)."""
    for j in range(len(values)):
        rec[k, start + j] = values[j]


@njit(cache=True)
def _record_common(rec, k, t, mode, V, s_d, ux, uy, act):
    _put(rec, k, 0, (t, float(mode)))
    _put(rec, k, 7, (V, s_d, ux, uy))
    rec[k, 30] = act


@njit(cache=True)
def _record_gone(rec, rec_ends, rec_force, k, t, V, s_d, ux, uy, act):
    for j in range(rec.shape[1]):
        rec[k, j] = rec[k - 1, j] if k > 0 else math.nan
    rec_ends[k] = rec_ends[k - 1]
    rec_force[k] = 0.0
    _record_common(rec, k, t, GONE, V, s_d, ux, uy, act)


@njit(cache=True)
def _record_flight(rec, rec_ends, rec_force, k, t, V, s_d, ux, uy, act, ends, frow, fc, fs, cx, cz, vx, vz, com,
                   seg, mode):
    for j in range(rec.shape[1]):
        rec[k, j] = math.nan
    _record_common(rec, k, t, mode, V, s_d, ux, uy, act)
    fx = 0.0
    fz = 0.0
    for i in range(seg.shape[0]):
        fx += seg[i, 0]
        fz += seg[i, 1]
        rec_force[k, i, 0] = seg[i, 0]
        rec_force[k, i, 1] = seg[i, 1]
    _put(rec, k, 5, (cx, cz))
    _put(rec, k, 11, (ux - (V + vx), uy, -vz, fx, math.nan, fz, 0.0))
    for i in range(ends.shape[1]):
        for j in range(2):
            x, z = _rotate(ends[frow, i, j, 0] - com[frow, 0], ends[frow, i, j, 1] - com[frow, 1], fc, fs)
            rec_ends[k, i, j, 0] = cx + x
            rec_ends[k, i, j, 1] = cz + z


@njit(cache=True)
def _record_planted(rec, rec_ends, rec_force, k, t, mode, x, pz, th, cx, cz, V, s_d, ux, uy, wx, fx, fy, fz,
                    normal, need_x, need_y, pseudo, weight, demand, mu_s, mos, xcom, lo, hi, lean_req, act, ends,
                    row, rotates, c, s, seg):
    _record_common(rec, k, t, mode, V, s_d, ux, uy, act)
    _put(rec, k, 2, (x, pz, th, x + cx, pz + cz))
    _put(rec, k, 11, (wx, uy, 0.0, fx, fy, fz, normal, need_x, need_y, pseudo, weight, demand, mu_s, mos,
                      x + xcom, x + lo, x + hi, normal / weight, lean_req))
    for i in range(ends.shape[1]):
        rec_force[k, i, 0] = seg[i, 0]
        rec_force[k, i, 1] = seg[i, 1]
        for j in range(2):
            x0 = ends[row, i, j, 0]
            z0 = ends[row, i, j, 1]
            if rotates[row, i]:
                x0, z0 = _rotate(x0, z0, c, s)
            rec_ends[k, i, j, 0] = x + x0
            rec_ends[k, i, j, 1] = pz + z0


@njit(cache=True, parallel=True)
def run_batch(params, inputs, events, margins, record, rec, rec_ends, rec_force):
    """Run every variant (rows of params) through the whole beat, in parallel.

    inputs: the shared tuple built by physics.simulation (times, speed profile, timeline, consist, ...).
    """
    for b in prange(params.shape[0]):
        rec_this = record and b == 0
        _run_variant(b, params[b], inputs, events, margins, rec_this, rec, rec_ends, rec_force)


@njit(cache=True)
def run_serial(params, inputs, events, margins, record, rec, rec_ends, rec_force):
    """run_batch on one thread: a single recorded run starts faster without the thread pool."""
    for b in range(params.shape[0]):
        rec_this = record and b == 0
        _run_variant(b, params[b], inputs, events, margins, rec_this, rec, rec_ends, rec_force)
