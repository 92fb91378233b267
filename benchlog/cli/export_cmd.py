"""`benchlog export RUN --csv FILE`: a run's points as plain CSV for other tools."""

from __future__ import annotations

import argparse
import sys


def register(sub) -> None:
    """Add this module's subcommands to the `benchlog` parser."""
    parser = sub.add_parser(
        "export",
        help="write a run's points as plain CSV",
        description="Write the points of a run file as plain CSV: one header row of unit-suffixed "
                    "column names (t_s, current_a, drop_v, power_w ...), one row per point.",
    )
    parser.add_argument("run", metavar="RUN", help="run file (*.run)")
    parser.add_argument("--csv", metavar="FILE", required=True, help="CSV file to write")
    parser.set_defaults(handler=_export)


def _export(args: argparse.Namespace) -> int:
    from benchlog.runs.export import export_csv

    meta = export_csv(args.run, args.csv)
    state = "" if meta.complete else " (run incomplete: no end record)"
    sys.stdout.write(f"{args.csv}: {meta.points} points{state}\n")
    return 0
