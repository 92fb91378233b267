"""Sweeps: the plan and bench files, step strategies, feasibility checks and the runner that drives the roles.

    plan = load_plan("plan.toml"); bench = load_bench("bench.toml")
    rig = open_rig(bench)
    runner = SweepRunner(plan, rig, writer=RunWriter(path))
    outcome = runner.run(on_event)

Without a bench file, the CLI's `cli.simbench.builtin_bench(kind, seed)` starts the
simulated bench in-process and gives a BenchSetup for it (sweep never imports sim).
"""

from .bench_file import BenchSetup, RoleSpec, Wiring, load_bench, parse_bench
from .plan import Plan, load_plan, parse_plan
from .rig import Rig, open_rig
from .runner import SweepRunner

__all__ = [
    "BenchSetup", "RoleSpec", "Wiring", "load_bench", "parse_bench",
    "Plan", "load_plan", "parse_plan", "Rig", "open_rig", "SweepRunner",
]
