"""Time to answer: adaptive stepping against uniform sweeps, points and seconds to 1 % relative uncertainty.

Every sweep is a real `benchlog.sweep.session.run_sweep` (through `cli.simbench`) on the built-in simulated
bench (pyvisa-py over loopback sockets, the same path as `benchlog sweep`), one
run file each. Two answers:
- R_DS(on) of the demo P-MOSFET (plan `pmos-prototype`, load wiring at 12 V);
- a diode's Vf at its operating current (demo Schottky plan, operating_a = 1 A).
For each: the adaptive plan (`mode = "adaptive"`, `target_rel_u = 0.01`, cap 50)
against the uniform 50-point sweep over the same range (linear for the channel,
logarithmic for the diode, as the demo plans step them), and — so that the
comparison is not only against 50 — the smallest uniform sweep of a few tried
counts that also reaches 1 %. The relative uncertainty is re-computed from each
run file with `fit_run` (GUM type A + B, the same as `benchlog fit`).
Goal: adaptive needs at least 2x fewer points than the uniform 50-point sweep.
"""

from __future__ import annotations

import re
import time
from pathlib import Path

import _common

PLANS = _common.REPO / "benchlog" / "demo" / "plans"
TARGET = 0.01


def plan_with_steps(source: Path, steps: str, out: Path) -> Path:
    text = source.read_text(encoding="utf-8")
    text, n = re.subn(r"\[steps\][^\[]*", steps + "\n\n", text, count=1)
    if n != 1:
        raise RuntimeError(f"{source}: no [steps] table to replace")
    out.write_text(text, encoding="utf-8")
    return out


def answer(run_file: Path, diode: bool, operating_a: float) -> tuple[float, float]:
    """(value, relative standard uncertainty) of the answer from the run file."""
    from benchlog.analysis.fits import fit_run
    from benchlog.runs import load

    frame, meta = load(run_file)
    if diode:
        fit = fit_run(frame, meta, "diode")
        value, u = fit.drop_at(operating_a)
    else:
        fit = fit_run(frame, meta, "resistive")
        value, u = fit.params["r_on_ohm"], fit.std_u["r_on_ohm"]
    return value, abs(u / value)


SIM_TIMING = {"timing": "real"}  # set from --sim-timing


def sweep(plan_path: Path, out_dir: Path, seed: int) -> tuple[Path, int, float, str]:
    from benchlog.sweep.plan import load_plan
    from benchlog.cli.simbench import sweep_on_builtin_bench

    t0 = time.perf_counter()
    result = sweep_on_builtin_bench(load_plan(plan_path), out_dir, seed=seed, sim_options=dict(SIM_TIMING))
    elapsed = time.perf_counter() - t0
    if result.outcome != "complete":
        raise RuntimeError(f"{plan_path.name}: sweep ended {result.outcome}: {result.message}")
    return result.run_file, result.points, elapsed, result.outcome


def _import_time(module: str) -> float:
    """Seconds a fresh interpreter takes to import `module` (above a bare start)."""
    import subprocess
    import sys

    code = f"import sys, time; sys.path.insert(0, {str(_common.REPO)!r}); t = time.perf_counter(); " \
           f"import {module}; print(time.perf_counter() - t)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return float(out.stdout.strip())


