"""Every speed figure of issue 14 (and issue 13's lot report) in one run, one script after the other.

Runs each benchmark script as its own process with the sizes RESULTS.md reports,
in a fixed order, and writes each script's output (and `--json`) into one folder,
with the 1-minute load average before and after each script, so the figures
of one RESULTS.md table come from one sitting on one machine state. The
simulator timing is each script's default (real) and printed by each script.

    python benchmarks/issue14_figures.py --out /tmp/issue14     # about 10 minutes on 2 quiet cores
    python benchmarks/issue14_figures.py --quick --out DIR      # only checks that every step runs
"""

from __future__ import annotations

import glob
import json
import os
import subprocess
import sys
import time
from pathlib import Path

import _common

BENCH = _common.REPO / "benchmarks"

#: (name, script and arguments) in the order they run; --quick replaces the sizes with the scripts' own --quick
STEPS: tuple[tuple[str, list[str]], ...] = (
    ("command_startup", ["bench_command_startup.py", "--repeat", "15"]),
    ("round_trips", ["bench_round_trips.py", "--points", "30", "--pairs", "3"]),
    ("sequential_lot", ["bench_sequential_lot.py", "--parts", "20"]),
    ("sweep_overhead", ["bench_sweep_overhead.py", "--points", "100", "--repeat", "3"]),
    ("time_to_answer", ["bench_time_to_answer.py"]),
    ("ui_latency", ["bench_ui_latency.py", "--presses", "100"]),
    ("analysis_scale", ["bench_analysis_scale.py", "--runs", "2000", "--repeat", "3"]),
)

LOT = _common.REPO / "sample_runs" / "lot-demo-07"
SPEC = _common.REPO / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml"


def load_average() -> float:
    return os.getloadavg()[0]


def lot_report(out: Path, repeat: int) -> dict:
    """Issue 13: `benchlog report` of a 20-run lot to HTML, whole process, wall and CPU time and file size."""
    runs = sorted(glob.glob(str(LOT / "*.run")))
    html = out / "lot20.html"
    argv = [sys.executable, "-m", "benchlog", "report", *runs, "--spec", str(SPEC), "-o", str(html)]
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    subprocess.run(argv, cwd=_common.REPO, env=env, check=True, capture_output=True)  # warm-up: bytecode cache
    walls, cpus = [], []
    for _ in range(repeat):
        before = os.times()
        t0 = time.perf_counter()
        subprocess.run(argv, cwd=_common.REPO, env=env, check=True, capture_output=True)
        walls.append(time.perf_counter() - t0)
        after = os.times()
        cpus.append((after.children_user - before.children_user) + (after.children_system - before.children_system))
    return {"runs": len(runs), "wall_s": walls, "cpu_s": cpus, "size_b": html.stat().st_size,
            "command": "benchlog report sample_runs/lot-demo-07/*.run --spec benchlog/demo/specs/demo-pfet-10m.toml "
                       "-o lot20.html"}


def main() -> int:
    p = _common.parser(__doc__.splitlines()[0])
    p.add_argument("--out", required=True, help="folder for each script's output and JSON")
    p.add_argument("--only", nargs="*", help="run only these steps (names as printed)")
    args = p.parse_args()
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    summary: dict = {"steps": {}}
    for name, argv in STEPS:
        if args.only and name not in args.only:
            continue
        cmd = [sys.executable, str(BENCH / argv[0])] + (["--quick"] if args.quick else argv[1:])
        cmd += ["--json", str(out / f"{name}.json")]
        load0, t0 = load_average(), time.perf_counter()
        done = subprocess.run(cmd, cwd=_common.REPO, capture_output=True, text=True)
        took, load1 = time.perf_counter() - t0, load_average()
        (out / f"{name}.txt").write_text(done.stdout + done.stderr, encoding="utf-8")
        shown = "python benchmarks/" + " ".join(argv)
        print(f"== {name}: {shown}  (exit {done.returncode}, {took:.0f} s, load average {load0:.2f} -> {load1:.2f})")
        print(done.stdout.rstrip())
        summary["steps"][name] = {"command": shown, "exit": done.returncode, "took_s": took,
                                  "load_before": load0, "load_after": load1}
    if not args.only or "lot_report" in args.only:
        load0 = load_average()
        lot = lot_report(out, 1 if args.quick else 5)
        lot["load_before"], lot["load_after"] = load0, load_average()
        summary["lot_report"] = lot
        print(f"== lot_report: {lot['command']}  (load average {load0:.2f} -> {lot['load_after']:.2f})")
        print(f"   {lot['runs']} runs, {lot['size_b']} B; wall best {min(lot['wall_s']):.2f} s, "
              f"median {sorted(lot['wall_s'])[len(lot['wall_s']) // 2]:.2f} s; CPU best {min(lot['cpu_s']):.2f} s")
    summary["machine"] = _common.machine_facts()
    (out / "summary.json").write_text(json.dumps(summary, indent=2), encoding="utf-8")
    print(f"reproduce: {_common.reproduce_command()}")
    return 0 if all(s["exit"] == 0 for s in summary["steps"].values()) else 1


if __name__ == "__main__":
    sys.exit(main())
