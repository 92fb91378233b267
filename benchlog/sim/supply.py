"""The simulated DC supply: CV/CC crossover, programming and readback error, protection trip, polarity switch.

With real timing (`SimConfig.timing`) the output voltage and current limit reach
a new setting, or rise from zero when the output is switched on, along a
first-order response (`specs.SUPPLY_SETTLE_TAU_S`); switched off they drop at once.

STATus:OPERation:CONDition? reports bit 8 (256) in CV and bit 10 (1024) in CC,
0 with the output off. Readback is the magnitude at the supply's own
terminals, before the polarity switch (as with a polarity relay on the output).

The supply's own protection, a second line of defence behind the bench's
limits: over-voltage and over-current levels and an output timer, each off
until programmed. A level exceeded, or the timer run out, switches the output
off; a level trip reads 1 on OUTPut:PROTection:TRIPped? until CLEar.
"""

from __future__ import annotations

from benchlog.scpi.tree import CommandError, CommandTree, bool_param, choice_param, number_param

from . import specs
from .device import ScpiDevice, fmt
from .specs import draw_fixed_error, spec_for
from .timing import FirstOrder

CV_BIT = 256
CC_BIT = 1024
VOLTAGE = "[SOURce:]VOLTage[:LEVel][:IMMediate][:AMPLitude]"
CURRENT = "[SOURce:]CURRent[:LEVel][:IMMediate][:AMPLitude]"


