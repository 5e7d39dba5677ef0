"""The engine as installed and run: one compiled kernel, where its cache lives, the
plain-Python fallback, and the bundled scenes of an installed copy. Real
subprocesses, real folders, a real `pip install`."""

import json
import os
import subprocess
import sys

import pytest

from physics.engine import driver, jit
from tests.conftest import REPO, SCENES, scene_text

SHORT_SCENE = scene_text(speed="80 km/h", body="segmented", wind="4 m/s", actions=[
    'do = "stand"\nduration = "1.5 s"\ntransition = "0 s"',
    'do = "walk"\nspeed = "1 m/s"\ntoward = "rear"\nduration = "1.5 s"\ntransition = "0.4 s"'],
).replace('wind_from = "0 deg"', 'wind_from = "0 deg"\n[air.turbulence]\nintensity = "1 m/s"\n'
          'length_scale = "30 m"\nseed = 3')


def roofbeat(*args, env=None, cwd=None, timeout=300):
    full = {k: v for k, v in os.environ.items() if k not in ("ROOFBEAT_CACHE_DIR", "XDG_CACHE_HOME")}
    full.update(env or {})
    return subprocess.run([sys.executable, "-m", "preview.cli", *args], capture_output=True, text=True,
                          env=full, cwd=cwd or REPO, timeout=timeout)


def test_one_compiled_kernel_serves_single_runs_batches_and_risk():
    from physics.risk import run_risk
    from physics.scene_load import load_scene
    from physics.simulation import simulate, simulate_batch, variants
    scene = load_scene(REPO / "scenes" / "night_freight.toml")
    simulate(scene)
    simulate_batch(scene, variants(scene, 50))
    run_risk(scene, 30, seed=2)
    if jit.compiled():
        assert len(driver.run_variants.signatures) == 1


def test_a_cache_folder_others_can_write_to_is_refused(tmp_path):
    # numba loads its cache with pickle: a folder group or others may write is not used.
    shared = tmp_path / "shared"
    shared.mkdir()
    shared.chmod(0o777)
    assert not jit._private(shared)
    mine = tmp_path / "mine"
    assert jit._private(mine) and (mine.stat().st_mode & 0o777) == 0o700


def test_first_run_with_no_usable_home_caches_in_a_private_temporary_folder(tmp_path):
    # Neither HOME nor the package folder is used: the cache goes to a folder
    # of the user's own under the temporary directory; the first run says it is
    # preparing the engine, the second loads it without compiling.
    env = {"HOME": "/dev/null/no-home", "TMPDIR": str(tmp_path)}
    first = roofbeat("check", env=env)
    assert first.returncode == 0, first.stderr
    assert "preparing the engine (first run only" in first.stderr
    folder = tmp_path / f"roofbeat-{os.getuid()}"
    assert (folder.stat().st_mode & 0o777) == 0o700
    assert any(p.suffix == ".nbi" for p in folder.rglob("*"))
    second = roofbeat("check", env=env)
    assert second.returncode == 0 and "preparing" not in second.stderr
    assert second.stdout == first.stdout


def test_with_no_cache_folder_anywhere_it_still_runs(tmp_path):
    # Every candidate unusable (a file where the private folder would go):
    # the engine compiles in memory instead of failing.
    (tmp_path / f"roofbeat-{os.getuid()}").write_text("not a folder")
    env = {"HOME": "/dev/null/no-home", "TMPDIR": str(tmp_path), "ROOFBEAT_CACHE_DIR": "/dev/null/no-cache"}
    run = roofbeat("check", env=env)
    assert run.returncode == 0, run.stderr
    assert "verdict: HOLDS" in run.stdout
    assert "preparing the engine" in run.stderr


def test_plain_python_engine_agrees_with_the_compiled_one(tmp_path):
    path = tmp_path / "short.toml"
    path.write_text(SHORT_SCENE)
    compiled = roofbeat("check", str(path), "--json")
    plain = roofbeat("check", str(path), "--json", env={"ROOFBEAT_ENGINE": "python"})
    assert plain.returncode == 0 and compiled.returncode == 0
    assert "plain Python" in plain.stderr
    a, b = json.loads(compiled.stdout), json.loads(plain.stdout)
    assert a["verdict"] == b["verdict"]
    for x, y in zip(a["actions"], b["actions"]):
        for key in ("grip_ratio_min", "balance_margin_min_m", "lift_ratio_min", "apparent_wind_max_ms"):
            assert x[key] == pytest.approx(y[key], rel=1e-9), key


