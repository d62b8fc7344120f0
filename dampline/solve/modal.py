"""Modal superposition with the line's damping, decoupled or fully coupled.

With the undamped, mass-normalised modes Phi (Phi^T M Phi = I, Phi^T K Phi =
Omega^2) the response is u = Phi q with

    D(w) q = Phi^T f,   D(w) = K0 + i w C1 - w^2 M1 + sum_k g_k(w) G_k,

where every damping mechanism of the model is projected on the modes:

- modal damping: C1 += diag(2 zeta_n w_n) (elastic modes);
- Rayleigh, C = alpha M + beta K of the assembled line: C1 += alpha I + beta Omega^2;
- loss factors, E -> E (1 + i eta_s) on segment s: K0 += i eta_s Phi^T K_s Phi, the
  segment's modal strain-energy matrix (a duct's complex bulk modulus scales its
  compliance instead: M1 += (1/(1 + i eta_s) - 1) Phi^T M_s Phi);
- dashpots to ground and in absorbers: C1 += c (phi(x) phi(x)^T), with the relative
  motion for an absorber; an anechoic duct end is an analogue dashpot A / (rho c);
- frequency-dependent terms: radiating duct ends (g = i w / Z(w) minus its reactive
  part, already in the modes) and Kirchhoff wall losses.

Proportional damping leaves D diagonal. Otherwise ``coupling="diagonal"`` keeps
only the diagonal (each mode independent, its damping from the modal damping
ratio or the modal strain energy loss factor of Johnson and Kienholz, AIAA J.
20(9), 1982), and ``coupling="full"`` keeps all of D. The full polynomial
D(w) is diagonalised once in state space (complex modes of the damped line), so
that every frequency again costs one matrix product; only the
frequency-dependent duct terms need a dense solve per frequency.

The quasi-static residual of the modes left out (``residual=True``) is the
exact undamped response at a low frequency w0 minus the kept modes' part of it,
damped as one pseudo-mode with the strain-energy-weighted damping of its own
shape (see :func:`residual_field`).
"""

from __future__ import annotations

import math
import threading
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from ..errors import ModelError
from ..families import radiation_end_correction, segment_coefficients, segment_eta, \
    static_coefficients
from ..model.line import AIR, EndTable, Line
from .mesh import build_mesh, end_stiffness, piece_wavenumbers
from .modes import ModeSet, _field, modes as compute_modes

__all__ = ["ModalModel", "modal_model", "modal_frf"]


def _skeleton(line: Line) -> dict:
    """The parts of a model that set its undamped modes (damping values stripped)."""
    d = {"kind": line.kind, "segments": [s.to_dict() for s in line.segments],
         "ends": {side: (e if isinstance(e, str) else e.to_dict())
                  for side, e in zip(("left", "right"), line.ends)}}
    for s in d["segments"]:
        s.pop("eta", None)
    for e in d["ends"].values():
        if isinstance(e, dict):
            e.pop("dashpot", None)
    atts = []
    for a in [a.to_dict() for a in line.attachments]:
        a = dict(a)
        a.pop("dashpot", None)
        if "absorber" in a:
            a["absorber"] = {k: v for k, v in a["absorber"].items() if k != "damping"}
        if len(a) > 1:
            atts.append(a)
    d["attachments"] = atts
    if line.kind == "duct":     # anechoic ends are closed for the undamped modes
        d["ends"] = {k: ("closed" if v == "anechoic" else v) for k, v in d["ends"].items()}
    return d


@dataclass(frozen=True, eq=False)
class Projections:
    """Modal matrices of a ModeSet that do not depend on damping values."""

    seg_K: np.ndarray     # (n_seg, N, N): int over segment s of S phi_i' phi_j' (EI phi'' phi'')
    seg_M: np.ndarray     # (n_seg, N, N): int over segment s of m phi_i phi_j


def projections(ms: ModeSet) -> Projections:
    """Segment strain-energy and kinetic-energy matrices by Gauss-Legendre quadrature of
    the exact mode shapes (points per piece grow with its k h, so the error stays at
    rounding)."""
    cached = ms.__dict__.get("_projections")
    if cached is not None:
        return cached
    mesh = ms.mesh
    line = ms.line
    h = mesh.piece_h
    w = ms.omega
    _, k = piece_wavenumbers(mesh, w, damped=False)
    nq = int(min(600, max(16, np.ceil(1.2 * np.max(k * h, initial=0.0)) + 16)))
    t, wq = np.polynomial.legendre.leggauss(nq)
    p = np.repeat(np.arange(len(h)), nq)
    xi = ((0.5 * (t + 1.0))[None, :] * h[:, None]).ravel()
    wts = (0.5 * wq[None, :] * h[:, None]).ravel()
    order = 2 if mesh.dpn == 2 else 1
    f0 = _field(mesh, w, ms.nodal, p, xi, 0)          # (N, npts)
    fd = _field(mesh, w, ms.nodal, p, xi, order)
    nseg = len(line.segments)
    N = ms.count
    seg_K = np.zeros((nseg, N, N))
    seg_M = np.zeros((nseg, N, N))
    seg_of_pt = mesh.piece_seg[p]
    for s, seg in enumerate(line.segments):
        S0, m0 = static_coefficients(line.kind, seg)
        sel = seg_of_pt == s
        ws = wts[sel]
        seg_K[s] = S0 * (fd[:, sel] * ws) @ fd[:, sel].T
        seg_M[s] = m0 * (f0[:, sel] * ws) @ f0[:, sel].T
    out = Projections(seg_K=seg_K, seg_M=seg_M)
    ms.__dict__["_projections"] = out
    return out


