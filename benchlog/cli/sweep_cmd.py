"""Subcommands `sweep` (run a plan on a bench, or on the built-in simulated bench) and `demo`.

Exit codes: 0 the sweep completed and the outputs were read back off; 1 it
stopped on a limit, a fault or a cancel, or an output was not confirmed off
(`OUTPUTS MAY BE ON` on stderr); 2 bad input (plan, bench, wiring refused, an
--out folder that cannot be written, or an instrument's nonsense reply); 4 the
run file could not be written part way (disk full: the points written before
are kept); 75 an instrument of the bench is in use by another session (one line
naming the holder; nothing was sent); 130 Ctrl-C; 143 SIGTERM.

Every sweep ends with one statement about the outputs: `outputs verified off`
(stdout, or the `safe_state` key of `--json`) when every supply and load read
back off, else `OUTPUTS MAY BE ON: ...` on stderr naming each role and
resource that did not confirm.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path
from typing import Any, TextIO

from benchlog.badinput import BadInput

from .output import print_json

CAUTION = (
    "CAUTION: this switches real power into real hardware. Supplies and batteries store energy that can "
    "burn and start fires; parts under test get hot; a reversed-polarity test can destroy the board. "
    "Keep within the limits in your plan, follow your lab's safety rules and local electrical codes."
)

_caution_shown = False  # once per CLI session, at the first output-on


def register(sub) -> None:
    """Add `sweep` and `demo` to the `benchlog` parser."""
    p = sub.add_parser(
        "sweep",
        help="step the current through the element and record a run file",
        description="Run a sweep plan on a bench (or, without --bench, on the built-in simulated bench) "
        "and record it as a run file.",
    )
    p.add_argument("plan", metavar="PLAN.toml", help="the sweep plan")
    p.add_argument("--bench", metavar="BENCH.toml", help="the bench file (default: built-in simulated bench)")
    p.add_argument("--out", metavar="DIR", default="runs", help="folder for the run file (default: ./runs)")
    p.add_argument("--json", action="store_true",
                   help='print {"run_file", "points", "outcome", "safe_state"} as JSON')
    p.add_argument("--yes", action="store_true", help="do not ask before switching a real bench on")
    p.add_argument("--seed", type=int, default=0, help="seed of the built-in simulated bench (default 0)")
    _timing_argument(p)
    p.add_argument("--case-sensor", action="store_true",
                   help="built-in simulated bench only: a thermocouple on the element's case fills temperature_c "
                        "(a real bench names its probe in the bench file's [sensor] table)")
    p.add_argument("--sim-thermal-scale", type=float, default=None, metavar="F",
                   help="built-in bench only: every thermal time constant times F (e.g. 0.05 for a fast "
                        "heat-soak demo); recorded in the run header")
    p.set_defaults(handler=_sweep)

    d = sub.add_parser(
        "demo",
        help="a demo sweep on the built-in simulated bench",
        description="Run a demo: the terminal UI, or with --headless one sweep end to end and a summary.",
    )
    d.add_argument("--headless", action="store_true", help="no UI: run one demo sweep and print a summary")
    d.add_argument("--plan", metavar="NAME|PLAN.toml", default="pmos-prototype",
                   help="a demo plan name (see benchlog/demo/plans) or a plan file")
    d.add_argument("--out", metavar="DIR", default="runs", help="folder for the run file (default: ./runs)")
    d.add_argument("--json", action="store_true", help="print the summary as JSON")
    d.add_argument("--seed", type=int, default=0, help="seed of the simulated bench (default 0)")
    _timing_argument(d)
    d.add_argument("--sim-thermal-scale", type=float, default=None, metavar="F",
                   help="every thermal time constant of the simulated bench times F; recorded in the run header")
    d.set_defaults(handler=_demo)


SIM_TIMING_TEXT = {
    "real": "real instrument timing (each reading takes NPLC/line frequency per sample; setpoints settle)",
    "instant": "instant timing (readings and setpoints take no time: sweep times are not a real bench's)",
}


def _timing_argument(parser) -> None:
    parser.add_argument("--sim-timing", choices=("real", "instant"), default=None,
                        help="timing of the built-in simulated bench: real (default) or instant, for fast tests")


# -- progress -------------------------------------------------------------------


class Progress:
    """Points done and ETA on stderr: a redrawn bar on a terminal, a plain line every tenth otherwise."""

    def __init__(self, total: int, stream: TextIO = sys.stderr, clock=time.monotonic) -> None:
        self.total = max(int(total), 1)
        self.stream = stream
        self.tty = bool(getattr(stream, "isatty", lambda: False)())
        self.clock = clock
        self.start = clock()
        self.done = 0
        self._next_line = max(1, self.total // 10)
        self._last_draw = 0.0

    def eta_s(self) -> float | None:
        if self.done == 0:
            return None
        elapsed = self.clock() - self.start
        return elapsed / self.done * max(self.total - self.done, 0)

    def text(self) -> str:
        eta = self.eta_s()
        eta_text = "--:--" if eta is None else f"{int(eta) // 60:d}:{int(eta) % 60:02d}"
        return f"{self.done}/{self.total} points  ETA {eta_text}"

    def point(self) -> None:
        self.done += 1
        if self.tty:
            now = self.clock()
            if now - self._last_draw >= 0.1 or self.done >= self.total:
                self._last_draw = now
                width = 30
                filled = min(width, width * self.done // self.total)
                self.stream.write(f"\r[{'#' * filled}{'-' * (width - filled)}] {self.text()} ")
                self.stream.flush()
        elif self.done >= self._next_line:
            self._next_line += max(1, self.total // 10)
            self.stream.write(f"sweep: {self.text()}\n")
            self.stream.flush()

    def end(self) -> None:
        if self.tty:
            self.stream.write("\n")
            self.stream.flush()


# -- the commands -----------------------------------------------------------------


def _power_prompt(real_bench: bool, assume_yes: bool):
    def before_power_on() -> bool:
        global _caution_shown
        if not _caution_shown:
            _caution_shown = True
            sys.stderr.write(CAUTION + "\n")
            sys.stderr.flush()
        if real_bench and not assume_yes and sys.stdin.isatty() and sys.stderr.isatty():
            sys.stderr.write("Switch the outputs on now? [y/N] ")
            sys.stderr.flush()
            answer = sys.stdin.readline().strip().lower()
            return answer in ("y", "yes")
        return True

    return before_power_on


def _sim_options(bench_path: str | None, thermal_scale: float | None) -> dict[str, Any] | None:
    if thermal_scale is None:
        return None
    if bench_path:
        raise BadInput("argument", "--sim-thermal-scale", "only applies to the built-in simulated bench",
                       "no --bench, or no --sim-thermal-scale")
    if not (1e-3 <= thermal_scale <= 1e3):
        raise BadInput("argument", "--sim-thermal-scale", f"is {thermal_scale:g}", "a factor in 0.001..1000")
    return {"thermal_time_scale": thermal_scale}


def _run(plan_path: str | Path, bench_path: str | None, out: str, *, seed: int, assume_yes: bool,
         sim_timing: str | None = None, case_sensor: bool = False,
         thermal_scale: float | None = None) -> tuple[Any, Any]:
    from benchlog.runs.events import Note, Point
    from benchlog.sweep.bench_file import load_bench
    from benchlog.sweep.plan import load_plan
    from benchlog.sweep.session import run_sweep

    if bench_path and sim_timing is not None:
        raise BadInput("argument", "--sim-timing", "was given with --bench",
                       "--sim-timing only for the built-in simulated bench (no --bench)")
    if case_sensor and bench_path:
        raise BadInput("argument", "--case-sensor", "is given with --bench",
                       "the bench file's [sensor] table for a real bench, or no --bench")
    scaled = _sim_options(bench_path, thermal_scale)
    plan = load_plan(plan_path)
    bench = load_bench(bench_path) if bench_path else None
    sim_options = {"timing": sim_timing} if sim_timing is not None else {}
    if case_sensor:
        sim_options["case_sensor"] = True
    sim_options.update(scaled or {})
    sim_options = sim_options or None
    state: dict[str, Any] = {"progress": None, "runner": None}

    def on_runner(runner) -> None:
        state["runner"] = runner
        state["progress"] = Progress(runner.planned)

    def on_event(event) -> None:
        progress = state["progress"]
        if isinstance(event, Point) and progress is not None:
            progress.point()
        elif isinstance(event, Note) and event.kind in ("limit", "fault", "warning", "cancel"):
            if event.message.startswith(UNSAFE_START):
                return  # the one statement about the outputs comes once, at the end
            if progress is not None and progress.tty and progress.done:
                sys.stderr.write("\n")
            sys.stderr.write(f"benchlog: {event.kind}: {event.message}\n")

    def on_safe_state(report) -> None:
        state["safe"] = report

    try:
        hooks = dict(on_event=on_event, on_runner=on_runner,
                     before_power_on=_power_prompt(bench is not None, assume_yes), on_safe_state=on_safe_state)
        if bench is None:
            from .simbench import sweep_on_builtin_bench

            result = sweep_on_builtin_bench(plan, out, seed=seed, sim_options=sim_options, **hooks)
        else:
            result = run_sweep(plan, bench, out, **hooks)
    except BaseException as exc:
        runner = state["runner"]
        if state["progress"] is not None:
            state["progress"].end()
        _state_after_exception(state.get("safe"), exc)
        if isinstance(exc, KeyboardInterrupt) and runner is not None and runner.run_file is not None:
            sys.stderr.write(f"benchlog: run file (cancelled): {runner.run_file}\n")
        raise
    if state["progress"] is not None:
        state["progress"].end()
    return plan, result


#: How the statement that an output was not confirmed off begins (instruments.guard.SafeStateReport).
UNSAFE_START = "OUTPUTS MAY BE ON"


def _state_after_exception(report, exc: BaseException) -> None:
    """The statement about the outputs when the sweep ended by an exception.

    Not verified: always said, on stderr (unless the exception is itself that statement,
    which the caller prints). Verified: said after Ctrl-C or SIGTERM, where the user most
    wants to know; after bad input or a connect fault the one line of the error stands alone.
    """
    if report is None or not report.roles:
        return  # nothing with an output was connected: no output was touched
    from benchlog.instruments.errors import SafeStateFailed

    if not report.verified:
        if not isinstance(exc, SafeStateFailed):  # that one is printed by the caller: it is the statement
            sys.stderr.write(f"benchlog: {report.statement()}\n")
    elif isinstance(exc, (KeyboardInterrupt, SystemExit)):
        sys.stderr.write(f"benchlog: {report.statement()}\n")


def _exit_code(result) -> int:
    if result.safe_state == "unverified":
        return 1
    if result.outcome == "complete":
        return 0
    if result.outcome == "fault" and isinstance(result.fault, BadInput):
        return 2
    return 1


def _sweep(args) -> int:
    from benchlog.filecheck import check_output_dir

    check_output_dir(args.out, "--out")
    plan, result = _run(args.plan, args.bench, args.out, seed=args.seed, assume_yes=args.yes,
                        sim_timing=args.sim_timing, case_sensor=args.case_sensor,
                        thermal_scale=args.sim_thermal_scale)
    archive_url = None
    if args.bench:  # read again after the sweep: the arguments were checked, and the file already once
        from benchlog.sweep.bench_file import load_bench

        archive_url = load_bench(args.bench).archive_url
    published = _publish(result.run_file, archive_url, args.out) if archive_url and result.run_file else None
    if args.json:
        summary = {"run_file": str(result.run_file), "points": result.points, "outcome": result.outcome,
                   "safe_state": result.safe_state}
        if published is not None:
            summary["archive"] = published
        print_json(summary)
    else:
        print(f"run file: {result.run_file}")
        if not args.bench:
            print(f"built-in simulated bench: {SIM_TIMING_TEXT[args.sim_timing or 'real']}")
        print(f"{result.points} points, outcome {result.outcome}" + _detail(result))
        if published is not None:
            print(f"archive: {published['note']}")
    _say_safe_state(result, text=not args.json)
    return _exit_code(result)


def _publish(run_file, url: str, out: str) -> dict[str, Any]:
    """Publish a finished run to the bench's archive; when that fails the run file stands and a note says so."""
    from benchlog.store import open_archive
    from benchlog.store.ingest import add_run

    try:
        archive = open_archive(url)
        try:
            done = add_run(archive, run_file)
        finally:
            archive.close()
    except Exception as exc:  # noqa: BLE001 - any archive fault: the run file is complete, sync later
        line = exc.line() if isinstance(exc, BadInput) else " ".join(str(exc).split())[:200]
        return {"published": False, "note": f"not published ({line}); the run file is complete: "
                                            f"run 'benchlog archive sync {out} --db URL' later"}
    return {"published": done.action != "conflict", "action": done.action, "run_id": done.run_id,
            "note": f"{done.action} in the archive" + (f" ({done.note})" if done.note else "")}


