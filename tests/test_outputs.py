"""Output files: never lost, never faked, never left half-written.

Real files, real folders, a real pipe, the real encoder; a full disk is a file
size limit (RLIMIT_FSIZE) on the command's process, which makes writes fail
with EFBIG just as a full disk makes them fail with ENOSPC.
"""

import os
import resource
import signal
import subprocess
import sys
import time

import pytest

from preview.cli import main
from preview.outputs import EXPORT_MARKER
from tests.conftest import REPO

SCENE = str(REPO / "scenes" / "footbridge_duck.toml")
SHORT = ["--from", "1", "--to", "1.4", "--size", "640x360", "--fps", "10"]


def run(*args, limit_bytes=None, cwd=None):
    def limit():
        if limit_bytes is not None:
            resource.setrlimit(resource.RLIMIT_FSIZE, (limit_bytes, limit_bytes))
    env = dict(os.environ, SDL_VIDEODRIVER="dummy")
    return subprocess.run([sys.executable, "-m", "preview.cli", *args], capture_output=True, text=True, cwd=cwd or REPO,
                          env=env, preexec_fn=limit, timeout=300)


def leftovers(folder):
    return sorted(p.name for p in folder.iterdir() if ".part" in p.name or p.name.endswith(".replaced"))


def test_render_never_deletes_a_folder_it_did_not_write(tmp_path):
    mine = tmp_path / "shots"
    mine.mkdir()
    (mine / "my_notes.txt").write_text("keep me")
    assert main(["render", SCENE, "-o", str(mine), *SHORT]) == 4
    assert (mine / "my_notes.txt").read_text() == "keep me"
    assert sorted(p.name for p in mine.iterdir()) == ["my_notes.txt"]
    assert leftovers(tmp_path) == []


def test_render_never_replaces_a_file_or_a_pipe_with_a_frame_folder(tmp_path):
    plain = tmp_path / "frames"
    plain.write_text("a file of mine")
    assert main(["render", SCENE, "-o", str(plain), *SHORT]) == 4
    assert plain.read_text() == "a file of mine"
    pipe = tmp_path / "pipe"
    os.mkfifo(pipe)
    assert main(["render", SCENE, "-o", str(pipe), *SHORT]) == 4
    assert pipe.exists() and not pipe.is_dir()
    gif_pipe = tmp_path / "clip.gif"
    os.mkfifo(gif_pipe)
    assert main(["render", SCENE, "-o", str(gif_pipe), *SHORT]) == 4   # refused at once, never opened
    assert leftovers(tmp_path) == []


def test_outputs_get_the_modes_of_ordinary_new_files(tmp_path):
    mask = os.umask(0o022)
    try:
        assert main(["render", SCENE, "-o", str(tmp_path / "clip.gif"), *SHORT]) == 0
        assert main(["render", SCENE, "-o", str(tmp_path / "frames"), *SHORT]) == 0
    finally:
        os.umask(mask)
    assert (tmp_path / "clip.gif").stat().st_mode & 0o777 == 0o644
    assert (tmp_path / "frames").stat().st_mode & 0o777 == 0o755


def test_render_replaces_its_own_earlier_export(tmp_path):
    out = tmp_path / "frames"
    assert main(["render", SCENE, "-o", str(out), *SHORT]) == 0
    assert (out / EXPORT_MARKER).is_file() and len(list(out.glob("frame_*.png"))) == 5
    assert main(["render", SCENE, "-o", str(out), "--from", "1", "--to", "1.2", "--size", "640x360", "--fps",
                 "10"]) == 0
    assert len(list(out.glob("frame_*.png"))) == 3
    assert leftovers(tmp_path) == []


@pytest.mark.parametrize("name", ["clip.mp4", "clip.gif", "frames"])
def test_a_full_disk_is_an_error_and_leaves_nothing(tmp_path, name):
    # 8 kB (per file) is room for the temporary file to start, not to finish.
    result = run("render", SCENE, "-o", str(tmp_path / name), *SHORT, "--size", "640x360", limit_bytes=8_000)
    assert result.returncode == 4, result.stderr
    assert "Traceback" not in result.stderr and "internal error" not in result.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_a_brief_whose_json_cannot_be_written_writes_no_pdf_either(tmp_path):
    (tmp_path / "brief.json").mkdir()   # the JSON's name is taken by a folder
    assert main(["brief", SCENE, "-o", str(tmp_path / "brief.pdf")]) == 4
    assert sorted(p.name for p in tmp_path.iterdir()) == ["brief.json"]


