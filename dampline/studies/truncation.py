"""How many modes a modal sum needs: its error against the exact solution."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from .. import checks
from ..errors import ModelError
from ..model.line import Line
from ..solve.exact import frf
from ..solve.modes import modes as compute_modes


def local_db_error(H: np.ndarray, H_ref: np.ndarray, freqs_hz: np.ndarray,
                   window: float = 0.10) -> np.ndarray:
    """Error of H against H_ref in dB of the local response level:
    20 log10(1 + |H - H_ref| / max |H_ref| within +-window in frequency), per
    frequency and column. Every peak is held to the limit and antiresonance dips,
    where any relative error is large and harmless, do not dominate."""
    H = np.asarray(H)
    H_ref = np.asarray(H_ref)
    f = np.asarray(freqs_hz, float)
    a = np.abs(H_ref)
    lo = np.searchsorted(f, f * (1.0 - window))
    hi = np.searchsorted(f, f * (1.0 + window), side="right")
    # running maximum over each window, for every column at once
    ref = np.empty_like(a)
    for i, (l, h) in enumerate(zip(lo, hi)):
        ref[i] = a[l:max(h, l + 1)].max(axis=0)
    diff = np.abs(H - H_ref)
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.where(diff == 0.0, 0.0, diff / ref)     # a held point: both exactly zero
    return 20.0 * np.log10(1.0 + rel)


@dataclass(frozen=True, eq=False)
class TruncationStudy:
    """Largest local-level error (dB) of the modal sum for each number of modes kept,
    with and without the residual, over the band; ``errors`` per frequency."""

    counts: np.ndarray
    max_db: np.ndarray
    max_db_no_residual: np.ndarray
    errors: np.ndarray          # (n_counts, n_freq), with residual
    frequencies: np.ndarray
    top_mode_hz: np.ndarray     # frequency of the highest kept mode, per count

    def needed(self, limit_db: float = 0.1) -> int | None:
        """The smallest count whose error stays within ``limit_db`` (None if none)."""
        ok = np.flatnonzero(self.max_db <= limit_db)
        return int(self.counts[ok[0]]) if ok.size else None


def truncation_study(line: Line, freqs_hz, drive_at: float, response_at, counts=(5, 10, 20, 40),
                     *, coupling: str = "full", quantity: str | None = None,
                     drive: str = "force") -> TruncationStudy:
    """Error of the modal sum against the exact solution as modes are added (one ModeSet
    of the largest count is computed and reused)."""
    line = checks.solvable(line)
    f = checks.ascending(checks.frequency_array(freqs_hz), "freqs_hz",
                         "the error is measured in windows along a rising sweep")
    coupling = checks.word("coupling", coupling, ("full", "diagonal"))
    if isinstance(counts, (str, bytes)) or not isinstance(counts, Iterable):
        raise ModelError("counts", counts, "", "must be a list of mode counts")
    counts = np.asarray(sorted({checks.whole(f"counts[{j}]", c, high=100_000)
                                for j, c in enumerate(counts)}), dtype=int)
    if counts.size == 0:
        raise ModelError("counts", [], "", "must be positive mode counts (none given)")
    if line.damping.model == "modal":
        raise ModelError("damping.model", "modal", "", "the exact reference cannot represent "
                         "modal damping; study truncation with a physical damping model")
    ms = compute_modes(line, int(counts[-1]))
    ref = np.asarray(frf(line, f, drive_at, response_at, drive=drive, quantity=quantity))
    errs, errs0 = [], []
    for n in counts:
        sub = ms.first(int(n))
        Hr = frf(line, f, drive_at, response_at, drive=drive, quantity=quantity,
                 method="modal", modes=sub, coupling=coupling, residual=True)
        H0 = frf(line, f, drive_at, response_at, drive=drive, quantity=quantity,
                 method="modal", modes=sub, coupling=coupling, residual=False)
        errs.append(local_db_error(np.asarray(Hr), ref, f).max(axis=1))
        errs0.append(local_db_error(np.asarray(H0), ref, f).max(axis=1))
    errs = np.array(errs)
    return TruncationStudy(counts=counts, max_db=errs.max(axis=1),
                           max_db_no_residual=np.array(errs0).max(axis=1), errors=errs,
                           frequencies=f, top_mode_hz=ms.frequencies[counts - 1])
