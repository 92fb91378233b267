"""Write the README's UI screenshots (SVG) from the deterministic scenes: `python -m tests.tui.make_screens`."""

from __future__ import annotations

import asyncio
import os
import sys
import tempfile
from pathlib import Path

from . import scenes

SHOTS = (("live", scenes.live_view), ("results", scenes.results_view), ("archive", scenes.archive_view),
         ("trend", scenes.trend_view))
APPS = {"trend": scenes.scene_trend_app}  # scenes on an archive; the others on the run folder


async def shoot(target: Path, name: str, scene, size=(100, 30)) -> Path:
    app = APPS.get(name, scenes.scene_app)(Path.cwd())
    async with app.run_test(size=size) as pilot:
        await scene(pilot)
        app.save_screenshot(filename=f"{name}.svg", path=str(target))
    return target / f"{name}.svg"


def main(argv: list[str]) -> int:
    target = Path(argv[0] if argv else "docs/screens").resolve()
    target.mkdir(parents=True, exist_ok=True)
    here = Path.cwd()
    for name, scene in SHOTS:
        with tempfile.TemporaryDirectory() as tmp:
            os.chdir(tmp)
            try:
                print(asyncio.run(shoot(target, name, scene)))
            finally:
                os.chdir(here)
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
