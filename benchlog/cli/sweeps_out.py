"""The input-voltage and reverse-leakage sweeps of a run, for `fit` and `check`: one JSON block, one text block."""

from __future__ import annotations

import math
from typing import Any


def focus_frame(frame, meta):
    """`runs.series.focus_frame`: the highest input's series of an input sweep, else every point."""
    from benchlog.runs.series import focus_frame as focus

    return focus(frame, meta)


def sweeps_payload(frame, meta, *, spec=None, operating_a: float | None = None) -> dict[str, Any]:
    """`report.sweeps_data.sweeps_payload`: `series`, `takeover_v` and `leakage` of a loaded run."""
    from benchlog.report.sweeps_data import sweeps_payload as payload

    return payload(frame, meta, spec=spec, operating_a=operating_a)


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
