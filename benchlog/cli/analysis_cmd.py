"""Subcommands `estimate`, `check`, `lot` and `design`: predictions from specs, verdicts on runs, lots, design reviews.

Exit codes: `check` and `lot` 0 pass, 1 fail, 3 conditional; `design` 0 when a
candidate is recommended, 1 when none meets every check; `estimate` 0. `estimate`
and `design` exit 5 (EXIT_THERMAL; 4 is a file that could not be written) when any part or candidate runs away thermally
or settles above its Tj max, whatever else they found. Bad input
(file, key, argument) is 2, one line on stderr. JSON keys carry SI unit suffixes;
a fitted value's standard uncertainty is under the same key in `std_u`.
"""

from __future__ import annotations

import math
from typing import Any

from benchlog.ambient import DEFAULT_AMBIENT_C
from benchlog.quantity import coverage_text, engineering, label_of, measured, unit_of

from .output import print_json

EXIT_CODES = {"pass": 0, "fail": 1, "conditional": 3}
#: A part or candidate runs away thermally or exceeds its Tj max (estimate, design).
EXIT_THERMAL = 5


def register(sub) -> None:
    """Add this module's subcommands to the `benchlog` parser."""
    e = sub.add_parser("estimate", help="predict drop, loss and junction temperature from part specs",
                       description="Predict drop, loss and Tj (electro-thermal loop) of each part at one operating point.")
    e.add_argument("specs", nargs="+", metavar="SPEC.toml", help="part spec file(s)")
    e.add_argument("--at", type=float, required=True, metavar="AMPS", help="load current in A")
    e.add_argument("--ambient", type=float, default=DEFAULT_AMBIENT_C, metavar="C",
                   help=f"ambient in °C (default {DEFAULT_AMBIENT_C:g})")
    e.add_argument("--vin", type=float, default=None, metavar="V",
                   help="input voltage in V (sets a MOSFET's |Vgs| when its gate is tied to the return)")
    e.add_argument("--zener", type=float, default=None, metavar="V", help="gate clamp zener voltage in V")
    e.add_argument("--json", action="store_true", help="print JSON")
    e.set_defaults(handler=_estimate)

    c = sub.add_parser("check", help="judge a recorded run against its part spec (pass / fail / conditional)",
                       description="Measured loss and drop at the operating current (from the fit, with "
                                   "uncertainty) against the spec's predicted maximum, ILAC-G8 guard band.")
    c.add_argument("run", metavar="RUN", help="run file")
    c.add_argument("--spec", required=True, metavar="SPEC.toml", help="part spec file")
    c.add_argument("--at", type=float, default=None, metavar="AMPS",
                   help="operating current in A (default: the plan's operating_a, else the largest measured)")
    c.add_argument("--json", action="store_true", help="print JSON")
    c.set_defaults(handler=_check)

    lo = sub.add_parser("lot", help="incoming inspection: statistics, Cpk, outliers and a verdict for many runs",
                        description="One value per part (R_on or Vf at the operating current), mean, σ, "
                                    "Cpk/Cpu, generalized ESD outliers, per-part and lot verdicts.")
    lo.add_argument("runs", nargs="+", metavar="RUN", help="run files, one per part")
    lo.add_argument("--spec", required=True, metavar="SPEC.toml", help="part spec file")
    lo.add_argument("--at", type=float, default=None, metavar="AMPS", help="operating current in A")
    lo.add_argument("--json", action="store_true", help="print JSON")
    lo.set_defaults(handler=_lot)

    d = sub.add_parser("design", help="review candidate protection parts against a design file",
                       description="Side-by-side review of the candidates in a design file, with the gate "
                                   "clamp sized from the E-series and a stated recommendation.")
    d.add_argument("design", metavar="DESIGN.toml", help="design file")
    d.add_argument("--json", action="store_true", help="print JSON")
    d.set_defaults(handler=_design)


# --------------------------------------------------------------------------- estimate
def _point(op) -> dict[str, Any]:
    return {
        "drop_v": op.drop_v, "loss_w": op.loss_w, "tj_c": op.tj_c, "iterations": op.iterations,
        "converged": op.converged, "runaway": op.runaway, "over_tj_max": op.over_tj_max,
        "conduction": op.conduction, "vgs_v": op.vgs_v, "resistance_ohm": op.resistance_ohm,
        "body_share": op.body_share, "method": op.method, "message": op.message,
    }