@dataclass(frozen=True, eq=False)
class ModalModel:
    """The projected damping of a line on a ModeSet: D(w) = K0 + i w C1 - w^2 M1 + sum g_k(w) G_k."""

    line: Line
    modes: ModeSet
    K0: np.ndarray
    C1: np.ndarray
    M1: np.ndarray
    terms: tuple[tuple[Callable[[np.ndarray], np.ndarray], np.ndarray], ...]
    mechanisms: tuple = ()

    @property
    def proportional(self) -> bool:
        """True when every damping matrix is diagonal (no coupling through damping)."""
        mats = [self.K0, self.C1, self.M1] + [G for _g, G in self.terms]
        return all(_is_diagonal(A) for A in mats)

    def dynamic_matrix(self, omega: np.ndarray, diagonal: bool = False) -> np.ndarray:
        """D(w) for every frequency: (n_freq, N, N), or its diagonal (n_freq, N)."""
        w = np.asarray(omega, dtype=float)
        if diagonal:
            D = (np.diag(self.K0)[None, :] + 1j * w[:, None] * np.diag(self.C1)[None, :]
                 - (w * w)[:, None] * np.diag(self.M1)[None, :])
            for g, G in self.terms:
                D = D + g(w)[:, None] * np.diag(G)[None, :]
            return D
        D = (self.K0[None] + 1j * w[:, None, None] * self.C1[None]
             - (w * w)[:, None, None] * self.M1[None])
        for g, G in self.terms:
            D = D + g(w)[:, None, None] * G[None]
        return D

    def damping_matrix(self, omega: float | None = None) -> np.ndarray:
        """The modal damping matrix in stiffness units, B = Im D(w) without its elastic
        and inertia parts: w C1 + Im K0 - w^2 Im M1 + Im sum g_k(w) G_k, each pair
        (i, j) taken at w = (w_i + w_j) / 2 unless ``omega`` (rad/s) is given."""
        wn = self.modes.omega
        if omega is None:
            wbar = 0.5 * (wn[:, None] + wn[None, :])
        else:
            wbar = np.full((wn.size, wn.size), float(omega))
        B = wbar * self.C1.real + self.K0.imag - wbar ** 2 * self.M1.imag
        if self.terms:
            u, inv = np.unique(wbar, return_inverse=True)
            safe = np.where(u > 0.0, u, 1e-12 * max(u.max(), 1.0))
            for g, G in self.terms:
                B = B + g(safe).imag[inv].reshape(wbar.shape) * G.real
        return B


def _is_diagonal(A: np.ndarray) -> bool:
    off = A - np.diag(np.diag(A))
    scale = np.abs(np.diag(A)).max(initial=0.0)
    return bool(np.abs(off).max(initial=0.0) <= 1e-13 * max(scale, 1e-300))


def _points(ms: ModeSet, x: float, order: int = 0) -> np.ndarray:
    return shape_at(ms, [x], order)[0]


#: values of mode shapes kept per ModeSet by :func:`shape_at` (entries, all point sets)
_SHAPE_CACHE_ENTRIES = 2_000_000


def shape_at(ms: ModeSet, x, order: int = 0) -> np.ndarray:
    """``ms.shape(x, derivative=order)``, kept on the ModeSet (up to about 16 MB of
    values per set): the drive, response and field points of a dashboard or a study
    are asked for again after every damping move, and each shape value costs a
    transcendental function or a basis evaluation. Read-only."""
    try:
        xs = np.asarray(x, dtype=float).ravel()
    except (TypeError, ValueError):
        return ms.shape(x, derivative=order)            # its ModelError names the input
    size = xs.size * ms.count
    if size > _SHAPE_CACHE_ENTRIES // 4 or isinstance(order, (bool, np.bool_)) \
            or not isinstance(order, (int, np.integer)):
        return ms.shape(x, derivative=order)
    cache = ms.__dict__.setdefault("_shape_cache", {})
    key = (xs.tobytes(), int(order))
    hit = cache.get(key)
    if hit is None:
        hit = ms.shape(xs, derivative=order)
        hit.flags.writeable = False
        if sum(v.size for v in cache.values()) + size > _SHAPE_CACHE_ENTRIES:
            cache.clear()
        cache[key] = hit
    return hit


@dataclass(frozen=True, eq=False)
class Mechanism:
    """One damping mechanism projected on the modes: its share of K0, C1, M1 and terms."""

    name: str
    K0: np.ndarray | None = None      # complex stiffness part (loss factors)
    C1: np.ndarray | None = None      # viscous part
    M1: np.ndarray | None = None      # complex compliance part (duct loss factor)
    terms: tuple = ()
    rank1: tuple = ()                 # ((c, v),): C1 = c v v^T (a dashpot's)

    def diagonal_loss_factor(self, wn: np.ndarray) -> np.ndarray:
        """Each mode's loss factor from this mechanism alone, to first order:
        Im D_nn(w_n) / w_n^2 (the modal strain energy loss factor of Johnson and
        Kienholz for loss factors, 2 zeta for viscous parts)."""
        B = np.zeros(wn.size)
        if self.K0 is not None:
            B += np.diag(self.K0).imag
        if self.C1 is not None:
            B += wn * np.diag(self.C1).real
        if self.M1 is not None:
            B -= wn ** 2 * np.diag(self.M1).imag
        for g, G in self.terms:
            safe = np.where(wn > 0, wn, 1.0)
            B += g(safe).imag * np.diag(G).real
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(wn > 0, B / wn ** 2, np.nan)


