"""The benchlog terminal app: one mode per view, shared state on the app, instrument I/O in thread workers.

Threads: probes, sweeps, replays and analysis run in `@work(thread=True)`
workers. A sweep's events go into an `EventFeed`; a 15 Hz timer on the UI
thread drains it and redraws once per batch. Endings come back as messages.
"""

from __future__ import annotations

import threading
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Sequence

from textual import work
from textual.app import App
from textual.binding import Binding
from textual.message import Message

from .archive_query import ArchiveChoice
from .collector import CollectorPolicy
from .feed import EventFeed
from .findings import MODELS, RunFindings, study_run
from .liverun import LiveRun
from .paths import shown
from .session import BenchSession, RoleStatus, SweepOutcome, outputs_sentence
from .views import VIEWS

REDRAW_HZ = 15.0

VIEW_KEYS = (
    ("1", "instruments", "Bench"),
    ("2", "setup", "Set-up"),
    ("3", "live", "Live"),
    ("4", "results", "Results"),
    ("5", "lot", "Lot"),
    ("6", "archive", "Archive"),
)


@dataclass
class LotEntry:
    serial: str
    run_path: Path | None
    value: float | None = None
    expanded_u: float | None = None  # U for 95.45 % coverage (the budget's own k_p)
    verdict: str | None = None
    outcome: str = ""
    message: str = ""
    quantity: str = "value"
    unit: str = ""


@dataclass
class Workbench:
    """What the views share: the plan and spec in use, the live run, the findings, the lot so far."""

    plans: list[Path] = field(default_factory=list)
    specs: list[Path] = field(default_factory=list)
    plan_path: Path | None = None
    plan_text: str = ""  # the plan as edited in the set-up view (TOML)
    spec_path: Path | None = None
    model: str = "auto"
    live: LiveRun = field(default_factory=LiveRun)
    sweep_state: str = "idle"  # idle | running | stopping | finished | replaying
    last_outcome: SweepOutcome | None = None
    findings: RunFindings | None = None
    findings_busy: bool = False
    roles: list[RoleStatus] = field(default_factory=list)
    lot: list[LotEntry] = field(default_factory=list)
    lot_pending_serial: str | None = None
    lot_summary: Any = None  # benchlog.analysis.lot.LotSummary
    lot_summary_error: str = ""
    caution_confirmed: bool = False
    replay_speed: float | None = 10.0


class SweepEnded(Message):
    def __init__(self, generation: int, outcome: SweepOutcome) -> None:
        super().__init__()
        self.generation = generation
        self.outcome = outcome


class FindingsReady(Message):
    def __init__(self, findings: RunFindings | None, error: str = "") -> None:
        super().__init__()
        self.findings = findings
        self.error = error


class RoleProbed(Message):
    def __init__(self, status: RoleStatus) -> None:
        super().__init__()
        self.status = status


