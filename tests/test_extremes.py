"""Numerical extremes: long lines in wavelengths with damping, loss factors from 1e-6
to 1, a stiffness contrast of 1e6 between segments, very short segments, repeated
natural frequencies and frequencies exactly on an undamped resonance.

References, all computed here: mpmath at 40-60 digits of the closed forms of a uniform
bar (fixed-free receptance, Graff, Wave Motion in Elastic Solids, longitudinal waves;
with the loss factor as a complex modulus) and of a cantilever (Blevins, Formulas for
Natural Frequency and Mode Shape, Table 8-1 frequency equation; the tip receptance of the
Euler-Bernoulli cantilever from the same solution), mpmath roots of the two-segment
frequency equation derived in test_uniform_lines.py, and the string's Green's function
(Graff, string under a point force).
"""

from __future__ import annotations

import math
import warnings

import mpmath as mp
import numpy as np
import pytest

import dampline as dl
from _reference_tools import check, scan_roots

E, RHO, AREA, LEN = 2.0e11, 7800.0, 1.0e-4, 1.0
C = math.sqrt(E / RHO)


def bar(eta, length=LEN, ends=("fixed", "free")):
    return dl.Line.from_dict({
        "kind": "axial", "segments": [{"length": length, "E": E, "rho": RHO, "area": AREA}],
        "ends": {"left": ends[0], "right": ends[1]},
        "damping": {"model": "loss_factor", "eta": eta}})


def bar_receptance(f, eta, x, xd, length=LEN):
    """u(x) / F of a fixed-free bar (fixed at 0) under a point force at xd:
    sin(k x<) cos(k (L - x>)) / (E* A k cos(k L)), E* = E (1 + i eta), k = w sqrt(rho/E*)
    (Graff; complex modulus), in mpmath: no overflow whatever Im(k L)."""
    with mp.workdps(50):
        Es = mp.mpf(E) * (1 + 1j * mp.mpf(eta))
        k = 2 * mp.pi * mp.mpf(f) * mp.sqrt(mp.mpf(RHO) / Es)
        lo, hi = min(x, xd), max(x, xd)
        v = mp.sin(k * lo) * mp.cos(k * (length - hi)) / (Es * AREA * k * mp.cos(k * length))
        return complex(v)


# ====================================================================== long lines
@pytest.mark.parametrize("eta", [1e-6, 1e-3, 0.05, 1.0])
def test_long_damped_bar_up_to_kL_1e4(eta):
    """k L from 0.3 to 1e4 (about 1,600 wavelengths): sin and cos of the complex k L
    overflow unless written in scaled form; compared with mpmath at 50 digits. The
    undamped phase k L itself carries a relative error ~ k L eps, so rtol grows
    with it."""
    kl = np.array([0.3, 3.0, 31.7, 317.3, 3170.9, 1e4 * (1 - 1e-5)])
    f = kl * C / (2 * math.pi * LEN)
    line = bar(eta)
    xr = [0.0, 0.37, 0.999, LEN]
    H = np.asarray(dl.frf(line, f, drive_at=LEN, response_at=xr))
    ref = np.array([[bar_receptance(fi, eta, x, LEN) for x in xr] for fi in f])
    # the level far from the drive falls as exp(-eta k L / 2): compare each entry with
    # an absolute floor at 1e-12 of the driving-point level
    floor = 1e-12 * np.abs(ref[:, -1:])
    err = np.abs(H - ref) / (np.abs(ref) + floor)
    tol = 1e-9 + 50 * kl[:, None] * np.finfo(float).eps / max(eta, 1e-3)
    print(f"\n[long bar eta={eta:g}] worst err/tol {np.max(err / tol):.2e}")
    assert np.all(err <= tol)


