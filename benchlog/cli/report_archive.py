"""Report sections that ask the lab archive: a quantity's trend, a part's history, two lots compared, the runs
a filter selects.

Each section asks through the very functions `benchlog archive trend / history / compare-lots / find`
use (`store.trend.trend`, `store.queries.history`, `store.lots.compare_lots`, `store.queries.find_runs`),
so the report, the CLI and the UI give one answer. Every string is plain text; the renderers escape it.
Composed here because `cli/` is the layer that sees both `store/` and `report/` (DESIGN.md).
"""

from __future__ import annotations

from benchlog.badinput import BadInput
from benchlog.quantity import engineering, label_of, measured, p_value, unit_of

from benchlog.report.document import FigureBlock, Paragraph, Section, Table

#: At most this many runs are listed by a `--find` section; the rest are counted.
FIND_ROWS = 200


def _fitted(run: dict) -> str:
    """Each fitted parameter of a run as `R_on = 10.51 ± 0.12 mΩ (k = 2)` (the one formatter)."""
    fit = run.get("fit") or {}
    return "; ".join(f"{label_of(key)} = {measured(p['value'], p['expanded_u'], unit_of(key), k=p['k'])}"
                     for key, p in (fit.get("params") or {}).items()) or "no fit"


def _verdicts(run: dict) -> str:
    return ", ".join(f"{v['verdict']} ({v['quantity']}, {v['spec']})" for v in run.get("verdicts", [])) or "—"


def _rows(runs: list[dict]) -> tuple[tuple[str, ...], ...]:
    return tuple((r["started_utc"], r["bench_host"] or "—", r["serial"] or "—", r["lot"] or "—",
                  r["path"] or r["run_id"], r["outcome"], _fitted(r), _verdicts(r)) for r in runs)


COLUMNS = ("started (UTC)", "bench", "serial", "lot", "run", "outcome", "fitted values (± U)", "verdict")


def trend_section(archive, quantity: str, by: str) -> Section:
    """The archive's control chart of one fitted quantity (the same chart as `archive trend` and the UI's)."""
    from benchlog.store.chart_figure import chart_figure
    from benchlog.store.control_chart import LIMITS_SOURCE, RULES_SOURCE
    from benchlog.store.trend import trend

    found = trend(archive, quantity, by)
    chart, stats = found.chart, found.stats
    hits = "; ".join(f"rule {h.rule} ({h.text}) at {chart.labels[h.index]}" for h in chart.hits) or "none"
    return Section(f"Trend of {quantity} by {by} (archive)", blocks=(
        FigureBlock("trend", chart_figure(chart, quantity, by),
                    caption=f"{LIMITS_SOURCE} ({chart.kind}) of {stats.runs} archived runs in "
                            f"{len(chart.values)} subgroups; ringed points complete a run rule ({RULES_SOURCE})."),
        Paragraph(f"Archive {archive.shown_url}. Centre {chart.centre:.6g}, σ̂ {chart.sigma:.3g}. "
                  f"Run-rule hits: {hits}."),
    ))


def history_section(archive, serial: str) -> Section:
    """Every measurement of one part, in time order (`archive history SERIAL`); BadInput for an unknown serial."""
    from benchlog.store.queries import history

    runs = history(archive, serial)
    if not runs:
        raise BadInput(archive.shown_url, f"serial {serial!r}", "has no runs in the archive",
                       "the serial of an archived run (see `benchlog archive find`)")
    return Section(f"History of {serial}", (
        Paragraph(f"{len(runs)} measurements of serial {serial} in archive {archive.shown_url}, oldest first."),
        Table(COLUMNS, _rows(runs), caption="U is the expanded uncertainty with the coverage factor stated."),
    ))


def lots_section(archive, quantity: str, lot_a: str, lot_b: str, usl: float | None = None,
                 lsl: float | None = None) -> Section:
    """Two lots compared as `archive compare-lots` does: difference of means ± U, Welch's test, capability."""
    from benchlog.store.lots import compare_lots

    c = compare_lots(archive, quantity, lot_a, lot_b, usl, lsl)
    unit = unit_of(quantity)

    def cap(s) -> str:
        return "no limits given" if s.capability is None else f"{s.capability_name} = {s.capability:.3g}"

    lots = Table(("lot", "n", f"mean of {label_of(quantity)}", "s", "capability"),
                 tuple((s.name, str(s.n), engineering(s.mean, unit), engineering(s.sd, unit, digits=2), cap(s))
                       for s in (c.a, c.b)),
                 caption=f"{quantity}; s is the sample standard deviation; capability against "
                         + (f"USL {usl:g}" if usl is not None else "no USL")
                         + (f", LSL {lsl:g}" if lsl is not None else ", no LSL") + ".")
    test = Table(("figure", "value"), (
        ("difference A − B (± U, 95 %)", measured(c.difference, c.expanded_u_95, unit, k=None)),
        ("standard uncertainty u of the difference", engineering(c.std_u, unit, digits=2)),
        ("degrees of freedom ν (Welch–Satterthwaite)", f"{c.dof:.1f}"),
        ("t", f"{c.t:.3f}"),
        ("p (two-sided)", p_value(c.p_two_sided)),
        ("test", c.test),
    ), caption="Welch (1947); U = t(0.975, ν)·u (GUM G.3).")
    return Section(f"Lots {lot_a} and {lot_b} compared on {quantity} (archive)", (
        Paragraph(f"Archive {archive.shown_url}; lot A is {lot_a}, lot B is {lot_b}."), lots, test))


def find_section(archive, text: str, rows: int | None = None) -> Section:
    """The runs a filter (typed as in the UI's archive view) selects, oldest first, at most `rows` of them."""
    from benchlog.store.filters import parse_filter
    from benchlog.store.queries import find_runs

    rows = FIND_ROWS if rows is None else rows
    runs = find_runs(archive, parse_filter(text))
    blocks = [Paragraph(f"Filter {text!r} selects {len(runs)} runs in archive {archive.shown_url}"
                        f" (at most {rows} listed, oldest first).")]
    if runs:
        blocks.append(Table(COLUMNS, _rows(runs[:rows])))
    if len(runs) > rows:
        blocks.append(Paragraph(f"{len(runs) - rows} more not shown.", "note"))
    return Section(f"Runs found: {text}", tuple(blocks))


def archive_sections(url: str | None, *, trend: str | None = None, trend_by: str = "lot",
                     serial: str | None = None, lots: tuple[str, str] | None = None, quantity: str = "r_on_ohm", usl: float | None = None, lsl: float | None = None,
                     find: str | None = None) -> list[Section]:
    """The archive sections asked for, from one connection; a database that refuses is BadInput (one line)."""
    from sqlalchemy.exc import DBAPIError

    from benchlog.store import open_archive

    if find is not None:  # a bad filter word is refused before the database is opened
        from benchlog.store.filters import parse_filter

        parse_filter(find)
    archive = open_archive(url)
    out: list[Section] = []
    try:
        if trend is not None:
            out.append(trend_section(archive, trend, trend_by))
        if serial is not None:
            out.append(history_section(archive, serial))
        if lots is not None:
            out.append(lots_section(archive, quantity, *lots, usl, lsl))
        if find is not None:
            out.append(find_section(archive, find))
    except DBAPIError as exc:
        reason = " ".join(str(getattr(exc, "orig", exc)).split())[:200]
        raise BadInput(archive.shown_url, "", f"the database refused: {reason}", "an archive that answers") from None
    finally:
        archive.close()
    return out
