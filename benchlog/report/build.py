"""The report's content: loads each run, runs the analysis on it, and lays the results out as a `Document`.

What goes in, per run: where and when it was measured (instruments with their
*IDN? and profile hashes, plan, bench, element, ambient, operator note, times),
the fit with its GUM uncertainties, the prediction from the part spec and the
verdict with its decision rule, every event and limit hit, and the figures.
Several runs add an overlay and a comparison table; runs sharing a lot id with
a spec add the lot summary. A run without an end record is reported as
incomplete, never left out. Every report ends with the safety note.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Sequence

import numpy as np

import benchlog
from benchlog.ambient import DEFAULT_AMBIENT_C
from benchlog.analysis.fits import detect_self_heating, fit_run
from benchlog.analysis.predict import predict
from benchlog.analysis.spec import PartSpec
from benchlog.analysis.columns import column
from benchlog.analysis.judging import check_run
from benchlog.analysis.verdict import run_conditions
from benchlog.badinput import BadInput
from benchlog.runs import load_points
from benchlog.specfiles import load_spec

from . import figures
from . import from_analysis as fa
from .from_verdict import verdict_block
from .lot_section import lot_section
from .document import Document, FigureBlock, Paragraph, Section, Table, VerdictBlock
from .safety import SAFETY_NOTE
from .front import answer_blocks, calibration_warnings, lab_fields, lab_table, report_id, sign_off_table
from .labels import readable_rows
from .text import flatten, number, unit_of, with_uncertainty

#: runs up to this many get their verdict block and figures each; more get a table and one band figure
DETAIL_UP_TO = 3
#: runs up to this many get the comparison with numbers without asking (report --compare for more)
COMPARE_UP_TO = 6


@dataclass(frozen=True, eq=False)
class RunAnalysis:
    """One run and what the analysis made of it; a `*_problem` says why a result is missing."""

    path: Path
    frame: Any  # runs.PointArrays (the columns of runs.load's DataFrame, without pandas)
    meta: Any  # benchlog.runs.RunMeta
    fit: Any = None  # FitResult
    fit_problem: str = ""
    heating: Any = None  # SelfHeating
    check: Any = None  # analysis.verdict.Check
    check_problem: str = ""
    prediction: Any = None  # analysis.predict.Prediction at the operating current
    conditions: "Conditions | None" = None

    @property
    def operating_current_a(self) -> float | None:
        return self.conditions.current_a if self.conditions is not None else None

    @property
    def element(self):
        """The run's `runs.record.ElementRecord`."""
        return self.meta.header.element

    @property
    def label(self) -> str:
        e = self.element
        name = e.serial or e.id or e.label or self.path.stem
        return f"{self.path.name} ({name})" if name != self.path.stem else self.path.name


@dataclass(frozen=True)
class Conditions:
    """Where the run is judged: operating current, ambient and gate drive (the verdict's own when a spec is given)."""

    current_a: float | None
    ambient_c: float
    vin_v: float | None = None
    zener_v: float | None = None


def _conditions(frame, meta, spec: PartSpec | None, at_a: float | None) -> Conditions:
    element = meta.header.element
    if spec is not None:
        c = run_conditions(column(frame, "current_a"), column(frame, "supply_v"),
                           meta, spec, at_a)
        return Conditions(c.current_a, c.ambient_c, c.vin_v, c.zener_v)
    ambient = DEFAULT_AMBIENT_C if element.ambient_c is None else element.ambient_c
    if at_a is not None:
        return Conditions(float(at_a), ambient)
    if element.operating_a is not None:
        return Conditions(element.operating_a, ambient)
    current = column(frame, "current_a") if len(frame) else np.array([])
    current = current[np.isfinite(current)]
    return Conditions(float(current.max()) if current.size else None, ambient)


