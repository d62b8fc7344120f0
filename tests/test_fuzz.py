"""Fuzzing the public API with hypothesis (deterministic: derandomize=True, no database).

Valid models: random lines of every kind, 1 to 20 segments, properties spread over six
decades, random ends (words and tables), attachments (mass, spring, dashpot, absorber,
and rotary elements on beams) and damping models. With damping in every mode the exact
and the modal responses at random frequencies must be finite, of the documented shape,
and raise no warning; the natural frequencies must be finite, non-negative and
ascending. An undamped line may be refused only with a ModelError.

Invalid models: mutations of valid dicts (wrong types, non-finite or negative values,
unknown or missing keys, unknown words) must raise ModelError and nothing else, with the
offending key in the message.

Examples per test: DAMPLINE_FUZZ_EXAMPLES (default 80); DAMPLINE_FUZZ_RANDOM=1 draws fresh
seeds for exploration. Failures found while writing these became explicit tests in
test_regressions.py.
"""

from __future__ import annotations

import copy
import math
import os
import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, event, given, settings
from hypothesis import strategies as st

import dampline as dl
from dampline import ModelError

from _reference_tools import wave_coefficients

N_EXAMPLES = int(os.environ.get("DAMPLINE_FUZZ_EXAMPLES", "80"))
#: DAMPLINE_FUZZ_RANDOM=1 explores with fresh random seeds (not for CI: not repeatable)
FUZZ = settings(max_examples=N_EXAMPLES, deadline=None, database=None,
                derandomize=os.environ.get("DAMPLINE_FUZZ_RANDOM", "") != "1",
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much,
                                       HealthCheck.data_too_large])

#: base properties of each kind; each is scaled by 10^u, u in [-3, 3] (six decades)
BASE = {
    "axial": {"E": 2.0e11, "rho": 7850.0, "area": 1.0e-4},
    "torsion": {"G": 8.0e10, "rho": 7850.0, "J": 1.0e-8},
    "string": {"tension": 200.0, "mass_per_length": 0.01},
    "duct": {"area": 1.0e-3, "rho": 1.2, "c": 343.0},
    "bending": {"E": 2.0e11, "rho": 7850.0, "area": 4.0e-4, "I": 3.0e-8},
}
END_WORDS = {"axial": ["fixed", "free"], "torsion": ["fixed", "free"],
             "string": ["fixed", "free"],
             "duct": ["closed", "open", "anechoic", "unflanged", "flanged"],
             "bending": ["clamped", "pinned", "free", "sliding"]}
QUANTITIES = {"duct": ["pressure", "velocity", "volume_velocity"],
              "bending": ["receptance", "mobility", "accelerance", "rotation", "moment",
                          "shear", "force"]}
STRUCT_QUANTITIES = ["receptance", "mobility", "accelerance", "force"]


decade = st.floats(-3.0, 3.0)


