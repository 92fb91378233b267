"""The archive's compare action: mark A and B with the footer's keys, press c, read d ± U(d)."""

from __future__ import annotations

from benchlog.analysis.compare import compare_runs
from benchlog.quantity import measured
from benchlog.runs import load

from .synthetic import screen_text
from .test_views import make_app, settle


async def test_compare_two_marked_runs_with_the_footer_keys(scripted, runs_dir, demo_files, archive):
    app = make_app(scripted, runs_dir, demo_files, start_view="archive")
    async with app.run_test(size=(140, 36)) as pilot:
        await settle(pilot, app, lambda: "A1" in screen_text(app) and "A2" in screen_text(app))
        footer = screen_text(app)
        assert "c Compare" in footer and "Mark A" in footer and "Mark B" in footer
        await pilot.press("c")  # nothing marked yet: one sentence, no screen
        await pilot.pause(0.1)
        assert "Mark two runs first" in app.messages[-1]
        await pilot.press("a", "down", "b", "c")  # newest first: A = A2, B = A1
        await settle(pilot, app, lambda: "SIGNIFICANT" in screen_text(app) or "✘" in screen_text(app))
        text = screen_text(app)
        assert "Compare" in text and "R_on" in text
        # the same numbers the analysis gives for these two files (27 mΩ against 30 mΩ: significant)
        c = compare_runs([load(archive[1]), load(archive[0])])
        d = next(x for x in c.rows[0] if x.quantity == "r_on_ohm")
        assert d.significant
        assert measured(d.d, d.expanded_u_d, "Ω", None) in text
        await pilot.press("escape")
        await pilot.pause(0.1)
        assert app.current_mode == "archive"
