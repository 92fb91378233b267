"""Corrupt run files give one clear BadInput naming the line, from the line reader and the loader alike."""

from __future__ import annotations

import json

import pytest

from benchlog.badinput import BadInput
from benchlog.runs import RunWriter, load, load_points, read_events

from .samples import every_kind


@pytest.fixture()
def good_lines(tmp_path) -> list[str]:
    path = tmp_path / "good.run"
    with RunWriter(path, fsync=False) as writer:
        for event in every_kind():
            writer.write(event)
    return path.read_text(encoding="utf-8").split("\n")[:-1]


def header_with(lines: list[str], **changes) -> list[str]:
    header = json.loads(lines[0])
    header.update(changes)
    return [json.dumps(header)] + lines[1:]


def replace_line(lines, number, text):
    return lines[: number - 1] + [text] + lines[number:]


def p_line(index="7", t="4.0", drop="0.8", mode="CC", direction="up", flags=""):
    return "\t".join(["P", index, t, "1.0", "1.0", drop, "5.0", mode, "", "2", direction, flags])


# (name, build(lines) -> text, line named, words expected in the problem)
CASES = [
    ("empty file", lambda ls: "", 1, "no complete header"),
    ("truncated header", lambda ls: ls[0][:40], 1, "no complete header"),
    ("header not JSON", lambda ls: "\n".join([ls[0][:40]] + ls[1:]) + "\n", 1, "not valid JSON"),
    ("points before header", lambda ls: "\n".join(ls[2:]) + "\n", 1, "header belongs"),
    ("other format", lambda ls: "\n".join(header_with(ls, format="csv-ish")) + "\n", 1, "not a benchlog-run"),
    ("newer schema", lambda ls: "\n".join(header_with(ls, schema=7)) + "\n", 1, "schema version 7 is newer"),
    ("schema as text", lambda ls: "\n".join(header_with(ls, schema="1")) + "\n", 1, "schema is"),
    ("header without element", lambda ls: "\n".join(
        [json.dumps({k: v for k, v in json.loads(ls[0]).items() if k != "element"})] + ls[1:]) + "\n",
     1, "no 'element'"),
    ("wrong column list", lambda ls: "\n".join(header_with(ls, point_columns=["index", "t_s"])) + "\n",
     1, "point_columns"),
    ("bad start time", lambda ls: "\n".join(header_with(ls, started_utc="yesterday")) + "\n", 1, "UTC time"),
    ("NaN in header", lambda ls: "\n".join(
        [ls[0].replace('"line_frequency_hz":50.0', '"line_frequency_hz":NaN')] + ls[1:]) + "\n",
     1, "NaN is not a number"),
    ("1e400 in offset", lambda ls: "\n".join(
        replace_line(ls, 2, '{"record":"offset","t_s":0.1,"drop_v":1e400}')) + "\n", 2, "too large"),
    ("huge integer", lambda ls: "\n".join(
        replace_line(ls, 2, '{"record":"offset","t_s":0.1,"drop_v":' + "9" * 5000 + "}")) + "\n",
     2, "not valid JSON"),
    ("offset as text", lambda ls: "\n".join(
        replace_line(ls, 2, '{"record":"offset","t_s":0.1,"drop_v":"0.1"}')) + "\n", 2, "drop_v is"),
    ("unknown record", lambda ls: "\n".join(
        replace_line(ls, 2, '{"record":"sparkle","t_s":0.1}')) + "\n", 2, "unknown record kind"),
    ("extra key", lambda ls: "\n".join(
        replace_line(ls, 2, '{"record":"offset","t_s":0.1,"drop_v":0.0,"x_v":1}')) + "\n", 2, "unexpected key"),
    ("NaN drop on plain point", lambda ls: "\n".join(ls[:-1] + [p_line(drop="nan"), ls[-1]]) + "\n",
     9, "drop_v is 'nan'"),
    ("empty drop on plain point", lambda ls: "\n".join(ls[:-1] + [p_line(drop=""), ls[-1]]) + "\n",
     9, "drop_v is empty"),
    ("inf time", lambda ls: "\n".join(ls[:-1] + [p_line(t="inf"), ls[-1]]) + "\n", 9, "t_s is 'inf'"),
    ("1e400 drop", lambda ls: "\n".join(ls[:-1] + [p_line(drop="1e400"), ls[-1]]) + "\n", 9, "out of range"),
    ("1e300 drop", lambda ls: "\n".join(ls[:-1] + [p_line(drop="1e300"), ls[-1]]) + "\n", 9, "out of range"),
    ("text drop", lambda ls: "\n".join(ls[:-1] + [p_line(drop="0,8"), ls[-1]]) + "\n", 9, "decimal number"),
    ("fractional index", lambda ls: "\n".join(ls[:-1] + [p_line(index="7.5"), ls[-1]]) + "\n", 9, "whole number"),
    ("index goes back", lambda ls: "\n".join(ls[:-1] + [p_line(index="2"), ls[-1]]) + "\n",
     9, "index 2 does not increase"),
    ("index repeats", lambda ls: "\n".join(ls[:-1] + [p_line(index="6"), ls[-1]]) + "\n", 9, "does not increase"),
    ("bad supply mode", lambda ls: "\n".join(ls[:-1] + [p_line(mode="XX"), ls[-1]]) + "\n", 9, "supply_mode"),
    ("bad direction", lambda ls: "\n".join(ls[:-1] + [p_line(direction="left"), ls[-1]]) + "\n", 9, "direction"),
    ("bad flag", lambda ls: "\n".join(ls[:-1] + [p_line(flags="Bad Flag"), ls[-1]]) + "\n", 9, "flag"),
    ("too many fields", lambda ls: "\n".join(ls[:-1] + [p_line() + "\t\t1", ls[-1]]) + "\n", 9, "fields"),
    ("unknown line", lambda ls: "\n".join(ls[:-1] + ["Q\t1\t2", ls[-1]]) + "\n", 9, "line starts"),
    ("blank line", lambda ls: "\n".join(ls[:-1] + ["", ls[-1]]) + "\n", 9, "empty line"),
    ("record after end", lambda ls: "\n".join(ls + [p_line(index="9")]) + "\n", 10, "after the end record"),
    ("second header", lambda ls: "\n".join(ls[:-1] + [ls[0], ls[-1]]) + "\n", 9, "second header"),
    ("note kind", lambda ls: "\n".join(
        replace_line(ls, 5, '{"record":"note","t_s":1,"kind":"gossip","message":"x"}')) + "\n", 5, "note kind"),
    ("passed as 1", lambda ls: "\n".join(replace_line(ls, 8, ls[7].replace("true", "1"))) + "\n",
     8, "passed is 1"),
    ("end outcome", lambda ls: "\n".join(
        replace_line(ls, 9, ls[8].replace('"complete"', '"incomplete"'))) + "\n", 9, "outcome"),
    ("not UTF-8", lambda ls: ("\n".join(ls[:-1]) + "\n").encode() + b'{"record":"note",\xff}\n', 9, "not UTF-8"),
    ("JSON array", lambda ls: "\n".join(ls[:-1] + ["[1, 2]", ls[-1]]) + "\n", 9, "line starts"),
]


