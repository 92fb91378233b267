"""`benchlog archive ...`: publish run files to the lab archive and ask it questions across runs.

    archive add PATH... [--spec SPEC]       publish run files (idempotent)
    archive sync [FOLDER]                   publish every run file under a folder not yet (or not fully) stored
    archive find [--lot L] [--serial S] [--kind K] [--part P] [--verdict V] [--bench HOST]
                 [--since DATE] [--until DATE] [--json]
    archive history SERIAL [--json]
    archive trend QUANTITY --by lot|day|bench -o FILE.png|FILE.svg [--json]
    archive compare-lots A B [--quantity Q] [--usl X] [--lsl X] [--json]

Every subcommand takes `--db URL` (`sqlite:///FILE` or `postgresql://USER@HOST/DB`),
else the environment variable BENCHLOG_DB, else `benchlog-archive.sqlite` here.
Exit codes: 0 done; 1 `add`/`sync` left a run as a conflict; 2 bad input,
including a malformed URL or an archive that cannot be opened (one line).
"""

from __future__ import annotations

import sys


def register(sub) -> None:
    """Add this module's subcommands to the `benchlog` parser."""
    parser = sub.add_parser("archive", help="the lab archive: publish runs, find, history, trend, compare lots",
                            description="Publish run files into the lab archive (SQLite here by default, or a "
                                        "lab's PostgreSQL server) and ask questions across runs.")
    group = parser.add_subparsers(dest="archive_command", metavar="ACTION", parser_class=type(parser))
    parser.set_defaults(handler=lambda args: parser.print_help() or 2)

    def action(name: str, help_text: str):
        p = group.add_parser(name, help=help_text, description=help_text)
        p.add_argument("--db", metavar="URL", help="archive URL (default: $BENCHLOG_DB, else "
                                                   "sqlite:///benchlog-archive.sqlite)")
        return p

    p = action("add", "publish run files (the same run twice is stored once; a grown incomplete run is updated)")
    p.add_argument("paths", nargs="+", metavar="PATH", help="run files (*.run)")
    p.add_argument("--spec", metavar="SPEC", help="part spec to judge each run against (stores its verdict)")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout")
    p.set_defaults(handler=_database_errors(_add))

    p = action("sync", "publish every run file under FOLDER that the archive lacks or holds an older copy of")
    p.add_argument("folder", nargs="?", default="runs", metavar="FOLDER", help="folder of run files (default ./runs)")
    p.add_argument("--spec", metavar="SPEC", help="part spec to judge each run against (stores its verdict)")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout")
    p.set_defaults(handler=_database_errors(_sync))

    p = action("find", "list the runs that match every filter given")
    for option, what in (("--lot", "lot"), ("--serial", "serial number"), ("--kind", "element kind"),
                         ("--part", "element label"), ("--verdict", "verdict (pass, fail, conditional)"),
                         ("--bench", "bench host name")):
        p.add_argument(option, metavar=option.strip("-").upper()[0], help=what)
    p.add_argument("--since", metavar="DATE", help="started at or after (YYYY-MM-DD or a UTC time)")
    p.add_argument("--until", metavar="DATE", help="started before the end of this day (or this UTC time)")
    p.add_argument("--limit", type=int, metavar="N", help="at most N runs (oldest first)")
    p.add_argument("--json", action="store_true", help='one JSON object {"runs": [...]} on stdout')
    p.set_defaults(handler=_database_errors(_find))

    p = action("history", "every measurement of one part (by serial), in time order")
    p.add_argument("serial", metavar="SERIAL")
    p.add_argument("--json", action="store_true", help='one JSON object {"serial", "runs": [...]} on stdout')
    p.set_defaults(handler=_database_errors(_history))

    p = action("trend", "control chart of a fitted quantity across runs (ISO 7870-2 limits, run rules flagged)")
    p.add_argument("quantity", metavar="QUANTITY", help="a fitted parameter's JSON key, e.g. r_on_ohm")
    p.add_argument("--by", choices=("lot", "day", "bench"), default="lot", help="subgroup by (default lot)")
    p.add_argument("-o", "--output", metavar="FILE", help="chart file (.png or .svg)")
    p.add_argument("--kind", metavar="K", help="only runs of this element kind")
    p.add_argument("--json", action="store_true", help="the chart's numbers as one JSON object")
    p.set_defaults(handler=_database_errors(_trend))

    p = action("compare-lots", "difference of two lots' means (Welch's t-test) and each lot's capability")
    p.add_argument("lot_a", metavar="A")
    p.add_argument("lot_b", metavar="B")
    p.add_argument("--quantity", default="r_on_ohm", help="fitted parameter to compare (default r_on_ohm)")
    p.add_argument("--usl", type=float, help="upper specification limit (for Cpk / Cpu)")
    p.add_argument("--lsl", type=float, help="lower specification limit (for Cpk / Cpl)")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout")
    p.set_defaults(handler=_database_errors(_compare))