def analyse_run(path: str | Path, spec: PartSpec | None = None, *, model: str = "auto",
                at_a: float | None = None) -> RunAnalysis:
    """Load and analyse one run; a run that cannot be fitted or judged is still reported, with the reason.

    With a spec, the verdict comes from `check_run` and the fit shown is the one
    the verdict used (same model), so every number in the report agrees.
    """
    from benchlog.runs.series import focus_frame

    path = Path(path)
    frame, meta = load_points(path)
    frame, _focus = focus_frame(frame, meta)  # an input sweep: the single fit takes the highest input's series
    fit = heating = check = prediction = None
    fit_problem = check_problem = ""
    cond = Conditions(None, DEFAULT_AMBIENT_C)
    if len(frame) == 0:
        fit_problem = check_problem = "the run holds no points"
    else:
        cond = _conditions(frame, meta, spec, at_a)
        if spec is not None:
            try:
                check = check_run(frame, meta, spec, at_a=at_a)
                prediction = check.predicted
                if model == "auto":
                    model = check.model
            except BadInput as exc:
                check_problem = exc.problem
        try:
            fit = fit_run(frame, meta, model)
        except BadInput as exc:
            fit_problem = exc.problem
    if fit is not None:
        heating = detect_self_heating(frame, fit)
    if spec is not None and prediction is None and cond.current_a is not None:
        prediction = predict(spec, cond.current_a, cond.ambient_c, vin_v=cond.vin_v, zener_v=cond.zener_v)
    return RunAnalysis(path, frame, meta, fit, fit_problem, heating, check, check_problem, prediction, cond)


# ----------------------------------------------------------------------------- sections of one run


def _run_table(ra: RunAnalysis) -> Table:
    h = ra.meta.header
    fin = ra.meta.finished
    rows = [
        ("file", str(ra.path)),
        ("run id", h.run_id + (" (derived from the header: the file has none)" if h.run_id_derived else "")),
        ("started (UTC)", h.started_utc or "—"),
        ("finished", f"{number(fin.t_s, 's')} after the start" if fin is not None else "no end record"),
        ("outcome", ra.meta.outcome),
        ("end message", fin.message if fin is not None and fin.message else "—"),
        ("points recorded", str(len(ra.frame))),
        ("host", h.host or "—"),
        ("tool version", h.tool_version or "—"),
        ("run file schema", str(h.schema)),
        ("line frequency", number(h.line_frequency_hz, "Hz")),
    ]
    if fin is not None and fin.safe_state is not None:
        rows.insert(5, ("safe state at the end", fin.safe_state))
    if len(ra.frame):
        t = column(ra.frame, "t_s")
        rows.append(("time of the points", f"{number(t.min(), 's')} to {number(t.max(), 's')}"))
    return Table(("run", ""), tuple(rows), caption="Run")


def _element_table(ra: RunAnalysis) -> Table:
    e = ra.element.table  # the element as the header records it
    rows = [(k, number(e.get(k), unit_of(k)) if k == "ambient_c" else str(e.get(k) if e.get(k) not in (None, "") else "—"))
            for k in ("id", "kind", "label", "lot", "serial", "ambient_c", "note")]
    rows += [(k, str(v)) for k, v in flatten({k: v for k, v in e.items()
                                                if k not in ("id", "kind", "label", "lot", "serial", "ambient_c", "note")})]
    rows = [("operator note" if k == "note" else "ambient" if k == "ambient_c" else k, v) for k, v in rows]
    return Table(("element", ""), tuple(rows), caption="Element under test")


def _instrument_table(ra: RunAnalysis) -> Table:
    rows = [(i.role, i.resource or "—", i.idn or "—", i.profile or "—", i.profile_sha256 or "—")
            for i in ra.meta.header.instruments]
    return Table(("role", "VISA resource", "*IDN? reply", "profile", "profile SHA-256"), tuple(rows),
                 caption="Instruments")


def _key_value_table(data: Any, caption: str) -> Table | None:
    rows = flatten(data) if data else []
    return Table(("key", "value"), tuple(rows), caption=caption) if rows else None


