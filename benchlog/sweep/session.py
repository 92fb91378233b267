"""One recorded sweep from files to run file: check, connect, check again, run, record, close.

Shared by the CLI and the UI so both refuse the same setups for the same
reasons, before any output is switched on. Without a bench the built-in
simulated bench is started for the plan's element kind and stopped afterwards.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

from benchlog.filecheck import write_failure
from benchlog.runs.events import Event

from .bench_file import BenchSetup
from .feasibility import check_plan_on_bench, check_plan_on_rig
from .plan import Plan
from .rig import Rig, open_rig
from .runner import SweepRunner


@dataclass(frozen=True)
class SweepResult:
    run_file: Path
    points: int
    outcome: str
    message: str
    fault: BaseException | None = None  # the instrument error behind a "fault" outcome
    power_applied: bool = False


def run_sweep(
    plan: Plan,
    bench: BenchSetup | None,
    out_dir: str | Path,
    *,
    seed: int = 0,
    on_event: Callable[[Event], None] | None = None,
    before_power_on: Callable[[], bool | None] | None = None,
    on_runner: Callable[[SweepRunner], None] | None = None,
    sim_options: dict[str, Any] | None = None,
) -> SweepResult:
    """Run `plan` on `bench` (None: the built-in simulated bench) and record it under `out_dir`."""
    from benchlog.runs.writer import RunWriter, new_run_path

    running = None
    if bench is None:
        from .simbench import builtin_bench, sim_wiring

        # a reverse test needs a series current meter: the supply's read-back cannot resolve leakage
        wiring = sim_wiring(plan.element, current_from="meter" if plan.reverse is not None else "supply")
        bench, running = builtin_bench(plan.element, seed, wiring=wiring, **(sim_options or {}))
    rig: Rig | None = None
    try:
        warnings = check_plan_on_bench(plan, bench)
        rig = open_rig(bench)
        warnings += check_plan_on_rig(plan, rig)
        runner = SweepRunner(plan, rig, before_power_on=before_power_on, warnings=warnings)
        path = new_run_path(out_dir, runner.header)
        runner.run_file = path
        if on_runner is not None:
            on_runner(runner)
        writer = None
        try:
            with RunWriter(path) as writer:
                runner.writer = writer
                runner.run(on_event)
        except OSError as exc:  # RunWriteError (disk full, I/O error) or the file could not be created
            cause = exc.__cause__ if isinstance(exc.__cause__, OSError) else exc
            kept = writer.durable_points if writer is not None else 0
            raise write_failure(path, cause, f"the sweep was stopped there and the safe state commanded; "
                                f"the {kept} points confirmed on disk before are kept in it") from None
        return SweepResult(path, len(runner.points), runner.outcome or "fault", runner.message,
                           runner.fault, runner.power_applied)
    finally:
        if rig is not None:
            rig.close()
        if running is not None:
            running.stop()
