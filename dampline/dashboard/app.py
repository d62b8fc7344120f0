"""The dashboard: one ipywidgets box, bqplot figures, public dampline API only.

Callbacks read the widgets, rebuild the Line (a new frozen object per change),
call ``dl.frf`` / ``dl.modes`` / ``dl.modal_table`` / ``dl.coupling`` and push
the arrays into the marks under ``hold_sync()``. Modes are computed once per
geometry and re-used for every damping change (``modes=<ModeSet>``), so the
damping sliders only re-run the modal sum (and the exact solve for the exact
curve).
"""

from __future__ import annotations

import asyncio
import copy
import html
import math
import time
from pathlib import Path
from typing import Any

import numpy as np
import ipywidgets as W
import bqplot as bq
from bqplot.interacts import IndexSelector

import dampline as dl
from dampline.model.io import write_text_atomic

__all__ = ["Dashboard"]

# the property a segment slider edits for each kind (the stiffness-like one)
_MAIN_PROPERTY = {
    "axial": (("E", "Pa"),),
    "torsion": (("G", "Pa"),),
    "string": (("tension", "N"),),
    "duct": (("c", "m/s"),),
    "bending": (("E", "Pa"), ("I", "m^4")),
}
# ends whose displacement (pressure for ducts) is held: no point drive there
_HELD = ("fixed", "clamped", "pinned", "open")
_HALF_TURN = math.degrees(math.pi)     # phase axis limits (deg)
# Display defaults written as ratios of small integers on purpose: Hypothesis mines
# the float literals of every loaded local module into its example generation, so
# new float literals here would change the examples the engine's derandomized
# property tests draw whenever this module is imported in the same process.
_BAND = (3 / 10, 3 / 2)      # default band: 0.3 f_1 .. 1.5 f_10 (elastic modes)
_ZETA0 = 1 / 200             # zeta slider start when the model gives none
_ZETA_MAX = 1 / 10           # Rayleigh slider ranges reach zeta = 0.1 at f_1 (alpha), f_10 (beta)
_LOG_STEP = 1 / 100          # decades per log-slider step
_STROKE = 3 / 2
_OPACITY = 3 / 5
_MARGIN = 1 + 1 / 10         # field axis headroom
_BLUE, _ORANGE, _GREY, _GREEN, _RED = "#1f5fa8", "#c8501e", "#9a9a9a", "#2e8b3a", "#b22222"


#: samples across each peak for the coupled-vs-decoupled difference (+-4 bandwidths)
PEAK_POINTS = 41
#: seconds a browser drag of a damping slider must pause before the exact curve, the
#: modal table and the coupling view catch up (the modal curve follows every step)
SETTLE_S = 0.12
_DAMPING_SLIDERS = ("eta", "zeta", "alpha", "beta")


def _from_browser(widget) -> bool:
    """True while ipywidgets applies a value sent by the front end (it holds the
    property lock then); False for an assignment made in Python."""
    return "value" in getattr(widget, "_property_lock", {})


def _running_loop():
    try:
        return asyncio.get_running_loop()
    except RuntimeError:
        return None


def _db(values: np.ndarray) -> np.ndarray:
    """20 log10 |H| with zeros, inf and NaN all masked to NaN (never -inf on an axis)."""
    mag = np.abs(values)
    out = np.full(mag.shape, np.nan)
    ok = np.isfinite(mag) & (mag > 0)
    out[ok] = 20.0 * np.log10(mag[ok])
    return out


def _finite(a: np.ndarray) -> np.ndarray:
    a = np.asarray(a, dtype=float).copy()
    a[~np.isfinite(a)] = np.nan
    return a


def _geometry_key(spec: dict) -> Any:
    """The part of a model dict the undamped modes depend on (damping, segment loss
    factors, dashpots and the title left out)."""
    d = copy.deepcopy(spec)
    d.pop("damping", None)
    d.pop("title", None)
    for s in d.get("segments", []):
        s.pop("eta", None)
    for a in d.get("attachments", []):
        a.pop("dashpot", None)
    return repr(d)


