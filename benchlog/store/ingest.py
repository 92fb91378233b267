"""Publishing run files into the archive: idempotent, keyed by the run id and the file's content hash.

- a run not in the archive is added with its instruments, points and fits (and
  its verdict when a part spec is given);
- the same file again (same run id, same SHA-256 of its bytes) changes nothing;
- a run stored while still incomplete whose file has since grown (more points or
  its end record) is replaced by the file as it is now;
- a stored run whose file now differs in another way (the stored one was
  complete, or the file shrank) is left as it is and reported as a conflict:
  run files are append-only, so a changed finished file is someone's mistake.

Runs are stored whole inside a transaction, so a bench that dies mid-way leaves a
run absent, never half-stored. Two benches racing to add the same run meet the unique run id
constraint: the loser's transaction rolls back, and its retry finds the run there.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path

from benchlog.badinput import BadInput

from . import schema

ADDED, UPDATED, UNCHANGED, CONFLICT = "added", "updated", "unchanged", "conflict"


@dataclass(frozen=True)
class Ingested:
    """What publishing one run file did."""

    path: str
    run_id: str
    action: str  # added | updated | unchanged | conflict
    note: str = ""


@dataclass(frozen=True)
class SpecForVerdict:
    """A part spec to judge each run against at ingest, with its file's content hash."""

    spec: object  # analysis.spec.PartSpec
    sha256: str

    @classmethod
    def load(cls, path: str) -> SpecForVerdict:
        from benchlog.specfiles import load_spec

        spec = load_spec(path)
        return cls(spec, hashlib.sha256(Path(path).read_bytes()).hexdigest())


def _finite(x) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _fit_rows(points, meta) -> tuple[list[dict], str]:
    """The fitted parameters of a run as table rows, by the model its element kind implies."""
    from benchlog.analysis.fits import fit_points
    from benchlog.kinds import REGISTRY

    kind = REGISTRY.get(meta.header.kind or "")
    model = "diode" if kind is not None and kind.drop_is_junction(meta.element.measure or "channel") else "resistive"
    try:
        fit = fit_points(points, meta, model)
    except BadInput as exc:
        return [], f"not fitted: {exc.problem}"
    rows = []
    for name, value in fit.params.items():
        budget = fit.budgets.get(name)
        budget_json = None if budget is None else json.dumps(
            {"u": budget.u, "dof": _finite(budget.dof), "k": budget.k, "expanded_u": budget.expanded_u,
             "components": [{"name": c.name, "kind": c.kind, "u": c.u, "dof": _finite(c.dof)}
                            for c in budget.components]})
        if _finite(value) is None:
            continue
        rows.append({"model": fit.model, "parameter": name, "value": float(value),
                     "std_u": _finite(fit.std_u.get(name)), "expanded_u": _finite(fit.expanded_u.get(name)),
                     "k": fit.k, "budget_json": budget_json})
    return rows, ""


def _verdict_row(path: str, spec: SpecForVerdict) -> tuple[dict | None, str]:
    from benchlog.analysis.judging import check_run
    from benchlog.runs import load

    try:
        frame, meta = load(path)
        check = check_run(frame, meta, spec.spec)
    except BadInput as exc:
        return None, f"no verdict: {exc.problem}"
    v = check.verdict
    return {"spec_name": spec.spec.name, "spec_sha256": spec.sha256, "quantity": v.quantity,
            "outcome": v.outcome, "measured": _finite(v.measured), "expanded_u": _finite(v.expanded_u),
            "limit_value": _finite(v.limit),
            "conditions_json": json.dumps({"current_a": check.current_a, "current_source": check.current_source,
                                           "ambient_c": check.ambient_c, "model": check.model,
                                           "run_outcome": check.run_outcome})}, ""


@dataclass(frozen=True)
class _Prepared:
    run: dict
    instruments: list[dict]
    points: list[dict]
    fits: list[dict]
    verdict: dict | None
    note: str


