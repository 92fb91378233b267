"""The project keeps the promises a new user reads first: layout, the two quick-start commands, CI = README."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _quick_start_commands() -> list[str]:
    text = (ROOT / "README.md").read_text()
    section = text.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    return [block.strip() for block in re.findall(r"```sh\n(.*?)```", section, flags=re.S)]


def test_top_level_layout():
    for name in ("README.md", "DEVELOPERS.md", "pyproject.toml", "benchlog", "instrument_profiles", "tests", "sample_runs"):
        assert (ROOT / name).exists(), name


def test_quick_start_is_two_commands_install_then_demo_and_tests():
    commands = _quick_start_commands()
    assert len(commands) == 2
    assert all("\n" not in c for c in commands)
    assert "pip install" in commands[0] and commands[0].endswith("benchlog demo")
    assert "pip install" in commands[1] and "pytest" in commands[1]


def test_ci_runs_the_readme_test_command_word_for_word():
    ci_lines = (ROOT / ".ci" / "run").read_text().splitlines()
    assert _quick_start_commands()[1] in ci_lines


def test_first_paragraph_states_the_job():
    text = (ROOT / "README.md").read_text()
    first = text.split("\n\n", 2)[1]
    for word in ("engineers", "protection", "SCPI", "fits", "verdict"):
        assert word in first


def test_every_declared_pytest_marker_is_used():
    # A marker declared in pyproject.toml and put on no test promises a selection (`-m slow`) that selects nothing.
    import tomllib

    declared = [m.split(":")[0].strip() for m in
                tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["pytest"]["ini_options"]["markers"]]
    used = set()
    for path in (ROOT / "tests").rglob("*.py"):
        used |= set(re.findall(r"pytest\.mark\.(\w+)", path.read_text(encoding="utf-8")))
    assert declared and [m for m in declared if m not in used] == []