class SupplySim(ScpiDevice):
    model = "SIM-SUPPLY"

    def __init__(self, bench, role: str, serial: str) -> None:
        rng = bench.stream(f"{role}/errors")

        self.program_v = draw_fixed_error(rng, spec_for(specs.SUPPLY_PROGRAMMING, "program_voltage"))
        self.program_a = draw_fixed_error(rng, spec_for(specs.SUPPLY_PROGRAMMING, "program_current"))
        self.readback_v = draw_fixed_error(rng, spec_for(specs.SUPPLY_READBACK, "readback_voltage"))
        self.readback_a = draw_fixed_error(rng, spec_for(specs.SUPPLY_READBACK, "readback_current"))
        self.noise = bench.stream(f"{role}/noise")
        self.tripped = False
        self.stuck_on = False  # fault: the output ignores "off" (OUTPut:STATe? still tells the truth)
        tau = specs.SUPPLY_SETTLE_TAU_S if bench.config.timing == "real" else 0.0
        self.voltage_out = FirstOrder(tau, 0.0, bench.clock())
        self.limit_out = FirstOrder(tau, 0.0, bench.clock())
        super().__init__(bench, role, serial)

    def reset(self) -> None:
        self.voltage_set_v = 0.0
        self.current_set_a = 0.1
        self.output_on = False
        self.inverted = False
        self.ovp_v: float | None = None
        self.ocp_a: float | None = None
        self.timer_s: float | None = None
        self.on_since: float | None = None
        self.settings_changed()

    # -- actual output (with programming error) ---------------------------------------------------
    @property
    def programmed_voltage_v(self) -> float:
        gain, offset = self.program_v
        return max(0.0, self.voltage_set_v * (1 + gain) + offset) if self.voltage_set_v > 0 else 0.0

    @property
    def programmed_current_limit_a(self) -> float:
        gain, offset = self.program_a
        return max(0.0, self.current_set_a * (1 + gain) + offset) if self.current_set_a > 0 else 0.0

    def actual_voltage_v(self, at_s: float) -> float:
        """The output voltage setting as it has settled by `at_s` (bench clock)."""
        return self.voltage_out.value(at_s)

    def actual_current_limit_a(self, at_s: float) -> float:
        return self.limit_out.value(at_s)

    def settings_changed(self) -> None:
        """Start settling towards the present settings (switched off: zero at once)."""
        now = self.bench.clock()
        if self.output_on:
            self.voltage_out.aim(self.programmed_voltage_v, now)
            self.limit_out.aim(self.programmed_current_limit_a, now)
        else:
            self.voltage_out.jump(0.0, now)
            self.limit_out.jump(0.0, now)

    def trip(self) -> None:
        """Protection trip: output off until OUTPut:PROTection:CLEar."""
        self.bench.changed()
        self.tripped = True
        self.output_on = False
        self.settings_changed()

    # -- SCPI ---------------------------------------------------------------------------------------
    def build(self, tree: CommandTree) -> None:
        tree.command(VOLTAGE, self._set_voltage, 1)
        tree.query(VOLTAGE + "?", lambda: fmt(self.voltage_set_v))
        tree.command(CURRENT, self._set_current, 1)
        tree.query(CURRENT + "?", lambda: fmt(self.current_set_a))
        tree.command("OUTPut[:STATe]", self._set_output, 1)
        tree.query("OUTPut[:STATe]?", lambda: "1" if self.output_on else "0")
        tree.query("MEASure[:SCALar]:VOLTage[:DC]?", self._measure_voltage)
        tree.query("MEASure[:SCALar]:CURRent[:DC]?", self._measure_current)
        tree.query("STATus:OPERation:CONDition?", self._condition)
        tree.query("OUTPut:PROTection:TRIPped?", lambda: "1" if self.tripped else "0")
        tree.command("OUTPut:PROTection:CLEar", self._clear_protection)
        tree.command("[SOURce:]VOLTage:PROTection[:LEVel]", self._set_ovp, 1)
        tree.query("[SOURce:]VOLTage:PROTection[:LEVel]?", lambda: fmt(self.ovp_v or 0.0))
        tree.command("[SOURce:]CURRent:PROTection[:LEVel]", self._set_ocp, 1)
        tree.query("[SOURce:]CURRent:PROTection[:LEVel]?", lambda: fmt(self.ocp_a or 0.0))
        tree.command("OUTPut:PROTection:TIMer", self._set_timer, 1)
        tree.query("OUTPut:PROTection:TIMer?", lambda: fmt(self.timer_s or 0.0))
        tree.command("OUTPut:POLarity", self._set_polarity, 1)
        tree.query("OUTPut:POLarity?", lambda: "INV" if self.inverted else "NORM")

    def _set_voltage(self, text: str) -> None:
        self.bench.changed()
        self.voltage_set_v = number_param(text, lo=0.0, hi=specs.SUPPLY_MAX_VOLTAGE_V, default=0.0,
                                          name="voltage", unit=" V")
        self.settings_changed()

    def _set_current(self, text: str) -> None:
        self.bench.changed()
        self.current_set_a = number_param(text, lo=0.0, hi=specs.SUPPLY_MAX_CURRENT_A, default=0.1,
                                          name="current limit", unit=" A")
        self.settings_changed()

    def _set_output(self, text: str) -> None:
        on = bool_param(text, "output")
        if not on and self.stuck_on and self.output_on:
            return
        if on and self.tripped:
            raise CommandError(-200, "output protection tripped; send OUTPut:PROTection:CLEar first")
        self.bench.changed()
        if on and not self.output_on:
            self.on_since = self.bench.clock()
        self.output_on = on
        self.settings_changed()

    def _set_ovp(self, text: str) -> None:
        value = number_param(text, lo=0.0, hi=specs.SUPPLY_MAX_VOLTAGE_V * 1.1, default=0.0,
                             name="over-voltage level", unit=" V")
        self.ovp_v = value or None  # 0 switches the protection off

    def _set_ocp(self, text: str) -> None:
        value = number_param(text, lo=0.0, hi=specs.SUPPLY_MAX_CURRENT_A * 1.1, default=0.0,
                             name="over-current level", unit=" A")
        self.ocp_a = value or None

    def _set_timer(self, text: str) -> None:
        value = number_param(text, lo=0.0, hi=1e6, default=0.0, name="output timer", unit=" s")
        self.timer_s = value or None

    def check_protection(self) -> None:
        """Switch off on an exceeded level or an expired timer (called around every message)."""
        if not self.output_on:
            return
        if self.timer_s is not None and self.on_since is not None \
                and self.bench.clock() - self.on_since >= self.timer_s:
            self.bench.changed()
            self.output_on = False
            self.settings_changed()
            return
        if self.ovp_v is None and self.ocp_a is None:
            return
        op = self.bench.operating_point()
        if (self.ovp_v is not None and op.supply_v > self.ovp_v) or \
                (self.ocp_a is not None and abs(op.current_a) > self.ocp_a):
            self.trip()

    def _clear_protection(self) -> None:
        self.tripped = False

    def _set_polarity(self, text: str) -> None:
        inverted = choice_param(text, ("NORMal", "INVerted"), "polarity") == "INVerted"
        if inverted != self.inverted and self.output_on:
            raise CommandError(-221, "polarity can only change with the output off")
        self.bench.changed()
        self.inverted = inverted

    def _measure_voltage(self) -> str:
        op = self.bench.operating_point()
        gain, offset = self.readback_v
        value = op.supply_v * (1 + gain) + offset + self.noise.gauss(0.0, specs.SUPPLY_READBACK_NOISE_V)
        return fmt(value)

    def _measure_current(self) -> str:
        op = self.bench.operating_point()
        gain, offset = self.readback_a
        value = abs(op.current_a) * (1 + gain) + offset + self.noise.gauss(0.0, specs.SUPPLY_READBACK_NOISE_A)
        return fmt(value)

    def _condition(self) -> str:
        mode = self.bench.operating_point().supply_mode
        return str({"CV": CV_BIT, "CC": CC_BIT}.get(mode, 0))
