"""One row per run for a spreadsheet: the one table `benchlog summary`, the report and the UI all write.

A row holds the run's identity (serial, lot, kind, start, outcome), each fitted
value with its expanded uncertainty (numbers, and the text written by
`benchlog.quantity.measured`, GUM 7.2.6 rounding), the loss at the operating
current (the argument, else the plan's `operating_a`, else the largest measured
current: the rule `analysis.verdict.run_conditions` uses) and, with a spec, the
junction temperature and the verdict. `row_of` builds a row from what the
analysis found, so the report (which has analysed its runs already) and
`summary_row` (which analyses one file) cannot write it two ways.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path
from typing import Any, Sequence

from benchlog.badinput import BadInput
from benchlog.quantity import measured, unit_of

XLSX_HINT = "pip install 'benchlog[xlsx]'"
FIXED = ("run", "serial", "lot", "kind", "started_utc", "outcome", "model", "k")
TAIL = ("operating_a", "loss_w", "expanded_u_loss_w", "loss", "tj_c", "verdict", "note")
TEXT_SUFFIX = " (text)"


def row_of(path, meta, fit, fit_problem: str, check, check_problem: str, current_a: float | None) -> dict[str, Any]:
    """The row of one analysed run; what could not be fitted or judged is said in `note`, the other cells kept.

    `meta` is the run's `runs.RunMeta`, `fit` a `FitResult` (or None), `check` an
    `analysis.verdict.Check` (or None), `current_a` the operating current (None:
    the largest measured).
    """
    h = meta.header
    e = h.element
    row: dict[str, Any] = {"run": str(path), "serial": e.serial or e.id, "lot": e.lot or "", "kind": e.kind or "",
                           "started_utc": h.started_utc, "outcome": meta.outcome}
    notes: list[str] = []
    if fit is None:
        row["note"] = f"no fit: {fit_problem or 'not attempted'}"
        return row
    row["model"], row["k"] = fit.model, fit.k
    for key, value in fit.params.items():
        row[key] = value
        row[f"expanded_u_{key}"] = fit.expanded_u.get(key)
        row[f"{key}{TEXT_SUFFIX}"] = measured(value, fit.expanded_u.get(key), unit_of(key), fit.budgets[key].k,
                                              fit.budgets[key].coverage_probability)
    top = float(fit.current_a.max())
    current = current_a if current_a is not None else (e.operating_a if e.operating_a is not None else top)
    if current_a is None and e.operating_a is None:
        notes.append("no operating_a in the plan: loss at the largest measured current")
    elif current > top * 1.0001:
        notes.append(f"loss extrapolated beyond the largest measured current {top:g} A")
    drop, big_u, k = fit.drop_expanded_at(current)  # U of the drop's own budget (k_p, GUM 6.3)
    row.update({"operating_a": current, "loss_w": drop * current, "expanded_u_loss_w": big_u * current,
                "loss": measured(drop * current, big_u * current, "W", k, fit.coverage_probability)})
    if check is not None:
        row["tj_c"] = check.predicted.tj_c
        row["verdict"] = check.outcome  # the worse of the forward verdict and the reverse result
    elif check_problem:
        notes.append(f"no verdict: {check_problem}")
    row["note"] = "; ".join(notes)
    return row


def summary_row(path: str | Path, spec=None, *, at_a: float | None = None) -> dict[str, Any]:
    """Load, fit and (with a `PartSpec`) judge one run file, and write its row (`row_of`).

    With a spec the fit is the one the verdict used (the same model), as in the report.
    """
    from benchlog.analysis.fits import fit_run
    from benchlog.runs import load_points

    frame, meta = load_points(path)
    check = None
    check_problem = ""
    model = "auto"
    if spec is not None and len(frame):
        from benchlog.analysis.judging import check_run

        try:
            check = check_run(frame, meta, spec, at_a=at_a)
            model = check.model
        except BadInput as exc:
            check_problem = exc.line()
    try:
        fit, fit_problem = fit_run(frame, meta, model), ""
    except BadInput as exc:
        fit, fit_problem = None, exc.line()
    return row_of(path, meta, fit, fit_problem, check, check_problem, at_a)


def columns_of(rows: Sequence[dict[str, Any]]) -> list[str]:
    """Fixed columns, then each fitted quantity (value, U, text) in first-seen order, then loss, Tj and verdict."""
    middle: list[str] = []
    for row in rows:
        for key in row:
            if key not in FIXED and key not in TAIL and key not in middle:
                middle.append(key)
    return [*FIXED, *middle, *TAIL]


def shown_columns(columns: Sequence[str]) -> list[str]:
    """The columns a reader sees on a page: each value once, as its text with U (the numbers stay in the files)."""
    texts = {c[: -len(TEXT_SUFFIX)] for c in columns if c.endswith(TEXT_SUFFIX)}
    numeric = texts | {f"expanded_u_{t}" for t in texts} | {"loss_w", "expanded_u_loss_w", "k"}
    return [c for c in columns if c not in numeric]


def cell(value: Any) -> Any:
    """A spreadsheet cell: numbers stay numbers; missing and non-finite values are empty."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return ""
    return value


def write_csv(path: Path, columns: list[str], rows: Sequence[dict[str, Any]]) -> None:
    with open(path, "w", newline="", encoding="utf-8") as f:
        writer = csv.writer(f)
        writer.writerow(columns)
        for row in rows:
            writer.writerow([cell(row.get(c)) for c in columns])


def write_xlsx(path: Path, columns: list[str], rows: Sequence[dict[str, Any]]) -> None:
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
        sheet.append([cell(row.get(c)) for c in columns])
    sheet.freeze_panes = "B2"
    book.save(path)


def write_summary(runs: Sequence[str | Path], out: str | Path, specs: Sequence | None = None, *,
                  option: str = "-o") -> tuple[list[dict[str, Any]], list[str]]:
    """Write the rows of `runs` (each judged against its entry of `specs`, a `PartSpec` or None) to `out`,
    .csv or .xlsx by its suffix. An input is never overwritten; a write that fails part way is `CannotWrite`."""
    from benchlog.filecheck import check_output_file, write_failure

    out = Path(out)
    suffix = out.suffix.lower()
    if suffix not in (".csv", ".xlsx"):
        raise BadInput("argument", option, f"'{out}' ends in '{out.suffix or '(nothing)'}'",
                       "a name ending in .csv or .xlsx")
    check_output_file(out, option, inputs=[*runs, *(s.path for s in (specs or ()) if getattr(s, "path", None))])
    if suffix == ".xlsx":
        from importlib.util import find_spec

        if find_spec("openpyxl") is None:  # refuse before the runs are analysed
            raise BadInput("argument", option, f"'{out}' asks for .xlsx, which needs the optional extra 'xlsx'",
                           f"{XLSX_HINT}, or a .csv file")
    specs = list(specs) if specs is not None else [None] * len(runs)
    rows = [summary_row(p, s) for p, s in zip(runs, specs)]
    columns = columns_of(rows)
    try:
        (write_xlsx if suffix == ".xlsx" else write_csv)(out, columns, rows)
    except OSError as exc:
        raise write_failure(out, exc) from None
    return rows, columns
