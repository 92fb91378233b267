"""The reference pages in docs/formats/ are generated from the readers: they must match the code, and the recorder must see keys."""

from __future__ import annotations

from pathlib import Path

from benchlog import docs_gen
from benchlog.tomlcheck import parse_toml, recording

ROOT = Path(__file__).resolve().parents[2]


def test_committed_pages_match_the_code():
    # if this fails: python -m benchlog.docs_gen, then review and commit docs/formats/
    assert docs_gen.main(["--check"]) == 0


def test_check_finds_a_page_that_drifted(tmp_path, capsys):
    assert docs_gen.main(["--out", str(tmp_path)]) == 0
    page = tmp_path / "plan.md"
    page.write_text(page.read_text().replace("`gate`", "`gate_mode`"))
    assert docs_gen.main(["--check", "--out", str(tmp_path)]) == 1
    assert "plan.md" in capsys.readouterr().err


def test_recorder_takes_type_unit_default_bounds_and_choices_from_the_accessors():
    table = parse_toml('[limits]\nmax_current_a = 2.0\n[element]\ngate = "driven"\n', "t.toml")
    with recording() as log:
        limits = table.table("limits")
        limits.only(("max_current_a", "compliance_v"))
        limits.number("max_current_a", positive=True, max=100.0, unit="A")
        limits.number("compliance_v", None, positive=True)
        element = table.table("element")
        element.string("gate", "return", choices=("return", "driven"))
    current = log.uses[("limits", "max_current_a")]
    assert (current.kind, current.unit, current.required, current.bounds) == ("number", "A", (True,), "> 0, <= 100")
    assert log.uses[("limits", "compliance_v")].required == (False,)
    gate = log.uses[("element", "gate")]
    assert gate.choices == ("return", "driven") and gate.default == "return"


def test_pages_name_what_users_had_to_guess_and_are_linked_from_the_readme():
    plan = (ROOT / "docs" / "formats" / "plan.md").read_text()
    gate = next(line for line in plan.splitlines() if line.startswith("| `gate` |"))
    assert '`"driven"`' in gate and '`"return"`' in gate
    profile = (ROOT / "docs" / "formats" / "profile.md").read_text()
    assert "| `configure_voltage` | command | yes | `{range_v}`, `{nplc}` (optional) |" in profile
    readme = (ROOT / "README.md").read_text()
    for name in ("plan", "bench", "profile", "spec", "design", "run"):
        assert f"docs/formats/{name}.md" in readme
        assert (ROOT / "docs" / "formats" / f"{name}.md").is_file()
