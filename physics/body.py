"""The performer's body: a planar segmented stick figure.

Segment lengths come from landmark heights as fractions of stature (Drillis &
Contini 1966 via Winter, Biomechanics and Motor Control of Human Movement,
Fig. 4.1); masses and centres of mass from Dempster 1955 via Winter Table 4.1.
Breadths, depths and drag coefficients are from memory and are meant to be
scaled as a whole by the scene's standing drag area (costume, body size).

Body frame: x toward where the performer faces, z up, origin at the hip before
placement. Angles of segments are measured from straight up, positive leaning
toward the facing direction; a hanging limb is at 180 degrees.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from physics.records import N_SEGMENTS, Contact

SEGMENTS = ("head", "trunk", "upper arm near", "forearm near", "upper arm far", "forearm far",
            "thigh near", "shank near", "foot near", "thigh far", "shank far", "foot far")
assert len(SEGMENTS) == N_SEGMENTS
HEAD, TRUNK, UARM_N, FARM_N, UARM_F, FARM_F, THIGH_N, SHANK_N, FOOT_N, THIGH_F, SHANK_F, FOOT_F = range(12)
FEET = (FOOT_N, FOOT_F)
SHANKS = (SHANK_N, SHANK_F)

# Landmark heights, fraction of stature (Drillis & Contini via Winter Fig. 4.1).
SHOULDER_H, ELBOW_H, WRIST_H, HIP_H, KNEE_H, ANKLE_H = 0.818, 0.630, 0.485, 0.530, 0.285, 0.039
FOOT_LENGTH, FOOT_WIDTH = 0.152, 0.055
HAND_LENGTH = 0.108  # fraction of stature, from memory (Winter Fig. 4.1)
HEEL_TO_ANKLE = 0.25  # fraction of foot length behind the ankle, from memory

# Mass fractions (Dempster via Winter Table 4.1); forearm and hand are one segment.
MASS_HAND, MASS_FOREARM = 0.006, 0.016
MASS_FRACTION = np.array([0.081, 0.497, 0.028, MASS_FOREARM + MASS_HAND, 0.028, MASS_FOREARM + MASS_HAND,
                          0.100, 0.0465, 0.0145, 0.100, 0.0465, 0.0145])

# Centre of mass, fraction of segment length from the proximal end (Winter
# Table 4.1). Head+neck measured from the shoulder: 0.55 is from memory.
COM_HAND, COM_FOREARM = 0.506, 0.430
_forearm_len = ELBOW_H - WRIST_H
_farm_com = (MASS_FOREARM * COM_FOREARM * _forearm_len
             + MASS_HAND * (_forearm_len + COM_HAND * HAND_LENGTH)) / (MASS_FOREARM + MASS_HAND)
_farm_len = _forearm_len + HAND_LENGTH

LENGTH_FRACTION = np.array([1.0 - SHOULDER_H, SHOULDER_H - HIP_H, SHOULDER_H - ELBOW_H, _farm_len,
                            SHOULDER_H - ELBOW_H, _farm_len, HIP_H - KNEE_H, KNEE_H - ANKLE_H, FOOT_LENGTH,
                            HIP_H - KNEE_H, KNEE_H - ANKLE_H, FOOT_LENGTH])
COM_FRACTION = np.array([0.55, 0.50, 0.436, _farm_com / _farm_len, 0.436, _farm_com / _farm_len,
                         0.433, 0.433, 0.50, 0.433, 0.433, 0.50])

# Breadth facing the wind and depth front-to-back, fraction of stature (from
# memory: adult anthropometry, rounded). Feet use foot width and ankle height.
BREADTH_FRACTION = np.array([0.075, 0.19, 0.055, 0.045, 0.055, 0.045, 0.09, 0.06, FOOT_WIDTH,
                             0.09, 0.06, FOOT_WIDTH])
DEPTH_FRACTION = np.array([0.11, 0.12, 0.055, 0.045, 0.055, 0.045, 0.09, 0.06, ANKLE_H,
                           0.09, 0.06, ANKLE_H])
# Cross-flow drag coefficient of a limb or trunk as a circular-ish cylinder at
# Re ~ 1e5 (about 1.0-1.2; from memory, Hoerner Fluid-Dynamic Drag ch. 3).
CROSSFLOW_CD = np.full(N_SEGMENTS, 1.1)
# End-on drag of blunt segments (head, trunk, feet) so that a body lying along
# the flow still takes drag; a blunt end has Cd about 0.8, the trunk behind the
# rounded head and shoulders about 0.6 (both from memory).
AXIAL_CD = np.array([0.8, 0.6, 0, 0, 0, 0, 0, 0, 0.8, 0, 0, 0.8])
# In a side wind each segment shows its depth instead of its breadth, and the far arm and leg stand
# in the wake of the near ones a diameter or two downstream, where a tandem cylinder takes little
# drag (Zdravkovich's review of tandem cylinders, from memory): they count at SIDE_SHELTER. The
# near arm hangs against the trunk's flank and counts in full. Side-on drag area of the standing
# figure over its frontal drag area: side_ratio() (about 0.6).
SIDE_SHELTER = 0.1
SIDE_WEIGHT = np.array([1, 1, 1, 1, SIDE_SHELTER, SIDE_SHELTER, 1, 1, 1, SIDE_SHELTER, SIDE_SHELTER, SIDE_SHELTER])

# Half the width of the support across the roof, fraction of stature (the frontal plane; the
# figure itself is drawn in one plane). Feet: the outer edges of feet set about hip width apart in
# a natural stance, wider in a brace; a walk's base is a narrower step width (about 0.1 m between
# the feet's centres); knees and hands, and a body lying, are wider. All from memory.
HALF_WIDTH_FRACTION = {"stand": 0.09, "upright": 0.09, "tuck": 0.09, "spread": 0.09, "brace": 0.17,
                       "crouch": 0.12, "duck": 0.12, "kneel": 0.12, "prone": 0.14, "crawl": 0.14,
                       "walk": 0.06, "run": 0.05}
# Where the limbs sit across the body for the end view, fraction of stature from the midline (from
# memory): shoulders, hips. Only the drawing uses them.
SHOULDER_HALF, HIP_HALF = 0.10, 0.055

# Posture angles in degrees, one per segment in SEGMENTS order.
POSTURES = {
    "stand": [0, 0, 172, 165, 188, 195, 180, 180, 90, 180, 180, 90],
    "brace": [5, 8, 160, 130, 200, 210, 160, 188, 90, 200, 185, 90],
    "crouch": [30, 40, 150, 110, 160, 120, 115, 205, 90, 120, 200, 90],
    "duck": [60, 70, 160, 120, 170, 130, 100, 215, 90, 105, 210, 90],
    "kneel": [0, 0, 170, 160, 190, 200, 180, 270, 270, 180, 270, 270],
    "prone": [90, 90, 100, 90, 100, 90, 270, 270, 270, 270, 270, 270],
    "crawl": [85, 78, 180, 90, 180, 90, 180, 270, 270, 180, 270, 270],
    "tuck": [20, 25, 120, 80, 130, 90, 80, 180, 90, 85, 185, 90],
    "spread": [0, 5, 60, 60, 300, 300, 160, 180, 90, 200, 180, 90],
    "upright": [0, 0, 172, 165, 188, 195, 180, 180, 90, 180, 180, 90],
}
GAIT_POSTURE = {"walk": "stand", "run": "stand", "crawl": "crawl"}
# How the body touches the roof in each posture: feet, knees or the whole body.
CONTACT_OF = {"stand": Contact.FEET, "brace": Contact.FEET, "crouch": Contact.FEET, "duck": Contact.FEET,
              "kneel": Contact.KNEES, "prone": Contact.BODY, "crawl": Contact.BODY,
              "tuck": Contact.FEET, "spread": Contact.FEET, "upright": Contact.FEET}
CONTACT_TOLERANCE = 0.02  # m: a point this close to the roof counts as touching it


def gait_angles(name: str, phase: np.ndarray) -> np.ndarray:
    """Joint angles (deg) over a gait cycle; phase in radians, shape (T,) -> (T, 12).

    Amplitudes are a plausible stick-figure animation (from memory), not a gait
    model; the physics of gait enters through the friction demand instead.
    """
    base = np.array(POSTURES[GAIT_POSTURE[name]], dtype=float)
    angles = np.tile(base, (phase.size, 1))
    s = np.sin(phase)
    hip, knee, arm, lean = {"walk": (22, 30, 15, 3), "run": (40, 70, 35, 12), "crawl": (12, 0, 12, 0)}[name]
    angles[:, THIGH_N] -= hip * s
    angles[:, THIGH_F] += hip * s
    angles[:, SHANK_N] = angles[:, THIGH_N] + knee * np.clip(-s, 0, None) + (5 if name != "crawl" else 90)
    angles[:, SHANK_F] = angles[:, THIGH_F] + knee * np.clip(s, 0, None) + (5 if name != "crawl" else 90)
    if name == "crawl":
        angles[:, SHANK_N] = angles[:, SHANK_F] = 270
    angles[:, UARM_N] += arm * s
    angles[:, UARM_F] -= arm * s
    angles[:, TRUNK] += lean
    angles[:, HEAD] += lean
    if name == "run":
        angles[:, FARM_N] = angles[:, UARM_N] - 90
        angles[:, FARM_F] = angles[:, UARM_F] - 90
    return angles


def _direction(deg: np.ndarray) -> np.ndarray:
    rad = np.radians(deg)
    return np.stack([np.sin(rad), np.cos(rad)], axis=-1)


def segment_endpoints(angles_deg: np.ndarray, stature: float) -> np.ndarray:
    """Forward kinematics: angles (T, 12) -> endpoints (T, 12, 2, 2) [seg, prox/dist, x/z].

    Origin at the hip, body frame (x toward facing direction, z up).
    """
    d = _direction(np.asarray(angles_deg, dtype=float))
    length = LENGTH_FRACTION * stature
    hip = np.zeros(d.shape[:-2] + (2,))
    ends = np.zeros(d.shape[:-2] + (N_SEGMENTS, 2, 2))

    def put(seg, start):
        ends[..., seg, 0, :] = start
        ends[..., seg, 1, :] = start + length[seg] * d[..., seg, :]
        return ends[..., seg, 1, :]

    shoulder = put(TRUNK, hip)
    put(HEAD, shoulder)
    put(FARM_N, put(UARM_N, shoulder))
    put(FARM_F, put(UARM_F, shoulder))
    for thigh, shank, foot in ((THIGH_N, SHANK_N, FOOT_N), (THIGH_F, SHANK_F, FOOT_F)):
        ankle = put(shank, put(thigh, hip))
        foot_dir = d[..., foot, :]
        # The sole lies below the ankle by the ankle height, perpendicular to the foot.
        sole_normal = np.stack([foot_dir[..., 1], -foot_dir[..., 0]], axis=-1)
        heel = ankle - HEEL_TO_ANKLE * length[foot] * foot_dir - ANKLE_H * stature * np.abs(sole_normal)
        put(foot, heel)
    return ends


@dataclass(frozen=True)
class BodyConstants:
    """Per-segment constants of one performer (SI)."""

    stature: float
    length: np.ndarray        # (12,) m
    mass_fraction: np.ndarray  # (12,)
    com_fraction: np.ndarray   # (12,)
    crossflow_area: np.ndarray  # (12,) Cd * breadth * length, m^2 (before calibration)
    axial_area: np.ndarray      # (12,) Cd * end area, m^2 (before calibration)
    side_area: np.ndarray       # (12,) Cd * depth * length in a side wind, sheltered limbs less, m^2


def body_constants(stature: float) -> BodyConstants:
    length = LENGTH_FRACTION * stature
    breadth = BREADTH_FRACTION * stature
    depth = DEPTH_FRACTION * stature
    end_area = np.pi / 4.0 * breadth * depth
    return BodyConstants(stature, length, MASS_FRACTION.copy(), COM_FRACTION.copy(),
                         CROSSFLOW_CD * breadth * length, AXIAL_CD * end_area,
                         CROSSFLOW_CD * SIDE_WEIGHT * depth * length)


def side_ratio(stature: float = 1.75) -> float:
    """Side-on over head-on drag area of the standing figure (the segment table, SIDE_SHELTER)."""
    c = body_constants(stature)
    upright = np.ones(N_SEGMENTS, dtype=bool)
    upright[list(FEET)] = False
    return float(np.sum(c.side_area[upright]) / np.sum(c.crossflow_area[upright]))


def frontal_area_standing(stature: float) -> float:
    """Frontal area (m^2) of the standing figure: breadth x length of upright
    segments plus the feet end-on."""
    c = body_constants(stature)
    breadth = BREADTH_FRACTION * stature
    depth = DEPTH_FRACTION * stature
    upright = np.ones(N_SEGMENTS, dtype=bool)
    upright[list(FEET)] = False
    return float(np.sum(breadth[upright] * c.length[upright]) + np.sum((breadth * depth)[list(FEET)]))


def standing_drag_area(stature: float) -> float:
    """Cd*A (m^2) of the standing figure in a headwind, before any calibration."""
    ends = segment_endpoints(np.array([POSTURES["stand"]], float), stature)
    return float(drag_area(ends, body_constants(stature))[0])


def drag_area(endpoints: np.ndarray, constants: BodyConstants, wind_dir=(1.0, 0.0)) -> np.ndarray:
    """Cd*A (m^2) of a posture in a unit wind along wind_dir (x, z): (T,).

    Cross-flow principle: each segment sees the wind component normal to its
    axis, plus the end-on term of blunt segments.
    """
    axis = endpoints[..., 1, :] - endpoints[..., 0, :]
    e = axis / np.maximum(np.linalg.norm(axis, axis=-1, keepdims=True), 1e-12)
    w = np.asarray(wind_dir, dtype=float)
    along = e @ w
    normal = np.sqrt(np.maximum(0.0, 1.0 - along**2))
    # The cross-flow force q A |w_n| w_n has the along-wind part A sin^3(beta);
    # the end-on force the along-wind part A |cos(beta)|^3.
    return np.sum(constants.crossflow_area * normal**3 + constants.axial_area * np.abs(along) ** 3, axis=-1)


def segment_air_forces(axes: np.ndarray, lean: float, wind, q_cross: np.ndarray, q_axial: np.ndarray) -> np.ndarray:
    """(12, 2) force (x, z) on each segment of a posture leaned by `lean`, N.

    axes: (12, 4) midpoint and unit axis (x, z) of the unleaned segments; wind:
    the apparent wind (x, y, z), m/s; q_cross, q_axial: 1/2 rho Cd A per segment.
    The engine's cross-flow rule (physics/README.md, "Air loads") for display
    and cross-checks.
    """
    c, s = np.cos(lean), np.sin(lean)
    ex = axes[:, 2] * c + axes[:, 3] * s
    ez = -axes[:, 2] * s + axes[:, 3] * c
    wx, wy, wz = wind
    along = wx * ex + wz * ez
    nx, nz = wx - along * ex, wz - along * ez
    nmag = np.sqrt(nx * nx + wy * wy + nz * nz)
    fx = q_cross * nmag * nx + q_axial * np.abs(along) * along * ex
    fz = q_cross * nmag * nz + q_axial * np.abs(along) * along * ez
    return np.stack([fx, fz], axis=-1)
