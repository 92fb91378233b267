"""A lot from its run files: load each run, fit it (`analysis.lot.fit_part`), summarise (`analysis.lot.lot_summary`).

The file reading and the process pool live here, above `analysis/`, which takes loaded
runs only. The report, the UI and `benchlog lot` all start a lot from here.
"""

from __future__ import annotations

from pathlib import Path
from typing import Sequence

from benchlog.analysis.lot import LotSummary, PartFit, fit_part, lot_model, lot_summary
from benchlog.analysis.spec import PartSpec
from benchlog.badinput import BadInput

#: Lots at least this large are loaded and fitted in a process pool (when there is more than one CPU).
POOL_MIN_RUNS = 400


def _fit_file(path, spec: PartSpec, at_a: float | None, model: str | None, vf_at_a: float | None) -> PartFit:
    """Load one run with the light loader and fit it."""
    from benchlog.runs import load_points

    points, meta = load_points(path)
    return fit_part(points, meta, str(path), spec, at_a, model, vf_at_a)


def _fit_chunk(job) -> list:
    """Worker of the process pool: fit runs in order; a BadInput ends the chunk as plain fields.

    (BadInput's constructor takes four fields, so it is sent back as those fields and raised
    again in the parent, in file order.)
    """
    paths, spec, at_a, model, vf_at_a = job
    out: list = []
    for path in paths:
        try:
            out.append(_fit_file(path, spec, at_a, model, vf_at_a))
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


def _fit_rest(paths: Sequence, spec: PartSpec, at_a, model: str, vf_at_a, workers: int) -> list[PartFit]:
    """Every run after the first, in the order given, serially or over `workers` processes."""
    if workers <= 1 or len(paths) < 2:
        return [_fit_file(p, spec, at_a, model, vf_at_a) for p in paths]
    from concurrent.futures import ProcessPoolExecutor

    size = max(1, -(-len(paths) // (workers * 8)))  # a few chunks per worker evens out the load
    jobs = [(list(paths[i:i + size]), spec, at_a, model, vf_at_a) for i in range(0, len(paths), size)]
    out: list[PartFit] = []
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


def lot_from_runs(paths: Sequence[str | Path], spec: PartSpec, at_a: float | None = None, *,
                  workers: int | None = None) -> LotSummary:
    """Load and fit each run, then summarise the lot (`analysis.lot.lot_summary`).

    Lots of `POOL_MIN_RUNS` runs or more are fitted over the CPUs (`workers`: None = every
    CPU available, 1 = in this process); the result is the same, in the order of `paths`,
    and a bad file raises the BadInput of the first bad file in that order.
    """
    paths = list(paths)
    if not paths:
        raise BadInput("argument", "RUN", "no run files given", "one or more run files")
    _refuse_same_file(paths)
    first = _fit_file(paths[0], spec, at_a, None, None)
    cond = first.conditions
    model = lot_model(spec, cond.body_diode)
    if workers is None:
        workers = _cpus() if len(paths) >= POOL_MIN_RUNS else 1
    parts = [first] + _fit_rest(paths[1:], spec, at_a, model, cond.current_a, max(1, int(workers)))
    return lot_summary(parts, spec)
