"""The heat-soak in the UI: the results panel and its ΔTj plot, and the replay's drift plot, by the keys shown."""

from __future__ import annotations

import shutil
from pathlib import Path

from .synthetic import screen_text
from .test_views import make_app, settle

SAMPLE = Path(__file__).resolve().parents[2] / "sample_runs" / "pmos-heat-soak.run"


async def test_a_soak_run_shows_its_thermal_result_plot_and_replay(scripted, runs_dir, demo_files):
    shutil.copy(SAMPLE, runs_dir / SAMPLE.name)
    app = make_app(scripted, runs_dir, demo_files, start_view="archive")
    async with app.run_test(size=(140, 44)) as pilot:
        await settle(pilot, app, lambda: "Q1" in screen_text(app))
        await pilot.press("o")
        await settle(pilot, app, lambda: app.state.findings is not None and not app.state.findings_busy)
        assert app.state.findings.soak is not None, app.state.findings.soak_error
        text = screen_text(app)
        assert "RθJA on this board" in text and "h: ΔTj against time" in text
        await pilot.press("h")
        await pilot.pause(0.2)
        text = screen_text(app)
        assert "ΔTj" in text and "time since step" in text and "pole fit" in text
        await pilot.press("h")
        await pilot.pause(0.2)
        assert "time since step" not in screen_text(app)
        # replay: the live view draws the drift against time while the soak readings arrive
        await pilot.press("6", "right_square_bracket", "right_square_bracket", "right_square_bracket", "p")
        await settle(pilot, app, lambda: app.state.sweep_state == "finished", timeout=30.0)
        assert app.current_mode == "live" and app.state.live.source == "replay"
        text = screen_text(app)
        assert "drop while soaking" in text and "time since step" in text
        assert f"{len(app.state.live.points)}/{len(app.state.live.points)} points" in text
