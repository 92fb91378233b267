"""Verdicts: a measured value with its expanded uncertainty against a spec limit, by a stated decision rule.

Decision rule: ILAC-G8:09/2019 ("Guidelines on decision rules and statements
of conformity"), simple acceptance with a guard band w = U (section 4.2.2,
guarded acceptance / guarded rejection), U = k_p·u with k_p the coverage factor of the
compared quantity's combined distribution for p = 95.45 % (`uncertainty.combine`, GUM 6.3):
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

from benchlog.ambient import DEFAULT_AMBIENT_C
from benchlog.badinput import BadInput
from benchlog.quantity import coverage_text

from .predict import Prediction
from .reverse import ReverseVerdict, worse

from .spec import PartSpec


def median_of(values) -> float:
    """The median as numpy.median gives it (mean of the two middle values for an even count), without
    the import of numpy.ma that numpy.median makes on first use."""
    s = np.sort(np.asarray(values, dtype=float).ravel())
    n = s.size
    if n == 0:
        return math.nan
    return float((s[(n - 1) // 2] + s[n // 2]) / 2.0)


OUTCOMES = ("pass", "fail", "conditional")

#: How far beyond the fitted current range a value may still pass (module docstring): 10 %.
EXTRAPOLATION_MARGIN = 0.10


def rule_text(side: str, k: float | None, coverage: float | None = None) -> str:
    """The guard-band rule in words; `k` None: each value's own k_p (a lot of parts, one budget each)."""
    if side == "upper":
        test = "pass if x + U ≤ limit, fail if x − U > limit, otherwise conditional"
    else:
        test = "pass if x − U ≥ limit, fail if x + U < limit, otherwise conditional"
    if k is None:
        factor = "U = k_p·u of each part's own budget" + (f", {coverage * 100:g} % coverage" if coverage else "")
    else:
        factor = f"U = k·u, {coverage_text(k, coverage)}"
    return f"ILAC-G8:09/2019 guard band w = U ({factor}): {test}"


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
    coverage_probability: float | None = None  # the p that k is k_p of; None: a k given as a number

    def explain(self) -> str:
        caveat = f" {self.caveat}" if self.caveat else ""
        if self.limit is None:
            return f"{self.outcome}: no limit for {self.quantity} ({self.limit_source}).{caveat}"
        op = "≤" if self.side == "upper" else "≥"
        return (
            f"{self.outcome}: {self.quantity} = {self.measured:.6g} ± {self.expanded_u:.3g} "
            f"({coverage_text(self.k, self.coverage_probability)}) "
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
    coverage_probability: float | None = None,
) -> Verdict:
    """Apply the guard-band rule (module docstring) to one value."""
    value, expanded_u, limit = _finite("value", value), _finite("expanded_u", expanded_u), _finite("limit", limit)
    if expanded_u < 0:
        raise BadInput("argument", "expanded_u", f"is {expanded_u:g}", "an expanded uncertainty of at least 0")
    if side not in ("upper", "lower"):
        raise BadInput("argument", "side", f"is {side!r}", "'upper' or 'lower'")
    outcome = str(decide_many(np.array([value]), np.array([expanded_u]), limit, side=side)[0])
    return Verdict(outcome, rule_text(side, k, coverage_probability), quantity, value, expanded_u, k, limit, side,
                   limit_source, coverage_probability=coverage_probability)


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
    predicted: Prediction  # at the run's ambient with self-heating: the loss in service (for information)
    unheated: Prediction  # at Tj = ambient (for information)
    verdict: Verdict  # on the loss, against the maximum at the run's Tj and gate drive (judging.judge)
    drop_verdict: Verdict
    typical_comparison: str
    notes: tuple[str, ...]
    extrapolation: "Extrapolation | None" = None  # the operating current against the fitted current range
    run_complete: bool = True  # the run has its end record and ended "complete"
    run_outcome: str = "complete"
    judgement: object = None  # judging.Judgement: the one judging path's result (`judging.judge`)
    reverse: "ReverseVerdict | None" = None  # the reverse step judged at the test's temperature (`reverse`)
    coverage_probability: float | None = None  # the p that `k` is k_p of (None: a k given as a number)

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
    """(finished as planned, outcome, a note when it did not) of a loaded run (`runs.RunMeta`)."""
    outcome = meta.outcome
    if not meta.complete:
        return False, outcome, ("the run is incomplete: no end record (the recording stopped early); "
                                "the verdict rests on the points recorded")
    if outcome != "complete":
        message = meta.finished.message if meta.finished is not None else ""
        return False, outcome, (f"the run ended '{outcome}'" + (f" ({message})" if message else "")
                                + ", not as planned; the verdict rests on the points recorded")
    return True, outcome, ""


def run_conditions(current_a: np.ndarray, supply_v: np.ndarray, meta, spec: PartSpec,
                   at_a: float | None = None) -> RunConditions:
    """Operating current (argument, else the plan's operating_a, else the largest measured), ambient, gate drive.

    `current_a` and `supply_v` are the run's point columns (NaN where not read); `meta` a `runs.RunMeta`.
    """
    source = str(meta.path)
    header = meta.header
    element = header.element
    notes: list[str] = []
    if at_a is not None:
        current = _finite("--at", at_a)
        if current <= 0:
            raise BadInput("argument", "--at", f"is {current:g} A", "a current above 0 A")
        where = "given with --at"
    elif element.operating_a is not None:
        current, where = element.operating_a, "the plan's operating_a"
    else:
        measured = np.asarray(current_a, dtype=float)
        measured = measured[np.isfinite(measured)]
        if measured.size == 0:
            raise BadInput(source, "points", "has no measured current", "a run with points")
        current, where = float(measured.max()), "the largest measured current (no operating_a in the plan)"
    ambient = element.ambient_c
    if ambient is None:
        ambient = DEFAULT_AMBIENT_C
        notes.append(f"no ambient recorded for the element: {DEFAULT_AMBIENT_C:g} °C assumed")
    kind = element.kind
    gated = spec.element.has_gate
    body = bool(gated and element.measure == "body_diode")
    if isinstance(kind, str) and kind and kind != spec.kind:
        raise BadInput(spec.path or "spec", "kind", f"is '{spec.kind}' but the run measured a '{kind}'",
                       "the spec of the part in the run")
    vin, zener = None, element.zener_v
    if gated and body:
        vin = 0.0
        notes.append("the run measured the body diode on purpose: gate off, body diode predicted")
    elif gated and (element.gate or spec.element.passive_gate) == spec.element.passive_gate:
        supply = np.asarray(supply_v, dtype=float)
        supply = supply[np.isfinite(supply)]
        if supply.size:
            vin = median_of(supply)
            notes.append(f"gate to {spec.element.gate_to}: |Vgs| from the median recorded supply voltage {vin:.4g} V")
        elif header.input_v is not None:
            vin = header.input_v
            notes.append(f"gate to {spec.element.gate_to}: |Vgs| from the bench's input voltage {vin:.4g} V")
        else:
            notes.append(f"gate to {spec.element.gate_to} but no input voltage recorded: gate taken as fully driven")
    if zener is not None and vin is not None and not body:
        notes.append(f"gate clamp zener {zener:g} V")
    return RunConditions(current, where, ambient, vin, zener if not body else None, body, tuple(notes))
