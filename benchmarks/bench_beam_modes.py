"""The first 200 modes of a 10-segment stepped beam, each checked to 1e-9 relative,
against a dense eigen-solution of a 2,000-DOF finite-element model of the same beam.

Target: all 200 frequencies correct to 1e-9 relative, at least 5 times faster
than ``scipy.linalg.eigh(K, M, subset_by_index=[0, 199])`` on a ~2,000-DOF Hermite
cubic finite-element model (consistent mass) of the beam. The mpmath check (step 3)
takes about a minute; ``--skip-mpmath`` leaves it out.

In one run, for a clamped-free and a clamped-pinned version of the beam:

1. times ``dl.natural_frequencies(line, 200)`` and ``dl.modes(line, 200)``;
2. builds the finite-element model (about 1,000 elements spread over the segments
   by length) and times the dense eigen-solution (values and vectors);
3. checks every dampline frequency independently in mpmath. The frequency
   determinant is the 2x2 boundary minor of the product of the classic
   cos/cosh/sin/sinh field-transfer matrices (state [w, w', EI w'', EI w''']),
   started from a clamped left end. Its entries are power series in w^2, so it
   is entire: no poles, its zeros are exactly the natural frequencies, and it
   changes sign at each (simple) one. The script checks that it changes sign
   between f (1 - 1e-9) and f (1 + 1e-9) for every mode, that it keeps its sign
   from just above one mode to just below the next (sampled inside, too: no mode
   missed), and refines each root by the secant method to get dampline's actual
   error. The transfer-matrix entries grow like exp(sum beta_i L_i) and the minor
   cancels that much, so each evaluation keeps at least 40 significant digits
   *after* that cancellation (mp.dps = 50 + digits lost, 323 at mode 200; a flat
   mp.dps = 40 fails the bracket test from mode 25 on), and the bracket values
   are recomputed with 20 more digits to show the working precision is enough;
4. also compares the finite-element frequencies with dampline's mode by mode,
   one-to-one (a second check that no mode is missing), and checks dampline's
   shapes are mass-orthonormal by an independent Gauss quadrature.

The finite-element error has two parts: discretisation, growing with the mode
number like (beta h)^4, and round-off, which for a dense solver is about
eps lambda_max / lambda_k and so is largest at mode 1 (lambda_max of a 2 mm
element mesh is ~1e18). Both are printed. Frequencies above a few kHz are those
of the Euler-Bernoulli model, which is what both solvers compute; whether the
physical beam still obeys it there is a separate question.
"""

from __future__ import annotations

import math
import time

import mpmath as mp
import numpy as np
import scipy.linalg

import dampline as dl

from ._common import machine_report, median_time, peak_alloc_mib, row

COUNT = 200
RTOL = 1e-9
N_ELEMENTS = 1000
STEEL = (2.1e11, 7850.0)
ALUMINIUM = (7.0e10, 2700.0)
CASES = (("clamped", "free"), ("clamped", "pinned"))


# ----------------------------------------------------------------- the beam
def segments() -> list[dict]:
    """Ten steps, alternately steel and aluminium, rectangular and round sections of
    varying size, 0.1-0.4 m long. Area and I are computed here (not by dampline)."""
    rng = np.random.default_rng(11)
    segs = []
    for i in range(10):
        E, rho = STEEL if i % 2 == 0 else ALUMINIUM
        length = float(rng.uniform(0.1, 0.4))
        if i % 3 == 2:                                   # solid round bar
            d = float(rng.uniform(0.015, 0.04))
            area, I = math.pi * d ** 2 / 4, math.pi * d ** 4 / 64
        else:                                            # rectangle, h along w
            b, h = float(rng.uniform(0.02, 0.05)), float(rng.uniform(0.008, 0.03))
            area, I = b * h, b * h ** 3 / 12
        segs.append({"length": length, "E": E, "rho": rho, "area": area, "I": I})
    return segs


def scenario(ends: tuple[str, str]):
    segs = segments()
    line = dl.Line.from_dict({"title": f"stepped beam, {ends[0]}-{ends[1]}", "kind": "bending",
                              "segments": segs, "ends": {"left": ends[0], "right": ends[1]}})
    # (length, EI, m) per segment, as plain floats, for the independent checks
    props = [(s["length"], s["E"] * s["I"], s["rho"] * s["area"]) for s in segs]
    return line, props


