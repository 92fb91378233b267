"""Benchmark: lot statistics for 10,000 parts (goal: well under 10 s), and the per-run cost of reading a lot.

Run: python benchmarks/lot_statistics.py [RUN_FILE]
The statistics (σ, Cpk, generalized ESD, per-part verdicts) are vectorised; with a
RUN_FILE it also times loading and fitting one small run, the per-part cost that
`benchlog lot` adds on top.
"""

from __future__ import annotations

import sys
import time

import numpy as np

from benchlog.analysis.lot import summarize


def main(argv: list[str]) -> int:
    rng = np.random.default_rng(1)
    values = rng.normal(0.010, 0.0003, 10_000)
    values[:5] += 0.004  # a few gross outliers for the ESD test to find
    start = time.perf_counter()
    s = summarize(values, np.full(values.size, 5e-5), usl=0.0125, quantity="r_on_ohm")
    took = time.perf_counter() - start
    print(f"summarize 10,000 parts: {took:.3f} s ({s.capability_name} {s.capability:.2f}, {s.outliers} outliers)")
    if argv:
        from benchlog.analysis.fits import fit_run
        from benchlog.runs import load

        n = 50
        start = time.perf_counter()
        for _ in range(n):
            frame, meta = load(argv[0])
        t_load = (time.perf_counter() - start) / n
        start = time.perf_counter()
        for _ in range(n):
            fit_run(frame, meta, "resistive")
        t_fit = (time.perf_counter() - start) / n
        print(f"per run: load {t_load * 1e3:.2f} ms, fit {t_fit * 1e3:.2f} ms "
              f"-> 10,000 runs ≈ {(t_load + t_fit) * 1e4:.0f} s")
    return 0 if took < 10.0 else 1


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
