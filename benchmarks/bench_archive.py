"""Benchmark: the lab archive against reading the run files directly, on SQLite and PostgreSQL.

Run: python benchmarks/bench_archive.py [--runs 100000] [--ingest 10000] [--quick] [--json FILE]

Measured side by side in one run:
- ingest: `archive add` of `--ingest` run files (read, hashed, fitted, 200 runs a transaction), per engine,
          and the cost of publishing one run in its own transaction as a sweep does;
- find:   the runs of one lot (20 runs) with their fits: `find_runs` against a folder scan
          (`read_summary` of every file, keeping those of the lot);
- trend:  every run's r_on_ohm grouped by lot and the control chart computed: the database's
          count, mean and range per lot (`subgroup_stats`) + `chart_from_stats` against a folder scan (load and fit every file, group, same chart).
The folder holds `--runs` invented runs written by the real run writer (lots of 20, six points
each). The archive holds the same runs: the first `--ingest` are ingested (timed), the others are
copies of those rows inserted in bulk with their own run ids, serials and lots; each copied file
has the same points as its original, so the archive and the folder hold the same numbers.
Goal (issue 15): find and trend at least 20x faster than the folder scan, and under 1 s on SQLite.
"""

from __future__ import annotations

import sys
import time
import uuid
from pathlib import Path

import _common

sys.path.insert(0, str(_common.REPO))

LOT_SIZE = 20


def lot_of(i: int) -> str:
    return f"LOT-{i // LOT_SIZE:05d}"


def write_folder(folder: Path, runs: int, distinct: int) -> None:
    from tests.store.synthetic import demo_header, write_run

    folder.mkdir(parents=True, exist_ok=True)
    for i in range(runs):
        base = i % distinct
        r = 0.0100 * (1 + 0.01 * ((base * 7919) % 101 - 50) / 50)
        header = demo_header(serial=f"S{i:06d}", lot=lot_of(i), host=f"bench-{i % 4}",
                             started_utc=f"2025-{1 + (i * 12) // runs:02d}-{1 + i % 28:02d}T08:{i % 60:02d}:00Z")
        write_run(folder / f"{i:06d}.run", header, r, seed=base)


def fill_copies(archive, folder: Path, ingested: int, runs: int) -> None:
    """Rows for files ingested..runs-1, copied from the ingested ones (same points and fits)."""
    from sqlalchemy import insert, select

    from benchlog.store import schema

    with archive.reading() as conn:
        originals = {r.serial: r._asdict() for r in conn.execute(select(schema.runs))}
        fits = {}
        for f in conn.execute(select(schema.fits)):
            fits.setdefault(f.run_pk, []).append(f._asdict())
    for start in range(ingested, runs, ingested):
        batch = range(start, min(runs, start + ingested))
        rows, fit_rows = [], {}
        for i in batch:
            orig = originals[f"S{i % ingested:06d}"]
            run_id = str(uuid.uuid4())
            rows.append({**{k: v for k, v in orig.items() if k != "id"}, "run_id": run_id, "serial": f"S{i:06d}",
                         "lot": lot_of(i), "bench_host": f"bench-{i % 4}",
                         "path": str((folder / f"{i:06d}.run").resolve())})
            fit_rows[run_id] = fits.get(orig["id"], [])
        with archive.writing() as conn:
            conn.execute(insert(schema.runs), rows)
            ids = dict(conn.execute(select(schema.runs.c.run_id, schema.runs.c.id).where(
                schema.runs.c.run_id.in_(list(fit_rows)))).all())
            conn.execute(insert(schema.fits), [{**{k: v for k, v in f.items() if k != "run_pk"}, "run_pk": ids[rid]}
                                               for rid, fs in fit_rows.items() for f in fs])


def scan_find(folder: Path, lot: str) -> int:
    from benchlog.runs import read_summary

    return sum(1 for p in sorted(folder.glob("*.run")) if (read_summary(p)[0].lot == lot))


def scan_trend(folder: Path):
    from benchlog.analysis.fits import fit_points
    from benchlog.runs import load_points
    from benchlog.store.control_chart import chart_for

    groups: dict[str, list[float]] = {}
    for p in sorted(folder.glob("*.run")):
        points, meta = load_points(p)
        groups.setdefault(meta.header.lot, []).append(fit_points(points, meta, "resistive").params["r_on_ohm"])
    return chart_for(list(groups.items()))


def archive_find(archive, lot: str) -> int:
    from benchlog.store.queries import RunFilter, find_runs

    return len(find_runs(archive, RunFilter(lot=lot)))


def archive_trend(archive):
    from benchlog.store.control_chart import chart_from_stats
    from benchlog.store.queries import subgroup_stats

    stats = subgroup_stats(archive, "r_on_ohm", "lot")
    return chart_from_stats(stats.names, stats.sizes, stats.means, stats.ranges)


