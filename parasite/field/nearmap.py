"""Near-field map: the magnetic flux density of segment currents on a
horizontal plane above (or below) the board.

The map is the Biot-Savart field of the segments (and their images in ideal
return planes) at every point of a regular x-y grid at height ``z``
(:func:`parasite.field.biot_savart.segment_field`). Magnetostatic: valid where
the distance to the copper is small compared with the wavelength (at 100 MHz,
lambda / (2 pi) = 0.48 m, so any plane a few centimetres from the board). The
currents are phasors per their loop's current; the map scales linearly with it.

Units: m, A, T.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from geometry.model import SegmentArrays
from parasite.errors import ParasiteError
from parasite.field.biot_savart import segment_field


@dataclass(frozen=True)
class FieldMap:
    """Flux density on the grid ``x`` (nx,) x ``y`` (ny,) at height ``z`` (m).

    ``bx``, ``by``, ``bz`` are (ny, nx) arrays in T (complex for phasor
    currents): row ``j`` is ``y[j]``, column ``i`` is ``x[i]``, as an image."""

    x: np.ndarray  # (nx,) m
    y: np.ndarray  # (ny,) m
    z: float  # m
    bx: np.ndarray  # (ny, nx) T
    by: np.ndarray  # (ny, nx) T
    bz: np.ndarray  # (ny, nx) T

    @property
    def magnitude(self) -> np.ndarray:
        """sqrt(|Bx|^2 + |By|^2 + |Bz|^2) (T, (ny, nx)): for phasors, the
        amplitude of a linearly polarised field and an upper bound of the
        instantaneous magnitude otherwise."""
        return np.sqrt(np.abs(self.bx) ** 2 + np.abs(self.by) ** 2 + np.abs(self.bz) ** 2)


def copper_extent(arrays: SegmentArrays, margin: float = 2e-3
                  ) -> tuple[float, float, float, float]:
    """(xmin, xmax, ymin, ymax) in m of the copper's centre lines plus half
    the widest section, grown by ``margin`` (m) on every side."""
    if len(arrays) == 0:
        raise ParasiteError("no copper: a near-field map needs at least one segment")
    pts = np.vstack([arrays.start, arrays.end])
    grow = margin + 0.5 * float(np.max(np.maximum(arrays.width, arrays.thickness)))
    return (float(pts[:, 0].min() - grow), float(pts[:, 0].max() + grow),
            float(pts[:, 1].min() - grow), float(pts[:, 1].max() + grow))


def height_plane(arrays: SegmentArrays, height: float, *, below: bool = False) -> float:
    """Absolute z (m) of a plane ``height`` (m, > 0) above the top of the
    highest copper (or, with ``below``, under the bottom of the lowest)."""
    if not height > 0:
        raise ParasiteError(f"near-field height must be > 0 m, got {height!r}")
    if len(arrays) == 0:
        raise ParasiteError("no copper: a near-field map needs at least one segment")
    half = 0.5 * arrays.thickness
    z = np.concatenate([arrays.start[:, 2], arrays.end[:, 2]])
    h2 = np.concatenate([half, half])
    if below:
        return float(np.min(z - h2) - height)
    return float(np.max(z + h2) + height)


def field_map(arrays: SegmentArrays, currents: np.ndarray, z: float, *,
              nx: int = 100, ny: int = 100,
              extent: tuple[float, float, float, float] | None = None,
              images: bool = True) -> FieldMap:
    """Biot-Savart flux density of ``currents`` (S,) A on an ``nx`` x ``ny``
    grid at height ``z`` (m) over ``extent`` (xmin, xmax, ymin, ymax, m;
    default :func:`copper_extent`). ``images``: with the return planes
    (ideal, as in the extraction); a plane shields the side away from the
    copper. One vectorised evaluation over (points x filaments), in blocks."""
    if nx < 2 or ny < 2:
        raise ParasiteError(f"a near-field map needs at least 2 x 2 points, got {nx} x {ny}")
    currents = np.asarray(currents)
    if currents.shape != (len(arrays),):
        raise ParasiteError(
            f"currents has shape {currents.shape}, the copper has {len(arrays)} segments")
    xmin, xmax, ymin, ymax = copper_extent(arrays) if extent is None else extent
    x = np.linspace(xmin, xmax, nx)
    y = np.linspace(ymin, ymax, ny)
    X, Y = np.meshgrid(x, y)
    pts = np.column_stack([X.ravel(), Y.ravel(), np.full(X.size, float(z))])
    B = segment_field(pts, arrays, currents, images=images)
    return FieldMap(x=x, y=y, z=float(z), bx=B[:, 0].reshape(ny, nx),
                    by=B[:, 1].reshape(ny, nx), bz=B[:, 2].reshape(ny, nx))
