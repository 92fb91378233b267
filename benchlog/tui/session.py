"""The bench as the UI sees it: its roles, a probe of each, and sweeps run on it.

Every method here blocks on instrument I/O, so the app calls them only from
thread workers. The session owns the simulated bench when it started one, so a
test can look at the simulator's in-process state (`session.sim.bench`).
"""

from __future__ import annotations

import threading
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

from benchlog.runs.events import Event

#: Starts a simulated bench: (element or kind, seed, **sim options) -> (BenchSetup, running simulator).
StartSim = Callable[..., tuple[Any, Any]]


@dataclass(frozen=True)
class RoleStatus:
    """One instrument as the instruments view lists it."""

    role: str
    resource: str
    profile: str
    idn: str = ""
    state: str = "not probed"  # "connected" | "not probed" | "no answer"
    message: str = ""


@dataclass(frozen=True)
class SweepOutcome:
    """How a sweep ended, as the runner reported it: outcome, the run file and a sentence for the user."""

    outcome: str  # complete | cancelled | limit | fault
    run_path: Path | None
    points: int
    message: str = ""
    safe_state: str = ""  # "verified" | "unverified" | "unknown"; "" when nothing was connected
    safe_statement: str = ""  # the guard's one sentence about the outputs


class BenchSession:
    """A bench set up from a bench file (or the built-in simulated one) that the UI may probe and sweep."""

    def __init__(self, setup: Any, *, runs_dir: Path, sim: Any = None, start_sim: StartSim | None = None,
                 seed: int = 1, sim_options: dict | None = None, label: str = "",
                 clock: Callable[[], float] = time.monotonic, sleep: Callable[[float], None] = time.sleep) -> None:
        self.setup = setup
        self.sim = sim
        self.start_sim = start_sim
        self.seed = seed
        self.sim_options = dict(sim_options or {})
        self.sim_kind: str | None = None
        self.runs_dir = Path(runs_dir)
        self.label = label or ("simulated bench" if sim is not None else str(getattr(setup, "source", "bench")))
        self.clock = clock
        self.sleep = sleep
        self._runner = None
        self._lock = threading.Lock()
        self._cancelled = False
        self.last_safe_report: Any = None  # the guard's read-back after the last sweep (None: never connected)
        #: told at once, from the sweep's worker thread, of an output found ON when its instrument connects
        self.on_notice: Callable[[str], None] | None = None

    @classmethod
    def simulated(cls, element: Any, start_sim: StartSim, *, runs_dir: Path, seed: int = 1,
                  sim_options: dict | None = None, **kwargs: Any) -> "BenchSession":
        """Start a simulated bench for `element` (an Element or a kind) with `start_sim` and wrap it.

        The UI never starts the simulator itself: the CLI passes `cli.simbench.builtin_bench`.
        """
        options = dict(sim_options or {})
        setup, running = start_sim(element, seed, **options)
        session = cls(setup, runs_dir=runs_dir, sim=running, start_sim=start_sim, seed=seed, sim_options=options,
                      **kwargs)
        session.sim_kind = element if isinstance(element, str) else element.kind
        session.label = f"simulated bench ({session.sim_kind})"
        return session

    def _bench_for(self, plan: Any) -> None:
        """The simulator holds one element; a plan of another kind gets a freshly started simulated bench."""
        if self.sim is None or self.start_sim is None or self.sim_kind == plan.element.kind:
            return
        self.sim.stop()
        self.setup, self.sim = self.start_sim(plan.element, self.seed, **self.sim_options)
        self.sim_kind = plan.element.kind
        self.label = f"simulated bench ({self.sim_kind})"

    @classmethod
    def from_file(cls, path: Path, *, runs_dir: Path, **kwargs: Any) -> "BenchSession":
        from benchlog.sweep.bench_file import load_bench

        return cls(load_bench(path), runs_dir=runs_dir, label=str(path), **kwargs)

    # -- no I/O -------------------------------------------------------------
    def roles(self) -> list[RoleStatus]:
        return [RoleStatus(name, spec.resource, str(spec.profile)) for name, spec in self.setup.roles.items()]

    # -- blocking I/O (workers only) -----------------------------------------
    def probe(self, role: str) -> RoleStatus:
        """Lock and open the role, read `*IDN?`, match it to its profile, switch it off and read that back, close it."""
        from benchlog.sweep.session import BenchInUse, probe_role

        spec = self.setup.roles[role]
        try:
            probed = probe_role(self.setup, role)
        except BenchInUse as exc:
            return RoleStatus(role, spec.resource, str(spec.profile), state="in use", message=_sentence(exc))
        except Exception as exc:  # shown to the user as a sentence, never a traceback
            return RoleStatus(role, spec.resource, str(spec.profile), state="no answer", message=_sentence(exc))
        return RoleStatus(role, spec.resource, probed.profile, probed.idn, "connected", probed.message)

    def sweep(self, plan: Any, on_event: Callable[[Event], None]) -> SweepOutcome:
        """Run one sweep to its end (or cancel); every event goes to `on_event` as it happens.

        `sweep.session.run_sweep` is the same path the CLI takes: the feasibility
        checks before power, the durable run file, and the runner's safe-state
        guard that switches every output off however the run ends.
        """
        from benchlog.sweep.session import run_sweep

        with self._lock:
            self._cancelled = False
        self.last_safe_report = None
        self._bench_for(plan)
        try:
            result = run_sweep(plan, self.setup, self.runs_dir, on_event=on_event, on_runner=self._hold_runner,
                               on_safe_state=self._hold_safe_state, on_notice=self._notice)
        finally:
            with self._lock:
                self._runner = None
        return SweepOutcome(result.outcome, result.run_file, result.points, result.message,
                            result.safe_state, result.safe_statement)

    def _notice(self, text: str) -> None:
        if self.on_notice is not None:
            self.on_notice(text)

    def _hold_safe_state(self, report: Any) -> None:
        self.last_safe_report = report

    def failed_outcome(self, sentence: str) -> SweepOutcome:
        """A sweep that ended by an exception, with what the guard read back (if anything was connected)."""
        report = self.last_safe_report
        if report is None or not report.roles:
            return SweepOutcome("fault", None, 0, sentence)
        return SweepOutcome("fault", None, 0, sentence, report.state, report.statement())

    def _hold_runner(self, runner: Any) -> None:
        with self._lock:
            self._runner = runner
            cancel_now = self._cancelled
        if cancel_now:
            runner.cancel()

    def cancel(self) -> None:
        """Ask the running sweep to stop; the runner reaches the safe state within one step. Thread-safe."""
        with self._lock:
            self._cancelled = True
            runner = self._runner
        if runner is not None:
            runner.cancel()

    def close(self) -> None:
        self.cancel()
        if self.sim is not None:
            self.sim.stop()


def outputs_sentence(safe_state: str, statement: str) -> str:
    """What the UI says about the outputs: only what the instruments read back.

    "verified": the outputs are off (read back). "" (nothing was connected, or a replay):
    no output was switched. Anything else: the guard's OUTPUTS MAY BE ON statement.
    """
    if safe_state == "verified":
        return "outputs are off."
    if safe_state == "":
        return "no output was switched."
    return (statement or "OUTPUTS MAY BE ON: not read back -- switch them off by hand now") + "."


def _sentence(exc: BaseException) -> str:
    line = getattr(exc, "line", None)
    if callable(line):
        return line()
    text = str(exc).strip() or type(exc).__name__
    return text.splitlines()[0]