@pytest.mark.parametrize("eta", [1e-4, 0.02, 1.0])
def test_long_damped_cantilever_tip_receptance(eta):
    """Cantilever, tip force: w(L)/F = (sin b cosh b - cos b sinh b) /
    (EI* beta^3 (1 + cos b cosh b)), b = beta L, beta^4 = w^2 rho A / EI*
    (Euler-Bernoulli, Blevins Table 8-1 solution; a function of beta^4 only), for
    beta L up to 300 (cos - cosh cancellation and cosh overflow in plain form)."""
    EI0, m = 2.1e11 * 3e-8, 7850.0 * 4e-4
    line = dl.Line.from_dict({
        "kind": "bending",
        "segments": [{"length": LEN, "E": 2.1e11, "rho": 7850.0, "area": 4e-4, "I": 3e-8}],
        "ends": {"left": "clamped", "right": "free"},
        "damping": {"model": "loss_factor", "eta": eta}})
    bl = np.array([0.5, 7.3, 31.1, 97.7, 301.3])
    w = bl ** 2 * math.sqrt(EI0 / m) / LEN ** 2
    H = np.asarray(dl.frf(line, w / (2 * math.pi), drive_at=LEN, response_at=[LEN]))[:, 0]
    ref = []
    with mp.workdps(60):
        EIs = mp.mpf(EI0) * (1 + 1j * mp.mpf(eta))
        for wi in w:
            beta = (mp.mpf(wi) ** 2 * m / EIs) ** mp.mpf(0.25)
            b = beta * LEN
            num = mp.sin(b) * mp.cosh(b) - mp.cos(b) * mp.sinh(b)
            ref.append(complex(num / (EIs * beta ** 3 * (1 + mp.cos(b) * mp.cosh(b)))))
    check(f"cantilever tip receptance, eta {eta:g} (mpmath)", H, np.array(ref), rtol=1e-9)


# ====================================================================== loss factors
@pytest.mark.parametrize("eta", [1e-6, 1e-4, 1e-2, 0.3, 1.0])
def test_loss_factor_range_at_resonance(eta):
    """At the first undamped resonance of a fixed-free bar the tip receptance is set by
    the loss factor alone (about 8 / (pi^2 eta) times the static L / (E A) for small
    eta): compared with the closed form, exact and modal (uniform loss factor is
    proportional damping, so the modal sum with its residual converges to it)."""
    line = bar(eta)
    f1 = C / (4 * LEN)
    f = f1 * np.array([1.0 - 1e-3, 1.0, 1.0 + 2e-7])
    ref = np.array([bar_receptance(fi, eta, LEN, LEN) for fi in f])
    H = np.asarray(dl.frf(line, f, drive_at=LEN, response_at=[LEN]))[:, 0]
    # at resonance the response amplifies the rounding of k L by 1 / eta
    check(f"tip receptance near f1, eta {eta:g}", H, ref,
          rtol=1e-10 + 10 * np.finfo(float).eps / eta)
    Hm = np.asarray(dl.frf(line, f, drive_at=LEN, response_at=[LEN], method="modal",
                           modes=40))[:, 0]
    # the truncated modes' part is static (residual) plus O((f/f40)^2 eta) dynamic error
    check(f"modal tip receptance near f1, eta {eta:g}", Hm, ref, rtol=2e-6)
    static = LEN / (E * AREA)
    if eta <= 1e-2:
        assert abs(H[1]) / static == pytest.approx(8 / (math.pi ** 2 * eta), rel=2 * eta)


