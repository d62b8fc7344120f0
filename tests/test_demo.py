"""The demo (``python -m dampline.demo``) runs, writes what it says, and prints
numbers that are the engine's own."""

from __future__ import annotations

import contextlib
import io
import os
import re
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest

import dampline as dl
from dampline import demo

REPO = Path(__file__).resolve().parents[1]
SVG = "{http://www.w3.org/2000/svg}"
FILES = ("horn_frf.svg", "horn_modes.svg", "horn.toml", "horn_report.html")


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    """Run main once; returns (output folder, printed text)."""
    out = tmp_path_factory.mktemp("demo")
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        assert demo.main(["--out", out]) == 0
    return out, buf.getvalue()


def test_files_are_written_and_printed(run):
    out, text = run
    for name in FILES:
        path = out / name
        assert path.is_file() and path.stat().st_size > 0
        assert str(path) in text
    assert dl.Line.from_dict(demo.HORN).title in text
    assert "Caution" in text and "fatigue" in text


def test_svgs_parse_and_hold_the_curves(run):
    out, _ = run
    frf = ET.parse(out / "horn_frf.svg").getroot()
    modes = ET.parse(out / "horn_modes.svg").getroot()
    for root in (frf, modes):
        assert root.tag == f"{SVG}svg"
        texts = [t.text for t in root.iter(f"{SVG}text")]
        assert any(t and "(" in t and ")" in t for t in texts)        # axis labels with units
        for pl in root.iter(f"{SVG}polyline"):
            xy = np.array([p.split(",") for p in pl.get("points").split()], dtype=float)
            assert np.isfinite(xy).all()
    assert len(list(frf.iter(f"{SVG}polyline"))) == 2                 # input and tip
    assert len(list(modes.iter(f"{SVG}polyline"))) == 4                # four mode shapes
    assert len(list(modes.iter(f"{SVG}polygon"))) == 1                 # the horn outline


def test_saved_model_is_the_embedded_one(run):
    out, _ = run
    assert dl.load(out / "horn.toml") == dl.Line.from_dict(demo.HORN)


def test_printed_natural_frequencies_are_the_engines(run):
    _, text = run
    printed = [float(v) for v in re.findall(r"mode \d+:\s+([0-9.]+) Hz", text)]
    expected = dl.natural_frequencies(dl.Line.from_dict(demo.HORN), count=6)
    assert len(printed) == 6
    # printed with two decimals
    np.testing.assert_allclose(printed, expected, rtol=0, atol=0.005)
    assert printed[0] == expected[0]


def test_printed_peaks_sit_on_the_natural_frequencies(run):
    """A uniform loss factor eta: each receptance peak is at an undamped natural
    frequency and its half-power bandwidth is eta f_n, so Q = 1/eta (Ewins,
    *Modal Testing*, 2nd ed. 2000, sec. 2.3). The demo reads both off a 30 Hz
    grid around peaks about 40-90 Hz wide, hence one grid step and 5 %."""
    _, text = run
    rows = re.findall(r"^\s+([0-9.]+)\s+([0-9.e+-]+)\s+([0-9.]+)\s+([0-9]+)\s+([0-9.]+)$",
                      text, flags=re.M)
    line = dl.Line.from_dict(demo.HORN)
    fn = dl.natural_frequencies(line, count=4)[1:]                     # elastic, < 60 kHz
    assert len(rows) == 2 * len(fn)                                    # input and tip tables
    step = (60e3 - 100.0) / 1999
    eta = line.damping.eta
    for i, (f, _mag, bw, q, _gain) in enumerate(rows):
        assert abs(float(f) - fn[i % 3]) < step
        np.testing.assert_allclose(float(bw), eta * fn[i % 3], rtol=0.05)
        np.testing.assert_allclose(float(q), 1.0 / eta, rtol=0.05)


def test_default_folder(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert demo.main([]) == 0
    capsys.readouterr()
    for name in FILES:
        assert (tmp_path / "dampline-demo" / name).is_file()


def test_runs_as_a_module(tmp_path):
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    run = subprocess.run([sys.executable, "-m", "dampline.demo", "--out", str(tmp_path)],
                         cwd=tmp_path, env=env, capture_output=True, text=True, timeout=300)
    assert run.returncode == 0, run.stderr
    assert "Natural frequencies" in run.stdout
    assert sorted(os.listdir(tmp_path)) == sorted(FILES)


def test_report_page_embeds_both_plots_and_the_caution(tmp_path):
    demo.main(["--out", str(tmp_path)])
    page = (tmp_path / "horn_report.html").read_text(encoding="utf-8")
    assert page.count("<svg") == 2
    assert "verify resonances" in page and "licensed engineering practice" in page
