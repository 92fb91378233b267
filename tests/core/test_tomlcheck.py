"""The shared TOML reader names the file, the key and what was expected."""

import math

import pytest

from benchlog.badinput import BadInput
from benchlog.tomlcheck import load_toml, parse_toml


def test_malformed_toml_names_file_and_line(tmp_path):
    path = tmp_path / "plan.toml"
    path.write_text("[steps]\ncount = = 3\n")
    with pytest.raises(BadInput) as err:
        load_toml(path)
    assert str(path) in err.value.line()
    assert "line 2" in err.value.line()


def test_missing_file_is_bad_input(tmp_path):
    with pytest.raises(BadInput, match="file not found"):
        load_toml(tmp_path / "nope.toml")


@pytest.mark.parametrize(
    "text, call, where, expected",
    [
        ("[steps]\ncount = 'x'\n", lambda t: t.table("steps").integer("count"), "[steps].count", "whole number"),
        ("[steps]\ncount = 0\n", lambda t: t.table("steps").integer("count", min=1), "[steps].count", "at least 1"),
        ("[s]\nv = nan\n", lambda t: t.table("s").number("v"), "[s].v", "finite"),
        ("[s]\nv = inf\n", lambda t: t.table("s").number("v"), "[s].v", "finite"),
        ("[s]\nv = true\n", lambda t: t.table("s").number("v"), "[s].v", "a number"),
        ("[s]\nv = -1\n", lambda t: t.table("s").number("v", positive=True), "[s].v", "above 0"),
        ("[s]\nmode = 'lin'\n", lambda t: t.table("s").string("mode", choices=["linear", "log"]), "[s].mode", "'linear'"),
        ("[s]\nv = [1, 'a']\n", lambda t: t.table("s").numbers("v"), "[s].v[1]", "a number"),
        ("x = 1\n", lambda t: t.table("s"), "[s]", "a [s] table"),
        ("[s]\ncuont = 1\n", lambda t: t.table("s").only(["count"]), "[s].cuont", "did you mean 'count'"),
    ],
)
def test_typed_accessors_report_key_and_expectation(text, call, where, expected):
    root = parse_toml(text, "f.toml")
    with pytest.raises(BadInput) as err:
        call(root)
    line = err.value.line()
    assert line.startswith(f"f.toml: {where}:")
    assert expected in line
    assert "\n" not in line


def test_defaults_and_good_values_pass_through():
    root = parse_toml("[s]\nv = 2\nname = 'a'\nlist = [0.5, 1]\n", "f.toml")
    s = root.table("s")
    assert s.number("v") == 2.0 and isinstance(s.number("v"), float)
    assert s.number("missing", None) is None
    assert s.string("name") == "a"
    assert s.numbers("list") == (0.5, 1.0)
    assert math.isclose(s.number("v", min=0, max=10), 2.0)
