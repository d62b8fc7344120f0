"""Frequencies that sit exactly on a resonance of a line with no damping at all.

Near an undamped natural frequency w_n the response is

    H(w) = C / (w_n^2 - w^2) + R(w),     C = phi_n(x_d) phi_n(x_r) (mass-normalised modes),

with R regular (modal expansion of the receptance; e.g. Ewins, Modal Testing). Within
rounding of w_n the dynamic stiffness is singular to working precision: a direct solve
returns a large number of no meaning when C != 0, and a wrong finite number even when
C = 0 (drive or response at a node of the mode), because the null vector enters with
an arbitrary amplitude. So, on a line without any damping, every frequency within
:data:`DETECT` (relative) of a natural frequency is settled from the pair symmetric in
w^2, w_-+^2 = w_n^2 (1 -+ d), d = :data:`STEP`:

    A = (H_- - H_+) / 2 = C / (d w_n^2),   R(w_n) = (H_- + H_+) / 2 + O(d^2),

and the value returned is ``inf`` (complex, with a :class:`dampline.ResonanceWarning`)
where the residue C / w_n^2 = d |A| is above rounding (:data:`RESIDUE_RTOL` of the
row's level), else the finite limit R(w_n).

The frequency sqrt(k/m) of an absorber without damping is settled the same way (with a
much smaller d): there its apparent mass k m / (k - m w^2) is infinite, it pins its
point and the response is regular, but the condensed point stiffness divides by zero.

The natural frequencies are located by the Wittrick-Williams count of the undamped
line (the exact method) or taken from the ModeSet in use (the modal method).
"""

from __future__ import annotations

import math
import warnings
from typing import Callable

import numpy as np

from ..errors import ResonanceWarning
from ..model.line import EndTable, Line

__all__ = ["DETECT", "STEP", "settle"]

#: relative distance from a natural frequency within which a frequency is on it
DETECT = 1.0e-11
#: relative half-width of the symmetric pair that settles such a frequency
STEP = 1.0e-6
#: residue C / w_n^2 below this fraction of the row's level counts as zero (a node)
RESIDUE_RTOL = 1.0e-7
#: the pair's half-width in w^2 at an undamped absorber's frequency: its point is pinned
#: to within d k_line / k_absorber, whose square must stay below rounding
ABSORBER_STEP = 1.0e-12
#: fast-count window that finds candidates before the roots are refined
_SCREEN = 1.0e-7


def _counting_line(line: Line, side: int | None) -> Line | None:
    """The line whose natural frequencies are the resonances of the response: the line
    itself, or with the end an imposed velocity drives held (None when that end keeps
    rotational elements a plain end word cannot carry)."""
    if side is None:
        return line
    e = line.ends[side]
    if line.kind == "duct":
        held = "closed"
    elif line.kind != "bending":
        held = "fixed"
    elif isinstance(e, EndTable):
        if e.rot_spring or e.rot_inertia:
            return None
        held = "pinned"
    else:
        held = "clamped" if e in ("clamped", "sliding") else "pinned"
    ends = list(line.ends)
    ends[side] = held
    return line.replace(ends=tuple(ends))


