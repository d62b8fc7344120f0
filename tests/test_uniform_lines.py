"""Natural frequencies and modes of uniform, stepped and weakly coupled lines.

References are computed here, independently of dampline: the closed forms of
the uniform line and mpmath roots of frequency equations derived in this file
from the second-order wave equation (S u')' + w^2 m u = 0 with continuity of u
and of the internal force N = S u' at every junction.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import dampline as dl
from _reference_tools import check, gauss_points, scan_roots, wave_coefficients

# One representative of each kind: its spec maker, wave speed c and mass per
# length m (the analogue compliance A / (rho c^2) for a duct). Ends are named in
# the kind's words: "d" is the Dirichlet end (fixed / ideally open), "n" the
# Neumann end (free / closed).
KINDS = {
    "axial": dict(seg=lambda L, s=1.0: {"length": L, "E": 2.0e11 * s, "rho": 7850.0,
                                        "area": 3.0e-4},
                  c=math.sqrt(2.0e11 / 7850.0), m=7850.0 * 3.0e-4, d="fixed", n="free"),
    "torsion": dict(seg=lambda L, s=1.0: {"length": L, "G": 8.0e10, "rho": 7850.0,
                                          "J": 2.0e-8 * s},
                    c=math.sqrt(8.0e10 / 7850.0), m=7850.0 * 2.0e-8, d="fixed", n="free"),
    "string": dict(seg=lambda L, s=1.0: {"length": L, "tension": 500.0,
                                         "mass_per_length": 0.02 * s},
                   c=math.sqrt(500.0 / 0.02), m=0.02, d="fixed", n="free"),
    "duct": dict(seg=lambda L, s=1.0: {"length": L, "area": 2.0e-3 * s},
                 c=343.2, m=2.0e-3 / (1.204 * 343.2 ** 2), d="open", n="closed"),
}

COUNT = 40
LENGTH = 1.3


def _line(kind, segments, left, right, attachments=()):
    spec = {"kind": kind, "segments": segments, "ends": {"left": left, "right": right}}
    if attachments:
        spec["attachments"] = list(attachments)
    return dl.Line.from_dict(spec)


def _uniform_reference(ends: str, c: float, L: float, count: int):
    """Closed-form frequencies (Hz) and shapes phi(x) of a uniform line, unit mass per
    length (Kinsler et al., Fundamentals of Acoustics, 4th ed., ch. 2 and 10; Rao,
    Mechanical Vibrations, continuous systems). ``ends`` is "dd", "nn", "dn" or "nd":
    k_n = n pi / L (dd), (n - 1) pi / L (nn, rigid mode first), (2n - 1) pi / (2L) (dn, nd);
    sin(k_n x) from a Dirichlet left end, cos(k_n x) from a Neumann one; amplitude
    sqrt(2 / L), sqrt(1 / L) for the rigid-body mode."""
    n = np.arange(1, count + 1)
    if ends == "dd":
        kn = n * math.pi / L
    elif ends == "nn":
        kn = (n - 1) * math.pi / L
    else:
        kn = (2 * n - 1) * math.pi / (2 * L)
    amp = np.full(count, math.sqrt(2 / L))
    if ends == "nn":
        amp[0] = math.sqrt(1 / L)
    if ends[0] == "d":
        def shape(x):
            return amp * np.sin(np.outer(x, kn))

        def dshape(x):
            return amp * kn * np.cos(np.outer(x, kn))
    else:
        def shape(x):
            return amp * np.cos(np.outer(x, kn))

        def dshape(x):
            return -amp * kn * np.sin(np.outer(x, kn))
    return kn * c / (2 * math.pi), shape, dshape


def _end_words(kind, ends):
    k = KINDS[kind]
    return k[ends[0]], k[ends[1]]


ALL_ENDS = ("dd", "nn", "dn", "nd")


# --------------------------------------------------------------- uniform lines
@pytest.mark.parametrize("kind", list(KINDS))
@pytest.mark.parametrize("ends", ALL_ENDS)
def test_uniform_natural_frequencies(kind, ends):
    # Kinsler et al., Fundamentals of Acoustics, ch. 2/10; Rao, Mechanical Vibrations:
    # f_n = n c / (2L) for like ends (rigid 0.0 Hz for free-free / closed-closed),
    # f_n = (2n - 1) c / (4L) for unlike ends.
    k = KINDS[kind]
    line = _line(kind, [k["seg"](LENGTH)], *_end_words(kind, ends))
    f_ref, _, _ = _uniform_reference(ends, k["c"], LENGTH, COUNT)
    f = dl.natural_frequencies(line, COUNT)
    assert f.shape == (COUNT,)
    if ends == "nn":
        assert f[0] == 0.0                               # rigid-body mode reported as 0.0
        check("uniform f_n (Kinsler; Rao)", f[1:], f_ref[1:], rtol=1e-12)
    else:
        check("uniform f_n (Kinsler; Rao)", f, f_ref, rtol=1e-12)


@pytest.mark.parametrize("kind", list(KINDS))
@pytest.mark.parametrize("ends", ALL_ENDS)
def test_uniform_mode_shapes_and_mass_normalisation(kind, ends):
    k = KINDS[kind]
    count = 12
    line = _line(kind, [k["seg"](LENGTH)], *_end_words(kind, ends))
    ms = dl.modes(line, count)
    f_ref, shape, dshape = _uniform_reference(ends, k["c"], LENGTH, count)
    check("uniform f_n via modes (Kinsler; Rao)", ms.frequencies, f_ref, rtol=1e-12,
          atol=1e-12 * f_ref.max())
    x = np.linspace(0.0, LENGTH, 101)
    # closed-form shapes sqrt(2/(m L)) sin(...) / cos(...), sqrt(1/(m L)) rigid (Rao),
    # equal up to sign
    ref = shape(x) / math.sqrt(k["m"])
    dref = dshape(x) / math.sqrt(k["m"])
    got = ms.shape(x)
    dgot = ms.shape(x, derivative=True)
    assert got.shape == (x.size, count) and dgot.shape == (x.size, count)
    sign = np.sign(np.sum(got * ref, axis=0))
    assert np.all(sign != 0)
    scale = np.abs(ref).max()
    check("uniform mode shapes (Rao)", got * sign, ref, rtol=0, atol=1e-8 * scale)
    check("uniform mode slopes (Rao)", dgot * sign, dref, rtol=0, atol=1e-8 * np.abs(dref).max())
    # mass orthonormality by Gauss-Legendre quadrature, independent of the shapes above
    xq, wq = gauss_points([0.0, LENGTH], 120)
    phi = ms.shape(xq)
    gram = phi.T @ (k["m"] * wq[:, None] * phi)
    check("uniform mass orthonormality (quadrature)", gram, np.eye(count), rtol=0, atol=1e-8)


# --------------------------------------------------------------- stepped lines
def _two_segment_equation(ends, z1, z2, t1, t2):
    """Frequency equation of two uniform segments (impedances z_i = S_i / c_i,
    transit times t_i = L_i / c_i), derived from u and S u' continuous at the step:

    dn: u1 = sin k1 x, u2 = B cos k2 (L - x)  ->  z1 cos w t1 cos w t2 - z2 sin w t1 sin w t2
    dd: u1 = sin k1 x, u2 = B sin k2 (L - x)  ->  z1 cos w t1 sin w t2 + z2 sin w t1 cos w t2
    nn: u1 = cos k1 x, u2 = B cos k2 (L - x)  ->  z1 sin w t1 cos w t2 + z2 cos w t1 sin w t2
    nd: u1 = cos k1 x, u2 = B sin k2 (L - x)  ->  z1 sin w t1 sin w t2 - z2 cos w t1 cos w t2
    (entire functions of w, so no poles to straddle)."""
    def g(w, lib):
        a, b = w * t1, w * t2
        s1, c1, s2, c2 = lib.sin(a), lib.cos(a), lib.sin(b), lib.cos(b)
        return {"dn": z1 * c1 * c2 - z2 * s1 * s2,
                "dd": z1 * c1 * s2 + z2 * s1 * c2,
                "nn": z1 * s1 * c2 + z2 * c1 * s2,
                "nd": z1 * s1 * s2 - z2 * c1 * c2}[ends]
    return g


STEPPED_CASES = [
    # kind, ends, length split, property scale of the second segment
    ("axial", "dn", (0.45, 0.85), 3.0),       # fixed-free stepped bar
    ("axial", "dd", (0.30, 1.00), 0.2),
    ("axial", "nn", (0.70, 0.60), 5.0),
    ("torsion", "dn", (0.50, 0.50), 0.1),
    ("torsion", "nd", (0.20, 1.10), 2.5),
    ("string", "dd", (0.60, 0.70), 4.0),
    ("duct", "nd", (0.40, 0.90), 0.25),       # closed-open duct with an area step
    ("duct", "nn", (0.90, 0.40), 6.0),
]


@pytest.mark.parametrize("kind,ends,lengths,scale", STEPPED_CASES)
def test_stepped_line_against_mpmath_roots(kind, ends, lengths, scale):
    k = KINDS[kind]
    segs = [k["seg"](lengths[0]), k["seg"](lengths[1], scale)]
    line = _line(kind, segs, *_end_words(kind, ends))
    count = 25
    got = dl.natural_frequencies(line, count)
    (S1, m1), (S2, m2) = (wave_coefficients(kind, s) for s in segs)
    c1, c2 = math.sqrt(S1 / m1), math.sqrt(S2 / m2)
    z1, z2 = math.sqrt(S1 * m1), math.sqrt(S2 * m2)     # S / c
    t1, t2 = lengths[0] / c1, lengths[1] / c2
    g = _two_segment_equation(ends, z1, z2, t1, t2)
    n_el = count - (1 if ends == "nn" else 0)
    # a Wittrick-Williams style count: about w (t1 + t2) / pi roots lie below w
    w_max = (n_el + 3) * math.pi / (t1 + t2)
    ref = scan_roots(g, w_max, n_el, n_grid=400 * count) / (2 * math.pi)
    if ends == "nn":
        assert got[0] == 0.0
        got = got[1:]
    # mpmath roots of the two-segment frequency equation derived above
    check("stepped line f_n (mpmath roots)", got, ref, rtol=1e-10)


@pytest.mark.parametrize("kind", list(KINDS))
@pytest.mark.parametrize("ends", ALL_ENDS)
@pytest.mark.parametrize("split", [(0.5, 0.5), (1 / 3, 1 / 3, 1 / 3), (0.25, 0.75)])
def test_uniform_line_split_into_segments(kind, ends, split):
    # Splitting a uniform line into identical segments changes nothing physically, but
    # puts its natural frequencies on the clamped-segment poles of the dynamic stiffness
    # (Wittrick and Williams 1971): the answer must still be the closed form of
    # Kinsler et al. / Rao, with no mode missing or doubled.
    k = KINDS[kind]
    segs = [k["seg"](LENGTH * s) for s in split]
    line = _line(kind, segs, *_end_words(kind, ends))
    f_ref, shape, _ = _uniform_reference(ends, k["c"], LENGTH, COUNT)
    f = dl.natural_frequencies(line, COUNT)
    check("split uniform f_n (Kinsler; Rao)", f, f_ref, rtol=1e-12, atol=1e-12 * f_ref.max())
    ms = dl.modes(line, 10)
    x = np.linspace(0.0, LENGTH, 53)
    got = ms.shape(x)
    ref = shape(x)[:, :10] / math.sqrt(k["m"])
    sign = np.sign(np.sum(got * ref, axis=0))
    check("split uniform mode shapes (Rao)", got * sign, ref, rtol=0, atol=1e-8 * np.abs(ref).max())


# --------------------------------------------------------------- close pairs
E_BAR, RHO_BAR, A_BAR, L_BAR = 2.0e11, 7850.0, 3.0e-4, 1.3
C_BAR = math.sqrt(E_BAR / RHO_BAR)


def _tip_absorber_equation(ma, ka):
    """Fixed-free bar with an absorber (mass ma, spring ka) at the tip. The absorber
    acts on the tip as the apparent mass M(w) = ka ma / (ka - ma w^2); the end-mass
    condition E A u'(L) = M w^2 u(L) with u = sin(w x / c) gives, times (ka - ma w^2)/beta,
    E A cos(w L/c) (ka - ma w^2) - ka ma w c sin(w L/c) = 0 (Rao's end-mass equation with
    the apparent mass of Den Hartog's absorber)."""
    EA = E_BAR * A_BAR

    def g(w, lib):
        b = w * L_BAR / C_BAR
        return EA * lib.cos(b) * (ka - ma * w * w) - ka * ma * w * C_BAR * lib.sin(b)
    return g


@pytest.mark.parametrize("mode,mu", [(1, 1e-4), (1, 1e-8), (3, 1e-6)])
def test_absorber_tuned_on_a_mode_gives_a_close_pair(mode, mu):
    m_bar = RHO_BAR * A_BAR * L_BAR
    wn = (2 * mode - 1) * math.pi * C_BAR / (2 * L_BAR)
    ma = mu * m_bar
    ka = ma * wn ** 2                                   # tuned exactly on the mode
    spec = {"kind": "axial",
            "segments": [{"length": L_BAR, "E": E_BAR, "rho": RHO_BAR, "area": A_BAR}],
            "ends": {"left": "fixed", "right": "free"},
            "attachments": [{"at": L_BAR, "absorber": {"mass": ma, "stiffness": ka}}]}
    line = dl.Line.from_dict(spec)
    count = 8
    got = dl.natural_frequencies(line, count)
    g = _tip_absorber_equation(ma, ka)
    w_max = (count + 1) * math.pi * C_BAR / L_BAR
    # the pair splits by about sqrt(2 mu) w_n: resolve it with a dense sub-grid
    half = 4 * math.sqrt(2 * mu) * wn
    dense = np.linspace(wn - half, wn + half, 4001)
    ref = scan_roots(g, w_max, count, n_grid=20000, dense=(dense,)) / (2 * math.pi)
    assert np.all(np.diff(got) > 0)
    check("tip absorber close pair (mpmath roots)", got, ref, rtol=1e-10)
    pair = got[mode - 1:mode + 1]
    assert pair[0] < wn / (2 * math.pi) < pair[1]       # one mode each side of the tuning


def test_two_identical_absorbers_add_a_mode_exactly_at_their_frequency():
    # Two identical absorbers at the tip act as one of twice the mass and stiffness,
    # plus one mode in which they move in opposition and the bar is still: exactly at
    # w_a = sqrt(k/m) (Den Hartog, Mechanical Vibrations). Tuned on mode 1, this gives a
    # cluster of three close roots.
    m_bar = RHO_BAR * A_BAR * L_BAR
    w1 = math.pi * C_BAR / (2 * L_BAR)
    ma = 1e-6 * m_bar
    ka = ma * w1 ** 2
    spec = {"kind": "axial",
            "segments": [{"length": L_BAR, "E": E_BAR, "rho": RHO_BAR, "area": A_BAR}],
            "ends": {"left": "fixed", "right": "free"},
            "attachments": [{"at": L_BAR, "absorber": {"mass": ma, "stiffness": ka}},
                            {"at": L_BAR, "absorber": {"mass": ma, "stiffness": ka}}]}
    line = dl.Line.from_dict(spec)
    count = 7
    got = dl.natural_frequencies(line, count)
    g = _tip_absorber_equation(2 * ma, 2 * ka)
    half = 8 * math.sqrt(4e-6) * w1
    dense = np.linspace(w1 - half, w1 + half, 4001)
    coupled = scan_roots(g, (count + 1) * math.pi * C_BAR / L_BAR, count - 1, n_grid=20000,
                          dense=(dense,))
    ref = np.sort(np.append(coupled, w1)) / (2 * math.pi)
    check("two absorbers cluster (mpmath roots)", got, ref, rtol=1e-10)
    ms = dl.modes(line, 3)
    # the middle mode of the cluster leaves the bar at rest, the absorbers opposite
    q = ms.absorber_amplitudes[1]
    x = np.linspace(0, L_BAR, 21)
    assert np.abs(ms.shape(x)[:, 1]).max() <= 1e-6 * np.abs(q).max()
    check("opposed absorbers", q[0], -q[1], rtol=1e-8)
    # mass normalised through the absorber masses alone: 2 ma q^2 = 1
    check("absorber-only mode mass", ma * (q ** 2).sum(), 1.0, rtol=1e-8)


@pytest.mark.parametrize("ratio,offset", [(100.0, 1e-4), (1e4, 1e-7)])
def test_weakly_coupled_string_halves_give_close_pairs(ratio, offset):
    # A fixed-fixed string with a heavy mass M slightly off centre at x = a: two
    # nearly identical half-strings coupled weakly through the mass. With
    # u1 = A sin k x, u2 = B sin k (L - x), continuity and T (u2' - u1') = -M w^2 u at a
    # give T k sin kL - M w^2 sin ka sin kb = 0, b = L - a (derived here; Rao, strings
    # with a concentrated mass).
    T, mu, L = 400.0, 0.01, 1.0
    c = math.sqrt(T / mu)
    M = ratio * mu * L
    a = 0.5 * L * (1 + offset)
    b = L - a
    spec = {"kind": "string", "segments": [{"length": L, "tension": T, "mass_per_length": mu}],
            "ends": {"left": "fixed", "right": "fixed"}, "attachments": [{"at": a, "mass": M}]}
    line = dl.Line.from_dict(spec)
    count = 13

    def g(w, lib):
        kk = w / c
        return T * kk * lib.sin(kk * L) - M * w * w * lib.sin(kk * a) * lib.sin(kk * b)

    w_half = 2 * math.pi * c / L                          # first half-string mode
    dense = [np.linspace(n * w_half * (1 - 1e-2), n * w_half * (1 + 1e-2), 200001)
             for n in range(1, 7)]
    w_max = 6.5 * w_half
    ref = scan_roots(g, w_max, count, n_grid=20000, w_min=1e-3 * c / L, dense=dense)
    got = dl.natural_frequencies(line, count)
    assert np.all(np.diff(got) > 0)
    gaps = np.diff(ref)[1::2] / ref[2::2]
    assert gaps.max() < 1e-2                              # they are close pairs indeed
    check("weakly coupled string halves (mpmath roots)", got, ref / (2 * math.pi), rtol=1e-10)


# --------------------------------------------------------------- stepped modes
def test_mass_orthonormality_of_a_loaded_stepped_line():
    # int m phi_i phi_j dx + sum M phi_i phi_j + sum m_a q_i q_j = delta_ij (Rao,
    # orthogonality of normal modes), by Gauss-Legendre quadrature on each segment.
    segs = [{"length": 0.4, "E": 2.0e11, "rho": 7850.0, "area": 3.0e-4},
            {"length": 0.7, "E": 7.0e10, "rho": 2700.0, "area": 8.0e-4},
            {"length": 0.3, "E": 1.1e11, "rho": 4430.0, "area": 1.5e-4}]
    atts = [{"at": 0.25, "mass": 0.8},
            {"at": 0.9, "absorber": {"mass": 0.3, "stiffness": 4.0e7}},
            {"at": 1.4, "mass": 0.2, "spring": 3.0e7}]
    spec = {"kind": "axial", "segments": segs, "ends": {"left": "free", "right": {"mass": 0.5}},
            "attachments": atts}
    line = dl.Line.from_dict(spec)
    count = 15
    ms = dl.modes(line, count)
    bounds = line.boundaries
    # attachments put kinks in the shapes: split the quadrature there too
    xq, wq = gauss_points(sorted(set(bounds) | {0.25, 0.9, 1.4}), 80)
    m_of_x = np.select([xq < bounds[1], xq < bounds[2]],
                       [7850.0 * 3.0e-4, 2700.0 * 8.0e-4], 4430.0 * 1.5e-4)
    phi = ms.shape(xq)
    gram = phi.T @ ((m_of_x * wq)[:, None] * phi)
    pts = ms.shape([0.25, 1.4, bounds[-1]])
    gram += 0.8 * np.outer(pts[0], pts[0]) + 0.2 * np.outer(pts[1], pts[1])
    gram += 0.5 * np.outer(pts[2], pts[2])
    q = ms.absorber_amplitudes
    assert q.shape == (count, 1)
    gram += 0.3 * q @ q.T
    check("loaded stepped mass orthonormality (quadrature)", gram, np.eye(count), rtol=0,
          atol=1e-8)
    # no spring to ground at the ends, but one at x = 1.4: no rigid-body mode
    assert ms.frequencies[0] > 0.0


# --------------------------------------------------------------- grounded absorber
def _grounded_absorber_line(factor):
    # fixed-fixed string with an absorber attached at the fixed end: the absorber is an
    # oscillator on rigid ground, decoupled from the string
    T, mu, L, ma = 200.0, 0.01, 1.0, 0.005
    w1 = math.pi * math.sqrt(T / mu) / L
    spec = {"kind": "string", "segments": [{"length": L, "tension": T, "mass_per_length": mu}],
            "ends": {"left": "fixed", "right": "fixed"},
            "attachments": [{"at": 0.0,
                             "absorber": {"mass": ma, "stiffness": ma * (factor * w1) ** 2}}]}
    return dl.Line.from_dict(spec), math.sqrt(T / mu), L, mu, ma


def test_absorber_on_a_fixed_end_frequencies():
    # The spectrum is the union of the string's n c / 2L (Kinsler) and the grounded
    # oscillator's sqrt(k/m) (here 2.5 c / 2L)
    line, c, L, mu, ma = _grounded_absorber_line(2.5)
    ref = np.array([1.0, 2.0, 2.5, 3.0, 4.0]) * c / (2 * L)
    check("grounded absorber f_n (Kinsler; SDOF)", dl.natural_frequencies(line, 5), ref, rtol=1e-12)


def test_absorber_on_a_fixed_end_modes():
    # Expected (Rao; SDOF): the absorber mode has the string at rest and q = 1/sqrt(m);
    # the string modes are sqrt(2/(mu L)) sin(n pi x / L) with the absorber at rest.
    line, c, L, mu, ma = _grounded_absorber_line(2.5)
    ms = dl.modes(line, 4)                 # f = (1, 2, 2.5, 3) c / 2L
    x = np.linspace(0.0, L, 41)
    n = np.array([1.0, 2.0, 0.0, 3.0])
    ref = math.sqrt(2 / (mu * L)) * np.sin(np.outer(x, n) * math.pi / L)
    got = ms.shape(x)
    sign = np.where(np.sum(got * ref, axis=0) < 0, -1.0, 1.0)
    check("grounded absorber mode shapes", got * sign, ref, rtol=0, atol=1e-8 * ref.max())
    q = np.abs(ms.absorber_amplitudes[:, 0])
    check("grounded absorber amplitudes", q, [0.0, 0.0, 1 / math.sqrt(ma), 0.0], rtol=0, atol=1e-8)


# regression: the single interior DOF's dynamic stiffness row vanishes at these roots
@pytest.mark.parametrize("length,E,area,count",
                         [(0.1366606327231958, 349420139610.6146, 9.9999e-05, 6),
                          (0.8127792933436194, 231038609940.76074, 1.0e-4, 8)])
def test_uniform_fixed_fixed_bar_modes_regression(length, E, area, count):
    # Found by test_properties.py::test_modes_are_mass_orthonormal: a plain uniform
    # fixed-fixed bar; expected sqrt(2/(m L)) sin(n pi x / L) (Rao), mass-orthonormal.
    rho = 7850.0
    line = dl.Line.from_dict({"kind": "axial",
                              "segments": [{"length": length, "E": E, "rho": rho, "area": area}],
                              "ends": {"left": "fixed", "right": "fixed"}})
    ms = dl.modes(line, count)
    f_ref, shape, _ = _uniform_reference("dd", math.sqrt(E / rho), length, count)
    x = np.linspace(0.0, length, 41)
    ref = shape(x) / math.sqrt(rho * area)
    got = ms.shape(x)
    sign = np.where(np.sum(got * ref, axis=0) < 0, -1.0, 1.0)
    check("uniform fixed-fixed regression shapes (Rao)", got * sign, ref, rtol=0,
          atol=1e-8 * np.abs(ref).max())
