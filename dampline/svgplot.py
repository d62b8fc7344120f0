"""Plain SVG plots written as text (no plotting library): the headless figures of the
demo report and of the dashboard's SVG export. Drawing only, no physics."""

from __future__ import annotations

import math
from typing import Sequence
from xml.sax.saxutils import escape

import numpy as np

__all__ = ["Axes", "ticks", "curves_svg"]


def ticks(lo: float, hi: float, n: int = 6) -> np.ndarray:
    """About n round tick values (1, 2 or 5 times a power of ten) inside [lo, hi]."""
    raw = (hi - lo) / max(n, 1)
    mag = 10.0 ** math.floor(math.log10(raw))
    step = min((s * mag for s in (1, 2, 5, 10)), key=lambda s: abs(math.log(s / raw)))
    t = np.arange(math.ceil(lo / step), math.floor(hi / step) + 1) * step
    return t + 0.0                                  # no "-0" labels


class Axes:
    """A rectangle of the SVG mapped to data ranges; collects SVG elements."""

    def __init__(self, box: tuple[float, float, float, float], xlim, ylim):
        self.left, self.top, self.width, self.height = box
        self.xlim, self.ylim = xlim, ylim
        self.parts: list[str] = []

    def px(self, x):
        x0, x1 = self.xlim
        return self.left + (np.asarray(x) - x0) / (x1 - x0) * self.width

    def py(self, y):
        y0, y1 = self.ylim
        return self.top + (y1 - np.asarray(y)) / (y1 - y0) * self.height

    def add(self, element: str) -> None:
        self.parts.append(element)

    def polyline(self, x, y, colour: str, width: float = 1.5) -> None:
        pts = " ".join(f"{a:.2f},{b:.2f}" for a, b in zip(self.px(x), self.py(y)))
        self.add(f'<polyline points="{pts}" fill="none" stroke="{colour}" '
                 f'stroke-width="{width}"/>')

    def text(self, x: float, y: float, s: str, anchor: str = "middle", **attrs) -> None:
        more = "".join(f' {k.replace("_", "-")}="{v}"' for k, v in attrs.items())
        self.add(f'<text x="{x:.1f}" y="{y:.1f}" text-anchor="{anchor}"{more}>{escape(s)}</text>')

    def frame(self, xlabel: str, ylabel: str) -> None:
        """Box, grid, ticks and axis labels."""
        b, r = self.top + self.height, self.left + self.width
        for v in ticks(*self.xlim):
            x = float(self.px(v))
            self.add(f'<line x1="{x:.1f}" y1="{self.top}" x2="{x:.1f}" y2="{b + 5}" '
                     'stroke="#ddd"/>')
            self.text(x, b + 18, f"{v:g}")
        for v in ticks(*self.ylim):
            y = float(self.py(v))
            self.add(f'<line x1="{self.left - 5}" y1="{y:.1f}" x2="{r}" y2="{y:.1f}" '
                     'stroke="#ddd"/>')
            self.text(self.left - 8, y + 4, f"{v:g}", anchor="end")
        self.add(f'<rect x="{self.left}" y="{self.top}" width="{self.width}" height="{self.height}"'
                 ' fill="none" stroke="#333"/>')
        self.text(self.left + self.width / 2, b + 38, xlabel)
        cy = self.top + self.height / 2
        self.text(self.left - 52, cy, ylabel, transform=f"rotate(-90 {self.left - 52} {cy:.1f})")

    def legend(self, entries: Sequence[tuple[str, str, str]]) -> None:
        """One row of (label, colour, dash) under the axis label, clear of the curves."""
        x, y = self.left, self.top + self.height + 58
        for label, colour, dash in entries:
            self.add(f'<line x1="{x}" y1="{y}" x2="{x + 24}" y2="{y}" stroke="{colour}" '
                     f'stroke-width="2" stroke-dasharray="{dash or "none"}"/>')
            self.text(x + 30, y + 4, label, anchor="start")
            x += 44 + 6.5 * len(label)

    def svg(self, title: str, width: int, height: int) -> str:
        head = (f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
                f'viewBox="0 0 {width} {height}" font-family="sans-serif" font-size="12">\n'
                f'<rect width="100%" height="100%" fill="white"/>\n'
                f'<text x="{width / 2}" y="22" text-anchor="middle" font-size="15">'
                f'{escape(title)}</text>\n')
        return head + "\n".join(self.parts) + "\n</svg>\n"


