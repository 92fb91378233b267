"""The whole flow over the real runner: simulated bench on loopback sockets, real pyvisa-py, real run files.

connect -> confirm the caution -> sweep -> verdict -> stop mid-sweep (outputs off,
checked in the simulator's own state) -> open the run from the archive -> replay it.
"""

from __future__ import annotations

from pathlib import Path

from benchlog.cli.simbench import builtin_bench
from benchlog.tui.app import BenchApp
from benchlog.tui.launch import demo_plan, demo_specs, spec_for_kind
from benchlog.tui.session import BenchSession
from benchlog.tui.views.caution import CautionScreen

from .synthetic import screen_text
from .test_views import settle

SLOW_PLAN = """\
[element]
id = "Q9"
kind = "pmos"
serial = "STOP-1"
ambient_c = 25.0
operating_a = 1.0

[steps]
mode = "linear"
start_a = 0.05
stop_a = 2.0
count = 400

[settle]
dwell_s = 0.0
tolerance_v = 0.001
consecutive = 1
timeout_s = 1.0

[limits]
max_current_a = 2.5
compliance_v = 15.0
max_time_s = 600
"""


def demo_app(runs: Path, plan: Path, **session_options) -> BenchApp:
    from benchlog.sweep.plan import load_plan

    element = load_plan(plan).element
    session = BenchSession.simulated(element, builtin_bench, runs_dir=runs, seed=3, **session_options)
    specs = demo_specs()
    return BenchApp(session, runs_dir=runs, plans=[plan], specs=specs, plan=plan,
                    spec=spec_for_kind(element.kind, specs))


async def test_connect_confirm_sweep_verdict_archive_replay(tmp_path):
    runs = tmp_path / "runs"
    app = demo_app(runs, demo_plan("pmos-prototype"))
    try:
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot, app, lambda: all(r.state == "connected" for r in app.state.roles))
            assert "BENCHLOG,SIM-SUPPLY" in screen_text(app)
            await pilot.press("2", "r")
            await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
            assert not app.session.sim.bench.supply.output_on  # nothing on before the yes
            await pilot.press("y")
            await settle(pilot, app, lambda: app.state.findings is not None, timeout=60)
            assert app.state.last_outcome.outcome == "complete"
            assert not app.session.sim.bench.supply.output_on and not app.session.sim.bench.load.input_on
            await pilot.press("4")
            await pilot.pause(0.2)
            text = screen_text(app)
            assert "VERDICT:" in text and any(w in text for w in ("PASS ✔", "FAIL ✘", "COND ◆"))
            run_file = app.state.last_outcome.run_path
            assert run_file.is_file() and run_file.parent == runs

            await pilot.press("6")
            await settle(pilot, app, lambda: "PROTO-0001" in screen_text(app))
            await pilot.press("o")
            await settle(pilot, app, lambda: app.state.findings is not None and app.current_mode == "results")
            await pilot.press("6", "right_square_bracket", "right_square_bracket")  # 10x -> max
            await pilot.press("p")
            await settle(pilot, app, lambda: app.state.sweep_state == "finished" and app.state.live.source == "replay"
                         and app.state.live.finished is not None, timeout=30)
            assert len(app.state.live.points) == 30
            assert "replay" in screen_text(app)
    finally:
        app.session.close()


async def test_stop_mid_sweep_leaves_every_output_off(tmp_path):
    plan = tmp_path / "slow.toml"
    plan.write_text(SLOW_PLAN, encoding="utf-8")
    app = demo_app(tmp_path / "runs", plan, sim_options={"latency_s": 0.002})
    try:
        async with app.run_test(size=(80, 24)) as pilot:
            await pilot.press("3", "r")
            await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
            await pilot.press("y")
            await settle(pilot, app, lambda: len(app.state.live.points) >= 5, timeout=30)
            bench = app.session.sim.bench
            assert bench.supply.output_on or bench.load.input_on  # really on while it runs
            await pilot.press("s")
            await settle(pilot, app, lambda: app.state.sweep_state == "finished", timeout=30)
            assert app.state.last_outcome.outcome == "cancelled"
            assert not bench.supply.output_on and not bench.load.input_on
            assert app.state.last_outcome.points < 400
            text = screen_text(app)
            assert "outputs are off" in text
    finally:
        app.session.close()