@st.composite
def valid_specs(draw, damped=True, kinds=tuple(BASE)):
    """A random valid model dict and w_ref, a frequency (rad/s) near its first modes.
    ``damped``: every mode carries damping (a loss factor or Rayleigh on every segment,
    or modal damping), so that no frequency is an infinite resonance."""
    kind = draw(st.sampled_from(kinds))
    # beams up to 6 segments: natural frequencies of long stepped beams cost seconds
    # (dense eigenvalue counts), too slow for the default run
    nseg = draw(st.integers(1, 6 if kind == "bending" else 20))
    # beams: lengths within 1.5 decades, so that no piece is short enough to be refused
    # (dampline.checks.solvable); other kinds over three decades
    span = 1.5 if kind == "bending" else 3.0
    segs = []
    for _ in range(nseg):
        seg = {"length": 10 ** draw(st.floats(-span / 2, span / 2))}
        for k, v in BASE[kind].items():
            seg[k] = v * 10 ** draw(decade)
        segs.append(seg)
    L = sum(s["length"] for s in segs)
    Sm = [wave_coefficients(kind, s) for s in segs]
    S_ref = math.exp(np.mean([math.log(a) for a, _ in Sm]))
    m_ref = math.exp(np.mean([math.log(b) for _, b in Sm]))
    if kind == "bending":
        # first-mode scale of a beam: (pi / L)^2 sqrt(EI / m) with the mean properties
        w_ref = (math.pi / L) ** 2 * math.sqrt(S_ref / m_ref)
        k_ref = S_ref / L ** 3
    else:
        t = sum(s["length"] / math.sqrt(a / b) for s, (a, b) in zip(segs, Sm))
        w_ref = math.pi / t
        k_ref = S_ref / L
    c_ref = k_ref / w_ref

    model = draw(st.sampled_from(["loss_factor", "rayleigh", "modal", "segment_eta"]
                                 if damped else ["none", "loss_factor0", "modal0"]))

    def end():
        words = END_WORDS[kind]
        if kind == "duct" and damped is False:
            words = ["closed", "open"]
        if kind == "duct" or draw(st.booleans()):
            return draw(st.sampled_from(words))
        t = {}
        for key, scale in (("spring", k_ref), ("mass", m_ref * L), ("dashpot", c_ref)):
            if draw(st.booleans()) and (key != "dashpot" or damped):
                t[key] = scale * 10 ** draw(decade)
        if kind == "bending":
            for key, scale in (("rot_spring", k_ref * L * L), ("rot_inertia", m_ref * L ** 3)):
                if draw(st.booleans()):
                    t[key] = scale * 10 ** draw(decade)
        return t or {"mass": m_ref * L}

    spec = {"kind": kind, "segments": segs, "ends": {"left": end(), "right": end()}}
    atts = []
    if kind != "duct":
        for _ in range(draw(st.integers(0, 4))):
            # beams: points kept 1e-3 L from each other (see above)
            at = draw(st.floats(0.0, 1.0))
            if kind == "bending":
                at = round(at * 500) / 500
            a = {"at": at * L}
            what = draw(st.sampled_from(["mass", "spring", "dashpot", "absorber", "rotary"]
                                        if kind == "bending" else
                                        ["mass", "spring", "dashpot", "absorber"]))
            if what == "mass":
                a["mass"] = m_ref * L * 10 ** draw(decade)
            elif what == "spring":
                a["spring"] = k_ref * 10 ** draw(decade)
            elif what == "dashpot":
                if not damped:
                    continue
                a["dashpot"] = c_ref * 10 ** draw(decade)
            elif what == "rotary":
                a["rot_inertia"] = m_ref * L ** 3 * 10 ** draw(decade)
                a["rot_spring"] = k_ref * L * L * 10 ** draw(decade)
            else:
                ma = m_ref * L * 10 ** draw(st.floats(-3.0, 0.0))
                wa = w_ref * 10 ** draw(st.floats(-0.5, 1.0))
                a["absorber"] = {"mass": ma, "stiffness": ma * wa * wa,
                                 "damping": (2 * draw(st.floats(0.01, 0.5)) * ma * wa
                                             if damped else 0.0)}
            atts.append(a)
    if kind == "bending":
        pts = sorted({round(x, 12) for x in
                      [a["at"] for a in atts] + list(np.cumsum([0.0] + [s["length"]
                                                                         for s in segs]))})
        assume(len(pts) < 2 or np.diff(pts).min() > 5e-4 * L)
    if atts:
        spec["attachments"] = atts
    if model == "loss_factor":
        spec["damping"] = {"model": "loss_factor", "eta": 10 ** draw(st.floats(-6.0, 0.0))}
    elif model == "segment_eta":
        for s in segs:
            s["eta"] = 10 ** draw(st.floats(-6.0, 0.0))
        spec["damping"] = {"model": "loss_factor"}
    elif model == "rayleigh":
        zeta = 10 ** draw(st.floats(-4.0, -1.0))
        spec["damping"] = {"model": "rayleigh", "alpha": 2 * zeta * w_ref * 10 ** draw(
            st.floats(-1.0, 1.0)), "beta": 2 * zeta / w_ref * 10 ** draw(st.floats(-1.0, 0.0))}
    elif model == "modal":
        zeta = draw(st.one_of(st.floats(1e-4, 0.3),
                              st.lists(st.floats(1e-4, 0.3), min_size=1, max_size=6)))
        spec["damping"] = {"model": "modal", "zeta": zeta}
    elif model == "loss_factor0":
        spec["damping"] = {"model": "loss_factor", "eta": 0.0}
    elif model == "modal0":
        spec["damping"] = {"model": "modal", "zeta": 0.0}
    # Kirchhoff's wall losses hold above f = mu / (pi rho a^2) (boundary layer thinner
    # than the radius; air viscosity 1.81e-5 Pa s): only where every frequency drawn is
    # above it
    floor = max(1.81e-5 / (s["rho"] * s["area"]) for s in segs) if kind == "duct" else 0.0
    if kind == "duct" and damped and floor < 0.04 * w_ref / (2 * math.pi) \
            and draw(st.booleans()):
        spec["damping"]["wall_losses"] = True
    return spec, w_ref


