"""`--set PATH=VALUE`: a scene value given on the command line.

PATH is a key path as people write it (`motion.speed`, `actions[2].duration`,
list positions from 1); VALUE is read as TOML, or as plain text when it is not
TOML. Each override remembers its argument, so a bad value is blamed on the
`--set` that gave it and not on a line of the file.
"""

from __future__ import annotations

import copy
import re
import tomllib

from physics.scene_problems import Problem

_KEY = r"[A-Za-z_][A-Za-z0-9_]*"
_PATH_RE = re.compile(rf"^{_KEY}(?:\[\d+\])?(?:\.{_KEY}(?:\[\d+\])?)*$")
_PART_RE = re.compile(rf"({_KEY})(?:\[(\d+)\])?")
MAX_OVERRIDE = 1000  # characters in one --set argument


def apply_overrides(raw: dict, overrides: list[str]) -> tuple[dict, dict[str, str], list[Problem]]:
    """A copy of raw with every override applied; (scene, {key path: argument}, problems)."""
    raw = copy.deepcopy(raw)
    origins: dict[str, str] = {}
    problems: list[Problem] = []
    for item in overrides:
        if len(item) > MAX_OVERRIDE:
            problems.append(Problem(item[:40] + "...", f"longer than {MAX_OVERRIDE} characters", None, item[:40]))
            continue
        if "=" not in item:
            problems.append(Problem(item, "expected PATH=VALUE, e.g. motion.speed=110 km/h", None, item))
            continue
        key_path, value_text = (part.strip() for part in item.split("=", 1))
        if not _PATH_RE.match(key_path):
            problems.append(Problem(key_path, "expected a key path such as motion.speed or actions[2].duration "
                                              "(letters, digits and _, dots between keys, [n] after a list)",
                                    None, item))
            continue
        try:
            value = tomllib.loads(f"v = {value_text}")["v"]
        except (tomllib.TOMLDecodeError, RecursionError):
            value = value_text
        error = _set_path(raw, key_path, value)
        if error:
            problems.append(Problem(key_path, error, None, item))
        else:
            origins[key_path] = item
    return raw, origins, problems


def origin_of(path: str, origins: dict[str, str]) -> str | None:
    """The --set argument that gave the value at `path` or one of the tables around it."""
    probe = path
    while probe:
        if probe in origins:
            return origins[probe]
        probe = probe.rsplit(".", 1)[0] if "." in probe else (probe.rsplit("[", 1)[0] if "[" in probe else "")
    return None


def _set_path(raw: dict, key_path: str, value) -> str | None:
    parts = _PART_RE.findall(key_path)
    node = raw
    walked = ""
    for n, (key, index) in enumerate(parts):
        last = n == len(parts) - 1
        walked = f"{walked}.{key}" if walked else key
        if not isinstance(node, dict):
            return f"{walked.rsplit('.', 1)[0]} is not a table (it holds {node!r}), so it has no key {key!r}"
        if index:
            items = node.get(key)
            if not isinstance(items, list) or not 1 <= int(index) <= len(items):
                return f"{walked} has no item {index} (lists count from 1)"
            walked = f"{walked}[{index}]"
            if last:
                items[int(index) - 1] = value
                return None
            node = items[int(index) - 1]
        elif last:
            node[key] = value
        else:
            node = node.setdefault(key, {})
    return None
