"""The results view: fitted parameters with uncertainty, measured against predicted loss, the verdict and its rule."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.widgets import Static

from benchlog.quantity import coverage_text, label_of, measured, unit_of

from ..findings import RunFindings
from ..plotting import Axis, Series, line_series
from ..paths import shown
from ..units import si, with_uncertainty
from ..widgets import CurvePlot, Plain, cells
from .base import View

#: Fitted parameter keys: the name people use and the unit.
PARAM_NAMES = {key: (label_of(key), unit_of(key)) for key in
               ("r_on_ohm", "v0_v", "ideality", "i_s_a", "r_s_ohm", "v_knee_v", "r_d_ohm")}

VERDICT_WORDS = {"pass": "PASS ✔", "fail": "FAIL ✘", "conditional": "COND ◆"}


def _reverse_line(f: RunFindings) -> str:
    """Without a spec the reverse step is still shown, judged against the plan's own limit."""
    record = f.meta.reverse if f.meta is not None else None
    if record is None:
        return ""
    from benchlog.analysis.reverse import judge_reverse

    rev = judge_reverse(record, None, None, f.meta)
    return (f"\n reverse: {VERDICT_WORDS.get(rev.outcome, rev.outcome.upper())}  {si(rev.current_a, 'A')} at "
            f"{rev.voltage_v:g} V against the plan's {si(rev.limit_a, 'A')}")


def operating_current(findings: RunFindings) -> float | None:
    """The current the verdict is given at: the check's, the plan's operating_a, else the largest measured."""
    if findings.check is not None:
        return float(findings.check.current_a)
    operating_a = findings.meta.header.element.operating_a if findings.meta is not None else None
    if operating_a:
        return float(operating_a)
    if findings.frame is not None and len(findings.frame):
        return float(np.nanmax(findings.frame["current_a"].to_numpy()))
    return None


def is_extrapolated(check) -> bool:
    """The operating current lies outside the currents the fit has points at (the verdict's own test)."""
    ext = getattr(check, "extrapolation", None)
    return bool(ext is not None and ext.side)


def check_lines(check) -> list[str]:
    """Measured against predicted at the operating point, from `analysis.verdict.Check`.

    Outside the measured currents the value comes from the fit, not a reading:
    it is labelled "extrapolated" and the verdict's own sentence says how far.
    """
    k = check.k
    how = "EXTRAPOLATED" if is_extrapolated(check) else "measured    "
    lines = [f" at {si(check.current_a, 'A')} ({check.current_source}), ambient {check.ambient_c:g} °C"]
    if is_extrapolated(check):
        lines.append(f"  ⚠ {check.extrapolation.text()}")
    j = getattr(check, "judgement", None)
    if j is not None:  # the conditions the verdict is judged at come before the values judged there
        lines.append(f"  judged at Tj          {j.tj.value_c:.2f} ± {j.tj.u_c:.2g} °C ({j.tj.source})")
        if j.gate is not None:
            vgs = "unknown" if j.gate.vgs_v is None else f"{j.gate.vgs_v:.4g} V"
            lines.append(f"  gate drive |Vgs|      {vgs} (spec's maximum at {j.gate.spec_vgs_v:g} V)")
        for bar in j.bars:
            lines.append(f"  ! {bar}")
    p = check.coverage_probability
    lines += [f"  drop {how}     {measured(check.measured_drop_v, k * check.drop_std_u_v, 'V', None)}",
              f"  loss {how}     {measured(check.measured_loss_w, k * check.loss_std_u_w, 'W', None)}",
              f"  ± U                   {coverage_text(k, p)}"]
    predicted = check.predicted
    for label, point in (("typ", predicted.typical), ("max", predicted.maximum)):
        if point is None or point.loss_w is None:
            continue
        tj = f", Tj {point.tj_c:.1f} °C" if point.tj_c is not None else ""
        lines.append(f"  predicted loss ({label})  {si(point.loss_w, 'W')}{tj}")
    limit = check.verdict.limit
    if limit is not None:
        lines.append(f"  limit                 {si(limit, 'W')} ({check.verdict.limit_source})")
    if check.typical_comparison:
        lines.append(f"  {check.typical_comparison}")
    return lines


def verdict_rule(check) -> str:
    return check.verdict.rule


