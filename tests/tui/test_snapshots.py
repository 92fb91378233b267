"""SVG snapshots of the main views with deterministic data (pytest-textual-snapshot).

Invented data, fixed times and a relative run folder, so the pictures do not
change between machines. Update after a deliberate change with
`python -m pytest tests/tui/test_snapshots.py --snapshot-update` and review the SVGs.
"""

from __future__ import annotations

import pytest

from . import scenes


@pytest.fixture
def scene_dir(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    return tmp_path


@pytest.mark.parametrize("name", ["probed", "live_view", "results_view", "lot_view", "archive_view", "caution"])
def test_main_views_at_80x24(snap_compare, scene_dir, name):
    app = scenes.scene_app(scene_dir)
    assert snap_compare(app, terminal_size=(80, 24), run_before=getattr(scenes, name))


def test_archive_view_on_an_archive_at_80x24(snap_compare, scene_dir):
    app = scenes.scene_archive_app(scene_dir)
    assert snap_compare(app, terminal_size=(80, 24), run_before=scenes.archive_db_view)


def test_trend_of_an_archive_at_80x24(snap_compare, scene_dir):
    app = scenes.scene_trend_app(scene_dir)
    assert snap_compare(app, terminal_size=(80, 24), run_before=scenes.trend_view)


def test_results_view_at_120x36(snap_compare, scene_dir):
    app = scenes.scene_app(scene_dir)
    assert snap_compare(app, terminal_size=(120, 36), run_before=scenes.results_view)
