"""Tuning a mass-spring-dashpot absorber against one mode of a line."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import checks
from ..errors import ModelError
from ..model.line import Absorber, Attachment, Line
from ..solve.exact import frf
from ..solve.modes import modes as compute_modes


@dataclass(frozen=True)
class AbsorberTuning:
    """Den Hartog's start and the optimised absorber, with the band's peak |H| for the
    bare line, the start and the optimum (H's unit)."""

    mode: int
    mode_hz: float
    effective_mass: float
    mass_ratio: float
    start: Absorber
    tuned: Absorber
    peak_bare: float
    peak_start: float
    peak_tuned: float
    band_hz: tuple[float, float]


def den_hartog(mode_hz: float, effective_mass: float, mass: float) -> Absorber:
    """Den Hartog's tuning for an undamped primary of the given effective mass
    (Mechanical Vibrations, 4th ed.): f_a / f_p = 1 / (1 + mu), absorber damping ratio
    sqrt(3 mu / (8 (1 + mu)^3)), mu = absorber mass / effective mass."""
    mu = mass / effective_mass
    wa = 2 * math.pi * mode_hz / (1 + mu)
    zeta = math.sqrt(3 * mu / (8 * (1 + mu) ** 3))
    return Absorber(mass=mass, stiffness=mass * wa * wa, damping=2 * zeta * mass * wa)


def tune_absorber(line: Line, mode: int, mass: float, at: float, *, drive_at: float | None = None,
                  response_at: float | None = None, band_hz=None, quantity: str | None = None,
                  n_freq: int = 800) -> AbsorberTuning:
    """Absorber of ``mass`` (kg) at ``at`` against natural mode ``mode`` (1-based, as
    listed by dl.natural_frequencies): start from Den Hartog's tuning for the mode's
    effective mass at ``at`` (1/phi_n(at)^2 with mass-normalised phi), then minimise the
    band's peak |H| over the absorber's stiffness and damping on the exact model
    (Nelder-Mead in log scale). Drive and response default to ``at``; the band to
    f_n (1 -+ 3 sqrt(mu))."""
    line = checks.solvable(line)
    if isinstance(mode, bool) or not isinstance(mode, (int, np.integer)) or mode < 1:
        raise ModelError("mode", mode, "", "must be a mode number (1 = lowest)")
    mass = checks.real("mass", mass, "kg", low=0.0, low_open=True)
    n_freq = checks.whole("n_freq", n_freq, low=3, high=1_000_000)
    if band_hz is not None:
        try:
            lo, hi = (checks.real("band_hz", b, "Hz", low=0.0, low_open=True) for b in band_hz)
        except (TypeError, ValueError) as exc:
            if isinstance(exc, ModelError):
                raise
            raise ModelError("band_hz", band_hz, "Hz", "must be (low, high)") from None
        if not lo < hi:
            raise ModelError("band_hz", band_hz, "Hz", "must be (low, high) with low < high")
    xa = checks.position(line, "at", at)
    xd = xa if drive_at is None else drive_at
    xr = xa if response_at is None else response_at
    ms = compute_modes(line, int(mode))
    fn = float(ms.frequencies[-1])
    if fn == 0.0:
        raise ModelError("mode", mode, "", "is a rigid-body mode; pick an elastic one")
    phi = float(ms.shape([xa])[0, -1])
    if abs(phi) < 1e-12 * np.abs(ms.nodal[-1]).max():
        raise ModelError("at", at, "m", f"is a node of mode {mode}: an absorber there cannot act")
    m_eff = 1.0 / phi ** 2
    mu = mass / m_eff
    start = den_hartog(fn, m_eff, mass)
    if band_hz is None:
        s = 3.0 * math.sqrt(mu)
        band = (fn * max(1.0 - s, 0.05), fn * (1.0 + s))
    else:
        band = (float(band_hz[0]), float(band_hz[1]))
    f = np.linspace(band[0], band[1], n_freq)

    def with_absorber(ab: Absorber) -> Line:
        return line.replace(attachments=line.attachments + (Attachment(at=xa, absorber=ab),))

    def peak(model: Line) -> float:
        return float(np.abs(np.asarray(frf(model, f, xd, [xr], quantity=quantity))).max())

    def cost(p):
        k, c = start.stiffness * math.exp(p[0]), start.damping * math.exp(p[1])
        return math.log(peak(with_absorber(Absorber(mass, k, c))))

    import scipy.optimize                      # loaded on use: import dampline stays light
    res = scipy.optimize.minimize(cost, x0=[0.0, 0.0], method="Nelder-Mead",
                                  options={"xatol": 1e-4, "fatol": 1e-6, "maxiter": 400})
    tuned = Absorber(mass, start.stiffness * math.exp(res.x[0]), start.damping * math.exp(res.x[1]))
    return AbsorberTuning(mode=int(mode), mode_hz=fn, effective_mass=m_eff, mass_ratio=mu,
                          start=start, tuned=tuned, peak_bare=peak(line),
                          peak_start=peak(with_absorber(start)), peak_tuned=peak(with_absorber(tuned)),
                          band_hz=band)