def _detail(result) -> str:
    """': message' after the outcome, unless the message is the statement about the outputs (said once, below)."""
    if not result.message or result.message.startswith(UNSAFE_START):
        return ""
    return f": {result.message}"


def _say_safe_state(result, *, text: bool) -> None:
    """The one statement about the outputs: stdout when verified (text mode), stderr otherwise."""
    if result.safe_state == "verified":
        if text:
            print(result.safe_statement)
    elif result.safe_statement:
        sys.stderr.write(f"benchlog: {result.safe_statement}\n")


# -- demo -------------------------------------------------------------------------


def demo_plans_dir() -> Path:
    return Path(__file__).resolve().parent.parent / "demo" / "plans"


def demo_plan_path(name: str) -> Path:
    candidate = Path(name)
    if name.endswith(".toml") or candidate.is_file():
        return candidate
    path = demo_plans_dir() / f"{name}.toml"
    if not path.is_file():
        known = ", ".join(sorted(p.stem for p in demo_plans_dir().glob("*.toml"))) or "none"
        raise BadInput("argument", "--plan", f"no demo plan {name!r}", f"one of: {known}")
    return path


def _demo(args) -> int:
    if not args.headless:
        try:
            from benchlog.tui.launch import run_demo_ui
        except ImportError:
            sys.stderr.write("benchlog: the terminal UI is not available in this installation; "
                             "use 'benchlog demo --headless'\n")
            return 2
        from .simbench import builtin_bench

        return int(run_demo_ui(args, start_sim=builtin_bench) or 0)
    from benchlog.filecheck import check_output_dir

    plan_path = demo_plan_path(args.plan)
    check_output_dir(args.out, "--out")
    timing = args.sim_timing or "real"
    plan, result = _run(plan_path, None, args.out, seed=args.seed, assume_yes=True, sim_timing=timing,
                        thermal_scale=args.sim_thermal_scale)
    summary: dict[str, Any] = {
        "run_file": str(result.run_file),
        "points": result.points,
        "outcome": result.outcome,
        "safe_state": result.safe_state,
        "sim_timing": timing,
        "plan": str(plan_path),
        "element": {"id": plan.element.id, "kind": plan.element.kind, "label": plan.element.label},
    }
    if result.message:
        summary["message"] = result.message
    summary.update(_analysis_summary(result.run_file, plan))
    if args.json:
        print_json(summary)
    else:
        print(f"demo plan: {plan_path.name} ({plan.element.kind} {plan.element.label or plan.element.id})")
        print(f"run file: {result.run_file}")
        print(f"simulated bench: {SIM_TIMING_TEXT[timing]}")
        print(f"{result.points} points, outcome {result.outcome}" + _detail(result))
        fit = summary.get("fit")
        if fit:
            parts = ", ".join(f"{k} = {text}" for k, text in fit["text"].items())
            print(f"fit ({fit['model']}): {parts}")
        verdict = summary.get("verdict")
        if verdict:
            print(f"verdict: {verdict['outcome']} ({verdict['rule']})")
        if summary.get("analysis_note"):
            print(summary["analysis_note"])
    _say_safe_state(result, text=not args.json)
    return _exit_code(result)


