"""The simulated electronic load: constant current only, input on/off, voltage and current readback.

With real timing (`SimConfig.timing`) the current reaches a new setting, or rises
from zero when the input is switched on, along a first-order response
(`specs.LOAD_SETTLE_TAU_S`); switched off it drops at once.
"""

from __future__ import annotations

from benchlog.scpi.tree import CommandError, CommandTree, bool_param, choice_param, number_param

from . import specs
from .device import ScpiDevice, fmt
from .specs import draw_fixed_error, spec_for
from .timing import FirstOrder

CURRENT = "[SOURce:]CURRent[:LEVel][:IMMediate][:AMPLitude]"


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
        self.bench.changed()
        self.input_on = bool_param(text, "input")
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
