"""Whole-process time of `benchlog fit`, `check`, `lot` and `report` on one 30-point run, beside a plain numpy script.

The baseline is what a user could write in five lines: read the same run file's
point lines with Python, put current and drop in numpy arrays, fit a straight
line with numpy.polyfit, print it. Every command is a fresh process (interpreter
start and imports included), the commands take turns (interleaved), and the
best of the repeats is the figure, the median beside it.

Goals: fit, check and lot at most 2x the baseline; report to HTML at most 4x.

Every process runs as an installed program runs: with Python's bytecode cache.
An environment that sets PYTHONDONTWRITEBYTECODE (some sandboxes and CI images do)
makes every benchlog module compile from source in every process (about 50 ms
here) while numpy and matplotlib, compiled when pip installed them, do not; so
the variable is dropped for the child processes and each command runs once
before the timed rounds (not counted) to write the cache.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

import _common

RUN = _common.REPO / "sample_runs" / "pmos-prototype.run"
SPEC = _common.REPO / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml"

BASELINE = r"""
import sys
import numpy as np
rows = [line.split("\t") for line in open(sys.argv[1], encoding="utf-8") if line.startswith("P\t")]
current = np.array([float(r[4]) for r in rows])
drop = np.array([float(r[5]) for r in rows])
slope, intercept = np.polyfit(current, drop, 1)
print(f"R = {slope:.6g} ohm, V0 = {intercept:.3g} V from {len(rows)} points")
"""

GOALS = {"fit": 2.0, "check": 2.0, "lot": 2.0, "report_html": 4.0}


def main() -> int:
    p = _common.parser(__doc__.splitlines()[0])
    p.add_argument("--repeat", type=int, default=15, help="fresh processes per command (default 15)")
    args = p.parse_args()
    if args.quick:
        args.repeat = 1
    out_dir = Path(tempfile.mkdtemp(prefix="bench-startup-"))
    python = sys.executable
    commands = {
        "baseline": [python, "-c", BASELINE, str(RUN)],
        "fit": [python, "-m", "benchlog", "fit", str(RUN)],
        "check": [python, "-m", "benchlog", "check", str(RUN), "--spec", str(SPEC)],
        "lot": [python, "-m", "benchlog", "lot", str(RUN), "--spec", str(SPEC)],
        "report_html": [python, "-m", "benchlog", "report", str(RUN), "--spec", str(SPEC), "-o",
                        str(out_dir / "report.html")],
    }

    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}

    def runner(argv):
        def run():
            done = subprocess.run(argv, cwd=_common.REPO, capture_output=True, text=True, env=env)
            if done.returncode not in (0, 1, 3):  # check/lot: 1 fail, 3 conditional: still an answer
                raise RuntimeError(f"{' '.join(argv[2:4])} failed ({done.returncode}): {done.stderr[-500:]}")
        return run

    runs = {name: runner(argv) for name, argv in commands.items()}
    for run in runs.values():  # warm-up, not counted: writes the bytecode cache as a first run after install does
        run()
    times = _common.interleaved(runs, args.repeat)
    base = _common.best(times["baseline"])
    print(f"30-point run {RUN.relative_to(_common.REPO)}; every figure a fresh process, interleaved, "
          f"{args.repeat} repeats after one warm-up each, with the bytecode cache")
    print(f"baseline (numpy read + polyfit): {_common.describe(times['baseline'])}")
    figures = {"baseline_s": times["baseline"], "repeat": args.repeat, "run": str(RUN.name)}
    for name, goal in GOALS.items():
        ratio = _common.best(times[name]) / base
        median_ratio = statistics.median(times[name]) / statistics.median(times["baseline"])
        met = ratio <= goal
        print(f"{name:<12} {_common.describe(times[name])}; {ratio:.2f}x the baseline (median {median_ratio:.2f}x), "
              f"goal <= {goal:g}x: {_common.verdict(met)}")
        figures[name] = {"times_s": times[name], "ratio_best": ratio, "ratio_median": median_ratio,
                         "goal": goal, "met": met}
    _common.finish("command_startup", figures, args)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
