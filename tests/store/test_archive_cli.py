"""`benchlog archive ...` end to end, and a sweep that publishes to the archive its bench file names."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from benchlog.cli import main
from benchlog.store import open_archive
from benchlog.store.queries import RunFilter, find_runs

from .synthetic import demo_header, write_lot, write_run
from tests.sweep.test_cli_sweep import PMOS_PLAN, bench_file, write


def _json(capsys):
    return json.loads(capsys.readouterr().out)


def test_add_sync_find_history_trend_compare(archive_url, tmp_path, capsys):
    db = ["--db", archive_url]
    lots = {"L1": 0.0100, "L2": 0.0100, "L3": 0.0108}
    folder = tmp_path / "runs"
    first = write_lot(folder / "L1", "L1", lots["L1"], 5, day="2025-03-01", spread=0.01, seed=1)
    assert main(["archive", "add", *map(str, first), *db, "--json"]) == 0
    assert _json(capsys)["added"] == 5
    for i, lot in enumerate(("L2", "L3")):
        write_lot(folder / lot, lot, lots[lot], 5, day=f"2025-03-0{i + 2}", spread=0.01, seed=i + 2)
    assert main(["archive", "sync", str(folder), *db, "--json"]) == 0
    synced = _json(capsys)
    assert (synced["added"], len(synced["runs"])) == (10, 10)  # the five already stored were not re-read
    assert main(["archive", "sync", str(folder), *db, "--json"]) == 0
    assert _json(capsys)["runs"] == []

    assert main(["archive", "find", "--lot", "L3", *db, "--json"]) == 0
    found = _json(capsys)["runs"]
    assert [r["serial"] for r in found] == [f"L3-{i:04d}" for i in range(1, 6)]
    assert main(["archive", "find", "--since", "2025-03-02", "--until", "2025-03-02", *db, "--json"]) == 0
    assert {r["lot"] for r in _json(capsys)["runs"]} == {"L2"}
    assert main(["archive", "history", "L1-0003", *db, "--json"]) == 0
    assert [r["serial"] for r in _json(capsys)["runs"]] == ["L1-0003"]

    png, svg = tmp_path / "trend.png", tmp_path / "trend.svg"
    assert main(["archive", "trend", "r_on_ohm", "--by", "lot", "-o", str(png), *db, "--json"]) == 0
    trend = _json(capsys)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert trend["chart"] == "mean-range" and [s["name"] for s in trend["subgroups"]] == ["L1", "L2", "L3"]
    assert trend["subgroups"][2]["value"] > trend["subgroups"][2]["ucl"]  # the 8 % higher lot is out
    assert any(h["rule"] == 1 and h["subgroup"] == "L3" for h in trend["rule_hits"])
    assert main(["archive", "trend", "r_on_ohm", "--by", "day", "-o", str(svg), *db]) == 0
    assert b"<svg" in svg.read_bytes()[:500]
    capsys.readouterr()

    assert main(["archive", "compare-lots", "L1", "L3", "--usl", "0.0115", *db, "--json"]) == 0
    cmp = _json(capsys)
    assert cmp["difference"] == pytest.approx(cmp["a"]["mean"] - cmp["b"]["mean"])
    assert cmp["p_two_sided"] < 1e-3 and cmp["a"]["capability"] == "Cpu"


def test_bad_arguments_and_an_unreachable_archive_are_one_line_and_exit_2(tmp_path, capsys):
    cases = [["archive", "find", "--db", "nonsense"],
             ["archive", "find", "--db", "postgresql://someone@127.0.0.1:1/none"],
             ["archive", "find", "--since", "yesterday", "--db", f"sqlite:///{tmp_path / 'a.sqlite'}"],
             ["archive", "trend", "r_on_ohm", "-o", str(tmp_path / "x.pdf"), "--db", f"sqlite:///{tmp_path / 'a.sqlite'}"],
             ["archive", "trend", "no_such_ohm", "--json", "--db", f"sqlite:///{tmp_path / 'a.sqlite'}"],
             ["archive", "add", str(tmp_path / "missing.run"), "--db", f"sqlite:///{tmp_path / 'a.sqlite'}"]]
    for argv in cases:
        assert main(argv) == 2, argv
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and err.startswith("benchlog: ") and "Traceback" not in err, err


def test_the_default_archive_is_a_file_here_and_the_environment_names_another(tmp_path, monkeypatch, capsys):
    run = write_run(tmp_path / "a.run", demo_header(serial="E1", lot="L"), 0.01)
    monkeypatch.chdir(tmp_path)
    monkeypatch.delenv("BENCHLOG_DB", raising=False)
    assert main(["archive", "add", str(run)]) == 0
    assert (tmp_path / "benchlog-archive.sqlite").is_file()
    capsys.readouterr()
    other = tmp_path / "other.sqlite"
    monkeypatch.setenv("BENCHLOG_DB", f"sqlite:///{other}")
    assert main(["archive", "add", str(run), "--json"]) == 0
    assert _json(capsys)["added"] == 1 and other.is_file()


def test_a_sweep_publishes_to_its_benchs_archive_and_goes_on_when_it_is_unreachable(sim_bench, tmp_path, capsys):
    running = sim_bench("pmos", seed=7)
    plan = write(tmp_path, "plan.toml", PMOS_PLAN.format(count=5, dwell=0.0))
    bench = bench_file(tmp_path, running)
    url = f"sqlite:///{tmp_path / 'lab.sqlite'}"
    bench.write_text(bench.read_text() + f'[archive]\nurl = "{url}"\n')
    assert main(["sweep", str(plan), "--bench", str(bench), "--out", str(tmp_path / "runs"), "--yes", "--json"]) == 0
    out = _json(capsys)
    assert out["archive"]["action"] == "added"
    archive = open_archive(url)
    [stored] = find_runs(archive, RunFilter(serial="CLI-1"))
    archive.close()
    assert stored["points"] == 5 and stored["path"] == str(Path(out["run_file"]).resolve())
    assert "lab.sqlite" not in Path(out["run_file"]).read_text()  # the archive's URL is not in the run file

    bench.write_text(bench.read_text().replace(url, "postgresql://bench@127.0.0.1:1/lab"))
    assert main(["sweep", str(plan), "--bench", str(bench), "--out", str(tmp_path / "runs"), "--yes", "--json"]) == 0
    out = _json(capsys)
    assert out["outcome"] == "complete" and out["archive"]["published"] is False
    assert "archive sync" in out["archive"]["note"]
    assert not running.bench.supply.output_on and not running.bench.load.input_on
    # later, the folder is caught up
    assert main(["archive", "sync", str(tmp_path / "runs"), "--db", url, "--json"]) == 0
    assert _json(capsys)["added"] == 1


def test_a_bench_file_refuses_a_password_in_its_archive_url(tmp_path):
    from benchlog.badinput import BadInput
    from benchlog.sweep.bench_file import parse_bench

    text = '[supply]\nresource = "TCPIP0::127.0.0.1::1::SOCKET"\nprofile = "sim-supply"\n' \
           '[meter]\nresource = "TCPIP0::127.0.0.1::2::SOCKET"\nprofile = "sim-meter"\n' \
           '[wiring]\nforce = "supply"\ncurrent_from = "supply"\n'
    assert parse_bench(text + '[archive]\nurl = "postgresql://bench@db/lab"\n').archive_url == "postgresql://bench@db/lab"
    with pytest.raises(BadInput, match="holds a password"):
        parse_bench(text + '[archive]\nurl = "postgresql://bench:hunter2@db/lab"\n')
    with pytest.raises(BadInput, match="url"):
        parse_bench(text + '[archive]\nurl = "ftp://db/lab"\n')


def test_a_read_only_viewer_role_can_ask_but_not_publish(postgres_server, tmp_path, capsys):
    """The viewer role of the README: SELECT only. Its questions work; its `add` is one line, exit 2."""
    if not postgres_server.started:
        pytest.skip(postgres_server.skip_reason)
    url = postgres_server.new_database()
    run = write_run(tmp_path / "a.run", demo_header(serial="V1", lot="LV"), 0.01)
    assert main(["archive", "add", str(run), "--db", url]) == 0
    viewer = postgres_server.viewer_url(url)
    capsys.readouterr()
    assert main(["archive", "find", "--serial", "V1", "--db", viewer, "--json"]) == 0
    assert [r["serial"] for r in _json(capsys)["runs"]] == ["V1"]
    other = write_run(tmp_path / "b.run", demo_header(serial="V2", lot="LV"), 0.01)
    assert main(["archive", "add", str(other), "--db", viewer]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "refused" in err and "permission denied" in err


def test_the_report_carries_the_archives_trend_chart(tmp_path, capsys):
    url = f"sqlite:///{tmp_path / 'a.sqlite'}"
    paths = []
    for i, lot in enumerate(("T1", "T2", "T3")):
        paths += write_lot(tmp_path / lot, lot, 0.01, 3, seed=i + 1, spread=0.01)
    assert main(["archive", "add", *map(str, paths), "--db", url]) == 0
    out = tmp_path / "r.html"
    assert main(["report", str(paths[0]), "-o", str(out), "--trend", "r_on_ohm", "--db", url,
                 "--figures", str(tmp_path / "fig")]) == 0
    html = out.read_text()
    assert "Trend of r_on_ohm by lot (archive)" in html and "ISO 7870-2" in html
    assert list((tmp_path / "fig").glob("*-trend.png"))
    assert main(["report", str(paths[0]), "-o", str(tmp_path / "s.html"), "--trend", "nope_ohm", "--db", url]) == 2
