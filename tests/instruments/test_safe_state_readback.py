"""The safe state is read back, not assumed: the guard against the simulated bench over real pyvisa-py.

"Off" is only ever said when the instrument's own state query answered 0 (SCPI-99
OUTPut[:STATe]? / INPut[:STATe]?, common practice). The sim's in-process state is
the independent witness that the statement is true.
"""

from __future__ import annotations

import signal
import threading

import pytest

from benchlog.instruments import open_role, safe_state_guard
from benchlog.instruments.errors import ConnectionLost, SafeStateFailed
from benchlog.instruments.guard import reach_safe_state
from benchlog.instruments.profile import load_profile, parse_profile
from benchlog.instruments.roles import Load, Meter, Supply
from benchlog.sim.faults import FaultPlan

from .scripted import ScriptedTransport


def _open(bench, profile_supply="sim-supply", timeout_s=None):
    r = bench.resources
    return (open_role("supply", r["supply"], profile_supply, timeout_s=timeout_s),
            open_role("load", r["load"], "sim-load", timeout_s=timeout_s))


def _power_on(supply, load):
    supply.set_voltage(12.0)
    supply.set_current_limit(2.0)
    load.set_current(0.5)
    load.set_input(True)
    supply.set_output(True)


def _close(*roles):
    for role in roles:
        role.close()


def test_verified_only_after_the_instruments_read_back_off(sim_bench):
    bench = sim_bench()
    supply, load = _open(bench)
    try:
        guard = safe_state_guard(supply, load, report=None)
        with guard:
            _power_on(supply, load)
            assert bench.bench.supply.output_on and bench.bench.load.input_on
        report = guard.outcome
        assert report.state == "verified" and [r.state for r in report.roles] == ["verified", "verified"]
        assert report.statement().startswith("outputs verified off (read back): supply TCPIP0::127.0.0.1::")
        assert not bench.bench.supply.output_on and not bench.bench.load.input_on
    finally:
        _close(supply, load)


def test_a_profile_without_a_state_query_is_unknown_and_says_so(sim_bench, tmp_path):
    bench = sim_bench()
    text = load_profile("sim-supply").path.read_text().replace('output_state = "OUTPut:STATe?"\n', "")
    blind = parse_profile(text.replace('name = "sim-supply"', 'name = "sim-supply-blind"'), "blind.toml")
    supply, load = _open(bench, profile_supply=blind)
    try:
        guard = safe_state_guard(supply, load, report=None)
        with guard:
            _power_on(supply, load)
        report = guard.outcome
        assert report.state == "unknown"
        assert [r.state for r in report.roles] == ["unknown", "verified"]
        line = report.statement()
        assert line.startswith("OUTPUTS MAY BE ON: supply ") and "not read back" in line
        assert "output_state" in line and "load" not in line.split("--")[0].replace("supply", "")
        assert not bench.bench.supply.output_on  # it is off, but nothing said so: not claimed
    finally:
        _close(supply, load)


def test_an_earlier_commands_error_is_not_blamed_on_the_safe_state(sim_bench):
    # -113 "Undefined header" (IEEE 488.2 / SCPI-99 standard error, common practice) from a bad
    # command sent before the guard's exit: reported as an earlier error, the safe state verified.
    bench = sim_bench()
    supply, load = _open(bench)
    try:
        guard = safe_state_guard(supply, load, report=None)
        with guard:
            _power_on(supply, load)
            supply.transport.write("NOSuch:HEADer 1")
        report = guard.outcome
        assert report.state == "verified" and report.failures == ()
        assert len(report.earlier_errors) == 1 and "error -113" in report.earlier_errors[0]
        assert report.earlier_errors[0].startswith(f"supply {supply.resource}: error -113")
        assert report.earlier_errors[0].endswith("(before the safe state)")
    finally:
        _close(supply, load)


def test_ctrl_c_in_a_slow_query_does_not_provoke_query_interrupted(sim_bench):
    # The sim queues -410 when a new message arrives before a pending reply was read
    # (IEEE 488.2 6.3.2.3). Ctrl-C lands while a 0.3 s reply is pending; the off command
    # must wait for (and discard) that reply first, so no -410 and no failure.
    bench = sim_bench(latency_s=0.3)
    supply, load = _open(bench)
    previous = signal.signal(signal.SIGALRM, lambda *a: (_ for _ in ()).throw(KeyboardInterrupt()))
    try:
        guard = safe_state_guard(supply, load, report=None)
        with pytest.raises(KeyboardInterrupt):
            with guard:
                _power_on(supply, load)
                signal.setitimer(signal.ITIMER_REAL, 0.1)
                supply.measure_voltage()  # interrupted 0.1 s into its 0.3 s reply
        report = guard.outcome
        assert report.state == "verified" and report.failures == (), report
        codes = [code for code, _ in bench.bench.supply.errors.entries]
        assert -410 not in codes and report.earlier_errors == ()
        assert not bench.bench.supply.output_on
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
        _close(supply, load)


