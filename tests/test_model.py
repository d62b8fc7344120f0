"""The model contract: dict and TOML round trips, atomic saves, and one
:class:`dampline.ModelError` (a ValueError naming key, value and unit) for
every bad model value or solver request (DESIGN.md, "The public contract").

No physics here, so no published sources and no tolerances: every check is
an exact equality or an exact message fragment.
"""

from __future__ import annotations

import copy
import dataclasses
import importlib
import math
import os
import subprocess
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest

import dampline as dl
from dampline import ModelError

io_module = importlib.import_module("dampline.model.io")

REPO = Path(__file__).resolve().parents[1]

# ---------------------------------------------------------------- the four kinds
# Each case: (spec as a user writes it, the normalised dict to_dict must give).

AXIAL = {
    "title": "Stepped bar",
    "kind": "axial",
    "segments": [
        {"length": 0.1, "E": 2.1e11, "rho": 7850, "area": 2.0e-4},
        {"length": 0.05, "E": 2.1e11, "rho": 7850.0, "area": 1.0e-4, "eta": 0.001},
    ],
    "ends": {"left": "free", "right": {"spring": 1e6}},
    "attachments": [
        {"at": 0.02, "mass": 0.05},
        {"at": 0.04, "spring": 2.0e5},
        {"at": 0.06, "dashpot": 3.0},
        {"at": 0.15, "absorber": {"mass": 0.01, "stiffness": 4.0e4}},
    ],
    "damping": {"model": "loss_factor", "eta": 0.002},
}
AXIAL_NORMALISED = {
    "title": "Stepped bar",
    "kind": "axial",
    "segments": [
        {"length": 0.1, "E": 2.1e11, "rho": 7850.0, "area": 2.0e-4},
        {"length": 0.05, "E": 2.1e11, "rho": 7850.0, "area": 1.0e-4, "eta": 0.001},
    ],
    "ends": {"left": "free", "right": {"spring": 1e6}},
    "attachments": [
        {"at": 0.02, "mass": 0.05},
        {"at": 0.04, "spring": 2.0e5},
        {"at": 0.06, "dashpot": 3.0},
        # at the right end: snapped to the line's length, 0.1 + 0.05 in floating point
        {"at": 0.1 + 0.05, "absorber": {"mass": 0.01, "stiffness": 4.0e4, "damping": 0.0}},
    ],
    "damping": {"model": "loss_factor", "eta": 0.002},
}

TORSION = {
    "kind": "torsion",
    "segments": [{"length": 0.8, "G": 8.0e10, "rho": 7850.0, "J": 1.0e-7}],
    "ends": {"left": "fixed", "right": {"mass": 0.02, "dashpot": 1.5}},
    "attachments": [{"at": 0.4, "mass": 0.01, "spring": 50.0, "dashpot": 0.1}],
    "damping": {"model": "rayleigh", "alpha": 2.0},
}
TORSION_NORMALISED = {
    "kind": "torsion",
    "segments": [{"length": 0.8, "G": 8.0e10, "rho": 7850.0, "J": 1.0e-7}],
    "ends": {"left": "fixed", "right": {"mass": 0.02, "dashpot": 1.5}},
    "attachments": [{"at": 0.4, "mass": 0.01, "spring": 50.0, "dashpot": 0.1}],
    "damping": {"model": "rayleigh", "alpha": 2.0, "beta": 0.0},
}

STRING = {
    "kind": "string",
    "segments": [{"length": 0.65, "tension": 70, "mass_per_length": 0.0012}],
    "attachments": [{"at": 0.2, "absorber": {"mass": 0.002, "stiffness": 300.0,
                                             "damping": 0.01}}],
    "damping": {"model": "modal", "zeta": [0.01, 0.02]},
}
STRING_NORMALISED = {
    "kind": "string",
    "segments": [{"length": 0.65, "tension": 70.0, "mass_per_length": 0.0012}],
    "ends": {"left": "fixed", "right": "fixed"},
    "attachments": [{"at": 0.2, "absorber": {"mass": 0.002, "stiffness": 300.0,
                                             "damping": 0.01}}],
    "damping": {"model": "modal", "zeta": [0.01, 0.02]},
}

