"""The second-order families: parameters -> wave number, impedance, variable names and units.

Every second-order line obeys (S u')' + w^2 m u = 0 on each uniform segment,
with the "stiffness" S and "mass per length" m of its kind (a bending line,
kind "bending", obeys EI w = w^2 m w with S = EI and m = rho A):

========  =====================  ==========================  ====================
kind      variable u             S                           m
========  =====================  ==========================  ====================
axial     displacement (m)       E A                         rho A
torsion   rotation (rad)         G J                         rho J
string    transverse disp. (m)   T (tension)                 mu
duct      pressure (Pa)          A / rho                     A / (rho c^2)
========  =====================  ==========================  ====================

The duct row is the Webster horn equation (A p')' + k^2 A p = 0 written as an
analogue bar whose "displacement" is the pressure p; its internal "force"
N = (A / rho) p' equals -i w U, with U the volume velocity along +x (Euler's
equation i w rho u = -p'). A volume-velocity source Q is the analogue point
load i w Q, and a termination of acoustic impedance Z = p / U_out is the
analogue point stiffness i w / Z (Kinsler et al., Fundamentals of Acoustics,
ch. 10). Pressure is continuous at area steps and the volume velocity is
conserved, as the plane-wave junction conditions require.

Damping enters as complex coefficients (e^{+i w t}):
loss factor S -> S (1 + i eta) (structures) or bulk modulus K -> K (1 + i eta)
(ducts); Rayleigh C = alpha M + beta K gives S -> S (1 + i w beta) and
w^2 m -> w^2 m - i w alpha m; Kirchhoff wall losses give an effective density
and compressibility (see :func:`wall_loss_factors`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .model.line import AIR, Line, Segment

__all__ = ["FAMILIES", "Family", "segment_coefficients", "wall_loss_factors",
           "radiation_end_correction"]


@dataclass(frozen=True)
class Family:
    """Names and units of one kind's variables."""

    kind: str
    variable: str         # what u is
    unit: str             # unit of u
    force_name: str       # what the internal force / point load is
    force_unit: str
    wave_speed_formula: str


FAMILIES = {
    "axial": Family("axial", "displacement", "m", "axial force", "N", "sqrt(E/rho)"),
    "torsion": Family("torsion", "rotation", "rad", "torque", "N m", "sqrt(G/rho)"),
    "string": Family("string", "transverse displacement", "m", "transverse force", "N",
                     "sqrt(T/mu)"),
    "duct": Family("duct", "pressure", "Pa", "volume velocity", "m^3/s", "c"),
    "bending": Family("bending", "transverse displacement", "m", "shear force", "N",
                      "sqrt(w) (EI/(rho A))^(1/4)"),
}

#: end corrections as a fraction of the pipe radius: unflanged (Levine and
#: Schwinger, Phys. Rev. 73, 1948) and flanged (Norris and Sheng, J. Sound Vib.
#: 135, 1989); low-ka radiation resistance factors (ka)^2/4 and (ka)^2/2 (Kinsler)
_END_CORRECTION = {"unflanged": 0.6133, "flanged": 0.8216}
_RADIATION_FACTOR = {"unflanged": 0.25, "flanged": 0.5}


def radiation_end_correction(end: str, area: float) -> float:
    """End correction (m) of a circular pipe of cross-section ``area`` with an open end."""
    return _END_CORRECTION[end] * math.sqrt(area / math.pi)


def static_coefficients(kind: str, seg: Segment) -> tuple[float, float]:
    """Undamped (S, m) of a segment: stiffness coefficient and mass per length."""
    if kind == "axial":
        return seg.E * seg.area, seg.rho * seg.area
    if kind == "torsion":
        return seg.G * seg.J, seg.rho * seg.J
    if kind == "string":
        return seg.tension, seg.mass_per_length
    if kind == "duct":
        rho = seg.rho if seg.rho is not None else AIR["rho"]
        c = seg.c if seg.c is not None else AIR["c"]
        return seg.area / rho, seg.area / (rho * c * c)
    if kind == "bending":
        return seg.E * seg.I, seg.rho * seg.area
    raise AssertionError(kind)


