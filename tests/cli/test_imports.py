"""Commands import only what they use: `--help` no numerics, `fit`/`check`/`lot` no scipy, pandas or plotting.

Each command runs in a fresh interpreter and then lists the modules it loaded
(a module imported once stays in sys.modules), so a top-level import that
creeps back in fails here, whatever the machine's speed.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
RUNS = ROOT / "sample_runs"
SPEC = ROOT / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml"

PROBE = """
import json, sys
from benchlog.cli import main
try:
    code = main(sys.argv[1:])
except SystemExit as exc:
    code = exc.code
sys.stdout.flush()
print("\\n@@" + json.dumps({"code": code, "modules": sorted(sys.modules)}))
"""


def loaded(*args: str) -> set[str]:
    done = subprocess.run([sys.executable, "-c", PROBE, *args], capture_output=True, text=True, cwd=ROOT,
                          timeout=120)
    report = json.loads(done.stdout.rsplit("@@", 1)[1])
    assert report["code"] in (0, 3, None), done.stderr  # 3: a conditional verdict is an answer too
    return set(report["modules"])


def tops(modules: set[str]) -> set[str]:
    return {m.split(".")[0] for m in modules}


HEAVY = {"scipy", "pandas", "matplotlib", "textual", "sqlalchemy"}


def test_help_imports_no_numerics():
    assert not tops(loaded("--help")) & (HEAVY | {"numpy"})


def test_fit_of_a_resistive_run_imports_no_scipy_pandas_or_plotting():
    modules = loaded("fit", str(RUNS / "pmos-prototype.run"), "--json")
    assert not tops(modules) & HEAVY
    assert "benchlog.analysis.design" not in modules


def test_a_diode_fit_does_import_scipy():
    # the other side of the rule: the diode law's nonlinear least squares is scipy's (this test can fail)
    assert "scipy.optimize" in loaded("fit", str(RUNS / "rectifier-prototype.run"), "--json")


@pytest.mark.parametrize("args", [
    ("check", str(RUNS / "pmos-prototype.run"), "--spec", str(SPEC), "--json"),
    ("lot", str(RUNS / "lot-demo-07" / "L07-0001.run"), str(RUNS / "lot-demo-07" / "L07-0002.run"),
     "--spec", str(SPEC), "--json"),
])
def test_check_and_lot_import_no_scipy_pandas_or_plotting(args):
    modules = loaded(*args)
    assert not tops(modules) & HEAVY
    assert "benchlog.analysis.design" not in modules


def test_html_report_needs_neither_the_pdf_backend_nor_the_design_review(tmp_path):
    modules = loaded("report", str(RUNS / "pmos-prototype.run"), "-o", str(tmp_path / "r.html"))
    assert "matplotlib" in modules  # the figures
    assert "matplotlib.backends.backend_pdf" not in modules
    assert "benchlog.analysis.design" not in modules
    assert not tops(modules) & {"scipy", "pandas", "textual"}


def test_each_command_is_registered_by_the_module_the_table_names():
    # `benchlog lot ...` builds only its module's subparsers (COMMAND_MODULE): the table must list
    # every command of the full parser, and building one module must give that command the same options.
    from benchlog.cli import COMMAND_MODULE, build_parser

    full = build_parser()._subparsers._group_actions[0].choices
    assert set(COMMAND_MODULE) == set(full)
    for name in full:
        alone = build_parser(name)._subparsers._group_actions[0].choices
        assert name in alone
        assert alone[name].format_help() == full[name].format_help()


def test_an_unknown_command_still_names_every_command(capsys):
    from benchlog.cli import COMMAND_MODULE, main

    with pytest.raises(SystemExit) as exc:
        main(["no-such-command"])
    assert exc.value.code == 2
    err = capsys.readouterr().err
    assert all(repr(name) in err for name in COMMAND_MODULE)


def test_check_of_a_plain_run_loads_no_soak_or_sweep_analysis():
    modules = loaded("check", str(RUNS / "pmos-prototype.run"), "--spec", str(SPEC), "--json")
    assert not modules & {"benchlog.analysis.thermal_response", "benchlog.analysis.input_sweep",
                          "benchlog.analysis.leakage_sweep"}


@pytest.mark.parametrize("run", sorted(p.relative_to(RUNS).as_posix() for p in RUNS.rglob("*.run")))
def test_the_short_cut_gives_what_the_sweep_and_soak_analyses_give(run):
    """A run whose plan has no input sweep, reverse step or soak skips those analyses: the answer is the same."""
    from benchlog.analysis.thermal_response import has_soak
    from benchlog.cli.soak_out import soak_block
    from benchlog.cli.sweeps_out import sweeps_payload
    from benchlog.report.sweeps_data import sweeps_payload as full_payload
    from benchlog.runs import load_points

    frame, meta = load_points(RUNS / run)
    assert sweeps_payload(frame, meta) == full_payload(frame, meta)
    assert (soak_block(frame, meta)[0] is None) == (not has_soak(frame))