def _database_errors(handler):
    """A database that refuses the work (no privilege, connection lost) is one line and exit 2, not a traceback."""
    import functools

    @functools.wraps(handler)
    def run(args):
        from sqlalchemy.exc import DBAPIError

        from benchlog.badinput import BadInput

        try:
            return handler(args)
        except DBAPIError as exc:
            from benchlog.store import resolve_url
            from benchlog.store.connect import shown_url

            reason = " ".join(str(getattr(exc, "orig", exc)).split())[:200]
            raise BadInput(shown_url(resolve_url(args.db)), "", f"the database refused: {reason}",
                           "a role allowed to do this (viewers may only read)") from None

    return run


def _open(args):
    from benchlog.store import open_archive

    return open_archive(args.db)


def _spec(args):
    if not args.spec:
        return None
    from benchlog.store.ingest import SpecForVerdict

    return SpecForVerdict.load(args.spec)


def _publish(args, paths) -> int:
    from benchlog.cli.output import print_json
    from benchlog.store.ingest import CONFLICT, add_runs

    spec = _spec(args)
    archive = _open(args)
    try:
        results = add_runs(archive, paths, spec)
    finally:
        archive.close()
    counts = {a: sum(r.action == a for r in results) for a in ("added", "updated", "unchanged", "conflict")}
    if args.json:
        print_json({"archive": archive.shown_url, **counts,
                    "runs": [{"path": r.path, "run_id": r.run_id, "action": r.action, "note": r.note}
                             for r in results]})
    else:
        for r in results:
            if r.action != "unchanged" or r.note:
                sys.stdout.write(f"{r.path}: {r.action}{'; ' + r.note if r.note else ''}\n")
        sys.stdout.write(f"{archive.shown_url}: {counts['added']} added, {counts['updated']} updated, "
                         f"{counts['unchanged']} unchanged, {counts['conflict']} conflicts\n")
    return 1 if any(r.action == CONFLICT for r in results) else 0


def _add(args) -> int:
    return _publish(args, args.paths)


def _sync(args) -> int:
    from pathlib import Path

    from benchlog.badinput import BadInput
    from benchlog.store.ingest import known_hashes, run_files

    if not Path(args.folder).is_dir():
        raise BadInput("argument", "FOLDER", f"{args.folder!r} is not a folder", "a folder of run files")
    archive = _open(args)
    try:
        stored = known_hashes(archive)
    finally:
        archive.close()
    import hashlib

    todo = []
    for path in run_files(args.folder):
        if stored.get(str(path.resolve())) != hashlib.sha256(path.read_bytes()).hexdigest():
            todo.append(path)
    return _publish(args, todo)


def _filter(args):
    from benchlog.store.queries import RunFilter, check_date

    return RunFilter(lot=args.lot, serial=args.serial, kind=args.kind, part=args.part, verdict=args.verdict,
                     bench=args.bench, since=check_date(args.since, "--since"),
                     until=check_date(args.until, "--until"), limit=args.limit)


def _describe(run: dict) -> str:
    fit = run.get("fit") or {}
    params = ", ".join(f"{k}={v['value']:.6g}" for k, v in (fit.get("params") or {}).items())
    verdicts = ",".join(v["verdict"] for v in run.get("verdicts", []))
    return (f"{run['started_utc']}  {run['bench_host'] or '-'}  {run['kind'] or '-'}  lot={run['lot'] or '-'}  "
            f"serial={run['serial'] or '-'}  {run['outcome']}  {params}  {verdicts}  {run['path']}")


