"""Our own SVG writer for the report's simple charts: points, lines, bands, reference lines, error bars, histograms.

It writes a `chart.Chart` of one axes whose every call it knows and returns None
otherwise (the caller then draws with matplotlib). Text stays text and is
escaped; markers are defined once and placed with `<use>`; the plot area clips
its contents. Axis ticks are the usual 1-2-2.5-5 x 10^k steps (common practice);
data limits get a 5 % margin on each side, and a histogram's counts start at 0.
"""

from __future__ import annotations

import math
from html import escape
from typing import Any, Iterable

import numpy as np

from .chart import Chart

KNOWN = {"plot", "fill_between", "axhline", "axvline", "errorbar", "hist", "set_xlabel", "set_ylabel",
         "set_title", "grid", "legend", "legend_entry", "set_xlim", "set_ylim"}
FONT = "DejaVu Sans, Bitstream Vera Sans, Arial, sans-serif"
FONT_PT = 10.0
SIZES = {"xx-small": 0.579, "x-small": 0.694, "small": 0.833, "medium": 1.0, "large": 1.2}
DASHES = {"--": (3.7, 1.6), ":": (1.0, 1.65), "-.": (6.4, 1.6, 1.0, 1.6)}


def _dash(linestyle: Any, width: float) -> str | None:
    """SVG stroke-dasharray for a matplotlib-style line style ('-', '--', ':', '-.', (offset, (on, off, ...)))."""
    if linestyle in ("-", "solid", None):
        return None
    if isinstance(linestyle, tuple):
        pattern = linestyle[1]
    else:
        pattern = DASHES.get(linestyle)
        if pattern is None:
            raise KeyError(linestyle)
    return ",".join(f"{p * max(width, 1.0):.2f}" for p in pattern)


def _no_line(linestyle: Any) -> bool:
    return linestyle in ("none", "None", "", " ")


def _no_marker(marker: Any) -> bool:
    return marker in (None, "none", "None", "", " ")


def _marker_path(marker: str, size: float) -> tuple[str, bool]:
    """Path of a marker of `size` points (its width) around 0,0; True when it is drawn by its outline only."""
    r = size / 2.0

    def polygon(n: int, start_deg: float, radius: float = r) -> str:
        pts = [(radius * math.cos(math.radians(start_deg + 360.0 * k / n)),
                -radius * math.sin(math.radians(start_deg + 360.0 * k / n))) for k in range(n)]
        return "M" + " L".join(f"{x:.2f},{y:.2f}" for x, y in pts) + " Z"

    if marker == "o":
        return f"M{-r:.2f},0 A{r:.2f},{r:.2f} 0 1,0 {r:.2f},0 A{r:.2f},{r:.2f} 0 1,0 {-r:.2f},0 Z", False
    if marker == "s":
        return f"M{-r:.2f},{-r:.2f} H{r:.2f} V{r:.2f} H{-r:.2f} Z", False
    if marker in ("^", "v", "<", ">"):
        return polygon(3, {"^": 90.0, "v": 270.0, "<": 180.0, ">": 0.0}[marker]), False
    if marker == "D":
        return polygon(4, 90.0), False
    if marker == "d":
        return f"M0,{-r:.2f} L{0.6 * r:.2f},0 L0,{r:.2f} L{-0.6 * r:.2f},0 Z", False
    if marker in ("h", "p"):
        return polygon(6 if marker == "h" else 5, 90.0), False
    if marker == "*":
        pts = []
        for k in range(10):
            rad = r if k % 2 == 0 else 0.38 * r
            a = math.radians(90.0 + 36.0 * k)
            pts.append((rad * math.cos(a), -rad * math.sin(a)))
        return "M" + " L".join(f"{x:.2f},{y:.2f}" for x, y in pts) + " Z", False
    if marker in ("x", "X"):
        q = r * 0.8
        return f"M{-q:.2f},{-q:.2f} L{q:.2f},{q:.2f} M{-q:.2f},{q:.2f} L{q:.2f},{-q:.2f}", True
    if marker in ("+", "P"):
        return f"M{-r:.2f},0 H{r:.2f} M0,{-r:.2f} V{r:.2f}", True
    if marker == "_":
        return f"M{-r:.2f},0 H{r:.2f}", True
    raise KeyError(marker)


