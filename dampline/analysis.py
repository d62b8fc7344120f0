"""Per-mode damping: the modal table and the coupling that damping puts between modes.

Single-mode relations used in the table (any vibration text, e.g. Inman,
Engineering Vibration; Thomson, Theory of Vibration): Q = 1 / (2 zeta) = 1 / eta
at resonance, half-power bandwidth = 2 zeta f_n = eta f_n, and the peak of one
mode's receptance phi_n(x_r) phi_n(x_d) / (w_n^2 eta_n).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import checks
from .errors import ModelError
from .model.line import Line
from .solve.exact import check_position, check_request
from .solve.modal import (ModalModel, k_eigen, modal_model, modal_response, per_line,
                          resolve_modes, shape_at)
from .solve.modes import ModeSet

__all__ = ["ModalTable", "modal_table", "Coupling", "coupling"]


@dataclass(frozen=True, eq=False)
class ModalTable:
    """Columns by name (``table["Q"]`` is an array); ``shares`` gives each damping
    mechanism's loss factor per mode (they add up to the decoupled ``loss_factor``)."""

    columns: dict[str, np.ndarray]
    units: dict[str, str]
    shares: dict[str, np.ndarray] = field(default_factory=dict)

    def __getitem__(self, name: str) -> np.ndarray:
        try:
            return self.columns[name]
        except (KeyError, TypeError):
            raise ModelError("column", name, "", f"unknown column (use {', '.join(self.columns)})"
                             f"{checks.suggest(name, self.columns)}") from None

    def __len__(self) -> int:
        return len(self.columns["frequency"])

    def keys(self):
        return self.columns.keys()

    def limiting_mechanism(self) -> list[str]:
        """For each mode, the mechanism that contributes most of its damping."""
        if not self.shares:
            return ["" for _ in range(len(self))]
        names = list(self.shares)
        S = np.vstack([np.nan_to_num(self.shares[n]) for n in names])
        return [names[i] if S[:, j].max() > 0 else "" for j, i in enumerate(S.argmax(axis=0))]

    def to_csv(self, path=None) -> str:
        """The table as CSV text (header with units); written to ``path`` if given."""
        names = list(self.columns) + [f"share: {n}" for n in self.shares]
        head = ",".join(f"{n} [{self.units.get(n, '')}]" if self.units.get(n) else n
                        for n in names)
        cols = list(self.columns.values()) + list(self.shares.values())
        rows = [",".join(f"{c[i]:.10g}" for c in cols) for i in range(len(self))]
        text = "\n".join([head] + rows) + "\n"
        if path is not None:
            from .model.io import write_text_atomic
            write_text_atomic(path, text)
        return text

    def __repr__(self) -> str:
        show = ["mode", "frequency", "damping_ratio", "loss_factor", "Q", "bandwidth"]
        show += [c for c in ("peak",) if c in self.columns]
        lines = ["  ".join(f"{c:>13s}" for c in show + ["limited by"])]
        lim = self.limiting_mechanism()
        for i in range(len(self)):
            cells = [f"{self.columns[c][i]:13.6g}" for c in show]
            lines.append("  ".join(cells + [lim[i]]))
        return "\n".join(lines)


