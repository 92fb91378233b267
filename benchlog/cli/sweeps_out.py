"""The input-voltage and reverse-leakage sweeps of a run, for `fit` and `check`: one JSON block, one text block."""

from __future__ import annotations

import math
from typing import Any


def focus_frame(frame, meta):
    """The points a single-series fit or verdict takes: the highest input of an input sweep, else all of them."""
    from benchlog.analysis.input_sweep import has_series, series_column, _plan_table
    from benchlog.runs.series import series_inputs_v

    if not has_series(frame, meta):
        return frame, None
    inputs = series_inputs_v(_plan_table(meta.header))
    top = max(range(len(inputs)), key=lambda k: inputs[k])
    rows = series_column(frame) == top
    return frame[rows].reset_index(drop=True), (
        f"input sweep: the single fit takes the series at the highest input, {inputs[top]:g} V "
        f"({int(rows.sum())} points); each input is fitted in 'series'")


def _operating_a(meta, given: float | None) -> float | None:
    if given is not None:
        return given
    element = getattr(meta, "element", None)
    value = element.get("operating_a") if isinstance(element, dict) else getattr(element, "operating_a", None)
    return float(value) if isinstance(value, (int, float)) and not isinstance(value, bool) else None


def sweeps_payload(frame, meta, *, spec=None, operating_a: float | None = None) -> dict[str, Any]:
    """`series`, `takeover_v` and `leakage` (empty or None when the run has no such sweep)."""
    from benchlog.analysis.input_sweep import analyse_input_sweep
    from benchlog.analysis.leakage_sweep import analyse_leakage, leakage_entry, run_temperature
    from benchlog.runs import read_events
    from benchlog.runs.events import ReverseResult

    temperature_c, source = run_temperature(frame, meta)
    out: dict[str, Any] = {"series": [], "takeover_v": None}
    s = analyse_input_sweep(frame, meta, operating_a=_operating_a(meta, operating_a), spec=spec,
                            ambient_c=temperature_c)
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
    reverse = [e for e in read_events(meta.path) if isinstance(e, ReverseResult)] if getattr(meta, "path", None) else []
    sweep = analyse_leakage(reverse, temperature_c, source, spec=spec) if len(reverse) > 1 else None
    entry = leakage_entry(sweep)
    out["leakage"] = entry["leakage"] if entry else []
    out["leakage_sweep"] = entry
    return out


def _g(x: float | None, fmt: str, unit: str = "") -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "—"
    return f"{x:{fmt}}" + (f" {unit}" if unit else "")


def print_sweeps(p: dict[str, Any]) -> None:
    """The human form of `sweeps_payload`."""
    if p.get("series"):
        print(f"  input sweep at {p['operating_a']:g} A ({len(p['series'])} inputs):")
        for x in p["series"]:
            r = (f"R {x['r_on_ohm'] * 1e3:.4g} ± {x['r_on_expanded_u_ohm'] * 1e3:.2g} mΩ" if x["r_on_ohm"] is not None
                 else "body diode")
            spec = "" if x["spec_r_on_ohm"] is None else (
                f"  (spec {x['spec_r_on_ohm'] * 1e3:.4g} mΩ typ" + ("" if x["spec_r_on_max_ohm"] is None else
                                                                    f", {x['spec_r_on_max_ohm'] * 1e3:.4g} max") + ")")
            print(f"    {x['input_v']:>6g} V  |Vgs| {_g(x['vgs_v'], '.3g', 'V'):>8}  {r:<26} drop {_g(x['drop_v'], '.4g', 'V')}"
                  f"  loss {_g(x['loss_w'], '.4g', 'W')}{spec}")
        print(f"  takeover: {p['takeover_note']}")
        if p.get("predicted_note"):
            agree = {True: "agrees", False: "DISAGREES", None: "not compared"}[p["takeover_agrees"]]
            print(f"  predicted: {p['predicted_note']} — measured {agree}")
        if p.get("worst_input_v") is not None:
            print(f"  worst case: {p['worst_loss_w']:.4g} W at {p['worst_input_v']:g} V input")
        print(f"  rule: {p['conduction_rule']}")
    s = p.get("leakage_sweep")
    if s:
        print(f"  leakage sweep {s['outcome'].upper()} at {s['temperature_c']:g} °C ({s['temperature_source']}):")
        for x in s["leakage"]:
            print(f"    {x['voltage_v']:>6g} V  {x['current_a'] * 1e6:.4g} µA  limit {x['limit_a'] * 1e6:.4g} µA "
                  f"({x['limit_source']})  {'ok' if x['passed'] else 'FAIL'}")
        if s["hot_a"] is not None:
            print(f"  at Tj max {s['hot_tj_c']:g} °C: {s['hot_a'] * 1e6:.4g} µA ({s['hot_model']})")
        if s["runaway"] is not None:
            print(f"  {s['runaway']['text']}")
        for note in s["notes"]:
            print(f"  note: {note}")
