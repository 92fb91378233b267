"""Refusals before power: setups that would measure the wrong thing or exceed an instrument's ranges."""

from __future__ import annotations

import dataclasses

import pytest

from benchlog.badinput import BadInput
from benchlog.instruments.profile import load_profile
from benchlog.sweep.bench_file import BenchSetup, RoleSpec, Wiring
from benchlog.sweep.feasibility import check_plan_on_bench, check_plan_on_rig
from benchlog.sweep.plan import parse_plan
from benchlog.sweep.rig import Rig

from .fakes import Bench, Element, FakeClock, FakeLoad, FakeMeter, FakeSupply

PMOS = """
[element]
id = "Q1"
kind = "pmos"
{element}
[steps]
mode = "linear"
start_a = 0.1
stop_a = 2.0
count = 5
[limits]
max_current_a = 2.0
compliance_v = 3.0
{extra}
"""


def bench(force="supply", input_v=None, current_from="supply"):
    roles = {n: RoleSpec(n, f"TCPIP0::127.0.0.1::{5000 + i}::SOCKET", f"sim-{n}")
             for i, n in enumerate(("supply", "load", "meter"))}
    return BenchSetup(roles, Wiring(force, current_from, input_v=input_v), source="bench.toml")


def plan(element="", extra=""):
    return parse_plan(PMOS.format(element=element, extra=extra), "plan.toml")


def test_pmos_gate_on_return_forced_by_the_supply_is_refused():
    with pytest.raises(BadInput) as err:
        check_plan_on_bench(plan(), bench("supply"))
    line = err.value.line()
    assert line.startswith("bench.toml: [wiring].force")
    assert "cannot enhance" in line and "body diode" in line and "measure = 'body_diode'" in line


@pytest.mark.parametrize("element", ['measure = "body_diode"', 'gate = "driven"'])
def test_explicit_overrides_are_accepted(element):
    assert check_plan_on_bench(plan(element), bench("supply")) == []


def test_load_wiring_needs_enough_input_for_the_gate():
    p = parse_plan(PMOS.format(element="", extra="").replace("compliance_v = 3.0", ""), "plan.toml")
    with pytest.raises(BadInput, match=r"\[wiring\].input_v.*too low to enhance"):
        check_plan_on_bench(p, bench("load", input_v=3.3))
    assert check_plan_on_bench(p, bench("load", input_v=12.0, current_from="load")) == []


def test_input_above_the_compliance_is_refused():
    with pytest.raises(BadInput, match=r"input_v: is 12 V, above the plan's compliance_v 3 V"):
        check_plan_on_bench(plan(), bench("load", input_v=12.0))


def test_a_low_zener_clamp_is_a_warning():
    p = parse_plan(PMOS.format(element="zener_v = 3.0", extra="").replace("compliance_v = 3.0", ""), "plan.toml")
    warnings = check_plan_on_bench(p, bench("load", input_v=12.0))
    assert any("zener" in w for w in warnings)


def nmos_plan(element="", extra=""):
    return parse_plan(PMOS.replace('kind = "pmos"', 'kind = "nmos"').format(element=element, extra=extra), "plan.toml")


def test_nmos_gate_on_the_input_forced_by_the_supply_is_refused():
    # Same KVL as the P-MOSFET: forced into a near-short, |Vgs| is only the lead drop (registry: gate to the input).
    with pytest.raises(BadInput) as err:
        check_plan_on_bench(nmos_plan(), bench("supply"))
    line = err.value.line()
    assert line.startswith("bench.toml: [wiring].force") and "gate tied to the input" in line
    assert "N-MOSFET" in line and "cannot enhance" in line


@pytest.mark.parametrize("element", ['measure = "body_diode"', 'gate = "driven"'])
def test_nmos_explicit_overrides_are_accepted(element):
    assert check_plan_on_bench(nmos_plan(element), bench("supply")) == []


def test_nmos_body_diode_needs_a_silicon_junction_compliance():
    # A body diode measured on purpose is a silicon junction: nothing flows below about 0.5 V (common practice).
    p = parse_plan(PMOS.replace('kind = "pmos"', 'kind = "nmos"').replace("compliance_v = 3.0", "compliance_v = 0.3")
                   .format(element='measure = "body_diode"', extra=""), "plan.toml")
    with pytest.raises(BadInput, match=r"compliance_v: is 0.3 V, below the 0.5 V"):
        check_plan_on_bench(p, bench("supply"))


def test_nmos_load_wiring_needs_enough_input_for_the_gate():
    p = parse_plan(PMOS.replace('kind = "pmos"', 'kind = "nmos"').replace("compliance_v = 3.0", "")
                   .format(element="", extra=""), "plan.toml")
    assert p.element.gate == "input"  # the registry's protection wiring for an N-MOSFET in the return
    with pytest.raises(BadInput, match=r"\[wiring\].input_v.*gate on the input.*too low to enhance"):
        check_plan_on_bench(p, bench("load", input_v=3.3))
    assert check_plan_on_bench(p, bench("load", input_v=12.0, current_from="load")) == []


def rig_with(supply_profile, plan_obj, force="supply"):
    setup = bench(force, input_v=12.0 if force == "load" else None)
    fakes = Bench(FakeClock(), Element(), force=force)
    supply = FakeSupply(fakes, can_reverse=supply_profile.has("polarity_reversed"), profile=supply_profile)
    return Rig(setup, meter=FakeMeter(fakes, profile=load_profile("sim-meter")), supply=supply,
               load=FakeLoad(fakes, profile=load_profile("sim-load")))


RECT = PMOS.replace('kind = "pmos"', 'kind = "rectifier"')


def test_reverse_needs_polarity_commands():
    p = parse_plan(RECT.format(element="", extra="[reverse]\nvoltage_v = 12\nduration_s = 1\nmax_current_a = 0.1\n"), "plan.toml")
    sim = load_profile("sim-supply")
    no_polarity = dataclasses.replace(sim, name="no-polarity", commands={
        k: v for k, v in sim.commands.items() if not k.startswith("polarity")})
    with pytest.raises(BadInput, match=r"\[reverse\].*no polarity_normal / polarity_reversed"):
        check_plan_on_rig(p, rig_with(no_polarity, p))
    assert check_plan_on_rig(p, rig_with(sim, p)) == []


def test_limits_beyond_the_profiles_are_refused():
    sim = load_profile("sim-supply")  # 30 V, 10 A
    p = parse_plan(RECT.format(element="", extra="").replace("compliance_v = 3.0", "compliance_v = 40.0"), "plan.toml")
    with pytest.raises(BadInput, match=r"\[limits\].compliance_v: is 40 V, above what profile 'sim-supply' allows"):
        check_plan_on_rig(p, rig_with(sim, p))
    p = parse_plan(RECT.format(element="", extra="").replace("stop_a = 2.0", "stop_a = 12.0")
                   .replace("max_current_a = 2.0", "max_current_a = 12.0"), "plan.toml")
    with pytest.raises(BadInput, match=r"\[limits\].max_current_a: is 12 A"):
        check_plan_on_rig(p, rig_with(sim, p))