DUCT = {
    "title": "Exhaust pipe",
    "kind": "duct",
    "segments": [{"length": 1.2, "area": 2.0e-3},
                 {"length": 0.3, "area": 8.0e-3, "rho": 0.6, "c": 480.0}],
    "ends": {"left": "open", "right": "anechoic"},
    "damping": {"wall_losses": True},
}
DUCT_NORMALISED = {
    "title": "Exhaust pipe",
    "kind": "duct",
    "segments": [{"length": 1.2, "rho": dl.model.AIR["rho"], "area": 2.0e-3,
                  "c": dl.model.AIR["c"]},
                 {"length": 0.3, "rho": 0.6, "area": 8.0e-3, "c": 480.0}],
    "ends": {"left": "open", "right": "anechoic"},
    "damping": {"model": "none", "wall_losses": True},
}

CASES = {
    "axial": (AXIAL, AXIAL_NORMALISED),
    "torsion": (TORSION, TORSION_NORMALISED),
    "string": (STRING, STRING_NORMALISED),
    "duct": (DUCT, DUCT_NORMALISED),
}

#: a plain bar the error tests start from (L = 0.1 m)
BAR = {"kind": "axial",
       "segments": [{"length": 0.1, "E": 2.0e11, "rho": 7800.0, "area": 1.0e-4}]}
PIPE = {"kind": "duct", "segments": [{"length": 1.0, "area": 1.0e-3}]}


def edited(base: dict, **changes) -> dict:
    """A deep copy of ``base`` with top-level keys replaced (None deletes)."""
    spec = copy.deepcopy(base)
    for k, v in changes.items():
        if v is None:
            spec.pop(k, None)
        else:
            spec[k] = v
    return spec


def bar_segment(**changes) -> dict:
    seg = dict(BAR["segments"][0])
    seg.update(changes)
    return seg


def assert_names(excinfo, key: str, value: str, unit: str) -> None:
    """The message names the key, the value (as repr) and the unit."""
    err = excinfo.value
    msg = str(err)
    assert isinstance(err, ValueError)
    assert key in msg, msg
    assert value in msg, msg
    assert err.key == key
    assert err.unit == unit
    if unit:
        assert f" {unit}" in msg, msg


# ================================================================ round trips
@pytest.mark.parametrize("kind", list(CASES))
def test_dict_round_trip_gives_normalised_spec(kind):
    spec, normalised = CASES[kind]
    before = copy.deepcopy(spec)
    line = dl.Line.from_dict(spec)
    assert line.to_dict() == normalised
    assert spec == before                     # the user's dict is not touched
    # normalised specs are fixed points
    assert dl.Line.from_dict(normalised).to_dict() == normalised
    assert dl.Line.from_dict(normalised) == line


def test_to_dict_gives_floats_for_integers():
    d = dl.Line.from_dict(AXIAL).to_dict()
    assert type(d["segments"][0]["rho"]) is float
    d = dl.Line.from_dict(STRING).to_dict()
    assert type(d["segments"][0]["tension"]) is float


@pytest.mark.parametrize("kind, left, right", [
    ("axial", "free", "free"), ("torsion", "free", "free"),
    ("string", "fixed", "fixed"), ("duct", "closed", "closed")])
def test_default_ends_and_damping_are_filled(kind, left, right):
    spec = edited(CASES[kind][0], ends=None, damping=None, attachments=None)
    for seg in spec["segments"]:
        seg.pop("eta", None)
    d = dl.Line.from_dict(spec).to_dict()
    assert d["ends"] == {"left": left, "right": right}
    assert d["damping"] == {"model": "none"}
    assert "attachments" not in d


def test_segment_eta_without_damping_table_means_loss_factor():
    spec = edited(BAR, segments=[bar_segment(eta=0.003)])
    d = dl.Line.from_dict(spec).to_dict()
    assert d["damping"] == {"model": "loss_factor", "eta": 0.0}
    assert d["segments"][0]["eta"] == 0.003


def test_end_table_keeps_only_given_keys_and_direct_tables_show_all():
    line = dl.Line.from_dict(edited(BAR, ends={"left": {"mass": 0.1}, "right": "fixed"}))
    assert line.to_dict()["ends"] == {"left": {"mass": 0.1}, "right": "fixed"}
    assert line.ends[0] == dl.EndTable(mass=0.1)
    direct = line.replace(ends=(dl.EndTable(spring=5.0), "free"))
    assert direct.to_dict()["ends"]["left"] == {"spring": 5.0, "mass": 0.0, "dashpot": 0.0}


@pytest.mark.parametrize("kind", list(CASES))
def test_save_load_round_trip(kind, tmp_path):
    line = dl.Line.from_dict(CASES[kind][0])
    path = tmp_path / f"{kind}.toml"
    assert Path(dl.save(line, path)) == path
    back = dl.load(path)
    assert back == line
    assert back.to_dict() == CASES[kind][1]
    assert os.listdir(tmp_path) == [path.name]     # no temporary file left behind