def nice_ticks(lo: float, hi: float, most: int = 8) -> list[float]:
    """Ticks at 1, 2, 2.5 or 5 x 10^k inside [lo, hi], at most `most` of them."""
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        return [lo]
    raw = (hi - lo) / max(most - 1, 1)
    power = 10.0 ** math.floor(math.log10(raw))
    step = next(m * power for m in (1.0, 2.0, 2.5, 5.0, 10.0) if m * power >= raw * (1 - 1e-9))
    first = math.ceil(lo / step - 1e-9) * step
    ticks = []
    k = 0
    while first + k * step <= hi + step * 1e-9:
        ticks.append(first + k * step)
        k += 1
    return ticks


def _tick_text(values: list[float]) -> list[str]:
    if len(values) < 2:
        return [f"{v:.6g}" for v in values]
    step = abs(values[1] - values[0])
    decimals = max(0, -math.floor(math.log10(step) + 1e-9)) if step > 0 else 0
    if step > 0 and abs(step / 10 ** math.floor(math.log10(step)) - 2.5) < 1e-6:
        decimals += 1
    out = [f"{v:.{decimals}f}" for v in values]
    return ["0" if float(t) == 0 else t.replace("-", "\u2212") for t in out]


class _Writer:
    def __init__(self, chart: Chart) -> None:
        self.chart = chart
        self.w = chart.figsize[0] * 72.0
        self.h = chart.figsize[1] * 72.0
        self.defs: list[str] = []
        self.body: list[str] = []
        self.markers: dict[tuple, str] = {}
        self.hatches: dict[str, str] = {}

    # -- definitions -------------------------------------------------------------------------
    def marker_id(self, marker: str, size: float, color: str, face: str, width: float) -> str:
        key = (marker, round(size, 2), color, face, round(width, 2))
        if key not in self.markers:
            path, outline_only = _marker_path(marker, size)
            mid = f"m{len(self.markers)}"
            fill = "none" if outline_only else face
            self.defs.append(f'<path id="{mid}" d="{path}" fill="{escape(fill)}" stroke="{escape(color)}" '
                             f'stroke-width="{width:.2f}"/>')
            self.markers[key] = mid
        return self.markers[key]

    def hatch_id(self, color: str) -> str:
        if color not in self.hatches:
            hid = f"h{len(self.hatches)}"
            self.defs.append(f'<pattern id="{hid}" patternUnits="userSpaceOnUse" width="6" height="6">'
                             f'<path d="M-1,1 L1,-1 M0,6 L6,0 M5,7 L7,5" stroke="{escape(color)}" '
                             f'stroke-width="0.6"/></pattern>')
            self.hatches[color] = hid
        return self.hatches[color]


def _values(data: Any) -> np.ndarray:
    return np.asarray(data, dtype=float).ravel()


def render_svg(chart: Chart) -> bytes | None:
    """The chart as SVG bytes, or None when it holds more than one axes or a call this writer does not draw."""
    if len(chart.chart_axes) != 1 or chart.figure_calls:
        return None
    calls = chart.chart_axes[0].calls
    if any(name not in KNOWN for name, _, _ in calls):
        return None
    try:
        return _render(chart, calls)
    except (KeyError, TypeError, ValueError):
        return None  # a style this writer does not know: matplotlib draws it