def estimate_entry(spec, p) -> dict[str, Any]:
    entry = {"part": p.part, "kind": p.kind, "spec": spec.path, "current_a": p.current_a, "ambient_c": p.ambient_c,
             "vin_v": p.vin_v, "zener_v": p.zener_v, "tj_max_c": p.tj_max_c}
    entry.update(_point(p.typical))
    entry["max"] = _point(p.maximum) if p.maximum is not None else None
    entry["notes"] = list(p.notes)
    return entry


def _fmt(value, spec: str = ".4g", unit: str = "") -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "—"
    return f"{value:{spec}}{(' ' + unit) if unit else ''}"


def _argument(name: str, value: float | None, *, positive: bool = False, minimum: float | None = None) -> None:
    """Reject NaN, infinities and out-of-range numbers that argparse's float() lets through."""
    from benchlog.badinput import BadInput

    if value is None:
        return
    if not math.isfinite(value) or (positive and value <= 0) or (minimum is not None and value < minimum):
        expected = "a finite number" + (" above 0" if positive else f" of at least {minimum:g}" if minimum is not None else "")
        raise BadInput("argument", name, f"is {value:g}", expected)


def _estimate(args) -> int:
    from benchlog.analysis.predict import predict
    from benchlog.specfiles import load_spec

    _argument("--at", args.at, minimum=0.0)
    _argument("--ambient", args.ambient, minimum=-273.15)
    _argument("--vin", args.vin, minimum=0.0)
    _argument("--zener", args.zener, positive=True)

    rows = []
    for path in args.specs:
        spec = load_spec(path)
        rows.append((spec, predict(spec, args.at, args.ambient, vin_v=args.vin, zener_v=args.zener)))
    hot = any(op is not None and (op.runaway or op.over_tj_max) for _, p in rows for op in (p.typical, p.maximum))
    code = EXIT_THERMAL if hot else 0
    if args.json:
        print_json([estimate_entry(s, p) for s, p in rows])
        return code
    for spec, p in rows:
        print(f"{p.part} ({p.kind}) at {p.current_a:g} A, ambient {p.ambient_c:g} °C"
              + (f", Vin {p.vin_v:g} V" if p.vin_v is not None else ""))
        for op in (p.typical, p.maximum):
            if op is None:
                continue
            state = op.message if not op.converged else f"{op.iterations} iterations, {op.conduction}"
            print(f"  {op.variant:<8} drop {engineering(op.drop_v, 'V'):>10}  loss {engineering(op.loss_w, 'W'):>10}  "
                  f"Tj {_fmt(op.tj_c, '.1f', '°C'):>9}  ({state})")
            if op.over_tj_max or op.runaway:
                print(f"  ! {op.message}")
        for note in p.notes:
            print(f"  note: {note}")
    if hot:
        print(f"exit {EXIT_THERMAL}: a part runs away thermally or exceeds its Tj max at this operating point")
    return code


# --------------------------------------------------------------------------- check
def _extrapolation(c) -> dict[str, Any]:
    e = c.extrapolation
    if e is None:
        return {"extrapolated": False}
    return {"extrapolated": bool(e.side), "side": e.side or None, "beyond_fraction": e.beyond,
            "margin_fraction": e.margin, "bars_pass": bool(e.side) and e.bars_pass,
            "fitted_min_a": e.fitted_min_a, "fitted_max_a": e.fitted_max_a}


def _budget(b) -> list[dict[str, Any]]:
    from .fit_cmd import budget_entries

    return budget_entries(b)


