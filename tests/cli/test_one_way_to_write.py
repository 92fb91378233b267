"""Every number in the analysis commands' text is written one way (benchlog.quantity, GUM 7.2.6).

The check reads the text people see: no exponent forms, no raw SI values with six or more
significant digits, and the judged value written exactly as `quantity.measured` writes the
figures `--json` gives for the same run.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

import benchlog
from benchlog.cli import main
from benchlog.quantity import label_of, measured, unit_of

ROOT = Path(benchlog.__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_runs"
SPECS = Path(benchlog.__file__).parent / "demo" / "specs"

# an exponent form (1.2e-05) or a bare number with six or more significant digits (0.0125002)
EXPONENT = re.compile(r"\d[eE][-+]?\d")
LONG = re.compile(r"(?<![\w.])\d+\.\d{6,}(?!\d)|(?<![\w.])0\.0\d{5,}")

CASES = [
    ("check", "pmos-prototype.run", "demo-pfet-10m.toml"),
    ("check", "rectifier-prototype.run", "demo-rect-3a.toml"),
    ("check", "schottky-prototype.run", "demo-schottky-2a.toml"),
]


def _run(capsys, *args: str) -> str:
    main(list(args))
    return capsys.readouterr().out


def _numbers_are_written_one_way(text: str) -> None:
    # notes that quote a statistic's own formula or a rule keep their symbols; numbers are what is checked
    for line in text.splitlines():
        assert not EXPONENT.search(line), f"exponent form: {line}"
        assert not LONG.search(line), f"raw SI number: {line}"


@pytest.mark.parametrize("command, run, spec", CASES, ids=[c[1] for c in CASES])
def test_check_text_writes_each_number_one_way(capsys, command, run, spec):
    text = _run(capsys, command, str(SAMPLES / run), "--spec", str(SPECS / spec))
    _numbers_are_written_one_way(text)


def test_check_text_writes_the_judged_value_as_the_formatter_does(capsys):
    args = ["check", str(SAMPLES / "pmos-prototype.run"), "--spec", str(SPECS / "demo-pfet-10m.toml")]
    data = json.loads(_run(capsys, *args, "--json"))
    text = _run(capsys, *args)
    judged = data["judged"]
    q = judged["quantity"]
    expected = (f"{label_of(q)} = "
                f"{measured(judged[q], judged['expanded_u'], unit_of(q), data['k'], data['coverage_probability'])}")
    assert expected in text, (expected, text)


def test_lot_text_writes_each_number_one_way(capsys):
    runs = sorted(str(p) for p in (SAMPLES / "lot-demo-07").glob("*.run"))
    text = _run(capsys, "lot", *runs, "--spec", str(SPECS / "demo-pfet-10m.toml"))
    table = [line for line in text.splitlines() if line.startswith(("  mean", "  limits"))]
    assert table, text
    _numbers_are_written_one_way("\n".join(table))


@pytest.mark.parametrize("run", sorted(p.name for p in SAMPLES.glob("*.run")))
def test_fit_text_writes_each_number_one_way(capsys, run):
    _numbers_are_written_one_way(_run(capsys, "fit", str(SAMPLES / run)))


def test_estimate_and_design_text_write_each_number_one_way(capsys):
    specs = sorted(str(p) for p in SPECS.glob("*.toml"))
    _numbers_are_written_one_way(_run(capsys, "estimate", "--at", "2", *specs))
    _numbers_are_written_one_way(_run(capsys, "design", str(SPECS.parent / "design.toml")))


def test_p_values_are_written_as_tests_report_them():
    """`p < 0.001` below a thousandth, two significant digits above (common practice in reporting tests)."""
    from benchlog.quantity import p_value

    assert p_value(4.4e-13) == "p < 0.001"
    assert p_value(0.00036) == "p < 0.001"
    assert p_value(0.0012) == "p = 0.0012"
    assert p_value(0.0789) == "p = 0.079"
    assert p_value(float("nan")) == "p —"
