"""Subcommand `benchlog fit RUN`: fit a recorded sweep and print the parameters with their GUM uncertainties."""

from __future__ import annotations

import argparse
import math
from typing import Any

from benchlog.badinput import BadInput
from benchlog.quantity import engineering, measured

MODELS = ("auto", "resistive", "diode", "knee")

# what each parameter is called for people, and the unit it is printed in
_LABELS = {
    "r_on_ohm": ("R_on", "Ω"),
    "v0_v": ("V0", "V"),
    "ideality": ("n", ""),
    "i_s_a": ("Is", "A"),
    "r_s_ohm": ("Rs", "Ω"),
    "v_knee_v": ("V_knee", "V"),
    "r_d_ohm": ("r_d", "Ω"),
}


def register(sub) -> None:
    """Add `fit` to the `benchlog` parser."""
    p = sub.add_parser(
        "fit",
        help="fit a recorded run: R_DS(on) or the diode law, with GUM uncertainties",
        description=(
            "Fit the drop-versus-current points of a run file: V = V0 + R·I (resistive), the Shockley "
            "law with series resistance (diode), or the straight line above the knee (knee). 'auto' "
            "picks resistive or diode by AICc and says why. Uncertainties follow the GUM: type A from "
            "the fit, type B from the meters' accuracy in the run header; expanded for 95.45 % coverage with "
            "the coverage factor k_p of the budget's combined distribution (GUM 6.3)."
        ),
    )
    p.add_argument("run", metavar="RUN", help="run file (*.run)")
    p.add_argument("--model", choices=MODELS, default="auto", help="model to fit (default: auto)")
    p.add_argument("--json", action="store_true", help="print one JSON document (SI keys) for scripts")
    p.add_argument("--at", metavar="AMPS", type=float, action="append", default=[],
                   help="also give the drop at this current (repeatable)")
    p.add_argument("--tempco", metavar="PER_K", type=float, default=None,
                   help="temperature coefficient for the self-heating estimate: relative per K for "
                        "a resistance (0.004 = 0.4 %%/K), V/K for a diode drop (-0.002)")
    p.add_argument("--exclude-outliers", action="store_true",
                   help="refit without the flagged outliers (they are still reported)")
    p.add_argument("--spec", metavar="SPEC.toml", default=None,
                   help="part spec for a heat-soak run: its tempco (when no calibration is recorded), "
                        "Tj max and RθJA")
    p.set_defaults(handler=run_fit)


def _check_args(args: argparse.Namespace) -> None:
    for value in args.at:
        if not math.isfinite(value) or value < 0:
            raise BadInput("argument", "--at", f"is {value!r}", "a finite current >= 0 in A")
    if args.tempco is not None and (not math.isfinite(args.tempco) or args.tempco == 0):
        raise BadInput("argument", "--tempco", f"is {args.tempco!r}", "a finite, non-zero coefficient")


def budget_entries(budget) -> list[dict[str, Any]]:
    """A budget's terms for JSON: name, type A/B, u, ν and the distribution k_p models it by."""
    return [{"name": c.name, "type": c.kind, "u": c.u, "dof": c.dof, "distribution": c.distribution}
            for c in budget.components]


def fit_payload(frame, meta, args: argparse.Namespace) -> dict[str, Any]:
    """Fit the run and build the JSON-ready result (also what the human output prints from)."""
    from benchlog.analysis.fits import detect_self_heating, fit_knee, fit_run
    from benchlog.analysis.reverse import judge_reverse, reverse_entry

    from .sweeps_out import focus_frame, sweeps_payload

    whole = frame
    frame, focus = focus_frame(frame, meta)
    fit = fit_run(frame, meta, args.model, exclude_outliers=args.exclude_outliers)
    heating = detect_self_heating(frame, fit, args.tempco)
    payload: dict[str, Any] = {
        "run": str(meta.path),
        "model": fit.model,
        "params": dict(fit.params),
        "std_u": dict(fit.std_u),
        # k: the headline parameter's coverage factor; every parameter's own k_p is in "k_p"
        "k": fit.k,
        "coverage_probability": fit.coverage_probability,
        "k_p": {key: b.k for key, b in fit.budgets.items()},
        "expanded_u": dict(fit.expanded_u),
        "text": {key: measured(v, fit.expanded_u.get(key), _LABELS.get(key, (key, ""))[1], fit.budgets[key].k,
                               fit.budgets[key].coverage_probability)
                 for key, v in fit.params.items()},
        "dof_eff": {key: b.dof for key, b in fit.budgets.items()},
        "k_t": {key: b.k_t for key, b in fit.budgets.items()},
        "budget": {key: budget_entries(b) for key, b in fit.budgets.items()},
        "reason": fit.reason,
        "criterion_aicc": dict(fit.criterion),
        "outliers": [int(x) for x in fit.point_index[fit.outliers]],
        "outlier_rule": fit.outlier_rule,
        "self_heating": {
            "detected": heating.detected,
            "reason": heating.reason,
            "delta_t_c": heating.delta_t_c,
            "updown_p": heating.updown_p,
            "updown_shift_v": heating.updown_shift_v,
            "trend_p": heating.trend_p,
        },
        "points": fit.points,
        "points_used": fit.points_used,
        "unresolved": [int(x) for x in fit.unresolved_index],
        "temperature_c": fit.temperature_c,
        "tj_c": fit.tj.value_c if fit.tj is not None else None,
        "tj_u_c": fit.tj.u_c if fit.tj is not None else None,
        "tj_source": fit.tj.source if fit.tj is not None else None,
        "notes": ([focus] if focus else []) + list(fit.notes),
        "drop_at": [],
        # without a spec the reverse step is judged against the plan's own limit
        "reverse": reverse_entry(judge_reverse(meta.reverse, None, frame, meta)),
    }
    payload.update(sweeps_payload(whole, meta))
    for current in args.at:
        budget = fit.drop_budget_at(current)
        value, _ = fit.drop_at(current)
        payload["drop_at"].append({"current_a": current, "drop_v": value, "std_u_v": budget.u,
                                   "expanded_u_v": budget.expanded_u, "k": budget.k,
                                   "coverage_probability": budget.coverage_probability, "loss_w": value * current,
                                   "budget": budget_entries(budget),
                                   "text": measured(value, budget.expanded_u, "V", budget.k,
                                                    budget.coverage_probability)})
    if fit.model == "diode":
        # the straight-line form for the operating range, beside the diode law (issue 4, item 1)
        knee = fit_knee(fit.current_a, fit.drop_v, fit.accuracy, offset_removed=fit.offset_removed,
                        point_index=fit.point_index)
        payload["knee"] = {"params": dict(knee.params), "std_u": dict(knee.std_u),
                           "expanded_u": dict(knee.expanded_u), "k_p": {k: b.k for k, b in knee.budgets.items()},
                           "points": knee.points,
                           "points_used": knee.points_used,
                           "unresolved": [int(x) for x in knee.unresolved_index],
                           "above_a": float(knee.current_a.min())}
    from .soak_out import soak_block

    spec = None
    if getattr(args, "spec", None):
        from benchlog.specfiles import load_spec

        spec = load_spec(args.spec)
    soak, lines = soak_block(frame, meta, spec)
    if soak is not None:
        payload["soak"] = soak
        payload["soak_text"] = lines
    return payload