def test_a_brief_on_a_full_disk_leaves_nothing(tmp_path):
    result = run("brief", SCENE, "-o", str(tmp_path / "brief.pdf"), limit_bytes=20_000)
    assert result.returncode == 4, result.stderr
    assert "Traceback" not in result.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == []


@pytest.mark.parametrize("blocked", [False, True])
def test_sigterm_during_an_export_cleans_up_like_ctrl_c(tmp_path, blocked):
    # blocked: started with SIGTERM in its signal mask, as a parent may pass it on (it once held the
    # signal pending here until the export had finished).
    env = dict(os.environ, SDL_VIDEODRIVER="dummy")

    def mask():
        if blocked:
            signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGTERM})
    # 48 frames a second over the whole beat: hundreds of frames, so the stop lands mid-export.
    proc = subprocess.Popen([sys.executable, "-m", "preview.cli", "render", SCENE, "-o", str(tmp_path / "long.gif"),
                             "--size", "1280x720", "--fps", "48"], cwd=REPO, env=env, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, preexec_fn=mask)
    deadline = time.monotonic() + 120
    while not any(".part" in p.name for p in tmp_path.iterdir()):
        assert proc.poll() is None and time.monotonic() < deadline, "the export ended before it could be stopped"
        time.sleep(0.05)
    proc.send_signal(signal.SIGTERM)
    out, err = proc.communicate(timeout=60)
    assert proc.returncode == 143, f"stdout: {out!r}; stderr: {err!r}"
    assert "nothing was left half-written" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_a_sigterm_whose_raise_was_swallowed_still_stops_the_export(tmp_path, capsys):
    # C code that clears errors (an extension importing an optional module during `import pygame`) once
    # swallowed the handler's raise and the export ran to its end. Here the raise is swallowed on purpose.
    from preview import outputs
    before = signal.getsignal(signal.SIGTERM)
    try:
        outputs.raise_on_sigterm()
        try:
            os.kill(os.getpid(), signal.SIGTERM)
            time.sleep(0.5)
        except outputs.Terminated:
            pass
        assert main(["render", SCENE, "-o", str(tmp_path / "clip.gif"), *SHORT]) == 143
    finally:
        outputs._TERMINATED[0] = False
        signal.signal(signal.SIGTERM, before)
    assert "stopped (SIGTERM)" in capsys.readouterr().err
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_plot_into_a_missing_folder_or_with_an_unknown_suffix(tmp_path, capsys):
    assert main(["envelope", SCENE, "--vary", "speed=10..60 km/h", "--points", "3", "--plot",
                 str(tmp_path / "no" / "plot.png")]) == 4
    assert "does not exist" in capsys.readouterr().err
    assert main(["envelope", SCENE, "--vary", "speed=10..60 km/h", "--plot", str(tmp_path / "plot.bmp")]) == 2
    assert "--plot" in capsys.readouterr().err


def test_a_streamed_gif_plays_every_frame_at_its_rate(tmp_path):
    from PIL import Image
    out = tmp_path / "clip.gif"
    assert main(["render", SCENE, "-o", str(out), *SHORT]) == 0
    gif = Image.open(out)
    assert gif.n_frames == 5 and gif.info["loop"] == 0
    for k in range(gif.n_frames):
        gif.seek(k)
        assert gif.info["duration"] == 100


def test_a_full_disk_on_a_first_run_is_still_an_output_error(tmp_path):
    # A fresh compile whose cache cannot be saved (the same file-size limit) runs from memory; the
    # export then fails as an output error, not an internal one.
    cache = tmp_path / "cache"
    out = tmp_path / "out"
    out.mkdir()
    env = dict(os.environ, SDL_VIDEODRIVER="dummy", ROOFBEAT_CACHE_DIR=str(cache))

    def limit():
        resource.setrlimit(resource.RLIMIT_FSIZE, (8_000, 8_000))
    result = subprocess.run([sys.executable, "-m", "preview.cli", "render", SCENE, "-o", str(out / "clip.gif"),
                             *SHORT], capture_output=True, text=True, cwd=REPO, env=env, preexec_fn=limit, timeout=600)
    assert result.returncode == 4, result.stderr
    assert "could not save the compiled engine" in result.stderr and "internal error" not in result.stderr
    assert sorted(p.name for p in out.iterdir()) == []
