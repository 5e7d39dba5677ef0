"""The one place roofbeat meets numba.

`kernel` marks a function of the engine: numba compiles it (no Python objects,
the GIL released so a thread pool can run batches, cached on disk) or, where
numba cannot run, it stays plain Python and the engine runs far slower but the
same. `ROOFBEAT_ENGINE=python` asks for plain Python on purpose.

The compiled code is cached in a folder only the current user can write,
because numba loads its cache with pickle: `ROOFBEAT_CACHE_DIR` if set, else
`$XDG_CACHE_HOME/roofbeat` or `~/.cache/roofbeat`, else a private folder in
the temporary directory; never the installed package's folder. Inside it, a
folder named by a digest of the engine's sources, since numba checks only the
entry point's own file before reusing a kernel. If none of these can be made
private and writable the engine compiles in memory on every run instead of
failing.
"""

from __future__ import annotations

import contextlib
import hashlib
import os
import shutil
import sys
import tempfile
from pathlib import Path

ENGINE_ENV = "ROOFBEAT_ENGINE"
CACHE_ENV = "ROOFBEAT_CACHE_DIR"
# Floating-point licences for the hot loops: fused multiply-add, reciprocals,
# reassociation; never "no NaNs" or "no infinities", which the margins rely on.
FASTMATH = {"contract", "arcp", "afn", "reassoc", "nsz"}


def _private(folder: Path) -> bool:
    """Make `folder` if needed; True when it is ours alone and writable."""
    try:
        folder.mkdir(parents=True, exist_ok=True, mode=0o700)
        info = folder.stat()
        if hasattr(os, "getuid") and info.st_uid != os.getuid():
            return False
        if info.st_mode & 0o022:
            return False  # others could plant a pickle there
        tempfile.TemporaryFile(dir=folder).close()
        return True
    except (OSError, RuntimeError):
        return False


def source_digest() -> str:
    """A digest of every source file the compiled engine is made of.

    numba checks only the entry point's own file before it reuses a cached
    kernel, so a change in any other part would be served the old kernel; the
    cache lives in a folder named by this digest instead.
    """
    engine = Path(__file__).resolve().parent
    digest = hashlib.sha256()
    for path in sorted(engine.glob("*.py")) + [engine.parent / "records.py"]:
        digest.update(path.name.encode() + b"\0" + path.read_bytes() + b"\0")
    return digest.hexdigest()[:16]


def _engine_folder(base: Path) -> Path | None:
    """This engine's own folder in the cache; folders of other engine sources are removed."""
    mine = base / f"engine-{source_digest()}"
    for other in base.glob("engine-*"):
        if other != mine:
            shutil.rmtree(other, ignore_errors=True)
    return mine if _private(mine) else None


def cache_folder() -> Path | None:
    """The first private, writable cache folder of the candidates, or None."""
    candidates = []
    if os.environ.get(CACHE_ENV):
        candidates.append(Path(os.environ[CACHE_ENV]))
    if os.environ.get("XDG_CACHE_HOME"):
        candidates.append(Path(os.environ["XDG_CACHE_HOME"]) / "roofbeat")
    try:
        candidates.append(Path.home() / ".cache" / "roofbeat")
    except RuntimeError:
        pass
    uid = os.getuid() if hasattr(os, "getuid") else os.getpid()
    candidates.append(Path(tempfile.gettempdir()) / f"roofbeat-{uid}")
    for folder in candidates:
        if _private(folder):
            return _engine_folder(folder)
    return None


def _load_numba():
    """(numba module or None, cache folder or None, why plain Python or '')."""
    if os.environ.get(ENGINE_ENV, "").strip().lower() == "python":
        return None, None, f"{ENGINE_ENV}=python"
    try:
        import numba
    except Exception as exc:  # ImportError, or a broken LLVM library
        return None, None, f"numba could not be imported ({type(exc).__name__}: {exc})"
    folder = cache_folder()
    if folder is not None:
        numba.config.CACHE_DIR = str(folder)
    return numba, folder, ""


_numba, CACHE_FOLDER, _why_python = _load_numba()
_functions: list[tuple[object, str, object]] = []   # (module, name, plain function)
_notices: set[str] = set()