def modal_model(line: Line, ms: ModeSet) -> ModalModel:
    """Project the damping of ``line`` on the modes ``ms`` (which must belong to the same
    undamped line: any damping values may differ)."""
    if _skeleton(line) != _skeleton(ms.line):
        raise ModelError("modes", f"ModeSet of {ms.line.title or ms.line.kind!r}", "",
                         "these modes belong to a different geometry or support; "
                         "compute dl.modes(line, count) for this line")
    N = ms.count
    wn = ms.omega
    d = line.damping
    mech: list[Mechanism] = []
    if d.model == "modal":
        z = _zeta_per_mode(d.zeta, ms)
        mech.append(Mechanism("modal damping (zeta)", C1=np.diag(2.0 * z * wn)))
    elif d.model == "rayleigh":
        mech.append(Mechanism("Rayleigh damping", C1=(d.alpha or 0.0) * np.eye(N)
                              + (d.beta or 0.0) * np.diag(wn ** 2)))
    elif d.model == "loss_factor":
        P = projections(ms)
        for s, seg in enumerate(line.segments):
            eta = segment_eta(line, seg)
            if not eta:
                continue
            name = f"segments[{s}] loss factor {eta:g}"
            if line.kind == "duct":
                mech.append(Mechanism(name, M1=(1.0 / (1.0 + 1j * eta) - 1.0) * P.seg_M[s]))
            else:
                mech.append(Mechanism(name, K0=1j * eta * P.seg_K[s]))
    # dashpots, absorbers and radiating ends always act
    for att in line.attachments:
        if att.dashpot:
            v = _points(ms, att.at)
            mech.append(Mechanism(f"dashpot at {att.at:g} m", C1=att.dashpot * np.outer(v, v),
                                  rank1=((att.dashpot, v),)))
    # the absorbers' dashpots of THIS line (the ModeSet may come from the same line with
    # other damping values); the absorbers come in attachment order in both
    current = [a.absorber for a in line.attachments if a.absorber is not None]
    for j, ((node, _ab0), ab) in enumerate(zip(ms.mesh.absorbers, current)):
        if ab.damping:
            v = ms.absorber_amplitudes[:, j] - ms.nodal[:, ms.mesh.dpn * node]
            mech.append(Mechanism(f"absorber at {ms.mesh.x[node]:g} m",
                                  C1=ab.damping * np.outer(v, v), rank1=((ab.damping, v),)))
    for side, e in enumerate(line.ends):
        x = 0.0 if side == 0 else line.length
        where = ("left", "right")[side]
        if isinstance(e, EndTable) and e.dashpot:
            v = _points(ms, x)
            mech.append(Mechanism(f"{where} end dashpot", C1=e.dashpot * np.outer(v, v),
                                  rank1=((e.dashpot, v),)))
        if line.kind == "duct" and e == "anechoic":
            seg = line.segments[0 if side == 0 else -1]
            v = _points(ms, x)
            c_an = seg.area / (seg.rho * seg.c)
            mech.append(Mechanism(f"{where} end anechoic", C1=c_an * np.outer(v, v),
                                  rank1=((c_an, v),)))
        if line.kind == "duct" and e in ("unflanged", "flanged"):
            v = _points(ms, x)
            mech.append(Mechanism(f"{where} end radiation",
                                  terms=((_radiation_term(line, side), np.outer(v, v)),)))
    if line.kind == "duct" and d.wall_losses:
        P = projections(ms)
        terms = []
        for s, seg in enumerate(line.segments):
            gK, gM = _wall_terms(line, s)
            terms += [(gK, P.seg_K[s]), (gM, P.seg_M[s])]
        mech.append(Mechanism("wall losses", terms=tuple(terms)))
    K0 = np.diag(wn ** 2).astype(complex)
    C1 = np.zeros((N, N))
    M1 = np.eye(N, dtype=complex)
    terms_all: list = []
    for m in mech:
        if m.K0 is not None:
            K0 = K0 + m.K0
        if m.C1 is not None:
            C1 = C1 + m.C1
        if m.M1 is not None:
            M1 = M1 + m.M1
        terms_all += list(m.terms)
    return ModalModel(line=line, modes=ms, K0=K0, C1=C1, M1=M1, terms=tuple(terms_all),
                      mechanisms=tuple(mech))


def _zeta_per_mode(zeta, ms: ModeSet) -> np.ndarray:
    """Modal damping ratios: elastic modes in ascending order take the list (its last
    value beyond its end); a callable is evaluated at each mode's frequency (Hz);
    rigid-body modes get none."""
    f = ms.frequencies
    z = np.zeros(ms.count)
    el = np.flatnonzero(f > 0.0)
    if callable(zeta):
        vals = np.array([float(zeta(fi)) for fi in f[el]])
        if not np.all(np.isfinite(vals)) or np.any(vals < 0) or np.any(vals >= 1):
            raise ModelError("damping.zeta", "function", "(damping ratio)",
                             "must give values in [0, 1) at every natural frequency")
    elif isinstance(zeta, (tuple, list)):
        zl = list(zeta)
        vals = np.array([zl[min(i, len(zl) - 1)] for i in range(el.size)])
    else:
        vals = np.full(el.size, float(zeta))
    z[el] = vals
    return z


