"""Every view, its keys and the UI's rules, driven headless with Pilot on a scripted bench.

The scripted bench plays invented events so these tests are about the UI; the
flow over the real runner and simulated bench is in test_flow_sim.py.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from benchlog.sweep.plan import load_plan, plan_spec_path
from benchlog.tui.app import VIEW_KEYS, BenchApp
from benchlog.tui.paths import shown
from benchlog.tui.views.caution import CautionScreen

from .synthetic import screen_text


def make_app(session, runs_dir, demo_files, **kwargs):
    plan, spec = demo_files
    return BenchApp(session, runs_dir=runs_dir, plans=[plan], specs=[spec], **kwargs)


async def settle(pilot, app, until=None, timeout=10.0):
    """Let workers and the 15 Hz pump run until `until()` holds."""
    waited = 0.0
    while waited < timeout:
        await pilot.pause(0.05)
        waited += 0.05
        if until is None or until():
            await app.workers.wait_for_complete() if until is None else None
            await pilot.pause(0.1)
            return
    raise AssertionError("condition not reached")


async def run_a_sweep(pilot, app):
    await pilot.press("2", "r")
    await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
    await pilot.press("y")
    await settle(pilot, app, lambda: app.state.findings is not None and app.state.sweep_state == "finished")


@pytest.mark.parametrize("size", [(80, 24), (132, 40)])
async def test_every_view_is_reached_by_the_key_the_bar_shows(scripted, runs_dir, demo_files, archive, size):
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=size) as pilot:
        await settle(pilot, app, lambda: all(r.state == "connected" for r in app.state.roles))
        for key, mode, label in VIEW_KEYS:
            await pilot.press(key)
            await pilot.pause(0.1)
            assert app.current_mode == mode
            text = screen_text(app)
            assert f"{key} [{label}]" in text  # the bar marks where we are, in text
            for other_key, _mode, other_label in VIEW_KEYS:
                assert f"{other_key} {other_label}" in text or f"{other_key} [{other_label}]" in text
        await pilot.press("question_mark")
        await pilot.pause(0.1)
        assert app.current_mode == "help"


async def test_help_lists_every_key_of_every_view(scripted, runs_dir, demo_files):
    from benchlog.tui.views import VIEWS

    app = make_app(scripted, runs_dir, demo_files, start_view="help")
    async with app.run_test(size=(100, 200)) as pilot:
        await pilot.pause(0.2)
        text = screen_text(app)
        for view in VIEWS.values():
            for binding in view.BINDINGS:
                if binding.show:
                    assert binding.description in text, binding.description
        assert "STOP" in text and "Quit" in text


async def test_instruments_view_shows_resource_idn_profile_and_state(scripted, runs_dir, demo_files):
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=(120, 30)) as pilot:
        await settle(pilot, app, lambda: all(r.state == "connected" for r in app.state.roles))
        text = screen_text(app)
        assert "TCPIP0::127.0.0.1::5025::SOCKET" in text
        assert "BENCHLOG,SIM-SUPPLY,0001,1.0" in text
        assert "generic-supply" in text and "✔ answers" in text
        await pilot.press("p")
        await settle(pilot, app, lambda: any("Probing supply" in m for m in app.messages))


async def test_the_caution_comes_before_the_first_output_on_and_no_means_no(scripted, runs_dir, demo_files):
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("2", "r")
        await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
        text = screen_text(app)
        for words in ("batteries", "hot", "destroy the board", "local electrical codes"):
            assert words in text
        await pilot.press("enter")  # Enter alone lands on Cancel
        await pilot.pause(0.2)
        assert not isinstance(app.screen, CautionScreen)
        assert scripted.sweeps == 0 and not app.state.caution_confirmed
        await run_a_sweep(pilot, app)
        assert scripted.sweeps == 1
        await pilot.press("2", "r")  # confirmed once per session: the second run starts at once
        await settle(pilot, app, lambda: scripted.sweeps == 2 and app.state.sweep_state == "finished")
        assert not isinstance(app.screen, CautionScreen)


async def test_saving_the_plan_twice_never_replaces_a_file(scripted, runs_dir, demo_files):
    app = make_app(scripted, runs_dir, demo_files)
    folder = runs_dir / "plans"
    folder.mkdir()
    earlier = folder / "demo-pfet-edited.toml"
    earlier.write_text("# saved earlier by hand\n")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("2")
        await pilot.pause(0.1)
        await pilot.press("w")
        await pilot.pause(0.1)
        await pilot.press("w")
        await pilot.pause(0.1)
    assert earlier.read_text() == "# saved earlier by hand\n"
    second, third = folder / "demo-pfet-edited-2.toml", folder / "demo-pfet-edited-3.toml"
    assert second.read_text() == third.read_text()
    # the same plan, read back by the plan reader; its spec key now points at the same spec from the new folder
    saved, edited = load_plan(third), app.current_plan()
    assert {**saved.to_dict(), "spec": ""} == {**edited.to_dict(), "spec": ""}
    assert plan_spec_path(saved, third).resolve() == plan_spec_path(edited, demo_files[0]).resolve()
    assert app.messages[-1] == f"Plan saved to {shown(third)}"


async def test_live_view_draws_curves_table_progress_and_limits(scripted, runs_dir, demo_files):
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=(100, 30)) as pilot:
        await run_a_sweep(pilot, app)
        await pilot.press("3")
        await pilot.pause(0.2)
        text = screen_text(app)
        assert "30/30 points" in text and "supply OFF" in text
        assert "current / A" in text and "drop/mV" in text and "loss/mW" in text
        assert "⣿ drop (measured)" in text
        assert "current" in text and "94%" in text  # 3.0 A of the 3.2 A limit
        assert "3.00 A" in text and "CV" in text  # latest point in the table


async def test_stop_mid_sweep_reaches_the_safe_state(runs_dir, demo_files):
    from .synthetic import ScriptedSession

    session = ScriptedSession(runs_dir, hold_at=10)
    app = make_app(session, runs_dir, demo_files)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("2", "r")
        await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
        await pilot.press("y")
        await settle(pilot, app, lambda: session.reached_hold.is_set() and len(app.state.live.points) == 10)
        assert session.output_on
        await pilot.press("s")
        await settle(pilot, app, lambda: app.state.sweep_state == "finished")
        assert not session.output_on
        assert app.state.last_outcome.outcome == "cancelled"
        text = screen_text(app)
        assert "CANCEL" in text and "outputs are off" in text


async def test_results_show_fit_uncertainty_verdict_and_rule(scripted, runs_dir, demo_files):
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=(120, 40)) as pilot:
        await run_a_sweep(pilot, app)
        await pilot.press("4")
        await pilot.pause(0.2)
        text = screen_text(app)
        assert "VERDICT:" in text and any(w in text for w in ("PASS ✔", "FAIL ✘", "COND ◆"))
        assert "rule:" in text and "ILAC" in text
        # U stated with its coverage factor and probability (GUM 7.2.4; k_p of the budget, GUM 6.3)
        assert "R_on" in text and "± " in text and re.search(r"\(k = \d\.\d\d, 95\.45 % coverage\)", text)
        assert "loss measured" in text and "predicted loss" in text
        await pilot.press("t")
        await pilot.pause(0.2)
        assert "residual" in screen_text(app)
        await pilot.press("m")
        await settle(pilot, app, lambda: app.state.findings is not None and app.state.findings.model == "resistive")
        assert "resistive (CHOSEN with m" in screen_text(app)


async def test_results_export_writes_the_html_report_beside_the_run(scripted, runs_dir, demo_files):
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=(120, 40)) as pilot:
        await run_a_sweep(pilot, app)
        await pilot.press("4", "e")
        target = app.state.findings.path.with_suffix(".html")
        await settle(pilot, app, lambda: "Report written" in screen_text(app) or "not written" in screen_text(app))
        assert "Report written" in screen_text(app)
        html = target.read_text()
        assert "<svg" in html and "ILAC" in html


async def test_lot_runs_each_serial_and_sums_the_lot_up(scripted, runs_dir, demo_files):
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("5", "n")
        for k, serial in enumerate(("L1", "L2", "L3")):
            await pilot.press("n", *serial, "enter")
            if k == 0:
                await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
                await pilot.press("y")
            await settle(pilot, app, lambda: len(app.state.lot) == k + 1 and app.state.lot_pending_serial is None
                         and app.state.lot_summary is not None and app.state.lot_summary.n == k + 1)
        assert app.current_mode == "lot"
        text = screen_text(app)
        for serial in ("L1", "L2", "L3"):
            assert serial in text
        assert "R_on mean" in text and "σ" in text and "LOT:" in text
        assert "count" in text  # the histogram
        await pilot.press("n", "L", "2", "enter")
        await pilot.pause(0.2)
        assert "already in this lot" in app.messages[-1]


async def test_archive_lists_opens_replays_and_overlays(scripted, runs_dir, demo_files, archive):
    app = make_app(scripted, runs_dir, demo_files, start_view="archive")
    async with app.run_test(size=(120, 30)) as pilot:
        await settle(pilot, app, lambda: "PASS" in screen_text(app) or "FAIL" in screen_text(app)
                     or "COND" in screen_text(app))
        text = screen_text(app)
        assert "2025-03-05 11:00:00" in text and "A1" in text and "A2" in text and "complete" in text
        await pilot.press("o")
        await settle(pilot, app, lambda: app.state.findings is not None)
        assert app.current_mode == "results" and app.state.findings.path == archive[1]  # newest first
        await pilot.press("6", "left_square_bracket")  # 10x -> 1x
        assert app.state.replay_speed == 1.0
        await pilot.press("right_square_bracket", "right_square_bracket", "right_square_bracket")
        assert app.state.replay_speed is None  # as fast as possible
        await pilot.press("p")
        await settle(pilot, app, lambda: app.state.sweep_state == "finished" and len(app.state.live.points) == 30)
        assert app.current_mode == "live" and app.state.live.source == "replay"
        assert "replay" in screen_text(app)
        await pilot.press("6", "a", "down", "b", "v")
        await pilot.pause(0.3)
        text = screen_text(app)
        assert "Overlay" in text and "⣿ A" in text and "+ B" in text
        await pilot.press("escape")
        await pilot.pause(0.1)
        assert app.current_mode == "archive"


async def test_faults_show_a_sentence_never_a_traceback(runs_dir, demo_files):
    from .synthetic import ScriptedSession

    class Broken(ScriptedSession):
        def sweep(self, plan, on_event):
            raise ConnectionResetError("the supply closed the connection")

    session = Broken(runs_dir)
    app = make_app(session, runs_dir, demo_files)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("2", "r")
        await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
        await pilot.press("y")
        await settle(pilot, app, lambda: app.state.sweep_state == "finished")
        text = screen_text(app)
        assert "the supply closed the connection" in text
        assert "outputs are off" not in text  # nothing was read back from an instrument, so nothing is claimed
        assert "Traceback" not in text


async def test_no_color_is_honoured(monkeypatch, scripted, runs_dir, demo_files):
    monkeypatch.setenv("NO_COLOR", "1")
    app = make_app(scripted, runs_dir, demo_files)
    assert app.no_color
