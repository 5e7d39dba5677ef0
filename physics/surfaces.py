"""Named roof surfaces and the friction they give.

Each surface carries two pairs of coefficients (static, kinetic): one for
rubber-soled footwear and one for the body (clothing, knee and elbow pads) in
prone, kneeling and crawling contact. Sources beside each number; values
marked "from memory" are planning figures to replace with a measurement of the
actual roof and footwear (a drag-sled or tribometer test), and a scene can
give explicit values.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Surface:
    name: str
    sole_static: float
    sole_kinetic: float
    body_static: float
    body_kinetic: float
    source: str
    flat: bool = False   # a deck (a flat car, a trailer bed): no crown unless the scene gives one


SURFACES = {
    s.name: s
    for s in [
        # OpenStax College Physics, Table 5.1: rubber on dry concrete 1.0 / 0.7.
        Surface("concrete dry", 1.0, 0.7, 0.6, 0.5,
                "soles: OpenStax College Physics Table 5.1 (rubber on dry concrete); body: from memory", True),
        # OpenStax College Physics, Table 5.1: rubber on wet concrete 0.7 / 0.5.
        Surface("concrete wet", 0.7, 0.5, 0.45, 0.35,
                "soles: OpenStax College Physics Table 5.1 (rubber on wet concrete); body: from memory", True),
        # OpenStax College Physics, Table 5.1: shoes on ice 0.1 / 0.05.
        Surface("ice", 0.1, 0.05, 0.1, 0.05,
                "soles: OpenStax College Physics Table 5.1 (shoes on ice); body: taken equal, from memory"),
        Surface("painted steel dry", 0.6, 0.5, 0.4, 0.3, "from memory"),
        Surface("painted steel wet", 0.35, 0.25, 0.25, 0.2, "from memory"),
        Surface("tar paper", 0.8, 0.6, 0.6, 0.45, "from memory"),
        Surface("wood deck dry", 0.65, 0.5, 0.45, 0.35, "from memory", True),
        Surface("wood deck wet", 0.4, 0.3, 0.3, 0.25, "from memory", True),
        Surface("anti-slip paint", 0.9, 0.7, 0.6, 0.5, "from memory"),
    ]
}

# OSHA 29 CFR 1910 Subpart D, Appendix A: a static coefficient of 0.5 is the
# usual guide for a walking-working surface. Reported beside the roof value.
WALKING_SURFACE_GUIDE_STATIC = 0.5
