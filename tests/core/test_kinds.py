"""The element kinds are named once; the simulator and the plan reader must agree with that list."""

from benchlog.kinds import DIODE_KINDS, ELEMENT_KINDS
from benchlog.sim.elements import KINDS as SIM_KINDS
from benchlog.sweep.plan import DIODE_KINDS as PLAN_DIODE_KINDS
from benchlog.sweep.plan import ELEMENT_KINDS as PLAN_KINDS


def test_simulator_and_plans_know_the_same_kinds():
    assert set(SIM_KINDS) == set(ELEMENT_KINDS) == set(PLAN_KINDS)
    assert set(PLAN_DIODE_KINDS) == set(DIODE_KINDS)


def test_cli_offers_every_simulated_kind():
    from benchlog.cli import build_parser

    sim = build_parser()._subparsers._group_actions[0].choices["sim"]
    element = next(a for a in sim._actions if "--element" in a.option_strings)
    assert set(element.choices) == set(SIM_KINDS)
