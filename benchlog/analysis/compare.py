"""Differences between runs with their uncertainty: what the same instruments add to both cancels.

For d = y_B − y_A the law of propagation with correlated inputs (JCGM 100:2008
(GUM) 5.2.2, eq. 16, sensitivities +1 and −1) gives

    u²(d) = Σ u²_A,i + Σ u²_B,j − 2 Σ r_ij · u_A,i · u_B,j .

A type B term of the meter's accuracy spec (the gain and the offset that stay
fixed over a sweep) is the same unknown error in both runs when both were read
by the same instrument (same `*IDN?`, serial included) on the same range: r = 1,
and the term cancels down to (u_A,i − u_B,i)². Everything else — the fit's
type A term, and any term from a different instrument or range or an instrument
that did not say who it is — is taken as independent (r = 0), which can only
make u(d) larger.

The difference is called significant when |d| > U(d) = k·u(d), with k = 2
(about 95 % coverage for a normal distribution, GUM 6.2.2 and 6.3.3).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable, Sequence

from benchlog.quantity import measured, unit_of

#: components of a fit budget that come from one reading's accuracy, and which reading (fit_result.error_shapes)
READING_OF_TERM = {
    "drop meter gain": "drop", "drop meter offset": "drop",
    "current meter gain": "current", "current meter offset": "current",
}
LEVEL = "k = 2, about 95 % coverage for a normal distribution"


@dataclass(frozen=True)
class Term:
    """One budget line of one run: its standard uncertainty (unit of the result) and what makes it shared."""

    name: str
    u: float
    shared_by: tuple[str, str, float] | None = None  # (term name, instrument *IDN?, range); None: independent


@dataclass(frozen=True)
class Difference:
    """y_B − y_A for one quantity, with u(d) from GUM 5.2.2 and the terms that cancelled."""

    quantity: str
    a: float
    u_a: float
    b: float
    u_b: float
    d: float
    u_d: float
    k: float
    cancelled: tuple[str, ...]

    @property
    def expanded_u_d(self) -> float:
        return self.k * self.u_d

    @property
    def significant(self) -> bool:
        return abs(self.d) > self.expanded_u_d


def _u(terms: Iterable[Term]) -> float:
    return math.sqrt(sum(t.u * t.u for t in terms))


def difference(quantity: str, a: float, terms_a: Sequence[Term], b: float, terms_b: Sequence[Term],
               k: float = 2.0) -> Difference:
    """d = b − a with u²(d) = u²(a) + u²(b) − 2·Σ u_a,i·u_b,i over the terms both runs share (r = 1)."""
    shared_b = {t.shared_by: t for t in terms_b if t.shared_by is not None}
    covariance = 0.0
    cancelled: list[str] = []
    for t in terms_a:
        other = shared_b.get(t.shared_by) if t.shared_by is not None else None
        if other is not None:
            covariance += t.u * other.u
            cancelled.append(t.name)
    u_a, u_b = _u(terms_a), _u(terms_b)
    variance = max(0.0, u_a * u_a + u_b * u_b - 2.0 * covariance)  # ≥ Σ(u_a,i − u_b,i)² ≥ 0 up to rounding
    return Difference(quantity, float(a), u_a, float(b), u_b, float(b) - float(a), math.sqrt(variance), k,
                      tuple(cancelled))


def reading_instruments(header) -> dict[str, tuple[str, float] | None]:
    """Which instrument (its `*IDN?`) and range read the drop and the current of a run; None when not known."""
    by_role = {inst.role: inst.idn.strip() for inst in header.instruments}
    wiring = getattr(header.bench, "wiring", None)
    current_role = (getattr(wiring, "current_from", None) or "load") if wiring is not None else "load"
    out: dict[str, tuple[str, float] | None] = {}
    for reading, role in (("drop", "meter"), ("current", current_role)):
        acc = getattr(header.accuracy, reading)
        idn = by_role.get(role, "")
        out[reading] = (idn, float(acc.range)) if idn and acc is not None else None
    return out


def terms_of(budget, instruments: dict[str, tuple[str, float] | None], scale: float = 1.0) -> tuple[Term, ...]:
    """A fit budget's components as terms, the meter terms keyed by instrument and range so they can cancel."""
    out = []
    for c in budget.components:
        reading = READING_OF_TERM.get(c.name) if c.kind == "B" else None
        who = instruments.get(reading) if reading else None
        shared = (c.name, who[0], who[1]) if who is not None else None
        out.append(Term(c.name, abs(scale) * c.u, shared))
    return tuple(out)


@dataclass(frozen=True)
class RunSide:
    """One run in a comparison: who it is, the model it was fitted with, and its verdict when a spec was given."""

    path: str
    serial: str
    model: str
    verdict: str | None = None


@dataclass(frozen=True)
class Comparison:
    """Every run against the first: one Difference per fitted quantity and for the loss at one current."""

    reference: RunSide
    others: tuple[RunSide, ...]
    model: str
    current_a: float
    current_source: str
    k: float
    rows: tuple[tuple[Difference, ...], ...]  # rows[i]: others[i] against the reference
    notes: tuple[str, ...] = ()