# ------------------------------------------------------ finite-element model
def fe_model(props, ends, n_elements: int = N_ELEMENTS):
    """Dense K, M of Hermite cubic beam elements (consistent mass), about
    ``n_elements`` elements spread over the segments by length; nodes at every step."""
    total = sum(p[0] for p in props)
    h_el, EI_el, m_el = [], [], []
    for length, EI, m in props:
        n = max(1, round(n_elements * length / total))
        h_el += [length / n] * n
        EI_el += [EI] * n
        m_el += [m] * n
    n_dof = 2 * (len(h_el) + 1)
    K = np.zeros((n_dof, n_dof))
    M = np.zeros((n_dof, n_dof))
    lam_max = 0.0
    for e, (h, EI, m) in enumerate(zip(h_el, EI_el, m_el)):
        ke = EI / h ** 3 * np.array([[12, 6 * h, -12, 6 * h],
                                     [6 * h, 4 * h * h, -6 * h, 2 * h * h],
                                     [-12, -6 * h, 12, -6 * h],
                                     [6 * h, 2 * h * h, -6 * h, 4 * h * h]])
        me = m * h / 420 * np.array([[156, 22 * h, 54, -13 * h],
                                     [22 * h, 4 * h * h, 13 * h, -3 * h * h],
                                     [54, 13 * h, 156, -22 * h],
                                     [-13 * h, -3 * h * h, -22 * h, 4 * h * h]])
        s = slice(2 * e, 2 * e + 4)
        K[s, s] += ke
        M[s, s] += me
        # Irons' bound: lambda_max of the mesh <= the largest element lambda_max
        if e == 0 or h_el[e - 1] != h or EI_el[e - 1] != EI or m_el[e - 1] != m:
            lam_max = max(lam_max, float(scipy.linalg.eigh(ke, me, eigvals_only=True)[-1]))
    held = {"clamped": (0, 1), "pinned": (0,), "free": (), "sliding": (1,)}
    drop = [j for j in held[ends[0]]] + [n_dof - 2 + j for j in held[ends[1]]]
    keep = np.setdiff1d(np.arange(n_dof), drop)
    return K[np.ix_(keep, keep)], M[np.ix_(keep, keep)], lam_max


def fe_solve(K, M):
    return scipy.linalg.eigh(K, M, subset_by_index=[0, COUNT - 1])


# ------------------------------------------------- independent mpmath check
def digits_lost(props, f_hz: float) -> float:
    """Decimal digits the boundary minor cancels: sum beta_i L_i / ln 10."""
    w = 2.0 * math.pi * f_hz
    return sum((w * w * m / EI) ** 0.25 * length for length, EI, m in props) / math.log(10)


def make_delta(props, right: str):
    """Frequency determinant Delta(f) (f in Hz, an mpf), scaled by exp(-sum beta_i L_i) > 0
    so that its size stays moderate; entire in f^2, so no poles."""
    rows = {"free": (2, 3), "pinned": (0, 2), "clamped": (0, 1), "sliding": (1, 3)}[right]

    def delta(f):
        w = 2 * mp.pi * f
        zero, one = mp.mpf(0), mp.mpf(1)
        # clamped left end: w = w' = 0, unknown moment and shear -> two columns
        c1 = [zero, zero, one, zero]
        c2 = [zero, zero, zero, one]
        ztot = zero
        for length, EI, m in props:
            L, EI, m = mp.mpf(length), mp.mpf(EI), mp.mpf(m)
            b = mp.root(w * w * m / EI, 4)
            z = b * L
            ztot += z
            ch, sh, c, s = mp.cosh(z), mp.sinh(z), mp.cos(z), mp.sin(z)
            S, T, U, V = (ch + c) / 2, (sh + s) / 2, (ch - c) / 2, (sh - s) / 2
            # field transfer of [w, w', EI w'', EI w'''] over a uniform piece
            Tm = [[S, T / b, U / (b * b * EI), V / (b ** 3 * EI)],
                  [b * V, S, T / (b * EI), U / (b * b * EI)],
                  [EI * b * b * U, EI * b * V, S, T / b],
                  [EI * b ** 3 * T, EI * b * b * U, b * V, S]]
            c1 = [mp.fsum(Tm[i][j] * c1[j] for j in range(4)) for i in range(4)]
            c2 = [mp.fsum(Tm[i][j] * c2[j] for j in range(4)) for i in range(4)]
        r, q = rows
        return (c1[r] * c2[q] - c2[r] * c1[q]) * mp.exp(-ztot)

    return delta


