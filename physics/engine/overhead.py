"""Overhead structures and electrified lines, fixed in the ground frame.

A strike is any body point above a structure's soffit inside its span. An
overhead line adds an exclusion distance below the wire; any body point inside
it is a failure in its own right. The clearance reported is the smallest gap
to a soffit or to the edge of an exclusion zone over every body point.
"""

from __future__ import annotations

import math
from collections import namedtuple

from physics.engine.air_load import rotate
from physics.engine.beat_state import failed, with_mode
from physics.engine.jit import kernel, small
from physics.engine.outcome import note_clearance, note_event
from physics.records import Event, Mode

# The smallest gap of any body point this step (m; +inf with nothing
# overhead), the worst structure point (car-frame x, height, soffit) if it
# struck, and the worst point inside a line's exclusion zone (car-frame x,
# distance to the wire, exclusion distance).
Overhead = namedtuple("Overhead", "clearance struck strike_x strike_z soffit in_zone line_x line_distance "
                                  "exclusion")


@small
def body_point(posture, i, j, c, s, base_x, base_z, rotates_all):
    """Endpoint j of segment i, car frame (m): segments that lean turn with the body.

    rotates_all: the whole posture turns (in flight, about base = com - the
    turned com offset); else only the segments flagged to lean with the body.
    """
    x0 = posture.ends[i, j, 0]
    z0 = posture.ends[i, j, 1]
    if rotates_all or posture.rotates[i]:
        x0, z0 = rotate(x0, z0, c, s)
    return base_x + x0, base_z + z0


@kernel
def overhead_check(posture, lean, base_x, base_z, rotates_all, distance, structures, lines):
    """Check every body point against every structure and line; distance = consist travel (m)."""
    c = math.cos(lean)
    s = math.sin(lean)
    clearance = math.inf
    worst_strike = 0.0
    worst_zone = 0.0
    strike_x, strike_z, soffit = 0.0, 0.0, 0.0
    line_x, line_distance, exclusion = 0.0, 0.0, 0.0
    for i in range(posture.ends.shape[0]):
        for j in range(2):
            x, z = body_point(posture, i, j, c, s, base_x, base_z, rotates_all)
            xg = x + distance
            for k in range(structures.shape[0]):
                st = structures[k]
                if st.x_start <= xg <= st.x_start + st.span:
                    gap = st.soffit - z
                    clearance = min(clearance, gap)
                    if gap < worst_strike:
                        worst_strike = gap
                        strike_x, strike_z, soffit = x, z, st.soffit
            for k in range(lines.shape[0]):
                ln = lines[k]
                if ln.x_start <= xg <= ln.x_end:
                    gap = ln.wire_height - z - ln.exclusion
                    clearance = min(clearance, gap)
                    if gap < worst_zone:
                        worst_zone = gap
                        line_x, line_distance, exclusion = x, ln.wire_height - z, ln.exclusion
    return Overhead(clearance, worst_strike < 0.0, strike_x, strike_z, soffit, worst_zone < 0.0, line_x,
                    line_distance, exclusion)


@kernel
def overhead_step(v, inputs, env, beat, posture, lean, base_x, base_z, act, out):
    """Check the body at t_k: clearance margin, line and strike events. A strike takes the body out of the run.

    In the air the whole posture turns with the lean (base: the centre of mass
    less its turned offset); on the roof only the segments that lean.
    """
    in_air = beat.mode == Mode.FLIGHT
    ov = overhead_check(posture, lean, base_x, base_z, in_air, env.distance, inputs.structures, inputs.lines)
    if beat.assessing and ov.clearance < math.inf:
        note_clearance(out.outcomes[v.b, act], ov.clearance)
    if ov.in_zone:
        note_event(out.events, v.b, Event.LINE, env.t, ov.line_x, env.distance, inputs.cars, ov.line_distance,
                   ov.exclusion)
        beat = failed(beat)
    if ov.struck:
        note_event(out.events, v.b, Event.STRIKE, env.t, ov.strike_x, env.distance, inputs.cars, ov.strike_z,
                   ov.soffit)
        beat = with_mode(failed(beat), Mode.GONE)
    return beat


@small
def anything_overhead(inputs):
    return inputs.structures.shape[0] + inputs.lines.shape[0] > 0
