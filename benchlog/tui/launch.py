"""Starting the UI from the command line: `benchlog ui`, `benchlog replay` and `benchlog demo`.

Imported lazily by the CLI, so the headless commands never load textual.
"""

from __future__ import annotations

from pathlib import Path

import benchlog

DEMO_DIR = Path(benchlog.__file__).parent / "demo"


def demo_plans() -> list[Path]:
    return sorted((DEMO_DIR / "plans").glob("*.toml"))


def demo_specs() -> list[Path]:
    return sorted((DEMO_DIR / "specs").glob("*.toml"))


def spec_for_kind(kind: str, specs: list[Path]) -> Path | None:
    """The first spec of the same element kind (the demo has one spec per kind)."""
    from benchlog.specfiles import load_spec

    for path in specs:
        try:
            if getattr(load_spec(path), "kind", None) == kind:
                return path
        except Exception:  # a broken spec is reported when picked, not here
            continue
    return specs[0] if specs else None


def demo_plan(name: str) -> Path:
    from benchlog.badinput import BadInput

    candidate = Path(name)
    if name.endswith(".toml") or candidate.is_file():
        if not candidate.is_file():
            raise BadInput("argument", "--plan", f"no plan file {name}", "an existing plan file")
        return candidate
    path = DEMO_DIR / "plans" / f"{name}.toml"
    if not path.is_file():
        known = ", ".join(p.stem for p in demo_plans()) or "none"
        raise BadInput("argument", "--plan", f"no demo plan {name!r}", f"one of: {known}")
    return path


def build_demo_app(start_sim, plan_name: str = "pmos-prototype", out: str | Path = "runs", seed: int = 0):
    """The app on a simulated bench started by `start_sim`, with the demo's plans and a matching spec loaded."""
    from benchlog.sweep.plan import load_plan

    from .app import BenchApp
    from .session import BenchSession

    plan_path = demo_plan(plan_name)
    plan = load_plan(plan_path)
    session = BenchSession.simulated(plan.element, start_sim, runs_dir=Path(out), seed=seed)
    specs = demo_specs()
    plans = demo_plans()
    # the spec is the one the plan names (its `spec` key), else the first of its kind: BenchApp pairs them
    return BenchApp(session, runs_dir=Path(out), plans=plans, specs=specs, plan=plan_path)


def run_demo_ui(args, start_sim) -> int:
    """`benchlog demo` without --headless: the UI on the simulated bench `start_sim` starts; outputs off when it closes."""
    app = build_demo_app(start_sim, args.plan, args.out, args.seed)
    try:
        app.run()
    finally:
        if app.session is not None:
            app.session.close()
    return 0


def run_ui(args) -> int:
    """`benchlog ui [--bench BENCH.toml] [--runs DIR] [--db URL]`; the archive view lists the archive in force
    (`archive_query.choose_archive`) or, with none, the run folder."""
    from .app import BenchApp
    from .session import BenchSession

    from .archive_query import choose_archive

    runs = Path(args.runs or "runs")
    bench_url = None
    if args.bench:
        from benchlog.sweep.bench_file import load_bench

        bench_url = load_bench(args.bench).archive_url  # a bad bench file is one line before any link opens
    archive = choose_archive(getattr(args, "db", None), bench_url, default_file=args.runs is None)
    if archive is not None:
        from benchlog.store.connect import shown_url

        shown_url(archive.url)  # a malformed URL is one line and exit 2, before the UI starts
    session = BenchSession.from_file(Path(args.bench), runs_dir=runs) if args.bench else None
    plans = [Path(p) for p in (args.plan or [])] or demo_plans()
    specs = [Path(p) for p in (args.spec or [])] or demo_specs()
    app = BenchApp(session, runs_dir=runs, plans=plans, specs=specs,
                   start_view="instruments" if session is not None else "archive", archive=archive)
    try:
        app.run()
    finally:
        if session is not None:
            session.close()
    return 0


def run_replay(args) -> int:
    """`benchlog replay RUN [--speed X]`: the run played in the live view as if it were happening."""
    from .app import BenchApp

    from benchlog.filecheck import check_input

    run = Path(args.run)
    check_input(run, "run file (*.run)")  # missing, a FIFO, a device or a folder: one line before the UI starts
    speed = None if args.speed in ("max", "0") else _speed(args.speed)
    specs = [Path(p) for p in (args.spec or [])] or demo_specs()
    app = BenchApp(None, runs_dir=run.parent, specs=specs, start_view="live", replay=run, replay_speed=speed)
    app.run()
    return 0


def _speed(text: str) -> float:
    from benchlog.badinput import BadInput

    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not (value > 0 and value < 1e6):
        raise BadInput("argument", "--speed", f"{text!r}", "a factor > 0 (1 = real time) or 'max'")
    return value
