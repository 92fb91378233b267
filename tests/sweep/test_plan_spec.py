"""A plan names its part spec: the `spec` key, resolved against the plan file's folder."""

from __future__ import annotations

from pathlib import Path

import pytest

from benchlog.badinput import BadInput
from benchlog.sweep.plan import load_plan, parse_plan, plan_spec_path
from benchlog.tui.launch import demo_plans

BODY = """
[element]
id = "D1"
kind = "rectifier"

[steps]
mode = "linear"
start_a = 0.1
stop_a = 1.0
count = 5

[limits]
max_current_a = 1.2
"""


def test_the_spec_is_resolved_against_the_plan_files_folder(tmp_path, monkeypatch):
    folder = tmp_path / "plans"
    folder.mkdir()
    plan_file = folder / "p.toml"
    plan_file.write_text('spec = "../specs/part.toml"\n' + BODY, encoding="utf-8")
    monkeypatch.chdir(tmp_path / "plans")  # the current folder must not matter
    plan = load_plan(plan_file)
    assert plan.spec == "../specs/part.toml"  # as written: a run header is the same on every machine
    assert plan.to_dict()["spec"] == plan.spec  # the run header records which spec the plan goes with
    assert plan_spec_path(plan, plan_file).resolve() == (tmp_path / "specs" / "part.toml").resolve()
    text_plan = parse_plan('spec = "part.toml"\n' + BODY, "edited")
    assert plan_spec_path(text_plan, folder / "p.toml") == folder / "part.toml"
    assert parse_plan(BODY).spec == "" and plan_spec_path(parse_plan(BODY), plan_file) is None


def test_an_empty_or_misspelt_spec_key_is_one_clear_line():
    with pytest.raises(BadInput) as empty:
        parse_plan('spec = ""\n' + BODY, "p.toml")
    assert "spec" in empty.value.line() and "is empty" in empty.value.line()
    with pytest.raises(BadInput) as typo:
        parse_plan('spek = "x.toml"\n' + BODY, "p.toml")
    assert "spek" in typo.value.line()


def test_every_demo_plan_names_an_existing_spec_of_its_own_kind():
    from benchlog.specfiles import load_spec

    for path in demo_plans():
        plan = load_plan(path)
        assert plan.spec, path.name
        assert load_spec(plan_spec_path(plan, path)).kind == plan.element.kind, path.name
