"""Adaptive step placement on synthetic curves (no instruments): bends get points, straight lines get their ends."""

from __future__ import annotations

import math

import numpy as np

from benchlog.runs.events import Point
from benchlog.sweep.adaptive import AdaptiveSteps
from benchlog.sweep.plan import parse_plan

PLAN = """
[element]
id = "X"
kind = "{kind}"
operating_a = 1.0
[steps]
mode = "adaptive"
start_a = {start}
stop_a = 2.0
count = {count}
target_rel_u = {target}
[limits]
max_current_a = 2.0
compliance_v = 3.0
"""


def drive(steps, law, n_max=100, noise_v=0.0, seed=0):
    rng = np.random.default_rng(seed)
    points = []
    while len(points) < n_max:
        step = steps.next_step(points)
        if step is None:
            break
        v = law(step.setpoint_a) + rng.normal(0, noise_v)
        points.append(Point(len(points), float(len(points)), step.setpoint_a, step.setpoint_a, v))
    return points


def shockley(i):
    # V = n·Vt·ln(I/Is + 1) + I·Rs (Sze, Physics of Semiconductor Devices, ch. 2), n = 1.8, Is = 5 nA, Rs = 30 mΩ
    return 1.8 * 0.025693 * math.log1p(i / 5e-9) + 0.03 * i


def test_straight_line_gets_its_points_at_both_ends():
    steps = AdaptiveSteps(parse_plan(PLAN.format(kind="resistor", start=0.1, count=20, target=1e-12)))
    points = drive(steps, lambda i: 0.05 * i, noise_v=1e-6)
    assert len(points) == 20 and not steps.state.reached  # the impossible target runs to the cap
    later = [p.setpoint_a for p in points[4:]]
    # a straight line has no bend to refine: the rest alternate between the ends (D-optimal for a slope)
    assert set(later) == {0.1, 2.0}


def test_reachable_target_stops_early():
    steps = AdaptiveSteps(parse_plan(PLAN.format(kind="resistor", start=0.1, count=50, target=0.01)))
    points = drive(steps, lambda i: 0.05 * i, noise_v=1e-5)
    assert steps.state.reached and len(points) < 10
    assert steps.state.rel_u <= 0.01


def test_diode_knee_is_refined():
    steps = AdaptiveSteps(parse_plan(PLAN.format(kind="rectifier", start=0.001, count=30, target=1e-12)))
    points = drive(steps, shockley, noise_v=1e-5)
    distinct = sorted({p.setpoint_a for p in points})
    grid = {0.001, 0.0067, 0.0447, 0.2991, 1.0, 2.0}  # geometric start grid (rounded) and the operating current
    added = [c for c in distinct if not any(math.isclose(c, g, rel_tol=1e-3) for g in grid)]
    in_bend = [c for c in added if 0.0447 < c < 0.2991]
    on_straight = [c for c in added if c > 0.2991]
    assert in_bend and len(in_bend) / (0.2991 - 0.0447) > 3 * len(on_straight) / (2.0 - 0.2991)
    assert any(math.isclose(p.setpoint_a, 1.0) for p in points[len(distinct):])  # then the operating current