def _radiation_term(line: Line, side: int):
    seg = line.segments[0 if side == 0 else -1]
    k0 = seg.area / ((seg.rho or AIR["rho"]) * radiation_end_correction(line.ends[side], seg.area))

    def g(w: np.ndarray) -> np.ndarray:
        return end_stiffness(line, side, np.asarray(w, float), damped=True) - k0
    return g


def _wall_terms(line: Line, s: int):
    seg = line.segments[s]
    S0, m0 = static_coefficients(line.kind, seg)

    def gK(w):
        S, _ = segment_coefficients(line, np.asarray(w, float), damped=True)
        return S[:, s] / S0 - 1.0

    def gM(w):
        w = np.asarray(w, float)
        _, W2M = segment_coefficients(line, w, damped=True)
        eta = segment_eta(line, seg)
        base = w * w * m0 / (1.0 + 1j * eta)          # already in M1
        return -(W2M[:, s] - base) / m0
    return gK, gM


# ------------------------------------------------------------------ solving
def _drive_vector(ms: ModeSet, xd: float, drive: str) -> np.ndarray:
    return _points(ms, xd, 1 if drive == "moment" else 0)


def per_line(mm: ModalModel, name: str, compute: Callable[[], Any]) -> Any:
    """``compute()``, kept on the ModeSet for the damped line of ``mm``: the FRF, the
    modal table and the coupling of one line (the dashboard asks for all three after
    every move) share each frequency-independent eigen-solution. One line is kept at
    a time; another line starts afresh."""
    store = mm.modes.__dict__.setdefault("_per_line", [None, {}])
    try:
        same = store[0] is mm.line or bool(store[0] == mm.line)
    except Exception:                  # a model value without a plain equality
        return compute()
    if not same:
        store[0], store[1] = mm.line, {}
    if name not in store[1]:
        store[1][name] = compute()
    return store[1][name]


def k_eigen(mm: ModalModel):
    """M1^-1 K0 = V diag(lam) V^-1: (lam, V, V^-1 M1^-1), or None when V is too
    ill-conditioned to trust (cond > 1e10). Kept per line (:func:`per_line`)."""
    def compute():
        Minv = np.linalg.inv(mm.M1)
        lam, V = np.linalg.eig(Minv @ mm.K0)
        if np.linalg.cond(V) > 1e10:
            return None
        return lam, V, np.linalg.solve(V, Minv)
    return per_line(mm, "k_eigen", compute)


def _state_space(mm: ModalModel):
    """Eigen-decomposition of the polynomial part of D: returns (lam, left, right)
    such that D(w)^(-1) = left @ diag(1/(i w - lam)) @ right, or None when it is
    too ill-conditioned to trust (then the caller solves per frequency)."""
    if not np.any(mm.C1):
        # D = M1 (M1^-1 K0 - w^2): diagonalise M1^-1 K0 = V L V^-1; with i w = s,
        # (L + s^2)^-1 keeps the pole form in w^2
        ke = k_eigen(mm)
        return None if ke is None else ("k", *ke)
    return per_line(mm, "state_space", lambda: _state_space_2n(mm))


def _state_space_2n(mm: ModalModel):
    N = mm.K0.shape[0]
    Minv = np.linalg.inv(mm.M1)
    A = np.zeros((2 * N, 2 * N), dtype=complex)
    A[:N, N:] = np.eye(N)
    A[N:, :N] = -Minv @ mm.K0
    A[N:, N:] = -Minv @ mm.C1
    lam, V = np.linalg.eig(A)
    if np.linalg.cond(V) > 1e10:
        return None
    Vi = np.linalg.inv(V)
    return ("s", lam, V[:N, :], Vi[:, N:] @ Minv)


_BLOCK = 512


def _low_rank(mm: ModalModel, w: np.ndarray, phi_d: np.ndarray, phi_r: np.ndarray):
    """Coupled solution when the viscous damping is diagonal plus a few dashpots
    (C1 = C_diag + P diag(c) P^T, rank r) and the rest is either all diagonal or free of
    viscous diagonal terms: A(w) = K0 + i w C_diag - w^2 M1 is diagonal, or is
    diagonalised once (A = M1 V (L - w^2) V^-1 when C_diag = 0), and the dashpots enter
    by the Sherman-Morrison-Woodbury identity with an r x r solve per frequency. The
    response is then a single (n_freq x N) @ (N x n_resp) product, as decoupled."""
    pairs = [cv for m in mm.mechanisms for cv in m.rank1 if cv[0] > 0]
    N = mm.K0.shape[0]
    C_low = np.zeros((N, N))
    for c, v in pairs:
        C_low += c * np.outer(v, v)
    C_diag = mm.C1 - C_low
    if not _is_diagonal(C_diag):
        return None
    diag_A = _is_diagonal(mm.K0) and _is_diagonal(mm.M1)
    if diag_A:
        lam_w = 1.0 / (np.diag(mm.K0)[None, :] + 1j * w[:, None] * np.diag(C_diag)[None, :]
                       - (w * w)[:, None] * np.diag(mm.M1)[None, :])
        left = phi_r
        b = phi_d.astype(complex)
        Vt_P = None
    elif np.abs(np.diag(C_diag)).max(initial=0.0) == 0.0:
        ke = k_eigen(mm)
        if ke is None:
            return None
        lam, V, Vi = ke
        lam_w = _shifted_inverse(lam, w * w)
        left = phi_r @ V
        b = Vi @ phi_d
        Vt_P = V
    else:
        return None
    if not pairs:
        with np.errstate(divide="ignore", invalid="ignore"):
            return lam_w * b[None, :], left.T
    P = np.array([v for _c, v in pairs]).T                    # (N, r)
    c = np.array([c for c, _v in pairs])
    Q = P.astype(complex) if Vt_P is None else Vi @ P          # V^-1 M1^-1 P
    PtV = P.T.astype(complex) if Vt_P is None else P.T @ V     # P^T V
    # (C^-1 + P^T A^-1 P) z = y, C = diag(i w c), solved as (I + C P^T A^-1 P) z = C y:
    # no 1/c, so a dashpot as small as rounding (even subnormal) simply drops out
    Cw = 1j * w[:, None] * c[None, :]                           # (n_freq, r)
    G = Cw[:, :, None] * np.einsum("rn,fn,ns->frs", PtV, lam_w, Q)
    y = (lam_w * b[None, :]) @ PtV.T                            # P^T A^-1 phi_d
    r = c.size
    G[:, np.arange(r), np.arange(r)] += 1.0
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.linalg.solve(G, (Cw * y)[..., None])[..., 0]
        return lam_w * (b[None, :] - z @ Q.T), left.T


