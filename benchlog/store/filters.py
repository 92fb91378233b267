"""What a question to the archive selects on: the filter, its dates, the groupings of a trend.

Stdlib only, so the UI can hold a filter without loading the database layer
(`queries.filtered` turns it into SQL, with bound parameters only).
"""

from __future__ import annotations

from dataclasses import dataclass

from benchlog.badinput import BadInput

GROUPINGS = ("lot", "day", "bench")


@dataclass(frozen=True)
class RunFilter:
    """What `find` selects on; None means "any". Dates are ISO 8601 (a day or a full UTC time)."""

    lot: str | None = None
    serial: str | None = None
    kind: str | None = None
    part: str | None = None  # the element's label
    verdict: str | None = None
    bench: str | None = None
    since: str | None = None
    until: str | None = None
    text: str | None = None  # a fragment of the serial, lot or part label (case-insensitive), searched anywhere
    limit: int | None = None
    newest_first: bool = False  # with `limit`: the newest N runs rather than the oldest


def check_date(text: str | None, option: str) -> str | None:
    """A date or UTC time as `started_utc` holds it (so text order is time order); BadInput otherwise."""
    from datetime import datetime

    if text is None:
        return None
    try:
        datetime.fromisoformat(text.removesuffix("Z"))
    except ValueError:
        raise BadInput("argument", option, f"{text!r} is not a date", "YYYY-MM-DD or YYYY-MM-DDTHH:MM:SSZ") from None
    return text


def until_bound(text: str) -> str:
    """`--until 2025-03-01` includes that whole day: compare below the next character after the day."""
    return text + "~" if len(text) == 10 else text
