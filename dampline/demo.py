"""Demo: a two-step titanium ultrasonic horn, end to end.

Run ``python -m dampline.demo [--out DIR]``. It prints the natural frequencies
and the resonance peaks of the driven horn, and writes an HTML report and two SVG plots (FRF in
dB, first mode shapes over the horn outline) and the model TOML to ``DIR``
(default ``./dampline-demo``). The scenario is our own; the plots are plain
SVG text, so the demo needs nothing beyond the engine (numpy).
"""

from __future__ import annotations

import argparse
import math
from pathlib import Path
from typing import Sequence

import numpy as np

import dampline as dl
from dampline.svgplot import Axes as _Axes

__all__ = ["HORN", "main"]


def _area(diameter_mm: float) -> float:
    return math.pi * (diameter_mm * 1e-3) ** 2 / 4.0


_TI = {"E": 113e9, "rho": 4430.0}   # titanium Ti-6Al-4V, handbook values
#: the demo model: a free-free stepped horn, driven at its large face, tool mass at the tip
HORN = {
    "title": "Two-step titanium ultrasonic horn",
    "kind": "axial",
    "segments": [
        {"length": 0.060, "area": _area(40.0), **_TI},
        {"length": 0.045, "area": _area(25.0), **_TI},
        {"length": 0.040, "area": _area(12.0), **_TI},
    ],
    "ends": {"left": "free", "right": "free"},
    "attachments": [{"at": 0.145, "mass": 0.004}],
    "damping": {"model": "loss_factor", "eta": 0.002},
}

_COLOURS = ("#1f5fa8", "#c8501e", "#2e8b3a", "#8a3fa0")
_DASH = "4 3"


def frf_svg(H: dl.FRF, natural_hz: np.ndarray, labels: Sequence[str], title: str) -> str:
    """SVG text of 20 log10 |H| against frequency (linear axis).

    Parameters
    ----------
    H : FRF
        The response; one curve per column, dB re 1 in the unit of ``H``.
    natural_hz : ndarray
        Natural frequencies (Hz); those inside the band get a dashed mark.
    labels : sequence of str
        Legend text, one per column.
    title : str

    Returns
    -------
    str
        A self-contained SVG document.
    """
    f_khz = H.frequencies / 1e3
    db = H.db()
    finite = db[np.isfinite(db)]
    ylim = (10 * math.floor(finite.min() / 10), 10 * math.ceil(finite.max() / 10))
    ax = _Axes((80, 40, 620, 330), (f_khz[0], f_khz[-1]), ylim)
    ax.frame("frequency (kHz)", f"|H| (dB re 1 {H.unit})")
    for fn in natural_hz[(natural_hz >= H.frequencies[0]) & (natural_hz <= H.frequencies[-1])]:
        x = float(ax.px(fn / 1e3))
        ax.add(f'<line x1="{x:.1f}" y1="{ax.top}" x2="{x:.1f}" y2="{ax.top + ax.height}" '
               f'stroke="#777" stroke-dasharray="{_DASH}"/>')
        ax.text(x, ax.top - 4, f"{fn / 1e3:.2f}", font_size="10", fill="#555")
    db = np.clip(db, *ylim)                     # an exact zero (-inf dB) sits on the axis
    for j, label in enumerate(labels):
        ax.polyline(f_khz, db[:, j], _COLOURS[j])
    ax.legend([(lab, _COLOURS[j], "") for j, lab in enumerate(labels)]
              + [("natural frequency (kHz)", "#777", _DASH)])
    return ax.svg(title, 740, 450)


