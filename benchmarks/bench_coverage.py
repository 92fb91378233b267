"""Coverage of the expanded uncertainty on the tool's own bench: seeded sweeps of the simulator, truth at the recorded Tj.

Each sweep is a real sweep (`sweep.session.run_sweep`) of a demo plan on the
built-in simulated bench, reached through pyvisa-py over loopback sockets, on the
simulator's default real timing (readings take their integration time, settings
settle), so the element heats by the simulator's thermal model while the sweep
runs; each seed draws a new element (part-to-part spread) and new fixed gain and
offset errors of the supply, load and meter, uniformly within their accuracy
specs (`sim.specs.draw_fixed_error`). Real-time sweeps mostly wait, so `--jobs`
records several at once. Each run file is then judged by the same function
`check`, `lot`, the UI and the report call (`analysis.judging.judge_run`), which
states the quantity at a junction temperature Tj with an expanded uncertainty
U = k_p·u for a coverage probability of 95.45 % (k_p of the budget's combined
distribution, GUM 6.3, `analysis/coverage.py`). The truth is the simulator's
element (rebuilt from the same seed) evaluated at that recorded Tj:
  - P-MOSFET and resistor: R at Tj (the channel fully enhanced at the test's drive);
  - rectifier: Vf at the plan's operating current at Tj.
A sweep is covered when |value − truth| ≤ U. Goal: 93–97 % of at least 400 sweeps
per element (the band is about ±2 binomial standard deviations around 95.45 % at
n = 400, common practice). For information, the coverage a fixed k = 2 would give.

Run files are kept under --dir, so `--judge-only` re-judges them without sweeping.
"""

from __future__ import annotations

import json
import math
import sys
import time
from pathlib import Path

import _common
import numpy as np

PLANS = {
    "pmos": "pmos-prototype.toml",
    "resistor": "resistor-prototype.toml",
    "rectifier": "rectifier-prototype.toml",
}
SPECS = {
    "pmos": "demo-pfet-10m.toml",
    "resistor": "demo-shunt-50m.toml",
    "rectifier": "demo-rect-3a.toml",
}
DEMO = _common.REPO / "benchlog" / "demo"
DEFAULT_DIR = "/tmp/benchlog-coverage-{timing}"  # {timing}: real or instant, never mixed


def record(kind: str, seeds: range, out: Path, jobs: int = 1, timing: str = "real") -> None:
    """One real sweep per seed, in `jobs` processes at once; the run file and the sim's final Tj are kept.

    Real-time sweeps mostly wait (settling, integration), so several at once fit in the time; each
    process runs its own simulated bench on its own loopback ports.
    """
    seeds = list(seeds)
    if jobs <= 1:
        _record_seeds(kind, seeds, out, timing)
        return
    from concurrent.futures import ProcessPoolExecutor

    with ProcessPoolExecutor(max_workers=jobs) as pool:
        for done in pool.map(_record_seeds, [kind] * jobs, [seeds[i::jobs] for i in range(jobs)],
                             [out] * jobs, [timing] * jobs):
            pass


def _record_seeds(kind: str, seeds: list[int], out: Path, timing: str) -> None:
    from benchlog.sweep.plan import load_plan
    from benchlog.sweep.session import run_sweep
    from benchlog.cli.simbench import builtin_bench, sim_wiring

    plan = load_plan(DEMO / "plans" / PLANS[kind])
    out.mkdir(parents=True, exist_ok=True)
    for seed in seeds:
        target = out / f"seed{seed:05d}"
        if (target / "done.json").exists():
            continue
        target.mkdir(exist_ok=True)
        for old in target.glob("*"):
            old.unlink()
        setup, running = builtin_bench(plan.element, seed, wiring=sim_wiring(plan.element), timing=timing)
        try:
            result = run_sweep(plan, setup, target)
            junction = running.bench.junction_c
        finally:
            running.stop()
        (target / "done.json").write_text(json.dumps({
            "seed": seed, "outcome": result.outcome, "run": str(result.run_file), "sim_junction_end_c": junction}))


def truth_at(kind: str, seed: int, tj_c: float, current_a: float) -> float:
    """The simulator's element of this seed at Tj: R (channel, resistor) or Vf at `current_a` (diode)."""
    from benchlog.sim.bench import SimBench
    from benchlog.sim.config import SimConfig

    element = SimBench(SimConfig(element=kind, seed=seed), clock=lambda: 0.0).element
    if kind == "pmos":
        return element.channel_ohm(-12.0, tj_c)  # 12 V drive: above the sim's full-enhancement voltage
    if kind == "resistor":
        return element.ohm(tj_c)
    return element.forward_drop_v(current_a, tj_c)