@pytest.mark.parametrize("name,build,line,words", CASES, ids=[c[0] for c in CASES])
def test_corrupt_file_names_its_line(tmp_path, good_lines, name, build, line, words):
    content = build(good_lines)
    path = tmp_path / "bad.run"
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_text(content, encoding="utf-8")
    for reader in (lambda p: list(read_events(p)), load):
        with pytest.raises(BadInput) as caught:
            reader(path)
        error = caught.value
        assert error.source == str(path) and error.where == f"line {line}", error.line()
        message = error.line()
        assert words in message, message
        assert "\n" not in message and message.startswith(f"{path}: line {line}: ")


def test_newer_schema_names_found_and_supported(tmp_path, good_lines):
    path = tmp_path / "new.run"
    path.write_text("\n".join(header_with(good_lines, schema=3)) + "\n", encoding="utf-8")
    for reader in (load, load_points, lambda p: list(read_events(p))):
        with pytest.raises(BadInput) as caught:
            reader(path)
        line = caught.value.line()
        assert "schema version 3 is newer" in line and "expected schema 1, 2" in line, line
        assert "\n" not in line and line.startswith(f"{path}: line 1: ")


def test_missing_file_is_bad_input(tmp_path):
    with pytest.raises(BadInput, match="file not found"):
        load(tmp_path / "nope.run")


@pytest.mark.parametrize("cut", [1, 5, 20])
def test_torn_last_line_is_ignored_and_run_incomplete(tmp_path, good_lines, cut):
    # A SIGKILL mid-write leaves the last line without its newline: it is not a record.
    whole = "\n".join(good_lines[:-1]) + "\n"
    torn = whole + p_line()[:cut]
    path = tmp_path / "torn.run"
    path.write_text(torn, encoding="utf-8")
    frame, meta = load(path)
    assert meta.torn and not meta.complete and meta.outcome == "incomplete"
    assert frame["index"].tolist() == [0, 1, 5, 6]
    assert len(list(read_events(path))) == len(good_lines) - 1
