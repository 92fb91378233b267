"""The built-in simulated bench: what `benchlog sweep` and `benchlog demo` run on without a bench file.

The simulator is started in-process on ephemeral loopback ports and reached
through real pyvisa-py sockets, exactly like hardware; this module only picks
a wiring that suits the element and names the sim profiles. It lives in `cli/`,
the one layer that composes a simulated bench with a sweep: the UI gets
`builtin_bench` as an argument, and `sweep/` never imports `sim/`.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from benchlog.kinds import kind as element_kind
from benchlog.sweep.bench_file import BenchSetup, RoleSpec, SensorSpec, Wiring
from benchlog.sweep.plan import Element, Plan
from benchlog.sweep.session import SweepResult, run_sweep

#: Input voltage of the load wiring: a typical 12 V rail fully enhances a MOSFET whose gate is tied to the supply.
SIM_INPUT_V = 12.0

SIM_PROFILES = {"supply": "sim-supply", "load": "sim-load", "meter": "sim-meter", "current_meter": "sim-meter",
                "sensor": "sim-case-meter"}
#: The simulated case probe: a thermocouple on the case; ±(its fixed error + 3σ noise) rounded up (sim/specs.py).
SIM_SENSOR = SensorSpec(attached_to="case", transducer="thermocouple", accuracy_c=0.6)


def sim_wiring(element: Element | str, current_from: str = "supply", shunt_ohm: float | None = None) -> Wiring:
    """Load wiring at 12 V for a MOSFET channel (its gate must see the input), supply CC for the rest."""
    kind = element if isinstance(element, str) else element.kind
    channel = element_kind(kind).has_gate and (isinstance(element, str) or element.measure == "channel")
    if channel:
        source = "load" if current_from == "supply" else current_from
        return Wiring(force="load", current_from=source, shunt_ohm=shunt_ohm, input_v=SIM_INPUT_V)
    return Wiring(force="supply", current_from=current_from, shunt_ohm=shunt_ohm)


def builtin_bench(
    element: Element | str,
    seed: int = 1,
    *,
    wiring: Wiring | None = None,
    **sim_options: Any,
) -> tuple[BenchSetup, Any]:
    """Start the simulated bench for `element` (an Element or a kind); returns (BenchSetup, RunningBench).

    `sim_options` go to `SimConfig` (latency_s, faults, element_params,
    current_meter, shunt_ohm, ambient_c, case_sensor, ...). The caller stops the bench.
    """
    from benchlog.sim.config import SimConfig
    from benchlog.sim.server import serve_bench

    kind = element if isinstance(element, str) else element.kind
    if not isinstance(element, str):
        sim_options.setdefault("ambient_c", element.ambient_c)
    if wiring is not None and wiring.current_from in ("meter", "shunt"):
        sim_options["current_meter"] = True
        if wiring.shunt_ohm is not None:
            sim_options.setdefault("shunt_ohm", wiring.shunt_ohm)
    sim_options.setdefault("port", 0)
    config = SimConfig(element=kind, seed=seed, **sim_options)
    running = serve_bench(config)
    try:
        roles = {
            name: RoleSpec(role=name, resource=resource, profile=SIM_PROFILES[name])
            for name, resource in running.resources.items()
        }
        setup = BenchSetup(
            roles=roles,
            wiring=wiring or sim_wiring(element),
            line_frequency_hz=config.line_frequency_hz,
            source="built-in simulated bench",
            simulated=True,
            sensor=SIM_SENSOR if "sensor" in roles else None,
            # a scaled thermal time is not the part's own: the run says so
            sim_settings={"thermal_time_scale": config.thermal_time_scale} if config.thermal_time_scale != 1.0 else None,
        )
    except BaseException:
        running.stop()
        raise
    return setup, running


def plan_wiring(plan: Plan) -> Wiring:
    """The sim wiring for a plan: a reverse test needs a series current meter (the supply's read-back cannot
    resolve leakage)."""
    return sim_wiring(plan.element, current_from="meter" if plan.reverse is not None else "supply")


def sweep_on_builtin_bench(plan: Plan, out_dir: str | Path, *, seed: int = 0,
                           sim_options: dict[str, Any] | None = None, **run_options: Any) -> SweepResult:
    """`sweep.session.run_sweep` on a simulated bench started for the plan's element and stopped afterwards."""
    bench, running = builtin_bench(plan.element, seed, wiring=plan_wiring(plan), **(sim_options or {}))
    try:
        return run_sweep(plan, bench, out_dir, **run_options)
    finally:
        running.stop()


class BenchClock:
    """Time shared by the runner and the simulated bench; it moves only while the runner waits.

    A minute of thermal time then takes a moment of wall time, and the sim's junction follows
    exactly the time the runner records: how the sample runs and the heat-soak tests are recorded
    byte for byte the same.
    """

    def __init__(self) -> None:
        self.now_s = 0.0
        self.rig: Any = None

    def __call__(self) -> float:
        return self.now_s

    def sleep(self, seconds: float) -> None:
        if self.rig is not None:
            for role in self.rig.roles():
                role.transport.query("*OPC?")  # every setting sent so far is now in the circuit
        self.now_s += max(0.0, float(seconds))


def sweep_on_bench_clock(plan: Plan, config: Any, path: Path, *, wiring: Wiring, source: str = "bench",
                         sim_settings: dict[str, Any] | None = None, check_feasibility: bool = False,
                         header: dict[str, Any] | None = None, wrap_writer: Any = None) -> tuple[Any, dict]:
    """Run `plan` on a simulated bench (`config`, a sim.config.SimConfig) whose clock is the runner's
    (`BenchClock`), writing `path`; returns (the runner, the sim's truth).

    `header` replaces fields of the run header (fixed start time, host, run id); `wrap_writer(writer)`
    may wrap the run writer (a test that kills the process part way).
    """
    from dataclasses import replace

    from benchlog.runs.writer import RunWriter
    from benchlog.sim.server import serve_bench
    from benchlog.sweep.feasibility import check_plan_on_bench, check_plan_on_rig
    from benchlog.sweep.rig import open_rig
    from benchlog.sweep.runner import SweepRunner

    clock = BenchClock()
    with serve_bench(config, clock=clock) as running:
        bench = BenchSetup(
            roles={name: RoleSpec(role=name, resource=resource, profile=SIM_PROFILES[name])
                   for name, resource in running.resources.items()},
            wiring=wiring, line_frequency_hz=config.line_frequency_hz, source=source, simulated=True,
            sim_settings=sim_settings,
        )
        warnings = check_plan_on_bench(plan, bench) if check_feasibility else []
        rig = open_rig(bench)
        try:
            clock.rig = rig
            if check_feasibility:
                warnings += check_plan_on_rig(plan, rig)
            runner = SweepRunner(plan, rig, clock=clock, sleep=clock.sleep, warnings=warnings)
            if header:
                runner.header = replace(runner.header, **header)
            with RunWriter(path) as writer:
                runner.writer = writer if wrap_writer is None else wrap_writer(writer)
                runner.run()
        finally:
            clock.rig = None
            rig.close()
        truth = running.truth()
    return runner, truth