def _render(chart: Chart, calls) -> bytes:
    out = _Writer(chart)
    texts: dict[str, str] = {}
    xs: list[np.ndarray] = []
    ys: list[np.ndarray] = []
    xlim = ylim = None
    y_floor = False
    grid: dict | None = None
    legend: dict | None = None
    bins: dict[int, tuple[np.ndarray, np.ndarray]] = {}  # call index -> (counts, edges) of a histogram
    scatter: list[tuple[np.ndarray, np.ndarray]] = []  # data points, for the legend's placement
    for index, (name, args, kw) in enumerate(calls):
        if name in ("set_xlabel", "set_ylabel", "set_title"):
            texts[name] = str(args[0])
        elif name == "set_xlim":
            xlim = (float(args[0]), float(args[1]))
        elif name == "set_ylim":
            ylim = (float(args[0]), float(args[1]))
        elif name == "grid":
            grid = kw
        elif name == "legend":
            legend = kw
        elif name == "plot":
            scatter.append((_values(args[0]), _values(args[1])))
            if kw.get("clip_on", True):
                xs.append(_values(args[0]))
                ys.append(_values(args[1]))
        elif name == "fill_between":
            xs.append(_values(args[0]))
            ys.extend([_values(args[1]), _values(args[2])])
        elif name == "axhline":
            ys.append(_values([args[0]]))
        elif name == "axvline":
            xs.append(_values([args[0]]))
        elif name == "errorbar":
            x, y = _values(args[0]), _values(args[1])
            err = kw.get("yerr")
            e = np.zeros_like(y) if err is None else _values(err)[: y.size]
            xs.append(x)
            ys.extend([y - e, y + e])
        elif name == "hist":
            values = _values(args[0])
            counts, edges = np.histogram(values[np.isfinite(values)], bins=kw.get("bins", 10))
            bins[index] = (counts, edges)
            xs.append(edges)
            ys.append(counts.astype(float))
            y_floor = True

    def limits(arrays: list[np.ndarray], fixed, floor_zero: bool) -> tuple[float, float]:
        if fixed is not None:
            return fixed
        finite = np.concatenate([a[np.isfinite(a)] for a in arrays]) if arrays else np.array([])
        if finite.size == 0:
            return 0.0, 1.0
        lo, hi = float(finite.min()), float(finite.max())
        if floor_zero:
            lo = 0.0
        if hi == lo:
            pad = abs(lo) * 0.05 or 0.05
            return lo - pad, hi + pad
        span = hi - lo
        return (lo if floor_zero else lo - 0.05 * span), hi + 0.05 * span

    x0, x1 = limits(xs, xlim, False)
    y0, y1 = limits(ys, ylim, y_floor)
    xt, yt = nice_ticks(x0, x1), nice_ticks(y0, y1)
    xt_text, yt_text = _tick_text(xt), _tick_text(yt)
    fs = FONT_PT
    label_w = max((len(t) for t in yt_text), default=1) * fs * 0.6
    left = 10 + (fs * 1.4 if "set_ylabel" in texts else 0) + label_w + 6
    bottom = 10 + fs * 1.3 + (fs * 1.4 if "set_xlabel" in texts else 0) + 4
    top = 10 + (fs * 1.5 if "set_title" in texts else 0)
    right = 12.0
    pw, ph = out.w - left - right, out.h - top - bottom

    def px(v):
        return left + (np.asarray(v, dtype=float) - x0) / (x1 - x0) * pw

    def py(v):
        return top + ph - (np.asarray(v, dtype=float) - y0) / (y1 - y0) * ph

    body = out.body
    body.append(f'<rect x="{left:.2f}" y="{top:.2f}" width="{pw:.2f}" height="{ph:.2f}" fill="#ffffff"/>')
    out.defs.append(f'<clipPath id="plot"><rect x="{left:.2f}" y="{top:.2f}" width="{pw:.2f}" '
                    f'height="{ph:.2f}"/></clipPath>')
    if grid is not None:
        which = grid.get("axis", "both")
        lw, alpha = float(grid.get("linewidth", 0.8)), float(grid.get("alpha", 1.0))
        lines = []
        if which in ("both", "x"):
            lines += [f"M{px(t):.2f},{top:.2f} V{top + ph:.2f}" for t in xt]
        if which in ("both", "y"):
            lines += [f"M{left:.2f},{py(t):.2f} H{left + pw:.2f}" for t in yt]
        body.append(f'<path d="{" ".join(lines)}" stroke="#b0b0b0" stroke-width="{lw:.2f}" '
                    f'stroke-opacity="{alpha:.2f}" fill="none"/>')
    body.append('<g clip-path="url(#plot)">')
    for index, (name, args, kw) in enumerate(calls):
        color = str(kw.get("color", kw.get("facecolor", "#000000")))
        if name == "plot":
            x, y = _values(args[0]), _values(args[1])
            _series(out, px(x), py(y), kw, color)
        elif name == "legend_entry":
            pass
        elif name == "fill_between":
            x, lo, hi = _values(args[0]), _values(args[1]), _values(args[2])
            face = str(kw.get("facecolor", kw.get("color", "#1f77b4")))
            alpha = float(kw.get("alpha", 1.0) or 1.0)
            pts = [(a, b) for a, b in zip(px(x), py(hi))] + [(a, b) for a, b in zip(px(x[::-1]), py(lo[::-1]))]
            d = "M" + " L".join(f"{a:.2f},{b:.2f}" for a, b in pts) + " Z"
            body.append(f'<path d="{d}" fill="{escape(face)}" fill-opacity="{alpha:.2f}" stroke="none"/>')
            if kw.get("hatch"):
                body.append(f'<path d="{d}" fill="url(#{out.hatch_id(face)})" stroke="none"/>')
        elif name in ("axhline", "axvline"):
            lw = float(kw.get("linewidth", 1.5))
            ls = kw.get("linestyle", "-")
            d = (f"M{left:.2f},{float(py(args[0])):.2f} H{left + pw:.2f}" if name == "axhline"
                 else f"M{float(px(args[0])):.2f},{top:.2f} V{top + ph:.2f}")
            dash = _dash(ls, lw)
            body.append(f'<path d="{d}" stroke="{escape(color)}" stroke-width="{lw:.2f}" fill="none"'
                        + (f' stroke-dasharray="{dash}"' if dash else "") + "/>")
        elif name == "errorbar":
            x, y = _values(args[0]), _values(args[1])
            err = kw.get("yerr")
            if err is not None:
                e = _values(err)[: y.size]
                cap = float(kw.get("capsize", 0.0))
                for a, b, c in zip(px(x), py(y - e), py(y + e)):
                    body.append(f'<path d="M{a:.2f},{b:.2f} V{c:.2f} M{a - cap:.2f},{b:.2f} H{a + cap:.2f} '
                                f'M{a - cap:.2f},{c:.2f} H{a + cap:.2f}" stroke="{escape(color)}" '
                                f'stroke-width="1.2" fill="none"/>')
            _series(out, px(x), py(y), kw, color)
        elif name == "hist":
            counts, edges = bins[index]
            face, edge = str(kw.get("facecolor", "#bfbfbf")), str(kw.get("edgecolor", "#000000"))
            base = float(py(0.0))
            for c, a, b in zip(counts, edges[:-1], edges[1:]):
                if c <= 0:
                    continue
                xa, xb, yc = float(px(a)), float(px(b)), float(py(c))
                rect = f'x="{xa:.2f}" y="{yc:.2f}" width="{xb - xa:.2f}" height="{base - yc:.2f}"'
                body.append(f'<rect {rect} fill="{escape(face)}" stroke="{escape(edge)}" stroke-width="0.8"/>')
                if kw.get("hatch"):
                    body.append(f'<rect {rect} fill="url(#{out.hatch_id(edge)})" stroke="none"/>')
    body.append("</g>")
    for name, args, kw in calls:  # points drawn past the axes (clip_on=False), e.g. outliers on the count axis
        if name == "plot" and not kw.get("clip_on", True):
            _series(out, px(_values(args[0])), py(_values(args[1])), kw, str(kw.get("color", "#000000")))
    # the legend's entries in call order (a legend_entry describes the data drawn before it)
    order = [i for i, (name, _, kw) in enumerate(calls)
             if kw.get("label") is not None and not str(kw.get("label")).startswith("_")]
    entries = [_entry(calls[i]) for i in order]
    # axes frame, ticks and their labels
    body.append(f'<rect x="{left:.2f}" y="{top:.2f}" width="{pw:.2f}" height="{ph:.2f}" fill="none" '
                f'stroke="#000000" stroke-width="0.8"/>')
    ticks = [f"M{px(t):.2f},{top + ph:.2f} v3.5" for t in xt] + [f"M{left:.2f},{py(t):.2f} h-3.5" for t in yt]
    body.append(f'<path d="{" ".join(ticks)}" stroke="#000000" stroke-width="0.8"/>')
    text = []
    for t, s in zip(xt, xt_text):
        text.append(_text(float(px(t)), top + ph + 4 + fs, s, fs, "middle"))
    for t, s in zip(yt, yt_text):
        text.append(_text(left - 6, float(py(t)) + fs * 0.35, s, fs, "end"))
    if "set_xlabel" in texts:
        text.append(_text(left + pw / 2, out.h - 8, texts["set_xlabel"], fs, "middle"))
    if "set_ylabel" in texts:
        x_lab = 8 + fs
        text.append(f'<text transform="translate({x_lab:.2f},{top + ph / 2:.2f}) rotate(-90)" '
                    f'font-size="{fs:.1f}" text-anchor="middle">{_shown(texts["set_ylabel"])}</text>')
    if "set_title" in texts:
        text.append(_text(left + pw / 2, 8 + fs * 1.1, texts["set_title"], fs * 1.2, "middle"))
    body.extend(text)
    if legend is not None and entries:
        _legend(out, entries, legend, (left, top, pw, ph), [(px(x), py(y)) for x, y in scatter])
    head = (f'<svg xmlns="http://www.w3.org/2000/svg" width="{out.w:.1f}pt" height="{out.h:.1f}pt" '
            f'viewBox="0 0 {out.w:.2f} {out.h:.2f}" font-family="{FONT}">')
    svg = "\n".join([head, "<defs>", *out.defs, "</defs>",
                     f'<rect width="{out.w:.2f}" height="{out.h:.2f}" fill="#ffffff"/>', *out.body, "</svg>"])
    return svg.encode("utf-8")