def mp_check(props, right: str, f: np.ndarray, n_inside: int = 3) -> dict:
    """Bracket, completeness and secant refinement of every frequency in f (Hz)."""
    delta = make_delta(props, right)
    eps = mp.mpf(RTOL)

    def dps_for(f_hz):
        return 50 + int(math.ceil(digits_lost(props, f_hz)))

    def ev(x, dps):
        with mp.workdps(dps):
            return delta(mp.mpf(x))

    bracket_ok, n_bad_bracket = True, 0
    lo_val, hi_val, prec_dev = [], [], 0.0
    for fk in f:
        d = dps_for(fk * (1 + RTOL))
        with mp.workdps(d):
            xl, xh = mp.mpf(fk) * (1 - eps), mp.mpf(fk) * (1 + eps)
            a, b = delta(xl), delta(xh)
        with mp.workdps(d + 20):                     # the same at 20 more digits
            a2, b2 = delta(mp.mpf(fk) * (1 - eps)), delta(mp.mpf(fk) * (1 + eps))
        prec_dev = max(prec_dev, float(abs(a - a2) / abs(a2)), float(abs(b - b2) / abs(b2)))
        ok = mp.sign(a) * mp.sign(b) < 0
        bracket_ok &= bool(ok)
        n_bad_bracket += not ok
        lo_val.append(a)
        hi_val.append(b)

    # no mode missed: Delta keeps its sign from just above one mode to just below the
    # next (an odd number of missed roots would flip it), sampled inside as well
    missing = 0
    starts = [f[0] * 1e-3] + [fk * (1 + RTOL) for fk in f[:-1]]
    ends = [fk * (1 - RTOL) for fk in f]
    start_vals = [ev(starts[0], dps_for(starts[0]))] + hi_val[:-1]
    for k, (x0, x1) in enumerate(zip(starts, ends)):
        d = dps_for(x1)
        sg = mp.sign(lo_val[k])
        vals = [start_vals[k]] + [ev(x0 + (x1 - x0) * (i + 1) / (n_inside + 1), d)
                                  for i in range(n_inside)]
        missing += any(mp.sign(v) != sg for v in vals)

    # secant refinement from the bracket: dampline's actual error
    errs = np.empty(len(f))
    for k, fk in enumerate(f):
        with mp.workdps(dps_for(fk * (1 + RTOL))):
            x0, x1 = mp.mpf(fk) * (1 - eps), mp.mpf(fk) * (1 + eps)
            y0, y1 = lo_val[k], hi_val[k]
            for _ in range(30):
                if y1 == y0:
                    break
                x2 = x1 - y1 * (x1 - x0) / (y1 - y0)
                x0, y0, x1, y1 = x1, y1, x2, delta(x2)
                if abs(x1 - x0) < mp.mpf(10) ** -30 * x1:
                    break
            errs[k] = float(abs(mp.mpf(fk) - x1) / x1)
    return {"all_bracketed": bracket_ok, "n_not_bracketed": n_bad_bracket,
            "n_intervals_with_extra_roots": missing, "max_rel_err": float(errs.max()),
            "rel_err": errs, "precision_check": prec_dev,
            "max_dps": dps_for(float(f[-1]) * (1 + RTOL))}


def orthonormality(ms, props, n_gauss_extra: int = 20) -> float:
    """max |int m phi_i phi_j dx - delta_ij| over all modes, by Gauss-Legendre
    quadrature on each segment with enough points for its largest beta L."""
    w_top = 2.0 * math.pi * float(ms.frequencies[-1])
    x_all, wt_all = [], []
    x0 = 0.0
    for length, EI, m in props:
        bl = (w_top * w_top * m / EI) ** 0.25 * length
        n = int(math.ceil(0.6 * bl)) + n_gauss_extra
        t, wq = np.polynomial.legendre.leggauss(n)
        x_all.append(x0 + 0.5 * (t + 1.0) * length)
        wt_all.append(0.5 * length * m * wq)
        x0 += length
    x = np.concatenate(x_all)
    wt = np.concatenate(wt_all)
    x = np.clip(x, 0.0, ms.line.length)
    phi = ms.shape(x)                                  # (len(x), count)
    G = phi.T @ (wt[:, None] * phi)
    return float(np.max(np.abs(G - np.eye(G.shape[0]))))