def _fit_blocks(ra: RunAnalysis) -> list:
    blocks: list = []
    fit = ra.fit
    if fit is None:
        blocks.append(Paragraph(f"No fit: {ra.fit_problem or 'not attempted'}.", "warning"))
        return blocks
    rows = []
    for key, value in fit.params.items():
        unit = unit_of(key)
        u = fit.std_u.get(key)
        U = fit.expanded_u.get(key)
        rows.append((key, number(value, unit), number(u, unit), number(U, unit),
                     with_uncertainty(value, U, unit, fit.budgets[key].k, fit.budgets[key].coverage_probability)))
    blocks.append(Table(("parameter", "value", "standard u",
                         f"expanded U ({fit.coverage_probability * 100:g} % coverage)", "result"),
                        tuple(rows), caption=f"Fit: {fit.model} model, {fit.points} points, ν = {fit.dof}"))
    blocks.append(Paragraph(f"Model choice: {fit.reason}"))
    if fit.criterion:
        blocks.append(Paragraph("Information criterion (AICc, lower is better): "
                                + ", ".join(f"{k} {v:.2f}" for k, v in fit.criterion.items())))
    n_out = int(np.count_nonzero(fit.outliers))
    blocks.append(Paragraph(
        f"Outliers: {n_out} of {fit.points} point(s) flagged by the rule '{fit.outlier_rule}'; "
        "flagged points stay in the data and in this report."))
    if ra.operating_current_a is not None:
        v, big_u, k = fit.drop_expanded_at(ra.operating_current_a)
        i = ra.operating_current_a
        p = fit.coverage_probability
        blocks.append(Paragraph(
            f"At the operating current {number(i, 'A')}: drop {with_uncertainty(v, big_u, 'V', k, p)}, "
            f"loss {with_uncertainty(i * v, i * big_u, 'W', k, p)} (expanded)."))
    if fit.notes:
        blocks.append(Paragraph("Fit notes: " + "; ".join(fit.notes) + ".", "note"))
    if ra.heating is not None:
        kind = "warning" if ra.heating.detected else "note"
        rise = (f" Estimated temperature rise {number(ra.heating.delta_t_c, '°C', 3)}."
                if ra.heating.delta_t_c is not None else "")
        blocks.append(Paragraph(f"Self-heating {'detected' if ra.heating.detected else 'not detected'}: "
                                f"{ra.heating.reason}.{rise}", kind))
    return blocks


def _prediction_table(ra: RunAnalysis) -> Table | None:
    p = ra.prediction
    if p is None:
        return None
    rows = []
    for variant in (p.typical, p.maximum):
        if variant is None:
            continue
        rows.append((variant.variant, number(variant.drop_v, "V"), number(variant.loss_w, "W"),
                     number(variant.tj_c, "°C", 4), str(variant.iterations),
                     "yes" if variant.converged else ("runaway" if variant.runaway else "no"),
                     variant.conduction))
    return Table(("spec value", "drop", "loss", "Tj", "iterations", "converged", "conduction"), tuple(rows),
                 caption=f"Prediction for {p.part} at {number(p.current_a, 'A')}, ambient {number(p.ambient_c, '°C')}"
                 + (f", input {number(p.vin_v, 'V')}" if p.vin_v is not None else ""))


def _verdict_block(ra: RunAnalysis) -> VerdictBlock | Paragraph | None:
    check = ra.check
    if check is None:
        return Paragraph(f"No verdict: {ra.check_problem}.", "warning") if ra.check_problem else None
    return verdict_block(check)


def _event_blocks(ra: RunAnalysis) -> list:
    meta = ra.meta
    blocks: list = []
    rows = []
    offset = meta.offset_v
    if offset is not None:
        rows.append(("—", "offset", f"zero-current drop {number(offset * 1e6, 'µV', 4)}"))
    for note in meta.notes:
        rows.append((number(note.t_s, "s", 5), note.kind, note.message))
    rev = meta.reverse
    if rev is not None:
        rows.append((number(rev.t_s, "s", 5), "reverse",
                     f"{'passed' if rev.passed else 'FAILED'}: {number(rev.voltage_v, 'V')} reversed for "
                     f"{number(rev.duration_s, 's')}, current {number(rev.current_a, 'A')} "
                     f"(limit {number(rev.limit_a, 'A')})"))
    fin = meta.finished
    if fin is not None:
        rows.append((number(fin.t_s, "s", 5), "end", f"{fin.outcome}: {fin.points} point(s). {fin.message}".strip()))
    limits = [n for n in meta.notes if n.kind == "limit"]
    if limits:
        blocks.append(Paragraph(f"{len(limits)} limit hit(s) during this run: "
                                + "; ".join(n.message for n in limits), "warning"))
    blocks.append(Table(("time", "event", "what happened"), tuple(rows), caption="Events")
                  if rows else Paragraph("No events were recorded."))
    if len(ra.frame):
        counts = Counter(f for cell in ra.frame.flags if isinstance(cell, str) for f in cell.split("|") if f)
        if counts:
            blocks.append(Table(("point flag", "points"), tuple((k, str(v)) for k, v in sorted(counts.items())),
                                caption="Points carrying flags"))
    return blocks


