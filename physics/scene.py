"""The Scene: everything a beat needs, frozen, in SI floats.

Built once by physics.scene_load from a TOML file; nothing downstream parses
units again. Positions on the consist are in the car frame: x = 0 at the
front end of the lead car, x negative toward the rear.
"""

from __future__ import annotations

from dataclasses import dataclass, field


# What a car is, for the pictures only: a consist is all rail cars or all road vehicles. A road
# vehicle's length and roof height are the roof a performer stands on (a tractor unit's cab roof,
# a trailer's deck or box roof, a rigid truck's box); the rest of it (a tractor's chassis and
# coupling deck behind its cab, a rigid truck's cab ahead of its box) is drawn outside that roof.
RAIL_KINDS = ("rail car",)
ROAD_KINDS = ("tractor unit", "box trailer", "flatbed trailer", "rigid box truck")
CAR_KINDS = RAIL_KINDS + ROAD_KINDS


@dataclass(frozen=True)
class Car:
    name: str
    length: float
    roof_height: float
    gap_behind: float
    surface: str
    sole_static: float
    sole_kinetic: float
    body_static: float
    body_kinetic: float
    front_x: float  # car frame, m
    rear_x: float
    width: float = 2.8   # roof width, m (scene_load.DEFAULT_WIDTH)
    crown: float = 0.0   # rise of the roof's centreline over its side edges, m
    kind: str = "rail car"   # CAR_KINDS: what is drawn (physics is the same for every kind)

    @property
    def road(self) -> bool:
        """A road vehicle (a truck or trailer on a road), not a rail car."""
        return self.kind in ROAD_KINDS

    def roof_z(self, y):
        """Roof height (m above rail) at y across the roof from its centreline (a parabolic crown)."""
        return self.roof_height - self.crown * (2.0 * y / self.width) ** 2

    @property
    def body_bottom(self) -> float:
        """Height above rail (m) of the underside of the car body as drawn: the underframe of a coach
        or wagon is about 1.1 m up (from memory), lower on a low flat car. Road vehicles (drawing values,
        from memory): a flatbed trailer's deck is about 0.35 m deep; a box's floor about 1.2 m up; a
        tractor unit's cab sits about 1 m up."""
        if self.kind == "flatbed trailer":
            return max(0.3 * self.roof_height, self.roof_height - 0.35)
        if self.kind in ("box trailer", "rigid box truck"):
            return min(1.2, 0.3 * self.roof_height)
        if self.kind == "tractor unit":
            return min(1.0, 0.35 * self.roof_height)
        return min(1.1, 0.3 * self.roof_height)


@dataclass(frozen=True)
class Keyframe:
    time: float
    speed: float


@dataclass(frozen=True)
class Gust:
    start: float
    duration: float
    peak: float
    from_direction: float


@dataclass(frozen=True)
class Turbulence:
    intensity: float     # standard deviation of the along-track component, m/s
    length_scale: float  # m
    seed: int


@dataclass(frozen=True)
class Air:
    density: float
    altitude: float
    temperature: float | None
    wind_speed: float
    wind_from: float
    gusts: tuple[Gust, ...] = ()
    turbulence: Turbulence | None = None
    roof_flow: object = None   # physics.roof_air.RoofFlow when the air over the roof is on, else None (uniform)


@dataclass(frozen=True)
class Performer:
    stature: float
    mass: float
    drag_area: float | None   # standing Cd*A to calibrate to, m^2
    body_model: str           # "segmented" | "lumped"
    facing: int               # +1 toward the front of the consist, -1 toward the rear
    reaction_time: float
    max_lean: float           # rad
    recovery_step: float      # m, 0 for none
    standing_long_jump: float | None


@dataclass(frozen=True)
class Action:
    kind: str
    start: float
    duration: float
    transition: float
    speed: float = 0.0          # gait speed relative to the roof, m/s (>= 0)
    toward: int = 1             # +1 front, -1 rear
    gait_friction: float = 0.0  # peak horizontal gait force / body weight
    # Jumps (kind == "jump"):
    takeoff_x: float | None = None      # car frame, m
    takeoff_speed: float = 0.0          # relative to the roof, m/s
    takeoff_angle: float = 0.0          # rad above horizontal
    air_posture: str = "tuck"
    landing_car: int | None = None      # 0-based
    label: str = ""
    angle: float = 0.0                  # gaits: heading across the roof from the track's axis, rad (+ left)
    # Two performers: what this action does to the other one (INTERACTION_KINDS; "" none) and the
    # partner's name; `kind` is then the posture held while doing it.
    interaction: str = ""
    partner: str = ""

    @property
    def end(self) -> float:
        return self.start + self.duration


INTERACTION_KINDS = ("shove", "punch", "grab", "pull", "throw", "catch")


