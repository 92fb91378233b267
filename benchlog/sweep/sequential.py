"""Stepping for incoming inspection that stops once the part's verdict is decided (`[inspection] stop_when_decided`).

The plan's fixed schedule is measured nearest the operating current first; from `first_look` points on, after
every point, the drop at the operating current is fitted (with its GUM standard
uncertainty, type A and B, as the fits give it) and judged against the plan's
acceptance limit `[inspection].max_drop_v` with a group-sequential guard band
(O'Brien-Fleming, `benchlog.analysis.sequential`): pass or fail ends the sweep,
conditional goes on, the end of the schedule ends it undecided. The boundary holds
the chance of a wrong pass for a part on its limit to half that of one look with k = 2.
The run file is an ordinary run of the points taken; the decision is a note in it,
and `benchlog check` judges the run as it judges any other.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from benchlog.runs.events import Point

from .plan import Plan
from .steps import FixedSteps, Step, schedule


@dataclass(frozen=True)
class InspectionState:
    """Where the inspection stands; `reason` becomes the run's note."""

    outcome: str  # "pass" | "fail" | "conditional" | "not judged"
    points: int
    reason: str


class SequentialSteps:
    """The plan's fixed schedule, cut short once the verdict at the operating current is decided."""

    label = "inspection"

    def __init__(self, plan: Plan, accuracy: Any = None) -> None:
        from benchlog.analysis.sequential import band_factors, boundary_constant, inspection_alpha

        ins = plan.inspection
        assert ins is not None
        # The points nearest the operating current first (stable for ties): the first looks then
        # bracket it, so the drop there is read off the fit, not extrapolated.
        op = float(plan.element.operating_a)
        self._fixed = FixedSteps(sorted(schedule(plan.steps), key=lambda s: abs(s.setpoint_a - op)))
        self.planned = self._fixed.planned
        self.first_look = min(ins.first_look, self.planned)
        self.limit_v = float(ins.max_drop_v)
        self.diode = plan.element.behaves_as_diode
        self.temperature_c = plan.element.ambient_c
        self.operating_a = float(plan.element.operating_a)
        self.accuracy = accuracy
        levels = tuple(float(n) for n in range(self.first_look, self.planned + 1))
        self.looks = len(levels)
        self.alpha = inspection_alpha()
        self.c = boundary_constant(self.looks, self.alpha, levels)
        self.factors = band_factors(self.looks, levels)
        self.state = InspectionState("not judged", 0, "not judged yet")

    def use_accuracy(self, accuracy: Any) -> None:
        """The meter accuracy from the run header, so each look uses the full GUM budget."""
        self.accuracy = accuracy

    def next_step(self, points: Sequence[Point]) -> Step | None:
        n = len(points)
        if n >= self.first_look and self._judge(points) in ("pass", "fail"):
            return None
        step = self._fixed.next_step(points)
        if step is None and self.state.outcome == "conditional":
            self.state = InspectionState("conditional", n, self.state.reason + "; the schedule ended undecided")
        return step

    def _judge(self, points: Sequence[Point]) -> str:
        from benchlog.analysis.sequential import judge_look

        from .adaptive import _fits

        fit_resistive, fit_diode, FitError = _fits()
        n = len(points)
        i = np.fromiter((p.current_a for p in points), float, n)
        v = np.fromiter((p.drop_v for p in points), float, n)
        try:
            fit = (fit_diode(i, v, self.temperature_c, self.accuracy) if self.diode
                   else fit_resistive(i, v, self.accuracy))
            value, u = fit.drop_at(self.operating_a)
        except (FitError, ValueError, FloatingPointError) as exc:
            self.state = InspectionState("conditional", n, f"no fit after {n} points ({exc})")
            return "conditional"
        if not (math.isfinite(value) and math.isfinite(u)):
            self.state = InspectionState("conditional", n, f"no finite drop at {self.operating_a:g} A after {n} points")
            return "conditional"
        k = n - self.first_look  # 0-based look
        look = judge_look(value, u, self.limit_v, self.c * self.factors[k], k + 1, self.looks)
        verb = "decided" if look.outcome in ("pass", "fail") else "not decided"
        self.state = InspectionState(look.outcome, n, (
            f"{verb} {look.outcome} at look {k + 1} of {self.looks} after {n} points: drop at "
            f"{self.operating_a:g} A {value:.6g} V, guard band {look.band:.3g} V "
            f"({self.c * self.factors[k]:.3g} u, O'Brien-Fleming boundary, one-sided alpha {self.alpha:.4f}, "
            f"half that of one look with k = 2) against max_drop_v {self.limit_v:g} V"))
        return look.outcome
