"""Physical properties of random structural lines (hypothesis, deterministic).

Random stepped lines of 1 to 5 segments (axial, torsion, string) with random
ends (fixed, free, or a spring-mass-dashpot table), random attachments (masses,
springs, dashpots, damped absorbers) and random loss factors. Checked:

* reciprocity H(a -> b) = H(b -> a) (Maxwell-Betti; Rayleigh's reciprocity theorem);
* passivity Re(mobility) >= 0 at a driving point, = 0 without any damping;
* energy balance: input power 0.5 Re(F conj(v)) = power dissipated in dashpots,
  absorber dashpots and loss-factor segments (complex modulus S (1 + i eta):
  0.5 w eta S |u'|^2 per unit length);
* natural frequencies for n modes are a prefix of those for n + 5 (no mode missed,
  doubled or moved by the count asked for);
* every natural frequency is a pole of the undamped FRF whose residue is
  phi_n(x) phi_n(y) of the mass-normalised modes (modal expansion of the receptance;
  e.g. Ewins, Modal Testing; from memory), and the modes are mass-orthonormal by quadrature.
"""

from __future__ import annotations

import math

import numpy as np
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

import dampline as dl
from _reference_tools import MEASURED, gauss_points

SETTINGS = settings(max_examples=50, deadline=None, derandomize=True, database=None,
                    suppress_health_check=[HealthCheck.too_slow])

BASE = {  # base properties of each kind, scaled by 0.3-3 per segment
    "axial": {"E": 2.0e11, "rho": 7850.0, "area": 1.0e-4},
    "torsion": {"G": 8.0e10, "rho": 7850.0, "J": 1.0e-8},
    "string": {"tension": 200.0, "mass_per_length": 0.01},
}


def _S_m(kind, seg):
    """Stiffness coefficient and mass per length of a segment spec (the wave equation of
    each kind: E A and rho A, G J and rho J, T and mu)."""
    if kind == "axial":
        return seg["E"] * seg["area"], seg["rho"] * seg["area"]
    if kind == "torsion":
        return seg["G"] * seg["J"], seg["rho"] * seg["J"]
    return seg["tension"], seg["mass_per_length"]


scale = st.floats(0.3, 3.0)


@st.composite
def lines(draw, damped=True):
    """A random line spec plus the scales used to choose frequencies."""
    kind = draw(st.sampled_from(["axial", "torsion", "string", "torsion", "string"]))
    nseg = draw(st.integers(1, 5))
    segs = []
    lossy = damped and draw(st.booleans())
    for _ in range(nseg):
        seg = {"length": draw(st.floats(0.1, 1.0))}
        seg.update({k: v * draw(scale) for k, v in BASE[kind].items()})
        if lossy and draw(st.booleans()):
            seg["eta"] = draw(st.floats(0.0, 0.05))
        segs.append(seg)
    L = sum(s["length"] for s in segs)
    Sm = [_S_m(kind, s) for s in segs]
    S_ref = float(np.mean([a for a, _ in Sm]))
    m_ref = float(np.mean([b for _, b in Sm]))
    t_total = sum(s["length"] / math.sqrt(a / b) for s, (a, b) in zip(segs, Sm))
    w_ref = math.pi / t_total                     # about the first-mode scale

    def end():
        choice = draw(st.sampled_from(["fixed", "free", "table"]))
        if choice != "table":
            return choice
        t = {"spring": draw(st.floats(0.0, 10.0)) * S_ref / L,
             "mass": draw(st.floats(0.0, 1.0)) * m_ref * L}
        if damped and draw(st.booleans()):
            t["dashpot"] = draw(st.floats(0.0, 1.0)) * math.sqrt(S_ref * m_ref)
        return t

    ends = {"left": end(), "right": end()}
    atts = []
    for _ in range(draw(st.sampled_from([0, 1, 2, 3, 4, 2, 3]))):
        a = {"at": draw(st.floats(0.0, 1.0)) * L}
        what = draw(st.sampled_from(["mass", "spring", "dashpot", "absorber"]))
        if what == "mass":
            a["mass"] = draw(st.floats(0.01, 1.0)) * m_ref * L
        elif what == "spring":
            a["spring"] = draw(st.floats(0.1, 10.0)) * S_ref / L
        elif what == "dashpot":
            if not damped:
                continue
            a["dashpot"] = draw(st.floats(0.01, 1.0)) * math.sqrt(S_ref * m_ref)
        else:
            ma = draw(st.floats(0.01, 0.5)) * m_ref * L
            wa = draw(st.floats(0.3, 6.0)) * w_ref
            ab = {"mass": ma, "stiffness": ma * wa ** 2}
            if damped:
                ab["damping"] = draw(st.floats(0.0, 0.3)) * 2 * ma * wa
            a["absorber"] = ab
        atts.append(a)
    spec = {"kind": kind, "segments": segs, "ends": ends, "attachments": atts}
    if lossy:
        spec["damping"] = {"model": "loss_factor", "eta": draw(st.floats(0.0, 0.05))}
    return spec, w_ref