_local = threading.local()


def _scratch(name: str, shape: tuple, dtype) -> np.ndarray:
    """A work array kept between calls (one per name and thread): the modal sums of a
    dashboard or a sweep repeat with the same shapes, and a fresh array of a few MB
    costs more in first-touch page faults than the arithmetic done in it. Only for
    temporaries used up before the next call that asks for the same name: the
    decoupled coefficients (:func:`_decoupled`) go straight into modal_response's
    product; the shifted inverses stay inside :func:`_low_rank`."""
    pool = _local.__dict__.setdefault("pool", {})
    arr = pool.get(name)
    if arr is None or arr.shape != shape or arr.dtype != dtype:
        arr = pool[name] = np.empty(shape, dtype)
    return arr


def _shifted_inverse(lam: np.ndarray, w2: np.ndarray) -> np.ndarray:
    """1 / (lam - w^2), (n_freq, N), in real arithmetic (as :func:`_decoupled`) into a
    work array: only for use inside the caller."""
    out = _scratch("shifted", (w2.size, lam.size), complex)
    a = _scratch("a", (w2.size, lam.size), float)
    den = _scratch("den", (w2.size, lam.size), float)
    np.subtract(lam.real[None, :], w2[:, None], out=a)
    li = lam.imag[None, :]
    np.multiply(a, a, out=den)
    den += li * li
    if not (den.min() > 1e-290 and den.max() < 1e290):
        with np.errstate(divide="ignore", invalid="ignore"):
            out[...] = 1.0 / (lam[None, :] - w2[:, None])
        return out
    np.divide(a, den, out=out.real)
    np.divide(-li, den, out=out.imag)
    return out


def _decoupled(mm: ModalModel, w: np.ndarray, phi_d: np.ndarray, room: int = 0) -> np.ndarray:
    """phi_d / D_nn(w), (n_freq, N + room) complex with ``room`` columns left for the
    caller. The polynomial part in real arithmetic: D = a + i b with
    a = Re K - w Im C - w^2 Re M, b = Im K + w Re C - w^2 Im M, and
    phi / D = phi (a - i b) / (a^2 + b^2), written straight into the real and imaginary
    parts of the result (numpy's complex division, Smith's algorithm, costs several
    times more); where a^2 + b^2 would leave the float range, the complex division."""
    N = phi_d.size
    out = _scratch(f"decoupled+{room}", (w.size, N + room), complex)
    if mm.terms:
        d = mm.dynamic_matrix(w, diagonal=True)
        with np.errstate(divide="ignore", invalid="ignore"):
            out[:, :N] = phi_d[None, :] / d
        return out
    k, c, m = np.diag(mm.K0), np.diag(mm.C1), np.diag(mm.M1)
    w2 = (w * w)[:, None]
    shape = (w.size, N)
    a, den, tmp = (_scratch(name, shape, float) for name in ("a", "den", "tmp"))
    if np.all(m.real == 1.0):                     # mass-normalised modes: M1 = I
        np.subtract(k.real[None, :], w2, out=a)
    else:
        np.multiply(w2, m.real[None, :], out=a)
        np.subtract(k.real[None, :], a, out=a)
    if np.any(c.imag):
        a -= w[:, None] * c.imag[None, :]
    # b: a full array only where it varies with frequency, else one row (broadcast)
    if np.any(c.real) or np.any(m.imag):
        b = _scratch("b", shape, float)
        np.multiply(w[:, None], c.real[None, :], out=b)
        b += k.imag[None, :]
        if np.any(m.imag):
            b -= w2 * m.imag[None, :]
    else:
        b = np.ascontiguousarray(k.imag[None, :])
    with np.errstate(over="ignore", under="ignore"):
        np.multiply(a, a, out=den)
        np.multiply(b, b, out=tmp)
        den += tmp
    # the squares stay in range when every term of D does (|D| < 1e145)
    top = np.abs(k).max() + w2.max() * np.abs(m).max() + w.max() * np.abs(c).max()
    if not (den.min() > 1e-290 and top < 1e145):
        # a zero (an undamped resonance), or squares near the ends of the float range:
        # numpy's complex division, which scales
        with np.errstate(divide="ignore", invalid="ignore"):
            out[:, :N] = (1.0 / (a + 1j * b)) * phi_d[None, :]
        return out
    np.divide(phi_d[None, :], den, out=den)
    np.multiply(a, den, out=out.real[:, :N])
    np.multiply(b, den, out=tmp)
    np.negative(tmp, out=out.imag[:, :N])
    return out


