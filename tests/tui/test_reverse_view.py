"""The reverse-polarity result in the results view, reached with the keys the footer names."""

from __future__ import annotations

import shutil
from pathlib import Path

import benchlog
from benchlog.tui.app import BenchApp

from .synthetic import screen_text
from .test_views import settle

ROOT = Path(benchlog.__file__).parents[1]
RECT_SPEC = Path(benchlog.__file__).parent / "demo" / "specs" / "demo-rect-3a.toml"


async def test_results_show_the_reverse_result_and_the_overall_verdict(scripted, runs_dir, demo_files):
    # sample_runs/rectifier-reverse.run: 10.3 ± 12 µA at 12 V reversed against the spec's 5 µA IR
    # max: the reading cannot decide, so the run is conditional although the forward drop passes.
    shutil.copyfile(ROOT / "sample_runs" / "rectifier-reverse.run", runs_dir / "rectifier-reverse.run")
    plan, _ = demo_files
    app = BenchApp(scripted, runs_dir=runs_dir, plans=[plan], specs=[RECT_SPEC], start_view="archive")
    async with app.run_test(size=(140, 40)) as pilot:
        await settle(pilot, app, lambda: "rectifier-reverse" in screen_text(app) or "D1" in screen_text(app))
        await pilot.press("o")
        await settle(pilot, app, lambda: app.state.findings is not None and app.state.findings.check is not None)
        await pilot.pause(0.2)
        text = screen_text(app)
        assert app.current_mode == "results"
        assert app.state.findings.check.verdict.outcome == "pass"  # forward alone
        assert "VERDICT: COND" in text and "reverse: COND" in text and "12 V" in text


async def test_without_a_spec_the_reverse_step_is_shown_against_the_plan(scripted, runs_dir, demo_files):
    shutil.copyfile(ROOT / "sample_runs" / "rectifier-reverse.run", runs_dir / "rectifier-reverse.run")
    plan, _ = demo_files
    app = BenchApp(scripted, runs_dir=runs_dir, plans=[plan], specs=[], start_view="archive")
    async with app.run_test(size=(140, 40)) as pilot:
        await settle(pilot, app, lambda: "D1" in screen_text(app))
        await pilot.press("o")
        await settle(pilot, app, lambda: app.state.findings is not None)
        await pilot.pause(0.2)
        text = screen_text(app)
        assert "VERDICT: none" in text and "reverse: PASS" in text and "against the plan's" in text
