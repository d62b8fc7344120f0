"""The least damping that keeps every peak of a band below a level."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import checks
from ..errors import ModelError
from ..model.line import Attachment, Damping, Line
from ..solve.exact import frf
from ..solve.modes import modes as compute_modes


@dataclass(frozen=True)
class DampingNeeded:
    """Result of :func:`damping_needed`: the smallest ``value`` (in ``unit``) of the
    mechanism that brings the band's largest |H| to ``limit``; levels in H's unit."""

    mechanism: str
    value: float
    unit: str
    limit: float
    level_before: float
    level_after: float
    band_hz: tuple[float, float]


def _band_max(fn, band, n: int) -> float:
    """Largest |H| over the band: a grid, then a fine grid around the largest sample."""
    f = np.linspace(band[0], band[1], n)
    a = np.abs(fn(f))
    i = int(np.argmax(a))
    lo, hi = f[max(i - 2, 0)], f[min(i + 2, n - 1)]
    g = np.linspace(lo, hi, 201)
    return float(max(a.max(), np.abs(fn(g)).max()))


def damping_needed(line: Line, band_hz, limit: float, drive_at: float, response_at: float, *,
                   mechanism: str = "loss_factor", at: float | None = None,
                   quantity: str | None = None, drive: str = "force",
                   n_freq: int = 2000, modes: int = 40, rtol: float = 1e-3) -> DampingNeeded:
    """Smallest uniform loss factor (``mechanism="loss_factor"``, exact solution), modal
    damping ratio (``"zeta"``, modal sum with ``modes`` modes) or dashpot to ground at
    ``at`` (``"dashpot"``, exact) that keeps max |H| over ``band_hz`` at or below
    ``limit`` (in the quantity's unit). The level falls monotonically with a loss
    factor or zeta, found by bisection in log scale; a dashpot's effect is not
    monotonic (a stiff enough dashpot pins the point), so the smallest sufficient value
    is bracketed by a log scan first."""
    line = checks.solvable(line)
    mechanism = checks.word("mechanism", mechanism, ("loss_factor", "zeta", "dashpot"))
    n_freq = checks.whole("n_freq", n_freq, low=3, high=1_000_000)
    modes = checks.whole("modes", modes, high=100_000)
    rtol = checks.real("rtol", rtol, "", low=0.0, low_open=True, high=0.5)
    try:
        band = (float(band_hz[0]), float(band_hz[1]))
    except (TypeError, ValueError, IndexError):
        raise ModelError("band_hz", band_hz, "Hz", "must be (low, high)") from None
    if not (0 < band[0] < band[1]) or not all(map(math.isfinite, band)):
        raise ModelError("band_hz", band_hz, "Hz", "must be 0 < low < high, finite")
    if not (isinstance(limit, (int, float)) and limit > 0 and math.isfinite(limit)):
        raise ModelError("limit", limit, "", "must be a positive level in the FRF's unit")
    xr = checks.position(line, "response_at", response_at)
    segs = tuple(s if s.eta is None else type(s)(**{**s.__dict__, "eta": None})
                 for s in line.segments)
    base = line.replace(segments=segs, damping=Damping())
    if mechanism == "loss_factor":
        lo_v, hi_v, unit = 1e-6, 2.0, "(loss factor)"

        def model(v):
            return base.replace(damping=Damping(model="loss_factor", eta=v))

        def H(v, f):
            return np.asarray(frf(model(v), f, drive_at, [xr], drive=drive,
                                  quantity=quantity))[:, 0]
    elif mechanism == "zeta":
        lo_v, hi_v, unit = 1e-6, 0.99, "(damping ratio)"
        ms = compute_modes(base, modes)

        def H(v, f):
            return np.asarray(frf(base.replace(damping=Damping(model="modal", zeta=v)), f,
                                  drive_at, [xr], drive=drive, quantity=quantity,
                                  method="modal", modes=ms))[:, 0]
    elif mechanism == "dashpot":
        if at is None:
            raise ModelError("at", None, "m", "a dashpot needs its position")
        xa = checks.position(line, "at", at)
        unit = "N m s/rad" if line.kind == "torsion" else "N s/m"
        lo_v, hi_v = None, None

        def H(v, f):
            m = line.replace(attachments=line.attachments + (Attachment(at=xa, dashpot=v),))
            return np.asarray(frf(m, f, drive_at, [xr], drive=drive, quantity=quantity))[:, 0]
    else:
        raise ModelError("mechanism", mechanism, "", "use 'loss_factor', 'zeta' or 'dashpot'")

    def level(v):
        return _band_max(lambda f: H(v, f), band, n_freq)

    if mechanism == "dashpot":
        before = _band_max(lambda f: np.asarray(frf(line, f, drive_at, [xr], drive=drive,
                                                    quantity=quantity))[:, 0], band, n_freq)
    else:
        before = level(lo_v)
    if mechanism == "dashpot":
        grid = np.logspace(-3, 9, 49)
        levels = np.array([level(v) for v in grid])
        ok = np.flatnonzero(levels <= limit)
        if not ok.size:
            raise ModelError("limit", limit, "", f"no dashpot at {xa:g} m brings the band below it "
                             f"(best {levels.min():.4g} at {grid[levels.argmin()]:.3g} {unit})")
        if ok[0] == 0:
            return DampingNeeded(mechanism, float(grid[0]), unit, limit, before, levels[0], band)
        lo_v, hi_v = grid[ok[0] - 1], grid[ok[0]]
    elif level(hi_v) > limit:
        raise ModelError("limit", limit, "", f"even {mechanism} = {hi_v:g} leaves the band above "
                         "it; the level is set by something damping cannot reach")
    for _ in range(200):
        if hi_v / lo_v - 1.0 <= rtol:
            break
        mid = math.sqrt(lo_v * hi_v)
        if level(mid) <= limit:
            hi_v = mid
        else:
            lo_v = mid
    return DampingNeeded(mechanism, float(hi_v), unit, float(limit), before, level(hi_v), band)