def compare_runs(loaded: Sequence[tuple[object, object]], spec=None, at_a: float | None = None,
                 k: float = 2.0) -> Comparison:
    """Fit every run with the first run's model and take each difference to the first (GUM 5.2.2).

    `loaded` holds (frame, meta) pairs from `benchlog.runs.load`; the loss is compared at one
    current for all runs: `at_a`, else the spec-free rule of the first run (its plan's
    operating_a, else the smallest of the runs' largest measured currents, so that no run is
    extrapolated).
    """
    from benchlog.badinput import BadInput

    from .fits import fit_run

    if len(loaded) < 2:
        raise BadInput("arguments", "RUN", f"names {len(loaded)} run", "two or more runs to compare")
    ids = [str(meta.run_id) for _, meta in loaded]
    for i, run_id in enumerate(ids):
        if run_id in ids[:i]:
            raise BadInput(str(loaded[i][1].path), "run_id",
                           f"is the same run as {loaded[ids.index(run_id)][1].path}", "different runs to compare")
    notes: list[str] = []
    first_frame, first_meta = loaded[0]
    first_fit = fit_run(first_frame, first_meta)
    fits = [first_fit] + [fit_run(frame, meta, model=first_fit.model) for frame, meta in loaded[1:]]
    notes.append(f"every run fitted with the {first_fit.model} model, the first run's automatic choice")
    if at_a is not None:
        current, source = float(at_a), "given with --at"
    elif first_meta.header.element.operating_a is not None:
        current, source = float(first_meta.header.element.operating_a), "the first run's operating_a"
    else:
        current = min(float(f.current_a.max()) for f in fits)
        source = "the smallest of the runs' largest measured currents"
    for f, (_, meta) in zip(fits, loaded):
        if current > float(f.current_a.max()) * 1.0001:
            notes.append(f"{meta.path}: {current:g} A lies beyond its largest measured current "
                         f"{float(f.current_a.max()):g} A: its loss there is extrapolated")
    sides = []
    for f, (frame, meta) in zip(fits, loaded):
        verdict = None
        if spec is not None:
            from .judging import check_run

            verdict = check_run(frame, meta, spec, at_a=current).verdict.outcome
        element = meta.header.element
        sides.append(RunSide(str(meta.path), element.serial or element.id or "", f.model, verdict))
    instruments = [reading_instruments(meta.header) for _, meta in loaded]
    rows = []
    for f, inst in zip(fits[1:], instruments[1:]):
        row = []
        for key in first_fit.params:
            if key not in f.params:
                continue
            row.append(difference(key, first_fit.params[key], terms_of(first_fit.budgets[key], instruments[0]),
                                  f.params[key], terms_of(f.budgets[key], inst), k))
        drop_a, drop_b = first_fit.drop_budget_at(current), f.drop_budget_at(current)
        va, _ = first_fit.drop_at(current)
        vb, _ = f.drop_at(current)
        # the current is where both curves are evaluated, not a reading: u(P) = I·u(V)
        row.append(difference("loss_w", va * current, terms_of(drop_a, instruments[0], current),
                              vb * current, terms_of(drop_b, inst, current), k))
        rows.append(tuple(row))
    return Comparison(sides[0], tuple(sides[1:]), first_fit.model, current, source, k, tuple(rows), tuple(notes))


_NAMES = {"r_on_ohm": "R_on", "v0_v": "V0", "ideality": "n", "i_s_a": "Is", "r_s_ohm": "Rs",
          "v_knee_v": "V_knee", "r_d_ohm": "r_d", "loss_w": "loss"}


def comparison_lines(c, names_only: bool = False) -> list[str]:
    """The comparison for people: two runs side by side, or more as a table against the first."""
    def where(side) -> str:
        return side.path.replace("\\", "/").rsplit("/", 1)[-1] if names_only else side.path

    ref = c.reference
    lines = [f"reference: {ref.serial or '—'} ({where(ref)})" + (f", {ref.verdict.upper()}" if ref.verdict else ""),
             f"model {c.model}; loss at {c.current_a:g} A ({c.current_source}); values ± U and d ± U(d) with "
             f"{LEVEL}; significant: |d| > U(d)"]
    for other, row in zip(c.others, c.rows):
        lines.append(f"against {other.serial or '—'} ({where(other)})"
                     + (f", {other.verdict.upper()}" if other.verdict else ""))
        for d in row:
            unit = unit_of(d.quantity)
            name = _NAMES.get(d.quantity, d.quantity)
            word = "SIGNIFICANT" if d.significant else "not significant"
            lines.append(f"  {name:<7} {measured(d.a, d.k * d.u_a, unit, None):<22} -> "
                         f"{measured(d.b, d.k * d.u_b, unit, None):<22}  d = {measured(d.d, d.expanded_u_d, unit, None)}"
                         f"  {word}")
        cancelled = sorted({name for d in row for name in d.cancelled})
        lines.append("  same instrument and range in both, cancelled: " + (", ".join(cancelled) if cancelled else
                     "nothing (other instruments or ranges: all terms add)"))
    lines += [f"note: {n}" for n in c.notes]
    return lines
