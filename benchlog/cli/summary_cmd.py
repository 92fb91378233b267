"""`benchlog summary`: one row per run for a spreadsheet (CSV always, .xlsx with the optional extra)."""

from __future__ import annotations

import argparse
import csv
import math
from pathlib import Path
from typing import Any

from benchlog.badinput import BadInput
from benchlog.quantity import measured, unit_of

XLSX_HINT = "pip install 'benchlog[xlsx]'"
FIXED = ("run", "serial", "lot", "kind", "started_utc", "outcome", "model", "k")
TAIL = ("operating_a", "loss_w", "expanded_u_loss_w", "loss", "tj_c", "verdict", "note")


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


def summary_row(path: str, spec=None) -> dict[str, Any]:
    """The row of one run; a run that cannot be fitted or judged says why in `note` and keeps its other cells."""
    from benchlog.analysis.fits import fit_run
    from benchlog.runs import load

    frame, meta = load(path)
    h = meta.header
    e = h.element
    row: dict[str, Any] = {"run": str(path), "serial": e.serial or e.id, "lot": e.lot or "", "kind": e.kind or "",
                           "started_utc": h.started_utc, "outcome": meta.outcome}
    notes: list[str] = []
    try:
        fit = fit_run(frame, meta)
    except BadInput as exc:
        row["note"] = f"no fit: {exc.line()}"
        return row
    row["model"], row["k"] = fit.model, fit.k
    for key, value in fit.params.items():
        row[key] = value
        row[f"expanded_u_{key}"] = fit.expanded_u.get(key)
        row[f"{key} (text)"] = measured(value, fit.expanded_u.get(key), unit_of(key), fit.budgets[key].k,
                                        fit.budgets[key].coverage_probability)
    current = e.operating_a if e.operating_a is not None else float(fit.current_a.max())
    if e.operating_a is None:
        notes.append("no operating_a in the plan: loss at the largest measured current")
    elif current > float(fit.current_a.max()) * 1.0001:
        notes.append(f"loss extrapolated beyond the largest measured current {float(fit.current_a.max()):g} A")
    drop, big_u, k = fit.drop_expanded_at(current)
    row.update({"operating_a": current, "loss_w": drop * current, "expanded_u_loss_w": big_u * current,
                "loss": measured(drop * current, big_u * current, "W", k, fit.coverage_probability)})
    if spec is not None:
        from benchlog.analysis.judging import check_run

        try:
            check = check_run(frame, meta, spec, at_a=current)
            row["tj_c"] = check.predicted.tj_c
            row["verdict"] = check.verdict.outcome
        except BadInput as exc:
            notes.append(f"no verdict: {exc.line()}")
    row["note"] = "; ".join(notes)
    return row


def columns_of(rows: list[dict[str, Any]]) -> list[str]:
    """Fixed columns, then each fitted quantity (value, U, text) in first-seen order, then loss, Tj and verdict."""
    middle: list[str] = []
    for row in rows:
        for key in row:
            if key not in FIXED and key not in TAIL and key not in middle:
                middle.append(key)
    return [*FIXED, *middle, *TAIL]


def _cell(value: Any) -> Any:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return ""
    return value


def write_csv(path: Path, columns: list[str], rows: list[dict[str, Any]]) -> None:
    with open(path, "w", newline="", encoding="utf-8") as f:
        writer = csv.writer(f)
        writer.writerow(columns)
        for row in rows:
            writer.writerow([_cell(row.get(c)) for c in columns])


def write_xlsx(path: Path, columns: list[str], rows: list[dict[str, Any]]) -> None:
    try:
        from openpyxl import Workbook  # optional extra: spreadsheets without a CSV import step
    except ImportError:
        raise BadInput("argument", "-o", f"'{path}' asks for .xlsx, which needs the optional extra 'xlsx'",
                       f"{XLSX_HINT}, or a .csv file") from None
    book = Workbook()
    sheet = book.active
    sheet.title = "runs"
    sheet.append(columns)
    for row in rows:
        sheet.append([_cell(row.get(c)) for c in columns])
    sheet.freeze_panes = "B2"
    book.save(path)


def run_summary(args: argparse.Namespace) -> int:
    from benchlog.filecheck import check_output_file, write_failure

    out = Path(args.out)
    suffix = out.suffix.lower()
    if suffix not in (".csv", ".xlsx"):
        raise BadInput("argument", "-o", f"'{out}' ends in '{out.suffix or '(nothing)'}'", "a name ending in .csv or .xlsx")
    check_output_file(out, "-o", inputs=[*args.runs, *([args.spec] if args.spec else [])])
    spec = None
    if args.spec:
        from benchlog.specfiles import load_spec

        spec = load_spec(args.spec)
    rows = [summary_row(p, spec) for p in args.runs]
    columns = columns_of(rows)
    try:
        (write_xlsx if suffix == ".xlsx" else write_csv)(out, columns, rows)
    except OSError as exc:
        raise write_failure(out, exc) from None
    print(f"{out}: {len(rows)} run(s), {len(columns)} columns")
    return 0
