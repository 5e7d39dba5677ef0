"""Time and memory of the largest beats roofbeat accepts (not part of the test run):
python tests/benchmarks/bench_memory.py

Each command runs in its own process on the longest accepted beat (150,000
engine steps: a walk of 625 s at 240 Hz) and on a 10-minute beat with ten
ducks under ten bridges; the peak resident memory of the process (ru_maxrss)
is printed against the 500 MB budget, with the wall time.
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))

from tests.conftest import scene_text  # noqa: E402

BUDGET_MB = 500.0


def longest_walk() -> str:
    walk = 'do = "walk"\nspeed = "0.1 m/s"\ntoward = "rear"\nduration = "{d} s"\ntransition = "0.5 s"'
    return scene_text(speed="60 km/h", body="segmented", actions=[walk.format(d=600), walk.format(d=25)],
                      cars=['name = "long"\nlength = "100 m"\nroof_height = "4 m"'],
                      start='car = 1\nposition = "1 m"')


def ten_ducks() -> str:
    actions, bridges = [], []
    for k in range(10):
        actions += ['do = "stand"\nduration = "50 s"\ntransition = "0.5 s"',
                    'do = "duck"\nduration = "10 s"\ntransition = "0.8 s"']
        bridges.append(f'[[structures]]\nkind = "bridge"\nreached_at = "{60 * k + 55} s"\nspan = "6 m"\n'
                       'soffit = "5.2 m"')
    return scene_text(speed="40 km/h", body="segmented", actions=actions, extra="\n".join(bridges),
                      cars=['name = "wagon"\nlength = "20 m"\nroof_height = "3.6 m"'])


def measure(label: str, args: list[str]) -> None:
    code = ("import resource, sys\nfrom preview.cli import main\ncode = main(sys.argv[1:])\n"
            "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, code, file=sys.stderr)")
    t0 = time.perf_counter()
    run = subprocess.run([sys.executable, "-c", code, *args], cwd=REPO, capture_output=True, text=True)
    wall = time.perf_counter() - t0
    peak_kb, status = run.stderr.strip().splitlines()[-1].split()
    peak = int(peak_kb) / 1024
    verdict = "within" if peak <= BUDGET_MB else "OVER"
    print(f"{label}: exit {status}, {wall:.1f} s, peak {peak:.0f} MB ({verdict} the {BUDGET_MB:.0f} MB budget, "
          f"ratio {BUDGET_MB / peak:.2f})")


def main() -> None:
    with tempfile.TemporaryDirectory() as folder:
        walk = Path(folder) / "longest_walk.toml"
        walk.write_text(longest_walk())
        ducks = Path(folder) / "ten_ducks.toml"
        ducks.write_text(ten_ducks())
        measure("check, longest accepted beat (150,000 steps)", ["check", str(walk)])
        measure("envelope 41 points, longest beat", ["envelope", str(walk), "--vary", "speed=20..80 km/h"])
        measure("risk 200 samples, longest beat", ["risk", str(walk), "--samples", "200"])
        measure("render 60 s of it as GIF at 1280x720", ["render", str(walk), "-o", str(Path(folder) / "w.gif"),
                                                        "--to", "60", "--fps", "10"])
        measure("check, 10 minutes with ten ducks (latest duck start each)", ["check", str(ducks)])


if __name__ == "__main__":
    main()
