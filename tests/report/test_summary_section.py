"""The report's one-row-per-run table is `benchlog summary`'s rows: the same function, the same cells.

Runs: the recorded lot in `sample_runs/lot-demo-07` (real recordings of the
simulated bench) and the prototype runs of other kinds. The CLI's CSV is the
reference for every cell the report shows (the loss itself, P = V·I with
U(P) = I·U(V), is checked against `benchlog fit --at` in tests/cli/test_summary.py).
"""

from __future__ import annotations

import csv
import re
from pathlib import Path

from benchlog.cli import main
from benchlog.quantity import measured
from benchlog.report.build import build_report
from benchlog.report.document import Table
from benchlog.report.summary_rows import TEXT_SUFFIX

ROOT = Path(__file__).resolve().parents[2]
LOT = sorted((ROOT / "sample_runs" / "lot-demo-07").glob("*.run"))[:6]  # L07-0006 is the part above the maximum
SPEC = ROOT / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml"
MIXED = [ROOT / "sample_runs" / n for n in ("pmos-prototype.run", "schottky-prototype.run", "pmos-killed.run")]


def _summary_table(doc) -> Table:
    section = next(s for s in doc.sections if s.title == "Summary of the runs")
    return next(b for b in section.blocks if isinstance(b, Table))


def _cli_rows(runs, tmp_path, spec=None) -> list[dict]:
    out = tmp_path / "cli.csv"
    assert main(["summary", *map(str, runs), "-o", str(out), *(["--spec", str(spec)] if spec else [])]) == 0
    return list(csv.DictReader(out.open(encoding="utf-8")))


def test_a_lot_report_holds_the_cli_summary_row_by_row(tmp_path, capsys):
    table = _summary_table(build_report(LOT, spec_path=SPEC, generated_utc="2025-03-05T00:00:00Z"))
    cli = _cli_rows(LOT, tmp_path, SPEC)
    capsys.readouterr()
    assert len(table.rows) == len(cli) == len(LOT)
    col = {name: i for i, name in enumerate(table.columns)}
    for shown, row in zip(table.rows, cli):
        assert shown[col["serial"]] == row["serial"] and shown[col["lot"]] == row["lot"]
        assert shown[col["r_on_ohm (expanded U)"]] == row["r_on_ohm" + TEXT_SUFFIX]
        assert shown[col["loss (expanded U)"]] == row["loss"]
        assert shown[col["verdict"]] == row["verdict"] and row["verdict"] in ("pass", "fail", "conditional")
        # the text is the one formatter's (GUM 7.2.6 rounding) applied to the numbers the CSV keeps
        # with the drop's own k_p and the coverage probability stated (GUM 7.2.4, 6.3)
        bare = measured(float(row["loss_w"]), float(row["expanded_u_loss_w"]), "W", None)
        assert re.fullmatch(re.escape(bare) + r" \(k = \d\.\d\d, 95\.45 % coverage\)", row["loss"]), row["loss"]
    assert "fail" in [r[col["verdict"]] for r in table.rows]  # L07-0006 fails the lot's spec
    # each value once, as text with its U: the bare numbers stay in the CSV / xlsx
    assert "expanded_u_r_on_ohm" not in table.columns and "loss_w" not in table.columns


def test_runs_of_other_kinds_keep_their_row_and_say_why_there_is_no_verdict(tmp_path, capsys):
    doc = build_report(MIXED[:1] + MIXED[2:], spec_path=SPEC, generated_utc="2025-03-05T00:00:00Z")
    table = _summary_table(doc)
    cli = _cli_rows(MIXED[:1] + MIXED[2:], tmp_path, SPEC)
    capsys.readouterr()
    col = {name: i for i, name in enumerate(table.columns)}
    assert [r[col["serial"]] for r in table.rows] == [r["serial"] for r in cli] == ["PROTO-0001", "PROTO-0005"]
    assert table.rows[1][col["outcome"]] == "incomplete" and "extrapolated" in table.rows[1][col["note"]]
    doc = build_report(MIXED[:2], generated_utc="2025-03-05T00:00:00Z")  # no spec: kinds may differ
    table = _summary_table(doc)
    col = {name: i for i, name in enumerate(table.columns)}
    assert [r[col["kind"]] for r in table.rows] == ["pmos", "schottky"]
    assert table.rows[1][col["ideality (expanded U)"]] == _cli_rows(MIXED[:2], tmp_path)[1]["ideality" + TEXT_SUFFIX]


def test_one_run_has_no_summary_table(tmp_path):
    doc = build_report(MIXED[:1], spec_path=SPEC, generated_utc="2025-03-05T00:00:00Z")
    assert "Summary of the runs" not in [s.title for s in doc.sections]
