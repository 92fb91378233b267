"""Analysis at scale: fit and load of a 1,000,000-point run, a lot of 10,000 runs, and the peak memory of each.

Side by side in one run:
- fit: `fit_run` (what `benchlog fit` does) and `fit_resistive` on the arrays, against a bare
  `numpy.linalg.lstsq` of V = V0 + R·I on the same arrays (design matrix built inside the
  timing: lstsq cannot run without it). Goals: under 1 s, and within 1.5x of lstsq.
- load: `benchlog.runs.load(run file)` against `pandas.read_csv` of the same points as CSV
  (written by `DataFrame.to_csv`). Goal: ratio <= 1.5.
- lot: `lot_from_runs` over 10,000 run files of 30 points (what `benchlog lot` does:
  load, fit and judge every run, then the statistics). Goal: under 10 s.
- peak memory of each, in a fresh process per measurement (`_common.peak_memory`).
"""

from __future__ import annotations

import time
from pathlib import Path

import _common
import _runs


def main() -> int:
    p = _common.parser(__doc__.splitlines()[0])
    p.add_argument("--points", type=int, default=1_000_000, help="points in the long run (default 1e6)")
    p.add_argument("--runs", type=int, default=10_000, help="runs in the lot (default 10,000)")
    p.add_argument("--repeat", type=int, default=5, help="timed repeats of each side (default 5)")
    p.add_argument("--no-memory", action="store_true", help="skip the peak-memory subprocesses")
    args = p.parse_args()
    if args.quick:
        args.points, args.runs, args.repeat = 20_000, 40, 1

    import numpy as np
    import pandas as pd

    from benchlog.analysis.fits import fit_resistive, fit_run
    from benchlog.report.lot_runs import lot_from_runs
    from benchlog.specfiles import load_spec
    from benchlog.runs import load

    figures: dict = {}
    rng = np.random.default_rng(20240607)
    with _runs.temp_dir("scale") as tmp:
        tmp = Path(tmp)
        header, _ = _runs.recorded_header(tmp / "template")
        big = tmp / "big.run"
        t0 = time.perf_counter()
        _runs.write_run(big, header, *_runs.synthetic_points(args.points, rng))
        print(f"wrote {args.points:,} points to a run file in {time.perf_counter() - t0:.1f} s "
              f"({big.stat().st_size / 2**20:.1f} MiB)")
        frame, meta = load(big)
        csv = tmp / "big.csv"
        frame.drop(columns="power_w").to_csv(csv, index=False)

        # -- load ---------------------------------------------------------------------------
        times = _common.interleaved({"load": lambda: load(big), "read_csv": lambda: pd.read_csv(csv)},
                                    args.repeat)
        ratio = _common.best(times["load"]) / _common.best(times["read_csv"])
        figures["load"] = {"points": args.points, "load_s": times["load"], "read_csv_s": times["read_csv"],
                           "ratio": ratio, "goal": "<= 1.5", "met": ratio <= 1.5}
        print(f"\nload {args.points:,}-point run: benchlog.runs.load {_common.describe(times['load'])}; "
              f"pandas.read_csv of the same CSV {_common.describe(times['read_csv'])}")
        print(f"  ratio load/read_csv = {ratio:.2f}  (goal <= 1.5: {_common.verdict(ratio <= 1.5)})")

        # -- fit ----------------------------------------------------------------------------
        current = frame["current_a"].to_numpy(dtype=float)
        drop = frame["drop_v"].to_numpy(dtype=float)
        accuracy = meta.header.accuracy

        def lstsq():
            design = np.column_stack([np.ones_like(current), current])
            return np.linalg.lstsq(design, drop, rcond=None)

        times = _common.interleaved({
            "lstsq": lstsq,
            "fit_resistive": lambda: fit_resistive(current, drop, accuracy),
            "fit_run_resistive": lambda: fit_run(frame, meta, "resistive"),
            "fit_run_auto": lambda: fit_run(frame, meta),
        }, args.repeat)
        base = _common.best(times["lstsq"])
        slope = lstsq()[0][1]
        ours = fit_run(frame, meta, "resistive").params["r_on_ohm"]
        print(f"\nfit of a {args.points:,}-point run: bare numpy.linalg.lstsq {_common.describe(times['lstsq'])} "
              f"(R = {slope:.9g} ohm; ours {ours:.9g} ohm)")
        figures["fit"] = {"points": args.points, "lstsq_s": times["lstsq"]}
        for name, label in (("fit_resistive", "fit_resistive(arrays, accuracy)"),
                            ("fit_run_resistive", "fit_run(frame, meta, 'resistive')"),
                            ("fit_run_auto", "fit_run(frame, meta) [auto: benchlog fit's default]")):
            t = _common.best(times[name])
            r = t / base
            met = t < 1.0 and r <= 1.5
            figures["fit"][name] = {"s": times[name], "ratio_to_lstsq": r, "under_1_s": t < 1.0, "met": met}
            print(f"  {label}: {_common.describe(times[name])}; ratio to lstsq {r:.2f} "
                  f"(goals < 1 s: {_common.verdict(t < 1.0)}, <= 1.5x lstsq: {_common.verdict(r <= 1.5)})")

        # -- memory of `benchlog fit` (tracemalloc) ---------------------------------------------
        # what the command does: load_points, the automatic fit, the self-heating test; its peak on top
        # of the loaded arrays, against the loaded arrays themselves (goal: peak total within 2x of them)
        import tracemalloc

        from benchlog.analysis.fits import detect_self_heating
        from benchlog.runs import load_points

        tracemalloc.start()
        points, points_meta = load_points(big)
        held = tracemalloc.get_traced_memory()[0]
        tracemalloc.reset_peak()
        fit = fit_run(points, points_meta)
        detect_self_heating(points, fit)
        step_peak = tracemalloc.get_traced_memory()[1] - held
        tracemalloc.stop()
        total = (held + step_peak) / held
        figures["fit_memory"] = {"points": args.points, "loaded_arrays_b": held, "fit_peak_above_b": step_peak,
                                 "peak_total_over_loaded": total, "goal": "<= 2", "met": total <= 2.0}
        print(f"\nmemory of benchlog fit (load_points + automatic fit + self-heating test), tracemalloc: loaded "
              f"arrays {_common.mib(held)}, the fit's peak on top {_common.mib(step_peak)}; peak total "
              f"{total:.2f}x the loaded arrays (goal <= 2x: {_common.verdict(total <= 2.0)})")
        del points, fit

        # -- lot ----------------------------------------------------------------------------
        lot_dir = tmp / "lot"
        lot_dir.mkdir()
        t0 = time.perf_counter()
        paths = []
        r_parts = rng.normal(0.0093, 0.0003, args.runs)
        for k in range(args.runs):
            path = lot_dir / f"part{k:05d}.run"
            _runs.write_run(path, header, *_runs.synthetic_points(30, rng, r_on_ohm=float(r_parts[k])),
                            serial=f"LOT-{k:05d}")
            paths.append(str(path))
        print(f"\nwrote {args.runs:,} run files of 30 points in {time.perf_counter() - t0:.1f} s")
        spec = load_spec(_runs.DEMO_SPEC)
        lot_repeat = max(1, min(args.repeat, 2))
        times = _common.interleaved({"lot": lambda: lot_from_runs(paths, spec)}, lot_repeat)
        summary = lot_from_runs(paths, spec)
        t = _common.best(times["lot"])
        figures["lot"] = {"runs": args.runs, "s": times["lot"], "per_run_ms": 1e3 * t / args.runs,
                          "goal": "< 10 s", "met": t < 10.0, "outcome": summary.outcome, "n": summary.n}
        print(f"lot summary of {args.runs:,} runs (lot_from_runs: load + fit + verdict each, then statistics): "
              f"{_common.describe(times['lot'])}, {1e3 * t / args.runs:.2f} ms per run "
              f"(goal < 10 s: {_common.verdict(t < 10.0)}); lot {summary.outcome}, "
              f"{summary.capability_name} {summary.capability}")

        # -- peak memory ----------------------------------------------------------------------
        if not args.no_memory:
            list_file = tmp / "lot.txt"
            list_file.write_text("\n".join(paths))
            probes = {
                "load": ("import numpy, pandas\nfrom benchlog.runs import load", f"frame, meta = load({str(big)!r})"),
                "read_csv": ("import pandas", f"table = pandas.read_csv({str(csv)!r})"),
                "fit_run_resistive": (f"from benchlog.runs import load\nfrom benchlog.analysis.fits import fit_run\n"
                                      f"frame, meta = load({str(big)!r})", "fit = fit_run(frame, meta, 'resistive')"),
                "fit_run_auto": (f"from benchlog.runs import load\nfrom benchlog.analysis.fits import fit_run\n"
                                 f"frame, meta = load({str(big)!r})", "fit = fit_run(frame, meta)"),
                "lstsq": (f"import numpy as np\nfrom benchlog.runs import load\nframe, meta = load({str(big)!r})\n"
                          "x = frame['current_a'].to_numpy(); y = frame['drop_v'].to_numpy()",
                          "sol = np.linalg.lstsq(np.column_stack([np.ones_like(x), x]), y, rcond=None)"),
                "lot": (f"import numpy, pandas\nfrom benchlog.report.lot_runs import lot_from_runs\nfrom benchlog.specfiles import load_spec\n"
                        f"from benchlog.runs import load\nimport benchlog.analysis.fits\n"
                        f"paths = open({str(list_file)!r}).read().split(chr(10))\n"
                        f"spec = load_spec({str(_runs.DEMO_SPEC)!r})",
                        "summary = lot_from_runs(paths, spec)"),
            }
            if args.quick:
                probes = {"load": probes["load"]}
            print("\npeak memory (fresh process each; increase of peak RSS over what imports and inputs held):")
            figures["memory"] = {}
            for name, (setup, code) in probes.items():
                m = _common.peak_memory(setup, code)
                figures["memory"][name] = m
                print(f"  {name}: peak RSS +{_common.mib(m['peak_increase_b'])} (to {_common.mib(m['peak_rss_b'])}); "
                      f"tracemalloc peak {_common.mib(m['traced_peak_b'])}")
            size = big.stat().st_size
            figures["memory"]["run_file_b"] = size
            print(f"  (run file {_common.mib(size)}; CSV {_common.mib(csv.stat().st_size)}; "
                  f"frame {_common.mib(frame.memory_usage(deep=True).sum())})")

    _common.finish("analysis_scale", figures, args)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
