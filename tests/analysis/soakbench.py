"""Record a heat-soak on the simulated bench through real pyvisa-py sockets, on a clock shared with the sim.

The clock moves only while the runner waits, so a minute of thermal time takes a
second of wall time and the sim's junction follows exactly the time the runner
records (the same arrangement the sample runs use).
"""

from __future__ import annotations

from pathlib import Path

from benchlog import runs
from benchlog.sim.config import SimConfig
from benchlog.sweep.plan import parse_plan
from benchlog.cli.simbench import sim_wiring, sweep_on_bench_clock  # the clock shared with tools/sample_runs.py


def soak_plan(kind: str = "pmos", *, current_a: float = 5.0, duration_s: float = 60.0, interval_s: float = 0.25,
              cool_s: float = 0.0, extra: str = "") -> str:
    range_v = 0.1 if kind in ("pmos", "nmos", "resistor") else 2.0
    return f"""
[element]
id = "Q1"
kind = "{kind}"
ambient_c = 25.0
[steps]
mode = "list"
currents_a = [{current_a * 0.2}, {current_a * 0.4}, {current_a * 0.6}, {current_a * 0.8}, {current_a}]
[meter]
nplc = 1
range_v = {range_v}
[soak]
current_a = {current_a}
rest_s = 120.0
duration_s = {duration_s}
interval_s = {interval_s}
cool_s = {cool_s}
{extra}
[limits]
max_current_a = {current_a * 1.1}
max_time_s = 100000
"""


def record_soak(tmp_path: Path, plan_text: str, *, seed: int = 3, element_params: dict | None = None,
                thermal_time_scale: float = 1.0) -> tuple[Path, dict]:
    """Run the plan; returns (run file, the sim's truth)."""
    plan = parse_plan(plan_text, "soak-plan")
    config = SimConfig(element=plan.element.kind, seed=seed, ambient_c=plan.element.ambient_c,
                       element_params=dict(element_params or {}), thermal_time_scale=thermal_time_scale)
    path = tmp_path / f"soak-{seed}.run"
    runner, truth = sweep_on_bench_clock(plan, config, path, wiring=sim_wiring(plan.element),
                                         sim_settings={"thermal_time_scale": thermal_time_scale})
    outcome = runner.outcome
    assert outcome == "complete", runner.message
    return path, truth


def load(path: Path):
    return runs.load(path)


def measure_calibration(tmp_path: Path, temperatures_c: tuple[float, ...], sense_a: float, *, kind: str = "pmos",
                        seed: int = 3, element_params: dict | None = None) -> tuple[float, ...]:
    """The drop at `sense_a` with the whole bench at each temperature (an oven calibration), measured by
    the same instruments through the same sockets; the same seed is the same part."""
    drops = []
    for temp in temperatures_c:
        text = soak_plan(kind).split("[soak]")[0].replace("ambient_c = 25.0", f"ambient_c = {temp}")
        text = text.replace("[steps]\nmode = \"list\"", "[steps]\nmode = \"list\"\n# calibration")
        lines = [ln for ln in text.splitlines() if not ln.startswith("currents_a")]
        lines.insert(lines.index("# calibration") + 1, f"currents_a = [{sense_a}]")
        plan_text = "\n".join(lines) + "\n[limits]\nmax_current_a = 10\n"
        sub = tmp_path / f"cal-{temp:g}"
        sub.mkdir(exist_ok=True)
        path, _ = record_soak(sub, plan_text, seed=seed, element_params=element_params)
        frame, meta = runs.load(path)
        drops.append(float(frame["drop_v"].iloc[0]) - (meta.offset_v or 0.0))
    return tuple(drops)
