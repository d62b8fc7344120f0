"""Argument checking of the public API: every bad argument gets one
:class:`dampline.ModelError` naming the key, the value and the unit or range, with the
nearest accepted word for a misspelt one; good arguments at the edge of each range
pass and give the physically right answer.

The cases here are the gaps left by ``test_model.py`` (which covers the model keys,
property values and the basic solver requests): misspellings, types numpy would
silently coerce (text, booleans), counts, the frequency rules (order, 0 Hz, the low
and high limits), study and result arguments, and model files.

Physics checks name their source; contract checks compare with exact message
fragments.
"""

from __future__ import annotations

import copy
import importlib
import math
import os
from pathlib import Path

import numpy as np
import pytest

import dampline as dl
from dampline import ModelError

io_module = importlib.import_module("dampline.model.io")

# steel bar, L = 0.5 m: c = sqrt(E / rho)
E, RHO, AREA, LEN = 2.0e11, 7800.0, 1.0e-4, 0.5
BAR = {"kind": "axial",
       "segments": [{"length": LEN, "E": E, "rho": RHO, "area": AREA}],
       "ends": {"left": "fixed", "right": "free"},
       "damping": {"model": "loss_factor", "eta": 0.01}}
BEAM = {"kind": "bending",
        "segments": [{"length": 1.0, "E": 2.1e11, "rho": 7850.0, "area": 4e-4, "I": 3e-8}],
        "ends": {"left": "clamped", "right": "free"},
        "damping": {"model": "loss_factor", "eta": 0.01}}
PIPE = {"kind": "duct", "segments": [{"length": 1.0, "area": 1e-3}],
        "ends": {"left": "closed", "right": "open"}}


def line_of(base, **changes):
    spec = copy.deepcopy(base)
    spec.update(changes)
    return dl.Line.from_dict(spec)


HELD = line_of(BAR)
FREE = line_of(BAR, ends={"left": "free", "right": "free"})
CANTILEVER = line_of(BEAM)
F = [100.0, 2000.0]


def raises(call, key, value_repr, fragment, unit=None):
    """``call()`` raises ModelError naming key and value (repr) with ``fragment`` in the
    message (and the unit when given)."""
    with pytest.raises(ModelError) as excinfo:
        call()
    err = excinfo.value
    msg = str(err)
    assert isinstance(err, ValueError)
    assert err.key == key, msg
    assert value_repr in msg, msg
    assert fragment in msg, msg
    if unit is not None:
        assert err.unit == unit, msg
    return err


# ====================================================================== did you mean
def _with_segment_key(base, old, new):
    spec = copy.deepcopy(base)
    seg = spec["segments"][0]
    seg[new] = seg.pop(old)
    return spec