def modal_coefficients(mm: ModalModel, w: np.ndarray, phi_d: np.ndarray, phi_r: np.ndarray,
                       coupling: str):
    """(A, Bt) with the response A @ Bt, A (n_freq, m) and Bt (m, n_resp): m = N for
    decoupled or proportional damping, 2N in state space; None when D has
    frequency-dependent terms or ill-conditioned complex modes (solve per frequency).
    For decoupled damping A is a work array (:func:`_scratch`), valid until the next
    call: use it at once, as :func:`modal_response` does."""
    if coupling == "diagonal" or mm.proportional:
        return _decoupled(mm, w, phi_d), phi_r.T
    if mm.terms:
        return None
    low = _low_rank(mm, w, phi_d, phi_r)
    if low is not None:
        return low
    ss = _state_space(mm)
    if ss is None:
        return None
    form, lam, left, right = ss
    b = right @ phi_d
    a = phi_r @ left                          # (n_resp, m)
    if form == "k":
        poles = lam[None, :] - (w * w)[:, None]
    else:
        poles = 1j * w[:, None] - lam[None, :]
    with np.errstate(divide="ignore", invalid="ignore"):
        return (1.0 / poles) * b[None, :], a.T


def modal_response(mm: ModalModel, omega: np.ndarray, phi_d: np.ndarray, phi_r: np.ndarray,
                   coupling: str, extra: tuple[np.ndarray, np.ndarray] | None = None
                   ) -> np.ndarray:
    """sum over modes of phi_r D(w)^-1 phi_d: (n_freq, n_resp) per unit generalised load.
    ``extra`` = (a(w), r) adds a(w) r, folded into the same matrix product (the residual)."""
    w = np.asarray(omega, dtype=float)
    if extra is not None:
        if coupling == "diagonal" or mm.proportional:
            # the residual's column written into the room left for it
            A = _decoupled(mm, w, phi_d, room=1)
            A[:, -1] = extra[0]
            Bt = np.concatenate([phi_r.T, np.real_if_close(extra[1])[None, :]], axis=0)
            return A @ Bt
        coef = modal_coefficients(mm, w, phi_d, phi_r, coupling)
        if coef is not None:
            A, Bt = coef
            A = np.concatenate([A, extra[0][:, None]], axis=1)
            Bt = np.concatenate([Bt, extra[1][None, :]], axis=0)
            return A @ Bt
        return modal_response(mm, w, phi_d, phi_r, coupling) + extra[0][:, None] * extra[1][None, :]
    if w.size <= 8 and not (coupling == "diagonal" or mm.proportional):
        # a handful of frequencies (the residual's w0): direct solves beat an eigensolution
        D = mm.dynamic_matrix(w)
        q = np.linalg.solve(D, np.broadcast_to(phi_d, (w.size, phi_d.size))[..., None])[..., 0]
        return q @ phi_r.T
    coef = modal_coefficients(mm, w, phi_d, phi_r, coupling)
    if coef is not None:
        return coef[0] @ coef[1]
    out = np.empty((w.size, phi_r.shape[0]), dtype=complex)
    for i in range(0, w.size, _BLOCK):
        D = mm.dynamic_matrix(w[i:i + _BLOCK])
        q = np.linalg.solve(D, np.broadcast_to(phi_d, (D.shape[0], phi_d.size))[..., None])[..., 0]
        out[i:i + _BLOCK] = q @ phi_r.T
    return out


def _undamped(line: Line) -> Line:
    """The same line without any damping: no model, loss factors, dashpots or radiation."""
    from ..model.line import Attachment, Damping
    segs = tuple(type(sg)(**{**sg.__dict__, "eta": None}) for sg in line.segments)
    atts = []
    for a in line.attachments:
        ab = a.absorber
        if ab is not None:
            ab = type(ab)(mass=ab.mass, stiffness=ab.stiffness, damping=0.0)
        kw = {k: getattr(a, k) for k in ("mass", "spring", "rot_spring", "rot_inertia")}
        if any(v is not None for v in kw.values()) or ab is not None:
            atts.append(Attachment(at=a.at, absorber=ab, **kw))
    ends = tuple(e if isinstance(e, str) else EndTable(spring=e.spring, mass=e.mass,
                                                       rot_spring=e.rot_spring,
                                                       rot_inertia=e.rot_inertia)
                 for e in line.ends)
    if line.kind == "duct":
        # radiating ends keep their end-correction mass (the modes' own support)
        ends = tuple("closed" if e == "anechoic" else e for e in ends)
    return line.replace(segments=segs, attachments=tuple(atts), ends=ends, damping=Damping())


