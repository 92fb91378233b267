"""Fits of sweeps taken from the simulated bench, over real pyvisa-py sockets, recover its truth().

The sim draws each instrument's gain and offset uniformly within the specs in
`benchlog.sim.specs` (its module docstring), so a budget built from those specs
must hold the truth within k = 2 — and would not if a gain term were missing
(the load's current gain of up to 0.1 % is the largest term here). Time is
frozen (injected clock), so the junction stays at ambient: the truth at 25 °C
is the truth measured.
"""

from __future__ import annotations

import numpy as np
import pytest
import pyvisa

from benchlog.analysis.fits import fit_diode, fit_resistive
from benchlog.analysis.uncertainty import Accuracy, MeasurementAccuracy
from benchlog.sim import specs


def accuracy_for(drop_range_v: float) -> MeasurementAccuracy:
    dcv = specs.range_for(specs.METER_DCV, drop_range_v)
    current = specs.spec_for(specs.LOAD_READBACK, "readback_current")
    return MeasurementAccuracy(Accuracy(dcv.reading_pct, dcv.range_pct, dcv.range),
                               Accuracy(current.reading_pct, current.range_pct, current.range))


def sweep(running, currents, drop_range_v):
    """Step the load, read the drop on one fixed meter range and the load's current readback."""
    rm = pyvisa.ResourceManager("@py")
    opened = {}
    try:
        for role in ("supply", "load", "meter"):
            opened[role] = rm.open_resource(running.resources[role], read_termination="\n",
                                            write_termination="\n", timeout=2000)
        supply, load, meter = opened["supply"], opened["load"], opened["meter"]
        supply.write("VOLT 12")
        supply.write("CURR 8")
        supply.write("OUTP ON")
        load.write("FUNC CURR")
        load.write("CURR 0")
        load.write("INP ON")
        meter.write(f"CONF:VOLT:DC {drop_range_v}")  # one range: its offset is the same at every point
        meter.write("VOLT:NPLC 1")
        for inst in (supply, load, meter):
            inst.query("*OPC?")
        drops, read_currents = [], []
        for current in currents:
            load.write(f"CURR {current:.6g}")
            load.query("*OPC?")  # the load has acted before the meter reads (separate sockets)
            drops.append(float(meter.query("READ?")))
            read_currents.append(float(load.query("MEAS:CURR?")))
        return np.array(read_currents), np.array(drops)
    finally:
        for role in ("load", "supply"):  # outputs off whatever happened
            if role in opened:
                opened[role].write("INP OFF" if role == "load" else "OUTP OFF")
                opened[role].query("*OPC?")  # wait until the instrument has acted on it
        for inst in opened.values():
            inst.close()
        rm.close()


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_resistor_sweep_recovers_truth_within_expanded_uncertainty(sim_bench, seed):
    running = sim_bench("resistor", seed=seed, clock=lambda: 0.0)
    truth = running.truth()
    currents = np.linspace(0.5, 5.0, 10)
    i, v = sweep(running, currents, 1.0)
    fit = fit_resistive(i, v, accuracy_for(1.0))
    assert abs(fit.params["r_on_ohm"] - truth["r_on_ohm"]) <= fit.expanded_u["r_on_ohm"]
    assert not running.bench.load.input_on and not running.bench.supply.output_on


def test_rectifier_sweep_recovers_truth_within_expanded_uncertainty(sim_bench):
    running = sim_bench("rectifier", seed=4, clock=lambda: 0.0)
    truth = running.truth()
    currents = np.geomspace(0.2, 4.0, 16)
    i, v = sweep(running, currents, 10.0)
    fit = fit_diode(i, v, accuracy_for(10.0), temperature_c=25.0)
    for key in ("ideality", "i_s_a", "r_s_ohm"):
        assert abs(fit.params[key] - truth[key]) <= fit.expanded_u[key], key
    budget = fit.drop_budget_at(1.0)
    assert abs(fit.drop_at(1.0)[0] - truth["vf_at_1a_v"]) <= budget.expanded_u
    # the check has teeth: type A alone (the load's 30 mA readback offset left out) misses the truth
    type_a = fit.budgets["ideality"].component("fit residuals").u
    assert abs(fit.params["ideality"] - truth["ideality"]) > 2 * type_a