SPELLING = {
    # case: (call, key, value repr, suggested word)
    "segment key": (lambda: dl.Line.from_dict(_with_segment_key(BAR, "length", "lenght")),
                    "segments[0].lenght", "0.5", "length"),
    "top-level key": (lambda: dl.Line.from_dict({**BAR, "segmets": BAR["segments"]}),
                      "model.segmets", "[", "segments"),
    "kind": (lambda: dl.Line.from_dict({**BAR, "kind": "axail"}), "kind", "'axail'", "axial"),
    "end word": (lambda: dl.Line.from_dict({**BAR, "ends": {"left": "fixd"}}), "ends.left",
                 "'fixd'", "fixed"),
    "duct end word": (lambda: dl.Line.from_dict({**PIPE, "ends": {"right": "opne"}}),
                      "ends.right", "'opne'", "open"),
    "bending end word": (lambda: dl.Line.from_dict({**BEAM, "ends": {"left": "clampd"}}),
                         "ends.left", "'clampd'", "clamped"),
    "damping model": (lambda: dl.Line.from_dict({**BAR, "damping": {"model": "rayleigh_"}}),
                      "damping.model", "'rayleigh_'", "rayleigh"),
    "absorber key": (lambda: dl.Line.from_dict({**BAR, "attachments": [
        {"at": 0.2, "absorber": {"mass": 0.1, "stifness": 1e4}}]}),
        "attachments[0].absorber.stifness", "10000.0", "stiffness"),
    "section shape": (lambda: dl.Line.from_dict(_sectioned({"shape": "circel", "diameter": 0.02})),
                      "segments[0].section.shape", "'circel'", "circle"),
    "section dimension": (lambda: dl.Line.from_dict(_sectioned({"shape": "circle",
                                                                "diamter": 0.02})),
                          "segments[0].section.diamter", "0.02", "diameter"),
    "method": (lambda: dl.frf(HELD, F, method="exakt"), "method", "'exakt'", "exact"),
    "quantity": (lambda: dl.frf(HELD, F, quantity="mobilty"), "quantity", "'mobilty'",
                 "mobility"),
    "drive": (lambda: dl.frf(HELD, F, drive="forse"), "drive", "'forse'", "force"),
    "coupling": (lambda: dl.frf(HELD, F, method="modal", modes=4, coupling="diagnal"),
                 "coupling", "'diagnal'", "diagonal"),
    "modal option": (lambda: dl.frf(HELD, F, method="modal", mode=4), "mode", "4", "modes"),
    "table column": (lambda: dl.modal_table(HELD, 3)["frequncy"], "column", "'frequncy'",
                     "frequency"),
    "study mechanism": (lambda: dl.studies.damping_needed(HELD, (10.0, 100.0), 1.0, 0.5, 0.5,
                                                          mechanism="loss"),
                        "mechanism", "'loss'", "loss_factor"),
    "truncation coupling": (lambda: dl.studies.truncation_study(HELD, F, 0.5, [0.5], counts=(2,),
                                                                coupling="ful"),
                            "coupling", "'ful'", "full"),
}


def _sectioned(section):
    spec = copy.deepcopy(BEAM)
    seg = spec["segments"][0]
    del seg["area"], seg["I"]
    seg["section"] = section
    return spec


@pytest.mark.parametrize("case", list(SPELLING))
def test_misspelt_words_get_the_nearest_accepted_one(case):
    call, key, value, word = SPELLING[case]
    raises(call, key, value, f"did you mean {word!r}?")


def test_unrelated_words_get_no_suggestion():
    err = raises(lambda: dl.frf(HELD, F, method="finite elements"), "method",
                 "'finite elements'", "must be one of 'exact', 'modal'")
    assert "did you mean" not in str(err)


# ====================================================================== model values
MODEL_CASES = {
    # case: (spec, key, value repr, unit, fragment)
    "segment without length": (
        {**BAR, "segments": [{"E": E, "rho": RHO, "area": AREA}]},
        "segments[0].length", "None", "m", "required"),
    "integer too large for a float": (
        {**BAR, "segments": [{"length": 10 ** 400, "E": E, "rho": RHO, "area": AREA}]},
        "segments[0].length", "1000", "m", "too large"),
    "modulus beyond the accepted range": (
        {**BAR, "segments": [{"length": LEN, "E": 1e300, "rho": RHO, "area": AREA}]},
        "segments[0].E", "1e+300", "Pa", "outside the range"),
    "length below the accepted range": (
        {**BAR, "segments": [{"length": 1e-300, "E": E, "rho": RHO, "area": AREA}]},
        "segments[0].length", "1e-300", "m", "outside the range"),
    "dashpot beyond the accepted range": (
        {**BAR, "attachments": [{"at": 0.1, "dashpot": 1e40}]},
        "attachments[0].dashpot", "1e+40", "N s/m", "outside the range"),
    "loss factor typed as a percentage": (
        {**BAR, "damping": {"model": "loss_factor", "eta": 20.0}},
        "damping.eta", "20.0", "(loss factor)", "at most 10"),
    "segment loss factor typed as a percentage": (
        {**BAR, "segments": [{"length": LEN, "E": E, "rho": RHO, "area": AREA, "eta": 15}]},
        "segments[0].eta", "15", "(loss factor)", "at most 10"),
    "segment shorter than the position resolution": (
        {**BAR, "segments": [BAR["segments"][0], {"length": 1e-10, "E": E, "rho": RHO,
                                                  "area": AREA}]},
        "segments[1].length", "1e-10", "m", "would vanish"),
    "segment given as a number": ({**BAR, "segments": [0.5]}, "segments[0]", "0.5", "", "table"),
    "end table value as text": ({**BAR, "ends": {"right": {"mass": "2"}}}, "ends.right.mass",
                                "'2'", "kg", "real number"),
    "attachment position as text": ({**BAR, "attachments": [{"at": "0.1", "mass": 1.0}]},
                                    "attachments[0].at", "'0.1'", "m", "real number"),
    "zeta as text": ({**BAR, "damping": {"model": "modal", "zeta": "0.02"}}, "damping.zeta",
                     "'0.02'", "(damping ratio)", "real number"),
}