def _figures(ra: RunAnalysis, spec: PartSpec | None) -> list:
    if len(ra.frame) == 0:
        return []
    fit = ra.fit
    series = fa.measured_series(ra.frame, fit, ra.path.name, ra.meta.offset_v)
    top = float(np.nanmax(series.current_a)) if series.current_a.size else 1.0
    grid = fa.current_grid(max(top, ra.operating_current_a or 0.0))
    curve = fa.fit_curve(fit, grid) if fit is not None else None
    spec_v = spec_w = None
    cond = ra.conditions
    ambient = cond.ambient_c
    if spec is not None:
        spec_v, spec_w = fa.spec_curves(spec, grid, ambient, cond.vin_v, cond.zener_v)
    corrected = " (zero-current offset subtracted)" if fit is not None and fit.offset_removed else ""
    blocks = [FigureBlock("vi", figures.vi_figure(series, curve, spec_v, title=f"Drop against current: {ra.label}"),
                          caption=f"Measured drop{corrected} with the fit and its 95.45 % coverage band"
                          + (f"; the spec's typical and maximum at ambient {ambient:g} °C with self-heating."
                             if spec is not None else "."))]
    if fit is not None or spec is not None:
        op = (fa.operating_point(fit, ra.operating_current_a, ra.prediction)
              if ra.operating_current_a is not None else None)
        blocks.append(FigureBlock("loss", figures.loss_figure(series, curve, spec_w, op, title=f"Loss: {ra.label}"),
                                  caption="Loss P = V·I, measured and from the fit, against the spec's prediction; "
                                  "the operating point is marked with its expanded uncertainty."))
    if fit is not None:
        blocks.append(FigureBlock("residuals", figures.residuals_figure(fa.residuals(fit, ra.path.name)),
                                  caption="Residuals of the fit; outliers are marked, not removed."))
    return blocks


def run_section(ra: RunAnalysis, spec: PartSpec | None) -> Section:
    """One run's details: fit and prediction, events, then the traceability tables (verdict and plots lead the report)."""
    complete = ra.meta.complete
    blocks: list = []
    if not complete:
        blocks.append(Paragraph(
            "INCOMPLETE RUN: this file has no end record, so the recording stopped early (the process was "
            "killed, lost power, or is still running). Everything below uses only the points that reached "
            "the disk; treat the results as provisional.", "warning"))
    analysis: list = list(_fit_blocks(ra))
    pred = _prediction_table(ra)
    if pred is not None:
        analysis.append(pred)
        if ra.prediction.notes:
            analysis.append(Paragraph("Prediction notes: " + "; ".join(ra.prediction.notes) + ".", "note"))
    from .soak_section import soak_section

    soak = soak_section(ra.frame, ra.meta, spec, ra.label)
    trace: list = [_run_table(ra), _element_table(ra), _instrument_table(ra)]
    header = ra.meta.header
    for data, caption in ((header.plan.table if header.plan else None, "Plan"),
                          (header.bench.table if header.bench else None, "Bench"),
                          (header.meter.to_table() if header.meter else None, "Meter settings"),
                          (header.accuracy.to_table(), "Accuracy used in the uncertainty budget")):
        table = _readable_table(data, caption)
        if table is not None:
            trace.append(table)
    return Section(
        title=f"Run {ra.label}",
        status="" if complete else "incomplete",
        blocks=tuple(blocks),
        subsections=(Section("Fit and prediction", tuple(analysis)),) + ((soak,) if soak is not None else ())
        + tuple(_sweep_sections(ra, spec))
        + (Section("Events and limit hits", tuple(_event_blocks(ra))), Section("Traceability", tuple(trace))),
    )