def conditions_entry(j) -> dict[str, Any]:
    """The conditions a verdict is judged at (`judging.Judgement`): Tj, its u and source, |Vgs|, the limit."""
    g = j.gate
    unit = _unit(j.quantity)
    return {
        "tj_c": j.tj.value_c, "tj_u_c": j.tj.u_c, "tj_source": j.tj.source, "tj_why": j.tj.why,
        "vgs_v": j.vgs_v,
        "gate": None if g is None else {
            "vgs_v": g.vgs_v, "how": g.how, "spec_vgs_v": g.spec_vgs_v, "spec_range_v": list(g.range_v),
            "limit_factor": g.factor, "limit_factor_u": g.u_rel, "bars_pass": bool(g.bar), "why": g.bar or None,
            "input_for_spec_vgs_v": g.input_for_spec_v},
        "limit_at": j.limit_at,
        "judged": {"quantity": j.quantity, j.quantity: j.value, "std_u": j.std_u, "expanded_u": j.expanded_u,
                   "decision_expanded_u": j.decision_u,
                   "k": j.budget.k, "decision_k": j.decision_budget.k,
                   "coverage_probability": j.budget.coverage_probability, f"limit_{unit}": j.limit, f"limit_min_{unit}": j.limit_min,
                   "budget": _budget(j.budget), "decision_budget": _budget(j.decision_budget)},
        "bars": list(j.bars),
    }


def check_entry(c) -> dict[str, Any]:
    from benchlog.analysis.reverse import reverse_entry

    p, cold = c.predicted, c.unheated
    j = c.judgement
    return {
        "verdict": c.outcome,
        "forward_verdict": c.verdict.outcome,
        **(conditions_entry(j) if j is not None else {}),
        "reverse": reverse_entry(c.reverse),
        "part": c.part, "run": c.run, "current_a": c.current_a, "current_source": c.current_source,
        "ambient_c": c.ambient_c, "model": c.model,
        "measured_drop_v": c.measured_drop_v, "measured_loss_w": c.measured_loss_w,
        "std_u": {"measured_drop_v": c.drop_std_u_v, "measured_loss_w": c.loss_std_u_w},
        "k": c.k,  # k_p of the measurement's budget; the verdict's guard band uses the comparison's, "decision_k"
        "coverage_probability": c.coverage_probability,
        "expanded_u": {"measured_drop_v": c.k * c.drop_std_u_v, "measured_loss_w": c.k * c.loss_std_u_w},
        "predicted_loss_w": p.loss_w, "predicted_drop_v": p.drop_v, "predicted_tj_c": p.tj_c,
        "predicted_max_loss_w": p.maximum.loss_w if p.maximum else None,
        "predicted_max_drop_v": p.maximum.drop_v if p.maximum else None,
        "predicted_max_tj_c": p.maximum.tj_c if p.maximum else None,
        "unheated_loss_w": cold.loss_w, "unheated_max_loss_w": cold.maximum.loss_w if cold.maximum else None,
        "limit_loss_w": c.verdict.limit, "limit_drop_v": c.drop_verdict.limit,
        "limit_source": c.verdict.limit_source, "rule": c.verdict.rule,
        "drop_verdict": c.drop_verdict.outcome,
        "caveat": c.verdict.caveat,
        "extrapolation": _extrapolation(c),
        "run_complete": c.run_complete, "run_outcome": c.run_outcome,
        "typical_comparison": c.typical_comparison,
        "explanation": c.verdict.explain(),
        "iterations": p.iterations, "converged": p.converged, "runaway": p.runaway, "conduction": p.conduction,
        "notes": list(c.notes),
    }


