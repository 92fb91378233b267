"""Questions across runs, answered from the archive: find, history of one serial, a quantity's values.

Every value reaches the database as a bound parameter (SQLAlchemy Core
expressions); no text from a user is ever pasted into SQL.
"""

from __future__ import annotations

from dataclasses import dataclass

from . import schema
from .filters import GROUPINGS, RunFilter, check_date, until_bound  # noqa: F401 -- the questions' vocabulary


def _like_fragment(text: str) -> str:
    """`text` as a LIKE pattern that matches it literally anywhere (its own % _ and \\ escaped)."""
    escaped = text.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_")
    return f"%{escaped}%"


def filtered(query, flt: RunFilter | None):
    """`query` (over `runs`, perhaps joined) narrowed by every field `flt` gives: the one place a filter becomes SQL."""
    from sqlalchemy import exists, func, or_

    if flt is None:
        return query
    runs, verdicts = schema.runs, schema.verdicts
    for column, value in ((runs.c.lot, flt.lot), (runs.c.serial, flt.serial), (runs.c.kind, flt.kind),
                          (runs.c.label, flt.part), (runs.c.bench_host, flt.bench)):
        if value is not None:
            query = query.where(column == value)
    if flt.since is not None:
        query = query.where(runs.c.started_utc >= flt.since)
    if flt.until is not None:
        query = query.where(runs.c.started_utc < until_bound(flt.until))
    if flt.verdict is not None:
        query = query.where(exists().where(verdicts.c.run_pk == runs.c.id, verdicts.c.outcome == flt.verdict))
    if flt.text:
        pattern = _like_fragment(flt.text.lower())
        query = query.where(or_(*(func.lower(c).like(pattern, escape="\\")
                                  for c in (runs.c.serial, runs.c.lot, runs.c.label))))
    return query


def _run_row(row) -> dict:
    return {"run_id": row.run_id, "path": row.path, "content_sha256": row.content_sha256,
            "bench_host": row.bench_host, "element_id": row.element_id, "kind": row.kind, "label": row.label,
            "serial": row.serial, "lot": row.lot, "board_revision": row.board_revision,
            "started_utc": row.started_utc, "outcome": row.outcome, "points": row.points}


def _fits_by_run(conn, run_pks: list[int]) -> dict[int, dict]:
    from sqlalchemy import select

    fits = schema.fits
    out: dict[int, dict] = {}
    for start in range(0, len(run_pks), 5000):  # keep each IN list well under every driver's limit
        chunk = run_pks[start:start + 5000]
        for r in conn.execute(select(fits.c.run_pk, fits.c.model, fits.c.parameter, fits.c.value, fits.c.std_u,
                                     fits.c.expanded_u, fits.c.k).where(fits.c.run_pk.in_(chunk))):
            entry = out.setdefault(r.run_pk, {"model": r.model, "params": {}})
            entry["params"][r.parameter] = {"value": r.value, "std_u": r.std_u, "expanded_u": r.expanded_u, "k": r.k}
    return out


def _verdicts_by_run(conn, run_pks: list[int]) -> dict[int, list]:
    from sqlalchemy import select

    v = schema.verdicts
    out: dict[int, list] = {}
    for start in range(0, len(run_pks), 5000):
        chunk = run_pks[start:start + 5000]
        for r in conn.execute(select(v).where(v.c.run_pk.in_(chunk))):
            out.setdefault(r.run_pk, []).append(
                {"spec": r.spec_name, "spec_sha256": r.spec_sha256, "quantity": r.quantity, "verdict": r.outcome,
                 "measured": r.measured, "expanded_u": r.expanded_u, "limit": r.limit_value})
    return out


def find_runs(archive, flt: RunFilter, *, with_fits: bool = True) -> list[dict]:
    """Runs matching every given filter, oldest first (or the newest `limit` of them, newest first, when
    `flt.newest_first`), each with its fits and verdicts."""
    from sqlalchemy import select

    runs = schema.runs
    query = filtered(select(runs), flt)
    if flt.newest_first:
        query = query.order_by(runs.c.started_utc.desc(), runs.c.id.desc())
    else:
        query = query.order_by(runs.c.started_utc, runs.c.id)
    if flt.limit is not None:
        query = query.limit(flt.limit)
    with archive.reading() as conn:
        rows = conn.execute(query).all()
        pks = [r.id for r in rows]
        fits = _fits_by_run(conn, pks) if with_fits else {}
        judged = _verdicts_by_run(conn, pks)
    out = []
    for r in rows:
        item = _run_row(r)
        if with_fits:
            item["fit"] = fits.get(r.id)
        item["verdicts"] = judged.get(r.id, [])
        out.append(item)
    return out


