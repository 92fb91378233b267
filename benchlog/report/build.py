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
from .text import flatten, number, unit_of, with_uncertainty


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
    path = Path(path)
    frame, meta = load_points(path)
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
                     with_uncertainty(value, U, unit, fit.k)))
    blocks.append(Table(("parameter", "value", "standard u", f"expanded U (k = {fit.k:g})", "result"),
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
        v, u = fit.drop_at(ra.operating_current_a)
        i = ra.operating_current_a
        blocks.append(Paragraph(
            f"At the operating current {number(i, 'A')}: drop {with_uncertainty(v, fit.k * u, 'V', fit.k)}, "
            f"loss {with_uncertainty(i * v, fit.k * i * u, 'W', fit.k)} (expanded)."))
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
                          caption=f"Measured drop{corrected} with the fit and its k = 2 band"
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
    complete = ra.meta.complete
    blocks: list = []
    if not complete:
        blocks.append(Paragraph(
            "INCOMPLETE RUN: this file has no end record, so the recording stopped early (the process was "
            "killed, lost power, or is still running). Everything below uses only the points that reached "
            "the disk; treat the results as provisional.", "warning"))
    blocks += [_run_table(ra), _element_table(ra), _instrument_table(ra)]
    header = ra.meta.header
    for data, caption in ((header.plan.table if header.plan else None, "Plan"),
                          (header.bench.table if header.bench else None, "Bench"),
                          (header.meter.to_table() if header.meter else None, "Meter settings"),
                          (header.accuracy.to_table(), "Accuracy used in the uncertainty budget")):
        table = _key_value_table(data, caption)
        if table is not None:
            blocks.append(table)
    analysis: list = []
    verdict = _verdict_block(ra)
    if verdict is not None:
        analysis.append(verdict)
    analysis += _fit_blocks(ra)
    pred = _prediction_table(ra)
    if pred is not None:
        analysis.append(pred)
        if ra.prediction.notes:
            analysis.append(Paragraph("Prediction notes: " + "; ".join(ra.prediction.notes) + ".", "note"))
    analysis += _figures(ra, spec)
    return Section(
        title=f"Run {ra.label}",
        status="" if complete else "incomplete",
        blocks=tuple(blocks),
        subsections=(
            Section("Results", tuple(analysis)),
            Section("Events and limit hits", tuple(_event_blocks(ra))),
        ),
    )


# ----------------------------------------------------------------------------- several runs


def _main_parameter(ra: RunAnalysis) -> str:
    return fa.fit_label(ra.fit) if ra.fit is not None else f"no fit ({ra.fit_problem})"


def comparison_section(runs: Sequence[RunAnalysis]) -> Section:
    rows = []
    for ra in runs:
        e = ra.element
        drop = "—"
        if ra.fit is not None and ra.operating_current_a is not None:
            v, u = ra.fit.drop_at(ra.operating_current_a)
            drop = f"{with_uncertainty(v, ra.fit.k * u, 'V', ra.fit.k)} at {number(ra.operating_current_a, 'A')}"
        outcome = getattr(getattr(ra.check, "verdict", None), "outcome", None) or getattr(ra.check, "outcome", None)
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
    if series:
        blocks.append(FigureBlock("overlay", figures.overlay_figure(series, curves),
                                  caption="All runs on one axis; each run has its own marker and line style."))
    return Section("Comparison of the runs", tuple(blocks))


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
) -> Document:
    """Analyse the runs (and review the design, when given) and lay out the report.

    Bad run, spec or design files raise BadInput.
    """
    if not run_paths and design_path is None:
        raise BadInput("argument", "RUN", "no run file given", "one or more .run files, or --design")
    spec = load_spec(spec_path) if spec_path is not None else None
    review = None
    if design_path is not None:  # the design review is imported only for a report that has one
        from benchlog.analysis.design import review as design_review
        from benchlog.specfiles import load_design

        review = design_review(load_design(design_path))
    runs = [analyse_run(p, spec, model=model, at_a=at_a) for p in run_paths]
    when = generated_utc or datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    sections: list[Section] = []
    incomplete = [ra for ra in runs if not ra.meta.complete]
    summary = [Paragraph(
        f"{len(runs)} run(s)" + (f", {len(incomplete)} of them incomplete" if incomplete else "")
        + (f"; judged against the part spec {spec.name} ({spec_path})" if spec is not None else "; no part spec given")
        + ". Read the safety note at the end before repeating any measurement.")]
    if spec is None and runs:
        summary.append(Paragraph("Without a part spec (--spec) there is no prediction and no verdict.", "note"))
    if review is not None:
        summary.append(Paragraph(f"Design review of {review.design.name}: {review.recommendation}."))
    sections.append(Section("Summary", tuple(summary)))
    if review is not None:
        from .design_section import design_section

        sections.append(design_section(review))
    if len(runs) > 1:
        sections.append(comparison_section(runs))
    if spec is not None:
        sections += lot_sections(runs, spec, at_a)
    sections += [run_section(ra, spec) for ra in runs]
    sections.append(Section("Safety", (Paragraph(SAFETY_NOTE, "safety"),)))
    if not runs:
        title = f"benchlog report: design review of {review.design.name}"
    elif len(runs) == 1:
        title = f"benchlog report: {runs[0].label}"
    else:
        title = f"benchlog report: {len(runs)} runs"
    return Document(title, f"Generated {when} by benchlog {benchlog.__version__}.", tuple(sections))