def _value(key: str, value: float, expanded: float | None, k: float, coverage: float) -> str:
    label, unit = _LABELS.get(key, (key, ""))
    return f"{label:<7}= {measured(value, expanded, unit, k, coverage)}"


def _in_print_order(params: dict[str, float], first: tuple[str, ...]) -> list[str]:
    """`first` in that order (those present), then the rest as they come: V = V_knee + r_d·I reads left to right."""
    return [k for k in first if k in params] + [k for k in params if k not in first]


def print_human(payload: dict[str, Any]) -> None:
    if payload["model"] is None:  # a heat-soak without a fittable sweep
        print(f"{payload['run']}: no fit of the sweep")
        for note in payload["notes"]:
            print(f"  note: {note}")
        for line in payload.get("soak_text", ()):
            print(f"  {line}")
        return
    used = payload["points_used"]
    of = f"{payload['points']} points" + ("" if used == payload["points"] else f" ({used} with weight)")
    print(f"{payload['run']}: {payload['model']} fit of {of}")
    for key, value in payload["params"].items():
        print("  " + _value(key, value, payload["expanded_u"][key], payload["k_p"][key], payload["coverage_probability"]))
    print(f"  model: {payload['reason']}")
    outliers = payload["outliers"]
    print(f"  outliers: {', '.join(map(str, outliers)) if outliers else 'none'} ({payload['outlier_rule']})")
    if payload["unresolved"]:
        print(f"  unresolved (zero weight): {', '.join(map(str, payload['unresolved']))}")
    heating = payload["self_heating"]
    print(f"  self-heating: {'yes' if heating['detected'] else 'no'} - {heating['reason']}")
    for row in payload["drop_at"]:
        k, p = row["k"], row["coverage_probability"]
        print(f"  at {engineering(row['current_a'], 'A')}: drop {measured(row['drop_v'], row['expanded_u_v'], 'V', k, p)}, "
              f"loss {measured(row['loss_w'], row['expanded_u_v'] * row['current_a'], 'W', k, p)}")
    if "knee" in payload:
        knee = payload["knee"]
        print(f"  knee line above {knee['above_a']:.4g} A:")
        for key in _in_print_order(knee["params"], ("v_knee_v", "r_d_ohm")):
            print("    " + _value(key, knee["params"][key], knee["expanded_u"][key], knee["k_p"][key],
                               payload["coverage_probability"]))
    rev = payload.get("reverse")
    if rev is not None:
        from benchlog.analysis.reverse import reverse_line

        print("  " + reverse_line(rev["verdict"], rev["current_a"], rev.get("expanded_u_a"), rev["voltage_v"],
                                  rev["duration_s"], rev["limit_a"], rev["limit_at"], rev["reason"]))
    from .sweeps_out import print_sweeps

    print_sweeps(payload)
    for note in payload["notes"]:
        print(f"  note: {note}")
    for line in payload.get("soak_text", ()):
        print(f"  {line}")


def _soak_only(frame, meta, args: argparse.Namespace, why: BadInput) -> dict[str, Any] | None:
    """A run whose sweep cannot be fitted but which holds a heat-soak: the soak alone, and why the fit is missing."""
    from .soak_out import soak_block

    spec = None
    if getattr(args, "spec", None):
        from benchlog.specfiles import load_spec

        spec = load_spec(args.spec)
    soak, lines = soak_block(frame, meta, spec)
    if soak is None:
        return None
    return {"run": str(meta.path), "model": None, "soak": soak, "soak_text": lines,
            "notes": [f"no fit of the sweep: {why.problem}"]}


def run_fit(args: argparse.Namespace) -> int:
    _check_args(args)
    from benchlog.runs import load_points  # numpy arrays: a fit has no use for pandas

    frame, meta = load_points(args.run)
    try:
        payload = fit_payload(frame, meta, args)
    except BadInput as exc:
        payload = _soak_only(frame, meta, args, exc)
        if payload is None:
            raise
    if args.json:
        from .output import print_json

        payload.pop("soak_text", None)
        print_json(payload)
    else:
        print_human(payload)
    return 0
