"""Magnetic dipole moment of segment currents, and the small-loop radiated
field estimate built on it.

Moment (J. D. Jackson, *Classical Electrodynamics*, 3rd ed., Wiley, 1999,
eq. 5.54, m = 1/2 integral of r x J dV): for straight segments carrying
currents ``I_k`` from ``A_k`` to ``B_k`` the integral is exact,

    m = 1/2 sum_k I_k (A_k - O) x (B_k - A_k)      (A m^2)

For a closed current distribution (the currents add up to zero at every
node, as in a loop) ``m`` does not depend on the origin ``O``. For an open
one (a loop whose current also runs through parts that are not in the
segments, such as the elements between pins) it does: moving ``O`` by ``c``
changes ``m`` by ``-1/2 c x U`` with ``U = sum_k I_k (B_k - A_k)`` (A m), the
"unclosed" moment returned beside ``m``. Close the path (add each element's
hop between its terminals as a straight segment carrying the loop current)
to make it exact; otherwise the moment is about the given origin (by default
the current-weighted centre of the segments).

Radiated field of a small loop (magnetic dipole), far field, free space
(C. A. Balanis, *Antenna Theory*, 3rd ed., Wiley, 2005, sec. 5.2, small
circular loop, E_phi; Jackson 1999, eq. 9.36):

    |E| = eta0 k^2 |m| sin(theta) / (4 pi r),  k = 2 pi f / c,  eta0 = mu0 c

which is H. W. Ott, *Electromagnetic Compatibility Engineering*, Wiley,
2009, sec. 12.1 (differential-mode radiation), E = 131.6e-16 f^2 A I / r
(V/m, f in Hz, A in m^2, I in A, r in m; pi mu0 / c = 131.69e-16), for the
direction of the maximum (theta = 90 degrees). Over a reflecting ground plane
(an open-area test site) Ott doubles it (factor 2, +6 dB): ``reflection``.
Conditions: loop small against the wavelength, observation point in the far
field (r > lambda / (2 pi)). It is an estimate for comparing layouts, not a
compliance result: real boards radiate through cables and common-mode paths
that this model leaves out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from parasite.errors import ParasiteError

MU0 = 4e-7 * math.pi  # H/m (the pre-2019 exact value; CODATA 2018 differs by 5.5e-10)
C0 = 299_792_458.0  # m/s, exact
ETA0 = MU0 * C0  # ohm, impedance of free space, 376.73
OTT_CONSTANT = 131.6e-16
"""Ott (2009) sec. 12.1: E = 131.6e-16 f^2 A I / r (SI). pi mu0 / c0 = 1.3169e-14."""


@dataclass(frozen=True)
class DipoleMoment:
    moment: np.ndarray  # (3,) A m^2 (complex for phasor currents)
    unclosed: np.ndarray  # (3,) A m, sum of I dl: 0 for a closed distribution
    origin: np.ndarray  # (3,) m, the point the moment is taken about

    @property
    def magnitude(self) -> float:
        """|m| = sqrt(sum |m_i|^2) (A m^2)."""
        return float(np.sqrt(np.sum(np.abs(self.moment) ** 2)))


def dipole_moment(start: np.ndarray, end: np.ndarray, currents: np.ndarray,
                  origin: np.ndarray | None = None) -> DipoleMoment:
    """Magnetic dipole moment (A m^2) of currents ``currents`` (S,) A on
    straight segments ``start`` -> ``end`` (S, 3) m, about ``origin`` (3,) m
    (default: the centre of the segments' midpoints weighted by |I| x length).
    See the module docstring for closed and open distributions."""
    start = np.asarray(start, dtype=float).reshape(-1, 3)
    end = np.asarray(end, dtype=float).reshape(-1, 3)
    currents = np.asarray(currents)
    if currents.shape != (len(start),):
        raise ParasiteError(
            f"currents has shape {currents.shape}, there are {len(start)} segments")
    dl = end - start
    if origin is None:
        wgt = np.abs(currents) * np.linalg.norm(dl, axis=1)
        mid = 0.5 * (start + end)
        origin = (wgt @ mid) / wgt.sum() if wgt.sum() > 0 else np.zeros(3)
    origin = np.asarray(origin, dtype=float).reshape(3)
    moment = 0.5 * (currents @ np.cross(start - origin, dl))
    return DipoleMoment(moment=moment, unclosed=currents @ dl, origin=origin)


def image_dipole(start: np.ndarray, end: np.ndarray, currents: np.ndarray, mirror_z: np.ndarray,
                 origin: np.ndarray | None = None) -> DipoleMoment:
    """Moment of the segments together with their images in ideal return
    planes (faces at ``mirror_z`` (S,) m, NaN: no plane; image current factor
    -1 on the mirrored geometry, :mod:`parasite.extract.images`). A horizontal
    loop over a plane and its image cancel to first order; a vertical one
    doubles."""
    start = np.asarray(start, dtype=float)
    end = np.asarray(end, dtype=float)
    currents = np.asarray(currents)
    plane = np.isfinite(mirror_z)
    si, ei = start[plane].copy(), end[plane].copy()
    si[:, 2] = 2.0 * mirror_z[plane] - si[:, 2]
    ei[:, 2] = 2.0 * mirror_z[plane] - ei[:, 2]
    if origin is None:
        origin = dipole_moment(start, end, currents).origin
    return dipole_moment(np.vstack([start, si]), np.vstack([end, ei]),
                         np.concatenate([currents, -currents[plane]]), origin)


@dataclass(frozen=True)
class RadiatedEstimate:
    """Small-loop radiated field estimate (module docstring): not a
    compliance result."""

    e_field: float  # V/m, peak of the sinusoid, direction of the maximum
    frequency: float  # Hz
    distance: float  # m
    reflection: float  # 1: free space, 2: over a reflecting ground plane (Ott 2009)
    far_field: bool  # distance > lambda / (2 pi)
    small_loop: bool | None  # size <= lambda / 10 (common practice); None: size not given


def small_loop_field(moment: float, frequency: float, distance: float, *,
                     reflection: float = 1.0, size: float | None = None) -> RadiatedEstimate:
    """|E| (V/m) at ``distance`` (m) of a magnetic dipole ``moment`` (A m^2,
    current x area) at ``frequency`` (Hz): eta0 k^2 m / (4 pi r) times
    ``reflection`` (module docstring; Balanis 2005 sec. 5.2, Ott 2009 sec.
    12.1). ``size`` (m, largest dimension of the loop) enables the small-loop
    flag."""
    if not (frequency > 0 and distance > 0 and moment >= 0 and reflection > 0):
        raise ParasiteError(
            f"radiated estimate needs frequency > 0 Hz, distance > 0 m, moment >= 0 A m^2 and "
            f"reflection > 0; got {frequency!r}, {distance!r}, {moment!r}, {reflection!r}")
    wavelength = C0 / frequency
    k = 2.0 * math.pi / wavelength
    e = reflection * ETA0 * k * k * moment / (4.0 * math.pi * distance)
    return RadiatedEstimate(
        e_field=e, frequency=frequency, distance=distance, reflection=reflection,
        far_field=distance > wavelength / (2.0 * math.pi),
        small_loop=None if size is None else size <= wavelength / 10.0,
    )
