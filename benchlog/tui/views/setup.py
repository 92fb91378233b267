"""The set-up view: pick a plan and edit its element, steps, settle rule and limits; pick the part spec."""

from __future__ import annotations

import tomllib
from pathlib import Path

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.widgets import Input, Label, Static

from benchlog.badinput import BadInput
from benchlog.filecheck import write_failure
from benchlog.kinds import kind as element_kind
from benchlog.tomlcheck import read_utf8

from ..paths import shown
from ..tomltext import dump_tables
from ..widgets import Plain, cells
from .base import View

#: (table, key, label, type) of each field the form edits; the other keys of the plan are kept as they are.
FIELDS = (
    ("element", "id", "element id", str),
    ("element", "kind", "kind", str),
    ("element", "serial", "serial", str),
    ("element", "lot", "lot", str),
    ("element", "ambient_c", "ambient °C", float),
    ("element", "operating_a", "operating A", float),
    ("steps", "mode", "step mode", str),
    ("steps", "start_a", "start A", float),
    ("steps", "stop_a", "stop A", float),
    ("steps", "count", "points", int),
    ("settle", "dwell_s", "dwell s", float),
    ("settle", "tolerance_v", "settle tol V", float),
    ("settle", "consecutive", "agree reads", int),
    ("settle", "timeout_s", "settle max s", float),
    ("limits", "max_current_a", "max current A", float),
    ("limits", "compliance_v", "compliance V", float),
    ("limits", "max_drop_v", "max drop V", float),
    ("limits", "max_power_w", "max power W", float),
    ("limits", "max_time_s", "max time s", float),
)


def field_id(table: str, key: str) -> str:
    return f"f-{table}-{key}"


