"""Verdicts: a measured value with its expanded uncertainty against a spec limit, by a stated decision rule.

Decision rule: ILAC-G8:09/2019 ("Guidelines on decision rules and statements
of conformity"), simple acceptance with a guard band w = U (section 4.2.2,
guarded acceptance / guarded rejection), U = k·u with k = 2:
  upper limit L:  pass if x + U ≤ L;  fail if x − U > L;  otherwise conditional;
  lower limit L:  pass if x − U ≥ L;  fail if x + U < L;  otherwise conditional.
A value exactly on an acceptance limit is accepted; the zone between the
acceptance and rejection limits is reported as conditional, never rounded off.

Extrapolation rule (ours, for `check_run`): the measured drop at the operating
current comes from the fit, and a fit's uncertainty holds only where it has
points. An operating current outside the currents the fit was made on (the
points with weight in it) is an extrapolation and the verdict says so. Up to
EXTRAPOLATION_MARGIN (10 %) beyond the range — above the largest current, or
below the smallest — the outcome stands; further out a `pass` becomes
`conditional` (the model may not hold there: self-heating, a bend the sweep
never saw), and the reason is stated. `fail` and `conditional` stand, named as
extrapolated. A run that did not finish as planned (no end record, or an end
other than "complete") is named in the notes; its points are judged as they are.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from benchlog.badinput import BadInput

from .predict import OperatingPoint, Prediction, predict
from .reverse import ReverseVerdict, judge_reverse, worse
from .spec import PartSpec

OUTCOMES = ("pass", "fail", "conditional")

#: How far beyond the fitted current range a value may still pass (module docstring): 10 %.
EXTRAPOLATION_MARGIN = 0.10


def rule_text(side: str, k: float) -> str:
    if side == "upper":
        test = "pass if x + U ≤ limit, fail if x − U > limit, otherwise conditional"
    else:
        test = "pass if x − U ≥ limit, fail if x + U < limit, otherwise conditional"
    return f"ILAC-G8:09/2019 guard band w = U (U = k·u, k = {k:g}): {test}"


@dataclass(frozen=True)
class Verdict:
    """A decision and everything that produced it."""

    outcome: str  # "pass" | "fail" | "conditional"
    rule: str
    quantity: str  # e.g. "loss_w", "drop_v", "r_on_ohm"
    measured: float
    expanded_u: float
    k: float
    limit: float | None  # None when no limit could be computed (the outcome is then conditional)
    side: str  # "upper" | "lower"
    limit_source: str
    caveat: str = ""  # what else decided or qualifies the outcome (e.g. an extrapolated value)

    def explain(self) -> str:
        caveat = f" {self.caveat}" if self.caveat else ""
        if self.limit is None:
            return f"{self.outcome}: no limit for {self.quantity} ({self.limit_source}).{caveat}"
        op = "≤" if self.side == "upper" else "≥"
        return (
            f"{self.outcome}: {self.quantity} = {self.measured:.6g} ± {self.expanded_u:.3g} (k = {self.k:g}) "
            f"against {'maximum' if self.side == 'upper' else 'minimum'} {self.limit:.6g} "
            f"[{self.limit_source}]; needed x {'+' if self.side == 'upper' else '−'} U {op} limit to pass.{caveat} "
            f"Rule: {self.rule}"
        )


def _finite(name: str, value: float) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating)) or not math.isfinite(value):
        raise BadInput("argument", name, f"is {value!r}", "a finite number")
    return float(value)


def decide(
    value: float,
    expanded_u: float,
    limit: float,
    *,
    side: str = "upper",
    k: float = 2.0,
    quantity: str = "value",
    limit_source: str = "",
) -> Verdict:
    """Apply the guard-band rule (module docstring) to one value."""
    value, expanded_u, limit = _finite("value", value), _finite("expanded_u", expanded_u), _finite("limit", limit)
    if expanded_u < 0:
        raise BadInput("argument", "expanded_u", f"is {expanded_u:g}", "an expanded uncertainty of at least 0")
    if side not in ("upper", "lower"):
        raise BadInput("argument", "side", f"is {side!r}", "'upper' or 'lower'")
    outcome = str(decide_many(np.array([value]), np.array([expanded_u]), limit, side=side)[0])
    return Verdict(outcome, rule_text(side, k), quantity, value, expanded_u, k, limit, side, limit_source)


def decide_many(values: np.ndarray, expanded_u: np.ndarray, limit: float, *, side: str = "upper") -> np.ndarray:
    """The same rule over arrays (lots of thousands of parts): an array of outcome strings."""
    x = np.asarray(values, dtype=float)
    u = np.asarray(expanded_u, dtype=float)
    if side == "upper":
        passed, failed = x + u <= limit, x - u > limit
    else:
        passed, failed = x - u >= limit, x + u < limit
    return np.where(passed, "pass", np.where(failed, "fail", "conditional"))


# --------------------------------------------------------------------------- a run against its spec
@dataclass(frozen=True)
class RunConditions:
    """What the run says about the operating point: current, ambient, gate drive."""

    current_a: float
    current_source: str
    ambient_c: float
    vin_v: float | None
    zener_v: float | None
    body_diode: bool
    notes: tuple[str, ...]


@dataclass(frozen=True)
class Check:
    """One run judged against its part spec at the operating current."""

    part: str
    run: str
    current_a: float
    current_source: str
    ambient_c: float
    model: str
    measured_drop_v: float
    drop_std_u_v: float
    measured_loss_w: float
    loss_std_u_w: float
    k: float
    predicted: Prediction  # at the run's ambient with self-heating: the loss in service
    unheated: Prediction  # at Tj = ambient: what a short sweep sees
    verdict: Verdict  # on the loss, against the maximum (or typical when the spec has no maximum)
    drop_verdict: Verdict
    typical_comparison: str
    notes: tuple[str, ...]
    extrapolation: "Extrapolation | None" = None  # the operating current against the fitted current range
    run_complete: bool = True  # the run has its end record and ended "complete"
    run_outcome: str = "complete"
    reverse: "ReverseVerdict | None" = None  # the reverse step judged at the test's temperature (`reverse`)

    @property
    def outcome(self) -> str:
        """The run's verdict: the worse of the forward verdict and the reverse result."""
        if self.reverse is None:
            return self.verdict.outcome
        return worse(self.verdict.outcome, self.reverse.outcome)


