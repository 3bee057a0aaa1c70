"""Biot-Savart field of segment currents (parasite.field) against textbook
closed forms and scipy quadrature of the Biot-Savart integral."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from parasite.errors import ParasiteError
from parasite.field import dipole_moment, field_map, height_plane, segment_field
from tests.field.shapes import circle, polygons
from tests.reference import MU0


def griffiths_finite_wire(s: float, z1: float, z2: float, current: float = 1.0) -> float:
    """|B| (T) at perpendicular distance s (m) from a straight wire along z from z1 to z2
    (m), the point at z = 0: B = mu0 I / (4 pi s) (sin theta2 - sin theta1), sin theta =
    z / sqrt(z^2 + s^2) (Griffiths, *Introduction to Electrodynamics*, 4th ed., 2013,
    ex. 5.5, eq. 5.37)."""
    return MU0 * current / (4 * math.pi * s) * (z2 / math.hypot(z2, s) - z1 / math.hypot(z1, s))


def _wire(length: float, z0: float = 0.0):
    arrays, _ = polygons([np.array([[0, 0, z0], [0, 0, z0 + length]])], radius=1e-6)
    # polygons() closes the path: keep only the first segment (upward)
    return type(arrays)(**{f: getattr(arrays, f)[:1] for f in arrays.__dataclass_fields__})


@pytest.mark.parametrize("s, z1, z2", [(0.01, -0.5, 0.5), (2e-3, -3e-3, 7e-3), (5e-3, 1e-3, 11e-3),
                                       (0.02, -0.01, -0.004)])
def test_field_beside_a_finite_segment(s: float, z1: float, z2: float) -> None:
    """A filament from z1 to z2 on the z axis, the point at (s cos phi, s sin phi, 0):
    |B| within 1e-9 of Griffiths's finite-wire formula (ex. 5.5; the closed forms are
    exact, the tolerance is rounding), B azimuthal (right-hand rule); and for a wire
    1 m long seen from 10 mm, within 0.5% of the infinite wire mu0 I / (2 pi s)
    (Ampere's law; the finite-length correction is 2e-4 there)."""
    arrays = _wire(z2 - z1, z1)
    for phi in (0.0, 1.0, 2.5):
        p = np.array([[s * math.cos(phi), s * math.sin(phi), 0.0]])
        B = segment_field(p, arrays, np.array([2.0]))[0]
        ref = griffiths_finite_wire(s, z1, z2, 2.0)
        assert np.linalg.norm(B) == pytest.approx(ref, rel=1e-9)
        assert B @ np.array([-math.sin(phi), math.cos(phi), 0.0]) == pytest.approx(ref, rel=1e-9)
    if z2 - z1 >= 1.0:
        assert np.linalg.norm(B) == pytest.approx(MU0 * 2.0 / (2 * math.pi * s), rel=5e-3)


def test_on_axis_field_of_a_circular_loop() -> None:
    """A circular loop (radius 10 mm, 1 A) as a regular polygon of 256 thin wires: Bz
    on the axis within 0.5% of mu0 I R^2 / (2 (R^2 + z^2)^(3/2)) at several heights
    (Griffiths 2013, ex. 5.6; the inscribed polygon's error is about (pi/N)^2 = 1.5e-4),
    and Bx = By = 0 by symmetry."""
    R = 10e-3
    arrays, cur = polygons([circle(R, 256)], radius=1e-6)
    z = np.array([0.0, 2e-3, 10e-3, 30e-3, -15e-3])
    pts = np.column_stack([np.zeros_like(z), np.zeros_like(z), z])
    B = segment_field(pts, arrays, cur[0])
    ref = MU0 * R * R / (2 * (R * R + z * z) ** 1.5)
    assert B[:, 2] == pytest.approx(ref, rel=5e-3)
    assert np.max(np.abs(B[:, :2])) < 1e-9 * ref.max()


def test_far_field_of_a_loop_is_its_dipole() -> None:
    """At 40 loop sizes from an irregular closed loop, its Biot-Savart field is the
    static dipole field mu0 / (4 pi) (3 n (n.m) - m) / r^3 of its moment m =
    1/2 sum r x I dl (Jackson, *Classical Electrodynamics*, 3rd ed., 1999, eqs. 5.54
    and 5.56) within 5% (the next multipole term falls like size / r = 2.5%)."""
    pts = np.array([[0, 0, 0], [8e-3, -1e-3, 0], [10e-3, 6e-3, 2e-3], [3e-3, 9e-3, 1e-3]], float)
    arrays, cur = polygons([pts], radius=0.1e-3)
    m = dipole_moment(arrays.start, arrays.end, cur[0]).moment
    centre = pts.mean(axis=0)
    for n in (np.array([0, 0, 1.0]), np.array([1.0, 0, 0]), np.array([0.6, -0.48, 0.64])):
        r = 0.4
        B = segment_field(centre + r * n[None, :], arrays, cur[0])[0]
        ref = 1e-7 * (3 * n * (n @ m) - m) / r**3
        assert np.linalg.norm(B - ref) < 0.05 * np.linalg.norm(ref)


def test_bar_width_quadrature_against_scipy() -> None:
    """A 2 mm wide, 35 um thick bar 20 mm long carrying 1 A uniformly, points 0.3 mm
    to 3 mm above it: B within 1e-3 of scipy.integrate.quad of Griffiths's
    finite-wire field over the width (filaments across the width, the thickness
    taken as the centre plane: it changes B by (t/d)^2/24 < 6e-4 at 0.3 mm)."""
    w, t, L = 2e-3, 35e-6, 20e-3
    arrays, _ = polygons([np.array([[0, 0, 0], [L, 0, 0]])], width=w, thickness=t)
    bar = type(arrays)(**{f: getattr(arrays, f)[:1] for f in arrays.__dataclass_fields__})
    for x, y, h in [(10e-3, 0.0, 0.3e-3), (2e-3, 0.7e-3, 0.5e-3), (15e-3, -2.5e-3, 3e-3)]:
        B = segment_field(np.array([[x, y, h]]), bar, np.array([1.0]))[0]

        def comp(u: float, which: int, x: float = x, y: float = y, h: float = h) -> float:
            # filament along x at (y = u, z = 0): B = |B| * (0, -dz, dy)/s
            dy, dz = y - u, h
            s = math.hypot(dy, dz)
            mag = griffiths_finite_wire(s, -x, L - x)
            return mag * (-dz if which == 1 else dy) / s / w

        by = quad(comp, -w / 2, w / 2, args=(1,), epsabs=1e-15, epsrel=1e-10, limit=200)[0]
        bz = quad(comp, -w / 2, w / 2, args=(2,), epsabs=1e-15, epsrel=1e-10, limit=200)[0]
        ref = np.array([0.0, by, bz])
        assert np.linalg.norm(B - ref) < 1e-3 * np.linalg.norm(ref)


def test_image_in_a_return_plane_and_shielding() -> None:
    """A 1 m long filament 1 mm above a return plane face at z = 0: at height y above
    the plane over the wire (current along +x), By = -mu0 I / (2 pi) (1/(y - h) - 1/(y + h))
    (the wire's field and its image's, which carries -I at -h: method of images,
    Griffiths 2013, ch. 3.2; right-hand rule; the finite length changes it by < 1e-5
    here), within 1e-4; and nothing reaches below the plane (ideal shield)."""
    h = 1e-3
    arrays, _ = polygons([np.array([[-0.5, 0, h], [0.5, 0, h]])], radius=1e-6, mirror_z=0.0)
    wire = type(arrays)(**{f: getattr(arrays, f)[:1] for f in arrays.__dataclass_fields__})
    for y in (2e-3, 5e-3, 0.5e-3):
        B = segment_field(np.array([[0.0, 0.0, y]]), wire, np.array([1.0]))[0]
        ref = MU0 / (2 * math.pi) * (1 / (y - h) - 1 / (y + h))
        assert B[1] == pytest.approx(-ref, rel=1e-4)
    below = segment_field(np.array([[0.0, 0.0, -1e-3]]), wire, np.array([1.0]))
    assert np.all(below == 0)
    free = segment_field(np.array([[0.0, 0.0, -1e-3]]), wire, np.array([1.0]), images=False)
    assert np.linalg.norm(free) > 0


def test_field_map_shape_and_phasors() -> None:
    """The map of a loop at 1 A is the map at 1 A phasor j times -j (linearity);
    grids and heights as asked; the map's peak over a loop lies over its copper."""
    arrays, cur = polygons([circle(10e-3, 64, 1.6e-3)], width=0.5e-3, thickness=35e-6)
    z = height_plane(arrays, 5e-3)
    assert z == pytest.approx(1.6e-3 + 17.5e-6 + 5e-3)
    m1 = field_map(arrays, cur[0], z, nx=30, ny=20)
    mj = field_map(arrays, 1j * cur[0], z, nx=30, ny=20)
    assert m1.bz.shape == (20, 30) and len(m1.x) == 30 and len(m1.y) == 20
    assert np.allclose(mj.bz, 1j * m1.bz, rtol=1e-12, atol=0)
    # centre of a loop: the field points along its axis (+z for counter-clockwise current)
    centre = field_map(arrays, cur[0], z, nx=3, ny=3, extent=(-1e-3, 1e-3, -1e-3, 1e-3))
    assert centre.bz[1, 1] > 0 and abs(centre.bx[1, 1]) < 1e-6 * centre.bz[1, 1]
    with pytest.raises(ParasiteError, match="currents has shape"):
        field_map(arrays, cur[0][:5], z)
    with pytest.raises(ParasiteError, match="height must be > 0 m"):
        height_plane(arrays, 0.0)


def test_compiled_and_numpy_paths_agree() -> None:
    """The numba kernel and the numpy blocks evaluate the same closed form, images and
    shielding included: on an invented board (traces at any angle on two layers, vias,
    leads in space, planes at z = 0 and 2 mm; tests/test_extract_matrix.py) with complex
    currents, at points above, between and below the planes, they agree to 1e-10
    (rounding). A contract check between two implementations; the physics is checked
    against the references above."""
    from parasite.field import kernel_jit
    from tests.extract.test_extract_matrix import random_board

    if not kernel_jit.available():
        pytest.skip("numba is not installed")
    arrays = random_board(3, n_traces=30, planes="two")
    rng = np.random.default_rng(5)
    cur = rng.normal(size=len(arrays)) + 1j * rng.normal(size=len(arrays))
    pts = np.column_stack([rng.uniform(-5e-3, 35e-3, 300), rng.uniform(-5e-3, 35e-3, 300),
                           rng.uniform(-3e-3, 8e-3, 300)])
    a = segment_field(pts, arrays, cur, compiled=True)
    b = segment_field(pts, arrays, cur, compiled=False)
    assert np.all(np.isfinite(a))
    assert np.max(np.abs(a - b)) <= 1e-10 * np.max(np.abs(b))
