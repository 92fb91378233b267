"""The app's cycle-collector settings: applied while the app runs, put back after, garbage still collected."""

from __future__ import annotations

import gc

from benchlog.tui.collector import CollectorPolicy


def test_policy_raises_the_young_threshold_freezes_and_puts_everything_back():
    saved = gc.get_threshold()
    policy = CollectorPolicy(young=12_345)
    policy.start()
    try:
        assert gc.get_threshold() == (max(12_345, saved[0]), saved[1], saved[2])
        assert gc.get_freeze_count() > 0  # the objects alive at start are no longer walked
        policy.start()  # a second start changes nothing
        assert gc.get_threshold()[0] == max(12_345, saved[0])
    finally:
        policy.stop()
    assert gc.get_threshold() == saved and gc.get_freeze_count() == 0
    policy.stop()  # a second stop changes nothing
    assert gc.get_threshold() == saved


def test_cycles_made_while_the_policy_is_on_are_still_collected():
    import weakref

    class Node:
        pass

    policy = CollectorPolicy()
    policy.start()
    try:
        a, b = Node(), Node()
        a.other, b.other = b, a  # a reference cycle: only the cycle collector frees it
        probe = weakref.ref(a)
        del a, b
        gc.collect()
        assert probe() is None
    finally:
        policy.stop()
