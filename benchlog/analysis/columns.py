"""One column of a loaded run as a float array, whether the run came as a DataFrame (`runs.load`) or as arrays (`runs.load_points`).

The judging path takes either, so `check` (a frame) and `lot` (arrays) judge the same numbers.
"""

from __future__ import annotations

import numpy as np


def column(data, name: str) -> np.ndarray | None:
    """`data[name]` as float64, or None when the run has no such column."""
    if hasattr(data, "columns"):  # a DataFrame
        return data[name].to_numpy(dtype=float) if name in data.columns else None
    values = getattr(data, name, None)
    return None if values is None else np.asarray(values, dtype=float)