@dataclass(frozen=True)
class Extrapolation:
    """Where the operating current sits against the currents the fit has points at."""

    current_a: float
    fitted_min_a: float
    fitted_max_a: float
    margin: float = EXTRAPOLATION_MARGIN

    @property
    def side(self) -> str:
        """"above" or "below" the fitted range, "" inside it."""
        if self.current_a > self.fitted_max_a:
            return "above"
        if self.current_a < self.fitted_min_a:
            return "below"
        return ""

    @property
    def beyond(self) -> float:
        """How far outside, as a fraction of the nearer end of the range (0 inside)."""
        if self.side == "above":
            return self.current_a / self.fitted_max_a - 1.0
        if self.side == "below":
            return 1.0 - self.current_a / self.fitted_min_a
        return 0.0

    @property
    def bars_pass(self) -> bool:
        return self.beyond > self.margin

    def text(self) -> str:
        if not self.side:
            return ""
        end = "largest" if self.side == "above" else "smallest"
        ref = self.fitted_max_a if self.side == "above" else self.fitted_min_a
        text = (f"extrapolated: {self.current_a:.4g} A is {self.beyond * 100:.2g} % {self.side} the {end} "
                f"fitted current {ref:.4g} A (fitted range {self.fitted_min_a:.4g}–{self.fitted_max_a:.4g} A)")
        if self.bars_pass:
            text += f"; more than {self.margin * 100:g} % outside, so at best conditional"
        else:
            text += f"; within the {self.margin * 100:g} % margin, outcome kept"
        return text


def extrapolation(fit, current_a: float) -> Extrapolation:
    """The operating current against the currents with weight in `fit` (unresolved points do not count)."""
    i = np.asarray(fit.current_a, dtype=float)
    if fit.excluded is not None:
        i = i[~fit.excluded]
    return Extrapolation(float(current_a), float(i.min()), float(i.max()))


def _extrapolated(v: Verdict, ext: Extrapolation) -> Verdict:
    """Apply the extrapolation rule (module docstring) to one verdict."""
    if not ext.side:
        return v
    why = ext.text()
    if ext.bars_pass and v.outcome == "pass":
        return replace(v, outcome="conditional", caveat=f"Would pass by the guard band, but the value is {why}.")
    return replace(v, caveat=f"The value is {why}.")


def run_state(meta) -> tuple[bool, str, str]:
    """(finished as planned, outcome, a note when it did not)."""
    outcome = str(getattr(meta, "outcome", "complete") or "complete")
    has_end = bool(getattr(meta, "complete", True))
    if not has_end:
        return False, outcome, ("the run is incomplete: no end record (the recording stopped early); "
                                "the verdict rests on the points recorded")
    if outcome != "complete":
        finished = getattr(meta, "finished", None)
        message = getattr(finished, "message", "") if finished is not None else ""
        return False, outcome, (f"the run ended '{outcome}'" + (f" ({message})" if message else "")
                                + ", not as planned; the verdict rests on the points recorded")
    return True, outcome, ""


