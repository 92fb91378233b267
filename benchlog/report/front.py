"""The report's first page and its last: the answer (verdicts, decision rule, conditions), lab record and sign-off.

A reader opens a report for the answer; the traceability that backs it follows
the figures. Calibration dates come from the bench file (optional per role); a
calibration past due when the run was made is a warning next to the verdict,
because it qualifies every number below it.
"""

from __future__ import annotations

import hashlib
from datetime import date
from typing import Any, Sequence

from benchlog.quantity import engineering, measured

from .document import Paragraph, Table, VerdictBlock
from .from_verdict import verdict_block


def report_id(run_ids: Sequence[str], generated_utc: str) -> str:
    """A short ID naming these runs at this time: 8 hex of SHA-256 over the sorted run ids, then the UTC minute."""
    digest = hashlib.sha256("\n".join(sorted(run_ids)).encode("utf-8")).hexdigest()[:8]
    minute = generated_utc.replace("-", "").replace(":", "")[:13]  # 20261202T0613
    return f"R-{digest}-{minute}Z"


def _table_get(record: Any, *keys: str) -> Any:
    node = getattr(record, "table", None) if record is not None else None
    for key in keys:
        if node is None or not hasattr(node, "get"):
            return None
        node = node.get(key)
    return node


def lab_fields(header) -> dict[str, Any]:
    """Operator, board revision and measured ambient from the plan's optional [lab] table (None when absent)."""
    return {key: _table_get(header.plan, "lab", key) for key in ("operator", "board_revision", "ambient_measured_c")}


def instrument_records(header) -> list[tuple[str, str, str, str]]:
    """(role, *IDN?, asset number, calibration due) per instrument; the last two from the bench file when given."""
    rows = []
    for inst in header.instruments:
        asset = _table_get(header.bench, "roles", inst.role, "asset")
        due = _table_get(header.bench, "roles", inst.role, "calibration_due")
        rows.append((inst.role, inst.idn or "—", str(asset) if asset else "—", str(due) if due else "—"))
    return rows


def _day(text: str) -> date | None:
    try:
        return date.fromisoformat(str(text)[:10])
    except ValueError:
        return None


def calibration_warnings(runs, today: date) -> list[Paragraph]:
    """A warning per instrument whose calibration was past due when a run was made, or is past due today."""
    out: list[Paragraph] = []
    seen: set[tuple[str, str, str]] = set()
    for ra in runs:
        header = ra.meta.header
        measured_on = _day(header.started_utc)
        for role, idn, asset, due_text in instrument_records(header):
            due = _day(due_text) if due_text != "—" else None
            if due is None or (role, idn, due_text) in seen:
                continue
            who = f"{role} {idn}" + (f" (asset {asset})" if asset != "—" else "")
            if measured_on is not None and due < measured_on:
                seen.add((role, idn, due_text))
                out.append(Paragraph(f"CALIBRATION PAST DUE: {who} was due {due_text}, before run "
                                     f"{ra.path.name} was made on {measured_on}. Every number it read is "
                                     "unconfirmed until the instrument is checked.", "warning"))
            elif due < today:
                seen.add((role, idn, due_text))
                out.append(Paragraph(f"Calibration now past due: {who} was due {due_text} (in date when "
                                     f"{ra.path.name} was made). Recalibrate before the next measurement.", "note"))
    return out


def _reverse_text(meta) -> str | None:
    rev = meta.reverse
    if rev is None:
        return None
    return (f"{'PASS' if rev.passed else 'FAIL'}: reversed at {engineering(rev.voltage_v, 'V')} for "
            f"{engineering(rev.duration_s, 's')}, current {engineering(rev.current_a, 'A')} against the limit "
            f"{engineering(rev.limit_a, 'A')}")


