"""roofbeat preview: everything a person sees (CLI, window, exports, reports).

pygame and matplotlib are imported inside the functions that need them, so
`roofbeat --help` and `roofbeat check` start fast.
"""

__version__ = "0.2.0"  # the one place the version is written (pyproject.toml reads it)