def history(archive, serial: str) -> list[dict]:
    """Every measurement of one part (by serial), in time order, with instruments, fits and verdicts."""
    from sqlalchemy import select

    items = find_runs(archive, RunFilter(serial=serial))
    if not items:
        return items
    ins = schema.instruments
    with archive.reading() as conn:
        ids = dict(conn.execute(select(schema.runs.c.run_id, schema.runs.c.id).where(
            schema.runs.c.serial == serial)).all())
        by_pk: dict[int, list] = {}
        for r in conn.execute(select(ins).where(ins.c.run_pk.in_(list(ids.values())))):
            by_pk.setdefault(r.run_pk, []).append({"role": r.role, "resource": r.resource, "idn": r.idn,
                                                   "profile": r.profile, "profile_sha256": r.profile_sha256})
    for item in items:
        item["instruments"] = by_pk.get(ids[item["run_id"]], [])
    return items


@dataclass(frozen=True)
class QuantityValue:
    """One run's value of a fitted quantity, with what it is grouped by."""

    run_id: str
    started_utc: str
    lot: str | None
    bench: str | None
    serial: str | None
    value: float
    std_u: float | None


def quantity_values(archive, quantity: str, flt: RunFilter | None = None) -> list[QuantityValue]:
    """Every stored value of one fitted parameter (its JSON key, e.g. `r_on_ohm`), oldest run first."""
    from sqlalchemy import select

    runs, fits = schema.runs, schema.fits
    query = (select(runs.c.run_id, runs.c.started_utc, runs.c.lot, runs.c.bench_host, runs.c.serial,
                    fits.c.value, fits.c.std_u)
             .join(fits, fits.c.run_pk == runs.c.id).where(fits.c.parameter == quantity))
    query = filtered(query, flt).order_by(runs.c.started_utc, runs.c.id)
    with archive.reading() as conn:
        return [QuantityValue(*row) for row in conn.execute(query)]


def known_quantities(archive) -> list[str]:
    from sqlalchemy import select

    with archive.reading() as conn:
        return sorted(conn.execute(select(schema.fits.c.parameter).distinct()).scalars())


def group_key(value: QuantityValue, by: str) -> str:
    """The subgroup a value belongs to: its lot, its day (UTC) or its bench host."""
    if by == "lot":
        return value.lot or "(no lot)"
    if by == "day":
        return value.started_utc[:10]
    if by == "bench":
        return value.bench or "(no host)"
    raise ValueError(by)


def grouped(values: list[QuantityValue], by: str) -> list[tuple[str, list[float]]]:
    """Values in subgroups, the subgroups in the order of their first run."""
    groups: dict[str, list[float]] = {}
    for v in values:
        groups.setdefault(group_key(v, by), []).append(v.value)
    return list(groups.items())


@dataclass(frozen=True)
class SubgroupStats:
    """Each subgroup's name, size, mean and range of one fitted quantity, subgroups in order of their first run."""

    names: tuple[str, ...]
    sizes: tuple[int, ...]
    means: tuple[float, ...]
    ranges: tuple[float, ...]

    @property
    def runs(self) -> int:
        return sum(self.sizes)


def subgroup_stats(archive, quantity: str, by: str, flt: RunFilter | None = None) -> SubgroupStats:
    """What a control chart needs, aggregated by the database (count, mean, max − min per subgroup)."""
    from sqlalchemy import func, select

    runs, fits = schema.runs, schema.fits
    key = {"lot": runs.c.lot, "day": func.substr(runs.c.started_utc, 1, 10), "bench": runs.c.bench_host}[by]
    query = (select(key.label("name"), func.count().label("n"), func.avg(fits.c.value).label("mean"),
                    (func.max(fits.c.value) - func.min(fits.c.value)).label("range"),
                    func.min(runs.c.started_utc).label("first"))
             .join(fits, fits.c.run_pk == runs.c.id).where(fits.c.parameter == quantity))
    query = filtered(query, flt)
    query = query.group_by(key).order_by("first", "name")
    with archive.reading() as conn:
        rows = conn.execute(query).all()
    none = {"lot": "(no lot)", "day": "(no date)", "bench": "(no host)"}[by]
    return SubgroupStats(tuple(r.name if r.name is not None else none for r in rows), tuple(int(r.n) for r in rows),
                         tuple(float(r.mean) for r in rows), tuple(float(r.range) for r in rows))
