"""Parts per hour of bench time: the lot plan measured in full against inspection that stops when decided.

Side by side in one run, part by part (the two plans alternate on the same simulated
part, real instrument timing unless `--sim-timing instant`):

- fixed: `benchlog/demo/plans/lot-inspection.toml`, all five points per part;
- stop when decided: `benchlog/demo/plans/lot-inspection-sequential.toml`, the same
  points nearest the operating current first, a look after each from the third on
  (O'Brien-Fleming group-sequential guard band, `benchlog.sweep.sequential`).

One warm-up part on each side first (not counted): imports and the boundary's
one-time computation (about half a second, once per process). Bench time per part is the whole `run_sweep` (connect, configure, offset, the points,
outputs off and read back), what a board on the bench costs; parts per hour is 3600 s
over its mean. Each run is then judged by `benchlog check`'s own `check_run` against
the demo spec, so the verdicts of the two plans are compared part by part.

A second figure is the wrong-decision check at size: parts spread within three
standard uncertainties of the limit (numpy, seeded), fixed plan (one look, k = 2)
against the inspection boundary over 5 looks.
"""

from __future__ import annotations

import json
import statistics
import sys
import tempfile
import time
from pathlib import Path

import _common

PLANS = _common.REPO / "benchlog" / "demo" / "plans"
SPEC = _common.REPO / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml"


def bench_parts(parts: int, timing: str, tmp: Path) -> dict:
    try:
        from benchlog.analysis.judging import check_run
    except ImportError:  # before check_run moved to judging
        from benchlog.analysis.verdict import check_run
    from benchlog.runs import load
    from benchlog.specfiles import load_spec
    from benchlog.sweep.plan import load_plan
    from benchlog.sweep.session import run_sweep

    builtin_bench = _common.builtin_bench_starter()

    spec = load_spec(SPEC)
    plans = {"fixed": load_plan(PLANS / "lot-inspection.toml"),
             "sequential": load_plan(PLANS / "lot-inspection-sequential.toml")}
    times = {k: [] for k in plans}
    points = {k: [] for k in plans}
    verdicts = {k: [] for k in plans}
    for part in range(0, parts + 1):  # part 0 warms up (imports, the boundary's one-time computation)
        setup, running = builtin_bench(plans["fixed"].element, seed=part + 100, timing=timing)
        try:
            for side, plan in plans.items():
                t0 = time.perf_counter()
                done = run_sweep(plan, setup, tmp / side)
                if part == 0:
                    continue
                times[side].append(time.perf_counter() - t0)
                if done.outcome != "complete":
                    raise RuntimeError(f"{side} part {part}: {done.outcome} {done.message}")
                points[side].append(done.points)
                frame, meta = load(done.run_file)
                verdicts[side].append(check_run(frame, meta, spec).verdict.outcome)
        finally:
            running.stop()
    out = {}
    for side in plans:
        mean = statistics.fmean(times[side])
        out[side] = {"mean_s": mean, "median_s": statistics.median(times[side]), "parts_per_hour": 3600.0 / mean,
                     "mean_points": statistics.fmean(points[side]),
                     "verdicts": {v: verdicts[side].count(v) for v in ("pass", "fail", "conditional")}}
    out["ratio"] = out["sequential"]["parts_per_hour"] / out["fixed"]["parts_per_hour"]
    out["ratio_median"] = out["fixed"]["median_s"] / out["sequential"]["median_s"]
    out["same_verdicts"] = sum(a == b for a, b in zip(verdicts["fixed"], verdicts["sequential"]))
    out["parts"] = parts
    return out


def wrong_decisions(parts: int, seed: int = 2026) -> dict:
    import numpy as np

    from benchlog.analysis.sequential import band_factors, boundary_constant, inspection_alpha

    looks = 5
    result = {}
    for u_b in (0.0, 0.3, 1.0):
        rng = np.random.default_rng(seed)
        n = np.arange(1, looks + 1)
        u = np.sqrt(u_b**2 + 1.0 / n)
        mu = u[-1] * rng.uniform(-3.0, 3.0, parts)
        est = mu[:, None] + rng.normal(0.0, u_b, parts)[:, None] + np.cumsum(rng.normal(size=(parts, looks)), 1) / n
        fixed_pass, fixed_fail = est[:, -1] + 2 * u[-1] <= 0, est[:, -1] - 2 * u[-1] > 0
        c, w = boundary_constant(looks, inspection_alpha()), band_factors(looks)
        seq_pass = np.zeros(parts, bool)
        seq_fail = np.zeros(parts, bool)
        used = np.full(parts, looks)
        for k in range(looks):
            open_ = ~(seq_pass | seq_fail)
            p = open_ & (est[:, k] + c * w[k] * u[k] <= 0)
            f = open_ & (est[:, k] - c * w[k] * u[k] > 0)
            seq_pass |= p
            seq_fail |= f
            used[p | f] = k + 1
        wrong = lambda p, f: int((p & (mu > 0)).sum() + (f & (mu <= 0)).sum())  # noqa: E731
        result[f"u_b={u_b:g}"] = {"fixed_wrong": wrong(fixed_pass, fixed_fail), "seq_wrong": wrong(seq_pass, seq_fail),
                                  "fixed_undecided": int((~(fixed_pass | fixed_fail)).sum()),
                                  "seq_undecided": int((~(seq_pass | seq_fail)).sum()),
                                  "mean_looks": float(used.mean())}
    return result


def main() -> int:
    p = _common.parser(__doc__.splitlines()[0])
    p.add_argument("--parts", type=int, default=20)
    p.add_argument("--sim-timing", choices=("real", "instant"), default="real")
    args = p.parse_args()
    args.sim_timing = _common.effective_timing(args.sim_timing)
    parts = 2 if args.quick else args.parts
    with tempfile.TemporaryDirectory() as d:
        lot = bench_parts(parts, args.sim_timing, Path(d))
    for side in ("fixed", "sequential"):
        s = lot[side]
        print(f"{side:10s}: {s['mean_s'] * 1e3:7.1f} ms per part (median {s['median_s'] * 1e3:.1f}), "
              f"{s['parts_per_hour']:7.0f} parts per hour, {s['mean_points']:.2f} points per part, verdicts {s['verdicts']}")
    print(f"ratio {lot['ratio']:.2f}x parts per hour (medians {lot['ratio_median']:.2f}x) ({parts} parts, {args.sim_timing} sim timing); "
          f"same verdict on {lot['same_verdicts']} of {parts} parts")
    size = 20_000 if args.quick else 1_000_000
    wrong = wrong_decisions(size)
    for key, row in wrong.items():
        print(f"wrong decisions over {size} parts within 3 u of the limit, {key}: fixed {row['fixed_wrong']}, "
              f"stop when decided {row['seq_wrong']} (undecided {row['fixed_undecided']} / {row['seq_undecided']}, "
              f"mean looks {row['mean_looks']:.2f} of 5)")
    print(f"reproduce: {_common.reproduce_command()}")
    if args.json:
        Path(args.json).write_text(json.dumps({"quick": args.quick, "sim_timing": args.sim_timing,
                                               "figures": {"lot": lot, "wrong_decisions": wrong},
                                               "machine": _common.machine_facts()}, indent=2), encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
