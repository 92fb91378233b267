"""The reference pages of our file formats (docs/formats/*.md), generated from the code so they cannot drift.

Each TOML reader states its keys as it reads them: `tomlcheck.Table` records
every key, type, unit, default, bound and choice a reader asks for while
`tomlcheck.recording()` is on, and every key its `only(...)` allows. Running
each reader over the shipped example files therefore yields the table of keys
the reader really accepts; the profile page adds `profile.OPERATIONS`, the run
page is drawn from the tables in `runs/format.py`.

    python -m benchlog.docs_gen            # write docs/formats/
    python -m benchlog.docs_gen --check    # exit 1 when a page differs from the code (the tests run this)

Like `cli/`, this module sits above every package it reads.
"""

from __future__ import annotations

import argparse
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from benchlog.tomlcheck import KeyLog, KeyUse, recording

PACKAGE = Path(__file__).resolve().parent
DEMO = PACKAGE / "demo"
DOCS = PACKAGE.parent / "docs" / "formats"

#: Unit of a key from its suffix (our keys end in their SI unit: common practice in this project's files).
SUFFIX_UNITS = (("_k_per_w", "K/W"), ("_j_per_k", "J/K"), ("_ohm", "Ω"), ("_pct", "%"), ("_hz", "Hz"),
                ("_v", "V"), ("_a", "A"), ("_w", "W"), ("_s", "s"), ("_c", "°C"))


@dataclass(frozen=True)
class Example:
    section: str  # the page section its keys belong to ("" for one section)
    read: Callable[[], object]


@dataclass(frozen=True)
class Format:
    name: str  # the page: docs/formats/<name>.md
    title: str
    about: str
    examples: Callable[[], list[Example]]
    extra: Callable[[], list[str]] = lambda: []


def _files(folder: Path, pattern: str = "*.toml") -> list[Path]:
    return sorted(folder.glob(pattern)) if folder.is_dir() else []


def _plan_examples() -> list[Example]:
    from benchlog.sweep.plan import load_plan

    return [Example("", lambda p=p: load_plan(p)) for p in _files(DEMO / "plans")]


def _bench_examples() -> list[Example]:
    from benchlog.sweep.bench_file import load_bench

    return [Example("", lambda p=p: load_bench(p)) for p in _files(DEMO, "bench*.toml")]


def _profile_examples() -> list[Example]:
    from benchlog.instruments.profile import profile_dirs, read_profile

    shipped = [d for d in profile_dirs() if d.name == "instrument_profiles"]
    return [Example(_profile_role(p), lambda p=p: read_profile(p)) for d in shipped for p in _files(d)]


def _profile_role(path: Path) -> str:
    import tomllib

    return str(tomllib.loads(path.read_text(encoding="utf-8")).get("role", ""))


def _spec_examples() -> list[Example]:
    import tomllib

    from benchlog.specfiles import load_spec

    return [Example(str(tomllib.loads(p.read_text(encoding="utf-8")).get("kind", "")), lambda p=p: load_spec(p))
            for p in _files(DEMO / "specs")]


def _design_examples() -> list[Example]:
    from benchlog.specfiles import load_design

    return [Example("", lambda p=p: load_design(p)) for p in _files(DEMO, "design*.toml")]


def _profile_operations() -> list[str]:
    from benchlog.instruments.profile import OPERATIONS

    lines = ["## Operations per role (`[commands]`)", "",
             "Each template is SCPI text; `{name}` placeholders are filled with numbers only.", ""]
    for role, operations in OPERATIONS.items():
        lines += [f"### {role}", "", "| operation | kind | required | placeholders |", "|---|---|---|---|"]
        for name, (op, required) in operations.items():
            places = [f"`{{{p}}}`" for p in sorted(op.required)] + [f"`{{{p}}}` (optional)" for p in sorted(op.optional)]
            lines.append(f"| `{name}` | {'query' if op.query else 'command'} | {'yes' if required else 'no'} | "
                         f"{', '.join(places) or '—'} |")
        lines.append("")
    return lines


