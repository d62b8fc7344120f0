"""Result containers: they carry their frequencies, quantity, unit and method."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["FRF", "Peaks"]


@dataclass(frozen=True)
class Peaks:
    """Resonance peaks of one FRF column: frequency (Hz), |H| and its unit,
    half-power bandwidth (Hz, NaN where the curve does not fall 3 dB on both sides
    inside the band)."""

    frequency: np.ndarray
    magnitude: np.ndarray
    bandwidth: np.ndarray
    unit: str

    def __len__(self) -> int:
        return len(self.frequency)


@dataclass(frozen=True, eq=False)
class FRF:
    """A frequency response: complex ``values`` of shape (n_freq, n_resp) for one drive.

    ``np.asarray(frf)`` gives the complex array. Time convention e^{+i w t}.
    """

    frequencies: np.ndarray   # Hz
    values: np.ndarray        # complex (n_freq, n_resp)
    quantity: str
    unit: str
    drive: str
    drive_at: float
    response_at: np.ndarray   # m
    method: str
    kind: str

    def __array__(self, dtype=None, copy=None):
        v = self.values
        return v if dtype is None else v.astype(dtype)

    @property
    def shape(self) -> tuple[int, int]:
        return self.values.shape

    @property
    def magnitude(self) -> np.ndarray:
        return np.abs(self.values)

    @property
    def phase_deg(self) -> np.ndarray:
        """Phase in degrees, in (-180, 180]."""
        return np.degrees(np.angle(self.values))

    def db(self, reference: float = 1.0) -> np.ndarray:
        """20 log10(|H| / reference); zeros give -inf (never NaN). ``reference`` is a
        positive level in the FRF's unit."""
        from .checks import real
        reference = real("reference", reference, self.unit, low=0.0, low_open=True)
        with np.errstate(divide="ignore"):
            return 20.0 * np.log10(np.abs(self.values) / reference)

    def peaks(self, column: int = 0, *, min_prominence_db: float = 3.0) -> Peaks:
        """Local maxima of |H| in one column, refined by a parabola through the
        three samples in dB, with the half-power (-3 dB) bandwidth read off the
        sampled curve by linear interpolation. Needs frequencies that rise."""
        from .checks import ascending, real, whole
        n_resp = self.values.shape[1]
        if isinstance(column, (int, np.integer)) and not isinstance(column, bool) \
                and -n_resp <= column < 0:
            column += n_resp
        column = whole("column", column, low=0, high=n_resp - 1)
        min_prominence_db = real("min_prominence_db", min_prominence_db, "dB", low=0.0)
        ascending(np.asarray(self.frequencies, float), "frequencies",
                  "peaks are found along a rising sweep")
        f = np.asarray(self.frequencies, float)
        mag = np.abs(self.values[:, column])
        with np.errstate(divide="ignore"):
            y = 20.0 * np.log10(mag)
        if len(f) < 3:
            return Peaks(np.array([]), np.array([]), np.array([]), self.unit)
        i = np.flatnonzero((y[1:-1] > y[:-2]) & (y[1:-1] >= y[2:])) + 1
        fp, yp, bw = [], [], []
        for j in i:
            # prominence: drop to the lower of the minima on either side
            left = y[:j].min() if j > 0 else y[j]
            right = y[j + 1:].min() if j + 1 < len(y) else y[j]
            lo_l = y[np.max(np.flatnonzero(y[:j] >= y[j])) + 1 if np.any(y[:j] >= y[j]) else 0:j]
            lo_r_end = (j + 1 + np.min(np.flatnonzero(y[j + 1:] >= y[j]))) if np.any(y[j + 1:] >= y[j]) else len(y)
            lo_r = y[j + 1:lo_r_end]
            prom = y[j] - max(lo_l.min() if lo_l.size else left, lo_r.min() if lo_r.size else right)
            if not np.isfinite(y[j]) or prom < min_prominence_db:
                continue
            a, b, c = y[j - 1], y[j], y[j + 1]
            den = a - 2 * b + c
            off = 0.5 * (a - c) / den if den != 0 else 0.0
            off = float(np.clip(off, -0.5, 0.5))
            step = 0.5 * (f[j + 1] - f[j - 1])
            fp.append(f[j] + off * step)
            yp.append(b - 0.25 * (a - c) * off)
            bw.append(_half_power(f, y, j, yp[-1]))
        return Peaks(np.asarray(fp), 10.0 ** (np.asarray(yp) / 20.0), np.asarray(bw), self.unit)

    def __repr__(self) -> str:
        return (f"FRF({self.quantity} [{self.unit}], {self.kind}, drive={self.drive!r} at "
                f"{self.drive_at:g} m, {self.values.shape[0]} frequencies "
                f"{self.frequencies[0]:g}-{self.frequencies[-1]:g} Hz, "
                f"{self.values.shape[1]} response points, method={self.method!r})")


def _half_power(f: np.ndarray, y: np.ndarray, j: int, peak_db: float) -> float:
    level = peak_db - 10.0 * np.log10(2.0)
    lo = j
    while lo > 0 and y[lo] > level:
        lo -= 1
    hi = j
    while hi < len(y) - 1 and y[hi] > level:
        hi += 1
    if y[lo] > level or y[hi] > level:
        return float("nan")
    fl = np.interp(level, [y[lo], y[lo + 1]], [f[lo], f[lo + 1]])
    fh = np.interp(level, [y[hi], y[hi - 1]], [f[hi], f[hi - 1]])
    return float(fh - fl)