@pytest.mark.parametrize("case", list(MODEL_CASES))
def test_bad_model_values(case):
    spec, key, value, unit, fragment = MODEL_CASES[case]
    raises(lambda: dl.Line.from_dict(spec), key, value, fragment, unit)


def test_edges_of_the_accepted_ranges_pass():
    """A loss factor of 10, a spring of 1e30, a dashpot as good as zero, and a segment
    just longer than the position resolution are accepted."""
    line_of(BAR, damping={"model": "loss_factor", "eta": 10.0})
    line_of(BAR, attachments=[{"at": 0.1, "spring": 1e30, "dashpot": 1e-300}])
    line_of(BAR, segments=[BAR["segments"][0],
                           {"length": 2e-9 * LEN, "E": E, "rho": RHO, "area": AREA}])


def test_direct_construction_gets_the_suggestion_too():
    seg = dl.Segment(length=1.0, E=E, rho=RHO, area=AREA)
    raises(lambda: dl.Line(kind="axal", segments=(seg,)), "kind", "'axal'",
           "did you mean 'axial'?")
    raises(lambda: dl.Line(kind=["axial"], segments=(seg,)), "kind", "['axial']",
           "unknown kind")


# ====================================================================== frequencies
BAD_FREQUENCIES = {
    # case: (freqs, value repr, fragment)
    "text": ("100", "'100'", "numbers"),
    "list of text": (["100", "200"], "['100', '200']", "numbers"),
    "booleans": ([True, False], "[True, False]", "real numbers"),
    "complex": ([100 + 1j], "(100+1j)", "not complex"),
    "None": (None, "None", "numbers"),
    "None inside": ([100.0, None], "[100.0, None]", "numbers"),
    "nested ragged": ([[1.0], [1.0, 2.0]], "[[1.0], [1.0, 2.0]]", "numbers"),
    "negative": ([100.0, -1.0], "-1.0", "positive or zero"),
    "minus infinity": ([-math.inf], "-inf", "finite"),
    "nan in numpy": (np.array([1.0, np.nan]), "nan", "finite"),
    "above the phase limit": ([1e12], "1000000000000.0", "wave phase"),
}


@pytest.mark.parametrize("case", list(BAD_FREQUENCIES))
@pytest.mark.parametrize("method", ["exact", "modal"])
def test_bad_frequencies(case, method):
    freqs, value, fragment = BAD_FREQUENCIES[case]
    raises(lambda: dl.frf(HELD, freqs, method=method, modes=3) if method == "modal" else
           dl.frf(HELD, freqs), "freqs_hz", value, fragment, "Hz")


def test_phase_limit_names_the_highest_accepted_frequency():
    # sum of k L = w L / c on a uniform bar: the limit 1e6 rad is at w = 1e6 c / L
    f_max = 1e6 * math.sqrt(E / RHO) / LEN / (2 * math.pi)
    err = raises(lambda: dl.frf(HELD, [1.001 * f_max]), "freqs_hz", "", "accepted")
    assert f"{f_max:.6g} Hz" in str(err)
    H = np.asarray(dl.frf(HELD, [0.999 * f_max], drive_at=LEN, response_at=[LEN]))
    assert np.isfinite(H).all()


@pytest.mark.parametrize("method", ["exact", "modal"])
def test_unsorted_and_repeated_frequencies_keep_the_given_order(method):
    """Results follow the order of the frequencies as given: the same call on the
    sorted frequencies, permuted, gives the same rows exactly."""
    f = np.array([1500.0, 30.0, 900.0, 30.0, 4400.0, 2.5])
    kw = dict(drive_at=LEN, response_at=[0.2, LEN], method=method)
    if method == "modal":
        kw["modes"] = dl.modes(HELD, 6)
    H = dl.frf(HELD, f, **kw)
    order = np.argsort(f, kind="stable")
    Hs = np.asarray(dl.frf(HELD, f[order], **kw))
    back = np.empty_like(Hs)
    back[order] = Hs
    np.testing.assert_array_equal(H.frequencies, f)
    np.testing.assert_allclose(np.asarray(H), back, rtol=1e-12, atol=0.0)


