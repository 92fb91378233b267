"""Heat-soak analysis: the drift of the drop at a held current as the junction's rise, and its thermal response.

The electrical test method (JESD51-1): a temperature-sensitive parameter of the
element itself — here its drop — is calibrated against temperature and read
while the element heats, so the junction reports its own temperature. A
channel or resistor conducts as R(T) = R0·(1 + α·ΔT), so ΔTj = (R(t)/R0 − 1)/α
with R = V/I; a junction's drop moves by k V/K, so ΔTj = (V(t) − V0)/k. The
coefficient comes from an entered calibration (the drop at a small sense
current at two or more known temperatures, a straight line by least squares),
from the part spec, or from the kind's default — its source is stated.

The response is fitted as the step response of a lumped thermal network in
Foster form, ΔT(t) = Σ P·Rθᵢ·(1 − e^(−t/τᵢ)) (common practice; JESD51-14 uses the
same network), with one or two time constants, by scipy.optimize.least_squares;
the two are compared by AICc (Hurvich & Tsai 1989; n·ln(RSS/n) + 2k +
2k(k+1)/(n−k−1)). The measured power is not quite constant (the drop drifts),
so the model superposes the measured power steps (linearity of the network,
common practice). RθJA = (Tj − Ta)/P at steady state is JESD51-2's definition;
RθJA = ΣRθᵢ.

What DC instruments cannot do: the first reading comes tens of milliseconds or
more after the current step (the meter integrates over whole line cycles), so
the drop before heating, V(0), is never read. It is extrapolated from the first
readings by the √t law — the surface temperature of a body heated at constant
power rises as √t at first (Carslaw & Jaeger, conduction into a semi-infinite
solid; JESD51-14 uses this law to extrapolate its first microseconds; common
practice in transient thermal measurement). The extrapolation's standard error
and the difference to a straight-line extrapolation (a rectangular bound, GUM
4.3.7) are budget terms; every term is combined by GUM 5.1.2.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Sequence

import numpy as np

from benchlog.ambient import DEFAULT_AMBIENT_C, DEFAULT_AMBIENT_HALF_WIDTH_K
from benchlog.kinds import ELEMENT_KINDS, kind as element_kind
from benchlog.quantity import engineering, measured, with_standard
from .columns import column

# The run record's words for a soak (benchlog.runs.events; analysis imports no other layer, a test keeps
# the two the same): the points' flags and the info notes whose t_s is the instant of each current step.
FLAG_SOAK, FLAG_COOL = "soak", "cool"
SOAK_STARTED, COOL_STARTED = "soak started", "cooling started"

#: √t extrapolation uses the readings in the first this fraction of the soak (at least EARLY_MIN of them).
EARLY_FRACTION = 0.02
EARLY_MIN = 4
#: A spec's typical temperature curve is taken as good to this relative half-width (rectangular; assumed).
SPEC_TEMPCO_REL_HALF_WIDTH = 0.10
#: A kind's default coefficient (no calibration, no spec figure) is taken as good to this half-width (assumed).
DEFAULT_TEMPCO_REL_HALF_WIDTH = 0.30
#: A temperature probe's standard uncertainty when the run's temperature channel gives the ambient (assumed:
#: a probe of standard tolerance).
PROBE_U_C = 0.5
#: Two time constants must differ by at least this factor to count as two poles.
POLE_SEPARATION = 2.0
#: Board standards a datasheet's RθJA is measured on (common practice).
TEST_BOARDS = ("a JESD51 standard test board (JESD51-3 low-effective-conductivity or JESD51-7 "
               "high-effective-conductivity, per the datasheet), not on this board")


class SoakError(ValueError):
    """The soak readings cannot be analysed as asked (too few, no drift, no coefficient)."""


@dataclass(frozen=True)
class Tempco:
    """The coefficient that turns the drift into a temperature rise.

    `relative`: 1/K of R (channel, resistor); otherwise V/K of the drop (junction).
    `source`: "calibration" | "spec" | "assumed".
    """

    value: float
    u: float
    relative: bool
    source: str
    note: str

    @property
    def unit(self) -> str:
        return "1/K" if self.relative else "V/K"


@dataclass(frozen=True)
class ResponseFit:
    """One fitted Foster response: Rθᵢ (K/W) and τᵢ (s), dominant (largest τ) first."""

    rth_k_per_w: tuple[float, ...]
    tau_s: tuple[float, ...]
    cov: np.ndarray = field(repr=False)  # covariance of (Rθ1, τ1, Rθ2, τ2 ...)
    rss: float
    n: int
    aicc: float

    @property
    def poles(self) -> int:
        return len(self.tau_s)

    @property
    def total_k_per_w(self) -> float:
        return float(sum(self.rth_k_per_w))

    def response_k(self, t_s: np.ndarray, step_t_s: np.ndarray, step_w: np.ndarray) -> np.ndarray:
        return _response(t_s, step_t_s, step_w, self.rth_k_per_w, self.tau_s)


@dataclass(frozen=True)
class SoakResult:
    current_a: float
    power_w: float  # at the last soak reading
    ambient_c: float
    ambient_u_c: float
    ambient_source: str
    tempco: Tempco
    t_s: np.ndarray  # since the current step
    delta_tj_k: np.ndarray
    delta_tj_u_k: float  # the readings' scatter about the fit, per point
    step_t_s: np.ndarray
    step_w: np.ndarray
    fits: tuple[ResponseFit, ...]  # one pole, two poles (when it could be fitted)
    chosen: ResponseFit
    rth_k_per_w: float
    rth_u_k_per_w: float
    budget: tuple[tuple[str, float], ...]  # (term, u in K/W)
    tau_s: tuple[float, ...]
    tau_u_s: tuple[float, ...]
    tj_steady_c: float
    tj_steady_u_c: float
    first_reading_s: float
    initial_drop: float  # V(0) or R(0), extrapolated
    initial_u: float
    extrapolation_u_k: float
    early_readings: int
    settled_fraction: float  # duration / dominant τ
    tj_max_c: float | None = None
    spec_rth_ja_k_per_w: float | None = None
    cool_t_s: np.ndarray | None = None
    cool_delta_tj_k: np.ndarray | None = None
    cool_power_w: np.ndarray | None = None
    cool_start_s: float | None = None
    notes: tuple[str, ...] = ()

    def cooling_prediction_k(self) -> np.ndarray | None:
        """ΔTj the fitted response predicts at the cooling readings: the heating's power steps, then the
        step down to the sense current and its changes (superposition, as in the fit)."""
        if self.cool_t_s is None or self.cool_power_w is None or self.cool_start_s is None:
            return None
        heat_w = float(np.sum(self.step_w))
        starts = np.concatenate(([self.cool_start_s], self.cool_t_s[:-1]))
        steps = np.diff(np.concatenate(([heat_w], self.cool_power_w)))
        return self.chosen.response_k(self.cool_t_s, np.concatenate((self.step_t_s, starts)),
                                      np.concatenate((self.step_w, steps)))

    @property
    def tj_margin_c(self) -> float | None:
        return None if self.tj_max_c is None else self.tj_max_c - self.tj_steady_c

    def curve(self, t_s: np.ndarray) -> np.ndarray:
        """The chosen response at times `t_s` (s since the step), for the figures."""
        return self.chosen.response_k(np.asarray(t_s, dtype=float), self.step_t_s, self.step_w)

    def dc_limit_text(self) -> str:
        return (f"DC readings cannot see the first instants: the first reading came {self.first_reading_s * 1e3:.0f} ms "
                f"after the current step; the drop before heating was extrapolated by the √t law from the first "
                f"{self.early_readings} readings, which adds {self.extrapolation_u_k:.2g} K to ΔTj "
                f"({self.extrapolation_u_k / max(self.power_w, 1e-12):.2g} K/W to Rθ)")

    def spec_text(self) -> str | None:
        if self.spec_rth_ja_k_per_w is None:
            return None
        ratio = self.rth_k_per_w / self.spec_rth_ja_k_per_w
        return (f"the spec's RθJA {self.spec_rth_ja_k_per_w:g} K/W is measured on {TEST_BOARDS}; this board measures "
                f"{measured(self.rth_k_per_w, 2 * self.rth_u_k_per_w, 'K/W', 2)}, {ratio * 100:.0f} % of it")

    def to_json(self) -> dict[str, Any]:
        return {
            "current_a": self.current_a, "power_w": self.power_w,
            "rth_k_per_w": self.rth_k_per_w, "rth_u_k_per_w": self.rth_u_k_per_w,
            "rth_budget_u_k_per_w": {name: u for name, u in self.budget},
            "tau_s": list(self.tau_s), "tau_u_s": list(self.tau_u_s), "poles": self.chosen.poles,
            "aicc": {str(f.poles): f.aicc for f in self.fits},
            "tj_steady_c": self.tj_steady_c, "tj_steady_u_c": self.tj_steady_u_c,
            "tj_max_c": self.tj_max_c, "tj_margin_c": self.tj_margin_c,
            "ambient_c": self.ambient_c, "ambient_u_c": self.ambient_u_c, "ambient_source": self.ambient_source,
            "tempco": {"value": self.tempco.value, "u": self.tempco.u, "unit": self.tempco.unit,
                       "source": self.tempco.source, "note": self.tempco.note},
            "first_reading_s": self.first_reading_s, "early_readings": self.early_readings,
            "extrapolation_u_k": self.extrapolation_u_k,
            "spec_rth_ja_k_per_w": self.spec_rth_ja_k_per_w,
            "duration_over_tau": self.settled_fraction,
            "notes": list(self.notes),
        }


# -- the model ---------------------------------------------------------------------------------
def _response(t_s, step_t_s, step_w, rth, tau) -> np.ndarray:
    """ΔT(t) = Σ_k ΔP_k · Σ_i Rθᵢ(1 − e^(−(t − s_k)/τᵢ)) for s_k < t (superposed power steps)."""
    t = np.asarray(t_s, dtype=float)[:, None] - np.asarray(step_t_s, dtype=float)[None, :]
    on = t > 0
    t = np.where(on, t, 0.0)
    z = np.zeros_like(t)
    for r, ta in zip(rth, tau):
        z += r * -np.expm1(-t / ta)
    return (z * on) @ np.asarray(step_w, dtype=float)


def power_steps(t_s: np.ndarray, power_w: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The measured power as steps: the first reading's power from t = 0, then each change at its reading."""
    starts = np.concatenate(([0.0], t_s[:-1]))
    return starts, np.diff(np.concatenate(([0.0], power_w)))