FORMATS = (
    Format("plan", "Sweep plan", "The element under test, the steps, the settle rule, averaging, limits, "
           "cool-down and the optional reverse test. Read by `benchlog sweep PLAN.toml`.", _plan_examples),
    Format("bench", "Bench file", "Which VISA resource plays which role with which profile, and the wiring. "
           "Read by `benchlog sweep PLAN.toml --bench BENCH.toml`.", _bench_examples),
    Format("profile", "Instrument profile", "One instrument in one role: how to recognise it, the link, a "
           "command template per operation, the ranges it accepts and its accuracy. Checked by "
           "`benchlog profiles check FILE`; see also docs/adding-a-profile.md.", _profile_examples,
           _profile_operations),
    Format("spec", "Part spec", "What the datasheet promises for one part kind, with ratings and thermal data. "
           "Read by `estimate`, `check`, `lot`, `report --spec`.", _spec_examples),
    Format("design", "Design file", "An input-protection design to review: input range, load current, ambient, "
           "candidate parts. Read by `benchlog design`.", _design_examples),
)


def _unit(use: KeyUse) -> str:
    if use.unit:
        return use.unit
    for suffix, unit in SUFFIX_UNITS:
        if use.key.endswith(suffix):
            return unit
    return ""


def _table_title(name: str) -> str:
    if not name:
        return "Top level"
    parts = name.split(".")
    if parts[-1].endswith("[]"):
        return f"[[{name.replace('[]', '')}]]"
    return f"[{name}]"


def _cell(text: str) -> str:
    return text.replace("|", "\\|")


