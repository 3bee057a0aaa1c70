"""Magnetic dipole moment and the small-loop radiated estimate (parasite.field.dipole)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants

from parasite.errors import ParasiteError
from parasite.field import dipole_moment, image_dipole, small_loop_field
from tests.field.shapes import circle, polygons, rectangle


def test_moment_is_current_times_area() -> None:
    """A regular 12-gon of radius 10 mm at 2 A (counter-clockwise): m = I A z with
    A = N R^2 sin(2 pi / N) / 2 (area of a regular polygon, elementary geometry),
    to 1e-12, whatever the origin (a closed current, Jackson 1999, sec. 5.6); a
    rectangle tilted into the x-z plane has its moment along -y by the right-hand rule."""
    R, N = 10e-3, 12
    arrays, cur = polygons([circle(R, N, 1.6e-3)], radius=0.1e-3)
    area = N * R * R * math.sin(2 * math.pi / N) / 2
    for origin in (None, np.array([0.3, -2.0, 5.0])):
        d = dipole_moment(arrays.start, arrays.end, 2.0 * cur[0], origin)
        assert d.moment == pytest.approx([0.0, 0.0, 2.0 * area], abs=1e-12 * area)
        assert np.allclose(d.unclosed, 0, atol=1e-15)
    rect = rectangle(0, 0, 20e-3, 10e-3)[:, [0, 2, 1]]  # (x, 0, y): in the x-z plane
    a2, c2 = polygons([rect], radius=0.1e-3)
    m = dipole_moment(a2.start, a2.end, c2[0]).moment
    assert m == pytest.approx([0.0, -200e-6, 0.0], abs=1e-15)


def test_open_path_reports_its_unclosed_part() -> None:
    """A U-shaped open path (three sides of a 20 x 10 mm rectangle): the unclosed
    moment is sum I dl (minus the missing side: the path's end minus its start), and moving the origin by c
    changes m by -1/2 c x U (from m = 1/2 sum (r - O) x I dl; Jackson 1999, eq. 5.54)."""
    pts = rectangle(0, 0, 20e-3, 10e-3)
    start, end = pts[:3], pts[1:4]
    cur = np.ones(3)
    d0 = dipole_moment(start, end, cur, np.zeros(3))
    assert d0.unclosed == pytest.approx([0.0, 10e-3, 0.0])  # path end minus path start
    c = np.array([1e-3, 2e-3, 3e-3])
    d1 = dipole_moment(start, end, cur, c)
    assert d1.moment == pytest.approx(d0.moment - 0.5 * np.cross(c, d0.unclosed), abs=1e-15)


def test_images_cancel_a_flat_loop_and_double_a_standing_one() -> None:
    """Over an ideal return plane (method of images; horizontal image currents
    reversed, vertical ones kept): a loop parallel to the plane and its image have
    opposite moments (sum 0), a loop standing on the plane and its image equal ones
    (sum 2 I A). Elementary consequences of the image rule (Griffiths 2013, ch. 3.2)."""
    flat, c = polygons([circle(5e-3, 16, 1e-3)], radius=0.1e-3, mirror_z=0.0)
    d = image_dipole(flat.start, flat.end, c[0], flat.mirror_z)
    assert np.linalg.norm(d.moment) < 1e-12
    stand = rectangle(0, 0.5e-3, 20e-3, 10.5e-3)[:, [0, 2, 1]]
    a, c = polygons([stand], radius=0.1e-3, mirror_z=0.0)
    single = dipole_moment(a.start, a.end, c[0]).moment
    both = image_dipole(a.start, a.end, c[0], a.mirror_z).moment
    assert both == pytest.approx(2 * single, rel=1e-12)


def test_small_loop_field_against_ott_and_the_dipole_formula() -> None:
    """The estimate equals eta0 k^2 m / (4 pi r) with eta0, c from scipy.constants
    (CODATA; Balanis, *Antenna Theory*, 3rd ed., 2005, sec. 5.2, E_phi at theta = 90
    degrees) within 1e-9, and Ott's E = 131.6e-16 f^2 A I / r (Ott, *Electromagnetic
    Compatibility Engineering*, 2009, sec. 12.1; from memory) within 0.1% (the
    constant is rounded to 4 digits: pi mu0 / c = 131.69e-16); Ott's ground-plane
    reflection doubles it. Flags: far field beyond lambda / (2 pi), small loop up to
    lambda / 10 (common practice)."""
    f, area, current, r = 100e6, 4e-4, 0.05, 3.0
    est = small_loop_field(current * area, f, r)
    eta0 = constants.mu_0 * constants.c
    k = 2 * math.pi * f / constants.c
    assert est.e_field == pytest.approx(eta0 * k * k * current * area / (4 * math.pi * r), rel=1e-9)
    assert est.e_field == pytest.approx(131.6e-16 * f * f * area * current / r, rel=1e-3)
    assert small_loop_field(current * area, f, r, reflection=2.0).e_field == pytest.approx(2 * est.e_field)
    assert est.far_field and est.small_loop is None
    near = small_loop_field(1e-4, 10e6, 3.0, size=0.5)  # lambda = 30 m: lambda / 2 pi = 4.8 m
    assert not near.far_field and near.small_loop is True
    assert small_loop_field(1e-4, 1e9, 3.0, size=0.05).small_loop is False  # lambda / 10 = 30 mm
    with pytest.raises(ParasiteError, match="frequency > 0 Hz"):
        small_loop_field(1e-4, 0.0, 3.0)