def _analysis_summary(run_file: Path, plan) -> dict[str, Any]:
    """Fit and verdict when the analysis modules are present (they are optional for a recording)."""
    out: dict[str, Any] = {}
    try:
        from benchlog.analysis.fits import fit_run
        from benchlog.runs import load
    except ImportError:
        return out
    try:
        frame, meta = load(run_file)
        fit = fit_run(frame, meta)
    except Exception as exc:  # noqa: BLE001 -- the recording stands even if the fit cannot be made
        return {"analysis_note": f"no fit: {exc}"}
    from benchlog.quantity import measured, unit_of

    out["fit"] = {"model": fit.model, "params": dict(fit.params), "std_u": dict(fit.std_u),
                  "expanded_u": dict(fit.expanded_u), "k": fit.k, "reason": fit.reason,
                  "coverage_probability": fit.coverage_probability,
                  "text": {k: measured(v, fit.expanded_u.get(k), unit_of(k), fit.budgets[k].k,
                                       fit.budgets[k].coverage_probability) for k, v in fit.params.items()}}
    spec_path = _demo_spec_for(plan)
    if spec_path is None:
        return out
    try:
        from benchlog.specfiles import load_spec
        from benchlog.analysis.judging import check_run

        check = check_run(frame, meta, load_spec(spec_path))
        verdict = getattr(check, "verdict", check)
        out["verdict"] = {"outcome": getattr(verdict, "outcome", str(verdict)),
                          "rule": getattr(verdict, "rule", ""), "spec": str(spec_path)}
    except Exception as exc:  # noqa: BLE001
        out["analysis_note"] = f"no verdict: {exc}"
    return out


def _demo_spec_for(plan) -> Path | None:
    """The spec the plan names (its `spec` key, beside the plan file), else the demo spec named like its label."""
    from benchlog.sweep.plan import plan_spec_path

    named = plan_spec_path(plan, plan.source)
    if named is not None and named.is_file():
        return named.resolve()
    if not plan.element.label:
        return None
    specs = demo_plans_dir().parent / "specs"
    for candidate in (specs / f"{plan.element.label}.toml", specs / f"{plan.element.label.lower()}.toml"):
        if candidate.is_file():
            return candidate
    return None
