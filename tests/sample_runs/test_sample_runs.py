"""The committed sample runs: regenerated from the simulated bench they come out the same, and each shows what it claims."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from benchlog import runs
from benchlog.analysis.fits import fit_run
from benchlog.analysis.self_heating import detect_self_heating
from benchlog.cli import main as benchlog_main
from benchlog.runs.reader import is_torn
from tools.sample_runs import LOT_OUTLIERS, LOT_SIZE, SAMPLES, generate, run_path

ROOT = Path(__file__).resolve().parents[2]
COMMITTED = ROOT / "sample_runs"
SPECS = ROOT / "benchlog" / "demo" / "specs"
# The only things allowed to differ between two recordings: the loopback ports (tests use ephemeral
# ones so they never collide) and the tool version (in the header and in the sim's *IDN? firmware field).
PORT = re.compile(r"TCPIP0::127\.0\.0\.1::\d+::SOCKET")
VERSION = re.compile(r'"tool_version":"([^"]*)"')
REGENERATE = "the committed sample differs: regenerate with `python -m tools.sample_runs` and commit"


def _normalised(path: Path) -> str:
    text = path.read_bytes().decode("utf-8")
    version = VERSION.search(text).group(1)
    text = text.replace(f'"tool_version":"{version}"', '"tool_version":"-"').replace(f',{version}"', ',-"')
    return PORT.sub("TCPIP0::127.0.0.1::PORT::SOCKET", text)


@pytest.fixture(scope="module")
def regenerated(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("sample_runs")
    generate(out, port=0)  # all of them: about 2 s on the simulated bench's virtual clock
    return out


def _committed_files() -> list[Path]:
    return sorted(COMMITTED.rglob("*.run"))


def test_every_sample_is_committed_and_nothing_else():
    expected = sorted(run_path(COMMITTED, s) for s in SAMPLES)
    assert _committed_files() == expected


@pytest.mark.parametrize("sample", SAMPLES, ids=lambda s: s.name)
def test_regenerating_gives_the_committed_file(regenerated, sample):
    new, old = run_path(regenerated, sample), run_path(COMMITTED, sample)
    # byte for byte, apart from port numbers and the tool version
    assert _normalised(new) == _normalised(old), REGENERATE
    new_frame, new_meta = runs.load(new)
    old_frame, old_meta = runs.load(old)
    pd.testing.assert_frame_equal(new_frame, old_frame, check_exact=True)
    assert new_meta.outcome == old_meta.outcome and new_meta.complete == old_meta.complete
    assert new_meta.offset_v == old_meta.offset_v and new_meta.reverse == old_meta.reverse


def test_every_committed_run_loads_and_each_element_kind_is_there():
    kinds = set()
    for path in _committed_files():
        frame, meta = runs.load(path)
        assert len(frame) > 0, path
        assert np.isfinite(frame["drop_v"]).all() and np.isfinite(frame["current_a"]).all()
        assert meta.header.host == "sample-bench"
        assert meta.header.schema == 2 and not meta.header.run_id_derived
        kinds.add(meta.element.kind)
    assert kinds == {"rectifier", "schottky", "pmos", "resistor"}


def test_samples_are_small():
    total = sum(p.stat().st_size for p in COMMITTED.rglob("*") if p.is_file())
    assert total < 5_000_000


def test_readme_lists_every_sample():
    readme = (COMMITTED / "README.md").read_text()
    for sample in SAMPLES:
        if "/" not in sample.name:
            assert f"{sample.name}.run" in readme, sample.name
    assert "lot-demo-07/" in readme


def test_killed_run_has_no_end_record_and_a_torn_last_line():
    path = COMMITTED / "pmos-killed.run"
    frame, meta = runs.load(path)
    assert not meta.complete and meta.finished is None and meta.outcome == "incomplete"
    assert is_torn(path)
    assert len(frame) == 12  # the points on disk before the kill; the torn 13th is ignored
    last = path.read_bytes().rsplit(b"\n", 1)[1]
    assert last.startswith(b"P\t12\t")


def test_lot_has_twenty_parts_and_the_lot_summary_flags_the_out_of_family_ones(capsys):
    files = sorted((COMMITTED / "lot-demo-07").glob("*.run"))
    assert len(files) == LOT_SIZE == 20
    code = benchlog_main(["lot", "--json", "--spec", str(SPECS / "demo-pfet-10m.toml"), *map(str, files)])
    summary = json.loads(capsys.readouterr().out)
    assert summary["n"] == 20
    flagged = {p["serial"] for p in summary["parts"] if p["outlier"]}
    assert flagged == set(LOT_OUTLIERS)
    # the high one is also above the spec's maximum R_DS(on): the lot fails on it (exit code 1)
    assert code == 1 and summary["verdict"] == "fail"
    failed = {p["serial"] for p in summary["parts"] if p["verdict"] == "fail"}
    assert failed == {s for s, r in LOT_OUTLIERS.items() if r > summary["usl_ohm"]}


def test_reverse_run_records_a_blocking_element():
    _, meta = runs.load(COMMITTED / "rectifier-reverse.run")
    assert meta.complete and meta.reverse is not None
    assert meta.reverse.voltage_v == 12.0 and meta.reverse.passed
    assert 0 < meta.reverse.current_a < meta.reverse.limit_a


def test_self_heating_run_shows_hysteresis_of_the_sign_heating_gives():
    frame, meta = runs.load(COMMITTED / "rectifier-self-heating.run")
    up = frame[frame["direction"] == "up"].set_index("setpoint_a")["drop_v"]
    down = frame[frame["direction"] == "down"].set_index("setpoint_a")["drop_v"]
    both = up.index.intersection(down.index)
    assert len(both) >= 10
    # a silicon junction's forward drop falls about 2 mV/K (common practice): the warmer down leg lies below
    assert ((down[both] - up[both]) < 0).all()
    found = detect_self_heating(frame, fit_run(frame, meta))
    assert found.detected


def test_every_repository_path_the_readme_and_developers_guide_name_exists():
    # the walkthrough is run on a fresh clone: a renamed sample, plan, spec or doc must not leave it dangling
    for doc in ("README.md", "DEVELOPERS.md", "sample_runs/README.md"):
        text = (ROOT / doc).read_text()
        paths = set(re.findall(r"(?<![\w/.-])((?:sample_runs|benchlog|docs|benchmarks|instrument_profiles|tests|tools)"
                               r"/[\w./-]*[\w])", text))
        assert paths, doc
        for name in paths:
            if "*" in name:
                continue
            assert (ROOT / name).exists(), f"{doc} names {name}, which does not exist"
