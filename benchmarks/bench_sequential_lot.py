"""Parts per hour of bench time: the lot plan measured in full against inspection that stops when decided.

Side by side in one run, part by part (the two plans alternate on the same simulated
part, real instrument timing unless `--sim-timing instant`):

- fixed: `benchlog/demo/plans/lot-inspection.toml`, all five points per part;
- stop when decided: `benchlog/demo/plans/lot-inspection-sequential.toml`, the same
  points nearest the operating current first, a look after each from the third on
  (O'Brien-Fleming group-sequential guard band, `benchlog.sweep.sequential`), and one
  sample per reading where the lot plan takes four;
- fixed, same meter: the lot plan with the sequential plan's meter setting, so the two
  levers (fewer readings per point, fewer points per part) show apart.

One warm-up part on each side first (not counted): imports and the boundary's
one-time computation (about half a second, once per process). Bench time per part is the whole `run_sweep` (connect, configure, offset, the points,
outputs off and read back), what a board on the bench costs; parts per hour is 3600 s
over its mean. Each run is then judged by `benchlog check`'s own `check_run` against
the demo spec, so the verdicts of the two plans are compared part by part.

A second figure runs both plans on the simulated bench on parts near their limit:
each seed's acceptance limit is set within three standard uncertainties of that
part's true drop at the operating current (the simulator's element, so the meter's
drawn gain and offset errors count against the decisions), the fixed plan decided
once with k = 2 on all five points, inspection by its own looks; a pass of a part
above its limit or a fail of one on or below it is wrong.

A third figure is the wrong-decision check at size: parts spread within three
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
    import dataclasses

    fixed = load_plan(PLANS / "lot-inspection.toml")
    sequential = load_plan(PLANS / "lot-inspection-sequential.toml")
    plans = {"fixed": fixed, "sequential": sequential,
             "fixed_same_meter": dataclasses.replace(fixed, meter=sequential.meter)}
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
    out["ratio_same_meter"] = out["sequential"]["parts_per_hour"] / out["fixed_same_meter"]["parts_per_hour"]
    out["same_verdicts"] = sum(a == b for a, b in zip(verdicts["fixed"], verdicts["sequential"]))
    out["verdicts_by_part"] = verdicts
    out["parts"] = parts
    return out


def near_limit(parts: int, timing: str, tmp: Path, seed: int = 14) -> dict:
    """Both plans on `parts` simulated parts whose limit lies within 3 u of their true drop (see the docstring)."""
    import dataclasses

    import numpy as np

    from benchlog.analysis.fit_resistive import fit_resistive
    from benchlog.runs import load_points
    from benchlog.sweep.plan import load_plan
    from benchlog.sweep.session import run_sweep

    builtin_bench = _common.builtin_bench_starter()
    fixed = load_plan(PLANS / "lot-inspection.toml")
    sequential = load_plan(PLANS / "lot-inspection-sequential.toml")
    op = float(fixed.element.operating_a)
    rng = np.random.default_rng(seed)
    rows = []
    u_scale = None
    for part in range(parts):
        setup, running = builtin_bench(fixed.element, seed=5000 + part, timing=timing)
        try:
            element = running.bench.element
            truth = float(element.forward_drop_v(op, fixed.element.ambient_c, input_v=setup.wiring.input_v))
            done = run_sweep(fixed, setup, tmp / "near-fixed")
            arrays, meta = load_points(done.run_file)
            fit = fit_resistive(np.asarray(arrays.current_a), np.asarray(arrays.drop_v), meta.header.accuracy)
            value, u = fit.drop_at(op)
            u_scale = u if u_scale is None else u_scale  # the first part's u sets the spread of the limits
            limit = truth + float(rng.uniform(-3.0, 3.0)) * u_scale
            fixed_says = "pass" if value + 2 * u <= limit else "fail" if value - 2 * u > limit else "conditional"
            plan = dataclasses.replace(sequential, inspection=dataclasses.replace(sequential.inspection,
                                                                                  max_drop_v=limit))
            done = run_sweep(plan, setup, tmp / "near-seq")
            text = Path(done.run_file).read_text(encoding="utf-8")
            seq_says = ("pass" if "inspection: decided pass" in text else
                        "fail" if "inspection: decided fail" in text else "conditional")
        finally:
            running.stop()
        rows.append((truth > limit, fixed_says, seq_says, done.points))

    def wrong(says: int) -> int:
        return sum((r[says] == "pass" and r[0]) or (r[says] == "fail" and not r[0]) for r in rows)

    return {"parts": parts, "u_v": u_scale, "fixed_wrong": wrong(1), "seq_wrong": wrong(2),
            "fixed_undecided": sum(r[1] == "conditional" for r in rows),
            "seq_undecided": sum(r[2] == "conditional" for r in rows),
            "seq_mean_points": float(np.mean([r[3] for r in rows]))}


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
    p.add_argument("--near-limit", type=int, default=300, help="parts near their limit on the sim (instant timing; "
                                                                 "default 300)")
    args = p.parse_args()
    args.sim_timing = _common.effective_timing(args.sim_timing)
    parts = 2 if args.quick else args.parts
    with tempfile.TemporaryDirectory() as d:
        lot = bench_parts(parts, args.sim_timing, Path(d))
    for side in ("fixed", "sequential", "fixed_same_meter"):
        s = lot[side]
        print(f"{side:16s}: {s['mean_s'] * 1e3:7.1f} ms per part (median {s['median_s'] * 1e3:.1f}), "
              f"{s['parts_per_hour']:7.0f} parts per hour, {s['mean_points']:.2f} points per part, verdicts {s['verdicts']}")
    print(f"ratio {lot['ratio']:.2f}x parts per hour (medians {lot['ratio_median']:.2f}x) ({parts} parts, {args.sim_timing} sim timing); "
          f"same verdict on {lot['same_verdicts']} of {parts} parts")
    print(f"against the lot plan with the same meter setting (the stopping alone): {lot['ratio_same_meter']:.2f}x")
    with tempfile.TemporaryDirectory() as d:
        near = near_limit(4 if args.quick else args.near_limit, "instant", Path(d))
    print(f"near the limit on the simulated bench ({near['parts']} parts, limits within 3 u = "
          f"{3 * near['u_v'] * 1e3:.3g} mV of each part's true drop, instant sim timing): wrong decisions fixed "
          f"{near['fixed_wrong']}, stop when decided {near['seq_wrong']}; undecided {near['fixed_undecided']} / "
          f"{near['seq_undecided']}; {near['seq_mean_points']:.2f} points per part when stopping")
    size = 20_000 if args.quick else 1_000_000
    wrong = wrong_decisions(size)
    for key, row in wrong.items():
        print(f"wrong decisions over {size} parts within 3 u of the limit, {key}: fixed {row['fixed_wrong']}, "
              f"stop when decided {row['seq_wrong']} (undecided {row['fixed_undecided']} / {row['seq_undecided']}, "
              f"mean looks {row['mean_looks']:.2f} of 5)")
    print(f"reproduce: {_common.reproduce_command()}")
    if args.json:
        Path(args.json).write_text(json.dumps({"quick": args.quick, "sim_timing": args.sim_timing,
                                               "figures": {"lot": lot, "near_limit": near, "wrong_decisions": wrong},
                                               "machine": _common.machine_facts()}, indent=2), encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