def _readable_table(data: Any, caption: str) -> Table | None:
    rows = readable_rows(data) if data else ()
    return Table(("setting", "value"), rows, caption=caption) if rows else None


def _sweep_sections(ra: RunAnalysis, spec: PartSpec | None) -> list[Section]:
    """The input-voltage and leakage sweeps of the run, when it holds them (`report.sweeps_section`)."""
    from benchlog.report.sweeps_data import sweeps_payload
    from benchlog.runs import load_points

    from .sweeps_section import sweep_sections

    whole, meta = load_points(ra.path)  # every series, not only the one the single fit took
    return sweep_sections(sweeps_payload(whole, meta, spec=spec, operating_a=ra.operating_current_a))


# ----------------------------------------------------------------------------- several runs


def _main_parameter(ra: RunAnalysis) -> str:
    return fa.fit_label(ra.fit) if ra.fit is not None else f"no fit ({ra.fit_problem})"


def comparison_section(runs: Sequence[RunAnalysis], with_numbers: bool = True) -> Section:
    rows = []
    for ra in runs:
        e = ra.element
        drop = "—"
        if ra.fit is not None and ra.operating_current_a is not None:
            v, big_u, k = ra.fit.drop_expanded_at(ra.operating_current_a)
            drop = (f"{with_uncertainty(v, big_u, 'V', k, ra.fit.coverage_probability)} "
                    f"at {number(ra.operating_current_a, 'A')}")
        outcome = getattr(ra.check, "outcome", None)  # the Check's: the worse of forward and reverse
        rows.append((ra.path.name, e.serial or e.id or "—", e.kind or "—",
                     "complete" if ra.meta.complete else "INCOMPLETE", str(len(ra.frame)),
                     _main_parameter(ra), drop, str(outcome or "—")))
    table = Table(("run", "serial / id", "kind", "status", "points", "fit (expanded U)", "drop", "verdict"),
                  tuple(rows), caption="Runs side by side")
    series = []
    curves = []
    for ra in runs:
        if len(ra.frame) == 0:
            continue
        s = fa.measured_series(ra.frame, ra.fit, ra.label, ra.meta.offset_v)
        series.append(s)
        curves.append(fa.fit_curve(ra.fit, fa.current_grid(float(np.nanmax(s.current_a)))) if ra.fit else None)
    blocks: list = [table]
    if with_numbers:
        blocks += difference_blocks(runs)
    return Section("Comparison of the runs", tuple(blocks))


def overlay_block(runs: Sequence[RunAnalysis]) -> FigureBlock | None:
    """A few runs on one axis, each with its own marker and line style."""
    series, curves = [], []
    for ra in runs:
        if len(ra.frame) == 0:
            continue
        s = fa.measured_series(ra.frame, ra.fit, ra.label, ra.meta.offset_v)
        series.append(s)
        curves.append(fa.fit_curve(ra.fit, fa.current_grid(float(np.nanmax(s.current_a)))) if ra.fit else None)
    if not series:
        return None
    return FigureBlock("overlay", figures.overlay_figure(series, curves),
                       caption="All runs on one axis; each run has its own marker and line style.")


def band_block(runs: Sequence[RunAnalysis], outlier_paths: set[str]) -> FigureBlock | None:
    """Many runs as a median curve with a 10–90 % band; the lot's outliers drawn alone."""
    fitted = [ra for ra in runs if ra.fit is not None and ra.fit.points > 0]
    if len(fitted) < 2:
        return None
    grid, median, low, high = fa.lot_band([ra.fit for ra in fitted])
    alone = [fa.measured_series(ra.frame, ra.fit, ra.element.serial or ra.path.name, ra.meta.offset_v)
             for ra in fitted if str(ra.path) in outlier_paths]
    lo, hi = fa.BAND_QUANTILES
    return FigureBlock("band", figures.band_figure(grid, median, low, high, alone, quantiles=(lo, hi),
                                                   count=len(fitted), title=f"{len(fitted)} runs: median curve and band"),
                       caption=f"Median of the fitted curves with the band holding {lo:.0%}–{hi:.0%} of them, over "
                       "the current range every run measured; each outlier part is drawn alone with its points.")


