"""Helpers for integration tests: a rig on the simulated bench (real sockets, real pyvisa-py) and a recorded run."""

from __future__ import annotations

from benchlog.runs.events import Point
from benchlog.runs.writer import RunWriter, new_run_path
from benchlog.sweep.bench_file import BenchSetup, RoleSpec, Wiring
from benchlog.sweep.feasibility import check_plan_on_bench, check_plan_on_rig
from benchlog.sweep.plan import parse_plan
from benchlog.sweep.rig import open_rig
from benchlog.sweep.runner import SweepRunner
from benchlog.cli.simbench import SIM_PROFILES, sim_wiring


def setup_for(running, wiring: Wiring | None = None, element: str | None = None) -> BenchSetup:
    roles = {name: RoleSpec(name, res, SIM_PROFILES[name]) for name, res in running.resources.items()}
    return BenchSetup(roles=roles, wiring=wiring or sim_wiring(element or running.config.element),
                      line_frequency_hz=running.config.line_frequency_hz, source="test bench", simulated=True)


DEFAULT_SETTLE = "dwell_s = 0.005\ntolerance_v = 0.0002\nconsecutive = 2\ntimeout_s = 0.5"


def plan_text(kind: str, *, steps: str, limits: str, extra: str = "", settle: str = "", meter: str = "",
              element: str = "") -> str:
    parts = [f'[element]\nid = "T1"\nkind = "{kind}"\nserial = "S-1"\n{element}',
             f"[steps]\n{steps}",
             f"[settle]\n{settle or DEFAULT_SETTLE}"]
    if meter:
        parts.append(f"[meter]\n{meter}")
    parts.append(f"[limits]\n{limits}")
    parts.append(extra)
    return "\n".join(parts) + "\n"


class Recorded:
    """A sweep run to a real run file; keeps what was emitted to compare with what was written."""

    def __init__(self, runner: SweepRunner, path, emitted: list, outcome: str) -> None:
        self.runner, self.path, self.emitted, self.outcome = runner, path, emitted, outcome

    @property
    def points(self) -> list[Point]:
        return [e for e in self.emitted if isinstance(e, Point)]


def record(plan, setup: BenchSetup, out_dir, *, timeout_s=None, on_event=None, runner_hook=None) -> Recorded:
    warnings = check_plan_on_bench(plan, setup)
    rig = open_rig(setup, timeout_s=timeout_s)
    try:
        warnings += check_plan_on_rig(plan, rig)
        runner = SweepRunner(plan, rig, warnings=warnings)
        if runner_hook is not None:
            runner_hook(runner)
        path = new_run_path(out_dir, runner.header)
        emitted: list = []

        def sink(event):
            emitted.append(event)
            if on_event is not None:
                on_event(runner, event)

        with RunWriter(path) as writer:
            runner.writer = writer
            outcome = runner.run(sink)
    finally:
        rig.close()
    return Recorded(runner, path, emitted, outcome)


def parse(text: str):
    return parse_plan(text, "test-plan.toml")