@pytest.mark.parametrize("kind", list(CASES))
def test_dumps_is_valid_toml_of_the_normalised_dict(kind):
    line = dl.Line.from_dict(CASES[kind][0])
    assert tomllib.loads(dl.dumps(line)) == CASES[kind][1]


def test_dumps_escapes_awkward_titles():
    title = 'quote " backslash \\ newline \n tab \t return \r bell \x07 del \x7f \u00e9'
    line = dl.Line.from_dict(edited(BAR, title=title))
    assert tomllib.loads(dl.dumps(line))["title"] == title


def test_save_overwrites_an_existing_file(tmp_path):
    path = tmp_path / "m.toml"
    dl.save(dl.Line.from_dict(BAR), path)
    dl.save(dl.Line.from_dict(AXIAL), path)
    assert dl.load(path) == dl.Line.from_dict(AXIAL)
    assert os.listdir(tmp_path) == ["m.toml"]


# ================================================================ atomic save
@pytest.fixture
def saved(tmp_path):
    """A folder holding one saved model; returns (path, its bytes)."""
    path = tmp_path / "model.toml"
    dl.save(dl.Line.from_dict(BAR), path)
    return path, path.read_bytes()


def test_save_failing_at_rename_leaves_file_and_folder_unchanged(saved, monkeypatch):
    path, original = saved

    def broken_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(io_module.os, "replace", broken_replace)
    with pytest.raises(OSError):
        dl.save(dl.Line.from_dict(AXIAL), path)
    assert path.read_bytes() == original
    assert os.listdir(path.parent) == [path.name]