#: a position as a fraction of the length: exactly an end, or clear of the 1e-9 L band in
#: which dampline snaps a drive point (but not a response point) onto the end
positions = st.one_of(st.just(0.0), st.just(1.0), st.floats(1e-6, 1.0 - 1e-6))
freq_factors = st.lists(st.floats(0.05, 8.0), min_size=1, max_size=4)
#: w_ref is the first natural frequency of a uniform line with Dirichlet ends; hypothesis
#: favours round factors, so shift them off exact undamped resonances
JITTER = 1.0 + math.pi * 1e-4


def _shortest_gap(line):
    """Smallest distance between distinct points the solver must resolve (segment ends,
    attachments), relative to the length."""
    pts = np.unique(np.array(list(line.boundaries) + [a.at for a in line.attachments]))
    return float(np.diff(pts).min()) / line.length


def _record(label, value):
    MEASURED.append((label, float(value), 0.0))
    print(f"\n[{label}] {value:.2e}")


# ------------------------------------------------------------- reciprocity
@SETTINGS
@given(lines(), freq_factors, positions, positions)
def test_reciprocity(case, factors, ua, ub):
    # Maxwell-Betti / Rayleigh reciprocity: the displacement at b per unit force at a
    # equals the displacement at a per unit force at b, damped or not (symmetric
    # dynamic stiffness).
    spec, w_ref = case
    line = dl.Line.from_dict(spec)
    a, b = ua * line.length, ub * line.length
    f = np.array(factors) * JITTER * w_ref / (2 * math.pi)
    Ha = np.asarray(dl.frf(line, f, drive_at=a, response_at=[a, b]))
    Hb = np.asarray(dl.frf(line, f, drive_at=b, response_at=[a, b]))
    hab, hba = Ha[:, 1], Hb[:, 0]
    # floor: a transfer near a node or a support is tiny next to the driving points' level
    floor = 1e-12 * np.maximum(np.abs(Ha[:, 0]), np.abs(Hb[:, 1]))
    err = np.abs(hab - hba) / np.maximum(np.maximum(np.abs(hab), np.abs(hba)) + floor, 1e-300)
    _record("reciprocity rel err", err.max())
    assert np.all(err <= 1e-8)


# ------------------------------------------------------------- passivity
@SETTINGS
@given(lines(), freq_factors, positions)
def test_passivity_of_the_driving_point(case, factors, ux):
    # A passive structure absorbs power: Re(mobility) >= 0 at any driving point
    # (0.5 Re(F conj v) >= 0 with F = 1); any vibration text (Inman; Thomson).
    spec, w_ref = case
    line = dl.Line.from_dict(spec)
    x = ux * line.length
    f = np.array(factors) * JITTER * w_ref / (2 * math.pi)
    Y = np.asarray(dl.frf(line, f, drive_at=x, response_at=[x], quantity="mobility"))[:, 0]
    # rounding of the reactive part near a resonance is ~1e-13 |Y|; a sign error in any
    # damping term would give -O(eta) |Y|
    assert np.all(Y.real >= -1e-10 * np.abs(Y))


@SETTINGS
@given(lines(damped=False), freq_factors, positions)
def test_undamped_driving_point_mobility_is_imaginary(case, factors, ux):
    # No loss factor, dashpot or absorber damping: no power is absorbed, Re(Y) = 0.
    spec, w_ref = case
    line = dl.Line.from_dict(spec)
    x = ux * line.length
    f = np.array(factors) * JITTER * w_ref / (2 * math.pi)
    Y = np.asarray(dl.frf(line, f, drive_at=x, response_at=[x], quantity="mobility"))[:, 0]
    ratio = np.abs(Y.real) / np.maximum(np.abs(Y), 1e-300)   # Y = 0 at a fixed end
    _record("undamped |Re Y|/|Y|", ratio.max())
    assert np.all(ratio <= 1e-9)


