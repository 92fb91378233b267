"""Subcommands `ui` (the terminal UI on a bench file, or archive-only) and `replay` (a run played as if live).

`demo` (in sweep_cmd) opens the same UI on the built-in simulated bench. The UI
is imported only when one of these runs, so headless commands never load textual.
"""

from __future__ import annotations


def register(sub) -> None:
    """Add `ui` and `replay` to the `benchlog` parser."""
    p = sub.add_parser(
        "ui",
        help="the terminal UI: bench, set-up, live sweep, results, lot and archive",
        description="Open the terminal UI. With --bench it drives that bench; without, it opens the archive "
        "of recorded runs (replay, re-fit, overlay).",
    )
    p.add_argument("--bench", metavar="BENCH.toml", help="the bench file (which instrument plays which role)")
    p.add_argument("--runs", metavar="DIR", help="folder of run files (default: ./runs); given, the Archive view "
                   "lists it rather than ./benchlog-archive.sqlite (an archive named by --db, the bench file or "
                   "BENCHLOG_DB still wins)")
    p.add_argument("--plan", metavar="PLAN.toml", action="append", help="a plan to offer (repeatable)")
    p.add_argument("--spec", metavar="SPEC.toml", action="append", help="a part spec to offer (repeatable)")
    p.add_argument("--db", metavar="URL", help="the lab archive the Archive view lists (default: the bench "
                   "file's [archive], else $BENCHLOG_DB, else ./benchlog-archive.sqlite when it exists, "
                   "else the --runs folder)")
    p.set_defaults(handler=_ui)

    r = sub.add_parser(
        "replay",
        help="play a recorded run in the UI as if it were live",
        description="Open a run file in the UI's live view and play it back at a chosen speed.",
    )
    r.add_argument("run", metavar="RUN", help="the run file")
    r.add_argument("--speed", default="10", metavar="X",
                   help="speed factor (1 = real time, default 10) or 'max' for as fast as possible")
    r.add_argument("--spec", metavar="SPEC.toml", action="append", help="a part spec for the verdict")
    r.set_defaults(handler=_replay)


def _ui(args) -> int:
    from benchlog.tui.launch import run_ui

    return run_ui(args)


def _replay(args) -> int:
    from benchlog.tui.launch import run_replay

    return run_replay(args)