def _check(args) -> int:
    from benchlog.specfiles import load_spec
    from benchlog.analysis.judging import check_run
    from benchlog.runs import load_points  # numpy arrays: a verdict has no use for pandas

    _argument("--at", args.at, positive=True)
    spec = load_spec(args.spec)
    from .soak_out import soak_block
    from .sweeps_out import focus_frame, print_sweeps, sweeps_payload

    whole, meta = load_points(args.run)
    frame, focus = focus_frame(whole, meta)
    c = check_run(frame, meta, spec, at_a=args.at)
    soak, soak_lines = soak_block(whole, meta, spec)
    sweeps = sweeps_payload(whole, meta, spec=spec, operating_a=c.current_a)
    if args.json:
        entry = check_entry(c)
        if focus:
            entry["notes"].insert(0, focus)
        if soak is not None:
            entry["soak"] = soak
        entry.update(sweeps)
        print_json(entry)
    else:
        print(f"{c.outcome.upper()}  {c.part}, run {c.run}")
        print(f"  at {c.current_a:.4g} A ({c.current_source}), ambient {c.ambient_c:g} °C, fit: {c.model}")
        j = c.judgement
        if j is not None:
            print(f"  judged at {j.tj.text()}")
            if j.gate is not None:
                print(f"  gate drive: {j.gate.text()}")
            unit = unit_of(j.quantity)
            print(f"  {label_of(j.quantity)} = {measured(j.value, j.expanded_u, unit, c.k, c.coverage_probability)}"
                  f" against {engineering(j.limit, unit, 5)} [{j.limit_at}]")
        flagged = [n for n in c.notes if n.startswith(("extrapolated:", "the run is incomplete", "the run ended"))]
        flagged += [n for n in c.notes if c.judgement is not None and n in c.judgement.bars + c.judgement.notes
                    and n not in flagged]
        for note in flagged:  # what qualifies the verdict comes first, not among the notes
            print(f"  ! {note}")
        p = c.coverage_probability
        print(f"  measured drop {measured(c.measured_drop_v, c.k * c.drop_std_u_v, 'V', c.k, p)}, "
              f"loss {measured(c.measured_loss_w, c.k * c.loss_std_u_w, 'W', c.k, p)}")
        print(f"  limit {engineering(c.verdict.limit, 'W', 5)}: {c.verdict.limit_source}")
        print(f"  predicted in service (typical, self-heated): {engineering(c.predicted.loss_w, 'W')} "
              f"at Tj {_fmt(c.predicted.tj_c, '.1f', '°C')}")
        print(f"  {c.typical_comparison}")
        print(f"  rule: {c.verdict.rule}")
        if c.reverse is not None:
            print(f"  {c.reverse.text()}")
            print(f"  verdict: the worse of forward ({c.verdict.outcome}) and reverse ({c.reverse.outcome})")
        print_sweeps(sweeps)
        if focus:
            print(f"  note: {focus}")
        for note in c.notes:
            if note not in flagged:
                print(f"  note: {note}")
        for line in soak_lines:
            print(f"  {line}")
    leak = sweeps.get("leakage_sweep")
    # a leakage sweep that fails fails the check, whatever the forward verdict says
    return EXIT_CODES["fail" if leak and leak["outcome"] == "fail" else c.outcome]


# --------------------------------------------------------------------------- lot
def _unit(quantity: str) -> str:
    return quantity.rsplit("_", 1)[-1]


def lot_entry(s) -> dict[str, Any]:
    u = _unit(s.quantity)
    q = s.quantity
    return {
        "verdict": s.outcome, "part": s.part, "quantity": q, "n": s.n,
        f"mean_{u}": s.mean, f"std_{u}": s.std, f"min_{u}": s.min, f"max_{u}": s.max,
        f"usl_{u}": s.usl, f"lsl_{u}": s.lsl, "limit_source": s.limit_source,
        "capability_name": s.capability_name, "capability": s.capability,
        **({f"{s.capability_name.lower()}_lower": s.capability_lower} if s.capability_name != "none" else {}),
        "capability_lower": s.capability_lower, "capability_confidence": s.capability_confidence,
        "capability_method": s.capability_method,
        "outliers": s.outliers, "outlier_rule": s.outlier_rule, "counts": s.counts,
        "rule": s.rule, "part_rule": s.part_rule,
        "parts": [{"serial": p.serial, "run": p.run, q: p.value, "std_u": {q: p.std_u},
                   "expanded_u": {q: p.expanded_u}, "verdict": p.outcome, "outlier": p.outlier} for p in s.parts],
        "notes": list(s.notes),
    }


