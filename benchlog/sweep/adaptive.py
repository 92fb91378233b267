"""Adaptive stepping: measure where the curve bends, then where the answer's uncertainty falls fastest, and stop at the target.

Three phases, all driven by the points measured so far:

1. a coarse grid over [start_a, stop_a] (geometric for a diode, whose knee sits at
   low current; linear for a channel or resistor);
2. refinement of the bends: the interior point with the largest turning angle of
   the normalised curve gets a new point in its longer neighbouring segment,
   until every angle is small or the segments are short;
3. precision: points where they reduce the uncertainty of the answer most. For a
   straight line the slope's variance is smallest with the points split between
   the two ends of the range (the D-optimal design for a line: a textbook
   result of optimal experimental design, common practice), so R_on gets points
   at start_a and stop_a in turn. For a diode the drop at the operating current
   is best pinned by points at and next to that current.

After every point (once there are enough for a fit) the answer is fitted —
R_on for a channel or resistor, the drop at the operating current for a diode —
and the sweep stops as soon as its relative standard uncertainty (type A and
B, as the fits report it) reaches `target_rel_u`, or at `count` points.
"""

from __future__ import annotations

import math
from collections import deque
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from benchlog.runs.events import Point

from .plan import Plan
from .steps import Step

#: Turning angle (normalised axes) above which a bend is refined further.
BEND_RAD = math.radians(12.0)
#: A segment shorter than this (normalised length) is not split again.
MIN_SEGMENT = 0.04


def _fits():
    try:
        from benchlog.analysis.fits import FitError, fit_diode, fit_resistive
    except ImportError:
        from benchlog.analysis.fit_diode import fit_diode
        from benchlog.analysis.fit_resistive import fit_resistive
        from benchlog.analysis.fit_result import FitError
    return fit_resistive, fit_diode, FitError


@dataclass(frozen=True)
class AdaptiveState:
    """Where adaptive stepping stands: the answer's relative uncertainty and why it stopped (if it did)."""

    quantity: str
    value: float | None
    rel_u: float | None
    points: int
    reached: bool
    reason: str


class AdaptiveSteps:
    def __init__(self, plan: Plan, accuracy: Any = None) -> None:
        s = plan.steps
        self.start_a = float(s.start_a)
        self.stop_a = float(s.stop_a)
        self.cap = int(s.count)
        self.planned = self.cap
        self.target = float(s.target_rel_u)
        self.diode = plan.element.behaves_as_diode
        self.temperature_c = plan.element.ambient_c
        op = plan.element.operating_a if plan.element.operating_a is not None else self.stop_a
        self.operating_a = min(max(op, self.start_a), self.stop_a)
        self.accuracy = accuracy
        self.min_points = 6 if self.diode else 4
        self.explore_until = max(self.min_points + 2, self.cap // 2)
        self._queue: deque[float] = deque(self._initial())
        self._precision_turn = 0
        self._explored = False
        self._spent_bends: set[tuple[float, float]] = set()
        self.state = AdaptiveState(self.quantity, None, None, 0, False, "not started")

    @property
    def quantity(self) -> str:
        return f"drop at {self.operating_a:g} A" if self.diode else "R_on"

    def use_accuracy(self, accuracy: Any) -> None:
        """The meter accuracy from the run header, so the stopping rule uses the full GUM budget."""
        self.accuracy = accuracy

    def _initial(self) -> list[float]:
        if self.diode:
            grid = list(np.geomspace(self.start_a, self.stop_a, 5))
            if not any(math.isclose(self.operating_a, g, rel_tol=0.05) for g in grid):
                grid.append(self.operating_a)
            return sorted(float(g) for g in grid)
        return [float(g) for g in np.linspace(self.start_a, self.stop_a, 4)]

    # -- the step source interface ------------------------------------------
    def next_step(self, points: Sequence[Point]) -> Step | None:
        n = len(points)
        if n >= self.min_points:
            self._evaluate(points)
            if self.state.reached:
                return None
        if n >= self.cap:
            self.state = AdaptiveState(self.quantity, self.state.value, self.state.rel_u, n, False,
                                       f"stopped at the {self.cap}-point cap before the target "
                                       f"{self.target:.3g} was reached")
            return None
        if self._queue:
            return Step(self._queue.popleft())
        if not self._explored and n < self.explore_until:
            refined = self._refine(points)
            if refined is not None:
                return Step(refined)
        self._explored = True
        return Step(self._precision())

    # -- phases ----------------------------------------------------------------
    def _refine(self, points: Sequence[Point]) -> float | None:
        """A new current in the longer segment beside the sharpest bend, or None when the curve is smooth."""
        by_current: dict[float, list[float]] = {}
        for p in points:
            by_current.setdefault(p.setpoint_a, []).append(p.drop_v)
        i = np.array(sorted(by_current))
        if i.size < 3:
            return None
        v = np.array([float(np.mean(by_current[c])) for c in i])
        span_v = float(v.max() - v.min())
        if span_v <= 0:
            return None
        x = (i - self.start_a) / (self.stop_a - self.start_a)
        y = (v - v.min()) / span_v
        seg = np.hypot(np.diff(x), np.diff(y))
        heading = np.arctan2(np.diff(y), np.diff(x))
        turn = np.abs(np.diff(heading))
        for k in np.argsort(turn)[::-1]:
            if turn[k] < BEND_RAD:
                return None
            # interior point k+1 sits between segments k and k+1: split the longer one
            j = k if seg[k] >= seg[k + 1] else k + 1
            if seg[j] < MIN_SEGMENT:
                continue
            a, b = float(i[j]), float(i[j + 1])
            if (a, b) in self._spent_bends:
                continue
            self._spent_bends.add((a, b))
            return math.sqrt(a * b) if self.diode and a > 0 else 0.5 * (a + b)
        return None

    def _precision(self) -> float:
        self._precision_turn += 1
        if self.diode:
            cycle = (1.0, 0.85, 1.15)
            c = self.operating_a * cycle[(self._precision_turn - 1) % len(cycle)]
            return min(max(c, self.start_a), self.stop_a)
        return self.stop_a if self._precision_turn % 2 else self.start_a

    def _evaluate(self, points: Sequence[Point]) -> None:
        fit_resistive, fit_diode, FitError = _fits()
        i = np.fromiter((p.current_a for p in points), float, len(points))
        v = np.fromiter((p.drop_v for p in points), float, len(points))
        n = len(points)
        try:
            if self.diode:
                fit = fit_diode(i, v, self.accuracy, temperature_c=self.temperature_c)
                value, u = fit.drop_at(self.operating_a)
            else:
                fit = fit_resistive(i, v, self.accuracy)
                value, u = fit.params["r_on_ohm"], fit.std_u["r_on_ohm"]
        except (FitError, ValueError, FloatingPointError) as exc:
            self.state = AdaptiveState(self.quantity, None, None, n, False, f"no fit yet ({exc})")
            return
        rel = abs(u / value) if value and math.isfinite(u) else math.inf
        reached = rel <= self.target
        reason = (f"{self.quantity} relative standard uncertainty {rel:.3g} "
                  f"{'reached' if reached else 'above'} the target {self.target:.3g} after {n} points")
        self.state = AdaptiveState(self.quantity, float(value), float(rel), n, reached, reason)