def difference_blocks(runs: Sequence[RunAnalysis]) -> list:
    """Each run against the first: d ± U(d), same-instrument terms cancelled (analysis.compare, GUM 5.2.2)."""
    from benchlog.analysis.compare import LEVEL, compare_runs

    usable = [ra for ra in runs if len(ra.frame) > 0]
    try:
        c = compare_runs([(ra.frame, ra.meta) for ra in usable])
    except BadInput as exc:
        return [Paragraph(f"No comparison with numbers: {exc.problem}.", "warning")]
    rows = []
    for other, row in zip(c.others, c.rows):
        for d in row:
            unit = unit_of(d.quantity)
            rows.append((other.serial or Path(other.path).name, d.quantity,
                         with_uncertainty(d.a, d.k * d.u_a, unit, None), with_uncertainty(d.b, d.k * d.u_b, unit, None),
                         with_uncertainty(d.d, d.expanded_u_d, unit, None),
                         "yes" if d.significant else "no", ", ".join(d.cancelled) or "—"))
    ref = c.reference.serial or Path(c.reference.path).name
    return [Table(("run", "quantity", f"reference {ref}", "this run", "difference d ± U(d)", "significant",
                   "cancelled (same instrument and range)"), tuple(rows),
                  caption=f"Differences to {ref}; loss at {number(c.current_a, 'A')} ({c.current_source}); "
                  f"{LEVEL}; significant when |d| > U(d)"),
            Paragraph("; ".join(c.notes) + ".", "note")] if rows else []


# ----------------------------------------------------------------------------- lots


def lot_sections(runs: Sequence[RunAnalysis], spec: PartSpec, at_a: float | None = None) -> list[Section]:
    """One section per lot id shared by two or more runs that can be fitted (`report.lot_section`)."""
    groups: dict[str, list[RunAnalysis]] = {}
    for ra in runs:
        lot = ra.element.lot
        if isinstance(lot, str) and lot.strip():
            groups.setdefault(lot, []).append(ra)
    sections = []
    for lot, members in groups.items():
        usable = [ra for ra in members if ra.fit is not None]
        if len(usable) < 2:
            continue
        sections.append(lot_section(lot, usable, spec, at_a))
        left_out = [ra.path.name for ra in members if ra.fit is None]
        if left_out:
            sections[-1] = Section(sections[-1].title, (Paragraph(
                "Left out of the lot statistics (no fit): " + ", ".join(left_out), "warning"),)
                + sections[-1].blocks, sections[-1].subsections, sections[-1].status)
    return sections


# ----------------------------------------------------------------------------- the document


