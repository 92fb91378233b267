"""Incoming inspection of a lot: one value per part (R_on or Vf), its spread, capability, outliers and a lot verdict.

Statistics, all vectorised so a lot of 10,000 parts is summarised in milliseconds:
- mean, sample standard deviation σ (ddof = 1), min, max;
- process capability Cpk, Cpu or Cpl with its 95 % lower confidence bound (`capability`:
  ISO 22514-2 for the index, Bissell 1990 for the bound);
- outliers by Rosner's generalized ESD test (Technometrics 25, 1983; NIST/SEMATECH
  e-Handbook §1.3.5.17.3) at α = 0.05, critical values from Student's t
  (`scipy.stats.t`). The test needs an upper bound r on the number of outliers and can
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
from dataclasses import dataclass
from pathlib import Path
from typing import Sequence

import numpy as np
from scipy import stats

from benchlog.badinput import BadInput

from .capability import CAPABILITY_CONFIDENCE, CAPABILITY_MIN, capability_index, capability_with_bound
from .spec import PartSpec
from .verdict import RunConditions, decide_many, limit_envelope, rule_text, run_conditions

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
    xs = x[order] - float(np.median(x))  # centred, so the running sums below lose no digits
    i_all = np.arange(1, r + 1)
    p = 1.0 - alpha / (2.0 * (n - i_all + 1))
    t = stats.t.ppf(p, n - i_all - 1)
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
) -> LotSummary:
    """Summarise one value per part against the spec limits (module docstring)."""
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
    big_u = k * u
    outcome = np.full(n, "pass", dtype=object)
    for limit, side in ((usl, "upper"), (lsl, "lower")):
        if limit is None:
            continue
        o = decide_many(x, big_u, limit, side=side)
        outcome = np.where(o == "fail", "fail", np.where((o == "conditional") & (outcome != "fail"), "conditional", outcome))
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
        rule=LOT_RULE, part_rule=rule_text(side, k), parts=parts, notes=tuple(more),
    )


# --------------------------------------------------------------------------- from run files
def lot_quantity(spec: PartSpec, body_diode: bool = False) -> str:
    """Vf at the operating current for diodes (and a body diode measured on purpose), else R_on."""
    return spec.element.lot_quantity("body_diode" if body_diode else "channel")


def _min_variant_spec(spec: PartSpec) -> PartSpec | None:
    """The spec with its minimum in the place of the maximum, so `predict` gives the lower limit."""
    return spec.min_as_max()


def lot_limits(
    spec: PartSpec, current_a: float, ambient_c: float, vin_v=None, zener_v=None, quantity: str | None = None
) -> tuple[float | None, float | None, str, list[str]]:
    """USL (and LSL where the spec has a minimum) of the lot quantity at the operating point."""
    quantity = quantity or lot_quantity(spec)
    notes: list[str] = []

    def values(s: PartSpec) -> list[tuple[float, str]]:
        # Both ends of the measurement's possible Tj (see verdict.LimitEnvelope).
        env = limit_envelope(s, current_a, ambient_c, vin_v, zener_v)
        preds = ((env.heated, "self-heated"),) if s.thermal.rth_ja_k_per_w is not None else ()
        out = []
        for pred, label in preds + ((env.cold, "unheated"),):
            point = pred.limit
            v = point.drop_v if quantity == "drop_v" else point.resistance_ohm
            if v is not None and point.tj_c is not None:
                out.append((v, f"{label} Tj {point.tj_c:.1f} °C"))
        return out

    high = values(spec)
    usl, usl_at = max(high) if high else (None, "no prediction")
    if not spec.has_max:
        notes.append("the spec gives no maximum: the typical value is used as the upper limit")
    low_spec = _min_variant_spec(spec)
    low = values(low_spec) if low_spec is not None else []
    lsl, lsl_at = min(low) if low else (None, "")
    named = "maximum" if spec.has_max else "typical"
    source = f"spec {named} of {quantity} at {current_a:.4g} A, ambient {ambient_c:g} °C ({usl_at}"
    source += f"; the larger of {len(high)} junction temperatures)" if len(high) > 1 else ")"
    if lsl is not None:
        source += f"; minimum ({lsl_at})"
    return usl, lsl, source, notes


#: Lots at least this large are loaded and fitted in a process pool (when there is more than one CPU).
POOL_MIN_RUNS = 400


@dataclass(frozen=True)
class _PartFit:
    """What one run gives the lot: its value with standard uncertainty and what the lot limit needs."""

    value: float
    std_u: float
    k: float
    serial: str
    run: str
    conditions: RunConditions
    started_utc: str = ""  # with the serial, what tells one recording from another


def lot_model(spec: PartSpec, body_diode: bool = False) -> str:
    """The fit model the spec kind implies: a channel or resistor is a line, a junction the diode law."""
    return "diode" if lot_quantity(spec, body_diode) == "drop_v" else "resistive"


def fit_points(points, meta, model: str):
    """`fits.fit_run(frame, meta, model)` for the arrays of `runs.load_points`, without a DataFrame per run.

    The same points (finite current and drop, no overload flag), the header's accuracy,
    the zero-current offset subtracted, the same temperature (`run_temperature_c`) and
    the same BadInput when the model cannot be fitted; the test suite holds the two to
    1e-12. `model` is "resistive" or "diode"; notes on left-out points are not kept
    (the lot does not show per-run notes).
    """
    from .fit_diode import fit_diode
    from .fit_resistive import fit_resistive
    from .fit_result import FitError
    from .fits import run_temperature_c
    from .uncertainty import MeasurementAccuracy

    source = str(getattr(meta, "path", "run"))
    accuracy = MeasurementAccuracy.from_header(getattr(meta, "header", None) or {}, source)
    if accuracy.drop is None and accuracy.current is None:
        accuracy = None
    current, drop, index = points.current_a, points.drop_v, points.index
    rows = np.isfinite(current) & np.isfinite(drop) & ~points.has_flag("overload")
    if not rows.all():
        current, drop, index = current[rows], drop[rows], index[rows]
    offset = getattr(meta, "offset_v", None)
    offset_removed = offset is not None and math.isfinite(float(offset))
    if offset_removed:
        drop = drop - float(offset)
    temperature_c, _ = run_temperature_c(points, meta)  # reads points['temperature_c'] as from a frame
    common = dict(offset_removed=offset_removed, exclude_outliers=False, point_index=index)
    try:
        if model == "resistive":
            return fit_resistive(current, drop, accuracy, temperature_c=temperature_c, **common)
        if model == "diode":
            return fit_diode(current, drop, temperature_c, accuracy, **common)
    except FitError as exc:
        raise BadInput(source, "points", str(exc), f"a sweep the {model} model can be fitted to") from exc
    raise ValueError(f"fit_points fits 'resistive' or 'diode', not {model!r}")


def _fit_part(path, spec: PartSpec, at_a: float | None, model: str | None, vf_at_a: float | None) -> _PartFit:
    """Load one run with the light loader, read its conditions, fit it and take the lot's value.

    `model` None means this is the first run: the model and the Vf current come from it.
    """
    from benchlog.runs import load_points

    points, meta = load_points(path)
    cond = run_conditions(points, meta, spec, at_a)  # reads columns only, as PointArrays offer them
    if model is None:
        model = lot_model(spec, cond.body_diode)
        vf_at_a = cond.current_a
    fit = fit_points(points, meta, model)
    if model == "resistive":
        value, u = fit.params["r_on_ohm"], fit.std_u["r_on_ohm"]
    else:
        value, u = fit.drop_at(vf_at_a)
    element = getattr(meta, "element", None) or {}
    serial = str(element.get("serial") or element.get("id") or Path(path).stem)
    started = str((getattr(meta, "header", None) or {}).get("started_utc") or "")
    return _PartFit(float(value), float(u), float(fit.k), serial, str(path), cond, started)


def _fit_chunk(job) -> list:
    """Worker of the process pool: fit runs in order; a BadInput ends the chunk as plain fields.

    (BadInput's constructor takes four fields, so it is sent back as those fields and raised
    again in the parent, in file order.)
    """
    paths, spec, at_a, model, vf_at_a = job
    out: list = []
    for path in paths:
        try:
            out.append(_fit_part(path, spec, at_a, model, vf_at_a))
        except BadInput as exc:
            out.append(("bad", exc.source, exc.where, exc.problem, exc.expected))
            break
    return out


def _cpus() -> int:
    import os

    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        return os.cpu_count() or 1


def _pool_context():
    """fork where it is safe (one thread, a platform that has it): the workers start in milliseconds."""
    import multiprocessing
    import threading

    if threading.active_count() == 1 and "fork" in multiprocessing.get_all_start_methods():
        return multiprocessing.get_context("fork")
    return multiprocessing.get_context("spawn")


def _fit_rest(paths: Sequence, spec: PartSpec, at_a, model: str, vf_at_a, workers: int) -> list[_PartFit]:
    """Every run after the first, in the order given, serially or over `workers` processes."""
    if workers <= 1 or len(paths) < 2:
        return [_fit_part(p, spec, at_a, model, vf_at_a) for p in paths]
    from concurrent.futures import ProcessPoolExecutor

    size = max(1, -(-len(paths) // (workers * 8)))  # a few chunks per worker evens out the load
    jobs = [(list(paths[i:i + size]), spec, at_a, model, vf_at_a) for i in range(0, len(paths), size)]
    out: list[_PartFit] = []
    with ProcessPoolExecutor(max_workers=workers, mp_context=_pool_context()) as pool:
        for chunk in pool.map(_fit_chunk, jobs):  # map keeps the order of the jobs
            for item in chunk:
                if isinstance(item, tuple):
                    raise BadInput(*item[1:])
                out.append(item)
    return out


def _refuse_same_file(paths: Sequence[str | Path]) -> None:
    """A part given twice would count twice in the mean, σ and capability: refused, not averaged in."""
    seen: dict[Path, str] = {}
    for p in paths:
        key = Path(p).resolve()
        if key in seen:
            raise BadInput("argument", "RUN", f"{p} is the same file as {seen[key]}",
                           "each part's run given once")
        seen[key] = str(p)


def same_recordings(parts: Sequence[_PartFit]) -> list[str]:
    """Files that record the same run (same serial and start time, e.g. a copy under another name).

    Flagged in the lot's notes rather than refused: the files differ, and only the operator
    knows whether a part was measured twice on purpose.
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