def _lot(args) -> int:
    from benchlog.report.lot_runs import lot_from_runs
    from benchlog.specfiles import load_spec

    _argument("--at", args.at, positive=True)
    spec = load_spec(args.spec)
    s = lot_from_runs(args.runs, spec, at_a=args.at)
    if args.json:
        print_json(lot_entry(s))
        return EXIT_CODES[s.outcome]
    unit = unit_of(s.quantity)
    width = max(6, *(len(p.serial) for p in s.parts))
    print(f"{s.outcome.upper()}  lot of {s.n} × {s.part}: {label_of(s.quantity)} ({s.quantity})")
    print(f"  {'serial':<{width}}  {'value ± U (95.45 % coverage)':<28}  verdict")
    for p in s.parts:
        flag = "  OUTLIER" if p.outlier else ""
        value = measured(p.value, p.expanded_u, unit, k=None)  # the heading states the coverage
        print(f"  {p.serial:<{width}}  {value:<28}  {p.outcome}{flag}")
    print(f"  mean {engineering(s.mean, unit, 5)}, σ {engineering(s.std, unit, 3)}, "
          f"min {engineering(s.min, unit, 5)}, max {engineering(s.max, unit, 5)}")
    print(f"  limits: USL {engineering(s.usl, unit, 5)}, LSL {engineering(s.lsl, unit, 5)} ({s.limit_source})")
    print(f"  {s.capability_name} = {_fmt(s.capability, '.3g')}, {s.capability_confidence:.0%} lower bound "
          f"{_fmt(s.capability_lower, '.3g')} ({s.capability_method})")
    print(f"  outliers: {s.outliers} ({s.outlier_rule})")
    print(f"  counts: {s.counts['pass']} pass, {s.counts['fail']} fail, {s.counts['conditional']} conditional")
    print(f"  rule: {s.rule}; per part: {s.part_rule}")
    for note in s.notes:
        print(f"  note: {note}")
    return EXIT_CODES[s.outcome]


# --------------------------------------------------------------------------- design
def takeover_entry(t) -> dict[str, Any] | None:
    """Where the body diode takes over (None for an element without a channel)."""
    if t is None:
        return None
    return {"takeover_v": t.input_v, "full_v": t.full_v, "current_a": t.current_a, "ambient_c": t.ambient_c,
            "variant": t.variant, "body_loss_w": t.body_loss_w, "body_tj_c": t.body_tj_c, "note": t.note}


def design_entry(r) -> dict[str, Any]:
    d = r.design
    clamp = None
    if r.clamp is not None:
        c = r.clamp
        clamp = {"zener_v": c.zener_v, "resistor_ohm": c.resistor_ohm, "series": c.series, "picked": c.picked,
                 "at_vin_v": c.at_vin_v, "active": c.active, "zener_current_a": c.zener_current_a,
                 "zener_power_w": c.zener_power_w, "resistor_power_w": c.resistor_power_w,
                 "resistor_rating_w": c.resistor_rating_w, "zener_power_rating_w": c.zener_power_rating_w,
                 "zener_ok": c.zener_ok, "note": c.note, "nominal_v": c.nominal_v,
                 "quiescent_a": c.quiescent_a, "quiescent_w": c.quiescent_w}
    return {
        "design": d.name, "file": d.path, "application": d.application,
        "input": {"nominal_v": d.vin_nominal_v, "min_v": d.vin_min_v, "max_v": d.vin_max_v, "reverse_v": d.reverse_v},
        "load": {"nominal_a": d.load_nominal_a, "max_a": d.load_max_a}, "ambient_max_c": d.ambient_max_c,
        "recommended": r.recommended, "recommendation": r.recommendation, "reasons": list(r.reasons),
        "reminders": list(r.reminders), "margins": r.margins_note, "clamp": clamp,
        "candidates": [
            {"label": c.label, "part": c.part, "kind": c.kind, "spec": c.spec_path, "acceptable": c.acceptable,
             "drop_v": c.drop_v, "loss_w": c.loss_w, "efficiency": c.efficiency, "tj_c": c.tj_c,
             "tj_max_c": c.tj_max_c, "tj_margin_k": c.tj_margin_k, "worst_loss_w": c.worst_loss_w,
             "blocking_rating_v": c.blocking_rating_v, "blocking_needed_v": c.blocking_needed_v,
             "blocking_headroom_v": c.blocking_headroom_v, "vgs_unclamped_v": c.vgs_unclamped_v,
             "vgs_clamped_v": c.vgs_clamped_v, "vgs_max_v": c.vgs_max_v,
             "threshold_margin_v": c.threshold_margin_v, "min_input_conduction": c.min_input_conduction,
             "leakage_a": c.leakage_a, "reverse_tj_c": c.reverse_tj_c, "thermal_fault": c.thermal_fault,
             "guaranteed_vgs_v": c.guaranteed_vgs_v, "takeover": takeover_entry(c.takeover),
             "checks": [{"name": k.name, "ok": k.ok, "detail": k.detail} for k in c.checks]}
            for c in r.candidates
        ],
    }


