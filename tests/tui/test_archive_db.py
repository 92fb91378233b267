"""The archive view on a real archive: the rows come from the database, filtered by typed words, with a
serial's history, the trend chart of a fitted quantity and the summary of the marked runs.

The archive is filled the way a lab fills it: `benchlog archive add` over the
recorded sample runs (`sample_runs/`, real recordings of the simulated bench),
the lot judged against its demo spec. Every check presses the keys the footer
names. The answers are held against what the CLI says from the same database
(`archive find/history/trend --json`, `benchlog summary`): one computation,
whichever way it is asked. The control chart's own numbers are checked against
ISO 7870-2 in tests/store/test_control_chart.py.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from textual.widgets import Input

from benchlog.cli import main
from benchlog.tui.app import BenchApp
from benchlog.tui.archive_query import ArchiveChoice, choose_archive, parse_filter
from benchlog.tui.launch import demo_specs
from benchlog.tui.views.history import HistoryScreen
from benchlog.tui.views.trend import TrendScreen

from tests.store.conftest import postgres_server  # noqa: F401 -- the session's PostgreSQL server fixture
from tests.store.synthetic import write_lot

from .synthetic import screen_text
from .test_views import make_app, run_a_sweep, settle

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_runs"
PFET_SPEC = ROOT / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml"


def _fill(url: str, capsys) -> None:
    """The sample runs published with `archive add`; the lot judged against its spec (verdicts stored)."""
    assert main(["archive", "add", *map(str, sorted(SAMPLES.glob("*.run"))), "--db", url]) == 0
    assert main(["archive", "add", *map(str, sorted((SAMPLES / "lot-demo-07").glob("*.run"))),
                 "--spec", str(PFET_SPEC), "--db", url]) == 0
    capsys.readouterr()


def _cli_json(args: list[str], capsys) -> dict:
    capsys.readouterr()  # whatever was written before (the app under test writes nothing we need)
    assert main(args) == 0
    out = capsys.readouterr().out
    return json.loads(out[out.index("{"):])


@pytest.fixture
def sample_archive(tmp_path, capsys) -> str:
    url = f"sqlite:///{tmp_path / 'lab.sqlite'}"
    _fill(url, capsys)
    return url


def _app(url: str, runs_dir: Path, session=None, **kwargs) -> BenchApp:
    return BenchApp(session, runs_dir=runs_dir, specs=demo_specs(), start_view="archive",
                    archive=ArchiveChoice(url, "--db"), probe_on_start=False, **kwargs)


def _head(app) -> str:
    return str(app.screen.query_one("#archive-head").render())


def _serials(app) -> list[str]:
    return [e.serial for e in app.screen.entries]


async def _type_filter(pilot, app, text: str) -> None:
    """`/`, clear what the field holds, type, Enter."""
    await pilot.press("slash")
    await pilot.pause(0.05)
    assert isinstance(app.focused, Input)  # the key the footer names reaches the field
    await pilot.press(*(["backspace"] * (len(app.focused.value) + 1)))
    await pilot.press(*text, "enter")


async def test_the_list_comes_from_the_database_and_the_typed_filter_narrows_it(sample_archive, tmp_path, capsys):
    empty = tmp_path / "no-runs-here"
    empty.mkdir()  # nothing to scan: every row listed must come from the database
    failed = _cli_json(["archive", "find", "--lot", "LOT-DEMO-07", "--verdict", "fail", "--json",
                        "--db", sample_archive], capsys)["runs"]
    rectifiers = _cli_json(["archive", "find", "--kind", "rectifier", "--since", "2025-03-04", "--until",
                            "2025-03-04", "--json", "--db", sample_archive], capsys)["runs"]
    app = _app(sample_archive, empty)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot, app, lambda: len(app.screen.entries) == 28)
        head = _head(app)
        assert head.startswith(f" archive {sample_archive} (--db) · 28 runs"), head
        text = screen_text(app)
        assert "/ Filter" in text and "h History" in text and "t Trend" in text and "w Summary" in text
        assert "STOP" in text and "Quit" in text  # still on the 80×24 key bar
        newest_first = [e.started_utc for e in app.screen.entries]
        assert newest_first == sorted(newest_first, reverse=True)

        await _type_filter(pilot, app, "lot:LOT-DEMO-07 verdict:fail")
        want = failed
        assert want  # the lot holds a part above the spec maximum (sample_runs/README.md: L07-0006)
        await settle(pilot, app, lambda: sorted(_serials(app)) == sorted(r["serial"] for r in want))
        assert "FAIL" in screen_text(app) and "filter lot:LOT-DEMO-07 verdict:fail" in _head(app)

        await _type_filter(pilot, app, "colour:red")  # a word the filter does not know: said, list kept
        await pilot.pause(0.1)
        assert "Filter not applied" in app.messages[-1] and "'colour' is not a filter key" in app.messages[-1]
        assert sorted(_serials(app)) == sorted(r["serial"] for r in want)
        await pilot.press("escape")
        assert not isinstance(app.focused, Input)

        await _type_filter(pilot, app, "l07-001")  # a bare word: searched in serial, lot and part label
        await settle(pilot, app, lambda: len(app.screen.entries) == 10)
        assert sorted(_serials(app)) == [f"L07-{k:04d}" for k in range(10, 20)]

        await _type_filter(pilot, app, "kind:rectifier date:2025-03-04")
        await settle(pilot, app, lambda: sorted(e.run_id for e in app.screen.entries)
                     == sorted(r["run_id"] for r in rectifiers) and len(rectifiers) == 3)


async def test_h_shows_the_selected_serials_history_oldest_first(sample_archive, tmp_path, capsys):
    want = _cli_json(["archive", "history", "PROTO-0002", "--json", "--db", sample_archive], capsys)["runs"]
    app = _app(sample_archive, tmp_path)
    async with app.run_test(size=(100, 30)) as pilot:
        await settle(pilot, app, lambda: len(app.screen.entries) == 28)
        await _type_filter(pilot, app, "serial:PROTO-0002")  # the rectifier measured three times
        await settle(pilot, app, lambda: len(app.screen.entries) == 3)
        await pilot.press("h")
        await settle(pilot, app, lambda: isinstance(app.screen, HistoryScreen) and len(app.screen.runs) == 3)
        assert [r["run_id"] for r in app.screen.runs] == [r["run_id"] for r in want]
        text = screen_text(app)
        assert "3 measurement(s) of serial PROTO-0002, oldest first" in text
        assert "SIM-METER" in text and "ideality" in text  # the meter's *IDN? and the fitted value with U
        await pilot.press("escape")
        assert not isinstance(app.screen, HistoryScreen)


async def test_t_draws_the_clis_control_chart_of_the_filtered_runs(sample_archive, tmp_path, capsys):
    want = _cli_json(["archive", "trend", "r_on_ohm", "--by", "lot", "--kind", "pmos", "--json",
                      "--db", sample_archive], capsys)
    pmos = _cli_json(["archive", "find", "--kind", "pmos", "--json", "--db", sample_archive], capsys)["count"]
    app = _app(sample_archive, tmp_path)
    async with app.run_test(size=(100, 32)) as pilot:
        await settle(pilot, app, lambda: len(app.screen.entries) == 28)
        await _type_filter(pilot, app, "kind:pmos")
        await settle(pilot, app, lambda: len(app.screen.entries) == pmos)
        await pilot.press("t")
        await settle(pilot, app, lambda: isinstance(app.screen, TrendScreen) and app.screen.trend is not None)
        chart = app.screen.trend.chart
        assert list(chart.labels) == [s["name"] for s in want["subgroups"]]
        assert chart.centre == pytest.approx(want["centre"], rel=1e-12)
        assert list(chart.ucl) == pytest.approx([s["ucl"] for s in want["subgroups"]], rel=1e-12)
        words = " ".join(str(app.screen.query_one("#trend-text").render()).split())
        assert f"{want['chart']} chart of r_on_ohm by lot: {want['runs']} runs in 2 subgroups" in words
        assert "ISO 7870-2" in words and "3σ limits" in screen_text(app) and "filter kind:pmos" in screen_text(app)
        quantities = app.screen.quantities
        await pilot.press("n")  # the next fitted quantity the archive holds
        following = quantities[(quantities.index("r_on_ohm") + 1) % len(quantities)]
        await settle(pilot, app, lambda: app.screen.problem != "" or getattr(app.screen.trend, "quantity", "") == following)
        await pilot.press(*(["n"] * (len(quantities) - 1)))  # round to r_on_ohm again
        await settle(pilot, app, lambda: getattr(app.screen.trend, "quantity", "") == "r_on_ohm")
        await pilot.press("g")  # by day: one day of samples, one subgroup — no chart, and why
        await settle(pilot, app, lambda: app.screen.by == "day" and app.screen.problem != "")
        assert app.screen.trend is None and "No chart:" in screen_text(app)
        await pilot.press("escape")
        assert not isinstance(app.screen, TrendScreen)


async def test_a_run_rule_hit_is_marked_on_the_chart_as_the_cli_flags_it(tmp_path, capsys):
    url = f"sqlite:///{tmp_path / 'lots.sqlite'}"
    paths = []
    for i, (lot, r) in enumerate((("L1", 0.0100), ("L2", 0.0100), ("L3", 0.0108))):  # L3 8 % higher
        paths += write_lot(tmp_path / lot, lot, r, 5, day=f"2025-03-0{i + 1}", spread=0.01, seed=i + 1)
    assert main(["archive", "add", *map(str, paths), "--db", url]) == 0
    capsys.readouterr()
    want = _cli_json(["archive", "trend", "r_on_ohm", "--by", "lot", "--json", "--db", url], capsys)
    assert any(h["subgroup"] == "L3" and h["rule"] == 1 for h in want["rule_hits"])
    lots = _cli_json(["archive", "compare-lots", "L2", "L3", "--json", "--db", url], capsys)
    app = _app(url, tmp_path)
    async with app.run_test(size=(100, 32)) as pilot:
        await settle(pilot, app, lambda: len(app.screen.entries) == 15)
        await pilot.press("t")
        await settle(pilot, app, lambda: isinstance(app.screen, TrendScreen) and app.screen.trend is not None)
        hits = [(h.rule, app.screen.trend.chart.labels[h.index]) for h in app.screen.trend.chart.hits]
        assert hits == [(h["rule"], h["subgroup"]) for h in want["rule_hits"]]
        words = str(app.screen.query_one("#trend-text").render())
        assert "rule 1 (one point beyond 3σ) at 3 L3" in words
        plot = str(app.screen.query_one("#trend-plot").render())
        legend, canvas = plot.split("\n", 1)
        assert "! run rule" in legend and "!" in canvas  # the hit drawn on the chart itself
        await pilot.press("c")  # the newest lot against the one before: `archive compare-lots L2 L3`
        await settle(pilot, app, lambda: app.screen.comparison is not None)
        c = app.screen.comparison
        assert (c.a.name, c.b.name) == ("L2", "L3")
        assert c.difference == pytest.approx(lots["difference"], rel=1e-12)
        assert c.expanded_u_95 == pytest.approx(lots["difference_expanded_u_95"], rel=1e-12)
        assert c.p_two_sided == pytest.approx(lots["p_two_sided"], rel=1e-9)
        line = str(app.screen.query_one("#trend-compare").render())
        assert line.startswith(" L2 − L3: -") and "Welch's t-test" in line and "different at 5%" in line


async def test_w_writes_the_summary_of_the_marked_runs_as_the_cli_does(sample_archive, tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    app = _app(sample_archive, out)
    async with app.run_test(size=(100, 30)) as pilot:
        await settle(pilot, app, lambda: len(app.screen.entries) == 28)
        await _type_filter(pilot, app, "serial:PROTO-0001")
        await settle(pilot, app, lambda: len(app.screen.entries) == 1)
        await pilot.press("a")
        await _type_filter(pilot, app, "serial:PROTO-0007")
        await settle(pilot, app, lambda: len(app.screen.entries) == 1)
        await pilot.press("b", "w")
        await settle(pilot, app, lambda: "written" in app.messages[-1], timeout=30)
        written = sorted(out.glob("summary-*.csv"))
        assert len(written) == 1 and (written[0].with_suffix(".xlsx")).is_file()
        marked = [str(app.screen.marks["a"]), str(app.screen.marks["b"])]
    reference = tmp_path / "cli.csv"
    assert main(["summary", *marked, "--spec", str(PFET_SPEC), "-o", str(reference)]) == 0
    ours = list(csv.DictReader(written[0].open(encoding="utf-8")))
    cli = list(csv.DictReader(reference.open(encoding="utf-8")))
    assert ours == cli and [r["serial"] for r in ours] == ["PROTO-0001", "PROTO-0007"]


async def test_a_run_recorded_in_the_ui_is_published_and_listed(scripted, runs_dir, demo_files, tmp_path):
    url = f"sqlite:///{tmp_path / 'bench.sqlite'}"
    app = make_app(scripted, runs_dir, demo_files, archive=ArchiveChoice(url, "the bench file's [archive]"))
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot, app, lambda: all(r.state == "connected" for r in app.state.roles))
        await run_a_sweep(pilot, app)
        await settle(pilot, app, lambda: any("in the archive" in m for m in app.messages))
        await pilot.press("6")
        await settle(pilot, app, lambda: len(getattr(app.screen, "entries", [])) == 1)
        assert app.screen.entries[0].path == app.state.last_outcome.run_path


async def test_the_archive_view_reads_postgresql_as_a_read_only_viewer(postgres_server, tmp_path, capsys):  # noqa: F811
    if not postgres_server.started:
        pytest.skip(postgres_server.skip_reason)
    url = postgres_server.new_database()
    _fill(url, capsys)
    viewer = postgres_server.viewer_url(url)  # the README's read-only viewer role: SELECT only
    app = _app(viewer, tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot, app, lambda: len(app.screen.entries) == 28, timeout=30)
        assert _head(app).startswith(f" archive {viewer}")
        await _type_filter(pilot, app, "lot:LOT-DEMO-07 l07-000")
        await settle(pilot, app, lambda: len(app.screen.entries) == 9)
        await pilot.press("t")
        await settle(pilot, app, lambda: isinstance(app.screen, TrendScreen) and app.screen.problem != ""
                     or getattr(app.screen, "trend", None) is not None, timeout=30)
        # one lot selected: an individuals chart needs two subgroups, so the screen says why there is none
        assert app.screen.trend is None and "No chart:" in screen_text(app)


async def test_without_an_archive_the_folder_is_listed_and_filtered(scripted, runs_dir, demo_files, archive):
    app = make_app(scripted, runs_dir, demo_files, start_view="archive", probe_on_start=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot, app, lambda: len(app.screen.entries) == 2)
        assert _head(app).startswith(" folder ")
        await _type_filter(pilot, app, "serial:A2")
        await settle(pilot, app, lambda: _serials(app) == ["A2"])
        await pilot.press("t")
        assert "The trend chart reads the lab archive" in app.messages[-1]
        await pilot.press("h")  # history in a folder: the runs of that serial
        assert _serials(app) == ["A2"] and "Runs of serial A2" in app.messages[-1]


def test_the_archive_in_force_is_chosen_as_the_cli_chooses(tmp_path):
    env = {"BENCHLOG_DB": "sqlite:///env.sqlite"}
    assert choose_archive("sqlite:///given.sqlite", "postgresql://b@h/db", environ=env, here=tmp_path).how == "--db"
    assert choose_archive(None, "postgresql://b@h/db", environ=env, here=tmp_path).url == "postgresql://b@h/db"
    assert choose_archive(None, None, environ=env, here=tmp_path).url == "sqlite:///env.sqlite"
    assert choose_archive(None, None, environ={}, here=tmp_path) is None  # nothing configured: the folder
    (tmp_path / "benchlog-archive.sqlite").write_bytes(b"")
    assert choose_archive(None, None, environ={}, here=tmp_path).how == "the default file here"
    assert choose_archive(None, None, environ={}, here=tmp_path, default_file=False) is None  # --runs DIR given
    assert choose_archive(None, None, environ=env, here=tmp_path, default_file=False).how == "BENCHLOG_DB"


@pytest.mark.parametrize("text, problem", [
    ("colour:red", "'colour' is not a filter key"), ("lot:", "has no value"), ("verdict:maybe", "is not a verdict"),
    ("since:yesterday", "is not a date"), ("lot:A lot:B", "lot is given twice"),
    ("date:2025-03-01 since:2025-01-01", "date: alone")])
def test_a_malformed_filter_is_one_line_naming_the_word(text, problem):
    from benchlog.badinput import BadInput

    with pytest.raises(BadInput) as caught:
        parse_filter(text)
    assert problem in caught.value.line() and "\n" not in caught.value.line()


def test_hostile_words_are_searched_literally(tmp_path, capsys):
    """`%` and `_` are LIKE wildcards in SQL: typed, they must match only themselves (bound, escaped)."""
    from benchlog.store import open_archive
    from benchlog.store.queries import find_runs

    from tests.store.synthetic import demo_header, write_run

    url = f"sqlite:///{tmp_path / 'h.sqlite'}"
    for serial in ("50%_OFF", "50X_OFF", "5000OFF", "'; DROP TABLE runs; --"):
        write_run(tmp_path / f"{abs(hash(serial))}.run", demo_header(serial=serial, lot="H"), 0.01)
    assert main(["archive", "add", *map(str, tmp_path.glob("*.run")), "--db", url]) == 0
    capsys.readouterr()
    archive = open_archive(url)
    try:
        for typed, found in (("50%_", ["50%_OFF"]), ("0_o", []), ("drop table", ["'; DROP TABLE runs; --"])):
            assert [r["serial"] for r in find_runs(archive, parse_filter(typed))] == found
        assert len(find_runs(archive, parse_filter(""))) == 4  # the table is still there
    finally:
        archive.close()


async def test_a_run_whose_file_is_elsewhere_is_listed_and_opening_it_says_where(tmp_path, capsys):
    import shutil

    from tests.store.synthetic import demo_header, write_run

    url = f"sqlite:///{tmp_path / 'far.sqlite'}"
    (tmp_path / "far").mkdir()
    far = write_run(tmp_path / "far" / "x.run", demo_header(serial="FAR-1", lot="F", host="bench-b"), 0.01)
    assert main(["archive", "add", str(far), "--db", url]) == 0
    capsys.readouterr()
    shutil.rmtree(far.parent)  # the file stays on the bench that recorded it
    app = _app(url, tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot, app, lambda: _serials(app) == ["FAR-1"])
        await pilot.press("o")
        assert "is not on this machine (recorded on bench-b)" in app.messages[-1]
        assert app.current_mode == "archive"  # not sent to an empty results view
        await pilot.press("w")
        assert "Summary not written: 1 of 1 run files are not on this machine" in app.messages[-1]


def test_ui_with_a_malformed_archive_url_is_one_line_and_exit_2(capsys):
    assert main(["ui", "--db", "nosuchdb://x/y"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "is not supported" in err


async def test_an_archive_that_does_not_answer_is_one_sentence_not_a_crash(tmp_path):
    app = _app("postgresql://nobody@127.0.0.1:1/none", tmp_path)  # port 1: nothing listens there
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot, app, lambda: app.screen.problem != "", timeout=30)
        assert "UNREADABLE" in _head(app) and app.screen.entries == []
        assert app.messages[-1].startswith("The archive cannot be read: ") and "\n" not in app.messages[-1]
        await pilot.press("t")  # the trend screen says it too, and the keys still work
        await settle(pilot, app, lambda: isinstance(app.screen, TrendScreen) and app.screen.problem != "", timeout=30)
        assert "No chart:" in screen_text(app)
        await pilot.press("escape", "q")
