"""The input-voltage and reverse-leakage sweeps of a run, for `fit` and `check`: one JSON block, one text block."""

from __future__ import annotations

from typing import Any

from benchlog.quantity import engineering, measured


def focus_frame(frame, meta):
    """`runs.series.focus_frame`: the highest input's series of an input sweep, else every point."""
    from benchlog.runs.series import focus_frame as focus

    return focus(frame, meta)


def sweeps_payload(frame, meta, *, spec=None, operating_a: float | None = None) -> dict[str, Any]:
    """`report.sweeps_data.sweeps_payload`: `series`, `takeover_v` and `leakage` of a loaded run."""
    plan = meta.header.plan
    if plan is not None and not plan.input_voltages_v and not plan.source.get("reverse"):
        # neither an input sweep nor a reverse step: nothing to analyse, and no reason to load the analyses
        return {"series": [], "takeover_v": None, "leakage": [], "leakage_sweep": None}
    from benchlog.report.sweeps_data import sweeps_payload as payload

    return payload(frame, meta, spec=spec, operating_a=operating_a)


def print_sweeps(p: dict[str, Any]) -> None:
    """The human form of `sweeps_payload`."""
    if p.get("series"):
        print(f"  input sweep at {p['operating_a']:g} A ({len(p['series'])} inputs):")
        for x in p["series"]:
            r = (f"R {measured(x['r_on_ohm'], x['r_on_expanded_u_ohm'], 'Ω', None)}" if x["r_on_ohm"] is not None
                 else "body diode")
            spec = "" if x["spec_r_on_ohm"] is None else (
                f"  (spec {engineering(x['spec_r_on_ohm'], 'Ω')} typ" + ("" if x["spec_r_on_max_ohm"] is None else
                                                                  f", {engineering(x['spec_r_on_max_ohm'], 'Ω')} max") + ")")
            print(f"    {x['input_v']:>6g} V  |Vgs| {engineering(x['vgs_v'], 'V', 3):>8}  {r:<26} "
                  f"drop {engineering(x['drop_v'], 'V')}  loss {engineering(x['loss_w'], 'W')}{spec}")
        print(f"  takeover: {p['takeover_note']}")
        if p.get("predicted_note"):
            agree = {True: "agrees", False: "DISAGREES", None: "not compared"}[p["takeover_agrees"]]
            print(f"  predicted: {p['predicted_note']} — measured {agree}")
        if p.get("worst_input_v") is not None:
            print(f"  worst case: {engineering(p['worst_loss_w'], 'W')} at {p['worst_input_v']:g} V input")
        print(f"  rule: {p['conduction_rule']}")
    s = p.get("leakage_sweep")
    if s:
        print(f"  leakage sweep {s['outcome'].upper()} at {s['temperature_c']:g} °C ({s['temperature_source']}):")
        for x in s["leakage"]:
            print(f"    {x['voltage_v']:>6g} V  {engineering(x['current_a'], 'A'):>10}  limit {engineering(x['limit_a'], 'A')} "
                  f"({x['limit_source']})  {'ok' if x['passed'] else 'FAIL'}")
        if s["hot_a"] is not None:
            print(f"  at Tj max {s['hot_tj_c']:g} °C: {engineering(s['hot_a'], 'A')} ({s['hot_model']})")
        if s["runaway"] is not None:
            print(f"  {s['runaway']['text']}")
        for note in s["notes"]:
            print(f"  note: {note}")
