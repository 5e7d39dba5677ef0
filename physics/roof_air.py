"""The air over the roof: how the wind a body meets changes with its height above the roof and its
place along the consist (physics/README.md, "The air over the roof"). Off unless a scene sets
`air.roof_profile = "on"`; off, every height meets the free stream, as before.

The model, a scene-adjustable sketch of what full-scale measurements show:
- A boundary layer grows from the lead car's front (x = 0 in the car frame, plus any train ahead
  of the scene's first car) by the turbulent flat-plate law delta / x = 0.16 Re_x^(-1/7),
  Re_x = U x / nu, U the air's speed along the track relative to the cars (F. M. White, Fluid
  Mechanics, the one-seventh-power estimate of the turbulent flat plate; from memory of the book,
  and the issue's check value 1.04 m at 30 m/s, x = 100 m, nu = 1.5e-5 m^2/s is tested).
- Each gap between cars and each bluff end ahead adds a thickness (`gap_thickness`, default
  0.6 m). That default is roofbeat's own, chosen so that the mid-train displacement thickness
  of a 30-wagon freight train falls inside the band full-scale freight measurements give, about
  1.6 m (0.5-3 m) (Monash University group, J. Wind Eng. Ind. Aerodyn. 2020, article 104164; tested).
  A flat plate alone gives about a fifth of that: the gaps and ends are what thicken a train's layer.
- Inside it a power-law profile u / U = (z / delta)^(1/n), n = 7 (the one-seventh power law of
  turbulent boundary layers; its displacement thickness is delta / (n + 1)).
- Over the first metres of a streamlined lead car the flow speeds up (`speed_up`, default 1.15
  over `speed_up_length` 4 m: from memory). Behind a bluff lead front edge the flow separates:
  a low-speed zone `separation_length` long (4 m) and `separation_height` high (0.5 m), in which
  the air keeps `low_speed_share` (0.3) of its velocity relative to the car (from memory). Behind a
  step up from one roof to a higher one, the same zone, `step_zone_length` (4) step heights long
  and `step_zone_height` (0.5) step heights high (from memory).
- The air's viscosity is Sutherland's law as the US Standard Atmosphere 1976 states it,
  mu = 1.458e-6 T^1.5 / (T + 110.4) Pa s (checked against the `fluids` package), divided by the
  scene's air density.
The same share applies to the air's velocity across the track as along it (the layer is grown by
the flow along the train; a side wind's own layer is not modelled). The profile applies on a roof
and over it; beside the cars, over a gap and once a body is off the consist the free stream acts.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from physics.air import isa_temperature

FLAT_PLATE = 0.16          # delta / x = 0.16 Re_x^(-1/7) (White, turbulent flat plate)
PROFILE_POWER = 7.0        # u / U = (z / delta)^(1/7)
SUTHERLAND_BETA = 1.458e-6  # kg / (m s K^0.5), US Standard Atmosphere 1976
SUTHERLAND_S = 110.4       # K
STEP_UP = 0.05             # m: a roof this much higher than the one ahead is a step up
LEAD_FRONTS = ("bluff", "streamlined")


@dataclass(frozen=True)
class RoofFlow:
    """The coefficients of the air over the roof (SI); every one a scene value under `[air.roof_flow]`."""

    lead_front: str = "bluff"          # the lead car's front: "bluff" (separates) or "streamlined" (speeds up)
    train_ahead: float = 0.0           # m of train ahead of the scene's first car
    cars_ahead: int = 0                # gaps and ends in that train ahead
    gap_thickness: float = 0.6         # m added to the layer at each gap or end ahead
    power: float = PROFILE_POWER       # n of u / U = (z / delta)^(1/n)
    plate: float = FLAT_PLATE          # coefficient of the flat-plate law
    speed_up: float = 1.15             # over a streamlined lead front (from memory)
    speed_up_length: float = 4.0       # m back from the lead front
    separation_length: float = 4.0     # m: the low-speed zone behind a bluff lead front edge (from memory)
    separation_height: float = 0.5     # m
    step_zone_length: float = 4.0      # step heights: the low-speed zone behind a step up (from memory)
    step_zone_height: float = 0.5      # step heights
    low_speed_share: float = 0.3       # share of the air's velocity kept in a low-speed zone (from memory)


def viscosity(temperature: float) -> float:
    """Dynamic viscosity of air (Pa s) at a temperature (K): Sutherland's law (US Std Atm 1976)."""
    return SUTHERLAND_BETA * temperature ** 1.5 / (temperature + SUTHERLAND_S)