# ====================================================================== contrast
@pytest.mark.parametrize("contrast,ends", [(1e6, "dn"), (1e-6, "dn"), (1e6, "dd")])
def test_stiffness_contrast_1e6_against_mpmath_roots(contrast, ends):
    """Two segments whose moduli differ by 1e6 (impedances by 1e3): natural
    frequencies against mpmath roots of the two-segment frequency equation (u and E A u'
    continuous at the step; the same equation as test_uniform_lines.py:
    fixed-free z1 cos a cos b - z2 sin a sin b, fixed-fixed z1 cos a sin b + z2 sin a cos b,
    a = w t1, b = w t2, z = sqrt(E rho) A, t = L / c)."""
    L1, L2 = 0.6, 0.4
    E2 = E * contrast
    line = dl.Line.from_dict({
        "kind": "axial",
        "segments": [{"length": L1, "E": E, "rho": RHO, "area": AREA},
                     {"length": L2, "E": E2, "rho": RHO, "area": AREA}],
        "ends": {"left": "fixed", "right": "free" if ends == "dn" else "fixed"}})
    c1, c2 = C, math.sqrt(E2 / RHO)
    z1, z2 = math.sqrt(E * RHO) * AREA, math.sqrt(E2 * RHO) * AREA
    t1, t2 = L1 / c1, L2 / c2

    def g(w, lib):
        a, b = w * t1, w * t2
        if ends == "dn":
            return z1 * lib.cos(a) * lib.cos(b) - z2 * lib.sin(a) * lib.sin(b)
        return z1 * lib.cos(a) * lib.sin(b) + z2 * lib.sin(a) * lib.cos(b)

    count = 12
    got = dl.natural_frequencies(line, count)
    # about w (t1 + t2) / pi roots lie below w (a Wittrick-Williams style count)
    w_max = (count + 2) * math.pi / (t1 + t2)
    ref = scan_roots(g, w_max, count, n_grid=2000 * count) / (2 * math.pi)
    # the stiff segment's piece stiffness is 1e6 times the soft one's: the roots hold to
    # a few times contrast x eps (measured 5.7e-10)
    check(f"contrast {contrast:g} ({ends}) f_n (mpmath roots)", got, ref,
          rtol=5 * 1e6 * np.finfo(float).eps)
    # and the damped response across the step stays finite and reciprocal
    lossy = line.replace(damping=dl.Damping(model="loss_factor", eta=0.01))
    f = 1.0003 * got[[0, 5, 11]]
    Hab = np.asarray(dl.frf(lossy, f, drive_at=0.3, response_at=[0.9]))[:, 0]
    Hba = np.asarray(dl.frf(lossy, f, drive_at=0.9, response_at=[0.3]))[:, 0]
    assert np.all(np.isfinite(Hab))
    check("reciprocity across a 1e6 step", Hab, Hba, rtol=1e-8)


# ====================================================================== short segments
def _blevins_cantilever(count):
    def g(t, lib):
        return lib.cos(t) + 1 / lib.cosh(t)
    return scan_roots(g, (count + 1) * math.pi, count, n_grid=4000 * count, w_min=0.5)


@pytest.mark.parametrize("h", [1e-2, 3e-3, 1e-3, 6e-4])
def test_short_segment_inside_a_cantilever_error_law(h):
    """A uniform cantilever cut into three segments, the middle one h long: physically
    the uniform cantilever (Blevins Table 8-1, cos l cosh l = -1, mpmath roots). The
    short piece's stiffness ~ EI/h^3 grades the dynamic stiffness: the natural
    frequencies hold to a few (L/h)^3 eps (the known limitation; see
    dampline.checks.solvable for the refused range)."""
    L, EI, m = 1.7, 2.1e11 * 3e-8, 7850.0 * 4e-4
    seg = {"E": 2.1e11, "rho": 7850.0, "area": 4e-4, "I": 3e-8}
    line = dl.Line.from_dict({
        "kind": "bending",
        "segments": [{**seg, "length": 0.3 * L}, {**seg, "length": h},
                     {**seg, "length": 0.7 * L - h}],
        "ends": {"left": "clamped", "right": "free"}})
    lam = _blevins_cantilever(5)
    ref = lam ** 2 * math.sqrt(EI / (m * L ** 4)) / (2 * math.pi)
    got = dl.natural_frequencies(line, 5)
    predicted = np.finfo(float).eps * (L / h) ** 3
    err = float(np.max(np.abs(got / ref - 1)))
    print(f"\n[short segment h={h:g}] rel err {err:.2e}, (L/h)^3 eps {predicted:.2e}")
    assert err <= 1e-11 + 5 * predicted


