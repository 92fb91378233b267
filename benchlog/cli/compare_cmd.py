"""`benchlog compare`: runs against the first, every difference with its uncertainty and whether it is significant."""

from __future__ import annotations

import argparse
import math
from typing import Any

from benchlog.quantity import measured, unit_of

from .output import print_json


def register(sub) -> None:
    p = sub.add_parser(
        "compare",
        help="compare runs: each fitted value and the loss, differences to the first run with their uncertainty",
        description=(
            "Fit every run with the first run's model and write, for each fitted quantity and for the loss at "
            "one operating current, the first run, the other, their difference d and U(d). Terms from the same "
            "meter on the same range (same *IDN?) cancel as fully correlated (GUM 5.2.2); the fit's own "
            "scatter and other instruments add. A difference is significant when |d| > U(d) (k = 2)."
        ),
    )
    p.add_argument("runs", metavar="RUN", nargs="+", help="run files; the first is the reference")
    p.add_argument("--spec", metavar="SPEC.toml", help="part spec: adds each run's verdict")
    p.add_argument("--at", metavar="AMPS", type=float, help="current for the loss (default: the first run's operating_a)")
    p.add_argument("--json", action="store_true", help="print one JSON document (SI keys) for scripts")
    p.set_defaults(handler=run_compare)


def comparison_of(paths: list[str], spec_path: str | None = None, at_a: float | None = None):
    """Load the runs (and the spec) and compare them; bad input is raised as BadInput."""
    from benchlog.analysis.compare import compare_runs
    from benchlog.badinput import BadInput
    from benchlog.runs import load

    if len(paths) < 2:
        raise BadInput("arguments", "RUN", f"names {len(paths)} run", "two or more run files to compare")
    if at_a is not None and not (math.isfinite(at_a) and at_a > 0):
        raise BadInput("argument", "--at", f"is {at_a:g} A", "a current above 0 A")
    spec = None
    if spec_path:
        from benchlog.specfiles import load_spec

        spec = load_spec(spec_path)
    return compare_runs([load(p) for p in paths], spec=spec, at_a=at_a)


def comparison_entry(c) -> dict[str, Any]:
    """The comparison as JSON: keys end in the quantity's own unit suffix."""
    def side(s):
        return {"run": s.path, "serial": s.serial, "model": s.model, "verdict": s.verdict}

    out: dict[str, Any] = {"reference": side(c.reference), "model": c.model, "current_a": c.current_a,
                           "current_source": c.current_source, "k": c.k, "level": _level(), "against": []}
    for other, row in zip(c.others, c.rows):
        diffs = []
        for d in row:
            q, unit = d.quantity, unit_of(d.quantity)
            diffs.append({"quantity": q, f"reference_{q}": d.a, f"std_u_reference_{q}": d.u_a,
                          f"other_{q}": d.b, f"std_u_other_{q}": d.u_b, f"difference_{q}": d.d,
                          f"std_u_difference_{q}": d.u_d, f"expanded_u_difference_{q}": d.expanded_u_d,
                          "significant": d.significant, "cancelled": list(d.cancelled),
                          "text": measured(d.d, d.expanded_u_d, unit, d.k)})
        out["against"].append({**side(other), "differences": diffs})
    out["notes"] = list(c.notes)
    return out


def _level() -> str:
    from benchlog.analysis.compare import LEVEL

    return LEVEL


def run_compare(args: argparse.Namespace) -> int:
    c = comparison_of(args.runs, args.spec, args.at)
    if args.json:
        print_json(comparison_entry(c))
    else:
        from benchlog.analysis.compare import comparison_lines  # here: other commands do not pay for it

        print("\n".join(comparison_lines(c)))
    return 0