def prepare(path: str | Path, spec: SpecForVerdict | None = None) -> _Prepared:
    """Read, hash and fit one run file, outside any transaction (the slow part)."""
    from benchlog.runs import load_points

    path = Path(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise BadInput(str(path), "", f"cannot read: {exc.strerror}", "a readable run file") from None
    points, meta = load_points(path)
    header = meta.header
    board = meta.element.table.get("board_revision")
    run = {
        "run_id": header.run_id, "path": str(path.resolve()),
        "content_sha256": hashlib.sha256(data).hexdigest(),
        "bench_host": header.host, "element_id": meta.element.id or None, "kind": header.kind,
        "label": meta.element.label, "serial": header.serial, "lot": header.lot,
        "board_revision": str(board) if board is not None else None,
        "plan_json": json.dumps(header.to_table().get("plan"), sort_keys=True) if header.plan else None,
        "started_utc": header.started_utc,
        "ended_s": meta.finished.t_s if meta.finished is not None else None,
        "outcome": meta.outcome, "points": meta.points, "tool_version": header.tool_version,
        "schema_version": header.schema,
        "ingested_utc": datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.%fZ"),
    }
    instruments = [{"role": i.role, "resource": i.resource, "idn": i.idn, "profile": i.profile,
                    "profile_sha256": i.profile_sha256} for i in header.instruments]
    flags = points.flags
    rows = [{"idx": int(points.index[n]), "t_s": float(points.t_s[n]),
             "setpoint_a": _finite(points.setpoint_a[n]), "current_a": _finite(points.current_a[n]),
             "drop_v": _finite(points.drop_v[n]), "supply_v": _finite(points.supply_v[n]),
             "temperature_c": _finite(points.temperature_c[n]), "flags": flags[n] or None}
            for n in range(len(points))]
    fit_rows, note = _fit_rows(points, meta) if len(points) else ([], "not fitted: no points")
    verdict, vnote = _verdict_row(str(path), spec) if spec is not None else (None, "")
    return _Prepared(run, instruments, rows, fit_rows, verdict, "; ".join(n for n in (note, vnote) if n))


def _store(conn, p: _Prepared) -> str:
    from sqlalchemy import delete, insert, select, update

    runs = schema.runs
    query = select(runs.c.id, runs.c.content_sha256, runs.c.outcome, runs.c.points).where(
        runs.c.run_id == p.run["run_id"])
    if conn.dialect.name == "postgresql":
        query = query.with_for_update()
    found = conn.execute(query).first()
    if found is not None:
        if found.content_sha256 == p.run["content_sha256"]:
            return UNCHANGED
        if found.outcome != "incomplete" or p.run["points"] < found.points:
            return CONFLICT
        run_pk = found.id
        for table in schema.CHILD_TABLES:
            conn.execute(delete(table).where(table.c.run_pk == run_pk))
        conn.execute(update(runs).where(runs.c.id == run_pk).values(**p.run))
        action = UPDATED
    else:
        run_pk = conn.execute(insert(runs).values(**p.run).returning(runs.c.id)).scalar_one()
        action = ADDED
    for table, rows in ((schema.instruments, p.instruments), (schema.points, p.points), (schema.fits, p.fits),
                        (schema.verdicts, [p.verdict] if p.verdict else [])):
        if rows:
            conn.execute(insert(table), [{**row, "run_pk": run_pk} for row in rows])
    return action


def add_runs(archive, paths, spec: SpecForVerdict | None = None, *, batch: int = 200) -> list[Ingested]:
    """Publish run files (see the module docstring), `batch` runs to a transaction; BadInput for a non-run.

    Each file is read, hashed and fitted before its transaction opens, so a
    transaction holds the database only for the inserts.
    """
    from sqlalchemy.exc import IntegrityError

    paths = list(paths)
    out: list[Ingested] = []
    for start in range(0, len(paths), batch):
        prepared = [prepare(p, spec) for p in paths[start:start + batch]]
        for attempt in (1, 2):
            try:
                with archive.writing() as conn:
                    actions = [_store(conn, p) for p in prepared]
                break
            except IntegrityError:  # another bench added one of these runs meanwhile: the retry finds it
                if attempt == 2:
                    raise
        for path, p, action in zip(paths[start:start + batch], prepared, actions):
            note = p.note
            if action == CONFLICT:
                note = "the archive holds a different finished version of this run; left as it was"
            out.append(Ingested(str(path), p.run["run_id"], action, note))
    return out


def add_run(archive, path: str | Path, spec: SpecForVerdict | None = None) -> Ingested:
    """Publish one run file in its own transaction (what a sweep does when it ends)."""
    return add_runs(archive, [path], spec)[0]


def run_files(folder: str | Path) -> list[Path]:
    """The run files under a folder, in name order (what `archive sync` catches up)."""
    from benchlog.runs.format import FILE_SUFFIX

    return sorted(p for p in Path(folder).rglob(f"*{FILE_SUFFIX}") if p.is_file())


def known_hashes(archive) -> dict[str, str]:
    """path -> content hash of every stored run: lets `sync` skip unchanged files without parsing them."""
    from sqlalchemy import select

    with archive.reading() as conn:
        return dict(conn.execute(select(schema.runs.c.path, schema.runs.c.content_sha256)).all())