# ====================================================================== repeated roots
def test_three_identical_absorbers_give_a_double_root():
    """Three identical absorbers (m, k) at one point: besides the modes they share with
    the bar, two independent motions in which they move against each other with the
    bar at rest, both exactly at w_a = sqrt(k/m) (Den Hartog): a double root. Tuned
    off the bar's modes, the double root must be found twice, not once or three
    times, and the damped response there must stay finite."""
    m_bar = RHO * AREA * LEN
    wa = 1.37 * math.pi * C / (2 * LEN)               # between modes 1 and 2
    ma = 1e-3 * m_bar
    ka = ma * wa ** 2
    atts = [{"at": 0.6, "absorber": {"mass": ma, "stiffness": ka}} for _ in range(3)]
    line = dl.Line.from_dict({
        "kind": "axial", "segments": [{"length": LEN, "E": E, "rho": RHO, "area": AREA}],
        "ends": {"left": "fixed", "right": "free"}, "attachments": atts})
    got = dl.natural_frequencies(line, 6) * 2 * math.pi
    near = np.flatnonzero(np.abs(got / wa - 1) <= 1e-10)
    assert near.size == 2, got / wa
    ms = dl.modes(line, 6)
    x = np.linspace(0.0, LEN, 31)
    for j in near:                                     # the bar stays at rest
        q = ms.absorber_amplitudes[j]
        assert np.abs(ms.shape(x)[:, j]).max() <= 1e-7 * np.abs(q).max()
        assert abs(q.sum()) <= 1e-7 * np.abs(q).max()  # net force on the bar is zero
    # On a damped bar, exactly at w_a the three undamped absorbers have an infinite
    # apparent mass k m / (k - m w^2): they pin x = 0.6, and the tip sees a fixed-free
    # bar of length 0.4: u(L)/F = tan(k l) / (E* A k), l = 0.4 (Graff; complex modulus).
    # (A direct condensation divided by zero there and returned NaN.)
    damped = line.replace(damping=dl.Damping(model="loss_factor", eta=0.01))
    H = np.asarray(dl.frf(damped, [wa / (2 * math.pi)], drive_at=LEN,
                          response_at=[0.6, LEN]))[0]
    with mp.workdps(40):
        Es = mp.mpf(E) * (1 + 0.01j)
        k = mp.mpf(wa) * mp.sqrt(RHO / Es)
        ref = complex(mp.tan(k * 0.4) / (Es * AREA * k))
    assert abs(H[0]) <= 1e-6 * abs(H[1])
    check("tip with the absorbers pinning their point", H[1], ref, rtol=1e-8)


# ====================================================================== on a resonance
T_STR, MU_STR, L_STR = 1.0, 1.0, 0.5      # c = 1 m/s: f_n = n Hz exactly in binary


def _string(damping=None):
    spec = {"kind": "string",
            "segments": [{"length": L_STR, "tension": T_STR, "mass_per_length": MU_STR}]}
    if damping:
        spec["damping"] = damping
    return dl.Line.from_dict(spec)


def string_green(f, x, xd, rel=mp.mpf(0)):
    """u(x)/F of a fixed-fixed string: sin(k x<) sin(k (L - x>)) / (T k sin(k L))
    (Graff), at k = 2 pi f (1 + rel) / c, mpmath at 60 digits."""
    with mp.workdps(60):
        k = 2 * mp.pi * mp.mpf(f) * (1 + rel) / mp.sqrt(mp.mpf(T_STR) / MU_STR)
        lo, hi = min(x, xd), max(x, xd)
        return mp.sin(k * lo) * mp.sin(k * (L_STR - hi)) / (T_STR * k * mp.sin(k * L_STR))


@pytest.mark.parametrize("method", ["exact", "modal"])
def test_exact_undamped_resonance_is_inf_with_a_resonance_warning(method):
    """On the natural frequencies of a string with no damping the response is infinite:
    returned as inf with a ResonanceWarning (a UserWarning, not a RuntimeWarning), never
    as a large finite number. Off them (1e-6 away) the values match the Green's function."""
    line = _string()
    f = np.array([1.0, 1.0 + 1e-6, 3.0])
    kw = {"modes": 12} if method == "modal" else {}
    with pytest.warns(dl.ResonanceWarning) as record:
        H = np.asarray(dl.frf(line, f, drive_at=0.11, response_at=[0.2, 0.37], method=method,
                              **kw))
    assert issubclass(dl.ResonanceWarning, UserWarning)
    assert not issubclass(dl.ResonanceWarning, RuntimeWarning)
    assert dl.errors.ResonanceWarning is dl.ResonanceWarning
    assert "1.0" in str(record[0].message) and "3.0" in str(record[0].message)
    assert np.all(np.isinf(H[[0, 2]]))
    ref = np.array([complex(string_green(f[1], x, 0.11)) for x in (0.2, 0.37)])
    rtol = 1e-8 if method == "exact" else 1e-5     # 12 modes + residual off the peak
    check(f"1e-6 off resonance ({method})", H[1], ref, rtol=rtol)


