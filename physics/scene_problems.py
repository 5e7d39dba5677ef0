"""What is wrong with a scene, said so a person can fix it: the file, the key
path (list positions counted from 1), what was given and what was expected,
and where: the file's line, or the `--set` argument the value came from."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Problem:
    path: str
    message: str
    line: int | None
    origin: str | None = None   # the `--set PATH=VALUE` argument the value came from, if any


class SceneError(Exception):
    """A scene that cannot be used; carries every problem found."""

    def __init__(self, source: str, problems: list[Problem]):
        self.source = source
        self.problems = problems
        super().__init__(self.render())

    def render(self) -> str:
        lines = [f"{self.source}: {len(self.problems)} problem(s) in the scene"]
        for p in self.problems:
            if p.origin:
                where = f"--set {p.origin}"
            else:
                where = f"{self.source}:{p.line}" if p.line else self.source
            lines.append(f"  {where}: {p.path}: {p.message}")
        return "\n".join(lines)