def air_temperature(air) -> float:
    """The scene's air temperature (K): stated, else the ISA temperature of its altitude."""
    return air.temperature if air.temperature is not None else isa_temperature(air.altitude)


def flat_plate_thickness(run, speed, nu, plate: float = FLAT_PLATE):
    """Turbulent flat-plate boundary layer thickness (m) at `run` m from the leading edge in a stream of
    `speed` m/s of kinematic viscosity nu (m^2/s): plate x Re_x^(-1/7). Floats or arrays."""
    run = np.maximum(np.asarray(run, dtype=float), 0.0)
    with np.errstate(divide="ignore"):
        out = plate * run * (speed * run / nu) ** (-1.0 / 7.0)
    return np.where(run > 0.0, out, 0.0)


def thickness(flow: RoofFlow, scene, x, speed, nu):
    """Boundary layer thickness (m) over the scene's roofs at car-frame x (m, negative toward the rear) for
    air moving along the train at `speed` m/s relative to it; the engine's own reckoning (roof_flow)."""
    car = scene.car_at(x)
    gaps = flow.cars_ahead + (car if car is not None else 0)
    return float(flat_plate_thickness(flow.train_ahead - x, speed, nu, flow.plate)) + flow.gap_thickness * gaps


def displacement_thickness(delta: float, power: float = PROFILE_POWER) -> float:
    """Displacement thickness of a power-law layer: delta / (n + 1)."""
    return delta / (power + 1.0)


def share(z, delta, power=PROFILE_POWER, gain=1.0, zone_height=0.0, zone_share=1.0, min_height=0.01):
    """The share of the air's velocity relative to the car kept at heights z (m) above the roof: the
    engine's flow_factor, for pictures and tests. Arrays or floats."""
    z = np.asarray(z, dtype=float)
    inside = gain * (np.maximum(z, min_height) / max(delta, 1e-12)) ** (1.0 / power)
    out = np.where(z >= delta, gain, inside)
    return np.where(z < zone_height, zone_share, out)


def car_fields(flow: RoofFlow | None, cars) -> dict[str, np.ndarray]:
    """Per car, the engine's records.CAR fields of the air over its roof."""
    n = len(cars)
    out = {"flow_added": np.zeros(n), "speedup": np.ones(n), "speedup_length": np.zeros(n),
           "zone_length": np.zeros(n), "zone_height": np.zeros(n)}
    if flow is None or not n:
        return out
    out["flow_added"] = flow.gap_thickness * (flow.cars_ahead + np.arange(n))
    lead = flow.cars_ahead == 0 and flow.train_ahead == 0.0
    if lead and flow.lead_front == "streamlined":
        out["speedup"][0] = flow.speed_up
        out["speedup_length"][0] = flow.speed_up_length
    elif lead:
        out["zone_length"][0] = flow.separation_length
        out["zone_height"][0] = flow.separation_height
    for i in range(1, n):
        step = cars[i].roof_height - cars[i - 1].roof_height
        if step > STEP_UP:
            out["zone_length"][i] = flow.step_zone_length * step
            out["zone_height"][i] = flow.step_zone_height * step
    return out


def airflow_row(flow: RoofFlow | None, air) -> np.ndarray:
    """The engine's records.AIRFLOW row for the scene's air."""
    from physics.records import AIRFLOW
    row = np.zeros(1, AIRFLOW)
    row["on"] = flow is not None
    f = flow or RoofFlow()
    row["inv_n"] = 1.0 / f.power
    row["plate"] = f.plate
    row["ahead"] = f.train_ahead
    row["zone_factor"] = f.low_speed_share
    row["viscosity"] = viscosity(air_temperature(air))
    return row


def without_roof_air(scene):
    """The same scene with the air over the roof off: the free stream at every height, the bound the
    profile's soft coefficients relax."""
    import dataclasses
    return scene.shared(air=dataclasses.replace(scene.air, roof_flow=None))
