"""The UI driven only by the keys its footer names (Pilot `press`, focus never set in code).

Editing a plan, plan and spec kept together, honest labels, the archive's and
the lot's table keys, and quitting during a sweep. Runs are invented demo data
from the scripted bench (tests/tui/synthetic.py).
"""

from __future__ import annotations

from pathlib import Path

from benchlog.sweep.plan import load_plan, plan_spec_path
from benchlog.tui.app import BenchApp
from benchlog.tui.launch import DEMO_DIR, demo_plans, demo_specs
from benchlog.tui.paths import shown
from benchlog.tui.views.caution import CautionScreen, QuitDuringRunScreen

from .synthetic import PLAN_TEXT, SPEC_TEXT, ScriptedSession, screen_text, write_run
from .test_views import make_app, run_a_sweep, settle


async def _press_tab(pilot, times: int) -> None:
    await pilot.press(*(["tab"] * times))


async def test_tab_moves_through_the_fields_typing_edits_and_w_saves_what_was_typed(scripted, runs_dir, demo_files):
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("2")
        await pilot.pause(0.1)
        assert "Tab Edit fields" in screen_text(app)  # the key the footer names
        await pilot.press("tab")
        assert app.focused is not None and app.focused.id == "f-element-id"
        assert "Shift+Tab previous field" in screen_text(app)
        await pilot.press("tab", "tab")
        assert app.focused.id == "f-element-serial"
        await pilot.press("shift+tab")
        assert app.focused.id == "f-element-kind"
        await pilot.press("tab", *"SN-42", "enter")  # entering a field selects it: typing replaces the value
        assert app.focused is None
        assert app.current_plan().element.serial == "SN-42"
        await _press_tab(pilot, 10)
        assert app.focused.id == "f-steps-count"
        await pilot.press(*"many")
        await pilot.pause(0.1)
        text = screen_text(app)
        assert "plan not usable" in text and "[steps].count" in text  # the plan reader's own words
        await pilot.press("escape")
        assert app.focused is None
        await pilot.press("w")  # a plan the reader refuses is not saved
        await pilot.pause(0.1)
        assert app.messages[-1].startswith("Plan not saved") and "[steps].count" in app.messages[-1]
        assert not (runs_dir / "plans").exists()
        await pilot.press("r")  # nor run: refused before any caution or power
        await pilot.pause(0.2)
        assert scripted.sweeps == 0 and "Plan refused" in app.messages[-1]
        await _press_tab(pilot, 10)
        await pilot.press(*"12", "enter", "w")
        await pilot.pause(0.1)
    saved = runs_dir / "plans" / "demo-pfet-edited.toml"
    assert app.messages[-1] == f"Plan saved to {shown(saved)}"
    plan = load_plan(saved)  # the saved file passes the same reader, and still finds its spec
    assert plan.element.serial == "SN-42" and plan.steps.count == 12
    assert plan_spec_path(plan, saved).resolve() == demo_files[1].resolve()


def _other_rectifier_spec(folder: Path) -> Path:
    text = (DEMO_DIR / "specs" / "demo-rect-3a.toml").read_text(encoding="utf-8")
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "second-rect.toml"
    path.write_text(text, encoding="utf-8")
    return path


async def test_n_picks_each_plan_with_its_own_spec_and_k_offers_only_its_kind(tmp_path, runs_dir):
    extra = _other_rectifier_spec(tmp_path / "specs")
    plans = demo_plans()
    app = BenchApp(ScriptedSession(runs_dir), runs_dir=runs_dir, plans=plans, specs=[*demo_specs(), extra],
                   plan=DEMO_DIR / "plans" / "pmos-prototype.toml", probe_on_start=False)
    async with app.run_test(size=(180, 40)) as pilot:
        assert app.state.spec_path.name == "demo-pfet-10m.toml"
        await pilot.press("2")
        for _ in plans:
            await pilot.press("n")
            await pilot.pause(0.05)
            plan = load_plan(app.state.plan_path)
            named = plan_spec_path(plan, app.state.plan_path)
            assert app.state.spec_path.resolve() == named.resolve()  # the spec the plan names
            assert app.spec_kind(app.state.spec_path) == plan.element.kind
            text = screen_text(app)
            assert "part spec (named by the plan):" in text and f"  {shown(app.state.spec_path)}" in text
        while app.state.plan_path.name != "rectifier-prototype.toml":
            await pilot.press("n")
        offered = set()
        for _ in range(4):
            await pilot.press("k")
            await pilot.pause(0.05)
            offered.add(app.state.spec_path.name)
        assert offered == {"demo-rect-3a.toml", "second-rect.toml"}  # never a MOSFET or Schottky spec
        every = " ".join(app.messages) + screen_text(app)
        assert str(DEMO_DIR) not in every and "site-packages" not in every
        assert "demo/plans/rectifier-prototype.toml" in every


