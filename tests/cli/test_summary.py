"""`benchlog summary`: one row per run as CSV and xlsx; an input is never overwritten."""

import csv
import json
import shutil
import sys
from pathlib import Path

import pytest

from benchlog.cli import main

ROOT = Path(__file__).resolve().parents[2]
RUNS = [ROOT / "sample_runs" / n for n in ("pmos-prototype.run", "schottky-prototype.run", "pmos-killed.run")]
SPEC = ROOT / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml"


def _fit_json(run: Path, at: float, capsys) -> dict:
    assert main(["fit", str(run), "--json", "--at", str(at)]) == 0
    return json.loads(capsys.readouterr().out)


def test_csv_one_row_per_run_with_the_fit_and_the_loss(tmp_path, capsys):
    out = tmp_path / "lot.csv"
    assert main(["summary", *map(str, RUNS), "-o", str(out), "--spec", str(SPEC)]) == 0
    capsys.readouterr()
    rows = list(csv.DictReader(out.open(encoding="utf-8")))
    assert [r["serial"] for r in rows] == ["PROTO-0001", "PROTO-0003", "PROTO-0005"]
    assert [r["kind"] for r in rows] == ["pmos", "schottky", "pmos"]
    assert rows[2]["outcome"] == "incomplete"
    first = rows[0]
    fit = _fit_json(RUNS[0], float(first["operating_a"]), capsys)
    assert float(first["r_on_ohm"]) == pytest.approx(fit["params"]["r_on_ohm"], rel=1e-12)
    assert float(first["expanded_u_r_on_ohm"]) == pytest.approx(fit["expanded_u"]["r_on_ohm"], rel=1e-12)
    # P = V·I at the operating current (common practice); U(P) = I·U(V) with the current exact
    at = fit["drop_at"][0]
    assert float(first["loss_w"]) == pytest.approx(at["drop_v"] * at["current_a"], rel=1e-12)
    assert float(first["expanded_u_loss_w"]) == pytest.approx(at["expanded_u_v"] * at["current_a"], rel=1e-9)
    assert first["verdict"] in ("pass", "fail", "conditional") and float(first["tj_c"]) > 25.0
    # the text states the coverage factor of that parameter's budget and its coverage probability (GUM 7.2.4)
    assert f"mΩ (k = {fit['k_p']['r_on_ohm']:.2f}, 95.45 % coverage)" in first["r_on_ohm (text)"]
    # the spec is for a P-MOSFET: the Schottky row says why it has no verdict instead of failing the table
    assert rows[1]["verdict"] == "" and "no verdict" in rows[1]["note"]
    assert "extrapolated" in rows[2]["note"]


def test_xlsx_holds_the_same_cells_as_csv(tmp_path, capsys):
    openpyxl = pytest.importorskip("openpyxl")
    assert main(["summary", *map(str, RUNS[:2]), "-o", str(tmp_path / "a.csv")]) == 0
    assert main(["summary", *map(str, RUNS[:2]), "-o", str(tmp_path / "a.xlsx")]) == 0
    capsys.readouterr()
    rows = list(csv.reader((tmp_path / "a.csv").open(encoding="utf-8")))
    sheet = openpyxl.load_workbook(tmp_path / "a.xlsx").active
    cells = [["" if c is None else c for c in r] for r in sheet.iter_rows(values_only=True)]
    assert cells[0] == rows[0]
    for got, want in zip(cells[1:], rows[1:]):
        for g, w in zip(got, want):
            assert (g == pytest.approx(float(w))) if isinstance(g, (int, float)) else str(g) == w


def test_without_the_extra_one_line_names_it(tmp_path, capsys, monkeypatch):
    monkeypatch.setitem(sys.modules, "openpyxl", None)  # as if the optional extra were not installed
    assert main(["summary", str(RUNS[0]), "-o", str(tmp_path / "a.xlsx")]) == 2
    err = capsys.readouterr().err.strip()
    assert "benchlog[xlsx]" in err and "\n" not in err and not (tmp_path / "a.xlsx").exists()


def test_an_input_is_never_overwritten_and_bad_names_refused(tmp_path, capsys):
    run = tmp_path / "odd-name.csv"
    shutil.copy(RUNS[0], run)
    before = run.read_bytes()
    assert main(["summary", str(run), "-o", str(run)]) == 2
    assert run.read_bytes() == before
    assert main(["summary", str(RUNS[0]), "-o", str(tmp_path / "x.txt")]) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err and ".csv or .xlsx" in err