def modes_svg(line: dl.Line, m: dl.ModeSet, which: Sequence[int], title: str) -> str:
    """SVG text of mode shapes along the line over the outline of its segments.

    Parameters
    ----------
    line : Line
        The line; the outline is drawn from each segment's area as a circle.
    m : ModeSet
        Modes of ``line``; each shape is scaled to a peak of 1.
    which : sequence of int
        Indices of the modes to draw (at most four).
    title : str

    Returns
    -------
    str
        A self-contained SVG document.
    """
    L = line.length
    x = np.linspace(0.0, L, 400)
    ax = _Axes((80, 40, 620, 300), (0.0, L * 1e3), (-1.2, 1.2))
    # the outline to scale (radius from area), shrunk only if it would not fit
    px_mm = ax.width / (L * 1e3)
    px_unit = ax.height / (ax.ylim[1] - ax.ylim[0])
    r_max = max(math.sqrt(s.area / math.pi) for s in line.segments) * 1e3
    k = min(1.0, 0.45 * ax.height / (r_max * px_mm))
    pts = []
    for x0, x1, s in zip(line.boundaries, line.boundaries[1:], line.segments):
        r = math.sqrt(s.area / math.pi) * 1e3 * px_mm * k / px_unit
        pts += [(x0 * 1e3, r), (x1 * 1e3, r)]
    outline = pts + [(a, -b) for a, b in reversed(pts)]
    ax.add('<polygon points="' + " ".join(f"{float(ax.px(a)):.1f},{float(ax.py(b)):.1f}"
                                          for a, b in outline)
           + '" fill="#e6e6e6" stroke="#aaa"/>')
    for att in line.attachments:
        ax.add(f'<circle cx="{float(ax.px(att.at * 1e3)):.1f}" cy="{float(ax.py(0)):.1f}" r="5" '
               'fill="#555"/>')
    ax.frame("position along the horn (mm)", "mode shape (peak = 1)")
    phi = m.shape(x)
    entries = []
    for j, i in enumerate(which):
        col = phi[:, i] / np.max(np.abs(phi[:, i]))
        ax.polyline(x * 1e3, col, _COLOURS[j], width=2.0)
        entries.append((f"mode {i + 1}: {m.frequencies[i] / 1e3:.2f} kHz", _COLOURS[j], ""))
    ax.legend(entries)
    scaled = "to scale" if k == 1.0 else "radius scaled"
    ax.text(ax.left, ax.top + ax.height + 80, f"grey: outline ({scaled}); dot: point mass",
            anchor="start", font_size="11", fill="#555")
    return ax.svg(title, 740, 450)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the horn demo: print the results, write the plots and the model.

    Parameters
    ----------
    argv : sequence of str, optional
        Command-line arguments (``--out DIR``); ``None`` reads ``sys.argv``.

    Returns
    -------
    int
        0, the process exit status.
    """
    parser = argparse.ArgumentParser(prog="python -m dampline.demo",
                                     description=__doc__.split("\n")[0])
    parser.add_argument("--out", default="dampline-demo",
                        help="output folder (default ./dampline-demo)")
    args = parser.parse_args(None if argv is None else [str(a) for a in argv])
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)

    line = dl.Line.from_dict(HORN)
    L = line.length
    print(line.title)
    print(f"{len(line.segments)} segments, length {L * 1e3:.1f} mm, free-free, "
          f"tool mass {line.attachments[0].mass * 1e3:.1f} g at the tip, loss factor "
          f"{line.damping.eta}")

    fn = dl.natural_frequencies(line, count=6)
    print("\nNatural frequencies (undamped):")
    for i, f in enumerate(fn):
        print(f"  mode {i + 1}: {f:10.2f} Hz" + ("  (rigid body)" if f == 0.0 else ""))

    freqs = np.linspace(100.0, 60e3, 2000)
    H = dl.frf(line, freqs, drive_at=0.0, response_at=[0.0, L], drive="force",
               quantity="receptance", method="exact")
    gain = np.asarray(H)[:, 1] / np.asarray(H)[:, 0]        # tip / input displacement
    print(f"\nFRF: {H!r}")
    for col, name in ((0, "input (x = 0)"), (1, f"tip (x = {L * 1e3:.0f} mm)")):
        peaks = H.peaks(col)
        print(f"\nPeaks of the {name} receptance (half-power bandwidth on a "
              f"{freqs[1] - freqs[0]:.0f} Hz grid):")
        print(f"  {'f (Hz)':>10} {'|H| (' + H.unit + ')':>14} {'bandwidth (Hz)':>15} "
              f"{'Q':>7} {'|tip/input|':>12}")
        for f, mag, bw in zip(peaks.frequency, peaks.magnitude, peaks.bandwidth):
            q = f / bw if np.isfinite(bw) and bw > 0 else float("nan")
            g = abs(np.interp(f, freqs, gain))
            print(f"  {f:10.1f} {mag:14.4e} {bw:15.1f} {q:7.0f} {g:12.2f}")
    print(f"  (a loss factor eta gives Q = 1/eta = {1 / line.damping.eta:.0f} for every mode)")

    m = dl.modes(line, count=5)
    elastic = [i for i in range(m.count) if m.frequencies[i] > 0.0][:4]
    written = [out / "horn_frf.svg", out / "horn_modes.svg", out / "horn.toml"]
    written[0].write_text(frf_svg(H, fn, ["input receptance (x = 0)",
                                          f"tip receptance (x = {L * 1e3:.0f} mm)"],
                                  f"{line.title}: force at x = 0"), encoding="utf-8")
    written[1].write_text(modes_svg(line, m, elastic, f"{line.title}: first elastic modes"),
                          encoding="utf-8")
    dl.save(line, written[2])
    # one self-contained page with both plots and the caution, for a report or a browser
    report = out / "horn_report.html"
    caution = ("A linear model of an idealised line: verify resonances and gain by test, "
               "check the fatigue of every resonating part at the working amplitude, and "
               "defer to the applicable codes and licensed engineering practice.")
    report.write_text(
        "<!DOCTYPE html>\n<html><head><meta charset=\"utf-8\"><title>"
        f"{line.title}</title></head>\n<body style=\"font-family: sans-serif\">\n"
        f"<h1>{line.title}</h1>\n" + written[0].read_text(encoding="utf-8")
        + written[1].read_text(encoding="utf-8")
        + f"<p>Natural frequencies (Hz): {', '.join(f'{v:.1f}' for v in fn)}</p>\n"
        + f"<p><strong>Caution.</strong> {caution}</p>\n</body></html>\n", encoding="utf-8")
    written.append(report)
    print("\nWritten:")
    for path in written:
        print(f"  {path}")
    print("\nCaution: a linear model. Verify resonances and gain by test before use, and "
          "check the fatigue of every resonating part at the working amplitude.")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