# -------------------------------------------------------------------- run
def timings(fn, repeats: int) -> tuple[float, float]:
    """(median, best) wall time of ``repeats`` calls after a warm-up (median_time);
    the best is printed too because on a shared machine the noise is one-sided."""
    rec = []

    def timed():
        t0 = time.perf_counter()
        fn()
        rec.append(time.perf_counter() - t0)

    return median_time(timed, repeats=repeats), min(rec[1:])


def run_case(ends: tuple[str, str], skip_mpmath: bool = False, quick: bool = False) -> dict:
    line, props = scenario(ends)
    f = np.asarray(dl.natural_frequencies(line, COUNT))
    ms = dl.modes(line, COUNT)
    same = float(np.max(np.abs(ms.frequencies - f) / f))
    n_rep = 3 if quick else 5
    t_nf, b_nf = timings(lambda: dl.natural_frequencies(line, COUNT), repeats=n_rep)
    t_modes, b_modes = timings(lambda: dl.modes(line, COUNT), repeats=n_rep)
    alloc = peak_alloc_mib(lambda: dl.modes(line, COUNT))

    K, M, lam_max = fe_model(props, ends)
    lam, _vec = fe_solve(K, M)
    t_fe, b_fe = timings(lambda: fe_solve(K, M), repeats=1 if quick else 3)
    f_fe = np.sqrt(lam) / (2.0 * math.pi)
    fe_err = (f_fe - f) / f                            # signed, vs dampline
    # dense-solver round-off: |d lam| ~ eps lam_max, so |d f| / f ~ eps lam_max / (2 lam)
    roundoff = 0.5 * np.finfo(float).eps * lam_max / lam
    # one-to-one: each FE frequency is nearer its dampline partner than half the gap
    gaps = np.minimum(np.diff(f, prepend=0.0), np.diff(f, append=np.inf)) / f
    one_to_one = bool(np.all(np.abs(fe_err) < 0.5 * gaps))

    chk = None if skip_mpmath else mp_check(props, ends[1], f)
    ortho = orthonormality(ms, props)

    name = f"{ends[0]}-{ends[1]}"
    print(f"\n{name}: 10 segments, L = {line.length:.3f} m, f1 = {f[0]:.4f} Hz, "
          f"f{COUNT} = {f[-1]:.1f} Hz")
    print("  times: median (best), ms")
    print(f"  dampline natural_frequencies({COUNT}): {t_nf * 1e3:8.1f} ({b_nf * 1e3:.1f})")
    print(f"  dampline modes({COUNT})              : {t_modes * 1e3:8.1f} ({b_modes * 1e3:.1f})"
          f"   (frequencies identical to natural_frequencies' to {same:.0e})")
    print(f"  scipy eigh(K, M, subset_by_index=[0, {COUNT - 1}]), dense, {K.shape[0]} DOF FE: "
          f"{t_fe * 1e3:8.1f} ({b_fe * 1e3:.1f})")
    print(f"  ratio FE / dampline (target >= {SPEEDUP:g}x): modes {t_fe / t_modes:.2f}x "
          f"(best {b_fe / b_modes:.2f}x), natural_frequencies {t_fe / t_nf:.2f}x "
          f"(best {b_fe / b_nf:.2f}x)")
    if chk is None:
        print("  mpmath accuracy check skipped (--skip-mpmath)")
    else:
        print(f"  accuracy vs mpmath transfer-matrix determinant (up to {chk['max_dps']} digits):")
        print(f"    sign change inside f (1 +- {RTOL:.0e}) for {COUNT - chk['n_not_bracketed']}"
              f"/{COUNT} modes; intervals between modes with extra roots: "
              f"{chk['n_intervals_with_extra_roots']}")
        print(f"    max relative error of dampline (secant-refined roots): "
              f"{chk['max_rel_err']:.1e}   (target {RTOL:.0e}); Delta at +20 digits "
              f"differs by {chk['precision_check']:.0e}")
    print(f"    mass-orthonormality of the {COUNT} shapes (Gauss quadrature): "
          f"max |Phi^T M Phi - I| = {ortho:.1e}")
    print(f"  FE model error vs dampline (one-to-one match of all {COUNT}: "
          f"{'yes' if one_to_one else 'NO'}):")
    for k in (1, 50, 100, 200):
        print(f"    mode {k:3d}: {f[k - 1]:12.4f} Hz   FE {fe_err[k - 1]:+.1e}   "
              f"(round-off bound eps lam_max / 2 lam = {roundoff[k - 1]:.0e})")
    return {"t_natural_frequencies": t_nf, "t_modes": t_modes, "t_fe": t_fe,
            "best_natural_frequencies": b_nf, "best_modes": b_modes, "best_fe": b_fe,
            "n_dof_fe": int(K.shape[0]), "ratio_modes": t_fe / t_modes,
            "ratio_natural_frequencies": t_fe / t_nf,
            "ratio_modes_best": b_fe / b_modes, "ratio_natural_frequencies_best": b_fe / b_nf,
            "mpmath_checked": chk is not None,
            "max_rel_err": chk["max_rel_err"] if chk else None,
            "all_bracketed": chk["all_bracketed"] if chk else None,
            "n_intervals_with_extra_roots": chk["n_intervals_with_extra_roots"] if chk else None,
            "precision_check": chk["precision_check"] if chk else None, "orthonormality": ortho,
            "alloc_mib": alloc,
            "fe_one_to_one": one_to_one,
            "fe_err": {k: float(fe_err[k - 1]) for k in (1, 50, 100, 200)},
            "fe_roundoff_bound": {k: float(roundoff[k - 1]) for k in (1, 50, 100, 200)}}