# ------------------------------------------------------------- power balance
def _dissipated_power(line_spec, line, f, xd):
    """Power (W per unit force amplitude squared) dissipated at one frequency, from the
    response computed by dampline: dashpots 0.5 c w^2 |u|^2; absorber dashpots
    0.5 c w^2 |u - q|^2 with the absorber equation (k + i w c)(q - u) = m w^2 q solved
    here; loss-factor segments 0.5 w eta S |u'|^2 = 0.5 w eta |N|^2 / (S (1 + eta^2)),
    with N = S (1 + i eta) u' the internal force, integrated by Gauss-Legendre between
    every pair of points where N may jump or kink."""
    w = 2 * math.pi * f
    kind = line_spec["kind"]
    segs = line_spec["segments"]
    L = line.length
    ends = line_spec["ends"]
    eta_default = line_spec.get("damping", {}).get("eta", 0.0)
    points = []
    dash = []                                         # (x, c) of every dashpot to ground
    absorbers = []
    for att in line.attachments:
        points.append(att.at)
        if att.dashpot:
            dash.append((att.at, att.dashpot))
        if att.absorber is not None:
            absorbers.append((att.at, att.absorber))
    for side, x_end in (("left", 0.0), ("right", L)):
        e = ends[side]
        if isinstance(e, dict) and e.get("dashpot", 0.0) > 0:
            dash.append((x_end, e["dashpot"]))
    P = 0.0
    lumped_x = [x for x, _ in dash] + [x for x, _ in absorbers]
    if lumped_x:
        u = np.asarray(dl.frf(line, [f], drive_at=xd, response_at=lumped_x))[0]
        for (x, c), ux in zip(dash, u[:len(dash)]):
            P += 0.5 * c * w * w * abs(ux) ** 2
        for (x, ab), ux in zip(absorbers, u[len(dash):]):
            kc = ab.stiffness + 1j * w * ab.damping
            q = kc * ux / (kc - ab.mass * w * w)
            P += 0.5 * ab.damping * w * w * abs(ux - q) ** 2
    bounds = line.boundaries
    for j, seg in enumerate(segs):
        eta = seg.get("eta", eta_default) if "damping" in line_spec else 0.0
        if not eta:
            continue
        S, m = _S_m(kind, seg)
        a, b = bounds[j], bounds[j + 1]
        cuts = sorted({a, b} | {x for x in points + [xd] if a < x < b})
        kmax = w * math.sqrt(m / S)
        order = int(30 + 2 * kmax * (b - a))
        xq, wq = gauss_points(cuts, order)
        N = np.asarray(dl.frf(line, [f], drive_at=xd, response_at=xq, quantity="force"))[0]
        P += 0.5 * w * eta / (S * (1 + eta * eta)) * np.sum(wq * np.abs(N) ** 2)
    return P


@SETTINGS
@given(lines(), st.floats(0.05, 6.0), positions)
def test_input_power_equals_dissipated_power(case, factor, ux):
    spec, w_ref = case
    line = dl.Line.from_dict(spec)
    xd = ux * line.length
    f = factor * JITTER * w_ref / (2 * math.pi)
    Y = np.asarray(dl.frf(line, [f], drive_at=xd, response_at=[xd], quantity="mobility"))[0, 0]
    p_in = 0.5 * Y.real                                # 0.5 Re(F conj v), F = 1, v = Y
    p_out = _dissipated_power(spec, line, f, xd)
    # rtol 1e-6 leaves room for the quadrature (converged to ~1e-12) and the solve; the
    # floor 1e-11 |Y| covers lines with no damping at all (both sides ~0), where Re(Y) is
    # rounding of the reactive |Y|, amplified near a resonance (~1e-13 |Y| seen)
    err = abs(p_in - p_out) / max(1e-6 * abs(p_in) + 1e-11 * abs(Y), 1e-300)
    _record("power balance fraction of tolerance", err)
    if abs(p_in) > 1e-8 * abs(Y):                       # a damped case
        _record("power balance rel err (damped)", abs(p_in - p_out) / abs(p_in))
    assert err <= 1.0


