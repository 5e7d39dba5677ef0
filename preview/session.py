"""What every command shares: the bundled scenes, loading a scene from the
command line, the errors a command reports, and turning a scene into a
playback (a recorded run and its verdicts).

Exit codes: 0 the job ran (a failing beat is a result, not an error); 2 a
usage error; 3 the scene has problems; 4 an output could not be written or
another run-time problem.
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import resources
from pathlib import Path

EXIT_USAGE = 2
EXIT_SCENE = 3
EXIT_RUNTIME = 4
EXIT_INTERNAL = 5    # a defect of roofbeat's own, said in one line
DEFAULT_SCENE = "heritage_excursion.toml"


class OutputError(Exception):
    """An output that could not be written, or a run-time problem; the message says which and why."""


class UsageError(Exception):
    """An option value that cannot be used (exit 2); the message names the option and what it expects."""


def scenes_folder() -> Path:
    """The bundled scenes, wherever roofbeat is installed."""
    return Path(str(resources.files("scenes")))


def default_scene() -> Path:
    return scenes_folder() / DEFAULT_SCENE


def bundled_scenes() -> list[Path]:
    return sorted(scenes_folder().glob("*.toml"))


def scene_path(name: str | None) -> Path:
    """The scene file a command names: a path, or the name of a bundled scene (with or without
    .toml) when no such file exists here; the default scene when none is named."""
    if not name:
        return default_scene()
    path = Path(name)
    if not path.exists() and path.name == name:
        for candidate in (scenes_folder() / name, scenes_folder() / f"{name}.toml"):
            if candidate.is_file():
                return candidate
    return path


def load(args):
    """The scene named on the command line (or the default), with its --set overrides."""
    from physics.scene_load import Problem, SceneError, load_scene
    path = scene_path(args.scene)
    overrides = list(args.overrides) + ([f'units="{args.units}"'] if getattr(args, "units", None) else [])
    if not path.exists():
        bare = args.scene is not None and Path(args.scene).name == args.scene
        words = ", and no bundled scene of that name (`roofbeat scenes` lists them)" if bare else ""
        raise SceneError(str(path), [Problem("(file)", f"cannot read the file: no such file{words}", None)])
    return load_scene(path, overrides)


@dataclass(frozen=True)
class Playback:
    """A recorded run with its summary (verdicts, events), computed once."""

    trajectory: object
    summary: dict

    @property
    def scene(self):
        return self.trajectory.scene


def make_playback(scene, variant=None) -> Playback:
    """Simulate and summarise: verdicts, events, what became of the body after a failure
    (`aftermath`), when the performer reaches each structure (`arrivals`) and, for the scene
    as written (no what-if variant), the latest start of each duck that still clears (`ducks`)."""
    from physics.aftermath import phases
    from physics.hazards import latest_duck_starts
    from physics.simulation import simulate
    from physics.verdict import beat_summary
    trajectory = simulate(scene, variant)
    summary = beat_summary(trajectory)
    summary["aftermath"] = phases(trajectory)
    if scene.pair:
        pair_aftermath(trajectory, summary)
    summary["arrivals"] = structure_arrivals(trajectory)
    summary["ducks"] = latest_duck_starts(scene) if variant is None else []
    summary["apparent_wind_whole_beat_ms"] = whole_beat_wind(trajectory)
    summary["uniform_air"] = uniform_air_verdict(scene, variant)
    if scene.rigging:
        from physics.rigging import rigging_summary
        summary["rigging"] = rigging_summary(trajectory)
    return Playback(trajectory, summary)


def pair_aftermath(trajectory, summary: dict) -> None:
    """Two performers: each one's phases after its own first failure (in its `performers` entry), and
    the beat's `aftermath` those of the performer whose failure came first."""
    from physics.aftermath import cast_phases
    per = cast_phases(trajectory)
    for entry, steps in zip(summary["performers"], per):
        entry["aftermath"] = steps
    first = summary["first_failure"]
    names = [p["name"] for p in summary["performers"]]
    summary["aftermath"] = per[names.index(first["performer"])] if first else []


def uniform_air_verdict(scene, variant=None) -> dict | None:
    """With the air over the roof on: the same beat with the free stream at every height, the bound the
    profile's coefficients (from memory, or fitted to one published band) relax; None when it is off."""
    from physics.simulation import simulate
    from physics.roof_air import without_roof_air
    from physics.verdict import beat_summary
    if scene.air.roof_flow is None:
        return None
    uniform = without_roof_air(scene)
    s = beat_summary(simulate(uniform, variant))
    first = s["first_failure"]
    return {"verdict": s["verdict"], "first_failure": first["kind"] if first else None,
            "first_failure_s": first["time_s"] if first else None}


def whole_beat_wind(trajectory) -> float:
    """The highest apparent wind the body met anywhere in the run, after a failure too (m/s, horizontal);
    the actions' own maxima stop at the first failure."""
    import numpy as np
    wind = np.concatenate([np.hypot(tr.field("app_x"), tr.field("app_y"))
                           for tr in (trajectory,) + trajectory.partners])
    return float(np.nanmax(wind)) if np.isfinite(wind).any() else 0.0


def structure_arrivals(trajectory) -> list[dict]:
    """When the performer's centre of mass first passes under each structure's near edge (ground frame);
    with two performers each one's own arrivals, named (`performer`), in order of time."""
    import numpy as np
    runs = (trajectory,) + tuple(trajectory.partners)
    out = []
    for k, run in enumerate(runs):
        ground_x = run.com_path[:, 0] + run.field("distance")
        for s in run.scene.structures:
            under = np.flatnonzero(np.nan_to_num(ground_x, nan=-np.inf) >= s.x_start)
            if under.size:
                row = {"name": s.name, "time_s": float(run.times[under[0]])}
                if len(runs) > 1:
                    row["performer"], row["lane"] = run.scene.name, k
                out.append(row)
    return sorted(out, key=lambda row: row["time_s"])
