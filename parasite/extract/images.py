"""Images of segments in ideal return planes (method of images).

A perfect conductor at height z_p is replaced by the mirror image of every
current: the image of a current element at (x, y, z) with direction
(dx, dy, dz) sits at (x, y, 2 z_p - z) and carries the direction
(-dx, -dy, +dz) (the mirror image of the current with its charges reversed:
horizontal components reversed, vertical kept). Here an image segment is stored
as the mirrored geometry (start and end mirrored, so its direction is
(dx, dy, -dz)) with a factor -1 on every coupling to it, which gives the same
current. Source: the method of images (Maxwell, *A Treatise on Electricity and
Magnetism*, 1873; Paul, *Inductance: Loop and Partial*, 2010, for partial
inductances over a ground plane).
"""

from __future__ import annotations

import numpy as np


def mirror_points(points: np.ndarray, plane_z: np.ndarray) -> np.ndarray:
    """Points (n, 3) m mirrored in the horizontal planes z = plane_z (n,)."""
    out = np.array(points, dtype=float, copy=True)
    out[:, 2] = 2.0 * plane_z - out[:, 2]
    return out


IMAGE_SIGN = -1.0
"""Factor on the mutual inductance to a mirrored segment (see module docstring)."""