def judge(kind: str, out: Path) -> dict:
    from benchlog.analysis.judging import judge_run
    from benchlog.specfiles import load_spec
    from benchlog.runs import load

    spec = load_spec(DEMO / "specs" / SPECS[kind])
    covered, n, ratios, terms, tj_sources, bad = 0, 0, [], {}, {}, 0
    covered_k2, kps = 0, []
    for done in sorted(out.glob("seed*/done.json")):
        info = json.loads(done.read_text())
        if info["outcome"] != "complete":
            bad += 1
            continue
        frame, meta = load(info["run"])
        j = judge_run(frame, meta, spec)
        truth = truth_at(kind, info["seed"], j.tj.value_c, j.current_a)
        error = j.value - truth
        n += 1
        covered += abs(error) <= j.expanded_u
        ratios.append(error / j.std_u)
        tj_sources[j.tj.source] = tj_sources.get(j.tj.source, 0) + 1
        for c in j.budget.components:
            terms.setdefault(c.name, []).append(c.u / j.std_u)
        kps.append(j.budget.k)
        covered_k2 += abs(error) <= 2.0 * j.std_u
    r = np.asarray(ratios)
    return {
        "kind": kind, "quantity": j.quantity if n else "", "sweeps": n, "not_complete": bad,
        "covered": covered, "coverage_pct": 100.0 * covered / n if n else math.nan,
        "mean_error_over_u": float(r.mean()) if n else math.nan,
        "std_error_over_u": float(r.std(ddof=1)) if n > 1 else math.nan,
        "tj_sources": tj_sources,
        "median_k_p": float(np.median(kps)) if kps else math.nan,
        "k_p_range": [float(min(kps)), float(max(kps))] if kps else None,
        "covered_with_k_2": covered_k2, "coverage_with_k_2_pct": 100.0 * covered_k2 / n if n else math.nan,
        "mean_share_of_u": {k: float(np.mean(np.square(v))) for k, v in terms.items()},
    }


def main() -> int:
    p = _common.parser(__doc__.splitlines()[0])
    p.add_argument("--sweeps", type=int, default=400, help="seeded sweeps per element (default 400)")
    p.add_argument("--kinds", default="pmos,resistor,rectifier", help="elements, comma-separated")
    p.add_argument("--dir", default=DEFAULT_DIR, help="where the run files are kept")
    p.add_argument("--judge-only", action="store_true", help="judge the run files already recorded")
    p.add_argument("--jobs", type=int, default=1, help="sweeps recorded at once (real-time sweeps mostly wait)")
    p.add_argument("--sim-timing", choices=("real", "instant"), default="real",
                   help="the simulator's timing (default real, the simulator's default)")
    args = p.parse_args()
    if args.quick:
        import tempfile

        args.sweeps = 3
        args.jobs = max(args.jobs, 3)  # the three sweeps of an element at once: they wait, not compute
        if args.dir == DEFAULT_DIR:  # never mix a quick check with kept full-size recordings
            args.dir = tempfile.mkdtemp(prefix="benchlog-coverage-quick-")
    args.dir = args.dir.format(timing=args.sim_timing)
    kinds = [k for k in args.kinds.split(",") if k]
    for kind in kinds:
        if kind not in PLANS:
            print(f"--kinds: unknown element {kind!r}; expected {', '.join(PLANS)}", file=sys.stderr)
            return 2
    figures = {}
    for kind in kinds:
        out = Path(args.dir) / kind
        t0 = time.perf_counter()
        if not args.judge_only:
            record(kind, range(args.sweeps), out, jobs=args.jobs, timing=args.sim_timing)
        t1 = time.perf_counter()
        fig = judge(kind, out)
        fig["record_s"], fig["judge_s"] = t1 - t0, time.perf_counter() - t1
        figures[kind] = fig
        lo, hi = 93.0, 97.0
        met = lo <= fig["coverage_pct"] <= hi and fig["sweeps"] >= 400
        fig["met"] = met
        print(f"{kind:10s} {fig['quantity']:8s} ({args.sim_timing} timing) covered {fig['covered']}/{fig['sweeps']} = "
              f"{fig['coverage_pct']:.1f} %  (goal {lo:g}-{hi:g} % of >= 400: {_common.verdict(met)}); "
              f"error/u mean {fig['mean_error_over_u']:+.3f}, sd {fig['std_error_over_u']:.3f}; "
              f"Tj sources {fig['tj_sources']}")
        shares = sorted(fig["mean_share_of_u"].items(), key=lambda kv: -kv[1])
        print("           mean share of u²: " + ", ".join(f"{k} {v:.2f}" for k, v in shares))
        print(f"           k_p median {fig['median_k_p']:.3f} (range {fig['k_p_range'][0]:.3f}-{fig['k_p_range'][1]:.3f}); "
              f"for information, a fixed k = 2 would cover {fig['covered_with_k_2']}/{fig['sweeps']} = "
              f"{fig['coverage_with_k_2_pct']:.1f} %")
    _common.finish("bench_coverage", figures, args)
    return 0


if __name__ == "__main__":
    sys.exit(main())
