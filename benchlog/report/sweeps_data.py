"""The input-voltage and reverse-leakage sweeps of a loaded run as one JSON-ready block (SI keys).

It sits in report/ because it reads the run file (analysis/ reads none).

`fit`, `check` and the report all show the same figures; this is where they are put together from
`input_sweep` and `leakage_sweep`. The reverse records are read from the run file itself, because a
loaded run's metadata keeps only the last one.
"""

from __future__ import annotations

from typing import Any


def _operating_a(meta, given: float | None) -> float | None:
    if given is not None:
        return given
    value = meta.element.operating_a
    return float(value) if isinstance(value, (int, float)) and not isinstance(value, bool) else None


def sweeps_payload(frame, meta, *, spec=None, operating_a: float | None = None) -> dict[str, Any]:
    """`series`, `takeover_v` and `leakage` (empty or None when the run has no such sweep)."""
    from benchlog.analysis.input_sweep import analyse_input_sweep
    from benchlog.analysis.leakage_sweep import analyse_leakage, leakage_entry, run_temperature
    from benchlog.runs import read_events
    from benchlog.runs.events import ReverseResult
    from benchlog.runs.series import series_column, series_inputs

    temperature_c, source = run_temperature(frame, meta)
    out: dict[str, Any] = {"series": [], "takeover_v": None}
    s = analyse_input_sweep(frame, series_inputs(meta), series_column(frame), offset_v=meta.offset_v,
                            operating_a=_operating_a(meta, operating_a), spec=spec, ambient_c=temperature_c)
    if s is not None:
        out["series"] = [
            {"input_v": x.input_v, "points": x.points, "conduction": x.conduction, "r_on_ohm": x.r_on_ohm,
             "r_on_expanded_u_ohm": x.r_on_u_ohm, "vgs_v": x.vgs_v, "drop_v": x.drop_v, "loss_w": x.loss_w,
             "spec_r_on_ohm": x.spec_r_on_ohm, "spec_r_on_max_ohm": x.spec_r_on_max_ohm, "note": x.note}
            for x in s.series]
        out.update({
            "operating_a": s.operating_a, "takeover_v": s.takeover_v, "takeover_u_v": s.takeover_u_v,
            "takeover_note": s.takeover_note, "predicted_takeover_v": s.predicted_takeover_v,
            "predicted_full_takeover_v": s.predicted_full_v, "predicted_note": s.predicted_note,
            "takeover_agrees": s.agrees, "conduction_rule": s.rule,
            "worst_input_v": None if s.worst is None else s.worst.input_v,
            "worst_loss_w": None if s.worst is None else s.worst.loss_w,
        })
    reverse = [e for e in read_events(meta.path) if isinstance(e, ReverseResult)] if meta.path else []
    sweep = analyse_leakage(reverse, temperature_c, source, spec=spec) if len(reverse) > 1 else None
    entry = leakage_entry(sweep)
    out["leakage"] = entry["leakage"] if entry else []
    out["leakage_sweep"] = entry
    return out


