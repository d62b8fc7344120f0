"""Damping models and modal superposition against exact solutions and published results.

Time convention e^{+i w t}; mass-normalised undamped modes phi_n (natural frequency
w_n). A single mode's receptance is phi_n(x_r) phi_n(x_d) / D_n(w) with
D_n = w_n^2 + 2 i zeta_n w_n w - w^2 (viscous) or w_n^2 (1 + i eta_n) - w^2
(hysteretic) (any vibration text: Inman, Engineering Vibration; Thomson, Theory of
Vibration).

Errors of a modal sum against the exact dynamic-stiffness solution are measured in dB
of the local response level, ``dl.studies.local_db_error``:
20 log10(1 + |H - H_ref| / max |H_ref| within +-10 % in frequency), so that every
resonance peak is held to the limit and antiresonance dips (where any relative error is
large and harmless) do not dominate. Unless a test says otherwise the modes kept reach
at least 2.5 times the top of the band. Every such error is printed (``pytest -s``) and
recorded in ``_reference_tools.MEASURED``.

Sources (see /work/shared/REFERENCES.md):

* Rayleigh damping zeta_n = alpha / (2 w_n) + beta w_n / 2 (Chopra, Dynamics of
  Structures, classical damping; from memory).
* Q = 1 / (2 zeta), half-power bandwidth 2 zeta f_n; hysteretic peak 1 / eta times
  static, at w_n (Inman; Thomson).
* Modal strain energy loss factor eta_n = sum_s eta_s U_sn / sum_s U_sn (Ungar and
  Kerwin 1962; Johnson and Kienholz, AIAA J. 20(9), 1982).
* Absorber on an undamped single mode: tuning 1 / (1 + mu), damping ratio
  sqrt(3 mu / (8 (1 + mu)^3)), equal peaks ~ sqrt(1 + 2 / mu) times static (Den Hartog,
  Mechanical Vibrations, 4th ed.).
* Uniform fixed-free bar: f_n = (2n - 1) c / (4L), mass-normalised modes
  phi_n = sqrt(2 / (rho A L)) sin(k_n x), k_n = (2n - 1) pi / (2L); static receptance
  min(x, a) / (EA) (Rao, Mechanical Vibrations; derived).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
import scipy.optimize

import dampline as dl
from dampline.studies import local_db_error
from dampline.studies.absorber import den_hartog
from _reference_tools import MEASURED, check, gauss_points

E, RHO, AREA = 2.1e11, 7850.0, 2.0e-4
E_AL, RHO_AL = 7.0e10, 2700.0


# ------------------------------------------------------------------ helpers
def _line(kind, segments, left, right, damping=None, attachments=()):
    spec = {"kind": kind, "segments": segments, "ends": {"left": left, "right": right}}
    if isinstance(damping, dict):
        spec["damping"] = damping
    if attachments:
        spec["attachments"] = list(attachments)
    line = dl.Line.from_dict(spec)
    # a Damping object (a zeta function has no dict form) replaces the default
    return line.replace(damping=damping) if isinstance(damping, dl.Damping) else line


def _segments(kind, etas=(None, None, None)):
    """Three unequal segments (steel / aluminium / steel-like) of each kind, so that no
    mode shape is a plain sine; ``etas`` gives each segment its own loss factor."""
    if kind == "axial":
        segs = [{"length": 0.3, "E": E, "rho": RHO, "area": AREA},
                {"length": 0.25, "E": E_AL, "rho": RHO_AL, "area": 5e-4},
                {"length": 0.45, "E": E, "rho": RHO, "area": 1.2e-4}]
    elif kind == "torsion":
        segs = [{"length": 0.3, "G": 8.0e10, "rho": RHO, "J": 1e-8},
                {"length": 0.25, "G": 2.6e10, "rho": RHO_AL, "J": 3e-8},
                {"length": 0.45, "G": 8.0e10, "rho": RHO, "J": 0.6e-8}]
    elif kind == "string":
        segs = [{"length": 0.3, "tension": 70.0, "mass_per_length": 6e-4},
                {"length": 0.25, "tension": 70.0, "mass_per_length": 1.5e-3},
                {"length": 0.45, "tension": 70.0, "mass_per_length": 4e-4}]
    elif kind == "duct":
        segs = [{"length": 0.3, "area": 1e-3},
                {"length": 0.25, "area": 3e-3},
                {"length": 0.45, "area": 1.5e-3}]
    else:
        segs = [{"length": 0.3, "E": E, "rho": RHO, "area": AREA, "I": 1e-9},
                {"length": 0.25, "E": E_AL, "rho": RHO_AL, "area": 4e-4, "I": 3e-9},
                {"length": 0.45, "E": E, "rho": RHO, "area": 1.5e-4, "I": 0.6e-9}]
    for s, eta in zip(segs, etas):
        if eta is not None:
            s["eta"] = eta
    return segs


#: one support per kind with no rigid-body mode: (left, right)
ENDS = {"axial": ("fixed", "free"), "torsion": ("fixed", "free"),
        "string": ("fixed", "fixed"), "duct": ("closed", "open"),
        "bending": ("clamped", "free")}
KINDS = tuple(ENDS)


def _kind_line(kind, damping=None, etas=(None, None, None), attachments=()):
    return _line(kind, _segments(kind, etas), *ENDS[kind], damping=damping,
                 attachments=attachments)


def _drive(kind):
    return "volume_velocity" if kind == "duct" else "force"


#: drive and response points (fractions of the 1 m length) clear of every end at which
#: the response vanishes (fixed, clamped, open)
XD, XR = 0.83, [0.17, 0.52, 0.83]


def _db_error(label, H, H_ref, f, limit=None):
    """Largest local-level error in dB (recorded, printed, and held to ``limit``)."""
    err = float(np.max(local_db_error(np.asarray(H), np.asarray(H_ref), f)))
    MEASURED.append((label, err, err / limit if limit else 0.0))
    print(f"\n[{label}] {err:.4f} dB" + (f" (limit {limit} dB)" if limit else ""))
    if limit is not None:
        assert err <= limit, f"{label}: {err:.4f} dB > {limit} dB"
    return err


def _uniform_bar(left="fixed", right="free", damping=None, length=1.0, area=AREA,
                 attachments=()):
    return _line("axial", [{"length": length, "E": E, "rho": RHO, "area": area}], left,
                 right, damping=damping, attachments=attachments)


# ================================================================== 1. Rayleigh
def _rayleigh_for(line, count=10):
    """alpha and beta giving 0.01 from each term at the first and the ``count``-th mode."""
    fn = dl.natural_frequencies(line, count)
    w1, wc = 2 * math.pi * fn[0], 2 * math.pi * fn[-1]
    return 0.02 * w1, 0.02 / wc


@pytest.mark.parametrize("kind", KINDS)
def test_rayleigh_damping_ratio_per_mode(kind):
    # zeta_n = alpha / (2 w_n) + beta w_n / 2 (Chopra, classical damping); C = alpha M +
    # beta K leaves every mode a viscous oscillator, so the table's identities are exact:
    # Q = 1 / (2 zeta), bandwidth 2 zeta f_n, loss factor 2 zeta at w_n and damped
    # frequency f_n sqrt(1 - zeta^2) (any vibration text; Inman)
    alpha, beta = _rayleigh_for(_kind_line(kind))
    line = _kind_line(kind, {"model": "rayleigh", "alpha": alpha, "beta": beta})
    xd = XD * line.length
    tab = dl.modal_table(line, 10, drive_at=xd, response_at=xd, drive=_drive(kind))
    wn = 2 * math.pi * tab["frequency"]
    zeta = alpha / (2 * wn) + beta * wn / 2
    check(f"{kind}: Rayleigh zeta_n (Chopra)", tab["damping_ratio"], zeta, rtol=1e-10)
    check(f"{kind}: Q = 1/(2 zeta)", tab["Q"], 1 / (2 * zeta), rtol=1e-10)
    check(f"{kind}: bandwidth = 2 zeta f_n", tab["bandwidth"], 2 * zeta * tab["frequency"],
          rtol=1e-10)
    check(f"{kind}: loss factor = 2 zeta", tab["loss_factor"], 2 * zeta, rtol=1e-10)
    check(f"{kind}: damped frequency f_n sqrt(1 - zeta^2)", tab["damped_frequency"],
          tab["frequency"] * np.sqrt(1 - zeta ** 2), rtol=1e-10)
    assert all(name == "Rayleigh damping" for name in tab.limiting_mechanism())
    # one viscous mode alone peaks at phi_d^2 / (w_n^2 2 zeta sqrt(1 - zeta^2)) (Inman); the
    # table's 'peak' drops the sqrt(1 - zeta^2), an O(zeta^2 / 2) difference
    phi = dl.modes(line, 10).shape([xd])[0]
    single = phi ** 2 / (wn ** 2 * 2 * zeta * np.sqrt(1 - zeta ** 2))
    check(f"{kind}: table peak vs single viscous mode", tab["peak"], single, rtol=1e-3)


def test_rayleigh_pairs_reproduce_both_ratios():
    # alpha, beta fitted to (f1, z1), (f2, z2) must give back z1 at f1 and z2 at f2 by
    # zeta = alpha / (2 w) + beta w / 2 (Chopra); put the pairs on natural frequencies 1
    # and 6 so the table reads them back, and check a mode in between against the formula
    line = _kind_line("axial")
    fn = dl.natural_frequencies(line, 8)
    pairs = ((fn[0], 0.02), (fn[5], 0.01))
    d = dl.Damping(model="rayleigh", pairs=pairs)
    for f, z in pairs:
        w = 2 * math.pi * f
        check(f"pairs fit at {f:.1f} Hz", d.alpha / (2 * w) + d.beta * w / 2, z, rtol=1e-12)
    tab = dl.modal_table(line.replace(damping=d), 8)
    check("table zeta at the two pair frequencies", tab["damping_ratio"][[0, 5]],
          [0.02, 0.01], rtol=1e-10)
    w = 2 * math.pi * fn
    check("table zeta of every mode", tab["damping_ratio"], d.alpha / (2 * w) + d.beta * w / 2,
          rtol=1e-10)
    # the same through the model dict; a pair needing a negative coefficient is refused
    same = _line("axial", _segments("axial"), *ENDS["axial"],
                 damping={"model": "rayleigh", "pairs": [list(p) for p in pairs]})
    check("pairs from a dict", [same.damping.alpha, same.damping.beta], [d.alpha, d.beta],
          rtol=1e-14)
    # (zeta falling faster than 1 / w needs beta < 0)
    with pytest.raises(dl.ModelError, match="negative coefficient"):
        dl.Damping(model="rayleigh", pairs=((fn[0], 0.05), (fn[5], 0.001)))


def test_rayleigh_modal_sum_matches_exact():
    # the exact solver applies C = alpha M + beta K as S (1 + i w beta) and
    # w^2 m - i w alpha m; the modal sum as alpha + beta w_n^2 per mode, with the residual
    # of the left-out (stiffness-controlled) modes following K (1 + i w beta)
    alpha, beta = _rayleigh_for(_kind_line("axial"))
    line = _kind_line("axial", {"model": "rayleigh", "alpha": alpha, "beta": beta})
    ms = dl.modes(line, 30)
    f = np.linspace(0.01, 0.4, 2000) * ms.frequencies[-1]
    He = dl.frf(line, f, XD, XR)
    Hm = dl.frf(line, f, XD, XR, method="modal", modes=ms)
    _db_error("Rayleigh axial: modal (30 modes, band 0.4 f_30) vs exact", Hm, He, f, 0.1)


def test_half_power_bandwidth_of_exact_frf_matches_table():
    # Measured on the exact receptance of a lightly damped uniform fixed-free bar: the
    # -3 dB width of each peak is 2 zeta f_n (Inman) up to O(zeta^2) ~ 1e-5 and the
    # background of the other modes (measured 2e-5 at zeta ~ 0.003)
    alpha, beta = 20.0, 1e-8
    line = _uniform_bar(damping={"model": "rayleigh", "alpha": alpha, "beta": beta})
    tab = dl.modal_table(line, 4)
    for n in range(4):
        fn, bw = tab["frequency"][n], tab["bandwidth"][n]
        f = fn + np.linspace(-4, 4, 4001) * bw       # 500 points per bandwidth
        H = dl.frf(line, f, 1.0, [1.0])
        pk = H.peaks(0)
        assert len(pk) == 1
        check(f"mode {n + 1}: peak frequency ~ f_n", pk.frequency, [fn], rtol=2 * tab[
            "damping_ratio"][n] ** 2 + 1e-5)
        check(f"mode {n + 1}: half-power bandwidth of the exact FRF vs table", pk.bandwidth,
              [bw], rtol=1e-3)


# ================================================================== 2. uniform loss factor
@pytest.mark.parametrize("kind", KINDS)
def test_uniform_loss_factor_modal_matches_exact(kind):
    # E -> E (1 + i eta) everywhere (a complex bulk modulus for a duct) is proportional
    # damping: every mode keeps its shape and takes loss factor eta (Ungar and Kerwin), so
    # the modal sum plus residual converges to the exact solution and coupling is nil
    eta = 0.01
    line = _kind_line(kind, {"model": "loss_factor", "eta": eta})
    ms = dl.modes(line, 30)
    f = np.linspace(0.01, 0.4, 2000) * ms.frequencies[-1]
    kw = {"drive": _drive(kind)}
    He = dl.frf(line, f, XD, XR, **kw)
    Hf = dl.frf(line, f, XD, XR, method="modal", modes=ms, **kw)
    Hd = dl.frf(line, f, XD, XR, method="modal", modes=ms, coupling="diagonal", **kw)
    _db_error(f"uniform eta, {kind}: modal (30 modes, band 0.4 f_30) vs exact", Hf, He, f, 0.1)
    c = dl.coupling(line, ms, drive_at=XD, response_at=XR[0])
    assert c.proportional
    np.testing.assert_allclose(c.index, 0.0, atol=1e-12)
    check(f"{kind}: full == diagonal (proportional)", np.asarray(Hd), np.asarray(Hf),
          rtol=1e-12)
    tab = dl.modal_table(line, ms)
    # hysteretic damping at resonance: zeta = eta / 2, Q = 1/eta (REFERENCES: peak 1/eta
    # times static, exactly at w_n)
    check(f"{kind}: damping ratio of a hysteretic mode, eta / 2",
          tab["damping_ratio"], np.full(30, eta / 2), rtol=1e-9)


# ================================================================== 3. non-proportional damping
def _lossy_segment_bar():
    # eta 0.3 in the 0.2 m middle segment of a uniform steel bar, 0.002 elsewhere
    segs = [{"length": 0.3, "E": E, "rho": RHO, "area": AREA},
            {"length": 0.2, "E": E, "rho": RHO, "area": AREA, "eta": 0.3},
            {"length": 0.5, "E": E, "rho": RHO, "area": AREA}]
    return _line("axial", segs, "fixed", "free", {"model": "loss_factor", "eta": 0.002})


def _dashpot_bar():
    # a 3000 N s/m dashpot to ground at 0.62 m of a 1 m bar (rho c A ~ 8000 N s/m): it
    # damps mode 1 to eta ~ 0.3 and barely touches mode 7 (near a node)
    return _uniform_bar(damping={"model": "loss_factor", "eta": 0.002},
                        attachments=[{"at": 0.62, "dashpot": 3000.0}])


NONPROP = {"lossy segment": _lossy_segment_bar, "point dashpot": _dashpot_bar}


@pytest.mark.parametrize("case", NONPROP)
def test_nonproportional_damping_needs_full_coupling(case):
    # Non-proportional damping couples the modes; the full projected D(w) keeps that
    # coupling, the diagonal one (each mode on its own strain-energy loss factor,
    # Johnson and Kienholz) does not. Band up to 0.3 f_31, 60 modes kept.
    line = NONPROP[case]()
    ms = dl.modes(line, 60)
    f = np.linspace(0.005, 0.3, 3000) * ms.frequencies[30]
    xr = [1.0, 0.45]
    He = dl.frf(line, f, 1.0, xr)
    full = _db_error(f"{case}: full coupling (60 modes) vs exact", dl.frf(
        line, f, 1.0, xr, method="modal", modes=ms), He, f, 0.2)
    diag = _db_error(f"{case}: diagonal coupling (60 modes) vs exact", dl.frf(
        line, f, 1.0, xr, method="modal", modes=ms, coupling="diagonal"), He, f)
    print(f"[{case}] diagonal {diag:.2f} dB vs full {full:.3f} dB: {diag - full:.2f} dB worse")
    assert diag > 0.5, f"{case}: the diagonal approximation should be visibly worse"
    c = dl.coupling(line, ms.first(20), drive_at=1.0)
    assert not c.proportional
    assert c.index.max() > 0.1
    assert np.nanmax(np.abs(c.peak_difference_db)) > 0.3


def test_coupling_default_drive_avoids_a_held_right_end():
    # free-fixed bar, lossy segment: with the right end held the default drive and response
    # must move to the left end, i.e. match an explicit drive_at = 0
    segs = [{"length": 0.3, "E": E, "rho": RHO, "area": AREA, "eta": 0.3},
            {"length": 0.7, "E": E, "rho": RHO, "area": AREA}]
    line = _line("axial", segs, "free", "fixed", {"model": "loss_factor", "eta": 0.002})
    explicit = dl.coupling(line, 6, drive_at=0.0)
    assert np.all(np.isfinite(explicit.peak_difference_db))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        default = dl.coupling(line, 6)
    check("coupling: default drive on a free-fixed bar = drive at x = 0",
          default.peak_difference_db, explicit.peak_difference_db, rtol=1e-9, atol=1e-12)


# ================================================================== 4. modal strain energy
MSE_ETAS = (0.002, 0.3, 0.05)


@pytest.mark.parametrize("kind", KINDS)
def test_strain_energy_loss_factor_lies_between_segment_extremes(kind):
    # eta_n = sum_s eta_s U_sn / sum_s U_sn is a weighted mean of the segment loss factors
    # (Ungar and Kerwin 1962; Johnson and Kienholz 1982): between the extremes for every
    # mode, and the shares (one per segment) add up to it
    line = _kind_line(kind, {"model": "loss_factor", "eta": 0.0}, etas=MSE_ETAS)
    tab = dl.modal_table(line, 20)
    eta = tab["loss_factor"]
    shares = np.vstack(list(tab.shares.values()))
    assert shares.shape == (3, 20)
    check(f"{kind}: shares add up to the loss factor", shares.sum(axis=0), eta, rtol=1e-12)
    assert np.all(shares >= 0)
    lo, hi = min(MSE_ETAS), max(MSE_ETAS)
    print(f"\n[{kind}] MSE loss factors {eta.min():.4f} .. {eta.max():.4f} "
          f"(segments {lo} .. {hi})")
    assert np.all(eta >= lo * (1 - 1e-9)) and np.all(eta <= hi * (1 + 1e-9))
    assert eta.max() - eta.min() > 0.02              # the modes do differ
    # the limiting mechanism is the largest share
    names = list(tab.shares)
    assert tab.limiting_mechanism() == [names[i] for i in shares.argmax(axis=0)]
    if kind == "duct":
        return      # a duct's loss factor sits in its compliance, not its strain energy
    # each share recomputed by independent quadrature of the strain energy:
    # U_sn = int_s S phi_n'^2 (EI phi_n''^2 for a beam) and sum_s U_sn = w_n^2 for
    # mass-normalised modes, so share_sn = eta_s U_sn / w_n^2
    ms = dl.modes(line, 20)
    order = 2 if kind == "bending" else 1
    stiff = {"axial": lambda s: s["E"] * s["area"], "torsion": lambda s: s["G"] * s["J"],
             "string": lambda s: s["tension"], "bending": lambda s: s["E"] * s["I"]}[kind]
    bounds = np.array(line.boundaries)
    energy = []
    for j, seg in enumerate(_segments(kind)):
        x, w = gauss_points(np.linspace(bounds[j], bounds[j + 1], 41), 10)
        d = ms.shape(x, derivative=order)
        energy.append(stiff(seg) * (w[:, None] * d ** 2).sum(axis=0))
    energy = np.array(energy)
    check(f"{kind}: strain energies add up to w_n^2", energy.sum(axis=0), ms.omega ** 2,
          rtol=1e-8)
    check(f"{kind}: shares = eta_s U_sn / w_n^2 (quadrature)", shares,
          np.array(MSE_ETAS)[:, None] * energy / ms.omega ** 2, rtol=1e-8)


@pytest.mark.parametrize("kind, ends", [("axial", ("free", "free")),
                                        ("bending", ("free", "free")),
                                        ("duct", ("closed", "closed"))])
def test_rigid_body_rows(kind, ends):
    # a free-free (closed-closed duct) line has rigid-body modes (1 for second-order
    # lines, 2 for a beam) at 0 Hz: no strain energy, no damping ratio
    line = _line(kind, _segments(kind, MSE_ETAS), *ends, {"model": "loss_factor", "eta": 0.0})
    n_rigid = 2 if kind == "bending" else 1
    tab = dl.modal_table(line, 8, drive_at=1.0, response_at=1.0, drive=_drive(kind))
    np.testing.assert_array_equal(tab["frequency"][:n_rigid], 0.0)
    assert np.all(tab["frequency"][n_rigid:] > 0)
    for col in ("damping_ratio", "loss_factor", "Q", "bandwidth", "peak", "peak_db"):
        assert np.all(np.isnan(tab[col][:n_rigid])), col
        assert np.all(np.isfinite(tab[col][n_rigid:])), col
    eta = tab["loss_factor"][n_rigid:]
    assert np.all((eta >= min(MSE_ETAS) * (1 - 1e-9)) & (eta <= max(MSE_ETAS) * (1 + 1e-9)))
    assert tab.limiting_mechanism()[:n_rigid] == [""] * n_rigid


def test_duct_uniform_loss_factor_in_table_is_eta():
    # A uniform loss factor is proportional damping: every mode's loss factor is eta
    # (modal strain energy, Ungar and Kerwin; for the duct D_n = w_n^2 - w^2 / (1 + i eta)
    # vanishes at w^2 = w_n^2 (1 + i eta), the same pole as a solid with E (1 + i eta))
    eta = 0.3
    line = _kind_line("duct", {"model": "loss_factor", "eta": eta})
    tab = dl.modal_table(line, 6)
    bar = dl.modal_table(_kind_line("axial", {"model": "loss_factor", "eta": eta}), 6)
    check("axial: table loss factor = eta", bar["loss_factor"], np.full(6, eta), rtol=1e-10)
    check("duct: table loss factor = eta", tab["loss_factor"], np.full(6, eta), rtol=1e-6)


def test_table_peak_is_the_single_mode_peak_for_a_loss_factor():
    # one hysteretic mode alone: |phi_r phi_d / (w_n^2 (1 + i eta) - w^2)| peaks at w_n at
    # phi_r phi_d / (w_n^2 eta) (Inman); the table documents 'peak' as |phi_r phi_d| /
    # (w_n^2 eta_n), "the receptance peak the mode alone gives"
    eta = 0.3
    line = _uniform_bar(damping={"model": "loss_factor", "eta": eta})
    ms = dl.modes(line, 1)
    tab = dl.modal_table(line, ms, drive_at=1.0, response_at=1.0)
    f = ms.frequencies[0] * np.linspace(0.9, 1.1, 20001)
    H = dl.frf(line, f, 1.0, [1.0], method="modal", modes=ms, residual=False)
    phi = ms.shape([1.0])[0, 0]
    check("single-mode peak, closed form", np.abs(np.asarray(H)).max(),
          phi ** 2 / (ms.omega[0] ** 2 * eta), rtol=1e-6)
    check("table peak vs single-mode peak", tab["peak"][0], phi ** 2 / (ms.omega[0] ** 2 * eta),
          rtol=1e-3)


# ================================================================== 5. Den Hartog absorber
def test_den_hartog_formulas():
    # f_a / f_p = 1 / (1 + mu), zeta_a = sqrt(3 mu / (8 (1 + mu)^3)) (Den Hartog)
    for mu in (0.01, 0.05, 0.2):
        m_eff, fp = 3.0, 40.0
        ab = den_hartog(fp, m_eff, mu * m_eff)
        wa = 2 * math.pi * ab.frequency_hz
        check(f"mu {mu}: tuning ratio 1/(1+mu)", ab.frequency_hz / fp, 1 / (1 + mu), rtol=1e-12)
        check(f"mu {mu}: absorber damping ratio", ab.damping / (2 * ab.mass * wa),
              math.sqrt(3 * mu / (8 * (1 + mu) ** 3)), rtol=1e-12)


@pytest.mark.parametrize("mass", [0.2, 1.0])
def test_tuned_absorber_equal_peak_level(mass):
    # A light stiff bar (0.08 kg) fixed at x = 0 carrying a 20 kg end mass: its first mode
    # (51.5 Hz; the next at 2.6 kHz) is a single-degree-of-freedom primary with modal
    # stiffness m_eff w_1^2. An absorber of mass ratio mu at the tip, optimised on the
    # exact model, holds the tip receptance to about sqrt(1 + 2/mu) times the static
    # 1 / (m_eff w_1^2) (Den Hartog's equal peaks), at tuning near 1 / (1 + mu).
    line = _uniform_bar(right={"mass": 20.0}, area=1e-5)
    fn = dl.natural_frequencies(line, 2)
    assert fn[1] > 40 * fn[0]
    tun = dl.studies.tune_absorber(line, 1, mass, 1.0)
    mu = tun.mass_ratio
    static = 1.0 / (tun.effective_mass * (2 * math.pi * tun.mode_hz) ** 2)
    check(f"mu {mu:.3f}: single-mode static = bar static L/(EA)", static,
          1.0 / (E * 1e-5), rtol=1e-4)
    check(f"mu {mu:.3f}: start is Den Hartog's tuning", tun.start.stiffness,
          den_hartog(tun.mode_hz, tun.effective_mass, mass).stiffness, rtol=1e-12)
    check(f"mu {mu:.3f}: optimised peak / static vs sqrt(1 + 2/mu) (Den Hartog)",
          tun.peak_tuned / static, math.sqrt(1 + 2 / mu), rtol=0.02)
    check(f"mu {mu:.3f}: optimised tuning ratio vs 1/(1+mu)",
          tun.tuned.frequency_hz / tun.mode_hz, 1 / (1 + mu), rtol=0.01)
    assert tun.peak_tuned <= tun.peak_start * (1 + 1e-9)
    assert tun.peak_tuned < 0.1 * tun.peak_bare       # bare: undamped, grid-limited


# ================================================================== 6. truncation
@pytest.mark.parametrize("kind", ["axial", "bending"])
def test_residual_reduces_truncation_error(kind):
    # The quasi-static residual of the left-out modes (their static flexibility) removes
    # most of the truncation error below the first left-out mode; with or without it the
    # error falls as modes are added (modal sum -> exact). Band to f_5 / 3 at most.
    line = _kind_line(kind, {"model": "loss_factor", "eta": 0.01})
    fn = dl.natural_frequencies(line, 5)
    f = np.linspace(0.02, 1.0, 1500) * fn[4] / 3
    st = dl.studies.truncation_study(line, f, XD, XR, counts=(5, 10, 20, 40))
    for n, e, e0 in zip(st.counts, st.max_db, st.max_db_no_residual):
        MEASURED.append((f"{kind} truncation {n} modes", float(e), 0.0))
        print(f"\n[{kind}] {n:3d} modes: {e:.2e} dB with residual, {e0:.2e} dB without")
    assert np.all(st.max_db < st.max_db_no_residual)
    assert np.all(np.diff(st.max_db) < 0)
    assert np.all(np.diff(st.max_db_no_residual) < 0)
    assert st.max_db[-1] < 0.01
    assert st.needed(0.1) is not None and st.needed(0.1) <= 40
    check(f"{kind}: top mode per count", st.top_mode_hz[:1], fn[4:5], rtol=1e-12)


# ================================================================== 7. reusing modes
def _reuse_cases():
    base = _kind_line("axial", attachments=[{"at": 0.41, "mass": 0.2, "dashpot": 100.0}])
    alpha, beta = _rayleigh_for(base)
    return base, {
        "loss factor": base.replace(damping=dl.Damping(model="loss_factor", eta=0.02)),
        "segment loss factors": _kind_line("axial", {"model": "loss_factor", "eta": 0.0},
                                           etas=MSE_ETAS, attachments=[
                                               {"at": 0.41, "mass": 0.2, "dashpot": 100.0}]),
        "rayleigh": base.replace(damping=dl.Damping(model="rayleigh", alpha=alpha, beta=beta)),
        "modal zeta": base.replace(damping=dl.Damping(model="modal", zeta=(0.03, 0.01))),
        "dashpot value": base.replace(attachments=(dl.Attachment(at=0.41, mass=0.2,
                                                                 dashpot=2500.0),)),
        "added dashpot": base.replace(attachments=base.attachments + (
            dl.Attachment(at=0.77, dashpot=800.0),)),
    }


def test_modeset_reused_for_any_damping():
    # a ModeSet holds the undamped modes: any damping of the same geometry re-uses it,
    # and the result is the one from freshly computed modes
    base, cases = _reuse_cases()
    ms = dl.modes(base, 25)
    f = np.linspace(0.01, 0.35, 700) * ms.frequencies[-1]
    for name, line in cases.items():
        for coupling in ("full", "diagonal"):
            reused = dl.frf(line, f, XD, XR, method="modal", modes=ms, coupling=coupling)
            fresh = dl.frf(line, f, XD, XR, method="modal", modes=25, coupling=coupling)
            # an added attachment adds a mesh node, so its fresh modes differ at the
            # root-finding tolerance (measured 4e-10)
            check(f"reuse ({name}, {coupling})", np.asarray(reused), np.asarray(fresh),
                  rtol=1e-8)
        t1, t2 = dl.modal_table(line, ms), dl.modal_table(line, 25)
        check(f"reuse ({name}): table damping ratio", t1["damping_ratio"], t2["damping_ratio"],
              rtol=1e-8)
    # the first n of a set are the modes of a set of n
    sub = dl.frf(cases["loss factor"], f, XD, XR, method="modal", modes=ms.first(12))
    fresh = dl.frf(cases["loss factor"], f, XD, XR, method="modal", modes=12)
    check("ModeSet.first(12) = modes(line, 12)", np.asarray(sub), np.asarray(fresh), rtol=1e-9)


@pytest.mark.parametrize("change", ["length", "end", "attachment mass", "area", "kind"])
def test_modeset_of_another_geometry_is_refused(change):
    base, _cases = _reuse_cases()
    ms = dl.modes(base, 6)
    segs = _segments("axial")
    att = [{"at": 0.41, "mass": 0.2, "dashpot": 100.0}]
    if change == "length":
        segs[2]["length"] = 0.5
        other = _line("axial", segs, "fixed", "free", attachments=att)
    elif change == "end":
        other = _line("axial", segs, "fixed", {"mass": 0.1}, attachments=att)
    elif change == "attachment mass":
        other = _line("axial", segs, "fixed", "free", attachments=[{**att[0], "mass": 0.3}])
    elif change == "area":
        segs[1]["area"] = 6e-4
        other = _line("axial", segs, "fixed", "free", attachments=att)
    else:
        other = _kind_line("torsion")
    with pytest.raises(dl.ModelError, match="different geometry"):
        dl.frf(other, [100.0], 0.5, [0.5], method="modal", modes=ms)
    with pytest.raises(dl.ModelError, match="different geometry"):
        dl.modal_table(other, ms)


# ================================================================== 8. modal damping model
N_CF = 30


def _closed_form_fixed_free(f, xd, xr, zeta_n, n_modes=N_CF):
    """Uniform fixed-free bar: sum_n phi_n(x_r) phi_n(x_d) / (w_n^2 + 2 i zeta_n w_n w - w^2)
    with phi_n = sqrt(2 / (rho A L)) sin(k_n x), k_n = (2n - 1) pi / (2L), w_n = c k_n,
    plus the static residual min(x_r, x_d) / (EA) - sum_n phi_n(x_r) phi_n(x_d) / w_n^2."""
    L, m, c = 1.0, RHO * AREA, math.sqrt(E / RHO)
    n = np.arange(1, n_modes + 1)
    k = (2 * n - 1) * math.pi / (2 * L)
    wn = c * k
    pd = math.sqrt(2 / (m * L)) * np.sin(k * xd)
    pr = math.sqrt(2 / (m * L)) * np.sin(np.outer(xr, k))          # (n_resp, N)
    w = 2 * math.pi * np.asarray(f)[:, None]
    H = ((pd * pr[:, None, :]) / (wn ** 2 + 2j * zeta_n * wn * w - w ** 2)).sum(axis=-1).T
    static = np.minimum(np.asarray(xr), xd) / (E * AREA) - (pd * pr / wn ** 2).sum(axis=-1)
    return H + static[None, :]


ZETAS = {"scalar": (0.01, lambda n, f: np.full(n.size, 0.01)),
         "list, last value extends": ((0.03, 0.01, 0.004),
                                      lambda n, f: np.where(n == 1, 0.03, np.where(
                                          n == 2, 0.01, 0.004))),
         "callable zeta(f)": (lambda fz: 0.002 + 2e-7 * fz, lambda n, f: 0.002 + 2e-7 * f)}


@pytest.mark.parametrize("name", ZETAS)
def test_modal_damping_against_closed_form_mode_sum(name):
    # Modal damping is defined only through the modes: zeta per elastic mode in ascending
    # order (a list's last value extends; a callable is read at f_n). On a uniform
    # fixed-free bar the modal sum with the residual of the left-out modes must be the
    # closed-form sum of _closed_form_fixed_free, each mode independent (so 'full' and
    # 'diagonal' coincide).
    zeta, expected = ZETAS[name]
    line = _uniform_bar(damping=dl.Damping(model="modal", zeta=zeta))
    ms = dl.modes(line, N_CF)
    n = np.arange(1, N_CF + 1)
    fn = (2 * n - 1) * math.sqrt(E / RHO) / 4.0
    check("fixed-free f_n = (2n - 1) c / 4L", ms.frequencies, fn, rtol=1e-10)
    zeta_n = expected(n, fn)
    tab = dl.modal_table(line, ms)
    check(f"{name}: table zeta per mode", tab["damping_ratio"], zeta_n, rtol=1e-10)
    f = np.linspace(0.01, 0.4, 3000) * fn[-1]
    xr = [0.2, 0.55, 1.0]
    for xd in (1.0, 0.37):
        ref = _closed_form_fixed_free(f, xd, xr, zeta_n)
        for coupling in ("full", "diagonal"):
            H = np.asarray(dl.frf(line, f, xd, xr, method="modal", modes=ms, coupling=coupling))
            scale = np.abs(ref).max(axis=0)
            # the library's residual is taken at w_0 = w_1 / 10, not at 0: it differs from
            # the static one by ~ (w_0 / w_31)^2 of the residual
            check(f"{name}: modal zeta vs closed-form mode sum (drive {xd}, {coupling})",
                  H / scale, ref / scale, rtol=0, atol=1e-8)
    # the exact method has no distributed form of modal damping; neither has the
    # truncation study, whose reference is exact
    with pytest.raises(dl.ModelError, match="modal"):
        dl.frf(line, f[:3], 1.0, [1.0])
    with pytest.raises(dl.ModelError, match="modal"):
        dl.studies.truncation_study(line, f[:3], 1.0, [1.0], counts=(5,))


def test_modal_damping_leaves_rigid_body_modes_undamped():
    # a zeta list is read over the elastic modes in ascending order: the rigid-body mode
    # of a free-free bar takes none and the first elastic mode takes zeta[0]
    line = _uniform_bar("free", "free", dl.Damping(model="modal", zeta=(0.05, 0.02)))
    tab = dl.modal_table(line, 5)
    assert tab["frequency"][0] == 0.0 and np.isnan(tab["damping_ratio"][0])
    check("free-free: elastic zetas", tab["damping_ratio"][1:], [0.05, 0.02, 0.02, 0.02],
          rtol=1e-10)


# ================================================================== 9. ducts
def _radiating_duct(end, radius=0.01):
    S = math.pi * radius ** 2
    return _line("duct", [{"length": 0.6, "area": S}, {"length": 0.4, "area": 2 * S}],
                 "closed", end, {"model": "loss_factor", "eta": 0.003})


DUCTS = {  # end: (modes kept, band top in Hz)
    "unflanged": (60, 600.0), "flanged": (60, 600.0), "anechoic": (100, 400.0)}


@pytest.mark.parametrize("end", DUCTS)
def test_duct_with_radiating_or_anechoic_end(end):
    # The modes are those of the duct with the end's reactive part (end correction for a
    # radiating end, Levine and Schwinger / Norris and Sheng; closed for an anechoic one);
    # the radiation resistance (rho c S (ka)^2 / 4 unflanged, / 2 flanged, Kinsler) or the
    # anechoic rho c / S enter as frequency-dependent modal terms. A volume-velocity source
    # at the closed end, pressure along the duct.
    # The quasi-static residual does not carry the left-out modes' flexibility into the
    # end resistance, so the error falls only as 1 / N here (anechoic end, band to 400 Hz:
    # 0.61, 0.31, 0.16 dB with 20, 40, 80 modes): the modes kept reach 15-40 times the
    # band top, not 3.
    count, top = DUCTS[end]
    line = _radiating_duct(end)
    ms = dl.modes(line, count)
    assert ms.frequencies[-1] > 15 * top
    f = np.linspace(5.0, top, 800)
    xr = [0.0, 0.5, 0.9]
    He = dl.frf(line, f, 0.0, xr, drive="volume_velocity")
    Hf = dl.frf(line, f, 0.0, xr, drive="volume_velocity", method="modal", modes=ms)
    full = _db_error(f"duct {end}: full ({count} modes, to {top:g} Hz) vs exact", Hf, He, f, 0.2)
    Hd = dl.frf(line, f, 0.0, xr, drive="volume_velocity", method="modal", modes=ms,
                coupling="diagonal")
    diag = _db_error(f"duct {end}: diagonal ({count} modes) vs exact", Hd, He, f)
    assert diag > full
    assert not dl.coupling(line, ms.first(10), drive_at=0.0).proportional


# ================================================================== 10. damping needed
def _band_max(H_of_f, band):
    """max |H| over the band: 6000 samples, then a bounded scalar search around the
    largest one (independent of the library's own grid)."""
    f = np.linspace(band[0], band[1], 6000)
    a = np.abs(H_of_f(f))
    i = int(np.argmax(a))
    lo, hi = f[max(i - 1, 0)], f[min(i + 1, f.size - 1)]
    res = scipy.optimize.minimize_scalar(lambda x: -np.abs(H_of_f(np.array([x])))[0],
                                         bounds=(lo, hi), method="bounded",
                                         options={"xatol": 1e-9 * hi})
    return max(float(a.max()), -float(res.fun))


@pytest.mark.parametrize("mechanism", ["loss_factor", "zeta", "dashpot"])
def test_damping_needed_is_the_least_sufficient(mechanism):
    line = _kind_line("axial")
    fn = dl.natural_frequencies(line, 2)
    band = (0.5 * fn[0], 1.5 * fn[1])
    static = float(np.abs(np.asarray(dl.frf(line, [1e-3], 1.0, [1.0])))[0, 0])
    limit = 20 * static
    kw = {"at": 0.7} if mechanism == "dashpot" else {}
    res = dl.studies.damping_needed(line, band, limit, 1.0, 1.0, mechanism=mechanism, **kw)

    def level(v):
        if mechanism == "loss_factor":
            m, opts = line.replace(damping=dl.Damping(model="loss_factor", eta=v)), {}
        elif mechanism == "zeta":
            m, opts = line.replace(damping=dl.Damping(model="modal", zeta=v)), {
                "method": "modal", "modes": 40}
        else:
            m, opts = line.replace(attachments=(dl.Attachment(at=0.7, dashpot=v),)), {}
        return _band_max(lambda f: np.asarray(dl.frf(m, f, 1.0, [1.0], **opts))[:, 0], band)

    at, below = level(res.value), level(0.99 * res.value)
    MEASURED.append((f"damping_needed {mechanism}", at / limit - 1, 0.0))
    print(f"\n[{mechanism}] {res.value:.5g} {res.unit}: level/limit {at / limit:.6f}, "
          f"at 0.99x {below / limit:.6f}")
    assert at <= limit * (1 + 1e-3)
    assert below > limit
    assert res.level_before > 100 * limit            # the bare line was far above it



@pytest.mark.parametrize("case", ["anechoic duct", "point dashpot"])
def test_full_coupling_converges_with_strong_point_damping(case):
    # With a strong point resistance (anechoic end, dashpot) the error of the full modal
    # sum falls as modes are added, at least as fast as 1 / N: the residual of the left-out
    # modes is quasi-static, so the damper acting through their flexibility is missed
    # (Sherman-Morrison: the error is ~ i w c R_N(x_a, x_a), R_N ~ 1 / N for a
    # second-order line). Measured halving per doubling of N.
    if case == "anechoic duct":
        line, count, kw = _radiating_duct("anechoic"), 80, {"drive": "volume_velocity"}
        xd, xr, f = 0.0, [0.0, 0.5, 0.9], np.linspace(5.0, 400.0, 400)
    else:
        line, count, kw = _dashpot_bar(), 80, {}
        xd, xr = 1.0, [1.0, 0.45]
        f = np.linspace(0.02, 3.0, 600) * dl.natural_frequencies(line, 1)[0]
    ms = dl.modes(line, count)
    He = dl.frf(line, f, xd, xr, **kw)
    errs = [_db_error(f"{case}: full, {n} modes", dl.frf(line, f, xd, xr, method="modal",
                                                           modes=ms.first(n), **kw), He, f)
            for n in (count // 4, count // 2, count)]
    print(f"[{case}] error ratios per doubling: {errs[0] / errs[1]:.2f}, {errs[1] / errs[2]:.2f}")
    assert errs[1] < 0.7 * errs[0] and errs[2] < 0.7 * errs[1]


# ================================================================== 11. quantities
QUANTITIES = {
    "axial": ("mobility", "accelerance", "force"),
    "torsion": ("mobility", "force"),
    "bending": ("mobility", "accelerance", "rotation", "moment", "shear"),
}


@pytest.mark.parametrize("kind", QUANTITIES)
def test_quantities_of_the_modal_sum(kind):
    # every quantity follows from the same modal sum: mobility i w u, accelerance -w^2 u
    # (e^{i w t}), internal force S* u', and for a beam rotation w', moment EI* w'' and
    # shear -EI* w''' (Euler-Bernoulli). Derivatives converge more slowly, so the band is
    # kept to 0.3 f_30; response points clear of the drive point and of the ends where a
    # quantity vanishes (moment and shear at a free end, displacement at a clamped one).
    line = _kind_line(kind, {"model": "loss_factor", "eta": 0.01})
    ms = dl.modes(line, 30)
    f = np.linspace(0.01, 0.3, 1500) * ms.frequencies[-1]
    xd, xr = 0.9, [0.05, 0.4, 0.7]
    for q in QUANTITIES[kind]:
        He = dl.frf(line, f, xd, xr, quantity=q)
        Hm = dl.frf(line, f, xd, xr, quantity=q, method="modal", modes=ms)
        assert Hm.unit == He.unit and Hm.quantity == q and Hm.method == "modal"
        _db_error(f"{kind} {q}: modal (30 modes, 0.3 f_30) vs exact", Hm, He, f, 0.2)


def test_internal_force_with_a_lossy_segment_converges():
    # With E (1 + i eta_s) differing between segments the exact strain u' = N / S* jumps by
    # a complex ratio at an interface that no undamped mode has: the modal series of S* u'
    # converges like a Fourier series across a jump, as 1 / N (measured 0.035, 0.017,
    # 0.0085 dB for 40, 80, 160 modes).
    line = _kind_line("axial", {"model": "loss_factor", "eta": 0.01}, etas=(None, 0.05, None))
    ms = dl.modes(line, 160)
    f = np.linspace(0.01, 0.3, 1000) * ms.frequencies[29]
    xd, xr = 0.9, [0.05, 0.4, 0.7]
    He = dl.frf(line, f, xd, xr, quantity="force")
    errs = [_db_error(f"axial force, lossy segment: {n} modes", dl.frf(
        line, f, xd, xr, quantity="force", method="modal", modes=ms.first(n)), He, f)
        for n in (40, 80, 160)]
    assert errs[1] < 0.7 * errs[0] and errs[2] < 0.7 * errs[1]
    assert errs[2] < 0.1


@pytest.mark.xfail(strict=True, reason="limitation: with non-proportional loss factors the "
                   "modal series of a beam's shear -EI* w''' does not converge (0.73, 0.31, "
                   "0.52 dB at 40, 100, 160 modes, peaks near the low resonances); the "
                   "quasi-static residual is exact only at w_0 = w_1 / 10")
def test_beam_shear_with_a_lossy_segment_converges():
    # EI* = EI (1 + i eta_s) differs between segments, so the exact w'' and w''' jump by
    # complex ratios at the interfaces, which undamped modes cannot follow; the modal
    # coefficients of w''' then do not decay (Fourier series of a function with a jump in
    # its second derivative, differentiated once more). Moment converges as 1 / N; shear
    # should at least fall below 0.2 dB of the local level with 100 modes.
    line = _kind_line("bending", {"model": "loss_factor", "eta": 0.01}, etas=(None, 0.05, None))
    ms = dl.modes(line, 100)
    f = np.linspace(0.01, 0.3, 1000) * ms.frequencies[29]
    xd, xr = 0.9, [0.05, 0.4, 0.7]
    He = dl.frf(line, f, xd, xr, quantity="shear")
    errs = [_db_error(f"beam shear, lossy segment: {n} modes", dl.frf(
        line, f, xd, xr, quantity="shear", method="modal", modes=ms.first(n)), He, f)
        for n in (40, 100)]
    assert errs[1] < 0.2


def test_table_damping_ratio_with_a_stiff_dashpot_matches_half_power_bandwidth():
    """A taut cable (fixed ends, no other damping) with a stiff dashpot 1.5 m from one end:
    the truncated modal model also has overdamped (real) poles. Mode 1's damping ratio
    in the table must come from its own oscillating pole, for any mode count, and agree
    with the half-power bandwidth of the exact response, zeta = (f2 - f1) / (2 f_peak)
    (e.g. Ewins, Modal Testing, ch. 4); no mode may be handed a real pole (zeta = 1)."""
    spec = {"kind": "string",
            "segments": [{"length": 60.0, "tension": 2.0e6, "mass_per_length": 50.0}],
            "ends": {"left": "fixed", "right": "fixed"},
            "attachments": [{"at": 1.5, "dashpot": 9.0e4}],
            "damping": {"model": "none"}}
    line = dl.Line.from_dict(spec)
    f1 = dl.natural_frequencies(line, 1)[0]
    f = np.linspace(0.9 * f1, 1.1 * f1, 40001)
    H = np.abs(np.asarray(dl.frf(line, f, drive_at=23.0, response_at=[23.0]))[:, 0])
    k = int(np.argmax(H))
    half = H[k] / np.sqrt(2.0)
    lo = np.interp(half, H[:k + 1], f[:k + 1])
    hi = np.interp(-half, -H[k:], f[k:])
    zeta_ref = (hi - lo) / (2.0 * f[k])
    errors = []
    for n in (20, 40, 80, 160):
        z = dl.modal_table(line, n)["damping_ratio"]
        assert np.all(np.isfinite(z[:5])) and np.all(z[:5] < 0.2), (n, z[:5])
        errors.append(abs(z[0] / zeta_ref - 1.0))
    # a point dashpot converges slowly in the modes (15 % at 20 modes, measured): the
    # error must fall with every doubling and end within 3 %
    assert all(b < a for a, b in zip(errors, errors[1:])), errors
    assert errors[-1] < 0.03, errors


def test_reused_modes_take_this_lines_absorber_damping():
    """Modes computed for one absorber damping and reused for another (a damping-only
    change) must give the same FRF as modes computed afresh for the new line."""
    spec = {"kind": "axial",
            "segments": [{"length": 1.0, "E": 2.1e11, "rho": 7850.0, "area": 1e-4}],
            "ends": {"left": "fixed", "right": "free"},
            "attachments": [{"at": 1.0, "absorber": {"mass": 0.5, "stiffness": 2.0e7,
                                                     "damping": 20.0}}],
            "damping": {"model": "loss_factor", "eta": 0.001}}
    a = dl.Line.from_dict(spec)
    spec["attachments"][0]["absorber"]["damping"] = 200.0
    b = dl.Line.from_dict(spec)
    f = np.linspace(50.0, 3000.0, 800)
    reused = np.asarray(dl.frf(b, f, drive_at=1.0, response_at=[1.0], method="modal",
                               modes=dl.modes(a, 12)))
    fresh = np.asarray(dl.frf(b, f, drive_at=1.0, response_at=[1.0], method="modal",
                              modes=dl.modes(b, 12)))
    np.testing.assert_allclose(reused, fresh, rtol=1e-10)
    exact = np.asarray(dl.frf(b, f, drive_at=1.0, response_at=[1.0]))
    assert not np.allclose(reused, np.asarray(dl.frf(a, f, drive_at=1.0, response_at=[1.0],
                                                     method="modal", modes=dl.modes(a, 12))))
    assert np.max(np.abs(reused - exact)) < 0.05 * np.max(np.abs(exact))


def test_decoupled_sum_in_real_arithmetic_matches_complex_division():
    """The decoupled coefficients phi / D_nn(w), computed in real arithmetic, equal
    numpy's complex division (Smith's algorithm) over the whole float range: typical
    values, an exact zero of D (an undamped resonance: inf, as complex division gives)
    and squares that would leave the range (1e+-200 scales)."""
    from types import SimpleNamespace

    from dampline.solve.modal import _decoupled

    rng = np.random.default_rng(3)
    N, w = 7, np.linspace(1.0, 50.0, 64)
    phi = rng.standard_normal(N)
    for scale in (1.0, 1e-200, 1e200):
        K0 = np.diag((rng.uniform(1, 3e3, N) * (1 + 1j * rng.uniform(0, 0.1, N))) * scale)
        C1 = np.diag(rng.uniform(0, 2.0, N) * scale)
        M1 = np.diag(rng.uniform(0.5, 2.0, N) * scale)
        mm = SimpleNamespace(K0=K0, C1=C1, M1=M1, terms=())
        D = (np.diag(K0)[None, :] + 1j * w[:, None] * np.diag(C1)[None, :]
             - (w * w)[:, None] * np.diag(M1)[None, :])
        ref = phi[None, :] / D
        got = _decoupled(mm, w, phi, room=1)[:, :N]
        np.testing.assert_allclose(got, ref, rtol=1e-13, atol=0)
    # an undamped mode exactly at a frequency: complex division gives inf (or nan)
    mm = SimpleNamespace(K0=np.diag([4.0, 9.0]), C1=np.zeros((2, 2)), M1=np.eye(2), terms=())
    with np.errstate(divide="ignore", invalid="ignore"):
        ref = np.array([1.0, 2.0])[None, :] / (np.array([4.0, 9.0])[None, :]
                                               - np.array([[4.0], [1.0]]))
    got = _decoupled(mm, np.array([2.0, 1.0]), np.array([1.0, 2.0]))
    assert not np.isfinite(got[0, 0]) and not np.isfinite(ref[0, 0])
    np.testing.assert_allclose(got[0, 1], ref[0, 1], rtol=1e-15)
    np.testing.assert_allclose(got[1], ref[1], rtol=1e-15)


def test_shapes_kept_per_modeset_equal_fresh_ones_and_stay_read_only():
    """shape_at keeps shapes at repeated points on the ModeSet: the values equal a fresh
    evaluation (closed form of a uniform fixed-free bar, sin((2n-1) pi x / 2L) scaled to
    unit modal mass), the arrays are read-only, and a bad point still names itself."""
    from dampline.solve.modal import shape_at

    L, E, rho, A = 1.2, 2.1e11, 7850.0, 3e-4
    line = dl.Line.from_dict({"kind": "axial", "segments": [{"length": L, "E": E, "rho": rho,
                                                             "area": A}],
                              "ends": {"left": "fixed", "right": "free"}})
    ms = dl.modes(line, 6)
    x = np.linspace(0.0, L, 37)
    n = np.arange(1, 7)
    ref = np.sqrt(2.0 / (rho * A * L)) * np.sin((2 * n - 1) * np.pi * x[:, None] / (2 * L))
    for _ in range(2):                                   # computed, then kept
        got = shape_at(ms, x)
        sign = np.sign(got[-1] / ref[-1])
        np.testing.assert_allclose(got * sign, ref, rtol=1e-12, atol=1e-12 * np.abs(ref).max())
    assert shape_at(ms, x) is got and not got.flags.writeable
    np.testing.assert_array_equal(shape_at(ms, x, 1), ms.shape(x, derivative=1))
    with pytest.raises(dl.ModelError, match="x"):
        shape_at(ms, [2 * L])
