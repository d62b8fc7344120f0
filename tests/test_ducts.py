"""Plane-wave ducts: end corrections, radiation, anechoic ends, area steps, wall losses.

Time convention e^{+i w t}; p(x) = A e^{-i k x} + B e^{+i k x} and, from Euler's
equation i w rho u = -p', the volume velocity U = (S / (rho c)) (A e^{-ikx} - B e^{ikx})
along +x (Kinsler et al., Fundamentals of Acoustics, 4th ed., ch. 5 and 10).
Characteristic impedance Z0 = rho c / S. Air defaults: rho 1.204 kg/m^3,
c 343.2 m/s, mu 1.81e-5 Pa s, gamma 1.4, Pr 0.71 (common practice).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import dampline as dl
from _reference_tools import check, scan_roots

RHO, C = 1.204, 343.2
MU, GAMMA, PR = 1.81e-5, 1.4, 0.71
#: end corrections / radius: Levine and Schwinger 1948 (unflanged), Norris and Sheng 1989
#: (flanged); low-ka radiation resistance factors (ka)^2/4 and (ka)^2/2 (Kinsler)
DELTA = {"unflanged": 0.6133, "flanged": 0.8216}
RESISTANCE = {"unflanged": 0.25, "flanged": 0.5}


def _duct(segments, left, right, **damping):
    spec = {"kind": "duct", "segments": segments, "ends": {"left": left, "right": right}}
    if damping:
        spec["damping"] = damping
    return dl.Line.from_dict(spec)


def _area(radius):
    return math.pi * radius ** 2


# ------------------------------------------------------------- end corrections
@pytest.mark.parametrize("end", ["unflanged", "flanged"])
@pytest.mark.parametrize("radius", [0.01, 0.03])
def test_closed_open_pipe_with_end_correction(end, radius):
    # Without its radiation resistance the open end is the mass of the end correction:
    # Z = i w rho delta / S, delta = 0.6133 a (Levine and Schwinger 1948) or 0.8216 a
    # (Norris and Sheng 1989). With p = cos kx (closed at 0), p(L) = Z U(L) gives
    # cot(kL) = k delta. Writing theta_n = (2n - 1) pi / 2, the root solves
    # kL + arctan(k delta) = theta_n, while the textbook estimate k_a (L + delta) = theta_n
    # (f ~ (2n - 1) c / (4 (L + delta))) replaces arctan x by x, x = k_a delta.
    # F(k) = kL + arctan(k delta) rises with slope between L and L + delta, and
    # F(k_a) = theta_n - (x - arctan x), so
    #   (x^3/3 - x^5/5) / ((L + delta) k_a)  <=  k / k_a - 1  <=  x^3 / (3 L k_a):
    # the estimate is low by O((k delta)^3) in the phase, (k delta)^2 delta / (3L) in f.
    L = 1.0
    delta = DELTA[end] * radius
    line = _duct([{"length": L, "area": _area(radius)}], "closed", end)
    count = 12
    got = dl.natural_frequencies(line, count)

    def g(w, lib):                       # cos kL - k delta sin kL: no poles
        kk = w / C
        return lib.cos(kk * L) - kk * delta * lib.sin(kk * L)

    ref = scan_roots(g, (count + 1) * math.pi * C / L, count, n_grid=20000) / (2 * math.pi)
    check(f"closed-{end} f_n, cot kL = k delta (mpmath)", got, ref, rtol=1e-11)
    n = np.arange(1, count + 1)
    f_a = (2 * n - 1) * C / (4 * (L + delta))
    x = 2 * math.pi * f_a / C * delta
    ka = 2 * math.pi * f_a / C
    lo = (x ** 3 / 3 - x ** 5 / 5) / ((L + delta) * ka)
    hi = x ** 3 / (3 * L * ka)
    rel = got / f_a - 1
    print(f"\n[closed-{end} vs (2n-1)c/(4(L+delta))] rel dev {rel.min():.2e}..{rel.max():.2e}, "
          f"bounds {lo.min():.2e}..{hi.max():.2e}")
    assert np.all(rel >= lo * (1 - 1e-6) - 1e-14)
    assert np.all(rel <= hi * (1 + 1e-6) + 1e-14)


@pytest.mark.parametrize("end", ["unflanged", "flanged"])
def test_open_open_pipe_with_end_corrections(end):
    # Both ends radiating: p(0) - delta p'(0) = 0 and p(L) + delta p'(L) = 0 (the end masses
    # above). With p = cos(kx + phi): kL + 2 arctan(k delta) = n pi, i.e.
    # sin kL (1 - (k delta)^2) + 2 k delta cos kL = 0 (derived here); to first order
    # f ~ n c / (2 (L + 2 delta)) (Kinsler).
    L, radius = 0.8, 0.02
    delta = DELTA[end] * radius
    line = _duct([{"length": L, "area": _area(radius)}], end, end)
    count = 10
    got = dl.natural_frequencies(line, count)

    def g(w, lib):
        x = w / C * delta
        return lib.sin(w / C * L) * (1 - x * x) + 2 * x * lib.cos(w / C * L)

    ref = scan_roots(g, (count + 1) * math.pi * C / L, count, n_grid=20000,
                     w_min=1e-3 * C / L) / (2 * math.pi)
    check(f"{end}-{end} f_n (mpmath)", got, ref, rtol=1e-11)
    f_a = np.arange(1, count + 1) * C / (2 * (L + 2 * delta))
    kd = 2 * math.pi * got / C * delta
    # the first-order estimate is within a few (k delta)^2 delta / L of the root
    assert np.all(np.abs(got / f_a - 1) <= 2 * kd ** 2 * delta / L + 1e-14)


# ------------------------------------------------------------- radiation
@pytest.mark.parametrize("end", ["unflanged", "flanged"])
def test_radiating_end_impedance_and_input_impedance(end):
    # Open end of radius a: Z = (rho c / S) (r (ka)^2 + i k delta), r = 1/4 unflanged,
    # 1/2 flanged (Kinsler; Levine and Schwinger; Norris and Sheng). Closed end at x = 0
    # with a source Q there: U(0) = Q. The input impedance of a pipe of length L loaded
    # by Z_L is Z_in = Z0 (Z_L + i Z0 tan kL) / (Z0 + i Z_L tan kL) (Kinsler, e^{iwt}).
    L, radius = 0.6, 0.025
    S = _area(radius)
    Z0 = RHO * C / S
    line = _duct([{"length": L, "area": S}], "closed", end)
    f = np.linspace(20.0, 0.5 * C / (2 * math.pi * radius), 1500)   # ka <= 0.5
    w = 2 * math.pi * f
    k = w / C
    ZL = Z0 * (RESISTANCE[end] * (k * radius) ** 2 + 1j * k * DELTA[end] * radius)
    xs = np.linspace(0.0, L, 9)
    p = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs, drive="volume_velocity"))
    U = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs, drive="volume_velocity",
                          quantity="volume_velocity"))
    check(f"{end} end p/U = Z_L (Levine-Schwinger; Kinsler)", p[:, -1] / U[:, -1], ZL, rtol=1e-10)
    Zin = Z0 * (ZL + 1j * Z0 * np.tan(k * L)) / (Z0 + 1j * ZL * np.tan(k * L))
    check(f"{end} input impedance (Kinsler)", p[:, 0], Zin, rtol=1e-10)
    check(f"{end} source volume velocity", U[:, 0], np.ones(f.size), rtol=1e-10)
    # full field: reflection R = (Z_L - Z0) / (Z_L + Z0) at L, U(0) = Q fixes the amplitude
    R = (ZL - Z0) / (ZL + Z0)
    A = Z0 / (1 - R * np.exp(-2j * k * L))
    kk = k[:, None]
    pref = A[:, None] * (np.exp(-1j * kk * xs) + R[:, None] * np.exp(-2j * kk * L + 1j * kk * xs))
    scale = np.abs(pref).max(axis=1, keepdims=True)
    check(f"{end} pipe pressure field (plane waves)", p / scale, pref / scale, rtol=1e-10,
          atol=1e-10)
    # energy: the power the source puts in is the power radiated, 0.5 Re(Z_L) |U_L|^2
    p_in = 0.5 * np.real(p[:, 0] * np.conj(U[:, 0]))
    p_rad = 0.5 * np.real(ZL) * np.abs(U[:, -1]) ** 2
    check(f"{end} input power = radiated power", p_in, p_rad, rtol=1e-9)


# ------------------------------------------------------------- anechoic ends
def test_anechoic_end_carries_a_travelling_wave():
    # Closed end at the source: all of Q enters the duct, U(0) = Q; an anechoic end
    # (Z = rho c / S) admits only the outgoing wave, so p(x) = (rho c / S) Q e^{-i k x}
    # and u = p / (rho c) (Kinsler, plane travelling wave).
    L, S = 3.0, 1.5e-3
    line = _duct([{"length": L, "area": S}], "closed", "anechoic")
    f = np.geomspace(1.0, 5000.0, 2000)
    k = 2 * math.pi * f[:, None] / C
    xs = np.linspace(0.0, L, 31)
    p = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs, drive="volume_velocity"))
    pref = RHO * C / S * np.exp(-1j * k * xs)
    # kx reaches ~280 rad: rounding of the phase grows like kx eps, hence rtol 1e-10
    check("anechoic travelling wave p = Z0 Q e^{-ikx} (Kinsler)", p, pref, rtol=1e-10)
    u = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs, drive="volume_velocity",
                          quantity="velocity"))
    check("anechoic particle velocity u = p / (rho c)", u, pref / (RHO * C), rtol=1e-10)


def test_source_between_two_anechoic_ends_radiates_both_ways():
    # A source Q in an infinite duct splits evenly: p(x) = (rho c / (2 S)) Q e^{-i k |x - a|}
    # (Kinsler); the same at an anechoic end (the other half goes into the absorbed side).
    L, S, a = 2.0, 3.0e-3, 0.7
    f = np.geomspace(5.0, 4000.0, 800)
    k = 2 * math.pi * f[:, None] / C
    xs = np.linspace(0.0, L, 21)
    line = _duct([{"length": L, "area": S}], "anechoic", "anechoic")
    p = np.asarray(dl.frf(line, f, drive_at=a, response_at=xs, drive="volume_velocity"))
    check("infinite duct point source (Kinsler)", p,
          RHO * C / (2 * S) * np.exp(-1j * k * np.abs(xs - a)), rtol=1e-10)
    p0 = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs, drive="volume_velocity"))
    check("source at an anechoic end", p0, RHO * C / (2 * S) * np.exp(-1j * k * xs), rtol=1e-10)


# ------------------------------------------------------------- area step
@pytest.mark.parametrize("ratio", [0.25, 4.0, 1.0 + 1e-3])
def test_area_step_transmission(ratio):
    # Junction of areas S1 -> S2: p continuous and volume velocity conserved give the
    # pressure transmission and reflection coefficients T = 2 S1 / (S1 + S2),
    # R = (S1 - S2) / (S1 + S2), power transmission 4 S1 S2 / (S1 + S2)^2 (Kinsler, ch. 10).
    L1, L2, S1 = 1.1, 1.6, 2.0e-3
    S2 = ratio * S1
    line = _duct([{"length": L1, "area": S1}, {"length": L2, "area": S2}], "closed", "anechoic")
    f = np.linspace(10.0, 3000.0, 700)
    k = 2 * math.pi * f / C
    f, k = f[np.abs(np.sin(k * 0.3)) > 0.05], k[np.abs(np.sin(k * 0.3)) > 0.05]
    R = (S1 - S2) / (S1 + S2)
    T = 2 * S1 / (S1 + S2)
    # full field from U(0) = Q: A (incident amplitude at the step) from
    # (S1 / rho c) (A e^{ik L1} - R A e^{-ik L1}) = Q
    A = RHO * C / S1 / (np.exp(1j * k * L1) - R * np.exp(-1j * k * L1))
    xs = np.concatenate([np.linspace(0.0, L1, 9), np.linspace(L1, L1 + L2, 9)[1:]])
    kk, Ak = k[:, None], A[:, None]
    pref = np.where(xs <= L1, Ak * (np.exp(-1j * kk * (xs - L1)) + R * np.exp(1j * kk * (xs - L1))),
                    Ak * T * np.exp(-1j * kk * (xs - L1)))
    p = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=xs, drive="volume_velocity"))
    scale = np.abs(pref).max(axis=1, keepdims=True)
    check("area step pressure field (Kinsler)", p / scale, pref / scale, rtol=1e-10, atol=1e-10)
    # the coefficients read off dampline's own field: two points in duct 1, one in duct 2
    xa, xb, xc = 0.2, 0.5, L1 + 0.9
    pa, pb, pc = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=[xa, xb, xc],
                                   drive="volume_velocity")).T
    ea, eb = np.exp(-1j * k * (xa - L1)), np.exp(-1j * k * (xb - L1))
    det = ea / eb - eb / ea
    Ai = (pa / eb - pb / ea) / det                  # p = Ai e^{-ik(x-L1)} + Br e^{ik(x-L1)}
    Br = (pb * ea - pa * eb) / det
    Tr = pc / np.exp(-1j * k * (xc - L1))
    check("area step T = 2 S1/(S1+S2) (Kinsler)", Tr / Ai, np.full(f.size, T), rtol=1e-9)
    check("area step R = (S1-S2)/(S1+S2) (Kinsler)", Br / Ai, np.full(f.size, R), rtol=1e-9,
          atol=1e-9)
    tau = (S2 / S1) * np.abs(Tr / Ai) ** 2
    check("area step power transmission 4 S1 S2/(S1+S2)^2", tau,
          np.full(f.size, 4 * S1 * S2 / (S1 + S2) ** 2), rtol=1e-9)
    # continuity across the step: p and U the same on both sides, particle velocity
    # jumps by S1 / S2
    eps = 1e-7
    near = [L1 - eps, L1 + eps]
    pj = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=near, drive="volume_velocity"))
    Uj = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=near, drive="volume_velocity",
                           quantity="volume_velocity"))
    uj = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=near, drive="volume_velocity",
                           quantity="velocity"))
    # over 2 eps the fields change by ~ k eps |p|: rtol 1e-4 is far above that, far below
    # the O(1) jump a wrong junction would give
    check("step: pressure continuous", pj[:, 1], pj[:, 0], rtol=1e-4)
    check("step: volume velocity conserved", Uj[:, 1], Uj[:, 0], rtol=1e-4,
          atol=1e-4 * np.abs(Uj).max())
    check("step: particle velocity ratio S1/S2", uj[:, 1], uj[:, 0] * S1 / S2, rtol=1e-4,
          atol=1e-4 * np.abs(uj).max())


# ------------------------------------------------------------- wall losses
def _kirchhoff_alpha(f, radius):
    """Kirchhoff's visco-thermal attenuation of a circular duct (Kirchhoff 1868, as given
    in Kinsler et al.): alpha = (1/(a c)) sqrt(w mu / (2 rho)) (1 + (gamma - 1)/sqrt(Pr))."""
    w = 2 * math.pi * f
    return math.sqrt(w * MU / (2 * RHO)) * (1 + (GAMMA - 1) / math.sqrt(PR)) / (radius * C)


@pytest.mark.parametrize("f,radius", [(200.0, 0.01), (1000.0, 0.025), (4000.0, 0.05)])
def test_wall_losses_attenuate_a_travelling_wave_as_kirchhoff(f, radius):
    # Kirchhoff's alpha is first order in the boundary-layer thickness delta_v / a
    # (~1e-3 here), and the anechoic end (rho c / S) reflects slightly against the lossy
    # characteristic impedance, so the rate is fitted over several wavelengths and
    # compared with rtol 1e-2 (a first-order formula). To the same order the phase
    # advances faster too: k = w/c + (1 - i) alpha (Kirchhoff 1868; from memory).
    S = _area(radius)
    alpha = _kirchhoff_alpha(f, radius)
    L = min(40.0, 2.0 / alpha)                       # about 2 nepers of decay
    xs = np.linspace(0.1 * L, 0.9 * L, 801)
    spec = [{"length": L, "area": S}]
    lossy = _duct(spec, "closed", "anechoic", model="none", wall_losses=True)
    p = np.asarray(dl.frf(lossy, [f], drive_at=0.0, response_at=xs, drive="volume_velocity"))[0]
    slope, _ = np.polyfit(xs, np.log(np.abs(p)), 1)
    check(f"Kirchhoff wall attenuation alpha at {f:g} Hz, a={radius:g} m", -slope, alpha, rtol=1e-2)
    phase_slope, _ = np.polyfit(xs, np.unwrap(np.angle(p)), 1)
    extra = -phase_slope - 2 * math.pi * f / C
    check(f"Kirchhoff phase excess = alpha at {f:g} Hz", extra, alpha, rtol=5e-2)
    # without wall losses the same wave does not decay (so the check above can fail)
    plain = _duct(spec, "closed", "anechoic")
    p0 = np.asarray(dl.frf(plain, [f], drive_at=0.0, response_at=xs, drive="volume_velocity"))[0]
    check("lossless duct: no decay", np.abs(p0), np.full(xs.size, RHO * C / S), rtol=1e-11)


def test_wall_losses_scale_as_sqrt_frequency_over_radius():
    # alpha ~ sqrt(f) / a (Kirchhoff): four times the frequency or half the radius doubles
    # the fitted rate, to the first-order accuracy of the formula (rtol 1e-2)
    rates = {}
    for f, radius in [(500.0, 0.02), (2000.0, 0.02), (500.0, 0.01)]:
        S = _area(radius)
        L = 2.0 / _kirchhoff_alpha(f, radius)
        xs = np.linspace(0.1 * L, 0.9 * L, 401)
        line = _duct([{"length": L, "area": S}], "closed", "anechoic", model="none",
                     wall_losses=True)
        p = np.asarray(dl.frf(line, [f], drive_at=0.0, response_at=xs, drive="volume_velocity"))[0]
        rates[(f, radius)] = -np.polyfit(xs, np.log(np.abs(p)), 1)[0]
    check("Kirchhoff scaling: 4 f -> 2 alpha", rates[(2000.0, 0.02)] / rates[(500.0, 0.02)], 2.0,
          rtol=1e-2)
    check("Kirchhoff scaling: a/2 -> 2 alpha", rates[(500.0, 0.01)] / rates[(500.0, 0.02)], 2.0,
          rtol=1e-2)
