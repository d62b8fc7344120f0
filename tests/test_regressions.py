"""Regression tests: the failures found while fuzzing and probing the public API, each
reduced to its smallest case with an independent reference. Fixed ones must stay fixed;
open ones are strict xfails that name the cause (they start passing, and so fail, the day
the cause is fixed: then drop the mark).

Sources of the references: closed forms of the string and bar (Graff, Wave Motion in
Elastic Solids), the cantilever static deflection (Roark), rigid-body motion of a free
beam (any dynamics text: F = M a, M_O = J alpha), Blevins Table 8-1 frequency equations.
"""

from __future__ import annotations

import math
import warnings

import mpmath as mp
import numpy as np
import pytest

import dampline as dl
from dampline import ModelError
from _reference_tools import check, scan_roots

E, RHO, AREA, I2 = 2.1e11, 7850.0, 4e-4, 3e-8


def _beam(segments, left="clamped", right="free", **extra):
    spec = {"kind": "bending", "segments": segments, "ends": {"left": left, "right": right}}
    spec.update(extra)
    return dl.Line.from_dict(spec)


def _seg(length):
    return {"length": length, "E": E, "rho": RHO, "area": AREA, "I": I2}


# ---------------------------------------------------------------- fixed
def test_undamped_absorber_on_a_damped_string_at_its_own_frequency():
    """Found: an absorber without damping, on a damped line, exactly at sqrt(k/m): the
    condensed point stiffness s z / (s + z) divided by zero and the exact response was
    NaN. Its apparent mass is infinite there, so it pins its point: for a drive and a
    response beyond it, the string from a to L is fixed-fixed, G(x, d) =
    sin(k (x< - a)) sin(k (L - x>)) / (T* k sin(k (L - a))) (Graff; T* = T (1 + i eta))."""
    T, mu, L, a, eta = 100.0, 0.02, 1.0, 0.3, 0.02
    ma = 0.01
    fa = 173.0
    ka = ma * (2 * math.pi * fa) ** 2
    line = dl.Line.from_dict({
        "kind": "string", "segments": [{"length": L, "tension": T, "mass_per_length": mu}],
        "attachments": [{"at": a, "absorber": {"mass": ma, "stiffness": ka}}],
        "damping": {"model": "loss_factor", "eta": eta}})
    f = line.attachments[0].absorber.frequency_hz
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        H = np.asarray(dl.frf(line, [f], drive_at=0.8, response_at=[a, 0.55]))[0]
    with mp.workdps(40):
        Ts = T * (1 + 1j * mp.mpf(eta))
        k = 2 * mp.pi * mp.mpf(f) / mp.sqrt(Ts / mu)
        ref = mp.sin(k * (0.55 - a)) * mp.sin(k * (L - 0.8)) / (Ts * k * mp.sin(k * (L - a)))
    assert abs(H[0]) <= 1e-6 * abs(H[1])
    check("string pinned by its absorber (Graff)", H[1], complex(ref), rtol=1e-8)


def test_tiny_frequency_on_a_cantilever_is_the_static_answer():
    """Found: at 1e-300 Hz w^2 underflows and the exact response was NaN with a stream
    of RuntimeWarnings. Below the static limit a held line is static: tip deflection
    L^3 / (3 EI*) (Roark), EI* = EI (1 + i eta)."""
    line = _beam([_seg(1.0)], damping={"model": "loss_factor", "eta": 0.01})
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        H = np.asarray(dl.frf(line, [1e-300, 1e-200, 0.0], drive_at=1.0, response_at=[1.0]))
    ref = 1.0 / (3 * E * I2 * (1 + 0.01j))
    check("static tip deflection (Roark)", H[:, 0], np.full(3, ref), rtol=1e-12)


def test_huge_frequency_is_refused_at_once():
    """Found: 1e300 Hz raised numpy's 'Maximum allowed size exceeded' (a list of every
    piece pole up to that frequency), and 1e12 Hz on a 1 m bar took two minutes."""
    bar = dl.Line.from_dict({
        "kind": "axial", "segments": [{"length": 1.0, "E": 2e11, "rho": 7850.0, "area": 1e-4}],
        "ends": {"left": "fixed", "right": "free"}})
    for line, f in ((_beam([_seg(1.0)]), 1e300), (bar, 1e300), (bar, 1e12)):
        with pytest.raises(ModelError) as excinfo:
            dl.frf(line, [10.0, f])
        assert excinfo.value.key == "freqs_hz" and "wave phase" in str(excinfo.value)