@pytest.mark.parametrize("method", ["exact", "modal"])
def test_undamped_resonance_at_a_node_is_its_finite_limit(method):
    """Driving at the middle of a string, the even modes are not excited: at f = 2 Hz
    (mode 2) the response is finite, the limit of the Green's function (mpmath, 1e-40
    off the resonance). A direct solve there gives a wrong finite number (5 % off
    before this was handled). A response at a fixed end stays exactly 0."""
    line = _string()
    xr = [0.1, 0.2, L_STR]
    kw = {"modes": 12} if method == "modal" else {}
    with warnings.catch_warnings():
        warnings.simplefilter("error", dl.ResonanceWarning)
        H = np.asarray(dl.frf(line, [2.0], drive_at=0.25, response_at=xr, method=method,
                              **kw))[0]
    ref = np.array([complex(string_green(2.0, x, 0.25, mp.mpf("1e-40"))) for x in xr[:2]])
    rtol = 1e-8 if method == "exact" else 2e-3     # the residual is static, 12 modes
    check(f"resonance at a node ({method})", H[:2], ref, rtol=rtol)
    assert H[2] == 0.0


def test_response_at_a_node_on_resonance_is_finite_while_the_rest_is_inf():
    """Drive at 0.11 (mode 2 excited), response at the middle (its node) and at 0.2:
    at 2 Hz the middle stays finite (its limit), 0.2 is infinite."""
    line = _string()
    with pytest.warns(dl.ResonanceWarning):
        H = np.asarray(dl.frf(line, [2.0], drive_at=0.11, response_at=[0.25, 0.2]))[0]
    assert np.isinf(H[1])
    ref = complex(string_green(2.0, 0.25, 0.11, mp.mpf("1e-40")))
    check("response at the node of the resonant mode", H[0], ref, rtol=1e-8)


def test_resonance_of_the_line_an_imposed_velocity_drives():
    """A fixed-free bar driven by a velocity at its free end resonates where the bar
    fixed at both ends does (the imposed motion holds that end): f_n = n c / (2 L)."""
    line = bar(0.0)
    f2 = 2 * C / (2 * LEN)
    with pytest.warns(dl.ResonanceWarning):
        H = np.asarray(dl.frf(line, [f2], drive_at=LEN, drive="velocity",
                              response_at=[0.3], quantity="mobility"))
    assert np.isinf(H).all()
    # its own (fixed-free) resonances are not resonances of this response
    f1 = C / (4 * LEN)
    with warnings.catch_warnings():
        warnings.simplefilter("error", dl.ResonanceWarning)
        Y = np.asarray(dl.frf(line, [f1], drive_at=LEN, drive="velocity", response_at=[0.3],
                              quantity="mobility"))[0, 0]
    # u(x) = sin(k x) / sin(k L) per unit end displacement: mobility ratio at f1 is sin(k x)
    assert Y.real == pytest.approx(math.sin(math.pi / 2 * 0.3 / LEN), rel=1e-9)


def test_damped_line_at_the_same_frequency_has_no_warning():
    line = _string({"model": "loss_factor", "eta": 1e-6})
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        H = np.asarray(dl.frf(line, [1.0, 2.0], drive_at=0.11, response_at=[0.2]))
    assert np.all(np.isfinite(H))
    # at resonance the loss factor alone limits it: Green's function with T (1 + i eta)
    with mp.workdps(50):
        Ts = T_STR * (1 + 1e-6j)
        k = 2 * mp.pi / mp.sqrt(Ts / MU_STR)
        ref = mp.sin(k * 0.11) * mp.sin(k * (L_STR - 0.2)) / (Ts * k * mp.sin(k * L_STR))
    assert H[0, 0] == pytest.approx(complex(ref), rel=1e-6)
