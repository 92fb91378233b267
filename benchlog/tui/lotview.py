"""Judging one part of a lot and summing the lot up (the statistics themselves come from `analysis.lot`)."""

from __future__ import annotations

from pathlib import Path
from typing import Any, Sequence

from benchlog.quantity import label_of, unit_of

from .findings import study_run


def part_quantity(findings) -> tuple[str, str, float | None, float | None]:
    """The number a lot is judged on and its expanded U (95.45 %, the budget's own k_p): R_on for a channel,
    else the drop at the operating current (Vf). With a spec, the judgement's own value and U (its Tj
    term included, as `check` and `lot` state them); without one, the fit's."""
    fit = findings.fit
    if fit is None:
        return ("value", "", None, None)
    check = findings.check
    if check is not None and check.judgement is not None:
        j = check.judgement
        unit = unit_of(j.quantity)
        return (label_of(j.quantity) if j.quantity == "r_on_ohm" else "Vf", unit, float(j.value),
                float(j.budget.expanded_u))
    if "r_on_ohm" in fit.params:
        return (label_of("r_on_ohm"), "Ω", fit.params["r_on_ohm"], fit.budgets["r_on_ohm"].expanded_u)
    from .views.results import operating_current

    at = operating_current(findings)
    if at is None:
        return ("Vf", "V", None, None)
    value, expanded, _ = fit.drop_expanded_at(at)
    return ("Vf", "V", float(value), float(expanded))


def judge_part(entry: Any, spec_path: Path | None) -> None:
    """Fill a `LotEntry` from its run file (worker thread)."""
    try:
        findings = study_run(entry.run_path, spec_path)
    except Exception as exc:
        entry.message = exc.line() if hasattr(exc, "line") else str(exc)
        return
    name, unit, value, u = part_quantity(findings)
    entry.quantity = name
    entry.unit = unit
    entry.value = value
    entry.expanded_u = u
    entry.verdict = findings.verdict
    if findings.fit_error:
        entry.message = findings.fit_error


QUANTITY_NAMES = {key: (label_of(key), unit_of(key)) for key in ("r_on_ohm", "drop_v")}


def summarise(run_paths: Sequence[Path], spec_path: Path | None):
    """The lot summary of `benchlog.analysis.lot` (mean, σ, Cpk, per-part outcomes); None without a spec."""
    if spec_path is None or not run_paths:
        return None
    from benchlog.report.lot_runs import lot_from_runs
    from benchlog.specfiles import load_spec

    return lot_from_runs([str(p) for p in run_paths], load_spec(spec_path))
