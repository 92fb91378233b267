"""Printing results for people and for scripts (`--json`)."""

from __future__ import annotations

import json
import math
import sys
from typing import Any


def _clean(value: Any) -> Any:
    # JSON has no NaN or infinity; a missing number is null, never a bare NaN token.
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if hasattr(value, "item") and callable(value.item):  # numpy scalars
        return _clean(value.item())
    return value


def print_json(payload: Any) -> None:
    """Write one JSON document to stdout (keys carry their SI unit suffix by convention)."""
    json.dump(_clean(payload), sys.stdout, indent=2, sort_keys=False)
    sys.stdout.write("\n")