async def _run_until_stopped(app, pilot):
    await pilot.press("3", "r")
    await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
    await pilot.press("y")
    await settle(pilot, app, lambda: app.state.sweep_state == "finished", timeout=60)


async def test_a_limit_hit_is_a_clear_message_with_outputs_off(tmp_path):
    plan = tmp_path / "tight.toml"
    plan.write_text(SLOW_PLAN.replace("count = 400", "count = 40").replace("max_time_s = 600",
                                                                            "max_time_s = 600\nmax_power_w = 0.005"),
                    encoding="utf-8")
    app = demo_app(tmp_path / "runs", plan)
    try:
        async with app.run_test(size=(80, 24)) as pilot:
            await _run_until_stopped(app, pilot)
            assert app.state.last_outcome.outcome == "limit"
            bench = app.session.sim.bench
            assert not bench.supply.output_on and not bench.load.input_on
            text = screen_text(app)
            assert "LIMIT:" in text and "outputs are off" in text and "Traceback" not in text
    finally:
        app.session.close()


async def test_an_instrument_fault_is_a_clear_message_with_outputs_off(tmp_path):
    from benchlog.sim.faults import FaultPlan

    plan = tmp_path / "trip.toml"
    plan.write_text(SLOW_PLAN.replace("count = 400", "count = 60"), encoding="utf-8")
    # about halfway through: the meter gets one message per reading, two per point
    app = demo_app(tmp_path / "runs", plan, sim_options={"faults": FaultPlan(drop_after_commands=60, role="meter")})
    try:
        async with app.run_test(size=(80, 24)) as pilot:
            await _run_until_stopped(app, pilot)
            assert app.state.last_outcome.outcome == "fault"
            bench = app.session.sim.bench
            assert not bench.supply.output_on and not bench.load.input_on
            text = screen_text(app)
            assert "FAULT:" in text and "outputs are off" in text and "Traceback" not in text
    finally:
        app.session.close()


async def test_the_nmos_kind_is_picked_run_and_judged_with_the_footer_keys(tmp_path):
    # The N-MOSFET appears where the other kinds do: its demo plan with `n`, its spec with `k`; the
    # session restarts the simulated bench with the plan's kind, and the sweep gets a verdict.
    from benchlog.tui.launch import demo_plans

    plans = demo_plans()
    start = demo_plan("pmos-prototype")
    from benchlog.sweep.plan import load_plan

    session = BenchSession.simulated(load_plan(start).element, builtin_bench, runs_dir=tmp_path / "runs", seed=3)
    specs = demo_specs()
    app = BenchApp(session, runs_dir=tmp_path / "runs", plans=plans, specs=specs, plan=start,
                   spec=spec_for_kind("pmos", specs))
    try:
        async with app.run_test(size=(100, 30)) as pilot:
            await settle(pilot, app, lambda: all(r.state == "connected" for r in app.state.roles))
            await pilot.press("2")
            for _ in plans:
                if "Q2 (nmos)" in screen_text(app):
                    break
                await pilot.press("n")
                await pilot.pause(0.1)
            text = screen_text(app)
            assert "Q2 (nmos)" in text and app.state.plan_path.stem == "nmos-prototype"
            assert "N-MOSFET in the return" in text and "switches the board's ground" in text
            for _ in specs:
                if "DEMO-NFET-4M (nmos)" in screen_text(app):
                    break
                await pilot.press("k")
                await pilot.pause(0.1)
            assert "DEMO-NFET-4M (nmos)" in screen_text(app)
            await pilot.press("r")
            await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
            await pilot.press("y")
            await settle(pilot, app, lambda: app.state.findings is not None, timeout=60)
            assert app.state.last_outcome.outcome == "complete"
            assert app.session.sim.config.element == "nmos"
            assert not app.session.sim.bench.supply.output_on and not app.session.sim.bench.load.input_on
            await pilot.press("4")
            await pilot.pause(0.2)
            text = screen_text(app)
            # the built-in bench holds 12 V, so the channel's |Vgs| is beyond the spec's 10 V point: judged, but
            # it cannot pass, and the results say why
            assert "VERDICT:" in text and "COND ◆" in text and "gate drive |Vgs|" in text
    finally:
        app.session.close()
