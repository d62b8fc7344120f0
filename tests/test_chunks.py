"""Long requests are solved in frequency chunks: the chunked answer must equal the one-piece
answer and the closed form, for the exact and the modal method."""

from __future__ import annotations

import numpy as np
import pytest

import dampline as dl
from dampline.solve import exact as exact_mod

BAR = {"kind": "axial", "segments": [{"length": 0.8, "E": 2.1e11, "rho": 7850.0, "area": 3e-4}],
       "ends": {"left": "free", "right": "free"}, "damping": {"model": "loss_factor", "eta": 0.01}}
BEAM = {"kind": "bending",
        "segments": [{"length": 0.4, "E": 2.1e11, "rho": 7850.0, "area": 1e-4, "I": 8.3e-10, "eta": 0.03},
                     {"length": 0.3, "E": 2.1e11, "rho": 7850.0, "area": 6e-5, "I": 3e-10}],
        "ends": {"left": "clamped", "right": "free"}, "attachments": [{"at": 0.7, "mass": 0.05}],
        "damping": {"model": "loss_factor", "eta": 0.002}}


def test_chunked_bar_matches_closed_form(monkeypatch):
    """Damped free-free bar driven at x = 0: u(0)/F = -cot(kL) / (k E* A) with
    k = w sqrt(rho / E*), E* = E (1 + i eta) (e.g. Graff, Wave Motion in Elastic Solids,
    ch. 2: the driving-point receptance of a free-free rod)."""
    monkeypatch.setattr(exact_mod, "CHUNK_ENTRIES", 300)          # ~17 chunks of 64 or so
    line = dl.Line.from_dict(BAR)
    f = np.linspace(10.0, 12_000.0, 1_111)
    H = np.asarray(dl.frf(line, f, drive_at=0.0, response_at=[0.0, 0.8]))
    E = 2.1e11 * (1 + 0.01j)
    k = 2 * np.pi * f * np.sqrt(7850.0 / E)
    kl = k * 0.8
    ref0 = -np.cos(kl) / np.sin(kl) / (k * E * 3e-4)
    ref1 = -1.0 / np.sin(kl) / (k * E * 3e-4)                     # transfer to the far end
    np.testing.assert_allclose(H[:, 0], ref0, rtol=1e-9)
    np.testing.assert_allclose(H[:, 1], ref1, rtol=1e-9)


@pytest.mark.parametrize("method", ["exact", "modal"])
@pytest.mark.parametrize("quantity", ["receptance", "moment"])
def test_chunked_equals_one_piece(monkeypatch, method, quantity):
    line = dl.Line.from_dict(BEAM)
    f = np.linspace(5.0, 3000.0, 997)
    x = np.linspace(0.0, 0.7, 23)
    kw = {"modes": dl.modes(line, 20)} if method == "modal" else {}
    whole = np.asarray(dl.frf(line, f, drive_at=0.55, response_at=x, quantity=quantity,
                              method=method, **kw))
    monkeypatch.setattr(exact_mod, "CHUNK_ENTRIES", 2_000)
    parts = np.asarray(dl.frf(line, f, drive_at=0.55, response_at=x, quantity=quantity,
                              method=method, **kw))
    scale = np.abs(whole).max()
    np.testing.assert_allclose(parts, whole, rtol=1e-10, atol=1e-12 * scale)