def answer_blocks(runs, lot_verdicts: Sequence[VerdictBlock], spec, detail_up_to: int) -> list:
    """Verdicts first: each lot's, then each run's forward and reverse result (a table beyond `detail_up_to` runs)."""
    blocks: list = list(lot_verdicts)
    if spec is None:
        blocks.append(Paragraph("No verdict: no part spec was given (--spec). The fitted values below are "
                                "measurements, not a judgement.", "warning"))
    if len(runs) <= detail_up_to:
        for ra in runs:
            if ra.check is not None:
                block = verdict_block(ra.check)
                blocks.append(VerdictBlock(block.outcome, f"{ra.label}: {block.headline}", block.rule, block.details))
            elif ra.check_problem:
                blocks.append(Paragraph(f"{ra.label}: no verdict: {ra.check_problem}.", "warning"))
            elif ra.fit is not None and spec is None:
                blocks.append(Paragraph(f"{ra.label}: {_fit_headline(ra)}"))
            reverse = _reverse_text(ra.meta)
            if reverse is not None:
                blocks.append(Paragraph(f"{ra.label}, reverse-polarity test: {reverse}.",
                                        "text" if ra.meta.reverse.passed else "warning"))
        return blocks
    rows = []
    for ra in runs:
        v = ra.check.verdict if ra.check is not None else None
        loss = "—"
        if v is not None:
            unit = "W" if v.quantity.endswith("_w") else "V"
            loss = f"{measured(v.measured, v.expanded_u, unit, v.k, v.coverage_probability)} vs {engineering(v.limit, unit) if v.limit is not None else 'no limit'}"
        rows.append((ra.element.serial or ra.element.id or "—", ra.path.name,
                     v.outcome.upper() if v is not None else (f"none: {ra.check_problem}" if ra.check_problem else "—"),
                     loss, _reverse_text(ra.meta) or "not tested",
                     "complete" if ra.meta.complete else "INCOMPLETE"))
    rule = next((ra.check.verdict.rule for ra in runs if ra.check is not None), "")
    blocks.append(Table(("serial", "run", "verdict", "measured ± U vs limit", "reverse test", "run"),
                        tuple(rows), caption="Verdict of each part" + (f". Rule: {rule}" if rule else "")))
    return blocks


def _fit_headline(ra) -> str:
    fit = ra.fit
    parts = [f"{k} = {measured(v, fit.expanded_u.get(k), _unit(k), fit.budgets[k].k, fit.budgets[k].coverage_probability)}"
             for k, v in fit.params.items()]
    return f"{fit.model} fit: " + "; ".join(parts)


def _unit(key: str) -> str:
    from benchlog.quantity import unit_of

    return unit_of(key)


def lab_table(runs, rid: str, generated_utc: str) -> Table:
    """Who, what board, which instruments (asset, calibration due), measured ambient: one row per fact."""
    rows: list[tuple[str, str]] = [("report ID", rid), ("generated (UTC)", generated_utc)]
    seen: set[tuple[str, ...]] = set()
    for ra in runs:
        lab = lab_fields(ra.meta.header)
        for key, label in (("operator", "operator"), ("board_revision", "board revision")):
            if lab[key]:
                row = (f"{label} ({ra.path.name})", str(lab[key]))
                if row not in seen:
                    seen.add(row)
                    rows.append(row)
        if lab["ambient_measured_c"] is not None:
            rows.append((f"ambient, measured ({ra.path.name})", engineering(lab["ambient_measured_c"], "°C", 3)))
        for role, idn, asset, due in instrument_records(ra.meta.header):
            key = (role, idn, asset, due)
            if key not in seen:
                seen.add(key)
                rows.append((f"instrument: {role}", f"{idn}; asset {asset}; calibration due {due}"))
    return Table(("record", ""), tuple(rows), caption="Lab record")


def sign_off_table(rid: str, operators: Sequence[str]) -> Table:
    """Blank lines for the people who stand behind the report; the operator's name when the plan gave it."""
    measured_by = ", ".join(dict.fromkeys(o for o in operators if o)) or ""
    return Table(("", "name", "date", "signature"), (
        ("measured by", measured_by, "", ""),
        ("checked by", "", "", ""),
        ("approved by", "", "", ""),
    ), caption=f"Sign-off for report {rid}")