def sweep_lines(p) -> list[str]:
    """The input and leakage sweeps in a few lines (`report.sweeps_data.sweeps_payload`)."""
    if not p:
        return []
    lines: list[str] = []
    if p.get("series"):
        lines.append(f" input sweep at {si(p['operating_a'], 'A')}:")
        for x in p["series"]:
            what = "body diode" if x["r_on_ohm"] is None else f"R {si(x['r_on_ohm'], 'Ω')}"
            loss = "—" if x["loss_w"] is None else si(x["loss_w"], "W")
            lines.append(f"  {x['input_v']:>5g} V  {what:<14} loss {loss}")
        take = p["takeover_v"]
        lines.append("  takeover " + ("not within the sweep" if take is None else
                                      f"{take:.3g} ± {p['takeover_u_v']:.2g} V")
                     + (f" (predicted {p['predicted_takeover_v']:.3g} V)" if p.get("predicted_takeover_v") else ""))
        if p.get("worst_input_v") is not None:
            lines.append(f"  worst: {si(p['worst_loss_w'], 'W')} at {p['worst_input_v']:g} V")
    s = p.get("leakage_sweep")
    if s:
        lines.append(f" leakage sweep {s['outcome'].upper()} at {s['temperature_c']:g} °C:")
        for x in s["leakage"]:
            lines.append(f"  {x['voltage_v']:>5g} V  {si(x['current_a'], 'A')}  limit {si(x['limit_a'], 'A')}"
                         f"  {'ok' if x['passed'] else 'FAIL'}")
        if s["runaway"] is not None:
            lines.append(f"  {'RUNAWAY' if s['runaway']['runaway'] else 'no runaway'} at {s['runaway']['reverse_v']:g} V")
    return lines


def sweep_plot(p):
    """(series, x axis, y axis) of the sweep's plot: R against input, else log10 of leakage against voltage."""
    if not p:
        return None
    rows = [x for x in p.get("series") or () if x["r_on_ohm"] is not None]
    if rows:
        x = np.array([r["input_v"] for r in rows])
        y = np.array([r["r_on_ohm"] for r in rows])
        return [Series("R per input", x, y, kind="marks", glyph="o")], Axis("input", "V"), Axis("R", "Ω")
    s = p.get("leakage_sweep")
    if s and s["leakage"]:
        v = np.array([x["voltage_v"] for x in s["leakage"]])
        i = np.log10(np.maximum([x["current_a"] for x in s["leakage"]], 1e-15))
        limit = np.log10([x["limit_a"] for x in s["leakage"]])
        return ([Series("leakage", v, i, kind="marks", glyph="o"),
                 Series("limit", v, limit, kind="marks", glyph="-", style="limit")],
                Axis("reverse", "V"), Axis("log10 I/A", ""))
    return None