def _entry(call) -> dict:
    name, _, kw = call
    if name == "fill_between":
        return {"kind": "band", "color": str(kw.get("facecolor", kw.get("color", "#1f77b4"))),
                "alpha": float(kw.get("alpha", 1.0) or 1.0), "hatch": bool(kw.get("hatch")), "label": kw["label"]}
    if name == "hist":
        return {"kind": "bar", "color": str(kw.get("facecolor", "#bfbfbf")), "edge": str(kw.get("edgecolor", "#000")),
                "hatch": bool(kw.get("hatch")), "label": kw["label"]}
    style = {**kw}
    if name in ("axhline", "axvline"):
        style.setdefault("marker", "none")
    if name == "errorbar":
        style.setdefault("linestyle", "none")
    return {"kind": "line", **style}


def _series(out: _Writer, x: np.ndarray, y: np.ndarray, kw: dict, color: str) -> None:
    ls = kw.get("linestyle", "-")
    lw = float(kw.get("linewidth", 1.5))
    ok = np.isfinite(x) & np.isfinite(y)
    if not _no_line(ls) and ok.sum() >= 2:
        dash = _dash(ls, lw)
        runs, current = [], []
        for a, b, good in zip(x, y, ok):
            if good:
                current.append(f"{a:.2f},{b:.2f}")
            elif current:
                runs.append(current)
                current = []
        if current:
            runs.append(current)
        d = " ".join("M" + " L".join(r) for r in runs if len(r) >= 2)
        out.body.append(f'<path d="{d}" stroke="{escape(color)}" stroke-width="{lw:.2f}" fill="none" '
                        f'stroke-linejoin="round"' + (f' stroke-dasharray="{dash}"' if dash else "") + "/>")
    marker = kw.get("marker")
    if not _no_marker(marker):
        size = float(kw.get("markersize", 6.0))
        face = kw.get("markerfacecolor", color)
        face = "none" if face in ("none", "None") else str(face)
        mid = out.marker_id(str(marker), size, color, face, float(kw.get("markeredgewidth", 1.0)))
        every = int(kw.get("markevery", 1) or 1)
        for a, b in list(zip(x[ok], y[ok]))[::every]:
            out.body.append(f'<use href="#{mid}" x="{a:.2f}" y="{b:.2f}"/>')