def test_a_lost_link_is_reopened_to_switch_off_and_read_back(sim_bench):
    bench = sim_bench(faults=FaultPlan(drop_after_commands=14, role="supply"))
    supply, load = _open(bench, timeout_s=0.5)
    try:
        guard = safe_state_guard(supply, load, report=None)
        with pytest.raises(ConnectionLost):
            with guard:
                _power_on(supply, load)
                for _ in range(40):
                    supply.measure_voltage()
        assert guard.outcome.state == "verified"
        assert not bench.bench.supply.output_on
    finally:
        _close(supply, load)


def test_an_output_that_stays_on_is_named_with_its_resource(sim_bench):
    bench = sim_bench(faults=FaultPlan(stuck_on_after=0))
    supply, load = _open(bench)
    try:
        reports = []
        with pytest.raises(SafeStateFailed) as info:
            with safe_state_guard(supply, load, report=reports.append):
                _power_on(supply, load)
        assert reports[0].state == "unverified"
        line = str(info.value)
        assert line.startswith(f"{supply.resource}: OUTPUTS MAY BE ON: supply {supply.resource} did not confirm off") \
            or line.startswith(f"OUTPUTS MAY BE ON: supply {supply.resource} did not confirm off")
        assert "switch it off by hand" in line and f"load {load.resource}" not in line
        assert bench.bench.supply.output_on  # the witness: it really is still on
    finally:
        _close(supply, load)


def test_added_at_connect_an_output_found_on_is_reported_and_switched_off(sim_bench):
    bench = sim_bench()
    with bench.bench.lock:
        bench.bench.supply.voltage_set_v = 5.0
        bench.bench.supply.output_on = True  # left on by whoever used the bench before
    guard = safe_state_guard(report=None)
    with guard:
        supply = open_role("supply", bench.resources["supply"], "sim-supply")
        guard.add(supply)
        assert not bench.bench.supply.output_on
    supply.close()
    assert guard.connect_notes == [f"supply {supply.resource}: output was ON when benchlog connected; "
                                   "switched off (read back)"]
    assert guard.outcome.state == "verified"


# -- scripted transports: the logic without a bench ------------------------------------------


def _scripted():
    ts = ScriptedTransport("BENCHLOG,SIM-SUPPLY,1,1", resource="S")
    tl = ScriptedTransport("BENCHLOG,SIM-LOAD,1,1", resource="L")
    tm = ScriptedTransport("BENCHLOG,SIM-METER,1,1", resource="M")
    return (Supply(ts, load_profile("sim-supply")), Load(tl, load_profile("sim-load")),
            Meter(tm, load_profile("sim-meter"))), (ts, tl, tm)


def test_stuck_output_is_switched_off_again_before_giving_up():
    (s, l, m), (ts, tl, tm) = _scripted()
    ts.power = True
    ts.stuck_on = True
    report = reach_safe_state(s, l, m)
    assert report.state == "unverified"
    assert ts.sent.count("OUTPut:STATe OFF") == 1 + 3  # the safe state's, then once per read-back that said ON
    assert [r.label for r in report.roles] == ["supply S", "load L"]  # the meter has no output to read


def test_state_query_lost_and_not_reopenable_is_unverified_not_verified():
    (s, l, m), (ts, tl, tm) = _scripted()
    ts.lost = True
    ts.reopen = lambda: (_ for _ in ()).throw(ConnectionLost("no route", resource="S"))  # type: ignore[method-assign]
    report = reach_safe_state(s, l)
    states = {r.label: r.state for r in report.roles}
    assert states == {"supply S": "unverified", "load L": "verified"}
    assert report.statement().startswith("OUTPUTS MAY BE ON: supply S did not confirm off (state query failed")


def test_one_statement_whatever_the_mix():
    (s, l, m), (ts, tl, tm) = _scripted()
    report = reach_safe_state(s, l, m)
    line = report.statement()
    assert line == "outputs verified off (read back): supply S, load L"
    assert "MAY BE ON" not in line
