"""`benchlog report --history / --compare-lots / --find`: each section answers as the CLI's `archive ... --json` does.

The HTML is read back with the standard library's parser (tests/report/htmlcheck.py); the
archive is filled with `archive add` of sample_runs/ on SQLite and, when a server can be
started, PostgreSQL (the `archive_url` fixture).
"""

from __future__ import annotations

import json
from html.parser import HTMLParser
from pathlib import Path

import pytest

from benchlog.cli import main
from benchlog.quantity import engineering, measured, p_value, unit_of
from tests.report.htmlcheck import inventory

from .synthetic import demo_header, write_run

SAMPLES = Path(__file__).resolve().parents[2] / "sample_runs"
HOSTILE = "<script>alert(1)</script>"


class Sections(HTMLParser):
    """Each <h2> section's tables as lists of rows of cell text, and its paragraphs' text."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tables: dict[str, list[list[list[str]]]] = {}
        self.text: dict[str, list[str]] = {}
        self._title: str | None = None
        self._in: str | None = None
        self._buf: list[str] = []

    def handle_starttag(self, tag, attrs):
        if tag in ("h2", "td", "th", "p", "div"):
            self._in, self._buf = tag, []
        if tag == "table" and self._title is not None:
            self.tables[self._title].append([])
        if tag == "tr" and self._title is not None and self.tables[self._title]:
            self.tables[self._title][-1].append([])

    def handle_endtag(self, tag):
        text = "".join(self._buf).strip()
        if tag == "h2" and self._in == "h2":
            self._title = text
            self.tables.setdefault(text, [])
            self.text.setdefault(text, [])
        elif tag in ("td", "th") and self._in == tag and self._title is not None:
            self.tables[self._title][-1][-1].append(text)
        elif tag in ("p", "div") and self._in == tag and self._title is not None:
            self.text[self._title].append(text)
        if tag == self._in:
            self._in = None

    def handle_data(self, data):
        if self._in is not None:
            self._buf.append(data)


def read(path: Path) -> Sections:
    page = Sections()
    page.feed(path.read_text(encoding="utf-8"))
    page.close()
    return page


def _json(capsys, argv):
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


@pytest.fixture
def filled(archive_url, tmp_path, capsys):
    """The sample runs and one run whose serial and lot are markup, published with `archive add`."""
    hostile = write_run(tmp_path / "hostile.run", demo_header(serial=HOSTILE, lot="<b>L</b>"), 0.012)
    paths = [*map(str, sorted(SAMPLES.glob("*.run"))), *map(str, sorted(SAMPLES.glob("lot-demo-07/*.run"))),
             str(hostile)]
    assert main(["archive", "add", *paths, "--db", archive_url]) == 0
    capsys.readouterr()
    return archive_url


def _data_rows(table):
    return table[1:]  # the first row holds the headings


def test_history_section_equals_archive_history(filled, tmp_path, capsys):
    out = tmp_path / "h.html"
    assert main(["report", "-o", str(out), "--db", filled, "--history", "PROTO-0002"]) == 0  # no RUN file
    capsys.readouterr()
    cli = _json(capsys, ["archive", "history", "PROTO-0002", "--db", filled, "--json"])
    page = read(out)
    rows = _data_rows(page.tables["History of PROTO-0002"][0])
    assert len(rows) == cli["count"] == 3  # sample_runs/README: prototype, reverse and self-heating runs
    for row, run in zip(rows, cli["runs"]):
        started, bench, serial, lot, path, outcome, fitted, verdict = row
        assert (started, bench, serial, lot, path, outcome) == (
            run["started_utc"], run["bench_host"], run["serial"], run["lot"], run["path"], run["outcome"])
        for key, p in run["fit"]["params"].items():
            assert measured(p["value"], p["expanded_u"], unit_of(key), k=p["k"]) in fitted
    assert [r[0] for r in rows] == sorted(r[0] for r in rows)  # time order


def test_compare_lots_section_equals_archive_compare_lots(filled, tmp_path, capsys):
    from scipy import stats

    out = tmp_path / "c.html"
    lots = ["LOT-DEMO-07", "PROTO"]
    assert main(["report", "-o", str(out), "--db", filled, "--compare-lots", *lots, "--usl", "0.012"]) == 0
    capsys.readouterr()
    cli = _json(capsys, ["archive", "compare-lots", *lots, "--usl", "0.012", "--db", filled, "--json"])
    page = read(out)
    (lot_table, test_table) = page.tables["Lots LOT-DEMO-07 and PROTO compared on r_on_ohm (archive)"]
    for row, lot in zip(_data_rows(lot_table), (cli["a"], cli["b"])):
        assert row == [lot["lot"], str(lot["n"]), engineering(lot["mean"], "Ω"),
                       engineering(lot["sd"], "Ω", digits=2), f"{lot['capability']} = {lot['capability_value']:.3g}"]
    figures = dict(_data_rows(test_table))
    assert figures["difference A − B (± U, 95 %)"] == measured(cli["difference"], cli["difference_expanded_u_95"],
                                                              "Ω", k=None)
    assert figures["degrees of freedom ν (Welch–Satterthwaite)"] == f"{cli['dof']:.1f}"
    assert figures["p (two-sided)"] == p_value(cli["p_two_sided"])
    assert figures["test"] == cli["test"]
    # outside reference: scipy's Welch test on the lots' archived values (scipy.stats.ttest_ind, equal_var=False)
    values = {}
    for lot in lots:
        found = _json(capsys, ["archive", "find", "--lot", lot, "--db", filled, "--json"])["runs"]
        values[lot] = [r["fit"]["params"]["r_on_ohm"]["value"] for r in found
                       if r["fit"] and "r_on_ohm" in r["fit"]["params"]]
    ref = stats.ttest_ind(values[lots[0]], values[lots[1]], equal_var=False)
    assert float(figures["t"]) == pytest.approx(ref.statistic, abs=5e-4)
    assert cli["p_two_sided"] == pytest.approx(ref.pvalue, rel=1e-9)


def test_find_section_lists_what_archive_find_finds_and_counts_the_rest(filled, tmp_path, capsys, monkeypatch):
    out = tmp_path / "f.html"
    assert main(["report", "-o", str(out), "--db", filled, "--find", "lot:PROTO kind:pmos"]) == 0
    capsys.readouterr()
    cli = _json(capsys, ["archive", "find", "--lot", "PROTO", "--kind", "pmos", "--db", filled, "--json"])
    rows = _data_rows(read(out).tables["Runs found: lot:PROTO kind:pmos"][0])
    assert [(r[0], r[4]) for r in rows] == [(r["started_utc"], r["path"]) for r in cli["runs"]]
    assert len(rows) == 3  # sample_runs: pmos prototype, killed and heat-soak runs

    import benchlog.cli.report_archive as sections

    monkeypatch.setattr(sections, "FIND_ROWS", 5)
    capped = tmp_path / "capped.html"
    assert main(["report", "-o", str(capped), "--db", filled, "--find", "LOT-DEMO-07"]) == 0  # a bare word
    page = read(capped)
    title = "Runs found: LOT-DEMO-07"
    assert len(_data_rows(page.tables[title][0])) == 5
    assert "15 more not shown." in page.text[title]  # the lot holds 20 runs (sample_runs/README)


def test_markup_in_a_serial_is_shown_as_text(filled, tmp_path, capsys):
    out = tmp_path / "x.html"
    assert main(["report", "-o", str(out), "--db", filled, "--history", HOSTILE, "--find", "lot:<b>L</b>"]) == 0
    html = out.read_text(encoding="utf-8")
    assert "script" not in inventory(html).tags and "b" not in inventory(html).tags
    assert HOSTILE not in html and "&lt;script&gt;" in html
    page = read(out)
    assert _data_rows(page.tables[f"History of {HOSTILE}"][0])[0][2] == HOSTILE


@pytest.mark.parametrize("argv, says", [
    (["--history", "NO-SUCH-SERIAL"], "has no runs in the archive"),
    (["--compare-lots", "LOT-DEMO-07", "NO-SUCH-LOT"], "at least two fitted runs per lot"),
    (["--find", "colour:red"], "is not a filter key"),
    (["--find", "since:yesterday"], "is not a date"),
])
def test_bad_questions_are_one_line_and_exit_2_with_nothing_written(filled, tmp_path, capsys, argv, says):
    out = tmp_path / "bad.html"
    assert main(["report", "-o", str(out), "--db", filled, *argv]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and says in err and "Traceback" not in err
    assert not out.exists()


def test_an_archive_that_does_not_answer_is_one_line_and_exit_2(tmp_path, capsys):
    out = tmp_path / "r.html"
    # port 1 on loopback: nothing listens there (common practice: tcpmux, unused)
    url = "postgresql://nobody@127.0.0.1:1/none"
    assert main(["report", "-o", str(out), "--db", url, "--history", "PROTO-0001"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "cannot open the archive" in err
    assert not out.exists()


def test_archive_sections_alone_make_a_report(filled, tmp_path, capsys):
    out = tmp_path / "t.html"
    assert main(["report", "-o", str(out), "--db", filled, "--trend", "r_on_ohm", "--history", "PROTO-0001"]) == 0
    page = read(out)
    titles = list(page.tables)
    assert titles == ["Trend of r_on_ohm by lot (archive)", "History of PROTO-0001", "Safety"]  # no run sections
    assert main(["report", "-o", str(tmp_path / "none.html")]) == 2  # nothing asked: still refused
    assert "an archive section" in capsys.readouterr().err
