"""The preview's colours: a calm production palette of our own.

Every colour names what it is for; the GIF palette is built from these.
"""

PAPER = (236, 234, 229)
SKY = (226, 230, 233)
GROUND_TONE = (205, 200, 190)
INK = (43, 49, 56)
SOFT_INK = (120, 126, 133)
FAINT = (178, 182, 186)
CAR_BODY = (196, 202, 208)
CAR_EDGE = (92, 100, 110)
FAR_LIMB = (150, 156, 163)
AERO = (31, 122, 140)
SEGMENT_AERO = (95, 170, 184)
WEIGHT = (70, 70, 70)
REACTION = (106, 76, 147)
PSEUDO = (199, 125, 0)
WIND = (80, 140, 190)
TRAIL = (150, 112, 160)
FAILURE = (209, 73, 91)
MARGINAL = (200, 150, 40)
HOLDS = (62, 130, 92)
PANEL = (250, 249, 246)
STRUCTURE = (150, 128, 110)
ASPHALT = (164, 165, 163)
LANE_MARK = (242, 240, 232)
GLAZING = (214, 224, 230)
LINE_ZONE = (230, 180, 180)
LANDING_ZONE = (170, 205, 180)
FACT = (110, 118, 126)
CURVE = (52, 96, 150)
ROOF_AIR = (128, 170, 204)       # the air over the roof by height: a softer WIND, drawn behind the figure
ROOF_AIR_ZONE = (203, 215, 226)  # a low-speed zone of that air, a faint band
# Two performers: the second one's figure in a calm umber beside the first one's ink (same style, far limbs
# lighter), and the push or pull between them, on each body at its touch point.
PARTNER = (122, 82, 56)
PARTNER_FAR = (184, 158, 140)
TOUCH = (176, 62, 138)
FIGURE_TONES = ((INK, FAR_LIMB), (PARTNER, PARTNER_FAR))   # (near limbs, far limbs) by performer, in cast order