def _damping_ratios(mm: ModalModel):
    """Coupled damping ratios and damped frequencies from the complex eigenvalues of the
    damped modal model (polynomial part; frequency-dependent duct terms are taken at each
    mode's own frequency, on the diagonal). Returns (zeta, f_damped) per mode, or None."""
    wn = mm.modes.omega
    N = wn.size
    if mm.terms:
        return None
    el = np.flatnonzero(wn > 0)
    zeta = np.full(N, np.nan)
    fd = np.full(N, np.nan)
    if not np.any(mm.C1):
        # hysteretic only: eigenvalues l = w_n^2 (1 + i eta) of M1^-1 K0; at resonance
        # such a mode behaves as zeta = eta / 2 (peak 1/eta, bandwidth eta f_n)
        ke = k_eigen(mm)        # shared with the FRF's diagonalisation of the same line
        lam = ke[0] if ke is not None else np.linalg.eigvals(np.linalg.solve(mm.M1, mm.K0))
        lam = lam[np.argsort(lam.real)][-el.size:] if el.size else lam[:0]
        zeta[el] = 0.5 * lam.imag / lam.real
        fd[el] = np.sqrt(lam.real) / (2 * math.pi)
        return zeta, fd, True
    Minv = np.linalg.inv(mm.M1)
    A = np.zeros((2 * N, 2 * N), dtype=complex)
    A[:N, N:] = np.eye(N)
    A[N:, :N] = -Minv @ mm.K0
    A[N:, N:] = -Minv @ mm.C1
    s = np.linalg.eigvals(A)
    # one root of each oscillating pair; a root whose imaginary part is round-off
    # (|Im| <= 1e-8 |s|: an overdamped motion, e.g. a stiff dashpot's local mode) is no
    # mode's damped pole and must not be matched to one
    s = s[s.imag > 1e-8 * np.abs(s)]
    if s.size == 0 or el.size == 0:
        return None
    # each elastic mode gets the pole nearest to it in log |s| / w_n, one-to-one
    # (assignment problem, scipy's linear_sum_assignment)
    cost = np.abs(np.log(np.abs(s)[None, :] / wn[el][:, None]))
    from scipy.optimize import linear_sum_assignment    # loaded on use: import stays light
    rows, cols = linear_sum_assignment(cost)
    matched = el[rows]
    zeta[matched] = -s[cols].real / np.abs(s[cols])
    fd[matched] = s[cols].imag / (2 * math.pi)
    return zeta, fd, False


def _decoupled_loss_factors(mm: ModalModel):
    """Each mode's decoupled loss factor, from its own pole w^2 = D_nn / M1_nn at w_n
    (eta = Im / Re of that complex w^2, exact for a complex modulus or bulk modulus),
    and the mechanisms' first-order shares scaled to add up to it."""
    wn = mm.modes.omega
    rigid = wn == 0.0
    safe = np.where(rigid, 1.0, wn)
    lam = np.diag(mm.K0) + 1j * safe * np.diag(mm.C1)
    for g, G in mm.terms:
        lam = lam + g(safe) * np.diag(G)
    lam = lam / np.diag(mm.M1)
    with np.errstate(divide="ignore", invalid="ignore"):
        eta_diag = np.where(rigid, np.nan, lam.imag / lam.real)
    raw = {m.name: np.nan_to_num(m.diagonal_loss_factor(wn)) for m in mm.mechanisms}
    total = sum(raw.values()) if raw else np.zeros(wn.size)
    with np.errstate(divide="ignore", invalid="ignore"):
        shares = {k: np.where(rigid, np.nan, np.where(total != 0, v / total * eta_diag, 0.0))
                  for k, v in raw.items()}
    return eta_diag, shares


def _mode_damping(mm: ModalModel, eta_diag: np.ndarray):
    """(zeta, damped frequency Hz, all-hysteretic?) per mode: coupled where the complex
    eigenvalues are available, else from the decoupled loss factor; rigid rows NaN.

    Kept on the ModeSet for the last line it was asked for: the table and the
    coupling of the same damped line (the dashboard asks for both after every move)
    then share one eigen-solution of the 2N state-space matrix."""
    zeta, fd, hysteretic = per_line(mm, "mode_damping",
                                    lambda: _mode_damping_uncached(mm, eta_diag))
    return zeta.copy(), fd.copy(), hysteretic


def _mode_damping_uncached(mm: ModalModel, eta_diag: np.ndarray):
    coupled = _damping_ratios(mm)
    if coupled is not None:
        zeta, fd, hysteretic = coupled
        # a mode left without an oscillating pole (overdamped, or more modes than
        # poles) keeps its decoupled estimate
        gap = (mm.modes.omega > 0) & ~np.isfinite(zeta)
        if gap.any():
            zeta = zeta.copy()
            zeta[gap] = eta_diag[gap] / 2.0
            fd[gap] = mm.modes.frequencies[gap] * np.sqrt(np.clip(1.0 - zeta[gap] ** 2, 0.0, None))
    else:
        zeta = eta_diag / 2.0
        fd = mm.modes.frequencies * np.sqrt(np.clip(1.0 - zeta ** 2, 0.0, None))
        hysteretic = True
    return np.where(mm.modes.omega == 0.0, np.nan, zeta), fd, hysteretic


