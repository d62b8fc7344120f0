"""Sweep view: one model value varied over a range, its effect on the response.

A box of controls (model path, start, stop, count, Run) over three bqplot
figures: the highest peak level (dB) and the natural frequencies against the
swept value, and a map of the FRF level over frequency and the swept value
(a ``HeatMap``, which draws an image and handles thousands of frequencies).
Public API only: ``dl.sweep``, ``Sweep.peaks`` and ``Sweep.natural_frequencies``
(``dl.natural_frequencies`` per variant), ``dl.studies.sweep_paths`` for the list
of numeric model paths and their units. Bad input shows its ModelError in the
status line and leaves the last good plots in place.
"""

from __future__ import annotations

import html
from typing import Any

import bqplot as bq
import ipywidgets as W
import numpy as np

import dampline as dl

__all__ = ["SweepView"]

from .app import _db   # one masking rule for every dB axis

_BLUE, _ORANGE, _RED, _GREY = "#1f5fa8", "#c8501e", "#b22222", "#6b6b6b"


class SweepView(W.VBox):
    """Sweep one numeric model value of ``line`` and show its effect.

    Parameters
    ----------
    line : Line
    drive_at : float
        Drive position (m).
    response_at : float
        Response position (m) whose FRF is mapped and whose peaks are plotted.
    freqs : array_like, optional
        Frequencies (Hz); default 2,000 points up to 1.5 times the eighth natural
        frequency.
    drive, quantity : str, optional
        As for ``dl.frf``.
    modes : int
        Natural frequencies drawn against the swept value.
    method, options
        Passed to ``dl.sweep`` (``method="modal"`` with ``modes=`` for modal damping).

    Attributes
    ----------
    controls : dict
        ``path`` (Dropdown), ``start``, ``stop`` (FloatText, SI unit of the path),
        ``count`` (BoundedIntText), ``run`` (Button).
    figures : dict
        ``peaks`` (level vs value), ``resonances`` (natural frequencies vs value),
        ``map`` (FRF level over frequency and value).
    marks : dict
        The bqplot marks, for tests and embedding.
    result : Sweep or None
        The last successful sweep.
    """

    def __init__(self, line: dl.Line, drive_at: float = 0.0, response_at: float = 0.0,
                 freqs=None, *, drive: str = "force", quantity: str | None = None,
                 modes: int = 8, method: str = "exact", **options: Any) -> None:
        if not isinstance(line, dl.Line):
            raise dl.ModelError("line", type(line).__name__, "", "SweepView needs a dampline.Line")
        self.line = line
        self.drive_at = float(drive_at)
        self.response_at = float(np.atleast_1d(response_at)[0])
        self.drive = drive
        self.quantity = quantity
        self.n_modes = int(modes)
        self.method = method
        self.options = options
        if freqs is None:
            fn = dl.natural_frequencies(line, 8)
            top = 1.5 * float(fn[-1]) if fn[-1] > 0 else 1000.0
            freqs = np.linspace(top / 2000.0, top, 2000)
        self.freqs = np.asarray(freqs, dtype=float)
        self.result = None
        self.units = dl.studies.sweep_paths(line)
        self._spec = line.to_dict()

        paths = list(self.units)
        c: dict[str, W.Widget] = {}
        c["path"] = W.Dropdown(options=paths, value=paths[0] if paths else None,
                               description="value", layout=W.Layout(width="360px"))
        c["start"] = W.FloatText(description="start", layout=W.Layout(width="220px"))
        c["stop"] = W.FloatText(description="stop", layout=W.Layout(width="220px"))
        c["count"] = W.BoundedIntText(value=20, min=2, max=500, description="count",
                                      layout=W.Layout(width="160px"))
        c["run"] = W.Button(description="Run", button_style="primary", icon="play")
        self.unit_label = W.HTML()
        self.status = W.HTML()
        self.controls = c
        c["path"].observe(self._on_path, names="value")
        c["run"].on_click(lambda _b: self.run())
        self._on_path({"new": c["path"].value})

        # --- figures
        m: dict[str, Any] = {}
        xs = bq.LinearScale()
        ys = bq.LinearScale()
        self._ax_value = [bq.Axis(scale=xs, label="value"), bq.Axis(scale=xs, label="value")]
        # placeholders until the first run (an empty mark draws an invalid SVG path)
        one, zero = np.array([0.0, 1.0]), np.zeros(2)
        m["peak_level"] = bq.Lines(x=one, y=zero, scales={"x": xs, "y": ys}, colors=[_BLUE],
                                   visible=False)
        m["peak_points"] = bq.Scatter(x=one, y=zero, scales={"x": xs, "y": ys}, colors=[_BLUE],
                                      default_size=24, visible=False)
        self._ax_level = bq.Axis(scale=ys, side="left", label="highest peak (dB)",
                                 label_offset="45px")
        peaks_fig = bq.Figure(marks=[m["peak_level"], m["peak_points"]],
                              axes=[self._ax_value[0], self._ax_level],
                              title="highest peak level",
                              layout=W.Layout(width="460px", height="300px"),
                              fig_margin={"top": 40, "bottom": 45, "left": 75, "right": 15})
        yr = bq.LinearScale()
        m["natural"] = bq.Lines(x=one, y=zero[None, :], scales={"x": xs, "y": yr},
                                colors=[_ORANGE], visible=False)
        m["peak_frequency"] = bq.Scatter(x=one, y=zero, scales={"x": xs, "y": yr},
                                         colors=[_BLUE], default_size=12, visible=False)
        res_fig = bq.Figure(marks=[m["natural"], m["peak_frequency"]],
                            axes=[self._ax_value[1],
                                  bq.Axis(scale=yr, side="left", label="frequency (Hz)",
                                          label_offset="45px")],
                            title="natural frequencies (lines), peaks (dots)",
                            layout=W.Layout(width="460px", height="300px"),
                            fig_margin={"top": 40, "bottom": 45, "left": 75, "right": 15})
        hx, hy = bq.LinearScale(), bq.LinearScale()
        col = bq.ColorScale(scheme="viridis")
        m["map"] = bq.HeatMap(x=np.array([0.0, 1.0]), y=np.array([0.0, 1.0]),
                              color=np.zeros((2, 2)), scales={"x": hx, "y": hy, "color": col},
                              visible=False)
        self._ax_map_value = bq.Axis(scale=hy, side="left", label="value",
                                     label_offset="55px")
        self._ax_color = bq.ColorAxis(scale=col, side="right",
                                      label="|H| dB")
        map_fig = bq.Figure(marks=[m["map"]],
                            axes=[bq.Axis(scale=hx, label="frequency (Hz)"), self._ax_map_value,
                                  self._ax_color],
                            title="FRF level over frequency and value",
                            layout=W.Layout(width="930px", height="360px"),
                            fig_margin={"top": 40, "bottom": 45, "left": 85, "right": 90})
        self.marks = m
        self.figures = {"peaks": peaks_fig, "resonances": res_fig, "map": map_fig}
        row1 = W.HBox([c["path"], self.unit_label])
        row2 = W.HBox([c["start"], c["stop"], c["count"], c["run"]])
        super().__init__([row1, row2, self.status, W.HBox([peaks_fig, res_fig]), map_fig])

    # ------------------------------------------------------------ callbacks
    def _current(self, path: str) -> float:
        node: Any = self._spec
        for part in path.split("."):
            node = node[int(part)] if isinstance(node, list) else node[part]
        return float(node)

    def _on_path(self, change) -> None:
        path = change["new"]
        if path is None:
            return
        v = self._current(path)
        unit = self.units.get(path, "")
        lo, hi = (0.8 * v, 1.2 * v) if v != 0 else (0.0, 1.0)
        self.controls["start"].value = lo
        self.controls["stop"].value = hi
        self.unit_label.value = (f"<span style='color:{_GREY}'>now {v:.6g} {html.escape(unit)}"
                                 f"; start and stop in {html.escape(unit) or '(no unit)'}</span>")

    def values(self) -> np.ndarray:
        """The swept values the controls ask for."""
        c = self.controls
        return np.linspace(c["start"].value, c["stop"].value, int(c["count"].value))

    def run(self):
        """Sweep the chosen value over the chosen range and redraw; on bad input show
        the error and keep the last plots. Returns the Sweep (or None on error)."""
        path = self.controls["path"].value
        values = self.values()
        self.status.value = f"<span style='color:{_GREY}'>running {len(values)} variants...</span>"
        try:
            sw = dl.sweep(self.line, path, values, self.freqs, drive_at=self.drive_at,
                          response_at=[self.response_at], drive=self.drive,
                          quantity=self.quantity, method=self.method, progress=False,
                          **self.options)
            peaks = sw.peaks()
            fn = sw.natural_frequencies(self.n_modes)
        except (dl.ModelError, ValueError) as exc:
            self.status.value = f"<span style='color:{_RED}'>{html.escape(str(exc))}</span>"
            return None
        self.result = sw
        self._draw(sw, peaks, fn)
        self.status.value = (f"<span style='color:{_GREY}'>{len(sw)} variants of "
                             f"{html.escape(path)}"
                             f", {sw.frf.shape[1]} frequencies; {sw.quantity} in "
                             f"{html.escape(sw.unit)}; peak levels read off the sampled FRF "
                             f"(steps of {np.ptp(sw.frequencies) / max(1, sw.frf.shape[1] - 1):.3g}"
                             f" Hz)</span>")
        return sw

    def _draw(self, sw, peaks, fn) -> None:
        m = self.marks
        x = sw.values[:, 0]
        label = f"{sw.paths[0]} ({sw.units[0]})" if sw.units[0] else sw.paths[0]
        level = peaks.highest(0)
        band = fn.T.copy()                                   # (modes, n_values)
        band[(band > sw.frequencies[-1]) | (band < sw.frequencies[0])] = np.nan
        # a mode never in the band would be an all-NaN line: an invalid SVG path
        band = band[np.isfinite(band).any(axis=1)]
        if band.shape[0] == 0:
            band = np.full((1, x.size), np.nan)
        with m["peak_level"].hold_sync():
            m["peak_level"].x = x
            m["peak_level"].y = level
        with m["peak_points"].hold_sync():
            m["peak_points"].x = x
            m["peak_points"].y = level
        with m["natural"].hold_sync():
            m["natural"].x = x
            m["natural"].y = band
        pv = peaks["variant"][peaks["response"] == 0]
        with m["peak_frequency"].hold_sync():
            m["peak_frequency"].x = x[pv]
            m["peak_frequency"].y = peaks["frequency"][peaks["response"] == 0]
        rows = np.argsort(x, kind="stable")                  # the map's value axis ascends
        with m["map"].hold_sync():
            m["map"].x = sw.frequencies
            m["map"].y = x[rows]
            m["map"].color = _db(sw.frf[rows, :, 0])         # (n_values, n_freq)
        for name, mark in m.items():
            mark.visible = name != "natural" or bool(np.isfinite(band).any())
        for ax in self._ax_value:
            ax.label = label
        self._ax_map_value.label = label