class SetupView(View):
    TITLE_TEXT = "Set-up"
    AUTO_FOCUS = ""  # keys belong to the view until the user tabs into a field
    BINDINGS = [
        Binding("tab", "app.focus_next", "Edit fields", show=True, key_display="Tab"),
        Binding("shift+tab", "app.focus_previous", "Previous field", show=False),
        Binding("escape", "leave_field", "Leave field", show=False),
        Binding("r", "run", "Run sweep"),
        Binding("n", "next_plan", "Next plan"),
        Binding("k", "next_spec", "Next spec"),
        Binding("w", "save_plan", "Save plan"),
    ]

    def body(self) -> ComposeResult:
        with Horizontal(id="setup-body"):
            with VerticalScroll(id="plan-form", can_focus=False):  # Tab goes from field to field
                yield Plain("", id="plan-name")
                for table, key, label, _type in FIELDS:
                    with Horizontal(classes="field"):
                        yield Label(label, classes="field-label")
                        yield Input(id=field_id(table, key), classes="field-input", compact=True)
            with Vertical(id="setup-side"):
                yield Plain("", id="plan-check")
                yield Plain("", id="spec-summary")

    def on_mount(self) -> None:
        self._load_form()
        super().on_mount()

    def _doc(self) -> dict:
        try:
            return tomllib.loads(self.app.state.plan_text) if self.app.state.plan_text else {}
        except tomllib.TOMLDecodeError:
            return {}

    def _load_form(self) -> None:
        doc = self._doc()
        for table, key, _label, _type in FIELDS:
            value = (doc.get(table) or {}).get(key)
            box = self.query_one("#" + field_id(table, key), Input)
            with box.prevent(Input.Changed):
                box.value = "" if value is None else str(value)

    def on_input_changed(self, event: Input.Changed) -> None:
        if not (event.input.id or "").startswith("f-"):
            return
        self._form_to_plan()
        self._show_check()
        self._show_spec()  # a kind typed in the form is checked against the spec at once

    def _form_to_plan(self) -> None:
        doc = self._doc()
        for table, key, _label, kind in FIELDS:
            text = self.query_one("#" + field_id(table, key), Input).value.strip()
            section = doc.setdefault(table, {})
            if not text:
                section.pop(key, None)
                continue
            try:
                section[key] = kind(text)
            except ValueError:
                section[key] = text  # kept as text: the plan check names the key and what it expects
        doc = {k: v for k, v in doc.items() if v != {} or k in ("element", "steps", "limits")}
        self.app.state.plan_text = dump_tables(doc)

    def refresh_view(self) -> None:
        super().refresh_view()
        state = self.app.state
        name = shown(state.plan_path) if state.plan_path else "(no plan)"
        self.query_one("#plan-name", Static).update(f" plan {name} ({len(state.plans)} with n)")
        self._show_check()
        self._show_spec()

    def _show_check(self) -> None:
        box = self.query_one("#plan-check", Static)
        try:
            plan = self.app.current_plan()
        except Exception as exc:  # BadInput: one line
            line = exc.line() if hasattr(exc, "line") else str(exc)
            box.update(f"✘ plan not usable:\n{line}")
            box.set_class(True, "bad")
            return
        box.set_class(False, "bad")
        steps = plan.steps
        if steps.mode == "list":
            span = f"{len(steps.currents_a)} listed currents"
        elif steps.mode == "adaptive":
            span = f"adaptive {steps.start_a:g}–{steps.stop_a:g} A until rel. u ≤ {steps.target_rel_u:g}"
        else:
            span = f"{steps.mode} {steps.start_a:g}–{steps.stop_a:g} A, {steps.count} steps"
        e = plan.element
        lim = plan.limits
        k = element_kind(e.kind)
        lines = [f"✔ plan checked: {e.id} ({e.kind})", f"  {k.described}", f"  {span}",
                 f"  stops at {lim.max_current_a:g} A" + (f", {lim.compliance_v:g} V" if lim.compliance_v else "")
                 + (f", {lim.max_power_w:g} W" if lim.max_power_w else "")]
        if k.switches_ground:
            lines.append("  ⚠ switches the board's ground: every return must pass through the element")
        if not self.app.state.caution_confirmed:
            lines.append("  r shows the safety caution first")
        box.update("\n".join(lines))

    def _show_spec(self) -> None:
        box = self.query_one("#spec-summary", Static)
        path = self.app.state.spec_path
        kind = self.app.plan_kind()
        if path is None:
            offered = len(self.app.specs_for_plan())
            box.update(f"part spec: none ({offered} of kind {kind or '?'} with k)\nwithout a spec there is no verdict")
            return
        try:
            from benchlog.specfiles import load_spec

            spec = load_spec(path)
        except Exception as exc:
            box.update(f"part spec {shown(path)}: ✘ {exc.line() if hasattr(exc, 'line') else exc}")
            return
        named = self.app.plan_spec()
        origin = "named by the plan" if named is not None and _same(named, path) else "picked with k"
        lines = [f"part spec ({origin}):", f"  {shown(path)}",
                 f"  {getattr(spec, 'name', '')} ({getattr(spec, 'kind', '')})"]
        if kind is not None and getattr(spec, "kind", None) != kind:
            lines[2:2] = [f"  ✘ spec for a {getattr(spec, 'kind', '?')},", f"    plan measures a {kind}:",
                          "    k picks one of its kind"]
        for attr, label, unit in (("rds_on_ohm", "R_DS(on)", "Ω"), ("vf_v", "Vf", "V"), ("rth_ja_k_per_w", "RθJA", "K/W"),
                                  ("tj_max_c", "Tj max", "°C")):
            value = _find(spec, attr)
            if value is not None:
                from ..units import si

                lines.append(f"  {label} {si(value, unit) if unit not in ('°C', 'K/W') else f'{value:g} {unit}'}")
        box.update("\n".join(lines))

    def action_leave_field(self) -> None:
        self.set_focus(None)

    def on_input_submitted(self, _event: Input.Submitted) -> None:
        self.set_focus(None)

    def action_next_plan(self) -> None:
        state = self.app.state
        if not state.plans:
            self.app.say("No plans to pick from (start with --plan or use the demo).")
            return
        index = (state.plans.index(state.plan_path) + 1) % len(state.plans) if state.plan_path in state.plans else 0
        path = state.plans[index]
        try:
            text = read_utf8(path)[0]
        except BadInput as exc:
            self.app.say(f"Plan not loaded: {exc.line()}")
            return
        state.plan_path, state.plan_text = path, text
        how = self.app.pair_spec()
        self._load_form()
        spec = shown(state.spec_path) if state.spec_path else "none"
        self.app.say(f"Plan {shown(path)} with spec {spec} ({how}).")
        self.refresh_view()

    def action_next_spec(self) -> None:
        if self.app.next_spec() is None:
            self.app.say(f"No part spec of kind {self.app.plan_kind() or '?'} to pick from.")
        else:
            self.app.say(f"Spec {shown(self.app.state.spec_path)} picked with k.")
        self.refresh_view()

    def action_save_plan(self) -> None:
        """Save the plan as typed under a new name: never over the plan it came from nor an earlier save.

        A plan the plan reader refuses is not saved (the check names the key); the
        spec it names is rewritten relative to the new file, so the pair still holds.
        """
        state = self.app.state
        try:
            self.app.current_plan()
        except BadInput as exc:
            self.app.say(f"Plan not saved: {exc.line()}", severity="error")
            return
        folder = self.app.runs_dir / "plans"
        stem = state.plan_path.stem if state.plan_path else "plan"
        text = self._text_for(folder)
        target = folder / f"{stem}-edited.toml"
        try:
            folder.mkdir(parents=True, exist_ok=True)
            serial = 1
            while True:
                target = folder / f"{stem}-edited{'' if serial == 1 else f'-{serial}'}.toml"
                try:
                    with open(target, "x", encoding="utf-8") as handle:  # "x": an existing file is never replaced
                        handle.write(text)
                    break
                except FileExistsError:
                    serial += 1
        except OSError as exc:
            self.app.say(f"Plan not saved: {write_failure(target, exc).line()}")
            return
        self.app.say(f"Plan saved to {shown(target)}")

    def _text_for(self, folder: Path) -> str:
        """The edited plan's text with its `spec` key pointing at the spec in use, from `folder`."""
        state = self.app.state
        doc = self.app.plan_table()
        if state.spec_path is None:
            return state.plan_text
        import os

        doc = {"spec": os.path.relpath(state.spec_path.resolve(), folder.resolve()),
               **{k: v for k, v in doc.items() if k != "spec"}}
        return dump_tables(doc)

    def action_run(self) -> None:
        self.app.request_sweep()


def _same(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve()
    except OSError:
        return a == b


def _find(obj, attr: str):
    """A spec value wherever the spec keeps it (top level, its kind's part or its thermal data)."""
    value = getattr(obj, attr, None)
    if isinstance(value, (int, float)):
        return float(value)
    for part in ("part", "thermal"):
        inner = getattr(obj, part, None)
        value = getattr(inner, attr, None) if inner is not None else None
        if isinstance(value, (int, float)):
            return float(value)
    return None