def _residual_shape(ms: ModeSet, line: Line, xd: float, drive: str) -> dict:
    """The residual shape r(x) for a unit load at xd (damping-independent, so cached on
    the ModeSet for every damping change): its evaluator and its strain energy per
    segment and kinetic energy (distributed part)."""
    from .exact import _field as exact_field, _point_load, _solve_dense, _solve_second_order
    cache = ms.__dict__.setdefault("_residual_cache", {})
    key = (float(xd), drive)
    if key in cache:
        return cache[key]
    wn = ms.omega
    el = wn[ms.n_rigid:]
    # a mode far below the others (a line on a very soft support) would make the kept
    # modes' share at w0 dwarf the residual and cancel it to rounding noise (measured:
    # 30 % error at 3 kHz for a bar on a 1.2 N/m spring): start from the first mode
    # within 1e-3 of the highest kept one (and, should a soft mode sit near a tenth of
    # it, from halfway between them in log scale)
    j = int(np.argmax(el >= 1e-3 * el[-1]))
    w0 = 0.1 * el[j]
    if j and el[j - 1] > 0.5 * w0:
        w0 = math.sqrt(el[j - 1] * el[j])
    w0 = np.array([w0])
    target = _undamped(line)
    # the load gets no node of its own: a node a hair from another (a drive 4 mm from a
    # beam's end) makes a piece whose stiffness EI/h^3 swamps the matrix (measured: the
    # residual, a small difference of the rigid-body-dominated response and the kept
    # modes' share, then broke reciprocity by 2e-3); the exact solution's local split
    # of the piece carries the load instead
    mesh = build_mesh(target)
    solve = _solve_second_order if mesh.dpn == 1 else _solve_dense
    rhs = np.zeros((1, mesh.n_dof), dtype=complex)
    particular = _point_load(mesh, w0, xd, 1 if drive == "moment" else 0, np.ones(1), rhs)
    U, S, k = solve(mesh, w0, rhs, None, (False, False))
    share = _drive_vector(ms, xd, drive) / (wn ** 2 - w0[0] ** 2)

    memo: dict = {}

    def r_at(x, o):
        # memoised: every damping change re-reads the same points (read-only results)
        x = np.asarray(x, dtype=float)
        key = (x.tobytes(), o) if x.size <= 4096 else None
        if key is not None and key in memo:
            return memo[key]
        p, xi = mesh.locate(x)
        val = (exact_field(mesh, S, k, U, p, xi, particular, o)[0].real
               - ms.shape(x, derivative=o) @ share)
        if key is not None and len(memo) < 256:
            val.setflags(write=False)
            memo[key] = val
        return val

    # energies of the residual shape, segment by segment (Gauss-Legendre per piece)
    dorder = 2 if mesh.dpn == 2 else 1
    _, kk = piece_wavenumbers(ms.mesh, wn, damped=False)
    nq = int(min(600, max(16, np.ceil(1.2 * np.max(kk * ms.mesh.piece_h, initial=0.0)) + 16)))
    t, wq = np.polynomial.legendre.leggauss(nq)
    # pieces, cut at the load (where the field kinks)
    x0 = np.unique(np.concatenate([mesh.x, [xd]]))
    h = np.diff(x0)
    x0, h = x0[:-1][h > 0], h[h > 0]
    xs = (x0[:, None] + 0.5 * h[:, None] * (t + 1.0)[None, :]).ravel()
    ws = (0.5 * h[:, None] * wq[None, :]).ravel()
    segs = np.repeat(mesh.piece_seg[mesh.locate(x0 + 0.5 * h)[0]], nq)
    coef = np.array([static_coefficients(line.kind, sg) for sg in line.segments])
    e = coef[segs, 0] * ws * r_at(xs, dorder) ** 2
    strain = np.bincount(segs, weights=e, minlength=len(line.segments))
    kin = coef[segs, 1] * ws * r_at(xs, 0) ** 2
    kinetic_seg = np.bincount(segs, weights=kin, minlength=len(line.segments))
    out = {"r_at": r_at, "strain": strain, "kinetic": float(kin.sum()),
           "kinetic_seg": kinetic_seg}
    cache[key] = out
    return out


def residual_field(mm: ModalModel, xd: float, drive: str, xr: np.ndarray, order: int
                   ) -> tuple[np.ndarray, Callable[[np.ndarray], np.ndarray]]:
    """Residual of the modes left out, for a unit force (or moment, or analogue load) at
    xd, as the field derivative ``order`` at xr, and its damping factor.

    The left-out modes respond quasi-statically, so together they act as one
    pseudo-mode whose shape r(x) is the exact undamped response at a low frequency w0
    (a tenth of the first elastic natural frequency, not counting modes below 1e-3 of
    the highest kept one, which ride on soft supports) minus the kept modes' share:
    r = sum over n > N of phi_n phi_n(x_d) / (w_n^2 - w0^2), within O(w0^2/w_(N+1)^2)
    of the static residual. Its damping is that of its own strain and kinetic energy,
    the modal strain energy rule of Johnson and Kienholz applied to r: with
    k_R = r^T K r, h_R = sum eta_s r^T K_s r, c_R = r^T C r and m_R = r^T M r the
    residual at w is r k_R / (k_R + i h_R + i w (c_R + alpha m_R + beta k_R)).
    (Measured on a stepped bar with one segment at eta 0.3: this keeps the coupled
    modal sum within 0.05 dB of exact, where an undamped residual leaves 0.23 dB and
    a residual carrying the coupled damping of the kept modes 0.22 dB.)"""
    ms, line = mm.modes, mm.line
    if ms.count <= ms.n_rigid:
        return np.zeros(len(xr)), lambda w: np.ones(np.shape(w))
    shape = _residual_shape(ms, line, xd, drive)
    r_at = shape["r_at"]
    R = r_at(xr, order)
    d = line.damping
    if d.model == "modal":
        return R, lambda w: np.ones(np.shape(w))
    etas = np.array([segment_eta(line, sg) if line.kind != "duct" else 0.0
                     for sg in line.segments])
    kR = float(shape["strain"].sum())
    hR = float((etas * shape["strain"]).sum())
    mR = float(shape["kinetic"])
    cR = 0.0
    terms: list = []
    for att in line.attachments:
        r0 = r_at(np.array([att.at]), 0)[0]
        kR += (att.spring or 0.0) * r0 ** 2
        mR += (att.mass or 0.0) * r0 ** 2
        cR += (att.dashpot or 0.0) * r0 ** 2
        if ms.mesh.dpn == 2:
            r1 = r_at(np.array([att.at]), 1)[0]
            kR += (att.rot_spring or 0.0) * r1 ** 2
            mR += (att.rot_inertia or 0.0) * r1 ** 2
    for side, e in enumerate(line.ends):
        x = np.array([0.0 if side == 0 else line.length])
        r0 = r_at(x, 0)[0]
        if isinstance(e, EndTable):
            kR += e.spring * r0 ** 2
            mR += e.mass * r0 ** 2
            cR += e.dashpot * r0 ** 2
            if ms.mesh.dpn == 2:
                r1 = r_at(x, 1)[0]
                kR += e.rot_spring * r1 ** 2
                mR += e.rot_inertia * r1 ** 2
        elif line.kind == "duct" and e == "anechoic":
            seg = line.segments[0 if side == 0 else -1]
            cR += seg.area / (seg.rho * seg.c) * r0 ** 2
        elif line.kind == "duct" and e in ("unflanged", "flanged"):
            terms.append((_radiation_term(line, side), r0 ** 2))
    if line.kind == "duct" and d.wall_losses:
        for s_, _seg in enumerate(line.segments):
            gK, gM = _wall_terms(line, s_)
            terms += [(gK, shape["strain"][s_]), (gM, shape["kinetic_seg"][s_])]
    alpha = (d.alpha or 0.0) if d.model == "rayleigh" else 0.0
    beta = (d.beta or 0.0) if d.model == "rayleigh" else 0.0
    if kR <= 0.0:
        return R, lambda w: np.ones(np.shape(w))

    def scale(w):
        w = np.asarray(w, dtype=float)
        den = kR + 1j * hR + 1j * w * (cR + alpha * mR + beta * kR)
        for g, G in terms:
            den = den + g(np.maximum(w, 1e-300)) * G     # radiation, wall losses
        return kR / den
    return R, scale