def _listing(args, ask, describe_count, json_head: dict) -> int:
    """Ask the archive (`ask(archive)` gives the runs) and print them: one line each, or one JSON object."""
    from benchlog.cli.output import print_json

    archive = _open(args)
    try:
        found = ask(archive)
    finally:
        archive.close()
    if args.json:
        print_json({**json_head, "archive": archive.shown_url, "count": len(found), "runs": found})
    else:
        for run in found:
            sys.stdout.write(_describe(run) + "\n")
        sys.stdout.write(describe_count(len(found)) + "\n")
    return 0


def _find(args) -> int:
    from benchlog.store.queries import find_runs

    flt = _filter(args)
    return _listing(args, lambda archive: find_runs(archive, flt), lambda n: f"{n} runs", {})


def _history(args) -> int:
    from benchlog.store.queries import history

    return _listing(args, lambda archive: history(archive, args.serial),
                    lambda n: f"{n} measurements of serial {args.serial!r}", {"serial": args.serial})


def _trend(args) -> int:
    from benchlog.badinput import BadInput
    from benchlog.cli.output import print_json
    from benchlog.store.control_chart import RULES
    from benchlog.store.queries import RunFilter
    from benchlog.store.trend import trend

    if args.output is None and not args.json:
        raise BadInput("argument", "-o", "no output given", "-o FILE.png, -o FILE.svg or --json")
    if args.output is not None:
        from benchlog.filecheck import check_output_file

        if not args.output.lower().endswith((".png", ".svg")):
            raise BadInput("argument", "-o", f"{args.output!r} is neither .png nor .svg", "FILE.png or FILE.svg")
        check_output_file(args.output, "-o")
    archive = _open(args)
    try:
        found = trend(archive, args.quantity, args.by, RunFilter(kind=args.kind))
    finally:
        archive.close()
    chart, stats = found.chart, found.stats
    if args.output is not None:
        from benchlog.store.chart_figure import draw

        draw(chart, args.quantity, args.by, args.output)
    payload = found.payload()
    if args.json:
        print_json(payload)
    else:
        sys.stdout.write(f"{args.output}: {chart.kind} chart of {args.quantity} over {stats.runs} runs in "
                         f"{len(stats.names)} subgroups by {args.by}; centre {chart.centre:.6g}, σ̂ {chart.sigma:.3g}; "
                         f"{len(chart.hits)} run-rule hits\n")
        for h in chart.hits:
            sys.stdout.write(f"  rule {h.rule} ({RULES[h.rule]}) at {chart.labels[h.index]}\n")
    return 0


def _compare(args) -> int:
    from benchlog.cli.output import print_json
    from benchlog.store.lots import compare_lots

    archive = _open(args)
    try:
        c = compare_lots(archive, args.quantity, args.lot_a, args.lot_b, args.usl, args.lsl)
    finally:
        archive.close()

    def lot(s):
        return {"lot": s.name, "n": s.n, "mean": s.mean, "sd": s.sd, "capability": s.capability_name,
                "capability_value": s.capability}

    payload = {"quantity": args.quantity, "a": lot(c.a), "b": lot(c.b), "difference": c.difference,
               "difference_std_u": c.std_u, "dof": c.dof, "difference_expanded_u_95": c.expanded_u_95,
               "t": c.t, "p_two_sided": c.p_two_sided, "test": c.test}
    if args.json:
        print_json(payload)
    else:
        sys.stdout.write(f"{args.quantity}: lot {c.a.name} mean {c.a.mean:.6g} (n={c.a.n}, s={c.a.sd:.3g}), "
                         f"lot {c.b.name} mean {c.b.mean:.6g} (n={c.b.n}, s={c.b.sd:.3g})\n")
        sys.stdout.write(f"difference A−B = {c.difference:.6g} ± {c.expanded_u_95:.3g} (95 %, ν = {c.dof:.1f}); "
                         f"{c.test}: t = {c.t:.3f}, p = {c.p_two_sided:.3g}\n")
        for s in (c.a, c.b):
            cap = "no limits given" if s.capability is None else f"{s.capability_name} = {s.capability:.3g}"
            sys.stdout.write(f"lot {s.name}: {cap}\n")
    return 0