def compiled() -> bool:
    """True while the engine runs compiled by numba."""
    return _numba is not None


def kernel(fn):
    """Compile `fn` with numba as part of the engine, or keep it as Python.

    A part is compiled for calls from the engine only (no Python-side or C
    wrapper, which saves much of the first compile) and is inlined into its
    caller by LLVM (forceinline): one flat loop for the optimiser. Tests call
    the parts as Python source (see plain_python).
    """
    return _jit(fn, "never")


def apart(fn):
    """A kernel part that runs on few steps (the body in the air): compiled as a function of its own and
    called, not inlined, so the optimiser does not carry it through the whole step loop (a shorter
    first compile)."""
    return _jit(fn, "never", False)


def small(fn):
    """A kernel helper of a few lines, inlined by numba into each caller instead of compiled on its own."""
    return _jit(fn, "always")


def entry(fn):
    """An entry point of the engine from Python: compiled once, cached on disk, releases the GIL."""
    _functions.append((sys.modules[fn.__module__], fn.__name__, fn))
    if _numba is None:
        return fn
    return _numba.njit(cache=CACHE_FOLDER is not None, nogil=True, **_OPTIONS)(fn)


# The engine allocates nothing (callers pass its working memory), so numba's
# reference counting is off: with it on, atomic counter updates on every
# array passed between parts took four fifths of the run time. Division by
# zero gives inf or NaN, as the margins expect, instead of raising.
_OPTIONS = {"fastmath": FASTMATH, "error_model": "numpy", "_nrt": False}


def _jit(fn, inline: str, forceinline: bool = True):
    _functions.append((sys.modules[fn.__module__], fn.__name__, fn))
    if _numba is None:
        return fn
    return _numba.njit(no_cpython_wrapper=True, no_cfunc_wrapper=True, inline=inline, forceinline=forceinline,
                       **_OPTIONS)(fn)


def even_unsaved(dispatcher, *args):
    """Call the compiled entry point; when its fresh compile cannot be saved in the cache folder (a full
    disk, a file-size limit), run it from memory instead of failing. numba adds the compiled kernel
    before it saves it, so the second call runs it."""
    try:
        return dispatcher(*args)
    except OSError as exc:
        if _numba is None or getattr(dispatcher, "_cache", None) is None or not dispatcher.overloads:
            raise
        from numba.core.caching import NullCache
        dispatcher._cache = NullCache()
        notice(f"could not save the compiled engine in {CACHE_FOLDER} ({exc.strerror or exc}); "
               "it runs from memory this time")
        return dispatcher(*args)


def notice(text: str) -> None:
    """One line on stderr, once per process."""
    if text not in _notices:
        _notices.add(text)
        print(f"roofbeat: {text}", file=sys.stderr, flush=True)


def _engine_bindings():
    """(module, name, value) of every engine function bound in an engine module (imports included)."""
    sources = {id(getattr(module, name)): fn for module, name, fn in _functions}
    for module_name, module in list(sys.modules.items()):
        if module_name.startswith("physics.engine") and module is not None:
            for name, value in list(vars(module).items()):
                if id(value) in sources:
                    yield module, name, value, sources[id(value)]


@contextlib.contextmanager
def plain_python():
    """Run the engine's Python source for a while: float-level tests of its parts.

    Parts compiled for calls from the engine only cannot be called from Python;
    inside this block every engine function, wherever it is imported, is its
    plain Python source.
    """
    saved = list(_engine_bindings())
    for module, name, _, fn in saved:
        setattr(module, name, fn)
    try:
        yield
    finally:
        for module, name, value, _ in saved:
            setattr(module, name, value)


def explain_plain_python() -> None:
    if _numba is None:
        notice(f"the engine runs in plain Python, which is much slower ({_why_python})")


def will_compile(dispatcher) -> bool:
    """Whether calling `dispatcher` now would compile it (no compiled or cached version).

    Reads numba's cache index; if numba's internals change this says False and
    only the one-line notice is lost.
    """
    if _numba is None or getattr(dispatcher, "overloads", None):
        return False
    if CACHE_FOLDER is None:
        return True
    try:
        return not dispatcher._cache._cache_file._load_index()
    except Exception:
        return False
