"""`benchlog export RUN --csv FILE`: a run's points as plain CSV for other tools.

Exit codes: 0 written; 2 bad run file, or a --csv path refused before writing
(the run itself, an existing run file, read-only, under /proc or /sys); 4 the
CSV could not be written part way (disk full; the run file is untouched).
"""

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
    from benchlog.filecheck import check_output_file
    from benchlog.runs.export import export_csv

    check_output_file(args.csv, "--csv", inputs=[args.run])
    meta = export_csv(args.run, args.csv)
    state = "" if meta.complete else " (run incomplete: no end record)"
    sys.stdout.write(f"{args.csv}: {meta.points} points{state}\n")
    return 0