@dataclass(frozen=True)
class Interaction:
    """One performer acting on the other (physics.partners), from one of the actor's actions; SI, car axes."""

    kind: str                 # INTERACTION_KINDS
    actor: int                # 0 or 1: the performer whose action it is (Scene.cast order)
    partner: int
    action: int               # index of the action in the actor's own actions
    start: float
    end: float
    force: float              # a push's peak force, N (0 for a hold or a catch, a pulled punch)
    steady: bool              # a push held steady (ramped in and out) instead of a pulse
    direction: str            # "toward" (away from the actor; a pull: toward it), or "front", "rear", "left", "right"
    up: float                 # the push's angle above the horizontal, rad
    reach: float              # m, shoulders to the partner's shoulders (in the air their centre of mass)
    breaking: float           # a hold's or a catch's breaking force, N
    stiffness: float          # N/m
    damping: float            # ratio
    impulse: float = 0.0      # a contact punch's stated impulse, N s (its force is impulse / duration x pi / 2)
    contact: bool = True      # a punch: False when pulled short (no force reaches the partner)

    @property
    def link_code(self) -> str:
        return {"grab": "hold", "catch": "catch"}.get(self.kind, "push")


@dataclass(frozen=True)
class Structure:
    kind: str
    name: str
    x_start: float   # ground frame, m
    span: float
    soffit: float    # above rail, m


@dataclass(frozen=True)
class Line:
    x_start: float
    x_end: float
    wire_height: float
    exclusion: float


@dataclass(frozen=True)
class Safety:
    grip_ratio: float
    balance_margin: float
    lift_ratio: float
    landing_margin: float
    clearance: float
    edge_margin: float = 0.5   # m from the support to the nearer side edge (roofbeat's default, not a standard)
    # Rigging limits (physics.rigging.LIMIT_SOURCES names the source of each default):
    arrest_force: float = 8000.0           # N on the body
    anchor_load: float = 22240.0           # N per anchor, per person
    free_fall: float = 1.8                 # m
    deceleration_distance: float = 1.07    # m


@dataclass(frozen=True)
class Tether:
    """A tether from a point anchor or a running line's ring to the harness (the body's centre of mass);
    car frame, SI. A point anchor has line_x0 == line_x1 == anchor_x."""

    name: str
    car: int                 # 0-based
    anchor_x: float
    anchor_y: float          # + left
    anchor_z: float          # above rail
    height: float            # the anchor (or line) above the roof there, m
    running: bool
    line_x0: float
    line_x1: float
    length: float
    stiffness: float         # N/m
    material: str            # "" when the stiffness is given
    damping_ratio: float
    deploy_force: float      # N (inf: no absorber)
    max_extension: float     # m (0: no absorber)
    sag: float               # a running line's sag at mid-span under load, m (0 for a point anchor)

    @property
    def absorber(self) -> bool:
        return self.max_extension > 0.0


@dataclass(frozen=True)
class Scene:
    title: str
    source: str
    units: str
    frame_rate: int
    cars: tuple[Car, ...]
    keyframes: tuple[Keyframe, ...]
    air: Air
    performer: Performer
    start_x: float
    start_car: int
    actions: tuple[Action, ...]
    safety: Safety
    step: float
    structures: tuple[Structure, ...] = ()
    lines: tuple[Line, ...] = ()
    jerk: float = 2.0    # m/s^3, how fast the consist's acceleration changes (physics.consist.DEFAULT_JERK)
    start_y: float = 0.0  # m across the roof from its centreline, + left in the direction of travel
    track: tuple = ()     # physics.track.TrackSection, in order from where the lead car's front is at t = 0
    ride: object = None   # physics.track.Ride or None (no ride vibration)
    flexibility: float = 0.25  # the car bodies' roll per unit of cant deficiency (physics.track.DEFAULT_FLEXIBILITY)
    speed_log: object = None   # physics.speed_log.SpeedLog when the speed comes from a measured log
    rigging: tuple = ()        # Tether, in the scene's order
    # Two performers ([[performers]]): each one's own scene (its performer, start and actions; the rest
    # shared) in the file's order, and what they do to each other. The scene itself is then the first
    # performer's, so what reads one performer reads the first; `name` is the performer's name.
    cast: tuple = ()
    interactions: tuple = ()   # Interaction
    name: str = ""
    raw: dict = field(default_factory=dict, compare=False, repr=False)
    # Spread (SI, +/-) of values written with an uncertainty, by sweep parameter
    # name (speed, wind_speed, mass, drag_area, reaction_time) or, for a car's
    # roof_static, "roof_static@" and the car's index.
    uncertain: dict = field(default_factory=dict, compare=False)

    @property
    def duration(self) -> float:
        return self.actions[-1].end

    @property
    def road(self) -> bool:
        """The consist is road vehicles on a road (drawn with a road, not a track); physics is the same."""
        return bool(self.cars) and all(car.road for car in self.cars)

    @property
    def pair(self) -> bool:
        """Two performers on the roof."""
        return len(self.cast) > 1

    @property
    def performers(self) -> tuple:
        """Each performer's own scene: the cast, or the scene itself for one performer."""
        return self.cast if self.cast else (self,)

    def shared(self, **changes) -> "Scene":
        """The scene with `changes` to what every performer shares (units, air, consist, motion, ...) made
        in each performer's own scene too: a pair runs and is shown from its cast's scenes."""
        import dataclasses
        cast = tuple(dataclasses.replace(part, **changes) for part in self.cast)
        return dataclasses.replace(self, cast=cast, **changes)

    def car_at(self, x: float) -> int | None:
        """Index of the car whose roof spans car-frame x, or None (gap or off the ends)."""
        for i, car in enumerate(self.cars):
            if car.rear_x <= x <= car.front_x:
                return i
        return None