def _design(args) -> int:
    from benchlog.specfiles import review_file

    r = review_file(args.design)
    hot = [c.label for c in r.candidates if c.thermal_fault]
    code = EXIT_THERMAL if hot else 0 if r.recommended else 1
    if args.json:
        print_json(design_entry(r))
        return code
    d = r.design
    print(f"{d.name} ({d.application}): input {d.vin_min_v:g}–{d.vin_nominal_v:g}–{d.vin_max_v:g} V"
          + (f", reverse {d.reverse_v:g} V" if d.reverse_v else "")
          + f"; load {d.load_nominal_a:g} A (max {d.load_max_a:g} A); ambient up to {d.ambient_max_c:g} °C")
    rows = [
        ("drop (nominal)", lambda c: engineering(c.drop_v, "V", 3)),
        ("loss (nominal)", lambda c: engineering(c.loss_w, "W", 3)),
        ("efficiency", lambda c: _fmt(None if c.efficiency is None else c.efficiency * 100, ".2f", "%")),
        ("loss (worst)", lambda c: engineering(c.worst_loss_w, "W", 3)),
        ("Tj (worst)", lambda c: _fmt(c.tj_c, ".0f", "°C")),
        ("Tj margin", lambda c: _fmt(c.tj_margin_k, ".0f", "K")),
        ("blocking headroom", lambda c: _fmt(c.blocking_headroom_v, ".3g", "V")),
        ("|Vgs| unclamped", lambda c: _fmt(c.vgs_unclamped_v, ".3g", "V")),
        ("|Vgs| clamped", lambda c: _fmt(c.vgs_clamped_v, ".3g", "V")),
        ("threshold margin", lambda c: _fmt(c.threshold_margin_v, ".2f", "V")),
        ("R_DS(on) down to", lambda c: _fmt(c.guaranteed_vgs_v, ".3g", "V")),
        ("takeover below", lambda c: _fmt(c.takeover_v, ".3g", "V")),
        ("loss below it", lambda c: engineering(None if c.takeover is None else c.takeover.body_loss_w, "W", 3)),
        ("reverse leakage", lambda c: engineering(c.leakage_a, "A", 3)),
        ("meets every check", lambda c: "yes" if c.acceptable else "no"),
    ]
    width = max(14, *(len(c.label) for c in r.candidates))
    print(f"  {'':<18}" + "".join(f"{c.label:>{width + 2}}" for c in r.candidates))
    for name, cell in rows:
        print(f"  {name:<18}" + "".join(f"{cell(c):>{width + 2}}" for c in r.candidates))
    for c in r.candidates:
        for k in c.checks:
            mark = {True: "ok  ", False: "FAIL", None: "n/a "}[k.ok]
            print(f"  {mark} {c.label}: {k.name}: {k.detail}")
    if r.clamp is not None:
        k = r.clamp
        print(f"  gate clamp: {k.zener_v:g} V zener, {k.resistor_ohm:g} Ω ({k.series}); at {k.at_vin_v:g} V: "
              f"{engineering(k.zener_current_a, 'A', 3)}, zener {engineering(k.zener_power_w, 'W', 3)}, "
              f"resistor {engineering(k.resistor_power_w, 'W', 3)} (≥ {k.resistor_rating_w:g} W part)"
              + (f"; {k.note}" if k.note else ""))
    print(f"  {r.recommendation}")
    for reason in r.reasons:
        print(f"    - {reason}")
    print(f"  {r.margins_note}")
    for m in r.reminders:
        print(f"  caution: {m}")
    if hot:
        print(f"  exit {EXIT_THERMAL}: {', '.join(hot)} run(s) away thermally or exceed Tj max")
    return code
