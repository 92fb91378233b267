"""Plan files: every key is checked, and a broken file is refused with one line naming the key."""

import pytest

from benchlog.badinput import BadInput
from benchlog.sweep.plan import load_plan, parse_plan

GOOD = """
[element]
id = "D1"
kind = "rectifier"
serial = "SN-0001"
lot = "LOT-A"
ambient_c = 23.5
note = "prototype board rev B"
operating_a = 1.0

[steps]
mode = "linear"
start_a = 0.0
stop_a = 2.0
count = 21

[settle]
dwell_s = 0.01
tolerance_v = 0.0002
consecutive = 3
timeout_s = 1.0

[meter]
nplc = 1
range_v = 10
samples = 2

[limits]
max_current_a = 2.5
compliance_v = 3.0
max_drop_v = 1.5
max_power_w = 4.0
max_time_s = 600

[cooldown]
off_s = 0.5

[reverse]
voltage_v = 12.0
duration_s = 1.0
max_current_a = 0.001
"""


def test_good_plan_reads_every_key():
    plan = parse_plan(GOOD, "good.toml")
    assert plan.element.id == "D1" and plan.element.kind == "rectifier"
    assert plan.element.ambient_c == 23.5 and plan.element.operating_a == 1.0
    assert plan.steps.count == 21 and plan.steps.stop_a == 2.0
    assert plan.settle.consecutive == 3 and plan.settle.tolerance_v == 0.0002
    assert plan.meter.samples == 2 and plan.meter.range_v == 10.0
    assert plan.limits.max_power_w == 4.0 and plan.limits.compliance_v == 3.0
    assert plan.cooldown.off_s == 0.5
    assert plan.reverse.voltage_v == 12.0
    data = plan.to_dict()
    assert data["steps"]["count"] == 21 and data["reverse"]["max_current_a"] == 0.001
    assert "source" not in data


def test_defaults_fill_in():
    plan = parse_plan(
        '[element]\nid="R1"\nkind="resistor"\n[steps]\nmode="list"\ncurrents_a=[0.1,0.2]\n'
        "[limits]\nmax_current_a=1\n"
    )
    assert plan.steps.currents_a == (0.1, 0.2)
    assert plan.offset.enabled and plan.reverse is None and plan.cooldown.off_s == 0.0
    assert plan.meter.range_v is None and plan.record.supply_v


def _replace(old: str, new: str) -> str:
    assert old in GOOD, old
    return GOOD.replace(old, new)