def test_without_numba_the_engine_runs_as_python_with_a_notice(tmp_path):
    fake = tmp_path / "fake" / "numba"
    fake.mkdir(parents=True)
    (fake / "__init__.py").write_text('raise ImportError("no numba on this machine (a test stand-in)")\n')
    path = tmp_path / "short.toml"
    path.write_text(SHORT_SCENE)
    run = roofbeat("check", str(path), env={"PYTHONPATH": f"{fake.parent}{os.pathsep}{REPO}"})
    assert run.returncode == 0, run.stderr
    assert "plain Python" in run.stderr and "no numba on this machine" in run.stderr
    assert "verdict:" in run.stdout


def test_bundled_scenes_are_listed_one_line_each():
    run = roofbeat("scenes")
    assert run.returncode == 0
    lines = run.stdout.strip().splitlines()[:len(SCENES)]
    for path, line in zip(SCENES, lines):
        assert line.startswith(path.name)
    assert sum("(the default)" in line for line in lines) == 1
    assert run.stdout.strip().splitlines()[-1] == f"folder: {SCENES[0].parent}"


def test_an_installed_copy_finds_its_default_scene(tmp_path):
    # `pip install .` (not editable): the scenes ship inside the package.
    site = tmp_path / "site"
    pip = subprocess.run([sys.executable, "-m", "pip", "install", "-q", "--no-deps", "--no-build-isolation",
                          "--target", str(site), str(REPO)], capture_output=True, text=True, timeout=300)
    assert pip.returncode == 0, pip.stderr
    assert (site / "scenes" / "heritage_excursion.toml").is_file()
    # Drop the development checkout's editable-install finder, so the copy in `site` is what runs.
    code = ("import sys; sys.meta_path = [f for f in sys.meta_path if 'editable' not in repr(f)]; "
            f"sys.path.insert(0, {str(site)!r}); import preview, scenes; "
            f"assert preview.__file__.startswith({str(site)!r}), preview.__file__; "
            "from preview.cli import main; sys.exit(main(['check']))")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=tmp_path, timeout=300)
    assert run.returncode == 0, run.stderr
    assert "Heritage excursion" in run.stdout and "verdict: HOLDS" in run.stdout


def test_a_bundled_scene_is_found_by_name_from_any_folder(tmp_path):
    run = roofbeat("check", "night_freight", cwd=tmp_path)
    assert run.returncode == 0 and "Night freight" in run.stdout
    missing = roofbeat("check", "no_such_scene", cwd=tmp_path)
    assert missing.returncode == 3 and "no_such_scene" in missing.stderr


def test_the_cache_folder_follows_every_engine_source(tmp_path, monkeypatch):
    # numba checks only the entry point's file before reusing a kernel: a change
    # to any other part of the engine must lead to another cache folder.
    import shutil
    from pathlib import Path
    engine = Path(jit.__file__).parent
    copy = tmp_path / "physics" / "engine"
    shutil.copytree(engine, copy, ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(engine.parent / "records.py", copy.parent / "records.py")
    monkeypatch.setattr(jit, "__file__", str(copy / "jit.py"))
    before = jit.source_digest()
    (copy / "stance.py").write_text((copy / "stance.py").read_text() + "\n# an edit\n")
    assert jit.source_digest() != before
    assert jit.CACHE_FOLDER is None or jit.CACHE_FOLDER.name.startswith("engine-")


def test_the_kernel_reads_inside_its_arrays(tmp_path):
    # Every bundled scene and the shortest beat the loader accepts, single and
    # batched, through a kernel compiled with numba's bounds checking on (its own
    # cache, so the checked kernel is never mixed with the fast one).
    code = ("from physics.scene_load import load_scene, parse_scene\n"
            "from physics.simulation import simulate, simulate_batch, variants\n"
            "from tests.conftest import SCENES, scene_text\n"
            "scenes = [load_scene(p) for p in SCENES]\n"
            "scenes.append(parse_scene(scene_text(actions=['do = \"stand\"\\nduration = \"10 ms\"\\n"
            "transition = \"0 s\"']), 'two steps'))\n"
            "for s in scenes:\n"
            "    simulate(s)\n"
            "    simulate_batch(s, variants(s, 3))\n"
            "print('checked', len(scenes))\n")
    env = dict(os.environ, NUMBA_BOUNDSCHECK="1", ROOFBEAT_CACHE_DIR=str(tmp_path), PYTHONPATH=str(REPO))
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, cwd=REPO, timeout=600)
    assert run.returncode == 0, run.stderr
    assert f"checked {len(SCENES) + 1}" in run.stdout
