"""Reliability suite: the tally of simulator faults survived and of bad inputs refused, in pytest's terminal summary.

A test marked `@pytest.mark.fault_survival("<fault name>")` counts for that
fault; a fault is survived when every test marked with its name passed. Each
case of test_bad_inputs.py counts toward the corpus line (strict xfails are the
known defects it found).
"""

from __future__ import annotations

import pytest

_TALLY: dict[str, list[bool]] = {}
_CORPUS: dict[str, str] = {}  # nodeid -> "passed" | "failed" | "xfailed"


def pytest_configure(config) -> None:
    config.addinivalue_line("markers", "fault_survival(name): counts toward 'N of N faults survived'")


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_makereport(item, call):
    outcome = yield
    report = outcome.get_result()
    if item.nodeid.split("::")[0].endswith("test_bad_inputs.py") and "corpus_is_large" not in item.nodeid:
        if report.when == "call" or (report.when == "setup" and not report.passed):
            _CORPUS[item.nodeid] = "xfailed" if hasattr(report, "wasxfail") else report.outcome
    marker = item.get_closest_marker("fault_survival")
    if marker is None:
        return
    name = marker.args[0]
    if report.when == "setup" and not report.passed:
        _TALLY.setdefault(name, []).append(False)
    elif report.when == "call":
        _TALLY.setdefault(name, []).append(report.passed)


def pytest_terminal_summary(terminalreporter) -> None:
    if not _TALLY and not _CORPUS:
        return
    terminalreporter.write_sep("-", "reliability")
    if _CORPUS:
        outcomes = list(_CORPUS.values())
        terminalreporter.write_line(
            f"bad-input corpus: {outcomes.count('passed')} of {len(outcomes)} cases refused as one line with exit 2"
            f" ({outcomes.count('xfailed')} known defects, {outcomes.count('failed')} failed)")
    if not _TALLY:
        return
    survived = [name for name, results in _TALLY.items() if results and all(results)]
    failed = [name for name in _TALLY if name not in survived]
    line = f"{len(survived)} of {len(_TALLY)} faults survived"
    if failed:
        line += " (not survived: " + ", ".join(failed) + ")"
    terminalreporter.write_line(line)