def exact_hits(line: Line, f: np.ndarray, side: int | None = None
               ) -> tuple[np.ndarray, np.ndarray]:
    """(indices into f, natural frequencies Hz) of the frequencies within DETECT of an
    undamped natural frequency of ``line`` (driven at ``side`` by an imposed velocity)."""
    from .modes import _Counter, _find_roots
    none = (np.zeros(0, dtype=int), np.zeros(0))
    cl = _counting_line(line, side)
    pos = np.flatnonzero(f > 0)
    if cl is None or pos.size == 0:
        return none
    counter = _Counter(cl)
    w = 2.0 * math.pi * f[pos]
    # counts in blocks: the count assembles a dense matrix per frequency
    block = max(16, 2_000_000 // max(counter.free.size, 1) ** 2)
    j_lo = np.concatenate([counter(w[a:a + block] * (1 - _SCREEN))
                           for a in range(0, w.size, block)])
    j_hi = np.concatenate([counter(w[a:a + block] * (1 + _SCREEN))
                           for a in range(0, w.size, block)])
    cand = np.flatnonzero(j_hi > j_lo)
    if cand.size == 0:
        return none
    targets, owner = [], []
    for c in cand:
        for t in range(int(j_lo[c]) + 1, int(j_hi[c]) + 1):
            targets.append(t)
            owner.append(c)
    targets = np.asarray(targets)
    owner = np.asarray(owner)
    roots = _find_roots(counter, targets, float(w[cand].max()) * (1 + 2 * _SCREEN))
    rel = np.abs(w[owner] - roots) / roots
    idx, fn = [], []
    for c in cand:
        mine = owner == c
        best = int(np.argmin(np.where(mine, rel, np.inf)))
        if rel[best] <= DETECT:
            idx.append(pos[c])
            fn.append(roots[best] / (2.0 * math.pi))
    return np.asarray(idx, dtype=int), np.asarray(fn)


def modal_hits(frequencies: np.ndarray, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(indices into f, mode frequencies Hz) where f lies within DETECT of an elastic
    mode of the set (the modal sum's own poles)."""
    fn = np.asarray(frequencies, dtype=float)
    fn = fn[fn > 0]
    if fn.size == 0:
        return np.zeros(0, dtype=int), np.zeros(0)
    j = np.clip(np.searchsorted(fn, f), 1, fn.size - 1) if fn.size > 1 else \
        np.zeros(f.size, dtype=int)
    near = np.where(np.abs(fn[j] - f) <= np.abs(fn[j - 1] - f), fn[j], fn[j - 1]) \
        if fn.size > 1 else fn[j]
    hit = np.abs(near - f) <= DETECT * near
    return np.flatnonzero(hit), near[hit]


def settle(values: np.ndarray, f: np.ndarray, idx: np.ndarray, fn: np.ndarray,
           solve: Callable[[np.ndarray], np.ndarray], step: float | np.ndarray = STEP
           ) -> np.ndarray:
    """Replace the rows ``idx`` of ``values`` (frequencies ``f`` on natural frequencies
    ``fn``) by inf or by the finite limit, from ``solve`` at fn (1 -+ STEP) (see the
    module docstring); warns once with the frequencies where the response is infinite."""
    if idx.size == 0:
        return values
    values = np.array(values, dtype=complex, copy=True)
    step = np.broadcast_to(np.asarray(step, dtype=float), fn.shape)
    pair = np.concatenate([fn * np.sqrt(1.0 - step), fn * np.sqrt(1.0 + step)])
    H = np.asarray(solve(pair))
    Hm, Hp = H[:fn.size], H[fn.size:]
    A = 0.5 * (Hm - Hp)
    R = 0.5 * (Hm + Hp)
    residue = step[:, None] * np.abs(A)
    level = np.maximum(np.abs(R), residue).max(axis=1, keepdims=True)
    infinite = residue > RESIDUE_RTOL * level
    values[idx] = np.where(infinite, complex(np.inf, np.inf), R)
    rows = idx[infinite.any(axis=1)]
    if rows.size:
        warnings.warn(f"undamped resonance at {f[rows][:5].tolist()} Hz"
                      f"{' and more' if rows.size > 5 else ''}: the line has no damping, "
                      "so the response there is infinite (returned as inf); add damping "
                      "or move the frequency", ResonanceWarning, stacklevel=4)
    return values


def absorber_hits(line: Line, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(indices into f, absorber frequencies Hz) where f lies within DETECT of the
    frequency sqrt(k/m) of an absorber without damping of its own. There the absorber's
    apparent mass k m / (k - m w^2) is infinite: it pins its point and the response is
    regular (finite), but the condensed point stiffness divides by zero."""
    d = line.damping
    if d.model == "rayleigh" and ((d.alpha or 0.0) > 0 or (d.beta or 0.0) > 0):
        return np.zeros(0, dtype=int), np.zeros(0)   # Rayleigh damps the absorbers too
    fa = np.array(sorted({a.absorber.frequency_hz for a in line.attachments
                          if a.absorber is not None and a.absorber.damping == 0.0}))
    if fa.size == 0:
        return np.zeros(0, dtype=int), np.zeros(0)
    return modal_hits(fa, f)


def exact_response(line: Line, f: np.ndarray, side: int | None,
                   run: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
    """``run(f)`` (the exact solution), with the frequencies on a resonance of a line
    without damping, and on the frequency of an undamped absorber, settled (see the
    module docstring)."""
    from ..checks import undamped
    idx, fn = exact_hits(line, f, side) if undamped(line) else (np.zeros(0, dtype=int),
                                                                np.zeros(0))
    ia, fa = absorber_hits(line, f)
    keep = ~np.isin(ia, idx)
    step = np.concatenate([np.full(idx.size, STEP), np.full(int(keep.sum()), ABSORBER_STEP)])
    idx, fn = np.concatenate([idx, ia[keep]]), np.concatenate([fn, fa[keep]])
    if idx.size == 0:
        return run(f)
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        # the direct solve's own inf or NaN there is replaced below, with the right warning
        warnings.simplefilter("ignore", ResonanceWarning)
        values = run(f)
    return settle(values, f, idx, fn, run, step)


def modal_response(line: Line, frequencies: np.ndarray, f: np.ndarray,
                   run: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
    """``run(f)`` (a modal sum over modes of the given frequencies, Hz), with the
    frequencies on one of those modes settled when the line has no damping."""
    from ..checks import undamped
    if not undamped(line):
        return run(f)
    idx, fn = modal_hits(frequencies, f)
    if idx.size == 0:
        return run(f)
    with np.errstate(all="ignore"):
        values = run(f)
    return settle(values, f, idx, fn, run)
