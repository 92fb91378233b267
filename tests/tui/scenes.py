"""Deterministic scenes of the main views (invented data, fixed times) for snapshots and the README screens."""

from __future__ import annotations

from pathlib import Path

from benchlog.tui.app import BenchApp
from benchlog.tui.views.caution import CautionScreen

from .synthetic import ScriptedSession, write_files, write_run


def scene_app(root: Path, start_view: str = "instruments") -> BenchApp:
    """An app on the scripted bench, with two archived runs; `root` must be the working directory."""
    plan, spec = write_files(Path("cfg"))
    runs = Path("runs")
    runs.mkdir(exist_ok=True)
    write_run(runs, serial="A1", r_ohm=0.027, seed=1, started_utc="2025-03-04T10:20:30.000Z")
    write_run(runs, serial="A2", r_ohm=0.030, seed=3, started_utc="2025-03-05T11:00:00.000Z")
    session = ScriptedSession(runs)
    return BenchApp(session, runs_dir=runs, plans=[plan], specs=[spec], start_view=start_view)


def scene_archive_app(root: Path) -> BenchApp:
    """The scene's two runs published to an SQLite archive here (`archive add`), the view reading from it."""
    from benchlog.cli import main
    from benchlog.tui.archive_query import ArchiveChoice

    app = scene_app(root, start_view="archive")
    runs = sorted(Path("runs").glob("*.run"))
    if main(["archive", "add", *map(str, runs), "--db", "sqlite:///lab.sqlite"]) != 0:
        raise AssertionError("archive add failed")
    app.archive_choice = ArchiveChoice("sqlite:///lab.sqlite", "--db")
    return app


def scene_trend_app(root: Path) -> BenchApp:
    """Eight invented lots of five (the last 8 % higher) in an SQLite archive here, the archive view on it."""
    from benchlog.cli import main
    from benchlog.tui.archive_query import ArchiveChoice

    from tests.store.synthetic import write_lot

    app = scene_app(root, start_view="archive")
    paths = []
    for i, lot in enumerate("ABCDEFGH"):
        r = 0.0108 if lot == "H" else 0.0100
        paths += write_lot(Path("lots") / lot, f"LOT-{lot}", r, 5, day=f"2025-03-0{i + 1}", spread=0.01, seed=i + 1)
    if main(["archive", "add", *map(str, paths), "--db", "sqlite:///lab.sqlite"]) != 0:
        raise AssertionError("archive add failed")
    app.archive_choice = ArchiveChoice("sqlite:///lab.sqlite", "--db")
    return app


async def wait_for(pilot, condition, timeout: float = 15.0) -> None:
    waited = 0.0
    while not condition():
        await pilot.pause(0.05)
        waited += 0.05
        if waited > timeout:
            raise AssertionError("scene did not settle")
    await pilot.pause(0.2)


async def probed(pilot) -> None:
    app = pilot.app
    await wait_for(pilot, lambda: all(r.state == "connected" for r in app.state.roles))


async def after_a_sweep(pilot) -> None:
    app = pilot.app
    await probed(pilot)
    await pilot.press("2", "r")
    await wait_for(pilot, lambda: isinstance(app.screen, CautionScreen))
    await pilot.press("y")
    await wait_for(pilot, lambda: app.state.findings is not None and app.state.sweep_state == "finished")


async def live_view(pilot) -> None:
    await after_a_sweep(pilot)
    await pilot.press("3")
    await pilot.pause(0.3)


async def results_view(pilot) -> None:
    await after_a_sweep(pilot)
    await pilot.press("4")
    await pilot.pause(0.3)


async def lot_view(pilot) -> None:
    app = pilot.app
    await probed(pilot)
    await pilot.press("5")
    for k, serial in enumerate(("L-01", "L-02", "L-03", "L-04")):
        await pilot.press("n", *serial, "enter")
        if k == 0:
            await wait_for(pilot, lambda: isinstance(app.screen, CautionScreen))
            await pilot.press("y")
        await wait_for(pilot, lambda: len(app.state.lot) == k + 1 and app.state.lot_summary is not None
                       and app.state.lot_summary.n == k + 1)
    await pilot.pause(0.3)


async def archive_view(pilot) -> None:
    app = pilot.app
    await probed(pilot)
    await pilot.press("6")
    screen = app.screen
    await wait_for(pilot, lambda: len(getattr(screen, "verdicts", {})) == 2)


async def caution(pilot) -> None:
    app = pilot.app
    await probed(pilot)
    await pilot.press("2", "r")
    await wait_for(pilot, lambda: isinstance(app.screen, CautionScreen))


async def archive_db_view(pilot) -> None:
    app = pilot.app
    await probed(pilot)
    screen = app.screen
    await wait_for(pilot, lambda: len(getattr(screen, "entries", [])) == 2)


async def trend_view(pilot) -> None:
    from benchlog.tui.views.trend import TrendScreen

    app = pilot.app
    await probed(pilot)
    await wait_for(pilot, lambda: len(getattr(app.screen, "entries", [])) == 40)
    await pilot.press("t")
    await wait_for(pilot, lambda: isinstance(app.screen, TrendScreen) and app.screen.trend is not None)