def _number(value) -> float | None:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    return float(value) if math.isfinite(value) else None


def run_element(meta) -> dict:
    """The element table of a run: the header's element merged over the plan's [element]."""
    header = getattr(meta, "header", None) or {}
    plan = header.get("plan") if isinstance(header.get("plan"), dict) else {}
    merged = dict(plan.get("element") or {}) if isinstance(plan.get("element"), dict) else {}
    merged.update(getattr(meta, "element", None) or header.get("element") or {})
    return merged


def run_conditions(frame, meta, spec: PartSpec, at_a: float | None = None) -> RunConditions:
    """Operating current (argument, else the plan's operating_a, else the largest measured), ambient, gate drive."""
    source = str(getattr(meta, "path", "run"))
    element = run_element(meta)
    notes: list[str] = []
    if at_a is not None:
        current = _finite("--at", at_a)
        if current <= 0:
            raise BadInput("argument", "--at", f"is {current:g} A", "a current above 0 A")
        where = "given with --at"
    elif _number(element.get("operating_a")) is not None:
        current, where = _number(element["operating_a"]), "the plan's operating_a"
    else:
        measured = frame["current_a"].to_numpy(dtype=float)
        measured = measured[np.isfinite(measured)]
        if measured.size == 0:
            raise BadInput(source, "points", "has no measured current", "a run with points")
        current, where = float(measured.max()), "the largest measured current (no operating_a in the plan)"
    ambient = _number(element.get("ambient_c"))
    if ambient is None:
        ambient = 25.0
        notes.append("no ambient recorded for the element: 25 °C assumed")
    kind = element.get("kind")
    gated = spec.element.has_gate
    body = bool(gated and element.get("measure") == "body_diode")
    if isinstance(kind, str) and kind and kind != spec.kind:
        raise BadInput(spec.path or "spec", "kind", f"is '{spec.kind}' but the run measured a '{kind}'",
                       "the spec of the part in the run")
    vin, zener = None, _number(element.get("zener_v"))
    if gated and body:
        vin = 0.0
        notes.append("the run measured the body diode on purpose: gate off, body diode predicted")
    elif gated and element.get("gate", spec.element.passive_gate) == spec.element.passive_gate:
        supply = frame["supply_v"].to_numpy(dtype=float) if "supply_v" in frame.columns else np.array([])
        supply = supply[np.isfinite(supply)]
        header = getattr(meta, "header", None) or {}
        bench = header.get("bench") if isinstance(header.get("bench"), dict) else {}
        wiring = bench.get("wiring") if isinstance(bench.get("wiring"), dict) else {}
        if supply.size:
            vin = float(np.median(supply))
            notes.append(f"gate to {spec.element.gate_to}: |Vgs| from the median recorded supply voltage {vin:.4g} V")
        elif _number(wiring.get("input_v")) is not None:
            vin = _number(wiring["input_v"])
            notes.append(f"gate to {spec.element.gate_to}: |Vgs| from the bench's input voltage {vin:.4g} V")
        else:
            notes.append(f"gate to {spec.element.gate_to} but no input voltage recorded: gate taken as fully driven")
    if zener is not None and vin is not None and not body:
        notes.append(f"gate clamp zener {zener:g} V")
    return RunConditions(current, where, ambient, vin, zener if not body else None, body, tuple(notes))


def _fit_model(spec: PartSpec, body_diode: bool) -> str:
    return spec.element.fit_model("body_diode" if body_diode else "channel")


@dataclass(frozen=True)
class LimitEnvelope:
    """The limit a run is judged against, and the two predictions it comes from.

    A run does not record how hot the junction was when each point was read: a
    short sweep stays near the ambient (like a datasheet's pulsed test), a slow one
    reaches the self-heated steady state. The limit is the larger of the two
    maximum-value predictions, so a part is failed only when it is outside its
    datasheet at either temperature; the prediction in service is the self-heated one.
    """

    drop_v: float | None
    loss_w: float | None
    source: str
    heated: Prediction  # at the ambient with self-heating (Tj = Ta + P·RθJA)
    cold: Prediction  # at Tj = ambient
    point: OperatingPoint | None


def _describe(p: Prediction, point: OperatingPoint, tj_label: str) -> str:
    named = "maximum" if point.variant == "max" else "typical (the spec gives no maximum)"
    tj = f"Tj {point.tj_c:.1f} °C" if point.tj_c is not None else "Tj unknown"
    return f"predicted {named} at {p.current_a:.4g} A, ambient {p.ambient_c:g} °C, {tj} ({tj_label})"


