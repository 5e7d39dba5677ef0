"""Writing a command's output files without ever losing or faking one.

Every output is written under a temporary name beside its final name, checked,
and moved into place only when all of the command's outputs are ready: they
appear together or not at all. roofbeat replaces only what it may: a regular
file of the requested name, or a folder of PNG frames that an earlier roofbeat
export wrote (it carries a marker file). Anything else of that name (a folder
of the user's, a pipe, a device) stays untouched and the command says why.
On an error, Ctrl-C or SIGTERM the temporary files are removed.
"""

from __future__ import annotations

import os
import shutil
import signal
import stat
import tempfile
from pathlib import Path

from preview.session import OutputError

EXPORT_MARKER = ".roofbeat-export"  # in every PNG-frame folder roofbeat writes


class Terminated(BaseException):
    """SIGTERM, raised in the main thread so that cleanup runs as on Ctrl-C."""


_TERMINATED = [False]   # set by the handler: the raise alone can be lost (below)


def raise_on_sigterm() -> None:
    def handler(signum, frame):
        _TERMINATED[0] = True
        raise Terminated()
    try:
        signal.signal(signal.SIGTERM, handler)
    except ValueError:
        return  # not the main thread: the default action stands
    # A signal mask is inherited from the parent process: one started with SIGTERM blocked would hold the
    # signal pending and finish its export instead of stopping and cleaning up.
    if hasattr(signal, "pthread_sigmask"):
        signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGTERM})


def stop_if_terminated() -> None:
    """Raise Terminated if a SIGTERM came. The handler raises where the main thread happens to be, and C code
    that clears errors (an extension module importing an optional dependency while `import pygame` runs, say)
    can swallow that raise: an export then ran to its end and wrote its file. Exports call this every frame,
    and nothing is moved into place after a SIGTERM."""
    if _TERMINATED[0]:
        raise Terminated()


def check_target(final: Path, folder: bool) -> None:
    """Refuse a final name that roofbeat may not replace."""
    if not final.parent.is_dir():
        raise OutputError(f"{final}: the folder {final.parent} does not exist")
    try:
        info = final.lstat()
    except FileNotFoundError:
        return
    if folder:
        if stat.S_ISDIR(info.st_mode) and (final / EXPORT_MARKER).is_file():
            return
        what = "a folder that roofbeat did not write" if stat.S_ISDIR(info.st_mode) else "not a folder"
    else:
        if stat.S_ISREG(info.st_mode):
            return
        what = "a folder" if stat.S_ISDIR(info.st_mode) else "not a regular file (a link, pipe or device)"
    raise OutputError(f"{final} already exists and is {what}; roofbeat replaces only its own outputs: "
                      "choose another name or move it away")


class OutputSet:
    """The outputs of one command, written under temporary names and moved into place together.

        with OutputSet() as outs:
            tmp = outs.file(Path("brief.pdf"))
            ... write tmp ...
        # here brief.pdf exists, or the block raised and nothing was left behind
    """

    def __init__(self):
        self._pending: list[tuple[Path, Path, bool]] = []   # (temporary, final, is folder)

    def __enter__(self) -> "OutputSet":
        return self

    def file(self, final: Path) -> Path:
        """A temporary path for the file `final`, beside it."""
        final = Path(final)
        check_target(final, folder=False)
        fd, name = tempfile.mkstemp(prefix=f".{final.name}.", suffix=".part" + final.suffix, dir=final.parent)
        os.close(fd)
        os.chmod(name, 0o666 & ~_umask())   # as an ordinary new file, not mkstemp's private 0600
        self._pending.append((Path(name), final, False))
        return Path(name)

    def folder(self, final: Path) -> Path:
        """A temporary folder for the PNG-frame folder `final`, beside it, already marked as roofbeat's."""
        final = Path(final)
        check_target(final, folder=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".{final.name}.", suffix=".part", dir=final.parent))
        os.chmod(tmp, 0o777 & ~_umask())
        (tmp / EXPORT_MARKER).write_text("PNG frames exported by roofbeat; roofbeat may replace this folder.\n")
        self._pending.append((tmp, final, True))
        return tmp

    def __exit__(self, kind, value, traceback) -> bool:
        if kind is None:
            try:
                stop_if_terminated()
            except Terminated:
                self._discard()
                raise
            self._commit()
        else:
            self._discard()
        return False

    def _discard(self) -> None:
        for tmp, _, is_folder in self._pending:
            if is_folder:
                shutil.rmtree(tmp, ignore_errors=True)
            else:
                tmp.unlink(missing_ok=True)
        self._pending.clear()

    def _commit(self) -> None:
        """Move every output into place; if one move fails, put back what was there before."""
        moved: list[tuple[Path, Path | None]] = []   # (final, backup of what it replaced)
        try:
            for tmp, final, is_folder in self._pending:
                check_target(final, is_folder)   # nothing new appeared under the name meanwhile
                backup = None
                if os.path.lexists(final):
                    backup = final.with_name(f".{final.name}.{os.getpid()}.replaced")
                    os.replace(final, backup)
                os.replace(tmp, final)
                moved.append((final, backup))
        except BaseException:
            for final, backup in reversed(moved):
                _remove(final)
                if backup is not None:
                    os.replace(backup, final)
            self._discard()
            raise
        for _, backup in moved:
            if backup is not None:
                _remove(backup)
        self._pending.clear()


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _remove(path: Path) -> None:
    if path.is_dir() and not path.is_symlink():
        shutil.rmtree(path, ignore_errors=True)
    else:
        path.unlink(missing_ok=True)
