"""A corpus of bad inputs through the real `benchlog` command: one line naming the file and key or line, exit 2.

The files live in `bad_inputs/<kind>/`; the table below says which command
reads each one and what the message must name besides the file (a `[table].key`,
a `line N`, a byte offset, or the argument). Every case is run in-process
through `benchlog.cli.main` (the same code as the installed command); a few,
and every `benchlog sim` case (a valid config would serve forever), run as real
subprocesses.
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import subprocess
import threading
import time
from pathlib import Path

import pytest

from benchlog.cli import main

from .procs import ROOT, run_benchlog

BAD = Path(__file__).parent / "bad_inputs"
GOOD_PLAN = str(Path(__file__).parent / "plans" / "pmos-40.toml")
GOOD_RUN = str(ROOT / "sample_runs" / "pmos-prototype.run")
GOOD_SPEC = str(ROOT / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml")

# How each kind of file reaches the program ({file}: the bad file, {tmp}: a scratch folder).
SWEEP = ("sweep", "{file}", "--out", "{tmp}")
BENCH = ("sweep", GOOD_PLAN, "--bench", "{file}", "--out", "{tmp}")
PROFILE = ("profiles", "check", "{file}")
SPEC = ("estimate", "{file}", "--at", "1")
DESIGN = ("design", "{file}")
FIT = ("fit", "{file}")
EXPORT = ("export", "{file}", "--csv", "{tmp}/points.csv")
CHECK = ("check", "{file}", "--spec", GOOD_SPEC)
REPORT = ("report", "{file}", "-o", "{tmp}/report.html")
LOT = ("lot", GOOD_RUN, "{file}", "--spec", GOOD_SPEC)
SIM = ("sim", "--port", "0", "--config", "{file}")

# (file under bad_inputs/, command, words the one line must hold besides the file's path)
FILES = [
    # plans
    ("plan/empty.toml", SWEEP, ["[limits]", "missing"]),
    ("plan/binary-garbage.toml", SWEEP, ["byte 1", "not UTF-8"]),
    ("plan/truncated.toml", SWEEP, ["not valid TOML", "end of document"]),
    ("plan/not-toml.toml", SWEEP, ["not valid TOML", "line 9"]),
    ("plan/duplicate-key.toml", SWEEP, ["not valid TOML", "line 14"]),
    ("plan/unknown-key.toml", SWEEP, ["[limits].max_curent_a", "unknown key", "max_current_a"]),
    ("plan/unknown-table.toml", SWEEP, ["limit", "unknown key", "limits"]),
    ("plan/input-with-soak.toml", SWEEP, ["input", "[input] or [soak] in one plan"]),
    ("plan/count-as-text.toml", SWEEP, ["[steps].count", "'forty'"]),
    ("plan/count-fraction.toml", SWEEP, ["[steps].count", "whole number"]),
    ("plan/count-huge.toml", SWEEP, ["[steps].count", "1000000000000"]),
    ("plan/nan-current.toml", SWEEP, ["[steps].stop_a", "nan"]),
    ("plan/inf-compliance.toml", SWEEP, ["[limits].compliance_v", "inf"]),
    ("plan/huge-current.toml", SWEEP, ["[limits].max_current_a", "1e+300"]),
    ("plan/negative-start.toml", SWEEP, ["[steps].start_a", "-1"]),
    ("plan/unknown-kind.toml", SWEEP, ["[element].kind", "'triode'"]),
    ("plan/element-without-id.toml", SWEEP, ["[element].id", "missing"]),
    ("plan/setpoint-above-limit.toml", SWEEP, ["[steps].stop_a", "[limits].max_current_a"]),
    ("plan/nplc-zero.toml", SWEEP, ["[meter].nplc", "is 0"]),
    ("plan/empty-list.toml", SWEEP, ["[steps].currents_a", "empty"]),
    ("plan/list-with-text.toml", SWEEP, ["[steps].currents_a[1]", "'1.0'"]),
    ("plan/settle-as-number.toml", SWEEP, ["settle"]),
    ("plan/a-directory.toml", SWEEP, ["cannot be read", "directory"]),
    # bench files
    ("bench/empty.toml", BENCH, ["[wiring]", "missing"]),
    ("bench/binary-garbage.toml", BENCH, ["byte 1", "not UTF-8"]),
    ("bench/no-wiring.toml", BENCH, ["[wiring]", "missing"]),
    ("bench/resource-with-semicolon.toml", BENCH, ["[supply].resource", ";*RST"]),
    ("bench/resource-with-newline.toml", BENCH, ["[meter].resource", "\\nOUTP ON"]),
    ("bench/unknown-role.toml", BENCH, ["psu", "unknown key"]),
    ("bench/unknown-force.toml", BENCH, ["[wiring].force", "'battery'"]),
    ("bench/shunt-without-ohms.toml", BENCH, ["[wiring].shunt_ohm", "missing"]),
    ("bench/mains-huge.toml", BENCH, ["[mains].line_frequency_hz", "1e+09"]),
    ("bench/input-as-text.toml", BENCH, ["[wiring].input_v", "'12 V'"]),
    ("bench/missing-meter.toml", BENCH, ["[meter]", "lacks"]),
    ("bench/sensor-on-the-lid.toml", BENCH, ["[sensor].attached_to", "'lid'"]),
    ("bench/sensor-without-temperature.toml", BENCH, ["[sensor].profile", "measure_temperature"]),
    # instrument profiles
    ("profile/empty.toml", PROFILE, ["schema", "missing"]),
    ("profile/binary-garbage.toml", PROFILE, ["byte 3", "not UTF-8"]),
    ("profile/truncated.toml", PROFILE, ["not valid TOML", "end of document"]),
    ("profile/schema-2.toml", PROFILE, ["schema", "is 2"]),
    ("profile/wrong-role.toml", PROFILE, ["role", "'oscilloscope'"]),
    ("profile/timeout-as-text.toml", PROFILE, ["[link].timeout_s", "'2'"]),
    ("profile/timeout-nan.toml", PROFILE, ["[link].timeout_s", "nan"]),
    ("profile/max-voltage-1e400.toml", PROFILE, ["[limits].max_voltage_v", "inf"]),
    ("profile/unknown-operation.toml", PROFILE, ["[commands].self_destruct", "unknown key"]),
    ("profile/unknown-placeholder.toml", PROFILE, ["[commands].set_voltage", "{volts}"]),
    ("profile/bad-idn-pattern.toml", PROFILE, ["idn_pattern", "regular expression"]),
    ("profile/negative-accuracy.toml", PROFILE, ["[accuracy[0]].reading_pct", "-0.05"]),
    ("profile/code-string.toml", PROFILE, ["python", "unknown key"]),
    # part specs
    ("spec/empty.toml", SPEC, ["kind", "missing"]),
    ("spec/binary-garbage.toml", SPEC, ["byte 0", "not UTF-8"]),
    ("spec/truncated.toml", SPEC, ["not valid TOML", "end of document"]),
    ("spec/unknown-kind.toml", SPEC, ["kind", "'valve'"]),
    ("spec/vf-as-text.toml", SPEC, ["vf_v", "'0.98 V'"]),
    ("spec/rth-nan.toml", SPEC, ["rth_ja_k_per_w", "nan"]),
    ("spec/tj-huge.toml", SPEC, ["tj_max_c", "1e+308"]),
    ("spec/unknown-key.toml", SPEC, ["vf_typ_v", "unknown key"]),
    ("spec/missing-vf.toml", SPEC, ["vf_v", "missing"]),
    # design files
    ("design/empty.toml", DESIGN, ["[input]", "missing"]),
    ("design/missing-spec.toml", DESIGN, ["[candidate[0]].spec", "no-such-spec.toml"]),
    ("design/min-above-max.toml", DESIGN, ["[input].nominal_v", "min_v"]),
    ("design/unknown-key.toml", DESIGN, ["[ambient].min_c", "unknown key"]),
    ("design/no-candidates.toml", DESIGN, ["candidate"]),
    ("design/load-nan.toml", DESIGN, ["[load].nominal_a", "nan"]),
    ("design/clamp-series-unknown.toml", DESIGN, ["[clamp].series", "'E7'"]),
    # run files, through each command that reads them
    ("run/empty.run", FIT, ["line 1", "no complete header"]),
    ("run/binary-garbage.run", FIT, ["line 1", "not UTF-8"]),
    ("run/truncated-header.run", FIT, ["line 1", "no complete header"]),
    ("run/schema-99.run", FIT, ["line 1", "schema version 99"]),
    ("run/other-format.run", FIT, ["line 1", "spreadsheet"]),
    ("run/schema-as-text.run", FIT, ["line 1", "schema"]),
    ("run/header-is-a-list.run", FIT, ["line 1", "header"]),
    ("run/nan-drop.run", EXPORT, ["line 5", "drop_v", "NaN"]),
    ("run/huge-drop.run", CHECK, ["line 5", "drop_v", "1e400"]),
    ("run/text-current.run", FIT, ["line 6", "current_a", "'about 0.4'"]),
    ("run/unknown-record.run", REPORT, ["line 2", "sparkle"]),
    ("run/index-goes-back.run", FIT, ["line 7", "index 1"]),
    ("run/end-points-as-text.run", FIT, ["line 33", "points"]),
    ("run/point-too-few-fields.run", EXPORT, ["line 5"]),
    ("run/a-directory.run", FIT, ["directory"]),
    ("run/schema-99.run", LOT, ["line 1", "schema version 99"]),
]

# Files whose message names another file: the one that is really wrong.
NAMED_INSTEAD = {
    "design/candidate-spec-broken.toml": "spec/rth-nan.toml",
    "bench/broken-profile.toml": "profile/timeout-nan.toml",
}
FILES += [
    ("design/candidate-spec-broken.toml", DESIGN, ["rth_ja_k_per_w", "nan"]),
    ("bench/broken-profile.toml", BENCH, ["[link].timeout_s", "nan"]),
    ("bench/unknown-profile.toml", BENCH, ["[supply].profile", "no-such-profile"]),
]

# Defects found by this corpus are recorded here as strict xfails until fixed (none open now).
KNOWN_DEFECTS: dict[str, str] = {}
FILES += [
    ("bench/broken-meter-profile.toml", BENCH, ["[link].timeout_s", "nan"]),
]
NAMED_INSTEAD["bench/broken-meter-profile.toml"] = "profile/timeout-nan.toml"

# Wrong arguments: (argv, words the one line must hold)
ARGUMENTS = [
    (("frobnicate",), ["COMMAND", "frobnicate"]),
    (("fit",), ["benchlog fit", "RUN"]),
    (("fit", GOOD_RUN, "--model", "cubic"), ["--model", "'cubic'"]),
    (("fit", GOOD_RUN, "--bogus"), ["--bogus"]),
    (("fit", GOOD_RUN, "--at", "nan"), ["--at", "nan"]),
    (("fit", GOOD_RUN, "--tempco", "inf"), ["--tempco", "inf"]),
    (("fit", "{tmp}/no-such.run"), ["no-such.run", "file not found"]),
    (("estimate", GOOD_SPEC, "--at", "abc"), ["--at", "'abc'"]),
    (("estimate", GOOD_SPEC, "--at", "nan"), ["--at", "nan"]),
    (("estimate", GOOD_SPEC, "--at", "-1"), ["--at", "-1"]),
    (("estimate", GOOD_SPEC, "--at", "1e400"), ["--at", "inf"]),
    (("estimate", GOOD_SPEC, "--at", "1", "--ambient", "inf"), ["--ambient", "inf"]),
    (("estimate", GOOD_SPEC), ["--at"]),
    (("check", GOOD_RUN, "--spec", GOOD_SPEC, "--at", "0"), ["--at", "is 0"]),
    (("check", GOOD_RUN, "--spec", "{tmp}/no-such.toml"), ["no-such.toml", "not found"]),
    (("lot", GOOD_RUN), ["--spec"]),
    (("lot", GOOD_RUN, "--spec", GOOD_SPEC, "--at", "-2"), ["--at", "-2"]),
    (("sweep",), ["PLAN.toml"]),
    (("sweep", GOOD_PLAN, "--seed", "x"), ["--seed", "'x'"]),
    (("sweep", GOOD_PLAN, "--out", GOOD_RUN), ["pmos-prototype.run", "folder"]),
    (("sweep", "{tmp}/no-such-plan.toml", "--out", "{tmp}"), ["no-such-plan.toml", "not found"]),
    (("report", GOOD_RUN), ["-o/--output"]),
    (("report", GOOD_RUN, "-o", "{tmp}/report.docx"), ["-o", "report.docx"]),
    (("export", GOOD_RUN), ["--csv"]),
    (("export", GOOD_RUN, "--csv", "{tmp}/no-such-dir/points.csv"), ["points.csv", "does not exist"]),
    (("demo", "--headless", "--plan", "no-such-plan"), ["--plan", "no-such-plan"]),
    (("profiles", "frob"), ["ACTION", "'frob'"]),
    (("profiles", "probe", "not a resource"), ["RESOURCE", "not a resource"]),
    (("sim", "--host", "256.1.1.1", "--port", "0"), ["--host", "cannot listen"]),  # fails before serving
]

# benchlog sim: only as subprocesses (a config or argument that slipped through would serve until killed)
SIM_CASES = [
    (SIM, "sim/unknown-key.toml", ["latncy_s", "unknown key", "latency_s"]),
    (SIM, "sim/port-too-big.toml", ["port", "70000"]),
    (SIM, "sim/negative-fault-count.toml", ["[faults].hang_after", "-1"]),
    (SIM, "sim/unknown-element.toml", ["element", "'triode'"]),
    (("sim", "--port", "0", "--drop-after", "-1"), None, ["--drop-after", "-1"]),
    (("sim", "--port", "0", "--extra-latency-s", "-1"), None, ["--extra-latency-s", "-1"]),
    (("sim", "--port", "-5"), None, ["port", "-5"]),
    (("sim", "--port", "0", "--latency-s", "nan"), None, ["latency_s", "nan"]),
    (("sim", "--element", "triode"), None, ["--element", "'triode'"]),
    (("sim", "--port", "0", "--truth", GOOD_RUN), None, ["--truth", "existing run file"]),
    (("sim", "--port", "0", "--truth", "/proc/benchlog-truth.json"), None, ["--truth", "/proc"]),
    (("sim", "--port", "0", "--truth", "{tmp}/no-such-dir/truth.json"), None, ["truth.json", "does not exist"]),
]

# A few of the in-process cases again as real processes (the installed command's path to exit code 2).
SUBPROCESS_AGAIN = ["plan/binary-garbage.toml", "bench/resource-with-semicolon.toml", "run/truncated-header.run",
                    "profile/timeout-nan.toml"]


def _fill(argv, file: Path | None, tmp: Path) -> list[str]:
    return [a.replace("{file}", str(file) if file else "").replace("{tmp}", str(tmp)) for a in argv]


def _the_one_line(rc, out: str, err: str, words: list[str], path: Path | None) -> str:
    context = f"exit {rc}\nstdout {out!r}\nstderr {err!r}"
    assert rc == 2, context
    assert "Traceback" not in err and "Traceback" not in out, context
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1, context
    line = lines[0]
    assert line.startswith("benchlog"), context
    if path is not None:
        assert str(path) in line, context
    for word in words:
        assert word in line, f"{word!r} not in the line\n{context}"
    assert out.strip() == "", context  # nothing half-done on stdout
    return line


def _run_in_process(argv: list[str], capsys) -> tuple[int, str, str]:
    try:
        rc = main(argv)
    except SystemExit as exc:  # argparse's own exit after its one line
        rc = exc.code
    captured = capsys.readouterr()
    return rc, captured.out, captured.err


def _cases(rows, ids):
    return [pytest.param(*row, id=i, marks=[pytest.mark.xfail(strict=True, reason=KNOWN_DEFECTS[i])]
                         if i in KNOWN_DEFECTS else []) for row, i in zip(rows, ids)]


@pytest.mark.parametrize("rel, command, words", _cases(FILES, [f"{f[0]}-{f[1][0]}" for f in FILES]))
def test_bad_file_gives_one_line_naming_file_and_place(rel, command, words, tmp_path, capsys):
    path = BAD / rel
    rc, out, err = _run_in_process(_fill(command, path, tmp_path), capsys)
    if rel in NAMED_INSTEAD:
        # the message names the file that is really wrong (found through this one)
        line = _the_one_line(rc, out, err, words, None)
        assert NAMED_INSTEAD[rel] in line, line
    else:
        _the_one_line(rc, out, err, words, path)


@pytest.mark.parametrize("argv, words", _cases(ARGUMENTS, [" ".join(a[0][:3]) for a in ARGUMENTS]))
def test_wrong_argument_gives_one_line_naming_it(argv, words, tmp_path, capsys):
    rc, out, err = _run_in_process(_fill(argv, None, tmp_path), capsys)
    _the_one_line(rc, out, err, words, None)


@pytest.mark.parametrize("argv, rel, words", SIM_CASES, ids=[c[1] or " ".join(c[0][1:4]) for c in SIM_CASES])
def test_sim_refuses_bad_config_and_arguments_as_a_process(argv, rel, words, tmp_path):
    path = BAD / rel if rel else None
    done = run_benchlog(*_fill(argv, path, tmp_path), timeout_s=30)
    _the_one_line(done.returncode, done.stdout, done.stderr, words, path)


@pytest.mark.parametrize("rel", SUBPROCESS_AGAIN)
def test_bad_file_as_a_real_process(rel, tmp_path):
    command, words = next((c, w) for r, c, w in FILES if r == rel)
    if rel.startswith("profile/"):
        command = PROFILE
    path = BAD / rel
    done = run_benchlog(*_fill(command, path, tmp_path), timeout_s=60)
    _the_one_line(done.returncode, done.stdout, done.stderr, words, path)


def test_corpus_is_large_and_every_file_is_in_the_table():
    listed = {rel for rel, _, _ in FILES} | {rel for _, rel, _ in SIM_CASES if rel}
    on_disk = {str(p.relative_to(BAD)) for p in BAD.glob("*/*") if p.name != ".keep"}
    assert on_disk == listed
    kinds = {rel.split("/")[0] for rel in listed}
    assert kinds == {"plan", "bench", "profile", "spec", "design", "run", "sim"}
    assert len(FILES) + len(ARGUMENTS) + len(SIM_CASES) >= 50
    assert (BAD / "plan" / "a-directory.toml").is_dir() and (BAD / "run" / "a-directory.run").is_dir()
    assert re.search(rb"[\x00-\x08\x80-\xff]", (BAD / "run" / "binary-garbage.run").read_bytes())


# -- inputs that are not regular files, or absurd ones: made at test time (a FIFO cannot be committed) --------

def _fifo(name):
    def make(tmp: Path) -> Path:
        path = tmp / name
        os.mkfifo(path)
        return path
    return make


def _device(_tmp: Path) -> Path:
    return Path("/dev/zero")


def _large_toml(tmp: Path) -> Path:
    path = tmp / "large.toml"
    path.write_bytes(b"# " + b"x" * (5 * 1024 * 1024) + b"\n")  # 5 MB of comment: valid TOML, too large
    return path


def _nested(kind: str):
    def make(tmp: Path) -> Path:
        path = tmp / f"nested-{kind}.toml"
        if kind == "arrays":
            path.write_text("a = " + "[" * 3000 + "]" * 3000 + "\n")
        else:
            path.write_text("a = " + "{b = " * 3000 + "1" + "}" * 3000 + "\n")
        return path
    return make


def _run_with_long_line(tmp: Path) -> Path:
    path = tmp / "long-line.run"
    header = Path(GOOD_RUN).read_bytes().split(b"\n", 1)[0] + b"\n"
    path.write_bytes(header + b"P\t" + b"1" * (2 * 1024 * 1024) + b"\n")
    return path


# (id, maker of the bad input in a scratch folder, command, words the one line must hold)
SPECIAL_INPUTS = [
    ("fifo-plan", _fifo("plan.toml"), SWEEP, ["FIFO", "a regular TOML file"]),
    ("fifo-bench", _fifo("bench.toml"), BENCH, ["FIFO"]),
    ("fifo-profile", _fifo("profile.toml"), PROFILE, ["FIFO"]),
    ("fifo-spec", _fifo("spec.toml"), SPEC, ["FIFO"]),
    ("fifo-run-fit", _fifo("a.run"), FIT, ["FIFO", "a regular run file"]),
    ("fifo-run-report", _fifo("b.run"), REPORT, ["FIFO"]),
    ("fifo-run-replay", _fifo("c.run"), ("replay", "{file}"), ["FIFO"]),
    ("fifo-design-in-report", _fifo("d.toml"), ("report", GOOD_RUN, "--design", "{file}", "-o", "{tmp}/r.html"),
     ["FIFO"]),
    ("dev-zero-plan", _device, SWEEP, ["character device"]),
    ("dev-zero-profile", _device, PROFILE, ["character device"]),
    ("dev-zero-design", _device, DESIGN, ["character device"]),
    ("dev-zero-run-fit", _device, FIT, ["character device"]),
    ("dev-zero-run-export", _device, EXPORT, ["character device"]),
    ("dev-zero-run-lot", _device, LOT, ["character device"]),
    ("toml-5mb-plan", _large_toml, SWEEP, ["larger than the 4 MB limit"]),
    ("toml-5mb-spec", _large_toml, SPEC, ["larger than the 4 MB limit"]),
    ("toml-nested-3000-arrays-plan", _nested("arrays"), SWEEP, ["nested too deeply"]),
    ("toml-nested-3000-tables-profile", _nested("tables"), PROFILE, ["nested too deeply"]),
    ("toml-nested-3000-arrays-design", _nested("arrays"), DESIGN, ["nested too deeply"]),
    ("run-2mb-line-fit", _run_with_long_line, FIT, ["line 2", "longer than"]),
    ("run-2mb-line-check", _run_with_long_line, CHECK, ["line 2", "longer than"]),
]


@pytest.mark.parametrize("make, command, words", [row[1:] for row in SPECIAL_INPUTS],
                         ids=[row[0] for row in SPECIAL_INPUTS])
def test_special_input_is_refused_at_once_as_one_line(make, command, words, tmp_path, capsys):
    path = make(tmp_path)
    unblock = None
    if path.is_fifo():
        # Should a reader ever block on the FIFO again, this writer ends the wait after 10 s so the test
        # fails instead of hanging the suite.
        def open_and_close():
            time.sleep(10)
            with contextlib.suppress(OSError):
                os.close(os.open(path, os.O_WRONLY | os.O_NONBLOCK))
        unblock = threading.Thread(target=open_and_close, daemon=True)
        unblock.start()
    started = time.monotonic()
    rc, out, err = _run_in_process(_fill(command, path, tmp_path), capsys)
    _the_one_line(rc, out, err, words, path)
    assert time.monotonic() - started < 8, "the reader waited on the input instead of refusing it at once"


# -- outputs that would destroy an input or an existing run, or cannot be written ---------------------------

def _copy_run(tmp: Path, name: str) -> Path:
    target = tmp / name
    shutil.copyfile(GOOD_RUN, target)
    return target


# (id, argv with {run} a scratch copy of a run file and {tmp} the scratch folder, words the one line must hold)
OUTPUTS = [
    ("export-over-its-run", ("export", "{run}", "--csv", "{run}"), ["--csv", "also an input"]),
    ("export-over-another-run", ("export", GOOD_RUN, "--csv", "{run}"), ["--csv", "existing run file"]),
    ("report-over-its-run", ("report", "{run}", "-o", "{run}"), ["-o", "also an input"]),
    ("report-over-another-run", ("report", GOOD_RUN, "-o", "{run}"), ["-o", "existing run file"]),
    ("report-over-its-spec", ("report", GOOD_RUN, "--spec", "{tmp}/spec.html", "-o", "{tmp}/spec.html"),
     ["-o", "also an input"]),
    ("export-under-proc", ("export", "{run}", "--csv", "/proc/benchlog-points.csv"), ["--csv", "/proc"]),
    ("export-under-sys", ("export", "{run}", "--csv", "/sys/benchlog-points.csv"), ["--csv", "/sys"]),
    ("report-under-proc", ("report", "{run}", "-o", "/proc/self/report.html"), ["-o", "/proc"]),
    ("report-onto-a-folder", ("report", "{run}", "-o", "{tmp}/folder.html"), ["-o", "is a directory"]),
    ("export-parent-is-a-file", ("export", "{run}", "--csv", "{run}/points.csv"), ["--csv", "not a folder"]),
    ("report-figures-onto-a-file", ("report", "{run}", "-o", "{tmp}/r.html", "--figures", "{run}"),
     ["--figures", "not a folder"]),
    ("sweep-out-under-proc", ("sweep", GOOD_PLAN, "--out", "/proc/benchlog-runs"), ["--out", "/proc"]),
    ("sweep-out-under-sys", ("sweep", GOOD_PLAN, "--out", "/sys/benchlog-runs"), ["--out", "/sys"]),
    ("sweep-out-is-a-file", ("sweep", GOOD_PLAN, "--out", "{run}"), ["--out", "not a folder"]),
]


@pytest.mark.parametrize("argv, words", [row[1:] for row in OUTPUTS], ids=[row[0] for row in OUTPUTS])
def test_output_that_would_destroy_or_cannot_be_written_is_refused(argv, words, tmp_path, capsys):
    run = _copy_run(tmp_path, "copy.html" if "report" in argv[0] else "copy.run")
    shutil.copyfile(GOOD_SPEC, tmp_path / "spec.html")
    (tmp_path / "folder.html").mkdir()
    before = {p: p.read_bytes() for p in (run, tmp_path / "spec.html", Path(GOOD_RUN))}
    filled = [a.replace("{run}", str(run)) for a in _fill(argv, None, tmp_path)]
    rc, out, err = _run_in_process(filled, capsys)
    _the_one_line(rc, out, err, words, None)
    for path, data in before.items():
        assert path.read_bytes() == data, f"{path} was changed"


def _mount_tmpfs(folder: Path, options: str) -> bool:
    folder.mkdir(parents=True, exist_ok=True)
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", options, "tmpfs", str(folder)],
                          capture_output=True, timeout=20)
    return done.returncode == 0


@pytest.mark.parametrize("argv, words", [
    (("export", GOOD_RUN, "--csv", "{ro}/points.csv"), ["--csv", "read-only"]),
    (("report", GOOD_RUN, "-o", "{ro}/report.html"), ["-o", "read-only"]),
    (("sweep", GOOD_PLAN, "--out", "{ro}/runs"), ["--out", "read-only"]),
], ids=["export", "report", "sweep"])
def test_read_only_output_folder_is_refused_before_anything_runs(argv, words, tmp_path, capsys):
    ro = tmp_path / "ro"
    if not _mount_tmpfs(ro, "ro,size=64k"):
        pytest.skip("mounting a read-only tmpfs needs root (a chmod is no test when the suite runs as root)")
    try:
        rc, out, err = _run_in_process([a.replace("{ro}", str(ro)) for a in _fill(argv, None, tmp_path)], capsys)
        _the_one_line(rc, out, err, words, None)
    finally:
        subprocess.run(["umount", str(ro)], capture_output=True, timeout=20)