def limit_envelope(spec: PartSpec, current_a: float, ambient_c: float, vin_v=None, zener_v=None) -> LimitEnvelope:
    heated = predict(spec, current_a, ambient_c, vin_v=vin_v, zener_v=zener_v)
    cold_spec = replace(spec, thermal=replace(spec.thermal, rth_ja_k_per_w=None))
    cold = predict(cold_spec, current_a, ambient_c, vin_v=vin_v, zener_v=zener_v)
    options = []
    if heated.limit.drop_v is not None and spec.thermal.rth_ja_k_per_w is not None:
        options.append((heated.limit.drop_v, _describe(heated, heated.limit, "self-heated steady state"), heated.limit))
    if cold.limit.drop_v is not None:
        options.append((cold.limit.drop_v, _describe(cold, cold.limit, "no self-heating, a short sweep"), cold.limit))
    if not options:
        return LimitEnvelope(None, None, heated.limit.message, heated, cold, None)
    drop, source, point = max(options, key=lambda o: o[0])
    if len(options) == 2:
        source += "; the larger of the self-heated and the unheated maximum"
    return LimitEnvelope(drop, drop * current_a, source, heated, cold, point)


def _verdict_or_none(value, u, limit, k, quantity, source) -> Verdict:
    if limit is None:
        return Verdict("conditional", rule_text("upper", k), quantity, value, u, k, None, "upper",
                       f"the prediction has no value: {source}")
    return decide(value, u, limit, k=k, quantity=quantity, limit_source=source)


def check_run(frame, meta, spec: PartSpec, at_a: float | None = None) -> Check:
    """Judge a loaded run against `spec`: measured loss and drop at the operating current vs the prediction.

    The guard-band rule decides; an extrapolated operating current and an unfinished run are
    named in the verdict and the notes, and extrapolation far outside bars a pass (module docstring).
    """
    from .fits import fit_run  # the fit layer is imported late: a spec-only user never needs it

    cond = run_conditions(frame, meta, spec, at_a)
    fit = fit_run(frame, meta, _fit_model(spec, cond.body_diode))
    drop, u_drop = fit.drop_at(cond.current_a)
    k = float(fit.k)
    # The current is where the curve is evaluated, not a reading: u(P) = I·u(V).
    loss, u_loss = drop * cond.current_a, u_drop * cond.current_a
    env = limit_envelope(spec, cond.current_a, cond.ambient_c, cond.vin_v, cond.zener_v)
    ext = extrapolation(fit, cond.current_a)
    verdict = _extrapolated(_verdict_or_none(loss, k * u_loss, env.loss_w, k, "loss_w", env.source), ext)
    drop_verdict = _extrapolated(_verdict_or_none(drop, k * u_drop, env.drop_v, k, "drop_v", env.source), ext)
    complete, run_outcome, run_note = run_state(meta)
    notes = [n for n in (run_note, ext.text()) if n]
    notes += list(cond.notes) + list(env.heated.notes) + list(fit.notes)
    return Check(
        part=spec.name, run=str(getattr(meta, "path", "")), current_a=cond.current_a,
        current_source=cond.current_source, ambient_c=cond.ambient_c, model=fit.model,
        measured_drop_v=drop, drop_std_u_v=u_drop, measured_loss_w=loss, loss_std_u_w=u_loss, k=k,
        predicted=env.heated, unheated=env.cold, verdict=verdict, drop_verdict=drop_verdict,
        typical_comparison=typical_comparison(loss, k * u_loss, env.heated.typical, env.cold.typical),
        notes=tuple(dict.fromkeys(notes)), extrapolation=ext, run_complete=complete, run_outcome=run_outcome,
        reverse=judge_reverse(getattr(meta, "reverse", None), spec, frame, meta),
    )


def typical_comparison(loss_w: float, expanded_u_w: float, heated: OperatingPoint, cold: OperatingPoint) -> str:
    """How the measured loss sits against the typical predictions (self-heated and unheated), in words."""
    parts = []
    for label, point in (("self-heated", heated), ("unheated", cold)):
        if point.loss_w is None or point.loss_w <= 0:
            parts.append(f"no {label} typical prediction ({point.message})")
            continue
        t = point.loss_w
        rel = (loss_w - t) / t * 100.0
        agree = "within" if abs(loss_w - t) <= expanded_u_w else "outside"
        parts.append(f"{abs(rel):.1f} % {'above' if rel >= 0 else 'below'} the {label} typical {t:.4g} W "
                     f"({agree} ±U)")
    return f"measured {loss_w:.4g} W: " + "; ".join(parts)
