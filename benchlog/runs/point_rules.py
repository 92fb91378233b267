"""The rules a point column must meet, checked on whole columns: one place for both fast loaders.

`load` (pandas C parser) and `load_points` (plain str/numpy, for small files)
split the P lines their own way, then ask these functions whether every value
is one the writer can write (`format.py`). A refusal is never an error message:
the loader then hands the file to the line reader (`reader.py`), which applies
the same rules line by line and names the first line at fault. So every
BadInput about a run file comes from one place, and a fast path may be
stricter than the line reader (it refuses and lets the line reader decide)
but never more lenient about a value it keeps.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING

from .format import (
    ABSOLUTE_ZERO_C,
    DIRECTIONS,
    FLAG_PATTERN,
    MAX_INDEX,
    MAX_MAGNITUDE,
    POINT_INTEGER_COLUMNS,
    SUPPLY_MODES,
)
from .reader import NUMBER_SYNTAX

if TYPE_CHECKING:
    import numpy as np

#: A column of numbers as the writer writes them, tab-joined: no blanks, ASCII digits only
#: (stricter than the line reader, which also takes blanks around a number).
NUMBER_COLUMN = re.compile(rf"(?:{NUMBER_SYNTAX})(?:\t(?:{NUMBER_SYNTAX}))*\Z", re.ASCII)

#: Columns whose empty field means "not read" on any point (NaN in the arrays).
OPTIONAL_NUMBERS = ("supply_v", "temperature_c")
#: Columns that may be empty only on a point flagged overload (the meter had no reading).
OVERLOAD_NUMBERS = ("current_a", "drop_v")


def text_value_ok(name: str, value: str) -> bool:
    """A non-empty value of the text column `name` (supply_mode, direction or flags) as written."""
    if name == "supply_mode":
        return value in SUPPLY_MODES
    if name == "direction":
        return value in DIRECTIONS
    return all(FLAG_PATTERN.match(flag) for flag in value.split("|"))


def flag_rows(categories: Sequence[str], codes: np.ndarray, flag: str) -> np.ndarray:
    """Rows whose "|"-joined flags hold `flag`, from the distinct flag texts and each row's code."""
    import numpy as np

    rows = np.zeros(len(codes), dtype=bool)
    for code, value in enumerate(categories):
        if flag in value.split("|"):
            rows |= codes == code
    return rows


def _finite_within(x: np.ndarray, optional: np.ndarray | bool = False) -> bool:
    import numpy as np

    ok = np.abs(x) <= MAX_MAGNITUDE  # False for NaN and inf
    return bool(np.all(ok | (np.isnan(x) & optional)))


#: Up to this many points the columns are checked as one block: on short columns numpy's cost per
#: call, not the arithmetic, is what a check costs (a lot reads thousands of 30-point files).
BLOCK_MAX_POINTS = 4096
#: The block's rows: the integer columns, then the float columns in `_BLOCK_FLOATS` order.
_BLOCK_FLOATS = ("t_s", "setpoint_a") + OVERLOAD_NUMBERS + OPTIONAL_NUMBERS
_BLOCK_ORDER = POINT_INTEGER_COLUMNS + _BLOCK_FLOATS


def _block_ok(block: np.ndarray, overload: np.ndarray) -> bool:
    """`numbers_ok`'s rules on the columns stacked as rows (`_BLOCK_ORDER`)."""
    import numpy as np

    ints, floats = block[:2], block[2:]
    if not np.all((ints >= 0) & (ints <= MAX_INDEX) & (np.floor(ints) == ints)):
        return False
    if block.shape[1] > 1 and not np.all(np.diff(block[0]) > 0):
        return False
    may_be_empty = np.zeros(floats.shape, dtype=bool)
    may_be_empty[2:4] = overload  # current_a, drop_v: only on a point flagged overload
    may_be_empty[4:] = True  # supply_v, temperature_c: "not read"
    if not np.all((np.abs(floats) <= MAX_MAGNITUDE) | (np.isnan(floats) & may_be_empty)):
        return False
    return not np.any(floats[5] < ABSOLUTE_ZERO_C)


def numbers_ok(numbers: Mapping[str, np.ndarray], overload: np.ndarray) -> bool:
    """Every numeric column (float64, NaN where the field was empty) holds values the writer writes.

    Whole numbers >= 0 in the integer columns, the index increasing strictly, every
    reading finite and within `MAX_MAGNITUDE` (NaN only where the column may be empty),
    no temperature below absolute zero.
    """
    import numpy as np

    if len(numbers["index"]) <= BLOCK_MAX_POINTS:
        return _block_ok(np.vstack([numbers[name] for name in _BLOCK_ORDER]), overload)
    for name in POINT_INTEGER_COLUMNS:
        x = numbers[name]
        if not (np.all((x >= 0) & (x <= MAX_INDEX)) and np.all(np.floor(x) == x)):
            return False
    index = numbers["index"]
    if len(index) > 1 and not np.all(np.diff(index) > 0):
        return False
    if not (_finite_within(numbers["t_s"]) and _finite_within(numbers["setpoint_a"])
            and all(_finite_within(numbers[name], overload) for name in OVERLOAD_NUMBERS)
            and all(_finite_within(numbers[name], True) for name in OPTIONAL_NUMBERS)):
        return False
    return not np.any(numbers["temperature_c"] < ABSOLUTE_ZERO_C)
