"""The heat-soak's part of `fit` and `check`: its JSON block and its lines of text."""

from __future__ import annotations

from typing import Any


def soak_block(frame, meta, spec=None) -> tuple[dict[str, Any] | None, list[str]]:
    """(JSON block, text lines) for a run with heat-soak readings; (None, []) for a run without."""
    plan = meta.header.plan
    if plan is not None and not plan.soak:
        return None, []  # the plan asked for no soak: no need to load the thermal analysis
    from benchlog.analysis.thermal_response import SoakError, analyse_soak, has_soak, soak_text

    if not has_soak(frame):
        return None, []
    try:
        result = analyse_soak(frame, meta, spec)
    except SoakError as exc:
        return {"error": str(exc)}, [f"heat-soak: not analysed: {exc}"]
    return result.to_json(), soak_text(result)