def main() -> int:
    p = _common.parser(__doc__.splitlines()[0])
    p.add_argument("--runs", type=int, default=100_000, help="run files in the folder and runs in the archive")
    p.add_argument("--ingest", type=int, default=10_000, help="run files ingested one by one (timed)")
    p.add_argument("--pg-url", help="PostgreSQL URL to use (default: start a throw-away server as the tests do)")
    p.add_argument("--repeat", type=int, default=3)
    args = p.parse_args()
    if args.quick:
        args.runs, args.ingest, args.repeat = 200, 100, 1
    if args.runs % args.ingest or args.ingest % LOT_SIZE:
        p.error("--runs must be a multiple of --ingest, and --ingest of 20")
    from benchlog.store import open_archive
    from benchlog.store.ingest import add_run, add_runs

    figures: dict = {"runs": args.runs, "ingest": args.ingest}
    server = None
    with _common.temp_dir("archive") if hasattr(_common, "temp_dir") else _tmp() as tmp:
        tmp = Path(tmp)
        folder = tmp / "runs"
        t0 = time.perf_counter()
        write_folder(folder, args.runs, args.ingest)
        print(f"wrote {args.runs:,} run files in {time.perf_counter() - t0:.1f} s (real run writer, no fsync)")
        urls = {"sqlite": f"sqlite:///{tmp / 'archive.sqlite'}"}
        if args.pg_url:
            urls["postgresql"] = args.pg_url
        else:
            from tests.store.conftest import _Server

            server = _Server()
            server.start()
            if server.started:
                urls["postgresql"] = server.new_database()
            else:
                print(f"postgresql: skipped ({server.skip_reason})")
        try:
            files = sorted(folder.glob("*.run"))[:args.ingest]
            lot = lot_of(args.runs // 2)
            scan = {}
            times = _common.interleaved({"find": lambda: scan.__setitem__("find", scan_find(folder, lot))}, args.repeat)
            figures["scan_find_s"] = _common.best(times["find"])
            t0 = time.perf_counter()
            scan["trend"] = scan_trend(folder)
            figures["scan_trend_s"] = time.perf_counter() - t0
            print(f"folder scan of {args.runs:,} files: find one lot {_common.describe(times['find'])} "
                  f"({scan['find']} runs); trend (load + fit every file) {figures['scan_trend_s']:.2f} s")
            for engine, url in urls.items():
                archive = open_archive(url)
                one_by_one = files[:max(20, args.ingest // 50)]
                t0 = time.perf_counter()
                for path in one_by_one:
                    add_run(archive, path)  # as a sweep publishes: one transaction per run
                single_ms = 1e3 * (time.perf_counter() - t0) / len(one_by_one)
                t0 = time.perf_counter()
                add_runs(archive, files[len(one_by_one):])  # as `archive add` / `sync` do
                ingest_s = time.perf_counter() - t0
                batched = len(files) - len(one_by_one)
                fill_copies(archive, folder, args.ingest, args.runs)
                found = {}
                times = _common.interleaved({
                    "find": lambda: found.__setitem__("find", archive_find(archive, lot)),
                    "trend": lambda: found.__setitem__("trend", archive_trend(archive))}, args.repeat)
                archive.close()
                f_s, t_s = _common.best(times["find"]), _common.best(times["trend"])
                same = found["find"] == scan["find"] and abs(found["trend"].centre - scan["trend"].centre) <= 1e-12 * abs(scan["trend"].centre) \
                    and len(found["trend"].values) == len(scan["trend"].values)
                figures[engine] = {"ingest_runs": batched, "ingest_s": ingest_s, "publish_one_run_ms": single_ms,
                                   "ingest_per_run_ms": 1e3 * ingest_s / batched,
                                   "find_s": f_s, "trend_s": t_s,
                                   "find_speedup": figures["scan_find_s"] / f_s,
                                   "trend_speedup": figures["scan_trend_s"] / t_s, "same_answers": same}
                print(f"\n{engine}: ingest {batched:,} runs {ingest_s:.1f} s "
                      f"({1e3 * ingest_s / batched:.2f} ms per run; 200 runs a transaction); "
                      f"one run in its own transaction (a sweep publishing) {single_ms:.1f} ms")
                print(f"  find one lot over {args.runs:,} runs: {_common.describe(times['find'])}; "
                      f"{figures[engine]['find_speedup']:.0f}x the folder scan "
                      f"(goal >= 20x: {_common.verdict(figures[engine]['find_speedup'] >= 20)}"
                      + (f", < 1 s: {_common.verdict(f_s < 1)}" if engine == "sqlite" else "") + ")")
                print(f"  trend by lot over {args.runs:,} runs: {_common.describe(times['trend'])}; "
                      f"{figures[engine]['trend_speedup']:.0f}x the folder scan "
                      f"(goal >= 20x: {_common.verdict(figures[engine]['trend_speedup'] >= 20)}"
                      + (f", < 1 s: {_common.verdict(t_s < 1)}" if engine == "sqlite" else "") + ")")
                print(f"  same answers as the folder scan: {same}")
        finally:
            if server is not None:
                server.stop()
    _common.finish("archive", figures, args)
    return 0


def _tmp():
    import tempfile

    return tempfile.TemporaryDirectory(prefix="benchlog-archive-")


if __name__ == "__main__":
    raise SystemExit(main())