def build_report(
    run_paths: Sequence[str | Path],
    *,
    spec_path: str | Path | None = None,
    model: str = "auto",
    at_a: float | None = None,
    design_path: str | Path | None = None,
    generated_utc: str | None = None,
    compare: bool | None = None,
    archived: Sequence[Section] = (),
) -> Document:
    """Analyse the runs (and review the design, when given) and lay out the report; `archived` are sections
    already read from the lab archive (composed by `cli/report_archive.py`), placed after the runs' own.

    Bad run, spec or design files raise BadInput.
    """
    if not run_paths and design_path is None and not archived:
        raise BadInput("argument", "RUN", "no run file given", "one or more .run files, or --design")
    spec = load_spec(spec_path) if spec_path is not None else None
    review = None
    if design_path is not None:  # the design review is imported only for a report that has one
        from benchlog.analysis.design import review as design_review
        from benchlog.specfiles import load_design

        review = design_review(load_design(design_path))
    runs = [analyse_run(p, spec, model=model, at_a=at_a) for p in run_paths]
    when = generated_utc or datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    rid = report_id([ra.meta.header.run_id for ra in runs]
                    or ([str(design_path)] if design_path is not None else [s.title for s in archived]), when)
    lots = lot_sections(runs, spec, at_a) if spec is not None else []
    lot_verdicts = [b for sec in lots for b in sec.blocks if isinstance(b, VerdictBlock)]
    lots = [Section(sec.title, tuple(b for b in sec.blocks if not isinstance(b, VerdictBlock)), sec.subsections,
                    sec.status) for sec in lots]

    # 1. the answer: verdicts with their rule and conditions, and what qualifies them
    incomplete = [ra for ra in runs if not ra.meta.complete]
    answer: list = []
    answer += calibration_warnings(runs, _day_of(when))
    answer += answer_blocks(runs, lot_verdicts, spec, DETAIL_UP_TO)
    if review is not None:
        answer.append(Paragraph(f"Design review of {review.design.name}: {review.recommendation}."))
    answer.append(Paragraph(
        f"{len(runs)} run(s)" + (f", {len(incomplete)} of them incomplete" if incomplete else "")
        + (f"; judged against the part spec {spec.name} ({spec_path})" if spec is not None else "; no part spec given")
        + ". Read the safety note at the end before repeating any measurement.", "note"))
    sections: list[Section] = [Section("Verdict", tuple(answer))] if runs or review is not None else []

    # 2. the plots
    plots: list = []
    if runs and len(runs) <= DETAIL_UP_TO:
        for ra in runs:
            plots += _figures(ra, spec)
        if len(runs) > 1:
            overlay = overlay_block(runs)
            if overlay is not None:
                plots.append(overlay)
    elif runs:
        outliers = {p.run for sec_runs in _lot_outliers(runs, spec, at_a) for p in sec_runs}
        band = band_block(runs, outliers)
        if band is not None:
            plots.append(band)
        plots.append(Paragraph(f"Figures of each run are left out of a report of more than {DETAIL_UP_TO} runs "
                               "(they would make it slow and large); report a run alone for its figures.", "note"))
    if plots:
        sections.append(Section("Figures", tuple(plots)))

    # 3. comparisons, lots, design, then each run's details and traceability
    if len(runs) > 1:
        numbers = compare if compare is not None else len(runs) <= COMPARE_UP_TO
        sections.append(comparison_section(runs, with_numbers=numbers))
        from .summary_section import summary_section

        sections.append(summary_section(runs))
    sections += lots
    if review is not None:
        from .design_section import design_section

        sections.append(design_section(review))
    sections += [run_section(ra, spec) for ra in runs]
    sections += archived
    operators = [str(lab_fields(ra.meta.header)["operator"] or "") for ra in runs]
    if runs:
        sections.append(Section("Lab record and sign-off", (lab_table(runs, rid, when), sign_off_table(rid, operators))))
    sections.append(Section("Safety", (Paragraph(SAFETY_NOTE, "safety"),)))
    if not runs and review is None:
        title = "benchlog report: " + "; ".join(s.title for s in archived)
    elif not runs:
        title = f"benchlog report: design review of {review.design.name}"
    elif len(runs) == 1:
        title = f"benchlog report: {runs[0].label}"
    else:
        title = f"benchlog report: {len(runs)} runs"
    return Document(title, f"Report {rid}, generated {when} by benchlog {benchlog.__version__}.", tuple(sections))


def _day_of(when: str):
    from datetime import date

    try:
        return date.fromisoformat(when[:10])
    except ValueError:
        return datetime.now(timezone.utc).date()


def _lot_outliers(runs, spec, at_a):
    """The outlier parts of each lot, as lot parts (`.run` is the run path)."""
    if spec is None:
        return []
    from .lot_runs import lot_from_runs

    groups: dict[str, list] = {}
    for ra in runs:
        if ra.fit is not None and isinstance(ra.element.lot, str) and ra.element.lot.strip():
            groups.setdefault(ra.element.lot, []).append(ra.path)
    out = []
    for paths in groups.values():
        if len(paths) >= 2:
            try:
                out.append([p for p in lot_from_runs(paths, spec, at_a).parts if p.outlier])
            except BadInput:
                continue
    return out