async def test_a_spec_of_another_kind_never_reaches_a_run(scripted, runs_dir, demo_files):
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=(180, 40)) as pilot:
        await pilot.press("2", "tab", "tab", *"rectifier", "enter")
        await pilot.pause(0.1)
        assert "✘ spec for a pmos," in screen_text(app) and "plan measures a rectifier" in screen_text(app)
        await pilot.press("r")
        await pilot.pause(0.2)
        assert scripted.sweeps == 0 and not isinstance(app.screen, CautionScreen)
        assert "Run not started" in app.messages[-1] and "k picks" in app.messages[-1]


async def test_an_extrapolated_value_says_so_and_a_chosen_model_ends_with_its_run(scripted, runs_dir, demo_files):
    # stopped after 10 of 30 points: 0.1–1.0 A measured, the operating current 2 A lies beyond
    short = write_run(runs_dir, serial="S1", stop_after=10, started_utc="2025-03-06T09:00:00.000Z")
    app = make_app(scripted, runs_dir, demo_files, start_view="archive")
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot, app, lambda: "S1" in screen_text(app))
        await pilot.press("o")
        await settle(pilot, app, lambda: app.state.findings is not None and app.state.findings.path == short)
        text = screen_text(app)
        assert "loss EXTRAPOLATED" in text and "extrapolated:" in text
        assert "loss measured" not in text
        assert "resistive (automatic choice)" in text
        await pilot.press("m")
        await settle(pilot, app, lambda: app.state.findings.model == "resistive")
        assert "CHOSEN with m" in screen_text(app)
        await pilot.press("k")  # the only spec of the run's kind: judged again against it, model kept
        await settle(pilot, app, lambda: not app.state.findings_busy)
        assert any(m.startswith(f"Judging {short.name} against") for m in app.messages[-2:])
        assert app.state.findings.model == "resistive" and app.state.findings.spec_path == demo_files[1]
        await run_a_sweep(pilot, app)  # a new run starts on the automatic choice
        await pilot.press("4")
        await settle(pilot, app, lambda: app.state.findings.path != short)
        text = screen_text(app)
        assert app.state.model == "auto" and "automatic choice" in text and "CHOSEN" not in text
        assert "loss measured" in text  # 2 A inside 0.1–3 A: a measured value, so labelled
        await pilot.press("6")
        await pilot.pause(0.2)
        assert "model" not in screen_text(app).split("date (UTC)")[0]  # no model carried into the archive's header


async def test_a_fitted_value_smaller_than_its_uncertainty_is_flagged_not_determined(scripted, runs_dir, demo_files):
    # 1 µΩ under 20 µV of noise: the slope is not resolved (invented demo data)
    write_run(runs_dir, serial="FLAT", r_ohm=1e-6, started_utc="2025-03-06T09:00:00.000Z")
    app = make_app(scripted, runs_dir, demo_files, start_view="archive")
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot, app, lambda: "FLAT" in screen_text(app))
        await pilot.press("o")
        await settle(pilot, app, lambda: app.state.findings is not None and app.state.findings.fit is not None)
        fit = app.state.findings.fit
        assert fit.expanded_u["r_on_ohm"] > abs(fit.params["r_on_ohm"])  # U (its own k_p) exceeds the value
        line = next(row for row in screen_text(app).splitlines() if "R_on" in row)
        assert "not determined" in line.lower()  # the one result formatter writes it (quantity.py)


TIGHT_SPEC = SPEC_TEXT.replace('name = "DEMO-PFET-26M"', 'name = "DEMO-PFET-TIGHT"').replace(
    "rds_on_max_ohm = 0.035", "rds_on_max_ohm = 0.012").replace("rds_on_ohm = 0.026", "rds_on_ohm = 0.010")


async def test_archive_judges_each_run_by_its_own_spec_and_moves_with_home_end_and_pages(
        scripted, runs_dir, demo_files):
    plan, spec = demo_files
    tight = spec.parent / "DEMO-PFET-TIGHT.toml"
    tight.write_text(TIGHT_SPEC, encoding="utf-8")
    tight_plan = PLAN_TEXT.replace('spec = "DEMO-PFET-26M.toml"', 'spec = "DEMO-PFET-TIGHT.toml"')
    no_spec_plan = PLAN_TEXT.replace('spec = "DEMO-PFET-26M.toml"\n', "")
    for k in range(24):
        write_run(runs_dir, serial=f"P{k:02d}", seed=k, started_utc=f"2025-03-04T10:{k:02d}:00.000Z")
    write_run(runs_dir, serial="TIGHT", plan_text=tight_plan, started_utc="2025-03-07T10:00:00.000Z")
    write_run(runs_dir, serial="NOSPEC", plan_text=no_spec_plan, started_utc="2025-03-07T09:00:00.000Z")
    app = BenchApp(scripted, runs_dir=runs_dir, plans=[plan], specs=[spec, tight], start_view="archive",
                   probe_on_start=False)
    async with app.run_test(size=(100, 24)) as pilot:
        await settle(pilot, app, lambda: "…" not in screen_text(app), timeout=30)
        text = screen_text(app)
        assert "Home/End/PgUp/PgDn rows" in text  # the footer names the table keys
        lines = text.splitlines()
        tight_row = next(row for row in lines if "TIGHT" in row)
        nospec_row = next(row for row in lines if "NOSPEC" in row)
        part_row = next(row for row in lines if "P23" in row)
        # the same invented 27 mΩ data: FAIL against the tight spec its plan names, not against its own 35 mΩ max
        assert "FAIL" in tight_row and "FAIL" not in part_row and ("PASS" in part_row or "COND" in part_row)
        assert "no spec" in nospec_row
        head = str(app.screen.query_one("#archive-head").render())
        assert "DEMO-PFET-TIGHT.toml (its own)" in head, head  # the newest run is selected first
        table = app.screen.query_one("#runs")
        await pilot.press("end")
        assert table.cursor_row == 25
        await pilot.press("home")
        assert table.cursor_row == 0
        await pilot.press("pagedown")
        assert table.cursor_row > 5
        await pilot.press("pageup")
        assert table.cursor_row == 0
        await pilot.press("a", "b")  # the same run twice
        await pilot.pause(0.1)
        assert "already marked A" in app.messages[-1] and list(app.screen.marks) == ["a"]
        await pilot.press("v")
        assert "Mark two runs first" in app.messages[-1]


