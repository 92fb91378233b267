"""`w` in the lot view: the one-row-per-run summary of the lot's parts, the rows `benchlog summary` writes.

Parts are measured on the scripted bench with the real keys (`n`, the serial, Enter); the
reference is the CLI's `benchlog summary --spec` over the same run files (one function,
`report.summary_rows`, whichever way it is asked).
"""

from __future__ import annotations

import csv

from benchlog.cli import main

from .test_views import make_app, settle
from benchlog.tui.views.caution import CautionScreen


async def test_w_in_the_lot_view_writes_the_lots_summary(scripted, runs_dir, demo_files, tmp_path):
    scripted.r_by_serial = {"W0": 0.027, "W1": 0.028, "W2": 0.040}  # invented parts; W2 above the 35 mΩ maximum
    app = make_app(scripted, runs_dir, demo_files)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("5")
        await pilot.press("w")
        assert "nothing to sum up" in app.messages[-1]
        for k in range(3):
            await pilot.press("n", *f"W{k}", "enter")
            if k == 0:
                await settle(pilot, app, lambda: isinstance(app.screen, CautionScreen))
                await pilot.press("y")
            await settle(pilot, app, lambda: len(app.state.lot) == k + 1 and app.state.lot_pending_serial is None
                         and app.state.lot_summary is not None and app.state.lot_summary.n == k + 1, timeout=20)
        assert "w Summary" in str(app.screen.query_one("#keybar").render())
        await pilot.press("w")
        await settle(pilot, app, lambda: "written" in app.messages[-1], timeout=30)
        written = sorted(runs_dir.glob("summary-*.csv"))
        assert len(written) == 1 and written[0].with_suffix(".xlsx").is_file()
        runs = [str(e.run_path) for e in app.state.lot]
    reference = tmp_path / "cli.csv"
    assert main(["summary", *runs, "--spec", str(demo_files[1]), "-o", str(reference)]) == 0
    ours = list(csv.DictReader(written[0].open(encoding="utf-8")))
    assert ours == list(csv.DictReader(reference.open(encoding="utf-8")))
    assert [r["serial"] for r in ours] == ["W0", "W1", "W2"] and ours[2]["verdict"] == "fail"
