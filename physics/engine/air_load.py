"""Aerodynamic load on a posture by the cross-flow principle.

Each segment sees the component of the apparent wind normal to its axis and
takes F = 1/2 rho Cd d L |w_n| w_n at its midpoint; blunt segments (head,
trunk, feet) add an end-on term 1/2 rho Cd_end A_end |w_a| w_a along their axis
so a body lying along the flow is not drag-free (physics/README.md, "Air
loads"). Across the track a segment shows its depth, not its breadth: the
normal component splits into its part in the figure's plane, on the breadth,
and its part across it, on the side area (an elliptic section's two drag
areas, the far limbs sheltered; physics.body). The lumped body is one drag area at the centre of mass, scaled by the
posture's drag area relative to standing. With the air over the roof on
(physics.engine.roof_air) each segment meets the wind at its own midpoint's
height, the lumped body at its centre of mass's; off, the apparent wind is
uniform over the body.
"""

from __future__ import annotations

import math
from collections import namedtuple

from physics.engine.jit import apart, kernel, small
from physics.engine.roof_air import flow_factor

# Total force (N) and its torque about the pivot as a function of the lean:
# torque(lean) = torque_cos cos(lean) + torque_sin sin(lean), from the
# unrotated points (N m); and the torque of the force across the track about
# the contact line, positive toward the left (N m).
AirLoad = namedtuple("AirLoad", "fx fy fz torque_cos torque_sin roll")

# Per-variant drag of the body: 1/2 rho Cd A per segment (cross-flow, end-on
# and side-on) or of the whole lumped body (head-on and side-on), kg/m.
Drag = namedtuple("Drag", "q_cross q_axial q_side lumped q_lumped q_lumped_side")


@small
def body_drag(body, density, drag_scale, q_cross, q_axial, q_side):
    """The body's drag factors at this variant's air density and drag scale, written into q_cross, q_axial
    and q_side."""
    half = 0.5 * density * drag_scale
    for i in range(q_cross.shape[0]):
        q_cross[i] = half * body.crossflow_area[i]
        q_axial[i] = half * body.axial_area[i]
        q_side[i] = half * body.side_area[i]
    return Drag(q_cross, q_axial, q_side, body.lumped != 0, half * body.lumped_drag_area,
                half * body.lumped_drag_area * body.lumped_side_ratio)


@small
def rotate(x0, z0, c, s):
    """A body-frame offset leaned by the angle with cosine c and sine s (top toward +x)."""
    return x0 * c + z0 * s, -x0 * s + z0 * c


@small
def at_height(flow, wx, wy, z):
    """The apparent wind (wx, wy) uniform over the body taken at height z above the pivot in `flow`."""
    if not flow.on:
        return wx, wy
    f = flow_factor(flow, z) - 1.0
    return wx + f * flow.ax, wy + f * flow.ay


@kernel
def air_load(posture, c, s, wx, wy, wz, drag, flow):
    """Force and pivot torque of the apparent wind (wx, wy, wz) on `posture` leaned by (cos c, sin s), in
    the air over the roof `flow` (roof_air.Flow)."""
    if drag.lumped:
        return lumped_load(posture, c, s, wx, wy, wz, drag, flow)
    if flow.on:
        return profiled_load(posture, c, s, wx, wy, wz, drag, flow)
    return segments_load(posture, c, s, wx, wy, wz, drag, flow, uniform_at)


@small
def uniform_at(flow, wx, wy, z):
    """The apparent wind the same at every height (the air over the roof off)."""
    return wx, wy


@kernel
def segments_load(posture, c, s, wx, wy, wz, drag, flow, wind_at):
    """The cross-flow rule summed over the segments, each in the wind wind_at(flow, wx, wy, z) at its
    midpoint's height z (a compiled function: the uniform one keeps the default loop lean)."""
    fx_t = 0.0
    fy_t = 0.0
    fz_t = 0.0
    a = 0.0
    b = 0.0
    roll = 0.0
    for i in range(posture.axes.shape[0]):
        mx = posture.axes[i, 0]
        mz = posture.axes[i, 1]
        ex, ez = rotate(posture.axes[i, 2], posture.axes[i, 3], c, s)
        sx, sy = wind_at(flow, wx, wy, -mx * s + mz * c)
        along = sx * ex + wz * ez
        nx = sx - along * ex
        nz = wz - along * ez
        nmag = math.sqrt(nx * nx + sy * sy + nz * nz)
        fx = drag.q_cross[i] * nmag * nx + drag.q_axial[i] * abs(along) * along * ex
        fz = drag.q_cross[i] * nmag * nz + drag.q_axial[i] * abs(along) * along * ez
        fy = drag.q_side[i] * nmag * sy
        fx_t += fx
        fy_t += fy
        fz_t += fz
        a += mz * fx - mx * fz
        b += -mx * fx - mz * fz
        unused, z_mid = rotate(mx, mz, c, s)
        roll += fy * z_mid
    return AirLoad(fx_t, fy_t, fz_t, a, b, roll)


@small
def lumped_load(posture, c, s, wx, wy, wz, drag, flow):
    """The lumped body: one drag area at the centre of mass, in the wind at its height."""
    q = drag.q_lumped * posture.drag_ratio
    unused, cz = rotate(posture.com_x, posture.com_z, c, s)
    wx, wy = at_height(flow, wx, wy, cz)
    speed = math.sqrt(wx * wx + wy * wy + wz * wz)
    fx = q * speed * wx
    fz = q * speed * wz
    fy = drag.q_lumped_side * posture.drag_ratio * speed * wy
    return AirLoad(fx, fy, fz, posture.com_z * fx - posture.com_x * fz,
                   -posture.com_x * fx - posture.com_z * fz, fy * cz)


@apart
def profiled_load(posture, c, s, wx, wy, wz, drag, flow):
    """air_load with the air over the roof on, compiled apart so the default uniform loop stays lean."""
    return segments_load(posture, c, s, wx, wy, wz, drag, flow, at_height)