# ------------------------------------------------------------- natural frequencies
@SETTINGS
@given(lines(), st.integers(1, 12))
def test_natural_frequencies_prefix(case, n):
    spec, _ = case
    line = dl.Line.from_dict(spec)
    f_n = dl.natural_frequencies(line, n)
    f_m = dl.natural_frequencies(line, n + 5)
    assert np.all(np.diff(f_m) >= 0) and np.all(f_m >= 0)
    # Each root is bisected on the Wittrick-Williams count to a few eps of its bracket,
    # but the count comes from a factorisation whose stiffnesses span S/L to S/h for the
    # shortest gap h: the root is fixed only to ~eps L / h (measured: 2 eps L / h for
    # h = 6e-8 L). Tolerance 1e-12 + 1e-14 L / h.
    rtol = 1e-12 + 1e-14 / _shortest_gap(line)
    err = np.abs(f_n - f_m[:n]) / np.maximum(f_m[:n], 1e-300)
    err[f_m[:n] == 0] = np.abs(f_n[f_m[:n] == 0])        # rigid modes are exactly 0.0
    _record("prefix rel diff", err.max())
    assert np.all(err <= rtol)


@SETTINGS
@given(lines(damped=False))
def test_natural_frequencies_are_poles_with_modal_residues(case):
    # Near an undamped natural frequency w_n the receptance is
    # H(x, y; w) = phi_n(x) phi_n(y) / (w_n^2 - w^2) + R(w), R smooth; the average of
    # (w_n^2 - w^2) H at w_n (1 +- d) cancels the first-order part of R and leaves
    # phi_n(x) phi_n(y) + O(d^2 / gap^2). d = 1e-6; lines whose modes crowd closer than
    # 1e-3 (relative) are skipped.
    spec, w_ref = case
    line = dl.Line.from_dict(spec)
    # roots are fixed only to ~eps L / h (see the prefix test): keep the detuning d far
    # above that
    assume(_shortest_gap(line) > 1e-4)
    count = 4
    ms = dl.modes(line, count)
    fr = ms.frequencies
    gaps = np.diff(fr) / np.maximum(fr[1:], 1e-300)
    assume(np.all(gaps[fr[1:] > 0] > 1e-3))
    xs = np.linspace(0.0, line.length, 7)
    phi = ms.shape(xs)
    d = 1e-6
    worst = 0.0
    # a mode may barely move the line (an absorber's own motion): measure against the
    # largest shape product of all modes
    level = np.abs(phi).max() ** 2
    for j in np.flatnonzero(fr > 0):
        wn = 2 * math.pi * fr[j]
        acc = np.zeros((xs.size, xs.size), complex)
        for s in (1 - d, 1 + d):
            w = wn * s
            H = np.stack([np.asarray(dl.frf(line, [w / (2 * math.pi)], drive_at=y,
                                            response_at=xs))[0] for y in xs], axis=1)
            acc += 0.5 * (wn ** 2 - w ** 2) * H
        ref = np.outer(phi[:, j], phi[:, j])
        err = np.abs(acc - ref).max() / max(np.abs(ref).max(), 1e-6 * level)
        worst = max(worst, err)
        assert err <= 1e-5
    _record("modal residue err/peak", worst)


@SETTINGS
@given(lines(damped=False))
def test_modes_are_mass_orthonormal(case):
    # int m phi_i phi_j dx + point and end masses + absorber masses q_i q_j = delta_ij
    # (orthogonality of normal modes), by Gauss-Legendre quadrature between kinks
    spec, _ = case
    line = dl.Line.from_dict(spec)
    count = 6
    ms = dl.modes(line, count)
    assert np.all(np.isfinite(ms.nodal)) and np.all(np.abs(ms.nodal).max(axis=1) > 0)
    kind = spec["kind"]
    bounds = line.boundaries
    cuts = sorted(set(bounds) | {a.at for a in line.attachments})
    gram = np.zeros((count, count))
    for j, seg in enumerate(spec["segments"]):
        _, m = _S_m(kind, seg)
        sub = [x for x in cuts if bounds[j] <= x <= bounds[j + 1]]
        xq, wq = gauss_points(sub, 60)
        phi = ms.shape(xq)
        gram += phi.T @ ((m * wq)[:, None] * phi)
    for att in line.attachments:
        if att.mass:
            v = ms.shape([att.at])[0]
            gram += att.mass * np.outer(v, v)
    for side, x_end in (("left", 0.0), ("right", line.length)):
        e = spec["ends"][side]
        if isinstance(e, dict) and e.get("mass", 0.0) > 0:
            v = ms.shape([x_end])[0]
            gram += e["mass"] * np.outer(v, v)
    absorbers = [a.absorber for a in line.attachments if a.absorber is not None]
    q = ms.absorber_amplitudes
    assert q.shape == (count, len(absorbers))
    for j, ab in enumerate(absorbers):
        gram += ab.mass * np.outer(q[:, j], q[:, j])
    err = np.abs(gram - np.eye(count)).max()
    _record("random-line mass orthonormality err", err)
    assert err <= 1e-8