class Dashboard(W.VBox):
    """Interactive view of a damped line: FRF (exact and modal), phase, field along
    the line, modal table and damping coupling.

    ``Dashboard(line_or_path, *, freqs_hz=None, n_freq=4000, n_points=200, modes=40,
    drive_at=None, response_at=None)`` (positions in m; by default a free end, and the
    response where the drive is).
    ``figures``: bqplot figures ``frf``, ``phase``, ``field``, ``coupling``;
    ``controls``: widgets keyed by role or model path (``eta``, ``frequency``,
    ``segments.0.length``, ``attachments.0.mass``...); ``status``: HTML message area.
    """

    def __init__(self, line_or_path, *, freqs_hz=None, n_freq: int = 4000, n_points: int = 200,
                 modes: int = 40, drive_at: float | None = None, response_at: float | None = None,
                 **kwargs):
        super().__init__(**kwargs)
        self._points0 = (drive_at, response_at)
        if isinstance(line_or_path, dl.Line):
            line = line_or_path
        else:
            line = dl.load(line_or_path)
        self._spec = line.to_dict()
        self._zeta_list = (list(line.damping.zeta) if isinstance(line.damping.zeta, tuple)
                           else None)
        self.n_modes = int(modes)
        self.n_points = int(n_points)
        self.timings: dict[str, list[float]] = {"modal": [], "exact": [], "field": [],
                                                 "tables": [], "modes": [], "total": [],
                                                 "quick": []}
        self._busy = False
        self._pending = 0            # generation of the latest quick (browser drag) update
        self._stale = False          # exact curve and tables lag a quick update
        self.line = line
        self._modes_key = _geometry_key(self._spec)
        self._modeset = dl.modes(line, self.n_modes)
        fn = self._modeset.frequencies
        el = fn[fn > 0]
        if freqs_hz is None:
            if el.size == 0:
                raise dl.ModelError("freqs_hz", None, "Hz", "no elastic mode found; give freqs_hz")
            lo, hi = _BAND[0] * el[0], _BAND[1] * el[min(9, el.size - 1)]
            self.freqs = np.linspace(lo, hi, int(n_freq))
        else:
            f = np.asarray(freqs_hz, dtype=float).ravel()
            if f.size < 2 or not np.isfinite(f).all() or (f <= 0).any() or (np.diff(f) <= 0).any():
                raise dl.ModelError("freqs_hz", freqs_hz if f.size < 8 else f"{f.size} values", "Hz",
                                    "give at least two finite, positive, increasing frequencies")
            self.freqs = f
        self.drive = "volume_velocity" if line.kind == "duct" else "force"
        self.status = W.HTML(value="")
        self._build_controls(line, el)
        self._build_figures(line)
        self._layout()
        self._connect()
        self._recompute_all()          # a model that cannot be solved raises here
        self._sync_geometry_marks()

    # ------------------------------------------------------------------ controls
    def _build_controls(self, line: dl.Line, el: np.ndarray) -> None:
        c: dict[str, W.Widget] = {}
        d = line.damping
        L = line.length
        st = {"description_width": "150px"}
        c["damping_model"] = W.Dropdown(options=list(("none", "modal", "rayleigh", "loss_factor")),
                                        value=d.model, description="damping model", style=st,
                                        layout=W.Layout(width="340px"))
        eta0 = d.eta if d.eta else 1e-3
        zeta0 = (d.zeta if isinstance(d.zeta, (int, float)) and d.zeta
                 else (self._zeta_list[0] if self._zeta_list else _ZETA0))
        c["eta"] = W.FloatLogSlider(value=eta0, base=10, min=-6, max=0, step=_LOG_STEP,
                                    description="loss factor eta (-)", readout_format=".3g",
                                    style=st, layout=W.Layout(width="340px"))
        c["zeta"] = W.FloatLogSlider(value=zeta0, base=10, min=-6, max=math.log10(0.5), step=_LOG_STEP,
                                     description="damping ratio zeta (-)", readout_format=".3g",
                                     style=st, layout=W.Layout(width="340px"))
        w1 = 2 * math.pi * (el[0] if el.size else 1.0)
        wn = 2 * math.pi * (el[min(9, el.size - 1)] if el.size else 1.0)
        a0 = d.alpha or 0.0
        b0 = d.beta or 0.0
        c["alpha"] = W.FloatSlider(value=a0, min=0.0, max=max(2 * _ZETA_MAX * w1, 2 * a0), step=2 * _ZETA_MAX * w1 / 1000,
                                   description="alpha (1/s)", readout_format=".4g", style=st, layout=W.Layout(width="340px"))
        c["beta"] = W.FloatSlider(value=b0, min=0.0, max=max(2 * _ZETA_MAX / wn, 2 * b0), step=2 * _ZETA_MAX / wn / 1000,
                                  description="beta (s)", readout_format=".4g", style=st, layout=W.Layout(width="340px"))
        c["coupling"] = W.ToggleButtons(options=["full", "diagonal"], value="full",
                                        description="modal damping", style=st)
        c["overlay"] = W.Checkbox(value=True, description="show the modal curve")
        c["magnitude"] = W.ToggleButtons(options=["dB", "log"], value="dB", description="magnitude",
                                         style=st, tooltips=["20 log10 |H| re 1 unit", "|H| on a log scale"])
        c["frequency_axis"] = W.ToggleButtons(options=["linear", "log"], value="linear",
                                              description="frequency axis", style=st)
        c["export_folder"] = W.Text(value="dampline-export", description="export folder",
                                    style=st, layout=W.Layout(width="340px"))
        for key, label, tip in (
                ("export_model", "model TOML", "the current model as a TOML file"),
                ("export_frf", "FRF CSV", "exact and modal FRF with units in the header"),
                ("export_field", "field CSV", "the response along the line at the selected frequency"),
                ("export_svg", "figures SVG", "FRF, phase and field as SVG files written by the kernel"),
                ("export_png", "figures PNG", "the figures as shown, downloaded by the browser"),
                ("export_record", "record notebook", "an executed notebook and an offline HTML page")):
            c[key] = W.Button(description=label, tooltip=tip, layout=W.Layout(width="110px"))
        c["modes"] = W.IntSlider(value=self.n_modes, min=1, max=self.n_modes, description="modes",
                                 continuous_update=False, style=st, layout=W.Layout(width="340px"))
        xd = self._default_drive(line)
        given = {}
        for key, x in zip(("drive_at", "response_at"), self._points0):
            if x is not None:
                try:
                    x = float(x)
                except (TypeError, ValueError):
                    raise dl.ModelError(key, x, "m", "must be a position on the line") from None
                if not (0.0 <= x <= L):
                    raise dl.ModelError(key, x, "m", f"is off the line (0 to {L:g} m)")
                given[key] = x
        xr = given.get("response_at", given.get("drive_at", xd))
        xd = given.get("drive_at", xd)
        c["drive_at"] = W.FloatSlider(value=xd, min=0.0, max=L, step=L / 1000, description="drive at (m)",
                                      readout_format=".4g", continuous_update=False, style=st, layout=W.Layout(width="340px"))
        c["response_at"] = W.FloatSlider(value=xr, min=0.0, max=L, step=L / 1000,
                                         description="response at (m)", readout_format=".4g",
                                         continuous_update=False, style=st, layout=W.Layout(width="340px"))
        f = self.freqs
        f_sel = el[0] if el.size and f[0] <= el[0] <= f[-1] else f[len(f) // 2]
        c["frequency"] = W.FloatSlider(value=f_sel, min=f[0], max=f[-1], step=(f[-1] - f[0]) / len(f),
                                       description="frequency (Hz)", readout_format=".5g", style=st,
                                       layout=W.Layout(width="340px"))
        c["quantity"] = W.Dropdown(options=self._field_quantities(line), description="field quantity",
                                   style=st, layout=W.Layout(width="340px"))
        c["animate"] = W.Play(value=0, min=0, max=35, step=1, interval=60, repeat=True,
                              description="animate")
        self._geometry_names: list[str] = []
        self._damping_names: list[str] = []
        for i, seg in enumerate(line.segments):
            name = f"segments.{i}.length"
            c[name] = W.FloatText(value=seg.length, description=f"segment {i + 1} length (m)",
                                  continuous_update=False, style=st, layout=W.Layout(width="340px"))
            self._geometry_names.append(name)
            for key, unit in _MAIN_PROPERTY[line.kind]:
                val = getattr(seg, key)
                if val is None or (seg.section is not None and key in ("area", "I", "J")):
                    continue            # a section fills these in; edit the section instead
                name = f"segments.{i}.{key}"
                c[name] = W.FloatText(value=val, description=f"segment {i + 1} {key} ({unit})",
                                      continuous_update=False, style=st, layout=W.Layout(width="340px"))
                self._geometry_names.append(name)
        units = {"mass": "kg m^2" if line.kind == "torsion" else "kg",
                 "spring": "N m/rad" if line.kind == "torsion" else "N/m",
                 "dashpot": "N m s/rad" if line.kind == "torsion" else "N s/m"}
        if line.kind == "duct":
            units = {"mass": "kg/m^4", "spring": "Pa/m^3", "dashpot": "Pa s/m^3"}
        for i, att in enumerate(line.attachments):
            for key in ("mass", "spring", "dashpot"):
                val = getattr(att, key)
                if val is None:
                    continue
                name = f"attachments.{i}.{key}"
                c[name] = W.FloatText(value=val, description=f"attachment {i + 1} {key} ({units[key]})",
                                      continuous_update=False, style=st, layout=W.Layout(width="340px"))
                (self._damping_names if key == "dashpot" else self._geometry_names).append(name)
        self.controls = c
        self._show_damping_controls()

    @staticmethod
    def _default_drive(line: dl.Line) -> float:
        left, right = line.ends
        if not (isinstance(right, str) and right in _HELD):
            return line.length
        if not (isinstance(left, str) and left in _HELD):
            return 0.0
        return 0.5 * line.length

    @staticmethod
    def _field_quantities(line: dl.Line) -> list[tuple[str, str]]:
        if line.kind == "duct":
            return [("pressure", "pressure"), ("velocity", "velocity"),
                    ("volume velocity", "volume_velocity")]
        q = [("displacement", "receptance"), ("velocity", "mobility"), ("force", "force")]
        if line.kind == "torsion":
            q = [("rotation", "receptance"), ("angular velocity", "mobility"), ("torque", "force")]
        if line.kind == "bending":
            q = [("displacement", "receptance"), ("velocity", "mobility"), ("moment", "moment"),
                 ("shear", "shear")]
            if all(s.section is not None for s in line.segments):
                q.append(("stress", "stress"))
        return q

    def _show_damping_controls(self) -> None:
        model = self.controls["damping_model"].value
        active = {"loss_factor": ("eta",), "modal": ("zeta",), "rayleigh": ("alpha", "beta"),
                  "none": ()}[model]
        for k in ("eta", "zeta", "alpha", "beta"):
            self.controls[k].layout.display = "" if k in active else "none"

    # ------------------------------------------------------------------ figures
    def _build_figures(self, line: dl.Line) -> None:
        f = self.freqs
        self._xs_lin = bq.LinearScale(min=float(f[0]), max=float(f[-1]))
        self._xs_log = bq.LogScale(min=float(f[0]), max=float(f[-1]))     # f > 0 checked
        self._xs = self._xs_lin
        ys_db = bq.LinearScale()
        self._ys_db = ys_db
        self._ys_log = bq.LogScale(min=1e-12, max=1.0)
        ys_ph = bq.LinearScale(min=-_HALF_TURN, max=_HALF_TURN)
        ys_unit = bq.LinearScale(min=0.0, max=1.0)
        self._ys_ph, self._ys_unit = ys_ph, ys_unit
        nan = np.full(f.size, np.nan)
        self.marks: dict[str, bq.Mark] = {}
        m = self.marks
        m["exact"] = bq.Lines(x=f, y=nan, scales={"x": self._xs, "y": ys_db}, colors=[_BLUE],
                              labels=["exact"], display_legend=True, stroke_width=_STROKE)
        m["modal"] = bq.Lines(x=f, y=nan, scales={"x": self._xs, "y": ys_db}, colors=[_ORANGE],
                              labels=["modal"], display_legend=True, line_style="dashed",
                              stroke_width=_STROKE)
        m["natural"] = bq.Scatter(x=[], y=[], scales={"x": self._xs, "y": ys_db}, marker="diamond",
                                  colors=[_GREEN], default_size=40, display_names=False,
                                  tooltip=bq.Tooltip(fields=["name", "x"], formats=["", ".5g"],
                                                     labels=["mode", "f (Hz)"]))
        m["cursor"] = bq.Lines(x=[0.0, 0.0], y=[0.0, 1.0], scales={"x": self._xs, "y": ys_unit},
                               colors=[_RED], stroke_width=1)
        # one axis object per scale: a view swaps whole axes (re-created cleanly in the
        # browser) rather than re-pointing an axis at another scale
        self._ax_mag = {"dB": bq.Axis(scale=ys_db, side="left", label="|H| dB re 1", grid_lines="dashed"),
                        "log": bq.Axis(scale=self._ys_log, side="left", label="|H|", grid_lines="dashed")}
        self._ax_db = self._ax_mag["dB"]
        self._ax_freq = {view: {s: bq.Axis(scale=sc, label="frequency (Hz)", grid_lines="dashed")
                                for s, sc in (("linear", self._xs_lin), ("log", self._xs_log))}
                         for view in ("frf", "phase")}
        ax_f = self._ax_freq["frf"]["linear"]
        self._ax_f = ax_f
        self._selector = IndexSelector(scale=self._xs, marks=[m["exact"]])
        frf_fig = bq.Figure(marks=[m["exact"], m["modal"], m["natural"], m["cursor"]],
                            axes=[ax_f, self._ax_db], title="Frequency response",
                            interaction=self._selector, legend_location="top-right",
                            layout=W.Layout(width="760px", height="340px"),
                            fig_margin={"top": 40, "bottom": 40, "left": 70, "right": 20})
        m["phase_exact"] = bq.Lines(x=f, y=nan, scales={"x": self._xs, "y": ys_ph}, colors=[_BLUE])
        m["phase_modal"] = bq.Lines(x=f, y=nan, scales={"x": self._xs, "y": ys_ph}, colors=[_ORANGE],
                                    line_style="dashed")
        m["phase_cursor"] = bq.Lines(x=[0.0, 0.0], y=[0.0, 1.0], scales={"x": self._xs, "y": ys_unit},
                                     colors=[_RED], stroke_width=1)
        self._ax_f_phase = self._ax_freq["phase"]["linear"]
        self._ax_phase = bq.Axis(scale=ys_ph, side="left", label="phase (deg)",
                                 tick_values=np.linspace(-_HALF_TURN, _HALF_TURN, 5))
        phase_fig = bq.Figure(marks=[m["phase_exact"], m["phase_modal"], m["phase_cursor"]],
                              axes=[self._ax_f_phase, self._ax_phase],
                              title="Phase", layout=W.Layout(width="760px", height="220px"),
                              fig_margin={"top": 40, "bottom": 40, "left": 70, "right": 20})
        # field view: geometry on its own y-scale, drawn first so the curves lie over it
        self._xs_line = bq.LinearScale(min=0.0, max=line.length)
        self._ys_geo = bq.LinearScale(min=-1.0, max=1.0)
        self._ys_field = bq.LinearScale()
        sx_geo = {"x": self._xs_line, "y": self._ys_geo}
        sx_fld = {"x": self._xs_line, "y": self._ys_field}
        m["segments"] = bq.Lines(x=[[0.0, 1.0]], y=[[0.0, 0.0]], scales=sx_geo, fill="inside",
                                 colors=[_GREY], fill_opacities=[0.25], opacities=[_OPACITY])
        m["attachments"] = bq.Scatter(x=[], y=[], scales=sx_geo, marker="square", colors=["#555555"],
                                      default_size=60)
        # ends: held ones (fixed, clamped, pinned, open) as a dark bar, lumped ones (a
        # table of spring, mass, dashpot) as a ring; the tooltip names the condition
        m["end_held"] = bq.Scatter(x=[], y=[], scales=sx_geo, marker="rectangle", colors=["#333333"],
                                   default_size=260, names=[], display_names=True,
                                   tooltip=bq.Tooltip(fields=["name"], labels=["end"]))
        m["end_table"] = bq.Scatter(x=[], y=[], scales=sx_geo, marker="circle", colors=["#333333"],
                                    fill=False, stroke="#333333", default_size=160, names=[],
                                    display_names=True,
                                    tooltip=bq.Tooltip(fields=["name"], labels=["end"]))
        m["drive"] = bq.Scatter(x=[0.0], y=[0.0], scales=sx_geo, marker="triangle-up",
                                colors=[_RED], default_size=90)
        m["envelope"] = bq.Lines(x=[0.0], y=[[0.0], [0.0]], scales=sx_fld, colors=[_BLUE, _BLUE],
                                 stroke_width=2, labels=["envelope"])
        m["shape"] = bq.Lines(x=[0.0], y=[0.0], scales=sx_fld, colors=[_ORANGE], stroke_width=_STROKE,
                              labels=["instantaneous"])
        m["response"] = bq.Scatter(x=[0.0], y=[0.0], scales=sx_geo, marker="circle", colors=[_GREEN],
                                   default_size=120, enable_move=True, restrict_x=True,
                                   tooltip=bq.Tooltip(fields=["x"], formats=[".4g"],
                                                      labels=["response at (m)"]))
        self._ax_field = bq.Axis(scale=self._ys_field, side="left", label="|u|")
        field_fig = bq.Figure(marks=[m["segments"], m["end_held"], m["end_table"], m["attachments"],
                                     m["envelope"], m["shape"],
                                     m["drive"], m["response"]],
                              axes=[bq.Axis(scale=self._xs_line, label="position x (m)"), self._ax_field],
                              title="Response along the line",
                              layout=W.Layout(width="760px", height="300px"),
                              fig_margin={"top": 40, "bottom": 40, "left": 70, "right": 20})
        # coupling: normalised modal damping matrix
        self._row = bq.OrdinalScale(reverse=True)
        self._col = bq.OrdinalScale()
        col_sc = bq.ColorScale(scheme="Blues", min=0.0, max=1.0)
        m["coupling"] = bq.GridHeatMap(row=np.array([1.0, 2.0]), column=np.array([1.0, 2.0]), color=np.zeros((2, 2)),
                                       scales={"row": self._row, "column": self._col, "color": col_sc},
                                       stroke="white")
        self._ax_col = bq.Axis(scale=self._col, label="mode")
        self._ax_row = bq.Axis(scale=self._row, side="left", label="mode")
        coup_fig = bq.Figure(marks=[m["coupling"]],
                             axes=[self._ax_col, self._ax_row,
                                   bq.ColorAxis(scale=col_sc, side="right")],
                             title="|B_ij| / sqrt(B_ii B_jj)",
                             layout=W.Layout(width="440px", height="420px"))
        xb, yb = bq.OrdinalScale(), bq.LinearScale()
        m["peak_difference"] = bq.Bars(x=[1], y=[0.0], scales={"x": xb, "y": yb}, colors=[_BLUE])
        self.peak_figure = bq.Figure(marks=[m["peak_difference"]],
                                     axes=[bq.Axis(scale=xb, label="mode"),
                                           bq.Axis(scale=yb, side="left",
                                                   label="diagonal - full peak (dB)")],
                                     title="What ignoring the coupling costs at each peak",
                                     layout=W.Layout(width="440px", height="300px"))
        self.figures = {"frf": frf_fig, "phase": phase_fig, "field": field_fig, "coupling": coup_fig}
        self.table = W.HTML(value="")

    def _layout(self) -> None:
        c = self.controls
        title = W.HTML(value=f"<b>{html.escape(self.line.title or self.line.kind + ' line')}</b>")
        damping_box = W.VBox([W.HTML("<b>Damping</b>"), c["damping_model"], c["eta"], c["zeta"],
                              c["alpha"], c["beta"], c["coupling"], c["modes"], c["overlay"],
                              c["magnitude"], c["frequency_axis"]])
        exports = W.VBox([W.HTML("<b>Export</b>"), c["export_folder"],
                          W.HBox([c["export_model"], c["export_frf"], c["export_field"]]),
                          W.HBox([c["export_svg"], c["export_png"], c["export_record"]])])
        points_box = W.VBox([W.HTML("<b>Drive and response</b>"), c["drive_at"], c["response_at"],
                             c["frequency"], c["quantity"], W.HBox([W.Label("animate"), c["animate"]])])
        model_box = W.VBox([W.HTML("<b>Model</b>")] + [c[n] for n in self._geometry_names
                                                        + self._damping_names])
        side = W.VBox([damping_box, points_box, model_box, exports])
        plots = W.VBox([self.figures["frf"], self.figures["phase"], self.figures["field"]])
        bottom = W.HBox([self.figures["coupling"], W.VBox([self.peak_figure, self.table])])
        # parameter sweep: built when first opened (it keeps construction fast), and
        # rebuilt on opening when the model has changed since
        self.sweep_view = None
        self._sweep_box = W.Accordion(children=[W.VBox([])], selected_index=None)
        self._sweep_box.set_title(0, "Parameter sweep: peak level, resonances and FRF map "
                                     "against one model value")
        self._sweep_box.observe(self._on_sweep_open, names="selected_index")
        self.children = [title, self.status, W.HBox([side, plots]), bottom, self._sweep_box]

    # ------------------------------------------------------------------ wiring
    def _connect(self) -> None:
        c = self.controls
        recompute = ["damping_model", "eta", "zeta", "alpha", "beta", "coupling", "modes",
                     "drive_at", "response_at"] + self._geometry_names + self._damping_names
        for name in recompute:
            c[name].observe(self._on_change, names="value")
        c["frequency"].observe(self._on_frequency, names="value")
        c["quantity"].observe(self._on_frequency, names="value")
        c["overlay"].observe(self._on_overlay, names="value")
        c["magnitude"].observe(self._on_axes, names="value")
        c["frequency_axis"].observe(self._on_axes, names="value")
        actions = {"export_model": lambda: self.export_toml(self._export_path("model.toml")),
                   "export_frf": lambda: self.export_csv(self._export_path("frf.csv")),
                   "export_field": lambda: self.export_field_csv(self._export_path("field.csv")),
                   "export_svg": lambda: self.export_svg(self._export_dir()),
                   "export_png": self.download_png,
                   "export_record": lambda: self.export_record(self._export_dir())}
        for key, fn in actions.items():
            c[key].on_click(lambda _b, fn=fn: self._export(fn))
        c["animate"].observe(self._on_animate, names="value")
        self._selector.observe(self._on_select, names="selected")
        self.marks["response"].observe(self._on_marker, names="x")

    def _on_change(self, change) -> None:
        if self._busy:
            return
        if change["owner"] is self.controls["damping_model"]:
            self._show_damping_controls()
        if change["owner"] is self.controls["zeta"]:
            self._zeta_list = None
        owner = change["owner"]
        loop = _running_loop()
        if (loop is not None and _from_browser(owner)
                and any(owner is self.controls[k] for k in _DAMPING_SLIDERS)):
            # a drag in the browser: the modal curve (cached modes, a re-sum) and the
            # field follow every step; the exact curve, the modal table and the
            # coupling view catch up once the drag pauses for SETTLE_S
            if self._guarded(self._quick_update):
                self._pending += 1
                loop.call_later(SETTLE_S, self._settle, self._pending)
            return
        self._recompute()

    def _settle(self, generation: int) -> None:
        if generation != self._pending or not self._stale:
            return                   # a later move is on its way, or already caught up
        self._recompute()

    def _on_frequency(self, change) -> None:
        if self._busy:
            return
        self._guarded(self._update_field)

    def _on_overlay(self, change) -> None:
        self.marks["modal"].visible = bool(change["new"])
        self.marks["phase_modal"].visible = bool(change["new"])

    def _on_sweep_open(self, change) -> None:
        if change["new"] is None:
            return
        self._guarded(self.open_sweep)

    def open_sweep(self):
        """The sweep view for the current model, drive and response (a
        :class:`~dampline.dashboard.sweep_view.SweepView`), built on first use."""
        from .sweep_view import SweepView
        sv = self.sweep_view
        if sv is None or sv.line != self.line or (sv.drive_at, sv.response_at) != (
                self.drive_at, self.response_at):
            opts = {}
            method = "exact"
            if self.line.damping.model == "modal":
                method, opts = "modal", {"modes": self.n_modes}
            sv = SweepView(self.line, drive_at=self.drive_at, response_at=self.response_at,
                           freqs=np.linspace(self.freqs[0], self.freqs[-1], 2000),
                           drive=self.drive, method=method, **opts)
            self.sweep_view = sv
            self._sweep_box.children = [sv]
        if self._sweep_box.selected_index is None:
            self._sweep_box.selected_index = 0
        return sv

    def _on_axes(self, change) -> None:
        """Swap the magnitude (dB or log |H|) and frequency (linear or log) scales of the
        FRF and phase views; the marks keep sharing one x-scale."""
        c, m = self.controls, self.marks
        xs = self._xs_log if c["frequency_axis"].value == "log" else self._xs_lin
        ys = self._ys_log if c["magnitude"].value == "log" else self._ys_db
        self._xs = xs
        for k in ("exact", "modal", "natural"):
            m[k].scales = {"x": xs, "y": ys}
        for k in ("phase_exact", "phase_modal"):
            m[k].scales = {"x": xs, "y": self._ys_ph}
        for k in ("cursor", "phase_cursor"):
            m[k].scales = {"x": xs, "y": self._ys_unit}
        fx, mag = c["frequency_axis"].value, c["magnitude"].value
        self._ax_f, self._ax_f_phase = self._ax_freq["frf"][fx], self._ax_freq["phase"][fx]
        self._ax_db = self._ax_mag[mag]
        self.figures["frf"].axes = [self._ax_f, self._ax_db]
        self.figures["phase"].axes = [self._ax_f_phase, self._ax_phase]
        self._selector.scale = xs
        self._draw_frf()

    def _on_animate(self, change) -> None:
        self._draw_shape()

    def _on_select(self, change) -> None:
        sel = change["new"]
        if sel is None or len(sel) == 0 or self._busy:
            return
        f = float(np.clip(sel[0], self.freqs[0], self.freqs[-1]))
        self.controls["frequency"].value = float(self.freqs[np.argmin(np.abs(self.freqs - f))])

    def _on_marker(self, change) -> None:
        x = change["new"]
        if self._busy or x is None or len(x) == 0:
            return
        L = self.line.length
        self.controls["response_at"].value = float(np.clip(x[0], 0.0, L))

    # ------------------------------------------------------------------ model from widgets
    def _spec_from_controls(self) -> dict:
        c = self.controls
        d = copy.deepcopy(self._spec)
        for name in self._geometry_names + self._damping_names:
            group, i, key = name.split(".")
            d[group][int(i)][key] = float(c[name].value)
        model = c["damping_model"].value
        damp: dict[str, Any] = {"model": model}
        if model == "loss_factor":
            damp["eta"] = float(c["eta"].value)
        elif model == "modal":
            damp["zeta"] = list(self._zeta_list) if self._zeta_list else float(c["zeta"].value)
        elif model == "rayleigh":
            damp["alpha"] = float(c["alpha"].value)
            damp["beta"] = float(c["beta"].value)
        if self._spec.get("damping", {}).get("wall_losses"):
            damp["wall_losses"] = True
        d["damping"] = damp
        if model != "loss_factor":
            # segment loss factors belong to the loss-factor model only
            for s in d["segments"]:
                s.pop("eta", None)
        return d

    # ------------------------------------------------------------------ recompute
    def _guarded(self, fn) -> bool:
        try:
            fn()
        except Exception as exc:  # keep the last good curves, say what went wrong
            msg = str(exc) or type(exc).__name__
            self.status.value = (f"<span style='color:{_RED}'><b>Not updated:</b> "
                                 f"{html.escape(type(exc).__name__)}: {html.escape(msg)}</span>")
            return False
        self.status.value = ""
        return True

    def _recompute(self) -> bool:
        return self._guarded(self._recompute_all)

    def _quick_update(self) -> None:
        """Damping moved: rebuild the line, re-sum the modal curve with the cached modes,
        redraw it and the field; the exact curve is dimmed until it catches up."""
        t0 = time.perf_counter()
        c = self.controls
        line = dl.Line.from_dict(self._spec_from_controls())
        modal = dl.frf(line, self.freqs, drive_at=self.drive_at, response_at=[self.response_at],
                       drive=self.drive, method="modal", modes=self._ms,
                       coupling=c["coupling"].value)
        self.line, self.frf_modal = line, modal
        self._stale = True
        self._draw_modal()
        if self.frf_exact is not None and line.damping.model != "modal":
            self.marks["exact"].opacities = [_OPACITY / 2]
        self._update_field()
        self.timings["quick"].append(time.perf_counter() - t0)

    def _recompute_all(self) -> None:
        t0 = time.perf_counter()
        c = self.controls
        spec = self._spec_from_controls()
        line = dl.Line.from_dict(spec)
        t_build = time.perf_counter() - t0
        key = _geometry_key(spec)
        modeset = self._modeset
        if key != self._modes_key:
            t = time.perf_counter()
            modeset = dl.modes(line, self.n_modes)
            self.timings["modes"].append(time.perf_counter() - t)
        n = int(c["modes"].value)
        ms = modeset if n >= modeset.count else modeset.first(n)
        L = line.length
        xd = float(np.clip(c["drive_at"].value, 0.0, L))
        xr = float(np.clip(c["response_at"].value, 0.0, L))
        t = time.perf_counter()
        modal = dl.frf(line, self.freqs, drive_at=xd, response_at=[xr], drive=self.drive,
                       method="modal", modes=ms, coupling=c["coupling"].value)
        t_modal = time.perf_counter() - t + t_build
        t = time.perf_counter()
        exact = None
        if line.damping.model != "modal":
            exact = dl.frf(line, self.freqs, drive_at=xd, response_at=[xr], drive=self.drive,
                           method="exact")
        t_exact = time.perf_counter() - t
        t = time.perf_counter()
        table = dl.modal_table(line, ms, drive_at=xd, response_at=xr, drive=self.drive)
        coup = dl.coupling(line, ms, drive_at=xd, response_at=xr,
                          points_per_peak=PEAK_POINTS)
        t_tables = time.perf_counter() - t
        # everything computed: commit
        geometry_changed = key != self._modes_key
        self.line, self._modeset, self._modes_key = line, modeset, key
        self._ms, self.frf_modal, self.frf_exact = ms, modal, exact
        self.modal_table, self.coupling = table, coup
        self.drive_at, self.response_at = xd, xr
        self._stale = False
        t = time.perf_counter()
        self._draw_frf()
        t_modal += time.perf_counter() - t
        self._draw_tables()
        if geometry_changed:
            self._sync_geometry_marks()
        t = time.perf_counter()
        self._update_field()
        t_field = time.perf_counter() - t
        self.timings["modal"].append(t_modal)
        self.timings["exact"].append(t_exact)
        self.timings["tables"].append(t_tables)
        self.timings["field"].append(t_field)
        self.timings["total"].append(time.perf_counter() - t0)

    # ------------------------------------------------------------------ drawing
    def _draw_modal(self) -> np.ndarray:
        m = self.marks
        modal = np.asarray(self.frf_modal)[:, 0]
        y_modal = self._level(modal)
        with m["modal"].hold_sync():
            m["modal"].y = y_modal
        with m["phase_modal"].hold_sync():
            m["phase_modal"].y = _finite(np.degrees(np.angle(modal)))
        return y_modal

    def _level(self, H: np.ndarray) -> np.ndarray:
        """What the magnitude axis shows: dB re 1 unit, or |H| on a log scale (zeros,
        inf and NaN masked to NaN, so nothing non-positive reaches the log axis)."""
        if self.controls["magnitude"].value == "dB":
            return _db(H)
        mag = _finite(np.abs(H))
        mag[~(mag > 0)] = np.nan
        return mag

    def _draw_frf(self) -> None:
        m = self.marks
        db_modal = self._draw_modal()
        m["exact"].opacities = [1.0]
        if self.frf_exact is not None:
            ex = np.asarray(self.frf_exact)[:, 0]
            db_ref = self._level(ex)
            with m["exact"].hold_sync():
                m["exact"].y = db_ref
                m["exact"].visible = True
            with m["phase_exact"].hold_sync():
                m["phase_exact"].y = _finite(np.degrees(np.angle(ex)))
                m["phase_exact"].visible = True
        else:
            db_ref = db_modal
            with m["exact"].hold_sync():
                m["exact"].y = np.full(self.freqs.size, np.nan)
                m["exact"].visible = False
            with m["phase_exact"].hold_sync():
                m["phase_exact"].y = np.full(self.freqs.size, np.nan)
                m["phase_exact"].visible = False
        unit = self.frf_modal.unit
        if self.controls["magnitude"].value == "dB":
            self._ax_db.label = f"|H| dB re 1 {unit}"
        else:
            self._ax_db.label = f"|H| ({unit})"
            finite = np.concatenate([db_modal[np.isfinite(db_modal)],
                                     db_ref[np.isfinite(db_ref)]])
            if finite.size:              # a log scale needs explicit positive limits
                lo, hi = float(finite.min()), float(finite.max())
                with self._ys_log.hold_trait_notifications():
                    self._ys_log.min, self._ys_log.max = lo / 1.5, hi * 1.5
        # natural-frequency markers on the curve, with the damping ratio in the tooltip
        fn = self._ms.frequencies
        zeta = self.modal_table["damping_ratio"]
        sel = np.flatnonzero((fn > 0) & (fn >= self.freqs[0]) & (fn <= self.freqs[-1]))
        idx = np.searchsorted(self.freqs, fn[sel]).clip(0, self.freqs.size - 1)
        y = db_ref[idx]
        keep = np.isfinite(y)
        names = [f"{k + 1}: {fn[k]:.5g} Hz, zeta = {zeta[k]:.3g}" for k in sel[keep]]
        with m["natural"].hold_sync():
            m["natural"].x = fn[sel][keep]
            m["natural"].y = y[keep]
            m["natural"].names = names

    def _draw_tables(self) -> None:
        t, cp = self.modal_table, self.coupling
        unit = self.frf_modal.unit
        rows = []
        peak_db = t["peak_db"] if "peak_db" in t.keys() else np.full(len(t), np.nan)
        for i in range(len(t)):
            vals = (int(t["mode"][i]), t["frequency"][i], t["damping_ratio"][i], t["loss_factor"][i],
                    t["Q"][i], t["bandwidth"][i], peak_db[i], cp.peak_difference_db[i])
            cells = [str(vals[0])] + [f"{v:.5g}" if np.isfinite(v) else "-" for v in vals[1:]]
            rows.append("<tr>" + "".join(f"<td style='text-align:right;padding:0 6px'>{x}</td>"
                                         for x in cells) + "</tr>")
        head = ["mode", "frequency (Hz)", "damping ratio", "loss factor", "Q", "bandwidth (Hz)",
                f"peak (dB re 1 {unit})", "diagonal - full (dB)"]
        self.table.value = ("<div style='max-height:300px;overflow-y:auto'><table><tr>"
                            + "".join(f"<th style='padding:0 6px'>{html.escape(h)}</th>" for h in head)
                            + "</tr>" + "".join(rows) + "</table></div>")
        n = cp.matrix.shape[0]
        modes_ = np.arange(1, n + 1)
        hm = self.marks["coupling"]
        # row, column and color are cross-validated: change them together
        color = np.nan_to_num(cp.matrix)
        old = np.asarray(hm.color) if hm.color is not None else None
        # the heat map draws one rectangle per cell: resend it only when it visibly changes
        if old is None or old.shape != color.shape or np.abs(old - color).max() > 2e-3:
            with hm.hold_sync(), hm.hold_trait_notifications():
                if old is None or old.shape != color.shape:
                    hm.row = modes_
                    hm.column = modes_
                    # a label per mode crowds past ~15 modes: an ordinal axis thins its
                    # labels to num_ticks evenly spaced ones
                    self._ax_col.num_ticks = min(n, 11)
                    self._ax_row.num_ticks = min(n, 11)
                hm.color = color
        bars = self.marks["peak_difference"]
        with bars.hold_sync():
            bars.x = modes_
            bars.y = np.nan_to_num(cp.peak_difference_db)
        self.figures["coupling"].title = ("modal damping coupling (proportional: diagonal)"
                                          if cp.proportional else "|B_ij| / sqrt(B_ii B_jj)")

    def _sync_geometry_marks(self) -> None:
        line, m = self.line, self.marks
        b = np.asarray(line.boundaries)
        kind = line.kind
        if kind == "torsion":
            size = np.array([s.J ** 0.25 for s in line.segments])
        elif kind == "string":
            size = np.array([math.sqrt(s.mass_per_length) for s in line.segments])
        else:
            size = np.array([math.sqrt(s.area) for s in line.segments])
        h = 0.5 * size / size.max()
        xs = np.array([[b[i], b[i + 1], b[i + 1], b[i], b[i]] for i in range(len(h))])
        ys = np.array([[-hi, -hi, hi, hi, -hi] for hi in h])
        self._busy = True
        try:
            self._xs_line.max = float(line.length)
            with m["segments"].hold_sync():
                m["segments"].x = xs
                m["segments"].y = ys
                m["segments"].colors = [_GREY] * len(h)
            held, table = ([], []), ([], [])
            for x_end, end in zip((0.0, float(line.length)), line.ends):
                if isinstance(end, str):
                    if end in _HELD:
                        held[0].append(x_end)
                        held[1].append(end)
                    elif end != "free":          # duct ends: anechoic, flanged, unflanged
                        table[0].append(x_end)
                        table[1].append(end)
                else:
                    parts = [f"{k} {v:.3g}" for k, v in end.to_dict().items()]
                    table[0].append(x_end)
                    table[1].append(", ".join(parts) or "free")
            for key, (xe, names) in (("end_held", held), ("end_table", table)):
                with m[key].hold_sync():
                    m[key].x = np.array(xe, dtype=float)
                    m[key].y = np.zeros(len(xe))
                    m[key].names = names
            with m["attachments"].hold_sync():
                at = np.array([a.at for a in line.attachments], dtype=float)
                m["attachments"].x = at
                m["attachments"].y = np.zeros(at.size)
            for name in ("drive_at", "response_at"):
                w = self.controls[name]
                w.max = line.length
                w.step = line.length / 1000
            with m["drive"].hold_sync():
                m["drive"].x = [self.drive_at]
                m["drive"].y = [0.0]
        finally:
            self._busy = False

    def _field_values(self) -> tuple[np.ndarray, dl.FRF]:
        c = self.controls
        f = float(c["frequency"].value)
        x = np.linspace(0.0, self.line.length, self.n_points)
        q = c["quantity"].value
        if self.line.damping.model == "modal":
            H = dl.frf(self.line, [f], drive_at=self.drive_at, response_at=x, drive=self.drive,
                       quantity=q, method="modal", modes=self._ms, coupling=c["coupling"].value)
        else:
            H = dl.frf(self.line, [f], drive_at=self.drive_at, response_at=x, drive=self.drive,
                       quantity=q, method="exact")
        return x, H

    def _update_field(self) -> None:
        x, H = self._field_values()
        self.field_x, self.field = x, H
        u = np.asarray(H)[0]
        env = _finite(np.abs(u))
        m = self.marks
        fsel = float(self.controls["frequency"].value)
        with m["envelope"].hold_sync():
            m["envelope"].x = x
            m["envelope"].y = np.vstack([env, -env])
        top = np.nanmax(env) if np.any(np.isfinite(env)) and np.nanmax(env) > 0 else 1.0
        self._ys_field.min, self._ys_field.max = -_MARGIN * float(top), _MARGIN * float(top)
        label = dict((v, k) for k, v in self.controls["quantity"].options)[self.controls["quantity"].value]
        self._ax_field.label = f"{label} ({H.unit})"
        self._draw_shape()
        self._busy = True
        try:
            with m["response"].hold_sync():
                m["response"].x = [self.response_at]
                m["response"].y = [0.0]
            with m["drive"].hold_sync():
                m["drive"].x = [self.drive_at]
                m["drive"].y = [0.0]
            for k in ("cursor", "phase_cursor"):
                with m[k].hold_sync():
                    m[k].x = [fsel, fsel]
            self._selector.selected = np.array([fsel])
        finally:
            self._busy = False
        self.figures["field"].title = f"Response along the line at {fsel:.5g} Hz"

    def _draw_shape(self) -> None:
        if not hasattr(self, "field"):
            return
        phi = 2 * math.pi * self.controls["animate"].value / (self.controls["animate"].max + 1)
        u = np.asarray(self.field)[0]
        with np.errstate(invalid="ignore", over="ignore"):   # inf at an undamped resonance
            shape = _finite(np.real(u * np.exp(1j * phi)))
        with self.marks["shape"].hold_sync():
            self.marks["shape"].x = self.field_x
            self.marks["shape"].y = shape

    # ------------------------------------------------------------------ exports
    def _export_dir(self) -> Path:
        folder = Path(self.controls["export_folder"].value.strip() or ".").expanduser()
        folder.mkdir(parents=True, exist_ok=True)
        return folder

    def _export_path(self, name: str) -> Path:
        return self._export_dir() / name

    def _export(self, fn) -> None:
        try:
            out = fn()
        except Exception as exc:
            self.status.value = (f"<span style='color:{_RED}'><b>Export failed:</b> "
                                 f"{html.escape(type(exc).__name__)}: {html.escape(str(exc))}</span>")
            return
        paths = out if isinstance(out, (list, tuple)) else [out]
        self.status.value = ("<span style='color:" + _GREEN + "'>Wrote " +
                             ", ".join(html.escape(str(p)) for p in paths) + "</span>")

    def export_svg(self, folder) -> list[Path]:
        """The FRF (magnitude and phase) and the field along the line as SVG files
        (``frf.svg``, ``phase.svg``, ``field.svg`` in ``folder``), drawn from the
        computed arrays by the kernel, so no browser is needed."""
        from dampline.svgplot import curves_svg
        folder = Path(folder)
        folder.mkdir(parents=True, exist_ok=True)
        c = self.controls
        xlog = c["frequency_axis"].value == "log"
        ylog = c["magnitude"].value == "log"
        unit = self.frf_modal.unit
        curves = []
        phases = []
        for name, H, colour, dash in (("exact", self.frf_exact, _BLUE, ""),
                                      ("modal", self.frf_modal, _ORANGE, "6 4")):
            if H is None:
                continue
            v = np.asarray(H)[:, 0]
            curves.append((np.abs(v) if ylog else _db(v), name, colour, dash))
            phases.append((np.degrees(np.angle(v)), name, colour, dash))
        title = self.line.title or f"{self.line.kind} line"
        where = f"drive at {self.drive_at:.4g} m, response at {self.response_at:.4g} m"
        ylabel = f"|H| ({unit})" if ylog else f"|H| (dB re 1 {unit})"
        out = [write_text_atomic(folder / "frf.svg", curves_svg(
                   self.freqs, curves, xlabel="frequency (Hz)", ylabel=ylabel,
                   title=f"{title}: {self.frf_modal.quantity}, {where}", xlog=xlog, ylog=ylog)),
               write_text_atomic(folder / "phase.svg", curves_svg(
                   self.freqs, phases, xlabel="frequency (Hz)", ylabel="phase (deg)",
                   title=f"{title}: phase, {where}", xlog=xlog))]
        u = np.asarray(self.field)[0]
        f_sel = float(self.field.frequencies[0])
        label = dict((v, k) for k, v in c["quantity"].options)[self.field.quantity]
        out.append(write_text_atomic(folder / "field.svg", curves_svg(
            self.field_x, [(np.abs(u), "envelope |u|", _BLUE, ""), (u.real, "in phase", _ORANGE, "6 4")],
            xlabel="position x (m)", ylabel=f"{label} ({self.field.unit})",
            title=f"{title}: along the line at {f_sel:.5g} Hz")))
        return out

    def download_png(self) -> list[str]:
        """Ask the browser to download each figure as shown, as PNG (bqplot's
        ``save_png``: needs a live view of the dashboard)."""
        names = []
        for name, fig in list(self.figures.items()) + [("peaks", self.peak_figure)]:
            fig.save_png(f"dampline-{name}.png")
            names.append(f"dampline-{name}.png (browser download)")
        return names

    def export_record(self, folder) -> list[Path]:
        """An executed notebook of the current model (with the dashboard and the modal
        table) and an offline HTML page of it, in ``folder`` (see ``dampline.record``)."""
        from dampline.record import record_model
        res = record_model(self.line, Path(folder), title=self.line.title)
        return [p for p in (res.notebook, res.html) if p is not None]

    def export_toml(self, path) -> Path:
        """The current model as TOML (loads back with ``dl.load``)."""
        return write_text_atomic(path, dl.dumps(self.line))

    def export_csv(self, path) -> Path:
        """The FRF curves (exact and modal) with a header naming units."""
        mo = self.frf_modal
        u = mo.unit
        cols = [self.freqs]
        head = ["frequency [Hz]"]
        curves = [("modal", np.asarray(mo)[:, 0])]
        if self.frf_exact is not None:
            curves.insert(0, ("exact", np.asarray(self.frf_exact)[:, 0]))
        for name, v in curves:
            head += [f"{name} real [{u}]", f"{name} imag [{u}]", f"{name} magnitude [{u}]",
                     f"{name} level [dB re 1 {u}]", f"{name} phase [deg]"]
            cols += [v.real, v.imag, np.abs(v), _db(v), np.degrees(np.angle(v))]
        meta = (f"# dampline FRF: {self.line.title or self.line.kind}; quantity {mo.quantity} per unit "
                f"{mo.drive}; drive at {mo.drive_at:.10g} m; response at {self.response_at:.10g} m; "
                f"damping {self.line.damping.model}; modal coupling {self.controls['coupling'].value}")
        return write_text_atomic(path, self._csv(meta, head, cols))

    def export_field_csv(self, path) -> Path:
        """The field along the line at the selected frequency."""
        H = self.field
        v = np.asarray(H)[0]
        u = H.unit
        head = ["x [m]", f"real [{u}]", f"imag [{u}]", f"magnitude [{u}]", "phase [deg]"]
        meta = (f"# dampline field: {self.line.title or self.line.kind}; {H.quantity} at "
                f"{float(H.frequencies[0]):.10g} Hz; drive at {H.drive_at:.10g} m; method {H.method}")
        cols = [self.field_x, v.real, v.imag, np.abs(v), np.degrees(np.angle(v))]
        return write_text_atomic(path, self._csv(meta, head, cols))

    @staticmethod
    def _csv(meta: str, head: list[str], cols: list[np.ndarray]) -> str:
        rows = np.column_stack(cols)
        body = "\n".join(",".join(f"{v:.10g}" for v in r) for r in rows)
        return meta + "\n" + ",".join(head) + "\n" + body + "\n"