def _peak_displacement(ms: ModeSet) -> np.ndarray:
    """Largest |phi| of each mode on 801 points along the line (kept on the ModeSet:
    it depends on the undamped modes only)."""
    cache = ms.__dict__
    if "_peak_displacement" not in cache:
        x = np.linspace(0.0, ms.line.length, 801)
        cache["_peak_displacement"] = np.abs(ms.shape(x)).max(axis=0)
    return cache["_peak_displacement"]


def modal_table(line: Line, count: int | ModeSet = 10, *, drive_at: float | None = None,
                response_at: float | None = None, drive: str = "force") -> ModalTable:
    """Per-mode table of the damped line.

    Columns (arrays): ``mode``, ``frequency`` (Hz, undamped), ``damped_frequency``
    (Hz), ``damping_ratio`` (from the complex eigenvalues of the coupled modal model,
    else decoupled), ``loss_factor`` (decoupled: modal strain energy for loss factors,
    2 zeta for viscous parts; Johnson and Kienholz 1982), ``Q`` = 1/(2 zeta),
    ``bandwidth`` (half-power, Hz) = 2 zeta f_n, ``modal_mass`` (kg: the mode scaled
    to a largest displacement of 1), and with ``drive_at`` and ``response_at`` also
    ``peak`` (the receptance peak the mode alone gives: |phi_r phi_d| / (w_n^2 eta) for
    hysteretic damping, with 2 zeta sqrt(1 - zeta^2) in place of eta for viscous)
    and ``peak_db`` (dB re 1). Rigid-body rows have frequency 0 and NaN damping.
    """
    line = checks.solvable(line)
    ms = resolve_modes(line, count)
    mm = modal_model(line, ms)
    wn = ms.omega
    f = ms.frequencies
    rigid = wn == 0.0
    eta_diag, shares = _decoupled_loss_factors(mm)
    zeta, fd, hysteretic = _mode_damping(mm, eta_diag)
    with np.errstate(divide="ignore", invalid="ignore"):
        Q = 1.0 / (2.0 * zeta)
    peak_disp = _peak_displacement(ms)
    cols = {
        "mode": np.arange(1, ms.count + 1, dtype=float),
        "frequency": f,
        "damped_frequency": np.where(rigid, 0.0, fd),
        "damping_ratio": zeta,
        "loss_factor": eta_diag,
        "Q": Q,
        "bandwidth": np.where(rigid, np.nan, 2.0 * zeta * f),
        "modal_mass": 1.0 / peak_disp ** 2,
    }
    units = {"frequency": "Hz", "damped_frequency": "Hz", "bandwidth": "Hz",
             "modal_mass": "kg m^2" if line.kind == "torsion" else "kg"}
    if drive_at is not None or response_at is not None:
        if drive_at is None or response_at is None:
            raise ModelError("response_at" if response_at is None else "drive_at", None, "m",
                             "give both drive_at and response_at for the peak columns")
        drive, _q, xd, _side = check_request(line, drive, None, drive_at)
        xr = float(check_position(line, "response_at", response_at)[0])
        pd = shape_at(ms, [xd], 1 if drive == "moment" else 0)[0]
        pr = shape_at(ms, [xr])[0]
        # receptance peak of one mode: 1/(eta k) hysteretic, 1/(2 zeta sqrt(1 - zeta^2) k)
        # viscous (any vibration text)
        z = np.where(np.isfinite(zeta), zeta, eta_diag / 2.0)
        eta_peak = 2.0 * z if hysteretic else 2.0 * z * np.sqrt(np.clip(1.0 - z * z, 0.0, None))
        with np.errstate(divide="ignore", invalid="ignore"):
            peak = np.abs(pd * pr) / (wn ** 2 * eta_peak)
            cols["peak"] = np.where(rigid, np.nan, peak)
            cols["peak_db"] = 20.0 * np.log10(cols["peak"])
    return ModalTable(columns=cols, units=units, shares=shares)