def test_free_beam_far_below_its_first_mode():
    """Found: a free-free beam at beta L = 1e-3 gave an exact receptance 8 % off (and
    NaN with a false resonance warning at 1e-4): the dynamic stiffness cannot resolve the
    rigid-body inertia against EI/h^3. The exact method now refuses it; the modal sum
    gives the rigid-body motion, w(x)/F(d) -> -(1/M + (x - L/2)(d - L/2)/J) / w^2,
    M = m L, J = m L^3 / 12 (F = M a and M_O = J alpha)."""
    L = 1.0
    line = _beam([_seg(L)], left="free", right="free")
    m = RHO * AREA
    bl = 1e-3
    w = bl ** 2 * math.sqrt(E * I2 / m) / L ** 2
    f = w / (2 * math.pi)
    with pytest.raises(ModelError) as excinfo:
        dl.frf(line, [f], drive_at=0.3, response_at=[0.7])
    assert "method='modal'" in str(excinfo.value)
    H = np.asarray(dl.frf(line, [f], drive_at=0.3, response_at=[0.7], method="modal",
                          modes=8))[0, 0]
    rigid = -(1 / (m * L) + (0.7 - 0.5) * (0.3 - 0.5) / (m * L ** 3 / 12)) / w ** 2
    # the elastic part is static and ~ (beta L)^4 of the rigid part here
    assert H.real == pytest.approx(rigid, rel=1e-9)


def test_tiny_lumped_values_count_as_zero():
    """Found by the existing property tests: a spring of 2.8e-38 N/m (a random draw)
    was refused by the new magnitude limit; tiny lumped elements are as good as zero
    and must be accepted (only required properties have a lower limit)."""
    spec = {"kind": "axial",
            "segments": [{"length": 1.0, "E": 2e11, "rho": 7850.0, "area": 1e-4}],
            "ends": {"left": "fixed", "right": {"spring": 2.802596928649634e-38, "mass": 0.0}}}
    line = dl.Line.from_dict(spec)
    free = dl.Line.from_dict({**spec, "ends": {"left": "fixed", "right": "free"}})
    f = [123.0, 4567.0]
    np.testing.assert_allclose(np.asarray(dl.frf(line, f, drive_at=1.0, response_at=[1.0])),
                               np.asarray(dl.frf(free, f, drive_at=1.0, response_at=[1.0])),
                               rtol=1e-12)


def test_modal_sum_exactly_on_an_undamped_mode_is_not_nan():
    """Found: the modal sum of an undamped line evaluated at its own natural frequency
    (say, from dl.natural_frequencies) returned NaN silently. Now inf with a
    ResonanceWarning, and finite where the mode is not excited."""
    line = dl.Line.from_dict({
        "kind": "axial", "segments": [{"length": 1.0, "E": 2e11, "rho": 7850.0, "area": 1e-4}],
        "ends": {"left": "fixed", "right": "fixed"}})
    ms = dl.modes(line, 6)
    with pytest.warns(dl.ResonanceWarning):
        H = np.asarray(dl.frf(line, ms.frequencies[:2], drive_at=0.5, response_at=[0.25],
                              method="modal", modes=ms))[:, 0]
    assert np.isinf(H[0]) and not np.isnan(H).any()
    # mode 2 has a node at the drive point x = 0.5: finite, and equal to the modal sum
    # without mode 2 (its term is 0 / 0 there, with limit 0), phi_n = sqrt(2/m) sin(n pi x)
    m = 7850.0 * 1e-4
    wn = ms.omega
    w = wn[1]
    n = np.arange(1, 7)
    phi = lambda x: np.sqrt(2 / m) * np.sin(n * math.pi * x)  # noqa: E731
    terms = phi(0.5) * phi(0.25) / (wn ** 2 - w ** 2 + 0j * w)
    terms[1] = 0.0
    # the static residual of the modes above 6 adds sum_{n>6} phi phi / wn^2 (exact bar
    # static Green's function minus the kept modes' static part)
    static = 0.25 * (1 - 0.5) / (2e11 * 1e-4)        # fixed-fixed bar, x < d
    residual = static - np.sum(phi(0.5) * phi(0.25) / wn ** 2)
    assert H[1].real == pytest.approx(terms.sum().real + residual, rel=1e-6)


# ---------------------------------------------------------------- once open
# fixed: clamped_count takes the sign from the series below lam = 1
def test_short_bending_piece_under_a_heavy_tip_mass():
    """Cantilever with a tip mass M: the frequency equation (Blevins Table 8-1 with an
    end mass) is 1 + cos l cosh l + r l (cos l sinh l - sin l cosh l) = 0, r = M / (m L).
    Cutting the beam into segments changes nothing physically."""
    L, M = 1.0, 1e4
    m = RHO * AREA
    r = M / (m * L)
    line = _beam([_seg(0.5), _seg(1e-3), _seg(0.5 - 1e-3)], right={"mass": M})

    def g(t, lib):
        ch = lib.cosh(t)
        return (1 + lib.cos(t) * ch + r * t * (lib.cos(t) * lib.sinh(t) - lib.sin(t) * ch)) / ch

    lam = scan_roots(g, 12.0, 3, n_grid=40000, w_min=1e-3)
    ref = lam ** 2 * math.sqrt(E * I2 / (m * L ** 4)) / (2 * math.pi)
    check("cantilever with a tip mass, cut (Blevins)", dl.natural_frequencies(line, 3), ref,
          rtol=1e-6)