def test_save_failing_mid_write_leaves_file_and_folder_unchanged(saved, monkeypatch):
    path, original = saved
    real_fdopen = io_module.os.fdopen

    class HalfWriter:
        """Writes half the text, then fails as a full disk would."""

        def __init__(self, fh):
            self.fh = fh

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            self.fh.close()
            return False

        def write(self, text):
            self.fh.write(text[: len(text) // 2])
            self.fh.flush()
            raise OSError(28, "No space left on device")

    monkeypatch.setattr(io_module.os, "fdopen",
                        lambda fd, *a, **k: HalfWriter(real_fdopen(fd, *a, **k)))
    with pytest.raises(OSError):
        dl.save(dl.Line.from_dict(AXIAL), path)
    assert path.read_bytes() == original
    assert os.listdir(path.parent) == [path.name]


def test_save_rejects_what_is_not_a_line(tmp_path):
    with pytest.raises(ModelError):
        dl.save(BAR, tmp_path / "x.toml")
    assert os.listdir(tmp_path) == []


@pytest.mark.skipif(os.name != "posix", reason="POSIX permission bits")
def test_saved_file_has_ordinary_permissions(tmp_path):
    """A new model file gets 0666 less the umask (not a private 0600 temp file's
    mode); an overwritten file keeps the permissions it had."""
    umask = os.umask(0)
    os.umask(umask)
    path = tmp_path / "shared.toml"
    dl.save(dl.Line.from_dict(BAR), path)
    assert path.stat().st_mode & 0o777 == 0o666 & ~umask
    path.chmod(0o640)
    dl.save(dl.Line.from_dict(AXIAL), path)
    assert path.stat().st_mode & 0o777 == 0o640


# ================================================================ bad models
def test_model_error_is_a_value_error():
    assert issubclass(ModelError, ValueError)
    err = ModelError("segments[0].length", -1.0, "m", "must be positive")
    assert str(err) == "segments[0].length = -1.0 m: must be positive"


BAD_MODELS = {
    # id: (spec, key, value repr, unit, extra fragment of the message)
    "unknown top-level key": (edited(BAR, colour="red"), "model.colour", "'red'", "", "unknown"),
    "top-level case slip": (edited(BAR, Title="x"), "model.Title", "'x'", "",
                            "did you mean 'title'"),
    "unknown segment key": (edited(BAR, segments=[bar_segment(width=0.01)]),
                            "segments[0].width", "0.01", "", "unknown key"),
    "segment case slip e/E": (edited(BAR, segments=[{k if k != "E" else "e": v for k, v in
                                                     bar_segment().items()}]),
                              "segments[0].e", "200000000000.0", "Pa", "did you mean 'E'"),
    "segment case slip RHO": (edited(BAR, segments=[{k if k != "rho" else "RHO": v for k, v in
                                                     bar_segment().items()}]),
                              "segments[0].RHO", "7800.0", "kg/m^3", "did you mean 'rho'"),
    "property of another kind": (edited(BAR, segments=[bar_segment(G=8e10)]),
                                 "segments[0].G", "80000000000.0", "Pa", "unknown key"),
    "missing property": (edited(BAR, segments=[{"length": 0.1, "E": 2e11, "rho": 7800.0}]),
                         "segments[0].area", "None", "m^2", "required"),
    "unknown kind": (edited(BAR, kind="beam"), "kind", "'beam'", "", "unknown kind"),
    "kind not a word": (edited(BAR, kind=3), "kind", "3", "", "word"),
    "missing kind": (edited(BAR, kind=None), "kind", "None", "", "required"),
    "bending without I": (edited(BAR, kind="bending"), "segments[0].I", "None", "m^4",
                          "required"),
    "closed on axial": (edited(BAR, ends={"left": "closed"}), "ends.left", "'closed'", "",
                        "not an end of kind 'axial'"),
    "fixed on duct": (edited(PIPE, ends={"right": "fixed"}), "ends.right", "'fixed'", "",
                      "not a duct end"),
    "end table on duct": (edited(PIPE, ends={"left": {"spring": 1.0}}), "ends.left",
                          "{'spring': 1.0}", "", "word"),
    "unknown end side": (edited(BAR, ends={"middle": "free"}), "ends.middle", "'free'", "",
                         "unknown"),
    "end table unknown key": (edited(BAR, ends={"left": {"sprung": 1.0}}), "ends.left.sprung",
                              "1.0", "", "unknown"),
    "empty end table": (edited(BAR, ends={"left": {}}), "ends.left", "{}", "", "needs"),
    "negative end spring": (edited(BAR, ends={"right": {"spring": -1.0}}), "ends.right.spring",
                            "-1.0", "N/m", "negative"),
    "nan end mass": (edited(BAR, ends={"right": {"mass": math.nan}}), "ends.right.mass", "nan",
                     "kg", "finite"),
    "torsion end unit": (edited(TORSION, ends={"right": {"spring": -2.0}}), "ends.right.spring",
                         "-2.0", "N m/rad", "negative"),
    "negative segment eta": (edited(BAR, segments=[bar_segment(eta=-0.01)],
                                    damping={"model": "loss_factor"}),
                             "segments[0].eta", "-0.01", "(loss factor)", "negative"),
    "negative damping eta": (edited(BAR, damping={"model": "loss_factor", "eta": -0.002}),
                             "damping.eta", "-0.002", "(loss factor)", "negative"),
    "attachment past the end": (edited(BAR, attachments=[{"at": 0.12, "mass": 1.0}]),
                                "attachments[0].at", "0.12", "m", "off the line"),
    "attachment before the start": (edited(BAR, attachments=[{"at": -0.01, "mass": 1.0}]),
                                    "attachments[0].at", "-0.01", "m", "off the line"),
    "attachment without at": (edited(BAR, attachments=[{"mass": 1.0}]), "attachments[0].at",
                              "None", "m", "required"),
    "attachment at nan": (edited(BAR, attachments=[{"at": math.nan, "mass": 1.0}]),
                          "attachments[0].at", "nan", "m", "finite"),
    "attachment with no element": (edited(BAR, attachments=[{"at": 0.05}]), "attachments[0]",
                                   "{'at': 0.05}", "", "needs mass, spring, dashpot or absorber"),
    "negative attachment mass": (edited(BAR, attachments=[{"at": 0.05, "mass": -1.0}]),
                                 "attachments[0].mass", "-1.0", "kg", "negative"),
    "torsion attachment unit": (edited(TORSION, attachments=[{"at": 0.1, "mass": -1.0}]),
                                "attachments[0].mass", "-1.0", "kg m^2", "negative"),
    "attachment on a duct": (edited(PIPE, attachments=[{"at": 0.5, "mass": 1.0}]),
                             "attachments[0]", "'mass': 1.0", "", "duct"),
    "absorber missing stiffness": (edited(BAR, attachments=[{"at": 0.05,
                                                             "absorber": {"mass": 0.1}}]),
                                   "attachments[0].absorber.stiffness", "None", "N/m",
                                   "required"),
    "absorber zero mass": (edited(BAR, attachments=[{"at": 0.05, "absorber":
                                                     {"mass": 0.0, "stiffness": 1e3}}]),
                           "attachments[0].absorber.mass", "0.0", "kg", "positive"),
    "absorber unknown key": (edited(BAR, attachments=[{"at": 0.05, "absorber":
                                                       {"mass": 0.1, "k": 1e3}}]),
                             "attachments[0].absorber.k", "1000.0", "", "unknown"),
    "empty segment list": (edited(BAR, segments=[]), "segments", "[]", "", "at least one"),
    "missing segments": (edited(BAR, segments=None), "segments", "None", "", "at least one"),
    "segments not a list": (edited(BAR, segments={"length": 1.0}), "segments", "{'length'", "",
                            "list"),
    "segment eta under rayleigh": (edited(BAR, segments=[bar_segment(eta=0.01)],
                                          damping={"model": "rayleigh", "beta": 1e-6}),
                                   "segments[0].eta", "0.01", "(loss factor)", "'rayleigh'"),
    "segment eta under none": (edited(BAR, segments=[bar_segment(eta=0.01)],
                                      damping={"model": "none"}),
                               "segments[0].eta", "0.01", "(loss factor)", "'loss_factor'"),
    "zeta under loss_factor": (edited(BAR, damping={"model": "loss_factor", "zeta": 0.01}),
                               "damping.zeta", "0.01", "(damping ratio)", "'modal'"),
    "beta under modal": (edited(BAR, damping={"model": "modal", "zeta": 0.01, "beta": 1e-5}),
                         "damping.beta", "1e-05", "s", "'rayleigh'"),
    "negative alpha": (edited(BAR, damping={"model": "rayleigh", "alpha": -1.0}),
                       "damping.alpha", "-1.0", "1/s", "negative"),
    "zeta of 1": (edited(BAR, damping={"model": "modal", "zeta": 1.0}), "damping.zeta", "1.0",
                  "(damping ratio)", "below 1"),
    "zeta above 1": (edited(BAR, damping={"model": "modal", "zeta": 1.5}), "damping.zeta",
                     "1.5", "(damping ratio)", "below 1"),
    "zeta list entry of 1": (edited(BAR, damping={"model": "modal", "zeta": [0.01, 1.0]}),
                             "damping.zeta[1]", "1.0", "(damping ratio)", "below 1"),
    "negative zeta": (edited(BAR, damping={"model": "modal", "zeta": -0.01}), "damping.zeta",
                      "-0.01", "(damping ratio)", "negative"),
    "empty zeta list": (edited(BAR, damping={"model": "modal", "zeta": []}), "damping.zeta",
                        "[]", "(damping ratio)", "empty"),
    "modal without zeta": (edited(BAR, damping={"model": "modal"}), "damping.zeta", "None",
                           "(damping ratio)", "needs zeta"),
    "unknown damping model": (edited(BAR, damping={"model": "viscous"}), "damping.model",
                              "'viscous'", "", "unknown damping model"),
    "unknown damping key": (edited(BAR, damping={"model": "none", "eta_": 0.1}),
                            "damping.eta_", "0.1", "", "unknown"),
    "wall losses on axial": (edited(BAR, damping={"wall_losses": True}), "damping.wall_losses",
                             "True", "", "ducts only"),
    "wall losses not a bool": (edited(PIPE, damping={"wall_losses": "yes"}),
                               "damping.wall_losses", "'yes'", "", "true or false"),
    "title not text": (edited(BAR, title=7), "title", "7", "", "text"),
    "model not a dict": ([("kind", "axial")], "model", "[('kind', 'axial')]", "", "table"),
}


@pytest.mark.parametrize("case", list(BAD_MODELS))
def test_bad_model_raises_model_error_naming_key_value_unit(case):
    spec, key, value, unit, fragment = BAD_MODELS[case]
    with pytest.raises(ModelError) as excinfo:
        dl.Line.from_dict(spec)
    assert_names(excinfo, key, value, unit)
    assert fragment in str(excinfo.value)


# non-positive, non-finite and non-numeric values of every property, every kind
PROPERTY_CASES = [
    ("axial", BAR, "length", "m"), ("axial", BAR, "E", "Pa"),
    ("axial", BAR, "rho", "kg/m^3"), ("axial", BAR, "area", "m^2"),
    ("torsion", TORSION, "G", "Pa"), ("torsion", TORSION, "J", "m^4"),
    ("string", STRING, "tension", "N"), ("string", STRING, "mass_per_length", "kg/m"),
    ("duct", PIPE, "area", "m^2"), ("duct", PIPE, "c", "m/s"), ("duct", PIPE, "rho", "kg/m^3"),
]
BAD_NUMBERS = [
    (0.0, "0.0", "positive"), (-1.0, "-1.0", "positive"), (0, "0", "positive"),
    (math.nan, "nan", "finite"), (math.inf, "inf", "finite"), (-math.inf, "-inf", "finite"),
    ("0.1", "'0.1'", "real number"), (True, "True", "real number"),
    (False, "False", "real number"), (None, "None", "real number"),
    ([1.0], "[1.0]", "real number"), (1 + 2j, "(1+2j)", "real number"),
]


@pytest.mark.parametrize("kind, base, key, unit", PROPERTY_CASES,
                         ids=[f"{c[0]}-{c[2]}" for c in PROPERTY_CASES])
@pytest.mark.parametrize("bad, shown, fragment", BAD_NUMBERS,
                         ids=[repr(b[0]) for b in BAD_NUMBERS])
def test_bad_property_value(kind, base, key, unit, bad, shown, fragment):
    spec = copy.deepcopy(base)
    spec["segments"][0][key] = bad
    with pytest.raises(ModelError) as excinfo:
        dl.Line.from_dict(spec)
    assert_names(excinfo, f"segments[0].{key}", shown, unit)
    assert fragment in str(excinfo.value)


def test_numpy_scalars_are_accepted_as_numbers():
    spec = edited(BAR, segments=[bar_segment(length=np.float64(0.1), rho=np.int64(7800))])
    assert dl.Line.from_dict(spec) == dl.Line.from_dict(BAR)


def test_direct_construction_is_validated_too():
    seg = dl.Segment(length=-0.1, E=2e11, rho=7800.0, area=1e-4)
    with pytest.raises(ModelError) as excinfo:
        dl.Line(kind="axial", segments=(seg,))
    assert_names(excinfo, "segments[0].length", "-0.1", "m")
    with pytest.raises(ModelError) as excinfo:
        dl.Line(kind="bending", segments=(dl.Segment(length=0.1, E=2e11, rho=7800.0, area=1e-4),))
    assert_names(excinfo, "segments[0].I", "None", "m^4")
    with pytest.raises(ModelError) as excinfo:
        dl.Line(kind="axial", segments=())
    assert excinfo.value.key == "segments"


# ================================================================ end snapping
@pytest.mark.parametrize("at, expected", [
    (0.1 * 1e-10, 0.0), (-0.1 * 1e-10, 0.0), (0.0, 0.0),
    (0.1 * (1 - 1e-10), 0.1), (0.1 * (1 + 1e-10), 0.1), (0.1, 0.1),
    (0.1 * 2e-9, 0.1 * 2e-9), (0.1 * (1 - 2e-9), 0.1 * (1 - 2e-9))])
def test_attachment_positions_near_an_end_snap_to_it(at, expected):
    line = dl.Line.from_dict(edited(BAR, attachments=[{"at": at, "mass": 0.01}]))
    assert line.attachments[0].at == expected
    assert line.to_dict()["attachments"][0]["at"] == expected


def test_attachment_just_beyond_the_snap_distance_is_off_the_line():
    for at in (-0.1 * 2e-9, 0.1 * (1 + 2e-9)):
        with pytest.raises(ModelError) as excinfo:
            dl.Line.from_dict(edited(BAR, attachments=[{"at": at, "mass": 0.01}]))
        assert_names(excinfo, "attachments[0].at", repr(at), "m")


# ================================================================ frozen, replace
def test_model_objects_are_frozen():
    line = dl.Line.from_dict(AXIAL)
    targets = [(line, "title"), (line, "kind"), (line.segments[0], "length"),
               (line.ends[1], "spring"), (line.attachments[0], "at"),
               (line.attachments[3].absorber, "mass"), (line.damping, "eta")]
    for obj, name in targets:
        with pytest.raises(dataclasses.FrozenInstanceError):
            setattr(obj, name, 1.0)
    assert isinstance(line.segments, tuple) and isinstance(line.attachments, tuple)


def test_replace_returns_a_validated_copy():
    line = dl.Line.from_dict(AXIAL)
    renamed = line.replace(title="Renamed")
    assert renamed is not line
    assert renamed.title == "Renamed" and line.title == "Stepped bar"
    assert renamed.segments == line.segments and renamed.attachments == line.attachments
    undamped = line.replace(damping=dl.Damping(model="loss_factor", eta=0.0))
    assert undamped.to_dict()["damping"] == {"model": "loss_factor", "eta": 0.0}
    # invalid copies are refused, and the original is unchanged
    with pytest.raises(ModelError) as excinfo:
        line.replace(segments=())
    assert excinfo.value.key == "segments"
    with pytest.raises(ModelError) as excinfo:
        line.replace(damping=dl.Damping(model="rayleigh", alpha=1.0))
    assert excinfo.value.key == "segments[1].eta"          # that segment has its own eta
    with pytest.raises(ModelError) as excinfo:
        line.replace(attachments=(dl.Attachment(at=1.0, mass=0.1),))
    assert_names(excinfo, "attachments[0].at", "1.0", "m")
    assert line.to_dict() == AXIAL_NORMALISED


# ================================================================ files
def test_malformed_toml_names_the_file(tmp_path):
    path = tmp_path / "broken.toml"
    path.write_text('kind = "axial"\n[[segments]\nlength = 0.1\n', encoding="utf-8")
    with pytest.raises(ModelError) as excinfo:
        dl.load(path)
    assert str(path) in str(excinfo.value)
    assert "malformed TOML" in str(excinfo.value)


def test_missing_file_names_the_file(tmp_path):
    path = tmp_path / "absent.toml"
    with pytest.raises(ModelError) as excinfo:
        dl.load(path)
    assert str(path) in str(excinfo.value)
    assert excinfo.value.key == "path"


def test_bad_value_in_a_file_names_key_value_unit_and_file(tmp_path):
    path = tmp_path / "bad.toml"
    text = dl.dumps(dl.Line.from_dict(BAR)).replace("length = 0.1", "length = -0.1")
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ModelError) as excinfo:
        dl.load(path)
    assert_names(excinfo, "segments[0].length", "-0.1", "m")
    assert str(path) in str(excinfo.value)


def test_non_utf8_file(tmp_path):
    path = tmp_path / "latin.toml"
    path.write_bytes('title = "B\u00e9ton"\n'.encode("latin-1"))
    with pytest.raises(ModelError) as excinfo:
        dl.load(path)
    assert str(path) in str(excinfo.value)


# ================================================================ solver requests
DAMPED_BAR = dl.Line.from_dict(edited(BAR, damping={"model": "loss_factor", "eta": 0.01}))
DAMPED_PIPE = dl.Line.from_dict(edited(PIPE, damping={"wall_losses": True}))
MODAL_BAR = dl.Line.from_dict(edited(BAR, damping={"model": "modal", "zeta": 0.02}))
F = [1000.0, 2000.0]

BAD_REQUESTS = {
    # id: (call, key, value repr, unit, fragment)
    "nan frequency": (lambda: dl.frf(DAMPED_BAR, [100.0, math.nan]), "freqs_hz", "nan", "Hz",
                      "finite"),
    "inf frequency": (lambda: dl.frf(DAMPED_BAR, [math.inf]), "freqs_hz", "inf", "Hz", "finite"),
    "negative frequency": (lambda: dl.frf(DAMPED_BAR, [100.0, -5.0]), "freqs_hz", "-5.0", "Hz",
                           "positive"),
    "zero frequency": (lambda: dl.frf(DAMPED_BAR, [0.0]), "freqs_hz", "0.0", "Hz", "positive"),
    "empty frequencies": (lambda: dl.frf(DAMPED_BAR, []), "freqs_hz", "[]", "Hz", "empty"),
    "text frequencies": (lambda: dl.frf(DAMPED_BAR, ["a"]), "freqs_hz", "['a']", "Hz",
                         "numbers"),
    "2-d frequencies": (lambda: dl.frf(DAMPED_BAR, [[1.0, 2.0]]), "freqs_hz", "(1, 2)", "Hz",
                        "one-dimensional"),
    "drive past the end": (lambda: dl.frf(DAMPED_BAR, F, drive_at=0.2), "drive_at", "0.2", "m",
                           "off the line"),
    "drive before the start": (lambda: dl.frf(DAMPED_BAR, F, drive_at=-0.01), "drive_at",
                               "-0.01", "m", "off the line"),
    "drive at nan": (lambda: dl.frf(DAMPED_BAR, F, drive_at=math.nan), "drive_at", "nan", "m",
                     "off the line"),
    "response off the line": (lambda: dl.frf(DAMPED_BAR, F, response_at=[0.0, 0.3]),
                              "response_at", "0.3", "m", "off the line"),
    "no response points": (lambda: dl.frf(DAMPED_BAR, F, response_at=[]), "response_at", "[]",
                           "m", "non-empty"),
    "velocity drive inside": (lambda: dl.frf(DAMPED_BAR, F, drive_at=0.05, drive="velocity"),
                              "drive_at", "0.05", "m", "at an end"),
    "moment on axial": (lambda: dl.frf(DAMPED_BAR, F, drive="moment"), "drive", "'moment'", "",
                        "bending"),
    "unknown drive": (lambda: dl.frf(DAMPED_BAR, F, drive="torque"), "drive", "'torque'", "",
                      "force"),
    "force on a duct": (lambda: dl.frf(DAMPED_PIPE, F, drive="force"), "drive", "'force'", "",
                        "volume_velocity"),
    "pressure on axial": (lambda: dl.frf(DAMPED_BAR, F, quantity="pressure"), "quantity",
                          "'pressure'", "", "receptance"),
    "receptance on a duct": (lambda: dl.frf(DAMPED_PIPE, F, drive="volume_velocity",
                                            quantity="receptance"),
                             "quantity", "'receptance'", "", "pressure"),
    "unknown method": (lambda: dl.frf(DAMPED_BAR, F, method="fem"), "method", "'fem'", "",
                       "exact"),
    "exact with modal damping": (lambda: dl.frf(MODAL_BAR, F, method="exact"), "damping.model",
                                 "'modal'", "", "modal"),
    "unknown option": (lambda: dl.frf(DAMPED_BAR, F, modes=4, method="exact"), "modes", "4", "",
                       "unknown option"),
    "not a line": (lambda: dl.frf(BAR, F), "line", "'dict'", "", "Line"),
    "count 0": (lambda: dl.natural_frequencies(DAMPED_BAR, count=0), "count", "0", "",
                "at least 1"),
    "count -1": (lambda: dl.natural_frequencies(DAMPED_BAR, count=-1), "count", "-1", "",
                 "at least 1"),
    "count 2.5": (lambda: dl.natural_frequencies(DAMPED_BAR, count=2.5), "count", "2.5", "",
                  "whole number"),
    "count True": (lambda: dl.natural_frequencies(DAMPED_BAR, count=True), "count", "True", "",
                   "whole number"),
    "count '3'": (lambda: dl.natural_frequencies(DAMPED_BAR, count="3"), "count", "'3'", "",
                  "whole number"),
    "modes count 0": (lambda: dl.modes(DAMPED_BAR, count=0), "count", "0", "", "at least 1"),
    "modes count 2.5": (lambda: dl.modes(DAMPED_BAR, count=2.5), "count", "2.5", "",
                        "whole number"),
    "natural frequencies of a dict": (lambda: dl.natural_frequencies(BAR), "line", "'dict'",
                                      "", "Line"),
}


@pytest.mark.parametrize("case", list(BAD_REQUESTS))
def test_bad_request_raises_model_error_naming_key_value_unit(case):
    call, key, value, unit, fragment = BAD_REQUESTS[case]
    with pytest.raises(ModelError) as excinfo:
        call()
    assert_names(excinfo, key, value, unit)
    assert fragment in str(excinfo.value)


def test_exact_with_modal_damping_points_to_modal():
    with pytest.raises(ModelError, match="modal") as excinfo:
        dl.frf(MODAL_BAR, F, method="exact")
    assert "method='modal'" in str(excinfo.value)


def test_good_requests_pass():
    """The error tests above are not vacuous: the same lines take good requests."""
    H = dl.frf(DAMPED_BAR, F, drive_at=0.1, response_at=[0.0, 0.1 * (1 + 1e-12)])
    assert np.asarray(H).shape == (2, 2)
    H = dl.frf(DAMPED_BAR, F, drive_at=0.1 * (1 - 1e-12), drive="velocity")
    assert H.drive_at == 0.1
    H = dl.frf(DAMPED_PIPE, F, drive="volume_velocity")
    assert H.quantity == "pressure"
    assert dl.natural_frequencies(DAMPED_BAR, count=np.int64(2)).shape == (2,)


# ================================================================ engine imports
def test_import_does_not_load_widgets():
    code = ("import dampline, sys; "
            "assert 'ipywidgets' not in sys.modules and 'bqplot' not in sys.modules, "
            "sorted(m for m in sys.modules if m in ('ipywidgets', 'bqplot'))")
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    run = subprocess.run([sys.executable, "-c", code], cwd=REPO, env=env,
                         capture_output=True, text=True, timeout=120)
    assert run.returncode == 0, run.stderr