def _log_ticks(lo: float, hi: float) -> np.ndarray:
    """Decades (and 2, 5 within them when fewer than three decades show) in [lo, hi]."""
    d0, d1 = math.floor(math.log10(lo)), math.ceil(math.log10(hi))
    mult = (1,) if d1 - d0 > 3 else (1, 2, 5)
    t = np.array([m * 10.0 ** d for d in range(d0, d1 + 1) for m in mult])
    return t[(t >= lo) & (t <= hi)]


def curves_svg(x: np.ndarray, curves: Sequence[tuple[np.ndarray, str, str, str]], *,
               xlabel: str, ylabel: str, title: str, xlog: bool = False, ylog: bool = False,
               width: int = 740, height: int = 450) -> str:
    """SVG text of several curves y(x) sharing one frame.

    ``curves``: (y, label, colour, dash) with dash "" for a solid line. Non-finite
    points (and, on a log axis, non-positive ones) break the curve instead of being
    drawn. Returns a self-contained SVG document.
    """
    x = np.asarray(x, dtype=float)
    ok_x = np.isfinite(x) & ((x > 0) if xlog else True)
    tx = np.log10(np.where(ok_x, x, np.nan)) if xlog else np.where(ok_x, x, np.nan)
    ys = []
    for y, *_ in curves:
        y = np.asarray(y, dtype=float)
        ok = np.isfinite(y) & ((y > 0) if ylog else True) & ok_x
        ys.append(np.where(ok, np.log10(np.where(ok, y, 1.0)) if ylog else y, np.nan))
    allx = tx[np.isfinite(tx)]
    ally = np.concatenate([y[np.isfinite(y)] for y in ys]) if ys else np.array([])
    if allx.size == 0 or ally.size == 0:
        raise ValueError("nothing finite to plot")
    xlim = (float(allx.min()), float(allx.max()))
    ylo, yhi = float(ally.min()), float(ally.max())
    pad = 0.05 * (yhi - ylo) if yhi > ylo else max(abs(yhi), 1.0) * 0.05
    ylim = (ylo - pad, yhi + pad)
    if xlim[1] == xlim[0]:
        xlim = (xlim[0] - 0.5, xlim[1] + 0.5)
    ax = Axes((80, 40, width - 120, height - 120), xlim, ylim)
    # frame with ticks in data units (log axes: ticks at decades, drawn at log10)
    b, r = ax.top + ax.height, ax.left + ax.width
    xt = np.log10(_log_ticks(10 ** xlim[0], 10 ** xlim[1])) if xlog else ticks(*xlim)
    yt = np.log10(_log_ticks(10 ** ylim[0], 10 ** ylim[1])) if ylog else ticks(*ylim)
    for v in xt:
        px = float(ax.px(v))
        ax.add(f'<line x1="{px:.1f}" y1="{ax.top}" x2="{px:.1f}" y2="{b + 5}" stroke="#ddd"/>')
        ax.text(px, b + 18, f"{10 ** v:g}" if xlog else f"{v:g}")
    for v in yt:
        py = float(ax.py(v))
        ax.add(f'<line x1="{ax.left - 5}" y1="{py:.1f}" x2="{r}" y2="{py:.1f}" stroke="#ddd"/>')
        ax.text(ax.left - 8, py + 4, f"{10 ** v:.3g}" if ylog else f"{v:g}", anchor="end")
    ax.add(f'<rect x="{ax.left}" y="{ax.top}" width="{ax.width}" height="{ax.height}" '
           'fill="none" stroke="#333"/>')
    ax.text(ax.left + ax.width / 2, b + 38, xlabel)
    cy = ax.top + ax.height / 2
    ax.text(ax.left - 60, cy, ylabel, transform=f"rotate(-90 {ax.left - 60} {cy:.1f})")
    for y, (_, label, colour, dash) in zip(ys, curves):
        ok = np.isfinite(y) & np.isfinite(tx)
        # one polyline per run of finite points
        edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(int), [0]])))
        for a, e in zip(edges[0::2], edges[1::2]):
            pts = " ".join(f"{p:.2f},{q:.2f}" for p, q in zip(ax.px(tx[a:e]), ax.py(y[a:e])))
            more = f' stroke-dasharray="{dash}"' if dash else ""
            ax.add(f'<polyline points="{pts}" fill="none" stroke="{colour}" '
                   f'stroke-width="1.5"{more}/>')
    ax.legend([(label, colour, dash) for _, label, colour, dash in curves])
    return ax.svg(title, width, height)