class ResultsView(View):
    TITLE_TEXT = "Results"
    BINDINGS = [
        Binding("t", "toggle_plot", "Curve/residuals"),
        Binding("h", "toggle_soak", "Heat-soak"),
        Binding("m", "next_model", "Model"),
        Binding("k", "next_spec", "Spec"),
        Binding("e", "export", "Export report"),
    ]

    def __init__(self) -> None:
        super().__init__()
        self.show_residuals = False
        self.show_soak = False
        self.show_sweep = False  # R against input, or leakage against reverse voltage (log), when the run has one

    def body(self) -> ComposeResult:
        with Horizontal(id="results-body"):
            with VerticalScroll(id="results-text"):
                yield Plain("", id="verdict")
                yield Plain("", id="soak")
                yield Plain("", id="fit-table")
                yield Plain("", id="operating")
                yield Plain("", id="warnings")
                yield Plain("", id="sweeps")
            with Vertical(id="results-plot-box"):
                yield CurvePlot(Axis("current", "A"), Axis("drop", "V"), id="results-plot")

    def refresh_view(self) -> None:
        super().refresh_view()
        findings = self.app.state.findings
        verdict = self.query_one("#verdict", Static)
        if findings is None:
            waiting = "analysing the run …" if self.app.state.findings_busy else "no run analysed yet"
            verdict.update(f" {waiting}\n Run a sweep (2 then r) or open one from the archive (6).")
            for name in ("#fit-table", "#operating", "#warnings", "#soak", "#sweeps"):
                self.query_one(name, Static).update("")
            self.query_one("#soak", Static).display = False
            self.query_one("#sweeps", Static).display = False
            self.query_one("#results-plot", CurvePlot).show([])
            return
        self._show_verdict(findings)
        self._show_fit(findings)
        self._show_operating(findings)
        self._show_warnings(findings)
        self._show_soak(findings)
        lines = sweep_lines(findings.sweeps)
        box = self.query_one("#sweeps", Static)
        box.update("\n".join(lines))
        box.display = bool(lines)  # a run without sweeps shows exactly what it did before
        if self.show_sweep and not self.show_soak and sweep_plot(findings.sweeps) is not None:
            series, x_axis, y_axis = sweep_plot(findings.sweeps)
            self.query_one("#results-plot", CurvePlot).show(series, x_axis=x_axis, y_axis=y_axis)
            return
        self._show_plot(findings)

    def _show_verdict(self, f: RunFindings) -> None:
        box = self.query_one("#verdict", Static)
        outcome = f.verdict
        for cls in ("pass", "fail", "conditional"):
            box.set_class(outcome == cls, f"verdict-{cls}")
        element = f.meta.header.element
        who = f"{element.id or '?'} #{element.serial or '—'}"
        if outcome is None:
            why = f.check_error or ("no part spec picked (k)" if f.spec_path is None else "no verdict")
            box.update(f" VERDICT: none — {why}{_reverse_line(f)}\n run {f.path.name} · {who} · {f.meta.outcome}")
            return
        rule = verdict_rule(f.check)
        rev = getattr(f.check, "reverse", None)
        reverse = "" if rev is None else (
            f"\n reverse: {VERDICT_WORDS.get(rev.outcome, rev.outcome.upper())}  {si(rev.current_a, 'A')} at "
            f"{rev.voltage_v:g} V against {si(rev.limit_a, 'A')} (T {rev.tj_c:.1f} °C, {rev.tj_source})")
        spec_name = shown(f.spec_path) if f.spec_path else ""
        if is_extrapolated(f.check):
            spec_name += "  (value EXTRAPOLATED beyond the measured currents)"
        box.update(f" VERDICT: {VERDICT_WORDS.get(outcome, outcome.upper())}  against {spec_name}\n"
                   f" rule: {rule or 'as stated by the check'}{reverse}\n run {f.path.name} · {who} · {f.meta.outcome}")

    def _show_fit(self, f: RunFindings) -> None:
        box = self.query_one("#fit-table", Static)
        if f.fit is None:
            box.update(f" fit ({f.model}): ✘ {f.fit_error or 'not possible'}")
            return
        fit = f.fit
        chosen = "CHOSEN with m; a new run starts on auto" if f.model != "auto" else "automatic choice"
        lines = [f" fit: {fit.model} ({chosen}), {fit.points} points", f"  why: {fit.reason}"]
        for key, value in fit.params.items():
            name, unit = PARAM_NAMES.get(key, (key, ""))
            u = fit.std_u.get(key)
            b = fit.budgets.get(key)  # each parameter's own k_p (GUM 6.3)
            shown = (with_uncertainty(value, u, unit, b.k, b.coverage_probability) if u is not None and b is not None
                     else si(value, unit))
            lines.append(f"  {name:<7}{shown}")
        outliers = int(np.count_nonzero(fit.outliers)) if fit.outliers is not None else 0
        lines.append(f"  outliers: {outliers} flagged (kept in the file)")
        box.update("\n".join(lines))

    def _show_operating(self, f: RunFindings) -> None:
        box = self.query_one("#operating", Static)
        if f.check is not None:
            box.update("\n".join(check_lines(f.check)))
            return
        lines = []
        at = operating_current(f)
        if at is not None and f.fit is not None:
            drop, big_u, k = f.fit.drop_expanded_at(at)
            p = f.fit.coverage_probability
            lines.append(f" at {si(at, 'A')} (operating point, no spec)")
            current = np.asarray(f.fit.current_a, dtype=float)
            outside = bool(current.size) and not (float(np.nanmin(current)) <= at <= float(np.nanmax(current)))
            how = "EXTRAPOLATED" if outside else "from the fit"
            if outside:
                lines.append(f"  ⚠ extrapolated: {si(at, 'A')} is outside the fitted currents "
                             f"{si(float(np.nanmin(current)), 'A')}–{si(float(np.nanmax(current)), 'A')}")
            # U of the drop's own budget, k_p for 95.45 % (GUM 6.3); with_uncertainty takes u and k
            lines.append(f"  drop ({how})   {with_uncertainty(drop, big_u / k, 'V', k, p)}")
            lines.append(f"  loss ({how})   {with_uncertainty(drop * at, big_u * at / k, 'W', k, p)}")
        if f.check_error:
            lines.append(f"  prediction: ✘ {f.check_error}")
        box.update("\n".join(lines))

    def _show_warnings(self, f: RunFindings) -> None:
        box = self.query_one("#warnings", Static)
        lines = []
        sh = f.self_heating
        if sh is not None and getattr(sh, "detected", False):
            rise = getattr(sh, "delta_t_c", None)
            lines.append(f" ⚠ SELF-HEATING: {sh.reason}" + (f" (about +{rise:.1f} K)" if rise else ""))
        for note in f.meta.notes if f.meta is not None else ():
            if getattr(note, "kind", "") in ("limit", "fault", "warning", "cancel"):
                lines.append(f" ⚠ {note.kind}: {note.message}")
        if f.fit is not None:
            lines.extend(f" · {n}" for n in f.fit.notes)
        box.update("\n".join(lines))

    def _show_soak(self, f: RunFindings) -> None:
        box = self.query_one("#soak", Static)
        box.display = f.soak is not None or bool(f.soak_error)  # no empty line in a run without a soak
        if f.soak is None:
            box.update(f" heat-soak: ✘ {f.soak_error}" if f.soak_error else "")
            return
        from benchlog.analysis.thermal_response import soak_text

        box.update("\n".join(" " + line for line in soak_text(f.soak)) + "\n (h: ΔTj against time)")

    def _show_soak_plot(self, plot: CurvePlot, soak) -> None:
        t = np.asarray(soak.t_s, dtype=float)
        series = [line_series(f"{soak.chosen.poles}-pole fit", 0.0, float(t[-1]),
                              lambda x: float(soak.curve(np.array([x]))[0])),
                  Series("ΔTj from the drift", t, np.asarray(soak.delta_tj_k, dtype=float))]
        if soak.cool_t_s is not None:
            series.append(Series("cooling", np.asarray(soak.cool_t_s, float),
                                 np.asarray(soak.cool_delta_tj_k, float), style="series-b"))
        plot.show(series, x_axis=Axis("time since step", "s"), y_axis=Axis("ΔTj", "K"))

    def _show_plot(self, f: RunFindings) -> None:
        plot = self.query_one("#results-plot", CurvePlot)
        if self.show_soak and f.soak is not None:
            self._show_soak_plot(plot, f.soak)
            return
        if f.fit is None:
            current = f.frame["current_a"].to_numpy(float)
            plot.show([Series("measured", current, f.frame["drop_v"].to_numpy(float))],
                      x_axis=Axis("current", "A"), y_axis=Axis("drop", "V"))
            return
        fit = f.fit
        if self.show_residuals:
            plot.show([Series("residual", np.asarray(fit.current_a), np.asarray(fit.residuals_v), kind="marks",
                              glyph="×", style="series-a")],
                      x_axis=Axis("current", "A"), y_axis=Axis("residual", "V"))
            return
        current = np.asarray(fit.current_a, dtype=float)
        hi = float(np.nanmax(current)) if current.size else 1.0
        curve = fit.curve
        model = line_series(f"{fit.model} fit", 0.0 if fit.model == "resistive" else hi * 0.01, hi,
                            lambda i: float(curve.value(np.array([i]))[0]))
        plot.show([model, Series("measured", current, np.asarray(fit.drop_v, dtype=float))],
                  x_axis=Axis("current", "A"), y_axis=Axis("drop", "V"))

    def action_toggle_plot(self) -> None:
        # curve -> residuals -> the sweep (when the run has one) -> curve; leaves the heat-soak plot
        findings = self.app.state.findings
        has_sweep = findings is not None and sweep_plot(findings.sweeps) is not None
        self.show_soak = False
        if self.show_sweep:
            self.show_sweep = self.show_residuals = False
        elif self.show_residuals and has_sweep:
            self.show_sweep = True
        else:
            self.show_residuals = not self.show_residuals
        self.refresh_view()

    def action_toggle_soak(self) -> None:
        findings = self.app.state.findings
        if findings is None or findings.soak is None:
            self.app.say("This run has no heat-soak to show.")
            return
        self.show_soak = not self.show_soak
        self.refresh_view()

    def action_next_model(self) -> None:
        findings = self.app.state.findings
        model = self.app.next_model()
        if findings is not None:
            self.app.say(f"Re-fitting {findings.path.name} with the {model} model …")
            self.app.analyse(findings.path, model=model, spec=findings.spec_path)

    def action_next_spec(self) -> None:
        findings = self.app.state.findings
        if findings is None:
            self.app.say("No run to judge yet.")
            return
        kind = findings.meta.header.element.kind
        spec = self.app.next_spec(kind=kind, current=findings.spec_path)
        if spec is None:
            self.app.say(f"No part spec of kind {kind or '?'} to pick from.")
            return
        self.app.say(f"Judging {findings.path.name} against {shown(spec)} …")
        self.app.analyse(findings.path, model=findings.model, spec=spec)

    def action_export(self) -> None:
        findings = self.app.state.findings
        if findings is None:
            self.app.say("Nothing to export yet.")
            return
        target = findings.path.with_suffix(".html")
        self.app.say(f"Writing the report to {shown(target)} …")
        self._export(findings.path, findings.spec_path, target)

    @work(thread=True, group="export")
    def _export(self, run: Path, spec: Path | None, target: Path) -> None:
        try:
            from benchlog.report import build_report, write_report

            doc = build_report([run], spec_path=spec)
            write_report(doc, target)
            self.app.call_from_thread(self.app.say, f"Report written: {shown(target)}")
        except Exception as exc:
            text = exc.line() if hasattr(exc, "line") else (str(exc) or type(exc).__name__)
            self.app.call_from_thread(self.app.say, f"Report not written: {text}", severity="error")