async def test_lot_parts_are_remeasured_or_removed_and_an_outlier_is_named_in_words(scripted, runs_dir, demo_files):
    scripted.r_by_serial = {f"L{k}": 0.027 for k in range(5)} | {"L5": 0.018}  # one part a third low (invented)
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("5")
        for k in range(6):
            await pilot.press("n", *f"L{k}", "enter")
            if k == 0:
                await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
                await pilot.press("y")
            await settle(pilot, app, lambda: len(app.state.lot) == k + 1 and app.state.lot_pending_serial is None
                         and app.state.lot_summary is not None and app.state.lot_summary.n == k + 1, timeout=20)
        outlier_row = next(row for row in screen_text(app).splitlines() if "L5" in row)
        assert "OUTLIER" in outlier_row
        assert "value ± U (95.45 %)" in screen_text(app)  # what U means, on the table itself
        await pilot.press("n", *"L2", "enter")
        await pilot.pause(0.2)
        assert "already in this lot" in app.messages[-1] and "r to re-measure" in app.messages[-1]
        assert "r Re-measure part" in screen_text(app) and "x Remove part" in screen_text(app)
        old_run = app.state.lot[0].run_path
        await pilot.press("home", "r")  # the first part, measured again
        await settle(pilot, app, lambda: app.state.lot[0].run_path != old_run and app.state.lot_pending_serial is None
                     and app.state.lot_summary is not None and app.state.lot_summary.n == 6, timeout=20)
        assert [e.serial for e in app.state.lot] == [f"L{k}" for k in range(6)]  # replaced, not added
        assert old_run.is_file() and app.state.lot[0].run_path.is_file()  # both kept on disk
        assert "replaces" in " ".join(app.messages[-3:])
        await pilot.press("end", "x")  # the last part out of the lot
        await settle(pilot, app, lambda: app.state.lot_summary is not None and app.state.lot_summary.n == 5)
        assert [e.serial for e in app.state.lot] == [f"L{k}" for k in range(5)]
        table = app.screen.query_one("#lot-parts")
        assert [str(table.get_row_at(i)[0]).strip() for i in range(table.row_count)] == [f"L{k}" for k in range(5)]
        assert "removed from the lot" in app.messages[-1]


async def test_q_during_a_sweep_asks_and_says_outputs_off_only_as_read_back(runs_dir, demo_files):
    held = ScriptedSession(runs_dir, hold_at=5)
    app = make_app(held, runs_dir, demo_files)
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.press("2", "r")
        await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
        await pilot.press("y")
        await settle(pilot, app, lambda: held.reached_hold.is_set())
        await pilot.press("q")
        await pilot.pause(0.1)
        assert isinstance(app.screen, QuitDuringRunScreen) and app.state.sweep_state == "running"
        await pilot.press("n")  # no: the run goes on
        await pilot.pause(0.1)
        assert app.is_running and not held.cancel_seen.is_set() and "Quit cancelled" in app.messages[-1]
        await pilot.press("q", "y")
        await settle(pilot, app, lambda: not app.is_running or "Run stopped before quitting" in app.messages[-1])
    assert held.cancel_seen.is_set() and not held.output_on
    assert app.messages[-1] == "Run stopped before quitting; outputs are off (read back)."


async def test_ctrl_c_during_a_sweep_stops_it_without_a_question(runs_dir, demo_files):
    held = ScriptedSession(runs_dir, hold_at=5)
    app = make_app(held, runs_dir, demo_files)
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.press("2", "r")
        await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
        await pilot.press("y")
        await settle(pilot, app, lambda: held.reached_hold.is_set())
        await pilot.press("ctrl+c")
        await settle(pilot, app, lambda: not app.is_running or "Run stopped before quitting" in app.messages[-1])
    assert held.cancel_seen.is_set() and not held.output_on
    assert app.messages[-1] == "Run stopped before quitting; outputs are off (read back)."
