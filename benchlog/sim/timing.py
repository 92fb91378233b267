"""How long the simulated instruments take: meter integration and the settling of a new setpoint.

Two timings (`SimConfig.timing`):

* ``"real"`` (the default): every reading takes its integration time and a new
  setpoint reaches its value along a first-order step response, so a time
  measured on the simulated bench is a time real instruments could reach;
* ``"instant"``: readings answer at once and setpoints take effect at once, for
  tests that do not test timing.

Integration time of one reading is t = NPLC / f_line (common practice: one
power-line cycle is 20 ms at 50 Hz, 16.67 ms at 60 Hz); a reading of N samples
takes N·t.

Settling is the step response of a first-order system, x(t) = x1 + (x0 - x1)·e^(-t/τ)
(any control-systems handbook; common practice for a regulated output away from
its slew limit). The time constants in `specs` are invented, of the size bench
supplies and electronic loads commonly show (from memory: a supply's programming
response settles in milliseconds, a load's current in a fraction of one).
"""

from __future__ import annotations

import math

TIMINGS = ("real", "instant")

#: beyond this many time constants the residual (e^-40 ≈ 4e-18) is below any float difference that matters
_SETTLED_TAUS = 40.0


def integration_time_s(nplc: float, line_frequency_hz: float, samples: int = 1) -> float:
    """t = samples · NPLC / f_line."""
    return samples * nplc / line_frequency_hz


class FirstOrder:
    """A quantity that moves to each new target along x1 + (x0 - x1)·e^(-(t - t_step)/τ).

    With τ = 0 (instant timing) the target holds at once. The value is exact, not
    stepped, so it does not depend on how often it is looked at.
    """

    def __init__(self, tau_s: float, value: float = 0.0, now_s: float = 0.0) -> None:
        if not tau_s >= 0.0:
            raise ValueError(f"tau_s must be >= 0, got {tau_s!r}")
        self.tau_s = float(tau_s)
        self.start = float(value)
        self.target = float(value)
        self.step_at_s = float(now_s)

    def value(self, now_s: float) -> float:
        dt = now_s - self.step_at_s
        if self.tau_s == 0.0 or dt >= _SETTLED_TAUS * self.tau_s or self.start == self.target:
            return self.target
        if dt <= 0.0:
            return self.start
        return self.target + (self.start - self.target) * math.exp(-dt / self.tau_s)

    def aim(self, target: float, now_s: float) -> None:
        """Start moving to `target` from wherever the value is at `now_s`."""
        target = float(target)
        if target == self.target:
            return
        self.start = self.value(now_s)
        self.target = target
        self.step_at_s = float(now_s)

    def jump(self, value: float, now_s: float) -> None:
        """Be at `value` from `now_s` on (an output switched off drops at once)."""
        self.start = self.target = float(value)
        self.step_at_s = float(now_s)