def test_a_scalar_frequency_is_one_row():
    H = dl.frf(HELD, 100.0, drive_at=LEN, response_at=[LEN])
    assert np.asarray(H).shape == (1, 1)


# ---------------------------------------------------------------------- 0 Hz
def test_zero_hz_on_a_held_bar_is_the_static_answer():
    """Fixed-free bar, force F at x_d: static u(x) = min(x, x_d) / (E* A) with the
    complex modulus E* = E (1 + i eta) (strength of materials; loss factor as a
    complex modulus); mobility and accelerance are exactly zero at 0 Hz."""
    xd, xr = 0.4, np.array([0.0, 0.1, 0.4, LEN])
    H = np.asarray(dl.frf(HELD, [0.0, 1e-250], drive_at=xd, response_at=xr))
    ref = np.minimum(xr, xd) / (E * (1 + 0.01j) * AREA)
    np.testing.assert_allclose(H[0], ref, rtol=1e-12, atol=1e-30)
    np.testing.assert_allclose(H[1], ref, rtol=1e-12, atol=1e-30)
    for q in ("mobility", "accelerance"):
        Y = np.asarray(dl.frf(HELD, [0.0], drive_at=xd, response_at=xr, quantity=q))
        assert np.all(Y == 0.0)
    # far below the static limit the mobility is i w times the static receptance
    w = 2 * math.pi * 1e-250
    Y = np.asarray(dl.frf(HELD, [1e-250], drive_at=xd, response_at=xr, quantity="mobility"))
    np.testing.assert_allclose(Y[0], 1j * w * ref, rtol=1e-12, atol=0.0)
    # internal force at 0 Hz: tension 1 between the support and x_d, none beyond
    N = np.asarray(dl.frf(HELD, [0.0], drive_at=xd, response_at=[0.1, 0.45],
                          quantity="force"))[0]
    np.testing.assert_allclose(N, [1.0, 0.0], rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("method", ["exact", "modal"])
def test_zero_hz_on_a_cantilever_beam_is_the_static_deflection(method):
    """Cantilever, tip force: w(x) = x^2 (3 L - x) / (6 EI*) (Roark, cantilever with an
    end load), with EI* = EI (1 + i eta). The modal sum with its static residual
    reproduces it too."""
    EI = 2.1e11 * 3e-8 * (1 + 0.01j)
    x = np.array([0.25, 0.6, 1.0])
    kw = {"modes": 10} if method == "modal" else {}
    H = np.asarray(dl.frf(CANTILEVER, [0.0], drive_at=1.0, response_at=x, method=method, **kw))
    np.testing.assert_allclose(H[0], x ** 2 * (3 - x) / (6 * EI), rtol=1e-9)


def test_zero_hz_in_a_duct_with_an_open_end():
    """Closed-open duct, volume-velocity source Q at the closed end: at 0 Hz the gas
    flows steadily out of the open end, so the particle velocity is Q / A everywhere
    and the pressure is zero (Kinsler et al., Fundamentals of Acoustics, plane waves in
    pipes, low-frequency limit)."""
    pipe = dl.Line.from_dict(PIPE)
    x = [0.0, 0.3, 1.0]
    p = np.asarray(dl.frf(pipe, [0.0], drive="volume_velocity", response_at=x))
    v = np.asarray(dl.frf(pipe, [0.0], drive="volume_velocity", response_at=x,
                          quantity="velocity"))
    assert np.all(p == 0.0)
    np.testing.assert_allclose(v[0], 1.0 / 1e-3, rtol=1e-12)


ZERO_REFUSED = {
    "free bar": (lambda: dl.frf(FREE, [0.0, 10.0]), "rigid-body"),
    "free bar, modal": (lambda: dl.frf(FREE, [0.0], method="modal", modes=4), "rigid-body"),
    "closed duct": (lambda: dl.frf(line_of(PIPE, ends={"left": "closed", "right": "closed"}),
                                   [0.0], drive="volume_velocity"), "enclosed"),
    "imposed velocity": (lambda: dl.frf(line_of(BAR, ends={"left": "free", "right": "fixed"}),
                                        [0.0], drive_at=0.0, drive="velocity"), "drift"),
    "wall losses": (lambda: dl.frf(line_of(PIPE, damping={"wall_losses": True}), [0.0],
                                   drive="volume_velocity"), "Kirchhoff"),
}


@pytest.mark.parametrize("case", list(ZERO_REFUSED))
def test_zero_hz_is_refused_where_the_static_answer_is_infinite(case):
    call, fragment = ZERO_REFUSED[case]
    raises(call, "freqs_hz", "0.0", fragment, "Hz")


def test_wall_losses_need_a_boundary_layer_thinner_than_the_duct():
    """Kirchhoff's wide-tube losses need delta_v = sqrt(2 mu / (rho w)) < a: the
    limit is f = mu / (pi rho a^2) (air at 20 C: mu = 1.81e-5 Pa s, rho = 1.204)."""
    pipe = line_of(PIPE, damping={"wall_losses": True})
    a2 = 1e-3 / math.pi
    f_lim = 1.81e-5 / (math.pi * 1.204 * a2)
    err = raises(lambda: dl.frf(pipe, [0.5 * f_lim], drive="volume_velocity"), "freqs_hz", "",
                 "Kirchhoff")
    assert f"{f_lim:.4g} Hz" in str(err)
    assert np.isfinite(np.asarray(dl.frf(pipe, [2 * f_lim], drive="volume_velocity"))).all()


# ---------------------------------------------------------------------- free lines
def test_low_frequencies_on_a_free_line_exact_refused_modal_exact():
    """A free-free bar far below its first mode moves as a rigid mass:
    receptance -> -1 / (M w^2) (M = rho A L). The exact solution cannot resolve that
    inertia against the stiffness S/h of its pieces below a floor, and says so; the modal
    sum (rigid-body term exact) gives it to rounding."""
    M = RHO * AREA * LEN
    f = 1e-3
    raises(lambda: dl.frf(FREE, [f]), "freqs_hz", "0.001", "method='modal'", "Hz")
    H = np.asarray(dl.frf(FREE, [f], drive_at=0.1, response_at=[0.4], method="modal",
                          modes=6))[0, 0]
    w = 2 * math.pi * f
    # elastic correction is of order (w / w1)^2 ~ 1e-13 of the rigid term here
    assert H == pytest.approx(-1.0 / (M * w * w), rel=1e-9)


def test_free_line_floor_is_where_the_exact_solution_still_holds():
    """Just above the refused range the exact solution agrees with the closed form of
    the free-free bar, H = -cos(k a) cos(k (L - b)) / (E A k sin(k L)), a <= b
    (Graff, Wave Motion in Elastic Solids, longitudinal waves; undamped)."""
    import mpmath as mp
    free = line_of(BAR, ends={"left": "free", "right": "free"}, damping={"model": "none"})
    with pytest.raises(ModelError) as excinfo:
        dl.frf(free, [1e-9])
    f_min = float(str(excinfo.value).split("frequencies from ")[1].split(" Hz")[0])
    f = 1.01 * f_min
    a, b = 0.1, 0.4
    H = np.asarray(dl.frf(free, [f], drive_at=a, response_at=[b]))[0, 0]
    with mp.workdps(40):
        k = 2 * mp.pi * mp.mpf(f) / mp.sqrt(mp.mpf(E) / RHO)
        ref = -mp.cos(k * a) * mp.cos(k * (LEN - b)) / (mp.mpf(E) * AREA * k * mp.sin(k * LEN))
    assert H.real == pytest.approx(float(ref), rel=1e-6)


# ====================================================================== positions
POSITION_CASES = {
    "drive as text": (lambda: dl.frf(HELD, F, drive_at="0.5"), "drive_at", "'0.5'", "m"),
    "drive as a list": (lambda: dl.frf(HELD, F, drive_at=[0.5]), "drive_at", "[0.5]", "m"),
    "drive as a boolean": (lambda: dl.frf(HELD, F, drive_at=True), "drive_at", "True", "m"),
    "drive as None": (lambda: dl.frf(HELD, F, drive_at=None), "drive_at", "None", "m"),
    "response as text": (lambda: dl.frf(HELD, F, response_at="0.2"), "response_at", "'0.2'",
                         "m"),
    "response as None": (lambda: dl.frf(HELD, F, response_at=None), "response_at", "None",
                         "m"),
    "response nan": (lambda: dl.frf(HELD, F, response_at=[0.1, math.nan]), "response_at",
                     "nan", "m"),
    "response as booleans": (lambda: dl.frf(HELD, F, response_at=[True]), "response_at",
                             "[True]", "m"),
    "shape at text": (lambda: dl.modes(HELD, 2).shape("0.1"), "x", "'0.1'", "m"),
    "shape off the line": (lambda: dl.modes(HELD, 2).shape([0.6]), "x", "0.6", "m"),
    "imposed velocity inside": (lambda: dl.frf(HELD, F, drive="velocity", drive_at=0.25),
                                "drive_at", "0.25", "m"),
    "table drive off the line": (lambda: dl.modal_table(HELD, 2, drive_at=-0.1,
                                                        response_at=0.2), "drive_at", "-0.1",
                                 "m"),
    "absorber position as text": (lambda: dl.studies.tune_absorber(HELD, 1, 0.01, "0.5"),
                                  "at", "'0.5'", "m"),
}


@pytest.mark.parametrize("case", list(POSITION_CASES))
def test_bad_positions(case):
    call, key, value, unit = POSITION_CASES[case]
    raises(call, key, value, "", unit)


def test_numpy_scalars_are_good_positions_and_counts():
    H = dl.frf(HELD, F, drive_at=np.float32(0.5), response_at=np.array(0.25))
    assert np.asarray(H).shape == (2, 1)
    assert dl.natural_frequencies(HELD, np.int32(2)).shape == (2,)


# ====================================================================== counts
COUNT_CASES = {
    # case: (call, key, value repr, fragment)
    "modes huge": (lambda: dl.frf(HELD, F, method="modal", modes=10 ** 9), "count",
                   "1000000000", "at most 100000"),
    "modes boolean": (lambda: dl.frf(HELD, F, method="modal", modes=True), "modes", "True",
                      "number of modes"),
    "modes float": (lambda: dl.frf(HELD, F, method="modal", modes=4.0), "modes", "4.0",
                    "number of modes"),
    "table count negative": (lambda: dl.modal_table(HELD, -2), "modes", "-2", "at least 1"),
    "coupling count text": (lambda: dl.coupling(HELD, "4"), "modes", "'4'", "number of modes"),
    "coupling points per peak": (lambda: dl.coupling(HELD, 3, points_per_peak=0),
                                 "points_per_peak", "0", "at least 3"),
    "coupling points as text": (lambda: dl.coupling(HELD, 3, points_per_peak="many"),
                                "points_per_peak", "'many'", "whole number"),
    "shape derivative text": (lambda: dl.modes(HELD, 2).shape([0.1], derivative="slope"),
                              "derivative", "'slope'", "whole number"),
    "shape derivative too high": (lambda: dl.modes(HELD, 2).shape([0.1], derivative=2),
                                  "derivative", "2", "at most 1"),
    "first of a set": (lambda: dl.modes(HELD, 2).first(3), "modes", "3", "from 1 to 2"),
    "truncation counts text": (lambda: dl.studies.truncation_study(HELD, F, 0.5, [0.5],
                                                                   counts="many"),
                               "counts", "'many'", "list of mode counts"),
    "truncation count float": (lambda: dl.studies.truncation_study(HELD, F, 0.5, [0.5],
                                                                   counts=(2, 2.5)),
                               "counts[1]", "2.5", "whole number"),
    "truncation no counts": (lambda: dl.studies.truncation_study(HELD, F, 0.5, [0.5],
                                                                 counts=()),
                             "counts", "[]", "none given"),
    "damping study n_freq": (lambda: dl.studies.damping_needed(HELD, (10.0, 100.0), 1.0, 0.5,
                                                               0.5, n_freq=2.5),
                             "n_freq", "2.5", "whole number"),
    "damping study rtol": (lambda: dl.studies.damping_needed(HELD, (10.0, 100.0), 1.0, 0.5,
                                                             0.5, rtol=0.0),
                           "rtol", "0.0", "above 0"),
    "damping study modes": (lambda: dl.studies.damping_needed(HELD, (10.0, 100.0), 1.0, 0.5,
                                                              0.5, mechanism="zeta", modes=-3),
                            "modes", "-3", "at least 1"),
    "absorber study n_freq": (lambda: dl.studies.tune_absorber(HELD, 1, 0.01, 0.5, n_freq=1),
                              "n_freq", "1", "at least 3"),
    "absorber study band": (lambda: dl.studies.tune_absorber(HELD, 1, 0.01, 0.5,
                                                             band_hz=(3000.0, 2000.0)),
                            "band_hz", "(3000.0, 2000.0)", "low < high"),
    "absorber study mass": (lambda: dl.studies.tune_absorber(HELD, 1, -0.01, 0.5), "mass",
                            "-0.01", "above 0"),
}


@pytest.mark.parametrize("case", list(COUNT_CASES))
def test_bad_counts_and_study_arguments(case):
    call, key, value, fragment = COUNT_CASES[case]
    raises(call, key, value, fragment)


NOT_A_LINE = {
    "truncation study": lambda: dl.studies.truncation_study(BAR, F, 0.5, [0.5]),
    "damping study": lambda: dl.studies.damping_needed(BAR, (10.0, 100.0), 1.0, 0.5, 0.5),
    "absorber study": lambda: dl.studies.tune_absorber(BAR, 1, 0.01, 0.5),
    "modal table": lambda: dl.modal_table(BAR, 2),
    "coupling": lambda: dl.coupling(None, 2),
}


@pytest.mark.parametrize("case", list(NOT_A_LINE))
def test_studies_need_a_line(case):
    raises(NOT_A_LINE[case], "line", "", "dampline.Line")


# ====================================================================== results
def test_peaks_need_a_rising_sweep_and_a_real_column():
    H = dl.frf(HELD, [3000.0, 100.0, 2000.0], drive_at=LEN, response_at=[LEN])
    raises(lambda: H.peaks(), "frequencies", "100.0", "rising sweep", "Hz")
    G = dl.frf(HELD, np.linspace(100.0, 6000.0, 50), drive_at=LEN, response_at=[0.2, LEN])
    raises(lambda: G.peaks(column=2), "column", "2", "at most 1")
    raises(lambda: G.peaks(column="tip"), "column", "'tip'", "whole number")
    assert len(G.peaks(column=-1)) == len(G.peaks(column=1))
    raises(lambda: G.db(reference=0.0), "reference", "0.0", "above 0")
    raises(lambda: G.db(reference=-1e-6), "reference", "-1e-06", "above 0")


def test_truncation_study_needs_a_rising_sweep():
    raises(lambda: dl.studies.truncation_study(HELD, [2000.0, 100.0], 0.5, [0.5]),
           "freqs_hz", "100.0", "rising", "Hz")


# ====================================================================== bending precision
def test_bending_pieces_too_short_for_the_solver_are_refused():
    """A bending piece of length h in a line of length L: rounding error ~ (L/h)^3 eps.
    Past the limit the request is refused naming the crowded points; below it the
    line is solved (1 mm in 1 m)."""
    seg = BEAM["segments"][0]
    crowded = {**BEAM, "segments": [{**seg, "length": 0.4}, {**seg, "length": 1e-5},
                                    {**seg, "length": 0.6 - 1e-5}]}
    line = dl.Line.from_dict(crowded)            # a valid model ...
    for call in (lambda: dl.natural_frequencies(line, 3), lambda: dl.modes(line, 3),
                 lambda: dl.frf(line, F), lambda: dl.modal_table(line, 3)):
        raises(call, "segments[1].length", "1e-05", "beyond this solver's precision", "m")
    near = dl.Line.from_dict({**BEAM, "attachments": [{"at": 0.5, "mass": 0.1},
                                                      {"at": 0.5 + 1e-5, "spring": 10.0}]})
    raises(lambda: dl.natural_frequencies(near, 2), "attachments[0].at", "0.5",
           "attachments[1]")
    ok = {**BEAM, "segments": [{**seg, "length": 0.4}, {**seg, "length": 1e-3},
                               {**seg, "length": 0.6 - 1e-3}]}
    assert np.all(np.isfinite(dl.natural_frequencies(dl.Line.from_dict(ok), 3)))


# ====================================================================== files
@pytest.fixture
def saved(tmp_path):
    path = tmp_path / "model.toml"
    dl.save(HELD, path)
    return path, path.read_bytes()


def test_save_failing_at_fsync_leaves_file_and_folder_unchanged(saved, monkeypatch):
    path, original = saved

    def broken_fsync(fd):
        raise OSError(5, "Input/output error")

    monkeypatch.setattr(io_module.os, "fsync", broken_fsync)
    with pytest.raises(OSError):
        dl.save(CANTILEVER, path)
    assert path.read_bytes() == original
    assert sorted(os.listdir(path.parent)) == [path.name]


def test_save_interrupted_leaves_file_and_folder_unchanged(saved, monkeypatch):
    """A KeyboardInterrupt in the middle of the write is cleaned up like an error."""
    path, original = saved
    real_replace = io_module.os.replace

    def interrupted(src, dst):
        raise KeyboardInterrupt

    monkeypatch.setattr(io_module.os, "replace", interrupted)
    with pytest.raises(KeyboardInterrupt):
        dl.save(CANTILEVER, path)
    monkeypatch.setattr(io_module.os, "replace", real_replace)
    assert path.read_bytes() == original
    assert sorted(os.listdir(path.parent)) == [path.name]


def test_save_to_a_folder_or_into_a_missing_folder(tmp_path):
    raises(lambda: dl.save(HELD, tmp_path), "path", str(tmp_path), "folder")
    missing = tmp_path / "nowhere" / "m.toml"
    raises(lambda: dl.save(HELD, missing), "path", str(missing), "does not exist")
    raises(lambda: dl.save(HELD, None), "path", "None", "file path")
    assert os.listdir(tmp_path) == []


def test_load_names_the_path_for_folders_and_non_paths(tmp_path):
    raises(lambda: dl.load(tmp_path), "path", str(tmp_path), "folder")
    raises(lambda: dl.load(None), "path", "None", "file path")
    raises(lambda: dl.load(3.0), "path", "3.0", "file path")


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0,
                    reason="POSIX permissions; root reads any file")