@dataclass(frozen=True, eq=False)
class Coupling:
    """How damping couples the modes.

    ``matrix``: |B_ij| / sqrt(|B_ii B_jj|) of the modal damping matrix B (stiffness
    units, each pair at its mean frequency); ``index``: per mode, the sum of its
    row of that normalised matrix off the diagonal (0 when damping leaves it alone); ``peak_difference_db``: per elastic
    mode, the decoupled ("diagonal") peak level minus the coupled ("full") one at the
    chosen points, in dB; ``proportional``: True when B is diagonal.
    """

    frequencies: np.ndarray
    damping: np.ndarray
    matrix: np.ndarray
    index: np.ndarray
    peak_difference_db: np.ndarray
    proportional: bool


def _held_ends(line: Line) -> set[int]:
    """Ends (0 left, 1 right) whose displacement (pressure for ducts) is held at zero."""
    return {side for side, e in enumerate(line.ends)
            if isinstance(e, str) and e in ("fixed", "open", "clamped", "pinned")}


def coupling(line: Line, count: int | ModeSet = 10, *, drive_at: float | None = None,
             response_at: float | None = None, points_per_peak: int = 401) -> Coupling:
    """Damping coupling of the modes of ``line`` and what ignoring it costs at each peak.

    Drive and response default to the right end (the left one if the right is held).
    Each peak is resolved on its own fine grid (+-4 half-power bandwidths).
    """
    line = checks.solvable(line)
    points_per_peak = checks.whole("points_per_peak", points_per_peak, low=3, high=100_001)
    ms = resolve_modes(line, count)
    mm = modal_model(line, ms)
    B = mm.damping_matrix()
    d = np.sqrt(np.abs(np.diag(B)))
    with np.errstate(divide="ignore", invalid="ignore"):
        Mn = np.abs(B) / np.outer(d, d)
    Mn = np.where(np.isfinite(Mn), Mn, 0.0)
    index = Mn.sum(axis=1) - np.diag(Mn)
    if drive_at is None:
        # the right end, unless its displacement is held; then the left end, or the middle
        held = {mesh_dof for mesh_dof in _held_ends(line)}
        drive_at = line.length if 1 not in held else (0.0 if 0 not in held else 0.5 * line.length)
    if response_at is None:
        response_at = drive_at
    _drv, _q, xd, _s = check_request(line, "force" if line.kind != "duct" else "volume_velocity",
                                     None, drive_at)
    xr = check_position(line, "response_at", response_at)[:1]
    wn = ms.omega
    # only the damping ratios are needed here, not the whole table
    zeta = _mode_damping(mm, _decoupled_loss_factors(mm)[0])[0]
    diff = np.full(ms.count, np.nan)
    el = np.flatnonzero((wn > 0) & np.isfinite(zeta))
    if el.size:
        half = np.maximum(4.0 * zeta[el] * wn[el], 1e-6 * wn[el])
        grid = wn[el, None] + np.linspace(-1.0, 1.0, points_per_peak)[None, :] * half[:, None]
        grid = np.clip(grid, 1e-9 * wn[el].max(), None)
        w = grid.ravel()
        phi_d = shape_at(ms, [xd])[0]
        phi_r = shape_at(ms, xr)
        full = np.abs(modal_response(mm, w, phi_d, phi_r, "full")[:, 0]).reshape(grid.shape)
        diag = np.abs(modal_response(mm, w, phi_d, phi_r, "diagonal")[:, 0]).reshape(grid.shape)
        with np.errstate(divide="ignore"):
            diff[el] = 20 * np.log10(diag.max(axis=1)) - 20 * np.log10(full.max(axis=1))
    return Coupling(frequencies=ms.frequencies, damping=B, matrix=Mn, index=index,
                    peak_difference_db=diff, proportional=mm.proportional)