def _shown(s: str) -> str:
    """Text as a reader sees it: `style.plain` escaped '$' for matplotlib's mathtext; SVG text has none."""
    return escape(str(s).replace("\\$", "$"))


def _text(x: float, y: float, s: str, size: float, anchor: str) -> str:
    return f'<text x="{x:.2f}" y="{y:.2f}" font-size="{size:.1f}" text-anchor="{anchor}">{_shown(s)}</text>'


def _legend(out: _Writer, entries: list[dict], kw: dict, area: tuple, data: Iterable) -> None:
    """A framed legend in the corner of the plot area that covers the fewest data points."""
    fs = FONT_PT * SIZES.get(str(kw.get("fontsize", "medium")), 1.0)
    row = fs * 1.45
    width = 30 + max(len(str(e["label"])) for e in entries) * fs * 0.56 + 8
    height = row * len(entries) + 6
    left, top, pw, ph = area
    corners = {"upper right": (left + pw - width - 6, top + 6), "upper left": (left + 6, top + 6),
               "lower right": (left + pw - width - 6, top + ph - height - 6),
               "lower left": (left + 6, top + ph - height - 6)}
    points = [(np.asarray(a), np.asarray(b)) for a, b in data]

    def covered(corner) -> int:
        cx, cy = corner
        return sum(int(((a >= cx) & (a <= cx + width) & (b >= cy) & (b <= cy + height)).sum()) for a, b in points)

    where = kw.get("loc")
    cx, cy = corners[where] if where in corners else min(corners.values(), key=covered)
    alpha = float(kw.get("framealpha", 0.8))
    body = out.body
    body.append(f'<rect x="{cx:.2f}" y="{cy:.2f}" width="{width:.2f}" height="{height:.2f}" fill="#ffffff" '
                f'fill-opacity="{alpha:.2f}" stroke="#cccccc" stroke-width="0.8" rx="2"/>')
    for i, e in enumerate(entries):
        y = cy + 3 + row * (i + 0.5)
        x = cx + 6
        if e["kind"] == "band":
            box = f'x="{x:.2f}" y="{y - fs * 0.35:.2f}" width="20" height="{fs * 0.7:.2f}"'
            body.append(f'<rect {box} fill="{escape(e["color"])}" fill-opacity="{e["alpha"]:.2f}"/>')
            if e["hatch"]:
                body.append(f'<rect {box} fill="url(#{out.hatch_id(e["color"])})"/>')
        elif e["kind"] == "bar":
            box = f'x="{x:.2f}" y="{y - fs * 0.35:.2f}" width="20" height="{fs * 0.7:.2f}"'
            body.append(f'<rect {box} fill="{escape(e["color"])}" stroke="{escape(e["edge"])}" stroke-width="0.8"/>')
            if e["hatch"]:
                body.append(f'<rect {box} fill="url(#{out.hatch_id(e["edge"])})"/>')
        else:
            color = str(e.get("color", "#000000"))
            style = {k: v for k, v in e.items() if k not in ("kind", "label", "markevery")}
            _series(out, np.array([x, x + 20.0]), np.array([y, y]), {**style, "marker": "none"}, color)
            _series(out, np.array([x + 10.0]), np.array([y]), {**style, "linestyle": "none"}, color)
        body.append(_text(x + 26, y + fs * 0.35, str(e["label"]), fs, "start"))
