"""The low end of the input range for a MOSFET whose gate is tied to a supply rail: where the body diode takes over.

With the gate on the return (P-channel in the supply line) or on the input
(N-channel in the return), |Vgs| = Vin − drop (Kirchhoff's voltage law). As the
input falls, |Vgs| falls towards the threshold, R_DS(on) rises as 1/(|Vgs| − Vth)
(`predict.channel_model`) and below some input the channel no longer carries the
current: the body diode does, at a silicon junction's drop (0.6–0.9 V) instead of
millivolts, so the loss jumps by one or two orders of magnitude.

`takeover_input_v` finds that input by bisection on the prediction's conduction
mode (the loop of `predict`, self-heating included). The hand-over is a band, not a
point: `input_v` is the highest input at which the body diode carries a share of the
current (more than 1 %, `predict.BODY_SHARE_NEGLIGIBLE`): below it the channel alone
is no longer enough; `full_v` is the highest input at which the body diode carries
all of it (more than 99 %), and the loss and Tj are given there. The maximum
datasheet values (Vgs(th) max, R_DS(on) max) give the cautious figure.

Below the lowest |Vgs| at which the spec states an R_DS(on) the model extrapolates:
nothing in the datasheet guarantees the channel there (common practice: a datasheet's
R_DS(on) table is the only drive the maker promises). `guaranteed_vgs_v` gives that
gate voltage so a review does not lean on R_DS(on) below it.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

from .predict import OperatingPoint, predict
from .spec import PartSpec

#: Bisection stops when the bracket is this narrow (V).
TAKEOVER_TOLERANCE_V = 0.01


@dataclass(frozen=True)
class Takeover:
    """The input below which the body diode carries the current, and what it costs there."""

    input_v: float | None  # below it the body diode shares the current; None: never within the range searched
    full_v: float | None  # below it the body diode carries all of it
    current_a: float
    ambient_c: float
    variant: str  # "typical" | "max"
    below: OperatingPoint | None  # the operating point just below the takeover (body diode)
    note: str

    @property
    def body_loss_w(self) -> float | None:
        return None if self.below is None else self.below.loss_w

    @property
    def body_tj_c(self) -> float | None:
        return None if self.below is None else self.below.tj_c


def _point(spec: PartSpec, current_a: float, ambient_c: float, vin_v: float, zener_v: float | None,
           variant: str) -> OperatingPoint:
    p = predict(spec, current_a, ambient_c, vin_v=vin_v, zener_v=zener_v)
    return p.maximum if (variant == "max" and p.maximum is not None) else p.typical


def _highest_input(test, lo: float, hi: float) -> float:
    """The highest input in [lo, hi] where `test(vin)` holds, given it holds at lo and not at hi (bisection)."""
    while hi - lo > TAKEOVER_TOLERANCE_V:
        mid = 0.5 * (lo + hi)
        if test(mid):
            lo = mid
        else:
            hi = mid
    return lo


@lru_cache(maxsize=64)  # a review and its report ask for the same figures; each costs a few hundred predictions
def takeover_input_v(spec: PartSpec, current_a: float, ambient_c: float, *, zener_v: float | None = None,
                     variant: str = "max", high_v: float | None = None) -> Takeover:
    """The inputs below which the body diode shares and then carries `current_a` (module docstring)."""
    if not spec.element.has_gate:
        return Takeover(None, None, current_a, ambient_c, variant, None, f"a {spec.element.title} has no channel")
    if high_v is None:  # the hand-over lies a little above the threshold: search up to four times it
        m = spec.part
        high_v = 4.0 * max(m.vgs_th_max_v or m.vgs_th_v or 2.5, 1.0)
    at = lambda v: _point(spec, current_a, ambient_c, v, zener_v, variant)  # noqa: E731
    if at(high_v).conduction != "channel":
        return Takeover(None, None, current_a, ambient_c, variant, None,
                        f"the body diode carries part of the current even at {high_v:g} V input")
    # At or below the threshold |Vgs| = Vin − drop < Vth: the channel is surely off there.
    floor = min(spec.part.vgs_th_max_v or spec.part.vgs_th_v or 0.0, high_v)
    shares = _highest_input(lambda v: at(v).conduction != "channel", floor, high_v)
    full = _highest_input(lambda v: at(v).conduction == "body_diode", floor, shares + TAKEOVER_TOLERANCE_V)
    below = at(full)
    note = (f"below {shares:.2f} V input the body diode shares {current_a:g} A and below {full:.2f} V carries "
            f"all of it: {below.loss_w:.3g} W, Tj {below.tj_c:.0f} °C ({variant} datasheet values, "
            f"{ambient_c:g} °C ambient, self-heating included)")
    return Takeover(shares, full, current_a, ambient_c, variant, below, note)


def guaranteed_vgs_v(spec: PartSpec) -> float | None:
    """The lowest |Vgs| at which the spec states an R_DS(on): below it the channel is not guaranteed."""
    if not spec.element.has_gate:
        return None
    m = spec.part
    points = [v for v in (m.rds_on_vgs_v, m.rds_on_2_vgs_v) if v is not None]
    return min(points) if points else None


__all__ = ["Takeover", "takeover_input_v", "guaranteed_vgs_v", "TAKEOVER_TOLERANCE_V"]
