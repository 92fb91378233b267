"""Incoming inspection of a lot: one value per part (R_on or Vf), its spread, capability, outliers and a lot verdict.

Statistics, all vectorised so a lot of 10,000 parts is summarised in milliseconds:
- mean, sample standard deviation σ (ddof = 1), min, max;
- process capability Cpk, Cpu or Cpl with its 95 % lower confidence bound (`capability`:
  ISO 22514-2 for the index, Bissell 1990 for the bound);
- outliers by Rosner's generalized ESD test (Technometrics 25, 1983; NIST/SEMATECH
  e-Handbook §1.3.5.17.3) at α = 0.05, critical values from Student's t
  (`student_t.t_quantile`, as scipy.stats.t.ppf). The test needs an upper bound r on the number of outliers and can
  miss a cluster larger than r (masking), so r is ⌊(n − 1)/2⌋ by default: outliers are
  a minority by definition, so no cluster of outliers can exceed it. Outliers are
  reported, never dropped: the statistics use every part;
- per-part verdicts by the ILAC-G8 guard band (`verdict.decide_many`).
Lot verdict: pass when every part passes and the capability is demonstrated: the lower
confidence bound of the index is at least 1.33 (the usual minimum for a capable
process, common practice, e.g. AIAG PPAP); fail when any part fails; otherwise
conditional.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from pathlib import PurePath
from typing import Sequence

import numpy as np

from benchlog.badinput import BadInput

from .capability import CAPABILITY_CONFIDENCE, CAPABILITY_MIN, capability_index, capability_with_bound
from .spec import PartSpec
from .fits import fit_points  # noqa: F401 - the lot's fit of one run's arrays
from .reverse import worse
from .student_t import t_quantile
from .verdict import RunConditions, decide_many, median_of, rule_text, run_conditions

ESD_ALPHA = 0.05


def outlier_rule_text(max_outliers: int) -> str:
    return (f"generalized ESD (Rosner 1983), α = {ESD_ALPHA:g}, up to {max_outliers} outlier(s) "
            "(r = ⌊(n − 1)/2⌋, so a cluster cannot mask itself); flagged, not removed")


LOT_RULE = (f"lot passes when every part passes and the capability index's {CAPABILITY_CONFIDENCE:.0%} lower "
            f"confidence bound ≥ {CAPABILITY_MIN:g} (capability demonstrated); fails when any part fails; "
            "otherwise conditional")


def capability(mean: float, sigma: float, usl: float | None = None, lsl: float | None = None) -> tuple[str, float | None]:
    """(name, value) of the capability index for the limits given (see `capability.capability_index`)."""
    return capability_index(mean, sigma, usl, lsl)


def esd_bound(n: int) -> int:
    """The default upper bound r of the generalized ESD test: ⌊(n − 1)/2⌋ (module docstring)."""
    return max(0, (n - 1) // 2)


def generalized_esd(values: np.ndarray, max_outliers: int | None = None, alpha: float = ESD_ALPHA) -> tuple[np.ndarray, int]:
    """Boolean mask of outliers by Rosner's generalized ESD test, and the upper bound r used.

    R_i = max|x − mean|/s over the remaining values after removing the i−1 most extreme;
    λ_i = (n−i)·t_{p, n−i−1} / √((n−i−1 + t²)(n−i+1)), p = 1 − α/(2(n−i+1));
    the number of outliers is the largest i with R_i > λ_i.
    """
    x = np.asarray(values, dtype=float)
    n = x.size
    if max_outliers is None:
        max_outliers = esd_bound(n)
    r = min(max_outliers, n - 2)
    mask = np.zeros(n, dtype=bool)
    if r < 1:
        return mask, max(r, 0)
    # The value farthest from the mean of what remains is always the smallest or the largest
    # remaining one, so one sort and two cursors find each step's candidate in O(1).
    order = np.argsort(x, kind="stable")
    xs = x[order] - median_of(x)  # centred, so the running sums below lose no digits
    i_all = np.arange(1, r + 1)
    p = 1.0 - alpha / (2.0 * (n - i_all + 1))
    t = np.array([t_quantile(float(n - i - 1), float(q)) for i, q in zip(i_all, p)])  # scipy.stats.t.ppf
    lam = (n - i_all) * t / np.sqrt((n - i_all - 1 + t * t) * (n - i_all + 1))
    s1, s2 = float(xs.sum()), float((xs * xs).sum())
    lo, hi = 0, n - 1
    removed = np.empty(r, dtype=int)
    found = 0
    for i in range(1, r + 1):
        m = n - i + 1  # values still in
        mean = s1 / m
        sd = math.sqrt(max((s2 - m * mean * mean) / (m - 1), 0.0))
        d_lo, d_hi = abs(xs[lo] - mean), abs(xs[hi] - mean)
        if d_hi >= d_lo:
            j, dev, hi = hi, d_hi, hi - 1
        else:
            j, dev, lo = lo, d_lo, lo + 1
        if sd > 0 and dev / sd > lam[i - 1]:
            found = i
        removed[i - 1] = order[j]
        s1 -= xs[j]
        s2 -= xs[j] * xs[j]
    mask[removed[:found]] = True
    return mask, r


@dataclass(frozen=True)
class LotPart:
    serial: str
    run: str
    value: float
    std_u: float
    expanded_u: float
    outcome: str
    outlier: bool


@dataclass(frozen=True)
class LotSummary:
    part: str
    quantity: str  # "r_on_ohm" or "drop_v"
    n: int
    mean: float
    std: float | None  # sample standard deviation, ddof = 1
    min: float
    max: float
    usl: float | None
    lsl: float | None
    limit_source: str
    capability_name: str  # "Cpk" | "Cpu" | "Cpl" | "none"
    capability: float | None
    capability_lower: float | None  # one-sided lower confidence bound (capability.lower_bound)
    capability_confidence: float
    capability_method: str
    outlier_rule: str
    outliers: int
    counts: dict[str, int]
    outcome: str
    rule: str
    part_rule: str
    parts: tuple[LotPart, ...]
    notes: tuple[str, ...]


def summarize(
    values: Sequence[float],
    std_u: Sequence[float],
    *,
    usl: float | None = None,
    lsl: float | None = None,
    k: float = 2.0,
    serials: Sequence[str] | None = None,
    runs: Sequence[str] | None = None,
    part: str = "",
    quantity: str = "value",
    limit_source: str = "",
    notes: Sequence[str] = (),
    outcomes: Sequence[str] | None = None,
    expanded_u: Sequence[float] | None = None,
    coverage_probability: float | None = None,
) -> LotSummary:
    """Summarise one value per part against the spec limits (module docstring).

    `outcomes` (and `expanded_u`), when given, are each part's verdict from the one judging path
    (`judging.judge`, at the part's own Tj and gate drive) and are used as they are.
    """
    x = np.asarray(values, dtype=float)
    u = np.asarray(std_u, dtype=float)
    if x.ndim != 1 or x.size == 0 or u.shape != x.shape:
        raise BadInput("lot", "values", f"{x.size} value(s) and {u.size} uncertainties", "one value and one u per part")
    if not (np.isfinite(x).all() and np.isfinite(u).all()) or (u < 0).any():
        raise BadInput("lot", "values", "contain a non-finite value or a negative uncertainty", "finite numbers")
    n = x.size
    mean = float(x.mean())
    sd = float(x.std(ddof=1)) if n >= 2 else None
    capable = capability_with_bound(mean, sd if sd is not None else math.nan, n, usl, lsl)
    name, cap = capable.name, capable.value
    big_u = k * u if expanded_u is None else np.asarray(expanded_u, dtype=float)
    outcome = np.full(n, "pass", dtype=object)
    for limit, side in ((usl, "upper"), (lsl, "lower")):
        if limit is None or outcomes is not None:
            continue
        o = decide_many(x, big_u, limit, side=side)
        outcome = np.where(o == "fail", "fail", np.where((o == "conditional") & (outcome != "fail"), "conditional", outcome))
    if outcomes is not None:
        outcome = np.asarray(list(outcomes), dtype=object)
    outliers, r = generalized_esd(x)
    counts = {c: int((outcome == c).sum()) for c in ("pass", "fail", "conditional")}
    more = list(notes)
    if usl is None and lsl is None:
        more.append("no spec limit: parts and lot cannot pass")
        lot = "conditional"
    elif counts["fail"]:
        lot = "fail"
    elif counts["conditional"] or not capable.demonstrated:
        lot = "conditional"
    else:
        lot = "pass"
    if n < 2:
        more.append("one part only: no spread, no capability")
    elif cap is not None and capable.lower is not None and not capable.demonstrated:
        more.append(capable.text())
    serials = list(serials) if serials is not None else [str(i + 1) for i in range(n)]
    runs = list(runs) if runs is not None else [""] * n
    parts = tuple(
        LotPart(s, r_, float(v), float(uu), float(bu), str(o), bool(f))
        for s, r_, v, uu, bu, o, f in zip(serials, runs, x, u, big_u, outcome, outliers)
    )
    side = "upper" if usl is not None else "lower"
    return LotSummary(
        part=part, quantity=quantity, n=n, mean=mean, std=sd, min=float(x.min()), max=float(x.max()),
        usl=usl, lsl=lsl, limit_source=limit_source, capability_name=name, capability=cap,
        capability_lower=capable.lower, capability_confidence=capable.confidence, capability_method=capable.method,
        outlier_rule=outlier_rule_text(r), outliers=int(outliers.sum()), counts=counts, outcome=lot,
        rule=LOT_RULE, part_rule=rule_text(side, None if coverage_probability is not None else k, coverage_probability),
        parts=parts, notes=tuple(more),
    )


# --------------------------------------------------------------------------- from run files
def lot_quantity(spec: PartSpec, body_diode: bool = False) -> str:
    """Vf at the operating current for diodes (and a body diode measured on purpose), else R_on."""
    return spec.element.lot_quantity("body_diode" if body_diode else "channel")




@dataclass(frozen=True)
class PartFit:
    """What one run gives the lot: its value with standard uncertainty and what the lot limit needs."""

    value: float
    std_u: float
    k: float
    serial: str
    run: str
    conditions: RunConditions
    judgement: object  # judging.Judgement: the part's verdict at its own Tj and gate drive
    started_utc: str = ""  # with the serial, what tells one recording from another
    reverse: object = None  # reverse.ReverseVerdict of the run's reverse step, None without one

    @property
    def outcome(self) -> str:
        """The part's verdict: the worse of forward and reverse, as `check` gives it (judging.check_run)."""
        if self.reverse is None:
            return self.judgement.outcome
        return worse(self.judgement.outcome, self.reverse.outcome)


def lot_model(spec: PartSpec, body_diode: bool = False) -> str:
    """The fit model the spec kind implies: a channel or resistor is a line, a junction the diode law."""
    return "diode" if lot_quantity(spec, body_diode) == "drop_v" else "resistive"


def fit_part(points, meta, run: str, spec: PartSpec, at_a: float | None, model: str | None,
             vf_at_a: float | None) -> PartFit:
    """Read one loaded run's conditions, fit it and take the lot's value (`run` names it: its path).

    `model` None means this is the first run: the model and the Vf current come from it.
    """
    from .judging import judge
    from .reverse import judge_reverse

    cond = run_conditions(points.current_a, points.supply_v, meta, spec, at_a)
    if model is None:
        model = lot_model(spec, cond.body_diode)
        vf_at_a = cond.current_a
    elif cond.current_a != vf_at_a:  # every part at the first run's operating current
        cond = replace(cond, current_a=float(vf_at_a), current_source="the lot's operating current (first run)")
    fit = fit_points(points, meta, model)
    j = judge(fit, points, meta, spec, cond)
    serial = meta.header.serial or meta.header.element.id or PurePath(run).stem
    return PartFit(float(j.value), float(j.std_u), float(j.decision_budget.k), serial, run, cond, j,
                   meta.header.started_utc, judge_reverse(meta.reverse, spec, points, meta))


def same_recordings(parts: Sequence[PartFit]) -> list[str]:
    """Files that record the same run (same serial and start time, e.g. a copy under another name).

    Flagged in the lot's notes rather than refused: the files differ, and only the operator
    knows whether a part was measured twice on purpose. (The same file given twice is refused
    where the files are read, `report.lot_runs`.)
    """
    seen: dict[tuple[str, str], str] = {}
    out: list[str] = []
    for p in parts:
        if not p.started_utc:
            continue
        key = (p.serial, p.started_utc)
        if key in seen:
            out.append(f"{p.run} records the same run as {seen[key]} (serial {p.serial}, started {p.started_utc})")
        else:
            seen[key] = p.run
    return out


def lot_summary(parts: Sequence[PartFit], spec: PartSpec) -> LotSummary:
    """`summarize` the fitted parts against the spec's limits at the lot's operating point.

    Every part is judged by the one judging path (`judging.judge`): against the spec's limit at
    its own junction temperature and gate drive, at the operating current of the first run, so
    `check` on any one run gives the same verdict and U. The capability index uses the median
    of the parts' limits. Each part was fitted with the model its spec kind implies
    (`lot_model`: the resistive line for a P/N-MOSFET channel or a resistor, the diode law for
    a rectifier, a Schottky or a body diode measured on purpose), not by the automatic model
    choice of `benchlog fit`; the lot's notes say so.
    """
    if not parts:
        raise BadInput("argument", "RUN", "no run files given", "one or more run files")
    cond = parts[0].conditions
    quantity = lot_quantity(spec, cond.body_diode)
    model = lot_model(spec, cond.body_diode)
    twice = same_recordings(parts)
    ambients = [p.conditions.ambient_c for p in parts]
    judged = [p.judgement for p in parts]
    highs = [j.limit for j in judged if j.limit is not None]
    lows = [j.limit_min for j in judged if j.limit_min is not None]
    usl = median_of(highs) if highs else None
    lsl = median_of(lows) if lows else None
    notes = []
    if not spec.has_max:
        notes.append("the spec gives no maximum: the typical value is used as the upper limit")
    tjs = [j.tj.value_c for j in judged]
    source = (f"each part judged against the spec at its own Tj ({min(tjs):.2f}–{max(tjs):.2f} °C) and gate drive; "
              f"first part: {judged[0].limit_at}; the capability uses the median of the parts' limits")
    barred = [j for j in judged if j.bars]
    gate_barred = [j for j in barred if j.gate is not None and j.gate.bar and j.gate.vgs_v is not None]
    if gate_barred:
        vgs = [j.gate.vgs_v for j in gate_barred]
        g = gate_barred[0].gate
        span = f"{g.range_v[0]:g} V" if g.range_v[0] == g.range_v[1] else f"{g.range_v[0]:g}–{g.range_v[1]:g} V"
        notes.append(f"{len(gate_barred)} part(s) cannot pass: tested at |Vgs| {min(vgs):.4g}–{max(vgs):.4g} V, "
                     f"outside the spec's R_DS(on)(Vgs) points ({span}); the limit cannot be translated there")
        if g.input_for_spec_v is not None:
            notes.append(f"an input of about {g.input_for_spec_v:.4g} V would test at the spec's |Vgs| {g.spec_vgs_v:g} V")
    notes += sorted({b for j in barred if j not in gate_barred for b in j.bars})
    kind = "its body diode" if cond.body_diode else f"a {spec.kind}"
    if model == "resistive":
        notes.append(f"each part fitted with the resistive model (V = V0 + R·I), as the spec is {kind}; "
                     "not the automatic model choice of benchlog fit")
        notes.append("R_on is the slope of each run's resistive fit, compared with the predicted R_DS(on) "
                     "at the operating point's junction temperature")
    else:
        notes.append(f"each part's Vf at {cond.current_a:.4g} A from its diode-law fit, as the spec is {kind}; "
                     "not the automatic model choice of benchlog fit")
    reversed_ = [p for p in parts if p.reverse is not None]
    if reversed_:
        failed = [p.serial for p in reversed_ if p.reverse.outcome != "pass"]
        notes.append(f"{len(reversed_)} part(s) have a reverse step: each such part's verdict is the worse of forward "
                     f"and reverse, as in check" + (f"; reverse not passed: {', '.join(failed[:5])}"
                                                    + (" ..." if len(failed) > 5 else "") if failed else ""))
    if twice:
        more = f" (and {len(twice) - 3} more)" if len(twice) > 3 else ""
        notes.append(f"the same recording given twice counts twice in the statistics: {'; '.join(twice[:3])}{more}")
    if max(ambients) - min(ambients) > 5.0:
        notes.append(f"ambients of the runs span {min(ambients):g}–{max(ambients):g} °C; "
                     "the limit is at their median")
    return summarize([p.value for p in parts], [p.std_u for p in parts], usl=usl, lsl=lsl,
                     k=max(p.k for p in parts), serials=[p.serial for p in parts], runs=[p.run for p in parts],
                     part=spec.name, quantity=quantity, limit_source=source, notes=notes,
                     outcomes=[p.outcome for p in parts], expanded_u=[j.decision_u for j in judged],
                     coverage_probability=judged[0].decision_budget.coverage_probability)
