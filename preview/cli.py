"""The `roofbeat` command line.

Exit codes: 0 the job ran (a failing beat is a result, not an error);
2 usage error (argparse); 3 the scene has problems; 4 an output could not be
written or another run-time problem.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from preview import options
from preview.session import (DEFAULT_SCENE, EXIT_INTERNAL, EXIT_RUNTIME, EXIT_SCENE, EXIT_USAGE, OutputError,
                             UsageError, load)


def _add_scene_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("scene", nargs="?", help=f"scene file (TOML) or a bundled scene's name (see `roofbeat "
                   f"scenes`); default: the bundled {DEFAULT_SCENE}")
    p.add_argument("--set", dest="overrides", action="append", default=[], metavar="PATH=VALUE",
                   help='override a scene value, e.g. --set motion.speed="110 km/h" (repeatable)')
    p.add_argument("--units", choices=("metric", "imperial"), default=None,
                   help="display units for this run (default: the scene's own)")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="roofbeat",
        description="Simulate and previsualise a performer's beat on the roof of a moving train car or truck. "
                    "A planning aid on simplified physics, not a safety certificate.")
    sub = parser.add_subparsers(dest="command", required=True)
    check = sub.add_parser("check", help="simulate a scene and print verdicts with margins")
    _add_scene_args(check)
    check.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    check.add_argument("--log-plot", metavar="PNG", type=options.plot_output, default=None,
                       help="for a scene on a measured speed log: plot its raw and smoothed speed")
    play = sub.add_parser("play", help="play the beat in a preview window")
    _add_scene_args(play)
    render = sub.add_parser("render", help="export the preview headless to MP4, GIF or PNG frames")
    _add_scene_args(render)
    render.add_argument("-o", "--output", required=True, type=options.render_output,
                        help="OUT.mp4, OUT.gif or a folder for PNG frames; OUT.csv (joints, forces per "
                             "frame) or OUT.glb (glTF 2.0 scene) for the beat as data")
    render.add_argument("--frame", choices=("ground", "car", "split", "end", "plan"), default="car",
                        help="car or ground: the side view in that frame; split: both, stacked; end: across the "
                             "track at the performer, looking forward; plan: the roofs from above (car frame)")
    render.add_argument("--trackside", type=options.length, default=None, metavar="GROUND_X",
                        help='ground frame: a camera fixed beside the track at this ground position, e.g. '
                             '"120 m" (the consist passes through); default: the camera follows')
    render.add_argument("--no-legend", dest="legend", action="store_false",
                        help="leave out the legend strip (vector colours, scale bars, timeline marks)")
    render.add_argument("--from", dest="t_from", type=options.seconds, default=None, metavar="SECONDS")
    render.add_argument("--to", dest="t_to", type=options.seconds, default=None, metavar="SECONDS")
    render.add_argument("--fps", type=options.whole(1, 120, "frames per second"), default=None)
    render.add_argument("--size", type=options.frame_size, default=(1280, 720),
                        help="WIDTHxHEIGHT, default 1280x720")
    envelope = sub.add_parser("envelope", help="sweep a parameter and find where the verdict changes")
    _add_scene_args(envelope)
    envelope.add_argument("--vary", action="append", required=True, metavar="PARAM=FROM..TO", type=options.vary,
                          help="speed, wind_speed, wind_from, friction, mass, drag_area, gust or effort, "
                               "e.g. speed=20..140 km/h; twice for a two-parameter map")
    envelope.add_argument("--points", type=options.whole(3, options.MAX_POINTS, "grid points"), default=41,
                          help="grid points before refinement (default 41; a map uses at most 41 a side)")
    envelope.add_argument("--json", action="store_true")
    envelope.add_argument("--plot", metavar="PNG", type=options.plot_output,
                          help="write a plot of the margins (or the map): .png, .pdf or .svg")
    risk = sub.add_parser("risk", help="Monte Carlo over the scene's stated uncertainties (+/-)")
    _add_scene_args(risk)
    risk.add_argument("--samples", type=options.whole(1, options.MAX_SAMPLES, "samples"), default=1000)
    risk.add_argument("--seed", type=options.whole(0, options.MAX_SEED, "a seed"), default=0)
    risk.add_argument("--json", action="store_true")
    ladder = sub.add_parser("ladder", help="rehearsal rungs up to the planned speed, and abort limits")
    _add_scene_args(ladder)
    ladder.add_argument("--rungs", type=options.whole(2, 20, "rungs"), default=5)
    ladder.add_argument("--json", action="store_true")
    brief = sub.add_parser("brief", help="one printable page for the safety meeting (PDF + JSON)")
    _add_scene_args(brief)
    brief.add_argument("-o", "--output", required=True, metavar="BRIEF.pdf", type=options.brief_output)
    brief.add_argument("--paper", choices=("a4", "letter"), default="a4")
    sub.add_parser("scenes", help="list the bundled demo scenes")
    return parser


def cmd_check(args) -> int:
    from preview.report import json_report, text_report
    from preview.session import make_playback
    scene = load(args)
    if args.log_plot is not None:
        from preview.outputs import check_target
        if scene.speed_log is None:
            raise UsageError("--log-plot: the scene's speed does not come from a log ([motion.log])")
        check_target(args.log_plot, folder=False)
    summary = make_playback(scene).summary
    print(json_report(scene, summary) if args.json else text_report(scene, summary))
    if args.log_plot is not None:
        from preview.plots import speed_log_plot
        speed_log_plot(scene, Path(args.log_plot))
        print(f"wrote {args.log_plot}", file=sys.stderr)
    return 0


def cmd_play(args) -> int:
    from preview.window import play
    return play(load(args), args)


def cmd_render(args) -> int:
    from preview.export import render
    return render(load(args), args)


def cmd_envelope(args) -> int:
    from preview.analysis import cmd_envelope as run
    return run(args)


def cmd_ladder(args) -> int:
    from preview.analysis import cmd_ladder as run
    return run(args)


def cmd_risk(args) -> int:
    from preview.analysis import cmd_risk as run
    return run(args)


def cmd_brief(args) -> int:
    from preview.brief import cmd_brief as run
    return run(args)


def cmd_scenes(args) -> int:
    """One line per bundled scene: its name (for `roofbeat check NAME.toml`) and title."""
    import tomllib

    from preview.session import bundled_scenes
    for path in bundled_scenes():
        title = tomllib.loads(path.read_text(encoding="utf-8")).get("title", "")
        default = "  (the default)" if path.name == DEFAULT_SCENE else ""
        print(f"{path.name:<28} {title}{default}")
    print(f"\nfolder: {bundled_scenes()[0].parent}" if bundled_scenes() else "no bundled scenes found")
    return 0


COMMANDS = {"scenes": cmd_scenes, "check": cmd_check, "play": cmd_play, "render": cmd_render, "envelope": cmd_envelope,
            "risk": cmd_risk, "ladder": cmd_ladder, "brief": cmd_brief}


def main(argv: list[str] | None = None) -> int:
    try:
        args = build_parser().parse_args(argv)
    except SystemExit as exc:  # usage errors (exit 2) and --help (exit 0), as a return value
        return exc.code if isinstance(exc.code, int) else (0 if exc.code is None else EXIT_USAGE)
    from physics.scene_load import SceneError
    from preview.outputs import Terminated, raise_on_sigterm
    raise_on_sigterm()
    try:
        return COMMANDS[args.command](args)
    except SceneError as exc:
        print(exc.render(), file=sys.stderr)
        return EXIT_SCENE
    except UsageError as exc:
        print(f"roofbeat {args.command}: {exc}", file=sys.stderr)
        return EXIT_USAGE
    except OutputError as exc:
        print(f"roofbeat: {exc}", file=sys.stderr)
        return EXIT_RUNTIME
    except BrokenPipeError:
        return 0
    except KeyboardInterrupt:
        print("roofbeat: interrupted; nothing was left half-written", file=sys.stderr)
        return 130
    except Terminated:
        print("roofbeat: stopped (SIGTERM); nothing was left half-written", file=sys.stderr)
        return 143
    except Exception as exc:  # a defect of ours: say so plainly, no traceback
        print(f"roofbeat: internal error ({type(exc).__name__}: {exc}); please report it with the scene file",
              file=sys.stderr)
        return EXIT_INTERNAL


if __name__ == "__main__":
    sys.exit(main())