#: positions as fractions of the length: the ends, or inside
fractions = st.one_of(st.just(0.0), st.just(1.0), st.floats(1e-6, 1.0 - 1e-6))
#: frequency factors on w_ref, shifted off round numbers
JITTER = 1.0 + math.pi * 1e-5
freq_factors = st.lists(st.floats(0.05, 8.0), min_size=1, max_size=6)


def _request(draw, spec, line):
    kind = spec["kind"]
    drive = {"duct": "volume_velocity"}.get(kind, "force")
    if kind == "bending" and draw(st.booleans()):
        drive = "moment"
    quantity = draw(st.sampled_from(QUANTITIES.get(kind, STRUCT_QUANTITIES)))
    xd = draw(fractions) * line.length
    xr = [u * line.length for u in draw(st.lists(fractions, min_size=1, max_size=4))]
    return drive, quantity, xd, xr


# ================================================================== valid models
@FUZZ
@given(valid_specs(), freq_factors, st.data())
def test_exact_response_of_damped_lines_is_finite(case, factors, data):
    spec, w_ref = case
    line = dl.Line.from_dict(spec)
    drive, quantity, xd, xr = _request(data.draw, spec, line)
    f = np.array(factors) * JITTER * w_ref / (2 * math.pi)
    if spec["damping"]["model"] == "modal":
        with pytest.raises(ModelError) as excinfo:     # no exact form of modal damping
            dl.frf(line, f, drive_at=xd, response_at=xr, drive=drive, quantity=quantity)
        assert excinfo.value.key == "damping.model"
        return
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            H = dl.frf(line, f, drive_at=xd, response_at=xr, drive=drive, quantity=quantity)
        except ModelError as exc:
            # documented refusal: too low for the exact solution of a free line
            assert exc.key == "freqs_hz" and "rigid body" in str(exc), exc
            event("refused: below the free line's floor")
            return
    values = np.asarray(H)
    assert values.shape == (f.size, len(xr)) and values.dtype == complex
    assert np.all(np.isfinite(values)), values
    np.testing.assert_array_equal(H.frequencies, f)


@FUZZ
@given(valid_specs(), freq_factors, st.integers(1, 30), st.data())
def test_modal_response_of_damped_lines_is_finite(case, factors, count, data):
    spec, w_ref = case
    if spec["kind"] == "bending":
        count = min(count, 12)
    line = dl.Line.from_dict(spec)
    drive, quantity, xd, xr = _request(data.draw, spec, line)
    f = np.array(factors) * JITTER * w_ref / (2 * math.pi)
    coupling = data.draw(st.sampled_from(["full", "diagonal"]))
    residual = data.draw(st.booleans())
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        H = dl.frf(line, f, drive_at=xd, response_at=xr, drive=drive, quantity=quantity,
                   method="modal", modes=count, coupling=coupling, residual=residual)
    values = np.asarray(H)
    assert values.shape == (f.size, len(xr))
    assert np.all(np.isfinite(values)), values


@FUZZ
@given(valid_specs(damped=False) | valid_specs(), st.integers(1, 25))
def test_natural_frequencies_are_finite_and_ascending(case, count):
    spec, _ = case
    line = dl.Line.from_dict(spec)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        f = dl.natural_frequencies(line, count)
    assert f.shape == (count,)
    assert np.all(np.isfinite(f)) and np.all(f >= 0.0)
    assert np.all(np.diff(f) >= 0.0), f


