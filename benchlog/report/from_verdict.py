"""The verdict of `analysis.judging.check_run` as a report block: the word, the rule, and the numbers."""

from __future__ import annotations

from benchlog.analysis.verdict import Check

from .document import VerdictBlock
from .text import number, with_uncertainty


def verdict_block(check: Check) -> VerdictBlock:
    v = check.verdict
    measured = with_uncertainty(v.measured, v.expanded_u, "W" if v.quantity.endswith("_w") else "V", v.k,
                                v.coverage_probability)
    limit = "no limit" if v.limit is None else number(v.limit, "W" if v.quantity.endswith("_w") else "V")
    headline = (f"{check.part} at {number(check.current_a, 'A')}: measured {v.quantity} {measured} "
                f"against the limit {limit}")
    r = check.reverse
    if r is not None:
        headline += (f"; reverse {r.outcome.upper()}: {number(r.current_a, 'A', 3)} at {number(r.voltage_v, 'V')} "
                     f"reversed against {number(r.limit_a, 'A', 3)}")
    details = []
    j = check.judgement
    if j is not None:
        details.append(f"Judged at {j.tj.text()}")
        if j.gate is not None:
            details.append(f"Gate drive: {j.gate.text()}")
        details.append(f"Limit at: {j.limit_at}")
    details += [
        f"Loss: {v.explain()}",
        f"Drop: {check.drop_verdict.explain()}",
        f"Against the typical prediction: {check.typical_comparison}",
        f"Operating current {number(check.current_a, 'A')} from {check.current_source}; "
        f"ambient {number(check.ambient_c, '°C')}; fit model {check.model}",
    ]
    if r is not None:
        details.insert(0, f"Reverse: {r.text()}. Rule: {r.rule}. The run's verdict is the worse of forward "
                          f"({v.outcome}) and reverse ({r.outcome}).")
    details += [f"Note: {n}" for n in check.notes]
    return VerdictBlock(check.outcome, headline, v.rule, tuple(details))
