"""What a question to the archive selects on: the filter and its typed form, its dates, a trend's groupings.

Stdlib only, so the UI can hold a filter without loading the database layer
(`queries.filtered` turns it into SQL, with bound parameters only).
"""

from __future__ import annotations

from dataclasses import dataclass

from benchlog.badinput import BadInput

GROUPINGS = ("lot", "day", "bench")
#: The filter's keys, and what each selects on.
FILTER_KEYS = {"serial": "serial", "lot": "lot", "kind": "kind", "part": "part", "verdict": "verdict",
               "bench": "bench", "since": "since", "until": "until", "date": "date"}
VERDICTS = ("pass", "fail", "conditional")


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


def parse_filter(text: str) -> RunFilter:
    """The typed filter as a `RunFilter`; BadInput names the word that is wrong and what is expected."""
    values: dict[str, str] = {}
    words: list[str] = []
    for word in text.split():
        key, sep, value = word.partition(":")
        if not sep:
            words.append(word)
            continue
        key = key.lower()
        if key not in FILTER_KEYS:
            raise BadInput("filter", word, f"{key!r} is not a filter key", "one of " + ", ".join(FILTER_KEYS))
        if not value:
            raise BadInput("filter", word, "has no value", f"{key}:VALUE")
        if key in values:
            raise BadInput("filter", word, f"{key} is given twice", f"one {key}:VALUE")
        values[key] = value
    if "verdict" in values:
        values["verdict"] = values["verdict"].lower()
        if values["verdict"] not in VERDICTS:
            raise BadInput("filter", f"verdict:{values['verdict']}", "is not a verdict", " or ".join(VERDICTS))
    for key in ("since", "until", "date"):
        if key in values:
            check_date(values[key], f"{key}:")
    if "date" in values:
        if "since" in values or "until" in values:
            raise BadInput("filter", f"date:{values['date']}", "is given with since: or until:", "date: alone")
        day = values.pop("date")[:10]
        values["since"] = values["until"] = day
    return RunFilter(**values, text=" ".join(words) or None)
