"""The temperature term of a fit's budget: its name, and the coefficient a fit uses when no part spec gives one.

Both `fits` (a fit on its own) and `judging` (a verdict against a spec) need them; they live
here so neither has to import the other.
"""

from __future__ import annotations

from benchlog.kinds import ELEMENT_KINDS as _REGISTRY, kind as element_kind

from .spec import DEFAULT_RDS_ON_TEMPCO_PER_K, ResistorSpec

TEMPERATURE_TERM = "junction temperature"

#: How the coverage factor models that term: normal. u(Tj) mixes the ambient (rectangular), a rise from a
#: typical Zth curve (± 20 %, a judgement) or a regression's standard error (t-like); for a given u the normal
#: has the wider coverage interval of the two common shapes, so it is the cautious choice (ours).
TEMPERATURE_SHAPE = "normal"


def default_sensitivity(kind: str, model: str, body_diode: bool = False) -> tuple[float, str] | None:
    """A fit without a spec: the kind's common-practice coefficient (relative /K for a line, V/K for a diode)."""
    if body_diode and model == "diode":
        from .predict import BODY_VF_TEMPCO_V_PER_K

        return BODY_VF_TEMPCO_V_PER_K, "a silicon body diode's −2 mV/K (common practice)"
    if kind not in _REGISTRY:
        return None
    k = element_kind(kind)
    if model == "diode" and k.default_vf_tempco_v_per_k is not None:
        return k.default_vf_tempco_v_per_k
    if model in ("resistive", "knee") and k.family == "mosfet":
        return DEFAULT_RDS_ON_TEMPCO_PER_K
    if model in ("resistive", "knee") and k.family == ResistorSpec.family:
        return 1.0e-4, "a metal-strip current-sense resistor's ~100 ppm/K (from memory); give a spec for its own"
    return None