def _value(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return f'`"{value}"`'
    if isinstance(value, (tuple, list)):
        return "`[" + ", ".join(_value(v).strip("`") for v in value) + "]`"
    return f"`{value:g}`" if isinstance(value, float) else f"`{value}`"


def _render_log(log: KeyLog, heading: str) -> list[str]:
    tables: dict[str, list[KeyUse]] = {}
    for use in log.uses.values():
        tables.setdefault(use.table, []).append(use)
    lines: list[str] = []
    for name in sorted(tables, key=lambda n: (n != "", n)):
        uses = sorted(tables[name], key=lambda u: (u.kind in ("table", "array of tables"), u.key))
        lines += [f"{heading} {_table_title(name)}", "",
                  "| key | type | unit | required | default | allowed |", "|---|---|---|---|---|---|"]
        for u in uses:
            required = {(True,): "yes", (False,): "no", (False, True): "depends"}.get(u.required, "")
            allowed = ", ".join(f'`"{c}"`' for c in u.choices) if u.choices else u.bounds
            lines.append(f"| `{u.key}` | {u.kind or 'see the reader'} | {_unit(u)} | {required} | "
                         f"{_cell(_value(u.default))} | {_cell(allowed)} |")
        lines.append("")
    return lines


def render_format(fmt: Format) -> str:
    """The Markdown page of one TOML format, from its reader run over the shipped examples."""
    sections: dict[str, KeyLog] = {}
    for example in fmt.examples():
        with recording() as log:
            example.read()
        merged = sections.setdefault(example.section, KeyLog())
        for use in log.uses.values():
            facts = {k: getattr(use, k) for k in ("kind", "unit", "default", "bounds", "choices")}
            merged.note(use.table, use.key, required=use.required, **facts)
    lines = [f"# {fmt.title} (`{fmt.name}`)", "", "<!-- generated by `python -m benchlog.docs_gen`: do not edit -->", "",
             fmt.about, "",
             "TOML; keys end in their SI unit. *required* `depends` means the reader asks for the key only "
             "with certain other settings. Unknown keys are refused with the nearest valid name.", ""]
    for section in sorted(sections):
        if section:
            lines += [f"## {section}", ""]
            lines += _render_log(sections[section], "###")
        else:
            lines += _render_log(sections[section], "##")
    lines += fmt.extra()
    return "\n".join(lines).rstrip() + "\n"


def render_run() -> str:
    """The run-file page, from the tables in `runs/format.py` and the reader's record keys."""
    from benchlog.runs import format as run_format
    from benchlog.runs.reader import _RECORD_KEYS

    lines = ["# Run file (`run`)", "", "<!-- generated by `python -m benchlog.docs_gen`: do not edit -->", "",
             f"UTF-8 text, one record per line, append-only. Format name `{run_format.FORMAT_NAME}`, schema "
             + ", ".join(str(s) for s in run_format.SUPPORTED_SCHEMAS) + f", suffix `{run_format.FILE_SUFFIX}`. "
             "See also docs/run-file.md.", "",
             "## Header (line 1, one JSON object)", "", "| key | required | holds |", "|---|---|---|"]
    for key, holds in run_format.HEADER_KEYS.items():
        lines.append(f"| `{key}` | {'yes' if key in run_format.HEADER_REQUIRED else 'no'} | {_cell(holds)} |")
    lines += ["", f"## Points (tab-separated, first field `{run_format.POINT_TAG}`)", "",
              "| column | type | may be empty |", "|---|---|---|"]
    for column in run_format.POINT_COLUMNS:
        kind = ("whole number" if column in run_format.POINT_INTEGER_COLUMNS
                else "number" if column in run_format.POINT_FLOAT_COLUMNS else "text")
        empty = ("yes" if column in run_format.POINT_OPTIONAL_COLUMNS
                 else "on an `overload` point" if column in run_format.POINT_READING_COLUMNS else "no")
        lines.append(f"| `{column}` | {kind} | {empty} |")
    lines += ["", f"`supply_mode`: {', '.join(run_format.SUPPLY_MODES)}; `direction`: "
              f"{', '.join(run_format.DIRECTIONS)}; `flags`: lower-case words joined by `|`.", "",
              "## Other records (one JSON object with a `record` key)", "", "| record | keys |", "|---|---|"]
    for record, keys in _RECORD_KEYS.items():
        lines.append(f"| `{record}` | {', '.join(f'`{k}`' for k in keys)} |")
    lines += ["", f"Note kinds: {', '.join(run_format.NOTE_KINDS)}. End outcomes: "
              f"{', '.join(run_format.END_OUTCOMES)}.", ""]
    return "\n".join(lines).rstrip() + "\n"


def render_index() -> str:
    lines = ["# File formats", "", "<!-- generated by `python -m benchlog.docs_gen`: do not edit -->", "",
             "One page per file benchlog reads or writes, generated from the code's own tables of keys:", ""]
    for fmt in FORMATS:
        lines.append(f"- [{fmt.title}]({fmt.name}.md)")
    lines.append("- [Run file](run.md)")
    return "\n".join(lines) + "\n"


def pages() -> dict[str, str]:
    out = {f"{fmt.name}.md": render_format(fmt) for fmt in FORMATS}
    out["run.md"] = render_run()
    out["README.md"] = render_index()
    return out


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m benchlog.docs_gen", description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="compare instead of write; exit 1 on a difference")
    parser.add_argument("--out", type=Path, default=DOCS, help="folder of the pages (default docs/formats)")
    args = parser.parse_args(argv)
    stale = []
    for name, text in pages().items():
        target = args.out / name
        current = target.read_text(encoding="utf-8") if target.is_file() else None
        if current == text:
            continue
        stale.append(name)
        if not args.check:
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_text(text, encoding="utf-8")
    if args.check and stale:
        sys.stderr.write("docs/formats out of date: " + ", ".join(stale) + " (run python -m benchlog.docs_gen)\n")
        return 1
    for name in stale:
        print(f"wrote {args.out / name}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
