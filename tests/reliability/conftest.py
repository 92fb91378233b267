"""Reliability suite: the tally of simulator faults survived, printed in pytest's terminal summary.

A test marked `@pytest.mark.fault_survival("<fault name>")` counts for that
fault; a fault is survived when every test marked with its name passed.
"""

from __future__ import annotations

import pytest

_TALLY: dict[str, list[bool]] = {}


def pytest_configure(config) -> None:
    config.addinivalue_line("markers", "fault_survival(name): counts toward 'N of N faults survived'")


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_makereport(item, call):
    outcome = yield
    report = outcome.get_result()
    marker = item.get_closest_marker("fault_survival")
    if marker is None:
        return
    name = marker.args[0]
    if report.when == "setup" and not report.passed:
        _TALLY.setdefault(name, []).append(False)
    elif report.when == "call":
        _TALLY.setdefault(name, []).append(report.passed)


def pytest_terminal_summary(terminalreporter) -> None:
    if not _TALLY:
        return
    survived = [name for name, results in _TALLY.items() if results and all(results)]
    failed = [name for name in _TALLY if name not in survived]
    line = f"{len(survived)} of {len(_TALLY)} faults survived"
    if failed:
        line += " (not survived: " + ", ".join(failed) + ")"
    terminalreporter.write_sep("-", "reliability")
    terminalreporter.write_line(line)