def main() -> int:
    p = _common.parser(__doc__.splitlines()[0])
    p.add_argument("--seed", type=int, default=3, help="seed of the simulated bench")
    p.add_argument("--sim-timing", choices=("real", "instant"), default="real",
                   help="the simulator's timing (default real: readings take their integration time)")
    args = p.parse_args()
    SIM_TIMING["timing"] = args.sim_timing
    print(f"simulator timing: {args.sim_timing} (sweep times below are on it)")
    uniform_counts = (50, 25, 12, 8, 6) if not args.quick else (12, 6)
    cap = 50 if not args.quick else 12

    figures: dict = {"sim_timing": args.sim_timing}
    cases = (
        ("R_DS(on)", PLANS / "pmos-prototype.toml", "linear", False, 2.0, 0.1, 3.0),
        ("Vf at 1 A (Schottky)", PLANS / "schottky-prototype.toml", "log", True, 1.0, 0.002, 2.0),
    )
    import tempfile

    with tempfile.TemporaryDirectory(prefix="benchlog-answer-") as tmp:
        tmp = Path(tmp)
        # warm-up (imports, the VISA resource manager, first connections): not timed. The adaptive
        # rule imports the fits (scipy.stats) on its first evaluation; that one-time cost of a fresh
        # process is measured on its own below, so the sweeps compare steady-state time.
        import_s = _import_time("benchlog.analysis.fits")
        import benchlog.analysis.fits  # noqa: F401
        sweep(plan_with_steps(cases[0][1], '[steps]\nmode = "linear"\nstart_a = 0.1\nstop_a = 3.0\ncount = 4',
                              tmp / "warm-up.toml"), tmp / "warm-up", args.seed)
        for label, source, mode, diode, op_a, start, stop in cases:
            rows = {}
            adaptive_plan = plan_with_steps(
                source, f'[steps]\nmode = "adaptive"\nstart_a = {start}\nstop_a = {stop}\ncount = {cap}\n'
                f"target_rel_u = {TARGET}", tmp / f"{source.stem}-adaptive.toml")
            run, points, secs, _ = sweep(adaptive_plan, tmp / "runs", args.seed)
            value, rel = answer(run, diode, op_a)
            rows["adaptive"] = {"points": points, "s": secs, "value": value, "rel_u": rel}
            for count in uniform_counts:
                plan = plan_with_steps(
                    source, f'[steps]\nmode = "{mode}"\nstart_a = {start}\nstop_a = {stop}\ncount = {count}',
                    tmp / f"{source.stem}-{mode}{count}.toml")
                run, points, secs, _ = sweep(plan, tmp / "runs", args.seed)
                value, rel = answer(run, diode, op_a)
                rows[f"uniform_{count}"] = {"points": points, "s": secs, "value": value, "rel_u": rel}
            a = rows["adaptive"]
            ref_name = f"uniform_{uniform_counts[0]}"
            ref = rows[ref_name]
            fewer = ref["points"] / a["points"]
            met = a["rel_u"] <= TARGET and fewer >= 2.0
            reaching = [r for k, r in rows.items() if k != "adaptive" and r["rel_u"] <= TARGET]
            smallest = min(reaching, key=lambda r: r["points"]) if reaching else None
            print(f"\n{label}: target relative standard uncertainty {TARGET:.0%}")
            for name, r in rows.items():
                print(f"  {name:>11}: {r['points']:3d} points, {r['s']:6.2f} s, value {r['value']:.6g}, "
                      f"rel u {r['rel_u']:.2e} ({'reached' if r['rel_u'] <= TARGET else 'NOT reached'})")
            print(f"  adaptive vs {ref_name}: {fewer:.1f}x fewer points, {ref['s'] / a['s']:.1f}x less time "
                  f"(goal >= 2x fewer points: {_common.verdict(met)})")
            if smallest is not None:
                print(f"  smallest uniform sweep tried that reaches {TARGET:.0%}: {smallest['points']} points "
                      f"(adaptive {a['points']})")
            figures[label] = {"rows": rows, "fewer_points_x": fewer, "less_time_x": ref["s"] / a["s"],
                              "goal": ">= 2x fewer points than uniform 50", "met": met,
                              "smallest_uniform_reaching": smallest["points"] if smallest else None}
    print(f"\none-time cost in a fresh process, not in the times above: importing benchlog.analysis.fits "
          f"(the adaptive rule's fits) takes {import_s:.2f} s")
    figures["fits_import_s"] = import_s
    _common.finish("time_to_answer", figures, args)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
