"""How series look in our figures: told apart by marker and line style first, colour only as a bonus.

A report is often printed on a grey-scale printer or read by someone who does
not see colour well, so every series has its own marker *and* line style, and
the colours are chosen with clearly different lightness. Filled regions
(uncertainty bands, bars) carry hatching as well as a tint.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class SeriesStyle:
    """One series' look; `marker` and `linestyle` alone must tell it from the others."""

    marker: str
    linestyle: str | tuple[int, tuple[int, ...]]
    color: str

    def line_kwargs(self) -> dict[str, Any]:
        return {"marker": self.marker, "linestyle": self.linestyle, "color": self.color}


#: Markers and line styles in a fixed order; the colours run dark to light.
_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*", "<", ">", "h", "p")
_LINESTYLES: tuple[str | tuple[int, tuple[int, ...]], ...] = (
    "-",
    "--",
    ":",
    "-.",
    (0, (5, 1, 1, 1, 1, 1)),
    (0, (1, 3)),
)
_COLORS = ("#000000", "#1f4e79", "#8c3b00", "#5a5a5a", "#2f6b2f", "#7a1f5c")

#: Fixed roles in a V–I or loss figure.
MEASURED = SeriesStyle("o", "none", "#000000")
OUTLIER = SeriesStyle("x", "none", "#000000")
FIT = SeriesStyle("none", "-", "#1f4e79")
PREDICTED_TYPICAL = SeriesStyle("none", "--", "#8c3b00")
PREDICTED_MAX = SeriesStyle("none", ":", "#5a5a5a")
OPERATING_POINT = SeriesStyle("*", "none", "#7a1f5c")

#: Hatches for bars and bands, so that fills differ without colour.
HATCHES = ("//", "..", "xx", "\\\\", "oo", "--", "++", "**")
BAND_HATCH = "////"
BAND_ALPHA = 0.18


def series_style(i: int) -> SeriesStyle:
    """The i-th series of an overlay: the first 12 all differ in marker, and any 6 in a row in line style too."""
    marker = _MARKERS[i % len(_MARKERS)]
    linestyle = _LINESTYLES[i % len(_LINESTYLES)]
    color = _COLORS[i % len(_COLORS)]
    return SeriesStyle(marker, linestyle, color)


def plain(text: str) -> str:
    """User text for a matplotlib label: `$` would start mathtext, so it is escaped to print as itself."""
    return str(text).replace("$", r"\$")
