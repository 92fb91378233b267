"""The results view of an input-voltage sweep, opened from the archive and driven by the keys the footer names."""

from __future__ import annotations

from pathlib import Path

import benchlog
from benchlog.sim.config import SimConfig
from benchlog.sim.server import serve_bench
from benchlog.sweep.plan import load_plan
from benchlog.tui.app import BenchApp

from tests.sweep.simrig import record, setup_for

from .synthetic import screen_text
from .test_views import settle

DEMO = Path(benchlog.__file__).parent / "demo"


async def test_results_show_r_per_input_and_the_sweep_plot(scripted, runs_dir, demo_files):
    running = serve_bench(SimConfig(element="pmos", seed=2, port=0))
    try:
        record(load_plan(DEMO / "plans" / "pmos-input-sweep.toml"), setup_for(running), runs_dir)
    finally:
        running.stop()
    plan, spec = demo_files
    app = BenchApp(scripted, runs_dir=runs_dir, plans=[plan], specs=[spec], start_view="archive")
    async with app.run_test(size=(132, 64)) as pilot:
        await settle(pilot, app, lambda: "Q1" in screen_text(app))
        await pilot.press("o")
        await settle(pilot, app, lambda: app.state.findings is not None and app.current_mode == "results")
        text = screen_text(app)
        assert "input sweep at 1.000 A" in text and "12 V  R " in text and "body diode" in text and "takeover" in text
        await pilot.press("t")  # residuals
        await pilot.pause(0.2)
        assert "residual" in screen_text(app)
        await pilot.press("t")  # the sweep: R against input voltage
        await pilot.pause(0.2)
        assert "R per input" in screen_text(app)
        await pilot.press("t")  # back to the curve
        await pilot.pause(0.2)
        assert "R per input" not in screen_text(app)
