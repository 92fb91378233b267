"""The live view's fold of the event stream: progress, ETA, how close the run is to each limit."""

from __future__ import annotations

import numpy as np
import pytest

from benchlog.runs.events import Point, RunFinished, RunStarted
from benchlog.sweep.plan import parse_plan
from benchlog.sweep.steps import schedule
from benchlog.tui.feed import EventFeed
from benchlog.runs.record import PlanRecord, freeze
from benchlog.tui.liverun import LiveRun

from .synthetic import PLAN_TEXT, events, header


@pytest.mark.parametrize("steps", [
    'mode = "linear"\nstart_a = 0.1\nstop_a = 3.0\ncount = 30',
    'mode = "log"\nstart_a = 0.01\nstop_a = 3.0\ncount = 12',
    'mode = "updown"\nstart_a = 0.1\nstop_a = 3.0\ncount = 10',
    'mode = "list"\ncurrents_a = [0.5, 1.0, 2.0]',
])
def test_planned_points_match_the_sweep_schedule(steps):
    text = PLAN_TEXT.replace('mode = "linear"\nstart_a = 0.1\nstop_a = 3.0\ncount = 30', steps)
    plan = parse_plan(text, "plan")
    assert PlanRecord(freeze(plan.to_dict())).planned_points() == len(schedule(plan.steps))


def test_progress_and_eta_from_point_times():
    live = LiveRun()
    evs = events(n=30)
    live.apply(evs[:12])  # header, offset, 10 points at 0.25 s spacing
    progress = live.progress()
    assert progress.done == 10 and progress.planned == 30
    assert progress.eta_s == pytest.approx(20 * 0.25)
    live.apply(evs[12:])
    assert live.progress().eta_s == 0.0 and live.finished is not None


def test_limit_use_is_the_worst_value_over_the_limit():
    live = LiveRun()
    live.apply([RunStarted(header()),
                Point(0, 1.0, 1.0, 1.0, 0.1, supply_v=2.5, supply_mode="CC"),
                Point(1, 2.0, 1.6, 1.6, 0.2, supply_v=1.0, supply_mode="CC")])
    uses = {u.key: u for u in live.limits()}
    assert uses["max_current_a"].fraction == pytest.approx(1.6 / 3.2)
    assert uses["compliance_v"].fraction == pytest.approx(2.5 / 15.0)
    assert uses["max_power_w"].fraction == pytest.approx(0.32 / 1.0)
    assert uses["max_time_s"].worst == pytest.approx(2.0)


def test_feed_drops_events_of_a_superseded_run():
    feed = EventFeed()
    old = feed.reset()
    new = feed.reset()
    feed.push(RunFinished(1.0, "complete", 0), old)
    feed.push(RunFinished(2.0, "complete", 0), new)
    assert [e.t_s for e in feed.drain()] == [2.0]
    assert feed.drain() == []


def _reference_arrays(points):
    """The columns rebuilt from every point, the way a redraw used to do it."""
    current = np.array([p.current_a for p in points], dtype=float)
    drop = np.array([p.drop_v for p in points], dtype=float)
    supply = np.array([np.nan if p.supply_v is None else p.supply_v for p in points], dtype=float)
    return {"current_a": current, "drop_v": drop, "power_w": current * drop, "supply_v": supply}


def test_growing_columns_hold_every_point_in_order_across_reallocations():
    rng = np.random.default_rng(7)
    live = LiveRun()
    live.apply([RunStarted(header())])
    points, kept = [], []
    for _ in range(60):  # batches of random size cross the 1024-point capacity several times
        batch = []
        for _ in range(int(rng.integers(0, 200))):
            i = len(points)
            supply = None if rng.random() < 0.1 else float(rng.normal(5.0, 3.0))
            batch.append(Point(i, i * 0.01, float(rng.uniform(0, 3)), float(rng.normal(1.5, 1.0)),
                               float(rng.normal(0.0, 0.05)), supply_v=supply, supply_mode="CC"))
            points.append(batch[-1])
        live.apply(batch)
        data = live.arrays()
        kept.append((len(points), {k: v.copy() for k, v in data.items()}, data))
        reference = _reference_arrays(points)
        for key, values in reference.items():
            assert np.array_equal(data[key], values, equal_nan=True), key
            finite = values[np.isfinite(values)]
            assert live.worst_abs(key) == (float(np.max(np.abs(finite))) if len(finite) else 0.0)
    assert len(points) > 4 * 1024
    for count, copy, views in kept:  # a view handed out earlier never changes under later appends
        for key in copy:
            assert len(views[key]) == count and np.array_equal(views[key], copy[key], equal_nan=True)


def test_arrays_are_the_same_objects_until_a_point_arrives():
    live = LiveRun()
    evs = events(n=30)
    live.apply(evs[:5])
    first = live.arrays()
    assert live.arrays() is first
    live.apply(evs[5:6])
    assert live.arrays() is not first and len(live.arrays()["current_a"]) == len(first["current_a"]) + 1
