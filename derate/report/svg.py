"""Small SVG charts written directly (no plotting library): axes with tidy ticks, min/max bands,
lines, horizontal limit lines, marked points with their values, a capacitor x check grid, and a legend below the plot
area so it never covers the data.  Every text is escaped; numbers are rounded so files stay small.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field
from typing import Sequence

from . import safe

INK = "#1d1d1f"
GRID = "#e4e4e8"


_CLIP_IDS = itertools.count(1)


def _e(text) -> str:
    return safe.xml_text(safe.html_text(text))


def nice_ticks(lo: float, hi: float, n: int = 5) -> list[float]:
    """About ``n`` round tick values covering [lo, hi]."""
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return [0.0]
    if hi <= lo:
        hi = lo + (abs(lo) or 1.0)
    raw = (hi - lo) / max(1, n)
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw)
    start = math.floor(lo / step) * step
    ticks, t = [], start
    while t <= hi + step * 1e-9 and len(ticks) < 50:
        ticks.append(round(t, 12))
        t += step
    return ticks


def tick_text(x: float, unit: str = "") -> str:
    from ..units import format_number
    if unit == "h":  # hours read as hours: 10,000 h, not 10 kh
        return f"{x:,.0f} h" if x >= 1 else f"{x:.2g} h"
    return format_number(x, unit, 3)


@dataclass
class Chart:
    """An x-y chart: add bands, lines, limits and marks, then ``svg()``."""

    width: int = 760
    height: int = 230
    x_label: str = ""
    y_label: str = ""
    x_unit: str = ""
    y_unit: str = ""
    title: str = ""
    items: list = field(default_factory=list)
    legend: list = field(default_factory=list)
    x_range: tuple[float, float] | None = None
    y_range: tuple[float, float] | None = None
    log_x: bool = False
    log_y: bool = False

    def band(self, x: Sequence[float], lo: Sequence[float], hi: Sequence[float], colour: str, label: str) -> None:
        self.items.append(("band", list(x), list(lo), list(hi), colour))
        self.legend.append((colour, label, "band"))

    def line(self, x: Sequence[float], y: Sequence[float], colour: str, label: str, dashed: bool = False) -> None:
        self.items.append(("line", list(x), list(y), colour, dashed))
        self.legend.append((colour, label, "dash" if dashed else "line"))

    def limit(self, y: float, colour: str, label: str, dashed: bool = False) -> None:
        self.items.append(("hline", y, colour, dashed, label))
        self.legend.append((colour, label, "dash" if dashed else "line"))

    def vline(self, x: float, colour: str, label: str) -> None:
        """A vertical limit line (a histogram's limit)."""
        self.items.append(("vline", x, colour, label))
        self.legend.append((colour, label, "line"))

    def mark(self, x: float, y: float, colour: str, text: str) -> None:
        self.items.append(("mark", x, y, colour, text))

    # ------------------------------------------------------------ drawing
    def _extent(self):
        xs, ys = [], []
        for it in self.items:
            if it[0] == "band":
                xs += it[1]
                ys += it[2] + it[3]
            elif it[0] == "line":
                xs += it[1]
                ys += it[2]
            elif it[0] == "hline":
                ys.append(it[1])
            elif it[0] == "vline":
                xs.append(it[1])
            elif it[0] == "mark":
                xs.append(it[1])
                ys.append(it[2])
        xs = [x for x in xs if math.isfinite(x) and (not self.log_x or x > 0)]
        ys = [y for y in ys if math.isfinite(y) and (not self.log_y or y > 0)]
        x0, x1 = self.x_range or ((min(xs), max(xs)) if xs else (0.0, 1.0))
        y0, y1 = self.y_range or ((min(ys), max(ys)) if ys else (0.0, 1.0))
        if not self.log_y and not self.y_range:
            pad = (y1 - y0) * 0.08 or abs(y1) * 0.1 or 1.0
            # more room above: a marked peak's value is written above its point
            y0, y1 = y0 - pad, y1 + 2 * pad
        if x1 <= x0:
            x1 = x0 + (abs(x0) or 1.0)
        if y1 <= y0:
            y1 = y0 + (abs(y0) or 1.0)
        return x0, x1, y0, y1

    def svg(self) -> str:
        x0, x1, y0, y1 = self._extent()
        fx = (lambda v: math.log10(v)) if self.log_x else (lambda v: v)
        fy = (lambda v: math.log10(v)) if self.log_y else (lambda v: v)
        X0, X1, Y0, Y1 = fx(x0), fx(x1), fy(y0), fy(y1)
        xt = [10 ** k for k in range(math.floor(X0), math.ceil(X1) + 1)] if self.log_x else nice_ticks(x0, x1)
        yt = [10 ** k for k in range(math.floor(Y0), math.ceil(Y1) + 1)] if self.log_y else nice_ticks(y0, y1)
        # the left margin holds the longest tick label and the rotated axis title
        widest = max([len(tick_text(t, self.y_unit)) for t in yt if y0 <= t <= y1] + [4])
        left, right, top = max(64, int(24 + 6.3 * widest)), 16, 22 if self.title else 10
        longest = max([len(label) for _, label, _ in self.legend] + [0])
        per_row = 3 if longest <= 34 else 2 if longest <= 52 else 1  # a label never runs into the next
        legend_rows = (len(self.legend) + per_row - 1) // per_row
        bottom = 40 + 16 * legend_rows
        pw, ph = self.width - left - right, self.height - top - bottom

        def px(v: float) -> float:
            return left + (fx(v) - X0) / (X1 - X0) * pw

        def py(v: float) -> float:
            return top + ph - (fy(max(v, y0) if self.log_y else v) - Y0) / (Y1 - Y0) * ph

        clip = f"clip{next(_CLIP_IDS)}"  # unique in the page: every chart clips to its own plot area
        out = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {self.width} {self.height}" '
               f'width="{self.width}" height="{self.height}" font-family="system-ui,sans-serif" font-size="11">']
        if self.title:
            out.append(f'<text x="{left}" y="14" font-weight="600">{_e(self.title)}</text>')
        out.append(f'<defs><clipPath id="{clip}"><rect x="{left}" y="{top}" width="{pw}" height="{ph}"/>'
                   '</clipPath></defs>')
        for t in xt:
            if x0 <= t <= x1:
                x = px(t)
                out.append(f'<line x1="{x:.1f}" y1="{top}" x2="{x:.1f}" y2="{top + ph}" stroke="{GRID}"/>'
                           f'<text x="{x:.1f}" y="{top + ph + 14}" text-anchor="middle">{_e(tick_text(t, self.x_unit))}</text>')
        for t in yt:
            if y0 <= t <= y1:
                y = py(t)
                out.append(f'<line x1="{left}" y1="{y:.1f}" x2="{left + pw}" y2="{y:.1f}" stroke="{GRID}"/>'
                           f'<text x="{left - 4}" y="{y + 4:.1f}" text-anchor="end">{_e(tick_text(t, self.y_unit))}</text>')
        out.append(f'<rect x="{left}" y="{top}" width="{pw}" height="{ph}" fill="none" stroke="#999"/>')
        out.append(f'<g clip-path="url(#{clip})">')
        marks = []
        for it in self.items:
            if it[0] == "band":
                _, xs, lo, hi, colour = it
                pts = [f"{px(a):.1f},{py(b):.1f}" for a, b in zip(xs, hi)]
                pts += [f"{px(a):.1f},{py(b):.1f}" for a, b in zip(reversed(xs), reversed(lo))]
                out.append(f'<polygon points="{" ".join(pts)}" fill="{colour}" fill-opacity="0.55" stroke="{colour}" '
                           'stroke-width="0.6"/>')
            elif it[0] == "line":
                _, xs, ys, colour, dashed = it
                pts = " ".join(f"{px(a):.1f},{py(b):.1f}" for a, b in zip(xs, ys)
                               if math.isfinite(a) and math.isfinite(b))
                dash = ' stroke-dasharray="5 3"' if dashed else ""
                out.append(f'<polyline points="{pts}" fill="none" stroke="{colour}" stroke-width="1.6"{dash}/>')
            elif it[0] == "hline":
                _, y, colour, dashed, label = it
                dash = ' stroke-dasharray="6 3"' if dashed else ""
                out.append(f'<line x1="{left}" y1="{py(y):.1f}" x2="{left + pw}" y2="{py(y):.1f}" stroke="{colour}" '
                           f'stroke-width="1.4"{dash}/>')
            elif it[0] == "vline":
                _, x, colour, _label = it
                out.append(f'<line x1="{px(x):.1f}" y1="{top}" x2="{px(x):.1f}" y2="{top + ph}" stroke="{colour}" '
                           'stroke-width="1.6"/>')
            elif it[0] == "mark":
                marks.append(it)
        out.append("</g>")
        for _, x, y, colour, text in marks:  # drawn last, outside the clip, so the value stays readable
            cx, cy = px(x), py(y)
            anchor = "end" if cx > left + pw * 0.7 else "start"
            dx = -7 if anchor == "end" else 7
            out.append(f'<circle cx="{cx:.1f}" cy="{cy:.1f}" r="3.5" fill="{colour}" stroke="white"/>'
                       f'<text x="{cx + dx:.1f}" y="{cy - 6:.1f}" text-anchor="{anchor}" font-weight="600" '
                       f'fill="{colour}">{_e(text)}</text>')
        out.append(f'<text x="{left + pw / 2:.1f}" y="{top + ph + 30}" text-anchor="middle">{_e(self.x_label)}</text>')
        out.append(f'<text transform="translate(13,{top + ph / 2:.1f}) rotate(-90)" text-anchor="middle">'
                   f'{_e(self.y_label)}</text>')
        for k, (colour, label, kind) in enumerate(self.legend):
            lx = left + (k % per_row) * (pw / per_row)
            ly = top + ph + 46 + 16 * (k // per_row)
            if kind == "band":
                out.append(f'<rect x="{lx:.1f}" y="{ly - 8}" width="18" height="9" fill="{colour}" fill-opacity="0.55"/>')
            else:
                dash = ' stroke-dasharray="5 3"' if kind == "dash" else ""
                out.append(f'<line x1="{lx:.1f}" y1="{ly - 4}" x2="{lx + 18:.1f}" y2="{ly - 4}" stroke="{colour}" '
                           f'stroke-width="2"{dash}/>')
            out.append(f'<text x="{lx + 24:.1f}" y="{ly}">{_e(label)}</text>')
        out.append("</svg>")
        return "".join(out)


def matrix(rows: Sequence[tuple[str, dict[str, tuple[float | None, str, str]]]], columns: Sequence[str],
           colours: dict, width: int = 760) -> str:
    """A capacitor x check grid: one row per capacitor (worst first), one column per check; each cell
    the check's ratio in percent of what the policy allows, tinted by its status, with the scenario
    where it occurs in the cell's tooltip.  A dot: the check does not apply or was not judged."""
    left, top, row_h = 110, 34, 18
    col_w = max(48.0, min(90.0, (width - left - 10) / max(1, len(columns))))
    height = top + row_h * len(rows) + 8
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} {height}" width="{width}" '
           f'height="{height}" font-family="system-ui,sans-serif" font-size="11">']
    for c, name in enumerate(columns):
        x = left + c * col_w + col_w / 2
        out.append(f'<text x="{x:.1f}" y="{top - 10}" text-anchor="middle" font-weight="bold">{_e(name)}</text>')
    for k, (ref, cells) in enumerate(rows):
        y = top + k * row_h
        if k % 2 == 0:
            out.append(f'<rect x="0" y="{y}" width="{width}" height="{row_h}" fill="#f4f4f4"/>')
        out.append(f'<text x="{left - 8}" y="{y + 13}" text-anchor="end">{_e(ref)}</text>')
        if not cells:  # nothing judged: say so across the row rather than leave dots that read as "fine"
            out.append(f'<text x="{left + 6}" y="{y + 13}" fill="{colours["unrated"]}">not judged: its part data '
                       'are missing (see the table)</text>')
            continue
        for c, name in enumerate(columns):
            x = left + c * col_w
            got = cells.get(name)
            if got is None or got[0] is None:
                label = "unrated" if got is not None else ""
                out.append(f'<circle cx="{x + col_w / 2:.1f}" cy="{y + row_h / 2:.1f}" r="1.6" fill="#999"/>'
                           if not label else
                           f'<text x="{x + col_w / 2:.1f}" y="{y + 13}" text-anchor="middle" fill="#777">{label}</text>')
                continue
            ratio, status, scenario = got
            out.append(f'<g><title>{_e(ref)} {_e(name)}: {100 * ratio:.0f} % ({_e(status)}) in {_e(scenario)}</title>'
                       f'<rect x="{x + 3:.1f}" y="{y + 2}" width="{col_w - 6:.1f}" height="{row_h - 4}" rx="3" '
                       f'fill="{colours[status]}" fill-opacity="0.28" stroke="{colours[status]}"/>'
                       f'<text x="{x + col_w / 2:.1f}" y="{y + 13}" text-anchor="middle">{100 * ratio:.0f} %</text></g>')
    out.append("</svg>")
    return "".join(out)