@FUZZ
@given(valid_specs(damped=False), freq_factors, st.data())
def test_undamped_lines_give_finite_values_or_inf_with_a_warning(case, factors, data):
    """Without damping a frequency may in principle sit on a resonance: then inf with a
    ResonanceWarning, never NaN; anything else raised must be a ModelError."""
    spec, w_ref = case
    line = dl.Line.from_dict(spec)
    drive, quantity, xd, xr = _request(data.draw, spec, line)
    f = np.array(factors) * JITTER * w_ref / (2 * math.pi)
    method = data.draw(st.sampled_from(["exact", "modal"]))
    if method == "exact" and spec.get("damping", {}).get("model") == "modal":
        method = "modal"
    kw = {"modes": data.draw(st.integers(1, 20))} if method == "modal" else {}
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            values = np.asarray(dl.frf(line, f, drive_at=xd, response_at=xr, drive=drive,
                                       quantity=quantity, method=method, **kw))
        except ModelError as exc:
            assert exc.key == "freqs_hz" and "rigid body" in str(exc), exc
            event("refused: below the free line's floor")
            return
    assert not np.isnan(values).any()
    kinds = {type(w.message) for w in caught}
    assert kinds <= {dl.ResonanceWarning}, [str(w.message) for w in caught]
    if np.isinf(values).any():
        assert dl.ResonanceWarning in kinds


# ================================================================== invalid models
def _leaves(spec, path=()):
    """Every (path, value) leaf of a nested dict/list spec."""
    if isinstance(spec, dict):
        for k, v in spec.items():
            yield from _leaves(v, path + (k,))
    elif isinstance(spec, list) and spec and isinstance(spec[0], (dict, list)):
        for i, v in enumerate(spec):
            yield from _leaves(v, path + (i,))
    else:
        yield path, spec


def _set(spec, path, value):
    node = spec
    for p in path[:-1]:
        node = node[p]
    node[path[-1]] = value


def _delete(spec, path):
    node = spec
    for p in path[:-1]:
        node = node[p]
    del node[path[-1]]


#: values that no numeric model key accepts
BAD_NUMBERS = [math.nan, math.inf, -math.inf, -1.0, "1.0", None, [1.0], {"v": 1.0}, True,
               1 + 1j, 10 ** 400, 1e40]
REQUIRED = {"axial": ["length", "E", "rho", "area"], "torsion": ["length", "G", "rho", "J"],
            "string": ["length", "tension", "mass_per_length"], "duct": ["length", "area"],
            "bending": ["length", "E", "rho", "area", "I"]}


