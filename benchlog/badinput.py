"""The one error type for input a user must fix: it names the file, the place, the fault and the remedy.

Every reader of our files (profiles, bench, plan, spec, design, run files) and
every argument check raises `BadInput`; the CLI prints `str(error)` as one line
and exits with code 2. Nothing else is needed to report bad input well.
"""

from __future__ import annotations


class BadInput(Exception):
    """Input that cannot be used as given.

    source:   the file (or "argument", "reply from <resource>") the fault is in
    where:    the key (`[steps].count`), the line (`line 12`) or the argument (`--at`)
    problem:  what is wrong, in the user's words
    expected: what would have been accepted
    """

    def __init__(self, source: str, where: str, problem: str, expected: str = "") -> None:
        self.source = str(source)
        self.where = where
        self.problem = problem
        self.expected = expected
        super().__init__(self.line())

    def line(self) -> str:
        place = f"{self.source}: {self.where}" if self.where else self.source
        text = f"{place}: {self.problem}"
        if self.expected:
            text += f" (expected {self.expected})"
        return " ".join(text.split())
