"""One recorded sweep from files to run file: check, lock, connect, check again, run, record, close.

Shared by the CLI and the UI so both refuse the same setups for the same
reasons, before any output is switched on. The built-in simulated bench is
started by the caller (`cli.simbench`), never here.

Every instrument resource is locked before the first command is sent (one sweep
per bench). From the first connection on, one safe-state guard holds every
opened role: each is switched off and read back right after it connects, and
every way out after that (a plan refused by the instruments' profiles, an
unreachable second instrument, a fault, Ctrl-C) goes through the guard. Its
report is the one statement about the outputs, given to `on_safe_state`.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import partial
from pathlib import Path
from typing import Any, Callable

from benchlog.filecheck import write_failure
from benchlog.instruments.errors import BenchInUse  # raised here for the layers above (the UI)
from benchlog.runs.events import Event

from .bench_file import BenchSetup
from .feasibility import check_plan_on_bench, check_plan_on_rig
from .plan import Plan
from .rig import close_roles, open_rig, profile_role
from .runner import SweepRunner, idn_text


@dataclass(frozen=True)
class SweepResult:
    run_file: Path
    points: int
    outcome: str
    message: str
    fault: BaseException | None = None  # the instrument error behind a "fault" outcome
    power_applied: bool = False
    safe_state: str = "unknown"  # "verified" | "unverified" | "unknown", read after the last exit
    safe_statement: str = ""  # the one sentence about the outputs


def run_sweep(
    plan: Plan,
    bench: BenchSetup,
    out_dir: str | Path,
    *,
    on_event: Callable[[Event], None] | None = None,
    before_power_on: Callable[[], bool | None] | None = None,
    on_runner: Callable[[SweepRunner], None] | None = None,
    on_safe_state: Callable[[Any], None] | None = None,
    on_notice: Callable[[str], None] | None = None,
    lock_dir: str | Path | None = None,
) -> SweepResult:
    """Run `plan` on `bench` and record it under `out_dir` (a simulated bench is started by the caller).

    `on_safe_state` gets the guard's SafeStateReport on every way out after the first
    connection (without it, a statement other than "verified" is printed to stderr).
    `on_notice` is told at once, in one line naming role and resource, of an output found
    ON when its instrument connects, before it is switched off (without it: stderr); the
    run file then records what the read-back said, as a warning after its header.
    Raises BenchInUse when another session holds one of the bench's resources.
    """
    from benchlog.instruments.benchlock import BenchLock
    from benchlog.instruments.guard import safe_state_guard
    from benchlog.runs.writer import RunWriter, new_run_path

    guard_kwargs: dict[str, Any] = {} if on_safe_state is None else {"report": on_safe_state}
    if on_notice is not None:
        guard_kwargs["on_notice"] = on_notice
    guard = safe_state_guard(raise_unverified=False, **guard_kwargs)
    warnings = check_plan_on_bench(plan, bench)
    resources = [spec.resource for spec in bench.roles.values()]
    with BenchLock(resources, directory=Path(lock_dir) if lock_dir is not None else None) as lock:
        try:
            with guard:
                rig = open_rig(bench, on_open=guard.add)
                warnings += lock.notes + guard.connect_notes
                warnings += check_plan_on_rig(plan, rig)
                # the runner's own guard reads the outputs back for the run file; this one reports
                runner = SweepRunner(plan, rig, before_power_on=before_power_on, warnings=warnings,
                                     guard=partial(safe_state_guard, report=None))
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
        finally:
            _close_all(guard.roles)
    report = guard.outcome
    return SweepResult(path, len(runner.points), runner.outcome or "fault", runner.message,
                       runner.fault, runner.power_applied,
                       safe_state=getattr(report, "state", "unknown"),
                       safe_statement=report.statement() if report is not None else "")


def _close_all(roles) -> None:
    close_roles(list(roles))


@dataclass(frozen=True)
class ProbedRole:
    """What a probe read back: the instrument's own `*IDN?`, the profile it matched, the outputs statement."""

    idn: str
    profile: str
    message: str = ""  # empty when the output was read back off and was not found on


def probe_role(bench: BenchSetup, name: str, *, lock_dir: str | Path | None = None) -> ProbedRole:
    """Lock the role's resource, open it, read `*IDN?` (checked against its profile), switch it off and
    read that back, close it. Raises BenchInUse when a sweep holds the resource (a probe sends connect
    commands: never during a sweep)."""
    from benchlog.instruments.benchlock import BenchLock
    from benchlog.instruments.connect import open_role
    from benchlog.instruments.guard import safe_state_guard

    spec = bench.roles[name]
    with BenchLock([spec.resource], directory=Path(lock_dir) if lock_dir is not None else None):
        role = open_role(profile_role(name), spec.resource, spec.profile, backend=spec.backend)
        try:
            guard = safe_state_guard(report=None, raise_unverified=False, on_notice=None)
            with guard:
                guard.add(role)  # switched off and read back, like every connection
            report = guard.outcome
            said = [n for n in guard.connect_notes if "was ON when benchlog connected" in n]
            if report is not None and report.roles and not report.verified:
                said.append(report.statement())
            return ProbedRole(idn_text(role.idn), role.profile.name, "; ".join(said))
        finally:
            close_roles([role])
