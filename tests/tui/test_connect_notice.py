"""An output found ON when the UI connects is told at once, as a notice, before the sweep's caution is moot.

Over the real runner, real pyvisa-py and the simulated bench; the sim's own state is the witness.
"""

from __future__ import annotations

from benchlog.sweep.bench_file import load_bench
from benchlog.tui.app import BenchApp
from benchlog.tui.session import BenchSession
from benchlog.tui.views.caution import CautionScreen

from .test_session_lock import PLAN
from .test_views import settle


def _app(tmp_path, running, *, probe_on_start):
    text = "".join(f'[{r}]\nresource = "{running.resources[r]}"\nprofile = "sim-{r}"\n\n'
                   for r in ("supply", "load", "meter"))
    bench = tmp_path / "bench.toml"
    bench.write_text(text + '[wiring]\nforce = "load"\ncurrent_from = "load"\ninput_v = 12.0\n')
    plan = tmp_path / "plan.toml"
    plan.write_text(PLAN)
    session = BenchSession(load_bench(bench), runs_dir=tmp_path / "runs")
    return BenchApp(session, runs_dir=tmp_path / "runs", plans=[plan], plan=plan, probe_on_start=probe_on_start)


def _left_on(running):
    with running.bench.lock:
        running.bench.supply.voltage_set_v = 5.0
        running.bench.supply.output_on = True


async def test_an_output_found_on_when_a_sweep_connects_is_a_notice(sim_bench, tmp_path):
    running = sim_bench()
    app = _app(tmp_path, running, probe_on_start=False)
    supply = running.resources["supply"]
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("2", "r")
        await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
        _left_on(running)  # someone switched it on at the front panel meanwhile
        await pilot.press("y")
        await settle(pilot, app, lambda: app.state.sweep_state == "finished", timeout=60)
    said = [m for m in app.messages if "found ON at connect" in m]
    assert said == [f"supply {supply}: output found ON at connect; switching it off and reading it back"]
    assert app.state.last_outcome.outcome == "complete" and app.state.last_outcome.safe_state == "verified"
    assert not running.bench.supply.output_on and not running.bench.load.input_on


async def test_an_output_found_on_by_the_probe_is_a_notice(sim_bench, tmp_path):
    running = sim_bench()
    _left_on(running)
    app = _app(tmp_path, running, probe_on_start=True)
    supply = running.resources["supply"]
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot, app, lambda: all(r.state == "connected" for r in app.state.roles))
    said = [m for m in app.messages if "was ON when benchlog connected" in m]
    assert said == [f"supply {supply}: output was ON when benchlog connected; switched off (read back)"]
    assert not running.bench.supply.output_on