def wave_speed(kind: str, seg: Segment) -> float:
    """Undamped phase speed (m/s) of a second-order segment (bending waves are
    dispersive: their speed is sqrt(w) (EI/m)^(1/4))."""
    S, m = static_coefficients(kind, seg)
    return math.sqrt(S / m)


def wall_loss_factors(seg: Segment, omega: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Kirchhoff visco-thermal wall losses of a circular duct of the segment's area.

    Returns (eps_v, eps_t) with rho_eff = rho (1 + eps_v) and
    1/K_eff = (1 + eps_t)/K, where eps_v = (1 - i) delta_v / a,
    eps_t = (gamma - 1)/sqrt(Pr) eps_v and delta_v = sqrt(2 nu / w). To first
    order the wave number is k = w/c + (1 - i) alpha with
    alpha = (1/(a c)) sqrt(w mu / (2 rho)) (1 + (gamma - 1)/sqrt(Pr)) Np/m
    (Kirchhoff 1868, as given in Kinsler et al., Fundamentals of Acoustics).
    """
    rho = seg.rho if seg.rho is not None else AIR["rho"]
    mu = seg.viscosity if seg.viscosity is not None else AIR["viscosity"]
    gamma = seg.gamma if seg.gamma is not None else AIR["gamma"]
    pr = seg.prandtl if seg.prandtl is not None else AIR["prandtl"]
    a = math.sqrt(seg.area / math.pi)
    delta_v = np.sqrt(2.0 * mu / (rho * omega))
    eps_v = (1.0 - 1.0j) * delta_v / a
    eps_t = (gamma - 1.0) / math.sqrt(pr) * eps_v
    return eps_v, eps_t


def segment_eta(line: Line, seg: Segment) -> float:
    """The loss factor a segment carries under the line's damping model."""
    d = line.damping
    if d.model != "loss_factor":
        return 0.0
    if seg.eta is not None:
        return seg.eta
    return d.eta or 0.0


def segment_coefficients(line: Line, omega: np.ndarray, *, damped: bool = True
                         ) -> tuple[np.ndarray, np.ndarray]:
    """Complex (S, w^2 m) of every segment at every frequency: arrays (n_freq, n_seg).

    ``damped=False`` gives the real coefficients of the undamped line (modes).
    The wave number is k = sqrt(w^2 m / S).
    """
    omega = np.asarray(omega, dtype=float)
    nseg = len(line.segments)
    dtype = complex if damped else float
    S = np.empty((omega.size, nseg), dtype=dtype)
    W2M = np.empty((omega.size, nseg), dtype=dtype)
    d = line.damping
    w = omega
    for j, seg in enumerate(line.segments):
        s0, m0 = static_coefficients(line.kind, seg)
        if not damped:
            S[:, j] = s0
            W2M[:, j] = w * w * m0
            continue
        s = np.full(w.shape, s0, dtype=complex)
        w2m = (w * w * m0).astype(complex)
        eta = segment_eta(line, seg)
        if eta:
            if line.kind == "duct":
                w2m = w2m / (1.0 + 1.0j * eta)      # complex bulk modulus
            else:
                s = s * (1.0 + 1.0j * eta)          # complex modulus
        if d.model == "rayleigh":
            s = s * (1.0 + 1.0j * w * (d.beta or 0.0))
            w2m = w2m - 1.0j * w * (d.alpha or 0.0) * m0
        if line.kind == "duct" and d.wall_losses:
            eps_v, eps_t = wall_loss_factors(seg, w)
            s = s / (1.0 + eps_v)
            w2m = w2m * (1.0 + eps_t)
        S[:, j] = s
        W2M[:, j] = w2m
    return S, W2M
