"""The element's measured case (or tab) temperature per point, as the run's probe recorded it.

A run whose bench had a temperature probe on the element (bench file `[sensor]`)
carries one `temperature_c` per point and a header `temperature` block saying
which instrument read it, where the probe sat and its accuracy. This module
reads both back for the layers that judge at a junction temperature.

Uncertainty of one reading: the probe's stated ± limit `accuracy_c` taken as a
rectangular distribution, u = a/√3 (GUM 4.3.7). The case is not the junction:
Tj = Tc + P·RθJC (the definition of junction-to-case thermal resistance,
JESD51 series), which `junction_from_case_c` applies when RθJC is known.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .columns import column


@dataclass(frozen=True, eq=False)
class CaseTemperature:
    """Per-point case temperature (NaN where the probe gave no reading) and what read it."""

    values_c: np.ndarray
    u_c: float | None  # standard uncertainty of one reading; None when the probe's accuracy was not stated
    attached_to: str  # "case" | "tab" | "" when the header does not say
    transducer: str
    sensor: str  # the probe's instrument: profile name and resource

    @property
    def read(self) -> int:
        return int(np.isfinite(self.values_c).sum())

    def describe(self) -> str:
        """Where the probe sat and what read it, in words (for the junction temperature's `why`)."""
        where = f"on the {self.attached_to}" if self.attached_to else "on the element"
        what = f"{self.transducer} " if self.transducer else ""
        return f"{what}probe {where} ({self.sensor})"

    def mean_c(self) -> float:
        finite = self.values_c[np.isfinite(self.values_c)]
        return float(finite.mean()) if finite.size else math.nan


def measured_case_temperature(points, meta) -> CaseTemperature | None:
    """The run's measured case temperatures (a DataFrame or `runs.load_points` arrays), or None without any."""
    values = column(points, "temperature_c") if points is not None else None
    if values is None or values.size == 0 or not np.isfinite(values).any():
        return None
    probe = meta.header.temperature  # runs.record.TemperatureRecord, None when the header names no probe
    if probe is None:
        return CaseTemperature(values, None, "", "", "not named in the header")
    u = probe.accuracy_c / math.sqrt(3.0) if probe.accuracy_c is not None else None
    return CaseTemperature(values, u, probe.attached_to, probe.transducer, probe.sensor)


def junction_from_case_c(case_c, power_w, rth_jc_k_per_w: float):
    """Tj = Tc + P·RθJC (JESD51 definition of RθJC); arrays or numbers."""
    return np.asarray(case_c, dtype=float) + np.asarray(power_w, dtype=float) * float(rth_jc_k_per_w)