@st.composite
def invalid_specs(draw):
    spec, _ = draw(valid_specs(damped=True) | valid_specs(damped=False))
    spec = copy.deepcopy(spec)
    kind = spec["kind"]
    how = draw(st.sampled_from(["number", "word", "unknown key", "missing key", "negative",
                                "off the line", "container"]))
    leaves = [(p, v) for p, v in _leaves(spec)
              if p[-1] not in ("title", "wall_losses") and not isinstance(v, bool)]
    numeric = [(p, v) for p, v in leaves if isinstance(v, (int, float))
               and not (p[-1] == "at")]
    words = [(p, v) for p, v in leaves if isinstance(v, str)]
    if how == "number":
        p, _ = draw(st.sampled_from(numeric))
        bad = draw(st.sampled_from(BAD_NUMBERS))
        if p[-1] == "zeta" or (len(p) > 1 and p[-2] == "zeta"):
            bad = draw(st.sampled_from([math.nan, -0.1, 1.0, 2.0, "0.1", None]))
        _set(spec, p, bad)
    elif how == "negative":
        p, v = draw(st.sampled_from([(p, v) for p, v in numeric if p[-1] in
                                     ("length", "E", "G", "rho", "area", "I", "J", "tension",
                                      "mass_per_length", "c", "mass", "stiffness")]))
        # zero is refused for properties and absorbers, allowed for lumped elements
        required = p[0] == "segments" or (len(p) > 1 and p[-2] == "absorber")
        _set(spec, p, -abs(v) if not required or draw(st.booleans()) else 0.0)
    elif how == "word":
        p, v = draw(st.sampled_from(words))
        _set(spec, p, "x-" + draw(st.text(max_size=8)))
    elif how == "unknown key":
        tables = [spec] + spec["segments"] + [spec["ends"]] + spec.get("attachments", []) + \
            ([spec["damping"]] if "damping" in spec else [])
        table = draw(st.sampled_from(tables))
        table["zz_" + draw(st.text(alphabet="abcdefgh", max_size=6))] = 1.0
    elif how == "missing key":
        what = draw(st.sampled_from(["kind", "segments", "segment property", "attachment at",
                                     "absorber part", "zeta"]))
        if what == "segment property":
            i = draw(st.integers(0, len(spec["segments"]) - 1))
            _delete(spec, ("segments", i, draw(st.sampled_from(REQUIRED[kind]))))
        elif what == "attachment at" and spec.get("attachments"):
            del spec["attachments"][0]["at"]
        elif what == "absorber part" and any("absorber" in a for a in spec.get("attachments",
                                                                                 [])):
            a = next(a for a in spec["attachments"] if "absorber" in a)
            del a["absorber"][draw(st.sampled_from(["mass", "stiffness"]))]
        elif what == "zeta" and spec.get("damping", {}).get("model") == "modal":
            del spec["damping"]["zeta"]
        elif what == "segments":
            del spec["segments"]
        else:
            del spec["kind"]
    elif how == "off the line":
        L = sum(s["length"] for s in spec["segments"])
        if spec.get("attachments"):
            spec["attachments"][0]["at"] = draw(st.sampled_from([-0.01 * L, 1.01 * L, math.nan,
                                                                  "0"]))
        else:
            spec["attachments"] = [{"at": 1.5 * L, "mass": 1.0}] if kind != "duct" else \
                [{"at": 0.0, "mass": 1.0}]
    else:
        where = draw(st.sampled_from(["segments", "ends", "damping", "attachments", "top"]))
        if where == "top":
            spec = [spec]
        elif where == "segments":
            spec["segments"] = spec["segments"][0] if draw(st.booleans()) else []
        else:
            spec[where] = draw(st.sampled_from([3.0, "none", [1, 2]]))
    return spec


@FUZZ
@given(invalid_specs())
def test_invalid_models_raise_model_error_only(spec):
    with pytest.raises(ModelError) as excinfo:
        dl.Line.from_dict(spec)
    err = excinfo.value
    assert isinstance(err.key, str) and err.key
    assert str(err).startswith(err.key)


@FUZZ
@given(valid_specs(), st.data())
def test_invalid_requests_raise_model_error_only(case, data):
    """Random bad arguments to dl.frf on a valid line: ModelError naming the argument."""
    spec, w_ref = case
    line = dl.Line.from_dict(spec)
    L = line.length
    f = np.array([0.7, 1.3]) * w_ref / (2 * math.pi)
    good = dict(drive_at=L, response_at=[0.5 * L],
                drive={"duct": "volume_velocity"}.get(spec["kind"], "force"))
    key, bad = data.draw(st.sampled_from([
        ("freqs_hz", [math.nan]), ("freqs_hz", [-1.0]), ("freqs_hz", "100"), ("freqs_hz", []),
        ("freqs_hz", [[1.0, 2.0]]), ("freqs_hz", [True]), ("freqs_hz", [1e30]),
        ("drive_at", -0.5 * L), ("drive_at", 2.0 * L), ("drive_at", math.nan),
        ("drive_at", "0"), ("drive_at", [0.0, L]),
        ("response_at", [1.5 * L]), ("response_at", []), ("response_at", [math.nan]),
        ("response_at", "0"), ("drive", "torque"), ("drive", None), ("quantity", "speed"),
        ("quantity", 3), ("method", "fem"), ("modes", 0), ("modes", 2.5), ("modes", "4"),
        ("coupling", "partial"), ("residual", "yes")]))
    kw = dict(good)
    if key in ("modes", "coupling", "residual"):
        kw.update(method="modal", modes=4)
    args = [f]
    if key == "freqs_hz":
        args = [bad]
    else:
        kw[key] = bad
    with pytest.raises(ModelError) as excinfo:
        dl.frf(line, *args, **kw)
    assert excinfo.value.key in (key, "count")
