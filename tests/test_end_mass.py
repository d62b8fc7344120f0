"""A fixed-free line carrying a lumped inertia at its free end.

Rao, Mechanical Vibrations (continuous systems, longitudinal vibration of a bar
with a mass at the end): with u = sin(beta x), beta = w / c, the end condition
S u'(L) = M w^2 u(L) gives

    (beta L) tan(beta L) = m_bar / M,       m_bar = m L,

one root in each interval ((n-1) pi, (n-1) pi + pi/2). The same equation holds
for a shaft with a disc (J_shaft / J_disc = rho J L / J_disc) and for a string
whose end ring of mass M slides on a frictionless rod. References are mpmath
roots of the equation written without poles, x sin x - r cos x = 0.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

import dampline as dl
from _reference_tools import check, gauss_points, scan_roots

RATIOS = [0.01, 0.1, 1.0, 10.0, 100.0]
COUNT = 10


def _rao_roots(r: float, count: int) -> np.ndarray:
    """Roots x_n of x tan x = r, n = 1..count (Rao), each bracketed in
    ((n-1) pi, (n-1) pi + pi/2) where x sin x - r cos x changes sign."""
    out = []
    with mp.workdps(40):
        for n in range(1, count + 1):
            a = (n - 1) * mp.pi
            b = a + mp.pi / 2
            x = mp.findroot(lambda t: t * mp.sin(t) - r * mp.cos(t), (a + mp.mpf("1e-30"), b),
                            solver="anderson")
            assert a < x < b
            out.append(float(x))
    return np.array(out)


# kind -> (segment spec, S, m, L); the end inertia is a mass (kg) or a disc (kg m^2)
LINES = {
    "axial": ({"length": 0.8, "E": 7.0e10, "rho": 2700.0, "area": 5.0e-4},
              7.0e10 * 5.0e-4, 2700.0 * 5.0e-4, 0.8),
    "torsion": ({"length": 1.5, "G": 8.0e10, "rho": 7850.0, "J": 4.0e-7},
                8.0e10 * 4.0e-7, 7850.0 * 4.0e-7, 1.5),
    "string": ({"length": 0.65, "tension": 80.0, "mass_per_length": 6.0e-3},
               80.0, 6.0e-3, 0.65),
}


def _spec(kind, end_mass, side="right", **extra_end):
    seg, S, m, L = LINES[kind]
    table = {"mass": end_mass, **extra_end}
    if side == "right":
        ends = {"left": "fixed", "right": table}
    else:
        ends = {"left": table, "right": "fixed"}
    return {"kind": kind, "segments": [seg], "ends": ends}


@pytest.mark.parametrize("kind", list(LINES))
@pytest.mark.parametrize("ratio", RATIOS)
def test_end_mass_frequencies_match_rao(kind, ratio):
    seg, S, m, L = LINES[kind]
    M = m * L / ratio                       # ratio = m_bar / M (or J_shaft / J_disc)
    c = math.sqrt(S / m)
    ref = _rao_roots(ratio, COUNT) * c / (2 * math.pi * L)
    got = dl.natural_frequencies(dl.Line.from_dict(_spec(kind, M)), COUNT)
    # Rao, Mechanical Vibrations: (beta L) tan(beta L) = m_bar / M
    check(f"end mass f_n {kind} (Rao, mpmath)", got, ref, rtol=1e-11)
    # the mirror image (fixed right end, inertia on the left) has the same spectrum
    mirror = dl.natural_frequencies(dl.Line.from_dict(_spec(kind, M, side="left")), COUNT)
    check(f"end mass f_n {kind} mirrored (Rao, mpmath)", mirror, ref, rtol=1e-11)


@pytest.mark.parametrize("ratio", [0.1, 1.0, 10.0])
def test_tip_attachment_mass_equals_end_mass(ratio):
    # a point mass attached at x = L on a free end is the same model as an end mass
    seg, S, m, L = LINES["axial"]
    M = m * L / ratio
    spec = {"kind": "axial", "segments": [seg], "ends": {"left": "fixed", "right": "free"},
            "attachments": [{"at": L, "mass": M}]}
    c = math.sqrt(S / m)
    ref = _rao_roots(ratio, COUNT) * c / (2 * math.pi * L)
    got = dl.natural_frequencies(dl.Line.from_dict(spec), COUNT)
    check("tip attachment mass f_n (Rao, mpmath)", got, ref, rtol=1e-11)


@pytest.mark.parametrize("kind", list(LINES))
@pytest.mark.parametrize("ratio", [0.1, 1.0, 10.0])
def test_end_mass_modes_are_mass_normalised_with_the_point_mass(kind, ratio):
    # Rao: phi_n = C_n sin(beta_n x), orthogonal with respect to
    # int m phi_i phi_j dx + M phi_i(L) phi_j(L); normalised,
    # C_n^-2 = m (L/2 - sin(2 beta_n L) / (4 beta_n)) + M sin^2(beta_n L).
    seg, S, m, L = LINES[kind]
    M = m * L / ratio
    ms = dl.modes(dl.Line.from_dict(_spec(kind, M)), COUNT)
    beta = _rao_roots(ratio, COUNT) / L
    Cn = 1.0 / np.sqrt(m * (L / 2 - np.sin(2 * beta * L) / (4 * beta)) + M * np.sin(beta * L) ** 2)
    x = np.linspace(0.0, L, 61)
    ref = Cn * np.sin(np.outer(x, beta))
    got = ms.shape(x)
    sign = np.sign(np.sum(got * ref, axis=0))
    check(f"end mass mode shapes {kind} (Rao)", got * sign, ref, rtol=0,
          atol=1e-8 * np.abs(ref).max())
    dref = Cn * beta * np.cos(np.outer(x, beta))
    check(f"end mass mode slopes {kind} (Rao)", ms.shape(x, derivative=True) * sign, dref, rtol=0,
          atol=1e-8 * np.abs(dref).max())
    # orthonormality by Gauss-Legendre quadrature, the end inertia included
    xq, wq = gauss_points([0.0, L], 60)
    phi = ms.shape(xq)
    tip = ms.shape([L])[0]
    gram = phi.T @ (m * wq[:, None] * phi) + M * np.outer(tip, tip)
    check(f"end mass orthonormality {kind} (quadrature)", gram, np.eye(COUNT), rtol=0, atol=1e-8)


@pytest.mark.parametrize("ratio,stiffness_ratio", [(1.0, 0.5), (0.2, 3.0), (5.0, 20.0)])
def test_end_mass_on_a_spring(ratio, stiffness_ratio):
    # End mass M and spring k to ground at x = L: S u'(L) = (M w^2 - k) u(L), so with
    # u = sin(beta x): S beta cos(beta L) - (M c^2 beta^2 - k) sin(beta L) = 0
    # (Rao's end condition with a spring added; derived here).
    seg, S, m, L = LINES["axial"]
    M = m * L / ratio
    k = stiffness_ratio * S / L
    c = math.sqrt(S / m)
    spec = _spec("axial", M, spring=k)
    got = dl.natural_frequencies(dl.Line.from_dict(spec), COUNT)

    def g(w, lib):
        b = w / c
        return S * b * lib.cos(b * L) - (M * w * w - k) * lib.sin(b * L)

    ref = scan_roots(g, (COUNT + 1) * math.pi * c / L, COUNT, n_grid=40000) / (2 * math.pi)
    check("end mass on a spring f_n (mpmath roots)", got, ref, rtol=1e-11)
