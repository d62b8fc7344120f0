"""Exact frequency responses of uniform lines against closed forms.

Time convention e^{+i w t}. A loss factor is the complex modulus E (1 + i eta)
(complex bulk modulus for a duct), so k = w sqrt(m / S*) is complex; every
closed form below is even in k, so the branch does not matter except in the
exponentially scaled forms, written with Im k <= 0.

Derivations used (each repeated beside its test):

* free-free bar, force F at x = 0 along +x: equilibrium of the end gives
  S* u'(0) = -F; with u = C cos k(L - x),
  u(x) = -F cos k(L - x) / (k S* sin kL), so u(0)/F = -cot(kL) / (k S*) and, by the
  same steps for a force at L, u(0)/F(L) = -1 / (k S* sin kL) (textbook; e.g. Doyle,
  Wave Propagation in Structures, 1997).
* fixed-free bar, Green's function for a force at a:
  u(x) = sin(k x<) cos(k (L - x>)) / (k S* cos kL), x< = min(x, a), x> = max(x, a).
* closed duct, piston velocity v at x = 0: p(x) = -i rho c v cos k(L - x) / sin kL
  (Kinsler et al., Fundamentals of Acoustics), with rho c -> w rho / k when lossy.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

import dampline as dl
from _reference_tools import check

E, RHO, AREA, L = 2.1e11, 7850.0, 2.0e-4, 0.9
C = math.sqrt(E / RHO)
F1 = C / (2 * L)                                     # free-free fundamental (Hz)


def _bar(left, right, eta=None):
    seg = {"length": L, "E": E, "rho": RHO, "area": AREA}
    spec = {"kind": "axial", "segments": [seg], "ends": {"left": left, "right": right}}
    if eta is not None:
        spec["damping"] = {"model": "loss_factor", "eta": eta}
    return dl.Line.from_dict(spec)


def _k_and_stiffness(f, eta):
    """Complex wave number (Im k <= 0) and S* = E (1 + i eta) A."""
    w = 2 * math.pi * np.asarray(f, float)
    Es = E * (1 + 1j * eta)
    k = w * np.sqrt(RHO / Es)
    k = np.where(k.imag > 0, -k, k)
    return w, k, Es * AREA


def _band():
    """4000 frequencies across 40 free-free modes, with the resonances n c / 2L and the
    fixed-free ones (2n - 1) c / 4L among them."""
    f = np.linspace(0.05 * F1, 40.3 * F1, 4000 - 80)
    f = np.concatenate([f, F1 * np.arange(1, 41), F1 * (np.arange(1, 41) - 0.5)])
    return np.sort(f)


X = np.linspace(0.0, L, 13)


# ------------------------------------------------------------- free-free bar
@pytest.mark.parametrize("eta", [0.01, 0.001])
def test_free_free_bar_driving_point_and_transfer(eta):
    f = _band()
    line = _bar("free", "free", eta)
    w, k, Ss = _k_and_stiffness(f, eta)
    kL = k * L
    # driving point u(0)/F(0) = -cot(kL) / (k S*) (derived in the module docstring)
    H00 = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=[0.0]))[:, 0]
    check("free-free driving point -cot(kL)/(kEA)", H00, -np.cos(kL) / np.sin(kL) / (k * Ss),
          rtol=1e-10)
    # transfer u(0)/F(L) = -1 / (k S* sin kL)
    H0L = np.asarray(dl.frf(line, f, drive_at=L, response_at=[0.0]))[:, 0]
    check("free-free transfer -1/(kEA sin kL)", H0L, -1.0 / (k * Ss * np.sin(kL)), rtol=1e-10)
    # field u(x)/F(0) = -cos k(L - x) / (k S* sin kL) and internal force
    # N = S* u' = -sin k(L - x) / sin kL (tension positive)
    Hx = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=X))
    ref = -np.cos(np.outer(kL, 1) - np.outer(k, X)) / (k * Ss * np.sin(kL))[:, None]
    scale = np.abs(ref).max(axis=1, keepdims=True)
    check("free-free field u(x)/F(0)", Hx / scale, ref / scale, rtol=1e-10, atol=1e-10)
    Nx = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=X, quantity="force"))
    Nref = -np.sin(np.outer(kL, 1) - np.outer(k, X)) / np.sin(kL)[:, None]
    check("free-free internal force S* u'", Nx / np.abs(Nref).max(axis=1, keepdims=True),
          Nref / np.abs(Nref).max(axis=1, keepdims=True), rtol=1e-10, atol=1e-10)
    # the end load is carried into the bar as N(0) = -F (compression for a push)
    check("free-free N(0) = -F", Nx[:, 0], -np.ones(f.size), rtol=1e-10)


def test_mobility_and_accelerance_are_derivatives_of_receptance():
    # e^{i w t}: velocity = i w u, acceleration = -w^2 u (any vibration text; Inman)
    f = _band()[::10]
    eta = 0.02
    line = _bar("free", "free", eta)
    w, k, Ss = _k_and_stiffness(f, eta)
    u = -np.cos(k * L) / np.sin(k * L) / (k * Ss)
    mob = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=[0.0], quantity="mobility"))[:, 0]
    acc = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=[0.0], quantity="accelerance"))[:, 0]
    check("mobility = i w receptance (closed form)", mob, 1j * w * u, rtol=1e-10)
    check("accelerance = -w^2 receptance (closed form)", acc, -w * w * u, rtol=1e-10)


def test_undamped_free_free_bar_off_resonance():
    f = _band()
    n = f / F1
    # keep 1e-3 away from the undamped poles (n c / 2L) and, since a relative error of an
    # exact zero means nothing, from the driving point's zeros ((n - 1/2) c / 2L)
    f = f[(np.abs(n - np.round(n)) > 1e-3) & (np.abs(n - 0.5 - np.round(n - 0.5)) > 1e-3)]
    line = _bar("free", "free")
    w, k, Ss = _k_and_stiffness(f, 0.0)
    H = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=[0.0, L]))
    check("undamped free-free driving point", H[:, 0], -1 / np.tan(k * L) / (k * Ss), rtol=1e-9)
    check("undamped free-free transfer", H[:, 1], -1 / np.sin(k * L) / (k * Ss), rtol=1e-9)


# ------------------------------------------------------------- fixed-free bar
@pytest.mark.parametrize("a", [L, 0.37 * L])
def test_fixed_free_bar_green_function(a):
    # u(x) = sin(k x<) cos(k (L - x>)) / (k S* cos kL) (derived in the module docstring);
    # N(x) = S* u'(x)
    eta = 0.01
    f = _band()
    line = _bar("fixed", "free", eta)
    w, k, Ss = _k_and_stiffness(f, eta)
    xl = np.minimum(X, a)[None, :]
    xg = np.maximum(X, a)[None, :]
    kk = k[:, None]
    den = (k * Ss * np.cos(k * L))[:, None]
    ref = np.sin(kk * xl) * np.cos(kk * (L - xg)) / den
    H = np.asarray(dl.frf(line, f, drive_at=a, response_at=X))
    scale = np.abs(ref).max(axis=1, keepdims=True)
    check("fixed-free Green's function", H / scale, ref / scale, rtol=1e-10, atol=1e-10)
    # internal force: below the load d/dx sin(kx) cos(k(L-a)), above it sin(ka) d/dx cos(k(L-x))
    dref = np.where(X[None, :] < a, kk * np.cos(kk * X) * np.cos(kk * (L - a)),
                    np.sin(kk * a) * kk * np.sin(kk * (L - X))) * Ss / den
    xs = X[np.abs(X - a) > 1e-9]                     # N jumps by -F at the load
    dref = dref[:, np.abs(X - a) > 1e-9]
    N = np.asarray(dl.frf(line, f, drive_at=a, response_at=xs, quantity="force"))
    scale = np.abs(dref).max(axis=1, keepdims=True)
    check("fixed-free internal force S* u'", N / scale, dref / scale, rtol=1e-10, atol=1e-10)
    if a == L:
        check("fixed-free tip receptance tan(kL)/(kEA)", H[:, -1], np.tan(k * L) / (k * Ss),
              rtol=1e-10)


# ------------------------------------------------------------- velocity drive
def test_velocity_drive_on_a_uniform_bar():
    # Unit velocity imposed at an end replaces that end's condition: u(end) = 1/(i w).
    # Driven at x = 0 with the far end free: u(x) = cos k(L - x) / (cos kL i w);
    # driven at x = L with x = 0 fixed: u(x) = sin(kx) / (sin kL i w) (derived: the
    # homogeneous solutions meeting the far-end condition, scaled to the imposed value).
    eta = 0.01
    f = _band()[::4]
    w, k, Ss = _k_and_stiffness(f, eta)
    kk = k[:, None]
    left = np.asarray(dl.frf(_bar("fixed", "free", eta), f, drive_at=0.0, response_at=X,
                             drive="velocity"))
    ref = np.cos(kk * (L - X)) / (np.cos(kk * L) * 1j * w[:, None])
    scale = np.abs(ref).max(axis=1, keepdims=True)
    check("velocity drive at x=0 (closed form)", left / scale, ref / scale, rtol=1e-10, atol=1e-10)
    right = np.asarray(dl.frf(_bar("fixed", "free", eta), f, drive_at=L, response_at=X,
                              drive="velocity"))
    ref = np.sin(kk * X) / (np.sin(kk * L) * 1j * w[:, None])
    scale = np.abs(ref).max(axis=1, keepdims=True)
    check("velocity drive at x=L (closed form)", right / scale, ref / scale, rtol=1e-10, atol=1e-10)
    # the internal force at the driven end is the force the shaker must supply:
    # F = -N(0) at the left end; for the left drive N(0) = S* u'(0) = S* k tan(kL) / (i w)
    N = np.asarray(dl.frf(_bar("fixed", "free", eta), f, drive_at=0.0, response_at=[0.0],
                          drive="velocity", quantity="force"))[:, 0]
    check("velocity drive end force", N, Ss * k * np.tan(k * L) / (1j * w), rtol=1e-10)


STEPPED = [{"length": 0.3, "E": 2.1e11, "rho": 7850.0, "area": 3.0e-4},
           {"length": 0.5, "E": 7.0e10, "rho": 2700.0, "area": 9.0e-4},
           {"length": 0.2, "E": 1.1e11, "rho": 4430.0, "area": 1.2e-4}]
ATTS = [{"at": 0.42, "mass": 0.3, "dashpot": 40.0},
        {"at": 0.8, "absorber": {"mass": 0.2, "stiffness": 3.0e7, "damping": 15.0}}]


@pytest.mark.parametrize("side", [0, 1])
@pytest.mark.parametrize("own_end", ["fixed", "free",
                                     {"spring": 2e7, "mass": 0.4, "dashpot": 30.0}])
def test_velocity_drive_is_the_receptance_ratio(side, own_end):
    # With the driven end's displacement imposed, the rest of the line responds as it
    # does to any load at that end with the same end displacement (uniqueness of the
    # solution with u(end) given): u_v(x) = (u_F(x) / u_F(end)) / (i w), where u_F is the
    # response to a force at that end of the line with that end free (the end's own
    # condition is replaced by the imposed motion).
    xs = np.linspace(0.0, 1.0, 11)
    end = 0.0 if side == 0 else 1.0
    other = {"spring": 5e6, "dashpot": 8.0}
    ends = (own_end, other) if side == 0 else (other, own_end)
    freed = ("free", other) if side == 0 else (other, "free")
    base = {"kind": "axial", "segments": STEPPED, "attachments": ATTS,
            "damping": {"model": "loss_factor", "eta": 0.004}}
    line_v = dl.Line.from_dict({**base, "ends": {"left": ends[0], "right": ends[1]}})
    line_f = dl.Line.from_dict({**base, "ends": {"left": freed[0], "right": freed[1]}})
    f = np.geomspace(50.0, 4.0e4, 700)
    w = 2 * math.pi * f
    Hv = np.asarray(dl.frf(line_v, f, drive_at=end, response_at=xs, drive="velocity"))
    Hf = np.asarray(dl.frf(line_f, f, drive_at=end, response_at=np.append(xs, end)))
    ref = Hf[:, :-1] / Hf[:, -1:] / (1j * w[:, None])
    scale = np.abs(ref).max(axis=1, keepdims=True)
    check("velocity drive = receptance ratio / (i w)", Hv / scale, ref / scale, rtol=1e-9,
          atol=1e-9)
    check("velocity drive imposes u(end) = 1/(i w)", Hv[:, 0 if side == 0 else -1], 1 / (1j * w),
          rtol=1e-12)


# ------------------------------------------------------------- closed duct
RHO_AIR, C_AIR = 1.204, 343.2


@pytest.mark.parametrize("eta", [0.0, 0.02])
def test_closed_duct_driven_by_a_piston(eta):
    # Kinsler et al.: p(x) = -i rho c v cos k(L - x) / sin kL; the particle velocity from
    # Euler's equation i w rho u = -p' is u(x) = v sin k(L - x) / sin kL. With a complex
    # bulk modulus K (1 + i eta), rho c -> w rho / k (derived the same way).
    Ld, S = 2.3, 4.0e-3
    spec = {"kind": "duct", "segments": [{"length": Ld, "area": S}],
            "ends": {"left": "closed", "right": "closed"}}
    if eta:
        spec["damping"] = {"model": "loss_factor", "eta": eta}
    line = dl.Line.from_dict(spec)
    f1 = C_AIR / (2 * Ld)
    f = np.linspace(0.03 * f1, 30.2 * f1, 3000)
    if not eta:
        n = f / f1
        f = f[np.abs(n - np.round(n)) > 1e-3]
    w = 2 * math.pi * f
    k = w / (C_AIR * np.sqrt(1 + 1j * eta))
    k = np.where(k.imag > 0, -k, k)
    kk = k[:, None]
    xs = np.linspace(0.0, Ld, 17)
    # undamped, frequencies within 1e-3 of a resonance amplify rounding by ~1e3
    tol = 1e-10 if eta else 1e-9
    p = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs, drive="velocity"))
    pref = -1j * (w * RHO_AIR / k)[:, None] * np.cos(kk * (Ld - xs)) / np.sin(kk * Ld)
    scale = np.abs(pref).max(axis=1, keepdims=True)
    check("closed duct piston pressure (Kinsler)", p / scale, pref / scale, rtol=tol, atol=tol)
    check("closed duct piston face pressure (Kinsler)", p[:, 0], pref[:, 0], rtol=tol)
    u = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs, drive="velocity",
                          quantity="velocity"))
    uref = np.sin(kk * (Ld - xs)) / np.sin(kk * Ld)
    scale = np.abs(uref).max(axis=1, keepdims=True)
    check("closed duct particle velocity", u / scale, uref / scale, rtol=tol, atol=tol)
    U = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs, drive="velocity",
                          quantity="volume_velocity"))
    check("closed duct volume velocity = S u", U / scale, S * uref / scale, rtol=tol, atol=tol)
    # a volume-velocity source Q = S v at the closed end is the same piston
    pq = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs, drive="volume_velocity"))
    scale = np.abs(pref).max(axis=1, keepdims=True)
    check("closed duct volume source at the end", pq * S / scale, pref / scale, rtol=tol, atol=tol)
    # a piston at x = L moving along +x: p(x) = i w rho v cos(kx) / (k sin kL)
    pr = np.asarray(dl.frf(line, f, drive_at=Ld, response_at=xs, drive="velocity"))
    prref = 1j * (w * RHO_AIR / k)[:, None] * np.cos(kk * xs) / np.sin(kk * Ld)
    scale = np.abs(prref).max(axis=1, keepdims=True)
    check("closed duct piston at x=L", pr / scale, prref / scale, rtol=tol, atol=tol)


def test_closed_duct_interior_volume_source():
    # Green's function of the closed-closed duct for a source Q at a (derived like the
    # free-free bar's, the analogue load being i w Q and the analogue stiffness S/rho):
    # p(x) = -i w rho Q cos(k x<) cos(k (L - x>)) / (S k sin kL)
    Ld, S, a = 1.7, 2.5e-3, 0.61
    line = dl.Line.from_dict({"kind": "duct", "segments": [{"length": Ld, "area": S}],
                              "ends": {"left": "closed", "right": "closed"},
                              "damping": {"model": "loss_factor", "eta": 0.01}})
    f = np.linspace(5.0, 3000.0, 1500)
    w = 2 * math.pi * f
    k = w / (C_AIR * np.sqrt(1 + 0.01j))
    k = np.where(k.imag > 0, -k, k)[:, None]
    xs = np.linspace(0.0, Ld, 15)
    p = np.asarray(dl.frf(line, f, drive_at=a, response_at=xs, drive="volume_velocity"))
    ref = (-1j * w[:, None] * RHO_AIR * np.cos(k * np.minimum(xs, a))
           * np.cos(k * (Ld - np.maximum(xs, a))) / (S * k * np.sin(k * Ld)))
    scale = np.abs(ref).max(axis=1, keepdims=True)
    check("closed duct interior source (Green's function)", p / scale, ref / scale, rtol=1e-10,
          atol=1e-10)


# ------------------------------------------------------------- large damped kL
@pytest.mark.parametrize("kl_max", [1.0e4, 1.0e5])
def test_large_damped_kl_stays_finite_and_exact(kl_max):
    # eta = 0.05: Im(kL) ~ -eta kL / 2 reaches -2500 at kL = 1e5, where cos and sin of
    # kL overflow. The closed forms written with E = exp(-i k x), |E| <= 1:
    #   cot kL = i (1 + E_L^2) / (1 - E_L^2),  1/sin kL = 2 i E_L / (1 - E_L^2),
    #   cos k(L - x) / sin kL = i (E_x + E_{2L - x}) / (1 - E_L^2).
    # Rounding of k is amplified by |Im kL|: rtol 1e-10 leaves room for 2500 eps.
    eta = 0.05
    line = _bar("free", "free", eta)
    f = np.geomspace(0.1 * F1, kl_max / math.pi * F1, 3000)
    w, k, Ss = _k_and_stiffness(f, eta)
    kL = k * L
    with np.errstate(all="ignore"):
        naive = -np.cos(kL) / np.sin(kL) / (k * Ss)
    if kl_max >= 1e5:
        assert not np.all(np.isfinite(naive))       # the regime where naive forms overflow
    EL2 = np.exp(-2j * kL)
    ref0 = -1j * (1 + EL2) / (1 - EL2) / (k * Ss)
    xs = np.array([0.0, 0.001, 0.01, 0.1, 0.5 * L, L])
    H = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs))
    assert np.all(np.isfinite(H))
    check(f"large kL driving point, kL<={kl_max:g} (scaled closed form)", H[:, 0], ref0, rtol=1e-10)
    kk = k[:, None]
    ref = -1j * (np.exp(-1j * kk * xs) + np.exp(-1j * kk * (2 * L - xs))) / (
        (1 - EL2) * k * Ss)[:, None]
    # decayed to below 1e-280 of the drive response: compare as absolute (underflow)
    big = np.abs(ref) > 1e-280 * np.abs(ref0)[:, None]
    check(f"large kL field, kL<={kl_max:g} (scaled closed form)", H[big], ref[big], rtol=1e-9)
    assert np.all(np.abs(H[~big]) <= 1e-270 * np.abs(ref0)[:, None].repeat(xs.size, 1)[~big])
    HL = np.asarray(dl.frf(line, f, drive_at=L, response_at=[0.0]))[:, 0]
    assert np.all(np.isfinite(HL))
    refL = -2j * np.exp(-1j * kL) / (1 - EL2) / (k * Ss)
    ok = np.abs(refL) > 1e-280 * np.abs(ref0)
    check(f"large kL transfer, kL<={kl_max:g} (scaled closed form)", HL[ok], refL[ok], rtol=1e-9)


# ------------------------------------------------------------- Rayleigh damping
def _rayleigh_series(phi_x, phi_y, wn, w, alpha, beta, static_xy):
    """Modal sum of a proportionally damped line (Chopra, Dynamics of Structures,
    classical damping): H = sum phi_n(x) phi_n(y) / (wn^2 - w^2 + i w (alpha + beta wn^2)),
    with the modes left out replaced by their quasi-static part
    (G0(x, y) - sum phi phi / wn^2) / (1 + i w beta), G0 the static flexibility."""
    W = w[:, None]
    D = wn[None, :] ** 2 - W ** 2 + 1j * W * (alpha + beta * wn[None, :] ** 2)
    terms = (phi_x[None, :, :] * phi_y[None, None, :]) / D[:, None, :]
    kept = terms.sum(axis=2)
    static_kept = (phi_x * phi_y[None, :] / wn[None, :] ** 2).sum(axis=1)
    return kept + (static_xy - static_kept)[None, :] / (1 + 1j * w[:, None] * beta)


def _rayleigh_tail_bound(w, alpha, beta, wn_low, amp2, N):
    """Bound on the error of the residual-corrected sum. For each omitted mode the exact
    term minus its quasi-static part is phi phi (w^2 - i w alpha) / (wn^2 (1 + i w beta) D_n),
    D_n = wn^2 - w^2 + i w (alpha + beta wn^2); with |phi_n(x) phi_n(y)| <= amp2 and a lower
    bound wn_low(n) <= wn (|D_n| grows with wn once wn > w) it is summed to n = 10 N;
    beyond, |D_n| >= wn^2 |1 + i w beta| / 2 and wn >= (n - 1) pi c / L give
    sum_{n > K} 2 / ((n - 1) pi c / L)^4 <= 2 (L / (pi c))^4 / (3 (K - 1)^3)."""
    n = np.arange(N + 1, 10 * N + 1)
    wn = wn_low(n)
    W = w[:, None]
    num = np.abs(W ** 2 - 1j * W * alpha)
    assert wn[0] > 2 * w.max()
    D = np.abs(wn ** 2 - W ** 2 + 1j * W * (alpha + beta * wn ** 2))
    s = (amp2 * num / (wn ** 2 * np.abs(1 + 1j * W * beta) * D)).sum(axis=1)
    K = 10 * N
    tail = amp2 * num[:, 0] * 2 * (L / (math.pi * C)) ** 4 / (3 * (K - 1) ** 3)
    return s + tail


def test_rayleigh_damped_bar_equals_modal_series():
    # Rayleigh damping C = alpha M + beta K is classical (Chopra): the exact response is
    # the modal series over the undamped modes phi_n = sqrt(2 / (m L)) sin(k_n x),
    # k_n = (2n - 1) pi / (2L), of the fixed-free bar, static flexibility min(x, y)/(E A).
    w1 = math.pi * C / (2 * L)
    alpha, beta = 0.02 * w1, 1.0e-7
    line = dl.Line.from_dict({"kind": "axial",
                              "segments": [{"length": L, "E": E, "rho": RHO, "area": AREA}],
                              "ends": {"left": "fixed", "right": "free"},
                              "damping": {"model": "rayleigh", "alpha": alpha, "beta": beta}})
    f = np.linspace(0.02 * F1, 12 * F1, 300)
    w = 2 * math.pi * f
    N = 2000
    n = np.arange(1, N + 1)
    kn = (2 * n - 1) * math.pi / (2 * L)
    wn = kn * C
    m = RHO * AREA
    xs = np.array([0.1, 0.35, 0.62, L])
    for y in (L, 0.5 * L):
        phi_x = math.sqrt(2 / (m * L)) * np.sin(np.outer(xs, kn))
        phi_y = math.sqrt(2 / (m * L)) * np.sin(kn * y)
        ref = _rayleigh_series(phi_x, phi_y, wn, w, alpha, beta, np.minimum(xs, y) / (E * AREA))
        H = np.asarray(dl.frf(line, f, drive_at=y, response_at=xs))
        bound = _rayleigh_tail_bound(w, alpha, beta, lambda j: (2 * j - 1) * w1, 2 / (m * L), N)
        err = np.abs(H - ref)
        used = (err / (bound[:, None] + 1e-11 * np.abs(ref))).max()
        print(f"\n[Rayleigh modal series (Chopra)] max rel err "
              f"{(err / np.abs(ref)).max():.2e}, max bound/|H| "
              f"{(bound[:, None] / np.abs(ref)).max():.2e}, fraction of bound used {used:.2e}")
        assert (bound[:, None] / np.abs(ref)).max() < 1e-5    # the check has teeth
        assert used <= 1.0


def test_rayleigh_acts_on_point_masses_too():
    # C = alpha M + beta K with M holding the tip mass: the modes are those of Rao's
    # end-mass bar, phi_n = C_n sin(b_n x), b_n L tan b_n L = m L / M, normalised with the
    # tip mass included; the series above stays exact (Chopra, classical damping).
    M = 0.6 * RHO * AREA * L
    w1 = math.pi * C / (2 * L)
    alpha, beta = 0.05 * w1, 2.0e-7
    line = dl.Line.from_dict({"kind": "axial",
                              "segments": [{"length": L, "E": E, "rho": RHO, "area": AREA}],
                              "ends": {"left": "fixed", "right": {"mass": M}},
                              "damping": {"model": "rayleigh", "alpha": alpha, "beta": beta}})
    m = RHO * AREA
    r = m * L / M
    N = 2000
    roots = np.array([brentq(lambda t: t * math.sin(t) - r * math.cos(t),
                             (j - 1) * math.pi + 1e-14, (j - 1) * math.pi + math.pi / 2,
                             xtol=1e-15, rtol=1e-15) for j in range(1, N + 1)])
    b = roots / L
    Cn = 1 / np.sqrt(m * (L / 2 - np.sin(2 * b * L) / (4 * b)) + M * np.sin(b * L) ** 2)
    wn = b * C
    f = np.linspace(0.02 * F1, 10 * F1, 500)
    w = 2 * math.pi * f
    xs = np.array([0.2, 0.55, L])
    phi_x = Cn * np.sin(np.outer(xs, b))
    phi_y = Cn * np.sin(b * L)
    ref = _rayleigh_series(phi_x, phi_y, wn, w, alpha, beta, xs / (E * AREA))
    H = np.asarray(dl.frf(line, f, drive_at=L, response_at=xs))
    # C_n^2 <= 2 / (m L) / (1 - 1/(2 b_n L)) < 4 / (m L) bounds the amplitudes of the tail
    bound = _rayleigh_tail_bound(w, alpha, beta, lambda j: (j - 1) * math.pi * C / L,
                                 4 / (m * L), N)
    err = np.abs(H - ref)
    used = (err / (bound[:, None] + 1e-11 * np.abs(ref))).max()
    print(f"\n[Rayleigh with tip mass, modal series (Chopra; Rao)] max rel err "
          f"{(err / np.abs(ref)).max():.2e}, fraction of bound used {used:.2e}")
    assert (bound[:, None] / np.abs(ref)).max() < 1e-5
    assert used <= 1.0