class BenchApp(App):
    """Keyboard-first bench UI; `session` is the bench (None: archive and replay only)."""

    CSS_PATH = "benchlog.tcss"
    TITLE = "benchlog"
    ENABLE_COMMAND_PALETTE = False
    MODES = VIEWS

    BINDINGS = [
        *(Binding(key, f"view('{mode}')", label) for key, mode, label in VIEW_KEYS),
        Binding("question_mark", "view('help')", "Help", key_display="?"),
        Binding("s", "stop", "STOP", key_display="s"),
        Binding("q", "quit_safely", "Quit"),
        Binding("ctrl+c", "quit_now", "Quit", show=False, priority=True),
    ]

    def __init__(
        self,
        session: BenchSession | None = None,
        *,
        runs_dir: Path | str = "runs",
        plans: Sequence[Path] = (),
        specs: Sequence[Path] = (),
        plan: Path | None = None,
        spec: Path | None = None,
        start_view: str = "instruments",
        clock: Callable[[], float] = time.monotonic,
        replay: Path | None = None,
        replay_speed: float | None = 10.0,
        probe_on_start: bool = True,
        archive: ArchiveChoice | None = None,
    ) -> None:
        super().__init__()
        self.session = session
        self.archive_choice = archive  # None: the archive view lists the run folder
        self._archive = None  # the open store.Archive, opened on first use by a worker
        self._archive_lock = threading.Lock()
        self.runs_dir = Path(runs_dir)
        self.clock = clock
        self.feed = EventFeed()
        self.state = Workbench(plans=[Path(p) for p in plans], specs=[Path(s) for s in specs])
        self.state.replay_speed = replay_speed
        if plan is not None:
            self.state.plan_path = Path(plan)
            if self.state.plan_path not in self.state.plans:
                self.state.plans.insert(0, self.state.plan_path)
        elif self.state.plans:
            self.state.plan_path = self.state.plans[0]
        if self.state.plan_path is not None:
            self.state.plan_text = _read_text(self.state.plan_path)
        self._spec_kinds: dict[Path, str | None] = {}
        if spec is not None:
            self.state.spec_path = Path(spec)
            if self.state.spec_path not in self.state.specs:
                self.state.specs.insert(0, self.state.spec_path)
        else:
            self.pair_spec()
        if session is not None:
            self.state.roles = session.roles()
            if hasattr(session, "on_notice"):  # an output found ON at connect, told from the sweep's worker
                session.on_notice = self._notice_from_worker
        self._start_view = start_view
        self._replay_at_start = Path(replay) if replay else None
        self._probe_on_start = probe_on_start and session is not None
        self._sweep_started_at: float | None = None
        self._generation = 0
        self.messages: list[str] = []  # every message shown, for tests and the help view's log
        self._collector = CollectorPolicy()

    # -- modes ----------------------------------------------------------------
    def on_mount(self) -> None:
        self._collector.start()
        self.set_interval(1.0 / REDRAW_HZ, self._pump)
        self.switch_mode(self._start_view)
        if self._probe_on_start:
            self.probe_all()
        if self._replay_at_start is not None:
            self.start_replay(self._replay_at_start)

    def action_view(self, mode: str) -> None:
        if self.current_mode != mode:
            self.switch_mode(mode)

    def redraw(self) -> None:
        """Ask the visible view to show the shared state again."""
        from textual.css.query import NoMatches

        refresh = getattr(self.screen, "refresh_view", None)
        if refresh is not None:
            try:
                refresh()
            except NoMatches:
                pass  # the view is still being composed; it draws itself when mounted

    def say(self, text: str, *, severity: str = "information") -> None:
        """A message for the user: kept on the status line of the views and shown as a toast."""
        self.messages.append(text)
        if severity != "information":
            self.notify(text, severity=severity, timeout=8)
        self.redraw()

    def _notice_from_worker(self, text: str) -> None:
        self.call_from_thread(self.say, text, severity="warning")

    # -- the event pump (UI thread) -------------------------------------------
    def _pump(self) -> None:
        events = self.feed.drain()
        if events:
            self.state.live.apply(events)
        if events or self.state.sweep_state in ("running", "stopping", "replaying"):
            if self.current_mode == "live":
                self.redraw()

    def elapsed_s(self) -> float | None:
        if self._sweep_started_at is None:
            return None
        if self.state.sweep_state in ("running", "stopping"):
            return self.clock() - self._sweep_started_at
        return None

    # -- probing ---------------------------------------------------------------
    def probe_all(self) -> None:
        if self.session is None:
            return
        for status in self.session.roles():
            self.probe_role(status.role)

    @work(thread=True, group="probe")
    def probe_role(self, role: str) -> None:
        status = self.session.probe(role)
        self.post_message(RoleProbed(status))

    def on_role_probed(self, message: RoleProbed) -> None:
        roles = [message.status if r.role == message.status.role else r for r in self.state.roles]
        self.state.roles = roles
        if message.status.state != "connected":
            self.say(f"{message.status.role}: {message.status.message or message.status.state}", severity="warning")
        elif message.status.message:  # connected, but an output was found ON (or did not read back off)
            self.say(message.status.message, severity="warning")
        self.redraw()

    # -- sweeps ------------------------------------------------------------------
    def current_plan(self):
        """The plan as edited in the set-up view, checked; raises BadInput."""
        from benchlog.badinput import BadInput
        from benchlog.sweep.plan import parse_plan

        if not self.state.plan_text.strip():
            raise BadInput("plan", "", "no plan is loaded", "a plan picked in the set-up view")
        import dataclasses

        source = shown(self.state.plan_path) if self.state.plan_path else "edited plan"
        plan = parse_plan(self.state.plan_text, source)
        spec = self.state.spec_path  # the spec in use travels with the run (its header names it)
        if spec is None:
            return dataclasses.replace(plan, spec="")
        named = self.plan_spec()
        return plan if named is not None and _same_file(named, spec) else dataclasses.replace(plan, spec=str(spec))

    def request_sweep(self, serial: str | None = None) -> None:
        """Start a sweep of the current plan, after the safety caution the first time in a session."""
        from benchlog.badinput import BadInput

        if self.session is None:
            self.say("No bench is connected: start with --bench BENCH.toml, or use `benchlog demo`.", severity="error")
            return
        if self.state.sweep_state in ("running", "stopping", "replaying"):
            self.say("A run is in progress; stop it first (s).", severity="warning")
            return
        try:
            plan = self.current_plan()
            if serial is not None:
                plan = _with_serial(plan, serial)
        except BadInput as exc:
            self.say(f"Plan refused: {exc.line()}", severity="error")
            return
        spec = self.state.spec_path
        if spec is not None and self.spec_kind(spec) not in (None, plan.element.kind):
            self.say(f"Run not started: spec {shown(spec)} is for a {self.spec_kind(spec)}, the plan measures a "
                     f"{plan.element.kind}; k picks a spec of the plan's kind.", severity="error")
            self.state.lot_pending_serial = None
            return
        if self.state.caution_confirmed:
            self._start_sweep(plan)
            return
        from .views.caution import CautionScreen

        def answered(confirmed: bool | None) -> None:
            if confirmed:
                self.state.caution_confirmed = True
                self._start_sweep(plan)
            else:
                self.state.lot_pending_serial = None
                self.say("Run not started: the caution was not confirmed.")

        self.push_screen(CautionScreen(), answered)

    def _start_sweep(self, plan) -> None:
        self._generation = self.feed.reset()
        self.state.live = LiveRun(source="live")
        self.state.sweep_state = "running"
        self.state.last_outcome = None
        self.state.model = "auto"  # a model chosen with m belongs to the run it was chosen for
        self._sweep_started_at = self.clock()
        self.switch_mode("live") if self.current_mode != "lot" else None
        self._sweep_worker(plan, self._generation)
        self.redraw()

    @work(thread=True, exclusive=True, group="sweep")
    def _sweep_worker(self, plan, generation: int) -> None:
        push = self.feed.push
        try:
            outcome = self.session.sweep(plan, lambda event: push(event, generation))
        except Exception as exc:  # BadInput, BenchError or anything else: a sentence, never a traceback
            failed = getattr(self.session, "failed_outcome", None)
            outcome = failed(_sentence(exc)) if failed is not None else SweepOutcome("fault", None, 0, _sentence(exc))
        self.post_message(SweepEnded(generation, outcome))

    def on_sweep_ended(self, message: SweepEnded) -> None:
        if message.generation != self._generation:
            return
        self.state.live.apply(self.feed.drain())
        outcome = message.outcome
        self.state.last_outcome = outcome
        self.state.sweep_state = "finished"
        text = {
            "complete": "Run complete",
            "cancelled": "Run stopped by you",
            "limit": "Run stopped at a limit",
            "fault": "Run stopped by an instrument fault",
        }.get(outcome.outcome, f"Run ended ({outcome.outcome})")
        text += "; " + outputs_sentence(getattr(outcome, "safe_state", ""), getattr(outcome, "safe_statement", ""))
        said = outcome.message.startswith("OUTPUTS MAY BE ON")  # already the statement above: once is enough
        detail = f" {outcome.message}" if outcome.message and not said else ""
        safe = getattr(outcome, "safe_state", "") in ("verified", "")
        self.say(text + detail, severity="information" if outcome.outcome == "complete" and safe else "warning")
        if outcome.run_path is not None:
            self.analyse(outcome.run_path)
            if self.archive_choice is not None:
                self._publish_worker(outcome.run_path)
        if self.state.lot_pending_serial is not None:
            self._lot_part_done(outcome)
        self.redraw()

    def action_stop(self) -> None:
        if self.state.sweep_state == "running" and self.session is not None:
            self.state.sweep_state = "stopping"
            self.session.cancel()
            self.say("Stopping: outputs go off within one step.", severity="warning")
        elif self.state.sweep_state == "replaying":
            self.feed.reset()
            self.workers.cancel_group(self, "replay")
            self.state.sweep_state = "finished"
            self.say("Replay stopped.")
        self.redraw()

    # -- replay --------------------------------------------------------------------
    def start_replay(self, path: Path, speed: float | None | str = "default") -> None:
        if self.state.sweep_state in ("running", "stopping"):
            self.say("A run is in progress; stop it first (s).", severity="warning")
            return
        if speed == "default":
            speed = self.state.replay_speed
        self._generation = self.feed.reset()
        self.state.live = LiveRun(source="replay")
        self.state.sweep_state = "replaying"
        self.state.model = "auto"
        self._sweep_started_at = None
        self.switch_mode("live")
        self._replay_worker(Path(path), speed, self._generation)

    @work(thread=True, exclusive=True, group="replay")
    def _replay_worker(self, path: Path, speed: float | None, generation: int) -> None:
        from textual.worker import get_current_worker

        from benchlog.runs import replay

        worker = get_current_worker()
        points = 0
        try:
            def sleep(seconds: float) -> None:
                end = time.monotonic() + seconds
                while not worker.is_cancelled and time.monotonic() < end:
                    time.sleep(min(0.05, max(0.0, end - time.monotonic())))

            for event in replay(path, speed=speed, sleep=sleep):
                if worker.is_cancelled:
                    return
                self.feed.push(event, generation)
                points += 1
            outcome = SweepOutcome("replayed", path, points, f"Replay of {path.name} finished.")
        except Exception as exc:
            outcome = SweepOutcome("fault", None, 0, f"Replay failed: {_sentence(exc)}")
        self.post_message(ReplayEnded(generation, outcome))

    def on_replay_ended(self, message: "ReplayEnded") -> None:
        if message.generation != self._generation:
            return
        self.state.live.apply(self.feed.drain())
        self.state.sweep_state = "finished"
        self.say(message.outcome.message)
        if message.outcome.run_path is not None:
            self.analyse(message.outcome.run_path)
        self.redraw()

    # -- the archive ---------------------------------------------------------------------
    def archive_store(self):
        """The open archive (`store.Archive`), opened on first use; call from a worker thread (it may wait on a
        server). Raises BadInput (ArchiveUnreachable) when it cannot be opened; the next call tries again."""
        from benchlog.store import open_archive

        with self._archive_lock:
            if self._archive is None:
                self._archive = open_archive(self.archive_choice.url)
            return self._archive

    @work(thread=True, group="publish")
    def _publish_worker(self, run_path: Path) -> None:
        """A finished run goes into the archive the UI shows; if that fails the run file stands and `sync` catches up."""
        from benchlog.store.ingest import add_run

        try:
            done = add_run(self.archive_store(), run_path)
            text = f"{run_path.name}: {done.action} in the archive" + (f" ({done.note})" if done.note else "")
            severity = "information"
        except Exception as exc:  # noqa: BLE001 - any archive fault: the run file is complete, sync later
            text = (f"{run_path.name} is not in the archive ({_sentence(exc)}); the run file is complete: "
                    f"`benchlog archive sync {shown(self.runs_dir)}` adds it later.")
            severity = "warning"
        self.call_from_thread(self.say, text, severity=severity)
        self.call_from_thread(self.redraw)

    # -- analysis --------------------------------------------------------------------
    def analyse(self, path: Path, *, model: str | None = None, spec: Path | None | str = "current") -> None:
        self.state.findings_busy = True
        model = model or self.state.model
        spec_path = self.state.spec_path if spec == "current" else spec
        self._analysis_worker(Path(path), spec_path, model)

    @work(thread=True, exclusive=True, group="analysis")
    def _analysis_worker(self, path: Path, spec_path: Path | None, model: str) -> None:
        try:
            findings = study_run(path, spec_path, model)
            self.post_message(FindingsReady(findings))
        except Exception as exc:
            self.post_message(FindingsReady(None, f"{path.name}: {_sentence(exc)}"))

    def on_findings_ready(self, message: FindingsReady) -> None:
        self.state.findings_busy = False
        if message.findings is None:
            self.say(f"Cannot analyse the run: {message.error}", severity="error")
            return
        self.state.findings = message.findings
        self.redraw()

    def next_model(self) -> str:
        index = (MODELS.index(self.state.model) + 1) % len(MODELS) if self.state.model in MODELS else 0
        self.state.model = MODELS[index]
        return self.state.model

    # -- plan and spec together ----------------------------------------------------------
    def plan_table(self) -> dict:
        """The edited plan as a TOML table ({} when it does not parse: the plan check says why)."""
        import tomllib

        try:
            return tomllib.loads(self.state.plan_text) if self.state.plan_text else {}
        except tomllib.TOMLDecodeError:
            return {}

    def plan_kind(self) -> str | None:
        kind = (self.plan_table().get("element") or {}).get("kind")
        return kind if isinstance(kind, str) else None

    def plan_spec(self) -> Path | None:
        """The spec the plan names (its `spec` key), resolved against the plan file's folder."""
        named = self.plan_table().get("spec")
        if not isinstance(named, str) or not named.strip():
            return None
        path = Path(named)
        if not path.is_absolute() and self.state.plan_path is not None:
            path = self.state.plan_path.parent / path
        return path

    def spec_kind(self, path: Path) -> str | None:
        """The element kind a spec file is for (None: unreadable; the set-up view names the fault)."""
        if path not in self._spec_kinds:
            try:
                from benchlog.specfiles import load_spec

                self._spec_kinds[path] = getattr(load_spec(path), "kind", None)
            except Exception:  # noqa: BLE001 -- a broken spec is reported where it is shown
                self._spec_kinds[path] = None
        return self._spec_kinds[path]

    def specs_for_plan(self) -> list[Path]:
        """The specs `k` may offer: those of the plan's element kind (all of them while the kind is unknown)."""
        kind = self.plan_kind()
        if kind is None:
            return list(self.state.specs)
        return [p for p in self.state.specs if self.spec_kind(p) == kind]

    def pair_spec(self) -> str:
        """Pick the spec that goes with the plan: the one it names, else the first of its kind, else none."""
        state = self.state
        named = self.plan_spec()
        if named is not None:
            known = [p for p in state.specs if _same_file(p, named)]
            if known:
                named = known[0]
            else:
                state.specs.insert(0, named)
            state.spec_path = named
            return "the plan's own spec"
        fitting = self.specs_for_plan()
        if state.spec_path is not None and state.spec_path in fitting:
            return "kept: same element kind"
        state.spec_path = fitting[0] if fitting else None
        return "first spec of the plan's kind" if fitting else "no spec of the plan's kind"

    def next_spec(self, kind: str | None = None, current: Path | None | str = "state") -> Path | None:
        """The next spec of the plan's kind, or of `kind` (k never offers a spec of another kind)."""
        specs = self.specs_for_plan() if kind is None else [p for p in self.state.specs if self.spec_kind(p) == kind]
        if not specs:
            return None
        now = self.state.spec_path if current == "state" else current
        index = (specs.index(now) + 1) % len(specs) if now in specs else 0
        if current == "state":
            self.state.spec_path = specs[index]
        return specs[index]

    def spec_of_run(self, header) -> Path | None:
        """The spec a recorded run goes with: the one its header's plan names, else the one named like its part.

        `header` is the run's typed header (`runs.record.RunHeader`; None when unreadable).
        Only specs the app knows (given on the command line or the demo's) are
        used, matched by file name, so a run recorded elsewhere still finds its spec.
        """
        if header is None:
            return None
        kind, label = header.element.kind, str(header.element.label or "").lower()
        named = header.plan.source.get("spec") if header.plan is not None else None
        if isinstance(named, str) and named:
            for path in self.state.specs:
                if path.name == Path(named).name and self.spec_kind(path) in (None, kind):
                    return path
            if Path(named).is_absolute() and Path(named).is_file():
                return Path(named)
        if label:
            for path in self.state.specs:
                if path.stem.lower() == label and self.spec_kind(path) == kind:
                    return path
        return None

    # -- lot -------------------------------------------------------------------------
    def run_lot_part(self, serial: str) -> None:
        serial = serial.strip()
        if not serial:
            self.say("Type the part's serial first.", severity="warning")
            return
        if any(entry.serial == serial for entry in self.state.lot):
            self.say(f"Serial {serial} is already in this lot: select it and press r to re-measure it "
                     f"(the newer run replaces the older) or x to remove it.", severity="warning")
            return
        self.state.lot_pending_serial = serial
        self.request_sweep(serial=serial)

    def remeasure_lot_part(self, serial: str) -> None:
        """Measure a part of the lot again: the new run replaces the old one in the lot; both files stay on disk."""
        if not any(entry.serial == serial for entry in self.state.lot):
            self.say(f"Serial {serial} is not in this lot.", severity="warning")
            return
        self.state.lot_pending_serial = serial
        self.request_sweep(serial=serial)

    def remove_lot_part(self, serial: str) -> None:
        """Take a part out of the lot (its run file stays on disk) and sum the lot up again."""
        kept = [entry for entry in self.state.lot if entry.serial != serial]
        if len(kept) == len(self.state.lot):
            self.say(f"Serial {serial} is not in this lot.", severity="warning")
            return
        self.state.lot = kept
        self.say(f"Serial {serial} removed from the lot (its run file is kept on disk).")
        self._lot_worker(None, self.state.spec_path)

    def _lot_part_done(self, outcome: SweepOutcome) -> None:
        serial = self.state.lot_pending_serial
        self.state.lot_pending_serial = None
        entry = LotEntry(serial, outcome.run_path, outcome=outcome.outcome, message=outcome.message)
        older = [e for e in self.state.lot if e.serial == serial]
        if older:
            if outcome.run_path is None:  # nothing new was recorded: the older run stays in the lot
                self.say(f"Serial {serial} kept its earlier run: the new one recorded nothing.", severity="warning")
                return
            index = self.state.lot.index(older[0])
            self.state.lot[index] = entry
            gone = older[0].run_path.name if older[0].run_path else "none"
            self.say(f"Serial {serial} re-measured: {outcome.run_path.name} replaces {gone} in the lot "
                     f"(both files kept).")
        else:
            self.state.lot.append(entry)
        if outcome.run_path is not None:
            self._lot_worker(entry, self.state.spec_path)

    @work(thread=True, exclusive=True, group="lot")
    def _lot_worker(self, entry: LotEntry | None, spec_path: Path | None) -> None:
        from .lotview import judge_part, summarise

        if entry is not None:
            judge_part(entry, spec_path)
        runs = [e.run_path for e in self.state.lot if e.run_path is not None and e.value is not None]
        try:
            summary, error = summarise(runs, spec_path), ""
        except Exception as exc:  # a sentence on the screen, never a traceback
            summary, error = None, _sentence(exc)
        self.call_from_thread(self._lot_summarised, summary, error)

    def _lot_summarised(self, summary, error: str) -> None:
        self.state.lot_summary = summary
        self.state.lot_summary_error = error
        self.redraw()

    # -- leaving ------------------------------------------------------------------------
    async def action_quit_safely(self) -> None:
        """q: quit at once when idle; during a sweep ask first, then stop it and say what the guard read back."""
        if self.session is None or self.state.sweep_state not in ("running", "stopping"):
            self.exit()
            return
        from .views.caution import QuitDuringRunScreen

        if isinstance(self.screen, QuitDuringRunScreen):
            return

        def answered(yes: bool | None) -> None:
            if yes:
                self.run_worker(self._stop_and_quit(), group="quitting", exclusive=True)
            else:
                self.say("Quit cancelled: the run goes on (s stops it).")

        self.push_screen(QuitDuringRunScreen(), answered)

    def action_quit_now(self) -> None:
        """Ctrl+C: no question — stop any sweep (outputs to the safe state), say what was read back, quit."""
        if self.session is None or self.state.sweep_state not in ("running", "stopping"):
            self.exit()
            return
        self.run_worker(self._stop_and_quit(), group="quitting", exclusive=True)

    async def _stop_and_quit(self) -> None:
        self.session.cancel()
        self.say("Stopping the run before quitting …", severity="warning")
        import asyncio

        for worker in list(self.workers):
            if worker.group == "sweep":
                await worker.wait()
        for _ in range(100):  # let the sweep's ending be handled first (it records what the guard read back)
            if self.state.sweep_state == "finished":
                break
            await asyncio.sleep(0.02)
        outcome = self.state.last_outcome
        if outcome is None:  # the ending message was not handled yet: the session kept the guard's read-back
            report = getattr(self.session, "last_safe_report", None)
            state = getattr(report, "state", "unknown") if report is not None else "unknown"
            statement = report.statement() if report is not None and hasattr(report, "statement") else ""
        else:
            state, statement = getattr(outcome, "safe_state", ""), getattr(outcome, "safe_statement", "")
        sentence = "Run stopped before quitting; " + (
            "outputs are off (read back)." if state == "verified"
            else outputs_sentence(state or "unknown", statement))
        self.say(sentence, severity="information" if state == "verified" else "error")
        self.exit(message=sentence)

    def on_unmount(self) -> None:
        if self.session is not None:
            self.session.cancel()
        self._collector.stop()
        with self._archive_lock:
            if self._archive is not None:
                self._archive.close()
                self._archive = None


class ReplayEnded(Message):
    def __init__(self, generation: int, outcome: SweepOutcome) -> None:
        super().__init__()
        self.generation = generation
        self.outcome = outcome


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve()
    except OSError:
        return a == b


def _with_serial(plan, serial: str):
    import dataclasses

    return dataclasses.replace(plan, element=dataclasses.replace(plan.element, serial=serial))


def _read_text(path: Path) -> str:
    """The plan's text, or "" when it is not a readable regular file (the plan check then names the fault)."""
    from benchlog.badinput import BadInput
    from benchlog.tomlcheck import read_utf8

    try:
        return read_utf8(path)[0]
    except BadInput:
        return ""


def _sentence(exc: BaseException) -> str:
    line = getattr(exc, "line", None)
    if callable(line):
        return line()
    return (str(exc).strip() or type(exc).__name__).splitlines()[0]
