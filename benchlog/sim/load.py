"""The simulated electronic load: constant current only, input on/off, voltage and current readback.

With real timing (`SimConfig.timing`) the current reaches a new setting, or rises
from zero when the input is switched on, along a first-order response
(`specs.LOAD_SETTLE_TAU_S`); switched off it drops at once.

The load's own protection on its input, a second line of defence behind the
bench's limits: over-current, over-power and over-voltage levels, each off until
programmed (0 switches one off again). A level exceeded switches the input off;
the trip reads 1 on INPut:PROTection:TRIPped? and sets its bit in
STATus:QUEStionable:CONDition? (bit 0 voltage, 1 current, 3 power: the SCPI-99
QUEStionable status register's summary bits, from memory) until
INPut:PROTection:CLEar; the input cannot be switched on while tripped.
"""

from __future__ import annotations

from benchlog.scpi.tree import CommandError, CommandTree, bool_param, choice_param, number_param

from . import specs
from .device import ScpiDevice, fmt
from .specs import draw_fixed_error, spec_for
from .timing import FirstOrder

CURRENT = "[SOURce:]CURRent[:LEVel][:IMMediate][:AMPLitude]"
#: STATus:QUEStionable bits set by a protection trip (SCPI-99 questionable summary bits; from memory)
QUES_VOLTAGE_BIT, QUES_CURRENT_BIT, QUES_POWER_BIT = 0, 1, 3
#: Levels above the load's own ratings are refused (-222 data out of range), as a real load does
_MOST = {"current": specs.LOAD_MAX_CURRENT_A * 1.1, "voltage": specs.LOAD_MAX_VOLTAGE_V * 1.1,
         "power": specs.LOAD_MAX_CURRENT_A * specs.LOAD_MAX_VOLTAGE_V}


class LoadSim(ScpiDevice):
    model = "SIM-LOAD"

    def __init__(self, bench, role: str, serial: str) -> None:
        rng = bench.stream(f"{role}/errors")

        self.program_a = draw_fixed_error(rng, spec_for(specs.LOAD_PROGRAMMING, "program_current"))
        self.readback_v = draw_fixed_error(rng, spec_for(specs.LOAD_READBACK, "readback_voltage"))
        self.readback_a = draw_fixed_error(rng, spec_for(specs.LOAD_READBACK, "readback_current"))
        self.noise = bench.stream(f"{role}/noise")
        tau = specs.LOAD_SETTLE_TAU_S if bench.config.timing == "real" else 0.0
        self.current_out = FirstOrder(tau, 0.0, bench.clock())
        super().__init__(bench, role, serial)

    def reset(self) -> None:
        self.current_set_a = 0.0
        self.input_on = False
        self.ocp_a: float | None = None
        self.opp_w: float | None = None
        self.ovp_v: float | None = None
        if not hasattr(self, "tripped"):  # a trip outlives *RST: only CLEar ends it
            self.tripped = False
            self.questionable = 0
        self.settings_changed()

    @property
    def programmed_current_a(self) -> float:
        gain, offset = self.program_a
        return max(0.0, self.current_set_a * (1 + gain) + offset) if self.current_set_a > 0 else 0.0

    def actual_current_a(self, at_s: float) -> float:
        """The current setting as it has settled by `at_s` (bench clock)."""
        return self.current_out.value(at_s)

    def settings_changed(self) -> None:
        now = self.bench.clock()
        if self.input_on:
            self.current_out.aim(self.programmed_current_a, now)
        else:
            self.current_out.jump(0.0, now)

    def build(self, tree: CommandTree) -> None:
        tree.command("[SOURce:]FUNCtion", self._set_function, 1)
        tree.query("[SOURce:]FUNCtion?", lambda: "CURR")
        tree.command(CURRENT, self._set_current, 1)
        tree.query(CURRENT + "?", lambda: fmt(self.current_set_a))
        tree.command("INPut[:STATe]", self._set_input, 1)
        tree.query("INPut[:STATe]?", lambda: "1" if self.input_on else "0")
        tree.query("MEASure[:SCALar]:VOLTage[:DC]?", self._measure_voltage)
        tree.query("MEASure[:SCALar]:CURRent[:DC]?", self._measure_current)
        for header, attr, kind, unit in (("[SOURce:]CURRent:PROTection[:LEVel]", "ocp_a", "current", " A"),
                                         ("[SOURce:]POWer:PROTection[:LEVel]", "opp_w", "power", " W"),
                                         ("[SOURce:]VOLTage:PROTection[:LEVel]", "ovp_v", "voltage", " V")):
            tree.command(header, self._level_setter(attr, kind, unit), 1)
            tree.query(header + "?", (lambda a: lambda: fmt(getattr(self, a) or 0.0))(attr))
        tree.query("INPut:PROTection:TRIPped?", lambda: "1" if self.tripped else "0")
        tree.command("INPut:PROTection:CLEar", self._clear_protection)
        tree.query("STATus:QUEStionable:CONDition?", lambda: str(self.questionable))

    def _level_setter(self, attr: str, kind: str, unit: str):
        def set_level(text: str) -> None:
            value = number_param(text, lo=0.0, hi=_MOST[kind], default=0.0, name=f"over-{kind} level", unit=unit)
            setattr(self, attr, value or None)  # 0 switches the protection off

        return set_level

    def trip(self, bit: int) -> None:
        """Protection trip: input off until INPut:PROTection:CLEar; the cause's QUEStionable bit set."""
        self.bench.changed()
        self.tripped = True
        self.questionable |= 1 << bit
        self.input_on = False
        self.settings_changed()

    def check_protection(self) -> None:
        """Switch the input off on an exceeded level (called around every message, like the supply's)."""
        if not self.input_on or (self.ocp_a is None and self.opp_w is None and self.ovp_v is None):
            return
        op = self.bench.operating_point()
        volts, amps = abs(op.load_v), abs(op.current_a)
        if self.ovp_v is not None and volts > self.ovp_v:
            self.trip(QUES_VOLTAGE_BIT)
        elif self.ocp_a is not None and amps > self.ocp_a:
            self.trip(QUES_CURRENT_BIT)
        elif self.opp_w is not None and volts * amps > self.opp_w:
            self.trip(QUES_POWER_BIT)

    def _clear_protection(self) -> None:
        self.tripped = False
        self.questionable = 0

    def _set_function(self, text: str) -> None:
        mode = choice_param(text, ("CURRent", "VOLTage", "RESistance", "POWer"), "function")
        if mode != "CURRent":
            raise CommandError(-221, f"this load runs in constant current only, not {mode}")

    def _set_current(self, text: str) -> None:
        self.bench.changed()
        self.current_set_a = number_param(text, lo=0.0, hi=specs.LOAD_MAX_CURRENT_A, default=0.0,
                                          name="current", unit=" A")
        self.settings_changed()

    def _set_input(self, text: str) -> None:
        on = bool_param(text, "input")
        if on and self.tripped:
            raise CommandError(-200, "input protection tripped; send INPut:PROTection:CLEar first")
        self.bench.changed()
        self.input_on = on
        self.settings_changed()

    def _measure_voltage(self) -> str:
        op = self.bench.operating_point()
        gain, offset = self.readback_v
        return fmt(op.load_v * (1 + gain) + offset + self.noise.gauss(0.0, specs.LOAD_READBACK_NOISE_V))

    def _measure_current(self) -> str:
        op = self.bench.operating_point()
        current = op.current_a if self.input_on else 0.0
        gain, offset = self.readback_a
        return fmt(current * (1 + gain) + offset + self.noise.gauss(0.0, specs.LOAD_READBACK_NOISE_A))