def test_unreadable_file_names_the_path(tmp_path):
    path = tmp_path / "locked.toml"
    dl.save(HELD, path)
    path.chmod(0)
    try:
        raises(lambda: dl.load(path), "path", str(path), "cannot read")
    finally:
        path.chmod(0o644)


def test_malformed_toml_gives_the_line_number(tmp_path):
    path = tmp_path / "broken.toml"
    path.write_text('kind = "axial"\n\n[[segments]]\nlength = 0.5\nE = 2e11 2e11\n',
                    encoding="utf-8")
    err = raises(lambda: dl.load(path), "path", str(path), "malformed TOML")
    assert "line 5" in str(err)


def test_empty_and_bad_files_name_the_file(tmp_path):
    empty = tmp_path / "empty.toml"
    empty.write_text("", encoding="utf-8")
    err = raises(lambda: dl.load(empty), "kind", "None", "required")
    assert str(empty) in str(err)
    bad = tmp_path / "bad.toml"
    text = dl.dumps(HELD).replace("[[segments]]\nlength", "[[segments]]\nlenght")
    bad.write_text(text, encoding="utf-8")
    err = raises(lambda: dl.load(bad), "segments[0].lenght", "0.5", "did you mean 'length'?")
    assert str(bad) in str(err)
    # bytes that are not UTF-8 in the middle of an otherwise valid file
    raw = dl.dumps(HELD).encode("utf-8").replace(b'kind = "axial"', b'kind = "axial\xff"')
    binary = tmp_path / "binary.toml"
    binary.write_bytes(raw)
    raises(lambda: dl.load(binary), "path", str(binary), "UTF-8")


def test_round_trip_through_a_path_given_as_text(tmp_path):
    path = str(tmp_path / "as_text.toml")
    assert Path(dl.save(CANTILEVER, path)) == Path(path)
    assert dl.load(path) == CANTILEVER
