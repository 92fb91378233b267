"""`benchlog summary`: one row per run for a spreadsheet (CSV always, .xlsx with the optional extra).

The rows are `report.summary_rows` (the same table the report and the UI write)."""

from __future__ import annotations

import argparse

XLSX_HINT = "pip install 'benchlog[xlsx]'"


def register(sub) -> None:
    p = sub.add_parser(
        "summary",
        help="one row per run (serial, lot, kind, time, outcome, fitted values ± U, loss, Tj, verdict) as CSV or xlsx",
        description=(
            "Write one row per run: serial, lot, kind, start time, outcome, each fitted value with its expanded "
            "uncertainty (95.45 % coverage), the loss at the plan's operating current and, with --spec, the predicted "
            "junction temperature and the verdict. The format follows the extension of -o: .csv, or .xlsx "
            f"(needs the optional extra: {XLSX_HINT}). An input file is never overwritten."
        ),
    )
    p.add_argument("runs", metavar="RUN", nargs="+", help="run files")
    p.add_argument("-o", "--out", metavar="FILE", required=True, help="FILE.csv or FILE.xlsx")
    p.add_argument("--spec", metavar="SPEC.toml", help="part spec: adds Tj and the verdict for runs of its kind")
    p.set_defaults(handler=run_summary)


def run_summary(args: argparse.Namespace) -> int:
    from benchlog.report.summary_rows import write_summary

    spec = None
    if args.spec:
        from benchlog.filecheck import check_input
        from benchlog.specfiles import load_spec

        check_input(args.spec, "part spec (.toml)")
        spec = load_spec(args.spec)
    rows, columns = write_summary(args.runs, args.out, [spec] * len(args.runs))
    print(f"{args.out}: {len(rows)} run(s), {len(columns)} columns")
    return 0