_ORDER = {"receptance": 0, "mobility": 0, "accelerance": 0, "pressure": 0, "rotation": 1,
          "velocity": 1, "volume_velocity": 1, "moment": 2, "stress": 2, "shear": 3}


def resolve_modes(line: Line, modes) -> ModeSet:
    if isinstance(modes, ModeSet):
        return modes
    if modes is None:
        raise ModelError("modes", None, "", "method 'modal' needs modes= (a count or a ModeSet "
                         "from dl.modes)")
    if isinstance(modes, bool) or not isinstance(modes, (int, np.integer)) or modes < 1:
        raise ModelError("modes", modes, "", "must be a number of modes (at least 1) or a ModeSet")
    return compute_modes(line, int(modes))


def modal_frf(line: Line, f: np.ndarray, xd: float, xr: np.ndarray, drive: str, quantity: str,
              modes, coupling: str = "full", residual: bool = True) -> np.ndarray:
    """Modal-superposition FRF values (n_freq, n_resp); see the module docstring."""
    if coupling not in ("full", "diagonal"):
        raise ModelError("coupling", coupling, "", "use 'full' or 'diagonal'")
    if not isinstance(residual, (bool, np.bool_)):
        raise ModelError("residual", residual, "", "must be True or False")
    if drive == "velocity":
        raise ModelError("drive", drive, "", "an imposed end velocity changes the modes' "
                         "support; use method='exact' for it")
    ms = resolve_modes(line, modes)
    mm = modal_model(line, ms)
    order = _ORDER.get(quantity, 3 if line.kind == "bending" else 1)
    phi_d = _drive_vector(ms, xd, drive)
    phi_r = shape_at(ms, xr, order)                              # (n_resp, N)
    res = residual_field(mm, xd, drive, xr, order) if residual else None

    def chunk(fc: np.ndarray) -> np.ndarray:
        return _modal_tail(line, ms, mm, 2.0 * math.pi * fc, xd, xr, drive, quantity, coupling,
                           phi_d, phi_r, res)

    from .exact import by_frequency_chunks
    return by_frequency_chunks(chunk, f, xr.size + ms.count + 1)


def _modal_tail(line, ms, mm, omega, xd, xr, drive, quantity, coupling, phi_d, phi_r, res):
    """The frequency-dependent part of :func:`modal_frf` for one chunk of frequencies."""
    w = omega[:, None]
    extra = None
    if res is not None:
        R, scale = res
        extra = (scale(omega).astype(complex), R.astype(complex))
    H = modal_response(mm, omega, phi_d, phi_r, coupling, extra)  # field per unit load
    if drive == "volume_velocity":
        H = H * (1j * w)                        # analogue load of a source Q: i w Q
    if quantity in ("receptance", "pressure", "rotation"):
        return H
    if quantity == "mobility":
        return 1j * w * H
    if quantity == "accelerance":
        return -w * w * H
    mesh = ms.mesh
    p, _xi = mesh.locate(xr)
    segs = mesh.piece_seg[p]
    S, _ = segment_coefficients(line, omega, damped=True)
    Sr = S[:, segs]
    if quantity == "moment":
        return Sr * H
    if quantity == "stress":
        return Sr * H * np.array([line.segments[s].fibre / line.segments[s].I for s in segs])
    if quantity in ("shear",) or (quantity == "force" and line.kind == "bending"):
        return -Sr * H
    N = Sr * H
    if quantity == "force":
        return N
    Q = 1j * N / w
    if quantity == "volume_velocity":
        return Q
    return Q / np.array([line.segments[s].area for s in segs])
