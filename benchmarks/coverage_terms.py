"""Each budget term of the coverage benchmark against the error it stands for, on the simulator's own drawn errors.

For every run file `bench_coverage.py` kept, the simulator is rebuilt from the run's seed
(`sim.bench.SimBench`), which gives the fixed errors it drew: the current reader's read-back gain
and offset, the drop meter's gain and offset on the range the run used, its thermal EMF, and so the
zero-offset reading's own noise (the recorded offset less those). Each error is taken out of the run
on its own and the run judged again (`analysis.judging.judge_run`); the shift of the judged error
(value − the truth at the judgement's own Tj, both of which an error can move) is what that error did. Over the seeds, the spread of each shift (in units of the judgement's u) is set
beside the budget term's rms (also in u): a term that is honest has the two about equal, within
the sampling of the draws (the draws' own spread is printed for the offset).
What is left once all are taken out (the junction temperature, the fit's noise) is printed as a
mean and a spread, with its correlation with the largest term.

    python benchmarks/coverage_terms.py --dir /tmp/benchlog-coverage-s4 --kind rectifier
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from pathlib import Path

import numpy as np

import bench_coverage as bc

READER = {"pmos": "load", "resistor": "supply", "rectifier": "supply"}  # the demo plans' current reader


def main() -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--dir", required=True, help="a directory bench_coverage.py recorded into")
    p.add_argument("--kind", choices=sorted(READER), default="rectifier")
    p.add_argument("--sweeps", type=int, default=0, help="the first N recorded seeds (default all)")
    args = p.parse_args()

    from benchlog.analysis.judging import judge_run
    from benchlog.runs import load
    from benchlog.sim.bench import SimBench
    from benchlog.sim.config import SimConfig
    from benchlog.specfiles import load_spec

    spec = load_spec(bc.DEMO / "specs" / bc.SPECS[args.kind])
    done = sorted((Path(args.dir) / args.kind).glob("seed*/done.json"))
    if args.sweeps:
        done = done[: args.sweeps]
    if not done:
        print(f"--dir: no recorded {args.kind} runs under {args.dir}", file=sys.stderr)
        return 2
    reader = READER[args.kind]
    names = {"offset": f"{reader} read-back offset", "gain": f"{reader} read-back gain",
             "drop gain": "drop meter gain", "zero reading": "zero-offset reading noise"}
    shifts = {k: [] for k in names}
    stated = {k: [] for k in names}
    errors, u_all, x_all = [], [], []
    for path in done:
        info = json.loads(path.read_text())
        if info["outcome"] != "complete":
            continue
        frame, meta = load(info["run"])
        j = judge_run(frame, meta, spec)
        bench = SimBench(SimConfig(element=args.kind, seed=info["seed"]), clock=lambda: 0.0)
        gain, offset = getattr(bench, reader).readback_a
        meter = bench.meter
        key = ("VOLT", float(meta.header.meter.range_v))
        m_gain, m_offset = meter.gain[key], meter.offset[key]
        fixed = m_offset + meter.emf_v

        def error_of(judged):
            return judged.value - bc.truth_at(args.kind, info["seed"], judged.tj.value_c, judged.current_a)

        def error_without(**columns):
            return error_of(judge_run(frame.assign(**columns), meta, spec))

        error = error_of(j)
        shifts["offset"].append(error - error_without(current_a=frame["current_a"] - offset))
        shifts["gain"].append(error - error_without(current_a=frame["current_a"] / (1 + gain)))
        shifts["drop gain"].append(error - error_without(drop_v=(frame["drop_v"] - fixed) / (1 + m_gain) + fixed))
        noise0 = meta.offset_v - fixed if meta.offset_v is not None else 0.0
        shifts["zero reading"].append(-noise0)  # subtracted from every drop
        parts = {c.name: c.u for c in j.budget.components}
        for k, name in names.items():
            stated[k].append(parts.get(name, 0.0))
        errors.append(error)
        u_all.append(j.std_u)
        x_all.append(offset)
    u = np.asarray(u_all)
    err = np.asarray(errors)
    print(f"{args.kind}: {u.size} runs from {args.dir}")
    print(f"{'term':14s} {'realised sd/u':>14s} {'stated rms/u':>13s}")
    rest = err.copy()
    for k in names:
        s = np.asarray(shifts[k])
        rest -= s
        print(f"{k:14s} {np.std(s / u, ddof=1):14.3f} {math.sqrt(np.mean((np.asarray(stated[k]) / u) ** 2)):13.3f}")
    x = np.asarray(x_all)
    print(f"drawn offsets: sd {x.std(ddof=1):.3g} A (a uniform within its ±a has a/√3)")
    corr = np.corrcoef(rest, np.asarray(shifts['offset']))[0, 1]
    print(f"left (Tj, the fit's noise): mean {np.mean(rest / u):+.3f} u, sd {np.std(rest / u, ddof=1):.3f} u; "
          f"correlation with the offset's shift {corr:+.3f}")
    print(f"error/u: mean {np.mean(err / u):+.3f}, sd {np.std(err / u, ddof=1):.3f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
