"""A recorded run read back and judged: the fit, the spec's prediction, the verdict, self-heating.

Runs on a worker thread (a diode fit of many points takes a moment); each step's
failure is kept as a sentence, so the results view can show what did work.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

MODELS = ("auto", "resistive", "diode", "knee")


@dataclass(frozen=True)
class RunFindings:
    path: Path
    frame: Any  # pandas.DataFrame from benchlog.runs.load
    meta: Any  # benchlog.runs.RunMeta
    model: str = "auto"
    fit: Any = None  # benchlog.analysis FitResult
    fit_error: str = ""
    spec: Any = None
    spec_path: Path | None = None
    check: Any = None
    check_error: str = ""
    self_heating: Any = None
    notes: tuple[str, ...] = field(default=())
    soak: Any = None  # benchlog.analysis.thermal_response.SoakResult of a heat-soak run
    soak_error: str = ""
    sweeps: Any = None  # benchlog.report.sweeps_data.sweeps_payload: input and leakage sweeps, when the run has them

    @property
    def verdict(self) -> str | None:
        """"pass" | "fail" | "conditional" | None (no spec or no check)."""
        return None if self.check is None else self.check.outcome


def study_run(path: Path, spec_path: Path | None = None, model: str = "auto") -> RunFindings:
    """Load `path`, fit it with `model`, and judge it against the spec when one is given."""
    from benchlog.runs import load

    from benchlog.runs.series import focus_frame

    whole, meta = load(path)
    frame, focus = focus_frame(whole, meta)  # an input sweep: the single fit takes the highest input's series
    fit = None
    fit_error = ""
    self_heating = None
    try:
        from benchlog.analysis.fits import fit_run

        fit = fit_run(frame, meta, model=model)
    except Exception as exc:
        fit_error = _sentence(exc)
    if fit is not None:
        from benchlog.analysis.self_heating import detect_self_heating

        try:
            self_heating = detect_self_heating(frame, fit)
        except Exception:  # too few points for the test: no warning rather than no results
            self_heating = None
    spec = None
    check = None
    check_error = ""
    if spec_path is not None:
        try:
            from benchlog.specfiles import load_spec
            from benchlog.analysis.judging import check_run

            spec = load_spec(spec_path)
            check = check_run(frame, meta, spec)
        except Exception as exc:
            check_error = _short_paths(_sentence(exc), spec_path)
    soak = None
    soak_error = ""
    try:
        from benchlog.analysis.thermal_response import analyse_soak, has_soak

        if has_soak(whole):
            soak = analyse_soak(whole, meta, spec)
    except Exception as exc:
        soak_error = _sentence(exc)
    sweeps = None
    try:
        from benchlog.report.sweeps_data import sweeps_payload

        sweeps = sweeps_payload(whole, meta, spec=spec)
    except Exception as exc:  # the sweeps are an addition: their failure must not hide the fit
        check_error = check_error or _sentence(exc)
    return RunFindings(path, frame, meta, model, fit, fit_error, spec, spec_path, check, check_error, self_heating,
                       notes=(focus,) if focus else (), soak=soak, soak_error=soak_error, sweeps=sweeps)


def _short_paths(text: str, path: Path) -> str:
    """The spec's path as the user reads it (relative, or demo/…), never an installed package's full path."""
    from .paths import shown

    for form in sorted({str(path), str(Path(path).resolve())}, key=len, reverse=True):
        text = text.replace(form, shown(path))
    return text


def _sentence(exc: BaseException) -> str:
    line = getattr(exc, "line", None)
    if callable(line):
        return line()
    return (str(exc).strip() or type(exc).__name__).splitlines()[0]