# A table of broken plans: each must name its key in one line.
BROKEN = [
    (_replace('kind = "rectifier"', 'kind = "triode"'), "[element].kind", "one of"),
    (_replace('mode = "linear"', 'mode = "spiral"'), "[steps].mode", "one of"),
    (_replace("count = 21", "count = 1"), "[steps].count", "at least 2"),
    (_replace("count = 21", 'count = "many"'), "[steps].count", "whole number"),
    (_replace("stop_a = 2.0", "stop_a = 3.0"), "[steps].stop_a", "within the plan's limit"),
    (_replace("stop_a = 2.0", "stop_a = -1.0"), "[steps].stop_a", "above 0"),
    (_replace("start_a = 0.0", "start_a = 2.0"), "[steps].stop_a", "stop_a > start_a"),
    (_replace("consecutive = 3", "consecutive = 0"), "[settle].consecutive", "at least 1"),
    (_replace("tolerance_v = 0.0002", "tolerance_v = nan"), "[settle].tolerance_v", "finite"),
    (_replace("dwell_s = 0.01", "dwel_s = 0.01"), "[settle].dwel_s", "did you mean 'dwell_s'"),
    (_replace("nplc = 1", "nplc = 0"), "[meter].nplc", "above 0"),
    (_replace("samples = 2", "samples = 2.5"), "[meter].samples", "whole number"),
    (_replace("max_current_a = 2.5", "max_curent_a = 2.5"), "[limits].max_curent_a", "did you mean 'max_current_a'"),
    (_replace("max_power_w = 4.0", "max_power_w = -4.0"), "[limits].max_power_w", "above 0"),
    (_replace("max_current_a = 0.001", "max_current_a = 5.0"), "[reverse].max_current_a", "within the plan's limit"),
    (_replace("off_s = 0.5", "off_s = 1e9"), "[cooldown].off_s", "at most"),
    (_replace('id = "D1"', 'id = ""'), "[element].id", "a name"),
    (_replace("operating_a = 1.0", "operating_a = 9.0"), "[element].operating_a", "the sweep may reach"),
    (_replace("operating_a = 1.0", 'gate = "return"'), "[element].gate", "only applies to a MOSFET"),
    ("[element]\nid='q'\nkind='nmos'\ngate='return'\n[steps]\nmode='log'\nstart_a=0.1\nstop_a=1\ncount=3\n"
     "[limits]\nmax_current_a=1\n", "[element].gate", "one of 'input', 'driven'"),
    ("[element]\nid='q'\nkind='pmos'\ngate='input'\n[steps]\nmode='log'\nstart_a=0.1\nstop_a=1\ncount=3\n"
     "[limits]\nmax_current_a=1\n", "[element].gate", "one of 'return', 'driven'"),
    (GOOD + "\n[extra]\nx = 1\n", "extra", "unknown key"),
    (_replace("[limits]", "[limit]"), "limit", "did you mean 'limits'"),
    (GOOD.replace("[steps]\nmode", "[steps]\ncurrents_a = [1.0]\nmode"), "[steps].currents_a", "only used with mode 'list'"),
    (_replace('mode = "linear"', 'mode = "adaptive"').replace("start_a = 0.0", "start_a = 0.1"),
     "[steps].target_rel_u", "a value"),
    (_replace("[element]", "[elements]"), "elements", "did you mean"),
    ("[element]\nid='x'\nkind='pmos'\n[steps]\nmode='log'\nstart_a=0\nstop_a=1\ncount=3\n[limits]\nmax_current_a=1\n",
     "[steps].start_a", "above 0"),
    ("[element]\nid='x'\nkind='pmos'\n[steps]\nmode='list'\ncurrents_a=[0.5, 2]\n[limits]\nmax_current_a=1\n",
     "[steps].currents_a[1]", "within the plan's limit"),
    ("[element]\nid='x'\nkind='pmos'\n[steps]\nmode='list'\ncurrents_a=[0.5]\n", "[limits]", "a [limits] table"),
    ("[element\nid='x'", "", "TOML syntax"),
    (GOOD + "\n[input]\nvoltages_v = [6.0, 12.0]\n[soak]\ncurrent_a = 1.0\nduration_s = 20\ninterval_s = 1\n",
     "input", "[input] or [soak] in one plan"),
]


@pytest.mark.parametrize("text, where, expected", BROKEN, ids=[f"{i}-{b[1]}" for i, b in enumerate(BROKEN)])
def test_broken_plan_names_the_key(tmp_path, text, where, expected):
    path = tmp_path / "broken.toml"
    path.write_text(text)
    with pytest.raises(BadInput) as err:
        load_plan(path)
    line = err.value.line()
    assert "\n" not in line
    assert str(path) in line
    assert where in line, line
    assert expected in line, line


def test_lab_table_is_optional_and_recorded_when_stated():
    assert "lab" not in parse_plan(GOOD, "good.toml").to_dict()  # earlier headers stay as they were
    plan = parse_plan(GOOD + '\n[lab]\noperator = "A. Tester"\nboard_revision = "B2"\nambient_measured_c = 24.1\n',
                      "lab.toml")
    assert plan.to_dict()["lab"] == {"operator": "A. Tester", "board_revision": "B2", "ambient_measured_c": 24.1}
    with pytest.raises(BadInput) as err:
        parse_plan(GOOD + '\n[lab]\nambient_measured_c = 900\n', "lab.toml")
    assert "ambient_measured_c" in err.value.line()