SPEEDUP = 5.0          # modes(200) at least this many times faster than the dense FE solve


def accurate(r: dict) -> bool | None:
    """All frequencies bracketed to RTOL with none missed (None: mpmath check skipped)."""
    if not r["mpmath_checked"]:
        return None
    return bool(r["max_rel_err"] <= RTOL and r["all_bracketed"]
                and r["n_intervals_with_extra_roots"] == 0)


def main(skip_mpmath: bool = False, quick: bool = False) -> dict:
    print(machine_report())
    print(f"first {COUNT} modes of a 10-segment stepped steel/aluminium beam "
          f"vs a dense eigen-solution of a ~{2 * N_ELEMENTS}-DOF Hermite FE model")
    out = {}
    for ends in CASES:
        out[f"{ends[0]}-{ends[1]}"] = run_case(ends, skip_mpmath=skip_mpmath, quick=quick)
    met = all(r["ratio_modes"] >= SPEEDUP and accurate(r) is not False for r in out.values())
    print(f"\ntarget (all {COUNT} to {RTOL:.0e}{' (not checked)' if skip_mpmath else ''}, "
          f"modes() >= {SPEEDUP:g}x faster than the dense FE solve): "
          f"{'met' if met else 'NOT met'}")
    out["target_met"] = met
    return out


def rows(quick: bool = False, skip_mpmath: bool = False, **_) -> list[dict]:
    out = main(skip_mpmath=skip_mpmath, quick=quick)
    result = []
    for name, r in out.items():
        if name == "target_met":
            continue
        acc = accurate(r)
        check = ("mpmath check skipped" if acc is None else
                 f"max error vs mpmath {r['max_rel_err']:.1e}"
                 f"{'' if acc else ' (NOT all bracketed / some missed)'}")
        result.append(row(f"beam_modes {name}", f"modes(200) of the 10-segment beam, {name}",
                          r["t_modes"], t_baseline=r["t_fe"],
                          baseline=f"dense eigh, {r['n_dof_fe']}-DOF Hermite FE",
                          ratio=r["ratio_modes"], ratio_is="baseline / dampline",
                          target=f">= {SPEEDUP:g}x", met=r["ratio_modes"] >= SPEEDUP and acc is not False,
                          alloc_mib=r["alloc_mib"],
                          notes=(f"{check}; natural_frequencies(200) alone "
                                 f"{r['t_natural_frequencies'] * 1e3:.0f} ms")))
    return result


if __name__ == "__main__":
    import sys
    main(skip_mpmath="--skip-mpmath" in sys.argv[1:])
