"""The rigging's numbers from outside, each with its source: tether materials, defaults and limits.

Kept apart from physics.rigging (which reads a run) so the scene loader can use them.
"""

from __future__ import annotations

# Axial stiffness EA (N: force per unit strain) of a tether material; a tether of length L then has
# k = EA / L. All *from memory*, orders of magnitude only, and real ropes stiffen as they stretch:
# give the maker's force-elongation figure as `stiffness` where it is known.
#  - static (low-stretch) kernmantle rope, 10-11 mm: about 3 % elongation at about 1 kN, so about
#    35 kN (from memory; EN 1891 allows at most 5 % between 50 and 150 kg, i.e. at least 20 kN);
#  - dynamic climbing rope, single: about 20 kN, the value behind a standard fall's 8-9 kN impact
#    force (from memory);
#  - webbing lanyard (polyamide or polyester): about 60 kN (from memory).
MATERIALS = {"static rope": 35_000.0, "dynamic rope": 20_000.0, "webbing lanyard": 60_000.0}

# A tether's damping ratio when the scene gives none: small, roofbeat's own default, not a measured value.
DEFAULT_DAMPING = 0.05
# A running line's sag at mid-span under the load, as a fraction of its span, when the scene gives
# none: roofbeat's own default, not a standard (a tighter line loads its end anchors more; measure
# the rigged line under a test load and give `sag`).
DEFAULT_SAG_FRACTION = 1 / 20

# The limits a tether is held to, overridable in [safety], SI, and the source of each default.
LIMIT_DEFAULTS = {
    "arrest_force": 8000.0,            # N, 1,800 lbf
    "anchor_load": 22_240.0,           # N, 5,000 lbf per person attached
    "free_fall": 1.8,                  # m, 6 ft
    "deceleration_distance": 1.07,     # m, 3.5 ft
}
LIMIT_SOURCES = {
    "arrest_force": "1,800 lbf (8 kN) on the body: OSHA 29 CFR 1926.502(d)(16)(ii); Washington WAC 296-880-40020",
    "anchor_load": "5,000 lbf (22.2 kN) per person attached: OSHA 29 CFR 1926.502(d)(15)",
    "free_fall": "6 ft (1.8 m): OSHA 29 CFR 1926.502(d)(16)(iii)",
    "deceleration_distance": "3.5 ft (1.07 m): OSHA 29 CFR 1926.502(d)(16)(iv)",
}


def limit_source(name: str, value: float) -> str:
    """The source of a limit, or 'set in the scene' when the scene changed it."""
    if abs(value - LIMIT_DEFAULTS[name]) > 1e-9 * max(1.0, abs(value)):
        return "set in the scene's [safety]"
    return LIMIT_SOURCES[name]
