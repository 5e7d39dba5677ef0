"""Reading a scene file safely: only a regular file, at most MAX_BYTES, UTF-8
text, TOML nested no deeper than MAX_NESTING. Every refusal is a Problem that
says what was found and where, never a traceback or a hang."""

from __future__ import annotations

import re
import stat
import tomllib
from pathlib import Path

from physics.scene_problems import Problem, SceneError

MAX_BYTES = 1_000_000   # a scene is a page or two of text
MAX_NESTING = 32        # arrays and inline tables inside each other


def read_text(path: Path) -> str:
    """The file's text; a SceneError for anything that is not a readable UTF-8 scene file."""
    source = str(path)
    try:
        info = path.stat()
    except OSError as exc:
        raise _refusal(source, f"cannot read the file: {exc.strerror}") from None
    if stat.S_ISDIR(info.st_mode):
        raise _refusal(source, "is a folder, not a scene file")
    if not stat.S_ISREG(info.st_mode):
        raise _refusal(source, "is not a regular file (a device, a pipe or a socket); give a scene file")
    try:
        with open(path, "rb") as f:
            data = f.read(MAX_BYTES + 1)
    except OSError as exc:
        raise _refusal(source, f"cannot read the file: {exc.strerror}") from None
    if len(data) > MAX_BYTES:
        raise _refusal(source, f"larger than {MAX_BYTES // 1_000_000} MB; a scene file is a page or two of text")
    return decode(data, source)


def decode(data: bytes, source: str) -> str:
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[:exc.start].count(b"\n") + 1
        column = exc.start - (data.rfind(b"\n", 0, exc.start) + 1) + 1
        raise SceneError(source, [Problem("(file)", f"not UTF-8 text: the byte 0x{data[exc.start]:02x} at line "
                                                    f"{line}, column {column} (byte {exc.start + 1} of the file) "
                                                    "cannot be read; save the file as UTF-8", line)]) from None


def parse_toml(text: str, source: str) -> dict:
    """TOML text -> dict, with nesting bounded before the parser recurses into it."""
    depth, line = nesting(text)
    if depth > MAX_NESTING:
        raise SceneError(source, [Problem("(file)", f"arrays or inline tables nested {depth} deep; at most "
                                                    f"{MAX_NESTING} levels are read", line)])
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        found = re.search(r"line (\d+)", str(exc))
        line = getattr(exc, "lineno", None) or (int(found.group(1)) if found else None)
        raise SceneError(source, [Problem("(file)", f"not valid TOML: {exc}", line)]) from None
    except RecursionError:
        raise SceneError(source, [Problem("(file)", "nested too deeply to read", None)]) from None


def nesting(text: str) -> tuple[int, int]:
    """Deepest nesting of [ and { outside strings and comments, and the line it is on."""
    depth = deepest = 0
    line = deepest_line = 1
    quote = ""
    i, n = 0, len(text)
    while i < n:
        c = text[i]
        if c == "\n":
            line += 1
        if quote:
            if c == "\\" and quote == '"':
                i += 2
                continue
            if text.startswith(quote, i):
                i += len(quote)
                quote = ""
                continue
        elif c in "\"'":
            quote = c * 3 if text.startswith(c * 3, i) else c
            i += len(quote)
            continue
        elif c == "#":
            end = text.find("\n", i)
            i = n if end < 0 else end
            continue
        elif c in "[{":
            depth += 1
            if depth > deepest:
                deepest, deepest_line = depth, line
        elif c in "]}":
            depth = max(0, depth - 1)
        i += 1
    return deepest, deepest_line


def key_lines(text: str) -> dict[str, int]:
    """Map key paths ("actions[2].speed", 1-based lists) to their line numbers."""
    found: dict[str, int] = {}
    counts: dict[str, int] = {}
    table = ""
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if m := re.match(r"^\[\[\s*([A-Za-z0-9_.]+)\s*\]\]", line):
            parent = _resolve_parent(m.group(1), counts)
            counts[parent] = counts.get(parent, 0) + 1
            table = f"{parent}[{counts[parent]}]"
            found.setdefault(table, number)
        elif m := re.match(r"^\[\s*([A-Za-z0-9_.]+)\s*\]", line):
            table = _resolve_parent(m.group(1), counts)
            found.setdefault(table, number)
        elif m := re.match(r"^([A-Za-z0-9_]+)\s*=", line):
            found.setdefault(f"{table}.{m.group(1)}" if table else m.group(1), number)
    return found


def _resolve_parent(name: str, counts: dict[str, int]) -> str:
    """'consist.cars' -> 'consist.cars'; 'actions.x' inside [[actions]] -> 'actions[n].x'."""
    parts = name.split(".")
    path = ""
    for i, part in enumerate(parts):
        path = f"{path}.{part}" if path else part
        if i < len(parts) - 1 and path in counts:
            path = f"{path}[{counts[path]}]"
    return path


def _refusal(source: str, message: str) -> SceneError:
    return SceneError(source, [Problem("(file)", message, None)])
