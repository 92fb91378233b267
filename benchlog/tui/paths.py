"""Paths as the user should read them: relative to the current folder, or the demo's short name.

A message that prints an installed package's absolute path tells the user
nothing they can type; one relative to where they stand (or `demo/…` for the
built-in files) is short and can be passed back to the command line.
"""

from __future__ import annotations

import os
from pathlib import Path

import benchlog

_PACKAGE = Path(benchlog.__file__).resolve().parent


def shown(path: Path | str | None) -> str:
    """`demo/specs/x.toml` for a built-in file, `runs/a.run` under the current folder, else the path as given."""
    if path is None:
        return "none"
    given = Path(path)
    try:
        full = given.resolve()
    except OSError:
        return str(given)
    demo = _PACKAGE / "demo"
    if full.is_relative_to(demo):
        return str(Path("demo") / full.relative_to(demo))
    here = Path.cwd().resolve()
    if full.is_relative_to(here):
        return str(full.relative_to(here)) or "."
    if not given.is_absolute():
        return str(given)
    relative = os.path.relpath(full, here)
    return relative if relative.count("..") <= 2 else str(full)