def aicc(rss: float, n: int, k: int) -> float:
    """Akaike's criterion with the small-sample correction (Hurvich & Tsai 1989), least squares form."""
    if n - k - 1 <= 0 or rss <= 0:
        return math.inf
    return n * math.log(rss / n) + 2 * k + 2 * k * (k + 1) / (n - k - 1)


def fit_response(t_s: np.ndarray, delta_k: np.ndarray, step_t_s: np.ndarray, step_w: np.ndarray,
                 poles: int, guess: Sequence[float] | None = None) -> ResponseFit:
    """Least-squares fit of a `poles`-term Foster response (log-parameters keep Rθ and τ positive)."""
    from scipy.optimize import least_squares

    t, y = np.asarray(t_s, float), np.asarray(delta_k, float)
    p_end = float(np.sum(step_w))
    if guess is None:
        r_total = max(float(np.max(y[-max(1, len(y) // 20):].mean())) / max(p_end, 1e-12), 1e-6)
        reach = np.flatnonzero(y >= 0.632 * y[-1])
        tau1 = float(t[reach[0]]) if reach.size else float(t[-1])
        tau1 = max(tau1, float(t[0]))
        guess = [r_total, tau1] if poles == 1 else [0.85 * r_total, tau1, 0.15 * r_total, tau1 / 10.0]
    x0 = np.log(np.asarray(guess, dtype=float))

    def residuals(x):
        p = np.exp(x)
        return _response(t, step_t_s, step_w, p[0::2], p[1::2]) - y

    sol = least_squares(residuals, x0, method="trf", x_scale="jac", max_nfev=2000)
    p = np.exp(sol.x)
    rss = float(np.sum(sol.fun ** 2))
    n, k = y.size, 2 * poles
    s2 = rss / max(n - k, 1)
    try:
        cov_log = np.linalg.inv(sol.jac.T @ sol.jac) * s2  # in log p: the Gauss–Newton covariance
        cov = cov_log * np.outer(p, p)  # back to p: d p = p · d log p
    except np.linalg.LinAlgError:
        cov = np.full((k, k), np.inf)
    order = np.argsort(-p[1::2])  # dominant (largest τ) first
    idx = np.ravel([[2 * i, 2 * i + 1] for i in order])
    p, cov = p[idx], cov[np.ix_(idx, idx)]
    return ResponseFit(tuple(float(v) for v in p[0::2]), tuple(float(v) for v in p[1::2]), cov, rss, n,
                       aicc(rss, n, k))


# -- the coefficient ---------------------------------------------------------------------------
def tempco_from_calibration(temperatures_c: Sequence[float], drops_v: Sequence[float], sense_a: float,
                            relative: bool, at_c: float) -> Tempco:
    """A straight line through the calibration drops (numpy.polyfit with its covariance).

    Relative (channel, resistor): α = b/(a + b·T) at `at_c` for R = V/I_sense = a + b·T; else k = b in V/K.
    With two points the line has no scatter to judge: the slope's u is then unknown and taken as 0,
    and the note says so.
    """
    temps = np.asarray(temperatures_c, float)
    y = np.asarray(drops_v, float) / (sense_a if relative else 1.0)
    if temps.size < 2 or np.ptp(temps) <= 0:
        raise SoakError("a calibration needs the drop at two or more distinct temperatures")
    if temps.size > 2:
        (b, a), cov = np.polyfit(temps, y, 1, cov=True)
    else:
        b, a = np.polyfit(temps, y, 1)
        cov = np.zeros((2, 2))
    note = f"calibration: {temps.size} drops at {sense_a:g} A from {temps.min():g} to {temps.max():g} °C"
    if temps.size == 2:
        note += " (two points: the line's own scatter cannot be judged, u from the fit omitted)"
    if not relative:
        return Tempco(float(b), float(math.sqrt(max(cov[0, 0], 0.0))), False, "calibration", note)
    r_at = a + b * at_c
    alpha = b / r_at
    # ∂α/∂b = a/r², ∂α/∂a = −b/r²  (GUM 5.1.2 with the slope–intercept covariance)
    g = np.array([a / r_at**2, -b / r_at**2])
    u = float(math.sqrt(max(g @ cov @ g, 0.0)))
    return Tempco(float(alpha), u, True, "calibration", note + f"; α at {at_c:g} °C")


def tempco_from_spec(spec: Any, relative: bool, at_c: float) -> Tempco | None:
    """The spec's figure (R_DS(on) tempco or curve, resistor tempco, Vf tempco), ±10 % rectangular (assumed)."""
    if spec is None:
        return None
    part = spec.part
    half = SPEC_TEMPCO_REL_HALF_WIDTH
    if relative:
        if getattr(part, "rds_on_tj_c", None):
            tj, fac = np.asarray(part.rds_on_tj_c, float), np.asarray(part.rds_on_factor, float)
            f0, f1 = np.interp(at_c, tj, fac), np.interp(at_c + 25.0, tj, fac)
            alpha = (f1 - f0) / 25.0 / f0
            note = f"the spec's normalised R_DS(on) curve, slope from {at_c:g} to {at_c + 25:g} °C"
        elif getattr(part, "rds_on_tempco_per_k", None) is not None:
            alpha, note = part.rds_on_tempco_per_k, "the spec's R_DS(on) tempco"
        elif getattr(part, "resistance_tempco_per_k", None):
            alpha, note = part.resistance_tempco_per_k, "the spec's resistance tempco"
        else:
            return None
    else:
        if getattr(part, "vf_tempco_v_per_k", None) is None:
            return None
        alpha, note = part.vf_tempco_v_per_k, "the spec's Vf tempco (at its own current, not the soak's)"
    return Tempco(float(alpha), abs(float(alpha)) * half / math.sqrt(3), relative, "spec",
                  note + f", ±{half * 100:g} % taken as its bound (assumed)")


def tempco_default(kind: str, relative: bool) -> Tempco | None:
    """The kind's default coefficient (common practice), ±30 % rectangular (assumed)."""
    half = DEFAULT_TEMPCO_REL_HALF_WIDTH
    if relative:
        if kind in ELEMENT_KINDS and element_kind(kind).family == "mosfet":
            from .spec import DEFAULT_RDS_ON_TEMPCO_PER_K

            value, why = DEFAULT_RDS_ON_TEMPCO_PER_K
        else:
            return None  # a resistor's tempco is far too small to be guessed
    else:
        default = element_kind(kind).default_vf_tempco_v_per_k if kind in ELEMENT_KINDS else None
        if default is None:
            default = (-2.0e-3, "a silicon junction's drop falls about 2 mV/K (common practice)")
        value, why = default
    return Tempco(float(value), abs(float(value)) * half / math.sqrt(3), relative, "assumed",
                  f"{why}; ±{half * 100:g} % taken as its bound (assumed)")


# -- the √t extrapolation ----------------------------------------------------------------------
def sqrt_t_extrapolation(t_s: np.ndarray, y: np.ndarray, count: int) -> tuple[float, float, float]:
    """y(0) from the first `count` readings by y = y0 + c·√t; returns (y0, its standard error, the
    difference to a straight line in t over the same readings: the model's own doubt)."""
    t, v = np.asarray(t_s[:count], float), np.asarray(y[:count], float)
    (c, y0), cov = np.polyfit(np.sqrt(t), v, 1, cov=True)
    _, y0_line = np.polyfit(t, v, 1)
    return float(y0), float(math.sqrt(max(cov[1, 1], 0.0))), float(y0 - y0_line)


# -- the run -----------------------------------------------------------------------------------
def _flag_rows(flags: Any, flag: str) -> np.ndarray:
    values = [str(x) if x is not None and x == x else "" for x in (flags.tolist() if hasattr(flags, "tolist")
                                                                  else list(flags))]
    return np.array([flag in v.split("|") for v in values], dtype=bool)


def _note_t(meta: Any, title: str) -> float | None:
    for note in meta.notes:
        if note.kind == "info" and note.message.startswith(title + ":"):
            return float(note.t_s)
    return None


def _flags(frame: Any) -> np.ndarray | None:
    """The point flags of a loaded run, as `runs.load_points` arrays or a `runs.load` DataFrame give them."""
    if hasattr(frame, "has_flag"):
        return frame.flags
    return frame["flags"].to_numpy() if "flags" in frame.columns else None


def has_soak(frame: Any) -> bool:
    flags = _flags(frame)
    return flags is not None and bool(_flag_rows(flags, FLAG_SOAK).any())


def _plan_soak(meta: Any) -> Any:
    """The run's [soak] table as recorded (a read-only mapping; empty without one)."""
    plan = meta.header.plan
    return plan.soak if plan is not None else {}


def analyse_soak(frame: Any, meta: Any, spec: Any = None) -> SoakResult:
    """The heat-soak of a loaded run: ΔTj(t), the fitted response, RθJA on this board and Tj at steady state."""
    flags = _flags(frame)
    rows = _flag_rows(flags, FLAG_SOAK) if flags is not None else np.zeros(len(frame), dtype=bool)
    t_step = _note_t(meta, SOAK_STARTED)
    if not rows.any() or t_step is None:
        raise SoakError("the run has no heat-soak readings (points flagged soak after a 'soak started' note)")
    t_all, i_all, v_all = column(frame, "t_s"), column(frame, "current_a"), column(frame, "drop_v")
    ok = rows & np.isfinite(i_all) & np.isfinite(v_all)
    t, i, v = t_all[ok] - t_step, i_all[ok], v_all[ok]
    if t.size < 2 * EARLY_MIN:
        raise SoakError(f"{t.size} soak readings: too few to fit a thermal response (at least {2 * EARLY_MIN})")
    element = meta.element
    kind = element.kind or ""
    measure = element.measure or "channel"
    relative = not (element_kind(kind).drop_is_junction(measure) if kind in ELEMENT_KINDS else True)
    notes: list[str] = []

    # the ambient: a temperature channel's first reading if the run has one, else the plan's figure
    temps = column(frame, "temperature_c")
    temps = temps if temps is not None else np.array([])
    temps = temps[ok] if temps.size == ok.size else np.array([])
    if temps.size and np.isfinite(temps[0]):
        ambient_c, ambient_u, ambient_source = float(temps[0]), PROBE_U_C, "the temperature channel's first soak reading"
    else:
        ambient_c = element.ambient_c if element.ambient_c is not None else DEFAULT_AMBIENT_C
        if element.ambient_u_c is not None:
            ambient_u, ambient_source = element.ambient_u_c, "the plan's ambient and its stated u (not measured)"
        else:  # rectangular half-width, GUM 4.3.7
            ambient_u = DEFAULT_AMBIENT_HALF_WIDTH_K / math.sqrt(3.0)
            ambient_source = "the plan's ambient (not measured)"

    # the coefficient: calibration > spec > the kind's default
    plan_soak = _plan_soak(meta)
    cal_c, cal_v = plan_soak.get("calibration_c") or (), plan_soak.get("calibration_v") or ()
    tempco: Tempco | None = None
    if len(cal_c) >= 2 and len(cal_c) == len(cal_v) and plan_soak.get("sense_a"):
        tempco = tempco_from_calibration(cal_c, cal_v, float(plan_soak["sense_a"]), relative, ambient_c)
    if tempco is None:
        tempco = tempco_from_spec(spec, relative, ambient_c)
    if tempco is None:
        tempco = tempco_default(kind, relative)
    if tempco is None or tempco.value == 0:
        raise SoakError(f"no temperature coefficient for a {kind or 'unknown'} element: enter a calibration "
                        "([soak] calibration_c, calibration_v, sense_a) or give a spec with one")
    if not relative and tempco.source != "calibration":
        notes.append("a junction's tempco is smaller at the soak current than at a small current: "
                     "a calibration at the soak current would remove that bias")

    # the drift as ΔTj, with V(0) (or R(0)) extrapolated by √t
    y = v / i if relative else v
    count = max(EARLY_MIN, int(np.count_nonzero(t <= EARLY_FRACTION * t[-1])))
    y0, y0_u, y0_model = sqrt_t_extrapolation(t, y, count)
    scale = 1.0 / (tempco.value * y0) if relative else 1.0 / tempco.value
    delta = (y - y0) * scale
    extrap_u_k = math.hypot(y0_u, abs(y0_model) / math.sqrt(3)) * abs(scale)

    # the drift must stand out of the readings' scatter (successive differences: the noise of one
    # reading times √2, drift-free to first order), or there is no response to fit
    scatter = float(np.std(np.diff(delta)) / math.sqrt(2.0))
    rise = float(np.median(delta[-max(3, delta.size // 10):]) - np.median(delta[:3]))
    if not rise > 5.0 * scatter:
        raise SoakError(f"the drop did not drift measurably during the soak (ΔTj {rise:.3g} K against a reading "
                        f"scatter of {scatter:.2g} K): the junction had already settled at the first reading "
                        "(time constants short against interval_s) or the element barely heats at current_a")
    p = i * v
    step_t, step_w = power_steps(t, p)
    fits = [fit_response(t, delta, step_t, step_w, 1)]
    one = fits[0]
    if t.size > 2 * 4 + 2:
        try:
            two = fit_response(t, delta, step_t, step_w, 2,
                               guess=[0.85 * one.total_k_per_w, one.tau_s[0], 0.15 * one.total_k_per_w,
                                      max(one.tau_s[0] / 10.0, float(t[0]))])
            fits.append(two)
        except (ValueError, np.linalg.LinAlgError):
            pass
    chosen = one
    if len(fits) == 2:
        two = fits[1]
        distinct = two.tau_s[0] >= POLE_SEPARATION * two.tau_s[1] and np.all(np.isfinite(two.cov))
        if two.aicc < one.aicc and distinct:
            chosen = two
        elif two.aicc < one.aicc:
            notes.append("the two-pole fit's time constants are not distinct: one pole kept")
    if chosen.poles == 2 and chosen.tau_s[1] < 3.0 * float(t[0]):
        notes.append(f"the faster time constant ({chosen.tau_s[1]:.3g} s) is within three first-reading times "
                     f"({float(t[0]):.3g} s): it also takes up what the √t extrapolation misses, so read it as an "
                     "indication, not a measurement; its u is the fit's alone")
    k = chosen.poles
    grad = np.zeros(2 * k)
    grad[0::2] = 1.0
    u_fit = float(math.sqrt(max(grad @ chosen.cov @ grad, 0.0)))
    rth = chosen.total_k_per_w
    p_end = float(p[-1])
    budget = [
        ("fit", u_fit),
        (f"tempco ({tempco.source})", rth * tempco.u / abs(tempco.value)),
        ("√t extrapolation of the first instants", extrap_u_k / max(float(np.mean(p)), 1e-12)),
    ]
    rth_u = float(math.sqrt(sum(u * u for _, u in budget)))
    tau_u = tuple(float(math.sqrt(max(chosen.cov[2 * j + 1, 2 * j + 1], 0.0))) for j in range(k))
    resid = delta - chosen.response_k(t, step_t, step_w)
    scatter = float(np.std(resid, ddof=2 * k)) if t.size > 2 * k else 0.0
    settled = float(t[-1] / chosen.tau_s[0])
    if settled < 3.0:
        notes.append(f"the soak lasted {settled:.1f} dominant time constants (under 3): the steady state is "
                     "the fit's extrapolation")
    tj = ambient_c + p_end * rth
    tj_u = math.hypot(p_end * rth_u, ambient_u)
    notes.append("the power's own uncertainty (read-back accuracy, a few 0.1 %) is not in the budget")

    cool_t = cool_delta = cool_p = None
    cool_rows = _flag_rows(flags, FLAG_COOL) & np.isfinite(i_all) & np.isfinite(v_all)
    t_cool = _note_t(meta, COOL_STARTED)
    if cool_rows.any() and t_cool is not None:
        ci, cv = i_all[cool_rows], v_all[cool_rows]
        cool_p = ci * cv
        if tempco.source == "calibration":
            # the calibration was taken at the sense current: the drop reads as a temperature directly
            # (JESD51-1's electrical test method); a reference taken at the soak current would carry the
            # current read-back's offset error, which differs between the two currents
            temps_c, drops = np.asarray(cal_c, float), np.asarray(cal_v, float)
            b, a = np.polyfit(temps_c, drops, 1)
            cool_t, cool_delta = t_all[cool_rows] - t_step, (cv - a) / b - ambient_c
        else:
            notes.append("the cooling readings need a calibration at the sense current to be read as ΔTj")

    thermal = getattr(spec, "thermal", None)
    return SoakResult(
        current_a=float(np.mean(i)), power_w=p_end, ambient_c=ambient_c, ambient_u_c=ambient_u,
        ambient_source=ambient_source, tempco=tempco, t_s=t, delta_tj_k=delta, delta_tj_u_k=scatter,
        step_t_s=step_t, step_w=step_w, fits=tuple(fits), chosen=chosen, rth_k_per_w=rth, rth_u_k_per_w=rth_u,
        budget=tuple(budget), tau_s=chosen.tau_s, tau_u_s=tau_u, tj_steady_c=tj, tj_steady_u_c=tj_u,
        first_reading_s=float(t[0]), initial_drop=y0, initial_u=y0_u, extrapolation_u_k=extrap_u_k,
        early_readings=count, settled_fraction=settled,
        tj_max_c=getattr(thermal, "tj_max_c", None), spec_rth_ja_k_per_w=getattr(thermal, "rth_ja_k_per_w", None),
        cool_t_s=cool_t, cool_delta_tj_k=cool_delta, cool_power_w=cool_p if cool_t is not None else None,
        cool_start_s=None if t_cool is None else t_cool - t_step, notes=tuple(notes),
    )


def soak_text(result: SoakResult) -> list[str]:
    """The heat-soak's lines for `fit` and `check`."""
    r = result
    taus = ", ".join(measured(t, 2 * u, "s", None) for t, u in zip(r.tau_s, r.tau_u_s))
    lines = [
        f"heat-soak at {engineering(r.current_a, 'A')} ({engineering(r.power_w, 'W')}): RθJA on this board "
        f"{measured(r.rth_k_per_w, 2 * r.rth_u_k_per_w, 'K/W', 2)}, {r.chosen.poles} time constant(s) by AICc "
        f"(k = 2): {taus}",
        f"  ΔTj from the drift with the {r.tempco.source} tempco "
        f"{with_standard(r.tempco.value, r.tempco.u, r.tempco.unit)} ({r.tempco.note})",
        f"  Tj at steady state {measured(r.tj_steady_c, 2 * r.tj_steady_u_c, '°C', 2)} at ambient "
        f"{r.ambient_c:.1f} °C ({r.ambient_source})"
        + (f"; margin to Tj max {r.tj_max_c:g} °C: {r.tj_margin_c:.1f} K" if r.tj_max_c is not None else ""),
        "  budget of Rθ (standard u): " + ", ".join(f"{name} {u:.2g} K/W" for name, u in r.budget),
        "  " + r.dc_limit_text(),
    ]
    spec = r.spec_text()
    if spec:
        lines.append("  " + spec)
    lines += [f"  note: {n}" for n in r.notes]
    return lines