def lot_from_runs(paths: Sequence[str | Path], spec: PartSpec, at_a: float | None = None, *,
                  workers: int | None = None) -> LotSummary:
    """Load and fit each run, then `summarize` against the spec's limits at the lot's operating point.

    One limit applies to the whole lot: it is computed at the median ambient of the runs
    and the operating current of the first run (every run of a lot should share both).
    Each run is loaded by `runs.load_points` and fitted with the model its spec kind
    implies (`lot_model`: the resistive line for a P/N-MOSFET channel or a resistor, the
    diode law for a rectifier, a Schottky or a body diode measured on purpose), not by the
    automatic model choice of `benchlog fit`; the lot's notes say so. Lots of
    `POOL_MIN_RUNS` runs or more are fitted over the CPUs (`workers`: None = every CPU
    available, 1 = in this process); the result is the same, in the order of `paths`,
    and a bad file raises the BadInput of the first bad file in that order.
    """
    paths = list(paths)
    if not paths:
        raise BadInput("argument", "RUN", "no run files given", "one or more run files")
    _refuse_same_file(paths)
    first = _fit_part(paths[0], spec, at_a, None, None)
    cond = first.conditions
    quantity = lot_quantity(spec, cond.body_diode)
    model = lot_model(spec, cond.body_diode)
    if workers is None:
        workers = _cpus() if len(paths) >= POOL_MIN_RUNS else 1
    parts = [first] + _fit_rest(paths[1:], spec, at_a, model, cond.current_a, max(1, int(workers)))
    twice = same_recordings(parts)
    ambients = [p.conditions.ambient_c for p in parts]
    ambient = float(np.median(ambients))
    usl, lsl, source, notes = lot_limits(spec, cond.current_a, ambient, cond.vin_v, cond.zener_v, quantity)
    kind = "its body diode" if cond.body_diode else f"a {spec.kind}"
    if model == "resistive":
        notes.append(f"each part fitted with the resistive model (V = V0 + R·I), as the spec is {kind}; "
                     "not the automatic model choice of benchlog fit")
        notes.append("R_on is the slope of each run's resistive fit, compared with the predicted R_DS(on) "
                     "at the operating point's junction temperature")
    else:
        notes.append(f"each part's Vf at {cond.current_a:.4g} A from its diode-law fit, as the spec is {kind}; "
                     "not the automatic model choice of benchlog fit")
    if twice:
        more = f" (and {len(twice) - 3} more)" if len(twice) > 3 else ""
        notes.append(f"the same recording given twice counts twice in the statistics: {'; '.join(twice[:3])}{more}")
    if max(ambients) - min(ambients) > 5.0:
        notes.append(f"ambients of the runs span {min(ambients):g}–{max(ambients):g} °C; "
                     "the limit is at their median")
    return summarize([p.value for p in parts], [p.std_u for p in parts], usl=usl, lsl=lsl,
                     k=max(p.k for p in parts), serials=[p.serial for p in parts], runs=[p.run for p in parts],
                     part=spec.name, quantity=quantity, limit_source=source, notes=notes)
