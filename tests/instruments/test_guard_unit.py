"""The safe-state guard over scripted transports: every way out of the block leaves every role safe."""

from __future__ import annotations

import signal

import pytest

from benchlog.instruments.errors import SafeStateFailed
from benchlog.instruments.guard import Terminated, reach_safe_state, safe_state_guard
from benchlog.instruments.profile import load_profile
from benchlog.instruments.roles import Load, Meter, Supply

from .scripted import ScriptedTransport


def _bench():
    ts = ScriptedTransport("BENCHLOG,SIM-SUPPLY,1,1", resource="S")
    tl = ScriptedTransport("BENCHLOG,SIM-LOAD,1,1", resource="L")
    tm = ScriptedTransport("BENCHLOG,SIM-METER,1,1", resource="M")
    roles = (Supply(ts, load_profile("sim-supply")), Load(tl, load_profile("sim-load")),
             Meter(tm, load_profile("sim-meter")))
    for t in (ts, tl, tm):
        t.sent.clear()
    return roles, (ts, tl, tm)


def _switched_off(ts: ScriptedTransport, tl: ScriptedTransport) -> bool:
    return "OUTPut:STATe OFF" in ts.sent and "INPut OFF" in tl.sent


def test_normal_exit():
    (s, l, m), (ts, tl, tm) = _bench()
    with safe_state_guard(s, l, m, report=lambda text: None):
        s.set_output(True)
    assert _switched_off(ts, tl) and not s.output_on


def test_exception_passes_through_after_safe_state():
    (s, l, m), (ts, tl, tm) = _bench()
    with pytest.raises(RuntimeError) as info:
        with safe_state_guard(s, l, m, report=lambda text: None):
            raise RuntimeError("sweep failed")
    assert _switched_off(ts, tl)
    assert any("outputs verified off (read back): supply S, load L" in note for note in info.value.__notes__)


def test_keyboard_interrupt():
    (s, l, m), (ts, tl, tm) = _bench()
    with pytest.raises(KeyboardInterrupt):
        with safe_state_guard(s, l, m, report=lambda text: None):
            raise KeyboardInterrupt
    assert _switched_off(ts, tl)


def test_all_off_before_any_setpoint_is_zeroed():
    (s, l, m), (ts, tl, tm) = _bench()
    order: list[str] = []
    for t in (ts, tl):
        original = t.write

        def recording(command, _w=original, _r=t.resource):
            order.append(f"{_r}:{command}")
            _w(command)

        t.write = recording  # type: ignore[method-assign]
    reach_safe_state(s, l)
    assert order[:2] == ["S:OUTPut:STATe OFF", "L:INPut OFF"]
    assert set(order[2:5]) == {"S:SOURce:VOLTage 0.0", "S:SOURce:CURRent 0.0", "L:CURR 0.0"}


def test_one_failing_role_does_not_stop_the_others():
    (s, l, m), (ts, tl, tm) = _bench()
    ts.lost = True
    ts.reopen = lambda: (_ for _ in ()).throw(OSError("no route"))  # type: ignore[method-assign]
    reports: list[str] = []
    with pytest.raises(SafeStateFailed) as info:
        with safe_state_guard(s, l, m, report=reports.append):
            pass
    assert "INPut OFF" in tl.sent and "CURR 0.0" in tl.sent
    assert {who for who, _, _ in info.value.failures} == {"supply S"}
    assert len(reports) == 1 and reports[0].state == "unverified"
    assert reports[0].statement().startswith("OUTPUTS MAY BE ON: supply S did not confirm off")


def test_failure_during_exception_is_attached_not_masking():
    (s, l, m), (ts, tl, tm) = _bench()
    tl.lost = True
    tl.reopen = lambda: (_ for _ in ()).throw(OSError("gone"))  # type: ignore[method-assign]
    with pytest.raises(ValueError) as info:
        with safe_state_guard(s, l, report=lambda text: None):
            raise ValueError("original")
    assert "OUTPut:STATe OFF" in ts.sent
    assert any("load L" in note for note in info.value.__notes__)


def test_none_roles_are_skipped_and_duck_typed_roles_work():
    calls = []

    class Relay:
        def safe_state(self):
            calls.append("relay off")

    with safe_state_guard(None, Relay(), report=lambda text: None):
        pass
    assert calls == ["relay off"]


def test_sigterm_handler_installed_only_while_active_and_restored():
    before = signal.getsignal(signal.SIGTERM)
    guard = safe_state_guard(report=lambda text: None)
    with guard:
        assert signal.getsignal(signal.SIGTERM) == guard._on_signal
    assert signal.getsignal(signal.SIGTERM) == before


def test_sigterm_in_process_unwinds_through_guard():
    (s, l, m), (ts, tl, tm) = _bench()
    with pytest.raises(Terminated) as info:
        with safe_state_guard(s, l, m, report=lambda text: None):
            s.set_output(True)
            signal.raise_signal(signal.SIGTERM)
            pytest.fail("SIGTERM did not interrupt the block")
    assert info.value.code == 143
    assert _switched_off(ts, tl)


def test_signal_during_cleanup_is_held_until_safe():
    (s, l, m), (ts, tl, tm) = _bench()
    original = ts.write

    def write_then_interrupt(command):
        original(command)
        if command == "OUTPut:STATe OFF":
            signal.raise_signal(signal.SIGINT)  # Ctrl-C pressed again while switching off

    ts.write = write_then_interrupt  # type: ignore[method-assign]
    with pytest.raises(KeyboardInterrupt):
        with safe_state_guard(s, l, report=lambda text: None):
            pass
    assert "INPut OFF" in tl.sent and "CURR 0.0" in tl.sent  # the rest still ran
